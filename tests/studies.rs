//! Design studies through the binary: `optimize`, `sweep`, `compare` and the plots, checked
//! against closed forms and against independent scans.
//!
//! Every rate constant, feed and size below is an invented test value, not data for any real
//! process. Each numeric check names the outside source of its expected value. The book cited
//! as "Levenspiel" is O. Levenspiel, Chemical Reaction Engineering, 3rd ed., Wiley 1999; its
//! equations are quoted from memory.
//!
//! Run with `--nocapture` to see the worst relative error of each family of checks.

mod common;

use common::{
    Agreement, Run, TempFile, gas_batch, network, num, rel_err, rxnet, temp_out, temp_study,
};
use rxnet::solve::{SolveOptions, simulate};
use rxnet::{Override, load_file, load_str};
use serde_json::Value;
use std::collections::BTreeMap;

/// Molar gas constant, J/(mol K): CODATA 2018, exact (N_A k_B).
const R: f64 = 8.314_462_618_153_24;

/// Volumetric feed of the flow studies below, m3/s (1 L/s, test value).
const V0: f64 = 1e-3;

/// `rxnet optimize FILE ARGS... --format json`, which must succeed.
fn optimize(file: &TempFile, args: &[&str]) -> Value {
    let mut all = vec!["optimize", file.p()];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--format", "json"]);
    (rxnet(&all)).ok_json()
}

/// A command that must be refused with `code`, one message on stderr and nothing on stdout.
fn refused(args: &[&str], code: i32) -> String {
    let run = rxnet(args);
    assert_eq!(
        run.code, code,
        "{args:?}: expected exit {code}\nstdout:\n{}\nstderr:\n{}",
        run.stdout, run.stderr
    );
    assert!(
        run.stderr.starts_with("error:"),
        "{args:?}: no clear message:\n{}",
        run.stderr
    );
    assert!(
        !run.stderr.contains("panicked"),
        "{args:?}: panic:\n{}",
        run.stderr
    );
    assert!(run.stdout.is_empty(), "{args:?}: stdout:\n{}", run.stdout);
    run.stderr
}

// ---------------------------------------------------------------------------------------
// Series reactions A -> B -> C, first order, liquid: the best size
// ---------------------------------------------------------------------------------------

fn series(k1: f64, k2: f64, feed: &str, reactor: &str) -> String {
    format!(
        "name: series optimum test (test values)
phase: liquid
species: {{A: null, B: null, C: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {k1} 1/s}}}}
  - {{id: r2, stoich: B -> C, rate: {{k: {k2} 1/s}}}}
feed: {feed}
reactor: {reactor}
key: A
desired: B
"
    )
}

const FLOW_FEED: &str = "{T: 300 K, volumetric: 1 L/s, flows: {A: 1 mol/s}}";
const PFR_100L: &str = "{type: pfr, volume: 100 L}";

/// Levenspiel ch. 8 (from memory), first-order series reactions in plug flow or batch:
/// C_B/C_A0 = k1/(k2−k1) (e^(−k1τ) − e^(−k2τ)).
fn bateman_b(k1: f64, k2: f64, tau: f64) -> f64 {
    k1 / (k2 - k1) * ((-k1 * tau).exp() - (-k2 * tau).exp())
}

/// Levenspiel ch. 8 (from memory), first-order series reactions in a CSTR:
/// C_B/C_A0 = k1τ / ((1 + k1τ)(1 + k2τ)).
fn cstr_b(k1: f64, k2: f64, tau: f64) -> f64 {
    k1 * tau / ((1.0 + k1 * tau) * (1.0 + k2 * tau))
}

/// (k1, k2) pairs, 1/s (test values): one with k1 > k2, one with k1 < k2.
const PAIRS: [(f64, f64); 2] = [(0.25, 0.1), (0.05, 0.2)];

#[test]
fn series_optimum_size_matches_closed_forms() {
    let mut tau_ag = Agreement::new("series A->B->C optimum τ or t (Levenspiel ch. 8)");
    let mut val_ag = Agreement::new("series A->B->C C_B,max/C_A0 (Levenspiel ch. 8)");
    for (k1, k2) in PAIRS {
        let ctx = format!("k1 = {k1}, k2 = {k2}");
        // Plug flow, Levenspiel ch. 8 (from memory): τ_opt = ln(k2/k1)/(k2 − k1),
        // C_B,max/C_A0 = (k1/k2)^(k2/(k2−k1)).
        let pfr = temp_study("series-pfr", &series(k1, k2, FLOW_FEED, PFR_100L));
        let j = optimize(&pfr, &["--maximize", "B", "--rtol", "1e-11"]);
        let tau_pfr = (k2 / k1).ln() / (k2 - k1);
        let b_pfr = (k1 / k2).powf(k2 / (k2 - k1));
        assert_eq!(j["target"], "B");
        let size = num(&j["best"]["size"], "best.size");
        tau_ag.check(size / V0, tau_pfr, 1e-6, &format!("PFR τ_opt, {ctx}"));
        // F_A0 = 1 mol/s, so F_B/F_A0 = the outlet flow of B in mol/s.
        let value = num(&j["best"]["value"], "best.value");
        val_ag.check(value, b_pfr, 1e-6, &format!("PFR F_B,max/F_A0, {ctx}"));
        val_ag.check(
            num(&j["run"]["outlet"]["B"], "run.outlet.B"),
            b_pfr,
            1e-6,
            &format!("PFR run at the optimum, {ctx}"),
        );
        assert_eq!(j["best"]["point"]["reactor.volume"], j["best"]["size"]);
        assert!(j["best"]["on_bound"]["reactor.volume"].is_null(), "{j}");

        // Mixed flow, Levenspiel ch. 8 (from memory): τ_opt = 1/√(k1 k2),
        // C_B,max/C_A0 = 1/(√(k2/k1) + 1)².
        let j = optimize(
            &pfr,
            &[
                "--maximize",
                "B",
                "--rtol",
                "1e-11",
                "--set",
                "reactor.type=cstr",
            ],
        );
        assert_eq!(j["run"]["reactor"], "cstr", "{j}");
        let tau_cstr = 1.0 / (k1 * k2).sqrt();
        let b_cstr = 1.0 / ((k2 / k1).sqrt() + 1.0).powi(2);
        tau_ag.check(
            num(&j["best"]["size"], "best.size") / V0,
            tau_cstr,
            1e-6,
            &format!("CSTR τ_opt, {ctx}"),
        );
        val_ag.check(
            num(&j["best"]["value"], "best.value"),
            b_cstr,
            1e-6,
            &format!("CSTR F_B,max/F_A0, {ctx}"),
        );

        // Batch: the same functions of time t as the PFR of τ (Levenspiel ch. 8, from memory).
        let batch = temp_study(
            "series-batch",
            &series(
                k1,
                k2,
                "{T: 300 K, amounts: {A: 2 mol}}",
                "{type: batch, time: 100 s, volume: 1 L}",
            ),
        );
        let j = optimize(&batch, &["--maximize", "B", "--rtol", "1e-11"]);
        tau_ag.check(
            num(&j["best"]["size"], "best.size"),
            tau_pfr,
            1e-6,
            &format!("batch t_opt, {ctx}"),
        );
        assert!(j["best"]["point"]["reactor.time"].is_number(), "{j}");
        val_ag.check(
            num(&j["best"]["value"], "best.value") / 2.0,
            b_pfr,
            1e-6,
            &format!("batch N_B,max/N_A0, {ctx}"),
        );
    }
    tau_ag.report();
    val_ag.report();
}

#[test]
fn yield_optimum_sits_on_the_conversion_constraint() {
    let (k1, k2) = PAIRS[0];
    let study = temp_study("series-minconv", &series(k1, k2, FLOW_FEED, PFR_100L));
    let mut ag = Agreement::new("yield:B at X >= 0.9 (Levenspiel ch. 8)");
    // The yield F_B/(F_A0 − F_A) falls monotonically along a PFR or with a CSTR's size, so the
    // best size is the smallest that reaches X = 0.9.
    for (reactor, extra) in [("pfr", None), ("cstr", Some("reactor.type=cstr"))] {
        let mut args = vec![
            "--maximize",
            "yield:B",
            "--min-conversion",
            "0.9",
            "--rtol",
            "1e-11",
        ];
        if let Some(s) = extra {
            args.extend_from_slice(&["--set", s]);
        }
        let j = optimize(&study, &args);
        assert_eq!(
            j["best"]["on_bound"]["reactor.volume"], "min-conversion",
            "{reactor}: {j}"
        );
        assert_eq!(j["target"], "yield:B");
        let x = num(&j["run"]["conversion"], "run.conversion");
        // Constraint X = 0.9 active (the definition of the constraint).
        ag.check(
            x,
            0.9,
            1e-6,
            &format!("{reactor} conversion at the optimum"),
        );
        let tau = num(&j["best"]["size"], "best.size") / V0;
        let (tau_want, b) = if reactor == "pfr" {
            // Levenspiel ch. 8 (from memory): X = 1 − e^(−k1τ) in plug flow.
            let t = -(0.1f64).ln() / k1;
            (t, bateman_b(k1, k2, t))
        } else {
            // Levenspiel ch. 8 (from memory): X = k1τ/(1 + k1τ) in mixed flow.
            let t = 0.9 / (k1 * 0.1);
            (t, cstr_b(k1, k2, t))
        };
        ag.check(tau, tau_want, 1e-6, &format!("{reactor} τ at X = 0.9"));
        ag.check(
            num(&j["best"]["value"], "best.value"),
            b / 0.9,
            1e-6,
            &format!("{reactor} yield of B at X = 0.9"),
        );
    }
    ag.report();

    // Infeasible: a 1 L reactor (τ = 1 s) cannot reach X = 0.9999.
    for extra in [None, Some("reactor.type=cstr")] {
        let mut args = vec![
            "optimize",
            study.p(),
            "--maximize",
            "yield:B",
            "--min-conversion",
            "0.9999",
            "--bounds",
            "0",
            "1 L",
        ];
        if let Some(s) = extra {
            args.extend_from_slice(&["--set", s]);
        }
        let msg = refused(&args, 1);
        assert!(
            msg.contains("conversion reaches only") && msg.contains("0.9999"),
            "{extra:?}: unclear message: {msg}"
        );
    }
    // A constraint outside [0, 1) is a wrong command line.
    refused(
        &[
            "optimize",
            study.p(),
            "--maximize",
            "yield:B",
            "--min-conversion",
            "1.5",
        ],
        2,
    );
}

#[test]
fn size_bounds_with_units_and_the_size_path() {
    let (k1, k2) = PAIRS[0];
    let study = temp_study("series-bounds", &series(k1, k2, FLOW_FEED, PFR_100L));
    let mut ag = Agreement::new("size bounds with units (Levenspiel ch. 8)");
    // τ_opt = ln(0.4)/(−0.15) ≈ 6.1 s lies above 5 L / (1 L/s): the upper bound wins, whether
    // the size is named `size` or by its path, and its value is Bateman's at τ = 5 s.
    for over in ["size", "reactor.volume"] {
        let j = optimize(
            &study,
            &[
                "--maximize",
                "B",
                "--over",
                over,
                "--bounds",
                "1 L",
                "5 L",
                "--rtol",
                "1e-11",
            ],
        );
        assert_eq!(j["best"]["on_bound"]["reactor.volume"], "upper", "{j}");
        ag.check(
            num(&j["best"]["size"], "size"),
            5e-3,
            1e-9,
            "V on the bound",
        );
        ag.check(
            num(&j["best"]["value"], "value"),
            bateman_b(k1, k2, 5.0),
            1e-6,
            "F_B at τ = 5 s",
        );
    }
    // Bounds 8..100 L: the lower bound wins (F_B falls after τ_opt ≈ 6.1 s).
    let j = optimize(
        &study,
        &[
            "--maximize",
            "B",
            "--bounds",
            "8 L",
            "0.1 m3",
            "--rtol",
            "1e-11",
        ],
    );
    assert_eq!(j["best"]["on_bound"]["reactor.volume"], "lower", "{j}");
    ag.check(
        num(&j["best"]["value"], "value"),
        bateman_b(k1, k2, 8.0),
        1e-6,
        "F_B at τ = 8 s",
    );
    ag.report();
    // A bound of the wrong dimension, or a reversed pair, is a wrong command line.
    refused(
        &[
            "optimize",
            study.p(),
            "--maximize",
            "B",
            "--bounds",
            "1 K",
            "5 K",
        ],
        2,
    );
}

/// Reversed or negative size bounds are a wrong command line: exit 2 (docs/network-format.md,
/// "Errors and exit codes"), as reversed bounds of any other `--over` input already are.
#[test]
fn reversed_size_bounds_are_a_command_line_error() {
    let study = temp_study("series-rev", &series(0.25, 0.1, FLOW_FEED, PFR_100L));
    let msg = refused(
        &[
            "optimize",
            study.p(),
            "--maximize",
            "B",
            "--over",
            "feed.T",
            "--bounds",
            "400 K",
            "300 K",
        ],
        2,
    );
    assert!(msg.contains("LO < HI"), "{msg}");
    for (lo, hi) in [("5 L", "1 L"), ("-1 L", "5 L")] {
        let msg = refused(
            &["optimize", study.p(), "--maximize", "B", "--bounds", lo, hi],
            2,
        );
        assert!(msg.contains("LO < HI"), "{msg}");
    }
}

#[test]
fn compare_recasts_reactor_types_at_equal_space_time() {
    // τ = 10 L / (1 L/s) = 10 s; a liquid batch run for t = τ behaves as the PFR
    // (Levenspiel ch. 8, from memory): Bateman for both, the CSTR formula for the tank.
    let (k1, k2) = PAIRS[0];
    let study = temp_study(
        "compare-types",
        &series(k1, k2, FLOW_FEED, "{type: pfr, volume: 10 L}"),
    );
    let j = (rxnet(&[
        "compare",
        study.p(),
        "--reactors",
        "pfr,cstr,batch",
        "--rank-by",
        "B",
        "--rtol",
        "1e-10",
        "--format",
        "json",
    ]))
    .ok_json();
    let rows = j.as_array().expect("a JSON list");
    assert_eq!(rows.len(), 3, "{j}");
    let mut ag = Agreement::new("compare pfr/cstr/batch at τ = 10 s (Levenspiel ch. 8)");
    let tau = 10.0;
    for r in rows {
        let kind = r["reactor"].as_str().unwrap();
        let (x, b) = match kind {
            "cstr" => (k1 * tau / (1.0 + k1 * tau), cstr_b(k1, k2, tau)),
            _ => (1.0 - (-k1 * tau).exp(), bateman_b(k1, k2, tau)),
        };
        ag.check(num(&r["conversion"], "conversion"), x, 1e-7, kind);
        ag.check(
            num(&r["yield_desired"], "yield_desired"),
            b / x,
            1e-7,
            &format!("{kind} yield of B"),
        );
        // An amount ranks per amount of key fed: F_B/F_A0 for the flows, N_B/N_A0 for the
        // batch (charged N_j0 = F_j0 τ), the same number for all three.
        ag.check(
            num(&r["rank_value"], "rank_value"),
            b,
            1e-7,
            &format!("{kind} amount of B per A fed"),
        );
        // τ = V/v0 for the flows, t for the batch (its size), s.
        let size = num(&r["size"], "size");
        let want_t = if kind == "batch" { size } else { size / V0 };
        ag.check(
            num(&r["space_time_s"], "space_time_s"),
            want_t,
            1e-12,
            &format!("{kind} τ or t"),
        );
    }
    ag.report();
}

// ---------------------------------------------------------------------------------------
// Optimisation over inputs other than the size
// ---------------------------------------------------------------------------------------

/// Series A -> B -> C with Arrhenius constants (test values): k_ref at T_ref = 350 K.
const KT: [(f64, f64); 2] = [(0.1, 50e3), (0.05, 90e3)];

fn series_t(volume_l: f64) -> String {
    format!(
        "name: series in temperature (test values)
phase: liquid
species: {{A: null, B: null, C: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {} 1/s, Ea: {} J/mol, T_ref: 350 K}}}}
  - {{id: r2, stoich: B -> C, rate: {{k: {} 1/s, Ea: {} J/mol, T_ref: 350 K}}}}
feed: {{T: 350 K, volumetric: 1 L/s, flows: {{A: 1 mol/s}}}}
reactor: {{type: pfr, volume: {volume_l} L}}
key: A
desired: B
",
        KT[0].0, KT[0].1, KT[1].0, KT[1].1
    )
}

/// Arrhenius, k(T) = k_ref exp(−Ea/R (1/T − 1/T_ref)) (common practice).
fn k_at(i: usize, t: f64) -> f64 {
    KT[i].0 * (-KT[i].1 / R * (1.0 / t - 1.0 / 350.0)).exp()
}

/// F_B/F_A0 at T and τ, Levenspiel ch. 8 (from memory), with Arrhenius constants.
fn b_at(t: f64, tau: f64) -> f64 {
    bateman_b(k_at(0, t), k_at(1, t), tau)
}

/// F_B through the library at these overrides, tight tolerance.
fn library_b(yaml: &str, sets: &[(&str, String)]) -> f64 {
    let ov: Vec<Override> = sets
        .iter()
        .map(|(p, v)| Override {
            path: p.to_string(),
            value: v.clone(),
        })
        .collect();
    let net = load_str(yaml, "scan", &ov).unwrap_or_else(|e| panic!("scan study: {e}"));
    let sim = simulate(
        &net,
        &SolveOptions {
            rtol: Some(1e-11),
            ..Default::default()
        },
    )
    .unwrap_or_else(|e| panic!("scan solve: {e}"));
    sim.outlet()[net.species_index("B").expect("B")]
}

#[test]
fn temperature_optimum_beats_dense_scans() {
    let yaml = series_t(10.0);
    let study = temp_study("series-T", &yaml);
    let tau = 10.0; // V/v0 = 10 L / (1 L/s)
    let mut ag = Agreement::new("F_B in feed.T vs closed form (Levenspiel ch. 8)");

    // Interior optimum within 300..400 K.
    let j = optimize(
        &study,
        &[
            "--maximize",
            "B",
            "--over",
            "feed.T",
            "--bounds",
            "300 K",
            "400 K",
            "--rtol",
            "1e-11",
        ],
    );
    let t_best = num(&j["best"]["point"]["feed.T"], "best.point.feed.T");
    let value = num(&j["best"]["value"], "best.value");
    assert!(j["best"]["on_bound"]["feed.T"].is_null(), "{j}");
    assert!(j["best"].get("size").is_none(), "{j}");
    // The optimiser's value is the closed form at its own point (Levenspiel ch. 8).
    ag.check(value, b_at(t_best, tau), 1e-6, "F_B at the reported T");
    // Dense closed-form scan, 0.001 K apart (Levenspiel ch. 8, from memory).
    let (scan_max, scan_t) = (0..=100_000)
        .map(|i| {
            let t = 300.0 + 1e-3 * i as f64;
            (b_at(t, tau), t)
        })
        .fold(
            (f64::NEG_INFINITY, 0.0),
            |a, b| if b.0 > a.0 { b } else { a },
        );
    assert!(
        scan_max <= value * (1.0 + 1e-6),
        "closed-form scan {scan_max} at {scan_t} K beats the optimiser's {value} at {t_best} K"
    );
    ag.check(
        value,
        scan_max,
        1e-6,
        "F_B,max against the closed-form scan",
    );
    assert!(
        (t_best - scan_t).abs() < 0.5,
        "optimum T {t_best} K, scan {scan_t} K"
    );
    // Independent scan through the library, 0.5 K apart.
    let lib_max = (0..=200)
        .map(|i| {
            library_b(
                &yaml,
                &[("feed.T", format!("{} K", 300.0 + 0.5 * i as f64))],
            )
        })
        .fold(f64::NEG_INFINITY, f64::max);
    assert!(
        lib_max <= value * (1.0 + 1e-6),
        "library scan {lib_max} beats the optimiser's {value}"
    );
    println!("feed.T optimum {t_best} K (closed-form scan {scan_t} K), F_B = {value}");

    // Bounds below the optimum: the best T is the upper bound.
    let j = optimize(
        &study,
        &[
            "--maximize",
            "B",
            "--over",
            "feed.T",
            "--bounds",
            "300 K",
            "330 K",
            "--rtol",
            "1e-11",
        ],
    );
    assert_eq!(j["best"]["on_bound"]["feed.T"], "upper", "{j}");
    let t = num(&j["best"]["point"]["feed.T"], "best.point.feed.T");
    ag.check(t, 330.0, 1e-6, "T on the upper bound");
    ag.check(
        num(&j["best"]["value"], "best.value"),
        b_at(330.0, tau),
        1e-6,
        "F_B at 330 K",
    );
    ag.report();
}

#[test]
fn two_input_optimum_beats_dense_scans() {
    let yaml = series_t(10.0);
    let study = temp_study("series-TV", &yaml);
    let j = optimize(
        &study,
        &[
            "--maximize",
            "B",
            "--over",
            "feed.T",
            "--bounds",
            "330 K",
            "380 K",
            "--over",
            "reactor.volume",
            "--bounds",
            "1 L",
            "100 L",
            "--rtol",
            "1e-11",
        ],
    );
    let t = num(&j["best"]["point"]["feed.T"], "feed.T");
    // The point is in SI, its unit beside it.
    assert_eq!(j["best"]["units"]["reactor.volume"], "m3", "{j}");
    assert_eq!(j["best"]["units"]["feed.T"], "K", "{j}");
    let v_l = 1e3 * num(&j["best"]["point"]["reactor.volume"], "reactor.volume");
    let value = num(&j["best"]["value"], "best.value");
    let mut ag = Agreement::new("F_B over (feed.T, V) (Levenspiel ch. 8)");
    ag.check(value, b_at(t, v_l), 1e-6, "F_B at the reported point");
    // At each T the best τ gives (k1/k2)^(k2/(k2−k1)) (Levenspiel ch. 8, from memory), which
    // falls as k2/k1 rises; Ea2 > Ea1, so the best T is the lower bound, 330 K.
    let (k1, k2) = (k_at(0, 330.0), k_at(1, 330.0));
    let tau_opt = (k2 / k1).ln() / (k2 - k1);
    let b_max = (k1 / k2).powf(k2 / (k2 - k1));
    assert_eq!(j["best"]["on_bound"]["feed.T"], "lower", "{j}");
    assert!(j["best"]["on_bound"]["reactor.volume"].is_null(), "{j}");
    ag.check(value, b_max, 1e-6, "F_B,max at 330 K");
    ag.check(t, 330.0, 1e-6, "T on the lower bound");
    ag.check(v_l, tau_opt, 1e-6, "V_opt [L] = τ_opt × 1 L/s");
    // Dense closed-form scan, 401 × 401.
    let mut scan_max = f64::NEG_INFINITY;
    for i in 0..=400 {
        for k in 0..=400 {
            let (tt, vv) = (
                330.0 + 50.0 * i as f64 / 400.0,
                1.0 + 99.0 * k as f64 / 400.0,
            );
            scan_max = scan_max.max(b_at(tt, vv));
        }
    }
    assert!(
        scan_max <= value * (1.0 + 1e-6),
        "closed-form scan {scan_max} beats the optimiser's {value}"
    );
    // Library scan, 21 × 21.
    let mut lib_max = f64::NEG_INFINITY;
    for i in 0..=20 {
        for k in 0..=20 {
            let b = library_b(
                &yaml,
                &[
                    ("feed.T", format!("{} K", 330.0 + 2.5 * i as f64)),
                    ("reactor.volume", format!("{} L", 1.0 + 4.95 * k as f64)),
                ],
            );
            lib_max = lib_max.max(b);
        }
    }
    assert!(
        lib_max <= value * (1.0 + 1e-6),
        "library scan {lib_max} beats the optimiser's {value}"
    );
    println!("2-D optimum T = {t} K, V = {v_l} L (τ_opt {tau_opt} s), F_B = {value}");
    ag.report();
}

// ---------------------------------------------------------------------------------------
// Sweeps
// ---------------------------------------------------------------------------------------

/// Split CSV text into records of fields (RFC 4180 quoting: "" inside a quoted field).
fn parse_csv(text: &str) -> Vec<Vec<String>> {
    let mut rows = Vec::new();
    let mut row = Vec::new();
    let mut field = String::new();
    let mut quoted = false;
    let mut chars = text.chars().peekable();
    while let Some(c) = chars.next() {
        if quoted {
            match c {
                '"' if chars.peek() == Some(&'"') => {
                    field.push('"');
                    chars.next();
                }
                '"' => quoted = false,
                _ => field.push(c),
            }
        } else {
            match c {
                '"' => quoted = true,
                ',' => row.push(std::mem::take(&mut field)),
                '\n' => {
                    row.push(std::mem::take(&mut field));
                    rows.push(std::mem::take(&mut row));
                }
                '\r' => {}
                _ => field.push(c),
            }
        }
    }
    if !field.is_empty() || !row.is_empty() {
        row.push(field);
        rows.push(row);
    }
    rows
}

/// A sweep's CSV as a header and the rows as maps column → text (comment lines, such as the
/// count of failed points, skipped).
fn sweep_table(text: &str) -> (Vec<String>, Vec<BTreeMap<String, String>>) {
    let body: String = text
        .lines()
        .filter(|l| !l.starts_with('#'))
        .map(|l| format!("{l}\n"))
        .collect();
    let mut recs = parse_csv(&body);
    assert!(!recs.is_empty(), "empty sweep output");
    let header = recs.remove(0);
    let rows = recs
        .into_iter()
        .map(|r| {
            assert_eq!(r.len(), header.len(), "ragged CSV row {r:?}");
            header.iter().cloned().zip(r).collect()
        })
        .collect();
    (header, rows)
}

fn sweep(file: &TempFile, extra: &[&str]) -> Run {
    let mut all = vec!["sweep", file.p()];
    all.extend_from_slice(extra);
    rxnet(&all)
}

const GRID: [&str; 4] = [
    "--vary",
    "feed.T=330 K:370 K:3",
    "--vary",
    "reactor.volume=2 L:20 L:4",
];

#[test]
fn sweep_rows_equal_single_runs() {
    let study = temp_study("sweep-grid", &series_t(10.0));
    let run = sweep(&study, &GRID);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let (header, rows) = sweep_table(&run.stdout);
    assert_eq!(header[0], "point");
    assert_eq!(header[1], "feed.T [K]");
    assert_eq!(header[2], "reactor.volume [L]");
    assert_eq!(header[3], "status");
    assert_eq!(header.last().map(String::as_str), Some("error"));
    for col in [
        "conversion",
        "yield:B",
        "yield:C",
        "selectivity:B/C",
        "A [mol/s]",
    ] {
        assert!(
            header.iter().any(|h| h == col),
            "no column {col}: {header:?}"
        );
    }
    assert_eq!(rows.len(), 12);
    let mut ag = Agreement::new("sweep CSV vs single `rxnet run` (same code path)");
    for (p, r) in rows.iter().enumerate() {
        assert_eq!(r["point"], p.to_string());
        assert_eq!(r["status"], "ok", "{r:?}");
        assert!(r["error"].is_empty());
        // Last --vary changes fastest (row-major order).
        let t = 330.0 + 20.0 * (p / 4) as f64;
        let v = 2.0 + 6.0 * (p % 4) as f64;
        assert_eq!(r["feed.T [K]"].parse::<f64>().unwrap(), t);
        assert_eq!(r["reactor.volume [L]"].parse::<f64>().unwrap(), v);
        let single = (rxnet(&[
            "run",
            study.p(),
            "--set",
            &format!("feed.T={} K", r["feed.T [K]"]),
            "--set",
            &format!("reactor.volume={} L", r["reactor.volume [L]"]),
            "--format",
            "json",
        ]))
        .ok_json();
        for h in &header[4..header.len() - 1] {
            let want = if h == "conversion" {
                &single["conversion"]
            } else if let Some(s) = h.strip_prefix("yield:") {
                &single["yield"][s]
            } else if let Some(s) = h.strip_prefix("selectivity:B/") {
                &single["selectivity"][s]
            } else {
                let name = h.strip_suffix(" [mol/s]").expect("species column");
                &single["outlet"][name]
            };
            let cell = &r[h];
            if want.is_null() {
                assert!(cell.is_empty(), "point {p} {h}: {cell} vs null");
                continue;
            }
            let got: f64 = cell
                .parse()
                .unwrap_or_else(|_| panic!("point {p} {h}: `{cell}`"));
            // The same load → solve → metrics path: equal to 1e-12 (common practice for
            // round-tripped f64 text).
            ag.check(got, num(want, h), 1e-12, &format!("point {p} {h}"));
        }
    }
    ag.report();

    // JSON format: the same points and numbers.
    let js = sweep(
        &study,
        &[GRID[0], GRID[1], GRID[2], GRID[3], "--format", "json"],
    );
    let items = js.ok_json();
    let items = items.as_array().expect("a JSON list");
    assert_eq!(items.len(), 12);
    // serde_json's default float parser (no `float_roundtrip` feature) may land one ulp off
    // the correctly rounded value that `str::parse` gives, so the text is compared to 1e-15.
    let mut jag = Agreement::new("sweep JSON vs sweep CSV (same points)");
    for (it, r) in items.iter().zip(&rows) {
        assert_eq!(it["status"], "ok");
        assert_eq!(it["point"].as_u64(), r["point"].parse::<u64>().ok());
        jag.check(
            num(&it["conversion"], "conversion"),
            r["conversion"].parse::<f64>().unwrap(),
            1e-15,
            "conversion",
        );
        jag.check(
            num(&it["outlet"]["B"], "outlet.B"),
            r["B [mol/s]"].parse::<f64>().unwrap(),
            1e-15,
            "outlet B",
        );
    }
    jag.report();

    // --out writes the same CSV to a file.
    let out = temp_out("sweep", "csv");
    let run2 = sweep(
        &study,
        &[GRID[0], GRID[1], GRID[2], GRID[3], "--out", out.p()],
    );
    assert_eq!(run2.code, 0, "{}", run2.stderr);
    assert_eq!(std::fs::read_to_string(&out.path).unwrap(), run.stdout);
}

#[test]
fn shards_together_equal_the_whole_sweep() {
    let study = temp_study("sweep-shard", &series_t(10.0));
    let whole = sweep(&study, &GRID);
    assert_eq!(whole.code, 0, "{}", whole.stderr);
    let mut header = None;
    let mut lines: Vec<String> = Vec::new();
    let mut counts = Vec::new();
    for k in 1..=3 {
        let s = format!("{k}/3");
        let part = sweep(&study, &[GRID[0], GRID[1], GRID[2], GRID[3], "--shard", &s]);
        assert_eq!(part.code, 0, "shard {s}: {}", part.stderr);
        // A shard begins with its provenance, four `#` lines (tests/merge.rs checks them).
        assert!(
            part.stdout.starts_with(&format!("# rxnet_shard: {k}/3\n")),
            "shard {s}: {}",
            part.stdout
        );
        let mut it = part.stdout.lines().skip(4);
        if k == 1 {
            header = it.next().map(str::to_string);
        } else {
            assert!(
                !part.stdout.contains("\npoint"),
                "shard {s} repeats the header"
            );
        }
        let mine: Vec<String> = it.map(str::to_string).collect();
        // Shard k keeps the points p with p mod 3 = k − 1.
        for l in &mine {
            let p: usize = l.split(',').next().unwrap().parse().unwrap();
            assert_eq!(p % 3, k - 1, "shard {s} has point {p}");
        }
        counts.push(mine.len());
        lines.extend(mine);
    }
    assert_eq!(counts, vec![4, 4, 4]);
    let point = |l: &String| l.split(',').next().unwrap().parse::<usize>().unwrap();
    lines.sort_by_key(point);
    let mut joined = header.expect("shard 1 writes the header");
    joined.push('\n');
    for l in &lines {
        joined.push_str(l);
        joined.push('\n');
    }
    assert_eq!(
        joined, whole.stdout,
        "shards, sorted, differ from the whole sweep"
    );

    // Shard syntax errors are a wrong command line.
    for bad in ["0/3", "4/3", "1/0", "a/3", "13"] {
        refused(&["sweep", study.p(), GRID[0], GRID[1], "--shard", bad], 2);
    }
}

#[test]
fn failing_points_become_rows_not_crashes() {
    // Each axis alone stays within the 1 % ideal-gas fit of the charge to the vessel (so the
    // corners load), but (T high, P low) and (T low, P high) miss it by about 1.5 %.
    let study = temp_study("sweep-fail", &gas_batch());
    let run = sweep(
        &study,
        &[
            "--vary",
            "feed.T=397 K:403 K:3",
            "--vary",
            "feed.P=0.9925 bar:1.0075 bar:3",
        ],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(!run.stderr.contains("panicked"), "{}", run.stderr);
    assert!(
        run.stderr.contains("2 of 9 points failed"),
        "no note: {}",
        run.stderr
    );
    assert!(
        run.stdout.ends_with("# failed: 2 of 9 points\n"),
        "no count in the CSV: {}",
        run.stdout
    );
    let (_, rows) = sweep_table(&run.stdout);
    assert_eq!(rows.len(), 9);
    for r in &rows {
        let p: usize = r["point"].parse().unwrap();
        if p == 2 || p == 6 {
            assert_eq!(r["status"], "failed", "point {p}: {r:?}");
            assert!(
                r["error"].contains("does not fit the vessel"),
                "point {p}: {}",
                r["error"]
            );
            assert!(r["conversion"].is_empty() && r["B [mol]"].is_empty());
        } else {
            assert_eq!(r["status"], "ok", "point {p}: {r:?}");
            assert!(r["error"].is_empty());
            // First order at constant volume, X = 1 − e^(−kt) (Levenspiel ch. 3, from memory).
            let x: f64 = r["conversion"].parse().unwrap();
            assert!(
                rel_err(x, 1.0 - (-0.6f64).exp()) < 1e-6,
                "point {p}: X = {x}"
            );
        }
    }

    // A point whose solve fails (one step allowed) is a failed row too; the others run.
    let run = sweep(&study, &["--vary", "solver.max_steps=1:2001:3"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let (_, rows) = sweep_table(&run.stdout);
    assert_eq!(rows.len(), 3);
    assert_eq!(rows[0]["status"], "failed", "{:?}", rows[0]);
    assert!(!rows[0]["error"].is_empty());
    assert_eq!(rows[1]["status"], "ok", "{:?}", rows[1]);
    assert_eq!(rows[2]["status"], "ok", "{:?}", rows[2]);

    // The JSON form carries the same failures.
    let js = (sweep(
        &study,
        &[
            "--vary",
            "feed.T=397 K:403 K:3",
            "--vary",
            "feed.P=0.9925 bar:1.0075 bar:3",
            "--format",
            "json",
        ],
    ))
    .ok_json();
    let failed: Vec<u64> = js
        .as_array()
        .unwrap()
        .iter()
        .filter(|i| i["status"] == "failed")
        .map(|i| {
            assert!(i["error"].is_string());
            i["point"].as_u64().unwrap()
        })
        .collect();
    assert_eq!(failed, vec![2, 6]);

    // A negative k at a corner of the grid is refused before any work.
    let msg = refused(
        &[
            "sweep",
            study.p(),
            "--vary",
            "reactions.r1.rate.k=-0.1 1/s:0.1 1/s:3",
        ],
        2,
    );
    assert!(msg.contains("reactions.r1.rate.k"), "{msg}");
}

#[test]
fn oversized_and_malformed_sweeps_are_refused() {
    let study = temp_study("sweep-bad", &series_t(10.0));
    let f = study.p();
    // 1000³ = 1e9 points.
    let msg = refused(
        &[
            "sweep",
            f,
            "--vary",
            "feed.T=300 K:400 K:1000",
            "--vary",
            "reactor.volume=1 L:10 L:1000",
            "--vary",
            "feed.volumetric=1 L/s:2 L/s:1000",
        ],
        2,
    );
    assert!(msg.contains("points"), "{msg}");
    refused(&["sweep", f, "--vary", "feed.T=300 K:400 K:1000000000"], 2);
    for bad in [
        "feed.T",
        "feed.T=300 K:400 K",
        "feed.T=300 K:400 K:x",
        "feed.T=300 K:400 K:0",
        "feed.T=300 K:400 K:-3",
        "feed.T=400 K:300 K:3",
        "feed.T=300 K:400 degC:3",
        "feed.T=300 K:400 K:3:lin",
        "feed.T=300 K:400 K:3:log:extra",
        "feed.T=abc:400 K:3",
        "reactor.volume=0 L:10 L:3:log",
        "feed.nothing=1:2:3",
    ] {
        let msg = refused(&["sweep", f, "--vary", bad], 2);
        assert!(msg.len() > 10, "`{bad}`: {msg}");
    }
    // A plot of three inputs, or of a shard, is refused.
    let svg = temp_out("bad", "svg");
    refused(
        &[
            "sweep",
            f,
            "--vary",
            "feed.T=330 K:340 K:2",
            "--vary",
            "reactor.volume=1 L:2 L:2",
            "--vary",
            "feed.volumetric=1 L/s:2 L/s:2",
            "--plot",
            svg.p(),
        ],
        2,
    );
    refused(
        &[
            "sweep",
            f,
            "--vary",
            "feed.T=330 K:340 K:2",
            "--shard",
            "1/2",
            "--plot",
            svg.p(),
        ],
        2,
    );
    assert!(!svg.path.exists());
}

// ---------------------------------------------------------------------------------------
// Compare: parallel reactions of different order
// ---------------------------------------------------------------------------------------

/// k of the first-order step, 1/s, and of the second-order step, m3/(mol s) (test values);
/// C_A0 = 1 mol/L = 1000 mol/m3.
const K_FIRST: f64 = 0.01;
const K_SECOND: f64 = 1e-5;
const CA0: f64 = 1000.0;

fn parallel(first: &str, second: &str) -> String {
    format!(
        "name: parallel {first} first order, {second} second order (test values)
phase: liquid
species: {{A: null, R: null, S: null}}
reactions:
  - {{id: p1, stoich: A -> {first}, rate: {{k: {K_FIRST} 1/s}}}}
  - {{id: p2, stoich: 2 A -> {second}, rate: {{k: {K_SECOND} m3/(mol*s)}}}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1 mol/L}}}}
reactor: {{type: pfr, volume: 100 L}}
key: A
desired: R
"
    )
}

/// Amounts per volume made of the first-order product P1 (rate k1 C_A) and the second-order
/// product P2 (rate k2 C_A², 2 A consumed) when C_A falls from C_A0 to c, and τ.
/// Plug flow (Levenspiel ch. 7, from memory, integrating dC_P1/dC_A = −k1/(k1 + 2k2 C_A)):
/// C_P1 = k1/(2k2) ln((k1 + 2k2 C_A0)/(k1 + 2k2 c)), τ = (1/k1) ln[(C_A0/c)(k1 + 2k2 c)/(k1 + 2k2 C_A0)].
/// Mixed flow (Levenspiel ch. 7, from memory): C_P1 = k1 c τ, C_P2 = k2 c² τ,
/// τ = (C_A0 − c)/(k1 c + 2k2 c²).
fn parallel_closed(pfr: bool, c: f64) -> (f64, f64, f64) {
    let (k1, k2) = (K_FIRST, K_SECOND);
    if pfr {
        let p1 = k1 / (2.0 * k2) * ((k1 + 2.0 * k2 * CA0) / (k1 + 2.0 * k2 * c)).ln();
        let p2 = (CA0 - c - p1) / 2.0;
        let tau = ((CA0 / c) * (k1 + 2.0 * k2 * c) / (k1 + 2.0 * k2 * CA0)).ln() / k1;
        (p1, p2, tau)
    } else {
        let tau = (CA0 - c) / (k1 * c + 2.0 * k2 * c * c);
        (k1 * c * tau, k2 * c * c * tau, tau)
    }
}

#[test]
fn compare_ranks_reactor_types_by_order_of_the_wanted_step() {
    let mut ag = Agreement::new("compare at X = 0.9, parallel orders (Levenspiel ch. 7)");
    // Wanted step first order (R from A -> R): low C_A favours it, so the CSTR wins; wanted
    // step second order (R from 2 A -> R): high C_A favours it, so the PFR wins
    // (Levenspiel ch. 7, from memory).
    for (first, second, winner) in [("R", "S", "cstr"), ("S", "R", "pfr")] {
        let study = temp_study("compare-par", &parallel(first, second));
        let j = (rxnet(&[
            "compare",
            study.p(),
            "--reactors",
            "pfr,cstr",
            "--rank-by",
            "selectivity:R/S",
            "--at-conversion",
            "0.9",
            "--rtol",
            "1e-10",
            "--format",
            "json",
        ]))
        .ok_json();
        let rows = j.as_array().expect("a JSON list");
        assert_eq!(rows.len(), 2, "{j}");
        assert_eq!(
            rows[0]["reactor"], winner,
            "wanted product from {first}: {j}"
        );
        let c = CA0 * 0.1;
        for r in rows {
            let kind = r["reactor"].as_str().unwrap();
            assert!(r["error"].is_null(), "{r}");
            ag.check(
                num(&r["conversion"], "conversion"),
                0.9,
                1e-6,
                &format!("{kind} conversion"),
            );
            let (p1, p2, tau) = parallel_closed(kind == "pfr", c);
            let want = if first == "R" { p1 / p2 } else { p2 / p1 };
            ag.check(
                num(&r["rank_value"], "rank_value"),
                want,
                1e-6,
                &format!("{kind} selectivity R/S, R from the {first} step"),
            );
            ag.check(
                num(&r["size"], "size") / V0,
                tau,
                1e-6,
                &format!("{kind} τ for X = 0.9"),
            );
        }
        let (a, b) = (
            num(&rows[0]["rank_value"], "rank 1"),
            num(&rows[1]["rank_value"], "rank 2"),
        );
        assert!(a > b, "not ranked best first: {a} then {b}");
    }
    ag.report();
}

// ---------------------------------------------------------------------------------------
// Plots
// ---------------------------------------------------------------------------------------

fn plot_study() -> String {
    "name: plot test (test values)
phase: liquid
species: {Reactant: null, Wanted: null, Byproduct: null}
reactions:
  - {id: r1, stoich: Reactant -> Wanted, rate: {k: 0.25 1/s}}
  - {id: r2, stoich: Wanted -> Byproduct, rate: {k: 0.1 1/s}}
feed: {T: 300 K, volumetric: 1 L/s, flows: {Reactant: 1 mol/s}}
reactor: {type: pfr, volume: 20 L}
key: Reactant
desired: Wanted
"
    .to_string()
}

fn read_svg(run: &Run, out: &TempFile) -> String {
    assert_eq!(run.code, 0, "{}", run.stderr);
    let svg = std::fs::read_to_string(&out.path)
        .unwrap_or_else(|e| panic!("no plot at {}: {e}", out.p()));
    assert!(
        svg.contains("<svg"),
        "not SVG:\n{}",
        &svg[..svg.len().min(300)]
    );
    assert!(svg.trim_end().ends_with("</svg>"), "truncated SVG");
    svg
}

fn assert_has(svg: &str, what: &[&str]) {
    for w in what {
        assert!(svg.contains(w), "the plot lacks `{w}`");
    }
}

#[test]
fn plots_carry_axis_labels_and_species() {
    let study = temp_study("plot", &plot_study());
    let out = temp_out("run-plot", "svg");
    let run = rxnet(&["run", study.p(), "--plot", out.p()]);
    let svg = read_svg(&run, &out);
    assert_has(
        &svg,
        &["V [m3]", "mol/s", "Reactant", "Wanted", "Byproduct"],
    );

    let out1 = temp_out("sweep-plot1", "svg");
    let run = sweep(
        &study,
        &["--vary", "reactor.volume=1 L:20 L:8", "--plot", out1.p()],
    );
    let svg = read_svg(&run, &out1);
    assert_has(&svg, &["reactor.volume [L]", "yield:Wanted", "conversion"]);

    let out2 = temp_out("sweep-plot2", "svg");
    let run = sweep(
        &study,
        &[
            "--vary",
            "reactions.r2.rate.k=0.05 1/s:0.2 1/s:4",
            "--vary",
            "reactor.volume=1 L:20 L:5",
            "--plot",
            out2.p(),
            "--plot-target",
            "selectivity:Wanted/Byproduct",
        ],
    );
    let svg = read_svg(&run, &out2);
    assert_has(
        &svg,
        &[
            "reactions.r2.rate.k [1/s]",
            "reactor.volume [L]",
            "Wanted",
            "Byproduct",
        ],
    );
    // An unknown plot target is a wrong command line.
    refused(
        &[
            "sweep",
            study.p(),
            "--vary",
            "reactor.volume=1 L:20 L:3",
            "--plot-target",
            "yield:Nothing",
        ],
        2,
    );
}

// ---------------------------------------------------------------------------------------
// Bundled studies
// ---------------------------------------------------------------------------------------

/// The bundled studies whose `rxnet check` exits 0.
fn clean_networks() -> Vec<std::path::PathBuf> {
    let dir = network("");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("networks/ exists")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    files.sort();
    files
        .into_iter()
        .filter(|p| rxnet(&["check", p.to_str().unwrap()]).code == 0)
        .collect()
}

#[test]
fn bundled_studies_optimize_and_compare() {
    let files = clean_networks();
    assert!(files.len() >= 4, "too few clean bundled studies: {files:?}");
    for f in &files {
        let p = f.to_str().unwrap();
        let net = load_file(f, &[]).unwrap_or_else(|e| panic!("{p}: {e}"));
        let plain = (rxnet(&["run", p, "--format", "json"])).ok_json();
        // A CSTR with an energy balance can jump between steady states as V changes: the
        // best-volume search refuses it plainly (docs/methods.md), exit 2.
        if net.heat.balance().is_some() && net.reactor.kind() == "cstr" {
            let r = rxnet(&["optimize", p, "--maximize", "conversion"]);
            assert_eq!(r.code, 2, "{p}: {}", r.stderr);
            assert!(r.stderr.contains("energy balance"), "{p}: {}", r.stderr);
            continue;
        }
        // A semibatch's best batch time is refused plainly (its targets count what was dosed
        // by each time), exit 2; tests/semibatch.rs optimizes it over its inputs.
        if !net.contacting.dosing.is_empty() {
            let r = rxnet(&["optimize", p, "--maximize", "conversion"]);
            assert_eq!(r.code, 2, "{p}: {}", r.stderr);
            assert!(r.stderr.contains("semibatch"), "{p}: {}", r.stderr);
            continue;
        }
        // Conversion over [0, size]: at least the conversion of the full-size run
        // (the conversion never falls along a reactor; common practice).
        let j = (rxnet(&[
            "optimize",
            p,
            "--maximize",
            "conversion",
            "--format",
            "json",
        ]))
        .ok_json();
        let best = num(&j["best"]["value"], "best.value");
        let full = num(&plain["conversion"], "conversion");
        assert!(
            best >= full * (1.0 - 1e-6) && best <= 1.0 + 1e-9,
            "{p}: best conversion {best}, full-size run {full}"
        );
        if let Some(d) = net.desired {
            let name = &net.species[d].name;
            let t = format!("yield:{name}");
            // Over [0, size] a yield may be best in a vanishing reactor: then no finite
            // optimum, said plainly, exit 1.
            let free = rxnet(&["optimize", p, "--maximize", &t, "--format", "json"]);
            assert!(
                free.code == 0 || (free.code == 1 && free.stderr.contains("no finite optimum")),
                "{p}: {}",
                free.stderr
            );
            // Half the full-size conversion keeps the size away from zero, and the full
            // size stays feasible.
            let xmin = format!("{}", 0.5 * num(&plain["conversion"], "conversion"));
            let j = (rxnet(&[
                "optimize",
                p,
                "--maximize",
                &t,
                "--min-conversion",
                &xmin,
                "--format",
                "json",
            ]))
            .ok_json();
            let v = num(&j["best"]["value"], "best.value");
            // The reported value is the yield of the run at the optimum (same definition).
            assert!(
                rel_err(v, num(&j["run"]["yield"][name], "run yield")) < 1e-9,
                "{p}: {j}"
            );
            // Maximising over [0, size] beats the full-size run.
            if let Some(y) = plain["yield"][name].as_f64() {
                assert!(v >= y * (1.0 - 1e-6), "{p}: best yield {v} < full-size {y}");
            }
        }
    }
    let mut args = vec!["compare"];
    args.extend(files.iter().map(|f| f.to_str().unwrap()));
    args.extend_from_slice(&["--format", "json"]);
    let j = (rxnet(&args)).ok_json();
    let rows = j.as_array().expect("a JSON list");
    assert_eq!(rows.len(), files.len(), "{j}");
    for f in &files {
        let p = f.to_str().unwrap();
        assert_eq!(
            rows.iter().filter(|r| r["file"] == p).count(),
            1,
            "{p} not once in {j}"
        );
    }
    for r in rows {
        assert!(r["error"].is_null(), "{r}");
    }
    // Ranked best first by each file's default target.
    let vals: Vec<f64> = rows
        .iter()
        .filter_map(|r| r["rank_value"].as_f64())
        .collect();
    assert!(
        vals.windows(2).all(|w| w[0] >= w[1]),
        "not ranked: {vals:?}"
    );
}
