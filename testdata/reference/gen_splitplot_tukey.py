#!/usr/bin/python3
"""Reference values for analyze.SplitPlotTukey (analyze/splitplot_posthoc.go).

    /usr/bin/python3 testdata/reference/gen_splitplot_tukey.py

Reads the complete data sets of splitplot.json (gen_splitplot.py, whose
error sums of squares come from statsmodels OLS fits) and writes
splitplot_tukey.json: for the whole-plot means, the sub-plot means and the
sub-plot means within each whole-plot level, every pair's difference,
q = |diff| / (SE/sqrt 2) with the SE of Gomez and Gomez (1984, Table 3.8)
for that kind of comparison, and the p-value from
scipy.stats.studentized_range.sf(q, k, df) with the df of its error.
"""
import json
import os

import numpy as np
import scipy
from scipy.stats import studentized_range

HERE = os.path.dirname(os.path.abspath(__file__))


def pairs(means, se, df):
    lv = sorted(means)
    out = []
    for i in range(len(lv)):
        for j in range(i + 1, len(lv)):
            d = means[lv[i]] - means[lv[j]]
            q = abs(d) / (se / np.sqrt(2))
            out.append({"pair": lv[i] + " − " + lv[j], "diff": d, "q": q,
                        "p": float(studentized_range.sf(q, len(lv), df))})
    return out


def main():
    with open(os.path.join(HERE, "splitplot.json")) as f:
        ref = json.load(f)
    out = {"generator": "testdata/reference/gen_splitplot_tukey.py", "scipy": scipy.__version__, "cases": []}
    for c in ref["cases"]:
        if not c.get("classical"):
            continue
        d, cl = c["data"], c["classical"]
        y = np.array([float(v) for v in d["y"]])
        A, B = np.array(d["A"]), np.array(d["B"])
        a, b = len(set(A)), len(set(B))
        r = len(y) // (a * b)
        ea, eb = cl["ss"]["Ea"] / cl["df_a"], cl["ss"]["Eb"] / cl["df_b"]
        mean = lambda mask, lab: {l: float(y[mask & (lab == l)].mean()) for l in sorted(set(lab))}
        allm = np.ones(len(y), bool)
        sets = [{"term": "A", "within": "", "pairs": pairs(mean(allm, A), np.sqrt(2 * ea / (r * b)), cl["df_a"])},
                {"term": "B", "within": "", "pairs": pairs(mean(allm, B), np.sqrt(2 * eb / (r * a)), cl["df_b"])}]
        for lev in sorted(set(A)):
            sets.append({"term": "B", "within": "A = " + lev, "pairs": pairs(mean(A == lev, B), np.sqrt(2 * eb / r), cl["df_b"])})
        out["cases"].append({"name": c["name"], "sets": sets})
    with open(os.path.join(HERE, "splitplot_tukey.json"), "w") as f:
        json.dump(out, f, indent=1, ensure_ascii=False)


if __name__ == "__main__":
    main()
