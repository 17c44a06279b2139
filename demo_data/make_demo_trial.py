#!/usr/bin/env python3
"""Writes the invented demo trial (demo_data/harrow_ridge_oats_2026.csv).

Scenario (fictional): Harrow Ridge Research Farm, a hulless-oat variety trial
sown 2026-04-22; 20 entries in 4 randomised complete blocks laid as field rows
of 20 plots; plot labels are block digit + plot number (101-420). Values are
drawn from a fixed seed, then two realistic problems are planted:
  - plot 214 was flooded: no values were recorded for it;
  - plot 307's height was typed as a tenth of its value (a decimal slip).
Run it again to get the same file byte for byte.
"""
import random
import sys

ENTRIES = ["Kestrel", "Basalt", "Tamarack", "Ridgeline", "Quillon", "Marten",
           "Larchmont", "Saffer", "Brockwell", "Tindra", "Oxhollow", "Pennant",
           "Caddis", "Wetherby", "Alder Gold", "Runnel", "Skerry", "Heathbrook",
           "Dunmore", "Farrowdale"]
BLOCKS = 4
SEED = 20260428


def main(path):
    rng = random.Random(SEED)
    yield_effect = {e: rng.gauss(0, 0.45) for e in ENTRIES}
    height_effect = {e: rng.gauss(0, 7) for e in ENTRIES}
    heading_effect = {e: rng.gauss(0, 3) for e in ENTRIES}
    block_yield = [rng.gauss(0, 0.25) for _ in range(BLOCKS)]
    rows = []
    for b in range(1, BLOCKS + 1):
        order = ENTRIES[:]
        rng.shuffle(order)
        for k, entry in enumerate(order, start=1):
            label = f"{b}{k:02d}"
            stand = max(120, round(rng.gauss(236, 14)))
            height = round(96 + height_effect[entry] + rng.gauss(0, 4))
            heading = round(58 + heading_effect[entry] + rng.gauss(0, 1.2))
            lodging = min(9, max(1, round(3 + (height - 96) / 8 + rng.gauss(0, 1))))
            grain = 5.4 + yield_effect[entry] + block_yield[b - 1] + rng.gauss(0, 0.32)
            rows.append([label, str(b), str(b), str(k), entry, str(stand), str(height),
                         str(heading), str(lodging), f"{grain:.2f}", ""])
    for r in rows:
        if r[0] == "214":
            r[5:10] = ["", "", "", "", ""]
            r[10] = "flooded after storm 2026-06-03"
        if r[0] == "307":
            r[6] = f"{int(r[6]) / 10:.1f}"   # the decimal slip: a tenth of the measured height
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        f.write("plot,block,field_row,field_column,entry,stand_count,height_cm,heading_days,"
                "lodging_score,grain_yield_t_ha,note\n")
        for r in rows:
            f.write(",".join(f'"{c}"' if "," in c else c for c in r) + "\n")


TRAITS = [
    # code, name, unit, kind, decimals, hard_min, hard_max, soft_min, soft_max, required, occasions, choices
    ("stand_count", "plants per plot", "plants", "count", "0", "0", "600", "150", "320", "yes", "1", ""),
    ("height_cm", "plant height", "cm", "decimal", "1", "0", "250", "60", "140", "yes", "1", ""),
    ("heading_days", "days to heading", "days", "count", "0", "30", "100", "45", "75", "yes", "1", ""),
    ("lodging_score", "lodging", "", "score", "0", "", "", "", "", "yes", "1", "1-9"),
    ("grain_yield_t_ha", "grain yield", "t/ha", "decimal", "2", "0", "15", "2", "9", "yes", "1", ""),
]


def write_plan(csv_path, plan_path):
    """The plan file of the same trial, with its layout, in Furrow's plan format."""
    with open(csv_path, encoding="utf-8") as f:
        lines = [l.rstrip("\n").split(",") for l in f][1:]
    with open(plan_path, "w", encoding="utf-8", newline="\n") as f:
        f.write("furrow-plan,1\n")
        f.write("setting,name,Harrow Ridge hulless oat variety trial 2026\n")
        f.write("setting,site,Harrow Ridge Research Farm - field 7\n")
        f.write("setting,season,2026\n")
        f.write("setting,design,rcbd\n")
        f.write(f"setting,replicates,{BLOCKS}\n")
        f.write(f"setting,rows,{BLOCKS}\nsetting,columns,{len(ENTRIES)}\n")
        f.write("setting,plot_length_m,6\nsetting,plot_width_m,1.5\n")
        f.write("setting,block_shape,row-strips\nsetting,walk,serpentine-rows\n")
        f.write(f"setting,seed,{SEED}\n")
        f.write("factor,entry," + ",".join(ENTRIES) + "\n")
        for t in TRAITS:
            f.write("trait," + ",".join(t) + "\n")
        for l in lines:
            f.write(f"plot,{l[0]},{l[1]},{l[2]},{l[3]},{l[4]}\n")


if __name__ == "__main__":
    out = sys.argv[1] if len(sys.argv) > 1 else "harrow_ridge_oats_2026.csv"
    main(out)
    write_plan(out, out.replace(".csv", ".plan.csv"))
