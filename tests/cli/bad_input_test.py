#!/usr/bin/python3
"""The bad-input catalogue for plan files and record commands: every case
gets a plain message and exit code 2, and the trial database file is byte
for byte unchanged afterwards (a bad plan creates no database at all).

usage: bad_input_test.py FURROW DEMO_PLAN WORK_DIR
"""
import hashlib
import os
import shutil
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from checks import Checks  # noqa: E402

furrow, demo_plan, work = sys.argv[1:4]
shutil.rmtree(work, ignore_errors=True)
os.makedirs(work)
check = Checks()


def run(*args):
    return subprocess.run([furrow, *args], capture_output=True)


def digest(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


with open(demo_plan, encoding="utf-8") as f:
    base = f.read().splitlines()


def variant(replace=None, drop=None, add=None, raw=None):
    if raw is not None:
        return raw
    lines = list(base)
    for old, new in (replace or {}).items():
        lines = [new if l.startswith(old) else l for l in lines]
    if drop:
        lines = [l for l in lines if not l.startswith(drop)]
    if add:
        lines += add
    return ("\n".join(lines) + "\n").encode("utf-8")


TRAIT = "trait,height_cm,"
PLOT1 = "plot,101,"
plan_cases = {
    "empty": variant(raw=b""),
    "no_header": variant(drop="furrow-plan"),
    "header_version": variant(replace={"furrow-plan": "furrow-plan,2"}),
    "unknown_line_kind": variant(add=["layout,101,1"]),
    "setting_fields": variant(add=["setting,season"]),
    "unknown_setting": variant(add=["setting,colour,green"]),
    "duplicate_setting": variant(add=["setting,season,2027"]),
    "unknown_design": variant(replace={"setting,design": "setting,design,rcbd2"}),
    "replicates_text": variant(replace={"setting,replicates": "setting,replicates,four"}),
    "replicates_zero": variant(replace={"setting,replicates": "setting,replicates,0"}),
    "rows_negative": variant(replace={"setting,rows": "setting,rows,-4"}),
    "plot_length_text": variant(replace={"setting,plot_length_m": "setting,plot_length_m,6m"}),
    "block_shape": variant(replace={"setting,block_shape": "setting,block_shape,circles"}),
    "block_size": variant(add=["setting,block_size,2by10"]),
    "walk": variant(replace={"setting,walk": "setting,walk,zigzag"}),
    "seed_text": variant(replace={"setting,seed": "setting,seed,abc"}),
    "seed_too_large": variant(replace={"setting,seed": "setting,seed,99999999999999999999"}),
    "factor_one_level": variant(replace={"factor,entry": "factor,entry,Kestrel"}),
    "factor_repeated_level": variant(replace={"factor,entry": "factor,entry,Kestrel,Basalt,Kestrel"}),
    "factor_twice": variant(add=["factor,entry,A,B"]),
    "trait_fields": variant(replace={TRAIT: "trait,height_cm,plant height,cm,decimal,0"}),
    "trait_code_twice": variant(add=["trait,height_cm,plant height,cm,decimal,0,0,250,60,140,yes,1,"]),
    "trait_code_space": variant(add=["trait,plant height,plant height,cm,decimal,0,0,250,60,140,yes,1,"]),
    "trait_kind": variant(add=["trait,ht2,plant height,cm,length,0,0,250,60,140,yes,1,"]),
    "trait_decimals": variant(add=["trait,ht2,plant height,cm,decimal,two,0,250,60,140,yes,1,"]),
    "trait_limit_text": variant(add=["trait,ht2,plant height,cm,decimal,0,zero,250,60,140,yes,1,"]),
    "trait_limits_crossed": variant(add=["trait,ht2,plant height,cm,decimal,0,250,0,60,140,yes,1,"]),
    "trait_required": variant(add=["trait,ht2,plant height,cm,decimal,0,0,250,60,140,maybe,1,"]),
    "trait_occasions": variant(add=["trait,ht2,plant height,cm,decimal,0,0,250,60,140,yes,0,"]),
    "score_without_scale": variant(add=["trait,lod2,lodging,,score,0,,,,,yes,1,"]),
    "category_one_choice": variant(add=["trait,awn,awn type,,category,0,,,,,yes,1,awned"]),
    "plot_fields": variant(replace={PLOT1: "plot,101,1,1"}),
    "plot_label_twice": variant(add=["plot,101,1,1,1,Kestrel"]),
    "plot_outside_grid": variant(replace={PLOT1: "plot,101,1,9,1,Quillon"}),
    "plot_same_cell": variant(replace={"plot,102,": "plot,102,1,1,1,Tindra"}),
    "plot_unknown_level": variant(replace={PLOT1: "plot,101,1,1,1,Quillo"}),
    "plots_incomplete": variant(drop="plot,420,"),
    "bad_utf8": variant(raw=b"furrow-plan,1\nsetting,name,Harrow \xff Ridge\n"),
    "unclosed_quote": variant(add=['setting,site,"Harrow Ridge']),
    "no_design": variant(drop="setting,design"),
    "no_traits": variant(drop="trait,"),
    "cannot_randomise": variant(drop="plot,", replace={"setting,rows": "setting,rows,3"}),
    # Names the field sheet uses for its own columns, and codes that read alike on it.
    "trait_code_note": variant(add=["trait,note,remarks,,text,0,,,,,no,1,"]),
    "trait_code_block": variant(add=["trait,Block,block score,,score,0,,,,,no,1,1-5"]),
    "factor_named_plot": variant(replace={"factor,entry": "factor,plot,Kestrel,Basalt"}),
    "factor_named_as_trait": variant(replace={"factor,entry": "factor,height_cm,Kestrel,Basalt"}),
    "code_reads_as_occasion": variant(add=["trait,tiller,tillers,,count,0,0,50,,,yes,2,",
                                           "trait,tiller_2,second count,,count,0,0,50,,,yes,1,"]),
    "control_character_name": variant(replace={"setting,name": "setting,name,Harrow\x1b[31m Ridge"}),
    "control_character_label": variant(replace={PLOT1: "plot,10\x0b1,1,1,1,Quillon"}),
}

# Plan files: no database may be created.
for name, content in plan_cases.items():
    plan = os.path.join(work, f"{name}.plan.csv")
    with open(plan, "wb") as f:
        f.write(content)
    db = os.path.join(work, f"{name}.furrow")
    p = run("trial", "new", "--plan", plan, "--db", db)
    err = p.stderr.decode()
    check(p.returncode == 2, f"plan {name}: exit 2 (got {p.returncode}: {err.strip()})")
    check(plan in err or db in err, f"plan {name}: the message names the file")
    check(not os.path.exists(db), f"plan {name}: no database was created")

# A huge plan file (sparse, 300 MB) is refused without reading it.
huge = os.path.join(work, "huge.plan.csv")
with open(huge, "wb") as f:
    f.truncate(300 * 1024 * 1024)
p = run("trial", "new", "--plan", huge, "--db", os.path.join(work, "huge.furrow"))
check(p.returncode == 2 and b"larger than 256 MB" in p.stderr, "huge plan file refused")

# Line numbers point at the faulty line.
p = run("trial", "new", "--plan", os.path.join(work, "trait_decimals.plan.csv"), "--db", os.path.join(work, "x.furrow"))
check(f":{len(base) + 1}: field 'decimals'".encode() in p.stderr, "the faulty line and field are named")

# Record commands against an existing trial: the file must not change.
db = os.path.join(work, "trial.furrow")
check(run("trial", "new", "--plan", demo_plan, "--db", db).returncode == 0, "baseline trial created")
check(run("record", "--db", db, "--plot", "101", "--trait", "height_cm", "--value", "95", "--observer", "Ana")
      .returncode == 0, "baseline value saved")
before = digest(db)
record_cases = {
    "unknown_plot": ["--plot", "999", "--trait", "height_cm", "--value", "95"],
    "unknown_trait": ["--plot", "101", "--trait", "HT", "--value", "95"],
    "text_in_number": ["--plot", "102", "--trait", "height_cm", "--value", "9o"],
    "too_many_decimals": ["--plot", "102", "--trait", "height_cm", "--value", "95.25"],
    "hard_limit": ["--plot", "102", "--trait", "height_cm", "--value", "400"],
    "bad_occasion": ["--plot", "102", "--trait", "height_cm", "--occasion", "2", "--value", "95"],
    "value_and_missing": ["--plot", "102", "--trait", "height_cm", "--value", "95", "--missing", "flooded"],
    "no_value": ["--plot", "102", "--trait", "height_cm"],
    "score_off_scale": ["--plot", "102", "--trait", "lodging_score", "--value", "10"],
    "count_fraction": ["--plot", "102", "--trait", "stand_count", "--value", "230.5"],
    "negative_count": ["--plot", "102", "--trait", "stand_count", "--value", "-3"],
    "empty_value": ["--plot", "102", "--trait", "height_cm", "--value", " "],
    "exponent": ["--plot", "102", "--trait", "height_cm", "--value", "9.6e1"],
    "control_in_note": ["--plot", "102", "--trait", "height_cm", "--value", "95", "--note", "lodged\x07"],
}
for name, args in record_cases.items():
    p = run("record", "--db", db, "--observer", "Ana", *args)
    check(p.returncode == 2, f"record {name}: exit 2 (got {p.returncode}: {p.stderr.decode().strip()})")
    check(len(p.stderr) > 0 and p.stdout == b"", f"record {name}: a message, nothing saved")
    check(digest(db) == before, f"record {name}: database unchanged")
p = run("record", "--db", db, "--plot", "102", "--trait", "height_cm", "--value", "95")
check(p.returncode == 2 and digest(db) == before, "record without observer refused, unchanged")
p = run("record", "--db", db, "--plot", "102", "--trait", "height_cm", "--value", "150", "--observer", "Ana")
check(p.returncode == 3 and digest(db) == before, "a value needing confirmation is not saved without --confirm")
missing_db = os.path.join(work, "nothing.furrow")
p = run("record", "--db", missing_db, "--plot", "101", "--trait", "height_cm", "--value", "95", "--observer", "Ana")
check(p.returncode == 2 and not os.path.exists(missing_db), "a missing database is not created by record")
not_db = os.path.join(work, "not_a_database.furrow")
with open(not_db, "wb") as f:
    f.write(b"this is a note, not a database\n" * 100)
nb = digest(not_db)
p = run("record", "--db", not_db, "--plot", "101", "--trait", "height_cm", "--value", "95", "--observer", "Ana")
check(p.returncode == 2 and digest(not_db) == nb, "a file that is not a database is refused and unchanged")
p = run("trial", "new", "--plan", demo_plan, "--db", db)
check(p.returncode == 2 and digest(db) == before, "trial new refuses to overwrite an existing database")

print(f"{len(plan_cases) + 1} plan files and {len(record_cases) + 5} record/trial commands checked")
check.finish()
