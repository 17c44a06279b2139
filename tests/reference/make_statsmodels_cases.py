#!/usr/bin/python3
"""Reference analyses from Debian's python3-statsmodels for the cross-check.

For every design kind, balanced and unbalanced, writes generated data
(case_NAME.csv) and statsmodels' sequential (differences of nested OLS fits
in the design's term order) and partial (anova_lm typ=2) sums of squares with F and P against each source's error term
(case_NAME.json). F and P for a source whose error is a stratum mean square
(split-plot main plots, random sites) are formed from statsmodels' own mean
squares with scipy.stats.f. Fixed seeds: the files are the same every run.
"""
import json
import os
import sys

import numpy as np
import pandas as pd
from scipy import stats
from statsmodels.formula.api import ols
from statsmodels.stats.anova import anova_lm


def crossed(rng, factors, reps=1):
    grids = np.meshgrid(*[np.arange(n) for _, n in factors], indexing="ij")
    rows = []
    for _ in range(reps):
        for idx in zip(*[g.ravel() for g in grids]):
            rows.append({name: f"{name[0].upper()}{i + 1}" for (name, _), i in zip(factors, idx)})
    return pd.DataFrame(rows)


def response(rng, df, effects_sd=1.0, noise=1.0, offset=50.0):
    y = np.full(len(df), offset)
    for col in df.columns:
        levels = sorted(df[col].unique())
        eff = dict(zip(levels, rng.normal(0, effects_sd, len(levels))))
        y = y + df[col].map(eff).to_numpy()
    # an interaction-like perturbation so that interactions are not null
    key = df.astype(str).agg("|".join, axis=1)
    cells = {k: v for k, v in zip(sorted(key.unique()), rng.normal(0, 0.5, key.nunique()))}
    y = y + key.map(cells).to_numpy()
    return y + rng.normal(0, noise, len(df))


def drop_rows(rng, df, count, keep_cells):
    """Removes `count` random rows but keeps every cell of `keep_cells` filled."""
    df = df.copy()
    removed = 0
    order = rng.permutation(len(df))
    for i in order:
        if removed == count:
            break
        if i not in df.index:
            continue
        trial = df.drop(index=i)
        ok = all(trial.groupby(cols).size().shape[0] == df.groupby(cols).size().shape[0] for cols in keep_cells)
        if ok:
            df = trial
            removed += 1
    return df.reset_index(drop=True)


def contains(big, small):
    """Whether statsmodels term `big` (C(a):C(b)) contains every factor of `small`."""
    return set(small.split(":")) <= set(big.split(":"))


def case(name, df, roles, terms, out_dir, partial_by_fits=False):
    """terms: list of (our label, statsmodels row name, error label or None).
    partial_by_fits: partial sums from OLS fits of the two nested models (each
    term after every term not containing it) rather than anova_lm typ=2, for
    designs with empty cells, whose indicator columns are rank deficient."""
    # The model sees exactly the values written to the file.
    text = [f"{v:.6f}" for v in df["y"]]
    df = df.assign(y=[float(t) for t in text])
    formula = "y ~ " + " + ".join(sm for _, sm, _ in terms)
    model = ols(formula, data=df).fit()
    result = {"name": name, "roles": roles, "n": len(df), "sums": {}}
    # Sequential sums: statsmodels OLS fits of the nested models in the design's
    # own term order (the formula interface sorts terms by degree, so anova_lm
    # typ=1 would use another order for split-plot and several-site designs).
    nested = [ols("y ~ 1", data=df).fit()]
    for k in range(len(terms)):
        nested.append(ols("y ~ " + " + ".join(sm for _, sm, _ in terms[:k + 1]), data=df).fit())
    sequential = {label: (float(nested[k].df_resid - nested[k + 1].df_resid), float(nested[k].ssr - nested[k + 1].ssr))
                  for k, (label, _, _) in enumerate(terms)}
    # Partial sums: anova_lm typ=2 (each term adjusted for the terms not containing it).
    if partial_by_fits:
        partial = {}
        for label, sm, _ in terms:
            others = [o for _, o, _ in terms if o != sm and not contains(o, sm)]
            lower = ols("y ~ " + (" + ".join(others) if others else "1"), data=df).fit()
            upper = ols("y ~ " + " + ".join(others + [sm]), data=df).fit()
            partial[label] = (float(lower.df_resid - upper.df_resid), float(lower.ssr - upper.ssr))
    else:
        table2 = anova_lm(model, typ=2)
        partial = {label: (float(table2.loc[sm, "df"]), float(table2.loc[sm, "sum_sq"])) for label, sm, _ in terms}
    for key, sums in (("sequential", sequential), ("partial", partial)):
        rows = {}
        for label, _, _ in terms:
            df_, ss = sums[label]
            rows[label] = {"df": df_, "ss": ss, "ms": ss / df_}
        rows["residual"] = {"df": float(model.df_resid), "ss": float(model.ssr)}
        rows["residual"]["ms"] = rows["residual"]["ss"] / rows["residual"]["df"]
        for label, _, error in terms:
            if error is None:
                continue
            e = rows[error]
            f = rows[label]["ms"] / e["ms"]
            rows[label]["f"] = f
            rows[label]["p"] = float(stats.f.sf(f, rows[label]["df"], e["df"]))
        result["sums"][key] = rows
    df.assign(y=text).to_csv(os.path.join(out_dir, f"case_{name}.csv"), index=False)
    with open(os.path.join(out_dir, f"case_{name}.json"), "w") as f:
        json.dump(result, f, indent=1)


def main(out_dir):
    os.makedirs(out_dir, exist_ok=True)
    rng = np.random.default_rng(20261201)
    R = "residual"

    for unbalanced in (False, True):
        tag = "unbalanced" if unbalanced else "balanced"

        d = crossed(rng, [("trt", 5)], reps=4)
        d["y"] = response(rng, d)
        if unbalanced:
            d = drop_rows(rng, d, 4, [["trt"]])
        case(f"crd_{tag}", d, {"kind": "crd", "treatments": ["trt"]}, [("trt", "C(trt)", R)], out_dir)

        d = crossed(rng, [("block", 4), ("entry", 8)])
        d["y"] = response(rng, d)
        if unbalanced:
            d = drop_rows(rng, d, 3, [["entry"], ["block"]])
        case(f"rcbd_{tag}", d, {"kind": "rcbd", "block": "block", "treatments": ["entry"]},
             [("block", "C(block)", R), ("entry", "C(entry)", R)], out_dir)

        n = 5
        rows = [{"row": f"R{i + 1}", "col": f"C{j + 1}", "trt": f"T{(i + 2 * j) % n + 1}"}
                for i in range(n) for j in range(n)]
        d = pd.DataFrame(rows)
        d["y"] = response(rng, d)
        if unbalanced:
            d = drop_rows(rng, d, 2, [["trt"]])
        case(f"latin_{tag}", d, {"kind": "latin", "row": "row", "column": "col", "treatments": ["trt"]},
             [("row", "C(row)", R), ("col", "C(col)", R), ("trt", "C(trt)", R)], out_dir)

        d = crossed(rng, [("nrate", 3), ("variety", 4)], reps=3)
        d["y"] = response(rng, d)
        if unbalanced:
            d = drop_rows(rng, d, 5, [["nrate", "variety"]])
        case(f"factorial2_{tag}", d, {"kind": "factorial", "treatments": ["nrate", "variety"]},
             [("nrate", "C(nrate)", R), ("variety", "C(variety)", R),
              ("nrate x variety", "C(nrate):C(variety)", R)], out_dir)

        d = crossed(rng, [("block", 3), ("amend", 2), ("tillage", 3), ("seed", 2)])
        d["y"] = response(rng, d)
        if unbalanced:
            d = drop_rows(rng, d, 4, [["amend", "tillage", "seed"], ["block"]])
        case(f"factorial3_{tag}", d,
             {"kind": "factorial", "block": "block", "treatments": ["amend", "tillage", "seed"]},
             [("block", "C(block)", R), ("amend", "C(amend)", R), ("tillage", "C(tillage)", R),
              ("seed", "C(seed)", R), ("amend x tillage", "C(amend):C(tillage)", R),
              ("amend x seed", "C(amend):C(seed)", R), ("tillage x seed", "C(tillage):C(seed)", R),
              ("amend x tillage x seed", "C(amend):C(tillage):C(seed)", R)], out_dir)

        d = crossed(rng, [("block", 4), ("irrig", 3), ("cultivar", 4)])
        d["y"] = response(rng, d)
        if unbalanced:
            d = drop_rows(rng, d, 4, [["irrig", "cultivar"], ["block", "irrig"]])
        case(f"splitplot_{tag}", d,
             {"kind": "split-plot", "block": "block", "main_plot": "irrig", "sub_plot": "cultivar"},
             [("block", "C(block)", "block x irrig"), ("irrig", "C(irrig)", "block x irrig"),
              ("block x irrig", "C(block):C(irrig)", None), ("cultivar", "C(cultivar)", R),
              ("irrig x cultivar", "C(irrig):C(cultivar)", R)], out_dir)

        for random_sites in (False, True):
            d = crossed(rng, [("site", 5), ("block", 3), ("entry", 6)])
            d["y"] = response(rng, d)
            if unbalanced:
                d = drop_rows(rng, d, 6, [["site", "entry"], ["site", "block"]])
            entry_error = "site x entry" if random_sites else R
            case(f"multisite_{'random' if random_sites else 'fixed'}_{tag}", d,
                 {"kind": "multi-site", "site": "site", "block": "block", "treatments": ["entry"],
                  "sites_random": random_sites},
                 [("site", "C(site)", "block within site"), ("block within site", "C(site):C(block)", R),
                  ("entry", "C(entry)", entry_error), ("site x entry", "C(site):C(entry)", R)], out_dir)

    # Incomplete cells: one entry grown at every site but one (all its plots
    # there missing), with the interaction and without it.
    d = crossed(rng, [("site", 4), ("block", 3), ("entry", 6)])
    d["y"] = response(rng, d)
    d = d[~((d["site"] == "S2") & (d["entry"] == "E4"))].reset_index(drop=True)
    d = drop_rows(rng, d, 3, [["site", "block"]])
    site_terms = [("site", "C(site)", "block within site"), ("block within site", "C(site):C(block)", R)]
    case("multisite_incomplete", d,
         {"kind": "multi-site", "site": "site", "block": "block", "treatments": ["entry"], "sites_random": True},
         site_terms + [("entry", "C(entry)", "site x entry"), ("site x entry", "C(site):C(entry)", R)], out_dir,
         partial_by_fits=True)
    case("multisite_incomplete_main_effects", d,
         {"kind": "multi-site", "site": "site", "block": "block", "treatments": ["entry"], "sites_random": True,
          "without_interaction": True},
         site_terms + [("entry", "C(entry)", R)], out_dir, partial_by_fits=True)


if __name__ == "__main__":
    main(sys.argv[1])
