#!/usr/bin/python3
"""Reference values for the planning cases of power/request_test.go.

Run offline with Debian's python3-scipy:

    /usr/bin/python3 testdata/reference/gen_plan_checks.py

Writes plan_checks.json beside itself. Every value is computed here from
first principles with numpy/scipy, independently of allot's algebra:

- factorial: the tested term's component of the cell means is the
  projection of the mean vector onto the term's subspace, the Kronecker
  product of centring matrices (I - J/L) for the term's factors and
  averaging matrices (J/L) for the others; lambda = n * |P m|^2 / sd^2.
  Power from scipy.stats.ncf at the central F quantile.
- lfc: the least favourable configuration for unequal groups is found by
  numerical minimisation (scipy.optimize.minimize, L-BFGS-B) of
  sum n_i (mu_i - mubar)^2 over every placement with two means D apart
  and the others free inside [0, D], for every pair; the smallest n whose
  power reaches the target is found by exhaustive search.
- detect: the detectable lambda at n solves ncf.sf(crit, df1, df2, lambda)
  = target (scipy.optimize.brentq); the detectable difference follows from
  the numerically minimised between-groups sum of squares at D = 1.
- weighted: means with non-integer ratios, group sizes ceil(n * r_i),
  weighted by those sizes.
- tukey: all pairs at Tukey's critical value
  scipy.stats.studentized_range.ppf(1 - alpha, k, df) / sqrt(2), power of
  one pair from scipy.stats.nct in both tails.
"""
import json
import math
import os

import numpy as np
import scipy
import scipy.optimize as so
import scipy.stats as st

HERE = os.path.dirname(os.path.abspath(__file__))


def f_power(df1, df2, lam, alpha):
    return float(st.ncf.sf(st.f.ppf(1 - alpha, df1, df2), df1, df2, lam))


def projector(levels, term):
    p = np.ones((1, 1))
    for i, l in enumerate(levels):
        j = np.ones((l, l)) / l
        p = np.kron(p, (np.eye(l) - j) if i in term else j)
    return p


def factorial_cases():
    rng = np.random.default_rng(20261201)
    out = []
    fixed = [((2, 2), (0, 1), [10, 10, 10, 14], 2.0, 10, False),
             ((2, 2), (0,), [10, 10, 10, 14], 2.0, 10, False),
             ((2, 2), (1,), [10, 10, 10, 14], 2.0, 10, True)]
    for levels, term, means, sd, n, blocked in fixed:
        out.append(factorial_case(levels, term, np.array(means, float), sd, n, blocked))
    for _ in range(12):
        nf = int(rng.integers(2, 4))
        levels = tuple(int(x) for x in rng.integers(2, 5, nf))
        r = int(rng.integers(1, nf + 1))
        term = tuple(sorted(rng.choice(nf, r, replace=False).tolist()))
        means = np.round(rng.normal(10, 2, int(np.prod(levels))), 2)
        out.append(factorial_case(levels, term, means, float(rng.uniform(1, 3)), int(rng.integers(2, 9)), bool(rng.integers(0, 2))))
    return out


def factorial_case(levels, term, means, sd, n, blocked):
    cells = int(np.prod(levels))
    comp = projector(levels, term) @ means
    lam = n * float(comp @ comp) / sd ** 2
    df1 = int(np.prod([levels[i] - 1 for i in term]))
    df2 = (cells - 1) * (n - 1) if blocked else cells * (n - 1)
    return {"kind": "factorial", "levels": list(levels), "term": list(term), "means": means.tolist(), "sd": sd, "n": n,
            "blocked": blocked, "lambda": lam, "df1": df1, "df2": df2, "power": f_power(df1, df2, lam, 0.05)}


def lfc_ss(sizes, d):
    """min over placements with range d of sum n_i (mu_i - mubar)^2."""
    k = len(sizes)
    w = np.asarray(sizes, float)
    best = math.inf
    for a in range(k):
        for b in range(k):
            if a == b:
                continue
            others = [i for i in range(k) if i not in (a, b)]

            def ss(x):
                mu = np.zeros(k)
                mu[b] = d
                mu[others] = x
                m = (w * mu).sum() / w.sum()
                return float((w * (mu - m) ** 2).sum())
            if others:
                r = so.minimize(ss, np.full(len(others), d / 2), bounds=[(0, d)] * len(others), method="L-BFGS-B",
                                options={"ftol": 1e-15, "gtol": 1e-12})
                v = r.fun
            else:
                v = ss(np.array([]))
            best = min(best, v)
    return best


def sizes_at(n, ratios):
    return [int(math.ceil(n * r - 1e-9)) for r in ratios]


def lfc_cases():
    out = []
    for ratios, d, sd, target in (((2, 1, 1), 2.0, 1.0, 0.8), ((1, 3), 1.0, 1.0, 0.8), ((1, 1, 2, 3), 1.5, 1.2, 0.9),
                                  ((1, 1, 1), 1.0, 1.0, 0.8), ((1.5, 1, 1), 1.0, 0.8, 0.8)):
        k = len(ratios)
        prev = float("nan")
        for n in range(2, 2000):
            sz = sizes_at(n, ratios)
            lam = lfc_ss(sz, d) / sd ** 2
            p = f_power(k - 1, sum(sz) - k, lam, 0.05)
            if p >= target:
                out.append({"kind": "lfc", "ratios": list(ratios), "diff": d, "sd": sd, "target": target, "n": n,
                            "lambda": lam, "power": p, "power_prev": prev})
                break
            prev = p
    return out


def detect_cases():
    out = []
    for ratios, n, sd in (((1, 3), 7, 1.0), ((2, 1, 1), 10, 2.0), ((1, 1, 1), 8, 1.0)):
        k = len(ratios)
        sz = sizes_at(n, ratios)
        df2 = sum(sz) - k
        crit = st.f.ppf(0.95, k - 1, df2)
        lam = so.brentq(lambda l: st.ncf.sf(crit, k - 1, df2, l) - 0.8, 1e-6, 1e4, xtol=1e-13)
        dd = sd * math.sqrt(lam / lfc_ss(sz, 1.0))
        out.append({"kind": "detect", "ratios": list(ratios), "n": n, "sd": sd, "lambda": lam, "detectable_difference": dd})
    return out


def weighted_cases():
    out = []
    for ratios, means, sd in (((1.5, 1, 1), (10, 12, 13), 3.0), ((1, 2.5), (0, 1), 1.2), ((0.7, 1, 1.3, 1), (5, 6, 6, 8), 2.0)):
        k = len(ratios)
        prev = float("nan")
        for n in range(2, 5000):
            sz = np.array(sizes_at(n, ratios), float)
            m = np.array(means, float)
            mbar = (sz * m).sum() / sz.sum()
            lam = float((sz * (m - mbar) ** 2).sum()) / sd ** 2
            p = f_power(k - 1, sz.sum() - k, lam, 0.05)
            if p >= 0.8:
                out.append({"kind": "weighted", "ratios": list(ratios), "means": list(means), "sd": sd, "n": n,
                            "lambda": lam, "power": p, "power_prev": prev})
                break
            prev = p
    return out


def tukey_cases():
    out = []
    for k, d, sd in ((3, 1.0, 1.0), (4, 2.0, 1.5), (5, 1.0, 0.8)):
        prev = float("nan")
        for n in range(2, 500):
            df = k * (n - 1)
            crit = st.studentized_range.ppf(0.95, k, df) / math.sqrt(2)
            delta = (d / sd) / math.sqrt(2.0 / n)
            p = float(st.nct.sf(crit, df, delta) + st.nct.cdf(-crit, df, delta))
            if p >= 0.8:
                out.append({"kind": "tukey", "groups": k, "diff": d, "sd": sd, "n": n, "crit": float(crit), "power": p, "power_prev": prev})
                break
            prev = p
    return out


def main():
    cases = factorial_cases() + lfc_cases() + detect_cases() + weighted_cases() + tukey_cases()
    doc = {"source": "scipy %s, numpy %s; generated by gen_plan_checks.py" % (scipy.__version__, np.__version__), "cases": cases}
    with open(os.path.join(HERE, "plan_checks.json"), "w") as f:
        json.dump(doc, f, indent=1)
    print("plan checks: %d cases" % len(cases))


if __name__ == "__main__":
    main()
