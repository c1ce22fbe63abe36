#!/usr/bin/python3
"""Golden values of the classic Lomb-Scargle periodogram for dipline's periodogram tests.

Run with Debian's python3-scipy (bookworm: scipy 1.10):
    /usr/bin/python3 classic_reference.py > classic_reference.json

scipy.signal.lombscargle(x, y, freqs, precenter, normalize) takes angular frequencies and
returns P = 1/2 [ (sum y cos w(t-tau))^2 / sum cos^2 w(t-tau) + (same with sin) ]: the
periodogram about zero of Lomb (1976) and Scargle (1982), with no floating mean.
normalize=True multiplies by 2 / dot(y, y), the y given (not the centred one), which is
dipline's Zero-mean power on the same y. precenter=True subtracts the mean of y first.

The series is invented: 300 unevenly spaced times over about 60 days with two gaps, a
sinusoid at 2.7 d, a weaker one at 0.9 d, an offset of 0.25 and a deterministic
pseudo-random scatter, so the file does not depend on any random generator.
"""
import json
import math

import numpy as np
import scipy
from scipy import signal

t, y = [], []
for i in range(360):
    ti = 0.173 * i + 0.05 * math.sin(1.7 * i) + 0.02 * math.cos(0.37 * i * i)
    if 20.0 <= ti < 24.0 or 41.0 <= ti < 43.5:
        continue
    scatter = ((i * 7919) % 101) / 101.0 - 0.5
    t.append(ti)
    y.append(0.8 * math.sin(2 * math.pi * ti / 2.7) + 0.3 * math.cos(2 * math.pi * ti / 0.9 + 0.4)
             + 0.1 * scatter + 0.25)
t, y = np.array(t), np.array(y)
freqs = np.concatenate([np.linspace(0.02, 3.0, 150), [1 / 2.7, 1 / 0.9, 2.5 / 2.7]])
omega = 2 * math.pi * freqs
out = {
    "source": "python3-scipy %s (Debian), scipy.signal.lombscargle; testdata/periodogram/classic_reference.py" % scipy.__version__,
    "time": t.tolist(),
    "value": y.tolist(),
    "freq": freqs.tolist(),
    "raw": signal.lombscargle(t, y, omega).tolist(),
    "normalized": signal.lombscargle(t, y, omega, normalize=True).tolist(),
    "precentered_raw": signal.lombscargle(t, y, omega, precenter=True).tolist(),
}
print(json.dumps(out, indent=1))
