//! Forward sensitivities through trains of vessels (joins, bypasses, side-fed tube stretches)
//! against central finite differences of whole solves, and against the closed form of equal
//! tanks in series.
//!
//! Every rate constant, feed and size below is an invented test value, not data for any real
//! process. The finite differences are of whole `simulate` solves at rtol 1e-12, central, with
//! two levels of Richardson extrapolation over δ, δ/2, δ/4 (error O(δ⁶); common practice), so
//! they are an independent check of the unit-by-unit chain rule.

use rxnet::Network;
use rxnet::solve::sensitivity::train::sensitivities;
use rxnet::solve::{Points, Simulation, SolveError, SolveOptions, simulate};
use rxnet::studies::parameters::{self, Parameter};
use rxnet::studies::study::Study;

/// The step of the forward sensitivities' central differences of the right-hand side.
const H: f64 = 1e-5;
/// The first step of the whole-solve finite differences on a log scale (then δ/2 and δ/4,
/// extrapolated): large enough that a temperature's round-off (~1e-9 K of several hundred)
/// stays below 1e-6 of its change.
const H_FD: f64 = 2e-2;

fn study(text: &str) -> Study {
    Study::new(text.to_string(), "test.yaml".into(), vec![]).expect("the test study parses")
}

fn opts(rtol: f64, points: Points) -> SolveOptions {
    SolveOptions {
        rtol: Some(rtol),
        points,
        ..Default::default()
    }
}

fn solve(net: &Network, points: &Points) -> Simulation {
    simulate(net, &opts(1e-12, points.clone())).unwrap_or_else(|e| panic!("solve failed: {e}"))
}

/// What the finite differences compare: the outlet species, then (with an energy balance) the
/// outlet temperature; and the same at profile point `at` when given.
fn observed(sim: &Simulation, at: Option<usize>) -> Vec<f64> {
    let i = at.unwrap_or(sim.x.len() - 1);
    let mut y = sim.states[i].clone();
    if let Some(t) = &sim.temperature {
        y.push(t[i]);
    }
    y
}

/// ∂(observed)/∂θ of parameter `p` by central differences of whole solves, Richardson
/// extrapolated twice.
fn finite_difference(s: &Study, p: &Parameter, points: &Points, at: Option<usize>) -> Vec<f64> {
    let d = |h: f64| -> Vec<f64> {
        let pert = parameters::perturbed(s, &[], std::slice::from_ref(p), h)
            .unwrap()
            .remove(0);
        let (a, b) = (
            observed(&solve(&pert.plus, points), at),
            observed(&solve(&pert.minus, points), at),
        );
        a.iter().zip(&b).map(|(a, b)| (a - b) / pert.step).collect()
    };
    // An activation energy's natural scale is RT, not its own size: a smaller step there.
    let h = match p.scale {
        parameters::Scale::Log => H_FD,
        parameters::Scale::Linear => 0.3 * H_FD,
    };
    // Two levels of Richardson extrapolation: error O(δ⁶).
    let (d1, d2, d3) = (d(h), d(0.5 * h), d(0.25 * h));
    (0..d1.len())
        .map(|j| {
            let (r1, r2) = ((4.0 * d2[j] - d1[j]) / 3.0, (4.0 * d3[j] - d2[j]) / 3.0);
            (16.0 * r2 - r1) / 15.0
        })
        .collect()
}

/// The forward sensitivities of `observed` at point `at` (the outlet when `None`).
fn forward(
    sens: &rxnet::solve::sensitivity::Sensitivities,
    k: usize,
    at: Option<usize>,
) -> Vec<f64> {
    let last = sens.sim.x.len() - 1;
    let mut y = match at {
        None => sens.d_outlet[k].clone(),
        Some(i) => sens.d_states[k][i].clone(),
    };
    if let Some(t) = &sens.d_temperature {
        y.push(t[k][at.unwrap_or(last)]);
    }
    y
}

/// The forward and finite-difference derivatives of every parameter on a common footing, per
/// unit relative change of the parameter (each row times its step scale), judged as the
/// single-vessel sensitivity tests judge them: each entry to `rtol` relative, except entries
/// below 1e-5 of the largest of their kind (species flows, or temperatures), which are
/// round-off of the differences and must agree to 1e-8 of that largest.
struct Comparison {
    rows: Vec<Row>,
}

/// (what, forward, finite differences, index of the temperature entry if any).
type Row = (String, Vec<f64>, Vec<f64>, Option<usize>);

impl Comparison {
    fn push(
        &mut self,
        what: String,
        scale: f64,
        got: Vec<f64>,
        expect: Vec<f64>,
        t: Option<usize>,
    ) {
        assert_eq!(got.len(), expect.len(), "{what}");
        let s = |v: Vec<f64>| v.into_iter().map(|x| x * scale).collect::<Vec<f64>>();
        self.rows.push((what, s(got), s(expect), t));
    }

    fn assert(&self, rtol: f64) {
        let largest = |temperature: bool| {
            self.rows
                .iter()
                .flat_map(|(_, _, e, t)| {
                    e.iter()
                        .enumerate()
                        .filter(move |(j, _)| (Some(*j) == *t) == temperature)
                        .map(|(_, v)| v.abs())
                })
                .fold(0.0f64, f64::max)
        };
        let (species, temperature) = (largest(false), largest(true));
        for (what, got, expect, t) in &self.rows {
            for (j, (g, e)) in got.iter().zip(expect).enumerate() {
                let top = if Some(j) == *t { temperature } else { species };
                let ok = if e.abs() < 1e-5 * top {
                    (g - e).abs() <= 1e-8 * top
                } else {
                    (g - e).abs() <= rtol * e.abs()
                };
                assert!(
                    ok,
                    "{what}[{j}]: forward {g:.12e} vs finite differences {e:.12e} (per unit relative change; all: {got:?} vs {expect:?})"
                );
            }
        }
    }
}

/// Every parameter of `text` (or those of `only`): the outlet's forward sensitivities agree
/// with finite differences of whole solves to 1e-5 relative, and the nominal solve is
/// `simulate`'s. `profile_at`: (N, indices) also these points of the profile with N points per
/// stretch (not for size parameters, which move the points).
fn check(name: &str, text: &str, only: Option<&[&str]>, profile_at: Option<(usize, &[usize])>) {
    let s = study(text);
    let net = s.load(&[]).unwrap();
    let params: Vec<Parameter> = match only {
        None => parameters::every(&s, &net),
        Some(paths) => paths
            .iter()
            .map(|p| parameters::read(&s, p).unwrap())
            .collect(),
    };
    assert!(!params.is_empty(), "{name}: no parameters");
    let pert = parameters::perturbed(&s, &[], &params, H).unwrap();
    let points = match profile_at {
        Some((n, _)) => Points::Even(n),
        None => Points::End,
    };
    let sens = sensitivities(&net, &pert, &opts(1e-11, points.clone()))
        .unwrap_or_else(|e| panic!("{name}: {e}"));
    let nominal = simulate(&net, &opts(1e-11, points.clone())).unwrap();
    assert_eq!(
        sens.sim.x, nominal.x,
        "{name}: the nominal profile is simulate's"
    );
    assert_eq!(sens.sim.states, nominal.states, "{name}");
    assert_eq!(sens.sim.temperature, nominal.temperature, "{name}");
    for k in 0..params.len() {
        assert_eq!(sens.d_states[k].len(), nominal.x.len(), "{name}");
    }
    let t_index = nominal.temperature.as_ref().map(|_| net.species.len());
    let mut outlet = Comparison { rows: Vec::new() };
    let mut profile = Comparison { rows: Vec::new() };
    for (k, p) in params.iter().enumerate() {
        let fd = finite_difference(&s, p, &Points::End, None);
        outlet.push(
            format!("{name}: ∂outlet/∂{}", p.path),
            p.step_scale(),
            forward(&sens, k, None),
            fd,
            t_index,
        );
        if let Some((_, at)) = profile_at
            && !is_size(&p.path)
        {
            for &i in at {
                let fd = finite_difference(&s, p, &points, Some(i));
                profile.push(
                    format!("{name}: ∂(profile point {i})/∂{}", p.path),
                    p.step_scale(),
                    forward(&sens, k, Some(i)),
                    fd,
                    t_index,
                );
            }
        }
    }
    outlet.assert(1e-5);
    profile.assert(1e-5);
}

fn is_size(path: &str) -> bool {
    ["volume", "catalyst", "time"]
        .iter()
        .any(|s| path.ends_with(&format!(".{s}")))
}

/// The bundled split-feed cascade (three tanks, A joining before the second and third): every
/// parameter the study has.
#[test]
fn the_split_feed_cascade_agrees_with_finite_differences() {
    let text = include_str!("../networks/split_feed_cascade.yaml");
    check("split_feed_cascade", text, None, None);
    // The profile: the feed, then each tank's outlet.
    check(
        "split_feed_cascade, profile",
        text,
        Some(&[
            "reactions.couple.rate.k",
            "reactions.dimerise.rate.Ea",
            "feed.concentrations.A",
            "train.T2.join.volumetric",
        ]),
        Some((3, &[0, 1, 2, 3])),
    );
}

/// A tube then a tank with a stream joining before it and a fifth of it bypassed, with an
/// energy balance (adiabatic), so the temperature's sensitivity crosses the mixing points.
#[test]
fn a_tube_and_a_bypassed_tank_with_a_join_agree_with_finite_differences() {
    let text = "name: tube and tank (test values)
phase: liquid
species: {A: {cp: 150 J/(mol*K)}, B: {cp: 150 J/(mol*K)}, C: {cp: 150 J/(mol*K)}, W: {cp: 75 J/(mol*K)}}
reactions:
  - {id: first, stoich: A -> B, rate: {k: 2e-3 1/s, Ea: 60 kJ/mol, T_ref: 320 K, dH: -15 kJ/mol}}
  - {id: second, stoich: B -> C, rate: {k: 5e-4 1/s, Ea: 80 kJ/mol, T_ref: 320 K, dH: -5 kJ/mol}}
feed: {T: 320 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L, W: 40 mol/L}}
train:
  - {id: R1, type: pfr, volume: 0.2 m3, heat: adiabatic}
  - {id: R2, type: cstr, volume: 0.3 m3, heat: adiabatic, bypass: 0.2, join: {T: 300 K, concentrations: {A: 0.5 mol/L, W: 40 mol/L}, volumetric: 0.5 L/s}}
";
    check(
        "tube and bypassed tank",
        text,
        Some(&[
            "reactions.first.rate.k",
            "reactions.first.rate.Ea",
            "reactions.second.rate.k",
            "reactions.second.rate.Ea",
            "feed.T",
            "feed.volumetric",
            "train.R1.volume",
            "train.R2.volume",
            "train.R2.bypass",
            "train.R2.join.T",
            "train.R2.join.concentrations.A",
        ]),
        None,
    );
    // And the profile, point by point, for the parameters that do not move its points: the
    // feed, a point inside the tube, its outlet, the tank's outlet before the bypass rejoins,
    // and the unit's outlet after it.
    let n = solve(&study(text).load(&[]).unwrap(), &Points::Even(5))
        .x
        .len();
    check(
        "tube and bypassed tank, profile",
        text,
        Some(&[
            "reactions.first.rate.k",
            "reactions.first.rate.Ea",
            "feed.T",
            "feed.volumetric",
            "train.R2.bypass",
            "train.R2.join.T",
        ]),
        Some((5, &[0, 2, n - 3, n - 2, n - 1])),
    );
}

/// A tube with side feeds (the liquid case of tests/reference/side_feeds.py), stretch by
/// stretch: the side feeds' flows, the tube's size and the rate constants.
#[test]
fn a_side_fed_tube_agrees_with_finite_differences() {
    let text = "name: side-fed series tube (test values)
phase: liquid
species: {A: {formula: C2}, B: {formula: H2}, R: {formula: C2H2}, S: {formula: C2H4}}
reactions:
  - {id: r1, stoich: A + B -> R, rate: {k: 0.0002 m3/(mol*s)}}
  - {id: r2, stoich: R + B -> S, rate: {k: 0.0001 m3/(mol*s)}}
feed: {T: 320 K, volumetric: 0.001 m3/s, concentrations: {A: 1000.0 mol/m3, B: 400.0 mol/m3}}
reactor:
  type: pfr
  volume: 0.5 m3
  side_feeds: [{at: 0.1 m3, flows: {B: 0.4 mol/s}, volumetric: 0.0004 m3/s}, {at: 0.3 m3, flows: {B: 0.4 mol/s}, volumetric: 0.0004 m3/s}]
";
    check(
        "side-fed tube",
        text,
        Some(&[
            "reactions.r1.rate.k",
            "reactions.r2.rate.k",
            "feed.volumetric",
            "feed.concentrations.B",
            "reactor.volume",
            "reactor.side_feeds.0.flows.B",
            "reactor.side_feeds.1.volumetric",
        ]),
        None,
    );
    let net = study(text).load(&[]).unwrap();
    let n = solve(&net, &Points::Even(4)).x.len();
    check(
        "side-fed tube profile",
        text,
        Some(&["reactions.r1.rate.k", "reactor.side_feeds.0.flows.B"]),
        Some((4, &[1, n / 2, n - 3, n - 1])),
    );
}

/// An ideal-gas train: a tube, then a tank with a stream joining at another temperature and a
/// bypass, with heat capacities and an energy balance in the tank (the volumetric flows
/// follow F_T R T / P, so their sensitivities come from the species', T's and P's).
#[test]
fn a_gas_train_agrees_with_finite_differences() {
    let text = "name: gas train (test values)
phase: gas
species: {A: {cp: 40 J/(mol*K)}, B: {cp: 40 J/(mol*K)}, C: {cp: 60 J/(mol*K)}, N2: {cp: 29 J/(mol*K)}}
reactions:
  - {id: r1, stoich: A -> 2 B, rate: {k: 0.5 1/s, Ea: 50 kJ/mol, T_ref: 500 K, dH: -20 kJ/mol}}
  - {id: r2, stoich: B -> C, rate: {k: 0.1 1/s, Ea: 70 kJ/mol, T_ref: 500 K, dH: -10 kJ/mol}}
feed: {T: 500 K, P: 2 bar, flows: {A: 1 mol/s, N2: 3 mol/s}}
train:
  - {id: R1, type: pfr, volume: 0.05 m3}
  - {id: R2, type: cstr, volume: 0.1 m3, heat: adiabatic, bypass: 0.1, join: {T: 450 K, flows: {A: 0.5 mol/s, N2: 1 mol/s}}}
";
    check(
        "gas train",
        text,
        Some(&[
            "reactions.r1.rate.k",
            "reactions.r2.rate.k",
            "reactions.r1.rate.Ea",
            "feed.T",
            "feed.P",
            "feed.flows.A",
            "train.R1.volume",
            "train.R2.volume",
            "train.R2.join.T",
            "train.R2.join.flows.A",
            "train.R2.bypass",
        ]),
        None,
    );
}

/// N equal isothermal tanks in series, first order A -> B: C_A,N = C_A0 (1 + kτ)^−N with τ
/// the space time of one tank, so ∂C_A,N/∂ln k = −N kτ C_A0 (1 + kτ)^−N−1 (Levenspiel ch. 6,
/// tanks in series; the derivative by hand; from memory).
#[test]
fn equal_tanks_in_series_match_the_closed_form() {
    let (k, v0, ca0, v) = (0.01, 1e-3, 1000.0, 0.05); // 1/s, m3/s, mol/m3, m3 per tank
    let tau = v / v0;
    for n in [1usize, 3, 6] {
        let units: Vec<String> = (1..=n)
            .map(|i| format!("  - {{id: R{i}, type: cstr, volume: {v} m3}}"))
            .collect();
        let text = format!(
            "name: tanks (test values)
phase: liquid
species: {{A: {{formula: C2H4O}}, B: {{formula: C2H4O}}}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {k} 1/s}}}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1 mol/L}}}}
train:
{}
",
            units.join("\n")
        );
        let s = study(&text);
        let net = s.load(&[]).unwrap();
        let p = parameters::read(&s, "reactions.r1.rate.k").unwrap();
        let pert = parameters::perturbed(&s, &[], &[p], H).unwrap();
        let sens = sensitivities(&net, &pert, &opts(1e-10, Points::End)).unwrap();
        let nn = n as i32;
        let expect = -(n as f64) * k * tau * ca0 * (1.0 + k * tau).powi(-nn - 1);
        // The outlet flow of A is v0 C_A,N.
        let got = sens.d_outlet[0][0] / v0;
        assert!(
            (got - expect).abs() <= 1e-8 * expect.abs(),
            "{n} tanks: ∂C_A/∂ln k = {got:.12e} vs closed form {expect:.12e}"
        );
        // What A loses B gains.
        assert!((sens.d_outlet[0][1] / v0 + expect).abs() <= 1e-8 * expect.abs());
    }
}

/// A tube with a recycle: refused, naming the unit and the recycle.
#[test]
fn a_recycle_is_refused_naming_the_unit() {
    let text = "name: recycle (test values)
phase: liquid
species: {A: null, B: null}
reactions: [{id: r1, stoich: A -> B, rate: {k: 0.01 1/s}}]
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
train:
  - {id: R1, type: cstr, volume: 0.1 m3}
  - {id: loop, type: pfr, volume: 0.2 m3, recycle: 2}
";
    let s = study(text);
    let net = s.load(&[]).unwrap();
    let p = parameters::read(&s, "reactions.r1.rate.k").unwrap();
    let pert = parameters::perturbed(&s, &[], &[p], H).unwrap();
    let e = sensitivities(&net, &pert, &opts(1e-10, Points::End)).unwrap_err();
    let m = e.to_string();
    assert!(
        matches!(e, SolveError::Setup(_))
            && m.contains("unit `loop`")
            && m.contains("recycle")
            && m.contains("not supported"),
        "{m}"
    );
}
