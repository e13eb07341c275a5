#!/usr/bin/python3
"""Reference values for Welch's ANOVA, Games-Howell, Kruskal-Wallis, Friedman,
Dunn and Conover comparisons (analyze/welch.go, analyze/rank.go).

Run offline with Debian's python3-scipy and python3-statsmodels:

    /usr/bin/python3 testdata/reference/gen_robust.py

Writes robust.json beside itself. The data sets are drawn here from a seeded
numpy generator and rounded (test inputs, not a scenario). Sources:
- Welch F, df and p: statsmodels.stats.oneway.anova_oneway(use_var="unequal").
- Games-Howell: computed here from the published formula (Games and Howell
  1976) with scipy.stats.studentized_range for the p-values and quantiles.
- Kruskal-Wallis H and p: scipy.stats.kruskal; the exact p by brute-force
  enumeration of every assignment of the observed values to the groups.
- Friedman chi-square and p: scipy.stats.friedmanchisquare; the exact p by
  brute-force enumeration of every within-block permutation.
- Dunn z and Holm-adjusted p; Conover t and Holm-adjusted p: computed here
  from their published formulas (Dunn 1964; Conover 1999, section 5.8), with
  statsmodels.stats.multitest.multipletests(method="holm").
"""
import itertools
import json
import math
import os

import numpy as np
import scipy
import scipy.stats as st
import statsmodels
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.oneway import anova_oneway

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261202)


def holm(p):
    return list(multipletests(p, method="holm")[1])


def welch_case(name, ns, means, sds, dec=2):
    vals, labs = [], []
    for g, (n, m, s) in enumerate(zip(ns, means, sds)):
        for _ in range(n):
            vals.append(round(rng.normal(m, s), dec))
            labs.append("g%d" % (g + 1))
    x = np.array(vals)
    lab = np.array(labs)
    levels = sorted(set(labs), key=labs.index)
    r = anova_oneway(x, lab, use_var="unequal", welch_correction=True)
    groups = [x[lab == l] for l in levels]
    k = len(levels)
    pairs = []
    for i in range(k):
        for j in range(i + 1, k):
            a, b = groups[i], groups[j]
            va, vb = a.var(ddof=1) / len(a), b.var(ddof=1) / len(b)
            se = math.sqrt(va + vb)
            nu = (va + vb) ** 2 / (va ** 2 / (len(a) - 1) + vb ** 2 / (len(b) - 1))
            diff = a.mean() - b.mean()
            q = abs(diff) / (se / math.sqrt(2))
            crit = st.studentized_range.ppf(0.95, k, nu)
            pairs.append({"pair": "%s − %s" % (levels[i], levels[j]), "diff": diff, "df": nu, "q": q,
                          "p": float(st.studentized_range.sf(q, k, nu)),
                          "lower": diff - crit * se / math.sqrt(2), "upper": diff + crit * se / math.sqrt(2)})
    return {"name": name, "values": ["%.*f" % (dec, v) for v in vals], "groups": labs,
            "f": float(r.statistic), "df1": float(r.df[0]), "df2": float(r.df[1]), "p": float(r.pvalue),
            "pairs": pairs}


def kw_case(name, ns, shifts, exact, ties_round):
    vals, labs = [], []
    for g, (n, m) in enumerate(zip(ns, shifts)):
        for _ in range(n):
            vals.append(round(rng.normal(m, 1.0) * ties_round) / ties_round)
            labs.append("t%d" % (g + 1))
    x = np.array(vals)
    lab = np.array(labs)
    levels = sorted(set(labs), key=labs.index)
    groups = [x[lab == l] for l in levels]
    h, p = st.kruskal(*groups)
    out = {"name": name, "values": [repr(float(v)) for v in vals], "groups": labs, "h": float(h), "p": float(p)}
    N = len(x)
    ranks = st.rankdata(x)
    if exact:
        ns_ = [len(g) for g in groups]
        hit = tot = 0
        # Every assignment of positions to groups.
        def rec(i, rem, sums):
            nonlocal hit, tot
            if i == N:
                tot += 1
                hh = kwh(sums, ns_, ranks)
                if hh >= h - 1e-9 * max(1, h):
                    hit += 1
                return
            for g in range(len(ns_)):
                if rem[g]:
                    rem[g] -= 1
                    sums[g] += ranks[i]
                    rec(i + 1, rem, sums)
                    sums[g] -= ranks[i]
                    rem[g] += 1
        rec(0, ns_[:], [0.0] * len(ns_))
        out["p_exact"] = hit / tot
    # Dunn
    _, tcounts = np.unique(x, return_counts=True)
    tie = float(((tcounts ** 3) - tcounts).sum())
    s2 = N * (N + 1) / 12 - tie / (12 * (N - 1))
    mr = [ranks[lab == l].mean() for l in levels]
    zs, ps, names = [], [], []
    for i in range(len(levels)):
        for j in range(i + 1, len(levels)):
            se = math.sqrt(s2 * (1 / len(groups[i]) + 1 / len(groups[j])))
            z = (mr[i] - mr[j]) / se
            zs.append(z)
            ps.append(2 * st.norm.sf(abs(z)))
            names.append("%s − %s" % (levels[i], levels[j]))
    out["dunn"] = [{"pair": n, "z": z, "p": p} for n, z, p in zip(names, zs, holm(ps))]
    return out


def kwh(sums, ns, ranks):
    N = len(ranks)
    _, c = np.unique(ranks, return_counts=True)
    corr = 1 - float(((c ** 3) - c).sum()) / (N ** 3 - N)
    s = sum(r * r / n for r, n in zip(sums, ns))
    return (12 / (N * (N + 1)) * s - 3 * (N + 1)) / corr


def friedman_case(name, b, k, shifts, exact, ties_round):
    rows = []
    for bi in range(b):
        be = rng.normal(0, 2)
        rows.append([round((be + shifts[t] + rng.normal(0, 1)) * ties_round) / ties_round for t in range(k)])
    x = np.array(rows)
    chi, p = st.friedmanchisquare(*[x[:, t] for t in range(k)])
    vals, trt, blk = [], [], []
    for bi in range(b):
        for t in range(k):
            vals.append(repr(float(x[bi, t])))
            trt.append("T%d" % (t + 1))
            blk.append("B%d" % (bi + 1))
    out = {"name": name, "values": vals, "groups": trt, "blocks": blk, "chi2": float(chi), "p": float(p)}
    R = np.array([st.rankdata(r) for r in x])
    if exact:
        hit = tot = 0
        perms = [list(itertools.permutations(r)) for r in R]
        ties = 0.0
        for r in R:
            _, c = np.unique(r, return_counts=True)
            ties += float(((c ** 3) - c).sum())
        corr = 1 - ties / (b * k * (k * k - 1))
        for combo in itertools.product(*perms):
            rs = np.sum(combo, axis=0)
            c2 = (12 / (b * k * (k + 1)) * float((rs ** 2).sum()) - 3 * b * (k + 1)) / corr
            tot += 1
            if c2 >= chi - 1e-9 * max(1, chi):
                hit += 1
        out["p_exact"] = hit / tot
    A = float((R ** 2).sum())
    rs = R.sum(axis=0)
    se = math.sqrt(2 * (b * A - float((rs ** 2).sum())) / ((b - 1) * (k - 1)))
    df = (b - 1) * (k - 1)
    ts, ps, names = [], [], []
    for i in range(k):
        for j in range(i + 1, k):
            t = (rs[i] - rs[j]) / se
            ts.append(float(t))
            ps.append(2 * st.t.sf(abs(t), df))
            names.append("T%d − T%d" % (i + 1, j + 1))
    out["conover"] = [{"pair": n, "t": t, "p": p} for n, t, p in zip(names, ts, holm(ps))]
    return out


def transform_case(name, kind, ns, locs, dec):
    import pandas as pd
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm
    vals, labs = [], []
    for g, (n, m) in enumerate(zip(ns, locs)):
        for _ in range(n):
            if kind == "log":
                v = round(float(np.exp(rng.normal(m, 0.5))), dec)
            elif kind == "sqrt":
                v = float(rng.poisson(m))
            else:
                v = round(float(1 / (1 + np.exp(-rng.normal(m, 0.6)))), dec)
            vals.append(v)
            labs.append("g%d" % (g + 1))
    f = {"log": np.log, "sqrt": np.sqrt, "logit": lambda p: np.log(p / (1 - p))}[kind]
    df = pd.DataFrame({"y": f(np.array(vals)), "g": labs})
    fit = smf.ols("y ~ C(g, Sum)", data=df).fit()
    tab = anova_lm(fit, typ=3)
    means = [float(df.y[df.g == l].mean()) for l in sorted(set(labs), key=labs.index)]
    return {"name": name, "kind": kind, "values": [repr(v) for v in vals], "groups": labs,
            "f": float(tab["F"].iloc[1]), "p": float(tab["PR(>F)"].iloc[1]), "means": means}


cases = {
    "generator": "testdata/reference/gen_robust.py",
    "scipy": scipy.__version__, "statsmodels": statsmodels.__version__,
    "welch": [
        welch_case("three groups, unequal n and SD", [6, 9, 12], [10, 11.5, 12], [0.8, 1.6, 3.0]),
        welch_case("four groups", [5, 5, 8, 10], [3, 3.2, 4.5, 4.0], [0.3, 0.9, 1.2, 0.5], dec=3),
        welch_case("two groups", [7, 11], [100, 108], [4, 12], dec=1),
    ],
    "kruskal": [
        kw_case("three groups with ties, exact", [4, 4, 5], [0, 0.8, 1.6], True, 2),
        kw_case("four groups, no exact", [8, 9, 7, 10], [0, 0.3, 0.9, 1.2], False, 100),
        kw_case("two groups small, exact", [5, 6], [0, 1.5], True, 10),
    ],
    "friedman": [
        friedman_case("three treatments, six blocks, exact", 6, 3, [0, 0.7, 1.5], True, 1),
        friedman_case("four treatments, four blocks, exact", 4, 4, [0, 0.5, 1.0, 0.2], True, 10),
        friedman_case("five treatments, ten blocks", 10, 5, [0, 0.4, 0.8, 1.2, 0.1], False, 100),
    ],
    # One-way ANOVA of transformed values: statsmodels ols + anova_lm
    # (Type 3, sum-to-zero) on numpy's log, sqrt and logit of the data.
    "transform": [
        transform_case("log", "log", [6, 6, 6], [1.0, 1.4, 1.2], 3),
        transform_case("sqrt", "sqrt", [8, 8, 8, 8], [3, 5, 8, 4], 0),
        transform_case("logit", "logit", [5, 7, 6], [-0.5, 0.3, 0.8], 4),
    ],
}
with open(os.path.join(HERE, "robust.json"), "w") as f:
    json.dump(cases, f, indent=1, ensure_ascii=False)
print("wrote robust.json")
