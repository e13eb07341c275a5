#!/usr/bin/python3
"""Reference values for the binomial and Poisson GLMs of analyze/glm.go.

Run offline with Debian's python3-statsmodels:

    /usr/bin/python3 testdata/reference/gen_glm.py

Writes glm.json beside itself. Data sets are drawn here from a seeded numpy
generator (test inputs, not a scenario). Every fit is statsmodels' GLM
(IRLS) on a design matrix built here with sum-to-zero coding in allot's term
order (block, main effects, interactions; within an interaction the first
factor's columns vary slowest). Likelihood-ratio statistics are deviance
differences of statsmodels fits with the term's columns removed (Type 3) or
added in order (Type 1); dispersion is statsmodels' pearson_chi2/df_resid;
marginal means are L @ params with SE sqrt(L cov L'), cov from statsmodels
(scaled by the Pearson dispersion when it exceeds 1).
"""
import json
import os

import numpy as np
import scipy.stats as st
import statsmodels
import statsmodels.api as sm

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261203)


def sumcode(idx, L):
    cols = []
    for j in range(L - 1):
        cols.append(np.where(idx == j, 1.0, np.where(idx == L - 1, -1.0, 0.0)))
    return cols


def terms_of(fac_idx, fac_L, blk_idx, nb):
    """List of (name, [columns]) in allot's order."""
    terms = []
    if blk_idx is not None:
        terms.append(("block", sumcode(blk_idx, nb)))
    mains = [sumcode(i, L) for i, L in zip(fac_idx, fac_L)]
    names = "AB"
    for f in range(len(fac_idx)):
        terms.append((names[f], mains[f]))
    if len(fac_idx) == 2:
        terms.append(("A × B", [a * b for a in mains[0] for b in mains[1]]))
    return terms


def design(terms, keep, n):
    cols = [np.ones(n)]
    for k in keep:
        cols += terms[k][1]
    return np.column_stack(cols)


def fit(fam, y, m, X):
    if fam == "binomial":
        endog = np.column_stack([y, m - y])
        model = sm.GLM(endog, X, family=sm.families.Binomial())
    else:
        model = sm.GLM(y, X, family=sm.families.Poisson())
    return model.fit(tol=1e-13, maxiter=200)


def case(name, fam, y, m, fac_labels, blk_labels, typ):
    n = len(y)
    fac_idx, fac_L, levels = [], [], []
    for lab in fac_labels:
        lv = sorted(set(lab), key=lab.index)
        levels.append(lv)
        fac_idx.append(np.array([lv.index(v) for v in lab]))
        fac_L.append(len(lv))
    blk_idx, nb = None, 0
    if blk_labels is not None:
        bl = sorted(set(blk_labels), key=blk_labels.index)
        blk_idx, nb = np.array([bl.index(v) for v in blk_labels]), len(bl)
    terms = terms_of(fac_idx, fac_L, blk_idx, nb)
    allk = list(range(len(terms)))
    full = fit(fam, y, m, design(terms, allk, n))
    null = fit(fam, y, m, design(terms, [], n))
    disp = float(full.pearson_chi2 / full.df_resid)
    tests = []
    prev = null.deviance
    for k, (tname, cols) in enumerate(terms):
        if typ == 1:
            d = fit(fam, y, m, design(terms, allk[:k + 1], n)).deviance
            lr = prev - d
            prev = d
        else:
            red = fit(fam, y, m, design(terms, [j for j in allk if j != k], n))
            lr = red.deviance - full.deviance
        df = len(cols)
        tests.append({"source": tname, "df": df, "lr": float(lr), "p": float(st.chi2.sf(lr, df)),
                      "f": float(lr / df / disp), "pf": float(st.f.sf(lr / df / disp, df, full.df_resid))})
    cov = full.cov_params() * (disp if disp > 1 else 1.0)
    means = []
    p = len(full.params)
    # Column offsets of each factor's main effect.
    off = {}
    c = 1
    for tname, cols in terms:
        off[tname] = (c, len(cols))
        c += len(cols)
    for f, lv in enumerate(levels):
        c0, ncol = off["AB"[f]]
        row = []
        for l in range(len(lv)):
            L = np.zeros(p)
            L[0] = 1
            for j in range(ncol):
                L[c0 + j] = 1.0 if l == j else (-1.0 if l == ncol else 0.0)
            eta = float(L @ full.params)
            se = float(np.sqrt(L @ cov @ L))
            row.append({"level": lv[l], "link": eta, "se": se})
        means.append(row)
    return {"name": name, "family": fam, "type": typ,
            "y": [str(int(v)) for v in y], "trials": [int(v) for v in m],
            "factors": fac_labels, "blocks": blk_labels,
            "deviance": float(full.deviance), "null_deviance": float(null.deviance),
            "pearson": float(full.pearson_chi2), "dispersion": disp, "df_resid": int(full.df_resid),
            "params": [float(v) for v in full.params], "tests": tests, "means": means}


def labels(prefix, k, reps):
    return ["%s%d" % (prefix, i + 1) for i in range(k) for _ in range(reps)]


cases = []
# 1. Germination, one-way, 4 treatments x 6 pots, 50 seeds.
lab = labels("s", 4, 6)
pr = {"s1": 0.62, "s2": 0.70, "s3": 0.55, "s4": 0.78}
m = np.full(24, 50)
y = np.array([rng.binomial(50, pr[v]) for v in lab])
cases.append(case("binomial one-way", "binomial", y, m, [lab], None, 3))
# 2. Binomial RCBD, 3 treatments x 5 blocks, trials 20-30.
trt = ["t%d" % (t + 1) for b in range(5) for t in range(3)]
blk = ["b%d" % (b + 1) for b in range(5) for t in range(3)]
beff = rng.normal(0, 0.4, 5)
m = rng.integers(20, 31, 15)
y = np.array([rng.binomial(m[i], 1 / (1 + np.exp(-(0.3 * int(trt[i][1]) - 0.5 + beff[int(blk[i][1]) - 1])))) for i in range(15)])
cases.append(case("binomial in blocks", "binomial", y, m, [trt], blk, 3))
cases.append(case("binomial in blocks, type 1", "binomial", y, m, [trt], blk, 1))
# 3. Overdispersed binomial 2x2 factorial (beta-binomial), 5 reps, 20 trials.
A = [a for a in ("a1", "a2") for b in ("b1", "b2") for r in range(5)]
B = [b for a in ("a1", "a2") for b in ("b1", "b2") for r in range(5)]
base = {("a1", "b1"): 0.3, ("a1", "b2"): 0.45, ("a2", "b1"): 0.5, ("a2", "b2"): 0.55}
m = np.full(20, 20)
y = np.array([rng.binomial(20, rng.beta(4 * base[(a, b)] / (1 - base[(a, b)]) + 0.5, 4)) for a, b in zip(A, B)])
cases.append(case("overdispersed binomial factorial", "binomial", y, m, [A, B], None, 3))
# 4. Poisson one-way lesion counts, 3 groups x 8.
lab = labels("g", 3, 8)
rate = {"g1": 4.0, "g2": 6.5, "g3": 3.0}
y = np.array([rng.poisson(rate[v]) for v in lab])
cases.append(case("poisson one-way", "poisson", y, np.ones(24), [lab], None, 3))
# 5. Poisson RCBD with a zero treatment: 4 treatments x 4 blocks.
trt = ["t%d" % (t + 1) for b in range(4) for t in range(4)]
blk = ["b%d" % (b + 1) for b in range(4) for t in range(4)]
y = np.array([0 if trt[i] == "t4" else rng.poisson(3 + int(trt[i][1])) for i in range(16)])
cases.append(case("poisson in blocks with a zero cell", "poisson", y, np.ones(16), [trt], blk, 3))
# 6. Overdispersed Poisson 2x3 factorial (negative binomial), 4 reps.
A = [a for a in ("a1", "a2") for b in ("b1", "b2", "b3") for r in range(4)]
B = [b for a in ("a1", "a2") for b in ("b1", "b2", "b3") for r in range(4)]
mu = {"b1": 5.0, "b2": 8.0, "b3": 12.0}
y = np.array([rng.negative_binomial(3, 3 / (3 + mu[b] * (1.3 if a == "a2" else 1))) for a, b in zip(A, B)])
cases.append(case("overdispersed poisson factorial", "poisson", y, np.ones(24), [A, B], None, 3))
cases.append(case("overdispersed poisson factorial, type 1", "poisson", y, np.ones(24), [A, B], None, 1))

with open(os.path.join(HERE, "glm.json"), "w") as f:
    json.dump({"generator": "testdata/reference/gen_glm.py", "statsmodels": statsmodels.__version__, "cases": cases}, f, indent=1)
print("wrote glm.json")
