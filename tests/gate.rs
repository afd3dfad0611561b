//! The evaluation gate's rules, each through the binary: impossible results are errors in
//! every command (run, sweep, optimize, compare). Closed forms are named beside each numeric
//! check; every study here is made of test values.

mod common;
use common::{rel_err, run_args, rxnet, write_temp};

/// A liquid PFR A -> B with r = k C_A^0.5: k = 0.02 (mol/m3)^0.5/s, C_A0 = 100 mol/m3,
/// v0 = 1 L/s. Half order: √C_A = √C_A0 − kτ/2 until C_A reaches 0 at τ* = 2√C_A0/k = 1000 s
/// (nth-order integrated form, Levenspiel ch. 3, from memory).
fn half_order(volume_l: f64, solver: &str) -> String {
    format!(
        "name: half-order exhaustion (test values)
phase: liquid
species: {{A: {{}}, B: {{}}}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: 0.02 (mol/m3)^0.5/s, orders: {{A: 0.5}}}}}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 0.1 mol/L}}}}
reactor: {{type: pfr, volume: {volume_l} L}}
key: A
desired: B
{solver}"
    )
}

fn outlet(run: &common::Run, species: &str) -> f64 {
    run.json()["outlet"][species]
        .as_f64()
        .unwrap_or_else(|| panic!("no outlet {species}: {}", run.stdout))
}

#[test]
fn tolerances_beyond_their_range_are_refused_in_the_file_and_on_the_command_line() {
    let study = half_order(500.0, "");
    // Command line: rtol above 1e-2, atol above 1e-3 of the feed (0.1 mol/s here).
    for (args, needle) in [
        (vec!["--rtol", "0.1"], "--rtol must lie in [1e-13, 1e-2]"),
        (vec!["--rtol", "1e-14"], "--rtol must lie in [1e-13, 1e-2]"),
        (
            vec!["--atol", "1e300"],
            "--atol must be positive and at most 1e-3",
        ),
    ] {
        let run = run_args("gate-tol-cli", &study, &args);
        assert_eq!(run.code, 2, "{args:?}: {}", run.stderr);
        assert!(run.stderr.contains(needle), "{args:?}: {}", run.stderr);
    }
    let path = write_temp("gate-tol-sweep", &study);
    let p = path.to_str().unwrap();
    let sweep = rxnet(&[
        "sweep",
        p,
        "--vary",
        "feed.T=300 K:310 K:2",
        "--rtol",
        "0.9",
    ]);
    assert_eq!(sweep.code, 2, "{}", sweep.stderr);
    let _ = std::fs::remove_file(&path);
    // Study file: the field is named.
    for (solver, field) in [
        ("solver: {rtol: 0.9}\n", "solver.rtol"),
        ("solver: {atol: 1e300 mol/s}\n", "solver.atol"),
    ] {
        let run = run_args("gate-tol-file", &half_order(500.0, solver), &[]);
        assert_eq!(run.code, 2, "{solver}: {}", run.stderr);
        assert!(run.stderr.contains(field), "{solver}: {}", run.stderr);
    }
}

#[test]
fn fractional_order_runs_out_without_negative_amounts_at_any_accepted_tolerance() {
    let total = 0.1; // F_T0, mol/s
    // Before exhaustion (τ = 500 s): C_A = (√100 − 0.02·500/2)² = 25 mol/m3, F_A = 0.025 mol/s.
    let run = run_args("gate-half", &half_order(500.0, ""), &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let fa = outlet(&run, "A");
    assert!(rel_err(fa, 0.025) < 1e-6, "F_A = {fa}, closed form 0.025");
    // Past exhaustion (τ = 2000 s > τ* = 1000 s): all A is gone, F_B = F_A0. At the defaults,
    // at the loosest accepted tolerances and in between, no amount is below −1e-7 F_T0 and
    // B closes the balance.
    for args in [
        vec![],
        vec!["--rtol", "1e-2", "--atol", "1e-4"],
        vec!["--rtol", "1e-4", "--atol", "1e-8"],
        vec!["--rtol", "1e-10", "--atol", "1e-14"],
    ] {
        let mut all = args.clone();
        all.extend(["--format", "json"]);
        let run = run_args("gate-half-out", &half_order(2000.0, ""), &all);
        assert_eq!(run.code, 0, "{args:?}: {}", run.stderr);
        let (fa, fb) = (outlet(&run, "A"), outlet(&run, "B"));
        assert!(
            fa > -1e-7 * total && fa < 1e-6 * total,
            "{args:?}: F_A = {fa}"
        );
        // Stoichiometry (common practice): F_B = F_A0 − F_A.
        assert!(rel_err(fb, total) < 1e-5, "{args:?}: F_B = {fb}");
    }
}

/// A + B -> 2 B (autocatalytic) and B -> C, with the key B: B is net produced.
const AUTOCATALYTIC: &str = "name: autocatalysis (test values)
phase: liquid
species: {A: {}, B: {}, C: {}}
reactions:
  - {id: grow, stoich: A + B -> 2 B, rate: {k: 1 L/(mol*s)}}
  - {id: decay, stoich: B -> C, rate: {k: 0.001 1/s}}
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L, B: 0.01 mol/L}}
reactor: {type: pfr, volume: 100 L}
key: B
desired: C
";

/// A -> P -> Q with much P fed: the \"product\" P is net consumed.
const FED_PRODUCT: &str = "name: fed product (test values)
phase: liquid
species: {A: {}, P: {}, Q: {}}
reactions:
  - {id: make, stoich: A -> P, rate: {k: 0.001 1/s}}
  - {id: lose, stoich: P -> Q, rate: {k: 0.01 1/s}}
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L, P: 5 mol/L}}
reactor: {type: pfr, volume: 100 L}
key: A
desired: P
";

#[test]
fn meaningless_yields_and_selectivities_are_not_defined_never_numbers() {
    let run = run_args("gate-auto", AUTOCATALYTIC, &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let j = run.json();
    assert!(j["conversion"].as_f64().unwrap() < 0.0, "B is net produced");
    assert!(j["yield"]["C"].is_null(), "{}", j["yield"]);
    let why = j["yield_not_defined"]["C"].as_str().unwrap();
    assert!(why.contains("net produced"), "{why}");
    let text = run_args("gate-auto-text", AUTOCATALYTIC, &[]);
    assert!(
        text.stdout
            .contains("yield of C on B: not defined (the key reactant `B` is net produced)"),
        "{}",
        text.stdout
    );

    let run = run_args("gate-fedp", FED_PRODUCT, &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let j = run.json();
    assert!(j["yield"]["P"].is_null() && j["yield_on_feed"]["P"].is_null());
    assert!(j["selectivity"]["Q"].is_null(), "{}", j["selectivity"]);
    assert!(
        j["selectivity_not_defined"]["Q"]
            .as_str()
            .unwrap()
            .contains("`P` is fed and net consumed")
    );
    // No negative yield or selectivity is printed as a number anywhere in the text.
    let text = run_args("gate-fedp-text", FED_PRODUCT, &[]);
    for line in text
        .stdout
        .lines()
        .filter(|l| l.contains("yield") || l.contains("selectivity"))
    {
        assert!(!line.contains(": -"), "negative figure: {line}");
    }
    assert!(
        text.stdout.contains("selectivity P/Q: not defined"),
        "{}",
        text.stdout
    );

    // As an optimisation target: the key's own yield, and a species no reaction makes.
    let path = write_temp("gate-target", FED_PRODUCT);
    let p = path.to_str().unwrap();
    let run = rxnet(&["optimize", p, "--maximize", "yield:A"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("key reactant"), "{}", run.stderr);
    let _ = std::fs::remove_file(&path);
}

/// A <=> B <=> C with A <=> C closing the cycle: K_AC = K_AB K_BC at 350 K (Wegscheider's
/// condition), but the heats disagree with Hess's law, so the K's agree at 350 K only.
const CYCLE: &str = "name: broken cycle off its reference temperature (test values)
phase: liquid
species: {A: {}, B: {}, C: {}}
reactions:
  - {id: ab, stoich: A <=> B, rate: {k: 0.01 1/s, K_eq: 2, dH: -10 kJ/mol, T_ref: 350 K}}
  - {id: bc, stoich: B <=> C, rate: {k: 0.01 1/s, K_eq: 3, dH: -10 kJ/mol, T_ref: 350 K}}
  - {id: ac, stoich: A <=> C, rate: {k: 0.01 1/s, K_eq: 6, dH: -40 kJ/mol, T_ref: 350 K}}
feed: {T: 350 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
desired: C
";

#[test]
fn sweep_optimize_and_compare_apply_every_check_run_applies() {
    let path = write_temp("gate-cycle", CYCLE);
    let p = path.to_str().unwrap();
    // run refuses the study at 360 K.
    let run = rxnet(&["run", p, "--set", "feed.T=360 K"]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    assert!(run.stderr.contains("Wegscheider"), "{}", run.stderr);
    // sweep: the point at 350 K is ok, the others failed with the same finding.
    let sweep = rxnet(&["sweep", p, "--vary", "feed.T=340 K:360 K:3"]);
    assert_eq!(sweep.code, 0, "{}", sweep.stderr);
    let rows: Vec<&str> = sweep.stdout.lines().skip(1).collect();
    assert!(rows[1].contains(",ok,"), "{}", sweep.stdout);
    for k in [0, 2] {
        assert!(
            rows[k].contains(",failed,") && rows[k].contains("Wegscheider"),
            "{}",
            rows[k]
        );
    }
    assert!(
        sweep.stderr.contains("2 of 3 points failed"),
        "{}",
        sweep.stderr
    );
    // optimize over T: the only point run accepts is 350 K, so the optimum is there (without
    // the gate the optimiser returned the inconsistent lower bound, 340 K).
    let opt = rxnet(&[
        "optimize",
        p,
        "--maximize",
        "C",
        "--over",
        "feed.T",
        "--bounds",
        "340 K",
        "360 K",
    ]);
    assert_eq!(opt.code, 0, "{}", opt.stderr);
    assert!(opt.stdout.contains("best feed.T = 350 K"), "{}", opt.stdout);
    // Its neighbours fail the check, so it is the edge of the valid region, not a maximum
    // whose slope changes sign.
    assert!(
        opt.stdout.contains("edge of the valid region") && !opt.stdout.contains("interior"),
        "{}",
        opt.stdout
    );
    // compare: a study inconsistent at its own temperature is refused, not ranked.
    let hot = write_temp(
        "gate-cycle-hot",
        &CYCLE.replace("T: 350 K, vol", "T: 360 K, vol"),
    );
    let cmp = rxnet(&["compare", hot.to_str().unwrap()]);
    assert_eq!(cmp.code, 1, "{}", cmp.stdout);
    assert!(cmp.stderr.contains("error findings"), "{}", cmp.stderr);
    // A key that is not fed: an error at that point, never a conversion of NaN.
    let sweep = rxnet(&[
        "sweep",
        p,
        "--vary",
        "feed.concentrations.A=0 mol/L:1 mol/L:2",
        "--set",
        "feed.concentrations.B=1 mol/L",
    ]);
    assert!(!sweep.stdout.contains("NaN"), "{}", sweep.stdout);
    let first = sweep.stdout.lines().nth(1).unwrap_or_default();
    assert!(
        first.contains(",failed,") && first.contains("not fed"),
        "{}",
        sweep.stdout
    );
    for f in [&path, &hot] {
        let _ = std::fs::remove_file(f);
    }
}

#[test]
fn a_sweep_whose_every_point_failed_exits_1_and_draws_no_plot() {
    let path = write_temp("gate-allfail", CYCLE);
    let p = path.to_str().unwrap();
    let svg = std::env::temp_dir().join(format!("rxnet-gate-allfail-{}.svg", std::process::id()));
    let run = rxnet(&[
        "sweep",
        p,
        "--vary",
        "feed.T=360 K:380 K:3",
        "--plot",
        svg.to_str().unwrap(),
    ]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    assert!(
        run.stderr.contains("every point of the sweep failed"),
        "{}",
        run.stderr
    );
    assert!(!svg.exists(), "a plot was drawn");
    // The CSV still carries each error, and the count for machine readers.
    assert_eq!(run.stdout.matches(",failed,").count(), 3, "{}", run.stdout);
    assert!(
        run.stdout.ends_with("# failed: 3 of 3 points\n"),
        "{}",
        run.stdout
    );
    let _ = std::fs::remove_file(&path);
}

#[test]
fn the_same_path_varied_twice_is_refused() {
    let path = write_temp("gate-twice", CYCLE);
    let p = path.to_str().unwrap();
    let run = rxnet(&[
        "sweep",
        p,
        "--vary",
        "feed.T=340 K:350 K:2",
        "--vary",
        "feed.T=345 K:355 K:2",
    ]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("already varied"), "{}", run.stderr);
    assert!(run.stdout.is_empty());
    let _ = std::fs::remove_file(&path);
}

#[test]
fn run_repeats_the_warnings_that_bear_on_the_result() {
    // r2 needs C, never fed nor formed; r3 has an order on E, an unfed product never formed.
    let study = "name: dead reactions (test values)
phase: liquid
species: {A: {}, B: {}, C: {}, D: {}, E: {}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.1 1/s}}
  - {id: r2, stoich: C + D -> E, rate: {k: 0.1 L/(mol*s)}}
  - {id: r3, stoich: A -> D, rate: {k: 0.1 L/(mol*s), orders: {A: 1, E: 1}}}
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L, D: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
";
    let run = run_args("gate-warn", study, &[]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    for needle in [
        "warning:",
        "reaction `r2` can never run",
        "reaction `r3` can never run",
    ] {
        assert!(run.stderr.contains(needle), "{needle}: {}", run.stderr);
    }
}

#[test]
fn values_the_loader_accepts_are_never_refused_by_the_integrator() {
    // The tightest rtol the file accepts runs; the next decade down is refused at load.
    let run = run_args(
        "gate-rtol-min",
        &half_order(500.0, "solver: {rtol: 1e-13}\n"),
        &[],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let run = run_args(
        "gate-rtol-below",
        &half_order(500.0, "solver: {rtol: 1e-14}\n"),
        &[],
    );
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("solver.rtol"), "{}", run.stderr);
    // A batch of 1e-300 s: first order at constant volume, X = 1 − e^(−kt) ≈ kt (Levenspiel
    // ch. 3, from memory), so X is 1e-301 here; what matters is a result, not an internal error.
    let batch = "name: tiny batch (test values)
phase: liquid
species: {A: {}, B: {}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.1 1/s}}
feed: {T: 300 K, amounts: {A: 1 mol}}
reactor: {type: batch, volume: 1 L, time: 1e-300 s}
key: A
";
    let run = run_args("gate-batch-tiny", batch, &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let x = run.json()["conversion"].as_f64().unwrap();
    assert!((0.0..=1e-299).contains(&x), "X = {x}");
}

/// A liquid PFR A -> B (first order) with A a trace in a solvent: F_A0 = 1e-3 mol/s against
/// 10 mol/s of S, kτ = ln 1e4 so that 99.99 % of A is converted.
#[test]
fn default_atol_resolves_a_trace_at_9999_percent_conversion() {
    let k = 0.01;
    let tau = 1e4_f64.ln() / k; // s; v0 = 1 L/s so V = τ L
    let study = format!(
        "name: trace reactant in a solvent (test values)
phase: liquid
species: {{A: {{}}, B: {{}}, S: {{}}}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {k} 1/s}}}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1e-3 mol/L, S: 10 mol/L}}}}
reactor: {{type: pfr, volume: {tau} L}}
key: A
"
    );
    let run = run_args("gate-trace", &study, &["--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    // First-order PFR: C_A = C_A0 e^(−kτ) (Levenspiel ch. 5).
    let want = 1e-3 * (-k * tau).exp();
    let got = outlet(&run, "A");
    assert!(
        rel_err(got, want) < 1e-6,
        "F_A = {got:e}, closed form {want:e}, rel {:e}",
        rel_err(got, want)
    );
}

/// Rows stream out a chunk at a time: across chunk boundaries the rows stay in point order,
/// and the output does not depend on how the points were chunked (shards chunk different
/// points together; merged and sorted they equal the whole sweep byte for byte).
#[test]
fn streamed_sweep_rows_are_in_order_and_independent_of_chunking() {
    let study = "name: streamed sweep (test values)
phase: liquid
species: {A: {}, B: {}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.01 1/s}}
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
desired: B
";
    let path = write_temp("gate-stream", study);
    let p = path.to_str().unwrap();
    let vary = ["--vary", "reactor.volume=1 L:100 L:2100"];
    let whole = rxnet(&["sweep", p, vary[0], vary[1]]);
    assert_eq!(whole.code, 0, "{}", whole.stderr);
    let lines: Vec<&str> = whole.stdout.lines().collect();
    assert_eq!(lines.len(), 2101);
    for (i, l) in lines[1..].iter().enumerate() {
        assert!(l.starts_with(&format!("{i},")), "row {i} out of order: {l}");
    }
    // A row past the first chunk equals a single run at its volume: first-order PFR,
    // X = 1 − e^(−kτ) (Levenspiel ch. 5).
    let row: Vec<&str> = lines[1 + 1500].split(',').collect();
    let v_l: f64 = row[1].parse().unwrap();
    let x: f64 = row[3].parse().unwrap();
    assert!(
        rel_err(x, 1.0 - (-0.01 * v_l).exp()) < 1e-7,
        "X = {x} at {v_l} L"
    );
    let mut merged: Vec<String> = Vec::new();
    for k in 1..=3 {
        let s = format!("{k}/3");
        let part = rxnet(&["sweep", p, vary[0], vary[1], "--shard", &s]);
        assert_eq!(part.code, 0, "{}", part.stderr);
        merged.extend(
            part.stdout
                .lines()
                .filter(|l| !l.starts_with("point") && !l.starts_with('#'))
                .map(String::from),
        );
    }
    merged.sort_by_key(|l| l.split(',').next().unwrap().parse::<usize>().unwrap());
    assert_eq!(merged.join("\n"), lines[1..].join("\n"));
    // JSON rows streamed one by one are the bytes of the whole array pretty-printed at once
    // (what the command wrote before it streamed).
    let js = rxnet(&["sweep", p, vary[0], vary[1], "--format", "json"]);
    assert_eq!(js.code, 0, "{}", js.stderr);
    // (serde_json's default float parser may be one ulp off, so the layout is compared with
    // the digits of numbers removed; the values are compared with the CSV in tests/studies.rs.)
    let whole = serde_json::to_string_pretty(&js.json()).unwrap() + "\n";
    let layout = |t: &str| -> String {
        t.chars()
            .filter(|c| !"0123456789.-+eE".contains(*c))
            .collect()
    };
    assert!(
        layout(&whole) == layout(&js.stdout),
        "streamed JSON differs from the pretty-printed array"
    );
    assert_eq!(js.json().as_array().unwrap().len(), 2100);
    let _ = std::fs::remove_file(&path);
}
