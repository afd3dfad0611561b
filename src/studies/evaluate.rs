//! The one evaluation gate: every command that turns a study into numbers (run, sweep,
//! optimize, compare, and any later one) evaluates through [`evaluate`], so a result leaves
//! only when every rule holds:
//!
//! 1. the study loads (ranges, units, tolerances: the loader's rules);
//! 2. the consistency check has no error findings at this point (atom balance, Wegscheider's
//!    condition on the K_eq at this temperature, the key fed and consumed, the desired product
//!    made): a point of a sweep or an optimiser's candidate is refused exactly as `run`
//!    refuses the file;
//! 3. the solve succeeds (a failed integration or Newton solve is an error, not a result);
//! 4. the result checks hold: every amount finite and not negative beyond the solver's
//!    physical guard ([`crate::solve`]);
//! 5. the metrics are computed with their "not defined" rules ([`crate::metrics`]), and with an
//!    energy balance the heat figures ([`crate::safety`]): a result over the process limit
//!    T_max is a result, flagged, which `run` reports with exit 1 and the design studies
//!    treat as infeasible.
//!
//! The check's warnings that bear on the result (a reaction that can never run, a species
//! that can never form, k = 0, ...) travel with the evaluation so the command can repeat them.

use super::study::Study;
use crate::analysis::{self, Severity};
use crate::metrics::{self, Metrics};
use crate::model::{Network, Override};
use crate::reactor::Balance;
use crate::solve::{self, Simulation, SolveError, SolveOptions, train::TrainRun};

/// A result that passed the gate.
#[derive(Debug, Clone)]
pub struct Evaluation {
    pub balance: Balance,
    pub sim: Simulation,
    pub metrics: Metrics,
    /// The consistency check's warnings (they bear on the result: the user should see them).
    pub warnings: Vec<String>,
    /// The temperatures of a run with an energy balance (hot spot, margin to T_max, ...).
    pub heat: Option<crate::safety::HeatFigures>,
    /// Everything fed, per species: the feed with what entered by side routes (side feeds,
    /// joins, distributed feeds, dosing, the wall). The design studies judge targets on it.
    pub fed: Vec<f64>,
    /// Everything that left, per species: the outlet with what left by side routes (permeate,
    /// withdrawal).
    pub left: Vec<f64>,
    /// A train (or a vessel with side feeds or a recycle): every unit as solved. `balance` is
    /// then the last stretch's and `sim` the concatenated profile.
    pub train: Option<TrainRun>,
}

/// Why an evaluation produced no result.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EvalError {
    /// The study does not load with these values (invalid input).
    #[error("{0}")]
    Load(String),
    /// The reactor model cannot be set up from the loaded network (invalid input).
    #[error("{0}")]
    Setup(String),
    /// The consistency check has error findings at this point.
    #[error("the network has error findings: {}", .0.join("; "))]
    Findings(Vec<String>),
    /// The solve failed or its result is not physical.
    #[error("{0}")]
    Solve(SolveError),
}

impl EvalError {
    /// Invalid input (exit 2) rather than a failed computation or findings (exit 1).
    pub fn is_invalid_input(&self) -> bool {
        matches!(self, EvalError::Load(_) | EvalError::Setup(_))
    }
}

/// The consistency check's findings that decide an evaluation: errors (no result) and
/// warnings (repeated with the result).
#[derive(Debug, Clone, Default)]
pub struct Findings {
    pub errors: Vec<String>,
    pub warnings: Vec<String>,
}

impl Findings {
    /// Run the consistency check on a network.
    pub fn of(net: &Network) -> Findings {
        let findings = analysis::findings(net);
        let pick = |s: Severity| -> Vec<String> {
            findings
                .iter()
                .filter(|f| f.severity == s)
                .map(|f| f.message.clone())
                .collect()
        };
        Findings {
            errors: pick(Severity::Error),
            warnings: pick(Severity::Warning),
        }
    }
}

/// Whether a `--set` path can change the consistency check: the check reads no `reactor`
/// field (type, size, bed, heat) except the streams that bring species in besides the feed
/// (dosing, side and distributed feeds, a membrane's sweep: what they bring counts as fed), so
/// a study varied only in the others keeps the check of its base network and a sweep need not
/// repeat it at every point. A train's paths (`train.…`, joins among them) always re-check.
pub fn path_affects_check(path: &str) -> bool {
    let Some(rest) = path.strip_prefix("reactor.") else {
        return path != "reactor";
    };
    ["dosing", "side_feeds", "distributed_feeds", "membrane"]
        .iter()
        .any(|k| rest.starts_with(k))
}

/// What the solve part of the gate gives: the balance and result of a single vessel, or of a
/// train with its units.
type Solved = (Balance, Simulation, Option<TrainRun>);

/// Set up the balances and solve: the part of the gate after the check. A train (or a vessel
/// whose stream is split or joined) runs unit by unit ([`solve::train`]).
fn solve_network(net: &Network, opts: &SolveOptions) -> Result<Solved, EvalError> {
    let failed = |e| match e {
        SolveError::Setup(m) => EvalError::Setup(m),
        e => EvalError::Solve(e),
    };
    if solve::train::is_flowsheet(net) {
        let run = solve::train::solve(net, opts).map_err(failed)?;
        let last = run
            .units
            .last()
            .and_then(|u| u.pieces.last())
            .expect("a train has a unit with a stretch");
        return Ok((last.balance.clone(), run.profile.clone(), Some(run)));
    }
    let balance = Balance::new(net).map_err(EvalError::Setup)?;
    let sim = solve::simulate_with(net, &balance, opts).map_err(failed)?;
    Ok((balance, sim, None))
}

/// The end of the gate: a network with error findings gets no result, whatever the solve
/// did; otherwise the result's metrics, with the check's warnings.
fn finish(
    net: &Network,
    findings: Findings,
    solved: Result<Solved, EvalError>,
) -> Result<Evaluation, EvalError> {
    if !findings.errors.is_empty() {
        return Err(EvalError::Findings(findings.errors));
    }
    let (balance, sim, train) = solved?;
    let (fed, left) = totals(net, &sim);
    let metrics = metrics::compute_against(net, &fed, &left);
    let heat = match &train {
        Some(t) => crate::safety::HeatFigures::of_train(net, t),
        None => crate::safety::HeatFigures::of(net, &balance, &sim),
    };
    Ok(Evaluation {
        heat,
        fed,
        left,
        train,
        balance,
        sim,
        metrics,
        warnings: findings.warnings,
    })
}

/// Everything fed (the feed with what entered by side routes) and everything that left (the
/// outlet with what left by side routes: permeate, withdrawal), per species, for the metrics.
pub fn totals(net: &Network, sim: &Simulation) -> (Vec<f64>, Vec<f64>) {
    let mut fed = net.feed.amounts.clone();
    let mut left = sim.outlet().to_vec();
    if let Some(ex) = &sim.exchanged {
        if let Some(e) = ex.entered.last() {
            fed.iter_mut().zip(e).for_each(|(f, e)| *f += e);
        }
        if let Some(l) = ex.left.last() {
            left.iter_mut().zip(l).for_each(|(o, l)| *o += l);
        }
    }
    (fed, left)
}

/// Smallest network (species × reactions) whose consistency check runs on a second thread when
/// [`evaluate`] is asked to: below it the check costs well under a millisecond (about 0.1 ms
/// for 5 species and 2 reactions, 7 ms for 50 and 150), less than or about what starting a
/// thread and waiting for it to be scheduled costs on a busy machine, so it runs first on the
/// calling thread.
pub const CHECK_BESIDE_MIN: usize = 1000;

/// Evaluate a loaded network through the gate. With `check_beside`, the consistency check of a
/// network of at least [`CHECK_BESIDE_MIN`] species × reactions runs on a second thread while
/// the reactor is solved (one run on an idle core); otherwise (a small network, or a study
/// that evaluates many points in parallel and passes false) it runs first, and a network with
/// error findings is not solved at all. The result is the same either way.
pub fn evaluate(
    net: &Network,
    opts: &SolveOptions,
    check_beside: bool,
) -> Result<Evaluation, EvalError> {
    if check_beside && net.species.len() * net.reactions.len() >= CHECK_BESIDE_MIN {
        let (findings, solved) = std::thread::scope(|scope| {
            let checking = scope.spawn(|| Findings::of(net));
            let solved = solve_network(net, opts);
            let f = checking
                .join()
                .unwrap_or_else(|p| std::panic::resume_unwind(p));
            (f, solved)
        });
        finish(net, findings, solved)
    } else {
        let findings = Findings::of(net);
        if !findings.errors.is_empty() {
            return Err(EvalError::Findings(findings.errors));
        }
        let solved = solve_network(net, opts);
        finish(net, findings, solved)
    }
}

/// Evaluate with the check's findings already known for this network (see
/// [`path_affects_check`]): the same gate without repeating the check.
pub fn evaluate_with(
    net: &Network,
    known: &Findings,
    opts: &SolveOptions,
) -> Result<Evaluation, EvalError> {
    if !known.errors.is_empty() {
        return Err(EvalError::Findings(known.errors.clone()));
    }
    finish(net, known.clone(), solve_network(net, opts))
}

/// Load the study with `sets` applied and evaluate it (a sweep point, an optimiser candidate).
/// `base` is the check of the study without `sets`; it is reused when no path of `sets` can
/// change the check, and the check runs afresh otherwise.
pub fn evaluate_study(
    study: &Study,
    sets: &[Override],
    opts: &SolveOptions,
    base: Option<&Findings>,
) -> Result<(Network, Evaluation), EvalError> {
    let net = study
        .load(sets)
        .map_err(|e| EvalError::Load(e.to_string()))?;
    let e = match base {
        Some(f) if !sets.iter().any(|o| path_affects_check(&o.path)) => {
            evaluate_with(&net, f, opts)?
        }
        _ => evaluate(&net, opts, false)?,
    };
    Ok((net, e))
}

#[cfg(test)]
mod tests {
    use super::path_affects_check;

    /// The paths that bring species in re-run the check; the size and heat do not.
    #[test]
    fn streams_that_bring_species_in_re_run_the_check() {
        for p in [
            "feed.flows.A",
            "reactions.r1.rate.k",
            "reactor.dosing.0.rate",
            "reactor.side_feeds.0.flows.B",
            "reactor.distributed_feeds.0.flows.B",
            "reactor.membrane.0.sweep",
            "train.T2.join.flows.A",
            "train.T2.volume",
        ] {
            assert!(path_affects_check(p), "{p}");
        }
        for p in [
            "reactor",
            "reactor.volume",
            "reactor.heat.coolant.T",
            "reactor.recycle",
        ] {
            assert!(!path_affects_check(p), "{p}");
        }
    }
}
