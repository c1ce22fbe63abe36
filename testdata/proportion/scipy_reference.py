#!/usr/bin/python3
"""Golden values for dipline's proportion package (steps/internal/proportion).

Run with Debian's python3-scipy and python3-statsmodels:
    /usr/bin/python3 scipy_reference.py > scipy_reference.json

Binomial intervals, for k successes in n trials at two-sided level L (alpha = 1 - L):
  - wilson_scipy: the closed form of Wilson (1927) with z = scipy.stats.norm.ppf(1 - alpha/2).
  - wilson_statsmodels: statsmodels.stats.proportion.proportion_confint(k, n, alpha,
    method="wilson"), the same formula written independently.
  - jeffreys_equal_tailed: scipy.stats.beta.ppf(alpha/2, k+1/2, n-k+1/2) and
    scipy.stats.beta.ppf(1 - alpha/2, k+1/2, n-k+1/2), with no special case at the ends.
  - jeffreys_statsmodels: proportion_confint(..., method="jeffreys"), which in statsmodels
    0.13 is scipy.stats.beta.interval(1 - alpha, k+1/2, n-k+1/2): equal tails, and it does
    NOT apply the end convention of Brown, Cai & DasGupta (2001). The Go tests apply that
    convention themselves (lower = 0 at k = 0, upper = 1 at k = n) and compare every
    other end with these values.
Poisson limits after Gehrels (1986, ApJ 303, 336), for n observed events at the single-
sided level CL = scipy.stats.norm.cdf(S):
  - upper = scipy.stats.chi2.ppf(CL, 2n+2) / 2
  - lower = scipy.stats.chi2.ppf(1 - CL, 2n) / 2, taken as 0 at n = 0, where 1 - CL is
    computed as scipy.stats.norm.sf(S) to keep its digits.
"""
import json
import math

import scipy
import statsmodels
from scipy import stats
from statsmodels.stats.proportion import proportion_confint

ONE_SIGMA = math.erf(1 / math.sqrt(2))
LEVELS = [ONE_SIGMA, 0.90, 0.95, 0.9973]
NS = [1, 2, 3, 5, 10, 20, 40, 100, 1000]


def ks_for(n):
    ks = {0, 1, n // 3, n // 2, n - 1, n}
    if n == 1000:
        ks |= {3, 997, 271}
    return sorted(k for k in ks if 0 <= k <= n)


def wilson(k, n, level):
    z = stats.norm.ppf(1 - (1 - level) / 2)
    p = k / n
    centre = (k + z * z / 2) / (n + z * z)
    half = z * math.sqrt(n) / (n + z * z) * math.sqrt(p * (1 - p) + z * z / (4 * n))
    return centre - half, centre + half


binomial = []
for n in NS:
    for k in ks_for(n):
        for level in LEVELS:
            alpha = 1 - level
            a, b = k + 0.5, n - k + 0.5
            ws = wilson(k, n, level)
            wm = proportion_confint(k, n, alpha=alpha, method="wilson")
            jm = proportion_confint(k, n, alpha=alpha, method="jeffreys")
            binomial.append({
                "k": k, "n": n, "level": level,
                "wilson_scipy": [float(ws[0]), float(ws[1])],
                "wilson_statsmodels": [float(wm[0]), float(wm[1])],
                "jeffreys_equal_tailed": [float(stats.beta.ppf(alpha / 2, a, b)),
                                          float(stats.beta.ppf(1 - alpha / 2, a, b))],
                "jeffreys_statsmodels": [float(jm[0]), float(jm[1])],
            })

poisson = []
for s in [1, 2, 3]:
    cl = stats.norm.cdf(s)
    tail = stats.norm.sf(s)
    for n in list(range(0, 21)) + [50, 100]:
        lower = 0.0 if n == 0 else float(stats.chi2.ppf(tail, 2 * n) / 2)
        poisson.append({
            "n": n, "s": s, "cl": float(cl),
            "upper": float(stats.chi2.ppf(cl, 2 * n + 2) / 2),
            "lower": lower,
        })

out = {
    "source": ("python3-scipy %s and python3-statsmodels %s (Debian): scipy.stats.norm.ppf, "
               "scipy.stats.beta.ppf, scipy.stats.chi2.ppf, "
               "statsmodels.stats.proportion.proportion_confint (methods wilson, jeffreys); "
               "testdata/proportion/scipy_reference.py") % (scipy.__version__, statsmodels.__version__),
    "scipy_version": scipy.__version__,
    "statsmodels_version": statsmodels.__version__,
    "one_sigma": ONE_SIGMA,
    "binomial": binomial,
    "poisson": poisson,
}
print(json.dumps(out, indent=1))
