"""NumPy peer of `anlage replicates` on the ribbon with noise (benches/replicates/ribbon_noise.toml).

The same problem written independently: 200 embryos of a row of 100 nuclei
(5 um apart, sealed edges), two genes with Hill kinetics
  f_amber  = 1.0 * r_h/(1+r_h) * 1/(1+r_c) - 0.1*amber,  r_h = (head/0.1)^2, r_c = (cobalt/2)^4
  f_cobalt = 0.8 * 1/(1+r_a)              - 0.1*cobalt, r_a = (amber/2)^4
the head gradient peak*exp(-x/150) with x at nucleus centres and the peak
lognormal per embryo (mean 1, cv 0.1), chemical Langevin noise at 100
molecules per unit, IMEX Euler-Maruyama with fixed steps of 0.05 min to
240 min (implicit diffusion, D = 0.5 um^2/min), negative levels set to 0.
Vectorised over embryos (what a NumPy user would write). Prints the
boundary mean and sd (half maximum, linear interpolation) and the time.
The random numbers differ from anlage's, so the two agree only within
sampling error.
"""
import sys
import time

import numpy as np
from scipy.linalg import solve_banded

N, H, E = 100, 5.0, 200
DT, T = 0.05, 240.0
D = np.array([0.5, 0.5])
OMEGA = 100.0


def run(seed=1):
    rng = np.random.default_rng(seed)
    x = (np.arange(N) + 0.5) * H
    s2 = np.log(1 + 0.1**2)
    peak = np.exp(np.sqrt(s2) * rng.standard_normal(E) - s2 / 2)  # (E,)
    head = peak[:, None] * np.exp(-x / 150.0)[None, :]  # (E, N)
    rh = (head / 0.1) ** 2
    act = rh / (1 + rh)
    u = np.zeros((2, E, N))
    # (I - k D lap) banded, Neumann (mirror) edges, one factor per gene.
    bands = []
    for g in range(2):
        c = DT * D[g] / H**2
        ab = np.zeros((3, N))
        ab[0, 1:] = -c
        ab[2, :-1] = -c
        ab[1, :] = 1 + 2 * c
        ab[1, 0] = ab[1, -1] = 1 + c
        bands.append(ab)
    steps = int(round(T / DT))
    p = np.array([1.0, 0.8])
    d = 0.1
    for _ in range(steps):
        a, c = u[0], u[1]
        prod_a = p[0] * act / (1 + (np.maximum(c, 0) / 2.0) ** 4)
        prod_c = p[1] / (1 + (np.maximum(a, 0) / 2.0) ** 4)
        prod = np.stack([prod_a, prod_c])
        f = prod - d * u
        amp = np.sqrt((prod + d * np.maximum(u, 0)) / OMEGA)
        b = u + DT * f + np.sqrt(DT) * amp * rng.standard_normal(u.shape)
        for g in range(2):
            u[g] = solve_banded((1, 1), bands[g], b[g].T).T
        np.maximum(u, 0, out=u)
    return x, u


def boundary(x, prof):
    """First falling crossing of half the maximum, linear interpolation."""
    level = 0.5 * prof.max()
    above = prof >= level
    for i in range(len(prof) - 1):
        if above[i] and not above[i + 1]:
            w = (prof[i] - level) / (prof[i] - prof[i + 1])
            return x[i] + w * (x[i + 1] - x[i])
    return np.nan


def main():
    best = np.inf
    for _ in range(int(sys.argv[1]) if len(sys.argv) > 1 else 3):
        t0 = time.perf_counter()
        x, u = run()
        best = min(best, time.perf_counter() - t0)
    xs = np.array([boundary(x, u[0, e]) for e in range(E)])
    print(f"peer: amber falling mean {np.nanmean(xs):.2f} um sd {np.nanstd(xs, ddof=1):.2f} um; best of runs {best:.3f} s")


if __name__ == "__main__":
    main()
