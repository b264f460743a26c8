#!/usr/bin/env python3
"""Linear-stability reference values for the Turing tests in tests/rates.rs.

For each activator-inhibitor system on a periodic row of 256 cells (h = 1):
the fastest-growing wavelength (cells) of the linearisation about the uniform
steady state, max over modes p of the largest real eigenvalue of
J - lam_p diag(Du, Dv), lam_p = 2 - 2 cos(2 pi p / 256) (numpy.linalg.eigvals),
and the critical diffusion ratio d_c = Dv/Du above which a mode grows
(scipy.optimize.brentq on the largest growth rate over modes).
Sources: Schnakenberg (1979), J. Theor. Biol. 81:389; Gierer & Meinhardt (1972),
Kybernetik 12:30; Murray, Mathematical Biology II (2003), ch. 2.
Run: python3 tests/reference/turing.py   (writes turing.json beside it)
"""
import json
import os

import numpy as np
import scipy
from scipy.optimize import brentq

N = 256
lams = 2.0 - 2.0 * np.cos(2.0 * np.pi * np.arange(1, N // 2) / N)


def growth(J, du, dv):
    return np.array([np.max(np.linalg.eigvals(J - l * np.diag([du, dv])).real) for l in lams])


def fastest(J, du, dv):
    g = growth(J, du, dv)
    return N / (1 + int(np.argmax(g)))


def critical(J, du):
    return brentq(lambda dv: np.max(growth(J, du, dv)), 1.0, 200.0, xtol=1e-10) / du


a, b = 0.1, 0.9
us, vs = a + b, b / (a + b) ** 2
J_s = np.array([[-1 + 2 * us * vs, us ** 2], [-2 * us * vs, -us ** 2]])
A, H = 2.1, 2.205  # sigma = 0.1, nu = 2: a* = nu + sigma, h* = a*^2 / nu
J_gm = np.array([[2 * A / H - 1, -A ** 2 / H ** 2], [2 * A, -2.0]])
out = {
    "source": "tests/reference/turing.py, scipy " + scipy.__version__ + ", numpy " + np.__version__,
    "schnakenberg": {"fastest_wavelength_cells": fastest(J_s, 1.0, 20.0), "critical_ratio": critical(J_s, 1.0)},
    "gierer_meinhardt": {"fastest_wavelength_cells": fastest(J_gm, 1.0, 25.0), "critical_ratio": critical(J_gm, 1.0)},
}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "turing.json"), "w") as f:
    json.dump(out, f, indent=1)
print(json.dumps(out, indent=1))
