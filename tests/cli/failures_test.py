#!/usr/bin/python3
"""Failures said plainly, and output safe whatever the data holds:

  * a save while another program holds the trial file, and on a full disk (a
    small tmpfs in a private mount namespace): exit 2, the reason in words,
    the file named once;
  * read-only commands given another program's SQLite file or a bundle
    refuse it and leave it byte for byte as it was;
  * invalid UTF-8 (a surrogate, an overlong form, a code point above
    U+10FFFF) in names and notes never aborts JSON output: replaced and said;
  * terminal escape sequences in a bundle's observer names and notes never
    reach the terminal.

usage: failures_test.py FURROW SOURCE_DIR WORK_DIR
"""
import hashlib
import json
import os
import shutil
import sqlite3
import subprocess
import sys
import threading
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from checks import Checks  # noqa: E402

furrow, src, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()
plan = os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv")


def run(*args, **kw):
    return subprocess.run([furrow, *args], capture_output=True, **kw)


def digest(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def p(name):
    return os.path.join(work, name)


run("trial", "new", "--plan", plan, "--db", p("t.furrow"), check=True)

# 1. Held by another program for longer than the 5 s wait.
holder = sqlite3.connect(p("t.furrow"), timeout=1, isolation_level=None)
holder.execute("BEGIN EXCLUSIVE")
r = run("record", "--db", p("t.furrow"), "--plot", "101", "--trait", "height_cm", "--value", "90",
        "--observer", "Ana", text=True)
holder.execute("ROLLBACK")
holder.close()
check(r.returncode == 2 and "another program is using the trial file" in r.stderr and "nothing was saved" in r.stderr,
      f"a save while another program holds the file says so ({r.returncode}: {r.stderr.strip()})")
check(r.stderr.count(p("t.furrow")) == 1, f"the file is named once ({r.stderr.strip()})")

# 2. A full disk: a 600 KB tmpfs filled up, in a private mount namespace.
script = f"""
set -e
mkdir -p '{p("small")}'
mount -t tmpfs -o size=600k tmpfs '{p("small")}'
cp '{p("t.furrow")}' '{p("small")}/d.furrow'
cp '{p("t.furrow")}' '{p("small")}/e.furrow'
'{furrow}' trial show --db '{p("small")}/d.furrow' > /dev/null
'{furrow}' export --db '{p("small")}/e.furrow' --layout --out '{p("small")}/layout.csv'
sha256sum '{p("small")}/layout.csv' > '{p("small")}/before.sum'
'{furrow}' record --db '{p("small")}/e.furrow' --plot 102 --trait height_cm --value 91 --observer Ana > /dev/null
dd if=/dev/zero of='{p("small")}/fill' bs=1k count=10000 2>/dev/null || true
'{furrow}' record --db '{p("small")}/d.furrow' --plot 101 --trait height_cm --value 90 --observer Ana || echo "exit $?"
'{furrow}' export --db '{p("small")}/e.furrow' --long --out '{p("small")}/layout.csv' || echo "export exit $?"
sha256sum -c --quiet '{p("small")}/before.sum' && echo "earlier export unchanged"
"""
r = subprocess.run(["unshare", "-m", "sh", "-c", script], capture_output=True, text=True)
check("the disk is full" in r.stderr and "exit 2" in r.stdout,
      f"a save on a full disk says the disk is full ({r.stdout.strip()} {r.stderr.strip()})")
check("export exit 2" in r.stdout and "earlier export unchanged" in r.stdout,
      f"an export on a full disk fails and leaves the earlier file whole ({r.stdout.strip()} {r.stderr.strip()})")

# 2b. A read-only file system (a write-protected card): the read-only
#     commands work; a save says why it cannot be made, naming the file once.
script = f"""
mkdir -p '{p("ro")}'
mount -t tmpfs -o size=2m tmpfs '{p("ro")}'
cp '{p("t.furrow")}' '{p("ro")}/t.furrow'
mount -o remount,ro '{p("ro")}'
'{furrow}' trial show --db '{p("ro")}/t.furrow' > /dev/null && echo "show ok"
'{furrow}' export --db '{p("ro")}/t.furrow' --layout > /dev/null && echo "export ok"
'{furrow}' report --db '{p("ro")}/t.furrow' --out '{p("ro_report.html")}' > /dev/null && echo "report ok"
'{furrow}' conflicts --db '{p("ro")}/t.furrow' > /dev/null && echo "conflicts ok"
'{furrow}' device list --db '{p("ro")}/t.furrow' > /dev/null && echo "device list ok"
'{furrow}' record --db '{p("ro")}/t.furrow' --plot 101 --trait height_cm --value 90 --observer Ana || echo "record exit $?"
"""
r = subprocess.run(["unshare", "-m", "sh", "-c", script], capture_output=True, text=True)
for what in ("show", "export", "report", "conflicts", "device list"):
    check(f"{what} ok" in r.stdout, f"{what} works on a read-only file system ({r.stdout.strip()} {r.stderr.strip()[:200]})")
check("record exit 2" in r.stdout and r.stderr.strip() == p("ro") + "/t.furrow: it is on a read-only file system "
      "(a write-protected card or drive?): it can be shown, exported and analysed, but nothing can be saved",
      f"a save on a read-only file system says so in words ({r.stderr.strip()})")

# 2c. A file of the schema before keys (4), given to read-only commands: not
#     upgraded, not written; a writing command upgrades it.
shutil.copy(p("t.furrow"), p("old.furrow"))
con = sqlite3.connect(p("old.furrow"))
con.executescript("DROP TABLE signing_key; DROP TABLE enrolment; PRAGMA user_version = 4;")
con.close()
before = digest(p("old.furrow"))
for args in (("trial", "show"), ("export", "--long"), ("report", "--out", p("old.html")), ("conflicts",),
             ("device", "list")):
    r = run(*args[:2], "--db", p("old.furrow"), *args[2:], text=True) if args[0] == "device" else \
        run(args[0], *([args[1]] if args[0] == "trial" else []), "--db", p("old.furrow"),
            *(args[1:] if args[0] != "trial" else []), text=True)
    check(r.returncode == 0, f"{' '.join(args)} reads a schema-4 file ({r.stderr.strip()})")
    check(digest(p("old.furrow")) == before, f"{' '.join(args)} left the schema-4 file byte for byte as it was")
run("record", "--db", p("old.furrow"), "--plot", "101", "--trait", "height_cm", "--value", "90", "--observer", "Ana",
    check=True)
con = sqlite3.connect(p("old.furrow"))
check(con.execute("PRAGMA user_version").fetchone()[0] == 5 and
      con.execute("SELECT count(*) FROM signing_key").fetchone()[0] == 1,
      "a save upgrades it to schema 5 and gives it its own key")
con.close()

# 3. Another program's database and a bundle, given to read-only commands.
other = p("other.db")
con = sqlite3.connect(other)
con.execute("CREATE TABLE inventory (item TEXT, count INTEGER)")
con.execute("INSERT INTO inventory VALUES ('stakes', 400)")
con.commit()
con.close()
run("trial", "copy", "--from", p("t.furrow"), "--db", p("dev.furrow"), "--by", "Test manager", check=True)
run("record", "--db", p("dev.furrow"), "--plot", "101", "--trait", "height_cm", "--value", "90", "--observer", "Ana",
    check=True)
run("bundle", "--db", p("dev.furrow"), "--out", p("dev.bundle"), check=True)
for path, words in ((other, "not a Furrow trial"), (p("dev.bundle"), "is a bundle")):
    before = digest(path)
    for args in (("trial", "show", "--db", path), ("export", "--db", path, "--long"),
                 ("report", "--db", path, "--out", p("r.html")), ("analyze", "--db", path, "--trait", "height_cm")):
        r = run(*args, text=True)
        check(r.returncode == 2 and words in r.stderr, f"{args[0]} on {os.path.basename(path)}: refused ({r.stderr.strip()})")
        check(digest(path) == before and not os.path.exists(path + "-wal"),
              f"{args[0]} left {os.path.basename(path)} byte for byte as it was")

# 4. Invalid UTF-8 in level names: JSON never aborts.
for name, bad in (("a surrogate", b"\xed\xa0\x80"), ("an overlong form", b"\xc0\xaf"), ("above U+10FFFF", b"\xf4\x90\x80\x80")):
    csv = p("bad.csv")
    with open(csv, "wb") as f:
        f.write(b"block,entry,y\n")
        for blk in (1, 2, 3):
            for e, label in enumerate((b"A", b"B" + bad)):
                f.write(b"%d,%s,%d\n" % (blk, label, 10 + blk + 3 * e))
    r = run("analyze", "--csv", csv, "--design", "rcbd", "--block", "block", "--treatment", "entry", "--response", "y",
            "--json")
    ok = r.returncode == 2 or (r.returncode == 0 and json.loads(r.stdout) is not None)
    check(ok and r.returncode != 134, f"{name} in a level name: no abort (exit {r.returncode})")

# 5. Control characters are refused at entry (and in bundles); invalid UTF-8
#    from a bundle is shown replaced; rows an older version saved with a
#    terminal escape are shown without it.
run("trial", "copy", "--from", p("t.furrow"), "--db", p("dev2.furrow"), "--by", "Test manager", check=True)
evil = b"\x1b[2J\x1b]0;owned\x07Eve"
r = subprocess.run([furrow.encode(), b"record", b"--db", p("dev2.furrow").encode(), b"--plot", b"101", b"--trait",
                    b"height_cm", b"--value", b"95", b"--observer", evil, b"--note", evil], capture_output=True)
check(r.returncode == 2 and b"control character" in r.stderr, f"a terminal escape in a name is refused ({r.stderr[:120]!r})")
bad_utf8 = b"Eve\xed\xa0\x80"
subprocess.run([furrow.encode(), b"record", b"--db", p("dev2.furrow").encode(), b"--plot", b"101", b"--trait",
                b"height_cm", b"--value", b"95", b"--observer", bad_utf8, b"--note", bad_utf8], check=True, capture_output=True)
run("bundle", "--db", p("dev2.furrow"), "--out", p("dev2.bundle"), check=True)
run("merge", "--db", p("t.furrow"), p("dev.bundle"), p("dev2.bundle"), check=True)
r = subprocess.run([furrow, "conflicts", "--db", p("t.furrow"), "--json"], capture_output=True)
try:
    rows = json.loads(r.stdout)
    parsed = len(rows) == 1
except ValueError:
    parsed = False
check(r.returncode == 0 and parsed and b"not valid UTF-8" in r.stderr,
      f"conflicts --json with invalid UTF-8: valid JSON, the replacement said ({r.returncode}, {r.stderr.strip()!r})")
# A row as an older Furrow could have saved it, written straight into the station's log.
import sqlite3  # noqa: E402
c = sqlite3.connect(p("t.furrow"))
station_id = c.execute("SELECT device_id FROM this_device").fetchone()[0]
seq = c.execute("SELECT coalesce(max(sequence), 0) + 1 FROM observation WHERE device_id = ?", (station_id,)).fetchone()[0]
plot_id = c.execute("SELECT id FROM plot WHERE label = '101'").fetchone()[0]
trait_id = c.execute("SELECT id FROM trait WHERE code = 'height_cm'").fetchone()[0]
c.execute("INSERT INTO observation (device_id, sequence, plot_id, trait_id, occasion, value, number, missing_reason, note, "
          "observer, recorded_at, confirmed_checks) VALUES (?,?,?,?,1,'97',97,NULL,?,?,'2026-06-01T09:00:00.000Z','')",
          (station_id, seq, plot_id, trait_id, evil.decode(), evil.decode()))
c.commit()
c.close()
r = subprocess.run([furrow, "conflicts", "--db", p("t.furrow")], capture_output=True)
check(r.returncode == 0 and b"\x1b" not in r.stdout and b"\x07" not in r.stdout and b"Eve" in r.stdout,
      f"conflicts shows an older row's names without control characters ({r.stdout[:200]!r})")
# 6. A note or an observer that a spreadsheet would run as a formula.
run("record", "--db", p("t.furrow"), "--plot", "110", "--trait", "height_cm", "--value", "88", "--observer", "@SUM(A1)",
    "--note", "=HYPERLINK(\"http://x\")", check=True)
r = run("export", "--db", p("t.furrow"), "--long")
line = [l for l in r.stdout.decode("utf-8", "replace").splitlines() if l.startswith("110,")]
check(len(line) == 1 and ",'@SUM(A1)," in line[0] and "'=HYPERLINK" in line[0] and "=HYPERLINK" not in line[0].replace("'=HYPERLINK", ""),
      f"formula-like text is neutralised in exports ({line})")
check.finish()
