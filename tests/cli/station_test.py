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
    run("trial", "copy", "--from", path("station.furrow"), "--db", path(f"{d}.furrow"), "--by", "Mara Quill", "--label", f"Tablet {d}")
# a and b both measure plots 101-104; they disagree on 102 and 104. c measures 105.
for d, values in (("a", {"101": "96", "102": "98", "103": "101", "104": "88"}),
                  ("b", {"101": "96", "102": "89", "103": "101", "104": "99"}),
                  ("c", {"105": "93"})):
    for plot, v in values.items():
        run("record", "--db", path(f"{d}.furrow"), "--plot", plot, "--trait", "height_cm", "--value", v,
            "--observer", f"crew {d}", "--confirm")
for d in ("a", "b", "c"):
    out = run("bundle", "--db", path(f"{d}.furrow"), "--out", path(f"{d}.bundle")).stdout
    check(" observation" in out and "signed with key " in out, f"bundle {d} says what it holds ({out.strip()})")
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
# One byte of a's database changed after it was signed (bundle.h: the image starts at byte 120).
with open(path("a.bundle"), "rb") as f:
    altered = bytearray(f.read())
altered[120 + (len(altered) - 120) // 2] ^= 0x20
with open(path("altered.bundle"), "wb") as f:
    f.write(altered)
with open(path("a.bundle"), "rb") as f:
    whole = f.read()
with open(path("truncated.bundle"), "wb") as f:
    f.write(whole[: len(whole) // 2])
with open(path("notes.bundle"), "w") as f:
    f.write("plot,height\n101,96\n")
before = content("station.furrow")
for name, expect in (("other.bundle", "has not enrolled"), ("altered.bundle", "signature does not match"),
                     ("truncated.bundle", "truncated"),
                     ("notes.bundle", "not a Furrow bundle"), ("a.furrow", "not a signed Furrow bundle"),
                     ("missing.bundle", "cannot be read")):
    p = run("merge", "--db", path("station.furrow"), path(name), ok=False)
    check(p.returncode == 2 and path(name) in p.stderr and expect in p.stderr,
          f"{name} refused with its name and reason ({p.stderr.strip()[:160]})")
    check(content("station.furrow") == before, f"{name}: the station is byte for byte as it was")

# The station's devices: who enrolled each, with its key, and what each brought.
listed = json.loads(run("device", "list", "--db", path("station.furrow"), "--json").stdout)
check([d["label"] for d in listed] == ["Station", "Tablet a", "Tablet b", "Tablet c"],
      f"device list names the station and the three tablets ({[d['label'] for d in listed]})")
check(all(d["enrolled_by"] == "Mara Quill" for d in listed[1:]), "with who enrolled them")
check([d["rows_in_log"] for d in listed[1:]] == [4, 4, 1], "and the rows each brought")
check(all(len(d["key"]) == 19 for d in listed), "and each key's fingerprint")
text = run("device", "list", "--db", path("station.furrow")).stdout
check("4 enrolled keys" in text and "Tablet c" in text and "by Mara Quill" in text, "device list as text")

# Tablet c is lost: revoked, its later bundle refused; the rows it brought stay, marked.
c_id = listed[3]["device"]
bad = run("device", "revoke", "--db", path("station.furrow"), "--device", "0000000000000000", "--by", "Mara Quill",
          ok=False)
check(bad.returncode == 2 and "no device 0000000000000000 is enrolled" in bad.stderr, "revoking an unknown device is refused")
out = run("device", "revoke", "--db", path("station.furrow"), "--device", c_id, "--by", "Mara Quill",
          "--reason", "left at the far gate").stdout
check("revoked device " + c_id in out, f"revoke says what it did ({out.strip()})")
run("record", "--db", path("c.furrow"), "--plot", "106", "--trait", "height_cm", "--value", "92", "--observer", "crew c",
    "--confirm")
run("bundle", "--db", path("c.furrow"), "--out", path("c2.bundle"))
before = content("station.furrow")
p = run("merge", "--db", path("station.furrow"), path("c2.bundle"), ok=False)
check(p.returncode == 2 and f"device {c_id} (Tablet c) was revoked on " in p.stderr and "by Mara Quill" in p.stderr,
      f"the revoked tablet's bundle is refused in words ({p.stderr.strip()[:200]})")
check(content("station.furrow") == before, "and the station is byte for byte as it was")
rows = [r.split(",") for r in run("export", "--db", path("station.furrow"), "--long").stdout.splitlines()]
check(rows[0][-1] == "device_revoked", "the long export has a device_revoked column")
marked = [r[0] for r in rows[1:] if r[-1] == "yes"]
check(marked == ["105"], f"and marks the revoked tablet's row ({marked})")
listed = json.loads(run("device", "list", "--db", path("station.furrow"), "--json").stdout)
check(listed[3]["revoked_by"] == "Mara Quill" and listed[3]["revoked_reason"] == "left at the far gate",
      "device list shows who revoked it and why")
check.finish()
