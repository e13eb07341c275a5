#!/usr/bin/python3
"""Reference values for analyze.LatinSquareANOVA (analyze/latin.go).

    /usr/bin/python3 testdata/reference/gen_latin.py

Writes latin.json beside itself. Squares are made here from seeded numpy
permutations of a cyclic square and data drawn from a seeded generator (test
inputs, not a scenario). Sources: statsmodels OLS + anova_lm (Type 2, equal
to Type 3 in an additive model) for single squares, with and without missing
cells; for a series of squares, differences of residual sums of squares of
statsmodels OLS fits with each term left out (rows and columns nested in
squares; the squares term in the model without them), df from the fits'
ranks. The treatments' least-squares means come from the same fits (design
rows averaged over the rows and columns, SEs from cov_params), and the
Tukey HSD of every pair from them with scipy's studentized range.
"""
import json
import os

import numpy as np
import pandas as pd
import scipy.stats as st
import statsmodels
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261207)


def square(t):
    base = np.array([[(i + j) % t for j in range(t)] for i in range(t)])
    base = base[rng.permutation(t)][:, rng.permutation(t)]
    return rng.permutation(t)[base]


def data(t, sq=1):
    rows = []
    for s in range(sq):
        L = square(t)
        re, ce = rng.normal(0, 2, t), rng.normal(0, 1.5, t)
        for i in range(t):
            for j in range(t):
                k = int(L[i, j])
                y = 40 + re[i] + ce[j] + 1.2 * k + rng.normal(0, 1)
                rows.append({"y": "%.2f" % y, "row": "r%d" % (i + 1), "col": "c%d" % (j + 1), "trt": "T%d" % (k + 1), "sq": "s%d" % (s + 1)})
    df = pd.DataFrame(rows)
    df["yf"] = df["y"].astype(float)
    return df


def single(df):
    fit = smf.ols("yf ~ C(row) + C(col) + C(trt)", data=df).fit()
    tab = anova_lm(fit, typ=2)
    out = {}
    for idx, name in (("C(row)", "row"), ("C(col)", "col"), ("C(trt)", "trt")):
        out[name] = {"df": int(tab.loc[idx, "df"]), "ss": float(tab.loc[idx, "sum_sq"]), "f": float(tab.loc[idx, "F"]), "p": float(tab.loc[idx, "PR(>F)"])}
    out["resid_df"] = int(fit.df_resid)
    out["resid_ss"] = float(fit.ssr)
    out["trt_lsmeans"], out["tukey"] = lsmeans(fit, df, ["row", "col"])
    out["checks"] = checks(fit)
    return out


def lsmeans(fit, df, blocking):
    """Least-squares means of the treatments: the model's design rows
    averaged over the full grid of the blocking factors' levels, with SEs
    from cov_params; and the 97.5% t point on the residual df."""
    import itertools as it
    from patsy import dmatrix
    levels = {c: sorted(df[c].unique()) for c in blocking}
    params, cov = np.asarray(fit.params), np.asarray(fit.cov_params())
    out, vecs = [], []
    trts = sorted(df["trt"].unique())
    for trt in trts:
        grid = [dict(zip(blocking, combo), trt=trt) for combo in it.product(*[levels[c] for c in blocking])]
        v = np.asarray(dmatrix(fit.model.data.design_info, pd.DataFrame(grid))).mean(axis=0)
        vecs.append(v)
        out.append({"trt": trt, "mean": float(v @ params), "se": float(np.sqrt(v @ cov @ v)),
                    "t975": float(st.t.ppf(0.975, fit.df_resid))})
    return out, tukey(trts, vecs, params, cov, fit.df_resid)


def checks(fit):
    """Residuals, externally studentized residuals (statsmodels influence)
    and Shapiro–Wilk on the residuals (scipy), in data order."""
    infl = fit.get_influence()
    w, p = st.shapiro(np.asarray(fit.resid))
    return {"resid": [float(v) for v in fit.resid], "deleted": [float(v) for v in infl.resid_studentized_external],
            "shapiro_w": float(w), "shapiro_p": float(p)}


def tukey(trts, vecs, params, cov, df):
    """Tukey HSD (Tukey–Kramer with the LS means' covariance) of every pair
    of treatments: difference, its SE, q = |diff|/(SE/sqrt 2), the p-value
    and the 95% critical q from scipy's studentized range on the residual
    df."""
    k = len(trts)
    crit = float(st.studentized_range.ppf(0.95, k, df))
    pairs = []
    for i in range(k):
        for j in range(i + 1, k):
            d = vecs[i] - vecs[j]
            se = float(np.sqrt(d @ cov @ d))
            diff = float(d @ params)
            q = abs(diff) / (se / np.sqrt(2))
            pairs.append({"a": trts[i], "b": trts[j], "diff": diff, "se": se, "q": float(q),
                          "p": float(st.studentized_range.sf(q, k, df)), "crit": crit})
    return pairs


def series(df):
    df = df.copy()
    df["rs"] = df["sq"] + df["row"]
    df["cs"] = df["sq"] + df["col"]
    terms = {"sq": "C(sq)", "row": "C(rs)", "col": "C(cs)", "trt": "C(trt)"}
    full = smf.ols("yf ~ " + " + ".join(terms.values()), data=df).fit()
    out = {"resid_df": int(full.df_resid), "resid_ss": float(full.ssr)}
    out["trt_lsmeans"], out["tukey"] = lsmeans(full, df, ["sq", "rs", "cs"])
    out["checks"] = checks(full)
    for k in terms:
        # Squares are contained in rows and columns within squares: tested
        # in the model without those (Type II containment).
        keep = [kk for kk in terms if not (k == "sq" and kk in ("row", "col"))]
        base = smf.ols("yf ~ " + " + ".join(terms[kk] for kk in keep), data=df).fit()
        red = smf.ols("yf ~ " + " + ".join(terms[kk] for kk in keep if kk != k), data=df).fit()
        ss = red.ssr - base.ssr
        dfk = int(base.df_model - red.df_model)
        F = ss / dfk / (full.ssr / full.df_resid) if dfk > 0 else 0.0
        out[k] = {"df": dfk, "ss": float(ss), "f": float(F), "p": float(st.f.sf(F, dfk, full.df_resid)) if dfk > 0 else 1.0}
    return out


cases = []
d = data(5)
cases.append({"name": "5x5 square", "data": d.drop(columns="yf").to_dict(orient="list"), "expect": single(d)})
d = data(4)
dm = d.drop(index=[3, 10]).reset_index(drop=True)
cases.append({"name": "4x4 square, two cells missing", "data": dm.drop(columns="yf").to_dict(orient="list"), "expect": single(dm)})
d = data(4, sq=3)
cases.append({"name": "series of three 4x4 squares", "series": True, "data": d.drop(columns="yf").to_dict(orient="list"), "expect": series(d)})
with open(os.path.join(HERE, "latin.json"), "w") as f:
    json.dump({"generator": "testdata/reference/gen_latin.py", "statsmodels": statsmodels.__version__, "cases": cases}, f, indent=1)
print("wrote latin.json")
