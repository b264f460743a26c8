#!/usr/bin/env python3
"""Reference values for the two-parameter fold continuation (tests/fold_curves.rs),
by SciPy.

Positive autoregulation with basal production b and maximal rate p:
    du/dt = b + p u^3/(1 + u^3) - u.
- The cusp, where the two fold curves in (b, p) meet: F = F_u = F_uu = 0,
  solved for (u, p, b) by scipy.optimize.fsolve (xtol 1e-13) from (0.8, 1.2, 0.4).
- Points on the fold curves: for p in P_VALUES, the two u where
  p h'(u) = 1 (h = u^3/(1+u^3)), bracketed either side of the maximum of h'
  and found by scipy.optimize.brentq (xtol 1e-15), with b = u - p h(u).
Run: python3 tests/reference/cusp.py   (writes cusp.json beside it)
"""
import json
import os

import scipy
from scipy.optimize import brentq, fsolve

P_VALUES = [1.5, 2.0, 3.0]


def h(u):
    return u**3 / (1 + u**3)


def dh(u):
    return 3 * u**2 / (1 + u**3) ** 2


def d2h(u):
    return (6 * u * (1 + u**3) - 18 * u**4) / (1 + u**3) ** 3


def cusp_system(z):
    u, p, b = z
    return [b + p * h(u) - u, p * dh(u) - 1, p * d2h(u)]


u, p, b = fsolve(cusp_system, [0.8, 1.2, 0.4], xtol=1e-13)
# h' is largest where h'' = 0: u^3 = 1/2.
u_peak = brentq(d2h, 0.5, 1.0, xtol=1e-15)
folds = []
for pv in P_VALUES:
    for lo, hi in [(1e-6, u_peak), (u_peak, 50.0)]:
        uf = brentq(lambda x: pv * dh(x) - 1, lo, hi, xtol=1e-15)
        folds.append({"p": pv, "u": uf, "b": uf - pv * h(uf)})
out = {
    "source": "tests/reference/cusp.py, SciPy " + scipy.__version__,
    "cusp": {"u": u, "p": p, "b": b},
    "folds": folds,
}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "cusp.json"), "w") as f:
    json.dump(out, f, indent=1)
print(json.dumps(out, indent=1))
