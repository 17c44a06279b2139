#!/usr/bin/python3
"""Stake labels read back as a crew's phone would: the demo trial's labels
PDF rendered at 300 dpi by poppler (pdftoppm), each label's rectangle of the
stated sheet layout cut out and decoded by an independent reader (zbarimg,
Debian's zbar-tools): every plot's code is found once, in its own rectangle,
in walk order, holding the trial's identity and the plot label. The label
positions measured from the PDF's text boxes (pdftotext -bbox) match the
layout to 0.5 mm. Also at the smallest roll label offered (30 x 20 mm).

usage: labels_test.py FURROW SOURCE_DIR WORK_DIR
"""
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
db = os.path.join(work, "demo.furrow")
subprocess.run([furrow, "trial", "new", "--plan", plan, "--db", db], check=True, capture_output=True)
layout = subprocess.run([furrow, "export", "--db", db, "--layout"], check=True, capture_output=True,
                        text=True).stdout.splitlines()
header = layout[0].split(",")
rows = [dict(zip(header, line.split(","))) for line in layout[1:]]
walk = [r["label"] for r in sorted(rows, key=lambda r: int(r["walk_order"]))]
show = subprocess.run([furrow, "trial", "show", "--db", db], check=True, capture_output=True, text=True).stdout
name = show.splitlines()[0].strip()

# Stated layouts (app/print/stake_labels.cpp): page and label sizes, first corner, gaps, in mm.
SHEETS = {
    "a4-3x8": dict(columns=3, rows=8, w=70, h=37, left=0, top=0.5, gx=0, gy=0),
    "roll-30x20": dict(columns=1, rows=1, w=30, h=20, left=0, top=0, gx=0, gy=0),
}
MM = 300 / 25.4   # pixels per mm at 300 dpi


def place(sheet, i):
    per = sheet["columns"] * sheet["rows"]
    k = i % per
    r, c = divmod(k, sheet["columns"])
    return i // per + 1, sheet["left"] + c * (sheet["w"] + sheet["gx"]), sheet["top"] + r * (sheet["h"] + sheet["gy"])


def decode(pdf, page, x, y, w, h):
    png = os.path.join(work, "cut")
    subprocess.run(["pdftoppm", "-r", "300", "-f", str(page), "-l", str(page), "-x", str(int(x * MM)),
                    "-y", str(int(y * MM)), "-W", str(int(w * MM)), "-H", str(int(h * MM)), "-png", "-singlefile",
                    pdf, png], check=True, capture_output=True)
    out = subprocess.run(["zbarimg", "-q", "--raw", png + ".png"], capture_output=True, text=True)
    return [line for line in out.stdout.splitlines() if line]


uid = None
for key, sheet in SHEETS.items():
    pdf = os.path.join(work, f"labels-{key}.pdf")
    r = subprocess.run([furrow, "labels", "--db", db, "--out", pdf, "--sheet", key], capture_output=True, text=True)
    check(r.returncode == 0 and "80 plots in walk order" in r.stdout, f"{key}: written ({r.stdout.strip()})")
    found = []
    for i, label in enumerate(walk):
        page, x, y = place(sheet, i)
        codes = decode(pdf, page, x, y, sheet["w"], sheet["h"])
        found.append(codes[0] if len(codes) == 1 else None)
        if len(codes) != 1:
            check(False, f"{key}: label {i + 1} (plot {label}) decodes to {codes}")
    parts = [c.split("|") if c else None for c in found]
    check(all(p and p[0] == "FRW1" and len(p) == 4 for p in parts), f"{key}: every label holds a stake code")
    if all(parts):
        uid = parts[0][1]
        check(all(p[1] == uid and len(uid) == 32 for p in parts), f"{key}: every code holds the trial's identity")
        check(all(p[2] == name.encode()[:40].decode() for p in parts), f"{key}: and its name, cut to 40 bytes ({parts[0][2]})")
        check([p[3] for p in parts] == walk, f"{key}: each plot once, in walk order, in its own rectangle")
    # The big plot label of each label: where the layout puts it, to 0.5 mm.
    bbox = subprocess.run(["pdftotext", "-bbox", pdf, "-"], capture_output=True, text=True).stdout
    pages = bbox.split("<page ")[1:]
    worst = 0.0
    first_offset = None
    for i, label in enumerate(walk):
        page, x, y = place(sheet, i)
        words = re.findall(r'xMin="([\d.]+)" yMin="([\d.]+)" xMax="[\d.]+" yMax="[\d.]+">([^<]*)<', pages[page - 1])
        # The plot label is the label's largest word (set in large type first).
        mine = [(float(a) / 72 * 25.4, float(b) / 72 * 25.4) for a, b, w in words if w == label]
        if not mine:
            check(False, f"{key}: plot {label} has no text on page {page}")
            continue
        mx, my = min(mine, key=lambda p: abs(p[0] - x) + abs(p[1] - y))
        offset = (mx - x, my - y)
        if first_offset is None:
            first_offset = offset
        worst = max(worst, abs(offset[0] - first_offset[0]), abs(offset[1] - first_offset[1]))
    check(worst <= 0.5, f"{key}: every label sits where the layout puts it (largest deviation {worst:.3f} mm)")

# A scanned code opens its plot on the trial's own copy through the command line too.
r = subprocess.run([furrow, "record", "--db", db, "--plot", f"FRW1|{uid}|{name}|{walk[5]}", "--trait", "height_cm",
                    "--value", "97", "--observer", "Ana"], capture_output=True, text=True)
check(r.returncode == 0 and f"plot {walk[5]}" in r.stdout, f"record takes a scanned stake code ({r.stdout.strip()})")
check.finish()
