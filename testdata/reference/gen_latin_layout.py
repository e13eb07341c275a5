#!/usr/bin/python3
"""Reference values for allot analyze on a Latin-square layout made by
allot layout (cmd/allot/analyze_strata_test.go).

    /usr/bin/python3 testdata/reference/gen_latin_layout.py

Reads the square "latin 4 x 4, seed 7" from layouts_strata.json (written by
allot_pcg_v1.py, the independent re-implementation of the randomisation),
draws test data for its 16 cells from a seeded generator (row, column and
treatment effects plus normal noise; test inputs, not a scenario), and
writes latin_layout.json: the data in layout order and statsmodels OLS +
anova_lm (Type 2, equal to Type 3 in this additive model) F and p for rows,
columns and treatments, complete and with cells 3 and 10 missing.
"""
import json
import os

import numpy as np
import pandas as pd
import statsmodels
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

HERE = os.path.dirname(os.path.abspath(__file__))


def main():
    with open(os.path.join(HERE, "layouts_strata.json")) as f:
        case = [c for c in json.load(f)["cases"] if c["name"] == "latin 4 x 4, seed 7"][0]
    units = case["units"]
    rng = np.random.default_rng(20261202)
    reff, ceff, teff = rng.normal(0, 2, 4), rng.normal(0, 1.5, 4), np.array([0.0, 1.5, 3.0, 0.5])
    y = ["%.2f" % (30 + reff[u["row"] - 1] + ceff[u["col"] - 1] + teff[u["treatment"]] + rng.normal(0, 1)) for u in units]
    out = {"generator": "testdata/reference/gen_latin_layout.py", "statsmodels": statsmodels.__version__,
           "layout": case["name"], "y": y, "cases": []}
    for name, drop in [("complete", []), ("cells 3 and 10 missing", [2, 9])]:
        rows = [dict(y=float(y[i]), row=str(u["row"]), col=str(u["col"]), trt="T%d" % u["treatment"])
                for i, u in enumerate(units) if i not in drop]
        df = pd.DataFrame(rows)
        fit = smf.ols("y ~ C(row) + C(col) + C(trt)", df).fit()
        a = anova_lm(fit, typ=2)
        res = {"name": name, "missing": [i + 1 for i in drop], "resid_df": float(fit.df_resid)}
        for term, key in [("C(row)", "row"), ("C(col)", "column"), ("C(trt)", "feed")]:
            res[key] = {"df": float(a.loc[term, "df"]), "F": float(a.loc[term, "F"]), "p": float(a.loc[term, "PR(>F)"])}
        out["cases"].append(res)
    with open(os.path.join(HERE, "latin_layout.json"), "w") as f:
        json.dump(out, f, indent=1)


if __name__ == "__main__":
    main()
