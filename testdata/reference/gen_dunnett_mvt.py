#!/usr/bin/python3
"""Dunnett's test in a randomised block design with missing plots, where the
correlations of the treatment-control contrasts are not of product form.

statsmodels OLS (y ~ C(trt, Treatment('ctl')) + C(block)) gives each
difference from the control, its SE and the covariance of the differences;
a Monte Carlo of 10^7 draws of T = Z/S, Z ~ N(0, R), nu S^2 ~ chi2_nu, gives
the adjusted p-values P(max |T| > |t_i|) (two-sided) and
P(max T > t_i) (one-sided, higher), each with its standard error.
Writes dunnett_mvt.json. Run: /usr/bin/python3 testdata/reference/gen_dunnett_mvt.py
(about 1 minute). Data invented for the test.
"""
import json
import os
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "dunnett_mvt.json")
# 5 treatments x 6 blocks, six plots missing (block 2 ctl, block 3 t4, block 4 t1, block 5 t1 and t3).
rows = []
vals = {
    1: {"ctl": 20.1, "t1": 20.9, "t2": 19.8, "t3": 21.2, "t4": 20.4},
    2: {"t1": 21.6, "t2": 20.3, "t3": 21.0, "t4": 21.9},
    3: {"ctl": 19.2, "t1": 19.4, "t2": 20.1, "t3": 20.5},
    4: {"ctl": 21.4, "t2": 21.1, "t3": 22.6, "t4": 21.8},
    5: {"ctl": 20.6, "t2": 21.5, "t4": 20.9},
    6: {"ctl": 19.8, "t1": 20.7, "t2": 19.5, "t3": 20.1, "t4": 20.0},
}
for b, d in vals.items():
    for t, y in d.items():
        rows.append({"block": str(b), "trt": t, "y": repr(y)})
df = pd.DataFrame(rows)
df["yf"] = df["y"].astype(float)
fit = smf.ols("yf ~ C(trt, Treatment('ctl')) + C(block)", data=df).fit()
names = [n for n in fit.params.index if n.startswith("C(trt")]
est = fit.params[names].values
cov = fit.cov_params().loc[names, names].values
se = np.sqrt(np.diag(cov))
R = cov / np.outer(se, se)
tstat = est / se
nu = int(fit.df_resid)
rng = np.random.default_rng(20021992)
N, chunk = 10_000_000, 1_000_000
L = np.linalg.cholesky(R)
cnt2 = np.zeros(len(names))
cnt1 = np.zeros(len(names))
for _ in range(N // chunk):
    z = rng.standard_normal((chunk, len(names))) @ L.T
    s = np.sqrt(rng.chisquare(nu, chunk) / nu)
    t = z / s[:, None]
    mabs = np.abs(t).max(axis=1)
    mx = t.max(axis=1)
    for i in range(len(names)):
        cnt2[i] += np.count_nonzero(mabs > abs(tstat[i]))
        cnt1[i] += np.count_nonzero(mx > tstat[i])
p2, p1 = cnt2 / N, cnt1 / N
out = {
    "source": "statsmodels %s OLS; Monte Carlo 1e7 draws (numpy default_rng seed 20021992)" % __import__("statsmodels").__version__,
    "rows": [{"block": r["block"], "trt": r["trt"], "y": r["y"]} for r in rows],
    "df": nu,
    "corr": R.tolist(),
    "comparisons": [
        {"level": n.split("T.")[1].rstrip("]"), "diff": float(e), "se": float(s_), "t": float(tt),
         "p2": float(a), "p2_se": float(np.sqrt(a * (1 - a) / N)), "p1": float(b), "p1_se": float(np.sqrt(b * (1 - b) / N))}
        for n, e, s_, tt, a, b in zip(names, est, se, tstat, p2, p1)
    ],
}
with open(OUT, "w") as f:
    json.dump(out, f, indent=1)
print(json.dumps(out["comparisons"], indent=1), R)
