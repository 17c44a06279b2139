#!/usr/bin/python3
"""Under Xvfb with Mesa: start the real field app on the demo trial in a
landscape (1280x800) and a portrait (800x1280) window, take a screenshot of
every screen (Trials, Record, Field map, Check, Before leaving, Settings,
Help), and check that each is drawn: not one flat colour, with dark text on
the light daylight background; the Field map shows the plots in the status
colour for collected plots, the Check screen its interim-analysis banner.

usage: screenshot_test.py FURROW SOURCE_DIR WORK_DIR
"""
import os
import shutil
import subprocess
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "cli"))
from checks import Checks  # noqa: E402
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from png import read_png  # noqa: E402

furrow, src, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()


db = os.path.join(work, "demo.furrow")
subprocess.run(["/usr/bin/python3", os.path.join(src, "demo_data", "load_demo_day.py"), furrow,
                os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv"),
                os.path.join(src, "demo_data", "harrow_ridge_oats_2026.csv"), db], check=True, capture_output=True)
data = os.path.join(work, "data")
os.makedirs(data)
shutil.copy(db, os.path.join(data, "demo.furrow"))
env = dict(os.environ, FURROW_DATA_DIR=data)
# Colours the screens must show (app/work/theme.cpp, daylight): collected plots and
# the banner of the interim analysis.
must_show = {"map": (0x00, 0x72, 0xB2), "check": (0xFF, 0xD5, 0x4F)}
shots = [(f"{view}_{shape}", size, screen, view)
         for view in ("trials", "record", "map", "check", "leaving", "station", "settings", "help")
         for shape, size, screen in (("landscape", "1280x800", "1280x800x24"), ("portrait", "800x1280", "800x1280x24"))]
for name, size, screen, view in shots:
    png = os.path.join(work, f"{name}.png")
    # The Trials screen is where the app starts without a trial.
    trial = [] if view == "trials" else ["--db", db]
    p = subprocess.run(["xvfb-run", "-a", "-s", f"-screen 0 {screen} -noreset", furrow, "field", *trial,
                        "--observer", "Check", "--size", size, "--screen", view, "--screenshot", png],
                       capture_output=True, env=env, timeout=120)
    check(p.returncode == 0 and os.path.exists(png), f"{name}: the app drew and saved a screenshot ({p.stderr[-300:]!r})")
    if not os.path.exists(png):
        continue
    w, h, rows = read_png(png)
    check(f"{w}x{h}" == size, f"{name}: the window is {size} (got {w}x{h})")
    colours, dark, marked = set(), 0, 0
    mark = bytes(must_show.get(view, (1, 2, 3)))
    for y in range(0, h, 2):
        row = rows[y]
        for x in range(0, w * 4, 8):
            px = row[x:x + 3]
            colours.add(px)
            dark += sum(px) < 150
            marked += px == mark
    sampled = (h // 2) * (w // 2)
    check(len(colours) > 20, f"{name}: not blank ({len(colours)} colours)")
    check(0.005 < dark / sampled < 0.6, f"{name}: dark text on a light background ({dark / sampled:.3f})")
    if view in must_show:
        check(marked / sampled > 0.01, f"{name}: shows its colour #{mark.hex()} ({marked / sampled:.3f})")
    print(f"{name}: {png}")

# Record, Before leaving and Check with the text at 200 % (Settings' size,
# saved in the data folder), in both window shapes: drawn, and nothing on the
# Record screen runs past the window's right edge (what lies below the window
# is reached by dragging: tests/app/field/layout_test.cpp).
big = os.path.join(work, "data200")
os.makedirs(big)
shutil.copy(db, os.path.join(big, "demo.furrow"))
with open(os.path.join(big, "settings.json"), "w") as f:
    f.write('{"observer": "Check", "ui_scale": 2.0, "theme": "daylight", "alpha": 0.05, "blind_scoring": false}')
for view in ("record", "leaving", "check"):
    for shape, size, screen in (("landscape", "1280x800", "1280x800x24"), ("portrait", "800x1280", "800x1280x24")):
        name = f"{view}_{shape}_200"
        png = os.path.join(work, f"{name}.png")
        targets = os.path.join(work, f"{name}.targets")
        p = subprocess.run(["xvfb-run", "-a", "-s", f"-screen 0 {screen} -noreset", furrow, "field", "--db",
                            os.path.join(big, "demo.furrow"), "--size", size, "--screen", view, "--screenshot", png,
                            "--targets-out", targets],
                           capture_output=True, env=dict(os.environ, FURROW_DATA_DIR=big), timeout=120)
        check(p.returncode == 0 and os.path.exists(png), f"{name}: drawn ({p.stderr[-300:]!r})")
        if view == "record" and os.path.exists(targets):
            w, h = (int(x) for x in size.split("x"))
            items = {}
            for line in open(targets):
                x0, y0, x1, y1, label = line.rstrip("\n").split(" ", 4)
                items[label] = (float(x0), float(y0), float(x1), float(y1))
            save = items.get("Save")
            check(save is not None and save[2] <= w and save[3] - save[1] >= 48,
                  f"{name}: Save is inside the width and at least 48 px high ({save})")
            wide = [l for l, r in items.items() if r[2] > w + 0.5]
            check(not wide, f"{name}: nothing runs past the right edge ({wide})")
        print(f"{name}: {png}")

# The screen's content scale (here from the X resource Xft.dpi, as desktops
# set it for high-density screens) multiplies every size: 144 dpi is 1.5.
p = subprocess.run(["xvfb-run", "-a", "-s", "-screen 0 1280x800x24 -noreset", "sh", "-c",
                    f"echo 'Xft.dpi: 144' | xrdb -merge && exec '{furrow}' field --db '{db}' --observer Check "
                    "--bench-frames 1"], capture_output=True, text=True, env=env, timeout=120)
check(p.returncode == 0 and "scale: 1.50 (screen content scale 1.50" in p.stdout,
      f"a 144 dpi screen scales the app by 1.5 ({p.stdout.strip()[-120:]!r} {p.stderr[-200:]!r})")
check.finish()
