#!/usr/bin/env python3
"""Integrate the rxnet benchmark studies with SciPy and compare time and outlet with rxnet.

Input: the JSON files written by

    cargo run --release --example export_ode -- OUTDIR [--big]

(one per study: the state equations dy/dx = sigma * sum_i nu_ij r_i(C), C = kappa*y, the
rate constants at the feed temperature, y0, x_end, rxnet's rtol/atol, outlet and timings).

For each study this script integrates with scipy.integrate.solve_ivp, method BDF with the
analytic Jacobian as a scipy.sparse CSC matrix, and method LSODA with the analytic Jacobian as
a dense array (LSODA takes no sparse Jacobian), both at rxnet's rtol and atol
(default rtol 1e-8, atol 1e-12 * F_T0), and reports

  * integration-only time (the solve_ivp call, best of --repeat),
  * the largest relative difference of the outlet from rxnet's, max_j |y_j - y_rxnet_j| /
    max(|y_rxnet_j|, 1e-6 * F_T0) (species below 1e-6 of the total feed are compared on that
    absolute scale: their relative error is not asked of either code by atol),
  * with --whole-process, the wall time of a fresh `python3 bench_scipy.py --one FILE METHOD`
    process (interpreter start, NumPy/SciPy import, JSON read, set-up, one integration), next
    to the wall time of `rxnet run STUDY.yaml --format json` (read, check, solve, report).

Usage:

    python3 docs/bench_scipy.py OUTDIR/*.json [--repeat 3] [--whole-process --rxnet target/release/rxnet]
    python3 docs/bench_scipy.py --one OUTDIR/gen_100x300.json BDF    # one integration, prints time

The rate law is rxnet's (src/kinetics): r = k prod_j C_j^a_j - (k/K) prod_j C_j^(a_j+nu_j);
an integer exponent is applied to C as it is, a fractional one to max(C, 0).
"""

import argparse
import json
import os
import subprocess
import sys
import time

import numpy as np
import scipy.sparse as sp
from scipy.integrate import solve_ivp


class Factors:
    """Products P_g = prod_{f in g} C[idx_f]^exp_f over groups g (one group per reaction side)
    and their derivatives dP_g/dC[idx_f], vectorised over all factors."""

    def __init__(self, groups):
        idx, exp, grp = [], [], []
        for g, fs in enumerate(groups):
            for j, e in fs:
                idx.append(j)
                exp.append(e)
                grp.append(g)
        self.n_groups = len(groups)
        self.idx = np.array(idx, dtype=np.int64)
        self.exp = np.array(exp, dtype=float)
        self.grp = np.array(grp, dtype=np.int64)
        self.integer = np.abs(self.exp - np.round(self.exp)) < 1e-12
        # For each factor, the positions of the other factors of its group, padded with the
        # index of a trailing 1.0.
        nf = len(idx)
        members = [[] for _ in groups]
        for f, g in enumerate(grp):
            members[g].append(f)
        width = max((len(m) for m in members), default=1)
        others = np.full((nf, max(width - 1, 1)), nf, dtype=np.int64)
        for m in members:
            for a, f in enumerate(m):
                o = [x for x in m if x != f]
                others[f, : len(o)] = o
        self.others = others
        # Groups are contiguous runs: start of each (all groups non-empty here).
        self.starts = np.array([m[0] for m in members if m], dtype=np.int64)
        self.nonempty = np.array([bool(m) for m in members])

    def powers(self, c):
        ci = c[self.idx]
        base = np.where(self.integer, ci, np.maximum(ci, 0.0))
        v = base ** self.exp
        with np.errstate(divide="ignore", invalid="ignore"):
            d = np.where(
                self.integer | (ci > 0.0),
                self.exp * base ** (self.exp - 1.0),
                0.0,
            )
        d = np.where(self.exp == 0.0, 0.0, d)
        return v, d

    def products(self, v):
        out = np.ones(self.n_groups)
        if len(v):
            out[self.nonempty] = np.multiply.reduceat(v, self.starts)
        return out

    def derivatives(self, v, d):
        ext = np.append(v, 1.0)
        return d * np.prod(ext[self.others], axis=1)


class Model:
    def __init__(self, data):
        self.data = data
        self.ns = len(data["species"])
        self.alpha = data["alpha"]
        self.dim = self.ns + (1 if self.alpha is not None else 0)
        mix = data["mixture"]
        self.kind = mix["kind"]
        self.volume = mix.get("volume")
        self.sigma = mix.get("sigma", 1.0)
        self.c_tot = mix.get("c_tot")
        self.total0 = data["total0"]
        rx = data["reactions"]
        self.nr = len(rx)
        self.k = np.array([r["k"] for r in rx], dtype=float)
        self.rev = np.array([r["K"] is not None for r in rx])
        self.kr = np.array(
            [r["k"] / r["K"] if r["K"] is not None else 0.0 for r in rx], dtype=float
        )
        self.fwd = Factors([r["fwd"] for r in rx])
        self.bwd = Factors([r["rev"] for r in rx])
        rows, cols, vals = [], [], []
        for i, r in enumerate(rx):
            for j, v in r["nu"]:
                rows.append(j)
                cols.append(i)
                vals.append(v)
        self.nu = sp.csr_matrix((vals, (rows, cols)), shape=(self.ns, self.nr))
        self.y0 = np.array(data["y0"], dtype=float)
        self.x_end = data["x_end"]
        self.rtol = data["rtol"]
        atol = np.full(self.dim, data["atol"])
        if self.alpha is not None:
            atol[self.ns] = 1e-12
        self.atol = atol

    def scales(self, y):
        """(kappa, sigma, S, dkappa/dy_k) as in src/reactor."""
        s = y[: self.ns].sum()
        if self.kind == "fixed":
            return 1.0 / self.volume, self.sigma, s, 0.0
        p = y[self.ns] if self.alpha is not None else 1.0
        kappa = self.c_tot * p / s
        return kappa, 1.0, s, -kappa / s

    def rates(self, c, grad=False):
        vf, df = self.fwd.powers(c)
        vb, db = self.bwd.powers(c)
        pf = self.fwd.products(vf)
        pb = self.bwd.products(vb)
        r = self.k * pf - self.kr * pb
        if not grad:
            return r
        gf = self.k[self.fwd.grp] * self.fwd.derivatives(vf, df)
        gb = -self.kr[self.bwd.grp] * self.bwd.derivatives(vb, db)
        g = sp.csr_matrix(
            (
                np.concatenate([gf, gb]),
                (
                    np.concatenate([self.fwd.grp, self.bwd.grp]),
                    np.concatenate([self.fwd.idx, self.bwd.idx]),
                ),
            ),
            shape=(self.nr, self.ns),
        )
        return r, g

    def rhs(self, x, y):
        kappa, sigma, s, _ = self.scales(y)
        c = kappa * y[: self.ns]
        f = sigma * (self.nu @ self.rates(c))
        if self.alpha is None:
            return f
        p = y[self.ns]
        return np.append(f, -self.alpha / (2.0 * p) * (s / self.total0))

    def jac(self, x, y):
        """Analytic Jacobian, sparse CSC: sigma nu (dr/dC) dC/dy by the chain rule."""
        kappa, sigma, s, dkappa = self.scales(y)
        c = kappa * y[: self.ns]
        _, g = self.rates(c, grad=True)
        ng = self.nu @ g  # d(sum_i nu_ij r_i)/dC_m
        j = sigma * kappa * ng
        if self.kind == "fixed":
            return j.tocsc()
        # C_m = kappa y_m with kappa = c_tot p / S: dC_m/dy_k = kappa d_mk + y_m dkappa.
        a = ng @ y[: self.ns]
        dense = j.toarray() + sigma * dkappa * np.outer(a, np.ones(self.ns))
        if self.alpha is None:
            return sp.csc_matrix(dense)
        n = self.ns
        p = y[n]
        full = np.zeros((n + 1, n + 1))
        full[:n, :n] = dense
        full[:n, n] = sigma * a * kappa / p
        full[n, :n] = -self.alpha / (2.0 * p * self.total0)
        full[n, n] = self.alpha * s / (2.0 * p * p * self.total0)
        return sp.csc_matrix(full)

    def solve(self, method):
        if method == "LSODA":
            jac = lambda x, y: self.jac(x, y).toarray()  # noqa: E731
        else:
            jac = self.jac
        t0 = time.perf_counter()
        sol = solve_ivp(
            self.rhs,
            (0.0, self.x_end),
            self.y0,
            method=method,
            jac=jac,
            rtol=self.rtol,
            atol=self.atol,
            t_eval=[self.x_end],
        )
        dt = time.perf_counter() - t0
        return sol, dt


def rel_diff(y, ref, total0):
    y = np.asarray(y[: len(ref)])
    ref = np.asarray(ref)
    scale = np.maximum(np.abs(ref), 1e-6 * total0)
    return float(np.max(np.abs(y - ref) / scale))


def one(path, method):
    with open(path) as f:
        data = json.load(f)
    m = Model(data)
    sol, dt = m.solve(method)
    print(json.dumps({"ok": bool(sol.success), "integrate_s": dt}))


def wall(cmd):
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL)
    return time.perf_counter() - t0


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("files", nargs="*")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--methods", default="BDF,LSODA")
    ap.add_argument("--whole-process", action="store_true")
    ap.add_argument("--rxnet", default="target/release/rxnet")
    ap.add_argument("--one", nargs=2, metavar=("FILE", "METHOD"))
    ap.add_argument("--max-lsoda-states", type=int, default=1000,
                    help="skip LSODA (dense LU) above this many states")
    a = ap.parse_args()
    if a.one:
        one(*a.one)
        return
    here = os.path.abspath(__file__)
    print("| study | states | reactions | rxnet simulate (s) | method | scipy integrate (s) | ratio | max rel. diff of outlet | nfev | njev | nlu |")
    print("|---|---|---|---|---|---|---|---|---|---|---|")
    for path in a.files:
        with open(path) as f:
            data = json.load(f)
        m = Model(data)
        rx = data["rxnet"]
        for method in a.methods.split(","):
            if method == "LSODA" and m.dim > a.max_lsoda_states:
                print(f"| {os.path.basename(path)} | {m.dim} | {m.nr} | {rx['simulate_best_s']:.3g} | {method} | skipped (> {a.max_lsoda_states} states) | | | | | |")
                continue
            best = float("inf")
            sol = None
            for _ in range(a.repeat):
                sol, dt = m.solve(method)
                best = min(best, dt)
                if dt > 20.0:
                    break
            if not sol.success:
                print(f"| {os.path.basename(path)} | {m.dim} | {m.nr} | {rx['simulate_best_s']:.3g} | {method} | failed: {sol.message} | | | | | |")
                continue
            diff = rel_diff(sol.y[:, -1], rx["outlet"], m.total0)
            ratio = best / rx["simulate_best_s"]
            print(
                f"| {os.path.basename(path)} | {m.dim} | {m.nr} | {rx['simulate_best_s']:.3g} | {method} | {best:.3g} | {ratio:.0f}x | {diff:.1e} | {sol.nfev} | {sol.njev} | {sol.nlu} |"
            )
            sys.stdout.flush()
    if a.whole_process:
        print()
        print("| study | rxnet run --format json (s) | method | python process (s) | ratio |")
        print("|---|---|---|---|---|")
        for path in a.files:
            with open(path) as f:
                data = json.load(f)
            t_rx = min(wall([a.rxnet, "run", data["file"], "--format", "json"]) for _ in range(a.repeat))
            for method in a.methods.split(","):
                if method == "LSODA" and len(data["y0"]) > a.max_lsoda_states:
                    continue
                t_py = min(wall([sys.executable, here, "--one", path, method]) for _ in range(a.repeat))
                print(f"| {os.path.basename(path)} | {t_rx:.4f} | {method} | {t_py:.3f} | {t_py / t_rx:.0f}x |")
                sys.stdout.flush()


if __name__ == "__main__":
    main()
