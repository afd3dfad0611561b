"""Independent steady states of the CSTR studies in tests/steady_states.rs (demo values).

Each CSTR reduces to one scalar equation in one concentration (the other balances give the
rest explicitly); every root in the physical interval is bracketed by a dense scan of sign
changes (20 001 points, log-spaced) and located by scipy.optimize.brentq, then checked on the
full species balances with scipy.optimize.fsolve started from it. Units: mol/m3, m3, s.

Run:  python3 tests/reference/cstr_steady_states.py > tests/reference/cstr_steady_states.json
(written with scipy 1.17.1, numpy 2.4.6, Python 3).
"""
import json

import numpy as np
import scipy
from scipy.optimize import brentq, fsolve

V0 = 1e-3  # volumetric flow, m3/s (1 L/s)


def all_roots(g, lo, hi):
    xs = np.concatenate(([lo], np.geomspace(max(lo, 1e-12 * hi), hi, 20001)))
    gs = [g(x) for x in xs]
    roots = []
    for a, b, ga, gb in zip(xs[:-1], xs[1:], gs[:-1], gs[1:]):
        if ga == 0.0:
            roots.append(a)
        elif ga * gb < 0.0:
            roots.append(brentq(g, a, b, xtol=1e-14, rtol=1e-15, maxiter=500))
    if gs[-1] == 0.0:
        roots.append(xs[-1])
    return sorted(set(roots))


def substrate_inhibited(volume_l):
    # A -> B, r = k C_A / (1 + K C_A)^2; k = 1 1/s, K = 20 L/mol = 0.02 m3/mol, C_A0 = 1000 mol/m3
    k, K, ca0 = 1.0, 0.02, 1000.0
    tau = volume_l * 1e-3 / V0
    r = lambda c: k * c / (1.0 + K * c) ** 2
    g = lambda c: ca0 - c - tau * r(c)
    out = []
    for ca in all_roots(g, 0.0, ca0):
        full = lambda y: [ca0 - y[0] - tau * r(y[0]), -y[1] + tau * r(y[0])]
        y = fsolve(full, [ca, ca0 - ca], xtol=1e-14)
        x = (ca0 - y[0]) / ca0
        out.append({"conversion": x, "C_A": y[0], "C_B": y[1]})
    return {"volume_L": volume_l, "states": out}


def autocatalytic(volume_l):
    # A + 2 B -> 3 B, r1 = k1 C_A C_B^2, k1 = 1 (L/mol)^2/s = 1e-6 m6/(mol2 s);
    # B -> C, r2 = k2 C_B, k2 = 0.01 1/s; feed C_A0 = 1000, C_B0 = 100 mol/m3.
    k1, k2, ca0, cb0 = 1e-6, 0.01, 1000.0, 100.0
    tau = volume_l * 1e-3 / V0
    ca_of = lambda cb: ca0 / (1.0 + tau * k1 * cb * cb)
    g = lambda cb: cb0 - cb + tau * (k1 * ca_of(cb) * cb * cb - k2 * cb)
    out = []
    for cb in all_roots(g, 0.0, ca0 + cb0):
        def full(y):
            ca, cb, cc = y
            r1, r2 = k1 * ca * cb * cb, k2 * cb
            return [ca0 - ca - tau * r1, cb0 - cb + tau * (r1 - r2), -cc + tau * r2]
        ca = ca_of(cb)
        y = fsolve(full, [ca, cb, ca0 + cb0 - ca - cb], xtol=1e-14)
        out.append({"conversion": (ca0 - y[0]) / ca0, "C_A": y[0], "C_B": y[1], "C_C": y[2]})
    return {"volume_L": volume_l, "states": out}


print(json.dumps({
    "scipy": scipy.__version__,
    "numpy": np.__version__,
    "substrate_inhibited": [substrate_inhibited(v) for v in [10.0, 60.0, 85.0, 100.0, 150.0, 400.0]],
    "autocatalytic": [autocatalytic(v) for v in [1.0, 10.0, 100.0, 1000.0, 10000.0]],
}, indent=1))
