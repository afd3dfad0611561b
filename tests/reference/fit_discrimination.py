"""Acceptance reference for `rxnet fit` with several candidates: ranking, nested F-test and the
lack-of-fit test with replicates.

Run:  python3 tests/reference/fit_discrimination.py > tests/reference/fit_discrimination.json
(writes tests/data/fit/triangle_full.yaml, triangle_series.yaml, triangle_batch_data.csv;
scipy and numpy versions recorded in the JSON). Machinery and equations: fit_common.py.

Invented demo values. The data come from a series-parallel network, A -> R -> S with the
parallel step A -> S (first order, k1, k2, k3), in a batch at 320 K. Two candidates are fitted
to the same data: the true series-parallel one (`triangle_full.yaml`, k1, k2, k3) and the pure
series A -> R -> S (`triangle_series.yaml`, k1, k2), which is nested in it (its reactions and
estimated paths are a subset). A, R and S are measured in mol/L; every sampling time is
analysed twice (two rows with the same run and time: replicates), noise sd 0.008 mol/L, numpy
default_rng(seed 15004). Both studies weight by the same absolute error (0.008 mol/L).

Recorded: each candidate's estimates, SE, correlation, SSR, AIC, BIC and lack-of-fit test;
the ranking by AIC with Akaike weights exp(-dAIC/2)/sum (Burnham & Anderson, Model Selection
and Multimodel Inference, from memory); the nested F-test series vs series-parallel.
"""
import os

import numpy as np

from fit_common import (DATA_DIR, Network, Parameter, Problem, Reaction, dump, fmt, get_theta,
                        header, nested_f_test, read_data, reparameterise, simulate, statistics,
                        t_fit_of, write_csv)

SEED = 15004
TEMP = 320.0
TRUE = {"first": 0.05 / 60, "second": 0.02 / 60, "direct": 0.004 / 60}   # 1/s
START = {"first": 0.03, "second": 0.03, "direct": 0.001}               # 1/min
TIMES = list(range(5, 100, 10))    # min, each analysed twice
NOISE = 0.008                      # mol/L
CA0 = 1.0
SPECIES = ["A", "R", "S"]
STEPS = {"first": ({"A": 1}, {"R": 1}), "second": ({"R": 1}, {"S": 1}),
         "direct": ({"A": 1}, {"S": 1})}
STOICH = {"first": "A -> R", "second": "R -> S", "direct": "A -> S"}


def study(ids, title, file_name):
    reactions = "".join(f"""  - id: {i}
    stoich: {STOICH[i]}
    rate: {{k: {START[i]} 1/min}}
""" for i in ids)
    estimate = "".join(f"    - reactions.{i}.rate.k\n" for i in ids)
    return f"""# Acceptance case of `rxnet fit` (tests/fitting.rs; reference
# tests/reference/fit_discrimination.py): {file_name} is one of two candidate networks fitted
# to the same data. Invented demo values; synthetic data.
name: {title} (demo values)
phase: liquid
species:
  A: {{formula: C6H12O}}
  R: {{formula: C6H12O}}
  S: {{formula: C6H12O}}
reactions:
{reactions}feed:
  T: {TEMP} K
  concentrations: {{A: {CA0} mol/L}}
reactor:
  type: batch
  volume: 1 L
  time: 100 min
key: A
desired: R
fit:
  data: triangle_batch_data.csv
  estimate:
{estimate}  error:
    default: {{absolute: {NOISE} mol/L}}
"""


CANDIDATES = {
    "series_parallel": (["first", "second", "direct"], "series-parallel A -> R -> S and A -> S",
                        "triangle_full.yaml"),
    "series": (["first", "second"], "pure series A -> R -> S", "triangle_series.yaml"),
}


def network(ids, ks):
    return Network(SPECIES, [Reaction(i, *STEPS[i], ks[i], 0.0, TEMP) for i in ids])


def make_data():
    rng = np.random.default_rng(SEED)
    ids = CANDIDATES["series_parallel"][0]
    c, _ = simulate(network(ids, TRUE), [], TEMP, [CA0 * 1000, 0, 0],
                    [t * 60.0 for t in TIMES], sens=False)
    rows = []
    for ti, t in enumerate(TIMES):
        for _replicate in range(2):
            row = ["r1", str(t)]
            for j in range(len(SPECIES)):
                meas = c[ti, j] / 1000 + NOISE * rng.standard_normal()
                row.append("" if meas < 0 else fmt(meas, 4))
            rows.append(row)
    write_csv(os.path.join(DATA_DIR, "triangle_batch_data.csv"),
              ["Synthetic demo data (invented): A -> R -> S and A -> S in a batch at 320 K,",
               "every time analysed twice (replicate rows). Made by "
               f"tests/reference/fit_discrimination.py (scipy Radau + Gaussian noise, seed {SEED})."],
              ["run", "t [min]"] + [f"{s} [mol/L]" for s in SPECIES], rows)
    for ids, title, file_name in CANDIDATES.values():
        with open(os.path.join(DATA_DIR, file_name), "w") as f:
            f.write(study(ids, title, file_name))


def fit(name, meas, units):
    ids, _title, file_name = CANDIDATES[name]
    t_fit, _ = t_fit_of({"r1": TEMP})
    params = [Parameter(f"reactions.{i}.rate.k", "k", i, "log", "1/s") for i in ids]
    start = reparameterise(network(ids, {i: START[i] / 60 for i in ids}), params, t_fit)
    problem = Problem(start, params, meas, units,
                      {"r1": {"T": TEMP, "c0": [CA0 * 1000, 0.0, 0.0]}},
                      {"default": {"absolute": NOISE}})
    theta0 = get_theta(start, params)
    sol = problem.fit(theta0)
    st = statistics(problem, sol.x)
    jd, dd = problem.checks(sol.x)
    st.update({"study": f"tests/data/fit/{file_name}", "T_fit": t_fit,
               "theta_start": theta0.tolist(),
               "least_squares": {"status": int(sol.status), "nfev": int(sol.nfev),
                                 "optimality": float(sol.optimality)},
               "check_jacobian_fd": jd, "check_dop853": dd})
    return st


def main():
    os.makedirs(DATA_DIR, exist_ok=True)
    make_data()
    meas, units = read_data(os.path.join(DATA_DIR, "triangle_batch_data.csv"))
    cands = {name: fit(name, meas, units) for name in CANDIDATES}
    best = min(c["aic"] for c in cands.values())
    w = {n: np.exp(-(c["aic"] - best) / 2) for n, c in cands.items()}
    total = sum(w.values())
    ranking = sorted(({"candidate": n, "study": c["study"], "aic": c["aic"], "bic": c["bic"],
                       "delta_aic": c["aic"] - best, "weight": float(w[n] / total)}
                      for n, c in cands.items()), key=lambda r: r["aic"])
    f_test = nested_f_test(cands["series"], cands["series_parallel"])
    f_test.update({"simpler": cands["series"]["study"],
                   "fuller": cands["series_parallel"]["study"]})
    out = header("fit_discrimination.py")
    out.update({"candidates": cands, "ranking": ranking, "f_test": f_test,
                "theta_true": [float(np.log(TRUE[i])) for i in ["first", "second", "direct"]]})
    dump(out)


if __name__ == "__main__":
    main()
