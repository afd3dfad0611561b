"""Independent steady states of the non-isothermal CSTR studies in tests/cstr_heat.rs (demo values).

For each case the species balances at a fixed reactor temperature T reduce to one scalar
equation in the conversion X (solved in closed form for a first-order liquid, by brentq for the
gas), which gives the heat generated G(T) = F_A0 X(T) (-dH); the heat removed is
R(T) = sum_j F_j0 cp_j (T - T0) + UA (T - Ta). Every steady state is a sign change of G - R on a
scan of 0.001 K over 200..1000 K, located by scipy.optimize.brentq (xtol 1e-13).

Ignition and extinction: along the steady-state curve the feed temperature is
T0(T) = T - (G(T) - UA (T - Ta)) / sum F_j0 cp_j and the coolant temperature
Ta(T) = T - (G(T) - sum F_j0 cp_j (T - T0)) / UA; their turning points are the zeros of
dG/dT - dR/dT, bracketed on the same scan and located by brentq (dG/dT by its closed form).

Stability (liquid): the transient (F_A, T) system tau dF_A/dt = F_A0 - F_A - V k(T) F_A / v0,
C_h dT/dt = UA (Ta - T) - sum F_j0 cp_j (T - T0) + V k C_A (-dH), with C_h = tau sum F_j cp_j
(= tau sum F_j0 cp_j when cp_A = cp_B); its Jacobian's eigenvalues by numpy.linalg.eigvals,
together with -1/tau of the other species (their balances F_j0 - F_j + nu V r decouple).

Run:  python3 tests/reference/cstr_heat.py > tests/reference/cstr_heat.json
(written with the scipy and numpy versions recorded in the JSON, Python 3).
"""
import json

import numpy as np
import scipy
from scipy.optimize import brentq

R = 8.31446261815324  # J/(mol K), CODATA 2018


def roots_of(g, lo=200.0, hi=1000.0, step=1e-3):
    ts = np.arange(lo, hi + step / 2, step)
    gs = np.array([g(t) for t in ts])
    out = []
    for k in np.nonzero(np.sign(gs[:-1]) != np.sign(gs[1:]))[0]:
        out.append(brentq(g, ts[k], ts[k + 1], xtol=1e-13, rtol=1e-15, maxiter=500))
    return out


def liquid_three_states():
    # A -> B, r = k C_A, k = 0.01 1/s at 330 K, Ea = 100 kJ/mol, dH = -200 kJ/mol;
    # v0 = 10 L/s, C_A0 = 2 mol/L, solvent W 50 mol/L; cp A, B 150, W 75 J/(mol K);
    # V = 1 m3; UA = 20 kW/K; T0 = 295 K, Ta = 305 K.
    v0, V = 0.01, 1.0
    fa0, fw0 = 20.0, 500.0
    k_ref, t_ref, ea, dh = 0.01, 330.0, 100e3, -200e3
    cpa, cpw = 150.0, 75.0
    ua, t0, ta = 20e3, 295.0, 305.0
    tau = V / v0
    cf = fa0 * cpa + fw0 * cpw  # sum F_j0 cp_j, W/K

    def k(t):
        return k_ref * np.exp(-ea / R * (1.0 / t - 1.0 / t_ref))

    def x(t):
        return k(t) * tau / (1.0 + k(t) * tau)

    def g(t):
        return fa0 * (-dh) * x(t)

    def dg(t):
        kt = k(t)
        return fa0 * (-dh) * tau * kt * ea / (R * t * t) / (1.0 + kt * tau) ** 2

    def d(t):
        return g(t) - cf * (t - t0) - ua * (t - ta)

    def eig_max(t):
        fa = fa0 * (1.0 - x(t))
        kt = k(t)
        dk = kt * ea / (R * t * t)
        ch = tau * cf
        j = np.array(
            [
                [(-1.0 - V * kt / v0) / tau, (-V * dk * fa / v0) / tau],
                [V * kt / v0 * (-dh) / ch, (V * dk * fa / v0 * (-dh) - cf - ua) / ch],
            ]
        )
        ev = np.linalg.eigvals(j)
        return float(max(np.max(ev.real), -1.0 / tau))

    states = [
        {"temperature": t, "conversion": float(x(t)), "max_eigenvalue_real": eig_max(t)}
        for t in roots_of(d)
    ]
    turning = []
    for t in roots_of(lambda t: dg(t) - cf - ua, 250.0, 600.0):
        before, after = dg(t - 1e-3) - cf - ua, dg(t + 1e-3) - cf - ua
        kind = "ignition" if before < 0.0 < after else "extinction"
        turning.append(
            {
                "kind": kind,
                "reactor_temperature": t,
                "conversion": float(x(t)),
                "feed_temperature": t - (g(t) - ua * (t - ta)) / cf,
                "coolant_temperature": t - (g(t) - cf * (t - t0)) / ua,
            }
        )
    return {"states": states, "turning_points": turning}


def gas_cooled():
    # A -> 2 B, ideal gas, r = k C_A with C_A = P/(R T) F_A/F_T at the reactor T;
    # k = 0.5 1/s at 600 K, Ea = 120 kJ/mol, dH = -80 kJ/mol; P = 2 bar;
    # feed A 1 mol/s, N2 4 mol/s at 550 K; cp A 80, B 50, N2 30 J/(mol K) (dCp = 2*50 - 80 = 20);
    # V = 0.5 m3; UA = 500 W/K; Ta = 560 K. dH(T) = dH + dCp (T - 600 K) (Kirchhoff).
    p, V = 2e5, 0.5
    fa0, fi0 = 1.0, 4.0
    k_ref, t_ref, ea, dh_ref = 0.5, 600.0, 120e3, -80e3
    cpa, cpb, cpi = 80.0, 50.0, 30.0
    ua, t0, ta = 500.0, 550.0, 560.0
    cf = fa0 * cpa + fi0 * cpi

    def k(t):
        return k_ref * np.exp(-ea / R * (1.0 / t - 1.0 / t_ref))

    def x(t):
        # F_A0 X = V k P/(R T) F_A0 (1 - X) / (F_T0 + F_A0 X)
        c = p / (R * t)
        h = lambda xx: xx - V * k(t) * c * (1.0 - xx) / (fa0 + fi0 + fa0 * xx)
        return brentq(h, 0.0, 1.0, xtol=1e-16, rtol=1e-15, maxiter=500)

    def dh(t):
        return dh_ref + (2 * cpb - cpa) * (t - t_ref)

    def d(t):
        return fa0 * x(t) * (-dh(t)) - cf * (t - t0) - ua * (t - ta)

    states = [{"temperature": t, "conversion": float(x(t))} for t in roots_of(d, 300.0, 1500.0, 1e-2)]
    return {"states": states}


print(
    json.dumps(
        {
            "command": "python3 tests/reference/cstr_heat.py > tests/reference/cstr_heat.json",
            "scipy": scipy.__version__,
            "numpy": np.__version__,
            "liquid_three_states": liquid_three_states(),
            "gas_cooled": gas_cooled(),
        },
        indent=1,
    )
)
