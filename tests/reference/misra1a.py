"""Reference for the local polish: NIST StRD nonlinear regression problem
Misra1a (Misra 1978, dental research monomolecular adsorption; NIST
Statistical Reference Datasets, lower difficulty), y = b1 (1 - exp(-b2 x)).

Data: the 14 (y, x) pairs of the NIST file, copied from a public copy of it.
Certified values (NIST; quoted from memory, and checked here against SciPy):
b1 = 2.3894212918E+02 (sd 2.7070075241E+00), b2 = 5.5015643181E-04
(sd 7.2668688436E-06), residual sum of squares 1.2455138894E-01.

Writes misra1a.json: the data, SciPy's least_squares solution (method 'lm',
tight tolerances, from NIST start 1: b1 = 500, b2 = 1e-4) and its standard
errors s * sqrt(diag((J^T J)^-1)), s^2 = RSS / (n - p).
"""
import json
import pathlib

import numpy as np
from scipy.optimize import least_squares

y = np.array([10.07, 14.73, 17.94, 23.93, 29.61, 35.18, 40.02, 44.82, 50.76, 55.05, 61.01, 66.40, 75.47, 81.78])
x = np.array([77.6, 114.9, 141.1, 190.8, 239.9, 289.0, 332.8, 378.4, 434.8, 477.3, 536.8, 593.1, 689.1, 760.0])


def res(b):
    return b[0] * (1.0 - np.exp(-b[1] * x)) - y


fit = least_squares(res, [500.0, 1e-4], method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, x_scale=[100.0, 1e-4])
rss = float(np.sum(fit.fun**2))
s2 = rss / (len(x) - 2)
cov = np.linalg.inv(fit.jac.T @ fit.jac) * s2
se = np.sqrt(np.diag(cov))
certified = {"b1": 2.3894212918e02, "b2": 5.5015643181e-04, "sd_b1": 2.7070075241e00, "sd_b2": 7.2668688436e-06,
             "rss": 1.2455138894e-01}
assert abs(fit.x[0] / certified["b1"] - 1) < 1e-7 and abs(fit.x[1] / certified["b2"] - 1) < 1e-7
assert abs(se[0] / certified["sd_b1"] - 1) < 1e-4 and abs(se[1] / certified["sd_b2"] - 1) < 1e-4
out = {
    "x": x.tolist(),
    "y": y.tolist(),
    "scipy": {"b1": fit.x[0], "b2": fit.x[1], "sd_b1": se[0], "sd_b2": se[1], "rss": rss},
    "certified": certified,
}
pathlib.Path(__file__).with_name("misra1a.json").write_text(json.dumps(out, indent=1))
print(out["scipy"])
