//! Acceptance tests of `rxnet fit` (kinetic parameter estimation and model discrimination):
//! the binary's JSON against fixtures written by scipy.
//!
//! Source of every expected number: scipy.optimize.least_squares on exactly the residuals of
//! the fit design (weighted residuals, theta = ln k at T_fit, Radau at rtol 1e-12 with forward
//! sensitivities for the Jacobian), run by the scripts tests/reference/fit_*.py, which also
//! wrote the studies and synthetic data under tests/data/fit/ (invented demo values, Gaussian
//! noise from numpy's default_rng with a fixed seed). The statistics (s² (JᵀJ)⁻¹, t and F
//! quantiles, AIC/BIC, lack of fit, nested F-test) are computed there with numpy and
//! scipy.stats; each fixture names its command and the scipy version. `cargo test` never runs
//! Python.
//!
//! Tolerances: the optimum θ̂ to 1e-4 relative, standard errors to 1e-2 relative, correlation
//! coefficients to 1e-2 absolute, SSR to 1e-4 relative, AIC/BIC to 1e-2 absolute, lack-of-fit
//! and F-test figures to 1e-3 relative (their p values to 1e-2 relative, since a tail
//! probability magnifies the small differences in F).

mod common;

use common::{Agreement, num, rxnet};
use serde_json::Value;
use std::path::PathBuf;

const THETA_TOL: f64 = 1e-4;
const SE_TOL: f64 = 1e-2;
const CORR_TOL: f64 = 1e-2;
const SSR_TOL: f64 = 1e-4;
const IC_TOL: f64 = 1e-2;
const LOF_TOL: f64 = 1e-3;
const P_TOL: f64 = 1e-2;

fn fixture(text: &str) -> Value {
    serde_json::from_str(text).expect("the fixture is JSON")
}

/// An acceptance study or data file under tests/data/fit/.
fn data(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join("data")
        .join("fit")
        .join(name)
}

/// `rxnet fit FILES... --format json`, which must succeed.
fn fit_json(files: &[PathBuf]) -> Value {
    let mut args = vec!["fit".to_string()];
    args.extend(
        files
            .iter()
            .map(|f| f.to_str().expect("UTF-8 path").to_string()),
    );
    args.extend(["--format".to_string(), "json".to_string()]);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    rxnet(&args).ok_json()
}

fn array<'a>(v: &'a Value, what: &str) -> &'a Vec<Value> {
    v.as_array()
        .unwrap_or_else(|| panic!("{what} is not an array: {v}"))
}

/// The estimate of `path` in a fit's `estimates`, and its index there.
fn estimate<'a>(fit: &'a Value, path: &str) -> (usize, &'a Value) {
    array(&fit["estimates"], "estimates")
        .iter()
        .enumerate()
        .find(|(_, e)| e["path"] == path)
        .unwrap_or_else(|| panic!("no estimate of {path} in {}", fit["estimates"]))
}

/// |got − want| <= tol (for correlation coefficients and information criteria).
fn near(got: f64, want: f64, tol: f64, what: &str) {
    assert!(
        got.is_finite() && (got - want).abs() <= tol,
        "{what}: got {got}, expected {want} (scipy), tolerance {tol}"
    );
}

/// Everything of one candidate that scipy determines: counts, T_fit, θ̂, SE, CI95, the
/// correlation matrix, SSR, s², AIC, BIC, residual counts and the lack-of-fit test.
fn compare_fit(got: &Value, want: &Value, agreement: &mut Agreement) {
    let name = want["study"].as_str().unwrap_or("?").to_string();
    for key in ["observations", "parameters", "dof"] {
        assert_eq!(got[key], want[key], "{name}: {key}");
    }
    assert_eq!(got["converged"], true, "{name}: the fit must converge");
    // T_fit = 1/mean(1/T_run) rounded to 0.1 K (the design's reparameterisation)
    near(
        num(&got["T_fit"], "T_fit"),
        num(&want["T_fit"], "T_fit"),
        1e-9,
        &format!("{name}: T_fit"),
    );
    agreement.check(
        num(&got["ssr"], "ssr"),
        num(&want["ssr"], "ssr"),
        SSR_TOL,
        &format!("{name}: SSR"),
    );
    agreement.check(
        num(&got["s2"], "s2"),
        num(&want["s2"], "s2"),
        SSR_TOL,
        &format!("{name}: s²"),
    );
    near(
        num(&got["aic"], "aic"),
        num(&want["aic"], "aic"),
        IC_TOL,
        &format!("{name}: AIC"),
    );
    near(
        num(&got["bic"], "bic"),
        num(&want["bic"], "bic"),
        IC_TOL,
        &format!("{name}: BIC"),
    );
    assert!(
        array(&got["unidentifiable"], "unidentifiable").is_empty(),
        "{name}: every parameter is identifiable here: {}",
        got["unidentifiable"]
    );

    let wanted = array(&want["estimates"], "fixture estimates");
    let mut index = Vec::new();
    for w in wanted {
        let path = w["path"].as_str().expect("path");
        let (gi, g) = estimate(got, path);
        index.push(gi);
        assert_eq!(g["scale"], w["scale"], "{name}: scale of {path}");
        assert_eq!(g["identifiable"], true, "{name}: {path} is identifiable");
        let theta = num(&g["theta"], "theta");
        agreement.check(
            theta,
            num(&w["theta"], "theta"),
            THETA_TOL,
            &format!("{name}: θ̂ of {path}"),
        );
        // value in SI: exp θ for a log-scale parameter, θ itself for a linear one (design)
        let value = num(&g["value"], "value");
        let expect = if w["scale"] == "log" {
            theta.exp()
        } else {
            theta
        };
        agreement.check(
            value,
            expect,
            1e-9,
            &format!("{name}: value of {path} from θ"),
        );
        agreement.check(
            num(&g["se_theta"], "se_theta"),
            num(&w["se_theta"], "se_theta"),
            SE_TOL,
            &format!("{name}: SE of {path}"),
        );
        let ci = array(&g["ci95"], "ci95");
        let wci = array(&w["ci95"], "fixture ci95");
        for k in 0..2 {
            agreement.check(
                num(&ci[k], "ci95"),
                num(&wci[k], "ci95"),
                SE_TOL,
                &format!("{name}: CI95 end {k} of {path} (t quantile from scipy.stats)"),
            );
        }
    }
    let corr = &got["correlation"];
    let wcorr = &want["correlation"];
    for i in 0..wanted.len() {
        for j in 0..wanted.len() {
            near(
                num(&corr[index[i]][index[j]], "correlation"),
                num(&wcorr[i][j], "correlation"),
                CORR_TOL,
                &format!("{name}: correlation [{i}][{j}]"),
            );
        }
    }

    // residual counts per species and per run (the non-empty cells of the data file) and
    // the rms of the weighted residuals, from the same scipy solution
    for (group, key) in [("by_species", "species"), ("by_run", "run")] {
        let got_rows = array(&got["residuals"][group], group);
        for w in array(&want["residuals"][group], group) {
            let g = got_rows
                .iter()
                .find(|g| g[key] == w[key])
                .unwrap_or_else(|| panic!("{name}: no {group} row for {}", w[key]));
            assert_eq!(g["n"], w["n"], "{name}: {group} n of {}", w[key]);
            agreement.check(
                num(&g["rms"], "rms"),
                num(&w["rms"], "rms"),
                LOF_TOL,
                &format!("{name}: {group} rms of {}", w[key]),
            );
        }
    }

    match (&got["lack_of_fit"], &want["lack_of_fit"]) {
        (Value::Null, Value::Null) => {}
        (g, Value::Null) => panic!("{name}: no replicates, yet a lack-of-fit test: {g}"),
        (g, w) => compare_lack_of_fit(g, w, &name, agreement),
    }
}

/// The lack-of-fit test with replicates (scipy.stats.f.sf for p).
fn compare_lack_of_fit(got: &Value, want: &Value, name: &str, agreement: &mut Agreement) {
    assert!(
        got.is_object(),
        "{name}: replicates exist, lack_of_fit is {got}"
    );
    // keys: rxnet's JSON, then the fixture's
    for (key, wkey) in [("df_pure_error", "df_pe"), ("df_lack_of_fit", "df_lf")] {
        assert_eq!(got[key], want[wkey], "{name}: lack of fit {key}");
    }
    for (key, wkey) in [
        ("ss_pure_error", "ss_pe"),
        ("ss_lack_of_fit", "ss_lf"),
        ("F", "F"),
    ] {
        agreement.check(
            num(&got[key], key),
            num(&want[wkey], wkey),
            LOF_TOL,
            &format!("{name}: lack of fit {key}"),
        );
    }
    agreement.check(
        num(&got["p"], "p"),
        num(&want["p"], "p"),
        P_TOL,
        &format!("{name}: lack of fit p"),
    );
}

/// Whether a candidate's `study` (or a ranking's or F-test's reference to one) names the
/// study file `file` (by its path) or its `name:`, `title`.
fn names(v: &Value, file: &str, title: &str) -> bool {
    v.as_str().is_some_and(|s| s.ends_with(file) || s == title)
}

const FULL: (&str, &str) = (
    "triangle_full.yaml",
    "series-parallel A -> R -> S and A -> S (demo values)",
);
const SERIES: (&str, &str) = (
    "triangle_series.yaml",
    "pure series A -> R -> S (demo values)",
);

#[test]
fn series_batch_at_three_temperatures_matches_scipy() {
    // Source: tests/reference/fit_series.py (scipy least_squares; A -> B -> C, k and Ea of
    // both steps, three runs set by a runs table, missing cells, relative + absolute errors).
    let want = fixture(include_str!("reference/fit_series.json"));
    let got = fit_json(&[data("series_batch.yaml")]);
    let mut a = Agreement::new("fit, series A -> B -> C at three temperatures vs scipy");
    compare_fit(&got, &want, &mut a);
    a.report();
}

#[test]
fn reversible_step_with_unknown_equilibrium_constant_matches_scipy() {
    // Source: tests/reference/fit_reversible.py (scipy least_squares; A <=> B, k and K_eq on a
    // log scale, two charges from a runs table, no error model: sigma = 1 mol/m3).
    let want = fixture(include_str!("reference/fit_reversible.json"));
    let got = fit_json(&[data("reversible_batch.yaml")]);
    let mut a = Agreement::new("fit, reversible A <=> B with unknown K_eq vs scipy");
    compare_fit(&got, &want, &mut a);
    a.report();
}

#[test]
fn parallel_steps_seen_only_through_a_are_flagged_not_identifiable() {
    // Source: tests/reference/fit_parallel_unidentifiable.py: only A is measured, so only
    // k1 + k2 is determined (C_A = C_A0 exp(-(k1 + k2) t), Levenspiel ch. 3, from memory);
    // scipy's J has the null direction (1, -1)/sqrt(2) in the correlation-scaled JᵀJ.
    let want = fixture(include_str!("reference/fit_parallel_unidentifiable.json"));
    let got = fit_json(&[data("parallel_batch.yaml")]);
    let mut a = Agreement::new("fit, unidentifiable parallel pair vs scipy");
    for key in ["observations", "parameters", "dof"] {
        assert_eq!(got[key], want[key], "{key}");
    }
    // the least-squares minimum is unique in k1 + k2 and in SSR although k1, k2 are not
    a.check(
        num(&got["ssr"], "ssr"),
        num(&want["ssr"], "ssr"),
        SSR_TOL,
        "SSR at the minimum",
    );
    let paths = ["reactions.to_b.rate.k", "reactions.to_c.rate.k"];
    let k_sum: f64 = paths
        .iter()
        .map(|p| num(&estimate(&got, p).1["theta"], "theta").exp())
        .sum();
    a.check(
        k_sum,
        num(&want["k_sum"], "k_sum"),
        THETA_TOL,
        "k1 + k2 (the identifiable combination)",
    );

    let flagged = array(&got["unidentifiable"], "unidentifiable");
    assert!(
        !flagged.is_empty(),
        "k1 and k2 must be flagged: {}",
        got["unidentifiable"]
    );
    let combination = array(&flagged[0]["combination"], "combination");
    let weight = |path: &str| {
        combination
            .iter()
            .find(|c| c["path"] == path)
            .map(|c| num(&c["weight"], "weight"))
            .unwrap_or(0.0)
    };
    let (w1, w2) = (weight(paths[0]), weight(paths[1]));
    let null = array(&want["null_direction_expected"], "null direction");
    // (1, -1)/sqrt(2) up to sign
    near(
        w1.abs(),
        num(&null[0], "w").abs(),
        1e-2,
        "|weight| of ln k1",
    );
    near(
        w2.abs(),
        num(&null[1], "w").abs(),
        1e-2,
        "|weight| of ln k2",
    );
    assert!(
        w1 * w2 < 0.0,
        "opposite signs: ln k1 - ln k2 is undetermined"
    );
    let ratio = num(&flagged[0]["eigenvalue_ratio"], "eigenvalue_ratio");
    assert!(
        ratio < 1e-8,
        "eigenvalue ratio {ratio} below the design's 1e-8"
    );

    for p in paths {
        let e = estimate(&got, p).1;
        assert_eq!(e["identifiable"], false, "{p}: {e}");
        assert!(
            e.get("ci95").is_none_or(Value::is_null),
            "{p}: no confidence interval for a parameter that is not identifiable: {e}"
        );
        assert!(
            e.get("se_theta").is_none_or(Value::is_null),
            "{p}: no standard error for a parameter that is not identifiable: {e}"
        );
    }
    a.report();
}

#[test]
fn series_parallel_data_rank_the_series_parallel_candidate_first() {
    // Source: tests/reference/fit_discrimination.py (scipy least_squares on both candidates,
    // AIC/BIC with Akaike weights, the nested F-test and the lack-of-fit test by
    // scipy.stats.f.sf; replicated data generated with A -> R -> S plus A -> S).
    let want = fixture(include_str!("reference/fit_discrimination.json"));
    let full = data("triangle_full.yaml");
    let series = data("triangle_series.yaml");
    let got = fit_json(&[series.clone(), full.clone()]);
    let mut a = Agreement::new("fit, discrimination of nested candidates vs scipy");

    let candidates = array(&got["candidates"], "candidates");
    assert_eq!(candidates.len(), 2, "two candidates");
    let by_file = |(file, title): (&str, &str)| {
        candidates
            .iter()
            .find(|c| names(&c["study"], file, title))
            .unwrap_or_else(|| panic!("no candidate {file} in {}", got["candidates"]))
    };
    compare_fit(
        by_file(FULL),
        &want["candidates"]["series_parallel"],
        &mut a,
    );
    compare_fit(by_file(SERIES), &want["candidates"]["series"], &mut a);

    // ranking by AIC: the series-parallel network first, as in scipy's fits
    let ranking = array(&got["ranking"], "ranking");
    assert_eq!(ranking.len(), 2);
    assert!(
        names(&ranking[0]["study"], FULL.0, FULL.1),
        "the series-parallel candidate ranks first: {}",
        got["ranking"]
    );
    for (g, w) in ranking
        .iter()
        .zip(array(&want["ranking"], "fixture ranking"))
    {
        near(
            num(&g["delta_aic"], "delta_aic"),
            num(&w["delta_aic"], "delta_aic"),
            IC_TOL,
            "ΔAIC",
        );
        near(
            num(&g["weight"], "weight"),
            num(&w["weight"], "weight"),
            1e-6,
            "Akaike weight",
        );
    }

    // the nested F-test agrees: the parallel step is needed (p < 0.05)
    let tests = array(&got["f_tests"], "f_tests");
    assert_eq!(tests.len(), 1, "one nested pair: {}", got["f_tests"]);
    let t = &tests[0];
    assert!(
        names(&t["simpler"], SERIES.0, SERIES.1) && names(&t["fuller"], FULL.0, FULL.1),
        "the pure series network is nested in the series-parallel one: {t}"
    );
    let wt = &want["f_test"];
    assert_eq!(t["df1"], wt["df1"], "F-test df1");
    assert_eq!(t["df2"], wt["df2"], "F-test df2");
    a.check(num(&t["F"], "F"), num(&wt["F"], "F"), LOF_TOL, "nested F");
    a.check(
        num(&t["p"], "p"),
        num(&wt["p"], "p"),
        P_TOL,
        "nested F-test p",
    );
    assert!(
        num(&t["p"], "p") < 0.05,
        "the F-test rejects the pure series"
    );
    a.report();
}

#[test]
fn bundled_demo_fit_matches_scipy() {
    // Source: tests/reference/fit_demo.py (scipy least_squares; the bundled demo
    // networks/amine_alkylation_batch.yaml: 6 parameters, 5 batch runs, 5 species).
    let want = fixture(include_str!("reference/fit_demo.json"));
    let study = common::network("amine_alkylation_batch.yaml");
    let got = fit_json(std::slice::from_ref(&study));
    let mut a = Agreement::new("fit, bundled alkylation demo vs scipy");
    compare_fit(&got, &want, &mut a);
    a.report();

    // the README's command: the text report names every estimated parameter
    let text = rxnet(&["fit", study.to_str().expect("UTF-8 path")]);
    assert_eq!(text.code, 0, "stderr: {}", text.stderr);
    for e in array(&want["estimates"], "estimates") {
        let path = e["path"].as_str().expect("path");
        assert!(text.stdout.contains(path), "{path} in:\n{}", text.stdout);
    }
}
