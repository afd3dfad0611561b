"""Semibatch reference solutions for tests/semibatch.rs (demo values, SI units).

Run:  cd tests/reference && python3 semibatch.py > semibatch.json
(scipy and numpy versions recorded in the JSON; Python 3).

A liquid parallel scheme, A charged, B dosed:
    r1: A + B -> P,  r1 = k1(T) C_A C_B      (first order in B: the wanted step)
    r2: 2 B -> Q,    r2 = k2(T) C_B^2        (second order in B: the unwanted step)
Semibatch balances (liquid of constant density, volumes add; Fogler, Elements of Chemical
Reaction Engineering, semibatch reactors, ch. 6 and 13; from memory), with q_d(t) the dosing
rate of a liquid of concentrations C_j,d at temperature T_d and q_out(t) the withdrawal rate:
    V(t)    = V0 + int_0^t (q_d - q_out) dt
    dN_j/dt = V sum_i nu_ij r_i(N/V) + C_j,d q_d(t) - q_out(t) N_j / V(t)
    dL_j/dt = q_out(t) N_j / V(t)           (withdrawn so far)
    (sum_j N_j cp_j) dT/dt = UA (T_a - T) + V sum_i r_i (-dH_i) - q_d sum_j C_j,d cp_j (T - T_d)
(constant species cp with dCp = 0 for both reactions, so dH_i is constant).

Cases (demo values):
  dosed        B dosed at a constant rate over the first hour of a two-hour batch;
  all_at_once  the same A and the same total B (and total volume) charged at t = 0;
  withdrawal   B dosed by a piecewise-linear rate, the contents withdrawn at a constant rate
               over a window;
  energy       the dosed case with a jacket (constant T_a) and a cold dosed liquid, exothermic
               steps, Arrhenius k(T) = k_ref exp(-Ea/R (1/T - 1/T_ref)).
The rates have kinks and jumps where dosing and withdrawal start, stop or change slope, so the
integration is split there (solve_ivp Radau, rtol 1e-11, atol 1e-12 mol and 1e-9 K, each piece
started from the end of the one before); values at 13 evenly spaced times (every 600 s).
"""
import json

import numpy as np
import scipy
from scipy.integrate import solve_ivp

R = 8.31446261815324  # CODATA 2018
RTOL = 1e-11
TIME = 7200.0
POINTS = np.linspace(0.0, TIME, 13)

V0 = 0.5          # m3
NA0 = 500.0       # mol
CBD = 4000.0      # mol/m3 of B in the dosed liquid
Q = 0.125 / 3600  # m3/s over [0, 3600 s]: 500 mol of B
K1, K2 = 2e-6, 2e-6  # m3/(mol s) at T_REF
T_REF = 330.0

SPECIES = ["A", "B", "P", "Q", "S"]
NU = np.array([[-1, -1, 1, 0, 0], [0, -2, 0, 1, 0]], dtype=float)


def piecewise_linear(points):
    """A rate through (t, q) points, linear between, zero outside (the project's Schedule)."""
    ts = [p[0] for p in points]
    qs = [p[1] for p in points]

    def f(t):
        if t < ts[0] or t > ts[-1]:
            return 0.0
        return float(np.interp(t, ts, qs))

    return f


def run(case):
    dose = piecewise_linear(case["dosing"])
    cd = np.array(case["dose_conc"])
    withdraw = piecewise_linear(case["withdrawal"]) if case.get("withdrawal") else (lambda t: 0.0)
    energy = case.get("energy")
    breaks = sorted({p[0] for p in case["dosing"]} | {p[0] for p in case.get("withdrawal") or []}
                    | {0.0, TIME})
    breaks = [b for b in breaks if 0.0 <= b <= TIME]

    def volume(t):
        # exact integral of the piecewise-linear rates (trapezoids)
        def integral(points, t):
            s = 0.0
            for (a, qa), (b, qb) in zip(points, points[1:]):
                hi = min(b, t)
                if hi > a:
                    qh = qa + (qb - qa) * (hi - a) / (b - a)
                    s += 0.5 * (qa + qh) * (hi - a)
            return s
        v = case.get("V0", V0) + integral(case["dosing"], t)
        if case.get("withdrawal"):
            v -= integral(case["withdrawal"], t)
        return v

    n = len(SPECIES)

    def rhs(t, y, lo, hi):
        tt = min(max(t, lo + 1e-12 * (hi - lo)), hi - 1e-12 * (hi - lo))
        N = y[:n]
        v = volume(t)
        c = N / v
        temp = y[2 * n] if energy else T_REF
        if energy:
            k1 = K1 * np.exp(-energy["Ea1"] / R * (1 / temp - 1 / T_REF))
            k2 = K2 * np.exp(-energy["Ea2"] / R * (1 / temp - 1 / T_REF))
        else:
            k1, k2 = K1, K2
        r = np.array([k1 * c[0] * c[1], k2 * c[1] ** 2])
        qd, qo = dose(tt), withdraw(tt)
        dn = v * NU.T @ r + cd * qd - qo * N / v
        dl = qo * N / v
        out = list(dn) + list(dl)
        if energy:
            cp = np.array(energy["cp"])
            cap = float(N @ cp)
            heat = (energy["UA"] * (energy["Ta"] - temp)
                    + v * (r[0] * -energy["dH1"] + r[1] * -energy["dH2"])
                    - qd * float(cd @ cp) * (temp - energy["T_dose"]))
            out.append(heat / cap)
        return out

    y = list(case["charge"]) + [0.0] * n + ([energy["T0"]] if energy else [])
    atol = [1e-12] * (2 * n) + ([1e-9] if energy else [])
    xs, ys = [0.0], [list(y)]
    for lo, hi in zip(breaks, breaks[1:]):
        want = [p for p in POINTS if lo < p <= hi]
        sol = solve_ivp(rhs, (lo, hi), y, method="Radau", rtol=RTOL, atol=atol,
                        t_eval=want, args=(lo, hi))
        assert sol.success, sol.message
        for k, t in enumerate(sol.t):
            xs.append(float(t))
            ys.append([float(v) for v in sol.y[:, k]])
        y = [float(v) for v in sol.y[:, -1]]
    assert len(xs) == len(POINTS)
    out = {
        "t": xs,
        "N": [[yk[j] for j in range(n)] for yk in ys],
        "withdrawn": [[yk[n + j] for j in range(n)] for yk in ys],
        "V": [volume(t) for t in xs],
    }
    if energy:
        out["T"] = [yk[2 * n] for yk in ys]
    return out


CASES = {
    "dosed": {
        "charge": [NA0, 0, 0, 0, 0],
        "dose_conc": [0, CBD, 0, 0, 0],
        "dosing": [(0.0, Q), (3600.0, Q)],
    },
    "all_at_once": {
        "charge": [NA0, CBD * Q * 3600, 0, 0, 0],
        "V0": V0 + Q * 3600,
        "dose_conc": [0, 0, 0, 0, 0],
        "dosing": [(0.0, 0.0), (TIME, 0.0)],
    },
    "withdrawal": {
        "charge": [NA0, 0, 0, 0, 0],
        "dose_conc": [0, CBD, 0, 0, 0],
        "dosing": [(0.0, 2e-5), (1800.0, 5e-5), (3600.0, 1e-5)],
        "withdrawal": [(2400.0, 2e-5), (6000.0, 2e-5)],
    },
    "energy": {
        "charge": [NA0, 0, 0, 0, 20000.0],
        "dose_conc": [0, CBD, 0, 0, 30000.0],
        "dosing": [(0.0, Q), (3600.0, Q)],
        "energy": {
            "T0": 330.0, "T_dose": 290.0, "UA": 800.0, "Ta": 320.0,
            "Ea1": 40e3, "Ea2": 80e3, "dH1": -90e3, "dH2": -70e3,
            # J/(mol K), dCp = 0 for both steps: cp_P = cp_A + cp_B, cp_Q = 2 cp_B
            "cp": [150.0, 110.0, 260.0, 220.0, 80.0],
        },
    },
}

if __name__ == "__main__":
    result = {
        "command": "cd tests/reference && python3 semibatch.py > semibatch.json",
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "method": "solve_ivp Radau, rtol 1e-11, atol 1e-12 mol / 1e-9 K, split at the rates' breakpoints",
        "species": SPECIES,
        "cases": {name: run(c) for name, c in CASES.items()},
    }
    print(json.dumps(result, indent=1))
