//! Bad study files: each must be refused with exit code 2, without a panic, and with a
//! message on stderr that names the field (path) and/or the offending text.

mod common;

use common::{Run, line_of, run_study, rxnet};

/// A valid liquid-phase study; every bad study below is this one with one fault.
const BASE: &str = "name: base study (demo values)
phase: liquid
species:
  A: {formula: C2H4}
  B: {formula: H2}
  C: {formula: C2H6}
  N2: {formula: N2}
reactions:
  - id: r1
    stoich: A + B -> C
    rate:
      k: 1.0e-3 m3/(mol*s)
      Ea: 30 kJ/mol
feed:
  T: 300 K
  volumetric: 1 L/s
  flows: {A: 1 mol/s, B: 2 mol/s}
reactor:
  type: pfr
  volume: 1 m3
";

/// A valid gas-phase batch study.
const BATCH: &str = "name: gas batch (demo values)
phase: gas
species: {A: null, B: null}
reactions:
  - id: r1
    stoich: A -> 2 B
    rate: {k: 0.01 1/s}
feed:
  T: 400 K
  P: 1 bar
  amounts: {A: 30.0695 mol}
reactor:
  type: batch
  volume: 1 m3
  time: 10 min
";

/// `base` with `from` replaced by `to`; `from` must occur exactly once.
fn with(base: &str, from: &str, to: &str) -> String {
    assert_eq!(
        base.matches(from).count(),
        1,
        "`{from}` must occur once in the base study"
    );
    base.replace(from, to)
}

/// Run `check` on a study and require a clean refusal naming every word in `words`.
fn refused(tag: &str, yaml: &str, words: &[&str]) -> Run {
    let run = run_study("check", tag, yaml, "text");
    assert_eq!(
        run.code, 2,
        "{tag}: exit code; stderr:\n{}\nstdout:\n{}",
        run.stderr, run.stdout
    );
    assert!(
        !run.stderr.contains("panicked"),
        "{tag}: panic:\n{}",
        run.stderr
    );
    assert!(
        run.stdout.is_empty(),
        "{tag}: no report for an invalid file:\n{}",
        run.stdout
    );
    assert!(run.stderr.starts_with("error: "), "{tag}: {}", run.stderr);
    for w in words {
        assert!(
            run.stderr.contains(w),
            "{tag}: stderr lacks `{w}`:\n{}",
            run.stderr
        );
    }
    // `table` refuses the same file in the same way.
    let t = run_study("table", tag, yaml, "json");
    assert_eq!(t.code, 2, "{tag}: table exit code; {}", t.stderr);
    assert!(
        !t.stderr.contains("panicked"),
        "{tag}: table panic:\n{}",
        t.stderr
    );
    run
}

/// `:LINE:` as printed after the file name.
fn at_line(n: usize) -> String {
    format!(":{n}:")
}

#[test]
fn the_base_studies_are_valid() {
    for (tag, y) in [("base", BASE), ("batch", BATCH)] {
        let run = run_study("check", tag, y, "text");
        assert_eq!(run.code, 0, "{tag}: {}", run.stderr);
    }
}

// --- species names

#[test]
fn unknown_species_in_stoich_suggests_a_close_name() {
    let y = with(BASE, "stoich: A + B -> C", "stoich: A + BB -> C");
    let run = refused(
        "stoich_typo",
        &y,
        &[
            "reactions[0].stoich",
            "unknown species `BB`",
            "did you mean `B`?",
        ],
    );
    // The error points at the line of the offending field.
    assert!(
        run.stderr.contains(&at_line(line_of(&y, "stoich:"))),
        "{}",
        run.stderr
    );
}

#[test]
fn unknown_species_in_stoich_without_a_close_name() {
    let y = with(BASE, "stoich: A + B -> C", "stoich: A + Xylene -> C");
    refused(
        "stoich_unknown",
        &y,
        &[
            "reactions[0].stoich",
            "unknown species `Xylene`",
            "species:",
        ],
    );
}

#[test]
fn unknown_species_on_a_later_line_reports_that_line() {
    // A second reaction pushes the faulty stoich down; the line must follow it.
    let y = with(
        BASE,
        "feed:\n",
        "  - id: r2\n    stoich: C -> A + Bq\n    rate: {k: 0.1 1/s}\nfeed:\n",
    );
    let n = line_of(&y, "stoich: C -> A + Bq");
    let run = refused(
        "stoich_line",
        &y,
        &["reactions[1].stoich", "`Bq`", "did you mean `B`?"],
    );
    assert!(
        run.stderr.contains(&at_line(n)),
        "expected line {n}:\n{}",
        run.stderr
    );
}

#[test]
fn unknown_species_in_flows() {
    let y = with(
        BASE,
        "flows: {A: 1 mol/s, B: 2 mol/s}",
        "flows: {A: 1 mol/s, Q: 2 mol/s}",
    );
    let run = refused(
        "flows_unknown",
        &y,
        &["feed.flows.Q", "unknown species `Q`"],
    );
    assert!(
        run.stderr.contains(&at_line(line_of(&y, "flows:"))),
        "{}",
        run.stderr
    );
}

#[test]
fn unknown_species_in_orders() {
    let y = with(
        BASE,
        "      Ea: 30 kJ/mol\n",
        "      Ea: 30 kJ/mol\n      orders: {A: 1, b: 1}\n",
    );
    refused(
        "orders_unknown",
        &y,
        &[
            "reactions[0].rate.orders.b",
            "unknown species `b`",
            "did you mean `B`?",
        ],
    );
}

#[test]
fn bad_formula() {
    let y = with(BASE, "formula: C2H6", "formula: C2Hx6");
    refused(
        "formula",
        &y,
        &["species.C.formula", "bad formula `C2Hx6`", "`Hx`"],
    );
}

// --- rate constants and equilibrium constants

#[test]
fn bare_number_for_k() {
    let y = with(BASE, "k: 1.0e-3 m3/(mol*s)", "k: 0.001");
    refused(
        "k_bare",
        &y,
        &[
            "reactions[0].rate.k",
            "bare number 0.001 needs a unit",
            "m3/(mol*s) (volume per amount and time",
        ],
    );
}

#[test]
fn bare_number_hint_is_a_usable_quantity() {
    // The hint must be a quantity that parses: the given number with a unit, not the number
    // followed by the whole example quantity.
    let y = with(BASE, "k: 1.0e-3 m3/(mol*s)", "k: 0.001");
    let run = refused("k_bare_hint", &y, &["reactions[0].rate.k"]);
    let hint = run
        .stderr
        .split("e.g. \"")
        .nth(1)
        .and_then(|h| h.split('"').next())
        .unwrap_or_else(|| panic!("no quoted example:\n{}", run.stderr));
    let unit = hint
        .strip_prefix("0.001 ")
        .unwrap_or_else(|| panic!("hint `{hint}` does not start with the value"));
    assert!(
        !unit.starts_with(|c: char| c.is_ascii_digit() || c == '.' || c == '-'),
        "hint `{hint}` holds two numbers"
    );
}

#[test]
fn first_order_units_for_a_second_order_step() {
    // Default orders are the reactant coefficients: A + B is second order, so
    // [k] = (mol/m3)^(1−2)/s = m3/(mol s) (common practice), not 1/s.
    let y = with(BASE, "k: 1.0e-3 m3/(mol*s)", "k: 0.5 1/s");
    refused(
        "k_dims",
        &y,
        &[
            "reactions[0].rate.k",
            "wrong dimensions",
            "total order 2",
            "got 1/s (per time, a first-order rate constant)",
        ],
    );
}

#[test]
fn negative_k() {
    let y = with(BASE, "k: 1.0e-3 m3/(mol*s)", "k: -1.0e-3 m3/(mol*s)");
    refused(
        "k_negative",
        &y,
        &["reactions[0].rate.k", "cannot be negative"],
    );
}

#[test]
fn k_eq_with_wrong_dimensions_for_a_mole_change() {
    // A + B <=> C: Σν = −1, so K_c = C_C/(C_A C_B) has (mol/m3)^-1 (common practice).
    let y = with(BASE, "stoich: A + B -> C", "stoich: A + B <=> C");
    let y = with(
        &y,
        "      Ea: 30 kJ/mol\n",
        "      Ea: 30 kJ/mol\n      K_eq: 3 mol/m3\n",
    );
    refused(
        "keq_dims",
        &y,
        &["reactions[0].rate.K_eq", "wrong dimensions", "Σν = -1"],
    );
    let y2 = y.replace("K_eq: 3 mol/m3", "K_eq: 3");
    refused("keq_bare", &y2, &["reactions[0].rate.K_eq", "needs a unit"]);
}

#[test]
fn k_eq_on_a_one_way_reaction() {
    let y = with(
        BASE,
        "      Ea: 30 kJ/mol\n",
        "      Ea: 30 kJ/mol\n      K_eq: 3 m3/mol\n",
    );
    refused(
        "keq_oneway",
        &y,
        &["reactions[0].rate.K_eq", "one-way reaction", "<=>"],
    );
}

#[test]
fn reversible_without_k_eq() {
    let y = with(BASE, "stoich: A + B -> C", "stoich: A + B <=> C");
    refused("rev_no_keq", &y, &["reactions[0].rate", "needs `K_eq`"]);
}

#[test]
fn hyperbolic_law_without_adsorption() {
    let y = with(
        BASE,
        "      Ea: 30 kJ/mol\n",
        "      Ea: 30 kJ/mol\n      law: hyperbolic\n",
    );
    refused("hyperbolic", &y, &["reactions[0].rate", "adsorption"]);
}

// --- equations

#[test]
fn equation_without_an_arrow() {
    let y = with(BASE, "stoich: A + B -> C", "stoich: A + B C");
    refused(
        "no_arrow",
        &y,
        &["reactions[0].stoich", "`A + B C`", "no reaction arrow"],
    );
}

#[test]
fn equation_with_a_fat_arrow() {
    let y = with(BASE, "stoich: A + B -> C", "stoich: A + B => C");
    refused(
        "fat_arrow",
        &y,
        &["reactions[0].stoich", "unknown arrow `=>`"],
    );
}

#[test]
fn equation_with_two_arrows() {
    let y = with(BASE, "stoich: A + B -> C", "stoich: A -> B -> C");
    refused(
        "two_arrows",
        &y,
        &["reactions[0].stoich", "more than one arrow"],
    );
}

#[test]
fn equation_with_an_empty_side() {
    let y = with(BASE, "stoich: A + B -> C", "stoich: A + B ->");
    refused(
        "empty_products",
        &y,
        &["reactions[0].stoich", "product side is empty"],
    );
    let y = with(BASE, "stoich: A + B -> C", "stoich: \"-> C\"");
    refused(
        "empty_reactants",
        &y,
        &["reactions[0].stoich", "reactant side is empty"],
    );
}

#[test]
fn equation_with_a_dangling_plus() {
    let y = with(BASE, "stoich: A + B -> C", "stoich: A + + B -> C");
    refused("dangling_plus", &y, &["reactions[0].stoich", "empty term"]);
}

#[test]
fn duplicate_reaction_ids() {
    let y = with(
        BASE,
        "feed:\n",
        "  - id: r1\n    stoich: C -> A + B\n    rate: {k: 0.1 1/s}\nfeed:\n",
    );
    let run = refused(
        "dup_id",
        &y,
        &["reactions[1].id", "duplicate reaction id `r1`"],
    );
    // The error points at the second `id: r1`.
    let n = y
        .lines()
        .enumerate()
        .filter(|(_, l)| l.contains("id: r1"))
        .nth(1)
        .expect("two ids")
        .0
        + 1;
    assert!(
        run.stderr.contains(&at_line(n)),
        "expected line {n}:\n{}",
        run.stderr
    );
}

// --- YAML and keys

#[test]
fn yaml_syntax_error_shows_its_line() {
    let y = with(BASE, "  T: 300 K\n", "  T: 300 K: 4\n");
    let n = line_of(&y, "T: 300 K: 4");
    let run = refused("yaml", &y, &["not valid YAML"]);
    assert!(
        run.stderr.contains(&at_line(n)),
        "expected line {n}:\n{}",
        run.stderr
    );
}

#[test]
fn unknown_top_level_key_suggests_the_right_one() {
    let y = format!("{BASE}desird: C\n");
    let run = refused(
        "top_key",
        &y,
        &["desird", "unknown field", "did you mean `desired`?"],
    );
    assert!(
        run.stderr.contains(&at_line(line_of(&y, "desird"))),
        "{}",
        run.stderr
    );
}

#[test]
fn unknown_nested_key_suggests_the_right_one() {
    let y = with(BASE, "  volume: 1 m3", "  volum: 1 m3");
    refused(
        "nested_key",
        &y,
        &["reactor.volum", "did you mean `volume`?"],
    );
    let y = with(BASE, "      Ea: 30 kJ/mol", "      ea: 30 kJ/mol");
    refused(
        "rate_key",
        &y,
        &["reactions[0].rate", "`ea`", "did you mean `Ea`?"],
    );
}

#[test]
fn missing_feed() {
    let start = BASE.find("feed:\n").unwrap();
    let end = BASE.find("reactor:\n").unwrap();
    let y = format!("{}{}", &BASE[..start], &BASE[end..]);
    refused("no_feed", &y, &["missing field `feed`"]);
}

#[test]
fn missing_phase() {
    let y = with(BASE, "phase: liquid\n", "");
    refused("no_phase", &y, &["phase"]);
}

// --- feed

#[test]
fn negative_feed_flow() {
    let y = with(BASE, "B: 2 mol/s", "B: -2 mol/s");
    refused("negative_flow", &y, &["feed.flows.B", "cannot be negative"]);
}

#[test]
fn empty_feed() {
    let y = with(
        BASE,
        "flows: {A: 1 mol/s, B: 2 mol/s}",
        "flows: {A: 0 mol/s, B: 0 mol/s}",
    );
    refused("empty_feed", &y, &["feed.flows", "the feed is empty"]);
}

#[test]
fn liquid_flows_without_volumetric() {
    let y = with(BASE, "  volumetric: 1 L/s\n", "");
    refused("no_volumetric", &y, &["feed", "needs `volumetric`"]);
}

#[test]
fn amounts_in_a_flow_reactor() {
    let y = with(
        BASE,
        "flows: {A: 1 mol/s, B: 2 mol/s}",
        "amounts: {A: 1 mol}",
    );
    refused("amounts_flow", &y, &["feed.amounts", "batch"]);
}

#[test]
fn gas_without_pressure() {
    let y = with(BASE, "phase: liquid", "phase: gas");
    let y = with(&y, "  volumetric: 1 L/s\n", "");
    refused("gas_no_p", &y, &["feed", "pressure `P`"]);
}

#[test]
fn gas_concentrations_inconsistent_with_ideal_gas() {
    // P/(R T) at 1 bar and 300 K is about 40.1 mol/m3 (ideal gas law; CODATA 2018 R);
    // 1 mol/L = 1000 mol/m3 cannot be a gas at these conditions.
    let y = with(BASE, "phase: liquid", "phase: gas");
    let y = with(&y, "  T: 300 K\n", "  T: 300 K\n  P: 1 bar\n");
    let y = with(
        &y,
        "flows: {A: 1 mol/s, B: 2 mol/s}",
        "concentrations: {A: 0.5 mol/L, B: 0.5 mol/L}",
    );
    refused("gas_conc", &y, &["feed.concentrations", "P0/(R T0)"]);
}

#[test]
fn gas_volumetric_inconsistent_with_flows() {
    // v0 = F_T0 R T0 / P0 = 3 × 8.314 × 300 / 1e5 ≈ 0.0748 m3/s (ideal gas law), not 1 L/s.
    let y = with(BASE, "phase: liquid", "phase: gas");
    let y = with(&y, "  T: 300 K\n", "  T: 300 K\n  P: 1 bar\n");
    refused("gas_v0", &y, &["feed.volumetric", "ideal gas"]);
}

// --- units

#[test]
fn unknown_unit_suggests_a_known_one() {
    let y = with(BASE, "A: 1 mol/s,", "A: 2 mol/sec,");
    refused(
        "unit",
        &y,
        &["feed.flows.A", "unknown unit `sec`", "did you mean `s`?"],
    );
}

#[test]
fn deg_c_in_a_compound_unit() {
    let y = with(
        BASE,
        "      Ea: 30 kJ/mol\n",
        "      Ea: 30 kJ/mol\n      T_ref: 2 degC/min\n",
    );
    refused(
        "degc",
        &y,
        &["reactions[0].rate.T_ref", "degC", "only accepted alone"],
    );
}

#[test]
fn wrong_dimensions_for_a_temperature() {
    let y = with(BASE, "  T: 300 K", "  T: 300 bar");
    refused("t_dims", &y, &["feed.T", "wrong dimensions", "temperature"]);
}

// --- reactor

#[test]
fn unknown_reactor_type() {
    let y = with(BASE, "type: pfr", "type: pipe");
    refused(
        "reactor_type",
        &y,
        &["reactor.type", "`pipe`", "pfr", "pbr", "cstr", "batch"],
    );
}

#[test]
fn pbr_without_catalyst() {
    let y = with(BASE, "  type: pfr\n  volume: 1 m3\n", "  type: pbr\n");
    refused("pbr_no_cat", &y, &["reactor", "needs `catalyst`"]);
}

#[test]
fn pfr_with_catalyst() {
    let y = with(
        BASE,
        "  volume: 1 m3\n",
        "  volume: 1 m3\n  catalyst: 3 kg\n",
    );
    refused(
        "pfr_cat",
        &y,
        &["reactor.catalyst", "does not apply to a pfr"],
    );
}

#[test]
fn pfr_with_pressure_drop() {
    let y = with(
        BASE,
        "  volume: 1 m3\n",
        "  volume: 1 m3\n  pressure_drop: {alpha: 0.001 1/kg}\n",
    );
    refused(
        "pfr_dp",
        &y,
        &["reactor.pressure_drop", "does not apply to a pfr"],
    );
}

#[test]
fn batch_without_time() {
    let y = with(BATCH, "  time: 10 min\n", "");
    refused("batch_no_time", &y, &["reactor", "needs `time`"]);
}

#[test]
fn batch_charged_with_flows() {
    let y = with(BATCH, "amounts: {A: 30.0695 mol}", "flows: {A: 1 mol/s}");
    refused("batch_flows", &y, &["feed.flows", "charged, not fed"]);
}

#[test]
fn gas_batch_charge_that_does_not_fit_the_vessel() {
    // N R T / P = 300 × 8.314 × 400 / 1e5 ≈ 10 m3 (ideal gas law), not 1 m3.
    let y = with(BATCH, "amounts: {A: 30.0695 mol}", "amounts: {A: 300 mol}");
    refused("batch_fit", &y, &["feed.P", "does not fit the vessel"]);
}

// --- files

#[test]
fn nonexistent_file() {
    let path = std::env::temp_dir().join(format!("rxnet-test-missing-{}.yaml", std::process::id()));
    let p = path.to_str().unwrap();
    for cmd in ["check", "table"] {
        let run = rxnet(&[cmd, p]);
        assert_eq!(run.code, 2, "{}", run.stderr);
        assert!(!run.stderr.contains("panicked"));
        assert!(
            run.stderr.contains(p) && run.stderr.contains("cannot read the file"),
            "{}",
            run.stderr
        );
    }
}

#[test]
fn empty_file() {
    refused("empty", "", &["the file is empty"]);
    refused("blank", "\n# only a comment\n\n", &["the file is empty"]);
}

#[test]
fn errors_name_file_line_and_column() {
    // Form: `error: FILE:LINE:COL: field `PATH`: message`.
    let y = with(BASE, "k: 1.0e-3 m3/(mol*s)", "k: 0.5 1/s");
    let path = common::write_temp("format", &y);
    let p = path.to_str().unwrap();
    let run = rxnet(&["check", p]);
    let _ = std::fs::remove_file(&path);
    assert_eq!(run.code, 2);
    let n = line_of(&y, "k: 0.5 1/s");
    let col = y.lines().nth(n - 1).unwrap().find('k').unwrap() + 1;
    let want = format!("error: {p}:{n}:{col}: field `reactions[0].rate.k`: ");
    assert!(
        run.stderr.starts_with(&want),
        "expected `{want}`:\n{}",
        run.stderr
    );
}

#[test]
fn unknown_linear_algebra_is_refused_with_the_choices() {
    let y = format!("{BASE}solver:\n  linear_algebra: lapack\n");
    let run = refused(
        "linear_algebra",
        &y,
        &[
            "solver.linear_algebra",
            "unknown linear algebra `lapack`",
            "auto, dense, sparse, krylov",
        ],
    );
    assert!(
        run.stderr
            .contains(&at_line(line_of(&y, "linear_algebra:"))),
        "{}",
        run.stderr
    );
    // Each named choice loads and gives the same outlet as the default to the tolerance.
    let base = rxnet(&[
        "run",
        common::write_temp("la_auto", BASE).to_str().unwrap(),
        "--format",
        "json",
    ]);
    assert_eq!(base.code, 0, "{}", base.stderr);
    let a0 = base.json()["outlet"]["C"].as_f64().unwrap();
    for la in ["auto", "dense", "sparse", "krylov"] {
        let y = format!("{BASE}solver:\n  linear_algebra: {la}\n");
        let path = common::write_temp(&format!("la_{la}"), &y);
        let run = rxnet(&["run", path.to_str().unwrap(), "--format", "json"]);
        assert_eq!(run.code, 0, "{la}: {}", run.stderr);
        let c = run.json()["outlet"]["C"].as_f64().unwrap();
        assert!((c - a0).abs() <= 1e-7 * a0, "{la}: {c} against {a0}");
    }
}

// ---------------------------------------------------------------------------------------
// reactor.heat and reactor.T_max

/// [`BASE`] with an energy balance: species Cp, the reaction's ΔH, and `heat` as given.
fn heated(heat: &str) -> String {
    let s = with(
        BASE,
        "      Ea: 30 kJ/mol\n",
        "      Ea: 30 kJ/mol\n      dH: -120 kJ/mol\n",
    );
    let s = with(
        &s,
        "  A: {formula: C2H4}\n  B: {formula: H2}\n  C: {formula: C2H6}\n",
        "  A: {formula: C2H4, cp: 60 J/(mol*K)}\n  B: {formula: H2, cp: 29 J/(mol*K)}\n  C: {formula: C2H6, cp: 70 J/(mol*K)}\n",
    );
    with(&s, "  volume: 1 m3\n", &format!("  volume: 1 m3\n{heat}"))
}

#[test]
fn heat_inputs_are_refused_with_the_field() {
    // Each: (tag, study, words the message must hold). The valid heated study loads first.
    let ok = run_study(
        "check",
        "heat_ok",
        &heated("  heat: adiabatic\n  T_max: 500 K\n"),
        "text",
    );
    assert_eq!(ok.code, 0, "{}", ok.stderr);
    let cases: Vec<(&str, String, Vec<&str>)> = vec![
        (
            "heat_word",
            heated("  heat: cooled\n"),
            vec!["reactor.heat", "unknown heat model `cooled`"],
        ),
        (
            "heat_u_alone",
            heated("  heat: {U: 300 W/(m2*K), coolant: {T: 300 K}}\n"),
            vec!["reactor.heat", "both `U` and `area`"],
        ),
        (
            "heat_area_dims",
            heated("  heat: {U: 300 W/(m2*K), area: 4 m2, coolant: {T: 300 K}}\n"),
            vec!["reactor.heat.area", "per reactor volume"],
        ),
        (
            "heat_no_coolant",
            heated("  heat: {UA: 2 kW/(m3*K)}\n"),
            vec!["reactor.heat", "needs the `coolant`"],
        ),
        (
            "heat_ramp_on_tube",
            heated(
                "  heat: {UA: 2 kW/(m3*K), coolant: {T: 300 K, ramp: 1 K/min, T_final: 320 K}}\n",
            ),
            vec!["reactor.heat.coolant.ramp", "batch jacket"],
        ),
        (
            "heat_stream_direction",
            heated(
                "  heat: {UA: 2 kW/(m3*K), coolant: {T_in: 300 K, mass_flow: 1 kg/s, cp: 4 kJ/(kg*K)}}\n",
            ),
            vec!["reactor.heat.coolant", "`direction`"],
        ),
        (
            "heat_mixture_cp_gas",
            with(
                &heated("  heat: {mixture_cp: 3 kJ/(kg*K), density: 900 kg/m3}\n"),
                "phase: liquid\n",
                "phase: gas\n",
            )
            .replace("  T: 300 K\n", "  T: 300 K\n  P: 2 bar\n")
            .replace("  volumetric: 1 L/s\n", ""),
            vec!["reactor.heat.mixture_cp", "liquids"],
        ),
        (
            "heat_mixture_cp_no_density",
            heated("  heat: {mixture_cp: 3 kJ/(kg*K)}\n"),
            vec!["reactor.heat.mixture_cp", "density"],
        ),
        (
            "heat_no_dh",
            heated("  heat: adiabatic\n").replace("      dH: -120 kJ/mol\n", ""),
            vec![
                "reactor.heat",
                "heat of reaction of `r1`",
                "reactions[0].rate.dH",
            ],
        ),
        (
            "heat_no_cp",
            heated("  heat: adiabatic\n").replace("C2H6, cp: 70 J/(mol*K)}", "C2H6}"),
            vec!["reactor.heat", "heat capacity of `C`", "species.C.cp"],
        ),
        (
            "heat_t_max_units",
            heated("  heat: adiabatic\n  T_max: 500 bar\n"),
            vec!["reactor.T_max", "temperature"],
        ),
    ];
    for (tag, yaml, words) in &cases {
        let run = refused(tag, yaml, words);
        // The message points at the file.
        assert!(run.stderr.contains(".yaml"), "{tag}: {}", run.stderr);
    }
    // A coolant stream on a tank.
    let tank = heated("  heat: {UA: 2 kW/K, coolant: {T_in: 300 K, mass_flow: 1 kg/s, cp: 4 kJ/(kg*K), direction: co_current}}\n")
        .replace("  type: pfr\n", "  type: cstr\n");
    refused(
        "heat_stream_tank",
        &tank,
        &["reactor.heat.coolant", "for a tube"],
    );
}
