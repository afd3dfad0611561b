//! What engineers type: engineering and offset units, mass flows, rate constants on a species
//! basis, gas-phase kinetics in partial pressures, and dimension errors in the user's units.
//!
//! Every rate constant, feed and size below is an invented test value, not data for any real
//! process. Each numeric check names the outside source of its expected value: unit factors
//! from NIST Special Publication 811 (2008), App. B.8 and B.9; R from CODATA 2018; the
//! second-order batch closed form from O. Levenspiel, Chemical Reaction Engineering, 3rd ed.,
//! Wiley 1999, ch. 3 (from memory).

mod common;

use common::{num, rel_err, run_study};
use rxnet::load_str;
use serde_json::Value;

/// Molar gas constant, J/(mol K): CODATA 2018, exact (N_A k_B).
const R: f64 = 8.314_462_618_153_24;

/// A study that must be refused with exit 2 and every `needle` in its message.
fn refused(tag: &str, yaml: &str, needles: &[&str]) {
    let run = run_study("check", tag, yaml, "text");
    assert_eq!(
        run.code, 2,
        "{tag}: expected exit 2\nstdout:\n{}\nstderr:\n{}",
        run.stdout, run.stderr
    );
    for n in needles {
        assert!(
            run.stderr.contains(n),
            "{tag}: stderr lacks `{n}`:\n{}",
            run.stderr
        );
    }
    assert!(!run.stderr.contains("panicked"), "{tag}: {}", run.stderr);
}

/// `rxnet run FILE --format json --rtol 1e-10` on a study given as text.
fn run_tight(tag: &str, yaml: &str) -> Value {
    let path = common::write_temp(tag, yaml);
    let p = path.to_str().expect("temporary path is UTF-8");
    let run = common::rxnet(&["run", p, "--format", "json", "--rtol", "1e-10"]);
    let _ = std::fs::remove_file(&path);
    run.ok_json()
}

fn outlet(v: &Value, name: &str) -> f64 {
    num(&v["outlet"][name], name)
}

// ---------------------------------------------------------------------------------------
// Engineering units
// ---------------------------------------------------------------------------------------

fn liquid_cstr(t: &str, volumetric: &str, flow_a: &str, volume: &str, k: &str) -> String {
    format!(
        "name: unit test (test values)
phase: liquid
species: {{A: null, B: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {k}, Ea: 40 kJ/mol, T_ref: 350 K}}}}
feed: {{T: {t}, volumetric: {volumetric}, flows: {{A: {flow_a}}}}}
reactor: {{type: cstr, volume: {volume}}}
"
    )
}

#[test]
fn engineering_units_give_the_run_of_their_si_values() {
    // The same CSTR written in US customary units and in SI, each SI value from the NIST
    // SP 811 App. B.8/B.9 factors: 140 degF = (140 + 459.67)/1.8 K = 333.15 K;
    // 10 gal/min = 10 × 3.785 411 784e-3 m3 / 60 s; 2 lbmol/hr = 2 × 453.592 37 mol / 3600 s;
    // 20 ft3 = 20 × 0.028 316 846 592 m3; 0.3 1/hr = 0.3/3600 1/s.
    let us = liquid_cstr("140 degF", "10 gal/min", "2 lbmol/hr", "20 ft3", "0.3 1/hr");
    let si = liquid_cstr(
        &format!("{} K", (140.0 + 459.67) / 1.8),
        &format!("{} m3/s", 10.0 * 3.785_411_784e-3 / 60.0),
        &format!("{} mol/s", 2.0 * 453.592_37 / 3600.0),
        &format!("{} m3", 20.0 * 0.028_316_846_592),
        &format!("{} 1/s", 0.3 / 3600.0),
    );
    let a = run_tight("us-units", &us);
    let b = run_tight("si-units", &si);
    for name in ["A", "B"] {
        let (x, y) = (outlet(&a, name), outlet(&b, name));
        assert!(rel_err(x, y) < 1e-12, "{name}: {x} vs {y}");
    }
    assert!(rel_err(num(&a["temperature"], "T"), 333.15) < 1e-14);
    // Rankine and torr/mmHg in a gas feed: 600 degR = 333.333 K; 760 torr = 1 atm
    // = 101 325 Pa (App. B.8).
    let gas = |t: &str, p: &str| {
        format!(
            "name: gas unit test (test values)
phase: gas
species: {{A: null, B: null, N2: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: 0.2 1/s}}}}
feed: {{T: {t}, P: {p}, flows: {{A: 1 mol/s, N2: 1 mol/s}}}}
reactor: {{type: pfr, volume: 0.1 m3}}
"
        )
    };
    let a = run_tight("torr", &gas("600 degR", "760 torr"));
    let b = run_tight("atm", &gas(&format!("{} K", 600.0 / 1.8), "101325 Pa"));
    assert!(rel_err(outlet(&a, "A"), outlet(&b, "A")) < 1e-12);
    assert!(rel_err(num(&a["inlet_pressure"], "P"), 101_325.0) < 1e-14);
    // Conventional mmHg = 133.322 387 415 Pa (App. B.8), not quite the torr.
    let c = run_tight("mmhg", &gas("600 degR", "760 mmHg"));
    assert!(rel_err(num(&c["inlet_pressure"], "P"), 760.0 * 133.322_387_415) < 1e-14);
}

#[test]
fn gauge_pressure_is_made_absolute_and_the_conversion_is_said() {
    // absolute = gauge + 101 325 Pa (standard atmosphere, NIST SP 811 App. B.8):
    // 2 barg = 301 325 Pa; 30 psig = 30 × 6 894.757 293 168 Pa + 101 325 Pa.
    let gas = |p: &str| {
        format!(
            "name: gauge test (test values)
phase: gas
species: {{A: null, B: null, C: null}}
reactions:
  - {{id: r1, stoich: A + B -> C, rate: {{k: 2e-3 m3/(mol*s)}}}}
feed: {{T: 450 K, P: {p}, flows: {{A: 1 mol/s, B: 1 mol/s}}}}
reactor: {{type: pfr, volume: 0.5 m3}}
"
        )
    };
    let g = run_tight("barg", &gas("2 barg"));
    let a = run_tight("bar-abs", &gas("301325 Pa"));
    assert!(rel_err(num(&g["inlet_pressure"], "P"), 301_325.0) < 1e-15);
    assert!(rel_err(outlet(&g, "C"), outlet(&a, "C")) < 1e-12);
    let p = run_tight("psig", &gas("30 psig"));
    let want = 30.0 * 6_894.757_293_168 + 101_325.0;
    assert!(rel_err(num(&p["inlet_pressure"], "P"), want) < 1e-12);
    // `check` says the reading was converted, with the atmosphere it used.
    let run = run_study("check", "barg-note", &gas("2 barg"), "text");
    assert_eq!(run.code, 0, "{}\n{}", run.stdout, run.stderr);
    for needle in [
        "feed.P",
        "`2 barg` is a gauge reading",
        "101325 Pa (standard atmosphere)",
        "= 301325 Pa",
    ] {
        assert!(
            run.stdout.contains(needle),
            "lacks `{needle}`:\n{}",
            run.stdout
        );
    }
    // A gauge reading below vacuum is refused and says why.
    refused(
        "barg-vacuum",
        &gas("-2 barg"),
        &["feed.P", "`-2 barg` is -98675 Pa absolute", "vacuum"],
    );
    // An absolute pressure gets no such note.
    let run = run_study("check", "bar-note", &gas("3 bar"), "text");
    assert!(!run.stdout.contains("gauge reading"), "{}", run.stdout);
}

#[test]
fn offset_units_inside_compound_units_are_refused() {
    let base = liquid_cstr("300 K", "1 L/s", "1 mol/s", "10 L", "0.1 1/s");
    let y = base.replace("T_ref: 350 K", "T_ref: 2 degF/s");
    refused(
        "degF-rate",
        &y,
        &[
            "reactions[0].rate.T_ref",
            "degF",
            "only accepted alone",
            "degR",
        ],
    );
    let y = base.replace("k: 0.1 1/s", "k: 0.1 mol/(m3*s*barg)");
    refused(
        "barg-compound",
        &y,
        &[
            "reactions[0].rate.k",
            "barg",
            "only accepted alone",
            "`bar`",
        ],
    );
}

#[test]
fn a_temperature_in_c_suggests_degc() {
    let y = liquid_cstr("37 C", "1 L/s", "1 mol/s", "10 L", "0.1 1/s");
    refused(
        "37-C",
        &y,
        &["feed.T", "unknown unit `C`", "did you mean `degC`?"],
    );
    let y = liquid_cstr("100 F", "1 L/s", "1 mol/s", "10 L", "0.1 1/s");
    refused("100-F", &y, &["feed.T", "did you mean `degF`?"]);
}

// ---------------------------------------------------------------------------------------
// Mass flows and mass charges
// ---------------------------------------------------------------------------------------

fn mass_feed(species: &str, feed: &str, reactor: &str) -> String {
    format!(
        "name: mass feed test (test values)
phase: liquid
species: {species}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: 0.05 1/s}}}}
feed: {feed}
reactor: {reactor}
"
    )
}

#[test]
fn mass_flows_are_converted_with_the_molar_mass() {
    // 360 kg/h of A with M = 100 g/mol: 0.1 kg/s / 0.1 kg/mol = 1 mol/s (h = 3600 s,
    // NIST SP 811 App. B.8).
    let by_mass = mass_feed(
        "{A: {molar_mass: 100 g/mol}, B: {molar_mass: 100 g/mol}}",
        "{T: 300 K, volumetric: 1 L/s, flows: {A: 360 kg/h}}",
        "{type: cstr, volume: 20 L}",
    );
    let by_moles = mass_feed(
        "{A: {molar_mass: 100 g/mol}, B: {molar_mass: 100 g/mol}}",
        "{T: 300 K, volumetric: 1 L/s, flows: {A: 1 mol/s}}",
        "{type: cstr, volume: 20 L}",
    );
    let a = run_tight("mass-flow", &by_mass);
    let b = run_tight("mole-flow", &by_moles);
    assert!(rel_err(outlet(&a, "A"), outlet(&b, "A")) < 1e-12);
    // From a formula: water, M = 2 × 1.008 + 15.999 = 18.015 g/mol (IUPAC standard atomic
    // weights, common practice): 18.015 kg/h = 1000/3600 mol/s, to the 4 digits of M.
    let net = load_str(
        &mass_feed(
            "{A: {formula: H2O}, B: {formula: H2O}}",
            "{T: 300 K, volumetric: 1 L/s, flows: {A: 18.015 kg/h}}",
            "{type: cstr, volume: 20 L}",
        ),
        "water",
        &[],
    )
    .expect("loads");
    assert!(rel_err(net.feed.amounts[0], 1000.0 / 3600.0) < 1e-4);
    // A batch charge in pounds: 2 lb of A at 100 g/mol = 907.184 74 g / 100 g/mol
    // = 9.071 847 4 mol (lb = 0.453 592 37 kg, App. B.8); concentrations in g/L likewise.
    let net = load_str(
        &mass_feed(
            "{A: {molar_mass: 100 g/mol}, B: null}",
            "{T: 300 K, amounts: {A: 2 lb}}",
            "{type: batch, volume: 10 L, time: 10 s}",
        ),
        "lb-charge",
        &[],
    )
    .expect("loads");
    assert!(rel_err(net.feed.amounts[0], 9.071_847_4) < 1e-14);
    let net = load_str(
        &mass_feed(
            "{A: {molar_mass: 100 g/mol}, B: null}",
            "{T: 300 K, concentrations: {A: 50 g/L}}",
            "{type: batch, volume: 10 L, time: 10 s}",
        ),
        "g-per-L",
        &[],
    )
    .expect("loads");
    // 50 g/L / 100 g/mol = 0.5 mol/L, times 10 L = 5 mol.
    assert!(rel_err(net.feed.amounts[0], 5.0) < 1e-14);
    // The conversion is stated.
    let run = run_study("check", "mass-note", &by_mass, "text");
    assert!(
        run.stdout.contains("feed.flows.A") && run.stdout.contains("molar mass"),
        "{}",
        run.stdout
    );
    // No molar mass: refused with the field and what to add.
    refused(
        "mass-no-M",
        &mass_feed(
            "{A: null, B: null}",
            "{T: 300 K, volumetric: 1 L/s, flows: {A: 360 kg/h}}",
            "{type: cstr, volume: 20 L}",
        ),
        &["feed.flows.A", "molar mass of A", "species.A.molar_mass"],
    );
}

// ---------------------------------------------------------------------------------------
// Dimension errors in the user's units
// ---------------------------------------------------------------------------------------

#[test]
fn dimension_errors_name_the_dimensions_in_words() {
    let base = liquid_cstr("300 K", "1 L/s", "1 mol/s", "10 L", "0.1 1/s");
    refused(
        "Ea-kJ",
        &base.replace("Ea: 40 kJ/mol", "Ea: 40 kJ"),
        &[
            "reactions[0].rate.Ea",
            "got kJ (energy), expected kJ/mol (energy per amount)",
        ],
    );
    refused(
        "T-kJ",
        &base.replace("T: 300 K", "T: 300 kJ"),
        &["feed.T", "got kJ (energy), expected K (temperature)"],
    );
    refused(
        "V-kg",
        &base.replace("volume: 10 L", "volume: 10 kg"),
        &["reactor.volume", "got kg (mass)", "(volume)"],
    );
    refused(
        "k-order",
        &base.replace("k: 0.1 1/s", "k: 0.1 m3/(mol*s)"),
        &[
            "reactions[0].rate.k",
            "got m3/(mol*s) (volume per amount and time, a second-order rate constant)",
            "expected 1/s (per time, a first-order rate constant)",
        ],
    );
    refused(
        "flow-volumetric",
        &base.replace("flows: {A: 1 mol/s}", "flows: {A: 1 L/s}"),
        &[
            "feed.flows.A",
            "got L/s (volume per time, a volumetric flow)",
            "mol/s",
        ],
    );
    // No SI base exponents in the message.
    let run = run_study(
        "check",
        "no-exponents",
        &base.replace("Ea: 40 kJ/mol", "Ea: 40 kJ"),
        "text",
    );
    assert!(!run.stderr.contains("kg m2 s^-2"), "{}", run.stderr);
}

// ---------------------------------------------------------------------------------------
// Rate constants on a species basis
// ---------------------------------------------------------------------------------------

fn dimerisation(basis: &str, k: f64, t: f64) -> String {
    format!(
        "name: dimerisation (test values)
phase: liquid
species: {{A: null, S: null}}
reactions:
  - {{id: r1, stoich: 2 A -> S, rate: {{k: {k} L/(mol*s){basis}}}}}
feed: {{T: 300 K, concentrations: {{A: 1 mol/L}}}}
reactor: {{type: batch, volume: 1 L, time: {t} s}}
"
    )
}

#[test]
fn a_species_basis_k_gives_the_second_order_batch_closed_form() {
    // −r_A = −dC_A/dt = k_A C_A² integrates to 1/C_A − 1/C_A0 = k_A t (Levenspiel ch. 3,
    // from memory). k_A = 0.02 L/(mol s), C_A0 = 1 mol/L.
    let k_a = 0.02;
    for t in [10.0, 50.0, 200.0] {
        let v = run_tight("species-basis", &dimerisation(", basis_species: A", k_a, t));
        let c_a = num(&v["concentrations"]["A"], "C_A") / 1e3; // mol/m3 -> mol/L
        let want = 1.0 / (1.0 + k_a * t);
        assert!(rel_err(c_a, want) < 1e-8, "t = {t}: C_A {c_a} vs {want}");
        // Mass balance: C_S = (C_A0 − C_A)/2.
        let c_s = num(&v["concentrations"]["S"], "C_S") / 1e3;
        assert!(rel_err(c_s, (1.0 - want) / 2.0) < 1e-8);
    }
    // The same number as a rate of reaction is twice as fast for A: 1/C_A − 1/C_A0 = 2 k t
    // (r = k C_A², −r_A = 2 r; Levenspiel ch. 3, from memory).
    let v = run_tight("reaction-basis", &dimerisation("", k_a, 50.0));
    let c_a = num(&v["concentrations"]["A"], "C_A") / 1e3;
    assert!(rel_err(c_a, 1.0 / (1.0 + 2.0 * k_a * 50.0)) < 1e-8);
    // Library: k of the reaction = k_A / |ν_A| = 0.02/2 L/(mol s) = 1e-5 m3/(mol s).
    let net = load_str(&dimerisation(", basis_species: A", k_a, 50.0), "lib", &[]).unwrap();
    assert!(rel_err(net.reactions[0].rate.k_ref, 1e-5) < 1e-14);
    assert!(
        net.notes
            .iter()
            .any(|n| n.contains("basis_species") && n.contains("2")),
        "{:?}",
        net.notes
    );
    // The product's basis: r_S = k_S C_A² with ν_S = 1 is the rate of reaction itself.
    let net = load_str(&dimerisation(", basis_species: S", k_a, 50.0), "lib", &[]).unwrap();
    assert!(rel_err(net.reactions[0].rate.k_ref, 2e-5) < 1e-14);
}

#[test]
fn a_species_basis_must_name_a_species_the_reaction_changes() {
    let y = dimerisation(", basis_species: X", 0.02, 10.0);
    refused(
        "basis-unknown",
        &y,
        &["reactions[0].rate.basis_species", "unknown species `X`"],
    );
    let y = "name: catalysed (test values)
phase: liquid
species: {A: null, S: null, E: null}
reactions:
  - {id: r1, stoich: A + E -> S + E, rate: {k: 0.1 m3/(mol*s), basis_species: E}}
feed: {T: 300 K, concentrations: {A: 1 mol/L, E: 0.1 mol/L}}
reactor: {type: batch, volume: 1 L, time: 10 s}
";
    refused(
        "basis-catalyst",
        y,
        &["reactions[0].rate.basis_species", "E", "net coefficient 0"],
    );
}

// ---------------------------------------------------------------------------------------
// Gas-phase kinetics in partial pressures
// ---------------------------------------------------------------------------------------

fn gas_pfr(rate: &str) -> String {
    format!(
        "name: partial pressures (test values)
phase: gas
species: {{A: null, B: null, C: null, N2: null}}
reactions:
  - {{id: r1, stoich: A + B -> C, rate: {{{rate}}}}}
feed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, B: 1.5 mol/s, N2: 2 mol/s}}}}
reactor: {{type: pfr, volume: 2 m3}}
"
    )
}

#[test]
fn a_partial_pressure_rate_matches_its_concentration_form() {
    // r = k_p p_A p_B with p_j = C_j R T (ideal gas), so k_c = k_p (R T)^2 (common practice);
    // k_p = 0.1 mol/(m3 s bar^2) = 1e-11 mol/(m3 s Pa^2) (bar = 1e5 Pa, NIST SP 811 App. B.8).
    let t = 500.0;
    let k_p = 0.1 / 1e10;
    let k_c = k_p * (R * t).powi(2);
    let by_p = run_tight(
        "kp",
        &gas_pfr("k: 0.1 mol/(m3*s*bar^2), in_terms_of: partial_pressures"),
    );
    let by_c = run_tight("kc", &gas_pfr(&format!("k: {k_c} m3/(mol*s)")));
    for name in ["A", "B", "C"] {
        let (x, y) = (outlet(&by_p, name), outlet(&by_c, name));
        assert!(rel_err(x, y) < 1e-10, "{name}: {x} vs {y}");
    }
    assert!(
        outlet(&by_p, "C") > 0.05,
        "the test should react noticeably"
    );
    // With Ea and T_ref ≠ T: k_p(T) = k_p,ref exp(−Ea/R (1/T − 1/T_ref)) (Arrhenius), then
    // k_c(T) = k_p(T) (R T)^2 at the reactor temperature.
    let ea = 30e3;
    let k_p_t = k_p * (-ea / R * (1.0 / t - 1.0 / 450.0)).exp();
    let by_p = run_tight(
        "kp-ea",
        &gas_pfr(
            "k: 0.1 mol/(m3*s*bar^2), Ea: 30 kJ/mol, T_ref: 450 K, in_terms_of: partial_pressures",
        ),
    );
    let by_c = run_tight(
        "kc-ea",
        &gas_pfr(&format!("k: {} m3/(mol*s)", k_p_t * (R * t).powi(2))),
    );
    assert!(rel_err(outlet(&by_p, "C"), outlet(&by_c, "C")) < 1e-10);
    // A catalytic bed: r' = k_p p_A in mol/(kg s bar), k_c = k_p R T in m3/(kg s).
    let bed = |rate: &str| {
        gas_pfr(rate)
            .replace("A + B -> C", "A -> C")
            .replace("{type: pfr, volume: 2 m3}", "{type: pbr, catalyst: 20 kg}")
    };
    let by_p = run_tight(
        "kp-bed",
        &bed("k: 0.04 mol/(kg*s*bar), in_terms_of: partial_pressures"),
    );
    let by_c = run_tight("kc-bed", &bed(&format!("k: {} m3/(kg*s)", 0.04e-5 * R * t)));
    assert!(rel_err(outlet(&by_p, "C"), outlet(&by_c, "C")) < 1e-10);
    // A hyperbolic law r' = k_p p_A / (1 + K_A,p p_A)^2: K_A,c = K_A,p R T
    // (p_A = C_A R T, common practice); 0.8 1/bar = 0.8e-5 1/Pa.
    let hyper = |k: &str, ads: &str, terms: &str| {
        bed(&format!(
            "law: hyperbolic, k: {k}, adsorption: {{A: {{K: {ads}}}}}, inhibition_power: 2{terms}"
        ))
    };
    let by_p = run_tight(
        "kp-hyper",
        &hyper(
            "0.04 mol/(kg*s*bar)",
            "0.8 1/bar",
            ", in_terms_of: partial_pressures",
        ),
    );
    let by_c = run_tight(
        "kc-hyper",
        &hyper(
            &format!("{} m3/(kg*s)", 0.04e-5 * R * t),
            &format!("{} m3/mol", 0.8e-5 * R * t),
            "",
        ),
    );
    assert!(
        outlet(&by_p, "C") > 0.05,
        "the test should react noticeably"
    );
    assert!(rel_err(outlet(&by_p, "C"), outlet(&by_c, "C")) < 1e-10);
}

#[test]
fn a_reversible_gas_reaction_reaches_its_kp() {
    // A <=> 2 B in a closed vessel at 600 K with K_p = p_B²/p_A = 0.5 bar given in partial
    // pressures (Σν = 1). At the end, p_j = C_j R T (ideal gas) must satisfy the definition
    // of K_p (common practice).
    let y = "name: gas equilibrium (test values)
phase: gas
species: {A: null, B: null}
reactions:
  - {id: r1, stoich: A <=> 2 B, rate: {k: 0.5 mol/(m3*s*bar), K_eq: 0.5 bar, in_terms_of: partial_pressures}}
feed: {T: 600 K, P: 2 bar, amounts: {A: 1 mol}}
reactor: {type: batch, volume: 24.943387854459716 L, time: 1 h}
";
    let v = run_tight("kp-eq", y);
    let rt = R * 600.0;
    let p_a = num(&v["concentrations"]["A"], "C_A") * rt / 1e5; // bar
    let p_b = num(&v["concentrations"]["B"], "C_B") * rt / 1e5;
    assert!(
        rel_err(p_b * p_b / p_a, 0.5) < 1e-6,
        "p_B²/p_A = {}",
        p_b * p_b / p_a
    );
    // Library: K_c = K_p (R T)^(−Σν) = 0.5e5 Pa / (R T) in mol/m3.
    let net = load_str(y, "lib", &[]).unwrap();
    let k_c = net.reactions[0].rate.equilibrium.as_ref().unwrap().k_ref;
    assert!(rel_err(k_c, 0.5e5 / rt) < 1e-14);
}

#[test]
fn partial_pressures_are_for_a_gas_only_and_in_pressure_units() {
    let liquid = dimerisation(", in_terms_of: partial_pressures", 0.02, 10.0);
    refused(
        "kp-liquid",
        &liquid,
        &["reactions[0].rate.in_terms_of", "phase: gas"],
    );
    refused(
        "kp-conc-units",
        &gas_pfr("k: 2e-3 m3/(mol*s), in_terms_of: partial_pressures"),
        &[
            "reactions[0].rate.k",
            "got m3/(mol*s)",
            "expected mol/(m3*s*bar^2) (volumetric rate per pressure^2)",
        ],
    );
}

#[test]
fn a_size_bound_of_the_wrong_dimension_is_worded_in_the_users_units() {
    let y = liquid_cstr("300 K", "1 L/s", "1 mol/s", "10 L", "0.1 1/s");
    let path = common::write_temp("bound-kg", &y);
    let p = path.to_str().expect("temporary path is UTF-8");
    let run = common::rxnet(&[
        "optimize",
        p,
        "--maximize",
        "yield:B",
        "--bounds",
        "1 kg",
        "2 kg",
    ]);
    let _ = std::fs::remove_file(&path);
    assert_eq!(run.code, 2, "{}\n{}", run.stdout, run.stderr);
    assert!(
        run.stderr.contains("got kg (mass), expected m3 (volume)"),
        "{}",
        run.stderr
    );
}
