#!/usr/bin/python3
"""The statsmodels side of anova_bench: the same analyses on the same CSV
files, timed with time.perf_counter. Prints one JSON object of seconds.

usage: statsmodels_bench.py BREEDING_CSV SITES_CSV TRAITS REFIT_CSV
"""
import json
import sys
import time

import numpy as np
import pandas as pd
from scipy import stats
from statsmodels.formula.api import ols
from statsmodels.stats.anova import anova_lm
from statsmodels.stats.outliers_influence import OLSInfluence


def full_analysis(df, trait, formula, treatment):
    d = df[df[trait].notna()]
    model = ols(f"{trait} ~ {formula}", data=d).fit()
    table = anova_lm(model, typ=2)
    # Adjusted means: predictions over the reference grid, averaged per entry.
    grid_cols = [c for c in ["site", "block"] if c in d.columns]
    grid = d[grid_cols].drop_duplicates()
    levels = d[treatment].unique()
    full = grid.merge(pd.DataFrame({treatment: levels}), how="cross")
    means = full.assign(p=model.predict(full)).groupby(treatment)["p"].mean()
    mse = model.mse_resid
    r = d.groupby(treatment).size().mean()
    lsd = stats.t.ppf(0.975, model.df_resid) * np.sqrt(2 * mse / r)
    # Externally studentized residuals from statsmodels' hat-matrix diagonal and
    # the closed form (OLSInfluence.resid_studentized_external refits the model
    # once per plot: over ten minutes per trait here, so it is not used).
    h = OLSInfluence(model).hat_matrix_diag
    e = model.resid.to_numpy()
    s2_without = (model.ssr - e ** 2 / (1 - h)) / (model.df_resid - 1)
    student = e / np.sqrt(s2_without * (1 - h))
    outliers = np.flatnonzero(np.abs(student) > 3)
    return table, means, lsd, outliers


def main():
    breeding, sites, traits, refit = sys.argv[1], sys.argv[2], int(sys.argv[3]), sys.argv[4]
    a = pd.read_csv(breeding, dtype={"block": str, "entry": str})
    b = pd.read_csv(sites, dtype={"site": str, "block": str, "entry": str})
    c = pd.read_csv(refit, dtype={"block": str, "entry": str})
    names = [f"t{i + 1:02d}" for i in range(traits)]
    out = {}
    t0 = time.perf_counter()
    for t in names:
        full_analysis(a, t, "C(block) + C(entry)", "entry")
    out["breeding_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    for t in names:
        full_analysis(b, t, "C(site) + C(site):C(block) + C(entry) + C(site):C(entry)", "entry")
    out["sites_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    full_analysis(c, "t01", "C(block) + C(entry)", "entry")
    out["refit_s"] = time.perf_counter() - t0
    print(json.dumps(out))


if __name__ == "__main__":
    main()
