#!/usr/bin/python3
"""Power of the treatment F test adjusted for a baseline covariate
(power/covariate.go).

    /usr/bin/python3 testdata/reference/gen_covariate_power.py

Writes covariate_power.json: for k groups of n, Cohen's f and correlation
rho, lambda = f^2 k n/(1 - rho^2) and df (k - 1, k n - k - 1), power from
scipy.stats.ncf.sf at scipy's f.ppf critical value.
"""
import json
import os

import scipy.stats as st

HERE = os.path.dirname(os.path.abspath(__file__))
rows = []
for k, n, f, rho in [(2, 10, 0.5, 0.0), (2, 10, 0.5, 0.6), (4, 8, 0.3, 0.5), (3, 20, 0.25, 0.8), (5, 6, 0.4, 0.3)]:
    N = k * n
    df1, df2 = k - 1, N - k - 1
    lam = f * f * N / (1 - rho * rho)
    crit = st.f.ppf(0.95, df1, df2)
    rows.append({"k": k, "n": n, "f": f, "rho": rho, "df2": df2, "lambda": lam, "power": float(st.ncf.sf(crit, df1, df2, lam))})
with open(os.path.join(HERE, "covariate_power.json"), "w") as fh:
    json.dump({"generator": "testdata/reference/gen_covariate_power.py", "rows": rows}, fh, indent=1)
print("wrote covariate_power.json")
