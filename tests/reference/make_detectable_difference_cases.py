#!/usr/bin/python3
"""The smallest difference (in standard errors) that a two-sided t test at
level alpha detects with a given power, from Debian's scipy, for the
cross-check of Furrow's own root (core/distributions.h). Written at test time;
also the power of the usual approximation t(1 - alpha/2) + t(power).

The power is computed from its definition, not from a noncentral t library
(scipy's nct wraps Boost, which Furrow uses): T = (Z + delta) / sqrt(V / df)
with Z normal and V chi-square(df), so the power is the integral over V of
P(|Z + delta| > c sqrt(V / df)), by scipy.integrate.quad; brentq solves it.
"""
import os
import sys

import math

from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.stats import chi2, norm, t

DFS = [1, 2, 3, 4, 6, 10, 20, 60, 200]
ALPHAS = [0.05, 0.01]
POWERS = [0.80, 0.90]


def power(delta, df, alpha):
    c = t.ppf(1 - alpha / 2, df)

    def outside(v):
        k = c * math.sqrt(v / df)
        return (norm.sf(k - delta) + norm.cdf(-k - delta)) * chi2.pdf(v, df)

    # The chi-square density split where it bends, for quad's accuracy.
    points = [0, df / 4, df, 4 * df, 40 * df + 100]
    total = sum(quad(outside, a, b, epsabs=1e-14, epsrel=1e-12, limit=200)[0] for a, b in zip(points, points[1:]))
    return total + quad(outside, points[-1], math.inf, epsabs=1e-14, limit=200)[0]


os.makedirs(os.path.dirname(os.path.abspath(sys.argv[1])), exist_ok=True)
with open(sys.argv[1], "w") as f:
    f.write("df,alpha,power,delta,approx_power\n")
    for df in DFS:
        for alpha in ALPHAS:
            for target in POWERS:
                approx = t.ppf(1 - alpha / 2, df) + t.ppf(target, df)
                delta = brentq(lambda d: power(d, df, alpha) - target, 0, 1.8 * approx + 1, xtol=1e-12, rtol=1e-12)
                f.write(f"{df},{alpha},{target},{delta!r},{power(approx, df, alpha)!r}\n")
