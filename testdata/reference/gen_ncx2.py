#!/usr/bin/python3
"""Noncentral chi-squared survival values for prob.NoncentralChiSquared.

    /usr/bin/python3 testdata/reference/gen_ncx2.py

Writes ncx2.tsv beside itself: k, lambda, x, scipy.stats.ncx2.sf (scipy 1.10,
Boost.Math's noncentral chi-squared), for x at several quantiles.
"""
import os

import scipy.stats as st

HERE = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(HERE, "ncx2.tsv"), "w") as f:
    f.write("# k\tlambda\tx\tsf  (scipy.stats.ncx2.sf, scipy %s)\n" % __import__("scipy").__version__)
    for k in (1, 2, 3, 5, 10, 20):
        for lam in (0.5, 2, 7.5, 20, 60, 150, 500):
            for q in (0.01, 0.2, 0.5, 0.8, 0.99):
                x = float(st.ncx2.ppf(q, k, lam))
                f.write("%d\t%r\t%r\t%r\n" % (k, lam, x, float(st.ncx2.sf(x, k, lam))))
print("wrote ncx2.tsv")
