#!/usr/bin/python3
"""Reference power of the likelihood-ratio test for proportions and counts
(power/glm.go).

    /usr/bin/python3 testdata/reference/gen_glm_power.py

Writes glm_power.json beside itself:
- "exact": power by enumerating every combination of group totals with
  scipy.stats.binom / poisson probabilities (written here independently of
  the Go code, summing over the full support), G^2 from its formula.
- "approx": scipy.stats.ncx2.sf at the chi-squared critical value with the
  noncentrality of the expected totals.
- "montecarlo": the rejection rate of statsmodels' GLM deviance test on
  10000 data sets per case simulated with numpy (seeded), unit by unit, with
  its Monte-Carlo standard error.
"""
import itertools
import json
import math
import os

import numpy as np
import scipy.stats as st
import statsmodels.api as sm
from statsmodels.tools.sm_exceptions import PerfectSeparationError

HERE = os.path.dirname(os.path.abspath(__file__))


def g2(fam, x, size):
    pooled = sum(x) / sum(size)
    g = 0.0
    for xi, ni in zip(x, size):
        e = ni * pooled
        if xi > 0:
            g += xi * math.log(xi / e)
        if fam == "binomial" and ni - xi > 0:
            g += (ni - xi) * math.log((ni - xi) / (ni - e))
    return 2 * g


def exact(fam, means, trials, n, alpha):
    k = len(means)
    crit = st.chi2.ppf(1 - alpha, k - 1)
    if fam == "binomial":
        size = [n * trials] * k
        pm = [st.binom.pmf(np.arange(size[i] + 1), size[i], means[i]) for i in range(k)]
        rng_ = [range(size[i] + 1) for i in range(k)]
    else:
        size = [n] * k
        hi = [int(st.poisson.ppf(1 - 1e-15, n * m)) + 5 for m in means]
        pm = [st.poisson.pmf(np.arange(h + 1), n * m) for h, m in zip(hi, means)]
        rng_ = [range(h + 1) for h in hi]
    tot = 0.0
    for x in itertools.product(*rng_):
        w = 1.0
        for i, xi in enumerate(x):
            w *= pm[i][xi]
        if w < 1e-300:
            continue
        if g2(fam, x, size) > crit:
            tot += w
    expected = [s * m for s, m in zip(size, means)] if fam == "binomial" else [n * m for m in means]
    lam = g2(fam, expected, size)
    return tot, lam, float(st.ncx2.sf(crit, k - 1, lam))


def montecarlo(fam, means, trials, n, alpha, sims, seed):
    rng = np.random.default_rng(seed)
    k = len(means)
    crit = st.chi2.ppf(1 - alpha, k - 1)
    X = np.zeros((k * n, k))
    X[:, 0] = 1
    g = np.repeat(np.arange(k), n)
    for j in range(1, k):
        X[:, j] = (g == j - 1).astype(float) - (g == k - 1).astype(float)
    rej = 0
    for _ in range(sims):
        if fam == "binomial":
            y = rng.binomial(trials, np.array(means)[g])
            endog = np.column_stack([y, trials - y])
            try:
                full = sm.GLM(endog, X, family=sm.families.Binomial()).fit()
            except PerfectSeparationError:
                # A group at 0 or all successes: the fitted proportions are
                # the group proportions, so the deviance is that limit.
                tot = [int(y[g == j].sum()) for j in range(k)]
                if g2(fam, tot, [n * trials] * k) > crit:
                    rej += 1
                continue
            null = sm.GLM(endog, X[:, :1], family=sm.families.Binomial()).fit()
        else:
            y = rng.poisson(np.array(means)[g])
            full = sm.GLM(y, X, family=sm.families.Poisson()).fit()
            null = sm.GLM(y, X[:, :1], family=sm.families.Poisson()).fit()
        if null.deviance - full.deviance > crit:
            rej += 1
    p = rej / sims
    return p, math.sqrt(p * (1 - p) / sims)


cases = []
for fam, means, trials, n in [
    ("binomial", [0.6, 0.8], 10, 4),
    ("binomial", [0.5, 0.65, 0.8], 5, 3),
    ("binomial", [0.3, 0.45], 20, 6),
    ("poisson", [3.0, 5.0], 1, 5),
    ("poisson", [2.0, 2.5, 4.0], 1, 4),
]:
    p, lam, approx = exact(fam, means, trials, n, 0.05)
    cases.append({"family": fam, "means": means, "trials": trials, "n": n, "alpha": 0.05,
                  "exact": p, "lambda": lam, "approx": approx})
mc = []
for fam, means, trials, n, seed in [("binomial", [0.6, 0.8], 10, 4, 1), ("poisson", [3.0, 5.0], 1, 5, 2)]:
    p, se = montecarlo(fam, means, trials, n, 0.05, 10000, seed)
    mc.append({"family": fam, "means": means, "trials": trials, "n": n, "alpha": 0.05, "power": p, "se": se})
with open(os.path.join(HERE, "glm_power.json"), "w") as f:
    json.dump({"generator": "testdata/reference/gen_glm_power.py", "cases": cases, "montecarlo": mc}, f, indent=1)
print("wrote glm_power.json")
