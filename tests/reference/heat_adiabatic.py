"""Adiabatic reference solutions for tests/heat_effects.rs (demo values, SI units).

Run:  python3 tests/reference/heat_adiabatic.py > tests/reference/heat_adiabatic.json
(written with the scipy and numpy versions recorded in the JSON; Python 3).

Each case carries the exact study file the Rust test runs (`study`), built here from the same
numbers, so the two cannot drift apart.

Case 1, liquid A -> B, first order, constant species cp with cp_A = cp_B (dCp = 0), solvent S:
  r = k(T) C_A, C_A = F_A / v0 (liquid, constant density), k(T) Arrhenius about T_ref.
  PFR (Fogler ch. 11-12, Levenspiel ch. 9; from memory):
      dF_A/dV = -r,  dT/dV = r (-dH) / sum_j F_j cp_j.
  Batch (same sources): dN_A/dt = -r V, dT/dt = r V (-dH) / sum_j N_j cp_j, C_A = N_A / V.
  CSTR (same sources): F_A0 - F_A - V r(T) = 0 and -sum_j F_j0 cp_j (T - T0) + V r (-dH) = 0;
      with X = k tau / (1 + k tau) (tau = V/v0) the energy balance becomes one equation in T,
      g(T) = T - T0 - dT_ad k(T) tau / (1 + k(T) tau) = 0, every root of which is bracketed by
      a uniform scan of [T0 - 1, T0 + dT_ad + 1] (200 001 points) and refined by brentq.
  Adiabatic temperature rise of the feed (same sources): dT_ad = (-dH) F_A0 / sum_j F_j0 cp_j,
  and along any adiabatic profile T - T0 = dT_ad X (dCp = 0).

Case 2, gas A -> 2 B with an inert N, constant but different cp's (dCp = 2 cp_B - cp_A != 0),
  adiabatic PFR at constant pressure (no pressure drop), ideal gas:
      C_A = (P0 / (R T)) F_A / F_T,  r = k(T) C_A,
      dF_A/dV = -r,  dT/dV = r (-dH(T)) / sum_j F_j cp_j,
      dH(T) = dH(T_ref) + dCp (T - T_ref)  (Kirchhoff),
  and along the profile X = sum_j Theta_j cp_j (T - T0) / (-dH(T)), Theta_j = F_j0 / F_A0
  (Fogler ch. 11, Levenspiel ch. 9; from memory).

Integration: scipy.integrate.solve_ivp, method Radau, rtol 1e-11, atol 1e-14 per unit of each
state; checked against DOP853 at rtol 1e-13 (the largest relative difference is recorded as
`check_dop853`). Profiles at evenly spaced points, inlet and outlet included (rxnet
`--points N` gives the same abscissae).
"""
import json

import numpy as np
import scipy

from heat_common import R, all_roots, arrhenius, integrate, num

N_POINTS = 11

# ---- case 1: liquid, dCp = 0 (demo values) ----
T0 = 300.0
V0 = 1e-3                 # m3/s
CA0, CS0 = 1000.0, 40000.0  # mol/m3
CP_A = CP_B = 150.0       # J/(mol K)
CP_S = 75.0
K_REF, EA, T_REF = 2e-3, 75e3, 300.0   # 1/s, J/mol, K
DH = -100e3               # J/mol


def liquid_study(reactor, feed):
    return f"""name: adiabatic liquid A -> B (demo values)
phase: liquid
species:
  A: {{cp: {num(CP_A)} J/(mol*K)}}
  B: {{cp: {num(CP_B)} J/(mol*K)}}
  S: {{cp: {num(CP_S)} J/(mol*K)}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {num(K_REF)} 1/s, Ea: {num(EA)} J/mol, T_ref: {num(T_REF)} K, dH: {num(DH)} J/mol}}}}
feed: {feed}
reactor: {reactor}
key: A
solver: {{rtol: 1e-10}}
"""


def case1():
    fa0, fs0 = CA0 * V0, CS0 * V0
    cp_flow = fa0 * CP_A + fs0 * CP_S     # sum_j F_j cp_j, constant since cp_A = cp_B
    dt_ad = -DH * fa0 / cp_flow
    out = {"dT_ad": dt_ad}

    # PFR
    vol = 0.3

    def pfr(v, y):
        fa, t = y
        r = arrhenius(K_REF, EA, T_REF, t) * fa / V0
        return [-r, r * (-DH) / cp_flow]

    x, y, d, _ = integrate(pfr, vol, [fa0, T0], N_POINTS)
    out["pfr"] = {
        "study": liquid_study(
            f"{{type: pfr, volume: {num(vol)} m3, heat: adiabatic}}",
            f"{{T: {num(T0)} K, volumetric: {num(V0)} m3/s, concentrations: {{A: {num(CA0)} mol/m3, S: {num(CS0)} mol/m3}}}}"),
        "points": N_POINTS, "x": x.tolist(),
        "conversion": (1.0 - y[:, 0] / fa0).tolist(), "T": y[:, 1].tolist(),
        "check_dop853": d,
    }

    # batch, charge by concentrations in a vessel of volume vb
    vb, tb = 1.0, 400.0
    na0, ns0 = CA0 * vb, CS0 * vb
    cp_charge = na0 * CP_A + ns0 * CP_S

    def batch(_t, y):
        na, t = y
        rv = arrhenius(K_REF, EA, T_REF, t) * na   # r V = k C_A V = k N_A
        return [-rv, rv * (-DH) / cp_charge]

    x, y, d, _ = integrate(batch, tb, [na0, T0], N_POINTS)
    out["batch"] = {
        "study": liquid_study(
            f"{{type: batch, volume: {num(vb)} m3, time: {num(tb)} s, heat: adiabatic}}",
            f"{{T: {num(T0)} K, concentrations: {{A: {num(CA0)} mol/m3, S: {num(CS0)} mol/m3}}}}"),
        "points": N_POINTS, "x": x.tolist(),
        "conversion": (1.0 - y[:, 0] / na0).tolist(), "T": y[:, 1].tolist(),
        "check_dop853": d,
    }

    # CSTR
    vc = 0.1
    tau = vc / V0

    def g(t):
        kt = arrhenius(K_REF, EA, T_REF, t) * tau
        return t - T0 - dt_ad * kt / (1.0 + kt)

    states = []
    for t in all_roots(g, T0 - 1.0, T0 + dt_ad + 1.0):
        kt = arrhenius(K_REF, EA, T_REF, t) * tau
        states.append({"T": t, "conversion": kt / (1.0 + kt)})
    out["cstr"] = {
        "study": liquid_study(
            f"{{type: cstr, volume: {num(vc)} m3, heat: adiabatic}}",
            f"{{T: {num(T0)} K, volumetric: {num(V0)} m3/s, concentrations: {{A: {num(CA0)} mol/m3, S: {num(CS0)} mol/m3}}}}"),
        "states": states,
    }
    return out


# ---- case 2: gas A -> 2 B + inert N, dCp != 0 (demo values) ----
G_T0, G_P0 = 400.0, 2e5            # K, Pa
G_FA0, G_FN0 = 1.0, 3.0            # mol/s
G_CP = {"A": 120.0, "B": 80.0, "N": 30.0}
G_K_REF, G_EA, G_T_REF, G_DH = 5e-3, 60e3, 350.0, -42e3   # 1/s, J/mol, K, J/mol at T_REF
G_VOL = 0.25                       # m3


def case2():
    dcp = 2.0 * G_CP["B"] - G_CP["A"]

    def dh(t):
        return G_DH + dcp * (t - G_T_REF)

    def pfr(_v, y):
        fa, t = y
        fb = 2.0 * (G_FA0 - fa)
        ft = fa + fb + G_FN0
        ca = G_P0 / (R * t) * fa / ft
        r = arrhenius(G_K_REF, G_EA, G_T_REF, t) * ca
        cp_flow = fa * G_CP["A"] + fb * G_CP["B"] + G_FN0 * G_CP["N"]
        return [-r, r * (-dh(t)) / cp_flow]

    x, y, d, _ = integrate(pfr, G_VOL, [G_FA0, G_T0], N_POINTS)
    conv = 1.0 - y[:, 0] / G_FA0
    # the adiabatic relation on the reference itself (a check of this script)
    theta_cp = G_CP["A"] + (G_FN0 / G_FA0) * G_CP["N"]
    rel = [theta_cp * (t - G_T0) / (-dh(t)) for t in y[:, 1]]
    worst = max(abs(a - b) for a, b in zip(rel, conv))
    assert worst < 1e-9, worst
    study = f"""name: adiabatic gas A -> 2 B with inert, dCp != 0 (demo values)
phase: gas
species:
  A: {{cp: {num(G_CP['A'])} J/(mol*K)}}
  B: {{cp: {num(G_CP['B'])} J/(mol*K)}}
  N: {{cp: {num(G_CP['N'])} J/(mol*K)}}
reactions:
  - {{id: r1, stoich: A -> 2 B, rate: {{k: {num(G_K_REF)} 1/s, Ea: {num(G_EA)} J/mol, T_ref: {num(G_T_REF)} K, dH: {num(G_DH)} J/mol}}}}
feed: {{T: {num(G_T0)} K, P: {num(G_P0)} Pa, flows: {{A: {num(G_FA0)} mol/s, N: {num(G_FN0)} mol/s}}}}
reactor: {{type: pfr, volume: {num(G_VOL)} m3, heat: adiabatic}}
key: A
solver: {{rtol: 1e-10}}
"""
    return {
        "study": study, "points": N_POINTS, "x": x.tolist(),
        "conversion": conv.tolist(), "T": y[:, 1].tolist(),
        "dCp": dcp, "dH_at_T0": dh(G_T0), "theta_cp": theta_cp,
        "relation_check": worst, "check_dop853": d,
    }


print(json.dumps({
    "scipy": scipy.__version__,
    "numpy": np.__version__,
    "command": "python3 tests/reference/heat_adiabatic.py > tests/reference/heat_adiabatic.json",
    "R": R,
    "liquid": case1(),
    "gas_dcp": case2(),
}, indent=1))
