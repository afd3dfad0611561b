//! The fitting numerics on closed-form models: the bounded Levenberg–Marquardt optimiser, the
//! multistart, and the statistics of a fit, each against scipy. The fixture is
//! tests/reference/fit_numerics.json, written by tests/reference/fit_numerics.py (command and
//! scipy/numpy versions inside it; demo data made there with a fixed noise seed).

use nalgebra::DMatrix;
use rxnet::fit::lm::{
    Bounds, LeastSquares, LmOptions, LmResult, MultistartOptions, levenberg_marquardt, multistart,
};
use rxnet::fit::statistics::{
    f_upper_tail, incomplete_beta, ln_gamma, nested_f_test, statistics, student_t_quantile,
};
use serde_json::Value;

fn fixture() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/fit_numerics.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).expect("fixture")).expect("fixture JSON")
}

fn vec_of(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

fn matrix_of(v: &Value) -> Vec<Vec<f64>> {
    v.as_array().expect("matrix").iter().map(vec_of).collect()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// Tight tolerances, as the scipy runs used (xtol = ftol = gtol = 1e-15).
fn tight() -> LmOptions {
    LmOptions {
        max_iterations: 500,
        xtol: 1e-15,
        ftol: 1e-15,
        gtol: 1e-15,
    }
}

/// Residuals and Jacobian at θ.
type Eval = (Vec<f64>, DMatrix<f64>);

/// The closed form of a model.
type Form = Box<dyn Fn(&[f64]) -> Eval>;

/// A closed-form model: residuals and Jacobian from a function of θ.
struct Model {
    n: usize,
    f: Form,
}

impl LeastSquares for Model {
    fn n_residuals(&self) -> usize {
        self.n
    }
    fn evaluate(
        &mut self,
        theta: &[f64],
        jacobian: bool,
    ) -> Result<(Vec<f64>, Option<DMatrix<f64>>), String> {
        let (r, j) = (self.f)(theta);
        Ok((r, jacobian.then_some(j)))
    }
}

/// y = a e^{−bx} + c, r = (model − y)/σ.
fn decay(case: &Value) -> Model {
    let (x, y, s) = (
        vec_of(&case["x"]),
        vec_of(&case["y"]),
        vec_of(&case["sigma"]),
    );
    Model {
        n: x.len(),
        f: Box::new(move |t: &[f64]| {
            let n = x.len();
            let mut r = vec![0.0; n];
            let mut j = DMatrix::zeros(n, 3);
            for i in 0..n {
                let e = (-t[1] * x[i]).exp();
                r[i] = (t[0] * e + t[2] - y[i]) / s[i];
                j[(i, 0)] = e / s[i];
                j[(i, 1)] = -t[0] * x[i] * e / s[i];
                j[(i, 2)] = 1.0 / s[i];
            }
            (r, j)
        }),
    }
}

/// y = e^{θ1} x / (e^{θ2} + x), r = (model − y)/σ.
fn rational(case: &Value) -> Model {
    let (x, y, s) = (
        vec_of(&case["x"]),
        vec_of(&case["y"]),
        case["sigma"].as_f64().unwrap(),
    );
    Model {
        n: x.len(),
        f: Box::new(move |t: &[f64]| {
            let n = x.len();
            let (v, k) = (t[0].exp(), t[1].exp());
            let mut r = vec![0.0; n];
            let mut j = DMatrix::zeros(n, 2);
            for i in 0..n {
                let m = v * x[i] / (k + x[i]);
                r[i] = (m - y[i]) / s;
                j[(i, 0)] = m / s;
                j[(i, 1)] = -m * k / (k + x[i]) / s;
            }
            (r, j)
        }),
    }
}

/// y = a (1 − e^{−bx}), r = model − y.
fn saturation(case: &Value) -> Model {
    let (x, y) = (vec_of(&case["x"]), vec_of(&case["y"]));
    Model {
        n: x.len(),
        f: Box::new(move |t: &[f64]| {
            let n = x.len();
            let mut r = vec![0.0; n];
            let mut j = DMatrix::zeros(n, 2);
            for i in 0..n {
                let e = (-t[1] * x[i]).exp();
                r[i] = t[0] * (1.0 - e) - y[i];
                j[(i, 0)] = 1.0 - e;
                j[(i, 1)] = t[0] * x[i] * e;
            }
            (r, j)
        }),
    }
}

/// y = a b x, r = model − y.
fn product(case: &Value) -> Model {
    let (x, y) = (vec_of(&case["x"]), vec_of(&case["y"]));
    Model {
        n: x.len(),
        f: Box::new(move |t: &[f64]| {
            let n = x.len();
            let mut r = vec![0.0; n];
            let mut j = DMatrix::zeros(n, 2);
            for i in 0..n {
                r[i] = t[0] * t[1] * x[i] - y[i];
                j[(i, 0)] = t[1] * x[i];
                j[(i, 1)] = t[0] * x[i];
            }
            (r, j)
        }),
    }
}

/// r = [θ1² − 1, 0.5(θ1 − 0.8), θ2 − 2]: two minima in θ1.
fn two_minima() -> Model {
    Model {
        n: 3,
        f: Box::new(|t: &[f64]| {
            let r = vec![t[0] * t[0] - 1.0, 0.5 * (t[0] - 0.8), t[1] - 2.0];
            let j = DMatrix::from_row_slice(3, 2, &[2.0 * t[0], 0.0, 0.5, 0.0, 0.0, 1.0]);
            (r, j)
        }),
    }
}

fn check_optimum(r: &LmResult, reference: &Value, what: &str) {
    assert!(r.converged, "{what}: {}", r.reason);
    for (k, (a, b)) in r.theta.iter().zip(vec_of(&reference["theta"])).enumerate() {
        assert!(rel(*a, b) < 1e-6, "{what} θ{}: {a} vs scipy {b}", k + 1);
    }
    let ssr = reference["ssr"].as_f64().unwrap();
    assert!(
        rel(r.ssr, ssr) < 1e-9,
        "{what} SSR {} vs scipy {ssr}",
        r.ssr
    );
}

fn check_covariance(r: &LmResult, reference: &Value, what: &str) {
    let st = statistics(r, None).expect("statistics");
    let cov = matrix_of(&reference["covariance"]);
    let corr = matrix_of(&reference["correlation"]);
    let p = r.theta.len();
    assert!(
        st.identifiable.iter().all(|&b| b),
        "{what}: {:?}",
        st.unidentifiable
    );
    for i in 0..p {
        for j in 0..p {
            let c = st.covariance[i][j].unwrap();
            assert!(
                rel(c, cov[i][j]) < 1e-4,
                "{what} Cov[{i}][{j}] {c} vs scipy {}",
                cov[i][j]
            );
            let q = st.correlation[i][j].unwrap();
            assert!((q - corr[i][j]).abs() < 1e-4, "{what} Corr[{i}][{j}]");
        }
        // CI95 = θ ± t_{0.975,dof} SE (Bates & Watts 1988; t from the scipy-checked quantile).
        let se = cov[i][i].sqrt();
        let t = student_t_quantile(0.975, st.dof as f64);
        let [lo, hi] = st.ci95[i].unwrap();
        assert!(
            rel(hi - lo, 2.0 * t * se) < 1e-4,
            "{what} CI width of θ{}",
            i + 1
        );
    }
}

#[test]
fn exponential_decay_matches_scipy_lm_and_trf() {
    // scipy least_squares method='lm' (unbounded) and 'trf' (bounds that do not bind).
    let fx = fixture();
    let case = &fx["decay"];
    let t0 = vec_of(&case["theta0"]);
    let mut m = decay(case);
    let r = levenberg_marquardt(&mut m, &t0, &Bounds::unbounded(3), &tight()).unwrap();
    check_optimum(&r, &case["lm"], "decay lm");
    check_covariance(&r, &case["lm"], "decay lm");
    // The default tolerances reach the same optimum (to 1e-6, as required of a fit).
    let d = levenberg_marquardt(&mut m, &t0, &Bounds::unbounded(3), &LmOptions::default()).unwrap();
    assert!(d.converged, "{}", d.reason);
    for (a, b) in d.theta.iter().zip(vec_of(&case["lm"]["theta"])) {
        assert!(rel(*a, b) < 1e-6, "default options: {a} vs scipy {b}");
    }
    let b = Bounds {
        lo: vec_of(&case["lo"]),
        hi: vec_of(&case["hi"]),
    };
    let r = levenberg_marquardt(&mut m, &t0, &b, &tight()).unwrap();
    check_optimum(&r, &case["trf"], "decay trf");
    check_covariance(&r, &case["trf"], "decay trf");
    assert_eq!(r.at_bound, vec![false; 3]);
}

#[test]
fn rational_model_matches_scipy_with_lack_of_fit() {
    // scipy least_squares method='lm'; lack of fit by pure error from duplicates and
    // scipy.stats.f.sf (tests/reference/fit_numerics.py).
    let fx = fixture();
    let case = &fx["rational"];
    let mut m = rational(case);
    let r = levenberg_marquardt(
        &mut m,
        &vec_of(&case["theta0"]),
        &Bounds::unbounded(2),
        &tight(),
    )
    .unwrap();
    check_optimum(&r, &case["lm"], "rational");
    check_covariance(&r, &case["lm"], "rational");
    let groups: Vec<usize> = vec_of(&case["group"]).iter().map(|g| *g as usize).collect();
    let st = statistics(&r, Some(&groups)).unwrap();
    let lof = st.lack_of_fit.expect("replicates give a lack-of-fit test");
    let reference = &case["lm"]["lack_of_fit"];
    assert_eq!(
        lof.df_pure_error,
        reference["df_pe"].as_u64().unwrap() as usize
    );
    assert_eq!(
        lof.df_lack_of_fit,
        reference["df_lf"].as_u64().unwrap() as usize
    );
    assert!(rel(lof.ss_pure_error, reference["ss_pe"].as_f64().unwrap()) < 1e-6);
    assert!(rel(lof.ss_lack_of_fit, reference["ss_lf"].as_f64().unwrap()) < 1e-6);
    assert!(rel(lof.f.unwrap(), reference["f"].as_f64().unwrap()) < 1e-6);
    assert!(rel(lof.p.unwrap(), reference["p"].as_f64().unwrap()) < 1e-6);
    // AIC and BIC as defined (Akaike 1974; Schwarz 1978), from scipy's SSR.
    let (n, ssr) = (groups.len() as f64, case["lm"]["ssr"].as_f64().unwrap());
    assert!(rel(st.aic.unwrap(), n * (ssr / n).ln() + 4.0) < 1e-8);
    assert!(rel(st.bic.unwrap(), n * (ssr / n).ln() + 2.0 * n.ln()) < 1e-8);
}

#[test]
fn optimum_on_a_bound_matches_scipy_trf_and_is_reported() {
    // scipy least_squares method='trf' with bounds: the optimum has b on its upper bound
    // (active_mask = [0, 1]).
    let fx = fixture();
    let case = &fx["bounded"];
    let b = Bounds {
        lo: vec_of(&case["lo"]),
        hi: vec_of(&case["hi"]),
    };
    let r = levenberg_marquardt(
        &mut saturation(case),
        &vec_of(&case["theta0"]),
        &b,
        &tight(),
    )
    .unwrap();
    check_optimum(&r, &case["trf"], "bounded");
    let active: Vec<bool> = vec_of(&case["trf"]["active_mask"])
        .iter()
        .map(|a| *a != 0.0)
        .collect();
    assert_eq!(r.at_bound, active);
    assert_eq!(r.at_bound, vec![false, true]);
}

#[test]
fn rank_deficient_model_is_flagged_with_its_combination() {
    // y = a b x: only a·b is determined (scipy 'lm' gives the product and SSR); the scaled
    // columns b x/‖b x‖ and a x/‖a x‖ are equal, so the undetermined combination is
    // (1, −1)/√2 in scaled θ (closed form).
    let fx = fixture();
    let case = &fx["rank_deficient"];
    let r = levenberg_marquardt(
        &mut product(case),
        &vec_of(&case["theta0"]),
        &Bounds::unbounded(2),
        &tight(),
    )
    .unwrap();
    assert!(r.converged, "{}", r.reason);
    let ab = r.theta[0] * r.theta[1];
    assert!(rel(ab, case["lm"]["product"].as_f64().unwrap()) < 1e-6);
    assert!(rel(r.ssr, case["lm"]["ssr"].as_f64().unwrap()) < 1e-9);
    let st = statistics(&r, None).unwrap();
    assert_eq!(st.identifiable, vec![false, false]);
    assert_eq!(
        st.se,
        vec![None, None],
        "no standard error, never a narrow one"
    );
    assert_eq!(st.ci95, vec![None, None]);
    assert_eq!(st.unidentifiable.len(), 1);
    let combo = &st.unidentifiable[0];
    assert!(combo.eigenvalue_ratio < 1e-8);
    let h = std::f64::consts::FRAC_1_SQRT_2;
    assert_eq!(combo.weights.len(), 2);
    assert!((combo.weights[0].1 - h).abs() < 1e-6);
    assert!((combo.weights[1].1 + h).abs() < 1e-6);
    let mut who: Vec<usize> = combo.weights.iter().map(|w| w.0).collect();
    who.sort();
    assert_eq!(who, vec![0, 1]);
}

#[test]
fn multistart_leaves_the_wrong_basin() {
    // scipy 'lm' from (−1.5, 0) ends on the local minimum, from (1.5, 0) on the global one.
    let fx = fixture();
    let case = &fx["two_minima"];
    let t0 = vec_of(&case["wrong_basin_start"]);
    let b = Bounds {
        lo: vec![-3.0, -5.0],
        hi: vec![3.0, 5.0],
    };
    let single = levenberg_marquardt(&mut two_minima(), &t0, &b, &tight()).unwrap();
    check_optimum(&single, &case["local"], "single start");
    let o = MultistartOptions {
        starts: 8,
        half_width: vec![2.0, 1.0],
        seed: 15,
    };
    let ms = multistart(&mut two_minima(), &t0, &b, &tight(), &o).unwrap();
    check_optimum(ms.best(), &case["global"], "multistart");
    assert_eq!(ms.starts.len(), 8);
    assert_eq!(ms.converged, 8);
    assert_eq!(ms.distinct_minima, 2);
    assert!(ms.at_best >= 1 && ms.at_best < 8);
    assert!(ms.best != 0, "the first start is the wrong basin");
    // Deterministic: the same seed gives the same starts.
    let again = multistart(&mut two_minima(), &t0, &b, &tight(), &o).unwrap();
    let starts = |m: &rxnet::fit::lm::MultistartResult| -> Vec<Vec<f64>> {
        m.starts.iter().map(|s| s.theta0.clone()).collect()
    };
    assert_eq!(starts(&ms), starts(&again));
}

#[test]
fn distributions_match_scipy() {
    // scipy.stats.t.ppf, scipy.stats.f.sf, scipy.special.betainc and gammaln.
    let fx = fixture();
    let d = &fx["distributions"];
    for row in d["t_ppf"].as_array().unwrap() {
        let (p, dof, v) = (
            row["p"].as_f64().unwrap(),
            row["dof"].as_f64().unwrap(),
            row["value"].as_f64().unwrap(),
        );
        let t = student_t_quantile(p, dof);
        assert!(rel(t, v) < 1e-10, "t.ppf({p}, {dof}) = {v}, got {t}");
    }
    for row in d["f_sf"].as_array().unwrap() {
        let (f, d1, d2, v) = (
            row["f"].as_f64().unwrap(),
            row["d1"].as_f64().unwrap(),
            row["d2"].as_f64().unwrap(),
            row["value"].as_f64().unwrap(),
        );
        let q = f_upper_tail(f, d1, d2);
        assert!(rel(q, v) < 1e-10, "f.sf({f}, {d1}, {d2}) = {v}, got {q}");
    }
    for row in d["betainc"].as_array().unwrap() {
        let (a, b, x, v) = (
            row["a"].as_f64().unwrap(),
            row["b"].as_f64().unwrap(),
            row["x"].as_f64().unwrap(),
            row["value"].as_f64().unwrap(),
        );
        let i = incomplete_beta(a, b, x, 1.0 - x).0;
        assert!(rel(i, v) < 1e-10, "betainc({a}, {b}, {x}) = {v}, got {i}");
    }
    for row in d["gammaln"].as_array().unwrap() {
        let (x, v) = (row["x"].as_f64().unwrap(), row["value"].as_f64().unwrap());
        assert!(rel(ln_gamma(x), v) < 1e-13, "gammaln({x})");
    }
}

#[test]
fn nested_f_test_and_refusals() {
    // F = ((SSR_A − SSR_B)/(P_B − P_A)) / (SSR_B/(N − P_B)) (extra sum of squares; Bates &
    // Watts 1988, from memory); the p-value against the scipy f.sf row (F = 4, 1, 50).
    let t = nested_f_test(12.0, 2, 10.0, 3, 53).unwrap();
    assert!(rel(t.f, 10.0) < 1e-15 && t.df1 == 1 && t.df2 == 50);
    let fx = fixture();
    let row = fx["distributions"]["f_sf"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["f"] == 4.0 && r["d1"] == 1 && r["d2"] == 50)
        .unwrap();
    let t = nested_f_test(10.8, 2, 10.0, 3, 53).unwrap();
    assert!(rel(t.f, 4.0) < 1e-12);
    assert!(rel(t.p, row["value"].as_f64().unwrap()) < 1e-10);
    assert!(nested_f_test(10.0, 3, 9.0, 3, 20).is_err());
    assert!(nested_f_test(10.0, 2, 9.0, 20, 20).is_err());
    // No degrees of freedom: statistics refuse rather than divide by zero.
    let mut m = two_minima();
    let r = levenberg_marquardt(&mut m, &[1.5, 0.0], &Bounds::unbounded(2), &tight()).unwrap();
    let short = LmResult {
        residuals: r.residuals[..2].to_vec(),
        jacobian: r.jacobian.rows(0, 2).into_owned(),
        ..r
    };
    assert!(statistics(&short, None).is_err());
}
