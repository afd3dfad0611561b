//! Answers for problems at the edges of the usual ranges: CSTR steady states that plain Newton
//! misses (huge volume or rate constant, autocatalysis), several steady states with their
//! stability, and integrations over horizons far longer than the chemistry (a batch of 1e20 s,
//! a PFR of 1e300 m3). Every check runs the `rxnet` binary, as a user would.

mod common;

use common::{rel_err, run_args};

/// A reversible first-order A <=> B, K_c = 3, k = 0.01 1/s, from pure A (demo values), in the
/// given reactor block.
fn reversible(reactor: &str, feed: &str) -> String {
    format!(
        "name: reversible first order (demo values)
phase: liquid
species: {{A: {{}}, B: {{}}}}
reactions:
  - {{id: r1, stoich: A <=> B, rate: {{k: 0.01 1/s, K_eq: 3}}}}
feed: {feed}
reactor: {reactor}
"
    )
}

/// Equilibrium conversion of A <=> B from pure A: X_eq = K/(1 + K) (Levenspiel ch. 3, from
/// memory).
const X_EQ: f64 = 3.0 / 4.0;

#[test]
fn batch_over_1e20_s_reaches_equilibrium() {
    let study = reversible(
        "{type: batch, volume: 1 L, time: 1e20 s}",
        "{T: 300 K, concentrations: {A: 1 mol/L}}",
    );
    let run = run_args("batch-1e20", &study, &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let x = run.json()["conversion"].as_f64().unwrap();
    // X_eq = K/(1 + K), Levenspiel ch. 3 (from memory)
    assert!(rel_err(x, X_EQ) < 1e-9, "X = {x}, X_eq = {X_EQ}");
}

#[test]
fn pfr_of_1e300_m3_reaches_equilibrium() {
    let study = reversible(
        "{type: pfr, volume: 1e300 m3}",
        "{T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}",
    );
    let run = run_args("pfr-1e300", &study, &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let x = run.json()["conversion"].as_f64().unwrap();
    // X_eq = K/(1 + K), Levenspiel ch. 3 (from memory)
    assert!(rel_err(x, X_EQ) < 1e-9, "X = {x}, X_eq = {X_EQ}");
}

/// A first-order A -> B CSTR, v0 = 1 L/s, C_A0 = 1 mol/L (demo values).
fn linear_cstr(k: &str, volume: &str) -> String {
    format!(
        "name: first-order CSTR (demo values)
phase: liquid
species: {{A: {{}}, B: {{}}}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {k}}}}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1 mol/L}}}}
reactor: {{type: cstr, volume: {volume}}}
"
    )
}

#[test]
fn first_order_cstr_at_extreme_volume_and_rate_constant() {
    for (k, v, ktau) in [
        ("0.1 1/s", "1e300 m3", 0.1 * 1e300 / 1e-3),
        ("1e300 1/s", "1 m3", 1e300 * 1.0 / 1e-3),
        ("0.1 1/s", "1 m3", 0.1 * 1.0 / 1e-3),
    ] {
        let run = run_args("cstr-extreme", &linear_cstr(k, v), &["--format", "json"]);
        assert_eq!(run.code, 0, "k = {k}, V = {v}: {}", run.stderr);
        let j = run.json();
        let x = j["conversion"].as_f64().unwrap();
        // X = kτ/(1 + kτ), Levenspiel ch. 5
        let want = ktau / (1.0 + ktau);
        assert!(
            rel_err(x, want) < 1e-12,
            "k = {k}, V = {v}: X = {x}, want {want}"
        );
        // The outlet closes the balance A + B = A0 (stoichiometry of A -> B).
        let (a, b) = (
            j["outlet"]["A"].as_f64().unwrap(),
            j["outlet"]["B"].as_f64().unwrap(),
        );
        assert!(a >= 0.0 && rel_err(a + b, 1.0) < 1e-12, "A = {a}, B = {b}");
        assert_eq!(j["steady_states"]["count"], 1, "{}", run.stdout);
    }
}

/// The independent roots: tests/reference/cstr_steady_states.py (scipy brentq over a dense
/// sign-change scan, checked by fsolve on the full balances).
fn fixture() -> serde_json::Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/cstr_steady_states.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).expect("fixture")).expect("fixture JSON")
}

/// Compare every steady state `rxnet run` lists with the fixture's, in order of conversion.
fn check_all_states(tag: &str, study: &str, case: &serde_json::Value, species: &[&str]) {
    let run = run_args(tag, study, &["--format", "json"]);
    assert_eq!(run.code, 0, "{tag}: {}", run.stderr);
    let j = run.json();
    let got = j["steady_states"]["states"].as_array().expect("states");
    let mut want: Vec<&serde_json::Value> = case["states"].as_array().unwrap().iter().collect();
    want.sort_by(|a, b| {
        a["conversion"]
            .as_f64()
            .unwrap()
            .total_cmp(&b["conversion"].as_f64().unwrap())
    });
    assert_eq!(
        got.len(),
        want.len(),
        "{tag} at {} L: {} steady states, scipy finds {}:\n{}",
        case["volume_L"],
        got.len(),
        want.len(),
        run.stdout
    );
    for (g, w) in got.iter().zip(&want) {
        let (xg, xw) = (
            g["conversion"].as_f64().unwrap(),
            w["conversion"].as_f64().unwrap(),
        );
        // scipy (tests/reference/cstr_steady_states.py)
        assert!(rel_err(xg, xw) < 1e-8, "{tag}: X = {xg}, scipy {xw}");
        for s in species {
            // outlet flow (mol/s) = C (mol/m3) × v0 (1e-3 m3/s)
            let fg = g["outlet"][*s].as_f64().unwrap();
            let fw = w[format!("C_{s}")].as_f64().unwrap() * 1e-3;
            assert!(
                (fg - fw).abs() <= 1e-8 * 1.1,
                "{tag}: F_{s} = {fg}, scipy {fw}"
            );
        }
    }
}

#[test]
fn autocatalytic_cstr_has_its_one_steady_state_at_every_volume() {
    let fx = fixture();
    for case in fx["autocatalytic"].as_array().unwrap() {
        let v = case["volume_L"].as_f64().unwrap();
        let study = format!(
            "name: autocatalytic CSTR (demo values)
phase: liquid
species: {{A: {{}}, B: {{}}, C: {{}}}}
reactions:
  - {{id: r1, stoich: A + 2 B -> 3 B, rate: {{k: 1 (L/mol)^2/s}}}}
  - {{id: r2, stoich: B -> C, rate: {{k: 0.01 1/s}}}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1 mol/L, B: 0.1 mol/L}}}}
reactor: {{type: cstr, volume: {v} L}}
key: A
"
        );
        check_all_states("autocatalytic", &study, case, &["A", "B", "C"]);
    }
}

fn substrate_inhibited(volume_l: f64) -> String {
    format!(
        "name: substrate-inhibited CSTR (demo values)
phase: liquid
species: {{A: {{}}, B: {{}}}}
reactions:
  - id: r1
    stoich: A -> B
    rate: {{law: hyperbolic, k: 1 1/s, orders: {{A: 1}}, adsorption: {{A: {{K: 20 L/mol}}}}, inhibition_power: 2}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1 mol/L}}}}
reactor: {{type: cstr, volume: {volume_l} L}}
"
    )
}

#[test]
fn substrate_inhibition_gives_every_steady_state_with_its_stability() {
    let fx = fixture();
    let mut several = 0;
    for case in fx["substrate_inhibited"].as_array().unwrap() {
        let v = case["volume_L"].as_f64().unwrap();
        check_all_states("inhibited", &substrate_inhibited(v), case, &["A", "B"]);
        let n = case["states"].as_array().unwrap().len();
        if n == 3 {
            several += 1;
            let run = run_args(
                "inhibited-3",
                &substrate_inhibited(v),
                &["--format", "json"],
            );
            let st = &run.json()["steady_states"];
            let stable: Vec<bool> = st["states"]
                .as_array()
                .unwrap()
                .iter()
                .map(|s| s["stable"].as_bool().unwrap())
                .collect();
            // The outer states stable, the middle one unstable (van Heerden 1953).
            assert_eq!(stable, [true, false, true], "{v} L");
        }
    }
    assert!(
        several >= 2,
        "the fixture has volumes with three steady states"
    );
}

#[test]
fn the_user_picks_the_steady_state_and_the_report_says_which() {
    // 100 L: three steady states, X = 0.318, 0.8, 0.982 (scipy fixture). At τ = 100 s the middle
    // root is C_A = 200 mol/m3 exactly: 1000 − C = 100 C/(1 + 0.02 C)² holds at C = 200.
    let study = substrate_inhibited(100.0);
    let x = |args: &[&str]| {
        let mut all = vec!["--format", "json"];
        all.extend_from_slice(args);
        let run = run_args("pick", &study, &all);
        assert_eq!(run.code, 0, "{args:?}: {}", run.stderr);
        let j = run.json();
        (
            j["conversion"].as_f64().unwrap(),
            j["steady_states"]["shown"].as_u64().unwrap(),
        )
    };
    let (lo, n_lo) = x(&[]);
    let (hi, n_hi) = x(&["--steady-state", "highest"]);
    let (mid, n_mid) = x(&["--steady-state", "2"]);
    assert_eq!((n_lo, n_mid, n_hi), (1, 2, 3));
    assert!(lo < mid && mid < hi);
    assert!(rel_err(mid, 0.8) < 1e-10, "middle X = {mid}");
    // The study file's key does the same.
    let keyed = study.replace("reactor:", "solver: {steady_state: highest}\nreactor:");
    let run = run_args("pick-key", &keyed, &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(run.json()["steady_states"]["shown"], 3);
    // The text report lists all three and says which it shows.
    let run = run_args("pick-text", &study, &["--steady-state", "2"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(run.stdout.contains("3 steady states"), "{}", run.stdout);
    assert!(run.stdout.contains("unstable"), "{}", run.stdout);
    assert!(
        run.stdout.contains("shows steady state 2"),
        "{}",
        run.stdout
    );
    // A number beyond the count is a failed computation with a clear message.
    let run = run_args("pick-4", &study, &["--steady-state", "4"]);
    assert_eq!(run.code, 1);
    assert!(run.stderr.contains("3 steady states"), "{}", run.stderr);
    // A bad value in the file names the field.
    let bad = study.replace("reactor:", "solver: {steady_state: middle}\nreactor:");
    let run = run_args("pick-bad", &bad, &[]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("solver.steady_state"), "{}", run.stderr);
}

#[test]
fn gas_cstr_with_three_steady_states_has_the_middle_one_unstable() {
    // An equimolar gas reaction in an inert carrier: at constant T and P the gas CSTR is the
    // liquid one with v0 = F_T0 R T/P, so the substrate-inhibited law again gives three states
    // (here K C_A0 ≈ 20 and kτ ≈ 100, as in the liquid fixture) and the middle one is unstable
    // (van Heerden 1953). The eigenvalues come from the mole-fraction dynamics on Σx = 1.
    let study = "name: substrate-inhibited gas CSTR (demo values)
phase: gas
species: {A: {}, B: {}, N2: {}}
reactions:
  - id: r1
    stoich: A -> B
    rate: {law: hyperbolic, k: 1 1/s, orders: {A: 1}, adsorption: {A: {K: 2.0 m3/mol}}, inhibition_power: 2}
feed: {T: 300 K, P: 1 bar, flows: {A: 1 mol/s, N2: 3 mol/s}}
reactor: {type: cstr, volume: 10 m3}
";
    let run = run_args("gas-three", study, &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let j = run.json();
    let states = j["steady_states"]["states"].as_array().expect("states");
    let stable: Vec<bool> = states
        .iter()
        .map(|s| s["stable"].as_bool().unwrap())
        .collect();
    assert_eq!(stable, [true, false, true], "{}", run.stdout);
    // Every state closes the balances: F_A + F_B = F_A0, N2 passes through.
    for s in states {
        let o = &s["outlet"];
        let (a, b, n2) = (
            o["A"].as_f64().unwrap(),
            o["B"].as_f64().unwrap(),
            o["N2"].as_f64().unwrap(),
        );
        assert!(rel_err(a + b, 1.0) < 1e-10 && rel_err(n2, 3.0) < 1e-12);
    }
}

#[test]
fn design_commands_follow_the_steady_state_choice() {
    // A -> B substrate-inhibited, B -> C slow (demo values): up to 200 L the lowest-conversion
    // state and the highest differ, so the best volume for B depends on the branch.
    let study = "name: substrate-inhibited CSTR, B wanted (demo values)
phase: liquid
species: {A: {}, B: {}, C: {}}
reactions:
  - id: r1
    stoich: A -> B
    rate: {law: hyperbolic, k: 1 1/s, orders: {A: 1}, adsorption: {A: {K: 20 L/mol}}, inhibition_power: 2}
  - {id: r2, stoich: B -> C, rate: {k: 0.002 1/s}}
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: cstr, volume: 200 L}
key: A
desired: B
";
    let path = common::write_temp("opt-branch", study);
    let p = path.to_str().unwrap();
    let opt = |extra: &[&str]| {
        let mut args = vec!["optimize", p, "--maximize", "B", "--format", "json"];
        args.extend_from_slice(extra);
        let r = common::rxnet(&args);
        assert_eq!(r.code, 0, "{extra:?}: {}", r.stderr);
        r.stdout
    };
    let low = opt(&[]);
    let high = opt(&["--steady-state", "highest"]);
    assert_ne!(low, high, "the branch choice changes the optimum");
    // The optimum on the high branch is what `run` gives there with the same choice.
    let j: serde_json::Value = serde_json::from_str(&high).expect("json");
    let v = j["best"]["size"]
        .as_f64()
        .unwrap_or_else(|| panic!("no best size in {high}"));
    let run = common::rxnet(&[
        "run",
        p,
        "--format",
        "json",
        "--steady-state",
        "highest",
        "--set",
        &format!("reactor.volume={v} m3"),
    ]);
    let _ = std::fs::remove_file(&path);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let b_run = run.json()["outlet"]["B"].as_f64().unwrap();
    let b_opt = j["best"]["value"]
        .as_f64()
        .unwrap_or_else(|| panic!("no best value in {high}"));
    assert!(
        rel_err(b_opt, b_run) < 1e-6,
        "optimize B = {b_opt}, run B = {b_run}"
    );
}

#[test]
fn size_for_a_conversion_never_lands_on_a_branch_jump() {
    // Substrate-inhibited A -> B, r = k C/(1 + K C)², k = 1 1/s, K = 20 L/mol, C_A0 = 1 mol/L,
    // v0 = 1 L/s (demo values): each conversion has one space time, τ = X C_A0 (1 + K C)²/(k C)
    // with C = C_A0 (1 − X) (CSTR design equation, Levenspiel ch. 5). X = 0.2 (low branch) and
    // X = 0.99 (high branch) are sized to it; X = 0.9 has τ = 81 s, on the unstable middle
    // branch, and both choices of branch jump over it: refused, never the volume of the jump.
    let tau = |x: f64| {
        let c = 1.0 - x;
        x * (1.0 + 20.0 * c).powi(2) / c
    };
    let study = substrate_inhibited(100.0);
    for x in [0.2, 0.99] {
        let rep = rxnet_size(&study, x, &[]);
        let size_l = rep["size"].as_f64().expect("a size") * 1e3;
        assert!(
            rel_err(size_l, tau(x)) < 1e-6,
            "X = {x}: V = {size_l} L, τ = {} s",
            tau(x)
        );
    }
    for choice in ["lowest", "highest"] {
        let run = size_run(&study, 0.9, &["--steady-state", choice]);
        assert_eq!(run.code, 1, "{}\n{}", run.stdout, run.stderr);
        assert!(run.stderr.contains("jumps from X"), "{}", run.stderr);
    }
}

fn size_run(study: &str, x: f64, extra: &[&str]) -> common::Run {
    let f = common::write_temp("size-inhibited", study);
    let xs = x.to_string();
    let mut args = vec!["size", f.to_str().unwrap(), "--conversion", &xs];
    args.extend_from_slice(extra);
    common::rxnet(&args)
}

fn rxnet_size(study: &str, x: f64, extra: &[&str]) -> serde_json::Value {
    let mut args = extra.to_vec();
    args.extend_from_slice(&["--format", "json"]);
    size_run(study, x, &args).ok_json()
}

/// A generated network (found by the property tests) whose Newton solve from the feed lands on
/// a root of the balances with A2 = −0.30 mol/s: a root, not a state of the vessel. The
/// physical steady state found by the continuation from the feed is reported instead: every
/// flow non-negative and F0 − F + V Σ_i ν_ij r_i(F) = 0 to 1e-9 of the feed (the CSTR balance;
/// Levenspiel ch. 5, from memory).
#[test]
fn a_root_with_a_negative_flow_is_not_reported() {
    let yaml = "name: generated oligomer network (demo values)
phase: liquid
species:
  A1: {formula: C2H4}
  A2: {formula: C4H8}
  A3: {formula: C6H12}
  A4: {formula: C8H16}
  I1: {formula: C2H4}
reactions:
  - {id: r0, stoich: A2 + A2 -> A4, rate: {k: 1.7086610615149352e-6 m3/(mol*s)}}
  - {id: r1, stoich: A1 + A1 -> A2, rate: {k: 5.731692721537704e-6 m3/(mol*s)}}
  - {id: r2, stoich: A1 + A3 -> A4, rate: {k: 5.600028252658941e-6 m3/(mol*s)}}
  - {id: r3, stoich: A1 -> I1, rate: {k: 7.283727676745393e-3 1/s}}
feed:
  T: 330 K
  volumetric: 1 L/s
  flows: {A1: 6.347562985335555e-1 mol/s, A3: 1.4671984313268587e0 mol/s}
reactor:
  type: cstr
  volume: 1 m3
key: A1
";
    let net = rxnet::load_str(yaml, "negative_root.yaml", &[]).expect("loads");
    let sim = rxnet::solve::simulate(&net, &rxnet::solve::SolveOptions::default())
        .expect("the physical steady state");
    let f = sim.outlet();
    assert!(f.iter().all(|v| *v >= 0.0), "{f:?}");
    let b = rxnet::reactor::Balance::new(&net).unwrap();
    let mut d = vec![0.0; f.len()];
    b.rhs(f, &mut d);
    let total = net.feed.total();
    for ((f0, f), g) in net.feed.amounts.iter().zip(f).zip(&d) {
        assert!(
            (f0 - f + 1.0 * g).abs() < 1e-9 * total,
            "residual {}",
            f0 - f + g
        );
    }
}
