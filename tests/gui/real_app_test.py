#!/usr/bin/python3
"""The real field app under Xvfb, driven with real pointer clicks and keys
(xdotool): a barcode scanner's label and Enter on the Record screen; and, as a
station manager at day's end: open the Station screen on a trial with
three conflicts, tap "Keep 96 (Ana)" on the first, tap "Import bundles" to
merge a late device's bundle from the data folder, tap "Stake labels (PDF)"
and "Field sheet (PDF)", then check the exports folder and the trial
database through the command line: the first conflict settled by the
observer, the late bundle's rows merged.

usage: real_app_test.py FURROW SOURCE_DIR WORK_DIR
"""
import json
import os
import shutil
import subprocess
import sys
import time

here = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(here, "..", "cli"))
from checks import Checks  # noqa: E402

furrow, src, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
data = os.path.join(work, "data")
os.makedirs(os.path.join(data, "bundles", "incoming"))
check = Checks()
plan = os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv")
station = os.path.join(data, "oats.furrow")


def run(*args):
    return subprocess.run([furrow, *args], check=True, capture_output=True, text=True).stdout


run("trial", "new", "--plan", plan, "--db", station)
for d in ("a", "b", "c"):
    run("trial", "copy", "--from", station, "--db", os.path.join(work, f"{d}.furrow"), "--by", "Test manager")
for plot, b_value in (("101", "81"), ("102", "82"), ("103", "83")):
    run("record", "--db", os.path.join(work, "a.furrow"), "--plot", plot, "--trait", "height_cm", "--value", "96",
        "--observer", "Ana", "--confirm")
    run("record", "--db", os.path.join(work, "b.furrow"), "--plot", plot, "--trait", "height_cm", "--value", b_value,
        "--observer", "Ben", "--confirm")
for d in ("a", "b"):
    run("bundle", "--db", os.path.join(work, f"{d}.furrow"), "--out", os.path.join(work, f"{d}.bundle"))
run("merge", "--db", station, os.path.join(work, "a.bundle"), os.path.join(work, "b.bundle"))
# A late device's bundle waits in the data folder's bundles folder.
run("record", "--db", os.path.join(work, "c.furrow"), "--plot", "120", "--trait", "height_cm", "--value", "101",
    "--observer", "Cleo", "--confirm")
run("bundle", "--db", os.path.join(work, "c.furrow"), "--out", os.path.join(data, "bundles", "incoming", "c.bundle"))
check(len(json.loads(run("conflicts", "--db", station, "--json"))) == 3, "three conflicts before")



def tap_function(targets):
    """A shell function `tap LABEL`: a click in the middle of the item the app
    last drew with that label (the app writes them with --targets-out)."""
    return f"""
tap() {{
  xy=$(awk -v k="$1" '{{l=$5; for (i=6;i<=NF;i++) l=l" "$i; if (l==k) {{print int(($1+$3)/2), int(($2+$4)/2); exit}}}}' '{targets}')
  [ -n "$xy" ] || echo "no item '$1' on the screen" >&2
  xdotool mousemove $xy click 1
}}
"""


# The Station screen: Keep on plot 101's first row, then Import bundles.
targets = os.path.join(work, "station_targets.txt")
script = tap_function(targets) + f"""
'{furrow}' field --db '{station}' --observer 'Station manager' --screen station --targets-out '{targets}' &
app=$!
sleep 3
# No window manager under Xvfb: give the window the input focus ourselves
# (the ImGui GLFW backend reads the pointer only while the window has it).
xdotool search --sync --name '^Furrow' windowfocus --sync
# A tap lands on what the last drawn frame showed: move the pointer first so
# that the app draws a few frames (on a busy machine it may not have yet).
xdotool mousemove 640 790
sleep 1
tap 'keep plot 101 0'
sleep 1
tap 'Import bundles'
sleep 2
tap 'Stake labels (PDF)'
sleep 2
tap 'Field sheet (PDF)'
sleep 2
kill $app
wait $app
"""
env = dict(os.environ, FURROW_DATA_DIR=data)
t0 = time.time()
p = subprocess.run(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset", "sh", "-c", script], env=env,
                   capture_output=True, text=True, timeout=120)
left = json.loads(run("conflicts", "--db", station, "--json"))
check(len(left) == 2 and all(c["plot"] != "101" for c in left), f"the tap settled plot 101 ({[c['plot'] for c in left]})")
rows = {r.split(",")[0]: r for r in run("export", "--db", station, "--long").splitlines()[1:]}
check("101" in rows and ",96," in rows["101"] and "Station manager" in rows["101"],
      "plot 101 keeps Ana's 96, settled by the observer")
check("120" in rows and "Cleo" in rows["120"], "the tap on Import bundles merged the late device's bundle")
check(os.path.exists(os.path.join(data, "bundles", "done", "c.bundle"))
      and not os.path.exists(os.path.join(data, "bundles", "incoming", "c.bundle")),
      "the merged bundle moved from incoming to done")
# The print buttons wrote the trial's labels and today's field sheet (with its blank CSV) to the exports folder.
exports = os.path.join(data, "exports")
labels_pdf, sheet_pdf = os.path.join(exports, "oats-labels.pdf"), os.path.join(exports, "oats-sheet.pdf")
check(os.path.exists(labels_pdf) and "Pages:           4" in subprocess.run(["pdfinfo", labels_pdf], capture_output=True,
                                                                              text=True).stdout,
      "Stake labels (PDF): 80 labels on four A4 sheets of 24")
sheet_text = subprocess.run(["pdftotext", "-layout", sheet_pdf, "-"], capture_output=True, text=True).stdout \
    if os.path.exists(sheet_pdf) else ""
check("page 1 of 3" in sheet_text and "stand_count" in sheet_text and "height_cm" not in sheet_text,
      "Field sheet (PDF): today's walk (stand count), three portrait pages")
blank = os.path.join(exports, "oats-sheet.csv")
check(os.path.exists(blank) and open(blank, encoding="utf-8").readline().startswith("plot,block,field_row"),
      "and the blank CSV to type it back")

# Fresh views: the Station screen is open when a settlement arrives from the
# command line (another program); the screen drops the settled conflict
# within a second, with no touch.
targets = os.path.join(work, "fresh_targets.txt")
app = subprocess.Popen(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset", furrow, "field", "--db", station,
                        "--observer", "Station manager", "--screen", "station", "--targets-out", targets],
                       env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
try:
    def listed(label):
        try:
            return any(line.rstrip("\n").split(" ", 4)[4] == label for line in open(targets))
        except (OSError, IndexError):
            return False
    deadline = time.time() + 30
    while time.time() < deadline and not listed("keep plot 102 0"):
        time.sleep(0.1)
    check(listed("keep plot 102 0"), "the Station screen lists plot 102's conflict")
    run("settle", "--db", station, "--plot", "102", "--trait", "height_cm", "--value", "90", "--by", "Office")
    settled_at = time.time()
    while time.time() < settled_at + 5 and listed("keep plot 102 0"):
        time.sleep(0.02)
    seen_after = time.time() - settled_at
    check(not listed("keep plot 102 0") and seen_after <= 1.0,
          f"the screen dropped the settled conflict {seen_after:.2f} s after the command-line settle (at most 1 s)")
    print(f"fresh view: {seen_after:.2f} s from the command-line settle to the redrawn Station screen")
finally:
    # xvfb-run is a shell script: end its whole process group (the app and
    # the X server with it), not only the script.
    import signal
    try:
        os.killpg(app.pid, signal.SIGTERM)
    except ProcessLookupError:
        pass
    app.wait(timeout=30)

# A crew member's tablet: the app starts on the Trials screen of an empty
# data folder; type the station's trial file into the path field and press
# Enter; asked, make this device's own copy; then Station > Write this
# device's bundle puts a bundle in the tablet's outgoing bundles folder.
tablet = os.path.join(work, "tablet")
os.makedirs(tablet)
targets = os.path.join(work, "tablet_targets.txt")
script = tap_function(targets) + f"""
'{furrow}' field --observer 'Dana' --demo /nonexistent --targets-out '{targets}' &
app=$!
sleep 3
xdotool search --sync --name '^Furrow' windowfocus --sync
# A tap lands on what the last drawn frame showed: move the pointer first so
# that the app draws a few frames (on a busy machine it may not have yet).
xdotool mousemove 640 790
sleep 1
tap 'plan path'
sleep 1
xdotool type --delay 20 '{station}'
xdotool key Return
sleep 2
tap "Make this device's copy"
sleep 2
tap 'Station'
sleep 1
tap "Write this device's bundle"
sleep 2
kill $app
wait $app
"""
p = subprocess.run(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset", "sh", "-c", script],
                   env=dict(os.environ, FURROW_DATA_DIR=tablet), capture_output=True, text=True, timeout=120)
copy = os.path.join(tablet, "oats.furrow")
check(os.path.exists(copy), f"the tablet made its copy of the station's trial ({os.listdir(tablet)})")
if os.path.exists(copy):
    import sqlite3
    uid = lambda f: sqlite3.connect(f).execute("SELECT uid, role FROM trial").fetchone()
    check(uid(copy)[0] == uid(station)[0] and uid(copy)[1] == "device", "same trial identity, as a device")
outgoing = os.path.join(tablet, "bundles", "outgoing")
bundles = os.listdir(outgoing) if os.path.isdir(outgoing) else []
check(len(bundles) == 1 and bundles[0].endswith(".bundle"), f"Write this device's bundle wrote one bundle ({bundles})")

# A crew member with a barcode scanner on the demo day: with nothing tapped
# first, the scanner types stake label 307 and Enter at machine speed (press
# and release of Enter arrive together) and plot 307 opens; then the keypad
# enters 250 plants and Save. The log must show 250 for plot 307, entered by
# this observer. The app writes where its buttons are (--targets-out).
demo = os.path.join(work, "demo.furrow")
subprocess.run(["/usr/bin/python3", os.path.join(src, "demo_data", "load_demo_day.py"), furrow, plan,
                os.path.join(src, "demo_data", "harrow_ridge_oats_2026.csv"), demo], check=True, capture_output=True)
targets = os.path.join(work, "targets.txt")
script = f"""
'{furrow}' field --db '{demo}' --observer 'Scanner crew' --demo /nonexistent --targets-out '{targets}' &
app=$!
sleep 3
xdotool search --sync --name '^Furrow' windowfocus --sync
xdotool mousemove 640 790
sleep 1
xdotool type --delay 1 '307'
xdotool key --delay 1 Return
sleep 1
for key in 2 5 0 Save; do
  xy=$(awk -v k="$key" '{{l=$5; for (i=6;i<=NF;i++) l=l" "$i; if (l==k) {{print int(($1+$3)/2), int(($2+$4)/2); exit}}}}' '{targets}')
  xdotool mousemove $xy click 1
  sleep 0.4
done
sleep 1.5
kill $app
wait $app
"""
p = subprocess.run(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset", "sh", "-c", script],
                   env=dict(os.environ, FURROW_DATA_DIR=os.path.join(work, "scanner")), capture_output=True,
                   text=True, timeout=120)
rows = [r.split(",") for r in run("export", "--db", demo, "--long").splitlines()[1:]]
scanned = [r for r in rows if r[0] == "307" and "stand_count" in r and "Scanner crew" in r]
check(len(scanned) == 1 and "250" in scanned[0], f"the scanned plot 307 got 250 plants from the keypad ({scanned})")
# --- Sync over the network, in the real app ----------------------------------
# The station's app serves (its switch on the Station screen); a device syncs
# with it; the Station screen then lists that device as synced today. And a
# device's app pairs with a station by address and code and syncs with one tap.
import socket  # noqa: E402


def free_port():
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    return port


sdata = os.path.join(work, "sync_station")
os.makedirs(sdata)
sstation = os.path.join(sdata, "oats.furrow")
run("trial", "new", "--plan", plan, "--db", sstation)
d1, d2 = os.path.join(work, "sync_dev1"), os.path.join(work, "sync_dev2")
for d, label in ((d1, "Tablet A"), (d2, "Tablet B")):
    os.makedirs(d)
    run("trial", "copy", "--from", sstation, "--db", os.path.join(d, "oats.furrow"), "--by", "Manager", "--label", label)
    for plot, value in (("101", "91"), ("102", "92")):
        run("record", "--db", os.path.join(d, "oats.furrow"), "--plot", plot, "--trait", "stand_count", "--value",
            str(200 + int(value)), "--observer", label)
dev1_id = json.loads(run("device", "list", "--db", sstation, "--json"))
dev1_id = [x["device"] for x in dev1_id if x.get("label") == "Tablet A"][0]
port = free_port()
targets = os.path.join(work, "serve_targets.txt")
script = tap_function(targets) + f"""
'{furrow}' field --db '{sstation}' --observer 'Station manager' --screen station --targets-out '{targets}' &
app=$!
sleep 3
xdotool search --sync --name '^Furrow' windowfocus --sync
xdotool mousemove 640 790
sleep 1
tap 'Serve devices on the network'
sleep 1.5
'{furrow}' pair --data '{d1}' --station 127.0.0.1:{port} --code 246810 > '{work}/pair1.out' 2>&1
sleep 3
xdotool mousemove 640 780
sleep 1
cp '{targets}' '{work}/serve_targets_after.txt'
kill $app
wait $app
"""
p = subprocess.run(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset", "sh", "-c", script],
                   env=dict(os.environ, FURROW_DATA_DIR=sdata, FURROW_SYNC_PORT=str(port), FURROW_PAIRING_CODE="246810"),
                   capture_output=True, text=True, timeout=120)
paired = open(os.path.join(work, "pair1.out"), encoding="utf-8").read()
check("synced: sent 2 values" in paired, f"the app's Serve switch took a device's sync ({paired.strip()[:200]})")
after = open(os.path.join(work, "serve_targets_after.txt"), encoding="utf-8").read()
check(f"synced today {dev1_id}" in after, "the Station screen lists Tablet A as synced today")
check("not synced today" in after, "and the other device as not synced")

# The device's app: pair by address and code, then one tap.
port2 = free_port()
serve = subprocess.Popen([furrow, "serve", "--data", sdata, "--listen", "127.0.0.1", "--port", str(port2), "--code",
                          "135790"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
for line in serve.stdout:
    if "stop with" in line:
        break
targets = os.path.join(work, "device_targets.txt")
shot = os.path.join(work, "device_synced.png")
script = tap_function(targets) + f"""
'{furrow}' field --db '{os.path.join(d2, "oats.furrow")}' --observer 'Tablet B crew' --screen station --targets-out '{targets}' &
app=$!
sleep 3
xdotool search --sync --name '^Furrow' windowfocus --sync
xdotool mousemove 640 790
sleep 1
tap 'station address'
xdotool type --delay 20 '127.0.0.1:{port2}'
tap 'pairing code'
xdotool type --delay 20 '135790'
sleep 0.5
tap 'Pair and sync'
sleep 3
xdotool mousemove 600 700
sleep 1
cp '{targets}' '{work}/device_targets_after.txt'
tap 'Sync with station'
sleep 2
kill $app
wait $app
"""
p = subprocess.run(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset", "sh", "-c", script],
                   env=dict(os.environ, FURROW_DATA_DIR=d2), capture_output=True, text=True, timeout=120)
serve.terminate()
serve.communicate(timeout=30)
pairing = os.path.join(d2, "station.json")
check(os.path.exists(pairing) and json.load(open(pairing))["token"], "the device app paired: its station is kept")
after = open(os.path.join(work, "device_targets_after.txt"), encoding="utf-8").read()
check("Sync with station" in after, "after pairing the screen offers Sync with station")
log = [json.loads(line) for line in open(os.path.join(sdata, "sync", "log.jsonl"), encoding="utf-8")]
synced_b = [e for e in log if e["event"] == "synced" and e.get("device") == "Tablet B"]
check(len(synced_b) >= 2 and synced_b[0]["received"] == 2, f"the station took Tablet B's 2 values, then a second sync ({len(synced_b)})")
rows = run("export", "--db", sstation, "--long")
check(rows.count("Tablet B") == 2 and rows.count("Tablet A") == 2, "the station holds both tablets' values once")
check.finish()
