#!/usr/bin/python3
"""Sync figures over loopback (prints; not a test): one device's day of
N values synced (N = 10,000, 20,000, 40,000: the growth), ten devices of
20,000 values each at once, and a sync resumed after a cut at 90 % of the
bytes of a whole one (the share of the day sent again).

usage: sync_bench.py FURROW SYNC_FIXTURE WORK_DIR
"""
import os
import shutil
import subprocess
import sys
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "sync"))
furrow, fixture, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
CODE = "271828"


def serve(data):
    p = subprocess.Popen([furrow, "serve", "--data", data, "--listen", "127.0.0.1", "--port", "0", "--code", CODE],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    port = None
    for line in p.stdout:
        if "port" in line and "address" in line:
            port = int(line.split("port")[1].split()[0])
        if "stop with" in line:
            break
    return p, port


def fixture_dir(name, devices, rows):
    d = os.path.join(work, name)
    subprocess.run([fixture, d, str(devices), str(rows)], check=True, capture_output=True)
    return d


print("one device's day, synced over loopback (pairing included):")
for rows in (10000, 20000, 40000):
    d = fixture_dir(f"one{rows}", 1, rows)
    p, port = serve(os.path.join(d, "station"))
    t0 = time.perf_counter()
    r = subprocess.run([furrow, "pair", "--data", os.path.join(d, "dev0"), "--station", f"127.0.0.1:{port}", "--code", CODE],
                       capture_output=True, text=True)
    dt = time.perf_counter() - t0
    p.terminate()
    p.wait()
    print(f"  {rows:6d} values: {dt:.2f} s  ({r.stdout.strip().splitlines()[-1]})")

d = fixture_dir("ten", 10, 20000)
p, port = serve(os.path.join(d, "station"))
t0 = time.perf_counter()
procs = [subprocess.Popen([furrow, "pair", "--data", os.path.join(d, f"dev{i}"), "--station", f"127.0.0.1:{port}",
                           "--code", CODE], stdout=subprocess.PIPE, stderr=subprocess.PIPE) for i in range(10)]
codes = [q.wait() for q in procs]
dt = time.perf_counter() - t0
p.terminate()
p.wait()
print(f"ten devices of 20,000 values at once: {dt:.2f} s (exit codes {set(codes)})")

# Resume after a cut at 90 % of a whole sync's bytes.
from sync_proxy import Proxy  # noqa: E402  (the tests' proxy)

d = fixture_dir("resume", 1, 20000)
station_data = os.path.join(d, "station")
shutil.copy(os.path.join(d, "station", "trial.furrow"), os.path.join(work, "station-empty.furrow"))
shutil.copy(os.path.join(d, "dev0", "trial.furrow"), os.path.join(work, "device-start.furrow"))
p, port = serve(station_data)
whole = Proxy(port)
subprocess.run([furrow, "pair", "--data", os.path.join(d, "dev0"), "--station", f"127.0.0.1:{whole.port}", "--code", CODE],
               capture_output=True)
whole.thread.join(10)
p.terminate()
p.wait()
for f in ("trial.furrow-wal", "trial.furrow-shm"):
    for folder in (os.path.join(d, "station"), os.path.join(d, "dev0")):
        if os.path.exists(os.path.join(folder, f)):
            os.remove(os.path.join(folder, f))
shutil.copy(os.path.join(work, "station-empty.furrow"), os.path.join(d, "station", "trial.furrow"))
shutil.copy(os.path.join(work, "device-start.furrow"), os.path.join(d, "dev0", "trial.furrow"))
os.remove(os.path.join(d, "dev0", "station.json"))
p, port = serve(station_data)
cut = Proxy(port, cut=int(whole.moved * 0.9))
subprocess.run([furrow, "pair", "--data", os.path.join(d, "dev0"), "--station", f"127.0.0.1:{cut.port}", "--code", CODE],
               capture_output=True)
cut.thread.join(10)
again = Proxy(port)
subprocess.run([furrow, "sync", "--data", os.path.join(d, "dev0"), "--station", f"127.0.0.1:{again.port}"],
               capture_output=True)
again.thread.join(10)
p.terminate()
p.wait()
print(f"resumed after a cut at 90 % of {whole.moved:,} bytes: {again.moved:,} bytes sent again "
      f"({100 * again.moved / whole.moved:.1f} % of a whole sync)")
