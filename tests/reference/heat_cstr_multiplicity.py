"""A cooled liquid CSTR with three steady states, for tests/heat_effects.rs (demo values, SI).

Run:  python3 tests/reference/heat_cstr_multiplicity.py > tests/reference/heat_cstr_multiplicity.json
(scipy and numpy versions recorded in the JSON; Python 3).

Liquid A -> B, first order, r = k(T) C_A, Arrhenius about T_ref, solvent S, constant species
cp with cp_A = cp_B (dCp = 0); heat exchange UA (T_a - T) with a coolant at constant T_a.

Steady state (Fogler ch. 12, Levenspiel ch. 9; from memory):
    F_A0 - F_A - V r = 0  gives  X(T) = k tau / (1 + k tau),  tau = V / v0;
    UA (T_a - T) - sum_j F_j0 cp_j (T - T0) + V r (-dH) = 0, i.e.
    G(T) = R(T) with the heat generated  G(T) = (-dH) F_A0 X(T)
    and the heat removed                R(T) = sum_j F_j0 cp_j (T - T0) + UA (T - T_a).
Every root of G - R in [T_a - 20 K, T0 + dT_ad + 20 K] is bracketed by a uniform scan of
200 001 points and refined by brentq; each is then checked on the two balances in (C_A, T) with
scipy.optimize.fsolve started from it.

Stability (van Heerden, Ind. Eng. Chem. 45 (1953) 1242; Fogler ch. 13; from memory): the
transient CSTR with holdup,
    dC_A/dt = (C_A0 - C_A)/tau - k C_A,
    dC_B/dt = -C_B/tau + k C_A,
    dC_S/dt = (C_S0 - C_S)/tau,
    (sum_j N_j cp_j) dT/dt = sum_j F_j0 cp_j (T0 - T) + UA (T_a - T) + V k C_A (-dH),
    sum_j N_j cp_j = V (C_A cp_A + C_B cp_B + C_S cp_S),
linearised at each steady state. C_B and C_S enter neither the A nor the T equation (the
holdup's derivative multiplies a zero residual there), so the eigenvalues are those of the
2x2 Jacobian in (C_A, T),
    [[-1/tau - k,            -k' C_A],
     [V k (-dH)/Cap,  (V k' C_A (-dH) - sum F_j0 cp_j - UA)/Cap]],  k' = k Ea/(R T^2),
together with -1/tau (twice). A state is stable when every real part is negative. Any constant
linear change of the state variables (flows or amounts instead of concentrations) leaves the
eigenvalues unchanged.

Ignition and extinction (turning points of the steady T against a parameter p, Fogler ch. 12,
from memory): a fold satisfies G = R and dG/dT = dR/dT = sum_j F_j0 cp_j + UA. The second
equation does not contain T0 or T_a, so its roots T_f are found first (scan + brentq) and the
parameter follows from the first explicitly:
    against the feed temperature:     T0 = T_f - (G(T_f) - UA (T_f - T_a)) / sum_j F_j0 cp_j,
    against the coolant temperature:  T_a = T_f - (G(T_f) - sum_j F_j0 cp_j (T_f - T0)) / UA.
The fold at the lower T_f ends the low (extinguished) branch: rising past its parameter value
ignites the reactor (ignition); the fold at the higher T_f ends the high branch: falling below
its value extinguishes it (extinction). The script checks that the number of steady states is
3 just inside each fold and 1 just outside.

The same reactor is written twice: with species cp, and with a mixture heat capacity per mass
and a density chosen so that rho c_p v0 = sum_j F_j0 cp_j and rho c_p V = sum_j N_j cp_j
(the same balances, so the same states).
"""
import json
import math

import numpy as np
import scipy
from scipy.optimize import brentq, fsolve

from heat_common import R, all_roots, arrhenius, num

V0 = 1e-3                        # m3/s
CA0, CS0 = 2000.0, 40000.0       # mol/m3
CP_A = CP_B = 150.0              # J/(mol K)
CP_S = 75.0
K_REF, EA, T_REF = 3e-4, 80e3, 300.0
DH = -120e3                      # J/mol
VOL = 0.2                        # m3
UA = 500.0                       # W/K
T0, TA = 300.0, 300.0            # K
DENSITY = 1000.0                 # kg/m3, for the mixture-cp form

TAU = VOL / V0
FA0 = CA0 * V0
CP_FLOW = V0 * (CA0 * CP_A + CS0 * CP_S)      # sum_j F_j0 cp_j, W/K
CAP = VOL * (CA0 * CP_A + CS0 * CP_S)          # sum_j N_j cp_j at any state (cp_A = cp_B)
MIXTURE_CP = CP_FLOW / (DENSITY * V0)          # J/(kg K)
DT_AD = -DH * FA0 / CP_FLOW


def k(t):
    return arrhenius(K_REF, EA, T_REF, t)


def conv(t):
    kt = k(t) * TAU
    return kt / (1.0 + kt)


def gen(t):
    return -DH * FA0 * conv(t)


def dgen(t):
    kt = k(t) * TAU
    return -DH * FA0 * kt * EA / (R * t * t) / (1.0 + kt) ** 2


def removed(t, t0, ta):
    return CP_FLOW * (t - t0) + UA * (t - ta)


T_LO, T_HI = TA - 20.0, T0 + DT_AD + 20.0


def states(t0, ta):
    return all_roots(lambda t: gen(t) - removed(t, t0, ta), min(t0, ta) - 20.0,
                     max(t0, ta) + DT_AD + 20.0)


def describe(t):
    x = conv(t)
    ca = CA0 * (1.0 - x)
    # full balances in (C_A, T), polished by fsolve from the brentq root
    def full(y):
        c, tt = y
        rr = k(tt) * c
        return [(CA0 - c) / TAU - rr,
                (-CP_FLOW * (tt - T0) + UA * (TA - tt) + VOL * rr * (-DH)) / CP_FLOW]
    y, info, ier, msg = fsolve(full, [ca, t], xtol=1e-14, full_output=True)
    assert ier == 1, msg
    assert abs(y[1] - t) < 1e-8 and abs(y[0] - ca) < 1e-8 * CA0, (y, ca, t)
    kk = k(t)
    kp = kk * EA / (R * t * t)
    jac = np.array([[-1.0 / TAU - kk, -kp * ca],
                    [VOL * kk * (-DH) / CAP, (VOL * kp * ca * (-DH) - CP_FLOW - UA) / CAP]])
    ev = np.linalg.eigvals(jac)
    max_re = max(float(np.max(ev.real)), -1.0 / TAU)
    return {
        "T": t, "conversion": x, "C_A": ca, "C_B": CA0 - ca,
        "outlet": {"A": ca * V0, "B": (CA0 - ca) * V0, "S": CS0 * V0},
        "eigenvalues_CA_T": [[float(e.real), float(e.imag)] for e in ev],
        "max_eigenvalue_real": max_re,
        "stable": bool(max_re < 0.0),
    }


def folds():
    tf = all_roots(lambda t: dgen(t) - (CP_FLOW + UA), T_LO, T_HI)
    assert len(tf) == 2, tf
    out = []
    for t, kind in zip(tf, ["ignition", "extinction"]):
        t0 = t - (gen(t) - UA * (t - TA)) / CP_FLOW
        ta = t - (gen(t) - CP_FLOW * (t - T0)) / UA
        out.append({"kind": kind, "T": t, "conversion": conv(t),
                    "feed_T": t0, "coolant_T": ta})
    ign, ext = out
    # checks of the fold values themselves: 3 states between the folds, 1 outside
    for lo, hi, which in [(ext["feed_T"], ign["feed_T"], "feed"),
                          (ext["coolant_T"], ign["coolant_T"], "coolant")]:
        assert lo < hi
        for p, n in [(lo - 0.05, 1), (lo + 0.05, 3), (hi - 0.05, 3), (hi + 0.05, 1)]:
            got = len(states(p, TA) if which == "feed" else states(T0, p))
            assert got == n, (which, p, got, n)
    return {"ignition": ign, "extinction": ext}


def study(species, heat_extra):
    return f"""name: cooled CSTR with three steady states (demo values)
phase: liquid
species:
{species}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {num(K_REF)} 1/s, Ea: {num(EA)} J/mol, T_ref: {num(T_REF)} K, dH: {num(DH)} J/mol}}}}
feed: {{T: {num(T0)} K, volumetric: {num(V0)} m3/s, concentrations: {{A: {num(CA0)} mol/m3, S: {num(CS0)} mol/m3}}}}
reactor:
  type: cstr
  volume: {num(VOL)} m3
  heat:
    UA: {num(UA)} W/K
    coolant: {{T: {num(TA)} K}}
{heat_extra}key: A
"""


species_cp = (f"  A: {{cp: {num(CP_A)} J/(mol*K)}}\n  B: {{cp: {num(CP_B)} J/(mol*K)}}\n"
              f"  S: {{cp: {num(CP_S)} J/(mol*K)}}")
species_plain = "  A: {}\n  B: {}\n  S: {}"
mixture = f"    mixture_cp: {num(MIXTURE_CP)} J/(kg*K)\n    density: {num(DENSITY)} kg/m3\n"

roots = states(T0, TA)
assert len(roots) == 3, roots
found = [describe(t) for t in roots]
assert [s["stable"] for s in found] == [True, False, True]

print(json.dumps({
    "scipy": scipy.__version__,
    "numpy": np.__version__,
    "command": "python3 tests/reference/heat_cstr_multiplicity.py > tests/reference/heat_cstr_multiplicity.json",
    "R": R,
    "study_species_cp": study(species_cp, ""),
    "study_mixture_cp": study(species_plain, mixture),
    "dT_ad": DT_AD,
    "tau": TAU,
    "states": found,
    "folds": folds(),
}, indent=1))
