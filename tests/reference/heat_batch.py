"""Non-isothermal batch reactors for tests/heat_effects.rs (demo values, SI units).

Run:  python3 tests/reference/heat_batch.py > tests/reference/heat_batch.json
(scipy and numpy versions recorded in the JSON; Python 3).

Case 6a, liquid A -> B in a jacketed vessel (jacket at constant T_a, lumped UA), solvent S,
constant species cp, cp_A = cp_B (Fogler ch. 13, Levenspiel ch. 9; from memory):
    dN_A/dt = -r V,  r = k(T) C_A,  C_A = N_A / V (constant volume),
    dT/dt = [UA (T_a - T) + r V (-dH)] / sum_j N_j cp_j.

  The cooling-failure temperature (the temperature the charge would reach if cooling failed
  at time t; heat-format/issue: T + dT_ad (1 - X), dT_ad = (-dH) N_A0 / sum_j N_j0 cp_j): its
  time derivative is dT/dt - dT_ad dX/dt = UA (T_a - T) / sum_j N_j cp_j (dCp = 0), so it
  rises while T < T_a and falls after: its maximum over the batch is where T first reaches
  T_a from below (a solve_ivp event on T - T_a, rising), and there it equals
  T_a + dT_ad (1 - X) (the end of the batch when T never reaches T_a).

Case 6d, the same liquid charge with the jacket temperature ramped (heat-format: `coolant:
    {T: start, ramp: rate, T_final: end}`): T_a(t) = min(T_a,0 + rate t, T_a,final). The
    right-hand side has a kink where the ramp stops, so the integration is split there (two
    solve_ivp Radau runs at rtol 1e-11, the second started from the end of the first).

Case 6b/6c, gas A -> 2 B with an inert N in a closed vessel of fixed volume (ideal gas).
    At constant volume the energy balance is on the internal energy (docs heat-format: Cv_j =
    Cp_j - R and dU_i = dH_i - R T sum_j nu_ij; ideal gas, any thermodynamics text, from
    memory):
    dN_A/dt = -r V,  r = k(T) N_A / V,
    dT/dt = [UA (T_a - T) + r V (-dU(T))] / sum_j N_j Cv_j,
    dH(T) = dH(T_ref) + dCp (T - T_ref)  (Kirchhoff, dCp = 2 cp_B - cp_A),
    dU(T) = dH(T) - R T (sum_j nu_j),  sum_j nu_j = 2 - 1 = 1,
    Cv_j = Cp_j - R,  P = N_T R T / V.
  6b is adiabatic (UA = 0): then sum_j N_j U_j(T) is constant and
    X = sum_j Theta_j Cv_j (T - T0) / (-dU(T)),  Theta_j = N_j0 / N_A0,
  which this script asserts along its own solution. 6c has a jacket at constant T_a.
  For each gas case the script also records what the same equations give with Cp and dH in
  place of Cv and dU (`if_cp_and_dH`), to show that the comparison tells them apart.

Integration: solve_ivp Radau, rtol 1e-11, atol 1e-14 per unit of each state, checked against
DOP853 at rtol 1e-13 (`check_dop853`); values at 11 evenly spaced times, start and end included.
"""
import json

import numpy as np
import scipy

from heat_common import R, arrhenius, integrate, num

N_POINTS = 11

# ---- 6a: liquid, jacket (demo values) ----
L_T0, L_TA, L_UA = 300.0, 310.0, 1000.0       # K, K, W/K
L_VOL, L_TIME = 0.5, 2400.0                    # m3, s
L_CA0, L_CS0 = 1000.0, 40000.0                 # mol/m3
L_CP = {"A": 150.0, "B": 150.0, "S": 75.0}
L_K, L_EA, L_TREF, L_DH = 5e-4, 75e3, 300.0, -100e3


def liquid():
    na0, ns0 = L_CA0 * L_VOL, L_CS0 * L_VOL
    cap = na0 * L_CP["A"] + ns0 * L_CP["S"]    # sum_j N_j cp_j, constant (cp_A = cp_B)

    def f(_t, y):
        na, t = y
        rv = arrhenius(L_K, L_EA, L_TREF, t) * na
        return [-rv, (L_UA * (L_TA - t) + rv * (-L_DH)) / cap]

    crossing = lambda _t, y: y[1] - L_TA
    crossing.direction = 1.0
    x, y, d, sol = integrate(f, L_TIME, [na0, L_T0], N_POINTS, events=crossing)
    dt_ad = -L_DH * na0 / cap
    if len(sol.t_events[0]) > 0:
        t_cf, y_cf = float(sol.t_events[0][0]), sol.y_events[0][0]
    else:
        t_cf, y_cf = L_TIME, y[-1]
    cooling_failure = {"temperature": float(y_cf[1] + dt_ad * y_cf[0] / na0), "at": t_cf}
    # the same figure on a fine grid of the dense output, as a check of the event
    grid = np.linspace(0.0, L_TIME, 400001)
    yy = sol.sol(grid)
    cf = yy[1] + dt_ad * yy[0] / na0
    assert abs(cf.max() - cooling_failure["temperature"]) < 1e-6, (cf.max(), cooling_failure)
    study = f"""name: jacketed liquid batch A -> B (demo values)
phase: liquid
species:
  A: {{cp: {num(L_CP['A'])} J/(mol*K)}}
  B: {{cp: {num(L_CP['B'])} J/(mol*K)}}
  S: {{cp: {num(L_CP['S'])} J/(mol*K)}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {num(L_K)} 1/s, Ea: {num(L_EA)} J/mol, T_ref: {num(L_TREF)} K, dH: {num(L_DH)} J/mol}}}}
feed: {{T: {num(L_T0)} K, concentrations: {{A: {num(L_CA0)} mol/m3, S: {num(L_CS0)} mol/m3}}}}
reactor:
  type: batch
  volume: {num(L_VOL)} m3
  time: {num(L_TIME)} s
  heat:
    UA: {num(L_UA)} W/K
    coolant: {{T: {num(L_TA)} K}}
key: A
solver: {{rtol: 1e-10}}
"""
    return {"study": study, "points": N_POINTS, "x": x.tolist(),
            "conversion": (1.0 - y[:, 0] / na0).tolist(), "T": y[:, 1].tolist(),
            "dT_ad": dt_ad, "cooling_failure": cooling_failure, "check_dop853": d}


# ---- 6d: liquid, ramped jacket (demo values) ----
R_TA0, R_RATE, R_TAF = 290.0, 0.02, 330.0     # K, K/s (1.2 K/min), K


def liquid_ramp():
    from scipy.integrate import solve_ivp
    na0, ns0 = L_CA0 * L_VOL, L_CS0 * L_VOL
    cap = na0 * L_CP["A"] + ns0 * L_CP["S"]
    t_kink = (R_TAF - R_TA0) / R_RATE

    def f(t, y):
        na, temp = y
        ta = min(R_TA0 + R_RATE * t, R_TAF)
        rv = arrhenius(L_K, L_EA, L_TREF, temp) * na
        return [-rv, (L_UA * (ta - temp) + rv * (-L_DH)) / cap]

    atol = [1e-14 * na0, 1e-12]
    first = solve_ivp(f, (0.0, t_kink), [na0, L_T0], method="Radau", rtol=1e-11, atol=atol,
                      dense_output=True)
    second = solve_ivp(f, (t_kink, L_TIME), first.y[:, -1], method="Radau", rtol=1e-11,
                       atol=atol, dense_output=True)
    assert first.success and second.success
    x = np.linspace(0.0, L_TIME, N_POINTS)
    y = np.array([first.sol(t) if t <= t_kink else second.sol(t) for t in x])
    study = f"""name: liquid batch with a ramped jacket (demo values)
phase: liquid
species:
  A: {{cp: {num(L_CP['A'])} J/(mol*K)}}
  B: {{cp: {num(L_CP['B'])} J/(mol*K)}}
  S: {{cp: {num(L_CP['S'])} J/(mol*K)}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {num(L_K)} 1/s, Ea: {num(L_EA)} J/mol, T_ref: {num(L_TREF)} K, dH: {num(L_DH)} J/mol}}}}
feed: {{T: {num(L_T0)} K, concentrations: {{A: {num(L_CA0)} mol/m3, S: {num(L_CS0)} mol/m3}}}}
reactor:
  type: batch
  volume: {num(L_VOL)} m3
  time: {num(L_TIME)} s
  heat:
    UA: {num(L_UA)} W/K
    coolant: {{T: {num(R_TA0)} K, ramp: {num(R_RATE)} K/s, T_final: {num(R_TAF)} K}}
key: A
solver: {{rtol: 1e-10}}
"""
    return {"study": study, "points": N_POINTS, "x": x.tolist(),
            "conversion": (1.0 - y[:, 0] / na0).tolist(), "T": y[:, 1].tolist(),
            "coolant_T": [min(R_TA0 + R_RATE * t, R_TAF) for t in x], "ramp_ends_at": t_kink}


# ---- 6b/6c: gas at constant volume (demo values) ----
G_T0, G_P0 = 400.0, 2e5
G_NA0, G_NN0 = 10.0, 30.0
G_CP = {"A": 120.0, "B": 80.0, "N": 30.0}
G_K, G_EA, G_TREF, G_DH = 3e-4, 60e3, 350.0, -42e3
G_TIME = 60.0
G_VOL = (G_NA0 + G_NN0) * R * G_T0 / G_P0
SUM_NU = 1.0


def gas(ua, ta, internal_energy=True):
    dcp = 2.0 * G_CP["B"] - G_CP["A"]
    off = R if internal_energy else 0.0        # Cv = Cp - R; with Cp for the comparison

    def d_u(t):
        dh = G_DH + dcp * (t - G_TREF)
        return dh - R * t * SUM_NU if internal_energy else dh

    def f(_t, y):
        na, t = y
        nb = 2.0 * (G_NA0 - na)
        cap = na * (G_CP["A"] - off) + nb * (G_CP["B"] - off) + G_NN0 * (G_CP["N"] - off)
        rv = arrhenius(G_K, G_EA, G_TREF, t) * na     # r V = k (N_A / V) V
        return [-rv, (ua * (ta - t) + rv * (-d_u(t))) / cap]

    x, y, d, _ = integrate(f, G_TIME, [G_NA0, G_T0], N_POINTS)
    conv = 1.0 - y[:, 0] / G_NA0
    n_t = G_NA0 + G_NN0 + SUM_NU * (G_NA0 - y[:, 0])
    p = n_t * R * y[:, 1] / G_VOL
    out = {"x": x.tolist(), "conversion": conv.tolist(), "T": y[:, 1].tolist(),
           "P": p.tolist(), "check_dop853": d}
    if ua == 0.0 and internal_energy:
        theta_cv = (G_CP["A"] - R) + (G_NN0 / G_NA0) * (G_CP["N"] - R)
        worst = max(abs(theta_cv * (t - G_T0) / (-d_u(t)) - xx) for t, xx in zip(y[:, 1], conv))
        assert worst < 1e-9, worst
        out["relation_check"] = worst
        out["theta_cv"] = theta_cv
    return out


def gas_study(heat):
    return f"""name: closed gas vessel A -> 2 B with inert (demo values)
phase: gas
species:
  A: {{cp: {num(G_CP['A'])} J/(mol*K)}}
  B: {{cp: {num(G_CP['B'])} J/(mol*K)}}
  N: {{cp: {num(G_CP['N'])} J/(mol*K)}}
reactions:
  - {{id: r1, stoich: A -> 2 B, rate: {{k: {num(G_K)} 1/s, Ea: {num(G_EA)} J/mol, T_ref: {num(G_TREF)} K, dH: {num(G_DH)} J/mol}}}}
feed: {{T: {num(G_T0)} K, P: {num(G_P0)} Pa, amounts: {{A: {num(G_NA0)} mol, N: {num(G_NN0)} mol}}}}
reactor:
  type: batch
  volume: {num(G_VOL)} m3
  time: {num(G_TIME)} s
  mode: constant_volume
  heat: {heat}
key: A
solver: {{rtol: 1e-10}}
"""


G_UA, G_TA = 20.0, 420.0

adiabatic = dict(gas(0.0, G_T0), study=gas_study("adiabatic"), points=N_POINTS,
                 if_cp_and_dH=gas(0.0, G_T0, internal_energy=False))
jacket = dict(gas(G_UA, G_TA), points=N_POINTS,
              study=gas_study(f"{{UA: {num(G_UA)} W/K, coolant: {{T: {num(G_TA)} K}}}}"),
              if_cp_and_dH=gas(G_UA, G_TA, internal_energy=False))

print(json.dumps({
    "scipy": scipy.__version__,
    "numpy": np.__version__,
    "command": "python3 tests/reference/heat_batch.py > tests/reference/heat_batch.json",
    "R": R,
    "liquid_jacket": liquid(),
    "liquid_jacket_ramp": liquid_ramp(),
    "gas_constant_volume": {"volume": G_VOL, "sum_nu": SUM_NU, "adiabatic": adiabatic,
                            "jacket": jacket},
}, indent=1))
