//! `rxnet fit` end to end: data read from CSV with located errors, the study's `fit:` section,
//! the gate, fits to data made from textbook closed forms, `--write` round trips, the JSON keys,
//! and model discrimination.
//!
//! The data are exact values of closed-form solutions (no noise), so a correct fit recovers
//! the constants they were made with: first-order series A -> B -> C in a batch (Levenspiel,
//! Chemical Reaction Engineering, 3rd ed., ch. 8, from memory), a first-order CSTR
//! C_A = C_A0/(1 + k τ) (ch. 5, from memory) and a first-order PFR C_A = C_A0 exp(−k τ) (ch. 5).

use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::atomic::{AtomicUsize, Ordering};

/// CODATA 2018 molar gas constant, J/(mol K).
const R: f64 = 8.314_462_618;

struct Out {
    code: i32,
    stdout: String,
    stderr: String,
}

fn rxnet(args: &[&str]) -> Out {
    let o = Command::new(env!("CARGO_BIN_EXE_rxnet"))
        .args(args)
        .output()
        .expect("run rxnet");
    Out {
        code: o.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&o.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&o.stderr).into_owned(),
    }
}

/// A fresh directory for one test's files.
fn dir(tag: &str) -> PathBuf {
    static N: AtomicUsize = AtomicUsize::new(0);
    let d = std::env::temp_dir().join(format!(
        "rxnet-fit-{tag}-{}-{}",
        std::process::id(),
        N.fetch_add(1, Ordering::SeqCst)
    ));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn put(d: &Path, name: &str, text: &str) -> String {
    let p = d.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_str().unwrap().to_string()
}

fn json(o: &Out) -> serde_json::Value {
    assert_eq!(o.code, 0, "stdout:\n{}\nstderr:\n{}", o.stdout, o.stderr);
    serde_json::from_str(&o.stdout).expect("JSON output")
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

const SERIES: &str = "# demo values: a series A -> B -> C batch
name: series demo
phase: liquid
species: {A: , B: , C: }
reactions:
  - id: first
    stoich: A -> B
    rate: {k: 0.05 1/min, Ea: 60 kJ/mol, T_ref: 300 K}
  - id: second
    stoich: B -> C
    rate:
      k: 0.02 1/min   # a first guess
      Ea: 40 kJ/mol
feed: {T: 300 K, amounts: {A: 1 mol}}
reactor: {type: batch, volume: 1 L, time: 60 min}
fit:
  data: data.csv
  runs: runs.csv
  estimate:
    - reactions.first.rate.k
    - {path: reactions.first.rate.Ea, min: 0 kJ/mol, max: 300 kJ/mol}
    - reactions.second.rate.k
    - reactions.second.rate.Ea
  error:
    default: {absolute: 0.01 mol/L}
  starts: 2
";

/// The true constants of the series data: k at 300 K (1/s) and Ea (J/mol).
const K1: f64 = 0.08 / 60.0;
const E1: f64 = 55e3;
const K2: f64 = 0.03 / 60.0;
const E2: f64 = 45e3;
const TEMPS: [f64; 3] = [300.0, 310.0, 320.0];

fn arrhenius(k300: f64, ea: f64, t: f64) -> f64 {
    k300 * (-ea / R * (1.0 / t - 1.0 / 300.0)).exp()
}

/// C_A and C_B of A -> B -> C (first order, C_A0 = 1 mol/L, k1 ≠ k2): Levenspiel ch. 8.
fn series(k1: f64, k2: f64, t: f64) -> (f64, f64) {
    let a = (-k1 * t).exp();
    let b = k1 / (k2 - k1) * ((-k1 * t).exp() - (-k2 * t).exp());
    (a, b)
}

fn series_files(d: &Path) -> String {
    let mut data =
        String::from("# demo data, exact closed form\nrun,t [min],A [mol/L],B [mol/L]\n");
    let mut runs = String::from("run,feed.T\n");
    for (r, &t) in TEMPS.iter().enumerate() {
        runs.push_str(&format!("r{r},{t} K\n"));
        let (k1, k2) = (arrhenius(K1, E1, t), arrhenius(K2, E2, t));
        for tm in [0.0, 5.0, 10.0, 20.0, 30.0, 45.0, 60.0] {
            let (a, b) = series(k1, k2, tm * 60.0);
            data.push_str(&format!("r{r},{tm},{a:.12},{b:.12}\n"));
        }
    }
    put(d, "data.csv", &data);
    put(d, "runs.csv", &runs);
    put(d, "series.yaml", SERIES)
}

fn t_fit() -> f64 {
    let mean_inv = TEMPS.iter().map(|t| 1.0 / t).sum::<f64>() / 3.0;
    (10.0 / mean_inv).round() / 10.0
}

#[test]
fn a_series_batch_at_three_temperatures_recovers_its_constants() {
    let d = dir("series");
    let study = series_files(&d);
    let j = json(&rxnet(&["fit", &study, "--format", "json"]));
    // Every key of the design's JSON.
    for key in [
        "study",
        "data",
        "observations",
        "parameters",
        "dof",
        "converged",
        "iterations",
        "starts",
        "ssr",
        "s2",
        "aic",
        "bic",
        "T_fit",
        "estimates",
        "covariance",
        "correlation",
        "unidentifiable",
        "residuals",
        "lack_of_fit",
        "warnings",
    ] {
        assert!(j.get(key).is_some(), "missing `{key}`");
    }
    for key in [
        "path",
        "scale",
        "theta",
        "value",
        "unit",
        "se_theta",
        "ci95",
        "identifiable",
        "at_bound",
    ] {
        assert!(
            j["estimates"][0].get(key).is_some(),
            "missing estimates[0].{key}"
        );
    }
    assert_eq!(j["observations"], 42);
    assert_eq!(j["dof"], 38);
    assert_eq!(j["converged"], true);
    let tf = t_fit();
    assert_eq!(j["T_fit"].as_f64().unwrap(), tf);
    let est = j["estimates"].as_array().unwrap();
    // k reported at T_fit (SI), Ea in J/mol.
    let want = [arrhenius(K1, E1, tf), E1, arrhenius(K2, E2, tf), E2];
    for (e, w) in est.iter().zip(want) {
        let v = e["value"].as_f64().unwrap();
        assert!(rel(v, w) < 1e-6, "{}: {v} vs {w}", e["path"]);
    }
    assert_eq!(est[0]["scale"], "log");
    assert_eq!(est[0]["unit"], "1/s");
    assert_eq!(est[1]["scale"], "linear");
    assert!((est[0]["theta"].as_f64().unwrap() - want[0].ln()).abs() < 1e-6);
    // Covariance and correlation are P×P; the diagonal of the correlation is 1.
    let corr = j["correlation"].as_array().unwrap();
    assert_eq!(corr.len(), 4);
    for (k, row) in corr.iter().enumerate() {
        assert!((row[k].as_f64().unwrap() - 1.0).abs() < 1e-9);
    }
    assert_eq!(j["residuals"]["by_species"].as_array().unwrap().len(), 2);
    assert_eq!(j["residuals"]["by_run"].as_array().unwrap().len(), 3);
    assert!(j["lack_of_fit"].is_null());
    // The text report names the estimates in the study's units.
    let t = rxnet(&["fit", &study]);
    assert_eq!(t.code, 0, "{}", t.stderr);
    assert!(t.stdout.contains("reactions.first.rate.Ea") && t.stdout.contains("kJ/mol"));
}

#[test]
fn write_keeps_the_text_and_refits_to_the_same_estimates() {
    let d = dir("write");
    let study = series_files(&d);
    let out = d.join("fitted.yaml");
    let plots = d.join("plots");
    let first = json(&rxnet(&[
        "fit",
        &study,
        "--format",
        "json",
        "--write",
        out.to_str().unwrap(),
        "--plots",
        plots.to_str().unwrap(),
        // A reaction by its index is the same place in the text as by its id.
        "--estimate",
        "reactions.0.rate.k",
        "--estimate",
        "reactions.0.rate.Ea=0..300 kJ/mol",
        "--estimate",
        "reactions.second.rate.k",
        "--estimate",
        "reactions.second.rate.Ea",
    ]));
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.contains("# a first guess"), "comments kept:\n{text}");
    assert!(text.contains("# demo values"), "{text}");
    let tf = t_fit();
    assert_eq!(
        text.matches(&format!("T_ref: {tf:?} K")).count(),
        2,
        "{text}"
    );
    for f in [
        "series_run_r0.svg",
        "series_run_r2.svg",
        "series_parity.svg",
    ] {
        let svg = std::fs::read_to_string(plots.join(f)).unwrap();
        assert!(svg.starts_with("<svg"), "{f}");
    }
    // The written study loads and refits (from its own values, one start) to the same estimates.
    let again = json(&rxnet(&[
        "fit",
        out.to_str().unwrap(),
        "--format",
        "json",
        "--starts",
        "1",
    ]));
    for (a, b) in first["estimates"]
        .as_array()
        .unwrap()
        .iter()
        .zip(again["estimates"].as_array().unwrap())
    {
        let (va, vb) = (a["value"].as_f64().unwrap(), b["value"].as_f64().unwrap());
        assert!(rel(vb, va) < 1e-6, "{}: {va} then {vb}", a["path"]);
    }
    // The input itself is never overwritten.
    let o = rxnet(&["fit", &study, "--write", &study]);
    assert_eq!(o.code, 2, "{}", o.stderr);
    assert!(o.stderr.contains("the study itself"), "{}", o.stderr);
    assert_eq!(std::fs::read_to_string(&study).unwrap(), SERIES);
}

/// Each bad data file is refused with exit 2, naming the file, line and column.
#[test]
fn bad_data_files_name_file_line_and_column() {
    let d = dir("baddata");
    series_files(&d);
    let study = put(&d, "series.yaml", SERIES);
    let cases: [(&str, &str); 9] = [
        ("run,t [min],A\nr0,0,1\n", ":1:13:"),                // no unit
        ("run,t [min],A [K]\nr0,0,1\n", ":1:13:"),            // not a concentration
        ("run,t [min],Q [mol/L]\nr0,0,1\n", ":1:13:"),        // unknown species
        ("run,t [min],A [mol/s]\nr0,0,1\n", ":1:13:"),        // a flow in a batch
        ("run,V [L],A [mol/L]\nr0,0,1\n", ":1:5:"),           // V is not a batch's variable
        ("run,t [min],A [mol/L]\nr0,0,1\nr0,5,x\n", ":3:6:"), // not a number
        ("run,t [min],A [mol/L]\nr0,0\n", ":2:"),             // too few cells
        ("x,t [min],A [mol/L]\nr0,0,1\n", ":1:1:"),           // first column not run
        ("run,t [min],A [mol/L]\nr9,0,1\n", ":2:1:"),         // run not in the runs table
    ];
    for (text, at) in cases {
        let data = put(&d, "bad.csv", text);
        let o = rxnet(&["fit", &study, "--data", &data]);
        assert_eq!(o.code, 2, "{text}: {}", o.stderr);
        assert!(
            o.stderr.contains(&format!("bad.csv{at}")),
            "{text}: expected bad.csv{at} in: {}",
            o.stderr
        );
    }
}

/// A bad `fit:` section is refused with the study's file, line and field.
#[test]
fn bad_fit_sections_are_located() {
    let d = dir("badfit");
    series_files(&d);
    let line_of =
        |text: &str, needle: &str| text.lines().position(|l| l.contains(needle)).unwrap() + 1;
    let cases = [
        ("  starts: 2\n", "  starts: 2\n  guesses: 3\n", "guesses"),
        ("  starts: 2\n", "  starts: 0\n", "starts"),
        (
            "    default: {absolute: 0.01 mol/L}\n",
            "    default: {absolute: 0.01 mol/L}\n    Z: {relative: 2 %}\n",
            "Z:",
        ),
        (
            "{path: reactions.first.rate.Ea, min: 0 kJ/mol, max: 300 kJ/mol}",
            "{path: reactions.first.rate.Ea, min: 0 kJ/mol, max: 300 K}",
            "max: 300 K",
        ),
        (
            "    - reactions.second.rate.k\n",
            "    - reactions.third.rate.k\n",
            "third",
        ),
        (
            "    default: {absolute: 0.01 mol/L}\n",
            "    default: {absolute: 0.01 mol}\n",
            "default:",
        ),
    ];
    for (from, to, needle) in cases {
        let text = SERIES.replace(from, to);
        assert_ne!(text, SERIES, "{from}");
        let study = put(&d, "bad.yaml", &text);
        let o = rxnet(&["fit", &study]);
        assert_eq!(o.code, 2, "{to}: {}", o.stderr);
        let line = line_of(&text, needle);
        assert!(
            o.stderr.contains(&format!("bad.yaml:{line}:")),
            "{to}: expected line {line} in: {}",
            o.stderr
        );
    }
}

/// The gate: a study whose check has error findings is refused (exit 1), as by every command.
#[test]
fn a_study_with_error_findings_is_refused() {
    let d = dir("gate");
    series_files(&d);
    let text = SERIES
        .replace("species: {A: , B: , C: }", "species: {A: , B: , C: , D: }")
        .replace("name: series demo", "name: series demo\ndesired: D");
    let study = put(&d, "gate.yaml", &text);
    let o = rxnet(&["fit", &study]);
    assert_eq!(o.code, 1, "{}", o.stderr);
    assert!(o.stderr.contains("error findings"), "{}", o.stderr);
}

const CSTR: &str = "# demo values
phase: liquid
species: {A: , B: }
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.01 1/s}}
feed: {T: 320 K, volumetric: 1 L/s, concentrations: {A: 2 mol/L}}
reactor: {type: cstr, volume: 10 L}
fit:
  data: cstr.csv
  estimate: [reactions.r1.rate.k]
";

#[test]
fn a_cstr_fits_each_residence_time_as_its_own_steady_state() {
    let d = dir("cstr");
    let k = 0.05; // 1/s
    let mut data = String::from("run,tau [s],A [mol/L],B [mol/min]\n");
    for tau in [2.0, 5.0, 10.0, 20.0, 40.0] {
        // C_A = C_A0/(1 + k τ), F_B = v0 (C_A0 − C_A) (Levenspiel ch. 5).
        let ca = 2.0 / (1.0 + k * tau);
        let fb = 1e-3 * (2000.0 - ca * 1000.0) * 60.0;
        data.push_str(&format!("c1,{tau},{ca:.12},{fb:.12}\n"));
    }
    put(&d, "cstr.csv", &data);
    let study = put(&d, "cstr.yaml", CSTR);
    let j = json(&rxnet(&[
        "fit", &study, "--format", "json", "--starts", "1",
    ]));
    let v = j["estimates"][0]["value"].as_f64().unwrap();
    assert!(rel(v, k) < 1e-6, "k = {v}");
    // Only k is estimated and r1 has no Ea: T_fit is still set for its reaction.
    assert_eq!(j["T_fit"].as_f64().unwrap(), 320.0);
}

#[test]
fn a_pfr_fits_concentrations_along_its_length() {
    let d = dir("pfr");
    let k = 0.02; // 1/s
    let mut data = String::from("run,V [L],A [mol/L]\n");
    for v in [0.0, 5.0, 10.0, 25.0, 50.0] {
        // τ = V/v0 with v0 = 0.5 L/s; C_A = C_A0 exp(−k τ) (Levenspiel ch. 5).
        let ca = 2.0 * (-k * v / 0.5f64).exp();
        data.push_str(&format!("p1,{v},{ca:.12}\n"));
    }
    put(&d, "pfr.csv", &data);
    let text = CSTR
        .replace("cstr, volume: 10 L", "pfr, volume: 10 L")
        .replace("volumetric: 1 L/s", "volumetric: 0.5 L/s")
        .replace("cstr.csv", "pfr.csv");
    let study = put(&d, "pfr.yaml", &text);
    let j = json(&rxnet(&[
        "fit", &study, "--format", "json", "--starts", "1",
    ]));
    let v = j["estimates"][0]["value"].as_f64().unwrap();
    assert!(rel(v, k) < 1e-6, "k = {v}");
}

/// Two parallel steps A -> B of the same order: only k1 + k2 is determined; the fit says so
/// instead of giving each a narrow interval.
#[test]
fn parallel_steps_to_the_same_product_are_not_identifiable() {
    let d = dir("unid");
    let mut data = String::from("run,t [s],A [mol/L]\n");
    for t in [0.0, 10.0, 20.0, 40.0, 80.0] {
        data.push_str(&format!("u1,{t},{:.12}\n", (-0.03f64 * t).exp()));
    }
    put(&d, "u.csv", &data);
    let text = "# demo values
phase: liquid
species: {A: , B: }
reactions:
  - {id: one, stoich: A -> B, rate: {k: 0.01 1/s}}
  - {id: two, stoich: A -> B, rate: {k: 0.01 1/s}}
feed: {T: 300 K, amounts: {A: 1 mol}}
reactor: {type: batch, volume: 1 L, time: 80 s}
fit: {data: u.csv, estimate: [reactions.one.rate.k, reactions.two.rate.k], starts: 1}
";
    let study = put(&d, "u.yaml", text);
    let j = json(&rxnet(&["fit", &study, "--format", "json"]));
    let un = j["unidentifiable"].as_array().unwrap();
    assert!(!un.is_empty(), "{j}");
    assert!(
        j["estimates"]
            .as_array()
            .unwrap()
            .iter()
            .any(|e| e["identifiable"] == false)
    );
    assert!(!j["warnings"].as_array().unwrap().is_empty());
}

/// Data made with a series-parallel network rank it above the pure series network, and the
/// nested F-test agrees.
#[test]
fn discrimination_ranks_the_network_that_made_the_data_first() {
    let d = dir("disc");
    let (k1, k2, k3): (f64, f64, f64) = (0.002, 0.001, 0.0008); // 1/s
    let mut data = String::from("run,t [s],A [mol/L],B [mol/L],C [mol/L]\n");
    for t in [0.0, 100.0, 200.0, 400.0, 600.0, 900.0, 1200.0, 1800.0] {
        // A -> B (k1), B -> C (k2), A -> C (k3): C_A = e^{−(k1+k3)t},
        // C_B = k1/(k2 − k1 − k3)(e^{−(k1+k3)t} − e^{−k2 t}) (Levenspiel ch. 8, from memory).
        let ka = k1 + k3;
        let a = (-ka * t).exp();
        let b = k1 / (k2 - ka) * ((-ka * t).exp() - (-k2 * t).exp());
        data.push_str(&format!("d1,{t},{a:.12},{b:.12},{:.12}\n", 1.0 - a - b));
    }
    put(&d, "disc.csv", &data);
    let series = "# demo values
phase: liquid
species: {A: , B: , C: }
reactions:
  - {id: ab, stoich: A -> B, rate: {k: 0.001 1/s}}
  - {id: bc, stoich: B -> C, rate: {k: 0.001 1/s}}
feed: {T: 300 K, amounts: {A: 1 mol}}
reactor: {type: batch, volume: 1 L, time: 1800 s}
fit:
  data: disc.csv
  estimate: [reactions.ab.rate.k, reactions.bc.rate.k]
  error: {default: {absolute: 0.001 mol/L}}
  starts: 1
";
    let fuller = series
        .replace(
            "  - {id: bc, stoich: B -> C, rate: {k: 0.001 1/s}}\n",
            "  - {id: bc, stoich: B -> C, rate: {k: 0.001 1/s}}\n  - {id: ac, stoich: A -> C, rate: {k: 0.001 1/s}}\n",
        )
        .replace(
            "estimate: [reactions.ab.rate.k, reactions.bc.rate.k]",
            "estimate: [reactions.ab.rate.k, reactions.bc.rate.k, reactions.ac.rate.k]",
        );
    let a = put(&d, "series.yaml", series);
    let b = put(&d, "fuller.yaml", &fuller);
    let j = json(&rxnet(&["fit", &a, &b, "--format", "json"]));
    assert_eq!(j["candidates"].as_array().unwrap().len(), 2);
    let rank = j["ranking"].as_array().unwrap();
    assert!(
        rank[0]["study"].as_str().unwrap().ends_with("fuller.yaml"),
        "{j}"
    );
    for key in ["study", "aic", "delta_aic", "weight", "bic"] {
        assert!(rank[0].get(key).is_some(), "ranking.{key}");
    }
    assert!(rank[0]["weight"].as_f64().unwrap() > 0.99);
    let f = &j["f_tests"][0];
    for key in ["simpler", "fuller", "F", "df1", "df2", "p"] {
        assert!(f.get(key).is_some(), "f_tests.{key}");
    }
    assert!(f["simpler"].as_str().unwrap().ends_with("series.yaml"));
    assert!(f["p"].as_f64().unwrap() < 1e-6, "{f}");
    assert_eq!(f["df1"], 1);
}

/// The Jacobian from forward sensitivities agrees with central differences of whole solves
/// at a point away from the study's values (the parameter directions are taken about the
/// current θ, not the start), for amounts, concentrations and every parameter kind.
#[test]
fn the_jacobian_agrees_with_differences_of_whole_solves() {
    use rxnet::fit::lm::LeastSquares;
    let d = dir("jac");
    let study = series_files(&d);
    let req = rxnet::fit::setup::FitRequest {
        study: study.into(),
        ..Default::default()
    };
    let s = rxnet::fit::setup::setup(&req).unwrap();
    let opts = rxnet::solve::SolveOptions {
        rtol: Some(1e-11),
        ..Default::default()
    };
    let mut p = rxnet::fit::residuals::FitProblem::new(&s, opts).unwrap();
    // Far from the start: k's doubled and halved, Ea's moved by 5 kJ/mol.
    let th0: Vec<f64> = s.params.iter().map(|p| p.theta()).collect();
    let th = vec![
        th0[0] + 2f64.ln(),
        th0[1] + 5e3,
        th0[2] - 2f64.ln(),
        th0[3] - 5e3,
    ];
    let (_, j) = p.evaluate(&th, true).unwrap();
    let j = j.unwrap();
    let steps = [1e-4, 1.0, 1e-4, 1.0];
    for k in 0..4 {
        let (mut a, mut b) = (th.clone(), th.clone());
        a[k] += steps[k];
        b[k] -= steps[k];
        let (ra, _) = p.evaluate(&a, false).unwrap();
        let (rb, _) = p.evaluate(&b, false).unwrap();
        let scale = (0..ra.len()).map(|i| j[(i, k)].abs()).fold(0.0, f64::max);
        for i in 0..ra.len() {
            let fd = (ra[i] - rb[i]) / (2.0 * steps[k]);
            assert!(
                (j[(i, k)] - fd).abs() <= 1e-4 * scale,
                "parameter {k}, residual {i}: sensitivity {} vs difference {fd}",
                j[(i, k)]
            );
        }
    }
}

/// The same for a CSTR (implicit-function derivative of each steady state), with the data in
/// residence time, concentrations and molar flows.
#[test]
fn a_cstr_jacobian_agrees_with_differences_of_whole_solves() {
    use rxnet::fit::lm::LeastSquares;
    let d = dir("jaccstr");
    let mut data = String::from("run,tau [s],A [mol/L],B [mol/min]\n");
    for tau in [2.0, 10.0, 40.0] {
        data.push_str(&format!("c1,{tau},1.0,30\n"));
    }
    put(&d, "cstr.csv", &data);
    let text = CSTR.replace(
        "estimate: [reactions.r1.rate.k]",
        "estimate: [reactions.r1.rate.k, feed.concentrations.A]",
    );
    let study = put(&d, "cstr.yaml", &text);
    let req = rxnet::fit::setup::FitRequest {
        study: study.into(),
        ..Default::default()
    };
    let s = rxnet::fit::setup::setup(&req).unwrap();
    let mut p = rxnet::fit::residuals::FitProblem::new(&s, Default::default()).unwrap();
    let th0: Vec<f64> = s.params.iter().map(|p| p.theta()).collect();
    let th = vec![th0[0] + 1.0, th0[1] - 0.3];
    let (_, j) = p.evaluate(&th, true).unwrap();
    let j = j.unwrap();
    for k in 0..2 {
        let (mut a, mut b) = (th.clone(), th.clone());
        a[k] += 1e-4;
        b[k] -= 1e-4;
        let (ra, _) = p.evaluate(&a, false).unwrap();
        let (rb, _) = p.evaluate(&b, false).unwrap();
        let scale = (0..ra.len()).map(|i| j[(i, k)].abs()).fold(0.0, f64::max);
        for i in 0..ra.len() {
            let fd = (ra[i] - rb[i]) / 2e-4;
            assert!(
                (j[(i, k)] - fd).abs() <= 1e-4 * scale,
                "parameter {k}, residual {i}: sensitivity {} vs difference {fd}",
                j[(i, k)]
            );
        }
    }
}

/// The multistart is made when the first fit ends poorly or when asked for: the bundled demo,
/// whose first fit leaves s² within its stated errors (s² ≤ 1 + 3√(2/dof), the normal
/// approximation of χ²/dof; common practice), takes one start; `--starts 3` takes three; a
/// study with no error model (σ = 1 in the data's unit: nothing to judge s² by) takes the
/// default six.
#[test]
fn the_multistart_runs_when_the_first_fit_is_poor_or_when_asked() {
    let demo = "networks/amine_alkylation_batch.yaml";
    let one = json(&rxnet(&["fit", demo, "--format", "json"]));
    assert_eq!(one["starts"], 1, "{one}");
    let s2 = one["s2"].as_f64().unwrap();
    let dof = one["dof"].as_f64().unwrap();
    assert!(s2 <= 1.0 + 3.0 * (2.0 / dof).sqrt());
    assert!(one["starts_rule"].as_str().unwrap().contains("one start"));
    let three = json(&rxnet(&["fit", demo, "--format", "json", "--starts", "3"]));
    assert_eq!(three["starts"], 3);
    // The same minimum from the study's values either way (LM from one start point is
    // deterministic).
    let est = |v: &serde_json::Value| v["estimates"][0]["theta"].as_f64().unwrap();
    assert!(rel(est(&one), est(&three)) < 1e-9);
    // The series study without its error model and its `starts`: six starts.
    let d = dir("starts");
    series_files(&d);
    let plain = SERIES
        .replace("  error:\n    default: {absolute: 0.01 mol/L}\n", "")
        .replace("  starts: 2\n", "");
    assert!(!plain.contains("error:") && !plain.contains("starts:"));
    let study = put(&d, "plain.yaml", &plain);
    let six = json(&rxnet(&["fit", &study, "--format", "json"]));
    assert_eq!(six["starts"], 6, "{six}");
    assert!(
        six["starts_rule"]
            .as_str()
            .unwrap()
            .contains("no error model")
    );
}

/// An order is not a parameter to move alone: its rate constant's units depend on it (k in
/// (mol/m3)^(1−n)/s; common practice for power laws), so `fit --estimate` and `sensitivity
/// --of` on an order exit 2 saying so and pointing to candidate studies instead.
#[test]
fn an_order_is_refused_as_a_parameter() {
    let d = dir("order");
    let study = series_files(&d);
    let o = rxnet(&["fit", &study, "--estimate", "reactions.first.rate.orders.A"]);
    assert_eq!(o.code, 2, "{}", o.stderr);
    assert!(
        o.stderr.contains("order cannot be varied alone"),
        "{}",
        o.stderr
    );
    let o = rxnet(&[
        "sensitivity",
        &study,
        "--target",
        "conversion",
        "--of",
        "reactions.first.rate.orders.A",
    ]);
    assert_eq!(o.code, 2, "{}", o.stderr);
    assert!(
        o.stderr.contains("order cannot be varied alone"),
        "{}",
        o.stderr
    );
}
