#!/usr/bin/python3
"""End to end through a trial database: a several-sites plan is randomised,
every plot recorded through `furrow record`, one value edited, and the
database analysis must equal the CSV analysis of the exported wide table;
the long export keeps one line per live record with observer and device.

usage: trial_flow_test.py FURROW WORK_DIR
"""
import csv
import io
import json
import os
import random
import shutil
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from checks import Checks  # noqa: E402

furrow, work = sys.argv[1:3]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()


def run(*args):
    return subprocess.run([furrow, *args], capture_output=True, text=True)


plan = os.path.join(work, "sites.plan.csv")
with open(plan, "w") as f:
    f.write("furrow-plan,1\nsetting,name,three-site test\nsetting,design,multi-site\n"
            "setting,sites,Ridge North|Ridge South|Lowland\nsetting,replicates,3\nsetting,rows,3\n"
            "setting,columns,6\nsetting,seed,11\nfactor,entry,A,B,C,D,E,F\n"
            "trait,y,yield,t/ha,decimal,2,0,20,,,yes,1,\n")
db = os.path.join(work, "sites.furrow")
check(run("trial", "new", "--plan", plan, "--db", db).returncode == 0, "trial new")
layout = list(csv.DictReader(io.StringIO(run("export", "--db", db, "--layout").stdout)))
check(len(layout) == 54, "54 plots in the layout")
rng = random.Random(3)
effect = {e: rng.gauss(0, 0.5) for e in "ABCDEF"}
site = {"Ridge North": 0.0, "Ridge South": 1.0, "Lowland": -0.5}
for r in layout:
    v = 5 + effect[r["entry"]] + site[r["site"]] + rng.gauss(0, 0.2)
    p = run("record", "--db", db, "--plot", r["label"], "--trait", "y", "--value", f"{v:.2f}",
            "--observer", "Tam", "--confirm")
    check(p.returncode == 0 and p.stdout.startswith("saved"), f"record {r['label']}")
first = layout[0]["label"]
check(run("record", "--db", db, "--plot", first, "--trait", "y", "--value", "5.55", "--observer", "Tam",
          "--confirm").returncode == 0, "an edit is saved")
long_rows = list(csv.DictReader(io.StringIO(run("export", "--db", db, "--long").stdout)))
check(len(long_rows) == 54, "the long export has one live record per plot after the edit")
check([r["value"] for r in long_rows if r["label"] == first] == ["5.55"], "the edit is the live value")
check(all(r["observer"] == "Tam" and len(r["device"]) == 16 for r in long_rows), "observer and device kept")
wide = os.path.join(work, "wide.csv")
check(run("export", "--db", db, "--wide", "--out", wide).returncode == 0, "wide export written")
from_db = json.loads(run("analyze", "--db", db, "--trait", "y", "--json").stdout)
from_csv = json.loads(run("analyze", "--csv", wide, "--design", "multi-site", "--site", "site", "--block", "block",
                          "--treatment", "entry", "--response", "y", "--json").stdout)
check(from_db["n"] == 54 and from_csv["n"] == 54, "54 plots analysed both ways")
for a, b in zip(from_db["table"], from_csv["table"]):
    check(a["source"] == b["source"] and abs(a["ss"] - b["ss"]) <= 1e-9 * max(1, abs(b["ss"])),
          f"row {a['source']} equal from the database and from the export")
check.finish()
