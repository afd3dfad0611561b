"""Reference optima, covariances and distribution values for tests/fit_numerics.rs (demo data).

Closed-form models fitted by scipy.optimize.least_squares (xtol = ftol = gtol = 1e-15, the
analytic Jacobian given), on data made here from invented parameters with a fixed noise seed
(numpy default_rng):

- decay:     y = a exp(-b x) + c, weighted residuals r = (model - y)/sigma with
             sigma = sqrt(0.01^2 + (0.02 y)^2); method 'lm' unbounded and 'trf' with bounds
             that do not bind.
- rational:  y = exp(t1) x / (exp(t2) + x) (a Michaelis-Menten-like model in log parameters),
             duplicate measurements at each x, sigma = 0.05; method 'lm'; with the lack-of-fit
             test from the duplicates (pure error, Draper & Smith) and its F upper tail.
- bounded:   y = a (1 - exp(-b x)) with b <= 0.2 while the data come from b = 0.5: the optimum
             sits on the bound; method 'trf'.
- rank_deficient: y = a b x, only the product a b is identifiable; method 'lm'.
- two_minima: r = [t1^2 - 1, 0.5 (t1 - 0.8), t2 - 2]: a local minimum near t1 = -0.87 and the
             global one near t1 = +1; method 'lm' from each basin.

Covariance s^2 (J^T J)^-1 with s^2 = SSR/(N - P) and J = result.jac (numpy.linalg.inv),
correlation Cov_ij / sqrt(Cov_ii Cov_jj). Distribution values: scipy.stats.t.ppf,
scipy.stats.f.sf, scipy.special.betainc, scipy.special.gammaln.

Run:  python3 tests/reference/fit_numerics.py > tests/reference/fit_numerics.json
(written with scipy 1.17.1 and numpy 2.4.6, Python 3; the versions are recorded in the JSON).
"""
import json

import numpy as np
import scipy
from scipy import optimize, special, stats

TOL = dict(xtol=1e-15, ftol=1e-15, gtol=1e-15)


def covariance(jac, ssr, n, p):
    s2 = ssr / (n - p)
    cov = s2 * np.linalg.inv(jac.T @ jac)
    se = np.sqrt(np.diag(cov))
    return cov, cov / np.outer(se, se)


def summary(res, n, p, with_cov=True):
    ssr = float(np.sum(res.fun ** 2))
    out = {
        "theta": res.x.tolist(),
        "ssr": ssr,
        "status": int(res.status),
        "active_mask": res.active_mask.tolist(),
    }
    if with_cov:
        cov, corr = covariance(res.jac, ssr, n, p)
        out["covariance"] = cov.tolist()
        out["correlation"] = corr.tolist()
    return out


def decay():
    rng = np.random.default_rng(150001)
    x = np.linspace(0.0, 10.0, 25)
    y = 2.0 * np.exp(-0.4 * x) + 0.3 + rng.normal(0.0, 0.02, x.size)
    sigma = np.sqrt(0.01 ** 2 + (0.02 * y) ** 2)

    def fun(t):
        return (t[0] * np.exp(-t[1] * x) + t[2] - y) / sigma

    def jac(t):
        e = np.exp(-t[1] * x)
        return np.column_stack([e, -t[0] * x * e, np.ones_like(x)]) / sigma[:, None]

    t0 = [1.0, 1.0, 0.0]
    lo, hi = [0.0, 0.0, -1.0], [10.0, 5.0, 1.0]
    lm = optimize.least_squares(fun, t0, jac=jac, method="lm", **TOL)
    trf = optimize.least_squares(fun, t0, jac=jac, method="trf", bounds=(lo, hi), **TOL)
    return {
        "x": x.tolist(), "y": y.tolist(), "sigma": sigma.tolist(), "theta0": t0,
        "lo": lo, "hi": hi,
        "lm": summary(lm, x.size, 3), "trf": summary(trf, x.size, 3),
    }


def rational():
    rng = np.random.default_rng(150002)
    xs = np.array([0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0])
    x = np.repeat(xs, 2)
    group = np.repeat(np.arange(xs.size), 2)
    y = 3.0 * x / (1.5 + x) + rng.normal(0.0, 0.05, x.size)
    sigma = 0.05

    def fun(t):
        return (np.exp(t[0]) * x / (np.exp(t[1]) + x) - y) / sigma

    def jac(t):
        v, k = np.exp(t[0]), np.exp(t[1])
        m = v * x / (k + x)
        return np.column_stack([m, -m * k / (k + x)]) / sigma

    t0 = [0.0, 0.0]
    res = optimize.least_squares(fun, t0, jac=jac, method="lm", **TOL)
    out = summary(res, x.size, 2)
    r = res.fun
    ss_pe = sum(float(np.sum((r[group == g] - r[group == g].mean()) ** 2)) for g in range(xs.size))
    df_pe = x.size - xs.size
    ssr = out["ssr"]
    df_lf = (x.size - 2) - df_pe
    f = ((ssr - ss_pe) / df_lf) / (ss_pe / df_pe)
    out["lack_of_fit"] = {"ss_pe": ss_pe, "df_pe": df_pe, "ss_lf": ssr - ss_pe,
                          "df_lf": df_lf, "f": f, "p": float(stats.f.sf(f, df_lf, df_pe))}
    return {"x": x.tolist(), "y": y.tolist(), "sigma": sigma, "group": group.tolist(),
            "theta0": t0, "lm": out}


def bounded():
    rng = np.random.default_rng(150003)
    x = np.linspace(0.5, 8.0, 16)
    y = 2.0 * (1.0 - np.exp(-0.5 * x)) + rng.normal(0.0, 0.02, x.size)

    def fun(t):
        return t[0] * (1.0 - np.exp(-t[1] * x)) - y

    def jac(t):
        e = np.exp(-t[1] * x)
        return np.column_stack([1.0 - e, t[0] * x * e])

    t0 = [1.0, 0.1]
    lo, hi = [0.0, 0.0], [10.0, 0.2]
    res = optimize.least_squares(fun, t0, jac=jac, method="trf", bounds=(lo, hi), **TOL)
    return {"x": x.tolist(), "y": y.tolist(), "theta0": t0, "lo": lo, "hi": hi,
            "trf": summary(res, x.size, 2, with_cov=False)}


def rank_deficient():
    rng = np.random.default_rng(150004)
    x = np.linspace(1.0, 10.0, 12)
    y = 1.5 * x + rng.normal(0.0, 0.05, x.size)

    def fun(t):
        return t[0] * t[1] * x - y

    def jac(t):
        return np.column_stack([t[1] * x, t[0] * x])

    t0 = [1.0, 1.0]
    res = optimize.least_squares(fun, t0, jac=jac, method="lm", **TOL)
    out = summary(res, x.size, 2, with_cov=False)
    out["product"] = float(res.x[0] * res.x[1])
    return {"x": x.tolist(), "y": y.tolist(), "theta0": t0, "lm": out}


def two_minima():
    def fun(t):
        return np.array([t[0] ** 2 - 1.0, 0.5 * (t[0] - 0.8), t[1] - 2.0])

    def jac(t):
        return np.array([[2.0 * t[0], 0.0], [0.5, 0.0], [0.0, 1.0]])

    local = optimize.least_squares(fun, [-1.5, 0.0], jac=jac, method="lm", **TOL)
    best = optimize.least_squares(fun, [1.5, 0.0], jac=jac, method="lm", **TOL)
    return {"wrong_basin_start": [-1.5, 0.0], "local": summary(local, 3, 2, with_cov=False),
            "global": summary(best, 3, 2, with_cov=False)}


def distributions():
    t_ppf = [
        {"p": p, "dof": d, "value": float(stats.t.ppf(p, d))}
        for d in [1, 2, 2.5, 3, 5, 10, 30, 100, 1000]
        for p in [0.025, 0.6, 0.9, 0.95, 0.975, 0.995, 0.9995]
    ]
    f_sf = [
        {"f": f, "d1": d1, "d2": d2, "value": float(stats.f.sf(f, d1, d2))}
        for (f, d1, d2) in [(0.3, 1, 10), (1.0, 2, 20), (2.5, 3, 12), (4.0, 1, 50),
                            (10.0, 4, 8), (0.8, 5, 200), (25.0, 2, 30), (3.2, 10, 3)]
    ]
    betainc = [
        {"a": a, "b": b, "x": x, "value": float(special.betainc(a, b, x))}
        for (a, b, x) in [(0.5, 0.5, 0.2), (2.0, 3.0, 0.4), (5.0, 0.5, 0.9), (50.0, 40.0, 0.55),
                          (0.5, 15.0, 0.01), (500.0, 0.5, 0.999)]
    ]
    gammaln = [{"x": x, "value": float(special.gammaln(x))}
               for x in [0.1, 0.5, 1.5, 3.7, 12.25, 150.5, 1000.0]]
    return {"t_ppf": t_ppf, "f_sf": f_sf, "betainc": betainc, "gammaln": gammaln}


def main():
    out = {
        "source": "tests/reference/fit_numerics.py (demo data; python3 tests/reference/fit_numerics.py)",
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "decay": decay(),
        "rational": rational(),
        "bounded": bounded(),
        "rank_deficient": rank_deficient(),
        "two_minima": two_minima(),
        "distributions": distributions(),
    }
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    main()
