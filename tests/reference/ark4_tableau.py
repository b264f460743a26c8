#!/usr/bin/env python3
"""ARK4(3)6L[2]SA (Kennedy & Carpenter 2003, Appl. Numer. Math. 44:139):
order conditions in exact rational arithmetic, and the edge of the explicit
tableau's stability on the negative real axis, which src/integrate/ark4.rs
keeps as EXPLICIT_STABILITY (4.23) and tests there, and its amplification of
a neutral mode on the imaginary axis (tests/safety.rs).

Run:  python3 tests/reference/ark4_tableau.py
"""
from fractions import Fraction as F

import numpy as np

S = 6
AE = [[F(0)] * S for _ in range(S)]
AI = [[F(0)] * S for _ in range(S)]
AE[1][0] = F(1, 2)
AE[2][:2] = [F(13861, 62500), F(6889, 62500)]
AE[3][:3] = [F(-116923316275, 2393684061468), F(-2731218467317, 15368042101831), F(9408046702089, 11113171139209)]
AE[4][:4] = [F(-451086348788, 2902428689909), F(-2682348792572, 7519795681897),
             F(12662868775082, 11960479115383), F(3355817975965, 11060851509271)]
AE[5][:5] = [F(647845179188, 3216320057751), F(73281519250, 8382639484533), F(552539513391, 3454668386233),
             F(3354512671639, 8306763924573), F(4040, 17871)]
B = [F(82889, 524892), F(0), F(15625, 83664), F(69875, 102672), F(-2260, 8211), F(1, 4)]
BH = [F(4586570599, 29645900160), F(0), F(178811875, 945068544), F(814220225, 1159782912),
      F(-3700637, 11593932), F(61727, 225920)]
AI[1][:2] = [F(1, 4), F(1, 4)]
AI[2][:3] = [F(8611, 62500), F(-1743, 31250), F(1, 4)]
AI[3][:4] = [F(5012029, 34652500), F(-654441, 2922500), F(174375, 388108), F(1, 4)]
AI[4][:5] = [F(15267082809, 155376265600), F(-71443401, 120774400), F(730878875, 902184768),
             F(2285395, 8070912), F(1, 4)]
AI[5] = list(B)
C = [F(0), F(1, 2), F(83, 250), F(31, 50), F(17, 20), F(1)]


def mv(a, v):
    return [sum(a[i][j] * v[j] for j in range(S)) for i in range(S)]


def dot(a, b):
    return sum(x * y for x, y in zip(a, b))


# The explicit tableau's published coefficients are rational approximations
# (13 digits), so its conditions hold to ~1e-26 rather than exactly.
for tab, a in [("explicit", AE), ("implicit", AI)]:
    print(tab, "max |row sum - c| =", max(float(abs(sum(a[i]) - C[i])) for i in range(S)))
for name, b, order in [("b", B, 4), ("bhat", BH, 3)]:
    for k in range(order):
        assert dot(b, [c ** k for c in C]) == F(1, k + 1), (name, k)
    for a1 in (AE, AI):
        print(name, "b.A c - 1/6 =", float(dot(b, mv(a1, C)) - F(1, 6)))
        if order == 4:
            print(name, "b.(c*Ac) - 1/8 =", float(dot(b, [c * x for c, x in zip(C, mv(a1, C))]) - F(1, 8)))
            print(name, "b.A c^2 - 1/12 =", float(dot(b, mv(a1, [c * c for c in C])) - F(1, 12)))
            for a2 in (AE, AI):
                print(name, "b.A A c - 1/24 =", float(dot(b, mv(a1, mv(a2, C))) - F(1, 24)))

ae = np.array([[float(x) for x in row] for row in AE])
b = np.array([float(x) for x in B])


def r(z):
    return 1 + z * b @ np.linalg.solve(np.eye(S) - z * ae, np.ones(S))


xs = np.linspace(0, 6, 60001)[1:]
edge = next(x for x in xs if abs(r(-x)) > 1 + 1e-12)
print(f"explicit tableau stable on the negative real axis up to k|lambda| = {edge:.4f}")
for y in (0.1, 1.0):
    print(f"|R(i*{y})| = 1 - {1 - abs(r(1j * y)):.3e}")
ys = np.linspace(0, 6, 60001)[1:]
edge = next(y for y in ys if abs(r(1j * y)) > 1 + 1e-12)
print(f"explicit tableau damps neutral modes (|R(iy)| <= 1) up to k|lambda| = {edge:.4f}")
