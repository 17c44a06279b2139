#!/usr/bin/python3
"""Quantiles of the studentized range from Debian's scipy
(scipy.stats.studentized_range) over a grid of k (2 to 100) and df (2 to
infinity), for the cross-check of Furrow's own implementation.

scipy switches to its df = infinity formula above some df (1e5 here), so the
grid's finite df stop at 10,000 and infinity is its own column.
"""
import math
import os
import sys

from scipy.stats import studentized_range

KS = [2, 3, 4, 5, 7, 10, 15, 20, 30, 50, 75, 100]
DFS = [2, 3, 5, 10, 20, 40, 120, 1000, 10000, math.inf]
PS = [0.95, 0.99, 0.90]

os.makedirs(os.path.dirname(os.path.abspath(sys.argv[1])), exist_ok=True)
with open(sys.argv[1], "w") as f:
    f.write("p,k,df,q\n")
    for p in PS:
        for k in KS:
            for df in DFS:
                q = studentized_range.ppf(p, k, df)
                f.write(f"{p},{k},{'inf' if math.isinf(df) else df},{q!r}\n")
