"""Reference solutions for tests/walls.rs: tubes with a distributed feed or a membrane wall
(demo values, SI units).

Run:  python3 tests/reference/walls.py > tests/reference/walls.json
(the scipy and numpy versions are recorded in the JSON; Python 3).

Each case carries the exact study file the Rust test runs (`study`), built here from the same
numbers, so the two cannot drift apart.

Balances over a slice dV of a tube with a stream spread along it and a wall flux (common
practice; Levenspiel, Chemical Reaction Engineering, 3rd ed., ch. 7, from memory):
    dF_j/dV = sum_i nu_ij r_i + F_j,side w(V) - k_m (C_j - C_j,sweep)
    dQ_j/dV = k_m (C_j - C_j,sweep)                                 (cumulative permeate)
with w the feed's shape normalised to integral 1 over its stretch, zero outside.
Liquid: C_j = F_j / v(V), v(V) = v0 + q_side * int_0^V w. Gas (ideal, isothermal, no pressure
drop): C_j = P0/(R T0) F_j / F_T. Energy (liquid, species cp constant, dCp = 0 for every
reaction): dT/dV = [sum_i r_i (-dH_i) - w(V) sum_j F_j,side cp_j (T - T_side)] / sum_j F_j cp_j.

Cases:
  parallel_*: A + B -> R, 2 B -> S (r1 = k1 C_A C_B, r2 = k2 C_B^2), liquid: the unwanted
    step is of higher order in B, so B kept low raises R (Levenspiel ch. 7, from memory);
    `inlet`: all B in the feed; `uniform`: the same B spread evenly over the tube;
    `shaped`: spread by the shape [[0, 1], [0.3, 3], [1, 0.5]] m3.
  gas_stretch: the same scheme in a gas with an inert, B fed over 0.2..0.7 m3 only.
  energy: liquid `uniform` case, adiabatic, Arrhenius k's, B entering colder than the feed.
  membrane_gas: A <=> B + C (r = kf (C_A - C_B C_C / K_c)) with C removed through the wall,
    sweep 0; beside it the closed-tube equilibrium conversion X_eq = sqrt(K_c / (C_T0 + K_c))
    of a pure A feed (own derivation: K_c = C_T0 X^2 / (1 - X^2) from F_A = F0 (1 - X),
    F_B = F_C = F0 X, F_T = F0 (1 + X)).
  membrane_feed: liquid A + B -> P with B entering through the wall from a sweep at 500 mol/m3.
  membrane_pbr: the membrane_gas scheme in a packed bed with pressure drop, rates and the wall
    coefficient per catalyst mass: C_j = C_T0 p F_j / F_T, dp/dW = -(alpha / 2p)(F_T / F_T0)
    (isothermal; Ergun lumped, common practice).

Integration: scipy.integrate.solve_ivp, method Radau, rtol 1e-11, atol 1e-13 per unit of each
state, piece by piece between the shape's points (where the right-hand side kinks or jumps).
Profiles at evenly spaced points, inlet and outlet included (rxnet `Points::Even(N)` gives the
same abscissae).
"""
import json
import sys

import numpy as np
import scipy
from scipy.integrate import solve_ivp

R = 8.31446261815324  # J/(mol K), CODATA 2018
N_POINTS = 11


def num(v):
    return repr(float(v))


def shape_fn(points):
    """w(x) normalised to integral 1, linear between points, zero outside."""
    xs = np.array([p[0] for p in points], float)
    ws = np.array([p[1] for p in points], float)
    total = np.trapezoid(ws, xs)
    ws = ws / total

    def w(x):
        if x < xs[0] or x > xs[-1]:
            return 0.0
        return float(np.interp(x, xs, ws))

    def integral(x):
        if x <= xs[0]:
            return 0.0
        x = min(x, xs[-1])
        grid = np.concatenate([xs[xs < x], [x]])
        return float(np.trapezoid([np.interp(g, xs, ws) for g in grid], grid))

    return w, integral, list(xs)


def integrate(f, y0, size, breaks, n_points=N_POINTS):
    """Integrate piecewise between breaks; profile at evenly spaced points."""
    xs = np.linspace(0.0, size, n_points)
    cuts = [0.0] + sorted(b for b in breaks if 0.0 < b < size) + [size]
    y = np.array(y0, float)
    out = {}
    for a, b in zip(cuts[:-1], cuts[1:]):
        def g(x, yy):
            # evaluate inside the piece (its own side of a jump at a or b)
            return f(min(max(x, a + 1e-12 * (b - a)), b - 1e-12 * (b - a)), yy)

        pts = [x for x in xs if a <= x <= b]
        sol = solve_ivp(g, (a, b), y, method="Radau", rtol=1e-11,
                        atol=1e-13 * np.maximum(1.0, np.abs(y)), t_eval=pts or None,
                        dense_output=True)
        assert sol.success, sol.message
        for x in pts:
            out[float(x)] = [float(v) for v in sol.sol(x)]
        y = sol.sol(b)
    return [float(x) for x in xs], [out[float(x)] for x in xs]


# ---- parallel A + B -> R, 2 B -> S, liquid (demo values) ----
V = 1.0                # m3
V0 = 1e-3              # m3/s
FA0 = 1.0              # mol/s
FB = 1.0               # mol/s of B, whole
QB = 1e-3              # m3/s that carries B along the tube
K1, K2 = 1e-5, 2e-5    # m3/(mol s)
SPECIES = ["A", "B", "R", "S"]


def parallel_study(feed_b_at_inlet, distributed, heat="", cps=None, ea=None):
    sp = "species:\n" + "".join(
        f"  {s}: {{formula: {f}{', cp: ' + num(cps[s]) + ' J/(mol*K)' if cps else ''}}}\n"
        for s, f in zip(SPECIES, ["C2H4", "Br2", "C2H4Br2", "Br4"]))
    if ea:
        rx = (f"  - {{id: r1, stoich: A + B -> R, rate: {{k: {num(K1)} m3/(mol*s), Ea: {num(ea[0])} J/mol, T_ref: {num(ea[2])} K, dH: {num(ea[3])} J/mol}}}}\n"
              f"  - {{id: r2, stoich: 2 B -> S, rate: {{k: {num(K2)} m3/(mol*s), Ea: {num(ea[1])} J/mol, T_ref: {num(ea[2])} K, dH: {num(ea[4])} J/mol}}}}\n")
    else:
        rx = (f"  - {{id: r1, stoich: A + B -> R, rate: {{k: {num(K1)} m3/(mol*s)}}}}\n"
              f"  - {{id: r2, stoich: 2 B -> S, rate: {{k: {num(K2)} m3/(mol*s)}}}}\n")
    if feed_b_at_inlet:
        feed = f"feed: {{T: 320 K, volumetric: {num(V0 + QB)} m3/s, flows: {{A: {num(FA0)} mol/s, B: {num(FB)} mol/s}}}}\n"
    else:
        feed = f"feed: {{T: 320 K, volumetric: {num(V0)} m3/s, flows: {{A: {num(FA0)} mol/s}}}}\n"
    return (f"name: parallel A + B -> R, 2 B -> S, B along the tube (demo values)\nphase: liquid\n{sp}"
            f"reactions:\n{rx}{feed}reactor:\n  type: pfr\n  volume: {num(V)} m3\n{heat}{distributed}"
            "desired: R\n")


def parallel(w, integral, breaks, at_inlet):
    def f(x, y):
        fa, fb, fr, fs = y
        v = V0 + QB * integral(x) if not at_inlet else V0 + QB
        ca, cb = fa / v, fb / v
        r1, r2 = K1 * ca * cb, K2 * cb * cb
        side = 0.0 if at_inlet else FB * w(x)
        return [-r1, -r1 - 2 * r2 + side, r1, r2]
    y0 = [FA0, FB if at_inlet else 0.0, 0.0, 0.0]
    return integrate(f, y0, V, breaks)


cases = {}
uniform_w, uniform_int, uniform_b = shape_fn([(0.0, 1.0), (V, 1.0)])
x, y = parallel(uniform_w, uniform_int, [], True)
cases["parallel_inlet"] = {
    "study": parallel_study(True, ""), "x": x, "states": y, "species": SPECIES}
dist = f"  distributed_feeds: [{{flows: {{B: {num(FB)} mol/s}}, volumetric: {num(QB)} m3/s}}]\n"
x, y = parallel(uniform_w, uniform_int, [], False)
cases["parallel_uniform"] = {
    "study": parallel_study(False, dist), "x": x, "states": y, "species": SPECIES}
shape = [(0.0, 1.0), (0.3, 3.0), (1.0, 0.5)]
sw, sint, sb = shape_fn(shape)
dist_shaped = (f"  distributed_feeds:\n    - flows: {{B: {num(FB)} mol/s}}\n      volumetric: {num(QB)} m3/s\n"
               f"      shape: [{', '.join(f'[{num(a)} m3, {num(b)}]' for a, b in shape)}]\n")
x, y = parallel(sw, sint, sb, False)
cases["parallel_shaped"] = {
    "study": parallel_study(False, dist_shaped), "x": x, "states": y, "species": SPECIES}

# ---- energy: adiabatic liquid, B entering colder (demo values) ----
CPS = {"A": 100.0, "B": 50.0, "R": 150.0, "S": 100.0}   # dCp = 0 for both reactions
EA1, EA2, TREF = 40e3, 50e3, 320.0
DH1, DH2 = -20e3, -10e3
T0, TB = 320.0, 290.0


def energy_rhs(x, y):
    fa, fb, fr, fs, t = y
    v = V0 + QB * uniform_int(x)
    ca, cb = fa / v, fb / v
    k1 = K1 * np.exp(-EA1 / R * (1 / t - 1 / TREF))
    k2 = K2 * np.exp(-EA2 / R * (1 / t - 1 / TREF))
    r1, r2 = k1 * ca * cb, k2 * cb * cb
    wx = uniform_w(x)
    cap = fa * CPS["A"] + fb * CPS["B"] + fr * CPS["R"] + fs * CPS["S"]
    dt = (r1 * -DH1 + r2 * -DH2 - wx * FB * CPS["B"] * (t - TB)) / cap
    return [-r1, -r1 - 2 * r2 + FB * wx, r1, r2, dt]


x, y = integrate(energy_rhs, [FA0, 0.0, 0.0, 0.0, T0], V, [])
dist_t = f"  distributed_feeds: [{{flows: {{B: {num(FB)} mol/s}}, volumetric: {num(QB)} m3/s, T: {num(TB)} K}}]\n"
cases["energy"] = {
    "study": parallel_study(False, dist_t, heat="  heat: adiabatic\n", cps=CPS,
                                   ea=(EA1, EA2, TREF, DH1, DH2)),
    "x": x, "states": [s[:4] for s in y], "temperature": [s[4] for s in y], "species": SPECIES}

# ---- gas: the same scheme with an inert, B over 0.2..0.7 m3 (demo values) ----
TG, PG = 500.0, 2e5
CT0 = PG / (R * TG)
KG1, KG2 = 5e-3, 1e-2   # m3/(mol s)
FI = 2.0
gw, gint, gb = shape_fn([(0.2, 1.0), (0.7, 1.0)])


def gas_rhs(x, y):
    fa, fb, fr, fs, fi = y
    ft = fa + fb + fr + fs + fi
    ca, cb = CT0 * fa / ft, CT0 * fb / ft
    r1, r2 = KG1 * ca * cb, KG2 * cb * cb
    return [-r1, -r1 - 2 * r2 + FB * gw(x), r1, r2, 0.0]


x, y = integrate(gas_rhs, [FA0, 0.0, 0.0, 0.0, FI], V, gb)
cases["gas_stretch"] = {
    "study": ("name: gas parallel, B over a stretch (demo values)\nphase: gas\n"
              "species:\n  A: {formula: C2H4}\n  B: {formula: Br2}\n  R: {formula: C2H4Br2}\n  S: {formula: Br4}\n  I: {formula: N2}\n"
              f"reactions:\n  - {{id: r1, stoich: A + B -> R, rate: {{k: {num(KG1)} m3/(mol*s)}}}}\n"
              f"  - {{id: r2, stoich: 2 B -> S, rate: {{k: {num(KG2)} m3/(mol*s)}}}}\n"
              f"feed: {{T: {num(TG)} K, P: {num(PG)} Pa, flows: {{A: {num(FA0)} mol/s, I: {num(FI)} mol/s}}}}\n"
              f"reactor:\n  type: pfr\n  volume: {num(V)} m3\n"
              f"  distributed_feeds: [{{from: 0.2 m3, to: 0.7 m3, flows: {{B: {num(FB)} mol/s}}}}]\n"
              "desired: R\n"),
    "x": x, "states": y, "species": SPECIES + ["I"]}

# ---- membrane: gas A <=> B + C, C removed (demo values) ----
TM, PM = 600.0, 1e5
CTM = PM / (R * TM)
KF, KC, KM = 0.5, 2.0, 2.0    # 1/s, mol/m3, 1/s
FM = 1.0
VM = 2.0


def membrane_rhs(x, y):
    fa, fb, fc, q = y
    ft = fa + fb + fc
    ca, cb, cc = CTM * fa / ft, CTM * fb / ft, CTM * fc / ft
    r = KF * (ca - cb * cc / KC)
    flux = KM * cc
    return [-r, r, r - flux, flux]


x, y = integrate(membrane_rhs, [FM, 0.0, 0.0, 0.0], VM, [])
x_eq = float(np.sqrt(KC / (CTM + KC)))


def closed_rhs(x, y):
    """The same tube without the membrane."""
    fa, fb, fc, _ = y
    ft = fa + fb + fc
    r = KF * (CTM * fa / ft - (CTM * fb / ft) * (CTM * fc / ft) / KC)
    return [-r, r, r, 0.0]


closed = integrate(closed_rhs, [FM, 0.0, 0.0, 0.0], VM, [])
cases["membrane_gas"] = {
    "study": ("name: membrane tube, C taken out through the wall (demo values)\nphase: gas\n"
              "species:\n  A: {formula: C4H10}\n  B: {formula: C4H8}\n  C: {formula: H2}\n"
              f"reactions:\n  - {{id: r1, stoich: A <=> B + C, rate: {{k: {num(KF)} 1/s, K_eq: {num(KC)} mol/m3}}}}\n"
              f"feed: {{T: {num(TM)} K, P: {num(PM)} Pa, flows: {{A: {num(FM)} mol/s}}}}\n"
              f"reactor:\n  type: pfr\n  volume: {num(VM)} m3\n"
              f"  membrane: [{{species: C, coefficient: {num(KM)} 1/s}}]\n"),
    "x": x, "states": [s[:3] for s in y], "permeate": [s[3] for s in y],
    "species": ["A", "B", "C"], "permeate_species": "C", "K_c": KC, "C_T0": CTM, "X_eq": x_eq,
    "closed_outlet_conversion": 1.0 - closed[1][-1][0] / FM}

# ---- membrane: liquid A + B -> P, B fed through the wall (demo values) ----
KP, KMB, CSW, VL, V0L = 1e-5, 0.002, 500.0, 1.0, 1e-3


def wall_feed_rhs(x, y):
    fa, fb, fp, q = y
    ca, cb = fa / V0L, fb / V0L
    r = KP * ca * cb
    flux = KMB * (cb - CSW)
    return [-r, -r - flux, r, flux]


x, y = integrate(wall_feed_rhs, [1.0, 0.0, 0.0, 0.0], VL, [])
cases["membrane_feed"] = {
    "study": ("name: reactant fed through the wall (demo values)\nphase: liquid\n"
              "species:\n  A: {formula: C2H4}\n  B: {formula: Cl2}\n  P: {formula: C2H4Cl2}\n"
              f"reactions:\n  - {{id: r1, stoich: A + B -> P, rate: {{k: {num(KP)} m3/(mol*s)}}}}\n"
              f"feed: {{T: 300 K, volumetric: {num(V0L)} m3/s, flows: {{A: 1 mol/s}}}}\n"
              f"reactor:\n  type: pfr\n  volume: {num(VL)} m3\n"
              f"  membrane: [{{species: B, coefficient: {num(KMB)} 1/s, sweep: {num(CSW)} mol/m3}}]\n"),
    "x": x, "states": [s[:3] for s in y], "permeate": [s[3] for s in y],
    "species": ["A", "B", "P"], "permeate_species": "B"}

# ---- membrane in a packed bed with pressure drop (demo values) ----
KFW, KMW, ALPHA, WB = 0.01, 0.04, 0.005, 100.0   # m3/(kg s), m3/(kg s), 1/kg, kg


def membrane_pbr_rhs(x, y):
    fa, fb, fc, q, p = y
    ft = fa + fb + fc
    ca, cb, cc = (CTM * p * f / ft for f in (fa, fb, fc))
    r = KFW * (ca - cb * cc / KC)
    flux = KMW * cc
    return [-r, r, r - flux, flux, -ALPHA / (2 * p) * ft / FM]


x, y = integrate(membrane_pbr_rhs, [FM, 0.0, 0.0, 0.0, 1.0], WB, [])
cases["membrane_pbr"] = {
    "study": ("name: membrane packed bed, C taken out through the wall (demo values)\nphase: gas\n"
              "species:\n  A: {formula: C4H10}\n  B: {formula: C4H8}\n  C: {formula: H2}\n"
              f"reactions:\n  - {{id: r1, stoich: A <=> B + C, rate: {{k: {num(KFW)} m3/(kg*s), K_eq: {num(KC)} mol/m3}}}}\n"
              f"feed: {{T: {num(TM)} K, P: {num(PM)} Pa, flows: {{A: {num(FM)} mol/s}}}}\n"
              f"reactor:\n  type: pbr\n  catalyst: {num(WB)} kg\n  pressure_drop: {{alpha: {num(ALPHA)} 1/kg}}\n"
              f"  membrane: [{{species: C, coefficient: {num(KMW)} m3/(kg*s)}}]\n"),
    "x": x, "states": [s[:3] for s in y], "permeate": [s[3] for s in y],
    "pressure_ratio": [s[4] for s in y],
    "species": ["A", "B", "C"], "permeate_species": "C"}

json.dump({
    "scipy": scipy.__version__,
    "numpy": np.__version__,
    "command": "python3 tests/reference/walls.py > tests/reference/walls.json",
    "R": R,
    "cases": cases,
}, sys.stdout, indent=1)
print()
