#!/usr/bin/python3
"""Generate exact sample sizes and powers for power/ tests.

Run offline with Debian's python3-scipy:

    /usr/bin/python3 testdata/reference/gen_power.py

Writes power.tsv beside itself. For each case the script evaluates the exact
power with scipy.stats (ncf for F tests; nct in both tails for t tests) at
every n from 2 upward and records the smallest n whose power reaches the
target, with the power at that n and at n - 1.

Kinds: crd and rcbd (F test of a term), ratio (unequal allocation), ttest,
control and pairs (Bonferroni-adjusted t comparisons). Pass 'ttest' or
'compare' to regenerate only those rows.

Columns: kind, levels (comma list; the tested term's factors are marked *),
alpha, target, effect (f, or d for t tests), extra (ratio:sides for t tests),
n, power(n), power(n-1) (nan when n = 2).
"""
import itertools
import math
import os
import sys

import numpy as np
import scipy
import scipy.stats as st

HERE = os.path.dirname(os.path.abspath(__file__))
NS = np.arange(2, 20001)


def f_power(df1, df2, lam, alpha):
    crit = st.f.ppf(1 - alpha, df1, df2)
    return st.ncf.sf(crit, df1, df2, lam)


def solve(powers, target):
    idx = int(np.argmax(powers >= target))
    assert powers[idx] >= target
    prev = powers[idx - 1] if idx > 0 else float("nan")
    return int(NS[idx]), float(powers[idx]), float(prev)


def factorial_rows():
    rows = []
    designs = [((3,), (0,)), ((2,), (0,))]
    designs += [((k,), (0,)) for k in (4, 5, 6, 8, 10)]
    for levels in ((2, 3), (3, 4), (2, 2, 2), (2, 3, 4)):
        for r in range(1, len(levels) + 1):
            for term in itertools.combinations(range(len(levels)), r):
                designs.append((levels, term))
    for levels, term in designs:
        cells = int(np.prod(levels))
        df1 = int(np.prod([levels[i] - 1 for i in term]))
        for blocked in (False, True):
            if blocked and len(levels) == 1 and levels[0] in (8, 10):
                continue
            for f in (0.1, 0.25, 0.4, 0.8):
                for alpha in (0.01, 0.05, 0.1):
                    for target in (0.8, 0.9, 0.95):
                        if len(levels) > 1 and (alpha != 0.05 or f == 0.1):
                            continue
                        if blocked:
                            df2 = (cells - 1) * (NS - 1)
                        else:
                            df2 = cells * (NS - 1)
                        lam = f * f * cells * NS
                        n, p, pm = solve(f_power(df1, df2, lam, alpha), target)
                        lv = ",".join(("*" if i in term else "") + str(l) for i, l in enumerate(levels))
                        rows.append(("rcbd" if blocked else "crd", lv, alpha, target, f, "-", n, p, pm))
    return rows


def ratio_rows():
    rows = []
    for ratios in ((2, 1, 1), (2, 1, 1, 1), (1, 1, 3)):
        k = len(ratios)
        means = np.linspace(0, 1, k)
        for alpha in (0.05,):
            for target in (0.8, 0.9):
                for sd in (0.8, 1.5):
                    sizes = np.ceil(np.outer(NS, ratios) - 1e-9)
                    total = sizes.sum(axis=1)
                    mbar = (sizes * means).sum(axis=1) / total
                    lam = (sizes * (means - mbar[:, None]) ** 2).sum(axis=1) / sd ** 2
                    n, p, pm = solve(f_power(k - 1, total - k, lam, alpha), target)
                    lv = ",".join("%g" % r for r in ratios)
                    rows.append(("ratio", lv, alpha, target, sd, "means=0..1", n, p, pm))
    return rows


def t_rows():
    rows = []
    for d in (0.2, 0.5, 0.8, 1.2):
        for ratio in (1, 2):
            for sides in (1, 2):
                for alpha in (0.01, 0.05):
                    for target in (0.8, 0.9):
                        n1 = NS
                        n2 = np.ceil(NS * ratio - 1e-9)
                        df = n1 + n2 - 2
                        delta = d * np.sqrt(n1 * n2 / (n1 + n2))
                        # Critical t from the F quantile: scipy 1.10's t.ppf
                        # (stdtrit) errs by about 1e-9 relative (t.ppf(.995, 74)
                        # = 2.6439128678, mpmath 2.6439128717), f.ppf does not.
                        if sides == 1:
                            crit = np.sqrt(st.f.ppf(1 - 2 * alpha, 1, df))
                            pw = st.nct.sf(crit, df, delta)
                        else:
                            crit = np.sqrt(st.f.ppf(1 - alpha, 1, df))
                            pw = st.nct.sf(crit, df, delta) + st.nct.cdf(-crit, df, delta)
                        n, p, pm = solve(pw, target)
                        rows.append(("ttest", "2", alpha, target, d, "%g:%d" % (ratio, sides), n, p, pm))
    return rows


def compare_rows():
    """Bonferroni-adjusted t comparisons, equal groups: each of k-1
    treatments against a control, or all k(k-1)/2 pairs; error df k(n-1)."""
    rows = []
    for k in (3, 4, 6):
        for allpairs in (False, True):
            m = k * (k - 1) // 2 if allpairs else k - 1
            for d in (0.8, 1.5):
                for sides in (1, 2):
                    alpha, target = 0.05, 0.8
                    df = k * (NS - 1)
                    delta = d / np.sqrt(2.0 / NS)
                    a = alpha / m
                    if sides == 1:
                        crit = np.sqrt(st.f.ppf(1 - 2 * a, 1, df))
                        pw = st.nct.sf(crit, df, delta)
                    else:
                        crit = np.sqrt(st.f.ppf(1 - a, 1, df))
                        pw = st.nct.sf(crit, df, delta) + st.nct.cdf(-crit, df, delta)
                    n, p, pm = solve(pw, target)
                    rows.append(("pairs" if allpairs else "control", str(k), alpha, target, d, "1:%d" % sides, n, p, pm))
    return rows


def main():
    np.seterr(all="ignore")
    path = os.path.join(HERE, "power.tsv")
    partial = {"ttest": (("ttest",), t_rows), "compare": (("control", "pairs"), compare_rows)}
    if sys.argv[1:2] and sys.argv[1] in partial:
        # Regenerate only one kind of rows, keeping the others.
        kinds, make = partial[sys.argv[1]]
        with open(path) as f:
            keep = [l.rstrip("\n").split("\t") for l in f
                    if not l.startswith("#") and l.split("\t")[0] not in kinds]
        rows = [tuple(r[:2]) + (float(r[2]), float(r[3]), float(r[4]), r[5], int(r[6]), float(r[7]), float(r[8]))
                for r in keep] + make()
    else:
        rows = factorial_rows() + ratio_rows() + t_rows() + compare_rows()
    with open(path, "w") as f:
        f.write("# exact sample size: kind levels alpha target effect extra n power(n) power(n-1)\n")
        f.write("# source: scipy.stats %s (ncf, nct), exhaustive search over n; generated by gen_power.py\n"
                % scipy.__version__)
        for r in rows:
            f.write("%s\t%s\t%g\t%g\t%g\t%s\t%d\t%.15g\t%.15g\n" % r)
    print("power: %d rows" % len(rows))


if __name__ == "__main__":
    main()
