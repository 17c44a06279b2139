#!/usr/bin/python3
"""Independent REML references for the mixed-model engine (core/reml.h).

For each unbalanced design below, with data simulated from a fixed seed, the
REML log-likelihood is evaluated directly with dense numpy linear algebra,

  l = -1/2 [(n - p) log 2 pi + log|V| + log|X'V^-1 X| - log|X'X| + y'P y]

(Harville 1977, JASA 72, 320-338; invariant to the basis of X), and maximised
with scipy from several starts (Nelder-Mead, then BFGS to polish). No mixed-
model equations, no average information: a different route to the same
maximum. statsmodels' MixedLM (REML) is fitted as a second reference where
its structure allows; whether it converged is written down, not tuned for.

Writes one JSON file: a list of cases with the coded design, the response,
the maximising parameters and the maximum.
"""
import json
import sys
import warnings

import numpy as np
import scipy.linalg as sl
import scipy.optimize as so

LOG2PI = np.log(2 * np.pi)


def ar1(m, rho):
    i = np.arange(m)
    return rho ** np.abs(i[:, None] - i[None, :])


def cells(codes_list):
    """Cell id per observation for a crossing of factors, in order of appearance."""
    keys = list(zip(*codes_list))
    ids, out = {}, []
    for k in keys:
        if k not in ids:
            ids[k] = len(ids)
        out.append(ids[k])
    return np.array(out), len(ids)


def indicator(ids, q):
    z = np.zeros((len(ids), q))
    z[np.arange(len(ids)), ids] = 1.0
    return z


class Case:
    def __init__(self, name, factors, fixed, random, y, spatial=None):
        self.name, self.factors, self.fixed, self.random, self.y, self.spatial = name, factors, fixed, random, y, spatial
        n = len(y)
        cols = [np.ones(n)]
        for term in fixed:
            ids, q = cells([factors[f]["codes"] for f in term])
            cols.extend(indicator(ids, q).T)
        xf = np.array(cols).T
        _, r, piv = sl.qr(xf, pivoting=True, mode="economic")
        rank = int(np.sum(np.abs(np.diag(r)) > 1e-9 * abs(r[0, 0])))
        self.x = xf[:, np.sort(piv[:rank])]
        self.p = rank
        self.zs = []
        for term in random:
            ids, q = cells([factors[f]["codes"] for f in term])
            z = indicator(ids, q)
            self.zs.append(z @ z.T)
        if spatial:
            cell = np.array(spatial["col"]) * spatial["rows"] + np.array(spatial["row"])
            self.zf = indicator(cell, spatial["rows"] * spatial["cols"])
        self.n = n
        self.logdet_xtx = np.linalg.slogdet(self.x.T @ self.x)[1]
        self.nvar = len(random) + (3 if spatial else 0) + 1

    def loglik(self, th):
        k = len(self.zs)
        v = th[-1] * np.eye(self.n)
        for i in range(k):
            v = v + th[i] * self.zs[i]
        if self.spatial:
            s = self.spatial
            kf = np.kron(ar1(s["cols"], th[k + 2]), ar1(s["rows"], th[k + 1]))
            v = v + th[k] * (self.zf @ kf @ self.zf.T)
        try:
            c = sl.cho_factor(v)
        except np.linalg.LinAlgError:
            return -np.inf
        logdet_v = 2 * np.sum(np.log(np.diag(c[0])))
        vix = sl.cho_solve(c, self.x)
        viy = sl.cho_solve(c, self.y)
        a = self.x.T @ vix
        c2 = sl.cho_factor(a)
        logdet_a = 2 * np.sum(np.log(np.diag(c2[0])))
        b = sl.cho_solve(c2, self.x.T @ viy)
        ypy = self.y @ viy - (self.x.T @ viy) @ b
        return -0.5 * ((self.n - self.p) * LOG2PI + logdet_v + logdet_a - self.logdet_xtx + ypy)

    def to_natural(self, z):
        th = np.exp(z).copy()
        if self.spatial:
            k = len(self.zs)
            th[k + 1] = np.tanh(z[k + 1])
            th[k + 2] = np.tanh(z[k + 2])
        return th

    def maximise(self, rng, starts=4):
        scale = np.var(self.y)
        best = None
        for s in range(starts):
            z0 = np.log(scale * rng.uniform(0.05, 1.0, self.nvar))
            if self.spatial:
                k = len(self.zs)
                z0[k + 1], z0[k + 2] = rng.uniform(-0.5, 1.0, 2)
            f = lambda z: -self.loglik(self.to_natural(z))
            r = so.minimize(f, z0, method="Nelder-Mead",
                            options={"xatol": 1e-7, "fatol": 1e-11, "maxiter": 6000, "maxfev": 6000})
            r = so.minimize(f, r.x, method="BFGS", options={"gtol": 1e-9})
            if best is None or r.fun < best.fun:
                best = r
        th = self.to_natural(best.x)
        return th, -best.fun


def statsmodels_fit(case, formula_fixed, groups, re_formula, vc):
    import pandas as pd
    import statsmodels.formula.api as smf
    data = {f["name"]: [f"L{c}" for c in f["codes"]] for f in case.factors}
    data["y"] = case.y
    data["one"] = ["g"] * case.n
    df = pd.DataFrame(data)
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            model = smf.mixedlm(formula_fixed, df, groups=df[groups], re_formula=re_formula, vc_formula=vc)
            fit = model.fit(reml=True, method=["lbfgs"], maxiter=2000)
        msgs = [str(w.message).splitlines()[0] for w in caught]
        vcomp = {name: float(v) for name, v in zip(model.exog_vc.names, fit.vcomp)}
        out = {"converged": bool(fit.converged) and not any("converge" in m.lower() or "boundary" in m.lower() for m in msgs),
               "messages": msgs, "vc": vcomp, "scale": float(fit.scale)}
        if re_formula == "1":
            out["group_variance"] = float(np.asarray(fit.cov_re)[0, 0])
        return out
    except Exception as e:  # noqa: BLE001 - any failure is reported, not hidden
        return {"converged": False, "messages": [f"{type(e).__name__}: {e}"]}


def factor(name, codes):
    codes = list(int(c) for c in codes)
    return {"name": name, "codes": codes, "levels": max(codes) + 1}


def split_plot_case(rng):
    # 4 blocks x 3 main plots x 4 sub-plots; one whole main plot missing and three more plots.
    rows = [(b, a, s) for b in range(4) for a in range(3) for s in range(4)]
    blk = rng.normal(0, 3.0, 4)
    bm = rng.normal(0, 2.0, (4, 3))
    y, keep = [], []
    for i, (b, a, s) in enumerate(rows):
        if b == 2 and a == 1:
            continue          # the whole main plot lost
        if i in (5, 30, 43):
            continue
        keep.append((b, a, s))
        y.append(50 + 2.0 * a + 1.5 * s + 0.5 * a * s + blk[b] + bm[b, a] + rng.normal(0, 1.5))
    f = [factor("block", [k[0] for k in keep]), factor("main", [k[1] for k in keep]), factor("sub", [k[2] for k in keep])]
    c = Case("split-plot, a whole main plot and three plots missing", f, [[1], [2], [1, 2]], [[0], [0, 1]], np.array(y))
    return c, ("y ~ C(main) * C(sub)", "block", "1", {"bm": "0 + C(main)"}), ["group_variance", "bm"]


def multi_site_case(rng):
    # 4 sites x 3 blocks x 8 entries; entry 7 not grown at site 2; four plots missing.
    keep, y = [], []
    site_eff = rng.normal(0, 5, 4)
    blk = rng.normal(0, 1.2, (4, 3))
    ent = rng.normal(0, 2.0, 8)
    ge = rng.normal(0, 1.0, (8, 4))
    for s in range(4):
        for b in range(3):
            for e in range(8):
                if s == 2 and e == 7:
                    continue
                if (s, b, e) in ((0, 1, 3), (1, 2, 5), (3, 0, 0), (3, 2, 6)):
                    continue
                keep.append((s, b, e))
                y.append(40 + site_eff[s] + blk[s, b] + ent[e] + ge[e, s] + rng.normal(0, 1.0))
    f = [factor("site", [k[0] for k in keep]), factor("block", [k[1] for k in keep]), factor("entry", [k[2] for k in keep])]
    c = Case("several sites, an entry absent at one site and four plots missing", f, [[0], [2]], [[0, 1], [0, 2]],
             np.array(y))
    return c, ("y ~ C(site) + C(entry)", "site", "0", {"blk": "0 + C(block)", "es": "0 + C(entry)"}), ["blk", "es"]


def random_entries_case(rng):
    # RCBD, 5 blocks x 15 entries, entries and blocks random, six plots missing.
    keep, y = [], []
    blk = rng.normal(0, 2.0, 5)
    ent = rng.normal(0, 3.0, 15)
    missing = {(0, 4), (1, 9), (2, 2), (2, 13), (3, 7), (4, 0)}
    for b in range(5):
        for e in range(15):
            if (b, e) in missing:
                continue
            keep.append((b, e))
            y.append(60 + blk[b] + ent[e] + rng.normal(0, 2.5))
    f = [factor("block", [k[0] for k in keep]), factor("entry", [k[1] for k in keep])]
    c = Case("randomised blocks with random entries, six plots missing", f, [], [[0], [1]], np.array(y))
    return c, ("y ~ 1", "one", "0", {"b": "0 + C(block)", "g": "0 + C(entry)"}), ["b", "g"]


def spatial_case(rng):
    # 12 rows x 8 columns, 4 blocks of 3 rows, 24 entries once per block; a
    # field with AR1 x AR1 correlation (0.6 down rows, 0.4 across columns)
    # plus independent plot error; three plots missing.
    rows, cols = 12, 8
    field = np.linalg.cholesky(np.kron(ar1(cols, 0.4), ar1(rows, 0.6))) @ rng.normal(0, 1, rows * cols) * 2.0
    ent = rng.normal(0, 1.5, 24)
    keep, y = [], []
    for c in range(cols):
        for r in range(rows):
            if (r, c) in ((2, 3), (7, 0), (11, 6)):
                continue
            b = r // 3
            e = (c * 3 + r % 3 + 5 * b) % 24
            keep.append((r, c, b, e))
            y.append(30 + ent[e] + field[c * rows + r] + rng.normal(0, 0.8))
    f = [factor("block", [k[2] for k in keep]), factor("entry", [k[3] for k in keep])]
    sp = {"rows": rows, "cols": cols, "row": [k[0] for k in keep], "col": [k[1] for k in keep]}
    c = Case("field trend (AR1 x AR1 plus plot error), three plots missing", f, [[0], [1]], [], np.array(y), sp)
    return c, None, []


def main():
    out = sys.argv[1]
    rng = np.random.default_rng(20261202)
    cases = []
    for make in (split_plot_case, multi_site_case, random_entries_case, spatial_case):
        case, sm, sm_names = make(rng)
        th, ll = case.maximise(np.random.default_rng(7))
        entry = {"name": case.name, "factors": case.factors, "fixed": case.fixed, "random": case.random,
                 "spatial": case.spatial, "y": [float(v) for v in case.y],
                 "params": [float(v) for v in th], "loglik": float(ll)}
        if sm:
            fit = statsmodels_fit(case, *sm)
            if fit.get("converged"):
                vals = [fit["group_variance"] if k == "group_variance" else fit["vc"][k] for k in sm_names]
                fit["params"] = vals + [fit["scale"]]
            entry["statsmodels"] = fit
        cases.append(entry)
        print(case.name, "params", np.round(th, 6), "loglik", round(ll, 9))
    with open(out, "w") as fh:
        json.dump(cases, fh)


if __name__ == "__main__":
    main()
