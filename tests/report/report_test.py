#!/usr/bin/python3
"""The office report: `furrow report` on the demo day writes one HTML file
that needs no network (no scripts, links or remote sources), whose every
analysis number equals the engine's (`furrow analyze --db --json`, compared
exactly through the cells' data-value attributes), whose field map has every
plot, and which Debian's Chromium renders headless (screenshot not blank,
the DOM holds the map). Bad requests exit 2 and write nothing.

usage: report_test.py FURROW SOURCE_DIR WORK_DIR
"""
import json
import os
import shutil
import subprocess
import sys
from html.parser import HTMLParser

here = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(here, "..", "cli"))
sys.path.insert(0, os.path.join(here, "..", "gui"))
from checks import Checks  # noqa: E402
from png import read_png  # noqa: E402

furrow, src, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()

db = os.path.join(work, "demo.furrow")
subprocess.run(["/usr/bin/python3", os.path.join(src, "demo_data", "load_demo_day.py"), furrow,
                os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv"),
                os.path.join(src, "demo_data", "harrow_ridge_oats_2026.csv"), db], check=True, capture_output=True)
report = os.path.join(work, "report.html")
p = subprocess.run([furrow, "report", "--db", db, "--out", report, "--map-trait", "height_cm"],
                   capture_output=True, text=True)
check(p.returncode == 0 and os.path.exists(report), f"report written ({p.stderr.strip()})")
html = open(report, encoding="utf-8").read()


class Report(HTMLParser):
    """Sections by trait: the analysis-of-variance rows, the means, the named
    summary values; the map's plots; anything that would reach out."""

    def __init__(self):
        super().__init__()
        self.sections, self.current, self.table, self.row = {}, None, None, None
        self.plots, self.remote, self.scripts = {}, [], 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for k in ("src", "href"):
            if k in a:
                self.remote.append(a[k])
        if tag in ("script", "link", "iframe", "img"):
            self.scripts += 1
        if tag == "section" and a.get("class") == "analysis":
            self.current = self.sections.setdefault(a["data-trait"], {"anova": [], "means": [], "named": {}})
        elif tag == "table" and self.current is not None:
            self.table = a.get("class")
        elif tag == "tr" and self.table in ("anova", "means"):
            self.row = []
            self.current[self.table].append(self.row)
        elif tag == "td" and self.row is not None:
            self.row.append(float(a["data-value"]) if "data-value" in a else None)
        elif tag == "span" and self.current is not None and "data-name" in a:
            self.current["named"][a["data-name"]] = float(a["data-value"])
        elif tag == "g" and a.get("class") == "plot":
            self.plots[a["data-plot"]] = float(a["data-value"]) if "data-value" in a else None

    def handle_endtag(self, tag):
        if tag == "section":
            self.current = None
        elif tag == "table":
            self.table = None
        elif tag == "tr":
            self.row = None


r = Report()
r.feed(html)
check(r.remote == [] and r.scripts == 0, f"no scripts, images, links or remote sources ({r.remote[:3]})")
check("Interim analysis for checking data" in html, "the interim caution is there (the trial is not closed)")
check(len(r.plots) == 80, f"the map has all 80 plots ({len(r.plots)})")
check(r.plots.get("307") == 8.3 and r.plots.get("214") is None, "plot 307 shows 8.3, flooded plot 214 no value")
check(set(r.sections) == {"stand_count", "height_cm", "heading_days", "lodging_score", "grain_yield_t_ha"},
      f"a section per numeric trait ({sorted(r.sections)})")

compared = 0
for trait in ("stand_count", "height_cm", "heading_days"):
    engine = json.loads(subprocess.run([furrow, "analyze", "--db", db, "--trait", trait, "--json"], check=True,
                                       capture_output=True, text=True).stdout)
    section = r.sections[trait]
    rows = [row for row in section["anova"] if row]
    check(len(rows) == len(engine["table"]), f"{trait}: one row per term ({len(rows)})")
    for row, e in zip(rows, engine["table"]):
        df, ss, ms, f, pv = row[1:6]
        want = [e["df"], e["ss"], e["ms"], e["f"], e["p"]]
        got = [df, ss, ms, f, pv]
        check(all((w is None and g is None) or (w is not None and g == w) for w, g in zip(want, got)),
              f"{trait} {e['source']}: DF, SS, MS, F, P equal the engine's exactly ({got} vs {want})")
        compared += 5
    means = [row for row in section["means"] if row]
    engine_means = [m for m in engine["means"] if m["term"] == engine["means"][0]["term"]]
    check([m[2] for m in means] == [m["mean"] for m in engine_means], f"{trait}: means equal the engine's")
    check([m[3] for m in means] == [m["se"] for m in engine_means], f"{trait}: SEs equal the engine's")
    compared += 2 * len(means)
    for name in ("grand_mean", "cv_percent", "lsd", "hsd", "mdd_percent"):
        check(section["named"].get(name) == engine[name], f"{trait}: {name} equals the engine's")
        compared += 1
print(f"{compared} numbers compared with the engine")
check("<td>307</td>" in html.split('data-trait="height_cm"')[1].split("</section>")[0],
      "plot 307 is an outlier plot of plant height")

# Headless Chromium from Debian renders it: a screenshot that is not blank,
# and a DOM with the map.
chromium = ["chromium", "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
            "--disable-background-networking", "--disable-component-update", "--disable-sync",
            f"--user-data-dir={os.path.join(work, 'chromium-profile')}", "--hide-scrollbars"]
png = os.path.join(work, "report.png")
p = subprocess.run(chromium + ["--window-size=1280,2400", f"--screenshot={png}", f"file://{report}"],
                   capture_output=True, text=True, timeout=120)
check(p.returncode == 0 and os.path.exists(png), f"Chromium took a screenshot ({p.stderr[-200:]!r})")
if os.path.exists(png):
    w, h, rows = read_png(png)
    colours, dark = set(), 0
    for y in range(0, h, 4):
        for x in range(0, w * 4, 16):
            px = rows[y][x:x + 3]
            colours.add(px)
            dark += sum(px) < 150
    sampled = (h // 4) * (w // 4)
    check((w, h) == (1280, 2400), f"screenshot is 1280x2400 ({w}x{h})")
    check(len(colours) > 50, f"not blank ({len(colours)} colours)")
    check(0.003 < dark / sampled < 0.5, f"dark text on white ({dark / sampled:.3f})")
    # The yellow caution band sits near the top.
    band = sum(1 for y in range(0, 300, 2) for x in range(0, w * 4, 16) if rows[y][x:x + 3] == bytes((0xFF, 0xD5, 0x4F)))
    check(band > 100, f"the caution band is drawn ({band} samples)")
dom = subprocess.run(chromium + ["--dump-dom", f"file://{report}"], capture_output=True, text=True, timeout=120)
check(dom.returncode == 0 and dom.stdout.count('class="plot"') == 80, "Chromium's DOM holds the 80 plots of the map")

# The layout table lists every plot with its treatment.
check(html.count("<tr><td>") >= 80 and "<td>307</td>" in html.split("class=layout")[1].split("</table>")[0],
      "the layout table lists the plots")
# The mixed-model check (REML) beside every analysis: on the demo day the flooded plot 214 makes the
# data unbalanced, so it differs from the analysis of variance and says why; field trend is tested.
sections = html.split("<section class=analysis")[1:]
analysed = [sec for sec in sections if "<p>Not analysed" not in sec]
check(len(analysed) == 3 and all("Mixed-model check (REML)" in sec for sec in analysed),
      "every analysed trait has its mixed-model check")
height = [sec for sec in sections if 'data-trait="height_cm"' in sec][0]
check('class=reml data-differs="yes"' in height and "not balanced" in height, "height: REML differs, and why")
check("Field trend (rows and columns correlated" in height, "height: field trend tested")

# A trial whose stand count follows a smooth gradient across the field: the trend is kept, and the
# report draws the fitted trend as a map of every plot.
import csv  # noqa: E402
import math  # noqa: E402
trend_db = os.path.join(work, "trend.furrow")
subprocess.run([furrow, "trial", "new", "--plan", os.path.join(src, "demo_data", "harrow_ridge_oats_2026.plan.csv"),
                "--db", trend_db], check=True, capture_output=True)
with open(os.path.join(src, "demo_data", "harrow_ridge_oats_2026.csv"), encoding="utf-8") as f:
    plots = list(csv.DictReader(f))
for i, r in enumerate(plots):
    row, col = int(r["field_row"]), int(r["field_column"])
    value = round(230 + 25 * math.sin(col / 3.0) + 6 * row + ((i * 37) % 11 - 5) * 0.8)
    args = [furrow, "record", "--db", trend_db, "--plot", r["plot"], "--trait", "stand_count", "--observer", "T",
            "--value", str(value)]
    p = subprocess.run(args, capture_output=True, text=True)
    if p.returncode == 3:
        p = subprocess.run(args + ["--confirm"], capture_output=True, text=True)
    check(p.returncode == 0, f"stand count saved on plot {r['plot']} ({p.stderr.strip()})")
trend_html_path = os.path.join(work, "trend.html")
p = subprocess.run([furrow, "report", "--db", trend_db, "--out", trend_html_path], capture_output=True, text=True)
check(p.returncode == 0, f"trend report written ({p.stderr.strip()})")
trend_html = open(trend_html_path, encoding="utf-8").read()
stand = [sec for sec in trend_html.split("<section class=analysis")[1:] if 'data-trait="stand_count"' in sec][0]
check('class=trend data-kept="yes"' in stand, "a smooth gradient: the field trend is kept")
check('aria-label="fitted field trend"' in stand and stand.count("data-trend=") == len(plots),
      "the fitted trend is drawn for every plot")

# A closed trial's report has no interim caution.
closed = os.path.join(work, "closed.furrow")
shutil.copy(db, closed)
p = subprocess.run([furrow, "trial", "close", "--db", closed], capture_output=True, text=True)
check(p.returncode == 0, f"trial close ({p.stderr.strip()})")
p = subprocess.run([furrow, "trial", "close", "--db", closed], capture_output=True, text=True)
check(p.returncode == 2 and "closed already" in p.stderr, "closing twice is refused")
subprocess.run([furrow, "report", "--db", closed, "--out", os.path.join(work, "closed.html")], check=True,
               capture_output=True)
closed_html = open(os.path.join(work, "closed.html"), encoding="utf-8").read()
check("Interim analysis for checking data" not in closed_html and "status: closed" in closed_html,
      "a closed trial's report drops the interim caution")

# Bad requests: exit 2, a message naming the problem, no file.
for args, what in ((["--db", os.path.join(work, "none.furrow")], "does not exist"),
                   (["--db", db, "--map-trait", "colour"], "no trait 'colour'")):
    out = os.path.join(work, "bad.html")
    p = subprocess.run([furrow, "report", *args, "--out", out], capture_output=True, text=True)
    check(p.returncode == 2 and what in p.stderr and not os.path.exists(out), f"refused: {what} ({p.stderr.strip()})")
check.finish()
