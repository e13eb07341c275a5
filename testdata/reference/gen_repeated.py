#!/usr/bin/python3
"""Reference values for analyze.SplitPlotInTime and analyze.Summarise
(analyze/repeated.go).

    /usr/bin/python3 testdata/reference/gen_repeated.py

Writes repeated.json beside itself. Data are drawn here from a seeded numpy
generator (test inputs, not a scenario). Sources:
- sums of squares and F: differences of residual sums of squares of nested
  statsmodels OLS fits (treatment; unit; unit + time; unit + time +
  treatment:time) on the long data, the treatment F formed against units
  within treatments; for the one-group case
  also statsmodels' AnovaRM (uncorrected F for time).
- Mauchly's W, chi-square and p, the Greenhouse-Geisser and Huynh-Feldt
  (Lecoutre-corrected) epsilons and corrected p-values: numpy from the
  published formulas, with the orthonormal contrasts from a QR
  decomposition (a different basis from allot's Helmert contrasts; the
  statistics do not depend on it).
- per-time Tukey-Kramer comparisons: numpy from the Cochran-Cox formula with
  scipy.stats.studentized_range.
- summary measures: numpy polyfit (slope), numpy trapz (AUC), the last value.
"""
import json
import math
import os

import numpy as np
import pandas as pd
import scipy.stats as st
import statsmodels
import statsmodels.formula.api as smf
from statsmodels.stats.anova import AnovaRM

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261205)


def simulate(ns, k, effects, rho):
    rows = []
    cov = np.array([[rho ** abs(i - j) for j in range(k)] for i in range(k)]) * 4
    uid = 0
    for g, n in enumerate(ns):
        for _ in range(n):
            uid += 1
            y = 30 + np.array([effects[g] * t for t in range(k)]) + rng.multivariate_normal(np.zeros(k), cov) + rng.normal(0, 2)
            rows.append(("u%02d" % uid, "T%d" % (g + 1), [round(v, 2) for v in y]))
    return rows


def analyse(rows, times, tvals, missing=()):
    k = len(times)
    complete = [r for r in rows if r[0] not in missing]
    long = pd.DataFrame([{"unit": u, "trt": g, "time": times[t], "y": y[t]} for u, g, y in complete for t in range(k)])
    groups = sorted(set(g for _, g, _ in complete), key=[g for _, g, _ in complete].index)
    G = len(groups)
    N = len(complete)
    out = {"ss": {}, "df": {}}
    # Sequential sums of squares as differences of residual sums of squares
    # of nested statsmodels fits (units nest treatments, so a single
    # anova_lm table of the rank-deficient model is not used); df from the
    # fits' ranks.
    seq = [("trt", "C(trt)"), ("units", "C(unit)"), ("time", "C(unit) + C(time)"),
           ("trt_time", "C(unit) + C(time) + C(trt):C(time)")]
    if G == 1:
        seq = [s_ for s_ in seq if s_[0] not in ("trt", "trt_time")]
    prev = smf.ols("y ~ 1", data=long).fit()
    for name, rhs in seq:
        cur = smf.ols("y ~ " + rhs, data=long).fit()
        out["ss"][name] = float(prev.ssr - cur.ssr)
        out["df"][name] = float(cur.df_model - prev.df_model)
        prev = cur
    out["ss"]["resid"] = float(prev.ssr)
    out["df"]["resid"] = float(prev.df_resid)
    ms = {k_: out["ss"][k_] / out["df"][k_] for k_ in out["ss"] if out["df"][k_] > 0}
    if G > 1:
        out["f_trt"] = ms["trt"] / ms["units"]
        out["p_trt"] = float(st.f.sf(out["f_trt"], out["df"]["trt"], out["df"]["units"]))
        out["f_trt_time"] = ms["trt_time"] / ms["resid"]
    out["f_time"] = ms["time"] / ms["resid"]
    # Sphericity from the pooled within-group covariance of orthonormal contrasts.
    Y = np.array([y for _, _, y in complete])
    lab = np.array([g for _, g, _ in complete])
    q, _ = np.linalg.qr(np.column_stack([np.ones(k), np.eye(k)[:, :k - 1]]))
    C = q[:, 1:k]  # k x (k-1), orthonormal, orthogonal to the constant
    Z = Y @ C
    E = np.zeros((k - 1, k - 1))
    for g in groups:
        Zg = Z[lab == g]
        D = Zg - Zg.mean(axis=0)
        E += D.T @ D
    nu = N - G
    S = E / nu
    p = k - 1
    W = float(np.linalg.det(S) / (np.trace(S) / p) ** p)
    d = 1 - (2 * p * p + p + 2) / (6 * p * nu)
    x2 = -nu * d * math.log(W)
    dfm = p * (p + 1) // 2 - 1
    gg = float(np.trace(S) ** 2 / (p * np.trace(S @ S)))
    hf = min(1.0, ((nu + 1) * p * gg - 2) / (p * (nu - p * gg)))
    out.update({"mauchly_w": W, "mauchly_chisq": x2, "mauchly_df": dfm, "mauchly_p": float(st.chi2.sf(x2, dfm)),
                "eps_gg": gg, "eps_hf": hf,
                "p_time_gg": float(st.f.sf(out["f_time"], out["df"]["time"] * gg, out["df"]["resid"] * gg)),
                "p_time_hf": float(st.f.sf(out["f_time"], out["df"]["time"] * hf, out["df"]["resid"] * hf))})
    if G > 1:
        msw = (ms["units"] + (k - 1) * ms["resid"]) / k
        dfw = (ms["units"] + (k - 1) * ms["resid"]) ** 2 / (ms["units"] ** 2 / nu + ((k - 1) * ms["resid"]) ** 2 / (nu * (k - 1)))
        per = []
        for t in range(k):
            means = [float(Y[lab == g, t].mean()) for g in groups]
            ns = [int((lab == g).sum()) for g in groups]
            for a in range(G):
                for b in range(a + 1, G):
                    se = math.sqrt(msw * (1 / ns[a] + 1 / ns[b]))
                    diff = means[a] - means[b]
                    per.append({"diff": diff, "se": se, "df": dfw,
                                "p": float(st.studentized_range.sf(abs(diff) / (se / math.sqrt(2)), G, dfw))})
        out["per_time"] = per
    if G == 1:
        rm = AnovaRM(long, "y", "unit", within=["time"]).fit()
        out["anovarm_f_time"] = float(rm.anova_table["F Value"].iloc[0])
    # Summary measures for every unit with the points it has.
    summ = {"slope": [], "auc": [], "final": []}
    for u, g, y in rows:
        y = np.array(y, dtype=float)
        if u in missing:
            continue
        summ["slope"].append(float(np.polyfit(tvals, y, 1)[0]))
        summ["auc"].append(float(np.trapz(y, tvals)))
        summ["final"].append(float(y[-1]))
    out["summary"] = summ
    return out


cases = []
times = ["d0", "d7", "d14", "d21"]
tv = [0, 7, 14, 21]
rows = simulate([5, 6, 5], 4, [0, 0.6, 1.1], 0.6)
cases.append({"name": "three treatments, unequal groups", "times": times, "time_values": tv,
              "units": [r[0] for r in rows], "groups": [r[1] for r in rows], "values": [["%.2f" % v for v in r[2]] for r in rows],
              "missing": [], "expect": analyse(rows, times, tv)})
rows = simulate([8], 3, [0.8], 0.3)
cases.append({"name": "one group", "times": times[:3], "time_values": tv[:3],
              "units": [r[0] for r in rows], "groups": [r[1] for r in rows], "values": [["%.2f" % v for v in r[2]] for r in rows],
              "missing": [], "expect": analyse(rows, times[:3], tv[:3])})
rows = simulate([6, 6], 5, [0, 0.5], 0.7)
times5, tv5 = ["w0", "w1", "w2", "w3", "w4"], [0, 1, 2, 3, 4]
vals = [["%.2f" % v for v in r[2]] for r in rows]
vals[3][2] = ""  # unit u04 misses week 2
cases.append({"name": "two treatments, one unit incomplete", "times": times5, "time_values": tv5,
              "units": [r[0] for r in rows], "groups": [r[1] for r in rows], "values": vals,
              "missing": ["u04"], "expect": analyse(rows, times5, tv5, missing={"u04"})})
with open(os.path.join(HERE, "repeated.json"), "w") as f:
    json.dump({"generator": "testdata/reference/gen_repeated.py", "statsmodels": statsmodels.__version__, "cases": cases}, f, indent=1)
print("wrote repeated.json")
