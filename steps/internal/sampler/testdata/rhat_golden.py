#!/usr/bin/python3
"""Golden values for diagnostics_test.go, computed with numpy and scipy (Debian python3-scipy):
classic split R-hat (Gelman et al. 2013, BDA3 §11.4) and the rank-normalised split R-hat of
Vehtari et al. (2021, Bayesian Analysis 16, 667), written from the paper's formulas with
scipy.stats.rankdata (average ties) and scipy.special.ndtri as the normal quantile.
Run: /usr/bin/python3 testdata/rhat_golden.py
"""
import numpy as np
from scipy.stats import rankdata
from scipy.special import ndtri

chains = np.array([
    [0.1, 1.3, -0.4, 2.2, 0.9, 0.0, 1.1, -1.7, 0.5],
    [1.0, 2.5, 1.9, 3.3, 0.8, 2.2, 1.6, 2.9, 1.0],
    [-0.5, 0.2, 0.0, 0.7, -1.2, 0.9, 0.3, 0.1, -0.8],
])


def split(c):
    n = c.shape[1] // 2
    return np.vstack([c[:, :n], c[:, -n:]])


def rhat(c):
    s = split(c)
    n = s.shape[1]
    W = s.var(axis=1, ddof=1).mean()
    B_over_n = s.mean(axis=1).var(ddof=1)
    return np.sqrt(((n - 1) / n * W + B_over_n) / W)


def ranknorm(c):
    r = rankdata(c, method="average").reshape(c.shape)
    return ndtri((r - 0.375) / (c.size + 0.25))


print("split R-hat          %.15f" % rhat(chains))
folded = np.abs(chains - np.median(chains))
print("rank-normalised R-hat %.15f" % max(rhat(ranknorm(chains)), rhat(ranknorm(folded))))
