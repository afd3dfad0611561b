"""Reference solutions for tests/trains.rs: tubes with side feeds (demo values, SI units).

Run:  python3 tests/reference/side_feeds.py > tests/reference/side_feeds.json
(the scipy and numpy versions are recorded in the JSON; Python 3).

Each case carries the exact study file the Rust test runs (`study`), built here from the same
numbers, so the two cannot drift apart.

A side feed at V_k mixes with the reacting stream there: species flows add; a liquid's
volumetric flow adds (ideal mixing); an ideal gas's follows F_T R T / P; with an energy balance
the temperature comes from the enthalpy balance of adiabatic mixing, which for constant species
cp is T = sum_j F_j cp_j T_j / sum_j F_j cp_j (common practice). Between side feeds the tube is a
PFR (Levenspiel ch. 5-7; Fogler ch. 4-6, from memory):
    dF_j/dV = sum_i nu_ij r_i,  C_j = F_j / v (liquid),  C_j = (P / (R T)) F_j / F_T (gas),
    dT/dV = sum_i (-dH_i) r_i / sum_j F_j cp_j  (adiabatic, dCp = 0 so dH is constant).

Case liquid: series A + B -> R, R + B -> S, second order each, isothermal; B split between the
  inlet and three side feeds, which keeps B low along the tube.
Case gas: A + B -> C, second order, isothermal, inert N; B fed at two points (the volumetric
  flow follows the moles).
Case adiabatic: liquid A + B -> R exothermic with Arrhenius k; cold B injected at two points.

Integration: scipy.integrate.solve_ivp, method Radau, rtol 1e-11, stretch by stretch, checked
against DOP853 at rtol 1e-13 (largest relative difference recorded as `reference_check`).
"""
import json
import sys

import numpy as np
import scipy

sys.path.insert(0, __file__.rsplit("/", 1)[0])
from heat_common import R, arrhenius, integrate, num  # noqa: E402


def run_tube(bounds, y0, rhs_for, mix):
    """Integrate stretch k on [bounds[k], bounds[k+1]] with rhs_for(k); mix(y, k) is the state
    after side feed k (entering at bounds[k + 1]). Returns the outlet, the state at the end of
    every stretch, and the reference check."""
    y = np.array(y0, dtype=float)
    worst = 0.0
    ends = []
    for k in range(len(bounds) - 1):
        if k > 0:
            y = mix(y, k - 1)
        _, Y, diff, _ = integrate(rhs_for(k), bounds[k + 1] - bounds[k], list(y), 3)
        worst = max(worst, diff)
        y = Y[-1]
        ends.append({"V": bounds[k + 1], "state": [float(v) for v in y]})
    return y, ends, worst


def sides_yaml(sides, extra=""):
    return ", ".join(
        f"{{at: {num(a)} m3, flows: {{B: {num(f)} mol/s}}{', volumetric: ' + num(q) + ' m3/s' if q else ''}{extra}}}"
        for a, f, q in sides)


def liquid_case():
    k1, k2 = 2e-4, 1e-4                  # m3/(mol s), demo values
    v0, ca0, cb0 = 1e-3, 1000.0, 400.0   # m3/s, mol/m3
    size = 0.5                           # m3
    sides = [(0.1, 0.4, 0.4e-3), (0.2, 0.4, 0.4e-3), (0.3, 0.4, 0.4e-3)]  # at, F_B, v
    bounds = [0.0] + [s[0] for s in sides] + [size]
    v = np.cumsum([v0] + [s[2] for s in sides])

    def rhs_for(k):
        def rhs(_x, y):
            ca, cb, cr = y[0] / v[k], y[1] / v[k], y[2] / v[k]
            r1, r2 = k1 * ca * cb, k2 * cr * cb
            return [-r1, -r1 - r2, r1 - r2, r2]
        return rhs

    def mix(y, k):
        y = y.copy()
        y[1] += sides[k][1]
        return y

    out, ends, worst = run_tube(bounds, [ca0 * v0, cb0 * v0, 0.0, 0.0], rhs_for, mix)
    study = f"""name: side-fed series tube (demo values)
phase: liquid
species: {{A: {{formula: C2}}, B: {{formula: H2}}, R: {{formula: C2H2}}, S: {{formula: C2H4}}}}
reactions:
  - {{id: r1, stoich: A + B -> R, rate: {{k: {num(k1)} m3/(mol*s)}}}}
  - {{id: r2, stoich: R + B -> S, rate: {{k: {num(k2)} m3/(mol*s)}}}}
feed: {{T: 320 K, volumetric: {num(v0)} m3/s, concentrations: {{A: {num(ca0)} mol/m3, B: {num(cb0)} mol/m3}}}}
key: A
desired: R
reactor:
  type: pfr
  volume: {num(size)} m3
  side_feeds: [{sides_yaml(sides)}]
"""
    return {"name": "liquid", "study": study, "outlet": [float(x) for x in out],
            "ends": ends, "reference_check": worst}


def gas_case():
    k, t, p = 5e-3, 500.0, 2e5           # m3/(mol s), K, Pa; demo values
    fa, fn = 1.0, 1.0                    # mol/s
    size = 2.0                           # m3
    sides = [(0.5, 0.4, None), (1.2, 0.6, None)]
    bounds = [0.0] + [s[0] for s in sides] + [size]
    ct = p / (R * t)

    def rhs_for(_k):
        def rhs(_x, y):
            ft = sum(y)
            ca, cb = ct * y[0] / ft, ct * y[1] / ft
            r = k * ca * cb
            return [-r, -r, r, 0.0]
        return rhs

    def mix(y, j):
        y = y.copy()
        y[1] += sides[j][1]
        return y

    out, ends, worst = run_tube(bounds, [fa, 0.0, 0.0, fn], rhs_for, mix)
    study = f"""name: side-fed gas tube (demo values)
phase: gas
species: {{A: {{formula: C2H4}}, B: {{formula: H2}}, C: {{formula: C2H6}}, N: {{formula: N2}}}}
reactions:
  - {{id: r1, stoich: A + B -> C, rate: {{k: {num(k)} m3/(mol*s)}}}}
feed: {{T: {num(t)} K, P: {num(p)} Pa, flows: {{A: {num(fa)} mol/s, N: {num(fn)} mol/s}}}}
key: A
reactor:
  type: pfr
  volume: {num(size)} m3
  side_feeds: [{sides_yaml(sides)}]
"""
    return {"name": "gas", "study": study, "outlet": [float(x) for x in out],
            "ends": ends, "reference_check": worst}


def adiabatic_case():
    k_ref, ea, t_ref = 1e-5, 60e3, 320.0     # m3/(mol s), J/mol, K; demo values
    dh = -80e3                               # J/mol
    cp = [150.0, 80.0, 230.0, 75.0]          # A, B, R, solvent W: J/(mol K); dCp = 0
    v0, t0 = 1e-3, 320.0
    c0 = [800.0, 200.0, 0.0, 30000.0]        # mol/m3
    size = 0.6
    t_side = 290.0
    sides = [(0.15, 0.3, 0.3e-3), (0.3, 0.3, 0.3e-3)]   # B in solvent W at 290 K
    w_side = 15000.0                         # mol/m3 solvent in the side stream
    bounds = [0.0] + [s[0] for s in sides] + [size]
    v = np.cumsum([v0] + [s[2] for s in sides])

    def rhs_for(k):
        def rhs(_x, y):
            ca, cb = y[0] / v[k], y[1] / v[k]
            r = arrhenius(k_ref, ea, t_ref, y[4]) * ca * cb
            cap = sum(f * c for f, c in zip(y[:4], cp))
            return [-r, -r, r, 0.0, -dh * r / cap]
        return rhs

    def mix(y, j):
        y = y.copy()
        add = [0.0, sides[j][1], 0.0, w_side * sides[j][2]]
        cap_main = sum(f * c for f, c in zip(y[:4], cp))
        cap_side = sum(f * c for f, c in zip(add, cp))
        y[4] = (cap_main * y[4] + cap_side * t_side) / (cap_main + cap_side)
        for i in range(4):
            y[i] += add[i]
        return y

    y0 = [c * v0 for c in c0] + [t0]
    out, ends, worst = run_tube(bounds, y0, rhs_for, mix)
    side_list = ", ".join(
        f"{{at: {num(a)} m3, flows: {{B: {num(f)} mol/s, W: {num(w_side * q)} mol/s}}, volumetric: {num(q)} m3/s, T: {num(t_side)} K}}"
        for a, f, q in sides)
    study = f"""name: adiabatic side-fed tube (demo values)
phase: liquid
species: {{A: {{cp: {num(cp[0])} J/(mol*K)}}, B: {{cp: {num(cp[1])} J/(mol*K)}}, R: {{cp: {num(cp[2])} J/(mol*K)}}, W: {{cp: {num(cp[3])} J/(mol*K)}}}}
reactions:
  - {{id: r1, stoich: A + B -> R, rate: {{k: {num(k_ref)} m3/(mol*s), Ea: {num(ea)} J/mol, T_ref: {num(t_ref)} K, dH: {num(dh)} J/mol}}}}
feed: {{T: {num(t0)} K, volumetric: {num(v0)} m3/s, concentrations: {{A: {num(c0[0])} mol/m3, B: {num(c0[1])} mol/m3, W: {num(c0[3])} mol/m3}}}}
key: A
reactor:
  type: pfr
  volume: {num(size)} m3
  heat: adiabatic
  side_feeds: [{side_list}]
"""
    return {"name": "adiabatic", "study": study, "outlet": [float(x) for x in out],
            "ends": ends, "reference_check": worst}


def main():
    cases = [liquid_case(), gas_case(), adiabatic_case()]
    print(json.dumps({
        "generated_by": "python3 tests/reference/side_feeds.py > tests/reference/side_feeds.json",
        "scipy": scipy.__version__, "numpy": np.__version__, "cases": cases}, indent=1))


if __name__ == "__main__":
    main()
