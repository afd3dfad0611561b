"""Acceptance reference for `rxnet fit`: series A -> B -> C in a batch at three temperatures.

Run:  python3 tests/reference/fit_series.py > tests/reference/fit_series.json
(writes tests/data/fit/series_batch.yaml, series_batch_data.csv, series_batch_runs.csv;
scipy and numpy versions recorded in the JSON). Machinery and equations: fit_common.py.

Invented demo values: first-order steps A -> B (k1, Ea1) and B -> C (k2, Ea2), A charged at
1 mol/L, three runs at 315, 332 and 350 K set by a runs table (feed.T). A, B and C are
measured in mol/L with Gaussian noise of the error model written in the study (absolute
0.01 mol/L; for B 2 % relative and 0.005 mol/L absolute), numpy default_rng(seed 15001).
A few cells are left empty (a missed analysis); a reading that came out below zero is left
empty too. The four parameters are estimated from the study's (deliberately poor) start.
"""
import os

import numpy as np

from fit_common import (DATA_DIR, Network, Parameter, Problem, Reaction, fmt, get_theta,
                        header, num, read_data, reparameterise, simulate, statistics, dump,
                        t_fit_of, write_csv)

SEED = 15001
TRUE = {"k1": 0.04 / 60, "Ea1": 65e3, "k2": 0.015 / 60, "Ea2": 80e3}  # 1/s at 330 K, J/mol
T_REF = 330.0
START = {"k1": 0.02, "Ea1": 50.0, "k2": 0.03, "Ea2": 60.0}            # 1/min, kJ/mol
RUNS = {"r315": 315.0, "r332": 332.0, "r350": 350.0}
TIMES = {"r315": list(range(15, 181, 15)), "r332": list(range(10, 121, 10)),
         "r350": list(range(5, 61, 5))}                                  # min
CA0 = 1.0                                                               # mol/L
ERROR = {"default": {"absolute": 0.01}, "B": {"relative": 0.02, "absolute": 0.005}}
MISSING = {("r315", 15, "C"), ("r332", 10, "C"), ("r332", 70, "B"), ("r350", 40, "A")}
SPECIES = ["A", "B", "C"]

STUDY = f"""# Acceptance case of `rxnet fit` (tests/fitting.rs; reference tests/reference/fit_series.py).
# Invented demo values: the data are synthetic, the rate constants below are a poor start.
name: series A -> B -> C in a batch at three temperatures (demo values)
phase: liquid
species:
  A: {{formula: C4H8O2}}
  B: {{formula: C4H8O2}}
  C: {{formula: C4H8O2}}
reactions:
  - id: first
    stoich: A -> B
    rate: {{k: {START['k1']} 1/min, Ea: {START['Ea1']} kJ/mol, T_ref: {T_REF} K}}
  - id: second
    stoich: B -> C
    rate: {{k: {START['k2']} 1/min, Ea: {START['Ea2']} kJ/mol, T_ref: {T_REF} K}}
feed:
  T: {T_REF} K
  concentrations: {{A: {CA0} mol/L}}
reactor:
  type: batch
  volume: 1 L
  time: 180 min
key: A
desired: B
fit:
  data: series_batch_data.csv
  runs: series_batch_runs.csv
  estimate:
    - reactions.first.rate.k
    - {{path: reactions.first.rate.Ea, min: 0 kJ/mol, max: 300 kJ/mol}}
    - reactions.second.rate.k
    - {{path: reactions.second.rate.Ea, min: 0 kJ/mol, max: 300 kJ/mol}}
  error:
    default: {{absolute: 0.01 mol/L}}
    B: {{relative: 2 %, absolute: 0.005 mol/L}}
"""


def network(k1, ea1, k2, ea2):
    return Network(SPECIES, [Reaction("first", {"A": 1}, {"B": 1}, k1, ea1, T_REF),
                             Reaction("second", {"B": 1}, {"C": 1}, k2, ea2, T_REF)])


def make_data():
    rng = np.random.default_rng(SEED)
    true = network(TRUE["k1"], TRUE["Ea1"], TRUE["k2"], TRUE["Ea2"])
    rows = []
    for run, temp in RUNS.items():
        times = TIMES[run]
        c, _ = simulate(true, [], temp, [CA0 * 1000, 0, 0], [t * 60.0 for t in times], sens=False)
        for ti, t in enumerate(times):
            row = [run, str(t)]
            for j, sp in enumerate(SPECIES):
                v = c[ti, j] / 1000.0
                e = ERROR.get(sp, ERROR["default"])
                sd = np.sqrt(e.get("absolute", 0) ** 2 + (e.get("relative", 0) * v) ** 2)
                meas = v + sd * rng.standard_normal()
                row.append("" if (run, t, sp) in MISSING or meas < 0 else fmt(meas, 4))
            rows.append(row)
    write_csv(os.path.join(DATA_DIR, "series_batch_data.csv"),
              ["Synthetic demo data (invented): series A -> B -> C, batch, three temperatures.",
               "Made by tests/reference/fit_series.py (scipy Radau + Gaussian noise, seed "
               f"{SEED}); empty = not measured."],
              ["run", "t [min]"] + [f"{s} [mol/L]" for s in SPECIES], rows)
    write_csv(os.path.join(DATA_DIR, "series_batch_runs.csv"), [],
              ["run", "feed.T"], [[run, f"{temp} K"] for run, temp in RUNS.items()])
    with open(os.path.join(DATA_DIR, "series_batch.yaml"), "w") as f:
        f.write(STUDY)


def main():
    os.makedirs(DATA_DIR, exist_ok=True)
    make_data()
    meas, units = read_data(os.path.join(DATA_DIR, "series_batch_data.csv"))
    t_fit, t_exact = t_fit_of(RUNS)
    params = [Parameter("reactions.first.rate.k", "k", "first", "log", "1/s"),
              Parameter("reactions.first.rate.Ea", "Ea", "first", "linear", "J/mol"),
              Parameter("reactions.second.rate.k", "k", "second", "log", "1/s"),
              Parameter("reactions.second.rate.Ea", "Ea", "second", "linear", "J/mol")]
    start = network(START["k1"] / 60, START["Ea1"] * 1e3, START["k2"] / 60, START["Ea2"] * 1e3)
    start = reparameterise(start, params, t_fit)
    runs = {run: {"T": temp, "c0": [CA0 * 1000, 0.0, 0.0]} for run, temp in RUNS.items()}
    problem = Problem(start, params, meas, units, runs, ERROR)
    theta0 = get_theta(start, params)
    sol = problem.fit(theta0)
    st = statistics(problem, sol.x)
    jd, dd = problem.checks(sol.x)
    true_at_fit = reparameterise(network(TRUE["k1"], TRUE["Ea1"], TRUE["k2"], TRUE["Ea2"]),
                                 params, t_fit)
    out = header("fit_series.py")
    out.update({"study": "tests/data/fit/series_batch.yaml", "T_fit": t_fit,
                "T_fit_unrounded": t_exact, "theta_start": theta0.tolist(),
                "theta_true": get_theta(true_at_fit, params).tolist(),
                "least_squares": {"status": int(sol.status), "nfev": int(sol.nfev),
                                  "optimality": float(sol.optimality)},
                "check_jacobian_fd": jd, "check_dop853": dd})
    out.update(st)
    dump(out)


if __name__ == "__main__":
    main()
