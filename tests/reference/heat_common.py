"""Shared pieces of the heat-effect reference scripts (heat_*.py in this folder).

Everything is SI: mol, m3, s, K, J, W. Demo values only, not data for any real process.

- R = 8.31446261815324 J/(mol K), CODATA 2018 (exact in the 2019 SI).
- Arrhenius about a reference temperature: k(T) = k_ref exp(-Ea/R (1/T - 1/T_ref))
  (common practice; docs/network-format.md of this project uses the same form).
- Kirchhoff's law with constant species cp: dH(T) = dH(T_ref) + dCp (T - T_ref),
  dCp = sum_j nu_j cp_j (any physical chemistry text, from memory).
"""
import math

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

R = 8.31446261815324

RTOL = 1e-11


def arrhenius(k_ref, ea, t_ref, t):
    return k_ref * np.exp(-ea / R * (1.0 / t - 1.0 / t_ref))


def num(x):
    """A float as YAML text that reads back to the same double (repr is shortest round-trip)."""
    return repr(float(x))


def integrate(rhs, x_end, y0, n_points, events=None, atol=None):
    """solve_ivp Radau at rtol 1e-11 on [0, x_end], values at n_points evenly spaced points
    (inlet and outlet included); also DOP853 at rtol 1e-13 as a check of the reference itself.
    Returns (x, Y (n_points x len(y0)), largest relative difference between the two methods,
    the Radau solution object)."""
    x = np.linspace(0.0, x_end, n_points)
    if atol is None:
        atol = [1e-14 * max(abs(v), 1.0) for v in y0]
    sol = solve_ivp(rhs, (0.0, x_end), y0, method="Radau", rtol=RTOL, atol=atol,
                    t_eval=x, dense_output=True, events=events)
    assert sol.success, sol.message
    chk = solve_ivp(rhs, (0.0, x_end), y0, method="DOP853", rtol=1e-13, atol=atol, t_eval=x)
    assert chk.success, chk.message
    diff = float(np.max(np.abs(sol.y - chk.y) / np.maximum(np.abs(chk.y), 1e-300)
                        * (np.abs(chk.y) > 1e-9 * np.max(np.abs(chk.y)))))
    return x, sol.y.T, diff, sol


def all_roots(g, lo, hi, n=200001):
    """Every sign change of g on a uniform scan of [lo, hi], each refined by brentq."""
    xs = np.linspace(lo, hi, n)
    gs = np.array([g(v) for v in xs])
    roots = []
    for a, b, ga, gb in zip(xs[:-1], xs[1:], gs[:-1], gs[1:]):
        if ga == 0.0:
            roots.append(float(a))
        elif ga * gb < 0.0:
            roots.append(brentq(g, a, b, xtol=1e-13, rtol=1e-15, maxiter=500))
    return roots
