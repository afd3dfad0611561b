"""Acceptance reference for `rxnet fit`: a structurally unidentifiable pair of parameters.

Run:  python3 tests/reference/fit_parallel_unidentifiable.py \
          > tests/reference/fit_parallel_unidentifiable.json
(writes tests/data/fit/parallel_batch.yaml and parallel_batch_data.csv; scipy and numpy
versions recorded in the JSON). Machinery and equations: fit_common.py.

Invented demo values: two parallel first-order steps A -> B (k1) and A -> C (k2) in a batch at
300 K, and only A is measured (mol/L, noise sd 0.01 mol/L, numpy default_rng(seed 15003)).
C_A = C_A0 exp(-(k1 + k2) t) (Levenspiel ch. 3, from memory), so only k1 + k2 is determined:
with theta = (ln k1, ln k2) the Jacobian's columns are dC_A/d(k1+k2) times k1 and times k2,
parallel, and J^T J is singular. Scaled by D = sqrt(diag J^T J) it is [[1, 1], [1, 1]], whose
null direction is (1, -1)/sqrt(2): the combination ln k1 - ln k2 is not determined. The fixture
records scipy's singular values of J, the eigenvalues of the scaled J^T J, k1 + k2 at the
least-squares solution and the SSR there (both unique although k1 and k2 are not).
"""
import os

import numpy as np

from fit_common import (DATA_DIR, Network, Parameter, Problem, Reaction, dump, fmt, get_theta,
                        header, read_data, reparameterise, simulate, statistics, t_fit_of,
                        write_csv)

SEED = 15003
TEMP = 300.0
TRUE = (3.0e-3, 1.5e-3)     # 1/s
START = (2.0e-3, 2.0e-3)
TIMES = list(range(60, 1201, 60))   # s
NOISE = 0.01                        # mol/L
CA0 = 1.0

STUDY = f"""# Acceptance case of `rxnet fit` (tests/fitting.rs; reference
# tests/reference/fit_parallel_unidentifiable.py). Invented demo values; synthetic data.
# Only A is measured, so only k1 + k2 can be found from the data: the fit must say so.
name: parallel A -> B and A -> C, only A measured (demo values)
phase: liquid
species:
  A: {{formula: C3H6O}}
  B: {{formula: C3H6O}}
  C: {{formula: C3H6O}}
reactions:
  - id: to_b
    stoich: A -> B
    rate: {{k: {START[0]} 1/s}}
  - id: to_c
    stoich: A -> C
    rate: {{k: {START[1]} 1/s}}
feed:
  T: {TEMP} K
  concentrations: {{A: {CA0} mol/L}}
reactor:
  type: batch
  volume: 1 L
  time: 20 min
key: A
desired: B
fit:
  data: parallel_batch_data.csv
  estimate:
    - reactions.to_b.rate.k
    - reactions.to_c.rate.k
  error:
    default: {{absolute: 0.01 mol/L}}
"""


def network(k1, k2):
    return Network(["A", "B", "C"], [Reaction("to_b", {"A": 1}, {"B": 1}, k1, 0.0, TEMP),
                                     Reaction("to_c", {"A": 1}, {"C": 1}, k2, 0.0, TEMP)])


def make_data():
    rng = np.random.default_rng(SEED)
    c, _ = simulate(network(*TRUE), [], TEMP, [CA0 * 1000, 0, 0], [float(t) for t in TIMES],
                    sens=False)
    rows = []
    for ti, t in enumerate(TIMES):
        meas = c[ti, 0] / 1000 + NOISE * rng.standard_normal()
        if meas >= 0:   # a reading below zero is not reported (the row is left out)
            rows.append(["r1", str(t), fmt(meas, 4)])
    write_csv(os.path.join(DATA_DIR, "parallel_batch_data.csv"),
              ["Synthetic demo data (invented): A -> B and A -> C in a batch, only A measured.",
               "Made by tests/reference/fit_parallel_unidentifiable.py (scipy Radau + Gaussian "
               f"noise, seed {SEED})."],
              ["run", "t [s]", "A [mol/L]"], rows)
    with open(os.path.join(DATA_DIR, "parallel_batch.yaml"), "w") as f:
        f.write(STUDY)


def main():
    os.makedirs(DATA_DIR, exist_ok=True)
    make_data()
    meas, units = read_data(os.path.join(DATA_DIR, "parallel_batch_data.csv"))
    t_fit, t_exact = t_fit_of({"r1": TEMP})
    params = [Parameter("reactions.to_b.rate.k", "k", "to_b", "log", "1/s"),
              Parameter("reactions.to_c.rate.k", "k", "to_c", "log", "1/s")]
    start = reparameterise(network(*START), params, t_fit)
    problem = Problem(start, params, meas, units,
                      {"r1": {"T": TEMP, "c0": [CA0 * 1000, 0.0, 0.0]}},
                      {"default": {"absolute": NOISE}})
    theta0 = get_theta(start, params)
    sol = problem.fit(theta0)
    st = statistics(problem, sol.x)
    assert st["unidentifiable"], st["eigenvalues_scaled_JtJ"]
    jd, dd = problem.checks(sol.x)
    # the identifiable combination: fit one first-order constant k = k1 + k2 directly
    one = Network(["A", "B", "C"], [Reaction("to_b", {"A": 1}, {"B": 1}, sum(START), 0.0, TEMP)])
    p1 = [params[0]]
    prob1 = Problem(one, p1, meas, units, {"r1": {"T": TEMP, "c0": [CA0 * 1000, 0.0, 0.0]}},
                    {"default": {"absolute": NOISE}})
    sol1 = prob1.fit(get_theta(one, p1))
    st1 = statistics(prob1, sol1.x)
    out = header("fit_parallel_unidentifiable.py")
    out.update({"study": "tests/data/fit/parallel_batch.yaml", "T_fit": t_fit,
                "T_fit_unrounded": t_exact, "theta_start": theta0.tolist(),
                "least_squares": {"status": int(sol.status), "nfev": int(sol.nfev),
                                  "optimality": float(sol.optimality)},
                "k_sum": float(np.exp(sol.x).sum()),
                "k_sum_true": sum(TRUE),
                "one_constant_fit": {"k": float(np.exp(sol1.x[0])), "ssr": st1["ssr"],
                                     "se_theta": st1["estimates"][0]["se_theta"]},
                "null_direction_expected": [2 ** -0.5, -(2 ** -0.5)],
                "check_jacobian_fd": jd, "check_dop853": dd})
    out.update(st)
    dump(out)


if __name__ == "__main__":
    main()
