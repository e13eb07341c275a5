#!/usr/bin/python3
"""Reference values for analyze.SplitPlotANOVA and analyze.SplitPlotREML.

    /usr/bin/python3 testdata/reference/gen_splitplot.py

Writes splitplot.json beside itself. Data are drawn here from a seeded numpy
generator (test inputs, not a scenario). Sources:
- sums of squares: differences of residual sums of squares of nested
  statsmodels OLS fits (block; block + A; main plot; main plot + B; main
  plot + B + A:B), F and p formed against the stratum errors (scipy);
- standard errors of differences: numpy from Gomez and Gomez (1984), Table
  3.8, with Satterthwaite's df;
- with missing sub-plots: statsmodels MixedLM (REML, main plots random) for
  the residual and main-plot variances and the fixed effects (sum-to-zero
  coding in allot's column order);
- residual checks: the residuals of the OLS fit within main plots (error
  (b)), statsmodels' externally studentized residuals and scipy's
  Shapiro–Wilk.
"""
import json
import math
import os
import warnings

import numpy as np
import pandas as pd
import scipy.stats as st
import statsmodels
import statsmodels.formula.api as smf

warnings.simplefilter("ignore")
HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261206)


def make(blocks, a, b, r, sd_m, sd_e):
    rows = []
    mp = 0
    for rep in range(r):
        be = rng.normal(0, 2) if blocks else 0
        for i in range(a):
            mp += 1
            me = rng.normal(0, sd_m)
            for j in range(b):
                y = 50 + be + 2 * i + 1.5 * j + 0.5 * i * j + me + rng.normal(0, sd_e)
                rows.append({"y": round(y, 2), "A": "a%d" % (i + 1), "B": "b%d" % (j + 1), "mp": "m%02d" % mp,
                             "block": "r%d" % (rep + 1)})
    return pd.DataFrame(rows)


def classical(df, blocked):
    def rss(rhs):
        return smf.ols("y ~ " + rhs, data=df).fit()
    f0 = rss("1")
    fb = rss("C(block)") if blocked else f0
    fa = rss(("C(block) + " if blocked else "") + "C(A)")
    fm = rss("C(mp)")
    fB = rss("C(mp) + C(B)")
    fAB = rss("C(mp) + C(B) + C(A):C(B)")
    a, b = df.A.nunique(), df.B.nunique()
    m = df.mp.nunique()
    r = m // a
    n = len(df)
    dfb_ = (r - 1) if blocked else 0
    dfa = m - 1 - dfb_ - (a - 1)
    dfe = n - m - (b - 1) - (a - 1) * (b - 1)
    ss = {"block": fb.ssr and (f0.ssr - fb.ssr), "A": fb.ssr - fa.ssr, "Ea": fa.ssr - fm.ssr,
          "B": fm.ssr - fB.ssr, "AB": fB.ssr - fAB.ssr, "Eb": fAB.ssr}
    Ea, Eb = ss["Ea"] / dfa, ss["Eb"] / dfe
    out = {"ss": {k: float(v) for k, v in ss.items()}, "df_a": dfa, "df_b": dfe}
    out["f_A"] = ss["A"] / (a - 1) / Ea
    out["p_A"] = float(st.f.sf(out["f_A"], a - 1, dfa))
    out["f_B"] = ss["B"] / (b - 1) / Eb
    out["p_B"] = float(st.f.sf(out["f_B"], b - 1, dfe))
    out["f_AB"] = ss["AB"] / ((a - 1) * (b - 1)) / Eb
    out["p_AB"] = float(st.f.sf(out["f_AB"], (a - 1) * (b - 1), dfe))
    comb = (b - 1) * Eb + Ea
    out["se"] = [math.sqrt(2 * Ea / (r * b)), math.sqrt(2 * Eb / (r * a)), math.sqrt(2 * Eb / r), math.sqrt(2 * comb / (r * b))]
    out["satt"] = comb ** 2 / (((b - 1) * Eb) ** 2 / dfe + Ea ** 2 / dfa)
    naive_df = n - 1 - dfb_ - (a - 1) - (b - 1) - (a - 1) * (b - 1)
    out["naive_p_A"] = float(st.f.sf(ss["A"] / (a - 1) / ((ss["Ea"] + ss["Eb"]) / naive_df), a - 1, naive_df))
    return out


def checks(df):
    """Residuals of the model within main plots (main plots, B and A:B;
    error (b)), their externally studentized values (statsmodels
    influence) and Shapiro–Wilk on them (scipy), in data order."""
    fit = smf.ols("y ~ C(mp) + C(B) + C(A):C(B)", data=df).fit()
    w, p = st.shapiro(np.asarray(fit.resid))
    return {"resid": [float(v) for v in fit.resid],
            "deleted": [float(v) for v in fit.get_influence().resid_studentized_external],
            "shapiro_w": float(w), "shapiro_p": float(p), "df": int(fit.df_resid)}


def reml(df, blocked):
    rhs = ("C(block, Sum) + " if blocked else "") + "C(A, Sum) * C(B, Sum)"
    md = smf.mixedlm("y ~ " + rhs, df, groups=df["mp"])
    fit = md.fit(reml=True)
    fe = [float(v) for v in fit.fe_params.values]
    return {"sigma_e2": float(fit.scale), "sigma_m2": float(fit.cov_re.iloc[0, 0]), "fe": fe, "fe_names": list(fit.fe_params.index)}


cases = []
d1 = make(True, 3, 4, 4, 2.0, 1.0)
cases.append({"name": "split plot in blocks", "blocked": True, "data": d1.to_dict(orient="list"),
              "classical": classical(d1, True), "reml": reml(d1, True)})
d2 = make(False, 2, 3, 4, 1.5, 1.0)
cases.append({"name": "split plot, main plots completely randomised", "blocked": False, "data": d2.to_dict(orient="list"),
              "classical": classical(d2, False), "reml": reml(d2, False)})
d3 = d1.drop(index=[2, 17, 30]).reset_index(drop=True)
cases.append({"name": "split plot in blocks, three sub-plots missing", "blocked": True, "data": d3.to_dict(orient="list"),
              "reml": reml(d3, True)})
for c, d in zip(cases, (d1, d2, d3)):
    c["checks"] = checks(d)
for c in cases:
    c["data"]["y"] = ["%.2f" % v for v in c["data"]["y"]]
with open(os.path.join(HERE, "splitplot.json"), "w") as f:
    json.dump({"generator": "testdata/reference/gen_splitplot.py", "statsmodels": statsmodels.__version__, "cases": cases}, f, indent=1)
print("wrote splitplot.json")
