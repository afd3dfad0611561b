"""Acceptance reference for `rxnet fit`: a reversible isomerisation A <=> B with an unknown K.

Run:  python3 tests/reference/fit_reversible.py > tests/reference/fit_reversible.json
(writes tests/data/fit/reversible_batch.yaml, reversible_batch_data.csv,
reversible_batch_runs.csv; scipy and numpy versions recorded in the JSON). Machinery and
equations: fit_common.py.

Invented demo values: r = k (C_A - C_B/K) (docs/methods.md "Rate laws", mass action), K
dimensionless (sum of nu = 0, a bare number in the study), isothermal at 300 K. Two runs set by
a runs table: r1 charged with A only, r2 mostly B, so the data approach equilibrium from both
sides. A and B measured in mol/m3, time in s, noise sd 5 mol/m3 (numpy default_rng(seed 15002)).
The study has no `error` section, so the fit is ordinary least squares with sigma = 1 in the
data's unit (the design's default). k and K_eq are estimated (both on a log scale).
"""
import os

import numpy as np

from fit_common import (DATA_DIR, Network, Parameter, Problem, Reaction, dump, fmt, get_theta,
                        header, read_data, reparameterise, simulate, statistics, t_fit_of,
                        write_csv)

SEED = 15002
TEMP = 300.0
TRUE_K, TRUE_KEQ = 2.0e-3, 3.0          # 1/s, -
START_K, START_KEQ = 1.0e-3, 1.5
RUNS = {"r1": (1.0, 0.0), "r2": (0.1, 0.9)}   # mol/L of A, B
TIMES = list(range(100, 1801, 100))           # s
NOISE = 5.0                                   # mol/m3
MISSING = {("r1", 500, "B"), ("r2", 1200, "A")}
SPECIES = ["A", "B"]

STUDY = f"""# Acceptance case of `rxnet fit` (tests/fitting.rs; reference tests/reference/fit_reversible.py).
# Invented demo values: the data are synthetic, k and K_eq below are a poor start.
name: reversible isomerisation A <=> B in a batch (demo values)
phase: liquid
species:
  A: {{formula: C5H10}}
  B: {{formula: C5H10}}
reactions:
  - id: iso
    stoich: A <=> B
    rate: {{k: {START_K} 1/s, K_eq: {START_KEQ}}}
feed:
  T: {TEMP} K
  concentrations: {{A: 1.0 mol/L, B: 0.0 mol/L}}
reactor:
  type: batch
  volume: 1 L
  time: 30 min
key: A
desired: B
fit:
  data: reversible_batch_data.csv
  runs: reversible_batch_runs.csv
  estimate:
    - reactions.iso.rate.k
    - {{path: reactions.iso.rate.K_eq, scale: log}}
"""


def network(k, keq):
    return Network(SPECIES, [Reaction("iso", {"A": 1}, {"B": 1}, k, 0.0, TEMP, keq)])


def make_data():
    rng = np.random.default_rng(SEED)
    true = network(TRUE_K, TRUE_KEQ)
    rows = []
    for run, (a0, b0) in RUNS.items():
        c, _ = simulate(true, [], TEMP, [a0 * 1000, b0 * 1000], [float(t) for t in TIMES],
                        sens=False)
        for ti, t in enumerate(TIMES):
            row = [run, str(t)]
            for j, sp in enumerate(SPECIES):
                meas = c[ti, j] + NOISE * rng.standard_normal()
                row.append("" if (run, t, sp) in MISSING or meas < 0 else fmt(meas, 2))
            rows.append(row)
    write_csv(os.path.join(DATA_DIR, "reversible_batch_data.csv"),
              ["Synthetic demo data (invented): A <=> B in a batch at 300 K, two charges.",
               f"Made by tests/reference/fit_reversible.py (scipy Radau + Gaussian noise, seed "
               f"{SEED}); empty = not measured."],
              ["run", "t [s]"] + [f"{s} [mol/m3]" for s in SPECIES], rows)
    write_csv(os.path.join(DATA_DIR, "reversible_batch_runs.csv"), [],
              ["run", "feed.concentrations.A", "feed.concentrations.B"],
              [[run, f"{a0} mol/L", f"{b0} mol/L"] for run, (a0, b0) in RUNS.items()])
    with open(os.path.join(DATA_DIR, "reversible_batch.yaml"), "w") as f:
        f.write(STUDY)


def main():
    os.makedirs(DATA_DIR, exist_ok=True)
    make_data()
    meas, units = read_data(os.path.join(DATA_DIR, "reversible_batch_data.csv"))
    t_fit, t_exact = t_fit_of({run: TEMP for run in RUNS})
    params = [Parameter("reactions.iso.rate.k", "k", "iso", "log", "1/s"),
              Parameter("reactions.iso.rate.K_eq", "K_eq", "iso", "log", "")]
    start = reparameterise(network(START_K, START_KEQ), params, t_fit)
    runs = {run: {"T": TEMP, "c0": [a0 * 1000, b0 * 1000]} for run, (a0, b0) in RUNS.items()}
    problem = Problem(start, params, meas, units, runs, {})
    theta0 = get_theta(start, params)
    sol = problem.fit(theta0)
    st = statistics(problem, sol.x)
    jd, dd = problem.checks(sol.x)
    out = header("fit_reversible.py")
    out.update({"study": "tests/data/fit/reversible_batch.yaml", "T_fit": t_fit,
                "T_fit_unrounded": t_exact, "theta_start": theta0.tolist(),
                "theta_true": [float(np.log(TRUE_K)), float(np.log(TRUE_KEQ))],
                "least_squares": {"status": int(sol.status), "nfev": int(sol.nfev),
                                  "optimality": float(sol.optimality)},
                "check_jacobian_fd": jd, "check_dop853": dd})
    out.update(st)
    dump(out)


if __name__ == "__main__":
    main()
