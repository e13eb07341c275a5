#!/usr/bin/python3
"""Reference power of the treatment F test in a series of Latin squares
(power/latin.go).

    /usr/bin/python3 testdata/reference/gen_latin_power.py

Writes latin_power.json: for t treatments and S squares, df (t-1,
(t-1)(S(t-1)-1)), lambda = S t sum (mu - mean)^2 / sd^2 (numpy), power from
scipy.stats.ncf.sf at scipy's central f.ppf critical value.
"""
import json
import os

import numpy as np
import scipy.stats as st

HERE = os.path.dirname(os.path.abspath(__file__))
rows = []
for means, sd, S in [([10, 11, 12, 13], 1.5, 1), ([10, 11, 12, 13], 1.5, 3), ([5, 5.4, 6, 5.2, 5.9], 0.6, 2), ([20, 21, 23], 1.0, 2)]:
    m = np.array(means, dtype=float)
    t = len(m)
    lam = S * t * ((m - m.mean()) ** 2).sum() / sd ** 2
    df1, df2 = t - 1, (t - 1) * (S * (t - 1) - 1)
    crit = st.f.ppf(0.95, df1, df2)
    rows.append({"means": means, "sd": sd, "squares": S, "df2": df2, "lambda": float(lam), "power": float(st.ncf.sf(crit, df1, df2, lam))})
with open(os.path.join(HERE, "latin_power.json"), "w") as f:
    json.dump({"generator": "testdata/reference/gen_latin_power.py", "rows": rows}, f, indent=1)
print("wrote latin_power.json")
