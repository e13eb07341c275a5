#!/usr/bin/python3
"""Generate ANOVA and Tukey HSD reference values for analyze/ tests.

Run offline with Debian's python3-statsmodels and python3-scipy:

    /usr/bin/python3 testdata/reference/gen_anova.py

Writes anova.json beside itself. The data sets are drawn here from a seeded
numpy generator and rounded to two decimals (they are test inputs, not a
scenario); every expected value comes from statsmodels (ols + anova_lm with
sum-to-zero contrasts, Types 1, 2 and 3) or scipy.stats.tukey_hsd.
"""
import json
import os

import numpy as np
import pandas as pd
import scipy
import scipy.stats as st
import statsmodels
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261201)


def make(levels, reps, blocks=0, drop=()):
    """Full factorial of levels (list of level counts), reps per cell (or per
    cell per block), optional blocks, rows in drop removed."""
    rows = []
    names = "PQR"
    for b in range(max(blocks, 1)):
        beff = rng.normal(0, 2)
        for cell in np.ndindex(*levels):
            r = reps if np.isscalar(reps) else reps[int(np.ravel_multi_index(cell, levels))]
            for _ in range(r):
                y = 20 + beff + sum((i + 1) * 0.8 * c for i, c in enumerate(cell)) + rng.normal(0, 1.5)
                row = {names[i]: "%s%d" % (names[i].lower(), c + 1) for i, c in enumerate(cell)}
                row["y"] = "%.2f" % y
                if blocks:
                    row["block"] = "B%d" % (b + 1)
                rows.append(row)
    return [r for i, r in enumerate(rows) if i not in drop]


def anova(rows, nfac, blocked, blockint=False):
    df = pd.DataFrame(rows)
    df["y"] = df["y"].astype(float)
    facs = ["C(%s, Sum)" % "PQR"[i] for i in range(nfac)]
    rhs = "*".join(facs)
    if blockint:
        rhs = "C(block, Sum) + %s + C(block, Sum):(%s)" % (rhs, rhs)
    elif blocked:
        rhs = "C(block, Sum) + " + rhs
    fit = smf.ols("y ~ " + rhs, data=df).fit()
    out = {}
    for typ in (1, 2, 3):
        tab = anova_lm(fit, typ=typ)
        terms = []
        for name, row in tab.iterrows():
            if name in ("Intercept", "Residual"):
                continue
            terms.append({"source": name, "df": float(row["df"]), "ss": float(row["sum_sq"]),
                          "f": float(row["F"]), "p": float(row["PR(>F)"])})
        res = tab.loc["Residual"]
        out[str(typ)] = {"terms": terms, "resid_df": float(res["df"]), "resid_ss": float(res["sum_sq"])}
    # Least-squares (estimated marginal) means of the first factor: the
    # model's design rows averaged over the full grid of the other factors'
    # levels and the blocks, with equal weights.
    import itertools as it
    from patsy import dmatrix
    cols = ["PQR"[i] for i in range(nfac)] + (["block"] if blocked else [])
    levels = {c: sorted(df[c].unique()) for c in cols}
    vecs = []
    for lv in levels["P"]:
        grid = [dict(zip(cols, (lv,) + combo)) for combo in it.product(*[levels[c] for c in cols[1:]])]
        X = np.asarray(dmatrix(fit.model.data.design_info, pd.DataFrame(grid)))
        vecs.append(X.mean(axis=0))
    covp = np.asarray(fit.cov_params())
    params = np.asarray(fit.params)
    out["lsmeans"] = [{"level": lv, "mean": float(v @ params), "se": float(np.sqrt(v @ covp @ v))}
                      for lv, v in zip(levels["P"], vecs)]
    out["lsdiff_se"] = [[float(np.sqrt((a - b) @ covp @ (a - b))) for b in vecs] for a in vecs]
    # Least-squares means of the cells of the first two factors.
    cells = []
    if nfac >= 2:
        for lp in levels["P"]:
            for lq in levels["Q"]:
                grid = [dict(zip(cols, (lp, lq) + combo)) for combo in it.product(*[levels[c] for c in cols[2:]])]
                v = np.asarray(dmatrix(fit.model.data.design_info, pd.DataFrame(grid))).mean(axis=0)
                cells.append({"p": lp, "q": lq, "mean": float(v @ params), "se": float(np.sqrt(v @ covp @ v))})
    out["lscells"] = cells
    # Least-squares means of the cells of every pair of factors (averaged
    # over the third factor and the blocks), and the standard error of the
    # difference of every two cells of a pair: the simple effects compare
    # the cells that share a level of one of the two.
    pairs = []
    for i, j in it.combinations(range(nfac), 2):
        fi, fj = cols[i], cols[j]
        rest = [c for c in cols if c not in (fi, fj)]
        pc, pv = [], []
        for li in levels[fi]:
            for lj in levels[fj]:
                grid = []
                for combo in it.product(*[levels[c] for c in rest]):
                    g = dict(zip(rest, combo))
                    g[fi], g[fj] = li, lj
                    grid.append(g)
                v = np.asarray(dmatrix(fit.model.data.design_info, pd.DataFrame(grid)[cols])).mean(axis=0)
                pc.append({"a": li, "b": lj, "mean": float(v @ params), "se": float(np.sqrt(v @ covp @ v))})
                pv.append(v)
        pairs.append({"factors": [i, j], "cells": pc,
                      "diff_se": [[float(np.sqrt((x - y) @ covp @ (x - y))) for y in pv] for x in pv]})
    out["lspairs"] = pairs
    # A unit alone in its cell (leverage 1) has no studentized residual:
    # statsmodels gives rounding noise or NaN there, written as null.
    def finite(v):
        return float(v) if np.isfinite(v) else None
    out["studentized"] = [finite(v) for v in fit.get_influence().resid_studentized_internal]
    out["deleted"] = [finite(v) for v in fit.get_influence().resid_studentized_external]
    out["leverage"] = [float(v) for v in fit.get_influence().hat_matrix_diag]
    return out, float(fit.rsquared)


def tukey(rows):
    groups = sorted(set(r["P"] for r in rows))
    samples = [[float(r["y"]) for r in rows if r["P"] == g] for g in groups]
    res = st.tukey_hsd(*samples)
    ci = res.confidence_interval(0.95)
    pairs = []
    for i in range(len(groups)):
        for j in range(i + 1, len(groups)):
            pairs.append({"a": groups[i], "b": groups[j], "diff": float(res.statistic[i, j]),
                          "p": float(res.pvalue[i, j]), "lower": float(ci.low[i, j]), "upper": float(ci.high[i, j])})
    return pairs


def case(name, levels, reps, blocks=0, drop=(), with_tukey=False, blockint=False):
    rows = make(levels, reps, blocks, drop)
    types, r2 = anova(rows, len(levels), bool(blocks), blockint)
    stud, lev, dele = types.pop("studentized"), types.pop("leverage"), types.pop("deleted")
    lsm, lsd, lsc = types.pop("lsmeans"), types.pop("lsdiff_se"), types.pop("lscells")
    lsp = types.pop("lspairs")
    c = {"name": name, "factors": len(levels), "blocked": bool(blocks), "block_interaction": blockint,
         "rows": rows, "anova": types, "r2": r2,
         "studentized": stud, "leverage": lev, "deleted": dele, "lsmeans": lsm, "lsdiff_se": lsd, "lscells": lsc,
         "lspairs": lsp}
    if with_tukey:
        c["tukey"] = tukey(rows)
    return c


def main():
    cases = [
        case("one-way unbalanced", [4], [5, 7, 6, 8], with_tukey=True),
        case("one-way balanced k=6", [6], 4, with_tukey=True),
        case("rcbd 5x4", [5], 1, blocks=4),
        case("rcbd 5x4 one missing plot", [5], 1, blocks=4, drop=(7,)),
        case("factorial 2x3 balanced", [2, 3], 3),
        case("factorial 2x3 unbalanced", [2, 3], [2, 3, 4, 3, 2, 5]),
        case("factorial 2x2x2 unbalanced", [2, 2, 2], [2, 3, 2, 4, 3, 2, 3, 2]),
        case("factorial 2x3 in 3 blocks", [2, 3], 1, blocks=3),
        case("factorial 2x3 in 4 blocks, two missing", [2, 3], 1, blocks=4, drop=(3, 17)),
        case("generalised rcbd 3 treatments, 3 blocks, 2 reps", [3], 2, blocks=3, blockint=True),
        case("generalised rcbd, one missing", [3], 2, blocks=3, drop=(5,), blockint=True),
    ]
    meta = {"source": "statsmodels %s (ols, anova_lm, Sum contrasts), scipy %s (tukey_hsd); generated by gen_anova.py"
            % (statsmodels.__version__, scipy.__version__), "cases": cases}
    with open(os.path.join(HERE, "anova.json"), "w") as f:
        json.dump(meta, f, indent=1)
    print("anova: %d cases" % len(cases))


if __name__ == "__main__":
    main()
