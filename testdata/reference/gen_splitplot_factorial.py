#!/usr/bin/python3
"""Reference sums of squares of a split plot with factorial whole-plot
treatments (analyze/splitplot.go, decompose).

    /usr/bin/python3 testdata/reference/gen_splitplot_factorial.py

Writes splitplot_factorial.json: data drawn here (seeded numpy; test inputs),
2 x 2 whole-plot treatments (light, co2) on main plots completely at
random (3 per treatment), 3 sub-plot varieties. Each term's SS is the drop
in the residual sum of squares of nested statsmodels OLS fits: light;
+ co2; + light:co2; main plots; + variety; + light:variety; + co2:variety;
+ light:co2:variety.
"""
import json
import os

import numpy as np
import pandas as pd
import statsmodels.formula.api as smf

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261208)
rows = []
mp = 0
for l in ("12h", "16h"):
    for c in ("low", "high"):
        for r in range(3):
            mp += 1
            me = rng.normal(0, 1.5)
            for v in ("a", "b", "c"):
                y = 20 + (l == "16h") * 2 + (c == "high") * 1 + (v == "b") * 1.5 + (v == "c") * 0.5 * (l == "16h") + me + rng.normal(0, 1)
                rows.append({"y": round(y, 2), "light": l, "co2": c, "variety": v, "mp": "m%02d" % mp})
df = pd.DataFrame(rows)
seq = [("light", "C(light)"), ("co2", "C(light) + C(co2)"), ("light × co2", "C(light) * C(co2)"),
       (None, "C(mp)"), ("variety", "C(mp) + C(variety)"), ("light × variety", "C(mp) + C(variety) + C(light):C(variety)"),
       ("co2 × variety", "C(mp) + C(variety) + C(light):C(variety) + C(co2):C(variety)"),
       ("light × co2 × variety", "C(mp) + C(variety) + C(light):C(variety) + C(co2):C(variety) + C(light):C(co2):C(variety)")]
prev = smf.ols("y ~ 1", data=df).fit().ssr
ss = {}
for name, rhs in seq:
    cur = smf.ols("y ~ " + rhs, data=df).fit().ssr
    if name:
        ss[name] = float(prev - cur)
    prev = cur
out = {"data": {k: list(df[k]) for k in df.columns}, "ss": ss}
out["data"]["y"] = ["%.2f" % v for v in df["y"]]
with open(os.path.join(HERE, "splitplot_factorial.json"), "w") as f:
    json.dump(out, f, indent=1, ensure_ascii=False)
print("wrote splitplot_factorial.json")
