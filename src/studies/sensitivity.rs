//! Local sensitivities of a target (an outlet amount, a yield, a selectivity, the conversion)
//! to the parameters of a study: which constant must be known better before a design or a fit
//! is trusted.
//!
//! From the forward sensitivities s_k = ∂y/∂θ_k of the outlet ([`crate::solve::sensitivity`]),
//! the target g(net, y) is differentiated as
//!
//! ```text
//! ∂g/∂θ_k = (g(net(θ+δ), y + δ s_k) − g(net(θ−δ), y − δ s_k)) / 2δ
//! ```
//!
//! so that a target that also depends on the parameter directly (a conversion on a feed flow,
//! a yield on the fed key) is right; central differences, O(δ²) (common practice). Reported:
//! the normalised sensitivity ∂ln g/∂ln p (the relative change of the target per relative
//! change of the parameter; for a log-scale parameter ∂g/∂θ / g, for a linear one ∂g/∂p · p/g)
//! and the absolute ∂g/∂p in SI.

use crate::model::Network;
use crate::solve::sensitivity::{Perturbed, Sensitivities, simulate_sensitivities};
use crate::solve::{Points, SolveOptions};
use crate::studies::evaluate::{self, EvalError, Evaluation, Findings};
use crate::studies::parameters::{self, Parameter, Scale};
use crate::studies::study::{Study, StudyError};
use crate::studies::target::Target;

/// Half-step δ on each parameter's scale for the central differences of the model (log scale:
/// a relative change of 1e-5; linear: 1e-5 of max(|p|, typical)).
pub const STEP: f64 = 1e-5;

/// What `rxnet sensitivity` is asked.
#[derive(Debug, Clone)]
pub struct Request {
    /// A target as `optimize` reads it; `None`: the yield of the desired product.
    pub target: Option<String>,
    /// `--set` paths of the parameters; empty: every parameter of the study.
    pub of: Vec<String>,
    /// Normalised sensitivities at this many evenly spaced points along the reactor.
    pub profile: Option<usize>,
    pub solve: SolveOptions,
}

/// One parameter's sensitivity.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Row {
    pub path: String,
    /// The value as written, in `unit`.
    pub value: f64,
    pub unit: String,
    /// The value in SI.
    pub si: f64,
    pub scale: &'static str,
    /// ∂ln g/∂ln p; `None` where p = 0 or g = 0.
    pub normalized: Option<f64>,
    /// ∂g/∂p, target unit per SI unit of p.
    pub absolute: f64,
}

/// The normalised sensitivities at one point along the reactor.
#[derive(Debug, Clone, serde::Serialize)]
pub struct ProfilePoint {
    pub x: f64,
    /// The target there (`None` where not defined, e.g. a ratio at the inlet).
    pub value: Option<f64>,
    /// In the order of [`Report::sensitivities`].
    pub normalized: Vec<Option<f64>>,
}

/// The answer of `rxnet sensitivity`.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Report {
    pub study: String,
    pub target: String,
    pub value: f64,
    /// Ranked by |normalized| (those without one last, by |absolute|).
    pub sensitivities: Vec<Row>,
    pub x_name: &'static str,
    pub x_unit: &'static str,
    pub profile: Option<Vec<ProfilePoint>>,
    pub warnings: Vec<String>,
    /// The safety caution of the study (`safety::caution`): with an energy balance, or
    /// isothermal with an exothermic reaction; absent otherwise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub caution: Option<&'static str>,
}

/// Why there is no report.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SensitivityError {
    /// The nominal study did not pass the evaluation gate.
    #[error("{0}")]
    Gate(EvalError),
    #[error("{0}")]
    Study(StudyError),
}

impl SensitivityError {
    /// Invalid input (exit 2) rather than findings or a failed computation (exit 1).
    pub fn is_invalid_input(&self) -> bool {
        match self {
            SensitivityError::Gate(e) => e.is_invalid_input(),
            SensitivityError::Study(e) => matches!(e, StudyError::Invalid(_) | StudyError::Load(_)),
        }
    }
}

impl From<StudyError> for SensitivityError {
    fn from(e: StudyError) -> Self {
        SensitivityError::Study(e)
    }
}

/// The target's value from what was fed and what left.
fn value_of(target: &Target, net: &Network, fed: &[f64], left: &[f64]) -> Option<f64> {
    target.value_against(net, fed, left)
}

/// What the network's streams bring in by position `x` (the feed, a train's joins, side
/// feeds, and what a semibatch has dosed by then): the part of everything fed that a
/// parameter can move without a solve.
fn streams_in(net: &Network, x: f64) -> Vec<f64> {
    let mut fed = net.feed.amounts.clone();
    let mut add = |a: &[f64]| fed.iter_mut().zip(a).for_each(|(f, v)| *f += v);
    let contacting: Vec<&crate::model::Contacting> = match &net.train {
        Some(t) => {
            for u in &t.units {
                if let Some(j) = &u.join {
                    add(&j.amounts);
                }
            }
            t.units.iter().map(|u| &u.contacting).collect()
        }
        None => vec![&net.contacting],
    };
    for c in contacting {
        for s in &c.side_feeds {
            add(&s.stream.amounts);
        }
    }
    if net.reactor.is_batch() && !net.contacting.dosing.is_empty() {
        add(&crate::reactor::dosed_by(net, x));
    }
    fed
}

/// Everything fed in a perturbed model: the nominal's, moved by what the model's streams
/// bring in beyond the nominal's (`x`: the nominal's and the model's positions).
fn fed_moved(net: &Network, fed: &[f64], model: &Network, x: (f64, f64)) -> Vec<f64> {
    let (a, b) = (streams_in(net, x.0), streams_in(model, x.1));
    fed.iter()
        .zip(a.iter().zip(&b))
        .map(|(f, (a, b))| f + (b - a))
        .collect()
}

/// ∂g/∂θ at a state `y` (with everything fed `fed`, at position `x`) with sensitivity `s`
/// (per unit θ); in the perturbed models the position is `x±` (the end moves with a size
/// parameter).
fn target_derivative(
    target: &Target,
    (net, fed, x): (&Network, &[f64], f64),
    p: &Perturbed,
    y: &[f64],
    s: &[f64],
    x_pm: (f64, f64),
) -> Option<f64> {
    let d = p.step / 2.0;
    let yp: Vec<f64> = y.iter().zip(s).map(|(a, b)| a + d * b).collect();
    let ym: Vec<f64> = y.iter().zip(s).map(|(a, b)| a - d * b).collect();
    let gp = value_of(
        target,
        &p.plus,
        &fed_moved(net, fed, &p.plus, (x, x_pm.0)),
        &yp,
    )?;
    let gm = value_of(
        target,
        &p.minus,
        &fed_moved(net, fed, &p.minus, (x, x_pm.1)),
        &ym,
    )?;
    Some((gp - gm) / p.step)
}

/// Normalised sensitivities smaller than this are reported as 0: the central difference of
/// the target, whose round-off is about 1e-16 |g| / δ ≈ 1e-11 |g|, resolves nothing smaller.
pub const RESOLUTION: f64 = 1e-8;

/// (normalised, absolute) from ∂g/∂θ.
fn normalise(param: &Parameter, dg_dtheta: f64, g: Option<f64>) -> (Option<f64>, f64) {
    let dg_dtheta = match g {
        Some(g) if (dg_dtheta / g).abs() < RESOLUTION => 0.0,
        _ => dg_dtheta,
    };
    let absolute = match param.scale {
        Scale::Log => dg_dtheta / param.si,
        Scale::Linear => dg_dtheta,
    };
    let normalized = g
        .filter(|g| *g != 0.0 && param.si != 0.0)
        .map(|g| match param.scale {
            Scale::Log => dg_dtheta / g,
            Scale::Linear => dg_dtheta * param.si / g,
        });
    (normalized, absolute)
}

/// The nominal through the evaluation gate: a study with error findings, a failed solve or an
/// unphysical result gives no sensitivities. `known`: the study's check when the caller has
/// already made it (not made again), else it runs beside the solve.
fn gate(
    net: &Network,
    known: Option<&Findings>,
    opts: &SolveOptions,
) -> Result<Evaluation, SensitivityError> {
    match known {
        Some(f) => evaluate::evaluate_with(net, f, opts),
        None => evaluate::evaluate(net, opts, true),
    }
    .map_err(SensitivityError::Gate)
}

/// The sensitivities of the study's target to its parameters. `known` is the check of the
/// study as loaded (with its overrides), when the caller has it already.
pub fn sensitivity(
    study: &Study,
    known: Option<&Findings>,
    req: &Request,
) -> Result<Report, SensitivityError> {
    let net = study.load(&[])?;
    let target_text = match &req.target {
        Some(t) => t.clone(),
        None => match net.desired {
            Some(d) => format!("yield:{}", net.species[d].name),
            None => {
                return Err(StudyError::Invalid(
                    "the study names no desired product: give --target (e.g. --target conversion)"
                        .into(),
                )
                .into());
            }
        },
    };
    let target = Target::parse(&target_text, &net).map_err(StudyError::Invalid)?;
    if let Some(n) = req.profile {
        if !(2..=10_000).contains(&n) {
            return Err(StudyError::Invalid(format!(
                "--profile must be between 2 and 10000 points, got {n}"
            ))
            .into());
        }
        if crate::solve::train::is_flowsheet(&net) {
            return Err(StudyError::Invalid(
                "--profile is for a single vessel: a train's sensitivities are given at its outlet"
                    .into(),
            )
            .into());
        }
        if matches!(net.reactor, crate::model::Reactor::Cstr { .. }) {
            return Err(StudyError::Invalid(
                "--profile: a stirred tank has no profile along it (its outlet is its state)"
                    .into(),
            )
            .into());
        }
    }
    let mut opts = req.solve.clone();
    opts.points = match req.profile {
        Some(n) => Points::Even(n),
        None => Points::End,
    };
    let ev = gate(&net, known, &opts)?;
    let mut warnings = ev.warnings.clone();
    warnings.extend(ev.sim.warnings.iter().cloned());
    if let Some(h) = &ev.heat
        && h.margin.is_some_and(|m| m < 0.0)
    {
        warnings.push(
            "the reactor exceeds its T_max at this point: the sensitivities describe an operation outside the process limit".into(),
        );
    }
    if ev
        .sim
        .exchanged
        .as_ref()
        .is_some_and(|e| e.left.last().is_some_and(|l| l.iter().any(|v| *v != 0.0)))
    {
        return Err(StudyError::Invalid(
            "sensitivities of a target are not supported where species leave by a side route (a membrane or a withdrawal)".into(),
        )
        .into());
    }
    if !net.contacting.distributed.is_empty() || !net.contacting.membrane.is_empty() {
        return Err(StudyError::Invalid(
            "sensitivities of a target are not supported for a tube with distributed feeds or a membrane".into(),
        )
        .into());
    }
    let params: Vec<Parameter> = if req.of.is_empty() {
        parameters::every(study, &net)
    } else {
        req.of
            .iter()
            .map(|p| parameters::read(study, p))
            .collect::<Result<_, _>>()?
    };
    if params.is_empty() {
        return Err(StudyError::Invalid("no parameters to differentiate".into()).into());
    }
    let perturbed = parameters::perturbed(study, &[], &params, STEP)?;
    let sens: Sensitivities = simulate_sensitivities(&net, &perturbed, &opts)
        .map_err(|e| SensitivityError::Study(StudyError::Solve(e)))?;
    let (fed, left) = evaluate::totals(&net, &sens.sim);
    let value = value_of(&target, &net, &fed, &left).ok_or_else(|| {
        StudyError::Infeasible(format!(
            "the target {} is not defined at the study's outlet",
            target.label(&net)
        ))
    })?;
    let mut rows = Vec::with_capacity(params.len());
    for (k, (param, p)) in params.iter().zip(&perturbed).enumerate() {
        let d = target_derivative(
            &target,
            (&net, &fed, sens.sim.size),
            p,
            &left,
            &sens.d_outlet[k],
            (p.plus.reactor.size(), p.minus.reactor.size()),
        )
        .ok_or_else(|| {
            StudyError::Infeasible(format!(
                "the target {} is not defined next to the study's outlet when {} moves",
                target.label(&net),
                param.path
            ))
        })?;
        let (normalized, absolute) = normalise(param, d, Some(value));
        rows.push(Row {
            path: param.path.clone(),
            value: param.value,
            unit: param.unit.clone(),
            si: param.si,
            scale: param.scale.name(),
            normalized,
            absolute,
        });
    }
    let profile: Option<Vec<ProfilePoint>> = req.profile.map(|_| {
        sens.sim
            .x
            .iter()
            .enumerate()
            .map(|(i, &x)| {
                let y = &sens.sim.states[i];
                let fed_x = streams_in(&net, x);
                let g = value_of(&target, &net, &fed_x, y);
                let normalized = params
                    .iter()
                    .zip(&perturbed)
                    .enumerate()
                    .map(|(k, (param, p))| {
                        let d = target_derivative(
                            &target,
                            (&net, &fed_x, x),
                            p,
                            y,
                            &sens.d_states[k][i],
                            (x, x),
                        )?;
                        normalise(param, d, g).0
                    })
                    .collect();
                ProfilePoint {
                    x,
                    value: g,
                    normalized,
                }
            })
            .collect()
    });
    // Ranked by |normalised|, then those without one by |absolute|.
    let mut order: Vec<usize> = (0..rows.len()).collect();
    order.sort_by(|&a, &b| {
        let key = |r: &Row| {
            (
                r.normalized.is_none(),
                -r.normalized.unwrap_or(0.0).abs(),
                -r.absolute.abs(),
            )
        };
        let (ka, kb) = (key(&rows[a]), key(&rows[b]));
        ka.0.cmp(&kb.0)
            .then(ka.1.total_cmp(&kb.1))
            .then(ka.2.total_cmp(&kb.2))
    });
    let mut ranked = Vec::with_capacity(rows.len());
    let mut profile = profile;
    if let Some(pts) = &mut profile {
        for pt in pts.iter_mut() {
            pt.normalized = order.iter().map(|&k| pt.normalized[k]).collect();
        }
    }
    for k in order {
        ranked.push(rows[k].clone());
    }
    Ok(Report {
        study: study.parsed.file.clone(),
        target: target.label(&net),
        value,
        sensitivities: ranked,
        x_name: sens.sim.x_name,
        x_unit: sens.sim.x_unit,
        profile,
        warnings,
        caution: crate::safety::caution(&net),
    })
}
