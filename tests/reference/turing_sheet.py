#!/usr/bin/env python3
"""Fastest-growing wavelength of the Schnakenberg system on a sheet, for the
test in tests/sheet_readouts.rs.

du/dt = a - u + u^2 v + Du lap u,  dv/dt = b - u^2 v + Dv lap v, a = 0.1,
b = 0.9, Du = 1 um^2/min, Dv = 10 Du (the critical ratio is 8.569, so this is
17 % above onset). Linear theory (Murray, Mathematical Biology II, 3rd ed.
2003, ch. 2, the dispersion relation of a two-species reaction-diffusion
system; from memory): a mode of wavenumber q grows at the largest real
eigenvalue of J - q^2 diag(Du, Dv), J the Jacobian at the uniform state
(u*, v*) = (a + b, b / (a + b)^2). The fastest-growing q maximises it
(scipy.optimize.minimize_scalar, bounded). Also given: the same for the
five-point Laplacian on a lattice of spacing h = 0.5 um along an axis,
q^2 -> (2 - 2 cos(q h)) / h^2, to show the lattice's share of any difference.
Run: /path/to/python tests/reference/turing_sheet.py  (writes turing_sheet.json)
"""
import json
import os

import numpy as np
import scipy
from scipy.optimize import minimize_scalar

a, b, du, ratio, h = 0.1, 0.9, 1.0, 10.0, 0.5
us, vs = a + b, b / (a + b) ** 2
J = np.array([[-1 + 2 * us * vs, us ** 2], [-2 * us * vs, -us ** 2]])


def growth(q2):
    return np.max(np.linalg.eigvals(J - q2 * np.diag([du, ratio * du])).real)


def fastest(q2_of):
    r = minimize_scalar(lambda q: -growth(q2_of(q)), bounds=(0.05, 2.0), method="bounded", options={"xatol": 1e-12})
    return 2 * np.pi / r.x, -r.fun


cont, rate = fastest(lambda q: q * q)
lattice, _ = fastest(lambda q: (2 - 2 * np.cos(q * h)) / h ** 2)
out = {
    "source": "tests/reference/turing_sheet.py, scipy " + scipy.__version__ + ", numpy " + np.__version__,
    "a": a, "b": b, "du": du, "dv": ratio * du, "spacing_um": h,
    "fastest_wavelength_um": cont,
    "fastest_growth_per_min": rate,
    "fastest_wavelength_lattice_um": lattice,
}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "turing_sheet.json"), "w") as f:
    json.dump(out, f, indent=1)
print(json.dumps(out, indent=1))
