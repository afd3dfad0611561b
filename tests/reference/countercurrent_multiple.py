"""A counter-current cooled PFR whose boundary-value problem has three solutions, for
tests/countercurrent.rs (demo values, SI units).

Run:  python3 tests/reference/countercurrent_multiple.py > tests/reference/countercurrent_multiple.json
(scipy and numpy versions recorded in the JSON; Python 3; uses heat_common.py beside it).

Liquid A -> B, r = k(T) C_A, C_A = F_A / v0, constant species cp (Fogler ch. 11-12, from memory):
    dF_A/dV = -r,
    dT/dV   = [Ua (T_a - T) + r (-dH)] / sum_j F_j cp_j,
    dT_a/dV = -Ua (T - T_a) / (m_c c_c)           (counter-current),
with F_A(0) = F_A0, T(0) = T0 and T_a(V) = T_a,in: a two-point boundary-value problem.

Every solution is found twice, independently:
  1. shooting on T_a(0): a scan of 101 values of T_a(0) from T_a,in - 1 K to T0 + 1.1 dT_ad + 1 K
     (LSODA, rtol 1e-8), every sign change of T_a(V; T_a(0)) - T_a,in refined by brentq with
     LSODA at rtol 1e-12;
  2. scipy.integrate.solve_bvp (collocation, analytic Jacobian, tol 1e-6, bc_tol 1e-12, 4001-node
     start, at most 200 000 nodes; the steep ignition fronts of the hot solutions need many) from
     the shooting profile of that solution, a different method; the two agree to the
     `agreement` recorded per solution.
Per solution: the coolant outlet temperature T_a(0), the outlet conversion, and the hot spot
(largest T, where dT/dV = 0 falling: a solve_ivp event on the Radau dense output at rtol 1e-12;
the larger end value when there is no interior maximum).
"""
import json

import numpy as np
import scipy
from scipy.integrate import solve_bvp, solve_ivp
from scipy.optimize import brentq

from heat_common import R, arrhenius, num

V0 = 2e-3                      # m3/s
CA0, CS0 = 1000.0, 40000.0     # mol/m3
CP_A = CP_B = 150.0            # J/(mol K)
CP_S = 75.0
K_REF, EA, T_REF, DH = 2e-4, 100e3, 320.0, -300e3
VOL = 1.0                      # m3
UA_V = 20000.0                 # W/(m3 K)
M_C, C_C = 1.5, 4200.0         # kg/s, J/(kg K)
T0, TA_IN = 300.0, 300.0       # K
FA0 = CA0 * V0
CP_FLOW = V0 * (CA0 * CP_A + CS0 * CP_S)
DT_AD = -DH * FA0 / CP_FLOW


def rhs(_v, y):
    fa, t, ta = y
    r = arrhenius(K_REF, EA, T_REF, t) * fa / V0
    return [-r, (UA_V * (ta - t) + r * (-DH)) / CP_FLOW, -UA_V * (t - ta) / (M_C * C_C)]


def ivp(ta0, rtol, method="Radau", **kw):
    y0 = [FA0, T0, ta0]
    return solve_ivp(rhs, (0.0, VOL), y0, method=method, rtol=rtol,
                     atol=[1e-14 * FA0, 1e-12, 1e-12], **kw)


def shoot(ta0, rtol=1e-12, method="LSODA"):
    s = ivp(ta0, rtol, method)
    assert s.success
    return s.y[2][-1] - TA_IN


def hot_spot(ta0):
    ev = lambda v, y: rhs(v, y)[1]
    ev.direction = -1.0
    s = ivp(ta0, 1e-12, events=ev)
    assert s.success
    cands = [(float(s.y[1][0]), 0.0), (float(s.y[1][-1]), VOL)]
    for v, yv in zip(s.t_events[0], s.y_events[0]):
        cands.append((float(yv[1]), float(v)))
    t, v = max(cands)
    return {"T": t, "x": v, "interior": 0.0 < v < VOL}, s


def fun(_v, y):
    fa, t, ta = y
    r = arrhenius(K_REF, EA, T_REF, t) * fa / V0
    return np.vstack([-r, (UA_V * (ta - t) + r * (-DH)) / CP_FLOW,
                      -UA_V * (t - ta) / (M_C * C_C)])


def fun_jac(_v, y):
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


scan = np.linspace(TA_IN - 1.0, T0 + 1.1 * DT_AD + 1.0, 101)
res = [shoot(s, rtol=1e-8) for s in scan]
roots = [brentq(shoot, a, b, xtol=1e-12, rtol=1e-15)
         for a, b, ra, rb in zip(scan[:-1], scan[1:], res[:-1], res[1:]) if ra * rb < 0.0]

solutions = []
for ta0 in roots:
    hs, _ = hot_spot(ta0)
    mesh = np.linspace(0.0, VOL, 4001)
    guess = ivp(ta0, 1e-10, t_eval=mesh).y
    b = solve_bvp(fun, bc, mesh, guess, fun_jac=fun_jac, tol=1e-6, bc_tol=1e-12,
                  max_nodes=200000)
    end = ivp(ta0, 1e-12).y[:, -1]
    conv = 1.0 - end[0] / FA0
    if b.status == 0:
        bvp_ta0 = float(b.sol(0.0)[2])
        bvp_conv = float(1.0 - b.sol(VOL)[0] / FA0)
        agreement = {"coolant_outlet_T": abs(bvp_ta0 - ta0) / ta0,
                     "conversion": abs(bvp_conv - conv) / conv}
    else:
        agreement = {"solve_bvp": b.message}
    solutions.append({
        "coolant_outlet_T": ta0, "conversion": float(conv), "hot_spot": hs,
        "agreement": agreement, "bvp_nodes": int(b.x.size),
    })

study = f"""name: counter-current cooled tube with three solutions (demo values)
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
    UA: {num(UA_V)} W/(m3*K)
    coolant: {{T_in: {num(TA_IN)} K, mass_flow: {num(M_C)} kg/s, cp: {num(C_C)} J/(kg*K), direction: counter_current}}
key: A
solver: {{rtol: 1e-10}}
"""

print(json.dumps({
    "scipy": scipy.__version__,
    "numpy": np.__version__,
    "command": "python3 tests/reference/countercurrent_multiple.py > tests/reference/countercurrent_multiple.json",
    "study": study,
    "dT_ad": DT_AD,
    "solutions": solutions,
}, indent=1))
