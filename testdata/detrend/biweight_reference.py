#!/usr/bin/python3
"""Independent reference values for dipline's detrend step.

Written from the definition of Tukey's biweight location (Mosteller & Tukey 1977, "Data
Analysis and Regression"), not from dipline's Go code:

    M0 = median(x);  S = c * median(|x - M0|)        (S held fixed)
    u_i = (x_i - M) / S;  w_i = (1 - u_i^2)^2 if |u_i| < 1 else 0
    M <- sum(w_i x_i) / sum(w_i), repeated until M stops changing
    (if S == 0 the location is the median)

and the time-windowed filter: for every point, the location of the fluxes whose times lie
within +-span/2 of it (both ends included), or null when fewer than min_points remain.
The running median is computed the same way with numpy.median.

Run:  /usr/bin/python3 testdata/detrend/biweight_reference.py > testdata/detrend/biweight_reference.json
Needs only numpy; the output names the numpy version used.
"""
import json
import sys

import numpy as np


def biweight(x, c):
    x = np.asarray(x, dtype=float)
    m = np.median(x)
    s = c * np.median(np.abs(x - m))
    if s == 0:
        return float(m)
    for _ in range(1000):
        u = (x - m) / s
        w = np.where(np.abs(u) < 1.0, (1.0 - u * u) ** 2, 0.0)
        new = np.sum(w * x) / np.sum(w)
        done = abs(new - m) <= 1e-15 * s
        m = new
        if done:
            break
    return float(m)


def windowed(t, f, span, min_points, est):
    h = span / 2
    out = []
    for ti in t:
        sel = (t >= ti - h) & (t <= ti + h)
        if sel.sum() < min_points:
            out.append(None)
        else:
            out.append(float(est(f[sel])))
    return out


def main():
    rng = np.random.default_rng(20190611)
    c = 5.0

    # Plain locations: normal samples with and without outliers, odd and even sizes, and a
    # sample whose MAD is zero.
    locations = []
    for n, n_out in [(7, 0), (8, 1), (25, 3), (50, 0), (101, 10)]:
        x = rng.normal(1.0, 1e-3, n)
        if n_out:
            x[rng.choice(n, n_out, replace=False)] += rng.choice([-1, 1], n_out) * 0.02
        locations.append({"x": [float(v) for v in x], "c": c, "location": biweight(x, c)})
    for cc in (4.0, 6.0, 9.0):
        x = rng.standard_t(3, 40) * 1e-3 + 1.0
        locations.append({"x": [float(v) for v in x], "c": cc, "location": biweight(x, cc)})
    x = np.array([1.0, 1.0, 1.0, 1.0, 1.2, 0.7, 1.0])
    locations.append({"x": [float(v) for v in x], "c": c, "location": biweight(x, c)})

    # A windowed series: irregular cadence near 29 min, a thin stretch where windows are short
    # of points, a slow wave, white noise and a few outliers of either sign.
    n = 320
    t = np.cumsum(rng.uniform(0.015, 0.025, n))
    keep = np.ones(n, dtype=bool)
    keep[150:170] = False
    keep[150:170:7] = True
    t = t[keep]
    m = len(t)
    f = 1.0 + 0.003 * np.sin(2 * np.pi * t / 1.7) + rng.normal(0.0, 4e-4, m)
    idx = rng.choice(m, 10, replace=False)
    f[idx] += rng.choice([-1, 1], 10) * 5e-3
    span, min_points = 0.3, 5

    json.dump({
        "source": "testdata/detrend/biweight_reference.py",
        "numpy_version": np.__version__,
        "python_version": sys.version.split()[0],
        "locations": locations,
        "series": {
            "c": c, "span": span, "min_points": min_points,
            "time": [float(v) for v in t],
            "flux": [float(v) for v in f],
            "biweight": windowed(t, f, span, min_points, lambda v: biweight(v, c)),
            "median": windowed(t, f, span, min_points, np.median),
        },
    }, sys.stdout, indent=1)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
