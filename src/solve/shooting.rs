//! A counter-current coolant stream: the two-point boundary-value problem of a tube (PFR or
//! packed bed) whose coolant enters at the reactor outlet, solved by shooting on the coolant's
//! outlet temperature.
//!
//! The reacting stream is known at the inlet (x = 0: F_j0, T0, p = 1) and the coolant at the
//! outlet (x = L: T_a = T_in). With θ = T_a(0) guessed, the balances are an initial-value
//! problem from the inlet; θ solves the problem when the residual
//!
//! ```text
//! R(θ) = T_a(L; θ) − T_in
//! ```
//!
//! vanishes (single shooting; Keller, Numerical Methods for Two-Point Boundary-Value
//! Problems, 1968, from memory).
//!
//! **Where the roots can be.** The steady-flow energy balance of the two streams together
//! (Fogler, Elements of Chemical Reaction Engineering, ch. 12, from memory) gives
//!
//! ```text
//! ṁ_c c_p,c (θ − T_in) = Q_released − Σ_j F_j0 Cp_j (T_out − T0),
//! ```
//!
//! and with an exothermic network the reacting stream leaves no colder than min(T0, T_in) (it
//! only gains heat from reaction and exchanges it with a coolant that is never colder than
//! that), so θ ≤ T_in + [Q⁺ + C0 max(0, T0 − T_in)]/(ṁ_c c_p,c), C0 = Σ_j F_j0 Cp_j(T0); likewise
//! θ ≥ T_in − [Q⁻ + C0 max(0, T_in − T0)]/(ṁ_c c_p,c). Q⁺ = Σ_j F_j0 h⁺_j bounds the heat the
//! reactions can release, h⁺_j the heat released per mole of species j as it reacts down the
//! most exothermic path of the network (its own reaction's −ΔH_i(T0)/|ν_ij| plus what its
//! products can release in turn; a longest-path relaxation over the reactions, both
//! directions of a reversible one); Q⁻ the heat they can absorb. The coolant also relaxes
//! toward the reacting stream along its path, so the scan range is the wider of this and
//! [min(T0, T_in) − Q⁻/C0, max(T0, T_in) + Q⁺/C0], each margin widened by 10 % and the range by
//! 1 K (Cp and ΔH vary with T). The reacting stream itself can be hotter than T0 + Q⁺/C0:
//! the coolant carries heat from the reaction zone back toward the inlet (heat
//! recirculation).
//!
//! **All roots.** R is evaluated at [`SCAN_POINTS`] evenly spaced θ over that range; every sign
//! change between neighbours is refined by the Illinois variant of regula falsi (Dahlquist &
//! Björck, Numerical Methods, from memory) to a bracket of 1e-11 θ. Several roots are several
//! steady states of the exchanger-reactor; all are reported, each with its hot spot and outlet
//! conversion, and the run shows the one of **lowest hot spot** (the safe reading of an
//! ambiguous design; the others are listed beside it). Two roots closer together than one
//! scan interval (about 1/40 of the range) give no sign change between scan points and can be
//! missed; that limit is stated in docs/methods.md.
//!
//! **Trials that run away.** A trial θ far from a root can drive T or T_a far outside the
//! range above (the residual of single shooting grows like exp(Ua L/(ṁ_c c_p,c))): such an
//! integration is stopped where it leaves the range widened by its own width below and four
//! widths above (room for heat recirculation), and the trial
//! counts only for its sign (above: positive; below: negative), never as a root. A refined
//! bracket whose end is such a trial is a jump of R, not a root, and is reported as a note. A
//! trial whose integration fails outright has no sign: the scan counts it, and a sign change
//! across it is not looked for (the note says how many trials failed).

use super::hotspot::HotSpot;
use super::ode::{OdeOptions, Output};
use super::{Adapter, SolveError};
use crate::model::Network;
use crate::reactor::{Balance, Energy};
use rayon::prelude::*;

/// Number of trial coolant outlet temperatures in the scan (40 intervals).
pub const SCAN_POINTS: usize = 41;

/// Relative width of the refined bracket of a root.
const ROOT_TOLERANCE: f64 = 1e-11;

/// The rule that picks the solution a run shows when there are several.
pub const DEFAULT_CHOICE: &str = "lowest hot spot";

/// One solution of the counter-current problem.
#[derive(Debug, Clone, serde::Serialize)]
pub struct CoolantSolution {
    /// The coolant's outlet temperature T_a(0), K.
    pub coolant_outlet_temperature: f64,
    pub hot_spot: HotSpot,
    /// Outlet conversion of the key reactant.
    pub conversion: f64,
}

/// Every solution found, and the search.
#[derive(Debug, Clone, serde::Serialize)]
pub struct CounterCurrent {
    /// In order of rising coolant outlet temperature.
    pub solutions: Vec<CoolantSolution>,
    /// Index into `solutions` of the one the run shows (0-based).
    pub shown: usize,
    /// The rule that picked it.
    pub choice: &'static str,
    /// The range of T_a(0) scanned, K.
    pub scan: (f64, f64),
    /// Integrations of trial values (scan and refinement).
    pub trials: usize,
    /// Trials whose integration failed (no sign).
    pub failed_trials: usize,
    /// What the search could not settle, each a sentence.
    pub notes: Vec<String>,
}

/// Whether the balance has a counter-current coolant stream (a boundary-value problem).
pub fn is_counter_current(balance: &Balance) -> bool {
    balance
        .energy()
        .and_then(|e| e.coolant_stream())
        .is_some_and(|c| c.2)
}

/// Why a study that integrates once from the inlet over growing sizes (the size for a
/// conversion, the best size) cannot take a counter-current coolant: the coolant enters at the
/// outlet, so the coolant's temperature at the inlet differs for every size and no prefix of
/// one integration is the profile of a shorter tube.
pub fn size_study_refusal(what: &str) -> String {
    format!(
        "{what} is found by integrating once from the inlet, which a counter-current coolant does not allow (the coolant enters at the reactor outlet, so every size is its own boundary-value problem): run `rxnet sweep` over reactor.volume (or reactor.catalyst) instead, or use a co-current or constant-temperature coolant"
    )
}

/// The outcome of one trial T_a(0).
#[derive(Debug, Clone, PartialEq)]
enum Trial {
    /// R(θ) = T_a(L) − T_in, K.
    Value(f64),
    /// T or T_a left the physical range upward (R counted positive) or downward (negative).
    Above,
    Below,
    /// The integration failed.
    Failed(String),
}

impl Trial {
    fn sign(&self) -> Option<f64> {
        match self {
            Trial::Value(v) if *v == 0.0 => Some(0.0),
            Trial::Value(v) => Some(v.signum()),
            Trial::Above => Some(1.0),
            Trial::Below => Some(-1.0),
            Trial::Failed(_) => None,
        }
    }
}

/// Heat released (`sign` = 1) or absorbed (`sign` = −1) per mole of each species as it reacts
/// down the network (J/mol, ≥ 0): a longest-path relaxation (module notes).
fn heat_per_mole(net: &Network, e: &Energy, t0: f64, sign: f64) -> Vec<f64> {
    let n = net.species.len();
    // (release of the direction, its net coefficients with the sign of the direction)
    let mut steps: Vec<(f64, Vec<(usize, f64)>)> = Vec::new();
    for (i, r) in net.reactions.iter().enumerate() {
        let release = -e.reaction_enthalpy(i, &r.net, t0) * sign;
        steps.push((release, r.net.clone()));
        if r.reversible {
            steps.push((-release, r.net.iter().map(|&(j, v)| (j, -v)).collect()));
        }
    }
    let mut h = vec![0.0; n];
    for _ in 0..=n {
        let mut next = vec![0.0f64; n];
        for (q, nu) in &steps {
            let made: f64 = nu
                .iter()
                .filter(|(_, v)| *v > 0.0)
                .map(|&(p, v)| v * h[p])
                .sum();
            for &(j, v) in nu.iter().filter(|(_, v)| *v < 0.0) {
                next[j] = next[j].max((q + made) / -v);
            }
        }
        let settled = next
            .iter()
            .zip(&h)
            .all(|(a, b)| (a - b).abs() <= 1e-12 * a.abs().max(1.0));
        h = next;
        if settled {
            break;
        }
    }
    h
}

/// The range of T_a(0) that holds every solution (module notes), K.
pub fn scan_range(net: &Network, balance: &Balance, t_in: f64) -> (f64, f64) {
    let e = balance
        .energy()
        .expect("a coolant stream has an energy balance");
    let t0 = net.feed.temperature;
    let f0 = &net.feed.amounts;
    let cap = e.capacity_rate(f0, t0);
    let rise = |sign: f64| -> f64 {
        let h = heat_per_mole(net, e, t0, sign);
        let q: f64 = f0.iter().zip(&h).map(|(f, h)| f * h).sum();
        if cap > 0.0 { q / cap } else { 0.0 }
    };
    let (up, down) = (rise(1.0), rise(-1.0));
    let (_, coolant, _) = e.coolant_stream().expect("a coolant stream");
    // Through the coolant's own energy balance (module notes).
    let via_coolant = |q: f64, sensible: f64| 1.1 * (q * cap + cap * sensible.max(0.0)) / coolant;
    let lo = (t0.min(t_in) - 1.1 * down).min(t_in - via_coolant(down, t_in - t0)) - 1.0;
    let hi = (t0.max(t_in) + 1.1 * up).max(t_in + via_coolant(up, t0 - t_in)) + 1.0;
    (lo.max(1.0), hi)
}

/// Solve the counter-current problem: every solution in the scan range, and the model state at
/// the inlet of the one shown.
pub fn solve(
    net: &Network,
    balance: &Balance,
    o: &OdeOptions,
) -> Result<(Vec<f64>, CounterCurrent), SolveError> {
    let e = balance
        .energy()
        .expect("a coolant stream has an energy balance");
    let (t_in, _, _) = e
        .coolant_stream()
        .expect("a counter-current problem has a coolant stream");
    let ki = balance.coolant_index().expect("coolant state");
    let ti = balance.temperature_index().expect("temperature state");
    let (_, _, size) = super::reactor_axis(net);
    let (lo, hi) = scan_range(net, balance, t_in);
    let width = hi - lo;
    let (band_lo, band_hi) = ((lo - width).max(0.5 * lo), hi + 4.0 * width);
    let start = |theta: f64| {
        let mut y = balance.initial_state(net);
        y[ki] = theta;
        y
    };
    // Distance inside the physical band; it crosses zero where T or T_a leaves it.
    let band = |_x: f64, y: &[f64]| {
        (y[ti] - band_lo)
            .min(band_hi - y[ti])
            .min(y[ki] - band_lo)
            .min(band_hi - y[ki])
    };
    let trial = |theta: f64| -> Trial {
        // Piecewise between the breakpoints of a distributed feed, if any.
        match super::pieces::until_root(
            &Adapter(balance),
            &band,
            &start(theta),
            0.0,
            size,
            o,
            balance.breakpoints(),
        ) {
            Ok((Some((_, y)), _)) => {
                if y[ti].max(y[ki]) >= 0.5 * (band_lo + band_hi) {
                    Trial::Above
                } else {
                    Trial::Below
                }
            }
            Ok((None, last)) => Trial::Value(last[ki] - t_in),
            Err(err) => Trial::Failed(err.to_string()),
        }
    };
    let thetas: Vec<f64> = (0..SCAN_POINTS)
        .map(|k| lo + width * k as f64 / (SCAN_POINTS - 1) as f64)
        .collect();
    let scan: Vec<Trial> = thetas.par_iter().map(|&t| trial(t)).collect();
    let mut trials = SCAN_POINTS;
    let mut failed = scan
        .iter()
        .filter(|t| matches!(t, Trial::Failed(_)))
        .count();
    let mut notes = Vec::new();
    let mut roots = Vec::new();
    for k in 0..SCAN_POINTS {
        if scan[k] == Trial::Value(0.0) {
            roots.push(thetas[k]);
        }
        if k + 1 == SCAN_POINTS {
            break;
        }
        let (Some(sa), Some(sb)) = (scan[k].sign(), scan[k + 1].sign()) else {
            continue;
        };
        if sa * sb >= 0.0 {
            continue;
        }
        let r = refine(&trial, (thetas[k], &scan[k]), (thetas[k + 1], &scan[k + 1]));
        trials += r.trials;
        failed += r.failed;
        match r.outcome {
            Refined::Root(theta) => roots.push(theta),
            Refined::Jump(theta) => notes.push(format!(
                "the residual T_a(L) − T_in jumps sign near T_a(0) = {theta:.6} K where a trial's temperatures leave the physical range: not a solution"
            )),
            Refined::Failed(theta, why) => notes.push(format!(
                "a sign change near T_a(0) = {theta:.6} K could not be refined: {why}"
            )),
        }
    }
    if failed > 0 {
        notes.push(format!(
            "{failed} of {trials} trial values of T_a(0) failed to integrate; a solution between failed trials would not be found"
        ));
    }
    if roots.is_empty() {
        let why = scan.iter().find_map(|t| match t {
            Trial::Failed(m) => Some(format!(" (first integration failure: {m})")),
            _ => None,
        });
        return Err(SolveError::BoundaryValue(format!(
            "no coolant outlet temperature T_a(0) in {lo:.3}..{hi:.3} K returns the coolant's inlet temperature {t_in} K at the reactor outlet{}; {}",
            why.unwrap_or_default(),
            if notes.is_empty() {
                "check the coolant flow, U and area".to_string()
            } else {
                notes.join("; ")
            }
        )));
    }
    roots.sort_by(f64::total_cmp);
    let key = net.key;
    let fa0 = net.feed.amounts[key];
    let mut solutions = Vec::with_capacity(roots.len());
    for &theta in &roots {
        let (sol, extremes) = super::pieces::integrate_watching(
            &Adapter(balance),
            &start(theta),
            size,
            &Output::End,
            o,
            &[vec![(ti, 1.0)]],
            balance.breakpoints(),
        )
        .map_err(|source| super::study_error(net, size, source))?;
        let hot_spot = HotSpot::of(&extremes[0], size);
        let end = sol.y.last().expect("end point");
        solutions.push(CoolantSolution {
            coolant_outlet_temperature: theta,
            hot_spot,
            conversion: (fa0 - end[key]) / fa0,
        });
    }
    let shown = (0..solutions.len())
        .min_by(|&a, &b| {
            solutions[a]
                .hot_spot
                .temperature
                .total_cmp(&solutions[b].hot_spot.temperature)
        })
        .expect("at least one solution");
    let y0 = start(solutions[shown].coolant_outlet_temperature);
    Ok((
        y0,
        CounterCurrent {
            solutions,
            shown,
            choice: DEFAULT_CHOICE,
            scan: (lo, hi),
            trials,
            failed_trials: failed,
            notes,
        },
    ))
}

/// How the refinement of one bracket ended.
#[derive(Debug, Clone, PartialEq)]
enum Refined {
    /// A root: both ends of the final bracket are integrated residuals of opposite sign.
    Root(f64),
    /// The sign changes across a trial that left the physical range: a jump, not a root.
    Jump(f64),
    /// A trial inside the bracket failed to integrate.
    Failed(f64, String),
}

struct Refinement {
    outcome: Refined,
    trials: usize,
    failed: usize,
}

/// Narrow a bracket [a, b] with a sign change of R to [`ROOT_TOLERANCE`]: the Illinois
/// variant of regula falsi where both ends carry a residual, bisection where one only has a
/// sign.
fn refine(trial: &dyn Fn(f64) -> Trial, a: (f64, &Trial), b: (f64, &Trial)) -> Refinement {
    let (mut a, mut ta) = (a.0, a.1.clone());
    let (mut b, mut tb) = (b.0, b.1.clone());
    let (mut fa_scale, mut fb_scale) = (1.0, 1.0);
    let mut trials = 0;
    // side of the last update: +1 when b moved, −1 when a moved
    let mut last = 0;
    for _ in 0..200 {
        if (b - a).abs() <= ROOT_TOLERANCE * a.abs().max(b.abs()) {
            break;
        }
        let c = match (&ta, &tb) {
            (Trial::Value(fa), Trial::Value(fb)) => {
                let (fa, fb) = (fa * fa_scale, fb * fb_scale);
                let c = b - fb * (b - a) / (fb - fa);
                if c > a.min(b) && c < a.max(b) {
                    c
                } else {
                    0.5 * (a + b)
                }
            }
            _ => 0.5 * (a + b),
        };
        let tc = trial(c);
        trials += 1;
        let Some(sc) = tc.sign() else {
            let Trial::Failed(why) = tc else {
                unreachable!("only a failed trial has no sign")
            };
            return Refinement {
                outcome: Refined::Failed(c, why),
                trials,
                failed: 1,
            };
        };
        if sc == 0.0 {
            return Refinement {
                outcome: Refined::Root(c),
                trials,
                failed: 0,
            };
        }
        // Keep the end whose sign differs from c's; halve its residual when it is kept twice
        // running (Illinois).
        if sc == ta.sign().expect("bracket ends have signs") {
            a = c;
            ta = tc;
            fa_scale = 1.0;
            if last == -1 {
                fb_scale *= 0.5;
            }
            last = -1;
        } else {
            b = c;
            tb = tc;
            fb_scale = 1.0;
            if last == 1 {
                fa_scale *= 0.5;
            }
            last = 1;
        }
    }
    let outcome = match (&ta, &tb) {
        (Trial::Value(fa), Trial::Value(fb)) => {
            Refined::Root(if fa.abs() <= fb.abs() { a } else { b })
        }
        _ => Refined::Jump(0.5 * (a + b)),
    };
    Refinement {
        outcome,
        trials,
        failed: 0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A residual with three simple roots (a cubic; the roots are exact by construction).
    fn cubic(x: f64) -> Trial {
        Trial::Value((x - 1.0) * (x - 2.0) * (x - 3.5))
    }

    #[test]
    fn refinement_reaches_each_root_of_a_cubic() {
        for (a, b, want) in [(0.5, 1.7, 1.0), (1.7, 2.9, 2.0), (2.9, 5.0, 3.5)] {
            let r = refine(&cubic, (a, &cubic(a)), (b, &cubic(b)));
            let Refined::Root(x) = r.outcome else {
                panic!("{:?}", r.outcome)
            };
            assert!((x - want).abs() <= 1e-10, "root {x}, want {want}");
            // Illinois converges superlinearly: far fewer trials than bisection's ~35.
            assert!(r.trials < 30, "{} trials", r.trials);
        }
    }

    #[test]
    fn a_jump_across_a_runaway_trial_is_not_a_root() {
        // R negative below 2, "left the range upward" above: a sign change with no root.
        let f = |x: f64| {
            if x < 2.0 {
                Trial::Value(-1.0 - x)
            } else {
                Trial::Above
            }
        };
        let r = refine(&f, (1.0, &f(1.0)), (3.0, &f(3.0)));
        let Refined::Jump(x) = r.outcome else {
            panic!("{:?}", r.outcome)
        };
        assert!((x - 2.0).abs() < 1e-9);
    }

    #[test]
    fn a_failed_trial_inside_the_bracket_is_reported_not_taken_as_a_root() {
        let f = |x: f64| {
            if (x - 2.0).abs() < 0.6 {
                Trial::Failed("step size became too small".into())
            } else {
                Trial::Value(x - 2.2)
            }
        };
        let r = refine(&f, (1.0, &f(1.0)), (3.0, &f(3.0)));
        assert!(matches!(r.outcome, Refined::Failed(..)), "{:?}", r.outcome);
        assert_eq!(r.failed, 1);
    }
}
