"""Reference optima for tests/trains.rs: tanks in series for the series reactions A -> B -> C
(first order each, liquid, isothermal; demo values, SI units).

Run:  python3 tests/reference/cascade_split.py > tests/reference/cascade_split.json
(the scipy and numpy versions are recorded in the JSON; Python 3).

Tank i of space time t_i = V_i / v0 takes the outlet of tank i - 1 (Levenspiel ch. 8, series
reactions in mixed flow, from memory):
    C_A,i = C_A,i-1 / (1 + k1 t_i),
    C_B,i = (C_B,i-1 + k1 t_i C_A,i) / (1 + k2 t_i).
- `split`: the total volume held, the split between three tanks that maximises F_B at the
  outlet, by scipy.optimize.minimize (Nelder-Mead on the shares, then a polish by SLSQP with
  the total as an equality constraint), checked against a 400 x 400 grid.
- `total`: three equal tanks, the total volume that maximises F_B, by
  scipy.optimize.minimize_scalar (bounded, xatol 1e-12).
"""
import json

import numpy as np
import scipy
from scipy.optimize import minimize, minimize_scalar

K1, K2 = 0.02, 0.005       # 1/s, demo values
V0, CA0 = 1e-3, 1000.0     # m3/s, mol/m3
TOTAL = 0.3                # m3


def outlet_b(volumes):
    ca, cb = CA0, 0.0
    for v in volumes:
        t = v / V0
        ca = ca / (1.0 + K1 * t)
        cb = (cb + K1 * t * ca) / (1.0 + K2 * t)
    return cb * V0


def split():
    def neg(v12):
        v1, v2 = v12
        v3 = TOTAL - v1 - v2
        if v1 <= 0 or v2 <= 0 or v3 <= 0:
            return 1e9
        return -outlet_b([v1, v2, v3])
    res = minimize(neg, [0.1, 0.1], method="Nelder-Mead",
                   options={"xatol": 1e-13, "fatol": 1e-15, "maxiter": 20000})
    pol = minimize(lambda v: -outlet_b(v), [res.x[0], res.x[1], TOTAL - sum(res.x)],
                   method="SLSQP", bounds=[(1e-9, TOTAL)] * 3,
                   constraints=[{"type": "eq", "fun": lambda v: sum(v) - TOTAL}],
                   options={"ftol": 1e-16, "maxiter": 1000})
    v = list(pol.x) if -pol.fun >= -res.fun else [res.x[0], res.x[1], TOTAL - sum(res.x)]
    grid = np.linspace(1e-4, TOTAL - 2e-4, 400)
    best_grid = max(outlet_b([a, b, TOTAL - a - b]) for a in grid for b in grid if TOTAL - a - b > 0)
    assert outlet_b(v) >= best_grid - 1e-12
    return {"volumes": [float(x) for x in v], "outlet_b": float(outlet_b(v)),
            "grid_best": float(best_grid)}


def total():
    res = minimize_scalar(lambda s: -outlet_b([s / 3] * 3), bounds=(1e-4, TOTAL),
                          method="bounded", options={"xatol": 1e-12})
    return {"total": float(res.x), "outlet_b": float(-res.fun)}


print(json.dumps({
    "generated_by": "python3 tests/reference/cascade_split.py > tests/reference/cascade_split.json",
    "scipy": scipy.__version__, "numpy": np.__version__,
    "k1": K1, "k2": K2, "v0": V0, "ca0": CA0, "total_volume": TOTAL,
    "split": split(), "equal_tanks": total()}, indent=1))
