#!/usr/bin/env python3
"""Reference values for the phase-space tests (tests/phase.rs), by SciPy/NumPy.

1. Toggle switch (Gardner, Cantor & Collins 2000, Nature 403:339, eqs. 1-2):
       du/dt = a1/(1 + v^b) - u,   dv/dt = a2/(1 + u^g) - v,   b = g = 3.
   - symmetric threshold a1 = a2 = a_c where the symmetric fixed point loses
     stability: n u*^n/(1+u*^n) = 1 and a_c = u*(1 + u*^n) (found by brentq);
   - at a1 = a2 = 3: the three fixed points (fsolve from three starts) and the
     eigenvalues of the Jacobian there (numpy.linalg.eigvals);
   - with a2 = 3: both folds of the bistable range in a1 (fsolve on
     F = 0 and det J = 0).
2. Positive autoregulation with basal production:
       dx/dt = s + x^3/(K^3 + x^3) - x,   K = 0.6;
   folds where d/dx [x - x^3/(K^3+x^3)] = 0, s = x - x^3/(K^3+x^3) (brentq);
   both at s > 0, so the hysteresis loop lies at positive basal rates.
3. Brusselator (Strogatz, Nonlinear Dynamics and Chaos, ex. 7.3.2):
       dx/dt = A - (B+1) x + x^2 y,   dy/dt = B x - x^2 y,   A = 1, B = 3;
   limit-cycle period from upward crossings of x = A after a long transient
   (solve_ivp, DOP853, rtol 1e-12, events).
Run: python3 tests/reference/phase.py   (writes phase.json beside it)
"""
import json
import os

import numpy as np
import scipy
from scipy.integrate import solve_ivp
from scipy.optimize import brentq, fsolve

N = 3


def toggle(z, a1, a2):
    u, v = z
    return [a1 / (1 + v**N) - u, a2 / (1 + u**N) - v]


def toggle_jac(z, a1, a2):
    u, v = z
    return np.array([[-1.0, -a1 * N * v**(N - 1) / (1 + v**N)**2],
                     [-a2 * N * u**(N - 1) / (1 + u**N)**2, -1.0]])


# symmetric threshold
ustar = brentq(lambda u: N * u**N / (1 + u**N) - 1.0, 1e-6, 10.0)
a_c = ustar * (1 + ustar**N)

# fixed points at a = 3
points = []
for start in ([3.0, 0.0], [1.0, 1.0], [0.0, 3.0]):
    z = fsolve(toggle, start, args=(3.0, 3.0), fprime=lambda z, a1, a2: toggle_jac(z, a1, a2), xtol=1e-14)
    ev = np.sort_complex(np.linalg.eigvals(toggle_jac(z, 3.0, 3.0)))
    points.append({"u": z[0], "v": z[1], "eig_re": [float(e.real) for e in ev], "eig_im": [float(e.imag) for e in ev]})


# folds in a1 with a2 = 3
def fold_eqs(w):
    u, v, a1 = w
    f = toggle([u, v], a1, 3.0)
    return [f[0], f[1], np.linalg.det(toggle_jac([u, v], a1, 3.0))]


folds = sorted(float(fsolve(fold_eqs, s, xtol=1e-14)[2]) for s in ([0.3, 2.9, 0.9], [2.0, 0.4, 6.0]))

# autoregulation folds
K = 0.6
s_of = lambda x: x - x**3 / (K**3 + x**3)
ds = lambda x: 1.0 - 3 * K**3 * x**2 / (K**3 + x**3)**2
xs = np.linspace(1e-6, 3.0, 30001)
roots = [brentq(ds, xs[i], xs[i + 1]) for i in range(len(xs) - 1) if ds(xs[i]) * ds(xs[i + 1]) < 0]
auto_folds = sorted(float(s_of(x)) for x in roots)

# Brusselator period
A, B = 1.0, 3.0
rhs = lambda t, z: [A - (B + 1) * z[0] + z[0]**2 * z[1], B * z[0] - z[0]**2 * z[1]]
up = lambda t, z: z[0] - A
up.direction = 1
sol = solve_ivp(rhs, (0, 600), [1.2, 3.0], method="DOP853", rtol=1e-12, atol=1e-12, events=up)
times = sol.t_events[0]
times = times[times > 300]
period = float(np.mean(np.diff(times)))

out = {
    "source": "tests/reference/phase.py, scipy " + scipy.__version__ + ", numpy " + np.__version__,
    "toggle_n": N,
    "toggle_symmetric_threshold": a_c,
    "toggle_points_at_3": points,
    "toggle_folds_a1_at_a2_3": folds,
    "autoregulation_K": K,
    "autoregulation_folds_s": auto_folds,
    "brusselator_A": A,
    "brusselator_B": B,
    "brusselator_period": period,
}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "phase.json"), "w") as f:
    json.dump(out, f, indent=1)
print(json.dumps(out, indent=1))
