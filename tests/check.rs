//! Acceptance tests of `rxnet check` and `rxnet table`: the bundled studies, stoichiometric
//! rank and dependent reactions, δ and ε, atom balances, Wegscheider consistency, the
//! reaction graph and the default key reactant. Each numeric check names its source.

mod common;

use common::{check_json, network, rxnet, table_json};
use serde_json::Value;

/// Molar gas constant, J/(mol K): N_A k, both exact in the 2019 SI (CODATA 2018).
const R: f64 = 8.314_462_618_153_24;

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs()).max(1e-300)
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

fn strings(v: &Value) -> Vec<String> {
    v.as_array()
        .unwrap_or_else(|| panic!("not an array: {v}"))
        .iter()
        .map(|s| s.as_str().expect("a string").to_string())
        .collect()
}

const CHECK_KEYS: [&str; 8] = [
    "rank",
    "independent",
    "dependent",
    "atom_balance",
    "conservation_laws",
    "classification",
    "intermediates",
    "findings",
];

// ---------------------------------------------------------------------------------------
// Bundled studies

#[test]
fn every_bundled_study_checks_and_tabulates_in_text_and_json() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("networks");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("networks/ exists")
        .map(|e| e.expect("directory entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
        .collect();
    files.sort();
    assert!(
        files.len() >= 4,
        "expected the bundled studies, found {files:?}"
    );
    for f in &files {
        let p = f.to_str().expect("UTF-8 path");
        let name = f.file_name().unwrap().to_str().unwrap();
        let want = if name == "unbalanced_epoxidation.yaml" {
            1
        } else {
            0
        };

        let text = rxnet(&["check", p]);
        assert_eq!(text.code, want, "check {name}: stderr {}", text.stderr);
        assert!(!text.stderr.contains("panicked"), "{name}: {}", text.stderr);
        assert!(text.stdout.contains("Findings"), "{name}: {}", text.stdout);
        assert!(
            text.stdout.contains("rank of the stoichiometric matrix"),
            "{name}"
        );

        let json = rxnet(&["check", p, "--format", "json"]);
        assert_eq!(
            json.code, want,
            "check --format json {name}: {}",
            json.stderr
        );
        let v = json.json();
        for k in CHECK_KEYS {
            assert!(
                v.get(k).is_some(),
                "{name}: check JSON lacks `{k}`:\n{}",
                json.stdout
            );
        }
        let errors = v["findings"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|f| f["severity"] == "error")
            .count();
        assert_eq!(errors > 0, want == 1, "{name}: error findings vs exit code");

        let table = rxnet(&["table", p]);
        assert_eq!(table.code, 0, "table {name}: {}", table.stderr);
        assert!(table.stdout.contains("Stoichiometric table"), "{name}");
        let tj = rxnet(&["table", p, "--format", "json"]);
        assert_eq!(tj.code, 0, "table --format json {name}: {}", tj.stderr);
        let t = tj.json();
        for k in ["key", "y_key0", "rows", "reactions", "total_feed"] {
            assert!(t.get(k).is_some(), "{name}: table JSON lacks `{k}`");
        }
        // F_T0 = Σ_j F_j0 (definition of the total feed; common practice).
        let sum: f64 = t["rows"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| num(&r["feed"]))
            .sum();
        assert!(
            close(sum, num(&t["total_feed"]), 1e-12),
            "{name}: total feed"
        );
    }
}

// ---------------------------------------------------------------------------------------
// Steam reforming: rank, dependent reaction, conservation laws

/// Rank of a small real matrix by Gaussian elimination with partial pivoting.
fn rank(m: Vec<Vec<f64>>) -> usize {
    common::float_rank(m, 1e-12)
}

#[test]
fn steam_reforming_has_rank_two_and_direct_is_reform_plus_shift() {
    let p = network("steam_reforming.yaml");
    let run = rxnet(&["check", p.to_str().unwrap(), "--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let v = run.json();
    // Independent reactions = species − rank(element matrix) = 5 − 3 = 2 for
    // CH4/H2O/CO/CO2/H2 in C, H, O (Denbigh, The Principles of Chemical Equilibrium; from memory).
    assert_eq!(v["rank"], 2);
    assert_eq!(v["element_matrix"]["rank"], 3);
    assert_eq!(v["element_matrix"]["max_independent_reactions"], 2);
    assert_eq!(strings(&v["independent"]), ["reform", "shift"]);
    let dep = v["dependent"].as_array().unwrap();
    assert_eq!(dep.len(), 1);
    assert_eq!(dep[0]["reaction"], "direct");
    // CH4 + 2 H2O -> CO2 + 4 H2 is (CH4 + H2O -> CO + 3 H2) + (CO + H2O -> CO2 + H2):
    // add the two equations term by term (atom counting).
    let comb = dep[0]["combination"].as_object().unwrap();
    assert_eq!(comb.len(), 2, "{comb:?}");
    assert_eq!(num(&comb["reform"]), 1.0);
    assert_eq!(num(&comb["shift"]), 1.0);

    // Conservation laws: a basis of {y : yᵀν = 0} has species − rank = 5 − 2 = 3 vectors
    // (linear algebra: rank–nullity theorem; common practice).
    let laws = v["conservation_laws"].as_array().unwrap();
    assert_eq!(laws.len(), 3);
    // ν of each reaction over (CH4, H2O, CO, CO2, H2), from the equations in the file.
    let species = ["CH4", "H2O", "CO", "CO2", "H2"];
    let nu = [
        [-1.0, -1.0, 1.0, 0.0, 3.0],
        [0.0, -1.0, -1.0, 1.0, 1.0],
        [-1.0, -2.0, 0.0, 1.0, 4.0],
    ];
    let vectors: Vec<Vec<f64>> = laws
        .iter()
        .map(|law| {
            let law = law.as_object().unwrap();
            for k in law.keys() {
                assert!(
                    species.contains(&k.as_str()),
                    "unknown species {k} in a law"
                );
            }
            species
                .iter()
                .map(|s| {
                    law.get(*s)
                        .map_or(0.0, |c| c.as_str().unwrap().parse::<f64>().unwrap())
                })
                .collect()
        })
        .collect();
    for y in &vectors {
        for (i, n) in nu.iter().enumerate() {
            let dot: f64 = y.iter().zip(n).map(|(a, b)| a * b).sum();
            assert_eq!(dot, 0.0, "law {y:?} is changed by reaction {i}");
        }
    }
    assert_eq!(
        rank(vectors),
        3,
        "the conservation laws must be independent"
    );
}

// ---------------------------------------------------------------------------------------
// δ and ε

fn gas_study(stoich: &str, flows: &str, key: Option<&str>) -> String {
    let key = key.map(|k| format!("key: {k}\n")).unwrap_or_default();
    format!(
        "name: delta test (demo values)
phase: gas
species:
  A: null
  B: null
  C: null
  D: null
  I: null
reactions:
  - id: r1
    stoich: {stoich}
    rate:
      k: 0.1 1/s
      orders: {{A: 1}}
feed:
  T: 400 K
  P: 2 bar
  flows: {flows}
reactor:
  type: pfr
  volume: 1 m3
{key}"
    )
}

fn table_of(tag: &str, yaml: &str) -> Value {
    let run = table_json(tag, yaml);
    assert_eq!(run.code, 0, "table failed: {}\n{yaml}", run.stderr);
    run.json()
}

#[test]
fn delta_is_four_for_a_plus_2b_to_3c_plus_4d() {
    let t = table_of(
        "delta4",
        &gas_study(
            "A + 2 B -> 3 C + 4 D",
            "{A: 1 mol/s, B: 2 mol/s, I: 1 mol/s}",
            Some("A"),
        ),
    );
    let r = &t["reactions"][0];
    // δ = (d/a + c/a − b/a − 1) = 4/1 + 3/1 − 2/1 − 1 = 4 for aA + bB -> cC + dD
    // (common practice; textbook notation).
    assert_eq!(num(&r["delta"]), 4.0);
    assert_eq!(num(&r["mole_change"]), 4.0);
    // y_A0 = F_A0 / F_T0 = 1/4; ε = y_A0 δ = 1 (common practice; textbook notation).
    let y = num(&t["y_key0"]);
    assert!(close(y, 0.25, 1e-15));
    assert!(close(num(&r["epsilon"]), y * 4.0, 1e-15));
    assert!(close(num(&r["epsilon"]), 1.0, 1e-15));
}

#[test]
fn delta_is_zero_for_equimolar_2a_plus_2b_to_2c_plus_2d() {
    let t = table_of(
        "delta0",
        &gas_study(
            "2 A + 2 B -> 2 C + 2 D",
            "{A: 3 mol/s, B: 3 mol/s, I: 4 mol/s}",
            Some("A"),
        ),
    );
    let r = &t["reactions"][0];
    // δ = (2 + 2 − 2 − 2)/2 = 0: no change in total moles (common practice; textbook notation).
    assert_eq!(num(&r["delta"]), 0.0);
    assert_eq!(num(&r["epsilon"]), 0.0);
    assert!(close(num(&t["y_key0"]), 0.3, 1e-15));
}

#[test]
fn delta_divides_by_the_key_coefficient() {
    let t = table_of(
        "delta_half",
        &gas_study(
            "2 A + B -> C",
            "{A: 2 mol/s, B: 2 mol/s, I: 1 mol/s}",
            Some("A"),
        ),
    );
    let r = &t["reactions"][0];
    // Per mole of A: A + B/2 -> C/2, δ = 1/2 − 1/2 − 1 = −1 (common practice; textbook notation).
    assert_eq!(num(&r["delta"]), -1.0);
    // ε = y_A0 δ = (2/5)(−1) (common practice; textbook notation).
    assert!(close(num(&r["epsilon"]), -0.4, 1e-15));
}

#[test]
fn epsilon_is_absent_for_a_liquid() {
    let yaml = gas_study(
        "A + 2 B -> 3 C + 4 D",
        "{A: 1 mol/s, B: 2 mol/s}",
        Some("A"),
    )
    .replace("phase: gas", "phase: liquid")
    .replace("  P: 2 bar\n", "  volumetric: 1 L/s\n");
    let t = table_of("liquid_eps", &yaml);
    let r = &t["reactions"][0];
    // δ is defined by stoichiometry alone; ε = y_A0 δ is the gas-phase volume change factor
    // (common practice; textbook notation).
    assert_eq!(num(&r["delta"]), 4.0);
    assert!(r["epsilon"].is_null(), "{r}");
}

// ---------------------------------------------------------------------------------------
// Atom balances

#[test]
fn unbalanced_epoxidation_is_flagged_in_oxygen() {
    let p = network("unbalanced_epoxidation.yaml");
    let run = rxnet(&["check", p.to_str().unwrap(), "--format", "json"]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    let v = run.json();
    let b = &v["atom_balance"][0];
    assert_eq!(b["reaction"], "epox");
    assert_eq!(b["balanced"], false);
    // C2H4 + O2 -> C2H4O: O on the right 1, on the left 2; products − reactants = −1;
    // C and H balance (atom counting).
    let imb = b["imbalance"].as_object().unwrap();
    assert_eq!(imb.len(), 1, "{imb:?}");
    assert_eq!(num(&imb["O"]), -1.0);
    let err = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["severity"] == "error")
        .expect("an error finding");
    let msg = err["message"].as_str().unwrap();
    assert!(msg.contains("epox") && msg.contains("O -1"), "{msg}");

    let text = rxnet(&["check", p.to_str().unwrap()]);
    assert_eq!(text.code, 1);
    assert!(text.stdout.contains("UNBALANCED: O -1"), "{}", text.stdout);
}

#[test]
fn half_coefficient_epoxidation_is_balanced() {
    let p = network("ethylene_epoxidation.yaml");
    let v = rxnet(&["check", p.to_str().unwrap(), "--format", "json"]).json();
    // C2H4 + 0.5 O2 -> C2H4O and C2H4 + 3 O2 -> 2 CO2 + 2 H2O balance in C, H and O
    // (atom counting).
    for b in v["atom_balance"].as_array().unwrap() {
        assert_eq!(b["balanced"], true, "{b}");
        assert!(b["imbalance"].as_object().unwrap().is_empty());
    }
}

// ---------------------------------------------------------------------------------------
// Wegscheider consistency

fn reforming_text() -> String {
    std::fs::read_to_string(network("steam_reforming.yaml")).expect("read steam_reforming.yaml")
}

#[test]
fn wegscheider_mismatch_names_the_dependent_reaction() {
    let original = reforming_text();
    assert!(
        original.contains("K_eq: 60 (mol/m3)^2"),
        "the bundled study changed"
    );
    // K_direct must equal K_reform K_shift = 40 × 1.5 = 60 (Wegscheider condition; from memory).
    let yaml = original.replace("K_eq: 60 (mol/m3)^2", "K_eq: 70 (mol/m3)^2");
    let run = check_json("wegscheider", &yaml);
    assert_eq!(run.code, 1, "{}", run.stderr);
    let v = run.json();
    let cy = &v["equilibrium_cycles"][0];
    assert_eq!(cy["reaction"], "direct");
    assert_eq!(cy["consistent"], false);
    assert!(close(num(&cy["k_given"]), 70.0, 1e-9));
    assert!(close(num(&cy["k_combined"]), 60.0, 1e-9));
    let errors: Vec<&str> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["severity"] == "error")
        .map(|f| f["message"].as_str().unwrap())
        .collect();
    assert!(
        errors
            .iter()
            .any(|m| m.contains("direct") && m.contains("Wegscheider")),
        "{errors:?}"
    );
    let text = common::run_study("check", "wegscheider_text", &yaml, "text");
    assert_eq!(text.code, 1);
    assert!(text.stdout.contains("MISMATCH"), "{}", text.stdout);
}

/// The reforming network with every K_eq given at `t_ref` and the feed at 900 K.
fn reforming_at(
    t_ref: f64,
    k_reform: f64,
    k_shift: f64,
    k_direct: f64,
    dh_direct_kj: f64,
) -> String {
    format!(
        "name: reforming, K at another temperature (demo values)
phase: gas
species:
  CH4: {{formula: CH4}}
  H2O: {{formula: H2O}}
  CO:  {{formula: CO}}
  CO2: {{formula: CO2}}
  H2:  {{formula: H2}}
reactions:
  - id: reform
    stoich: CH4 + H2O <=> CO + 3 H2
    rate:
      k: 2.0e-2 m3/(mol*s)
      T_ref: {t_ref} K
      K_eq: {k_reform:e} (mol/m3)^2
      dH: 206 kJ/mol
  - id: shift
    stoich: CO + H2O <=> CO2 + H2
    rate:
      k: 5.0e-2 m3/(mol*s)
      T_ref: {t_ref} K
      K_eq: {k_shift:e}
      dH: -41 kJ/mol
  - id: direct
    stoich: CH4 + 2 H2O <=> CO2 + 4 H2
    rate:
      k: 1.0e-3 m3/(mol*s)
      orders: {{CH4: 1, H2O: 1}}
      T_ref: {t_ref} K
      K_eq: {k_direct:e} (mol/m3)^2
      dH: {dh_direct_kj} kJ/mol
feed:
  T: 900 K
  P: 3 bar
  flows: {{CH4: 1 mol/s, H2O: 3 mol/s}}
reactor:
  type: pfr
  volume: 2 m3
"
    )
}

/// van't Hoff at constant ΔH: K(T) = K(T_ref) exp(−ΔH/R (1/T − 1/T_ref))
/// (Denbigh, The Principles of Chemical Equilibrium; from memory).
fn vant_hoff(k_ref: f64, dh: f64, t: f64, t_ref: f64) -> f64 {
    k_ref * (-dh / R * (1.0 / t - 1.0 / t_ref)).exp()
}

fn cycle(v: &Value) -> &Value {
    let cy = &v["equilibrium_cycles"][0];
    assert_eq!(cy["reaction"], "direct", "{v}");
    cy
}

#[test]
fn wegscheider_with_hess_consistent_heats_holds_at_the_feed_temperature() {
    // 206 − 41 = 165 kJ/mol (Hess's law) and 40 × 1.5 = 60 at 800 K (Wegscheider; from memory).
    let run = check_json("weg_hess", &reforming_at(800.0, 40.0, 1.5, 60.0, 165.0));
    assert_eq!(run.code, 0, "{}\n{}", run.stderr, run.stdout);
    let v = run.json();
    let cy = cycle(&v);
    assert_eq!(cy["consistent"], true);
    assert_eq!(num(&cy["temperature"]), 900.0);
    let want = vant_hoff(60.0, 165e3, 900.0, 800.0);
    assert!(close(num(&cy["k_given"]), want, 1e-9), "{cy}");
    let comb = vant_hoff(40.0, 206e3, 900.0, 800.0) * vant_hoff(1.5, -41e3, 900.0, 800.0);
    assert!(close(num(&cy["k_combined"]), comb, 1e-9), "{cy}");
}

#[test]
fn wegscheider_is_checked_at_the_feed_temperature_not_at_t_ref() {
    // K's agree at T_ref = 800 K, but ΔH_direct = 200 kJ/mol breaks Hess's law
    // (165 expected), so by van't Hoff they disagree at the feed's 900 K.
    let run = check_json("weg_feed_t", &reforming_at(800.0, 40.0, 1.5, 60.0, 200.0));
    assert_eq!(run.code, 1, "{}\n{}", run.stderr, run.stdout);
    let v = run.json();
    let cy = cycle(&v);
    assert_eq!(cy["consistent"], false);
    assert_eq!(num(&cy["temperature"]), 900.0);
    let given = vant_hoff(60.0, 200e3, 900.0, 800.0);
    let comb = vant_hoff(40.0, 206e3, 900.0, 800.0) * vant_hoff(1.5, -41e3, 900.0, 800.0);
    assert!(close(num(&cy["k_given"]), given, 1e-9), "{cy}");
    assert!(close(num(&cy["k_combined"]), comb, 1e-9), "{cy}");
    let findings = v["findings"].as_array().unwrap();
    assert!(findings.iter().any(|f| f["severity"] == "error"
        && f["message"].as_str().unwrap().contains("direct")
        && f["message"].as_str().unwrap().contains("900.00 K")));
    assert!(
        findings
            .iter()
            .any(|f| f["severity"] == "warning" && f["message"].as_str().unwrap().contains("Hess"))
    );

    // The converse: K_direct at 800 K chosen so that the three agree at 900 K. The check
    // passes (K's disagree at 800 K only), and the Hess's-law warning remains.
    let k_direct_900 = vant_hoff(40.0, 206e3, 900.0, 800.0) * vant_hoff(1.5, -41e3, 900.0, 800.0);
    let k_direct_800 = k_direct_900 / vant_hoff(1.0, 200e3, 900.0, 800.0);
    assert!(
        !close(k_direct_800, 60.0, 1e-3),
        "the example must disagree at 800 K"
    );
    let run = check_json(
        "weg_feed_t_ok",
        &reforming_at(800.0, 40.0, 1.5, k_direct_800, 200.0),
    );
    assert_eq!(run.code, 0, "{}\n{}", run.stderr, run.stdout);
    let v = run.json();
    assert_eq!(cycle(&v)["consistent"], true);
    assert!(
        v["findings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|f| f["severity"] == "warning" && f["message"].as_str().unwrap().contains("Hess"))
    );
}

// ---------------------------------------------------------------------------------------
// Reaction graph

#[test]
fn diene_steps_are_series_parallel_through_the_mono_olefin() {
    let p = network("diene_hydrogenation.yaml");
    let run = rxnet(&["check", p.to_str().unwrap(), "--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let v = run.json();
    // D + H2 -> M then M + H2 -> P: in series through M, in parallel for H2; M is made by
    // one and consumed by the other, so it is an intermediate (common practice).
    let pairs = v["classification"].as_array().unwrap();
    assert_eq!(pairs.len(), 1, "{pairs:?}");
    assert_eq!(strings(&pairs[0]["reactions"]), ["to_mono", "to_full"]);
    assert_eq!(pairs[0]["relation"], "series-parallel");
    assert_eq!(strings(&pairs[0]["via"]), ["M"]);
    assert_eq!(strings(&pairs[0]["shared_reactants"]), ["H2"]);
    assert_eq!(strings(&v["intermediates"]), ["M"]);
    assert!(v["unreachable_species"].as_array().unwrap().is_empty());
    assert!(v["dead_reactions"].as_array().unwrap().is_empty());
}

#[test]
fn parallel_and_series_are_told_apart() {
    // epox and burn both consume C2H4 and O2 and pass nothing between them: parallel
    // (common practice).
    let p = network("ethylene_epoxidation.yaml");
    let v = rxnet(&["check", p.to_str().unwrap(), "--format", "json"]).json();
    let pairs = v["classification"].as_array().unwrap();
    assert_eq!(pairs.len(), 1);
    assert_eq!(pairs[0]["relation"], "parallel");
    assert_eq!(strings(&pairs[0]["shared_reactants"]), ["C2H4", "O2"]);
    assert!(strings(&v["intermediates"]).is_empty());

    // A -> B -> C: pure series through B (common practice).
    let yaml = "name: series (demo values)
phase: liquid
species: {A: null, B: null, C: null}
reactions:
  - {id: first, stoich: A -> B, rate: {k: 0.1 1/s}}
  - {id: second, stoich: B -> C, rate: {k: 0.05 1/s}}
feed: {T: 300 K, volumetric: 1 L/s, flows: {A: 1 mol/s}}
reactor: {type: cstr, volume: 1 m3}
";
    let run = check_json("series", yaml);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let v = run.json();
    let pairs = v["classification"].as_array().unwrap();
    assert_eq!(pairs.len(), 1);
    assert_eq!(pairs[0]["relation"], "series");
    assert_eq!(strings(&pairs[0]["via"]), ["B"]);
    assert_eq!(strings(&v["intermediates"]), ["B"]);
}

#[test]
fn a_reaction_needing_an_unfed_unmade_species_is_dead() {
    // Z is neither fed nor made, so `second` (B + Z -> C) never runs and C never forms.
    let yaml = "name: dead reaction (demo values)
phase: liquid
species: {A: null, B: null, C: null, Z: null}
reactions:
  - {id: first, stoich: A -> B, rate: {k: 0.1 1/s}}
  - {id: second, stoich: B + Z -> C, rate: {k: 1e-3 m3/(mol*s)}}
feed: {T: 300 K, volumetric: 1 L/s, flows: {A: 1 mol/s}}
reactor: {type: pfr, volume: 1 m3}
";
    let run = check_json("dead", yaml);
    assert_eq!(run.code, 0, "warnings only: {}", run.stderr);
    let v = run.json();
    assert_eq!(strings(&v["dead_reactions"]), ["second"]);
    let mut unreachable = strings(&v["unreachable_species"]);
    unreachable.sort();
    assert_eq!(unreachable, ["C", "Z"]);
    let warnings: Vec<&str> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["severity"] == "warning")
        .map(|f| f["message"].as_str().unwrap())
        .collect();
    assert!(
        warnings
            .iter()
            .any(|m| m.contains("`second`") && m.contains("never run")),
        "{warnings:?}"
    );
    assert!(
        warnings
            .iter()
            .any(|m| m.contains("`Z`") && m.contains("never form")),
        "{warnings:?}"
    );

    // Feeding Z brings both back to life.
    let fed = yaml.replace("flows: {A: 1 mol/s}", "flows: {A: 1 mol/s, Z: 1 mol/s}");
    let v = check_json("dead_fed", &fed).json();
    assert!(v["dead_reactions"].as_array().unwrap().is_empty(), "{v}");
    assert!(
        v["unreachable_species"].as_array().unwrap().is_empty(),
        "{v}"
    );
}

// ---------------------------------------------------------------------------------------
// Default key reactant

#[test]
fn the_limiting_reactant_is_the_key_when_none_is_named() {
    // Limiting reactant: smallest F_j0/|ν_j| (common practice). A + 2 B -> C with
    // F_A0 = 1, F_B0 = 1.5: 1/1 > 1.5/2, so B limits.
    let t = table_of(
        "limit_b",
        &gas_study(
            "A + 2 B -> C",
            "{A: 1 mol/s, B: 1.5 mol/s, I: 1 mol/s}",
            None,
        ),
    );
    assert_eq!(t["key"], "B");
    assert_eq!(t["key_is_default"], true);
    assert_eq!(t["reactions"][0]["limiting"], "B");
    // δ relative to B: Σν/|ν_B| = (1 − 1 − 2)/2 = −1; y_B0 = 1.5/3.5 (common practice).
    assert_eq!(num(&t["reactions"][0]["delta"]), -1.0);
    assert!(close(num(&t["y_key0"]), 1.5 / 3.5, 1e-15));

    // With F_B0 = 3: 1/1 < 3/2, so A limits.
    let t = table_of(
        "limit_a",
        &gas_study("A + 2 B -> C", "{A: 1 mol/s, B: 3 mol/s, I: 1 mol/s}", None),
    );
    assert_eq!(t["key"], "A");
    assert_eq!(t["key_is_default"], true);

    // A named key wins over the limiting reactant.
    let t = table_of(
        "limit_named",
        &gas_study(
            "A + 2 B -> C",
            "{A: 1 mol/s, B: 1.5 mol/s, I: 1 mol/s}",
            Some("A"),
        ),
    );
    assert_eq!(t["key"], "A");
    assert_eq!(t["key_is_default"], false);
    assert_eq!(t["reactions"][0]["limiting"], "B");
}

#[test]
fn a_species_made_on_balance_is_never_the_limiting_reactant() {
    // A + 2 B -> 3 B makes B on balance (net ν_B = +1), so only A can run out: the limiting
    // reactant of the reaction and the default key are A, even with B fed far below A/2
    // (limiting reactant on net coefficients, common practice).
    let yaml = "name: autocatalytic (demo values)\nphase: liquid\nspecies: {A: {}, B: {}, C: {}}\nreactions:\n  - {id: grow, stoich: A + 2 B -> 3 B, rate: {k: 1e-6 m6/(mol2*s)}}\n  - {id: decay, stoich: B -> C, rate: {k: 1e-3 1/s}}\nfeed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L, B: 0.01 mol/L}}\nreactor: {type: cstr, volume: 1 m3}\n";
    let t = table_of("autocatalytic_key", yaml);
    assert_eq!(t["key"], "A");
    assert_eq!(t["key_is_default"], true);
    assert_eq!(t["reactions"][0]["limiting"], "A");
    assert_eq!(t["reactions"][1]["limiting"], "B");
}
