//! The CSTR with an energy balance: every steady state, its stability, ignition and extinction,
//! the adiabatic relation, the plot, bad input, and the design studies that search over the
//! volume. Every check runs the `rxnet` binary, as a user would. The scipy fixture is
//! tests/reference/cstr_heat.json, written by tests/reference/cstr_heat.py (command and versions
//! inside it).

mod common;

use common::{num, rel_err, run_args, rxnet, write_temp};

/// The liquid A -> B CSTR with three steady states (demo values; the fixture's
/// `liquid_three_states`).
const THREE: &str = "name: exothermic first-order CSTR with three steady states (demo values)
phase: liquid
species:
  A: {cp: 150 J/(mol*K)}
  B: {cp: 150 J/(mol*K)}
  W: {cp: 75 J/(mol*K)}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.01 1/s, Ea: 100 kJ/mol, T_ref: 330 K, dH: -200 kJ/mol}}
feed: {T: 295 K, volumetric: 10 L/s, concentrations: {A: 2 mol/L, W: 50 mol/L}}
reactor:
  type: cstr
  volume: 1 m3
  heat: {UA: 20 kW/K, coolant: {T: 305 K}}
";

/// A cooled gas A -> 2 B CSTR with ΔCp ≠ 0 (demo values; the fixture's `gas_cooled`).
const GAS: &str = "name: cooled gas CSTR (demo values)
phase: gas
species:
  A: {cp: 80 J/(mol*K)}
  B: {cp: 50 J/(mol*K)}
  N2: {cp: 30 J/(mol*K)}
reactions:
  - {id: r1, stoich: A -> 2 B, rate: {k: 0.5 1/s, Ea: 120 kJ/mol, T_ref: 600 K, dH: -80 kJ/mol}}
feed: {T: 550 K, P: 2 bar, flows: {A: 1 mol/s, N2: 4 mol/s}}
reactor:
  type: cstr
  volume: 0.5 m3
  heat: {UA: 500 W/K, coolant: {T: 560 K}}
";

fn fixture() -> serde_json::Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/cstr_heat.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).expect("fixture")).expect("fixture JSON")
}

fn states(j: &serde_json::Value) -> Vec<serde_json::Value> {
    j["steady_states"]["states"]
        .as_array()
        .expect("steady states")
        .clone()
}

#[test]
fn three_steady_states_match_a_scipy_enumeration() {
    let j = run_args("three", THREE, &["--format", "json"]).ok_json();
    let got = states(&j);
    let want = fixture()["liquid_three_states"]["states"]
        .as_array()
        .unwrap()
        .clone();
    assert_eq!(got.len(), 3, "{j}");
    assert_eq!(want.len(), 3);
    for (g, w) in got.iter().zip(&want) {
        // Fine T scan + brentq of G(T) = R(T), tests/reference/cstr_heat.py (scipy fixture)
        let t = num(&g["temperature"], "T");
        let tw = num(&w["temperature"], "T");
        assert!((t - tw).abs() < 1e-8, "T = {t}, scipy {tw}");
        let x = num(&g["conversion"], "X");
        let xw = num(&w["conversion"], "X");
        assert!((x - xw).abs() < 1e-10, "X = {x}, scipy {xw}");
        // Eigenvalues of the transient (F_A, T) Jacobian, numpy.linalg.eigvals (same fixture)
        let ev = num(&g["max_eigenvalue_real_per_s"], "eigenvalue");
        let evw = num(&w["max_eigenvalue_real"], "eigenvalue");
        assert!(rel_err(ev, evw) < 1e-6, "max Re λ = {ev}, numpy {evw}");
    }
    // The middle state of three is unstable, the outer two stable (van Heerden, Ind. Eng.
    // Chem. 45, 1953, from memory)
    let stable: Vec<bool> = got.iter().map(|s| s["stable"].as_bool().unwrap()).collect();
    assert_eq!(stable, [true, false, true]);
    // The report shows the lowest by default, with its temperature
    let shown = j["steady_states"]["shown"].as_u64().unwrap();
    assert_eq!(shown, 1);
    let tout = num(&j["heat"]["outlet_temperature"], "outlet T");
    assert!((tout - num(&want[0]["temperature"], "T")).abs() < 1e-8);
}

#[test]
fn highest_steady_state_is_shown_on_request() {
    let j = run_args(
        "three-hi",
        THREE,
        &["--format", "json", "--steady-state", "highest"],
    )
    .ok_json();
    let want = &fixture()["liquid_three_states"]["states"][2];
    // Fine T scan + brentq, tests/reference/cstr_heat.py (scipy fixture)
    let x = num(&j["conversion"], "X");
    assert!((x - num(&want["conversion"], "X")).abs() < 1e-10, "X = {x}");
    let t = num(&j["heat"]["outlet_temperature"], "T");
    assert!((t - num(&want["temperature"], "T")).abs() < 1e-8, "T = {t}");
}

#[test]
fn ignition_and_extinction_match_the_scipy_turning_points() {
    let j = run_args("three-tp", THREE, &["--format", "json"]).ok_json();
    let tp = &j["steady_states"]["turning_points"];
    let want = fixture()["liquid_three_states"]["turning_points"]
        .as_array()
        .unwrap()
        .clone();
    assert_eq!(want.len(), 2);
    for w in &want {
        let kind = w["kind"].as_str().unwrap();
        for (parameter, key) in [
            ("feed_T", "feed_temperature"),
            ("coolant_T", "coolant_temperature"),
        ] {
            // Zeros of dG/dT − dR/dT by brentq, T0(T) and Ta(T) from the balance,
            // tests/reference/cstr_heat.py (scipy fixture)
            let v = num(&tp[parameter][kind], "value");
            let vw = num(&w[key], "value");
            assert!(
                (v - vw).abs() < 1e-6,
                "{kind} {parameter}: {v} K, scipy {vw} K"
            );
            let points = tp[parameter]["points"].as_array().expect("points");
            assert_eq!(points.len(), 2, "{points:?}");
            let g = points
                .iter()
                .find(|g| g["kind"] == kind)
                .unwrap_or_else(|| panic!("no {kind} along {parameter}: {points:?}"));
            assert!((num(&g["value_k"], "value") - vw).abs() < 1e-6);
            let tr = num(&g["reactor_temperature_k"], "T");
            let trw = num(&w["reactor_temperature"], "T");
            assert!(
                (tr - trw).abs() < 1e-6,
                "{kind}: reactor T {tr}, scipy {trw}"
            );
            let x = num(&g["conversion"], "X");
            assert!(
                (x - num(&w["conversion"], "X")).abs() < 1e-8,
                "{kind}: X {x}"
            );
        }
    }
    // The text report names them too.
    let text = run_args("three-text", THREE, &[]);
    assert_eq!(text.code, 0, "{}", text.stderr);
    assert!(
        text.stdout
            .contains("ignition at feed temperature 305.139 K"),
        "{}",
        text.stdout
    );
    assert!(
        text.stdout
            .contains("extinction at coolant temperature 280.208 K"),
        "{}",
        text.stdout
    );
}

#[test]
fn gas_cstr_with_heat_capacity_change_matches_scipy() {
    let j = run_args("gas", GAS, &["--format", "json"]).ok_json();
    let got = states(&j);
    let want = fixture()["gas_cooled"]["states"]
        .as_array()
        .unwrap()
        .clone();
    assert_eq!(got.len(), want.len(), "{j}");
    for (g, w) in got.iter().zip(&want) {
        // Isothermal gas CSTR at each T by brentq in X, C_A = P/(RT) F_A/F_T, Kirchhoff ΔH(T);
        // T scan + brentq, tests/reference/cstr_heat.py (scipy fixture)
        let t = num(&g["temperature"], "T");
        assert!((t - num(&w["temperature"], "T")).abs() < 1e-7, "T = {t}");
        let x = num(&g["conversion"], "X");
        assert!((x - num(&w["conversion"], "X")).abs() < 1e-9, "X = {x}");
    }
}

/// An adiabatic liquid A -> B CSTR (demo values) with cp_B as given.
fn adiabatic(cp_b: &str, heat: &str) -> String {
    format!(
        "name: adiabatic CSTR (demo values)
phase: liquid
species:
  A: {{cp: 150 J/(mol*K)}}
  B: {{cp: {cp_b}}}
  W: {{cp: 75 J/(mol*K)}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: 0.002 1/s, Ea: 60 kJ/mol, T_ref: 330 K, dH: -100 kJ/mol}}}}
feed: {{T: 320 K, volumetric: 10 L/s, concentrations: {{A: 2 mol/L, W: 50 mol/L}}}}
reactor: {{type: cstr, volume: 1 m3, heat: {heat}}}
"
    )
}

#[test]
fn adiabatic_cstr_rises_by_the_adiabatic_rise_times_conversion() {
    let j = run_args(
        "adiabatic",
        &adiabatic("150 J/(mol*K)", "adiabatic"),
        &["--format", "json"],
    )
    .ok_json();
    // ΔT_ad = F_A0 (−ΔH) / Σ F_j0 Cp_j = 20 × 100e3 / (20 × 150 + 500 × 75) K
    let dt_ad = 20.0 * 100e3 / (20.0 * 150.0 + 500.0 * 75.0);
    let all = states(&j);
    assert!(!all.is_empty());
    for s in &all {
        let t = num(&s["temperature"], "T");
        let x = num(&s["conversion"], "X");
        // T − T0 = ΔT_ad X, the adiabatic energy balance with ΔCp = 0 (Fogler ch. 11,
        // Levenspiel ch. 9, from memory)
        assert!(
            (t - 320.0 - dt_ad * x).abs() < 1e-8,
            "T − T0 = {}, ΔT_ad X = {}",
            t - 320.0,
            dt_ad * x
        );
        assert!(x > 0.01, "the check needs some conversion: X = {x}");
    }
}

#[test]
fn adiabatic_cstr_with_heat_capacity_change_follows_kirchhoff() {
    let j = run_args(
        "adiabatic-dcp",
        &adiabatic("120 J/(mol*K)", "adiabatic"),
        &["--format", "json"],
    )
    .ok_json();
    for s in &states(&j) {
        let t = num(&s["temperature"], "T");
        let x = num(&s["conversion"], "X");
        // X = Σ_j F_j0 ∫_{T0}^{T} Cp_j dT / (F_A0 (−ΔH(T))), ΔH(T) = ΔH(T_ref) + ΔCp (T − T_ref)
        // (Kirchhoff; Fogler ch. 11, Levenspiel ch. 9, from memory)
        let sensible = (20.0 * 150.0 + 500.0 * 75.0) * (t - 320.0);
        let dh = -100e3 + (120.0 - 150.0) * (t - 330.0);
        let want = sensible / (20.0 * -dh);
        assert!((x - want).abs() < 1e-10, "X = {x}, energy balance {want}");
    }
}

#[test]
fn adiabatic_cstr_with_a_mixture_heat_capacity() {
    // c_v = 4 MJ/(m3 K), v0 = 0.01 m3/s: the feed takes c_v v0 = 40 kW/K.
    let j = run_args(
        "adiabatic-mix",
        &adiabatic("150 J/(mol*K)", "{mixture_cp: 4 MJ/(m3*K)}"),
        &["--format", "json"],
    )
    .ok_json();
    let dt_ad = 20.0 * 100e3 / (4e6 * 0.01);
    for s in &states(&j) {
        let t = num(&s["temperature"], "T");
        let x = num(&s["conversion"], "X");
        // T − T0 = ΔT_ad X with ΔT_ad = F_A0 (−ΔH)/(c_v v0) (Fogler ch. 11, from memory)
        assert!((t - 320.0 - dt_ad * x).abs() < 1e-8, "T = {t}, X = {x}");
    }
}

#[test]
fn plot_draws_heat_generated_and_removed_with_the_states() {
    let svg = std::env::temp_dir().join(format!("rxnet-cstr-heat-{}.svg", std::process::id()));
    let run = run_args("three-plot", THREE, &["--plot", svg.to_str().unwrap()]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let text = std::fs::read_to_string(&svg).expect("the plot is written");
    let _ = std::fs::remove_file(&svg);
    assert!(text.starts_with("<svg"), "not an SVG");
    assert!(text.contains("heat generated G(T)"));
    assert!(text.contains("heat removed R(T)"));
    assert!(text.contains("reactor temperature T [K]"));
    for label in ["1: T = 299.987 K", "2: T = 328.356 K", "3: T = 361.852 K"] {
        assert!(text.contains(label), "no mark `{label}`");
    }
    assert!(text.contains("unstable"));
}

#[test]
fn a_coolant_stream_on_a_cstr_is_refused_at_load() {
    let study = THREE.replace(
        "coolant: {T: 305 K}",
        "coolant: {T_in: 300 K, mass_flow: 2 kg/s, cp: 4.18 kJ/(kg*K), direction: co_current}",
    );
    let run = run_args("stream-cstr", &study, &[]);
    // Bad input: exit 2, the field named (project rule)
    assert_eq!(run.code, 2, "{}\n{}", run.stdout, run.stderr);
    assert!(
        run.stderr.contains("reactor.heat.coolant"),
        "{}",
        run.stderr
    );
    // file:line:column of the coolant map
    assert!(run.stderr.contains(".yaml:13:"), "{}", run.stderr);
}

#[test]
fn a_jacket_ramp_on_a_cstr_is_refused_at_load() {
    let study = THREE.replace(
        "coolant: {T: 305 K}",
        "coolant: {T: 300 K, ramp: 1 K/min, T_final: 330 K}",
    );
    let run = run_args("ramp-cstr", &study, &[]);
    // Bad input: exit 2, the field named (project rule)
    assert_eq!(run.code, 2, "{}\n{}", run.stdout, run.stderr);
    assert!(
        run.stderr.contains("reactor.heat.coolant"),
        "{}",
        run.stderr
    );
}

/// `rxnet COMMAND FILE ARGS...` on a study given as text.
fn command(cmd: &str, tag: &str, study: &str, args: &[&str]) -> common::Run {
    let path = write_temp(tag, study);
    let mut all = vec![cmd, path.to_str().unwrap()];
    all.extend_from_slice(args);
    let run = rxnet(&all);
    let _ = std::fs::remove_file(&path);
    run
}

#[test]
fn size_refuses_a_cstr_with_an_energy_balance() {
    // The conversion of a non-isothermal CSTR is not monotone in V (it jumps at ignition), so a
    // bisection on V could return a size on a branch the vessel does not hold: refused.
    let run = command("size", "size-heat", THREE, &["--conversion", "0.5"]);
    assert_eq!(run.code, 2, "{}\n{}", run.stdout, run.stderr);
    assert!(run.stderr.contains("energy balance"), "{}", run.stderr);
}

#[test]
fn the_volume_optimum_refuses_a_cstr_with_an_energy_balance() {
    let run = command("optimize", "opt-heat", THREE, &["--maximize", "conversion"]);
    assert_eq!(run.code, 2, "{}\n{}", run.stdout, run.stderr);
    assert!(run.stderr.contains("energy balance"), "{}", run.stderr);
}

#[test]
fn compare_screens_a_cooled_tube_as_a_tank_with_every_steady_state_searched() {
    // A tube's U·a per volume becomes U·A = U·a·V in a tank of the same volume, so the PFR
    // version of the study screened as a CSTR is THREE itself, and its row is the lowest
    // steady state of the scipy enumeration.
    let pfr = THREE
        .replace("type: cstr", "type: pfr")
        .replace("UA: 20 kW/K", "UA: 20 kW/(m3*K)");
    let run = command(
        "compare",
        "compare-heat",
        &pfr,
        &["--reactors", "pfr,cstr", "--format", "json"],
    );
    let j = run.ok_json();
    let rows = j.as_array().expect("rows");
    let cstr = rows
        .iter()
        .find(|r| r["reactor"] == "cstr")
        .expect("a cstr row");
    assert!(cstr["error"].is_null(), "{cstr}");
    let want = &fixture()["liquid_three_states"]["states"][0];
    // Fine T scan + brentq, tests/reference/cstr_heat.py (scipy fixture)
    let x = num(&cstr["conversion"], "X");
    assert!((x - num(&want["conversion"], "X")).abs() < 1e-10, "X = {x}");
}

#[test]
fn sweep_over_the_coolant_temperature_follows_the_chosen_state() {
    // Each point is a full steady-state search: below the ignition coolant temperature
    // (325.532 K, scipy fixture) the lowest state is the cold one, above it only the hot one
    // remains and the conversion jumps.
    let run = command(
        "sweep",
        "sweep-heat",
        THREE,
        &[
            "--vary",
            "reactor.heat.coolant.T=320 K:330 K:3",
            "--format",
            "json",
        ],
    );
    let j = run.ok_json();
    let points = j
        .as_array()
        .or_else(|| j["points"].as_array())
        .expect("points")
        .clone();
    assert_eq!(points.len(), 3, "{j}");
    let conv: Vec<f64> = points
        .iter()
        .map(|p| {
            let v = if p["conversion"].is_number() {
                &p["conversion"]
            } else {
                &p["values"]["conversion"]
            };
            num(v, "conversion")
        })
        .collect();
    // The same answers as `run` at each coolant temperature.
    for (k, ta) in ["320 K", "325 K", "330 K"].iter().enumerate() {
        let set = format!("reactor.heat.coolant.T={ta}");
        let r = run_args("sweep-run", THREE, &["--format", "json", "--set", &set]).ok_json();
        let x = num(&r["conversion"], "X");
        assert!(
            (conv[k] - x).abs() < 1e-12,
            "Ta = {ta}: sweep {}, run {x}",
            conv[k]
        );
    }
    assert!(conv[1] < 0.2 && conv[2] > 0.9, "{conv:?}");
}

#[test]
fn a_hotter_state_above_t_max_is_named_when_a_cooler_one_is_shown() {
    // States at 299.99, 328.36 and 361.85 K (scipy fixture); T_max = 340 K lies between.
    let study = THREE.replace("  volume: 1 m3\n", "  volume: 1 m3\n  T_max: 340 K\n");
    let run = run_args("three-tmax", &study, &[]);
    // The shown (lowest) state is within the limit: exit 0, with a warning that names the
    // ignited state over it (the safety rule of the project: no silent hazard).
    assert_eq!(run.code, 0, "{}\n{}", run.stdout, run.stderr);
    assert!(
        run.stderr.contains("steady state 3 (T = 361.85 K") && run.stderr.contains("T_max"),
        "{}",
        run.stderr
    );
}
