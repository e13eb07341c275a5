#!/usr/bin/python3
"""Peer side of allot's side-by-side benchmark (bench/run.sh).

Runs the same analyses as the allot commands timed in run.sh, with
general-purpose Python libraries (Debian python3-pandas, python3-scipy,
python3-statsmodels; openpyxl for the workbook check when installed):

  oneway   pandas.read_csv + scipy.stats.f_oneway
  factorial pandas.read_csv + statsmodels ols(sum-to-zero coding) + anova_lm(typ=3)
            + pairwise_tukeyhsd on each factor
  tukey    pandas.read_csv + ols + anova_lm + pairwise_tukeyhsd (k = 10)
  check    openpyxl read-only pass over the Entry sheet

Usage: /usr/bin/python3 bench/peer.py KIND FILE
Prints the elapsed seconds on stderr; the process's peak memory is taken
by /usr/bin/time in run.sh.
"""
import sys
import time


def main():
    kind, path = sys.argv[1], sys.argv[2]
    t0 = time.perf_counter()
    if kind == "check":
        import openpyxl
        wb = openpyxl.load_workbook(path, read_only=True)
        n = 0
        for row in wb["Entry"].iter_rows(values_only=True):
            n += 1
        print(n, "rows")
    else:
        import pandas as pd
        df = pd.read_csv(path)
        if kind == "oneway":
            from scipy import stats
            groups = [g["y"].to_numpy() for _, g in df.groupby("f1")]
            print(stats.f_oneway(*groups))
        else:
            import statsmodels.formula.api as smf
            from statsmodels.stats.anova import anova_lm
            from statsmodels.stats.multicomp import pairwise_tukeyhsd
            factors = [c for c in df.columns if c.startswith("f")]
            rhs = " * ".join("C(%s, Sum)" % f for f in factors)
            if "block" in df.columns:
                rhs = "C(block, Sum) + " + rhs
            fit = smf.ols("y ~ " + rhs, data=df).fit()
            print(anova_lm(fit, typ=3))
            for f in factors:
                print(pairwise_tukeyhsd(df["y"], df[f]).summary().as_text()[:200])
    print("%.3f s" % (time.perf_counter() - t0), file=sys.stderr)


if __name__ == "__main__":
    main()
