#!/usr/bin/python3
"""Sync over the network, on this machine's loopback only (127.0.0.1).

A. Ten devices sync with one station concurrently, in random orders and
   repeats: the station ends with the log and conflict list that merging the
   same devices' bundle files gives, and every device that asks for the
   others' rows ends with the station's log.
B. A proxy between device and station cuts the connection at random byte
   offsets (200 cuts, both directions) and stalls it: after the device syncs
   again nothing is lost or duplicated, and both databases pass SQLite's
   integrity check after every cut.
C. The station killed with SIGKILL mid-sync (50 times): the same.
D. Refused and logged at the station, nothing merged: a wrong pairing code,
   an unknown device, a revoked device, a message replayed from an earlier
   sync, one byte altered in transit.
E. A backup taken while ten devices sync holds every row committed before
   it started and passes the integrity check; restored, the station merges
   the same bundles to the same state.

usage: sync_test.py FURROW SYNC_FIXTURE WORK_DIR [--quick]
"""
import json
import os
import random
import shutil
import signal
import socket
import sqlite3
import subprocess
import sys
import threading
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "cli"))
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from checks import Checks  # noqa: E402
from sync_proxy import Proxy  # noqa: E402

furrow, fixture, work = sys.argv[1:4]
quick = "--quick" in sys.argv
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()
rng = random.Random(20261202)
CODE = "314159"


def run(*args, timeout=120):
    return subprocess.run([furrow, *args], capture_output=True, text=True, timeout=timeout)


def make_fixture(name, devices, rows):
    d = os.path.join(work, name)
    subprocess.run([fixture, d, str(devices), str(rows)], check=True, capture_output=True)
    return d


class Station:
    """furrow serve on 127.0.0.1, any free port."""

    def __init__(self, data, timeout=30, backup_to=None, keep=14):
        self.data, self.timeout, self.backup_to, self.keep = data, timeout, backup_to, keep
        self.start()

    def start(self):
        args = [furrow, "serve", "--data", self.data, "--listen", "127.0.0.1", "--port", "0", "--code", CODE,
                "--timeout", str(self.timeout)]
        if self.backup_to:
            args += ["--backup-to", self.backup_to, "--keep", str(self.keep)]
        self.proc = subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        self.port = None
        for line in self.proc.stdout:
            if "port" in line and "address" in line:
                self.port = int(line.split("port")[1].split()[0])
            if "stop with" in line:
                break
        assert self.port, "the station did not start"

    def address(self):
        return f"127.0.0.1:{self.port}"

    def stop(self):
        self.proc.send_signal(signal.SIGTERM)
        try:
            out, _ = self.proc.communicate(timeout=30)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            out = ""
        return out

    def kill(self):
        self.proc.kill()
        self.proc.wait()


def log_of(data):
    path = os.path.join(data, "sync", "log.jsonl")
    if not os.path.exists(path):
        return []
    with open(path, encoding="utf-8") as f:
        return [json.loads(line) for line in f if line.strip()]


def log_rows(db):
    """The whole log in key order, by plot label and trait code."""
    c = sqlite3.connect(db)
    try:
        obs = c.execute("SELECT o.device_id, o.sequence, p.label, t.code, o.occasion, o.value, o.number, "
                        "o.missing_reason, o.note, o.observer, o.recorded_at, o.confirmed_checks FROM observation o "
                        "JOIN plot p ON p.id = o.plot_id JOIN trait t ON t.id = o.trait_id "
                        "ORDER BY o.device_id, o.sequence").fetchall()
        links = c.execute("SELECT * FROM replacement ORDER BY 1, 2, 3, 4").fetchall()
    finally:
        c.close()
    return obs, links


def count_of(db, device_id=None):
    c = sqlite3.connect(db)
    try:
        if device_id:
            n, mx = c.execute("SELECT count(*), coalesce(max(sequence), 0) FROM observation WHERE device_id = ?",
                              (device_id,)).fetchone()
            return n, mx
        return c.execute("SELECT count(*) FROM observation").fetchone()[0]
    finally:
        c.close()


def integrity(db):
    c = sqlite3.connect(db)
    try:
        return c.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        c.close()


def device_id_of(db):
    c = sqlite3.connect(db)
    try:
        return c.execute("SELECT device_id FROM this_device").fetchone()[0]
    finally:
        c.close()


def conflicts(db):
    return json.loads(run("conflicts", "--db", db, "--json").stdout)


def remove_db(path):
    for s in ("", "-wal", "-shm"):
        if os.path.exists(path + s):
            os.remove(path + s)


def copy_db(src, dst):
    """A trial file copied whole (its WAL folded in first by a backup)."""
    remove_db(dst)
    tmp = os.path.join(work, "copying")
    shutil.rmtree(tmp, ignore_errors=True)
    r = run("backup", "--db", src, "--to", tmp, "--keep", "0")
    assert r.returncode == 0, r.stderr
    shutil.move(os.path.join(tmp, os.listdir(tmp)[0]), dst)
    shutil.rmtree(tmp)


# --- A. Ten devices, concurrently, random orders and repeats -----------------
fx = make_fixture("ten", 10, 300)
station_db = os.path.join(fx, "station", "trial.furrow")
devices = [os.path.join(fx, f"dev{d}") for d in range(10)]
device_dbs = [os.path.join(d, "trial.furrow") for d in devices]
# The file-based reference: the station as it was, and each device's bundle file.
ref_db = os.path.join(work, "reference.furrow")
shutil.copy(os.path.join(fx, "station-before.furrow"), ref_db)
for i, db in enumerate(device_dbs):
    b = os.path.join(work, f"ten{i}.bundle")
    check(run("bundle", "--db", db, "--out", b).returncode == 0, f"A: device {i}'s bundle file written")
order = list(range(10))
rng.shuffle(order)
r = run("merge", "--db", ref_db, *[os.path.join(work, f"ten{i}.bundle") for i in order])
check(r.returncode == 0, f"A: the reference merged the ten bundle files ({r.stderr.strip()[:200]})")

station = Station(os.path.join(fx, "station"))
results = []


def device_runs(i):
    time.sleep(rng.random() * 0.3)
    p = run("pair", "--data", devices[i], "--station", station.address(), "--code", CODE)
    results.append((i, "pair", p.returncode, p.stderr))
    for _ in range(rng.randint(1, 3)):
        time.sleep(rng.random() * 0.2)
        args = ["sync", "--data", devices[i]] + (["--others"] if rng.random() < 0.4 else [])
        p = run(*args)
        results.append((i, "sync", p.returncode, p.stderr))


threads = [threading.Thread(target=device_runs, args=(i,)) for i in order]
for t in threads:
    t.start()
for t in threads:
    t.join()
check(all(rc == 0 for _, _, rc, _ in results),
      f"A: every pairing and sync succeeded ({[x for x in results if x[2] != 0][:2]})")
check(log_rows(station_db) == log_rows(ref_db), "A: the station's log equals the file-based merge of the same bundles")
check(conflicts(station_db) == conflicts(ref_db) and len(conflicts(ref_db)) > 0,
      f"A: and its conflict list ({len(conflicts(ref_db))} conflicts)")
for i in range(10):
    run("sync", "--data", devices[i], "--others")
same = [log_rows(db) == log_rows(ref_db) for db in device_dbs]
check(all(same), f"A: every device asking for the others' rows holds the same log ({same.count(True)} of 10)")
check(all(conflicts(db) == conflicts(ref_db) for db in device_dbs), "A: and the same conflict list")
synced = [e for e in log_of(os.path.join(fx, "station")) if e["event"] == "synced"]
check(len({e["device_id"] for e in synced}) == 10, "A: the station's log names all ten devices as synced")
today = json.loads(run("device", "today", "--data", os.path.join(fx, "station"), "--json").stdout)
check(len(today) == 10 and all(d["synced_today"] and d["rows_today"] == 300 for d in today),
      "A: furrow device today: ten devices synced today, 300 values each")
station.stop()

# A settlement made at the station reaches a device that syncs (settlements only).
conflict = conflicts(station_db)[0]
r = run("settle", "--db", station_db, "--plot", conflict["plot"], "--trait", conflict["trait"], "--occasion",
        str(conflict["occasion"]), "--value", "99.9", "--by", "Station manager", "--note", "re-measured")
check(r.returncode == 0, f"A: settled at the station ({r.stderr.strip()})")
fx_s = make_fixture("settle", 6, 50)   # devices 0 and 5 record the same cells
st_db = os.path.join(fx_s, "station", "trial.furrow")
station = Station(os.path.join(fx_s, "station"))
for d in (0, 5):
    run("pair", "--data", os.path.join(fx_s, f"dev{d}"), "--station", station.address(), "--code", CODE)
c0 = conflicts(st_db)[0]
station.stop()
before_settling = os.path.join(work, "before-settling")
run("backup", "--db", st_db, "--to", before_settling)
station = Station(os.path.join(fx_s, "station"))
run("settle", "--db", st_db, "--plot", c0["plot"], "--trait", c0["trait"], "--occasion", str(c0["occasion"]),
    "--value", "77.7", "--by", "Station manager")
r = run("sync", "--data", os.path.join(fx_s, "dev0"), "--station", station.address())
check(r.returncode == 0 and "received 1 settlement" in r.stdout, f"A: the device received the settlement ({r.stdout.strip()})")
dev0 = os.path.join(fx_s, "dev0", "trial.furrow")
live = run("export", "--db", dev0, "--long").stdout
check(any(line.startswith(c0["plot"] + ",") and ",77.7," in line for line in live.splitlines()),
      "A: the settled value is the device's live value")
check(conflicts(dev0) == [], "A: the device sees no conflict left on that cell")
station.stop()
# The station's file restored from a backup taken before that settlement: the
# device, which holds it, is told in words instead of drifting apart quietly.
r = run("restore", "--from", os.path.join(before_settling, os.listdir(before_settling)[0]), "--db", st_db, "--replace")
check(r.returncode == 0, f"A: the station restored from before the settlement ({r.stderr.strip()})")
station = Station(os.path.join(fx_s, "station"))
r = run("sync", "--data", os.path.join(fx_s, "dev0"), "--station", station.address())
check(r.returncode == 2 and "settlements the station's file no longer holds alike" in r.stderr,
      f"A: the device holding a settlement the restored station lost is told so ({r.stderr.strip()[:160]})")
station.stop()


# --- B. A proxy that cuts and stalls -----------------------------------------
fx_b = make_fixture("cuts", 2, 5000)
base = os.path.join(work, "cuts-base.furrow")
st_dir = os.path.join(fx_b, "station")
st_db = os.path.join(st_dir, "trial.furrow")
dev_dir = os.path.join(fx_b, "dev0")
dev_db = os.path.join(dev_dir, "trial.furrow")
dev_id = device_id_of(dev_db)
station = Station(st_dir, timeout=10)
# The other device's rows are at the station: they travel down to dev0 (--others).
run("pair", "--data", os.path.join(fx_b, "dev1"), "--station", station.address(), "--code", CODE)
station.stop()
copy_db(st_db, base)
dev_base = os.path.join(work, "cuts-device.furrow")
copy_db(dev_db, dev_base)
station = Station(st_dir, timeout=10)
r = run("pair", "--data", dev_dir, "--station", station.address(), "--code", CODE, "--others")
full_rows = count_of(st_db)
station.stop()
# The size of one whole sync, for the cut offsets.
copy_db(base, st_db)
copy_db(dev_base, dev_db)
station = Station(st_dir, timeout=10)
measure = Proxy(station.port)
r = run("sync", "--data", dev_dir, "--station", f"127.0.0.1:{measure.port}", "--others")
measure.thread.join(10)
total_bytes = measure.moved
check(r.returncode == 0 and total_bytes > 100000, f"B: a whole sync moves {total_bytes} bytes")

cuts = 60 if quick else 200
bad = []
cut_failed = partial = 0
for k in range(cuts):
    station.stop()
    copy_db(base, st_db)
    copy_db(dev_base, dev_db)
    station = Station(st_dir, timeout=10)
    offset = rng.randrange(0, total_bytes)
    p = Proxy(station.port, cut=offset)
    cut_run = run("sync", "--data", dev_dir, "--station", f"127.0.0.1:{p.port}", "--others", "--timeout", "10")
    p.thread.join(10)
    time.sleep(0.05)
    ok = integrity(st_db) == "ok" and integrity(dev_db) == "ok"
    n, mx = count_of(st_db, dev_id)
    ok = ok and n == mx   # the station's rows of the device: 1..n, no gap, none twice
    cut_failed += cut_run.returncode != 0
    partial += 0 < n < 5000
    again = run("sync", "--data", dev_dir, "--station", station.address(), "--others", "--timeout", "10")
    n2, mx2 = count_of(st_db, dev_id)
    ok = ok and again.returncode == 0 and n2 == mx2 == 5000 and count_of(st_db) == full_rows
    ok = ok and count_of(dev_db) == full_rows and integrity(st_db) == "ok" and integrity(dev_db) == "ok"
    if not ok:
        bad.append((offset, cut_run.stderr.strip()[:120], again.stderr.strip()[:160], n, mx, n2, count_of(dev_db)))
check(cut_failed >= cuts * 0.9, f"B: the cuts stopped the sync ({cut_failed} of {cuts} runs failed in words)")
check(partial >= cuts * 0.2, f"B: many cuts fell mid-day, some of the device's rows merged ({partial} of {cuts})")
check(not bad, f"B: {cuts} cuts at random byte offsets: after each, both files pass the integrity check, and after "
               f"syncing again every row is held once ({len(bad)} bad: {bad[:3]})")

# Stalls: the proxy stops forwarding part-way; both sides give up after their timeout; then a clean sync.
stall_bad = []
for k in range(3):
    station.stop()
    copy_db(base, st_db)
    copy_db(dev_base, dev_db)
    station = Station(st_dir, timeout=2)
    p = Proxy(station.port, stall_at=rng.randrange(1000, total_bytes))
    t0 = time.time()
    stalled = run("sync", "--data", dev_dir, "--station", f"127.0.0.1:{p.port}", "--others", "--timeout", "2")
    waited = time.time() - t0
    again = run("sync", "--data", dev_dir, "--station", station.address(), "--others")
    n2, mx2 = count_of(st_db, dev_id)
    if not (stalled.returncode != 0 and "stalled" in stalled.stderr and waited < 20 and again.returncode == 0
            and n2 == mx2 == 5000 and count_of(dev_db) == full_rows):
        stall_bad.append((stalled.stderr.strip()[:150], waited, again.stderr.strip()[:100], n2))
check(not stall_bad, f"B: a stalled connection is given up in words, then the sync completes ({stall_bad[:2]})")
station.stop()

# --- C. The station killed mid-sync ------------------------------------------
kills = 20 if quick else 50
kill_bad = []
copy_db(base, st_db)
copy_db(dev_base, dev_db)
for k in range(kills):
    station = Station(st_dir, timeout=10)
    sync = subprocess.Popen([furrow, "sync", "--data", dev_dir, "--station", station.address(), "--others",
                             "--timeout", "10"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(rng.random() * 0.4)
    station.kill()
    sync.communicate(timeout=60)
    ok = integrity(st_db) == "ok" and integrity(dev_db) == "ok"
    n, mx = count_of(st_db, dev_id)
    if not (ok and n == mx):
        kill_bad.append((k, n, mx))
    if k % 10 == 9:   # now and then start from nothing again, so that kills fall early in a sync too
        copy_db(base, st_db)
        copy_db(dev_base, dev_db)
station = Station(st_dir, timeout=10)
again = run("sync", "--data", dev_dir, "--station", station.address(), "--others")
n2, mx2 = count_of(st_db, dev_id)
check(not kill_bad and again.returncode == 0 and n2 == mx2 == 5000 and count_of(st_db) == full_rows
      and count_of(dev_db) == full_rows,
      f"B/C: the station killed {kills} times mid-sync: files intact, rows with no gap, then all held once ({kill_bad[:3]})")
station.stop()

# --- D. Refusals, each logged, nothing merged --------------------------------
fx_d = make_fixture("refusals", 3, 40)
st_dir = os.path.join(fx_d, "station")
st_db = os.path.join(st_dir, "trial.furrow")
station = Station(st_dir)
before = count_of(st_db)
r = run("pair", "--data", os.path.join(fx_d, "dev0"), "--station", station.address(), "--code", "000000")
check(r.returncode == 2 and "wrong pairing code" in r.stderr and count_of(st_db) == before,
      f"D: a wrong pairing code is refused ({r.stderr.strip()})")
# An unknown device: a copy enrolled at another copy of the station's file, never at this one.
other = os.path.join(work, "other-station.furrow")
copy_db(st_db, other)
stranger = os.path.join(work, "stranger")
os.makedirs(stranger)
run("trial", "copy", "--from", other, "--db", os.path.join(stranger, "trial.furrow"), "--by", "Someone")
run("record", "--db", os.path.join(stranger, "trial.furrow"), "--plot", "1001", "--trait", "T1", "--value", "90",
    "--observer", "X")
r = run("pair", "--data", stranger, "--station", station.address(), "--code", CODE)
check(r.returncode == 2 and "is not enrolled for this trial" in r.stdout and count_of(st_db) == before,
      f"D: an unknown device is refused ({r.stdout.strip()[:160]})")
# A revoked device.
dev2 = os.path.join(fx_d, "dev2", "trial.furrow")
run("device", "revoke", "--db", st_db, "--device", device_id_of(dev2), "--by", "Manager", "--reason", "lost")
r = run("pair", "--data", os.path.join(fx_d, "dev2"), "--station", station.address(), "--code", CODE)
check(r.returncode == 2 and "was revoked" in r.stdout and count_of(st_db) == before,
      f"D: a revoked device is refused ({r.stdout.strip()[:160]})")
# A tablet's file copied to a second tablet: both record; the first syncs; the
# copy is refused in words (its rows would reuse the first one's numbers), and
# nothing of either is lost or merged twice.
dev1_dir = os.path.join(fx_d, "dev1")
clone_dir = os.path.join(work, "dev1-clone")
shutil.copytree(dev1_dir, clone_dir)
run("record", "--db", os.path.join(dev1_dir, "trial.furrow"), "--plot", "1001", "--trait", "T2", "--value", "91",
    "--observer", "First tablet")
run("record", "--db", os.path.join(clone_dir, "trial.furrow"), "--plot", "1002", "--trait", "T2", "--value", "77",
    "--observer", "Copied tablet")
r = run("pair", "--data", dev1_dir, "--station", station.address(), "--code", CODE)
check(r.returncode == 0 and "sent 41 values" in r.stdout, f"D: the first tablet syncs its 41 values ({r.stdout.strip()[-60:]})")
held_after_first = count_of(st_db)
r = run("pair", "--data", clone_dir, "--station", station.address(), "--code", CODE)
check(r.returncode == 2 and "another copy of this tablet's file has synced" in r.stdout and count_of(st_db) == held_after_first,
      f"D: the copied tablet is refused in words, nothing merged ({r.stdout.strip()[:200]})")
refusal = [e for e in log_of(st_dir) if e["event"] == "refused" and "differs from what the station holds" in e.get("detail", "")]
check(len(refusal) == 1 and refusal[0]["device"] == "Tablet 1", "D: the station's log says the copy was refused, and why")
# A peer that trickles a byte a second before proving itself is dropped within the
# 20 s limit (it cannot hold one of the station's sessions for ever).
t0 = time.time()
trickles = []
for _ in range(2):
    c = socket.create_connection(("127.0.0.1", station.port))
    c.sendall(b"FRWSYNC1" + os.urandom(32))
    trickles.append(c)
dropped = [None, None]
while time.time() - t0 < 40 and None in dropped:
    for k, c in enumerate(trickles):
        if dropped[k] is None:
            try:
                c.sendall(b"\x00")
            except OSError:
                dropped[k] = time.time() - t0
    time.sleep(1)
for c in trickles:
    c.close()
check(all(d is not None and d < 30 for d in dropped), f"D: trickling peers dropped within the limit ({dropped})")
before = count_of(st_db)
# A replay: what device 0 sent in an earlier sync, sent again byte for byte.
recorded = []
p = Proxy(station.port, record=recorded)
r = run("pair", "--data", os.path.join(fx_d, "dev0"), "--station", f"127.0.0.1:{p.port}", "--code", CODE)
p.thread.join(10)
after_first = count_of(st_db)
check(r.returncode == 0 and after_first == before + 40, "D: device 0 syncs its 40 values (recorded)")
# The station forgets those rows (its file as before), then hears the recording again.
station.stop()
shutil.copy(st_db, os.path.join(work, "refusals-after.furrow"))
copy_db(os.path.join(fx_d, "station-before.furrow"), st_db)
run("device", "revoke", "--db", st_db, "--device", device_id_of(dev2), "--by", "Manager", "--reason", "lost")
station = Station(st_dir)
before = count_of(st_db)
replay = socket.create_connection(("127.0.0.1", station.port))
replay.settimeout(5)
try:
    replay.sendall(b"".join(recorded))
    time.sleep(1)
except OSError:
    pass
replay.close()
time.sleep(0.5)
check(count_of(st_db) == before, "D: a sync replayed byte for byte merges nothing")
# One byte altered in the device's first encrypted message.
p = Proxy(station.port, flip_at=8 + 32 + 24 + 10)
r = run("sync", "--data", os.path.join(fx_d, "dev1"), "--station", f"127.0.0.1:{p.port}", "--timeout", "3")
check(r.returncode == 2 and count_of(st_db) == before, f"D: one byte altered in transit: refused, nothing merged ({r.stderr.strip()[:100]})")
station.stop()
log = log_of(st_dir)
refused = [e for e in log if e["event"] == "refused"]
words = " | ".join(e.get("detail", "") for e in refused)
for what in ("wrong pairing code", "is not enrolled for this trial", "was revoked", "did not open"):
    check(what in words, f"D: the station's log records the refusal: {what}")
check(sum(1 for e in refused if "did not open" in e.get("detail", "")) >= 2,
      "D: the replay and the altered byte are both logged")

# --- E. A backup while ten devices sync; restored, the same state -------------
fx_e = make_fixture("backup", 10, 2000)
st_dir = os.path.join(fx_e, "station")
st_db = os.path.join(st_dir, "trial.furrow")
served_backups = os.path.join(work, "served-backups")
station = Station(st_dir, backup_to=served_backups, keep=3)
for i in range(3):   # some rows are there before the backup starts
    run("pair", "--data", os.path.join(fx_e, f"dev{i}"), "--station", station.address(), "--code", CODE)
# Ten devices syncing at once (three of them again, with nothing new).
procs = [subprocess.Popen([furrow, "pair", "--data", os.path.join(fx_e, f"dev{i}"), "--station", station.address(),
                           "--code", CODE], stdout=subprocess.PIPE, stderr=subprocess.PIPE) for i in range(10)]
time.sleep(0.2)
committed = count_of(st_db)
bk = os.path.join(work, "backups")
r = run("backup", "--db", st_db, "--to", bk)
for p in procs:
    p.communicate(timeout=120)
backup_file = os.path.join(bk, sorted(os.listdir(bk))[-1])
held = count_of(backup_file)
check(r.returncode == 0 and "integrity checked" in r.stdout and integrity(backup_file) == "ok",
      f"E: a backup taken while seven devices sync passes the integrity check ({r.stdout.strip()[:120]})")
check(held >= committed, f"E: it holds every row committed before it started ({held} >= {committed})")
station.stop()
# The station's own backups: after each sync that brought values, rotated to the newest three, each checked.
kept = sorted(os.listdir(served_backups))
check(len(kept) == 3 and all(integrity(os.path.join(served_backups, k)) == "ok" for k in kept),
      f"E: serve --backup-to kept the newest 3 backups, each intact ({kept})")
newest = max(count_of(os.path.join(served_backups, k)) for k in kept)
check(newest == 20000, f"E: the newest holds every row of the day ({[count_of(os.path.join(served_backups, k)) for k in kept]})")
# Another program reading the trial meanwhile (as count_of did) never makes a session or backup fail.
failed = [e.get("detail", "")[:100] for e in log_of(st_dir) if e["event"] == "failed"]
check(not failed, f"E: no session or backup failed while others read the file ({failed[:2]})")
backup_lines = [e for e in log_of(st_dir) if e["event"] == "backup"]
check(len(backup_lines) >= 4, f"E: each backup is in the station's log ({len(backup_lines)})")
restored = os.path.join(work, "restored", "trial.furrow")
os.makedirs(os.path.dirname(restored))
r = run("restore", "--from", backup_file, "--db", restored)
check(r.returncode == 0, f"E: restored ({r.stdout.strip()} {r.stderr.strip()})")
r = run("restore", "--from", backup_file, "--db", restored)
check(r.returncode == 2 and "exists" in r.stderr, "E: restoring over an existing file without --replace is refused")
bundles = []
for i in range(10):
    b = os.path.join(work, f"e{i}.bundle")
    # Each device's own rows as a file (what it sent): its log less the others' rows.
    run("bundle", "--db", os.path.join(fx_e, f"dev{i}", "trial.furrow"), "--out", b, "--all")
    bundles.append(b)
station_copy = os.path.join(work, "live.furrow")
copy_db(st_db, station_copy)
for target in (restored, station_copy):
    for b in bundles:
        run("merge", "--db", target, b)
check(log_rows(restored) == log_rows(station_copy) and count_of(restored) == 20000,
      "E: the restored station merges the same bundles to the same state as the live one")
check.finish()
