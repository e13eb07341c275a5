#!/usr/bin/python3
"""Reference values for the trend contrasts, the loss table's test and the
random-blocks F tests. Writes extras.json.

trend: one-way data at unequal doses 0, 1, 2, 4, 8 (invented); statsmodels OLS
  gives MSE and df; orthogonal polynomial coefficients from numpy's QR of the
  Vandermonde matrix of the doses (equal weights), normalised, sign so the
  highest dose is positive; estimate = c . means, SE = sqrt(MSE c.c / n),
  t and two-sided p from scipy.stats.t.sf.
losses: scipy.stats.chi2_contingency (correction=False) on the treatments x
  (not analysed, analysed) table.
random_blocks: a generalised block design (3 treatments x 4 blocks x 2);
  statsmodels anova_lm Type I SS; treatment F = MS_trt / MS_block:trt with
  scipy.stats.f.sf.
empty_cell: a 2x2 with one empty cell; statsmodels anova_lm (types 1, 2) of
  the additive model, the estimable part of the factorial.
small_p: one-way, 4 x 251 (df 3 and 1000), statsmodels F; its tail from
  30-digit mpmath betainc.
Run: /usr/bin/python3 testdata/reference/gen_extras.py
"""
import json, os
import numpy as np
import pandas as pd
import scipy, scipy.stats as st
import statsmodels.api as sm
import statsmodels.formula.api as smf

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "extras.json")
out = {"source": "scipy %s, statsmodels %s, numpy %s" % (scipy.__version__, sm.__version__, np.__version__)}

doses = [0, 1, 2, 4, 8]
ys = {0: [10.1, 10.9, 9.8], 1: [12.2, 11.5, 12.9], 2: [13.8, 13.1, 14.6], 4: [15.0, 15.9, 14.7], 8: [16.1, 15.2, 16.4]}
rows = [{"dose": str(d), "y": repr(v)} for d in doses for v in ys[d]]
df = pd.DataFrame(rows)
df["yf"] = df.y.astype(float)
fit = smf.ols("yf ~ C(dose)", data=df).fit()
mse, dfe = fit.mse_resid, int(fit.df_resid)
x = np.array(doses, float)
V = np.vander((x - x.mean()) / np.abs(x - x.mean()).max(), len(x), increasing=True)
Q, _ = np.linalg.qr(V)
means = np.array([np.mean(ys[d]) for d in doses])
trend = []
for k in range(1, len(x)):
    c = Q[:, k] / np.linalg.norm(Q[:, k])
    if c[np.argmax(x)] < 0:
        c = -c
    est = float(c @ means)
    se = float(np.sqrt(mse * (c @ c) / 3))
    t = est / se
    trend.append({"degree": k, "coef": c.tolist(), "estimate": est, "se": se, "t": t, "p": float(2 * st.t.sf(abs(t), dfe))})
out["trend"] = {"rows": rows, "df": dfe, "contrasts": trend,
                "treatment_ss": float(sm.stats.anova_lm(fit, typ=1)["sum_sq"][0])}

loss = {"enrolled": [10, 10, 10], "lost": [0, 1, 5]}
tab = [[l, e - l] for e, l in zip(loss["enrolled"], loss["lost"])]
chi2, p, dof, expct = st.chi2_contingency(tab, correction=False)
out["losses"] = dict(loss, chi2=float(chi2), p=float(p), df=int(dof), min_expected=float(expct.min()))

rng = np.random.default_rng(7)
g = []
for b in range(1, 5):
    for t in ["A", "B", "C"]:
        for r in range(2):
            y = 20 + {"A": 0, "B": 1.0, "C": 1.6}[t] + 0.8 * b + rng.normal(0, 0.7) + (0.5 if (b + ord(t)) % 3 == 0 else 0)
            g.append({"block": str(b), "trt": t, "y": "%.2f" % y})
gd = pd.DataFrame(g)
gd["yf"] = gd.y.astype(float)
gfit = smf.ols("yf ~ C(block) + C(trt) + C(block):C(trt)", data=gd).fit()
a = sm.stats.anova_lm(gfit, typ=1)
ms_t = a.loc["C(trt)", "sum_sq"] / a.loc["C(trt)", "df"]
ms_bt = a.loc["C(block):C(trt)", "sum_sq"] / a.loc["C(block):C(trt)", "df"]
F = ms_t / ms_bt
out["random_blocks"] = {"rows": g, "F": float(F), "df1": int(a.loc["C(trt)", "df"]), "df2": int(a.loc["C(block):C(trt)", "df"]),
                        "p": float(st.f.sf(F, a.loc["C(trt)", "df"], a.loc["C(block):C(trt)", "df"]))}
# empty cell: 2x2 with a2 x b2 missing; A x B has no estimable contrast, so
# the Type I / II tests are those of the additive model (statsmodels).
ec = pd.DataFrame({"A": ["a1", "a1", "a1", "a1", "a2", "a2"], "B": ["b1", "b1", "b2", "b2", "b1", "b1"],
                   "y": [1, 2, 3, 4, 5, 6]})
efit = smf.ols("y ~ C(A) + C(B)", data=ec).fit()
out["empty_cell"] = {}
for typ in (1, 2):
    a = sm.stats.anova_lm(efit, typ=typ)
    out["empty_cell"][str(typ)] = [{"ss": float(a["sum_sq"][i]), "f": float(a["F"][i]), "p": float(a["PR(>F)"][i])} for i in range(2)]
# small p: 4 groups x 251 units (df 3 and 1000), a strong effect; the F tail
# from mpmath's regularised incomplete beta at 30 digits.
import mpmath as mp
mp.mp.dps = 30
r2 = np.random.default_rng(35)
sp = [{"g": "g%d" % k, "y": "%.3f" % (50 + 0.45 * k + r2.normal())} for k in range(4) for _ in range(251)]
sdf = pd.DataFrame(sp)
sdf["yf"] = sdf.y.astype(float)
sa = sm.stats.anova_lm(smf.ols("yf ~ C(g)", data=sdf).fit(), typ=1)
Fs = float(sa["F"][0])
ptail = mp.betainc(500, mp.mpf(3) / 2, 0, mp.mpf(1000) / (1000 + 3 * mp.mpf(Fs)), regularized=True)
out["small_p"] = {"rows": sp, "F": Fs, "p": float(ptail), "p_scipy": float(st.f.sf(Fs, 3, 1000))}
with open(OUT, "w") as f:
    json.dump(out, f, indent=1)
print(json.dumps({k: v for k, v in out.items() if k != "random_blocks"}, indent=1)[:1500], out["random_blocks"]["F"])
