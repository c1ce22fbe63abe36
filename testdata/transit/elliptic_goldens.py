#!/usr/bin/python3
"""Golden values of complete elliptic integrals for dipline's transit package tests.

Run with Debian's python3-scipy: /usr/bin/python3 elliptic_goldens.py > elliptic_goldens.json
scipy uses the parameter m = k^2; m1 = 1 - m is given so that tests can use the
complementary modulus kc = sqrt(m1) without rounding near m = 1.
Pi(n, m) = R_F(0, 1-m, 1) + (n/3) R_J(0, 1-m, 1, 1-n) (Carlson 1995), principal value for n > 1.
"""
import json
import scipy
from scipy import special as sp

m1s = [2.0, 1.5, 1.0, 0.9, 0.75, 0.5, 0.3, 0.1, 1e-2, 1e-4, 1e-8, 1e-12, 1e-16]
ns = [-1e6, -50.0, -3.0, -0.5, 0.0, 0.3, 0.9, 1.5, 4.0]
rows = []
for m1 in m1s:
    m = 1.0 - m1
    row = {"m1": m1, "K": float(sp.ellipkm1(m1)), "E": float(sp.ellipe(m)), "Pi": []}
    for n in ns:
        pi = float(sp.elliprf(0.0, m1, 1.0) + n / 3.0 * sp.elliprj(0.0, m1, 1.0, 1.0 - n))
        row["Pi"].append({"n": n, "Pi": pi})
    rows.append(row)
print(json.dumps({"source": "python3-scipy %s (Debian), scipy.special ellipkm1, ellipe, elliprf, elliprj" % scipy.__version__,
                  "rows": rows}, indent=1))
