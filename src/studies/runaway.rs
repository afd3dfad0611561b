//! `rxnet runaway`: where a cooled reactor becomes parametrically sensitive to one input (the
//! coolant or feed temperature, U or UA, ...), as a design study over that input.
//!
//! For each input value φ the study is solved through the evaluation gate
//! ([`super::evaluate`]) and its hot spot T_hot (the largest temperature along a tube or over a
//! batch, [`crate::solve::hotspot`]) found. The runaway boundary is where the normalised
//! sensitivity of the hot spot to the input,
//!
//! ```text
//! s(φ) = (φ / T_hot) dT_hot/dφ,
//! ```
//!
//! is largest (the parametric-sensitivity criterion of Morbidelli & Varma, AIChE J. 34 (1988),
//! from memory): below it the hot spot follows the input gently, beyond it a small change of
//! the input moves the hot spot by much more.
//!
//! dT_hot/dφ is a central difference on two re-solved studies, φ ± h. The hot spot carries the
//! integration's error ε ≈ rtol T_hot; a central difference errs by about ε/h (round-off) plus
//! h² |T_hot'''|/6 (truncation), smallest near h ≈ (3ε/|T'''|)^(1/3), i.e. h ≈ rtol^(1/3) |φ|
//! for a relative step (common practice for finite differences, e.g. Nocedal & Wright, Numerical
//! Optimization, §8.1, from memory). h is also kept within a quarter of the scan spacing so the
//! difference resolves the peak the scan resolves. The maximum of s over the scan is then
//! refined by golden-section search (Kiefer 1953, common practice) on the two scan intervals
//! beside it, to 1e-6 of the scan spacing.
//!
//! Every solve passes the gate; a point whose solve (or either of its two neighbours for the
//! difference) fails is a failed point, counted and listed, never dropped. The figures are
//! screening values, not a safety case.

use super::evaluate::{Findings, evaluate_study};
use super::study::{Study, StudyError, Variable};
use crate::model::Reactor;
use crate::reactor::Balance;
use crate::solve::hotspot::HotSpot;
use crate::solve::{self, Points, SolveOptions};

/// Most scan points.
pub const MAX_POINTS: usize = 10_000;

/// The caution every runaway report carries.
pub const CAUTION: &str = "These are screening values from a model: the runaway boundary depends on kinetics, heat-transfer data and upsets this study does not represent (decomposition and secondary reactions, loss of agitation or coolant, relief and venting are not modelled). Keep a margin from the critical value, and defer to a process-safety review under the codes and practice that apply where the plant is built and run.";

/// The hot spot and sensitivity at one input value.
#[derive(Debug, Clone, serde::Serialize)]
pub struct RunawayValues {
    pub hot_spot: HotSpot,
    /// dT_hot/dφ, K per unit of the input.
    pub slope: f64,
    /// s = (φ / T_hot) dT_hot/dφ.
    pub sensitivity: f64,
}

/// One scan point.
#[derive(Debug, Clone)]
pub struct RunawayPoint {
    /// The input value, in the unit of the bounds.
    pub value: f64,
    pub result: Result<RunawayValues, String>,
}

/// The critical input value: the largest normalised sensitivity.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Critical {
    pub value: f64,
    pub sensitivity: f64,
    pub hot_spot: f64,
    /// The maximum lies at an end of the range (the boundary may lie beyond it).
    pub at_bound: bool,
}

/// The result of a runaway-boundary study.
#[derive(Debug, Clone)]
pub struct Runaway {
    pub var: Variable,
    pub points: Vec<RunawayPoint>,
    /// None when fewer than one point succeeded.
    pub critical: Option<Critical>,
    pub failed: usize,
    /// Central-difference step as a fraction of |φ| (or of the range at φ = 0), and the step
    /// actually used at the critical value.
    pub step_fraction: f64,
    /// Position variable of the hot spot: V, W or t, and its unit.
    pub x_name: &'static str,
    pub x_unit: &'static str,
}

/// The scanned input, and the inputs tied to it (set to the same value at every point, e.g. a
/// batch charged at the jacket temperature).
#[derive(Debug, Clone)]
pub struct Input {
    pub var: Variable,
    pub tied: Vec<String>,
}

impl Input {
    /// The overrides that put the input (and the tied paths) at φ.
    pub fn sets(&self, phi: f64) -> Vec<crate::model::Override> {
        let main = self.var.set(phi);
        let mut v = vec![main.clone()];
        v.extend(self.tied.iter().map(|p| crate::model::Override {
            path: p.clone(),
            value: main.value.clone(),
        }));
        v
    }
}

/// The hot spot of one study with the input at φ, through the evaluation gate.
fn hot_spot_at(
    study: &Study,
    input: &Input,
    phi: f64,
    opts: &SolveOptions,
    base: Option<&Findings>,
) -> Result<HotSpot, String> {
    let (_, ev) = evaluate_study(study, &input.sets(phi), opts, base).map_err(|e| e.to_string())?;
    // The hot spot located between the integrator's steps by the solve itself.
    let range = ev
        .sim
        .temperature_range
        .as_ref()
        .ok_or("the solve gave no temperature profile (an energy balance is needed)")?;
    Ok(HotSpot::of(range, ev.sim.size))
}

/// Check that the study suits a runaway scan: the path loads at both bounds, the reactor is a
/// tube or a batch with an energy balance.
fn validate(study: &Study, input: &Input) -> Result<(), StudyError> {
    let var = &input.var;
    for v in [var.lo, var.hi] {
        let net = study
            .load(&input.sets(v))
            .map_err(|e| StudyError::Invalid(format!("--input {} at {v}: {e}", var.path)))?;
        if crate::solve::train::is_flowsheet(&net) {
            return Err(StudyError::Invalid(
                "the runaway study follows the hot spot of one vessel; a train (or a tube with side feeds or a recycle) reports each unit's hot spot in `rxnet run`, and `rxnet sweep` over an input shows how it moves".into(),
            ));
        }
        if matches!(net.reactor, Reactor::Cstr { .. }) {
            return Err(StudyError::Invalid(
                "the runaway study follows the hot spot of a tube (PFR, packed bed) or a batch; a CSTR's runaway is its ignition point (see its steady states)".into(),
            ));
        }
        let b = Balance::new(&net).map_err(StudyError::Invalid)?;
        if !b.has_energy() {
            return Err(StudyError::Invalid(format!(
                "the study is isothermal (reactor.heat is isothermal at {} = {v}): a runaway study needs an energy balance (reactor.heat adiabatic or with U/UA and a coolant)",
                var.path
            )));
        }
    }
    Ok(())
}

/// Run the runaway-boundary study over `var` with `n` evenly spaced points (n ≥ 3).
pub fn run(
    study: &Study,
    input: &Input,
    n: usize,
    opts: &SolveOptions,
    base: Option<&Findings>,
) -> Result<Runaway, StudyError> {
    if !(3..=MAX_POINTS).contains(&n) {
        return Err(StudyError::Invalid(format!(
            "--points {n}: a runaway study needs 3 to {MAX_POINTS} points"
        )));
    }
    validate(study, input)?;
    let var = &input.var;
    let net = study
        .load(&input.sets(var.lo))
        .map_err(|e| StudyError::Load(e.to_string()))?;
    let (x_name, x_unit, _) = solve::reactor_axis(&net);
    let rtol = solve::tolerances(&net, opts).0;
    let step_fraction = rtol.cbrt();
    let spacing = (var.hi - var.lo) / (n - 1) as f64;
    let step = |phi: f64| {
        let scale = if phi != 0.0 {
            phi.abs()
        } else {
            var.hi - var.lo
        };
        (step_fraction * scale).min(0.25 * spacing)
    };
    let opts = SolveOptions {
        points: Points::End,
        ..opts.clone()
    };
    let at = |phi: f64| -> Result<RunawayValues, String> {
        let h = step(phi);
        let centre = hot_spot_at(study, input, phi, &opts, base)?;
        let up = hot_spot_at(study, input, phi + h, &opts, base)
            .map_err(|e| format!("at {} + h = {}: {e}", phi, phi + h))?;
        let down = hot_spot_at(study, input, phi - h, &opts, base)
            .map_err(|e| format!("at {} − h = {}: {e}", phi, phi - h))?;
        let slope = (up.temperature - down.temperature) / (2.0 * h);
        Ok(RunawayValues {
            hot_spot: centre,
            slope,
            sensitivity: phi / centre.temperature * slope,
        })
    };
    use rayon::prelude::*;
    let values: Vec<f64> = (0..n).map(|k| var.lo + spacing * k as f64).collect();
    let points: Vec<RunawayPoint> = values
        .par_iter()
        .map(|&value| RunawayPoint {
            value,
            result: at(value),
        })
        .collect();
    let failed = points.iter().filter(|p| p.result.is_err()).count();
    let best = points
        .iter()
        .enumerate()
        .filter_map(|(k, p)| p.result.as_ref().ok().map(|r| (k, r.sensitivity)))
        .max_by(|a, b| a.1.total_cmp(&b.1));
    let critical = match best {
        None => None,
        Some((k, s)) => {
            let at_bound = k == 0 || k == n - 1;
            let p = &points[k];
            let mut crit = Critical {
                value: p.value,
                sensitivity: s,
                hot_spot: p.result.as_ref().expect("ok").hot_spot.temperature,
                at_bound,
            };
            if !at_bound {
                // Golden section on s over the two intervals beside the best scan point.
                let (a, b) = (values[k - 1], values[k + 1]);
                if let Some((x, r)) = golden_max(&at, a, b, 1e-6 * spacing)
                    && r.sensitivity >= s
                {
                    crit = Critical {
                        value: x,
                        sensitivity: r.sensitivity,
                        hot_spot: r.hot_spot.temperature,
                        at_bound: false,
                    };
                }
            }
            Some(crit)
        }
    };
    Ok(Runaway {
        var: var.clone(),
        points,
        critical,
        failed,
        step_fraction,
        x_name,
        x_unit,
    })
}

/// Golden-section search for the maximum of s on [a, b] (None when an evaluation fails).
fn golden_max(
    at: &dyn Fn(f64) -> Result<RunawayValues, String>,
    mut a: f64,
    mut b: f64,
    tol: f64,
) -> Option<(f64, RunawayValues)> {
    let g = 0.5 * (5f64.sqrt() - 1.0);
    let mut c = b - g * (b - a);
    let mut d = a + g * (b - a);
    let mut fc = at(c).ok()?;
    let mut fd = at(d).ok()?;
    while (b - a).abs() > tol {
        if fc.sensitivity >= fd.sensitivity {
            b = d;
            d = c;
            fd = fc;
            c = b - g * (b - a);
            fc = at(c).ok()?;
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + g * (b - a);
            fd = at(d).ok()?;
        }
    }
    Some(if fc.sensitivity >= fd.sensitivity {
        (c, fc)
    } else {
        (d, fd)
    })
}
