"""Reference for the bundled fitting demo (networks/amine_alkylation_batch.yaml) and the data of
the fit benchmark (docs/bench_fit.sh): 6 parameters, 5 batch runs, a 5-species network.

Run:  python3 tests/reference/fit_demo.py > tests/reference/fit_demo.json
(writes networks/amine_alkylation_batch.yaml, networks/data/amine_alkylation_batch_data.csv and
networks/data/amine_alkylation_batch_runs.csv; scipy and numpy versions recorded in the JSON).
Machinery and equations: fit_common.py.

Invented demo values (not data for any real process): an amine A is alkylated by B in a
stirred batch to the wanted mono-alkylated R, which reacts on with B to the di-alkylated S
(series-parallel: A + B -> R, R + B -> S), while B is also lost to the solvent (B -> D,
pseudo-first order). Each step has k and Ea (6 parameters). Five runs (runs table): 300, 310,
320 and 330 K with B/A = 1.2, and 320 K with B/A = 2. A, B, R and S are measured in mol/L
every 20 min for 4 h with noise of the study's error model (2 % relative and 0.005 mol/L
absolute), numpy default_rng(seed 15005); D is not measured.
"""
import os

import numpy as np

from fit_common import (Network, Parameter, Problem, ROOT, Reaction, dump, fmt, get_theta,
                        header, read_data, reparameterise, simulate, statistics, t_fit_of,
                        write_csv)

SEED = 15005
T_REF = 320.0
# true values at 320 K: L/(mol min) for the second-order steps, 1/min, kJ/mol
TRUE = {"mono": (0.08, 55.0), "di": (0.025, 62.0), "loss": (0.004, 75.0)}
START = {"mono": (0.05, 45.0), "di": (0.05, 50.0), "loss": (0.002, 60.0)}
K_SI = {"mono": 1e-3 / 60, "di": 1e-3 / 60, "loss": 1 / 60}   # to m3/(mol s) or 1/s
K_UNIT = {"mono": "L/(mol*min)", "di": "L/(mol*min)", "loss": "1/min"}
K_SI_UNIT = {"mono": "m3/(mol*s)", "di": "m3/(mol*s)", "loss": "1/s"}
STEPS = {"mono": ({"A": 1, "B": 1}, {"R": 1}), "di": ({"R": 1, "B": 1}, {"S": 1}),
         "loss": ({"B": 1}, {"D": 1})}
STOICH = {"mono": "A + B -> R", "di": "R + B -> S", "loss": "B -> D"}
RUNS = {"T300": (300.0, 1.2), "T310": (310.0, 1.2), "T320": (320.0, 1.2), "T330": (330.0, 1.2),
        "T320_excess": (320.0, 2.0)}          # K, B0 in mol/L (A0 = 1 mol/L)
TIMES = list(range(20, 241, 20))              # min
ERROR = {"default": {"relative": 0.02, "absolute": 0.005}}
SPECIES = ["A", "B", "R", "S", "D"]
MEASURED = ["A", "B", "R", "S"]
NET_DIR = os.path.join(ROOT, "networks")

STUDY = f"""# Fitting demo: rate constants of a series-parallel alkylation from batch data.
# All numbers, the data in data/amine_alkylation_batch_data.csv included, are invented demo
# values (synthetic data made by tests/reference/fit_demo.py), not data for any real process.
# The rate constants below are a rough first guess; `rxnet fit` estimates k and Ea of each step:
#   rxnet fit networks/amine_alkylation_batch.yaml
name: amine alkylation in a batch, kinetics from five runs (demo values)
phase: liquid
species:
  A: {{}}   # the amine
  B: {{}}   # the alkylating agent
  R: {{}}   # the mono-alkylated amine (wanted)
  S: {{}}   # the di-alkylated amine
  D: {{}}   # B lost to the solvent
reactions:
""" + "".join(f"""  - id: {i}
    stoich: {STOICH[i]}
    rate: {{k: {START[i][0]} {K_UNIT[i]}, Ea: {START[i][1]} kJ/mol, T_ref: {T_REF} K}}
""" for i in STEPS) + f"""feed:
  T: {T_REF} K
  concentrations: {{A: 1.0 mol/L, B: 1.2 mol/L}}
reactor:
  type: batch
  volume: 2 m3
  time: 4 h
key: A
desired: R
fit:
  data: data/amine_alkylation_batch_data.csv
  runs: data/amine_alkylation_batch_runs.csv
  estimate:
""" + "".join(f"""    - reactions.{i}.rate.k
    - reactions.{i}.rate.Ea
""" for i in STEPS) + """  error:
    default: {relative: 2 %, absolute: 0.005 mol/L}
"""


def network(values):
    return Network(SPECIES, [Reaction(i, *STEPS[i], values[i][0] * K_SI[i], values[i][1] * 1e3,
                                      T_REF) for i in STEPS])


def c0(b0):
    return [1000.0, b0 * 1000.0, 0.0, 0.0, 0.0]


def make_data():
    rng = np.random.default_rng(SEED)
    true = network(TRUE)
    rows = []
    for run, (temp, b0) in RUNS.items():
        c, _ = simulate(true, [], temp, c0(b0), [t * 60.0 for t in TIMES], sens=False)
        for ti, t in enumerate(TIMES):
            row = [run, str(t)]
            for sp in MEASURED:
                v = c[ti, SPECIES.index(sp)] / 1000
                e = ERROR["default"]
                sd = np.sqrt(e["absolute"] ** 2 + (e["relative"] * v) ** 2)
                meas = v + sd * rng.standard_normal()
                row.append("" if meas < 0 else fmt(meas, 4))
            rows.append(row)
    os.makedirs(os.path.join(NET_DIR, "data"), exist_ok=True)
    write_csv(os.path.join(NET_DIR, "data", "amine_alkylation_batch_data.csv"),
              ["Invented demo data (synthetic, not measurements): amine alkylation in a batch,",
               "five runs, made by tests/reference/fit_demo.py (scipy Radau + Gaussian noise, "
               f"seed {SEED}). Empty = no reading."],
              ["run", "t [min]"] + [f"{s} [mol/L]" for s in MEASURED], rows)
    write_csv(os.path.join(NET_DIR, "data", "amine_alkylation_batch_runs.csv"), [],
              ["run", "feed.T", "feed.concentrations.B"],
              [[run, f"{temp} K", f"{b0} mol/L"] for run, (temp, b0) in RUNS.items()])
    with open(os.path.join(NET_DIR, "amine_alkylation_batch.yaml"), "w") as f:
        f.write(STUDY)


def main():
    make_data()
    meas, units = read_data(os.path.join(NET_DIR, "data", "amine_alkylation_batch_data.csv"))
    t_fit, t_exact = t_fit_of({run: temp for run, (temp, _b0) in RUNS.items()})
    params = []
    for i in STEPS:
        params.append(Parameter(f"reactions.{i}.rate.k", "k", i, "log", K_SI_UNIT[i]))
        params.append(Parameter(f"reactions.{i}.rate.Ea", "Ea", i, "linear", "J/mol"))
    start = reparameterise(network(START), params, t_fit)
    runs = {run: {"T": temp, "c0": c0(b0)} for run, (temp, b0) in RUNS.items()}
    problem = Problem(start, params, meas, units, runs, ERROR)
    theta0 = get_theta(start, params)
    sol = problem.fit(theta0)
    st = statistics(problem, sol.x)
    jd, dd = problem.checks(sol.x)
    out = header("fit_demo.py")
    out.update({"study": "networks/amine_alkylation_batch.yaml", "T_fit": t_fit,
                "T_fit_unrounded": t_exact, "theta_start": theta0.tolist(),
                "theta_true": get_theta(reparameterise(network(TRUE), params, t_fit),
                                        params).tolist(),
                "least_squares": {"status": int(sol.status), "nfev": int(sol.nfev),
                                  "optimality": float(sol.optimality)},
                "check_jacobian_fd": jd, "check_dop853": dd})
    out.update(st)
    dump(out)


if __name__ == "__main__":
    main()
