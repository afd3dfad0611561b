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

use common::{network, num, rxnet};
use rxnet::solve::sensitivity::{Sensitivities, simulate_sensitivities};
use rxnet::solve::{Points, SolveOptions, simulate};
use rxnet::studies::evaluate::totals;
use rxnet::studies::parameters::{Parameter, every, perturbed, read};
use rxnet::studies::sensitivity::{Request, sensitivity};
use rxnet::studies::study::Study;
use rxnet::studies::target::Target;

fn study_of(text: &str) -> Study {
    Study::new(text.into(), "test.yaml".into(), vec![]).unwrap_or_else(|e| panic!("{e}"))
}

fn tight(points: Points) -> SolveOptions {
    SolveOptions {
        rtol: Some(1e-12),
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
/// parameter's scale, Richardson-extrapolated ((4 D(H/2) − D(H))/3: O(H⁴), common practice):
/// per parameter, the outlet species and then, with an energy balance, the outlet T.
fn finite_differences(study: &Study, params: &[Parameter], h: f64) -> Vec<Vec<f64>> {
    let opts = SolveOptions {
        rtol: Some(1e-12),
        ..Default::default()
    };
    let outlet = |net: &rxnet::Network| -> Vec<f64> {
        let sim = simulate(net, &opts).unwrap_or_else(|e| panic!("{e}"));
        let mut y = sim.outlet().to_vec();
        if let Some(t) = &sim.temperature {
            y.push(*t.last().unwrap());
        }
        y
    };
    let at = |h: f64| -> Vec<Vec<f64>> {
        perturbed(study, &[], params, h)
            .unwrap_or_else(|e| panic!("{e}"))
            .iter()
            .map(|p| {
                outlet(&p.plus)
                    .iter()
                    .zip(outlet(&p.minus))
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

/// Forward sensitivities of the outlet (species, and T where it is a state, for every
/// parameter but the size, which moves the end) against [`finite_differences`], to 1e-5
/// relative; components below 1e-5 of the largest (each derivative per unit relative change
/// of its parameter, in y's unit) are compared absolutely at 1e-8 of the largest.
fn check_against_finite_differences(name: &str, study: &Study, h: f64) {
    let net = study.load(&[]).unwrap();
    let params = every(study, &net);
    assert!(params.len() >= 3, "{name}: {} parameters", params.len());
    let out = sens(study, &params, &tight(Points::End));
    let fd = finite_differences(study, &params, h);
    let ns = net.species.len();
    let scaled = |k: usize, v: f64| v * params[k].step_scale();
    let mut worst = (0.0, String::new());
    // Species and temperature each against their own largest.
    for part in [0..ns, ns..fd[0].len()] {
        let largest = fd
            .iter()
            .enumerate()
            .flat_map(|(k, row)| row[part.clone()].iter().map(move |&v| scaled(k, v).abs()))
            .fold(0.0, f64::max);
        for (k, row) in fd.iter().enumerate() {
            for j in part.clone() {
                let got = if j < ns {
                    out.d_outlet[k][j]
                } else if params[k].path == net.size_path() {
                    continue;
                } else {
                    *out.d_temperature.as_ref().expect("T is a state")[k]
                        .last()
                        .unwrap()
                };
                let (w, g) = (scaled(k, row[j]), scaled(k, got));
                let what = if j < ns {
                    net.species[j].name.as_str()
                } else {
                    "T"
                };
                if w.abs() < 1e-5 * largest {
                    assert!(
                        (g - w).abs() < 1e-8 * largest,
                        "{name} {} {what}: {g} vs {w}",
                        params[k].path
                    );
                    continue;
                }
                let e = (g - w).abs() / w.abs();
                if e > worst.0 {
                    worst = (e, format!("{} {what}: {g} vs {w}", params[k].path));
                }
            }
        }
    }
    eprintln!(
        "{name}: {} parameters, worst relative difference {:.2e} ({})",
        params.len(),
        worst.0,
        worst.1
    );
    assert!(worst.0 < 1e-5, "{name}: {}", worst.1);
}

#[test]
fn forward_sensitivities_agree_with_finite_differences_on_every_bundled_vessel() {
    for file in SINGLE_VESSEL {
        let text = std::fs::read_to_string(network(file)).unwrap();
        let study = Study::new(text, file.into(), vec![]).unwrap();
        check_against_finite_differences(file, &study, 1e-3);
    }
}

#[test]
fn forward_sensitivities_agree_with_finite_differences_on_other_vessels() {
    // The bundled studies in other vessels: a gas CSTR with reversible steps, a liquid CSTR in
    // series, the hot steady state of the cooled CSTR, a tube for the stirred tank. The hot
    // state's outlet bends sharply with the feed temperature (at H = 1e-3, a step of 0.3 K,
    // the extrapolated difference is still 2e-4 off the H → 0 limit): a smaller step there.
    for (file, sets, h) in [
        ("steam_reforming.yaml", vec!["reactor.type=cstr"], 1e-3),
        (
            "aldehyde_oxidation_pfr.yaml",
            vec!["reactor.type=cstr"],
            1e-3,
        ),
        (
            "epoxide_hydration_cstr.yaml",
            vec!["solver.steady_state=highest"],
            1e-4,
        ),
        ("dimerization_cstr.yaml", vec!["reactor.type=pfr"], 1e-3),
    ] {
        let text = std::fs::read_to_string(network(file)).unwrap();
        let over = sets.iter().map(|s| s.parse().unwrap()).collect();
        let study = Study::new(text, file.into(), over).unwrap();
        check_against_finite_differences(&format!("{file} {sets:?}"), &study, h);
    }
}

/// The target's value after a whole solve of `net` (rtol 1e-12).
fn target_after(net: &rxnet::Network, target: &Target) -> f64 {
    let opts = SolveOptions {
        rtol: Some(1e-12),
        ..Default::default()
    };
    let sim = simulate(net, &opts).unwrap_or_else(|e| panic!("{e}"));
    let (fed, left) = totals(net, &sim);
    target.value_against(net, &fed, &left).unwrap()
}

#[test]
fn target_sensitivities_agree_with_finite_differences_on_every_bundled_vessel() {
    for file in SINGLE_VESSEL {
        let text = std::fs::read_to_string(network(file)).unwrap();
        let study = Study::new(text, file.into(), vec![]).unwrap();
        let net = study.load(&[]).unwrap();
        // The desired product's yield (the default), and the conversion, whose value depends
        // on the feed directly.
        for target_text in [None, Some("conversion")] {
            let req = Request {
                target: target_text.map(str::to_string),
                of: Vec::new(),
                profile: None,
                solve: SolveOptions {
                    rtol: Some(1e-11),
                    ..Default::default()
                },
            };
            let rep = sensitivity(&study, None, &req).unwrap_or_else(|e| panic!("{file}: {e}"));
            let target = Target::parse(&rep.target, &net).unwrap();
            let params = every(&study, &net);
            assert_eq!(rep.sensitivities.len(), params.len());
            // Central differences of whole solves, Richardson-extrapolated, per unit θ.
            let fd_at = |h: f64| -> Vec<f64> {
                perturbed(&study, &[], &params, h)
                    .unwrap()
                    .iter()
                    .map(|p| {
                        (target_after(&p.plus, &target) - target_after(&p.minus, &target)) / p.step
                    })
                    .collect()
            };
            let (c, f) = (fd_at(1e-3), fd_at(5e-4));
            // ∂g/∂θ from the report's ∂g/∂p (Log: ∂g/∂ln p = p ∂g/∂p).
            let per_theta = |p: &Parameter, absolute: f64| match p.scale {
                rxnet::studies::parameters::Scale::Log => absolute * p.si,
                rxnet::studies::parameters::Scale::Linear => absolute,
            };
            let largest = c
                .iter()
                .zip(&params)
                .map(|(v, p)| (v * p.step_scale()).abs())
                .fold(0.0, f64::max);
            // Floor: 1e-5 of the largest, and never below 1e-7 of the target itself (a yield of
            // exactly 1 has every derivative zero, resolved by neither method).
            let floor = (1e-5 * largest).max(1e-7 * rep.value.abs());
            for (k, p) in params.iter().enumerate() {
                let want = (4.0 * f[k] - c[k]) / 3.0;
                let row = rep.sensitivities.iter().find(|r| r.path == p.path).unwrap();
                let got = per_theta(p, row.absolute);
                let (w, g) = (want * p.step_scale(), got * p.step_scale());
                let context = format!("{file} {} {}: {got} vs {want}", rep.target, p.path);
                if w.abs() < floor {
                    assert!((g - w).abs() < floor, "{context}");
                } else {
                    assert!((g - w).abs() < 1e-5 * w.abs(), "{context}");
                }
            }
        }
    }
}

/// A bundled study's path for the command.
fn study_path(file: &str) -> String {
    network(file).to_string_lossy().into_owned()
}

#[test]
fn command_reports_ranked_json_and_exits_zero() {
    let run = rxnet(&[
        "sensitivity",
        &study_path("cooled_nitration_tube.yaml"),
        "--format",
        "json",
        "--profile",
        "5",
    ]);
    let v = run.ok_json();
    for key in [
        "target",
        "value",
        "sensitivities",
        "profile",
        "x_name",
        "x_unit",
        "warnings",
    ] {
        assert!(v.get(key).is_some(), "missing `{key}`: {v}");
    }
    assert_eq!(v["target"], "yield:MNT");
    let rows = v["sensitivities"].as_array().unwrap();
    assert!(rows.len() >= 10);
    let mut last = f64::INFINITY;
    for r in rows {
        for key in ["path", "value", "unit", "normalized", "absolute"] {
            assert!(r.get(key).is_some(), "missing `{key}` in {r}");
        }
        let n = num(&r["normalized"], "normalized").abs();
        assert!(n <= last, "not ranked: {n} after {last}");
        last = n;
    }
    let profile = v["profile"].as_array().unwrap();
    assert_eq!(profile.len(), 5);
    assert_eq!(
        profile[4]["normalized"].as_array().unwrap().len(),
        rows.len()
    );
    // The outlet row of the profile is the ranked table (a size moves the end only there).
    for (k, r) in rows.iter().enumerate() {
        if r["path"] == "reactor.volume" {
            continue;
        }
        let a = num(&profile[4]["normalized"][k], "profile");
        let b = num(&r["normalized"], "normalized");
        assert!(
            (a - b).abs() <= 1e-6 * b.abs().max(1e-6),
            "{}: {a} vs {b}",
            r["path"]
        );
    }
    // The text form names the target and the parameter.
    let text = rxnet(&[
        "sensitivity",
        &study_path("dimerization_cstr.yaml"),
        "--target",
        "R",
        "--of",
        "reactions.dimerise.rate.k",
    ]);
    assert_eq!(text.code, 0, "{}", text.stderr);
    assert!(
        text.stdout.contains("reactions.dimerise.rate.k") && text.stdout.contains("R ="),
        "{}",
        text.stdout
    );
}

#[test]
fn command_refuses_what_it_cannot_answer() {
    // The consistency check fails: exit 1, as `run` refuses it.
    let run = rxnet(&["sensitivity", &study_path("unbalanced_epoxidation.yaml")]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    assert!(run.stderr.contains("error findings"), "{}", run.stderr);
    // Invalid requests: exit 2, naming what is wrong.
    let nitration = study_path("cooled_nitration_tube.yaml");
    for (args, says) in [
        (
            vec!["--of", "reactions.nope.rate.k"],
            "reactions.nope.rate.k",
        ),
        (vec!["--target", "yield:XYZ"], "XYZ"),
        (vec!["--target", "selectivity:MNT"], "selectivity"),
        (vec!["--profile", "1"], "--profile"),
        (vec!["--rtol", "5"], "rtol"),
    ] {
        let mut all = vec!["sensitivity", nitration.as_str()];
        all.extend(args.iter().copied());
        let r = rxnet(&all);
        assert_eq!(r.code, 2, "{args:?}: {}", r.stderr);
        assert!(r.stderr.contains(says), "{args:?}: {}", r.stderr);
    }
    // A stirred tank has no profile.
    let r = rxnet(&[
        "sensitivity",
        &study_path("dimerization_cstr.yaml"),
        "--profile",
        "5",
    ]);
    assert_eq!(r.code, 2, "{}", r.stderr);
}

/// The nitration tube with its coolant as a stream in the given direction.
fn nitration_with_coolant_stream(direction: &str) -> Study {
    let text = std::fs::read_to_string(network("cooled_nitration_tube.yaml"))
        .unwrap()
        .replace(
            "coolant: {T: 325 K}",
            &format!(
                "coolant: {{T_in: 325 K, mass_flow: 20 kg/s, cp: 4.18 kJ/(kg*K), direction: {direction}}}"
            ),
        );
    assert!(text.contains("T_in"));
    study_of(&text)
}

#[test]
fn refusals_name_the_reason() {
    // A counter-current coolant is a boundary-value problem: refused.
    let s = nitration_with_coolant_stream("counter_current");
    let net = s.load(&[]).unwrap();
    let p = perturbed(
        &s,
        &[],
        &[read(&s, "reactions.first_nitration.rate.k").unwrap()],
        1e-5,
    )
    .unwrap();
    let e = simulate_sensitivities(&net, &p, &SolveOptions::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("counter-current"), "{e}");
    // A co-current stream is an initial-value problem: its inlet temperature has a derivative
    // that agrees with finite differences of whole solves.
    let s = nitration_with_coolant_stream("co_current");
    let params = vec![read(&s, "reactor.heat.coolant.T_in").unwrap()];
    let out = sens(&s, &params, &tight(Points::End));
    let fd = finite_differences(&s, &params, 1e-3);
    let mnt = 2;
    assert!(
        (out.d_outlet[0][mnt] - fd[0][mnt]).abs() < 1e-5 * fd[0][mnt].abs(),
        "{} vs {}",
        out.d_outlet[0][mnt],
        fd[0][mnt]
    );
    // The end of a dosing window moves a breakpoint: refused.
    let text = std::fs::read_to_string(network("semibatch_acrylate_addition.yaml")).unwrap();
    let s = study_of(&text);
    let net = s.load(&[]).unwrap();
    let p = perturbed(&s, &[], &[read(&s, "reactor.dosing.0.to").unwrap()], 1e-5).unwrap();
    let e = simulate_sensitivities(&net, &p, &SolveOptions::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("breakpoint"), "{e}");
}

#[test]
fn profile_at_given_positions() {
    // Points::At gives exactly the positions asked for; positions outside the reactor or
    // decreasing are refused.
    let s = study_of(BATCH);
    let net = s.load(&[]).unwrap();
    let at = vec![0.0, 37.5, 100.0, 600.0];
    let sim = simulate(&net, &tight(Points::At(at.clone()))).unwrap();
    assert_eq!(sim.x, at);
    // N_A = N_A0 e^{−kt} (Levenspiel ch. 3, from memory).
    for (t, y) in sim.x.iter().zip(&sim.states) {
        let want = 1000.0 * (-2.0e-3 * t).exp();
        assert!(
            (y[0] - want).abs() < 1e-8 * 1000.0,
            "{t}: {} vs {want}",
            y[0]
        );
    }
    for bad in [vec![0.0, 700.0], vec![100.0, 50.0], vec![]] {
        let e = simulate(&net, &tight(Points::At(bad.clone()))).unwrap_err();
        assert!(
            matches!(e, rxnet::solve::SolveError::Setup(_)),
            "{bad:?}: {e}"
        );
    }
}

#[test]
fn every_lists_a_trains_units() {
    let text = std::fs::read_to_string(network("split_feed_cascade.yaml")).unwrap();
    let s = study_of(&text);
    let net = s.load(&[]).unwrap();
    let paths: Vec<String> = every(&s, &net).into_iter().map(|p| p.path).collect();
    for p in [
        "reactions.couple.rate.k",
        "reactions.dimerise.rate.Ea",
        "feed.volumetric",
        "feed.concentrations.A",
        "train.T1.volume",
        "train.T3.volume",
    ] {
        assert!(paths.iter().any(|q| q == p), "{p} not in {paths:?}");
    }
}

#[test]
fn adsorption_constants_are_parameters() {
    // A hyperbolic (adsorption-inhibited) step in series with a power-law one, liquid tube.
    let s = study_of(
        r#"
name: inhibited series tube
phase: liquid
species: {A: {}, B: {}, C: {}}
reactions:
  - id: first
    stoich: A -> B
    rate:
      law: hyperbolic
      k: 4.0e-3 1/s
      orders: {A: 1}
      adsorption: {A: {K: 2.0e-3 m3/mol}, B: {K: 0.03 (m3/mol)^0.5, order: 0.5, dH: -20 kJ/mol}}
      inhibition_power: 2
      Ea: 40 kJ/mol
      T_ref: 320 K
  - {id: second, stoich: B -> C, rate: {k: 1.0e-3 1/s, Ea: 60 kJ/mol, T_ref: 320 K}}
feed: {T: 330 K, volumetric: 1 L/s, concentrations: {A: 1.5 mol/L}}
reactor: {type: pfr, volume: 2 m3}
"#,
    );
    let net = s.load(&[]).unwrap();
    let paths: Vec<String> = every(&s, &net).into_iter().map(|p| p.path).collect();
    for p in [
        "reactions.first.rate.adsorption.A.K",
        "reactions.first.rate.adsorption.B.K",
    ] {
        assert!(paths.iter().any(|q| q == p), "{p} not in {paths:?}");
    }
    check_against_finite_differences("hyperbolic tube", &s, 1e-3);
}
