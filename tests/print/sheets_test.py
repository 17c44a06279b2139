#!/usr/bin/python3
"""Field sheets, printed and typed back, through the command line.

The demo trial's sheet PDF is read back by poppler (pdfinfo, pdftotext, from
Debian's poppler-utils): the page size is the paper's, every page names the
trial, the date printed and "page k of n", the table head gives each trait's
unit and usual range, every plot appears once in walk order, and the rows
are as far apart as the stated layout (7 mm) says. Then the issue's scenario:
the sheet typed back as CSV with a slip (8.3 for 83), an unknown plot and a
duplicate line: the slip asks for confirmation, the unknown plot is refused,
the duplicate saves nothing, the rest is saved once, and entering the same
file again saves nothing.

usage: sheets_test.py FURROW SOURCE_DIR WORK_DIR
"""
import csv
import datetime
import os
import re
import shutil
import subprocess
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "cli"))
from checks import Checks  # noqa: E402

furrow, src, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()
plan = os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv")
MM = 25.4 / 72   # mm per PDF point


def run(*args, stdin=None):
    return subprocess.run([furrow, *args], capture_output=True, text=True, input=stdin)


def new_trial(name):
    db = os.path.join(work, name)
    subprocess.run([furrow, "trial", "new", "--plan", plan, "--db", db], check=True, capture_output=True)
    return db


db = new_trial("demo.furrow")
layout = run("export", "--db", db, "--layout").stdout.splitlines()
header = layout[0].split(",")
walk = [r["label"] for r in sorted((dict(zip(header, line.split(","))) for line in layout[1:]),
                                   key=lambda r: int(r["walk_order"]))]
name = run("trial", "show", "--db", db).stdout.splitlines()[0].strip()
today = {datetime.date.today().isoformat()}

# --- The printed sheet -------------------------------------------------------
pdf = os.path.join(work, "sheet.pdf")
blank = os.path.join(work, "blank.csv")
r = run("sheets", "--db", db, "--out", pdf, "--csv", blank)
today.add(datetime.date.today().isoformat())
check(r.returncode == 0 and "80 plots in walk order on 4 page(s), A4 landscape" in r.stdout, f"sheet written ({r.stdout.strip()})")
info = subprocess.run(["pdfinfo", pdf], capture_output=True, text=True).stdout
size = re.search(r"Page size:\s+([\d.]+) x ([\d.]+) pts", info)
check(size and abs(float(size.group(1)) * MM - 297) < 0.5 and abs(float(size.group(2)) * MM - 210) < 0.5,
      f"A4 landscape page ({size.group(0) if size else info})")
check(re.search(r"Pages:\s+4\b", info) is not None, "four pages: a block of twenty plots a page")
fonts = subprocess.run(["pdffonts", pdf], capture_output=True, text=True).stdout
check("DejaVuSans" in fonts and all(" yes " in line for line in fonts.splitlines()[2:]), "fonts embedded")

pages_text = [subprocess.run(["pdftotext", "-layout", "-f", str(k), "-l", str(k), pdf, "-"], capture_output=True,
                             text=True).stdout for k in range(1, 5)]
for k, text in enumerate(pages_text, start=1):
    check(name in text, f"page {k} names the trial")
    check(f"page {k} of 4" in text, f"page {k} says page {k} of 4")
    check(any(f"printed {d}" in text for d in today), f"page {k} gives the date printed")
    check("date walked" in text and "observer" in text, f"page {k} has the date walked and observer blanks")
    for words in ("height_cm", "plant height", "cm, to 0.1", "usually 60-140", "stand_count", "usually 150-320",
                  "score 1-9", "t/ha, to 0.01", "re-entry interval"):
        check(words in text, f"page {k} head: '{words}'")

# Plot labels in the plot column (left of 32 mm), in order, each once; rows 7 mm apart.
bbox = subprocess.run(["pdftotext", "-bbox", pdf, "-"], capture_output=True, text=True).stdout
found, worst = [], 0.0
for page in bbox.split("<page ")[1:]:
    words = re.findall(r'xMin="([\d.]+)" yMin="([\d.]+)" xMax="[\d.]+" yMax="[\d.]+">([^<]*)<', page)
    labels = [(float(y) * MM, w) for x, y, w in words if float(x) * MM < 32 and w in walk]
    found += [w for _, w in labels]
    for (y0, _), (y1, _) in zip(labels, labels[1:]):
        worst = max(worst, abs((y1 - y0) - 7.0))
check(found == walk, f"every plot once, in walk order ({len(found)} found)")
check(worst < 0.1, f"rows 7 mm apart as stated (largest deviation {worst:.3f} mm)")

with open(blank, encoding="utf-8") as f:
    rows = list(csv.reader(f))
check(rows[0] == ["plot", "block", "field_row", "field_column", "entry", "stand_count", "height_cm", "heading_days",
                  "lodging_score", "grain_yield_t_ha", "note"], f"blank CSV header ({rows[0]})")
check([r[0] for r in rows[1:]] == walk and all(all(c == "" for c in r[5:]) for r in rows[1:]),
      "blank CSV: every plot in walk order, value cells empty")

# Other papers and choices.
r = run("sheets", "--db", db, "--out", os.path.join(work, "letter.pdf"), "--paper", "letter", "--traits",
        "height_cm,stand_count", "--blind")
check(r.returncode == 0 and "US Letter portrait" in r.stdout, f"two traits on US Letter, portrait ({r.stdout.strip()})")
info = subprocess.run(["pdfinfo", os.path.join(work, "letter.pdf")], capture_output=True, text=True).stdout
size = re.search(r"Page size:\s+([\d.]+) x ([\d.]+) pts", info)
check(size and abs(float(size.group(1)) * MM - 215.9) < 0.5 and abs(float(size.group(2)) * MM - 279.4) < 0.5,
      "US Letter page")
letter = subprocess.run(["pdftotext", "-layout", os.path.join(work, "letter.pdf"), "-"], capture_output=True, text=True).stdout
check("Quillon" not in letter and "Tindra" not in letter, "blind: no entries on the sheet")
check(letter.index("height_cm") < letter.index("stand_count"), "traits in the order asked")
for args, words in ((["--traits", "yield"], "trait 'yield' is not measured in this trial"),
                    (["--paper", "a3"], "no paper 'a3' (choose a4 or letter)"),
                    (["--occasion", "2"], "none of the chosen traits is measured more than once: occasion 2")):
    out = os.path.join(work, "bad.pdf")
    r = run("sheets", "--db", db, "--out", out, *args)
    check(r.returncode == 2 and words in r.stderr and not os.path.exists(out), f"refused: {' '.join(args)} ({r.stderr.strip()})")

# --- Typed back --------------------------------------------------------------
with open(os.path.join(src, "demo_data", "harrow_ridge_oats_2026.csv"), encoding="utf-8") as f:
    demo = list(csv.DictReader(f))
typed = os.path.join(work, "typed.csv")


def write_typed(path, extra):
    with open(path, "w", encoding="utf-8", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["plot", "block", "field_row", "field_column", "entry", "stand_count", "height_cm", "note"])
        for d in demo:
            height = "missing: flooded" if d["plot"] == "214" else d["height_cm"]
            w.writerow([d["plot"], d["block"], d["field_row"], d["field_column"], d["entry"], d["stand_count"], height,
                        d["note"]])
        for row in extra:
            w.writerow(row)


d105 = next(d for d in demo if d["plot"] == "105")
write_typed(typed, [["999", "", "", "", "", "230", "95", ""],                                  # line 82: no such plot
                    ["105", "1", "1", "5", "Skerry", d105["stand_count"], d105["height_cm"], ""]])   # line 83: again
slip_line = 2 + next(i for i, d in enumerate(demo) if d["plot"] == "307")
check(next(d for d in demo if d["plot"] == "307")["height_cm"] == "8.3", "the sheet holds the slip 8.3 for plot 307")

db2 = new_trial("typed.furrow")


def long_rows(database):
    out = run("export", "--db", database, "--long").stdout
    return list(csv.DictReader(out.splitlines()))


r = run("record", "--db", db2, "--from-sheet", typed, "--observer", "Ana Pell", stdin="")
check(r.returncode == 2, f"a refused line: exit 2 ({r.returncode})")
check(f"{typed}:82: field 'plot': plot '999' is not in the plan of this trial; nothing saved from this line" in r.stderr,
      "the unknown plot is refused, by file, line and field")
check(f"needs confirmation: {typed}:{slip_line}: field 'height_cm' (plot 307, plant height): check 8.3 before it is saved"
      in r.stderr and "Did you mean 83 cm?" in r.stderr, "the slip asks for confirmation, offering 83")
check(f"duplicate: {typed}:83: plot 105 is also on line 6 with the same stand_count, height_cm: nothing saved" in r.stderr,
      "the duplicate line saves nothing")
check("saved 158 value(s); 0 already saved; 1 need confirmation; 1 refused; 1 duplicate(s)" in r.stdout,
      f"the rest saved ({r.stdout.splitlines()[0] if r.stdout else r.stderr})")
rows = long_rows(db2)
cells = [(x["label"], x["trait"]) for x in rows]
check(len(rows) == 158 and len(set(cells)) == 158, f"158 rows in the log, one per cell ({len(rows)})")
check(("307", "height_cm") not in cells, "the slip is not saved without confirmation")
check(sum(1 for x in rows if x["label"] == "105") == 2, "plot 105: its two values, once each")
flooded = [x for x in rows if x["label"] == "214"]
check(len(flooded) == 1 and flooded[0]["missing_reason"] == "flooded" and "storm" in flooded[0]["note"],
      "plot 214: missing (flooded), with the crew's note")

r = run("record", "--db", db2, "--from-sheet", typed, "--observer", "Ana Pell", stdin="")
check("saved 0 value(s); 158 already saved; 1 need confirmation" in r.stdout and len(long_rows(db2)) == 158,
      f"the same sheet again saves nothing ({r.stdout.splitlines()[0]})")

r = run("record", "--db", db2, "--from-sheet", typed, "--observer", "Ana Pell", "--confirm-line", f"{slip_line}:height_cm",
        stdin="")
rows = long_rows(db2)
slip = [x for x in rows if x["label"] == "307" and x["trait"] == "height_cm"]
check("saved 1 value(s) (1 after confirmation)" in r.stdout and len(rows) == 159 and len(slip) == 1
      and slip[0]["value"] == "8.3" and "decimal_slip" in slip[0]["confirmed_checks"],
      f"confirmed as written: 8.3 saved, the checks answered recorded ({r.stdout.splitlines()[0]})")

db3 = new_trial("asked.furrow")
r = run("record", "--db", db3, "--from-sheet", typed, "--observer", "Ana Pell", "--ask", stdin="s\n")
rows = long_rows(db3)
slip = [x for x in rows if x["label"] == "307" and x["trait"] == "height_cm"]
check("[c] save 8.3 as written   [s] save 83 instead" in r.stderr and len(slip) == 1 and slip[0]["value"] == "83",
      "asked on standard input: the suggested 83 saved")

r = run("record", "--db", db3, "--from-sheet", typed, "--observer", "Ana Pell", "--plot", "101")
check(r.returncode == 2 and "leave out --plot" in r.stderr, "--from-sheet with --plot is refused")
bad = os.path.join(work, "bad.csv")
with open(bad, "w", encoding="utf-8") as f:
    f.write("plot,hieght_cm\n101,96\n")
before = len(long_rows(db3))
r = run("record", "--db", db3, "--from-sheet", bad, "--observer", "Ana Pell")
check(r.returncode == 2 and f"{bad}:1: field 'hieght_cm' is not a column" in r.stderr and len(long_rows(db3)) == before,
      f"a misspelt column: refused before anything is saved ({r.stderr.strip()[:90]})")
# One sheet at a time into a trial file.
import fcntl  # noqa: E402
with open(db3, "rb") as held:
    fcntl.flock(held, fcntl.LOCK_EX)
    r = run("record", "--db", db3, "--from-sheet", typed, "--observer", "Ana Pell")
check(r.returncode == 2 and "another sheet is being entered into this trial file now" in r.stderr,
      "a second sheet entered at the same time is turned away in words")

# Long plot labels are printed whole, on the sheet and on the stakes; codes too fine to read are refused.
with open(plan, encoding="utf-8") as f:
    lines = f.read().splitlines()
long_plan = os.path.join(work, "long.plan.csv")
with open(long_plan, "w", encoding="utf-8") as f:
    for line in lines:
        if line.startswith("plot,"):
            parts = line.split(",")
            parts[1] = "HR26-B" + parts[2] + "-" + parts[1]
            line = ",".join(parts)
        f.write(line + "\n")
long_db = new_trial("long.furrow")
os.remove(long_db)
subprocess.run([furrow, "trial", "new", "--plan", long_plan, "--db", long_db], check=True, capture_output=True)
r = run("sheets", "--db", long_db, "--out", os.path.join(work, "long.pdf"), "--traits", "height_cm")
text = subprocess.run(["pdftotext", "-layout", os.path.join(work, "long.pdf"), "-"], capture_output=True, text=True).stdout
check(r.returncode == 0 and "HR26-B1-101" in text and "HR26-B4-420" in text, "long plot labels printed whole on the sheet")
r = run("labels", "--db", long_db, "--out", os.path.join(work, "long-labels.pdf"), "--sheet", "roll-50x30")
text = subprocess.run(["pdftotext", os.path.join(work, "long-labels.pdf"), "-"], capture_output=True, text=True).stdout
check(r.returncode == 0 and "HR26-B1-101" in text, "and whole on the stake labels")
r = run("labels", "--db", long_db, "--out", os.path.join(work, "tiny.pdf"), "--sheet", "roll-20x20")
check(r.returncode == 2 and "need at least 0.30 mm to be read" in r.stderr and not os.path.exists(os.path.join(work, "tiny.pdf")),
      f"labels whose QR codes would be too fine are refused ({r.stderr.strip()})")
r = run("labels", "--db", long_db, "--out", work, "--sheet", "a4-3x8")
check(r.returncode == 2 and "is a folder" in r.stderr, "a folder as the output is refused in words")
check.finish()
