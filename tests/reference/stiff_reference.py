"""Reference solution for the stiff liquid batch network tested in tests/reactors.rs.

The network (invented test values, not data for any real process):

    r1: A <=> I     r1 = kf (C_A - C_I / K)     kf = 1e6 1/s, K = 1e-3 (fast pre-equilibrium)
    r2: I + B -> P  r2 = k2 C_I C_B             k2 = 1e-2 m3/(mol s)
    r3: 2 A -> D    r3 = k3 C_A^2               k3 = 1e-6 m3/(mol s)

in a constant-volume batch of V = 1 L charged with 1 mol A and 0.8 mol B. Rates are per unit
of extent, so dN_j/dt = V * sum_i nu_ij r_i(C), C = N / V (constant-volume batch balance,
common practice). The stiffness ratio is about kf / K / (k2 C_B) ~ 1e11.

The ODE is integrated with scipy's Radau (implicit Runge-Kutta, order 5) at rtol 1e-11 and a
tiny atol, segment by segment so that every reported value is a step end point, not an
interpolant. A second run at rtol 1e-10 estimates the reference's own error.

Run from the crate root:  python3 tests/reference/stiff_reference.py
It writes tests/reference/stiff_reference.json next to this script.
"""

import json
import os
import platform
import sys

import numpy as np
import scipy
from scipy.integrate import solve_ivp

SPECIES = ["A", "I", "B", "P", "D"]
PARAMS = {
    "volume_m3": 1.0e-3,
    "kf_per_s": 1.0e6,
    "K_eq": 1.0e-3,
    "k2_m3_per_mol_s": 1.0e-2,
    "k3_m3_per_mol_s": 1.0e-6,
    "N0_mol": {"A": 1.0, "I": 0.0, "B": 0.8, "P": 0.0, "D": 0.0},
}
T_END = 600.0
N_POINTS = 11
ATOL = 1.0e-18

# Net coefficients nu[i][j] (reactions x species), in SPECIES order.
NU = np.array(
    [
        [-1.0, 1.0, 0.0, 0.0, 0.0],  # A <=> I
        [0.0, -1.0, -1.0, 1.0, 0.0],  # I + B -> P
        [-2.0, 0.0, 0.0, 0.0, 1.0],  # 2 A -> D
    ]
)


def rates(c):
    a, i, b, _p, _d = c
    p = PARAMS
    return np.array(
        [
            p["kf_per_s"] * (a - i / p["K_eq"]),
            p["k2_m3_per_mol_s"] * i * b,
            p["k3_m3_per_mol_s"] * a * a,
        ]
    )


def rate_gradient(c):
    """d r_i / d C_j."""
    a, i, b, _p, _d = c
    p = PARAMS
    g = np.zeros((3, 5))
    g[0, 0] = p["kf_per_s"]
    g[0, 1] = -p["kf_per_s"] / p["K_eq"]
    g[1, 1] = p["k2_m3_per_mol_s"] * b
    g[1, 2] = p["k2_m3_per_mol_s"] * i
    g[2, 0] = 2.0 * p["k3_m3_per_mol_s"] * a
    return g


def rhs(_t, n):
    v = PARAMS["volume_m3"]
    return v * NU.T @ rates(n / v)


def jac(_t, n):
    v = PARAMS["volume_m3"]
    # dN/dt = V nu^T r(N/V)  =>  J = nu^T (dr/dC)
    return NU.T @ rate_gradient(n / v)


def solve(rtol):
    times = np.linspace(0.0, T_END, N_POINTS)
    y = np.array([PARAMS["N0_mol"][s] for s in SPECIES])
    out = [y.copy()]
    for t0, t1 in zip(times[:-1], times[1:]):
        sol = solve_ivp(rhs, (t0, t1), y, method="Radau", rtol=rtol, atol=ATOL, jac=jac)
        if not sol.success:
            raise RuntimeError(sol.message)
        y = sol.y[:, -1]
        out.append(y.copy())
    return times, np.array(out)


def main():
    times, fine = solve(1.0e-11)
    _, coarse = solve(1.0e-10)
    scale = np.maximum(np.abs(fine), 1e-300)
    self_check = float(np.max(np.abs(fine - coarse) / scale))
    here = os.path.dirname(os.path.abspath(__file__))
    doc = {
        "description": "stiff liquid batch A <=> I (fast), I + B -> P, 2 A -> D; amounts N_j in mol",
        "command": "python3 tests/reference/stiff_reference.py",
        "method": "scipy.integrate.solve_ivp(method='Radau', rtol=1e-11, atol=1e-18, analytic jac), segment by segment",
        "scipy_version": scipy.__version__,
        "numpy_version": np.__version__,
        "python_version": platform.python_version(),
        "rtol": 1.0e-11,
        "atol_mol": ATOL,
        "max_relative_change_rtol_1e-10_vs_1e-11": self_check,
        "parameters": PARAMS,
        "species": SPECIES,
        "times_s": times.tolist(),
        "amounts_mol": [dict(zip(SPECIES, row.tolist())) for row in fine],
    }
    path = os.path.join(here, "stiff_reference.json")
    with open(path, "w") as f:
        json.dump(doc, f, indent=2)
        f.write("\n")
    print(f"wrote {path}; self-check {self_check:.2e}", file=sys.stderr)


if __name__ == "__main__":
    main()
