#!/usr/bin/python3
"""Upper-tail reference values at 30 digits (mpmath), for prob's direct
tails: central F (incomplete beta), the studentized range and Dunnett's
many-to-one statistic (product correlations rho_ij = lam_i lam_j).

Writes tails_mpmath.tsv: dist, a, b, x, sides, lam, value.
  F:       a = d1, b = d2, value = P(F > x)          (mpmath betainc, regularized)
  range:   a = K,  b = nu (inf allowed), value = P(Q > x)
  dunnett: a = number of treatments, b = nu, lam = common lambda,
           value = P(max T > x) (sides 1) or P(max |T| > x) (sides 2)
The range and Dunnett integrals are written directly as upper tails
(1 - W written as K*int phi Phi^(K-1) (-expm1((K-1) log1p(-Phi(z-w)/Phi(z)))),
and 1 - prod P_i as -expm1(sum log1p(-Q_i))), so they keep relative accuracy
even at 20 digits; the outer integral over S = sqrt(chi2_nu/nu) is done
by mpmath.quad on [0, inf) split at the mode.
Run: /usr/bin/python3 testdata/reference/gen_tails.py  (about 2 minutes)
"""
import mpmath as mp
import os

mp.mp.dps = 30
OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "tails_mpmath.tsv")


def fsf(x, d1, d2):
    x, d1, d2 = mp.mpf(x), mp.mpf(d1), mp.mpf(d2)
    return mp.betainc(d2 / 2, d1 / 2, 0, d2 / (d2 + d1 * x), regularized=True)


def Phi(z):
    return mp.ncdf(z)


def range_sf_known(w, k):
    # 1 - W(w) for the range of k standard normals
    # a^(k-1) - (a-b)^(k-1) without cancellation: a^(k-1) * -expm1((k-1) log1p(-b/a))
    def f(z):
        a, b = Phi(z), Phi(z - w)
        return mp.npdf(z) * a ** (k - 1) * -mp.expm1((k - 1) * mp.log1p(-b / a))
    return k * mp.quad(f, [-mp.inf, -5, 0, w / 2, w, mp.inf])


def s_pdf(s, nu):
    nu = mp.mpf(nu)
    return mp.exp(mp.log(2 * nu) + (nu / 2 - 1) * mp.log(nu) - nu / 2 * mp.log(2) - mp.loggamma(nu / 2)
                  + (nu - 1) * mp.log(s) - nu * s * s / 2)


def outer(h, nu):
    g = lambda s: s_pdf(s, nu) * h(s)
    w = 1 / mp.sqrt(nu)
    return mp.quad(g, [0, 0.25, 0.5, max(0.55, 1 - 6 * w), 1, 1 + 6 * w, 3, mp.inf])


def range_sf(q, k, nu):
    if nu == "inf":
        return range_sf_known(mp.mpf(q), k)
    mp.mp.dps = 20
    v = outer(lambda s: range_sf_known(mp.mpf(q) * s, k), nu)
    mp.mp.dps = 30
    return v


def dunnett_sf_known(w, p, lam, sides):
    lam = mp.mpf(lam)
    r = mp.sqrt(1 - lam * lam)

    # 1 - prod P_i = -expm1(p log1p(-Q)), Q = 1 - P from the tails
    def f(z):
        q = mp.ncdf(-(lam * z + w) / r)
        if sides == 2:
            q += mp.ncdf((lam * z - w) / r)
        return mp.npdf(z) * -mp.expm1(p * mp.log1p(-q))
    return mp.quad(f, [-mp.inf, -w / lam if lam else -1, 0, w / lam if lam else 1, mp.inf])


def dunnett_sf(c, p, nu, lam, sides):
    if nu == "inf":
        return dunnett_sf_known(mp.mpf(c), p, lam, sides)
    mp.mp.dps = 20
    v = outer(lambda s: dunnett_sf_known(mp.mpf(c) * s, p, lam, sides), nu)
    mp.mp.dps = 30
    return v


rows = []
for d1, d2, x in [(3, 1000, 35.4), (3, 1000, 2.0), (1, 10, 4.96), (2, 27, 50.0), (4, 60, 120.0),
                  (1, 1e5, 900.0), (10, 5, 3.0), (5, 200, 400.0)]:
    rows.append(("F", d1, d2, x, 0, 0, fsf(x, d1, d2)))
for k, nu, q in [(3, "inf", 3.5), (3, "inf", 8.0), (5, "inf", 10.0), (4, 1000, 9.0), (3, 20, 3.58),
                 (5, 60, 8.0), (3, 1000, 12.0)]:
    rows.append(("range", k, nu, q, 0, 0, range_sf(q, k, nu)))
lam = float(mp.sqrt(0.5))
for p, nu, c, sides in [(3, "inf", 2.35, 2), (3, "inf", 7.0, 2), (4, "inf", 6.0, 1), (3, 1000, 8.0, 2),
                        (2, 30, 2.3, 1), (3, 60, 6.5, 2)]:
    rows.append(("dunnett", p, nu, c, sides, lam, dunnett_sf(c, p, nu, lam, sides)))

with open(OUT, "w") as f:
    f.write("# upper tails at 30 digits from mpmath %s; made by gen_tails.py\n" % mp.__version__)
    f.write("dist\ta\tb\tx\tsides\tlam\tvalue\n")
    for r in rows:
        f.write("\t".join(str(v) for v in r[:6]) + "\t" + mp.nstr(r[6], 20) + "\n")
print(open(OUT).read())
