#!/usr/bin/python3
"""A scripted walk on the real field app under Xvfb: a fresh demo trial, a
walk of plant height on all 80 plots, each value typed on the keypad and
saved with Save, tapped with xdotool where the app says its buttons are
(--targets-out). Prints taps per value and seconds per value (machine speed:
what the app adds to a crew's own time), and checks that the log holds the
80 values exactly, each on its plot.

usage: walk_bench.py FURROW SOURCE_DIR WORK_DIR
"""
import csv
import os
import shutil
import subprocess
import sys
import time

furrow, src, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
db = os.path.join(work, "walk.furrow")
subprocess.run([furrow, "trial", "new", "--plan", os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv"),
                "--db", db], check=True, capture_output=True)
subprocess.run([furrow, "walk", "--db", db, "--traits", "height_cm"], check=True, capture_output=True)
# Heights of the demo day, in walking order; a flooded plot gets 90.
with open(os.path.join(src, "demo_data", "harrow_ridge_oats_2026.csv"), encoding="utf-8") as f:
    heights = {r["plot"]: (r["height_cm"] or "90") for r in csv.DictReader(f)}
layout = subprocess.run([furrow, "export", "--db", db, "--layout"], check=True, capture_output=True, text=True).stdout
order = [line.split(",")[0] for line in layout.splitlines()[1:]]
values = [heights[p] if heights[p] != "8.3" else "83" for p in order]
taps = sum(len(v) + 1 for v in values)   # each digit, then Save

targets = os.path.join(work, "targets.txt")
lines = [f"""
tap() {{
  xy=$(awk -v k="$1" '{{l=$5; for (i=6;i<=NF;i++) l=l" "$i; if (l==k) {{print int(($1+$3)/2), int(($2+$4)/2); exit}}}}' '{targets}')
  xdotool mousemove $xy click 1
  sleep 0.05
}}
'{furrow}' field --db '{db}' --observer 'Walker' --targets-out '{targets}' &
app=$!
sleep 3
xdotool search --sync --name '^Furrow' windowfocus --sync
xdotool mousemove 640 790
sleep 1
date +%s.%N > '{work}/start'
"""]
for v in values:
    lines.append(" ".join(f"tap '{d}';" for d in v) + " tap Save; sleep 0.05")
lines.append(f"""date +%s.%N > '{work}/end'
sleep 1
kill $app
wait $app
""")
p = subprocess.run(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset", "sh", "-c", "\n".join(lines)],
                   env=dict(os.environ, FURROW_DATA_DIR=os.path.join(work, "data")), capture_output=True, text=True,
                   timeout=900)
start = float(open(os.path.join(work, "start")).read())
end = float(open(os.path.join(work, "end")).read())
rows = subprocess.run([furrow, "export", "--db", db, "--long"], check=True, capture_output=True, text=True).stdout
saved = {}
for r in csv.reader(rows.splitlines()[1:]):
    if "height_cm" in r:
        saved[r[0]] = r
ok = all(p in saved and values[i] in saved[p] for i, p in enumerate(order))
print(f"scripted walk: {len(values)} plots, {taps} taps, {taps / len(values):.2f} taps per value")
print(f"  {end - start:.1f} s from the first tap to the last Save ({(end - start) / len(values):.2f} s per value, "
      f"of which {0.05 * taps / len(values) + 0.05:.2f} s are the script's own pauses)")
print(f"  the log holds {len(saved)} heights; every one on its plot with the value typed: {'yes' if ok else 'NO'}")
sys.exit(0 if ok and len(saved) == len(values) else 1)
