#!/usr/bin/python3
"""Reference values for analyze.ANCOVA (analyze/ancova.go).

    /usr/bin/python3 testdata/reference/gen_ancova.py

Writes ancova.json beside itself. Data sets are drawn here from a seeded
numpy generator (test inputs, not a scenario). Every value comes from
statsmodels OLS with the covariate centred at its mean and sum-to-zero
coding, in allot's term order (covariate, block, treatment terms):
anova_lm Types 2 and 3, and Type 1 from nested fits in allot's order; the slope's estimate, SE, t and p; adjusted means as
L @ params with SE sqrt(L cov L'); the equal-slopes F from anova_lm of the
model with treatment:covariate columns against the model without; the
covariate-balance F from the regression of the covariate on the treatments;
Tukey-Kramer p-values of adjusted means from scipy.stats.studentized_range.
"""
import json
import math
import os

import numpy as np
import pandas as pd
import scipy.stats as st
import statsmodels
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261204)


def case(name, df, facs, blocked, typ):
    df = df.copy()
    df["xc"] = df["x"] - df["x"].mean()
    trt = "*".join("C(%s, Sum)" % f for f in facs)
    rhs = "xc + " + ("C(block, Sum) + " if blocked else "") + trt
    fit = smf.ols("y ~ " + rhs, data=df).fit()
    terms = []
    if typ == 1:
        # patsy puts categorical terms before numeric ones, so the
        # sequential table in allot's order (covariate first) is built from
        # nested statsmodels fits.
        parts = ["xc"] + (["C(block, Sum)"] if blocked else []) + [trt]
        prev = smf.ols("y ~ 1", data=df).fit()
        for k, part in enumerate(parts):
            cur = smf.ols("y ~ " + " + ".join(parts[:k + 1]), data=df).fit()
            ss = prev.ssr - cur.ssr
            dfk = int(cur.df_model - prev.df_model)
            F = ss / dfk / (fit.ssr / fit.df_resid)
            terms.append({"source": part, "df": dfk, "ss": float(ss), "f": float(F), "p": float(st.f.sf(F, dfk, fit.df_resid))})
            prev = cur
    else:
        tab = anova_lm(fit, typ=typ)
        for idx, row in tab.iterrows():
            if idx in ("Intercept", "Residual"):
                continue
            terms.append({"source": idx, "df": int(row["df"]), "ss": float(row["sum_sq"]), "f": float(row["F"]), "p": float(row["PR(>F)"])})
    ext_rhs = rhs + " + " + " + ".join("C(%s, Sum):xc" % f for f in facs)
    if len(facs) == 2:
        ext_rhs += " + C(%s, Sum):C(%s, Sum):xc" % (facs[0], facs[1])
    ext = smf.ols("y ~ " + ext_rhs, data=df).fit()
    cmp_ = anova_lm(fit, ext)
    bal = smf.ols("x ~ " + trt, data=df).fit()
    cov = fit.cov_params().values
    names = list(fit.params.index)
    means, pairs = [], []
    for f in facs:
        levels = sorted(df[f].unique())
        cols = [i for i, nm in enumerate(names) if nm.startswith("C(%s, Sum)[S." % f) and ":" not in nm]
        L = len(levels)
        vecs = []
        for l in range(L):
            v = np.zeros(len(names))
            v[0] = 1
            for j, c in enumerate(cols):
                v[c] = 1.0 if l == j else (-1.0 if l == L - 1 else 0.0)
            vecs.append(v)
        means.append([{"level": levels[l], "mean": float(vecs[l] @ fit.params.values),
                       "se": float(math.sqrt(vecs[l] @ cov @ vecs[l]))} for l in range(L)])
        pr = []
        for i in range(L):
            for j in range(i + 1, L):
                dv = vecs[i] - vecs[j]
                diff = float(dv @ fit.params.values)
                se = float(math.sqrt(dv @ cov @ dv))
                q = abs(diff) / (se / math.sqrt(2))
                pr.append({"pair": "%s − %s" % (levels[i], levels[j]), "diff": diff, "se": se,
                           "p": float(st.studentized_range.sf(q, L, fit.df_resid))})
        pairs.append(pr)
    out = {"name": name, "type": typ, "y": ["%.2f" % v for v in df.y], "x": ["%.1f" % v for v in df.x],
           "factors": {f: list(df[f]) for f in facs}, "blocks": list(df.block) if blocked else None,
           "terms": terms, "resid_df": int(fit.df_resid), "resid_ss": float(fit.ssr),
           "slope": float(fit.params["xc"]), "slope_se": float(fit.bse["xc"]), "slope_t": float(fit.tvalues["xc"]),
           "slope_p": float(fit.pvalues["xc"]),
           "equal_slopes_f": float(cmp_["F"].iloc[1]), "equal_slopes_p": float(cmp_["Pr(>F)"].iloc[1]),
           "equal_slopes_df": int(cmp_["df_diff"].iloc[1]),
           "balance_f": float(bal.fvalue), "balance_p": float(bal.f_pvalue),
           "means": means, "pairs": pairs}
    return out


def data(levels, reps, blocks, drop, slope):
    rows = []
    for b in range(max(blocks, 1)):
        be = rng.normal(0, 3)
        for cell in np.ndindex(*levels):
            for _ in range(reps):
                x = round(rng.normal(50, 8), 1)
                y = 20 + be + sum((i + 1) * 1.5 * c for i, c in enumerate(cell)) + slope * (x - 50) + rng.normal(0, 2)
                row = {"y": round(y, 2), "x": x}
                for i, c in enumerate(cell):
                    row["AB"[i]] = "%s%d" % ("ab"[i], c + 1)
                if blocks:
                    row["block"] = "B%d" % (b + 1)
                rows.append(row)
    rows = [r for i, r in enumerate(rows) if i not in drop]
    df = pd.DataFrame(rows)
    df["y"] = df["y"].map(lambda v: float("%.2f" % v))
    return df


cases = [
    case("one-way, unbalanced", data([3], 8, 0, {2, 9, 20}, 0.4), ["A"], False, 3),
    case("one-way, type 1", data([4], 6, 0, set(), 0.25), ["A"], False, 1),
    case("randomised blocks", data([4], 1, 5, set(), 0.3), ["A"], True, 3),
    case("factorial, unbalanced", data([2, 3], 4, 0, {0, 7, 13}, 0.5), ["A", "B"], False, 3),
    case("factorial, type 2", data([2, 2], 5, 0, {3}, 0.2), ["A", "B"], False, 2),
]
with open(os.path.join(HERE, "ancova.json"), "w") as f:
    json.dump({"generator": "testdata/reference/gen_ancova.py", "statsmodels": statsmodels.__version__, "cases": cases}, f, indent=1, ensure_ascii=False)
print("wrote ancova.json")
