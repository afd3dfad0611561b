"""Shared machinery of the parameter-estimation references (fit_*.py in this folder).

Each fit_*.py script invents a study (demo values, not data for any real process), makes
synthetic measurements with scipy, writes them as the data CSV (and runs CSV) that
`rxnet fit` reads, then fits the same network to those very numbers with
scipy.optimize.least_squares and writes what it found into a JSON fixture next to it.
tests/fitting.rs compares `rxnet fit STUDY --format json` with these fixtures; `cargo test`
never runs Python.

The model: an isothermal, constant-volume liquid batch (the `batch` reactor of rxnet),
    dC_j/dt = sum_i nu_ij r_i,
    r_i = k_i(T) [prod_j C_j^a_ij - (1/K_i) prod_j C_j^(a_ij + nu_ij)]   (second term only for
          a reversible step; docs/methods.md "Rate laws"; mass action, common practice),
    k_i(T) = k_ref,i exp(-Ea_i/R (1/T - 1/T_ref,i))     (Arrhenius about a reference T).
SI inside: mol/m3, s, K, J/mol. R = 8.31446261815324 J/(mol K), CODATA 2018.

The residuals are those of the shared design of `rxnet fit`:
    r = (model - measured) / sigma,  sigma = sqrt(absolute^2 + (relative |measured|)^2),
    sigma = 1 (in the data's unit) without an error model;
theta = ln(SI value) for a log-scale parameter (k, K_eq), the SI value for a linear one (Ea);
every reaction whose k or Ea is estimated is taken about T_fit = 1/mean(1/T_run) over the runs,
rounded to 0.1 K, with k estimated as k(T_fit) (reparameterised Arrhenius; common practice).

Model values and their derivatives d model / d theta come from one solve_ivp Radau run of the
states and their forward sensitivities, s' = (df/dC) s + df/dtheta, s(0) = 0, at rtol 1e-12
(the rate laws' derivatives are written out analytically below; Radau's Newton matrix has
df/dC on each block). As a check of the reference
itself every fixture records the largest relative difference of that Jacobian from central
differences of whole solves (`check_jacobian_fd`) and of the states from DOP853 at rtol 1e-13
(`check_dop853`).

Fit: scipy.optimize.least_squares (trust-region reflective, x_scale="jac",
xtol = ftol = gtol = 1e-14). Statistics (shared design; common practice for nonlinear
regression, e.g. Bard, Nonlinear Parameter Estimation, from memory):
    N non-missing measurements, P parameters, dof = N - P, SSR = sum r^2, s^2 = SSR/dof,
    Cov(theta) = s^2 (J^T J)^-1, SE = sqrt(diag Cov), correlation Cov_ij/(SE_i SE_j),
    CI95 = theta +- t_{0.975,dof} SE (exp of the ends for a log parameter, SI),
    AIC = N ln(SSR/N) + 2P, BIC = N ln(SSR/N) + P ln N,
    identifiability: eigenvalues of D^-1 J^T J D^-1 (D = sqrt diag J^T J), a ratio to the
    largest below 1e-8 flags the eigenvector's combination,
    lack of fit with replicates: SS_PE = sum over (run, x, species) groups of sum (r - mean r)^2,
    df_PE = sum (n_g - 1), SS_LF = SSR - SS_PE, df_LF = dof - df_PE,
    F = (SS_LF/df_LF)/(SS_PE/df_PE), p = F upper tail (scipy.stats.f.sf),
    nested F-test: F = ((SSR_A - SSR_B)/(P_B - P_A)) / (SSR_B/(N - P_B)).
"""
import json
import os
import sys

import numpy as np
import scipy
from scipy import stats
from scipy.integrate import solve_ivp
from scipy.optimize import least_squares

R = 8.31446261815324
RTOL = 1e-12
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
DATA_DIR = os.path.join(ROOT, "tests", "data", "fit")

# Unit factors to SI (NIST SP 811): time to s, concentration to mol/m3.
TIME = {"s": 1.0, "min": 60.0, "h": 3600.0}
CONC = {"mol/m3": 1.0, "mol/L": 1000.0}


def num(x):
    """A float as YAML/CSV text that reads back to the same double."""
    return repr(float(x))


class Reaction:
    """One step: reactant and product coefficients, mass-action orders (the reactant
    coefficients), k_ref (SI) at T_ref, Ea (J/mol), and K (SI, concentration based) when the
    step is reversible."""

    def __init__(self, rid, reactants, products, k, ea=0.0, t_ref=None, keq=None):
        self.id = rid
        self.reactants = dict(reactants)
        self.products = dict(products)
        self.k = float(k)
        self.ea = float(ea)
        self.t_ref = t_ref
        self.keq = None if keq is None else float(keq)

    def copy(self):
        return Reaction(self.id, self.reactants, self.products, self.k, self.ea, self.t_ref,
                        self.keq)


class Network:
    def __init__(self, species, reactions):
        self.species = list(species)
        self.reactions = [r.copy() for r in reactions]
        n, m = len(self.species), len(self.reactions)
        self.nu = np.zeros((m, n))
        self.a = np.zeros((m, n))
        for i, r in enumerate(self.reactions):
            for s, c in r.reactants.items():
                self.nu[i, self.species.index(s)] -= c
                self.a[i, self.species.index(s)] += c
            for s, c in r.products.items():
                self.nu[i, self.species.index(s)] += c
        self.b = self.a + self.nu   # exponents of the reverse term (product coefficients)

    def copy(self):
        return Network(self.species, self.reactions)

    def index(self, rid):
        return [r.id for r in self.reactions].index(rid)


def _power(c, e):
    """prod_j c_j^e_j and its gradient (integer or positive exponents; c_j >= 0 expected)."""
    c = np.maximum(c, 0.0)
    val = float(np.prod(c ** e))
    grad = np.zeros_like(c)
    for m in range(len(c)):
        if e[m] == 0.0:
            continue
        others = np.prod([c[j] ** e[j] for j in range(len(c)) if j != m]) if len(c) > 1 else 1.0
        grad[m] = e[m] * c[m] ** (e[m] - 1.0) * others
    return val, grad


class Parameter:
    """An estimated parameter: kind `k` (theta = ln k at the reaction's T_ref, which is T_fit),
    `Ea` (theta = Ea in J/mol) or `K_eq` (theta = ln K, SI)."""

    def __init__(self, path, kind, reaction, scale, unit):
        self.path, self.kind, self.reaction, self.scale, self.unit = path, kind, reaction, scale, unit


def set_theta(net, params, theta):
    net = net.copy()
    for p, th in zip(params, theta):
        r = net.reactions[net.index(p.reaction)]
        if p.kind == "k":
            r.k = float(np.exp(th))
        elif p.kind == "Ea":
            r.ea = float(th)
        elif p.kind == "K_eq":
            r.keq = float(np.exp(th))
        else:
            raise ValueError(p.kind)
    return net


def get_theta(net, params):
    out = []
    for p in params:
        r = net.reactions[net.index(p.reaction)]
        out.append({"k": lambda: np.log(r.k), "Ea": lambda: r.ea,
                    "K_eq": lambda: np.log(r.keq)}[p.kind]())
    return np.array(out)


def reparameterise(net, params, t_fit):
    """Every reaction whose k or Ea is estimated: k_ref <- k(T_fit), T_ref <- T_fit."""
    net = net.copy()
    for p in params:
        if p.kind in ("k", "Ea"):
            r = net.reactions[net.index(p.reaction)]
            r.k = r.k * np.exp(-r.ea / R * (1.0 / t_fit - 1.0 / r.t_ref))
            r.t_ref = t_fit
    return net


def rates(net, c, temp):
    """Rates r_i, dr_i/dC (m x n), and the rate constants at temp."""
    m, n = net.nu.shape
    r = np.zeros(m)
    drdc = np.zeros((m, n))
    kt = np.zeros(m)
    back = np.zeros(m)
    for i, rx in enumerate(net.reactions):
        kt[i] = rx.k * np.exp(-rx.ea / R * (1.0 / temp - 1.0 / rx.t_ref))
        fv, fg = _power(c, net.a[i])
        r[i] = kt[i] * fv
        drdc[i] = kt[i] * fg
        if rx.keq is not None:
            bv, bg = _power(c, net.b[i])
            back[i] = kt[i] * bv / rx.keq
            r[i] -= back[i]
            drdc[i] -= kt[i] * bg / rx.keq
    return r, drdc, kt, back


def simulate(net, params, temp, c0, times, sens=True, method="Radau", rtol=RTOL):
    """States C (len(times) x n, mol/m3) at `times` (s) and, with sens, dC/dtheta
    (P x len(times) x n)."""
    n, p = len(net.species), len(params)
    pidx = [(net.index(q.reaction), q.kind) for q in params]

    def f(_t, y):
        c = y[:n]
        r, drdc, _kt, back = rates(net, c, temp)
        dc = net.nu.T @ r
        if not sens:
            return dc
        jc = net.nu.T @ drdc
        out = [dc]
        for q, (i, kind) in enumerate(pidx):
            s = y[n + q * n:n + (q + 1) * n]
            dr = np.zeros(len(r))
            if kind == "k":
                dr[i] = r[i]
            elif kind == "Ea":
                rx = net.reactions[i]
                dr[i] = r[i] * (-(1.0 / temp - 1.0 / rx.t_ref) / R)
            else:  # ln K: r = k (F - B/K)
                dr[i] = back[i]
            out.append(jc @ s + net.nu.T @ dr)
        return np.concatenate(out)

    def jac(_t, y):
        # Newton matrix only (it sets the convergence rate, not the solution): df/dC on every
        # diagonal block, the states' second derivatives in the sensitivity rows left out
        # (the simultaneous corrector of Maly & Petzold 1996).
        _r, drdc, _kt, _back = rates(net, y[:n], temp)
        jc = net.nu.T @ drdc
        return np.kron(np.eye(1 + (p if sens else 0)), jc)

    y0 = np.concatenate([np.asarray(c0, float), np.zeros(n * p if sens else 0)])
    scale = max(float(np.max(np.abs(c0))), 1.0)
    t_end = float(max(times))
    extra = {"jac": jac} if method == "Radau" else {}
    sol = solve_ivp(f, (0.0, t_end), y0, method=method, rtol=rtol, atol=1e-12 * scale,
                    t_eval=np.asarray(times, float), **extra)
    if not sol.success:
        raise RuntimeError(sol.message)
    y = sol.y.T
    c = y[:, :n]
    if not sens:
        return c, None
    s = np.array([y[:, n + q * n:n + (q + 1) * n] for q in range(p)])
    return c, s


# ---------------------------------------------------------------- data files

class Measurement:
    def __init__(self, run, x_text, x_si, species, value, line):
        self.run, self.x_text, self.x_si, self.species, self.value, self.line = \
            run, x_text, x_si, species, value, line


def fmt(v, decimals):
    return f"{v:.{decimals}f}"


def write_csv(path, comments, header, rows):
    with open(path, "w") as out:
        for c in comments:
            out.write(f"# {c}\n")
        out.write(",".join(header) + "\n")
        for row in rows:
            out.write(",".join(row) + "\n")


def read_data(path):
    """The data CSV as written: measurements in file order, the x unit and species units."""
    meas = []
    header = None
    with open(path) as f:
        for lineno, line in enumerate(f, 1):
            line = line.rstrip("\n")
            if line.startswith("#") or not line.strip():
                continue
            cells = line.split(",")
            if header is None:
                header = cells
                x_name, x_unit = header[1].split(" [")
                x_unit = x_unit.rstrip("]")
                cols = [(h.split(" [")[0], h.split(" [")[1].rstrip("]")) for h in header[2:]]
                continue
            run, xt = cells[0], cells[1]
            for (sp, unit), cell in zip(cols, cells[2:]):
                if cell.strip() == "":
                    continue
                meas.append(Measurement(run, xt, float(xt) * TIME[x_unit], sp, float(cell),
                                        lineno))
    return meas, dict(cols)


def sigma(m, error):
    e = error.get(m.species, error.get("default"))
    if e is None:
        return 1.0
    a = e.get("absolute", 0.0)
    rel = e.get("relative", 0.0)
    return float(np.sqrt(a * a + (rel * abs(m.value)) ** 2))


def t_fit_of(run_temps):
    t = 1.0 / np.mean([1.0 / v for v in run_temps.values()])
    rounded = round(t, 1)
    # never let the reference sit on a rounding edge
    assert abs(abs(t - rounded) - 0.05) > 0.005, t
    return float(rounded), float(t)


class Problem:
    """Weighted residuals of a network against a data file, with the runs' conditions."""

    def __init__(self, net, params, meas, units, runs, error):
        self.net, self.params, self.meas, self.units, self.runs, self.error = \
            net, params, meas, units, runs, error
        self.sig = np.array([sigma(m, error) for m in meas])
        self.cache = {}

    def evaluate(self, theta, sens=True, method="Radau", rtol=RTOL):
        key = (tuple(np.asarray(theta, float)), sens, method, rtol)
        if key in self.cache:
            return self.cache[key]
        net = set_theta(self.net, self.params, theta)
        model = np.zeros(len(self.meas))
        jac = np.zeros((len(self.meas), len(self.params)))
        for run, cond in self.runs.items():
            idx = [i for i, m in enumerate(self.meas) if m.run == run]
            if not idx:
                continue
            times = sorted({self.meas[i].x_si for i in idx})
            c, s = simulate(net, self.params, cond["T"], cond["c0"], times, sens, method, rtol)
            for i in idx:
                m = self.meas[i]
                ti = times.index(m.x_si)
                j = net.species.index(m.species)
                f = 1.0 / CONC[self.units[m.species]]
                model[i] = c[ti, j] * f
                if sens:
                    jac[i] = s[:, ti, j] * f
        meas = np.array([m.value for m in self.meas])
        res = (model - meas) / self.sig
        out = (res, jac / self.sig[:, None], model)
        self.cache[key] = out
        return out

    def fit(self, theta0):
        sol = least_squares(lambda th: self.evaluate(th)[0], theta0,
                            jac=lambda th: self.evaluate(th)[1], method="trf",
                            x_scale="jac", xtol=1e-14, ftol=1e-14, gtol=1e-14, max_nfev=2000)
        if sol.status <= 0:
            raise RuntimeError(sol.message)
        return sol

    def checks(self, theta):
        """Largest relative differences of the sensitivity Jacobian from central differences
        of whole Radau solves, and of the model from DOP853 at rtol 1e-13."""
        r0, j0, model = self.evaluate(theta)
        jfd = np.zeros_like(j0)
        for q in range(len(theta)):
            h = 1e-5 * max(abs(theta[q]), 1.0)
            tp, tm = np.array(theta, float), np.array(theta, float)
            tp[q] += h
            tm[q] -= h
            jfd[:, q] = (self.evaluate(tp, sens=False)[0] - self.evaluate(tm, sens=False)[0]) \
                / (2 * h)
        jd = float(np.max(np.abs(jfd - j0)) / np.max(np.abs(j0)))
        model_d = self.evaluate(theta, sens=False, method="DOP853", rtol=1e-13)[2]
        dd = float(np.max(np.abs(model_d - model)) / np.max(np.abs(model)))
        assert jd < 1e-5, jd
        assert dd < 1e-9, dd
        return jd, dd


def statistics(problem, theta):
    """Everything of the shared design's "Residuals, weights, statistics" at theta."""
    r, jac, _model = problem.evaluate(theta)
    n, p = jac.shape
    dof = n - p
    ssr = float(r @ r)
    s2 = ssr / dof
    jtj = jac.T @ jac
    d = np.sqrt(np.diag(jtj))
    scaled = jtj / np.outer(d, d)
    eig, vec = np.linalg.eigh(scaled)
    ratios = eig / eig.max()
    unident = []
    for k in range(p):
        if ratios[k] < 1e-8:
            v = vec[:, k]
            v = v * np.sign(v[np.argmax(np.abs(v))])
            unident.append({"combination": [{"path": problem.params[q].path, "weight": float(v[q])}
                                            for q in range(p)],
                            "eigenvalue_ratio": float(ratios[k])})
    out = {"observations": n, "parameters": p, "dof": dof, "ssr": ssr, "s2": s2,
           "aic": n * np.log(ssr / n) + 2 * p, "bic": n * np.log(ssr / n) + p * np.log(n),
           "eigenvalues_scaled_JtJ": eig.tolist(),
           "eigenvectors_scaled_JtJ": vec.T.tolist(),
           "singular_values_J": np.linalg.svd(jac, compute_uv=False).tolist(),
           "unidentifiable": unident}
    tq = float(stats.t.ppf(0.975, dof))
    out["t_0975"] = tq
    ests = []
    if not unident:
        cov = s2 * np.linalg.inv(jtj)
        se = np.sqrt(np.diag(cov))
        out["covariance"] = cov.tolist()
        out["correlation"] = (cov / np.outer(se, se)).tolist()
    for q, prm in enumerate(problem.params):
        th = float(theta[q])
        e = {"path": prm.path, "scale": prm.scale, "theta": th,
             "value": float(np.exp(th)) if prm.scale == "log" else th, "unit": prm.unit}
        if not unident:
            lo, hi = th - tq * se[q], th + tq * se[q]
            e["se_theta"] = float(se[q])
            e["ci95"] = [float(np.exp(lo)), float(np.exp(hi))] if prm.scale == "log" \
                else [lo, hi]
        ests.append(e)
    out["estimates"] = ests
    out["lack_of_fit"] = lack_of_fit(problem, r, dof, ssr)
    out["residuals"] = residual_summary(problem, r)
    return out


def residual_summary(problem, r):
    """Per species and per run: number of measurements, rms and mean of the weighted r."""
    def summary(key, names):
        rows = []
        for name in names:
            sel = np.array([key(m) == name for m in problem.meas])
            if sel.any():
                rows.append({"n": int(sel.sum()), "rms": float(np.sqrt(np.mean(r[sel] ** 2))),
                             "mean": float(np.mean(r[sel]))})
                rows[-1]["name"] = name
        return rows
    species = [s for s in problem.net.species if any(m.species == s for m in problem.meas)]
    runs = list(dict.fromkeys(m.run for m in problem.meas))
    by_species = [dict(species=e.pop("name"), **e) for e in summary(lambda m: m.species, species)]
    by_run = [dict(run=e.pop("name"), **e) for e in summary(lambda m: m.run, runs)]
    return {"by_species": by_species, "by_run": by_run}


def lack_of_fit(problem, r, dof, ssr):
    groups = {}
    for i, m in enumerate(problem.meas):
        groups.setdefault((m.run, m.x_si, m.species), []).append(i)
    reps = [g for g in groups.values() if len(g) > 1]
    if not reps:
        return None
    ss_pe = float(sum(np.sum((r[g] - np.mean(r[g])) ** 2) for g in reps))
    df_pe = sum(len(g) - 1 for g in reps)
    ss_lf = ssr - ss_pe
    df_lf = dof - df_pe
    f = (ss_lf / df_lf) / (ss_pe / df_pe)
    return {"ss_pe": ss_pe, "df_pe": df_pe, "ss_lf": ss_lf, "df_lf": df_lf, "F": f,
            "p": float(stats.f.sf(f, df_lf, df_pe)), "groups": len(reps)}


def nested_f_test(simpler, fuller):
    n = fuller["observations"]
    df1 = fuller["parameters"] - simpler["parameters"]
    df2 = n - fuller["parameters"]
    f = ((simpler["ssr"] - fuller["ssr"]) / df1) / (fuller["ssr"] / df2)
    return {"F": f, "df1": df1, "df2": df2, "p": float(stats.f.sf(f, df1, df2))}


def header(script):
    return {"scipy": scipy.__version__, "numpy": np.__version__,
            "command": f"python3 tests/reference/{script} > tests/reference/"
                       f"{script.replace('.py', '.json')}",
            "R": R,
            "note": "demo values invented for the tests; not data for any real process"}


def dump(obj):
    json.dump(obj, sys.stdout, indent=1)
    sys.stdout.write("\n")
