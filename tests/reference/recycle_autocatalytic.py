"""Reference conversions for tests/trains.rs: the autocatalytic A + R -> 2 R (r = k C_A C_R,
liquid) in a plug-flow tube with recycle ratio R (demo values, SI except the litre below).

Run:  python3 tests/reference/recycle_autocatalytic.py > tests/reference/recycle_autocatalytic.json

The tube has a closed form: with C_T = C_A + C_R constant, d ln(C_R/C_A)/dτ = k C_T, so
(C_R/C_A)_out = (C_R/C_A)_in exp(k C_T τ) (Levenspiel ch. 6, autocatalytic reactions, from
memory). The recycle's fixed point in its A flow, r_A = R/(R+1) F_A,out(F_A0 + r_A), is
bracketed and solved by scipy.optimize.brentq (xtol 1e-15).
"""
import json
import math

import scipy
from scipy.optimize import brentq

K = 1e-3          # L/(mol s)
V = 2000.0        # L
V0 = 1.0          # L/s
A0, R0 = 1.0, 0.01  # mol/s


def tube_a(a_in, r_in, v):
    ca, cr = a_in / v, r_in / v
    ct = ca + cr
    q = (cr / ca) * math.exp(K * ct * V / v)
    return ct / (1.0 + q) * v


cases = []
for ratio in [0.5, 4.0, 20.0, 50.0]:
    share = ratio / (ratio + 1.0)
    total = A0 + R0
    f = lambda ra: share * tube_a(A0 + ra, R0 + ratio * total - ra, V0 * (ratio + 1.0)) - ra
    ra = brentq(f, 1e-12, ratio * total - 1e-12, xtol=1e-15)
    cases.append({"recycle": ratio, "conversion": (A0 - ra / ratio) / A0})
print(json.dumps({"generated_by": "python3 tests/reference/recycle_autocatalytic.py > tests/reference/recycle_autocatalytic.json",
                  "scipy": scipy.__version__, "cases": cases}, indent=1))
