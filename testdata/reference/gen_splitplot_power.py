#!/usr/bin/python3
"""Reference power of the split-plot F tests (power/splitplot.go).

    /usr/bin/python3 testdata/reference/gen_splitplot_power.py

Writes splitplot_power.json: for each plan and r, the noncentralities from
the expected mean squares (Cochran and Cox 1957, section 7.14), computed
here with numpy, and the power from scipy.stats.ncf.sf at scipy's central
f.ppf critical value.
"""
import json
import os

import numpy as np
import scipy.stats as st

HERE = os.path.dirname(os.path.abspath(__file__))
out = []
for a, b, means, sdm, sds, blocked, r in [
    (3, 4, [10, 11, 12, 12.5, 11, 12, 13, 14, 12, 13.5, 14, 15], 1.5, 1.0, True, 4),
    (2, 3, [20, 21, 23, 22, 22.5, 25], 2.0, 1.5, False, 5),
    (4, 2, [5, 5.5, 6, 6.2, 5.5, 6.5, 7, 7.1], 0.5, 0.8, True, 3),
]:
    M = np.array(means).reshape(a, b)
    g = M.mean()
    ai, bj = M.mean(axis=1) - g, M.mean(axis=0) - g
    ab = M - M.mean(axis=1, keepdims=True) - M.mean(axis=0, keepdims=True) + g
    ve, vm = sds ** 2, sdm ** 2
    dfa = (r - 1) * (a - 1) if blocked else a * (r - 1)
    dfb = a * (r - 1) * (b - 1)
    tests = []
    for df1, df2, lam in [(a - 1, dfa, r * b * (ai ** 2).sum() / (ve + b * vm)),
                          (b - 1, dfb, r * a * (bj ** 2).sum() / ve),
                          ((a - 1) * (b - 1), dfb, r * (ab ** 2).sum() / ve)]:
        crit = st.f.ppf(0.95, df1, df2)
        tests.append({"df1": df1, "df2": df2, "lambda": float(lam), "power": float(st.ncf.sf(crit, df1, df2, lam))})
    out.append({"a": a, "b": b, "means": means, "sd_main": sdm, "sd_sub": sds, "blocked": blocked, "r": r, "tests": tests})
with open(os.path.join(HERE, "splitplot_power.json"), "w") as f:
    json.dump({"generator": "testdata/reference/gen_splitplot_power.py", "scipy": __import__("scipy").__version__, "cases": out}, f, indent=1)
print("wrote splitplot_power.json")
