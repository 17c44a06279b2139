#!/usr/bin/python3
"""The statsmodels side of scale_bench: one trait's full analysis (the same
steps as statsmodels_bench.full_analysis: partial sums, adjusted means over
the reference grid, LSD, hat-matrix studentized residuals) on one CSV file.
Prints the seconds it took.

usage: scale_statsmodels.py CSV several-sites|factorial
"""
import sys
import time

import numpy as np
import pandas as pd
from scipy import stats
from statsmodels.formula.api import ols
from statsmodels.stats.anova import anova_lm
from statsmodels.stats.outliers_influence import OLSInfluence


def full_analysis(df, formula, treatment, grid_cols):
    d = df[df["y"].notna()]
    model = ols(f"y ~ {formula}", data=d).fit()
    table = anova_lm(model, typ=2)
    # Adjusted means: predictions over the reference grid (the observed
    # combinations of the other columns), averaged per level.
    grid = d[grid_cols].drop_duplicates()
    full = grid.merge(pd.DataFrame({treatment: d[treatment].unique()}), how="cross")
    means = full.assign(p=model.predict(full)).groupby(treatment)["p"].mean()
    lsd = stats.t.ppf(0.975, model.df_resid) * np.sqrt(2 * model.mse_resid / d.groupby(treatment).size().mean())
    h = OLSInfluence(model).hat_matrix_diag
    e = model.resid.to_numpy()
    s2_without = (model.ssr - e ** 2 / (1 - h)) / (model.df_resid - 1)
    student = e / np.sqrt(s2_without * (1 - h))
    return table, means, lsd, np.flatnonzero(np.abs(student) > 3)


def main():
    path, kind = sys.argv[1], sys.argv[2]
    if kind == "several-sites":
        d = pd.read_csv(path, dtype={"site": str, "block": str, "entry": str})
        args = ("C(site) + C(site):C(block) + C(entry) + C(site):C(entry)", "entry", ["site", "block"])
    else:
        d = pd.read_csv(path, dtype={"block": str, "rate": str, "variety": str})
        args = ("C(block) + C(rate) + C(variety) + C(rate):C(variety)", "rate", ["block", "variety"])
    t0 = time.perf_counter()
    full_analysis(d, *args)
    print(f"{time.perf_counter() - t0:.3f}")


if __name__ == "__main__":
    main()
