//! Design questions through the binary: the best size for every target kind (amount, yield,
//! selectivity, conversion) on series, parallel and reversible schemes in a PFR, a CSTR and a
//! batch; what happens when the best value is only a supremum (approached as the size goes to
//! zero) or the same at every size; `rxnet size` (the size or batch time for a conversion);
//! units in optimize's output; `compare`'s table.
//!
//! Every rate constant, feed and size below is an invented test value, not data for any real
//! process. Each numeric check names its outside source. "Levenspiel" is O. Levenspiel,
//! Chemical Reaction Engineering, 3rd ed., Wiley 1999; its equations are quoted from memory.

mod common;

use common::{Agreement, Run, TempFile, network, num, rxnet, temp_study};
use rxnet::solve::{SolveOptions, simulate};
use rxnet::{Override, load_str};

/// Volumetric feed of the flow studies, m3/s (1 L/s, test value); F_A0 = 1 mol/s, so
/// C_A0 = 1000 mol/m3.
const V0: f64 = 1e-3;
const CA0: f64 = 1000.0;

const FLOW_FEED: &str = "{T: 300 K, volumetric: 1 L/s, flows: {A: 1 mol/s}}";
const BATCH_FEED: &str = "{T: 300 K, amounts: {A: 1 mol}}";
const PFR: &str = "{type: pfr, volume: 100 L}";
const CSTR: &str = "{type: cstr, volume: 100 L}";
const BATCH: &str = "{type: batch, time: 100 s, volume: 1 L}";

/// The three reactors: (name, feed, reactor, size variable). A batch of 1 L charged with
/// 1 mol of A behaves as the PFR with t for τ (Levenspiel ch. 5, from memory).
const REACTORS: [(&str, &str, &str, &str); 3] = [
    ("pfr", FLOW_FEED, PFR, "V"),
    ("cstr", FLOW_FEED, CSTR, "V"),
    ("batch", BATCH_FEED, BATCH, "t"),
];

fn study(name: &str, species: &str, reactions: &str, feed: &str, reactor: &str) -> String {
    format!(
        "name: {name} (test values)
phase: liquid
species: {{{species}}}
reactions:
{reactions}feed: {feed}
reactor: {reactor}
key: A
desired: B
"
    )
}

/// Series A -> B -> C, first order.
const K1: f64 = 0.25;
const K2: f64 = 0.1;

fn series(feed: &str, reactor: &str) -> String {
    study(
        "series",
        "A: null, B: null, C: null",
        &format!(
            "  - {{id: r1, stoich: A -> B, rate: {{k: {K1} 1/s}}}}\n  - {{id: r2, stoich: B -> C, rate: {{k: {K2} 1/s}}}}\n"
        ),
        feed,
        reactor,
    )
}

/// Parallel A -> B (k = 0.3 1/s), A -> C (0.1 1/s), A -> D (0.05 1/s), first order.
const KP: [f64; 3] = [0.3, 0.1, 0.05];

fn parallel(feed: &str, reactor: &str) -> String {
    study(
        "parallel",
        "A: null, B: null, C: null, D: null",
        &format!(
            "  - {{id: p1, stoich: A -> B, rate: {{k: {} 1/s}}}}\n  - {{id: p2, stoich: A -> C, rate: {{k: {} 1/s}}}}\n  - {{id: p3, stoich: A -> D, rate: {{k: {} 1/s}}}}\n",
            KP[0], KP[1], KP[2]
        ),
        feed,
        reactor,
    )
}

/// Reversible A <=> B, k_f = 0.2 1/s, K = 2 (so k_r = 0.1 1/s).
const KF: f64 = 0.2;
const KEQ: f64 = 2.0;

fn reversible(feed: &str, reactor: &str) -> String {
    study(
        "reversible",
        "A: null, B: null",
        &format!("  - {{id: r1, stoich: A <=> B, rate: {{k: {KF} 1/s, K_eq: {KEQ}}}}}\n"),
        feed,
        reactor,
    )
}

fn optimize(f: &TempFile, args: &[&str]) -> Run {
    let mut all = vec!["optimize", f.p()];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--rtol", "1e-10", "--format", "json"]);
    rxnet(&all)
}

/// A run that must end with exit 1, a message naming `words`, and no panic.
fn fails_with(run: &Run, words: &[&str], ctx: &str) {
    assert_eq!(
        run.code, 1,
        "{ctx}: expected exit 1\nstdout:\n{}\nstderr:\n{}",
        run.stdout, run.stderr
    );
    assert!(!run.stderr.contains("panicked"), "{ctx}: {}", run.stderr);
    for w in words {
        assert!(
            run.stderr.contains(w),
            "{ctx}: `{w}` not in the message:\n{}",
            run.stderr
        );
    }
}

/// The number printed after `after` in `text`.
fn number_after(text: &str, after: &str) -> f64 {
    let i = text
        .find(after)
        .unwrap_or_else(|| panic!("`{after}` not in {text}"))
        + after.len();
    let rest = text[i..].trim_start();
    let end = rest
        .find(|c: char| !(c.is_ascii_digit() || "+-.e".contains(c)))
        .unwrap_or(rest.len());
    rest[..end]
        .parse()
        .unwrap_or_else(|_| panic!("no number after `{after}` in {text}"))
}

/// τ (flow, V/v0) or t (batch) of a reported size.
fn time_of(kind: &str, size: f64) -> f64 {
    if kind == "batch" { size } else { size / V0 }
}

// Series closed forms (Levenspiel ch. 8, from memory), per C_A0.
fn pfr_series(t: f64) -> (f64, f64, f64) {
    let a = (-K1 * t).exp();
    let b = K1 / (K2 - K1) * ((-K1 * t).exp() - (-K2 * t).exp());
    (a, b, 1.0 - a - b)
}

fn cstr_series(t: f64) -> (f64, f64, f64) {
    let a = 1.0 / (1.0 + K1 * t);
    let b = K1 * t / ((1.0 + K1 * t) * (1.0 + K2 * t));
    (a, b, 1.0 - a - b)
}

fn series_at(kind: &str, t: f64) -> (f64, f64, f64) {
    if kind == "cstr" {
        cstr_series(t)
    } else {
        pfr_series(t)
    }
}

#[test]
fn series_targets_against_closed_forms() {
    let mut ag = Agreement::new("series A->B->C targets (Levenspiel ch. 8)");
    for (kind, feed, reactor, xn) in REACTORS {
        let f = temp_study("d-series", &series(feed, reactor));
        // Amount of B: an interior maximum, τ_opt = ln(k2/k1)/(k2 − k1) in plug flow or
        // batch, 1/√(k1 k2) in mixed flow (Levenspiel ch. 8, from memory).
        let j = (optimize(&f, &["--maximize", "B"])).ok_json();
        let t_opt = if kind == "cstr" {
            1.0 / (K1 * K2).sqrt()
        } else {
            (K2 / K1).ln() / (K2 - K1)
        };
        let size = num(&j["best"]["size"], "size");
        ag.check(time_of(kind, size), t_opt, 1e-6, &format!("{kind} τ_opt"));
        let b_max = if kind == "cstr" {
            1.0 / ((K2 / K1).sqrt() + 1.0).powi(2)
        } else {
            (K1 / K2).powf(K2 / (K2 - K1))
        };
        ag.check(
            num(&j["best"]["value"], "value"),
            b_max,
            1e-6,
            &format!("{kind} B_max"),
        );
        let path = if kind == "batch" {
            "reactor.time"
        } else {
            "reactor.volume"
        };
        assert!(
            j["best"]["on_bound"][path].is_null(),
            "{kind}: interior: {j}"
        );
        // Dense scan of the closed form over the default bounds: nothing beats the optimum.
        let hi = 100.0; // s: 100 L at 1 L/s, or the batch time
        let scan = (1..=100_000)
            .map(|i| series_at(kind, hi * i as f64 / 100_000.0).1)
            .fold(f64::NEG_INFINITY, f64::max);
        assert!(
            scan <= num(&j["best"]["value"], "value") * (1.0 + 1e-7),
            "{kind}: scan {scan}"
        );

        // Yield of B: 1 in the limit of a vanishing reactor, smaller at every size
        // (Levenspiel ch. 8: C_B/(C_A0 − C_A) falls from 1), so no finite optimum.
        let r = optimize(&f, &["--maximize", "yield:B"]);
        fails_with(
            &r,
            &[
                "yield:B approaches 1 as",
                &format!("{xn} -> 0"),
                "no finite optimum",
                "--min-conversion",
            ],
            kind,
        );
        assert!(r.stdout.is_empty(), "{kind}: {}", r.stdout);

        // Selectivity B/C grows without bound as the size goes to 0 (C not formed at the inlet).
        for t in ["selectivity:B/C", "selectivity:B/all"] {
            let r = optimize(&f, &["--maximize", t]);
            fails_with(
                &r,
                &["grows without bound", "no finite optimum"],
                &format!("{kind} {t}"),
            );
        }
        // With X >= 0.5 the constraint is the optimum: S = C_B/C_C at X = 0.5, where
        // τ = ln 2/k1 (plug flow, batch) or 1/k1 (mixed flow) (Levenspiel ch. 8, from memory).
        let t_half = if kind == "cstr" {
            1.0 / K1
        } else {
            2f64.ln() / K1
        };
        let (_, b, c) = series_at(kind, t_half);
        for t in ["selectivity:B/C", "selectivity:B/all"] {
            let j = (optimize(&f, &["--maximize", t, "--min-conversion", "0.5"])).ok_json();
            assert_eq!(
                j["best"]["on_bound"][path], "min-conversion",
                "{kind} {t}: {j}"
            );
            ag.check(
                time_of(kind, num(&j["best"]["size"], "size")),
                t_half,
                1e-6,
                &format!("{kind} τ at X = 0.5"),
            );
            ag.check(
                num(&j["best"]["value"], "value"),
                b / c,
                1e-6,
                &format!("{kind} {t} at X = 0.5"),
            );
            // Dense scan over the feasible sizes: S only falls beyond the constraint.
            let scan = (0..=20_000)
                .map(|i| {
                    let (_, b, c) =
                        series_at(kind, t_half + (100.0 - t_half) * i as f64 / 20_000.0);
                    b / c
                })
                .fold(f64::NEG_INFINITY, f64::max);
            assert!(
                scan <= num(&j["best"]["value"], "value") * (1.0 + 1e-7),
                "{kind} {t}: scan {scan}"
            );
        }

        // Conversion: best at the upper bound, and still rising there.
        let j = (optimize(&f, &["--maximize", "conversion"])).ok_json();
        assert_eq!(j["best"]["on_bound"][path], "upper", "{kind}: {j}");
        assert_eq!(j["best"]["improves_beyond_bound"], true, "{kind}: {j}");
        ag.check(
            num(&j["best"]["value"], "value"),
            1.0 - series_at(kind, 100.0).0,
            1e-6,
            &format!("{kind} X at the bound"),
        );
    }
    ag.report();
}

#[test]
fn parallel_targets_against_closed_forms() {
    let mut ag = Agreement::new("parallel first-order targets (Levenspiel ch. 7)");
    let ksum: f64 = KP.iter().sum();
    for (kind, feed, reactor, _) in REACTORS {
        let f = temp_study("d-par", &parallel(feed, reactor));
        // Equal orders: every yield and selectivity is the same at every size,
        // F_B/F_C = k1/k2 and Y_B = k1/Σk (Levenspiel ch. 7, from memory). No size is optimal.
        for (t, want) in [
            ("yield:B", KP[0] / ksum),
            ("selectivity:B/C", KP[0] / KP[1]),
            ("selectivity:B/all", KP[0] / (KP[1] + KP[2])),
        ] {
            let r = optimize(&f, &["--maximize", t]);
            fails_with(&r, &["does not depend on the size"], &format!("{kind} {t}"));
            ag.check(
                number_after(&r.stderr, &format!("{t} is")),
                want,
                1e-5,
                &format!("{kind} {t} in the message"),
            );
        }
        // The run reports the same selectivity (S_B/C = k1/k2).
        let run = (rxnet(&["run", f.p(), "--rtol", "1e-10", "--format", "json"])).ok_json();
        ag.check(
            num(&run["selectivity"]["C"], "S_B/C"),
            KP[0] / KP[1],
            1e-6,
            &format!("{kind} run S_B/C"),
        );
        // Amount of B rises with size: upper bound, F_B = k1/Σk · X with X = 1 − e^(−Σk τ)
        // (plug flow, batch) or Σk τ/(1 + Σk τ) (mixed flow) (Levenspiel ch. 7, from memory).
        let hi = if kind == "batch" { "10 s" } else { "10 L" };
        let j = (optimize(&f, &["--maximize", "B", "--bounds", "0", hi])).ok_json();
        let x = if kind == "cstr" {
            ksum * 10.0 / (1.0 + ksum * 10.0)
        } else {
            1.0 - (-ksum * 10.0f64).exp()
        };
        ag.check(
            num(&j["best"]["value"], "value"),
            KP[0] / ksum * x,
            1e-6,
            &format!("{kind} F_B at the bound"),
        );
        assert_eq!(j["best"]["improves_beyond_bound"], true, "{kind}: {j}");
    }
    ag.report();
}

#[test]
fn reversible_targets_against_closed_forms() {
    let mut ag = Agreement::new("reversible A<=>B (Levenspiel ch. 5, from memory)");
    let kr = KF / KEQ;
    let x_eq = KEQ / (1.0 + KEQ);
    for (kind, feed, reactor, _) in REACTORS {
        let f = temp_study("d-rev", &reversible(feed, reactor));
        // Conversion: X = X_eq (1 − e^(−(k_f + k_r) τ)) in plug flow or batch,
        // k_f τ/(1 + (k_f + k_r) τ) in mixed flow; best at the upper bound.
        let j = (optimize(&f, &["--maximize", "conversion"])).ok_json();
        let want = if kind == "cstr" {
            KF * 100.0 / (1.0 + (KF + kr) * 100.0)
        } else {
            x_eq * (1.0 - (-(KF + kr) * 100.0f64).exp())
        };
        ag.check(
            num(&j["best"]["value"], "value"),
            want,
            1e-6,
            &format!("{kind} X at the bound"),
        );
        // The only product: its yield is 1 at every size; no size is optimal.
        let r = optimize(&f, &["--maximize", "yield:B"]);
        fails_with(&r, &["does not depend on the size"], kind);
        // A conversion constraint beyond equilibrium cannot be met.
        let r = optimize(&f, &["--maximize", "B", "--min-conversion", "0.7"]);
        fails_with(
            &r,
            &[
                "conversion reaches only",
                "beyond equilibrium",
                "X_eq = 0.666667",
            ],
            kind,
        );
    }
    ag.report();
}

/// `rxnet size FILE --conversion X --format json` (tight tolerance).
fn size_json(f: &TempFile, x: &str, extra: &[&str]) -> Run {
    let mut all = vec![
        "size",
        f.p(),
        "--conversion",
        x,
        "--rtol",
        "1e-10",
        "--format",
        "json",
    ];
    all.extend_from_slice(extra);
    rxnet(&all)
}

#[test]
fn size_for_conversion_against_closed_forms() {
    let mut ag = Agreement::new("size for a conversion (Levenspiel ch. 5, from memory)");
    let k = 0.2;
    let first = |feed: &str, reactor: &str| {
        study(
            "first order",
            "A: null, B: null",
            &format!("  - {{id: r1, stoich: A -> B, rate: {{k: {k} 1/s}}}}\n"),
            feed,
            reactor,
        )
    };
    // k2 C_A0 = 1e-4 m3/(mol s) · 1000 mol/m3 = 0.1 1/s; −r_A = k2 C_A² (orders A: 2).
    let k2 = 1e-4;
    let second = |feed: &str, reactor: &str| {
        study(
            "second order",
            "A: null, B: null",
            &format!(
                "  - {{id: r1, stoich: A -> B, rate: {{k: {k2} m3/(mol*s), orders: {{A: 2}}}}}}\n"
            ),
            feed,
            reactor,
        )
    };
    for x in [0.5f64, 0.9, 0.99] {
        let xs = format!("{x}");
        for (kind, feed, reactor, _) in REACTORS {
            // First order: kτ = −ln(1 − X) (plug flow; batch with t), kτ = X/(1 − X) (mixed flow).
            let f = temp_study("d-size1", &first(feed, reactor));
            let j = (size_json(&f, &xs, &[])).ok_json();
            let want = if kind == "cstr" {
                x / (1.0 - x) / k
            } else {
                -(1.0 - x).ln() / k
            };
            ag.check(
                time_of(kind, num(&j["size"], "size")),
                want,
                1e-6,
                &format!("first order {kind} X = {x}"),
            );
            ag.check(
                num(&j["run"]["conversion"], "conversion"),
                x,
                1e-6,
                &format!("{kind} run at the size"),
            );
            assert_eq!(
                j["size_unit"],
                if kind == "batch" { "s" } else { "m3" },
                "{j}"
            );
            // Second order: k τ C_A0 = X/(1 − X) (plug flow, batch), X/(1 − X)² (mixed flow).
            let f = temp_study("d-size2", &second(feed, reactor));
            let j = (size_json(&f, &xs, &[])).ok_json();
            let want = if kind == "cstr" {
                x / (1.0 - x).powi(2) / (k2 * CA0)
            } else {
                x / (1.0 - x) / (k2 * CA0)
            };
            ag.check(
                time_of(kind, num(&j["size"], "size")),
                want,
                1e-6,
                &format!("second order {kind} X = {x}"),
            );
        }
    }
    // Reversible A <=> B: X_eq = K/(1 + K); below it the closed forms, beyond it exit 1 with X_eq.
    let kr = KF / KEQ;
    let x_eq = KEQ / (1.0 + KEQ);
    for (kind, feed, reactor, xn) in REACTORS {
        let f = temp_study("d-size-rev", &reversible(feed, reactor));
        let j = (size_json(&f, "0.5", &[])).ok_json();
        // X = X_eq (1 − e^(−(k_f + k_r) τ)) (plug flow, batch); X = k_f τ/(1 + (k_f + k_r) τ) (mixed).
        let want = if kind == "cstr" {
            0.5 / (KF - 0.5 * (KF + kr))
        } else {
            -(1.0 - 0.5 / x_eq).ln() / (KF + kr)
        };
        ag.check(
            time_of(kind, num(&j["size"], "size")),
            want,
            1e-6,
            &format!("reversible {kind} X = 0.5"),
        );
        let r = size_json(&f, "0.7", &[]);
        fails_with(
            &r,
            &["beyond equilibrium", "X_eq", &format!("{xn} -> ∞")],
            kind,
        );
        let j = r.json();
        assert_eq!(j["reachable"], false, "{j}");
        assert_eq!(j["limited_by"], "equilibrium", "{j}");
        ag.check(
            num(&j["conversion_limit"], "conversion_limit"),
            x_eq,
            1e-6,
            &format!("{kind} X_eq"),
        );
        ag.check(
            number_after(&r.stderr, "X_eq ="),
            x_eq,
            1e-5,
            &format!("{kind} X_eq in the message"),
        );
    }
    // Bad requests are command-line errors.
    let f = temp_study("d-size-bad", &reversible(FLOW_FEED, PFR));
    for x in ["0", "1", "1.5", "-0.1"] {
        let r = rxnet(&["size", f.p(), "--conversion", x]);
        assert_eq!(r.code, 2, "--conversion {x}: {}", r.stderr);
    }
    ag.report();
}

/// F_B of the series study through the library at one size (test-side scan).
fn library_b(yaml: &str, sets: &[(&str, String)]) -> f64 {
    let ov: Vec<Override> = sets
        .iter()
        .map(|(p, v)| Override {
            path: p.to_string(),
            value: v.clone(),
        })
        .collect();
    let net = load_str(yaml, "scan", &ov).unwrap_or_else(|e| panic!("{e}"));
    let opts = SolveOptions {
        rtol: Some(1e-10),
        ..Default::default()
    };
    let sim = simulate(&net, &opts).unwrap_or_else(|e| panic!("{e}"));
    sim.outlet()[net.species_index("B").expect("B")]
}

#[test]
fn optimize_output_is_si_with_units_and_refuses_bare_bounds() {
    let yaml = series(FLOW_FEED, PFR);
    let f = temp_study("d-units", &yaml);
    // Bounds in litres: the JSON is in m3, the unit beside it.
    let j = (optimize(&f, &["--maximize", "B", "--bounds", "1 L", "50 L"])).ok_json();
    assert_eq!(j["best"]["units"]["reactor.volume"], "m3", "{j}");
    assert_eq!(j["best"]["size_unit"], "m3", "{j}");
    assert_eq!(j["best"]["value_unit"], "mol/s", "{j}");
    let v = num(&j["best"]["point"]["reactor.volume"], "point");
    // τ_opt = ln(k2/k1)/(k2 − k1) s, V = τ v0 (Levenspiel ch. 8, from memory).
    let tau = (K2 / K1).ln() / (K2 - K1);
    let mut ag = Agreement::new("units of optimize (Levenspiel ch. 8)");
    ag.check(v, tau * V0, 1e-6, "V_opt in m3");
    ag.check(
        num(&j["best"]["space_time_s"], "τ"),
        tau,
        1e-6,
        "τ_opt in s",
    );
    // A bare number for a dimensional input is refused, never taken as SI.
    for args in [
        vec!["--bounds", "1", "5"],
        vec!["--bounds", "0", "5"],
        vec!["--over", "feed.T", "--bounds", "300", "400"],
        vec![
            "--over", "size", "--bounds", "0.001", "0.05", "--over", "feed.T", "--bounds", "300 K",
            "310 K",
        ],
    ] {
        let mut all = vec!["optimize", f.p(), "--maximize", "B"];
        all.extend_from_slice(&args);
        let r = rxnet(&all);
        assert_eq!(r.code, 2, "{args:?}: {}", r.stderr);
        assert!(r.stderr.contains("unit"), "{args:?}: {}", r.stderr);
    }
    // Text output: a unit on every dimensional number.
    let r = rxnet(&[
        "optimize",
        f.p(),
        "--maximize",
        "B",
        "--bounds",
        "1 L",
        "50 L",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let head: Vec<&str> = r.stdout.lines().take(4).collect();
    assert!(
        head[1].contains(" m3") && head[1].contains(" L"),
        "{head:?}"
    );
    assert!(head[1].contains("interior maximum"), "{head:?}");
    assert!(head[2].contains(" s"), "{head:?}");
    assert!(head[3].contains("mol/s"), "{head:?}");

    // An input the target does not depend on is refused, not put on a bound: without
    // activation energies k1 and k2 do not depend on T.
    let r = optimize(
        &f,
        &[
            "--maximize",
            "B",
            "--over",
            "feed.T",
            "--bounds",
            "300 K",
            "310 K",
        ],
    );
    fails_with(&r, &["does not depend on feed.T"], "flat in T");

    // --over size combines with another input. With Ea2 > Ea1 the best T is the lower bound
    // (the best B, (k1/k2)^(k2/(k2−k1)), falls as k2/k1 rises) and the best volume is
    // τ_opt v0 at that T (Levenspiel ch. 8, from memory); Arrhenius k(T) = k_ref
    // exp(−Ea/R (1/T − 1/T_ref)) (common practice), R from CODATA 2018.
    let r_gas = 8.314_462_618_153_24;
    let (ea1, ea2) = (50e3, 90e3);
    let yaml_t = study(
        "series in T",
        "A: null, B: null, C: null",
        &format!(
            "  - {{id: r1, stoich: A -> B, rate: {{k: {K1} 1/s, Ea: {ea1} J/mol, T_ref: 300 K}}}}\n  - {{id: r2, stoich: B -> C, rate: {{k: {K2} 1/s, Ea: {ea2} J/mol, T_ref: 300 K}}}}\n"
        ),
        FLOW_FEED,
        PFR,
    );
    let ft = temp_study("d-units-t", &yaml_t);
    // Bounds in °C: the point in K (NIST SP 811: T/K = t/°C + 273.15).
    let jt = (optimize(
        &ft,
        &[
            "--maximize",
            "B",
            "--over",
            "feed.T",
            "--bounds",
            "20 degC",
            "30 degC",
        ],
    ))
    .ok_json();
    assert_eq!(jt["best"]["units"]["feed.T"], "K", "{jt}");
    let t = num(&jt["best"]["point"]["feed.T"], "feed.T");
    // Ea2 > Ea1: the lower bound, 20 °C = 293.15 K.
    assert_eq!(jt["best"]["on_bound"]["feed.T"], "lower", "{jt}");
    ag.check(t, 293.15, 1e-12, "20 degC in K");
    let j = (optimize(
        &ft,
        &[
            "--maximize",
            "B",
            "--over",
            "size",
            "--bounds",
            "1 L",
            "50 L",
            "--over",
            "feed.T",
            "--bounds",
            "290 K",
            "310 K",
        ],
    ))
    .ok_json();
    let k_at = |k: f64, ea: f64, t: f64| k * (-ea / r_gas * (1.0 / t - 1.0 / 300.0)).exp();
    let (k1, k2) = (k_at(K1, ea1, 290.0), k_at(K2, ea2, 290.0));
    let tau_290 = (k2 / k1).ln() / (k2 - k1);
    assert_eq!(j["best"]["on_bound"]["feed.T"], "lower", "{j}");
    assert!(j["best"]["on_bound"]["reactor.volume"].is_null(), "{j}");
    ag.check(
        num(&j["best"]["point"]["reactor.volume"], "V"),
        tau_290 * V0,
        1e-4,
        "V_opt with feed.T",
    );
    let value = num(&j["best"]["value"], "value");
    ag.check(
        value,
        (k1 / k2).powf(k2 / (k2 - k1)),
        1e-6,
        "B_max at 290 K",
    );
    // Library scan over both inputs: nothing beats the optimum.
    let mut scan = f64::NEG_INFINITY;
    for i in 0..=40 {
        for k in 0..=10 {
            scan = scan.max(library_b(
                &yaml_t,
                &[
                    (
                        "reactor.volume",
                        format!("{} L", 1.0 + 49.0 * i as f64 / 40.0),
                    ),
                    ("feed.T", format!("{} K", 290.0 + 2.0 * k as f64)),
                ],
            ));
        }
    }
    assert!(
        scan <= value * (1.0 + 1e-7),
        "library scan {scan} beats {value}"
    );
    ag.report();
}

#[test]
fn compare_table_units_names_and_optimum() {
    let long =
        "a study with a rather long descriptive name that must not be cut short in the table";
    let yaml =
        series(FLOW_FEED, PFR).replace("name: series (test values)", &format!("name: {long}"));
    let f = temp_study("d-compare", &yaml);
    let r = rxnet(&["compare", f.p(), "--reactors", "pfr,cstr,batch"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let head = r.stdout.lines().next().unwrap_or_default();
    // No column twice (the default ranking is the yield, already shown).
    let cols: Vec<&str> = head
        .split("  ")
        .map(str::trim)
        .filter(|c| !c.is_empty())
        .collect();
    let mut uniq = cols.clone();
    uniq.sort();
    uniq.dedup();
    assert_eq!(uniq.len(), cols.len(), "repeated column: {head}");
    assert!(head.contains("τ or t [s]"), "{head}");
    assert!(head.contains("selectivity:B/all"), "{head}");
    // Every word of the long name is printed (wrapped, not cut).
    let words: Vec<&str> = r.stdout.split_whitespace().collect();
    for w in long.split_whitespace() {
        assert!(words.contains(&w), "`{w}` missing:\n{}", r.stdout);
    }
    // --optimum selectivity:B/C has no finite optimum: said, exit 1.
    let r = rxnet(&[
        "compare",
        f.p(),
        "--reactors",
        "pfr,cstr",
        "--optimum",
        "selectivity:B/C",
    ]);
    assert_eq!(r.code, 1, "{}", r.stdout);
    assert!(r.stderr.contains("grows without bound"), "{}", r.stderr);
    // With a conversion constraint it is the constrained optimum (as optimize gives it):
    // S = C_B/C_C at X = 0.5 (Levenspiel ch. 8, from memory).
    let r = rxnet(&[
        "compare",
        f.p(),
        "--reactors",
        "pfr,cstr",
        "--optimum",
        "selectivity:B/C",
        "--min-conversion",
        "0.5",
        "--rtol",
        "1e-10",
        "--format",
        "json",
    ]);
    let j = r.ok_json();
    let mut ag = Agreement::new("compare --optimum with --min-conversion (Levenspiel ch. 8)");
    for row in j.as_array().expect("rows") {
        let kind = row["reactor"].as_str().unwrap_or_default();
        let t = if kind == "cstr" {
            1.0 / K1
        } else {
            2f64.ln() / K1
        };
        let (_, b, c) = series_at(kind, t);
        ag.check(
            num(&row["optimum_value"], "optimum_value"),
            b / c,
            1e-6,
            kind,
        );
        ag.check(num(&row["optimum_space_time_s"], "τ_opt"), t, 1e-6, kind);
        assert_eq!(row["size_unit"], "m3", "{row}");
    }
    ag.report();
}

#[test]
fn size_says_when_a_packed_bed_runs_out_of_pressure_first() {
    // Gas A -> B (no mole change) in a bed with a lumped pressure drop: P/P0 = (1 − αW)^½
    // (Ergun, lumped; common practice, from memory), so the pressure runs out at W = 1/α =
    // 100 kg. With a slow reaction, X = 0.9 is out of reach of any longer bed: `size` says so,
    // naming where the pressure runs out, and exits 1 (demo values).
    let alpha = 0.01;
    let f = temp_study(
        "size-pbr-pressure",
        &format!(
            "name: slow bed (demo values)\nphase: gas\nspecies: {{A: {{}}, B: {{}}, N2: {{}}}}\nreactions:\n  - {{id: r1, stoich: A -> B, rate: {{k: 1e-5 m3/(kg*s)}}}}\nfeed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, N2: 4 mol/s}}}}\nreactor: {{type: pbr, catalyst: 10 kg, pressure_drop: {{alpha: {alpha} 1/kg}}}}\nkey: A\n"
        ),
    );
    let run = rxnet(&["size", f.p(), "--conversion", "0.9"]);
    assert_eq!(run.code, 1, "{}\n{}", run.stdout, run.stderr);
    assert!(run.stderr.contains("pressure runs out"), "{}", run.stderr);
    let w = run
        .stderr
        .split("near W = ")
        .nth(1)
        .and_then(|t| t.split_whitespace().next())
        .and_then(|t| t.parse::<f64>().ok())
        .unwrap_or_else(|| panic!("no W in: {}", run.stderr));
    assert!(
        (w - 1.0 / alpha).abs() / (1.0 / alpha) < 1e-2,
        "pressure runs out at W = 1/α = {} kg, reported {w}",
        1.0 / alpha
    );
}

#[test]
fn compare_rows_that_fail_name_the_reactor_type_asked_for() {
    // A packed bed's rates are per catalyst mass, so it has no PFR or CSTR equivalent: each
    // screen fails, and its row still says which type was asked for.
    let f = network("ethylene_epoxidation.yaml");
    let run = rxnet(&[
        "compare",
        f.to_str().unwrap(),
        "--reactors",
        "pfr,cstr",
        "--format",
        "json",
    ]);
    assert_eq!(run.code, 1, "every entry failed: {}", run.stderr);
    let rows = run.json();
    let kinds: Vec<&str> = rows
        .as_array()
        .expect("rows")
        .iter()
        .map(|r| {
            assert!(r["error"].is_string(), "{r}");
            r["reactor"].as_str().expect("reactor")
        })
        .collect();
    assert_eq!(kinds, ["pfr", "cstr"]);
}

#[test]
fn compare_set_applies_to_every_study_and_names_a_bad_path() {
    // `--set reactor.volume=4 L` screens the series study at τ = 4 s in every reactor type:
    // conversion and yield of B on A consumed from the closed forms (Levenspiel ch. 8, from
    // memory), as `run --set` would give them.
    let f = temp_study("d-compare-set", &series(FLOW_FEED, PFR));
    let j = rxnet(&[
        "compare",
        f.p(),
        "--reactors",
        "pfr,cstr",
        "--set",
        "reactor.volume=4 L",
        "--rtol",
        "1e-10",
        "--format",
        "json",
    ])
    .ok_json();
    let mut ag = Agreement::new("compare --set against the series closed forms (Levenspiel ch. 8)");
    let rows = j.as_array().expect("rows");
    assert_eq!(rows.len(), 2, "{j}");
    for row in rows {
        let kind = row["reactor"].as_str().unwrap_or_default();
        let (a, b, _) = series_at(kind, 4.0);
        ag.check(num(&row["space_time_s"], "τ"), 4.0, 1e-12, kind);
        ag.check(num(&row["conversion"], "X"), 1.0 - a, 1e-7, kind);
        ag.check(
            num(&row["yield_desired"], "yield"),
            b / (1.0 - a),
            1e-7,
            kind,
        );
    }
    ag.report();
    // A path that is not in the study: exit 2, the file and the field named, no table.
    let r = rxnet(&["compare", f.p(), "--set", "reactions.r9.rate.k=1 1/s"]);
    assert_eq!(r.code, 2, "{}", r.stdout);
    assert!(r.stdout.is_empty(), "{}", r.stdout);
    assert!(
        r.stderr
            .contains(f.p().rsplit('/').next().unwrap_or_default())
            && r.stderr.contains("reactions.r9.rate.k"),
        "{}",
        r.stderr
    );
}
