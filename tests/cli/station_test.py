#!/usr/bin/python3
"""Day's end on the command line: devices copy the station's trial, record,
write bundles; the station merges them (twice, in another order), lists the
conflicts as text and JSON, settles them three ways; a device takes the
station's bundle and sees the settled values. Refused bundles and refused
settlements exit 2, name the file and leave the station byte for byte.

usage: station_test.py FURROW SOURCE_DIR WORK_DIR
"""
import json
import os
import shutil
import sqlite3
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from checks import Checks  # noqa: E402

furrow, src, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()
plan = os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv")


def run(*args, ok=True):
    p = subprocess.run([furrow, *args], capture_output=True, text=True)
    if ok and p.returncode != 0:
        sys.exit(f"furrow {' '.join(args)}: exit {p.returncode}: {p.stderr}")
    return p


def path(name):
    return os.path.join(work, name)


def content(name):
    with open(path(name), "rb") as f:
        return f.read()


run("trial", "new", "--plan", plan, "--db", path("station.furrow"))
for d in ("a", "b", "c"):
    run("trial", "copy", "--from", path("station.furrow"), "--db", path(f"{d}.furrow"))
# a and b both measure plots 101-104; they disagree on 102 and 104. c measures 105.
for d, values in (("a", {"101": "96", "102": "98", "103": "101", "104": "88"}),
                  ("b", {"101": "96", "102": "89", "103": "101", "104": "99"}),
                  ("c", {"105": "93"})):
    for plot, v in values.items():
        run("record", "--db", path(f"{d}.furrow"), "--plot", plot, "--trait", "height_cm", "--value", v,
            "--observer", f"crew {d}", "--confirm")
for d in ("a", "b", "c"):
    out = run("bundle", "--db", path(f"{d}.furrow"), "--out", path(f"{d}.bundle")).stdout
    check(" observation" in out and "checksum" in out, f"bundle {d} says what it holds ({out.strip()})")
merged = run("merge", "--db", path("station.furrow"), path("a.bundle"), path("b.bundle"), path("c.bundle")).stdout
check("2 conflicts to settle" in merged, f"merge reports the conflicts ({merged.strip()})")
again = run("merge", "--db", path("station.furrow"), path("c.bundle"), path("b.bundle"), path("a.bundle")).stdout
check(again.count("0 new observations") == 3, "merging the same bundles again adds nothing")

text = run("conflicts", "--db", path("station.furrow")).stdout
check(text.startswith("2 conflicts") and "plot 102" in text and "plot 104" in text, "conflicts listed as text")
listed = json.loads(run("conflicts", "--db", path("station.furrow"), "--json").stdout)
check([c["plot"] for c in listed] == ["102", "104"], "conflicts listed as JSON, in walking order")
check(sorted(r["value"] for r in listed[0]["rows"]) == ["89", "98"], "both values of plot 102 are shown")
check(all(r["observer"].startswith("crew ") for c in listed for r in c["rows"]), "with who recorded them")

# Refused settlements leave the station as it was.
before = content("station.furrow")
bad = run("settle", "--db", path("station.furrow"), "--plot", "102", "--trait", "height_cm", "--value", "900",
          "--by", "Station manager", ok=False)
check(bad.returncode == 2 and "refused" in bad.stderr, f"a value past the hard limit is refused ({bad.stderr.strip()})")
bad = run("settle", "--db", path("station.furrow"), "--plot", "101", "--trait", "height_cm", "--value", "96",
          "--by", "Station manager", ok=False)
check(bad.returncode == 2 and "not in conflict" in bad.stderr, "a cell without a conflict cannot be settled")
bad = run("settle", "--db", path("station.furrow"), "--plot", "102", "--trait", "height_cm", "--keep", "nobody/1",
          "--by", "Station manager", ok=False)
check(bad.returncode == 2 and "not one of the disagreeing rows" in bad.stderr, "keep must name a disagreeing row")
check(content("station.furrow") == before, "refused settlements change nothing")

bad = run("settle", "--db", path("station.furrow"), "--plot", "102", "--trait", "height_cm", "--keep-value", "97",
          "--by", "Station manager", ok=False)
check(bad.returncode == 2 and "no row of plot 102, height_cm holds 97" in bad.stderr,
      f"--keep-value names a value one row holds ({bad.stderr.strip()})")
check(content("station.furrow") == before, "a refused --keep-value changes nothing")
# The station manager keeps 98 by its value, with no device id to copy
# (98.0 is the same value).
run("settle", "--db", path("station.furrow"), "--plot", "102", "--trait", "height_cm", "--keep-value", "98.0",
    "--by", "Station manager")
run("settle", "--db", path("station.furrow"), "--plot", "104", "--trait", "height_cm", "--missing", "plot damaged",
    "--by", "Station manager", "--note", "hail on the east end")
check(json.loads(run("conflicts", "--db", path("station.furrow"), "--json").stdout) == [], "no conflicts left")

run("bundle", "--db", path("station.furrow"), "--out", path("station.bundle"))
run("merge", "--db", path("b.furrow"), path("station.bundle"))
rows = {r.split(",")[0]: r for r in run("export", "--db", path("b.furrow"), "--long").stdout.splitlines()[1:]}
check(",98," in rows["102"] and "Station manager" in rows["102"], "device b now has the kept value 98 for plot 102")
check("plot damaged" in rows["104"], "and plot 104 marked missing")
check("105" in rows, "and c's plot 105 through the station")
# b's next bundle holds only what the station has not seen.
run("record", "--db", path("b.furrow"), "--plot", "106", "--trait", "height_cm", "--value", "97", "--observer", "crew b",
    "--confirm")
out = run("bundle", "--db", path("b.furrow"), "--out", path("b2.bundle")).stdout
check("bundle" in out and ": 1 observation," in out, f"b's second bundle holds its one new row ({out.strip()})")

# Refused bundles.
run("trial", "new", "--plan", plan, "--db", path("other.furrow"))
run("bundle", "--db", path("other.furrow"), "--out", path("other.bundle"))
shutil.copy(path("a.bundle"), path("altered.bundle"))
con = sqlite3.connect(path("altered.bundle"))
with con:
    con.execute("UPDATE observation SET value = '69' WHERE value = '96'")
con.close()
with open(path("a.bundle"), "rb") as f:
    whole = f.read()
with open(path("truncated.bundle"), "wb") as f:
    f.write(whole[: len(whole) // 2])
with open(path("notes.bundle"), "w") as f:
    f.write("plot,height\n101,96\n")
before = content("station.furrow")
for name, expect in (("other.bundle", "does not hold"), ("altered.bundle", "checksum"), ("truncated.bundle", ""),
                     ("notes.bundle", "not a Furrow bundle"), ("a.furrow", "another kind of SQLite file"),
                     ("missing.bundle", "cannot be read")):
    p = run("merge", "--db", path("station.furrow"), path(name), ok=False)
    check(p.returncode == 2 and path(name) in p.stderr and expect in p.stderr,
          f"{name} refused with its name and reason ({p.stderr.strip()[:160]})")
    check(content("station.furrow") == before, f"{name}: the station is byte for byte as it was")
check.finish()
