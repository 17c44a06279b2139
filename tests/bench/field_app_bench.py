#!/usr/bin/python3
"""Field app figures under Xvfb + Mesa (software rendering, no GPU):

  * start to a drawn Record screen on the demo trial (median of 5 starts);
  * frame time of the Field map on a 2,000-plot trial (500 entries x 4 blocks
    on a 40 x 50 grid, 1,500 plots measured), status, value and residual
    colouring, whole field and zoomed in;
  * resident memory of the app with the 2,000-plot map open;
  * CPU used while idle for 10 s.

usage: field_app_bench.py FURROW SOURCE_DIR WORK_DIR
"""
import os
import random
import shutil
import signal
import statistics
import subprocess
import sys
import time

furrow, src, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
env = dict(os.environ, FURROW_DATA_DIR=os.path.join(work, "data"))
XVFB = ["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset"]

# The demo trial with its partly collected day.
demo = os.path.join(work, "demo.furrow")
subprocess.run(["/usr/bin/python3", os.path.join(src, "demo_data", "load_demo_day.py"), furrow,
                os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv"),
                os.path.join(src, "demo_data", "harrow_ridge_oats_2026.csv"), demo], check=True, capture_output=True)

# A 2,000-plot nursery with 1,500 plots measured through `furrow record`.
plan = os.path.join(work, "nursery.plan.csv")
with open(plan, "w") as f:
    f.write("furrow-plan,1\nsetting,name,bench nursery\nsetting,design,rcbd\nsetting,replicates,4\n"
            "setting,rows,40\nsetting,columns,50\nsetting,seed,11\nfactor,entry,"
            + ",".join(f"G{e}" for e in range(1, 501)) + "\ntrait,HT,plant height,cm,decimal,0,0,300,40,160,yes,1,\n")
big = os.path.join(work, "nursery.furrow")
subprocess.run([furrow, "trial", "new", "--plan", plan, "--db", big], check=True, capture_output=True)
layout = subprocess.run([furrow, "export", "--db", big, "--layout"], check=True, capture_output=True,
                        text=True).stdout.splitlines()
labels = [line.split(",")[0] for line in layout[1:]]
rng = random.Random(5)
t0 = time.perf_counter()
for label in labels[:1500]:
    value = f"{rng.gauss(100, 8):.0f}"
    p = subprocess.run([furrow, "record", "--db", big, "--plot", label, "--trait", "HT", "--value", value,
                        "--observer", "bench"], capture_output=True, text=True)
    if p.returncode == 3:
        p = subprocess.run([furrow, "record", "--db", big, "--plot", label, "--trait", "HT", "--value", value,
                            "--observer", "bench", "--confirm"], capture_output=True, text=True)
    if p.returncode != 0:
        sys.exit(f"record {label}: {p.stderr}")
print(f"recorded 1,500 values through furrow record in {time.perf_counter() - t0:.1f} s")

# Start to a drawn Record screen.
starts = []
for _ in range(5):
    p = subprocess.run(XVFB + [furrow, "field", "--db", demo, "--observer", "bench", "--bench-frames", "1"],
                       capture_output=True, text=True, env=env, check=True)
    starts.append(float(p.stdout.split("start to first drawn frame:")[1].split("ms")[0]))
print(f"start to a drawn Record screen (demo trial, inside the process): median {statistics.median(starts):.0f} ms,"
      f" range {min(starts):.0f}-{max(starts):.0f} ms")

# Frame times of the Field map.
for view in ("map",):
    p = subprocess.run(XVFB + [furrow, "field", "--db", big, "--observer", "bench", "--screen", view,
                               "--bench-frames", "200"], capture_output=True, text=True, env=env, check=True)
    print(f"Field map, 2,000 plots, whole field, status colouring:\n  " + p.stdout.strip().replace("\n", "\n  "))

# Resident memory and idle CPU: the app waiting on the 2,000-plot map.
proc = subprocess.Popen(XVFB + [furrow, "field", "--db", big, "--observer", "bench", "--screen", "map"], env=env,
                        start_new_session=True)
time.sleep(6)
pid = subprocess.run(["pgrep", "-n", "-f", f"furrow field --db {big}"], capture_output=True, text=True).stdout.split()
if pid:
    def ticks():
        with open(f"/proc/{pid[0]}/stat") as s:
            fields = s.read().rsplit(")", 1)[1].split()
        return int(fields[11]) + int(fields[12])
    with open(f"/proc/{pid[0]}/status") as s:
        rss = [l for l in s if l.startswith("VmRSS")][0].split()[1]
    before = ticks()
    time.sleep(10)
    used = ticks() - before
    hz = os.sysconf("SC_CLK_TCK")
    print(f"resident memory with the 2,000-plot map open: {int(rss) / 1024:.0f} MB")
    print(f"idle for 10 s on the map: {used} ticks of {10 * hz} ({100 * used / (10 * hz):.2f} % of one core)")
os.killpg(proc.pid, signal.SIGTERM)
proc.wait()
