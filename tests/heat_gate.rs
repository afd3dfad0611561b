//! The process limit T_max and the other heat rules, checked in every command that evaluates a
//! study (run, size, optimize, sweep, compare), on the bundled nitration tube
//! (networks/cooled_nitration_tube.yaml, demo values). One test per rule and command. The
//! reference for "exceeded" is the run's own hot spot, itself checked against scipy in
//! tests/heat_effects.rs; the rule under test is what each command does with it.

mod common;

use common::{network, num, rxnet};

fn study() -> String {
    network("cooled_nitration_tube.yaml")
        .to_str()
        .expect("UTF-8 path")
        .to_string()
}

/// `run`: a hot spot above T_max is reported with the result and exits 1; below it, exit 0
/// with the margin T_max − T_hot.
#[test]
fn run_reports_the_margin_and_exits_1_over_the_limit() {
    let p = study();
    let ok = rxnet(&["run", &p, "--format", "json"]).ok_json();
    let heat = &ok["heat"];
    let hot = num(&heat["hot_spot"]["temperature"], "hot spot");
    let margin = num(&heat["margin"], "margin");
    assert!((num(&heat["t_max"], "T_max") - hot - margin).abs() < 1e-9);
    assert!(margin > 0.0);

    let over = rxnet(&["run", &p, "--set", "reactor.heat.coolant.T=345 K"]);
    assert_eq!(over.code, 1, "{}", over.stderr);
    assert!(
        over.stderr.contains("T_max = 380 K is exceeded"),
        "{}",
        over.stderr
    );
    assert!(over.stdout.contains("IS EXCEEDED"), "{}", over.stdout);
    assert!(
        over.stdout.contains("process-safety review"),
        "{}",
        over.stdout
    );
}

/// `optimize` over the size: the search ends where T first reaches T_max, reported on the
/// process limit; over the coolant temperature: candidates over T_max are infeasible, and
/// the best one's hot spot is below the limit.
#[test]
fn optimize_treats_the_limit_as_a_constraint() {
    let p = study();
    let size = rxnet(&[
        "optimize",
        &p,
        "--maximize",
        "MNT",
        "--set",
        "reactor.T_max=335 K",
        "--format",
        "json",
    ]);
    let v = size.ok_json();
    let best = &v["best"];
    let bound = best["on_bound"]["reactor.volume"].as_str().unwrap_or("");
    assert_eq!(bound, "temperature-limit", "{v}");
    let hot = num(&v["run"]["heat"]["hot_spot"]["temperature"], "hot spot");
    assert!(
        (hot - 335.0).abs() < 1e-5,
        "hot spot at the optimum {hot} K"
    );

    let coolant = rxnet(&[
        "optimize",
        &p,
        "--maximize",
        "MNT",
        "--over",
        "reactor.heat.coolant.T",
        "--bounds",
        "300 K",
        "350 K",
        "--set",
        "reactor.T_max=340 K",
        "--format",
        "json",
    ]);
    let v = coolant.ok_json();
    let hot = num(&v["run"]["heat"]["hot_spot"]["temperature"], "hot spot");
    assert!(hot <= 340.0, "optimum over the limit: {hot} K");
}

/// `sweep`: points over the limit carry status `over T_max` and the T_out and T_hot columns;
/// they are results, not failures.
#[test]
fn sweep_marks_points_over_the_limit() {
    let p = study();
    let out = rxnet(&[
        "sweep",
        &p,
        "--vary",
        "reactor.heat.coolant.T=300 K:350 K:6",
    ]);
    assert_eq!(out.code, 0, "{}", out.stderr);
    let head: Vec<String> = out
        .stdout
        .lines()
        .next()
        .expect("a header")
        .split(',')
        .map(str::to_string)
        .collect();
    let hot_col = head
        .iter()
        .position(|h| h == "T_hot [K]")
        .expect("T_hot column");
    let status_col = head.iter().position(|h| h == "status").expect("status");
    let mut over = 0;
    for line in out.stdout.lines().skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        let hot: f64 = f[hot_col].parse().expect("a hot spot");
        let want = if hot > 380.0 { "over T_max" } else { "ok" };
        assert_eq!(f[status_col], want, "{line}");
        over += (want != "ok") as usize;
    }
    assert!(over >= 1, "the grid reaches runaway at the warm end");
}

/// `compare`: an entry over the limit is flagged beside its hot spot and ranked after the
/// entries within it, whatever its target value.
#[test]
fn compare_ranks_entries_over_the_limit_last() {
    let p = study();
    let hot = common::temp_study(
        "over_limit",
        &std::fs::read_to_string(&p)
            .unwrap()
            .replace("coolant: {T: 325 K}", "coolant: {T: 345 K}"),
    );
    let out = rxnet(&["compare", &p, hot.p(), "--format", "json"]);
    let v = out.ok_json();
    let rows = v["rows"].as_array().or_else(|| v.as_array()).expect("rows");
    let flags: Vec<bool> = rows
        .iter()
        .map(|r| r["over_limit"].as_bool().expect("over_limit"))
        .collect();
    assert_eq!(flags, vec![false, true], "{v}");
    let text = rxnet(&["compare", &p, hot.p()]);
    assert!(text.stdout.contains("> T_max"), "{}", text.stdout);
}

/// `size`: the size for a conversion of a non-isothermal tube is found along the same
/// integration as `run` (T a state), so running at that size gives the conversion.
#[test]
fn size_of_a_cooled_tube_reproduces_its_conversion() {
    let p = study();
    let s = rxnet(&["size", &p, "--conversion", "0.9", "--format", "json"]).ok_json();
    let v = num(&s["size"], "size");
    let run = rxnet(&[
        "run",
        &p,
        "--set",
        &format!("reactor.volume={v} m3"),
        "--format",
        "json",
    ])
    .ok_json();
    let x = num(&run["conversion"], "conversion");
    assert!((x - 0.9).abs() < 1e-7, "X at the size found: {x}");
}

/// A polynomial heat capacity used outside the range its coefficients hold over is
/// extrapolated with a warning naming the species, the temperature and where along the
/// reactor (the Shomate set of water vapour holds over 500–1700 K in the NIST WebBook, from
/// memory; here the tube starts at 450 K).
#[test]
fn heat_capacity_outside_its_range_is_warned_with_species_and_place() {
    let yaml = "name: steam heating (demo values)
phase: gas
species:
  H2O: {cp: {shomate: [30.092, 6.832514, 6.793435, -2.53448, 0.082139, -250.881, 223.3967, -241.8264], range: [500 K, 1700 K]}}
  A: {cp: 50 J/(mol*K)}
  B: {cp: 50 J/(mol*K)}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.05 1/s, dH: -30 kJ/mol}}
feed: {T: 450 K, P: 2 bar, flows: {H2O: 5 mol/s, A: 1 mol/s}}
reactor: {type: pfr, volume: 2 m3, heat: adiabatic}
";
    let f = common::temp_study("cp_range", yaml);
    let run = rxnet(&["run", f.p()]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("heat capacity of `H2O` is used outside its range 500..1700 K")
            && run.stderr.contains("T = 450.0 K at V = 0"),
        "{}",
        run.stderr
    );
    let json = rxnet(&["run", f.p(), "--format", "json"]).ok_json();
    let w = json["warnings"].as_array().expect("warnings");
    assert_eq!(w.len(), 1, "{json}");
}

/// `compare --heat`: the same study isothermal, adiabatic and as given, side by side. The
/// adiabatic entry's hot spot is T0 + ΔT_ad times what has reacted of the key in the first
/// step plus the heat of the second (here nearly all TOL ends as DNT, so T_hot ≈ T0 +
/// (−ΔH1 − ΔH2) C_TOL0 / c_v; first law, adiabatic; Fogler ch. 11, from memory), and a study
/// without heat data fails its adiabatic entry with the missing data named.
#[test]
fn compare_screens_heat_models_side_by_side() {
    let p = study();
    let v = rxnet(&[
        "compare",
        &p,
        "--heat",
        "isothermal,adiabatic,as-given",
        "--format",
        "json",
    ])
    .ok_json();
    let rows = v.as_array().expect("rows");
    let heat: Vec<&str> = rows.iter().map(|r| r["heat"].as_str().unwrap()).collect();
    assert_eq!(heat.len(), 3);
    for h in ["isothermal", "adiabatic", "heat exchange"] {
        assert!(heat.contains(&h), "{heat:?}");
    }
    let adiabatic = rows.iter().find(|r| r["heat"] == "adiabatic").unwrap();
    // C_TOL0 = 1500 mol/m3, c_v = 3.0 kJ/(kg K) × 1150 kg/m3, ΔH = −120 and −110 kJ/mol.
    let full = 330.0 + (120e3 + 110e3) * 1500.0 / (3.0e3 * 1150.0);
    let hot = num(&adiabatic["hot_spot"], "hot spot");
    let x_dnt = 1.0 - num(&adiabatic["yield_desired"], "yield");
    let expect = 330.0 + (120e3 + 110e3 * x_dnt) * 1500.0 / (3.0e3 * 1150.0);
    assert!(
        (hot - expect).abs() < 1e-6 * expect,
        "{hot} vs {expect} (all to DNT: {full})"
    );
    assert_eq!(adiabatic["over_limit"], true);

    let plain = network("aldehyde_oxidation_pfr.yaml");
    let out = rxnet(&[
        "compare",
        plain.to_str().unwrap(),
        "--heat",
        "isothermal,adiabatic",
        "--format",
        "json",
    ]);
    let v = out.json();
    let err = v
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["heat"] == "adiabatic")
        .and_then(|r| r["error"].as_str())
        .unwrap_or("");
    assert!(err.contains("heat capacity of `ROH`"), "{v}");
    let bad = rxnet(&["compare", &p, "--heat", "cooled"]);
    assert_eq!(bad.code, 2);
    assert!(
        bad.stderr.contains("--heat: unknown heat model"),
        "{}",
        bad.stderr
    );
}

/// The safety caution, one rule for every command that reports a result (common practice: a
/// screening figure for an exothermic system says so and defers to a process-safety review).
/// With an energy balance, the screening caution; isothermal with an exothermic reaction, the
/// reminder that the heat is assumed removed; neither for a network without a heat of
/// reaction. Text reports carry it as their last line and JSON reports as `caution`; a sweep's
/// rows are data, so the caution goes to standard error. `compare` shows the stronger one once.
#[test]
fn every_reporting_command_carries_the_safety_caution() {
    const BALANCE: &str = "caution: these temperatures are screening values";
    const ISOTHERMAL: &str = "caution: exothermic reactions; this isothermal result";
    let path = |f: &str| network(f).to_str().expect("UTF-8 path").to_string();
    // (study, an outlet amount to maximise, a volume range to sweep, the caution expected)
    let cases = [
        (study(), "MNT", "reactor.volume=1 m3:2 m3:2", Some(BALANCE)),
        (
            path("diene_hydrogenation.yaml"),
            "M",
            "reactor.volume=1 L:2 L:2",
            Some(ISOTHERMAL),
        ),
        (
            path("dimerization_cstr.yaml"),
            "R",
            "reactor.volume=1 m3:2 m3:2",
            None,
        ),
    ];
    for (file, amount, volumes, want) in &cases {
        let f = file.as_str();
        // (arguments, whether the caution goes to standard error)
        let commands: [(Vec<&str>, bool); 6] = [
            (vec!["run", f], false),
            (vec!["size", f, "--conversion", "0.5"], false),
            (vec!["optimize", f, "--maximize", amount], false),
            (vec!["sensitivity", f, "--target", "conversion"], false),
            (vec!["compare", f], false),
            (vec!["sweep", f, "--vary", volumes], true),
        ];
        for (args, on_stderr) in commands {
            let r = rxnet(&args);
            assert_eq!(r.code, 0, "{args:?}: {}", r.stderr);
            let (shown, other) = if on_stderr {
                (&r.stderr, &r.stdout)
            } else {
                (&r.stdout, &r.stderr)
            };
            let count = |s: &str| s.matches("caution:").count();
            match want {
                Some(c) => {
                    assert_eq!(count(shown), 1, "{args:?}: one caution:\n{shown}");
                    assert!(shown.contains(c), "{args:?}: `{c}` missing:\n{shown}");
                    assert_eq!(count(other), 0, "{args:?}:\n{other}");
                }
                None => assert_eq!(count(shown) + count(other), 0, "{args:?}:\n{shown}"),
            }
            // JSON reports carry it as `caution` (in `run` of size and optimize, per row of
            // compare); a sweep's JSON rows stay data.
            if !on_stderr {
                let mut json = args.clone();
                json.extend_from_slice(&["--format", "json"]);
                let r = rxnet(&json);
                assert_eq!(r.code, 0, "{json:?}: {}", r.stderr);
                let given = r.stdout.contains("\"caution\": \"caution: ");
                match want {
                    Some(c) => assert!(given && r.stdout.contains(c), "{json:?}:\n{}", r.stdout),
                    None => assert!(!given, "{json:?}:\n{}", r.stdout),
                }
            }
        }
    }
    // Isothermal and as given side by side: the stronger caution, once.
    let cooled = study();
    let r = rxnet(&["compare", &cooled, "--heat", "isothermal,as-given"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert_eq!(r.stdout.matches("caution:").count(), 1, "{}", r.stdout);
    assert!(r.stdout.contains(BALANCE), "{}", r.stdout);
    // Every model isothermal: the reminder.
    let r = rxnet(&["compare", &cooled, "--heat", "isothermal"]);
    assert!(r.stdout.contains(ISOTHERMAL), "{}", r.stdout);
    // A train whose tanks have an energy balance (the bundled cascade, exothermic and
    // adiabatic here): the train's report carries the screening caution, text and JSON.
    let cascade = std::fs::read_to_string(network("split_feed_cascade.yaml")).expect("cascade");
    let heat = "heat: {mixture_cp: 3.5 kJ/(kg*K), density: 900 kg/m3}";
    let yaml = cascade
        .replace("T_ref: 350 K}", "T_ref: 350 K, dH: -60 kJ/mol}")
        .replace(
            "{id: T1, type: cstr, volume: 0.8 m3}",
            &format!("{{id: T1, type: cstr, volume: 0.8 m3, {heat}}}"),
        )
        .replace("    type: cstr\n", &format!("    type: cstr\n    {heat}\n"));
    let f = common::temp_study("caution-train", &yaml);
    let r = rxnet(&["run", f.p()]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains(BALANCE), "{}", r.stdout);
    let r = rxnet(&["run", f.p(), "--format", "json"]);
    assert!(
        r.stdout.contains("\"caution\": \"caution: these"),
        "{}",
        r.stdout
    );
}
