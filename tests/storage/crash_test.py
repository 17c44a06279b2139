#!/usr/bin/python3
"""Crash safety of the observation log: a writer process enters observations
and is killed with SIGKILL at random moments, 200 times. After every kill,
every entry the writer reported as saved must be in the database and
PRAGMA integrity_check must say ok.

usage: crash_test.py FURROW CRASH_WRITER PLAN_FILE WORK_DIR [KILLS]
"""
import os
import random
import signal
import sqlite3
import subprocess
import sys
import time

furrow, writer, plan, work = sys.argv[1:5]
kills = int(sys.argv[5]) if len(sys.argv) > 5 else 200
os.makedirs(work, exist_ok=True)
db = os.path.join(work, "crash.furrow")
for suffix in ("", "-wal", "-shm"):
    if os.path.exists(db + suffix):
        os.remove(db + suffix)
subprocess.run([furrow, "trial", "new", "--plan", plan, "--db", db], check=True, capture_output=True)

rng = random.Random(20261201)
saved = set()
failures = 0
for k in range(kills):
    p = subprocess.Popen([writer, db], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    time.sleep(rng.uniform(0.0, 0.08))
    p.send_signal(signal.SIGKILL)
    out, err = p.communicate()
    for line in out.decode().splitlines():
        parts = line.split()
        if len(parts) == 3 and parts[0] == "SAVED":
            saved.add((parts[1], int(parts[2])))
    con = sqlite3.connect(db)
    check = con.execute("PRAGMA integrity_check").fetchone()[0]
    present = set(con.execute("SELECT device_id, sequence FROM observation").fetchall())
    con.close()
    missing = saved - present
    if check != "ok" or missing:
        failures += 1
        print(f"kill {k}: integrity_check {check!r}, {len(missing)} saved entries missing")
print(f"{kills} kills, {len(saved)} entries reported saved, all present and integrity ok in "
      f"{kills - failures} of {kills} checks")
print(f"{kills - failures} passed, {failures} failed")
sys.exit(1 if failures or not saved else 0)
