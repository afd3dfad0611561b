"""Cooled liquid PFRs for tests/heat_effects.rs (demo values, SI units).

Run:  python3 tests/reference/heat_cooled_pfr.py > tests/reference/heat_cooled_pfr.json
(scipy and numpy versions recorded in the JSON; Python 3).

Balances (Fogler ch. 11-12, Levenspiel ch. 9; from memory), liquid at constant density,
C_j = F_j / v0, constant species cp (sum_j F_j cp_j is constant where every reaction keeps
the sum of cp, as here), heat exchange Ua (T_a - T) per unit reactor volume:
    dF_j/dV = sum_i nu_ij r_i,
    dT/dV   = [Ua (T_a - T) + sum_i r_i (-dH_i)] / sum_j F_j cp_j.

Case 4: A -> B, r = k(T) C_A, Ua = U a (U per exchange area, a the area per reactor volume),
a coolant stream of mass flow m_c and heat capacity c_c:
    co-current:       dT_a/dV =  Ua (T - T_a) / (m_c c_c),  T_a(0) = T_a,in  (initial value
                      problem: solve_ivp Radau, rtol 1e-11, checked by DOP853 at rtol 1e-13);
    counter-current:  dT_a/dV = -Ua (T - T_a) / (m_c c_c),  T_a(V) = T_a,in (the coolant enters
                      at the reactor outlet): a two-point boundary value problem with
                      F_A(0) = F_A0, T(0) = T0. Solved by scipy.integrate.solve_bvp
                      (collocation, analytic Jacobian) at tol 1e-8 from a flat initial
                      guess, then again at tol 1e-9 (the fixture's values) (the difference is recorded as `refine_difference`); and
                      independently by shooting on the coolant outlet temperature T_a(0):
                      every sign change of T_a(V; T_a(0)) - T_a,in over a scan of T_a(0) from
                      T_a,in to T0 + dT_ad (81 points, Radau rtol 1e-9 each) refined by
                      brentq at Radau rtol 1e-12, so that several solutions would all be listed (`shooting_roots`).
    Reported: the profile X(V), T(V), T_a(V) at 11 evenly spaced points, the outlet conversion,
    the hot spot and the coolant outlet temperature (T_a(0) counter-current, T_a(V) co-current).
    Hot spot: co-current as in case 5 below; counter-current the largest T of the collocation
    solution on 200 001 points, refined by brentq on its derivative dT/dV = 0.

Case 5: A -> B -> C (B wanted), r1 = k1(T) C_A, r2 = k2(T) C_B, Ea2 > Ea1, coolant at
    constant T_a with a lumped Ua per reactor volume, three coolant temperatures.
    The hot spot is where dT/dV = 0 with T falling after it: a terminal-free event of
    solve_ivp on the right-hand side's T component (located on the Radau dense output);
    without an interior maximum the hot spot is the larger of the inlet and outlet T.
    Reported: outlet flows of A, B, C; yield of B on the A fed, F_B/F_A0; the hot spot T and V.
"""
import json

import numpy as np
import scipy
from scipy.integrate import solve_bvp, solve_ivp
from scipy.optimize import brentq

from heat_common import R, arrhenius, integrate, num

N_POINTS = 11

# ---- case 4 (demo values) ----
V0 = 2e-3                      # m3/s
CA0, CS0 = 1000.0, 40000.0     # mol/m3
CP_A = CP_B = CP_C = 150.0     # J/(mol K)
CP_S = 75.0
K_REF, EA, T_REF, DH = 2e-3, 70e3, 320.0, -100e3
VOL = 1.0                      # m3
U, AREA = 250.0, 20.0          # W/(m2 K), m2/m3
UA_V = U * AREA                # W/(m3 K)
M_C, C_C = 5.0, 4180.0         # kg/s, J/(kg K)
T0, TA_IN = 320.0, 300.0       # K
FA0 = CA0 * V0
CP_FLOW = V0 * (CA0 * CP_A + CS0 * CP_S)
DT_AD = -DH * FA0 / CP_FLOW


def rhs4(direction):
    sign = 1.0 if direction == "co_current" else -1.0

    def f(_v, y):
        fa, t, ta = y
        r = arrhenius(K_REF, EA, T_REF, t) * fa / V0
        q = UA_V * (ta - t)
        return [-r, (q + r * (-DH)) / CP_FLOW, sign * UA_V * (t - ta) / (M_C * C_C)]
    return f


def study4(direction):
    return f"""name: tubular reactor with a coolant stream, {direction.replace('_', '-')} (demo values)
phase: liquid
species:
  A: {{cp: {num(CP_A)} J/(mol*K)}}
  B: {{cp: {num(CP_B)} J/(mol*K)}}
  S: {{cp: {num(CP_S)} J/(mol*K)}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {num(K_REF)} 1/s, Ea: {num(EA)} J/mol, T_ref: {num(T_REF)} K, dH: {num(DH)} J/mol}}}}
feed: {{T: {num(T0)} K, volumetric: {num(V0)} m3/s, concentrations: {{A: {num(CA0)} mol/m3, S: {num(CS0)} mol/m3}}}}
reactor:
  type: pfr
  volume: {num(VOL)} m3
  heat:
    U: {num(U)} W/(m2*K)
    area: {num(AREA)} m2/m3
    coolant: {{T_in: {num(TA_IN)} K, mass_flow: {num(M_C)} kg/s, cp: {num(C_C)} J/(kg*K), direction: {direction}}}
key: A
solver: {{rtol: 1e-10}}
"""


def summarise(x, y, extra):
    return dict({
        "points": N_POINTS, "x": x.tolist(),
        "conversion": (1.0 - y[:, 0] / FA0).tolist(),
        "T": y[:, 1].tolist(), "coolant_T": y[:, 2].tolist(),
    }, **extra)


def hot_spot_ivp(f, y0, vol, ti):
    """Hot spot of an initial value problem: event dT/dV = 0 falling."""
    ev = lambda v, y: f(v, y)[ti]
    ev.direction = -1.0
    sol = solve_ivp(f, (0.0, vol), y0, method="Radau", rtol=1e-11,
                    atol=[1e-14 * max(abs(v), 1.0) for v in y0], events=ev, dense_output=True)
    assert sol.success
    cands = [(float(sol.y[ti][0]), 0.0), (float(sol.y[ti][-1]), vol)]
    for v, yv in zip(sol.t_events[0], sol.y_events[0]):
        cands.append((float(yv[ti]), float(v)))
    t, v = max(cands)
    return {"T": t, "x": v, "interior": 0.0 < v < vol}


def co_current():
    f = rhs4("co_current")
    y0 = [FA0, T0, TA_IN]
    x, y, d, _ = integrate(f, VOL, y0, N_POINTS)
    hs = hot_spot_ivp(f, y0, VOL, 1)
    return summarise(x, y, {"study": study4("co_current"), "check_dop853": d,
                            "hot_spot": hs, "coolant_outlet_T": float(y[-1, 2])})


def counter_current():
    f = rhs4("counter_current")

    def shoot(ta0, rtol=1e-12):
        y0 = [FA0, T0, ta0]
        s = solve_ivp(f, (0.0, VOL), y0, method="Radau", rtol=rtol,
                      atol=[1e-14 * max(abs(v), 1.0) for v in y0])
        assert s.success
        return s.y[2][-1] - TA_IN

    scan = np.linspace(TA_IN, T0 + DT_AD, 81)
    res = [shoot(s, rtol=1e-9) for s in scan]
    roots = []
    for a, b, ra, rb in zip(scan[:-1], scan[1:], res[:-1], res[1:]):
        if ra * rb < 0.0:
            roots.append(brentq(shoot, a, b, xtol=1e-12, rtol=1e-15))
    assert len(roots) >= 1

    def fun(_v, y):
        fa, t, ta = y
        r = arrhenius(K_REF, EA, T_REF, t) * fa / V0
        return np.vstack([-r, (UA_V * (ta - t) + r * (-DH)) / CP_FLOW,
                          -UA_V * (t - ta) / (M_C * C_C)])

    def fun_jac(_v, y):
        # analytic Jacobian of fun (k' = k Ea / (R T^2))
        fa, t, _ta = y
        k = arrhenius(K_REF, EA, T_REF, t)
        kp = k * EA / (R * t * t)
        j = np.zeros((3, 3, y.shape[1]))
        j[0, 0] = -k / V0
        j[0, 1] = -kp * fa / V0
        j[1, 0] = k / V0 * (-DH) / CP_FLOW
        j[1, 1] = (-UA_V + kp * fa / V0 * (-DH)) / CP_FLOW
        j[1, 2] = UA_V / CP_FLOW
        j[2, 1] = -UA_V / (M_C * C_C)
        j[2, 2] = UA_V / (M_C * C_C)
        return j

    def bc(ya, yb):
        return np.array([ya[0] - FA0, ya[1] - T0, yb[2] - TA_IN])

    mesh = np.linspace(0.0, VOL, 201)
    guess = np.vstack([FA0 * (1.0 - 0.5 * mesh / VOL), np.full_like(mesh, T0),
                       np.full_like(mesh, TA_IN)])
    sols = []
    for tol in (1e-8, 1e-9):
        s = solve_bvp(fun, bc, mesh, guess, fun_jac=fun_jac, tol=tol, bc_tol=1e-12,
                      max_nodes=1000000)
        assert s.status == 0, s.message
        sols.append(s)
    x = np.linspace(0.0, VOL, N_POINTS)
    y = sols[1].sol(x).T
    y_coarse = sols[0].sol(x).T
    refine = float(np.max(np.abs(y - y_coarse) / np.abs(y)))
    shoot_diff = min(abs(float(y[0, 2]) - r) for r in roots)
    # the shooting solution's profile at the same points, for a direct comparison
    ta0 = min(roots, key=lambda r: abs(float(y[0, 2]) - r))
    y_sh = solve_ivp(f, (0.0, VOL), [FA0, T0, ta0], method="Radau", rtol=1e-12,
                     atol=[1e-14 * FA0, 1e-12, 1e-12], t_eval=x).y.T
    shoot_profile_diff = float(np.max(np.abs(y - y_sh) / np.abs(y)))
    xs = np.linspace(0.0, VOL, 200001)
    ts = sols[1].sol(xs)[1]
    i = int(np.argmax(ts))
    if 0 < i < len(xs) - 1:
        dtdv = lambda v: sols[1].sol(v, 1)[1]
        v_hs = brentq(dtdv, xs[i - 1], xs[i + 1], xtol=1e-14)
        hs = {"T": float(sols[1].sol(v_hs)[1]), "x": float(v_hs), "interior": True}
    else:
        hs = {"T": float(ts[i]), "x": float(xs[i]), "interior": False}
    return summarise(x, y, {
        "study": study4("counter_current"), "hot_spot": hs,
        "coolant_outlet_T": float(y[0, 2]),
        "shooting_roots": roots, "solutions": len(roots),
        "refine_difference": refine, "shooting_difference_coolant_outlet": shoot_diff,
        "shooting_profile_difference": shoot_profile_diff,
        "bvp_nodes": int(sols[1].x.size),
    })


# ---- case 5: series A -> B -> C in a tube cooled at constant T_a (demo values) ----
S_V0 = 2e-3
S_CA0, S_CS0 = 1000.0, 40000.0
S_K1, S_EA1, S_DH1 = 2e-3, 60e3, -80e3      # at T_REF5
S_K2, S_EA2, S_DH2 = 2e-4, 100e3, -60e3
T_REF5 = 320.0
S_T0 = 320.0
S_UA = 8000.0                                  # W/(m3 K)
S_VOL = 1.0
S_TAS = [310.0, 320.0, 330.0]
S_CP_FLOW = S_V0 * (S_CA0 * CP_A + S_CS0 * CP_S)


def study5(ta):
    return f"""name: series A -> B -> C in a cooled tube (demo values)
phase: liquid
species:
  A: {{cp: {num(CP_A)} J/(mol*K)}}
  B: {{cp: {num(CP_B)} J/(mol*K)}}
  C: {{cp: {num(CP_C)} J/(mol*K)}}
  S: {{cp: {num(CP_S)} J/(mol*K)}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {num(S_K1)} 1/s, Ea: {num(S_EA1)} J/mol, T_ref: {num(T_REF5)} K, dH: {num(S_DH1)} J/mol}}}}
  - {{id: r2, stoich: B -> C, rate: {{k: {num(S_K2)} 1/s, Ea: {num(S_EA2)} J/mol, T_ref: {num(T_REF5)} K, dH: {num(S_DH2)} J/mol}}}}
feed: {{T: {num(S_T0)} K, volumetric: {num(S_V0)} m3/s, concentrations: {{A: {num(S_CA0)} mol/m3, S: {num(S_CS0)} mol/m3}}}}
reactor:
  type: pfr
  volume: {num(S_VOL)} m3
  heat:
    UA: {num(S_UA)} W/(m3*K)
    coolant: {{T: {num(ta)} K}}
key: A
desired: B
solver: {{rtol: 1e-10}}
"""


def series(ta):
    fa0 = S_CA0 * S_V0

    def f(_v, y):
        fa, fb, fc, t = y
        r1 = arrhenius(S_K1, S_EA1, T_REF5, t) * fa / S_V0
        r2 = arrhenius(S_K2, S_EA2, T_REF5, t) * fb / S_V0
        q = S_UA * (ta - t) + r1 * (-S_DH1) + r2 * (-S_DH2)
        return [-r1, r1 - r2, r2, q / S_CP_FLOW]

    y0 = [fa0, 0.0, 0.0, S_T0]
    x, y, d, _ = integrate(f, S_VOL, y0, N_POINTS, atol=[1e-14 * fa0] * 3 + [1e-12])
    hs = hot_spot_ivp(f, y0, S_VOL, 3)
    return {
        "study": study5(ta), "coolant_T": ta, "points": N_POINTS, "x": x.tolist(),
        "F_A": y[:, 0].tolist(), "F_B": y[:, 1].tolist(), "F_C": y[:, 2].tolist(),
        "T": y[:, 3].tolist(), "conversion": (1.0 - y[:, 0] / fa0).tolist(),
        "yield_B_on_A_fed": float(y[-1, 1] / fa0), "hot_spot": hs, "check_dop853": d,
    }


out = {
    "scipy": scipy.__version__,
    "numpy": np.__version__,
    "command": "python3 tests/reference/heat_cooled_pfr.py > tests/reference/heat_cooled_pfr.json",
    "R": R,
    "coolant_stream": {"dT_ad": DT_AD, "co_current": co_current(),
                       "counter_current": counter_current()},
    "series": [series(ta) for ta in S_TAS],
}
print(json.dumps(out, indent=1))
