#!/usr/bin/python3
"""The statsmodels side of scale_bench: one trait's full analysis (the same
steps as statsmodels_bench.full_analysis: partial sums, adjusted means over
the reference grid, LSD, hat-matrix studentized residuals) on one CSV file.
Prints the seconds it took.

usage: scale_statsmodels.py CSV several-sites|factorial
"""
import os
import sys
import time

import pandas as pd

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from statsmodels_bench import full_analysis  # noqa: E402


def main():
    path, kind = sys.argv[1], sys.argv[2]
    if kind == "several-sites":
        d = pd.read_csv(path, dtype={"site": str, "block": str, "entry": str})
        formula, treatment = "C(site) + C(site):C(block) + C(entry) + C(site):C(entry)", "entry"
    else:
        d = pd.read_csv(path, dtype={"block": str, "rate": str, "variety": str})
        formula, treatment = "C(block) + C(rate) + C(variety) + C(rate):C(variety)", "rate"
    t0 = time.perf_counter()
    full_analysis(d, "y", formula, treatment)
    print(f"{time.perf_counter() - t0:.3f}")


if __name__ == "__main__":
    main()
