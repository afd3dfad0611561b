//! What engineers look for in a run's report, through the binary, against closed forms:
//! the outlet volumetric flow of a gas, the final volume and pressure of a batch, the bed
//! constant α of a packed bed, the instantaneous selectivity along the profile (CSV, JSON and
//! text), and leaving species out of `--plot`. All studies are test values.

mod common;

use common::{Agreement, Run, num, read_csv, rxnet, write_temp};

/// Gas constant, J/(mol K): CODATA 2018, R = N_A k_B, exact in the 2019 SI
/// (6.02214076e23 × 1.380649e-23).
const R: f64 = 8.314_462_618_153_24;

fn run_args(tag: &str, yaml: &str, args: &[&str]) -> Run {
    let path = write_temp(tag, yaml);
    let mut all = vec!["run", path.to_str().expect("UTF-8 path")];
    all.extend_from_slice(args);
    let run = rxnet(&all);
    let _ = std::fs::remove_file(&path);
    run
}

fn column(header: &[String], name: &str) -> usize {
    header
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column `{name}` in {header:?}"))
}

/// First-order A -> 2 B in a gas, half inert: δ = 1, y_A0 = 0.5, ε = y_A0 δ = 0.5 (common
/// practice).
fn expanding_gas(reactor: &str, feed: &str) -> String {
    format!(
        "name: expanding gas (test values)
phase: gas
species: {{A: null, B: null, I: null}}
reactions:
  - {{id: r1, stoich: A -> 2 B, rate: {{k: 2 1/s}}}}
feed: {feed}
reactor: {reactor}
key: A
"
    )
}

#[test]
fn gas_pfr_outlet_volumetric_flow_follows_the_expansion() {
    // Isothermal, isobaric gas PFR: v = v0 (1 + ε X) (Levenspiel ch. 5, from memory), and
    // v0 = F_T0 R T0 / P0 (ideal gas, CODATA R).
    let (t0, p0, f_t0, eps) = (400.0, 2.0e5, 2.0, 0.5);
    let yaml = expanding_gas(
        "{type: pfr, volume: 30 L}",
        "{T: 400 K, P: 2 bar, flows: {A: 1 mol/s, I: 1 mol/s}}",
    );
    let v = (run_args(
        "pfr-v",
        &yaml,
        &["--format", "json", "--points", "11", "--rtol", "1e-10"],
    ))
    .ok_json();
    let v0 = f_t0 * R * t0 / p0;
    let mut a = Agreement::new("gas PFR v = v0 (1 + εX) (Levenspiel ch. 5)");
    a.check(
        num(&v["inlet_volumetric_flow"], "v0"),
        v0,
        1e-12,
        "inlet v0",
    );
    let x = num(&v["conversion"], "X");
    assert!(x > 0.3 && x < 0.99, "a conversion worth checking: {x}");
    a.check(
        num(&v["outlet_volumetric_flow"], "v"),
        v0 * (1.0 + eps * x),
        1e-9,
        "outlet",
    );
    for p in v["profile"].as_array().expect("a profile") {
        let fa = num(&p["state"]["A"], "F_A");
        let xk = 1.0 - fa / 1.0;
        a.check(
            num(&p["volumetric_flow"], "v"),
            v0 * (1.0 + eps * xk),
            1e-9,
            &format!("V = {}", p["x"]),
        );
    }
    // The same in the CSV profile, column `v [m3/s]`.
    let run = run_args(
        "pfr-v-csv",
        &yaml,
        &["--format", "csv", "--points", "5", "--rtol", "1e-10"],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let (header, rows) = read_csv(&run.stdout);
    let (ca, cv) = (column(&header, "A [mol/s]"), column(&header, "v [m3/s]"));
    for r in &rows {
        let xk = 1.0 - r[ca].expect("F_A");
        a.check(r[cv].expect("v"), v0 * (1.0 + eps * xk), 1e-9, "CSV row");
    }
    a.report();
    // The text report gives both flows in L/s.
    let run = run_args("pfr-v-text", &yaml, &[]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stdout.contains("v_in = ") && run.stdout.contains("v_out = "),
        "{}",
        run.stdout
    );
}

#[test]
fn liquid_cstr_outlet_volumetric_flow_is_the_inlet_one() {
    // Constant density: v = v0 (common practice).
    let yaml = "name: liquid cstr (test values)
phase: liquid
species: {A: null, B: null}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.1 1/s}}
feed: {T: 300 K, volumetric: 3 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: cstr, volume: 20 L}
";
    let v = (run_args("cstr-v", yaml, &["--format", "json"])).ok_json();
    let mut a = Agreement::new("liquid CSTR v = v0 (common practice)");
    a.check(num(&v["outlet_volumetric_flow"], "v"), 3e-3, 1e-12, "v");
    a.report();
    assert!(
        v["final_volume"].is_null(),
        "a flow reactor has no final volume"
    );
    assert!(v["ergun_alpha"].is_null(), "no bed");
}

#[test]
fn constant_volume_gas_batch_reports_its_final_pressure() {
    // P = N_T R T / V (ideal gas, CODATA R). With A -> 2 B, N_T = N_T0 + N_A0 X
    // (stoichiometric table, common practice). The charge: 0.5 mol A + 0.5 mol I in 41.57 L
    // at 500 K is P0 = N_T0 R T / V ≈ 1 bar.
    let (t, vol, n_a0, n_t0) = (500.0, 41.57e-3, 0.5, 1.0);
    let p0 = n_t0 * R * t / vol;
    let yaml = expanding_gas(
        "{type: batch, volume: 41.57 L, time: 0.5 s}",
        &format!("{{T: 500 K, P: {p0} Pa, amounts: {{A: 0.5 mol, I: 0.5 mol}}}}"),
    );
    let v = (run_args(
        "batch-p",
        &yaml,
        &["--format", "json", "--points", "6", "--rtol", "1e-10"],
    ))
    .ok_json();
    let mut a = Agreement::new("constant-volume gas batch P = N_T R T / V (CODATA R)");
    let x = num(&v["conversion"], "X");
    assert!(x > 0.3, "the pressure must rise visibly: X = {x}");
    let p_end = num(&v["outlet_pressure"], "P_end");
    a.check(p_end, (n_t0 + n_a0 * x) * R * t / vol, 1e-9, "P at the end");
    assert!(p_end > 1.3 * p0, "the pressure rose from {p0} to {p_end}");
    a.check(num(&v["final_volume"], "V"), vol, 1e-12, "V = V0");
    for p in v["profile"].as_array().expect("a profile") {
        let n_t: f64 = ["A", "B", "I"]
            .iter()
            .map(|s| num(&p["state"][s], "N"))
            .sum();
        a.check(
            num(&p["pressure"], "P"),
            n_t * R * t / vol,
            1e-12,
            &format!("t = {}", p["x"]),
        );
    }
    a.report();
    let run = run_args("batch-p-text", &yaml, &[]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(run.stdout.contains("P_end = "), "{}", run.stdout);
}

#[test]
fn constant_pressure_gas_batch_reports_its_final_volume() {
    // V = N_T R T / P0 (ideal gas, CODATA R), N_T = N_T0 + N_A0 X (common practice).
    let (t, p0, n_a0, n_t0) = (450.0, 3.0e5, 0.5, 1.0);
    let yaml = expanding_gas(
        "{type: batch, mode: constant_pressure, time: 0.5 s}",
        "{T: 450 K, P: 3 bar, amounts: {A: 0.5 mol, I: 0.5 mol}}",
    );
    let v = (run_args("batch-v", &yaml, &["--format", "json", "--rtol", "1e-10"])).ok_json();
    let mut a = Agreement::new("constant-pressure gas batch V = N_T R T / P0 (CODATA R)");
    let x = num(&v["conversion"], "X");
    a.check(
        num(&v["initial_volume"], "V0"),
        n_t0 * R * t / p0,
        1e-12,
        "V0",
    );
    a.check(
        num(&v["final_volume"], "V"),
        (n_t0 + n_a0 * x) * R * t / p0,
        1e-9,
        "V at the end",
    );
    a.check(num(&v["outlet_pressure"], "P"), p0, 1e-15, "P = P0");
    a.report();
}

#[test]
fn packed_bed_reports_the_ergun_alpha_it_used() {
    // α = 2 β0 / (A_c (1 − φ) ρ_c P0), β0 = G (1 − φ)/(ρ0 D_p φ³) [150 (1 − φ) μ / D_p + 1.75 G],
    // G = ṁ / A_c, ρ0 = P0 M̄ / (R T0) (Ergun, Chem. Eng. Prog. 48, 1952; lumped form of
    // common practice, as in docs/methods.md), computed here from the bed data.
    let yaml = "name: ergun bed (test values)
phase: gas
species:
  A: {molar_mass: 28 g/mol}
  B: {molar_mass: 28 g/mol}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 1e-4 m3/(kg*s)}}
feed: {T: 500 K, P: 10 bar, flows: {A: 0.5 mol/s}}
reactor:
  type: pbr
  catalyst: 5 kg
  pressure_drop: {particle_diameter: 3 mm, void_fraction: 0.45, cross_section: 0.01 m2, viscosity: 2.5e-5 Pa*s, solid_density: 2000 kg/m3}
key: A
";
    let (t0, p0, dp, phi, ac, mu, rho_c): (f64, f64, f64, f64, f64, f64, f64) =
        (500.0, 1.0e6, 3e-3, 0.45, 0.01, 2.5e-5, 2000.0);
    let m_dot = 0.5 * 0.028;
    let rho0 = p0 * 0.028 / (R * t0);
    let g = m_dot / ac;
    let beta0 =
        g * (1.0 - phi) / (rho0 * dp * phi.powi(3)) * (150.0 * (1.0 - phi) * mu / dp + 1.75 * g);
    let alpha = 2.0 * beta0 / (ac * (1.0 - phi) * rho_c * p0);
    let v = (run_args("ergun", yaml, &["--format", "json", "--rtol", "1e-10"])).ok_json();
    let mut a = Agreement::new("Ergun bed constant α (Ergun 1952, docs/methods.md)");
    a.check(num(&v["ergun_alpha"], "α"), alpha, 1e-12, "α");
    // No mole change: P/P0 = (1 − αW)^(1/2) (common practice, from memory), and the gas
    // volumetric flow then grows as v = v0 P0/P (ideal gas).
    let w = 5.0;
    let p = num(&v["outlet_pressure"], "P");
    a.check(p / p0, (1.0 - alpha * w).sqrt(), 1e-6, "P/P0");
    a.check(
        num(&v["outlet_volumetric_flow"], "v"),
        0.5 * R * t0 / p,
        1e-9,
        "v = F_T R T / P",
    );
    a.report();
    let run = run_args("ergun-text", yaml, &[]);
    assert!(run.stdout.contains("bed constant α = "), "{}", run.stdout);
}

/// A -> B, A -> C, A -> D, all first order in A (test values).
const PARALLEL: &str = "name: parallel first order (test values)
phase: liquid
species: {A: null, B: null, C: null, D: null}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.3 1/s}}
  - {id: r2, stoich: A -> C, rate: {k: 0.1 1/s}}
  - {id: r3, stoich: A -> D, rate: {k: 0.05 1/s}}
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
desired: B
";

#[test]
fn instantaneous_selectivity_is_in_every_profile() {
    // Parallel reactions of equal order: R_B/R_C = k1/k2 at every point (Levenspiel ch. 7,
    // from memory); over all by-products R_B/(R_C + R_D) = k1/(k2 + k3).
    let (k1, k2, k3) = (0.3, 0.1, 0.05);
    let mut a =
        Agreement::new("instantaneous selectivity of parallel reactions (Levenspiel ch. 7)");
    let run = run_args("sinst-csv", PARALLEL, &["--format", "csv", "--points", "6"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let (header, rows) = read_csv(&run.stdout);
    let (sc, sd, sall) = (
        column(&header, "S_inst B/C [-]"),
        column(&header, "S_inst B/D [-]"),
        column(&header, "S_inst B/all [-]"),
    );
    assert_eq!(rows.len(), 6);
    for r in &rows {
        a.check(r[sc].expect("B/C"), k1 / k2, 1e-12, "CSV B/C");
        a.check(r[sd].expect("B/D"), k1 / k3, 1e-12, "CSV B/D");
        a.check(r[sall].expect("B/all"), k1 / (k2 + k3), 1e-12, "CSV B/all");
    }
    let v = (run_args(
        "sinst-json",
        PARALLEL,
        &["--format", "json", "--points", "4"],
    ))
    .ok_json();
    for p in v["profile"].as_array().expect("a profile") {
        a.check(
            num(&p["instantaneous_selectivity_over_all"], "B/all"),
            k1 / (k2 + k3),
            1e-12,
            "JSON B/all",
        );
    }
    a.report();
    // The text report shows the profile, with the selectivities, when points are asked for.
    let run = run_args("sinst-text", PARALLEL, &["--points", "3"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let t = &run.stdout;
    assert!(t.contains("profile (3 points)"), "{t}");
    assert!(
        t.contains("S_inst B/C") && t.contains("S_inst B/all"),
        "{t}"
    );
    let row = t
        .lines()
        .skip_while(|l| !l.contains("S_inst B/C"))
        .nth(1)
        .expect("a profile row");
    assert!(
        row.trim_end().ends_with("2"),
        "B/all = 0.3/0.15 = 2: `{row}`"
    );
    // Without --points the table stays short.
    let run = run_args("sinst-none", PARALLEL, &[]);
    assert!(!run.stdout.contains("profile ("), "{}", run.stdout);
}

#[test]
fn plot_can_leave_species_out() {
    let dir = std::env::temp_dir().join(format!("rxnet-test-{}-plot", std::process::id()));
    std::fs::create_dir_all(&dir).expect("a directory");
    let svg = dir.join("p.svg");
    let s = svg.to_str().expect("UTF-8");
    // The labels at the lines' ends are the text elements " NAME".
    let labels = |svg: &str| -> Vec<String> {
        let texts: Vec<&str> = svg
            .split("<text")
            .skip(1)
            .filter_map(|t| t.split_once('>').map(|(_, rest)| rest))
            .filter_map(|t| t.split_once("</text>").map(|(body, _)| body.trim()))
            .collect();
        ["A", "B", "C", "D"]
            .iter()
            .filter(|n| texts.contains(n))
            .map(|n| n.to_string())
            .collect()
    };
    let run = run_args("plot-all", PARALLEL, &["--plot", s]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let all = std::fs::read_to_string(&svg).expect("the plot");
    assert_eq!(labels(&all), ["A", "B", "C", "D"], "every species drawn");
    let run = run_args("plot-ex", PARALLEL, &["--plot", s, "--plot-exclude", "A,D"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(
        labels(&std::fs::read_to_string(&svg).expect("the plot")),
        ["B", "C"]
    );
    let run = run_args("plot-only", PARALLEL, &["--plot", s, "--plot-species", "C"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(
        labels(&std::fs::read_to_string(&svg).expect("the plot")),
        ["C"]
    );
    // An unknown name is refused, naming the species there are.
    let run = run_args(
        "plot-bad",
        PARALLEL,
        &["--plot", s, "--plot-exclude", "water"],
    );
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("`water`") && run.stderr.contains("A, B, C, D"),
        "{}",
        run.stderr
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn instantaneous_selectivity_is_not_defined_once_the_wanted_product_is_consumed() {
    // Series A -> B -> C, first order, liquid PFR (demo values): up to τ_opt = ln(k2/k1)/(k2−k1)
    // B is formed and R_B/R_C = (k1 C_A − k2 C_B)/(k2 C_B) with C_A, C_B from the Bateman
    // closed form (Levenspiel ch. 8, from memory); past τ_opt B is net consumed, and the
    // selectivity is not defined (null), never a negative number.
    let (k1, k2, ca0) = (0.2_f64, 0.1_f64, 1000.0_f64);
    let yaml = format!(
        "name: series (demo values)\nphase: liquid\nspecies: {{A: {{}}, B: {{}}, C: {{}}}}\nreactions:\n  - {{id: r1, stoich: A -> B, rate: {{k: {k1} 1/s}}}}\n  - {{id: r2, stoich: B -> C, rate: {{k: {k2} 1/s}}}}\nfeed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1 mol/L}}}}\nreactor: {{type: pfr, volume: 30 L}}\nkey: A\ndesired: B\n"
    );
    let tau_opt = (k2 / k1).ln() / (k2 - k1);
    let v = run_args(
        "sinst-series",
        &yaml,
        &["--format", "json", "--points", "31"],
    )
    .ok_json();
    let mut a = Agreement::new("instantaneous selectivity along a series PFR (Levenspiel ch. 8)");
    let (mut before, mut after) = (0, 0);
    for p in v["profile"].as_array().expect("a profile") {
        let tau = num(&p["x"], "V") / 1e-3;
        let s = &p["instantaneous_selectivity"]["C"];
        if tau > 0.0 && tau < 0.99 * tau_opt {
            let c_a = ca0 * (-k1 * tau).exp();
            let c_b = ca0 * k1 / (k2 - k1) * ((-k1 * tau).exp() - (-k2 * tau).exp());
            a.check(
                num(s, "S_inst B/C"),
                (k1 * c_a - k2 * c_b) / (k2 * c_b),
                1e-6,
                "before τ_opt",
            );
            before += 1;
        } else if tau > 1.01 * tau_opt {
            assert!(
                s.is_null(),
                "past τ_opt (τ = {tau} s) S_inst B/C must be null, got {s}"
            );
            assert!(
                p["instantaneous_selectivity_over_all"].is_null(),
                "past τ_opt B/all must be null: {p}"
            );
            after += 1;
        }
    }
    assert!(
        before > 3 && after > 3,
        "points on both sides: {before}, {after}"
    );
    a.report();
}
