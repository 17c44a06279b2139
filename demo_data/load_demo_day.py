#!/usr/bin/python3
"""Builds the demo trial database with a partly collected day.

Creates DB from the plan file, then records, through `furrow record` as a crew
would, the first day's walk: stand count and plant height on every plot and
days to heading on blocks 1 and 2. Plot 214 (flooded) is recorded as missing;
the hurried crew confirmed the height 8.3 (for 83 cm) on plot 307 (a decimal slip the
analysis then lists as an outlier plot).

usage: load_demo_day.py FURROW PLAN_FILE DATA_CSV DB
"""
import csv
import os
import subprocess
import sys

furrow, plan, data, db = sys.argv[1:5]
for suffix in ("", "-wal", "-shm"):
    if os.path.exists(db + suffix):
        os.remove(db + suffix)
subprocess.run([furrow, "trial", "new", "--plan", plan, "--db", db], check=True)
with open(data, encoding="utf-8") as f:
    rows = list(csv.DictReader(f))
saved = confirmed = 0
for trait in ("stand_count", "height_cm", "heading_days"):
    observer = {"stand_count": "Mara Quist", "height_cm": "Tobi Lenz", "heading_days": "Mara Quist"}[trait]
    for r in rows:
        if trait == "heading_days" and r["block"] not in ("1", "2"):
            continue
        args = [furrow, "record", "--db", db, "--plot", r["plot"], "--trait", trait, "--observer", observer]
        if r[trait] == "":
            args += ["--missing", "flooded", "--note", r["note"]]
        else:
            args += ["--value", r[trait]]
        p = subprocess.run(args, capture_output=True, text=True)
        if p.returncode == 3:
            p = subprocess.run(args + ["--confirm"], capture_output=True, text=True)
            confirmed += 1
        if p.returncode != 0:
            sys.exit(f"demo day: {' '.join(args[2:])}: {p.stderr.strip()}")
        saved += 1
# Today's walk on the device: stand count and height on every plot.
subprocess.run([furrow, "walk", "--db", db, "--traits", "stand_count,height_cm"], check=True, capture_output=True)
print(f"demo day recorded: {saved} entries ({confirmed} confirmed after a warning) in {db}")
