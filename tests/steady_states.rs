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
