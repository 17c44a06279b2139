#!/usr/bin/python3
"""End-to-end checks of `furrow analyze`: the demo trial, the JSON contract,
a published table through the command line, and the bad-input catalogue
(exit code 2, a message naming file, line and column, nothing on stdout).

usage: cli_test.py FURROW SOURCE_DIR REFERENCE_DIR
"""
import json
import os
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from checks import Checks  # noqa: E402
import tempfile

FURROW, SRC, REF = sys.argv[1:4]
DEMO = os.path.join(SRC, "demo_data", "harrow_ridge_oats_2026.csv")
check = Checks()


def run(*args):
    p = subprocess.run([FURROW, "analyze", *args], capture_output=True, text=True)
    return p.returncode, p.stdout, p.stderr


DEMO_ARGS = ["--csv", DEMO, "--design", "rcbd", "--block", "block", "--treatment", "entry"]

# 1. The demo trial in text: the planted problems are found.
code, out, err = run(*DEMO_ARGS, "--response", "height_cm,grain_yield_t_ha")
check(code == 0, f"demo analysis exits 0 (got {code}: {err})")
check("Interim analysis" in out, "the interim caution is printed")
check("line 48: value 8.3" in out, "the decimal slip on plot 307 (file line 48) is an outlier")
check("block 2 x entry Dunmore (line 35)" in out, "the flooded plot 214 is a missing cell")

# 2. The JSON contract.
code, out, err = run(*DEMO_ARGS, "--response", "height_cm", "--json", "--treatments-random")
check(code == 0, "demo JSON exits 0")
j = json.loads(out)
for key in ["design", "response", "n", "sums", "table", "grand_mean", "cv_percent", "r_squared",
            "residual_sd", "means", "lsd", "hsd", "mdd_percent", "variance_components", "outliers"]:
    check(key in j, f"JSON has {key}")
check(j["design"] == "rcbd" and j["response"] == "height_cm" and j["n"] == 79, "design, response, n")
check(j["sums"] == "partial", "sums kind is stated")
check([r["source"] for r in j["table"]] == ["block", "entry", "residual", "total"], "table row order")
for r in j["table"]:
    check(set(r) >= {"source", "df", "ss", "ms", "f", "p", "error_term"}, f"row {r['source']} has every field")
check(j["table"][2]["f"] is None and j["table"][3]["p"] is None and j["table"][3]["error_term"] is None,
      "residual and total carry no F, P or error term")
check(j["table"][1]["error_term"] == "residual", "entry tested against the residual")
check(j["table"][0]["df"] + j["table"][1]["df"] + j["table"][2]["df"] == j["table"][3]["df"], "DF add up")
check(len([m for m in j["means"] if m["term"] == "entry"]) == 20, "20 entry means")
check(all({"level", "mean", "se", "n"} <= set(m) for m in j["means"]), "means carry level, mean, se, n")
check(any(o["line"] == 48 and o["studentized"] < -3 for o in j["outliers"]), "outlier reported by CSV line")
check(j["variance_components"]["heritability"] is not None, "heritability with random entries")

# 3. A published table through the command line: Cochran & Cox (1957) pp. 122-125.
code, out, err = run("--csv", os.path.join(REF, "field-experiments", "cochran-latin.csv"), "--design", "latin",
                     "--row", "row_order", "--column", "col_area", "--treatment", "operator", "--response", "diff",
                     "--json")
if code != 0:
    sys.exit(f"FAIL: furrow analyze on the published Cochran & Cox table exited {code}: {err.strip()}")
j = json.loads(out)
op = [r for r in j["table"] if r["source"] == "operator"][0]
check(abs(op["ss"] - 155.595833) < 5e-7 and abs(op["f"] - 9.350243) < 5e-7, "Cochran & Cox operator row")
check(abs(j["lsd"] - 2.197094) < 5e-7, "Cochran & Cox LSD")

# 4. Several sites with random sites: treatments against site x treatment.
with tempfile.TemporaryDirectory() as tmp:
    ms = os.path.join(tmp, "sites.csv")
    with open(ms, "w") as f:
        f.write("site,rep,entry,y\n")
        k = 0
        for s in range(3):
            for r in range(2):
                for e in range(4):
                    k += 1
                    f.write(f"S{s},{r + 1},E{e},{10 + s + e * 0.5 + ((k * 7) % 5) * 0.3:.2f}\n")
    code, out, err = run("--csv", ms, "--design", "multi-site", "--site", "site", "--block", "rep",
                         "--treatment", "entry", "--sites-random", "--response", "y", "--json")
    j = json.loads(out)
    rows = {r["source"]: r for r in j["table"]}
    check(rows["entry"]["error_term"] == "site x entry", "random sites: entry tested against site x entry")
    check(rows["site"]["error_term"] == "rep within site", "sites tested against blocks within sites")

    # 5. Bad input catalogue.
    def bad(name, content, args, must):
        path = os.path.join(tmp, name)
        if content is not None:
            with open(path, "wb") as f:
                f.write(content)
        code, out, err = run("--csv", path, *args)
        check(code == 2, f"{name}: exit code 2 (got {code})")
        check(out == "", f"{name}: nothing on stdout")
        for m in must:
            check(m in err, f"{name}: stderr names '{m}' (got: {err.strip()})")

    rcbd = ["--design", "rcbd", "--block", "block", "--treatment", "entry", "--response", "y"]
    good = b"block,entry,y\n1,A,5\n1,B,6\n2,A,5.5\n2,B,6.1\n3,A,5.2\n3,B,6.4\n"
    bad("missing_column.csv", good, ["--design", "rcbd", "--block", "block", "--treatment", "entry",
                                     "--response", "yield"], ["missing_column.csv:1:", "column 'yield'"])
    bad("text_in_number.csv", good.replace(b"2,B,6.1", b"2,B,6.1kg"), rcbd,
        ["text_in_number.csv:5:", "column 'y'", "6.1kg"])
    bad("one_level.csv", b"block,entry,y\n1,A,5\n1,B,6\n1,A,5.5\n1,B,6.1\n", rcbd,
        ["one_level.csv:2:", "column 'block'", "only one level"])
    bad("wrong_fields.csv", b"block,entry,y\n1,A,5\n1,B\n", rcbd, ["wrong_fields.csv:3:", "expected 3 fields"])
    bad("empty.csv", b"", rcbd, ["empty.csv", "empty"])
    bad("bad_utf8.csv", b"block,entry,y\n1,A\xff,5\n", rcbd, ["bad_utf8.csv:2:", "UTF-8"])
    bad("no_such_file.csv", None, rcbd, ["no_such_file.csv", "cannot open"])
    # Levels that would print alike: a no-break space, a zero-width space, a control character.
    bad("nbsp_level.csv", good.replace(b"2,B,6.1", b"2,B\xc2\xa0,6.1"), rcbd,
        ["nbsp_level.csv:5:", "column 'entry'", "no-break space"])
    bad("zero_width_level.csv", good.replace(b"3,B,6.4", b"3,\xe2\x80\x8bB,6.4"), rcbd + ["--method", "reml"],
        ["zero_width_level.csv:7:", "zero-width character"])
    bad("control_level.csv", good.replace(b"1,B,6", b"1\x07,B,6"), rcbd, ["control_level.csv:3:", "column 'block'",
                                                                         "control character"])
    for name, ch in (("soft_hyphen", b"\xc2\xad"), ("c1_control", b"\xc2\x85"), ("narrow_nbsp", b"\xe2\x80\xaf"),
                     ("hangul_filler", b"\xe3\x85\xa4"), ("bom_inside", b"\xef\xbb\xbf")):
        bad(name + ".csv", good.replace(b"2,A,5.5", b"2,A" + ch + b",5.5"), rcbd,
            [name + ".csv:4:", "column 'entry'", "does not show"])
    bad("tiny_alpha.csv", good, rcbd + ["--alpha", "1e-12"], ["--alpha must lie between 0.01 and 0.10"])
    bad("site_with_rcbd.csv", good, rcbd + ["--site", "block"], ["--site is not used by the rcbd design"])
    bad("block_with_crd.csv", good, ["--design", "crd", "--block", "block", "--treatment", "entry", "--response", "y"],
        ["--block is not used by the crd design"])
    bad("two_roles.csv", good, ["--design", "rcbd", "--block", "block", "--treatment", "y", "--response", "y"],
        ["column 'y' is named by both --treatment and --response"])
    bad("unknown_design.csv", good, ["--design", "rcbdx", "--block", "block", "--treatment", "entry",
                                     "--response", "y"], ["unknown design 'rcbdx'"])
    bad("missing_block.csv", good, ["--design", "rcbd", "--treatment", "entry", "--response", "y"],
        ["needs a block column"])
    bad("empty_factor.csv", good.replace(b"2,B,6.1", b",B,6.1"), rcbd,
        ["empty_factor.csv:5:", "column 'block'"])
    bad("no_error_df.csv", b"entry,y\nA,1\nB,2\n", ["--design", "crd", "--treatment", "entry", "--response", "y"],
        ["no degrees of freedom for error"])
    bad("bad_sums.csv", good, rcbd + ["--sums", "type3"], ["--sums must be sequential or partial"])
    bad("reml_no_variation.csv", b"block,entry,y\n1,A,5\n1,B,5\n2,A,5\n2,B,5\n3,A,5\n3,B,5\n",
        rcbd + ["--method", "reml"], ["reml_no_variation.csv", "do not vary"])
    bad("reml_confounded.csv", b"block,entry,y\n1,A,5\n1,A,5.2\n2,B,6\n2,B,6.3\n3,C,5.5\n3,C,5.9\n",
        rcbd + ["--method", "reml"], ["reml_confounded.csv", "'block' coincides with the fixed effects"])
    bad("reml_bad_alpha.csv", good, rcbd + ["--method", "reml", "--alpha", "1.5"], ["--alpha must lie between 0.01 and 0.10"])
    bad("trend_without_reml.csv", good, rcbd + ["--field-trend", "test", "--row-position", "block",
                                                "--column-position", "entry"], ["need --method reml"])
    bad("trend_without_positions.csv", good, rcbd + ["--method", "reml", "--field-trend", "test"],
        ["needs --row-position and --column-position"])
    bad("trend_bad_position.csv", b"row,col,block,entry,y\n1,1,1,A,5\n1,2,1,B,6\n2,1,2,A,5.5\n2,x,2,B,6.1\n",
        rcbd + ["--method", "reml", "--field-trend", "test", "--row-position", "row", "--column-position", "col"],
        ["trend_bad_position.csv:5:", "column 'col'", "whole number"])

# 6. REML through the command line on Yates' oats split-plot (SOURCE.md): balanced, so the
#    components are the published analysis of variance's expected-mean-square estimates and
#    the F tests are the stratum F tests.
code, out, err = run("--csv", os.path.join(REF, "field-experiments", "oats.csv"), "--design", "split-plot",
                     "--block", "B", "--main-plot", "V", "--sub-plot", "N", "--response", "Y", "--method", "reml",
                     "--json")
check(code == 0, f"REML on the oats exits 0 ({err.strip()})")
j = json.loads(out)
check(j["analysis"] == "reml" and j["differs_because"] == [], "REML JSON: analysis and no difference from ANOVA")
comp = {c["source"]: c for c in j["components"]}
check(abs(comp["B"]["estimate"] - (3175.055556 - 601.330556) / 12) < 1e-4, "oats block variance")
check(abs(comp["B x V"]["estimate"] - (601.330556 - 177.083333) / 4) < 1e-4, "oats main-plot variance")
check(abs(comp["residual (plot error)"]["estimate"] - 177.083333) < 1e-4, "oats plot error")
tests = {t["source"]: t for t in j["tests"]}
check(abs(tests["V"]["f"] - 1.485340) < 1e-5 and abs(tests["V"]["den_df"] - 10) < 1e-6, "V against B x V")
check(abs(tests["N"]["f"] - 37.685647) < 1e-5 and abs(tests["N"]["den_df"] - 45) < 1e-6, "N against the plot error")
for key in ["components", "tests", "means", "comparisons", "heritability", "predictions", "field_trend",
            "log_likelihood", "model", "notes", "caution"]:
    check(key in j, f"REML JSON has {key}")
code, out, err = run(*DEMO_ARGS, "--response", "height_cm", "--method", "reml", "--field-trend", "test",
                     "--row-position", "field_row", "--column-position", "field_column")
check(code == 0 and "Field trend" in out and "REML" in out, f"REML with a field-trend test on the demo ({err.strip()})")

check.finish()
