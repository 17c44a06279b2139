#!/usr/bin/python3
"""Merging is all or nothing per bundle: `furrow merge` of ten bundles into a
station is killed with SIGKILL at random moments, 60 times. After every kill
PRAGMA integrity_check must say ok and the station's log must be exactly the
rows of the first k bundles of the merge order, for some k (before or after
each whole bundle, never between).

The ten devices' logs are written straight into their copies of the trial
(one transaction each, rows as the log format allows) so that each bundle
holds 2,000 observations and a merge lasts long enough to be interrupted.

usage: merge_kill_test.py FURROW PLAN_FILE WORK_DIR [KILLS]
"""
import os
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "cli"))
from checks import Checks  # noqa: E402

furrow, plan, work = sys.argv[1:4]
kills = int(sys.argv[4]) if len(sys.argv) > 4 else 60
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()
rng = random.Random(20261201)


def run(*args):
    return subprocess.run([furrow, *args], check=True, capture_output=True, text=True)


station = os.path.join(work, "station.furrow")
run("trial", "new", "--plan", plan, "--db", station)
bundles = []
for d in range(10):
    device = os.path.join(work, f"device{d}.furrow")
    run("trial", "copy", "--from", station, "--db", device, "--by", "Test manager")
    con = sqlite3.connect(device)
    dev_id = con.execute("SELECT device_id FROM this_device").fetchone()[0]
    plots = [r[0] for r in con.execute("SELECT id FROM plot ORDER BY id")]
    # Plant counts and heights, whose limits (0-600 plants, 0-250 cm) take 100-149.
    traits = [r[0] for r in con.execute("SELECT id FROM trait WHERE code IN ('stand_count', 'height_cm') ORDER BY id")]
    with con:
        for seq in range(1, 2001):
            plot = plots[(seq * 7 + d * 13) % len(plots)]
            trait = traits[seq % len(traits)]
            value = str(100 + (seq * 31 + d) % 50)
            con.execute("INSERT INTO observation VALUES (?,?,?,?,1,?,?,NULL,'',?,?,'')",
                        (dev_id, seq, plot, trait, value, float(value), f"crew {d}",
                         f"2026-05-0{1 + d % 9}T08:{seq // 60 % 60:02d}:{seq % 60:02d}.000Z"))
    con.close()
    out = os.path.join(work, f"device{d}.bundle")
    run("bundle", "--db", device, "--out", out)
    bundles.append(out)


def keys(path, table="observation"):
    if path.endswith(".bundle"):
        # A signed bundle: its SQLite database starts at byte 120 (storage/bundle.h).
        with open(path, "rb") as f:
            image = f.read()[120:]
        path = path + ".sqlite"
        with open(path, "wb") as f:
            f.write(image)
    con = sqlite3.connect(f"file:{path}?mode=ro", uri=True)
    k = set(con.execute(f"SELECT device_id, sequence FROM {table}").fetchall())
    con.close()
    return k


bundle_keys = [keys(b) for b in bundles]
check(all(len(k) == 2000 for k in bundle_keys), "each bundle holds its device's 2,000 observations")

# How long an uninterrupted merge takes, to spread the kills over it.
pristine = os.path.join(work, "pristine.furrow")
shutil.copy(station, pristine)
t0 = time.perf_counter()
run("merge", "--db", station, *bundles)
full = time.perf_counter() - t0
check(keys(station) == set().union(*bundle_keys), "an uninterrupted merge holds every bundle's rows")

seen_partial = 0
for k in range(kills):
    target = os.path.join(work, "killed.furrow")
    for suffix in ("", "-wal", "-shm"):
        if os.path.exists(target + suffix):
            os.remove(target + suffix)
    shutil.copy(pristine, target)
    order = bundles[:]
    rng.shuffle(order)
    p = subprocess.Popen([furrow, "merge", "--db", target, *order], stdout=subprocess.DEVNULL,
                         stderr=subprocess.DEVNULL)
    time.sleep(rng.uniform(0.0, full * 1.1))
    p.send_signal(signal.SIGKILL)
    p.wait()
    con = sqlite3.connect(target)
    ok = con.execute("PRAGMA integrity_check").fetchone()[0]
    present = set(con.execute("SELECT device_id, sequence FROM observation").fetchall())
    con.close()
    prefixes = [set()]
    for b in order:
        prefixes.append(prefixes[-1] | bundle_keys[bundles.index(b)])
    whole = [i for i, pre in enumerate(prefixes) if pre == present]
    check(ok == "ok", f"kill {k}: integrity_check ok ({ok})")
    check(len(whole) == 1, f"kill {k}: the log is the first k whole bundles ({len(present)} rows)")
    if whole and 0 < whole[0] < len(order):
        seen_partial += 1
print(f"{kills} kills during a {full * 1000:.0f} ms merge; {seen_partial} stopped between bundles "
      f"(the rest before the first or after the last)")
check(seen_partial >= kills // 4, "kills landed inside the merge, not only before or after it")
check.finish()
