#!/usr/bin/env python3
"""Reference solution for tests/reference/convergence.toml, by SciPy.

Solves the semi-discrete system (method of lines) that anlage integrates:
cell-centred row of N = 40 nuclei, h = 5 um, mirror (no-flux) edges,
    da/dt = Da Lap a + pa * H+(m(x,t); 0.3, 2) * H-(b; 2.0, 2) - da * a
    db/dt = Db Lap b + pb * H-(a; 1.5, 3) - db * b
    H+(x; K, n) = (x/K)^n / (1 + (x/K)^n),  H-(x; K, n) = 1 / (1 + (x/K)^n)
    m(x, t) = (0.5 + t/40) * exp(-x/60),  x_i = (i + 1/2) h
with scipy.integrate.solve_ivp (DOP853, rtol 1e-13, atol 1e-15) to t = 20 min.
The result is the exact solution of the semi-discrete system to ~1e-12, so
the error of anlage's time stepping can be measured against it.

Run:  python3 tests/reference/convergence.py   (writes convergence.json here)
"""
import json
import os

import numpy as np
import scipy
from scipy.integrate import solve_ivp

N, H = 40, 5.0
DA, DB = 20.0, 10.0
PA, PB = 1.0, 0.8
KA, KB = 0.1, 0.15
T = 20.0
x = (np.arange(N) + 0.5) * H
shape = np.exp(-x / 60.0)


def lap(u):
    ghost = np.concatenate(([u[0]], u, [u[-1]]))
    return (ghost[:-2] - 2.0 * u + ghost[2:]) / (H * H)


def rhs(t, y):
    a, b = y[:N], y[N:]
    m = (0.5 + t / 40.0) * shape
    r_m = (m / 0.3) ** 2
    act = r_m / (1.0 + r_m)
    rep_a = 1.0 / (1.0 + (np.maximum(b, 0.0) / 2.0) ** 2)
    rep_b = 1.0 / (1.0 + (np.maximum(a, 0.0) / 1.5) ** 3)
    da = DA * lap(a) + PA * act * rep_a - KA * a
    db = DB * lap(b) + PB * rep_b - KB * b
    return np.concatenate((da, db))


y0 = np.concatenate((np.full(N, 0.5), np.full(N, 1.0)))
sol = solve_ivp(rhs, (0.0, T), y0, method="DOP853", rtol=1e-13, atol=1e-15)
assert sol.success, sol.message
final = sol.y[:, -1]
out = {
    "source": "scipy.integrate.solve_ivp DOP853 rtol=1e-13 atol=1e-15, scipy " + scipy.__version__,
    "t_min": T,
    "a": final[:N].tolist(),
    "b": final[N:].tolist(),
}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "convergence.json"), "w") as f:
    json.dump(out, f, indent=1)
print("wrote convergence.json; a[0] =", final[0], "b[-1] =", final[-1])
