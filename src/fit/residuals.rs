//! The weighted residuals of a fit and their Jacobian, from the reactor model.
//!
//! For θ and each run, the study is loaded with the run's overrides and the parameters at θ,
//! passes the consistency check (the same gate as every command: a network with error
//! findings gives no result), and is solved at exactly the samples' x: one integration for a
//! batch (t) or a tube (V, W, or τ → V = τ v0), one steady state per x for a CSTR (its size
//! set from the sample). The states are converted to what the data measure, in the data's
//! unit: an amount or a molar flow is the state itself; a concentration is the state over
//! the volume (batch) or the volumetric flow (flow) at that point, as the balance computes it
//! (a gas's follows its temperature and moles).
//!
//! r_ij = (model_ij − measured_ij)/σ_ij. The Jacobian ∂r/∂θ comes from the forward
//! sensitivities of the solve ([`crate::solve::sensitivity`]): ∂(state)/∂θ_k, and for a
//! concentration the conversion differentiated by the same plus/minus networks,
//! ∂C/∂θ_k = [C₊(y + δ s_k) − C₋(y − δ s_k)]/(2δ), C± computed by the networks at θ_k ± δ.
//! Runs are solved in parallel.

use super::data::{Independent, Measure};
use super::lm::LeastSquares;
use super::setup::FitSetup;
use crate::model::{Network, Override, Reactor};
use crate::reactor::Balance;
use crate::solve::sensitivity::{Perturbed, simulate_sensitivities};
use crate::solve::{Points, Simulation, SolveOptions};
use crate::studies::evaluate::Findings;
use crate::studies::parameters;
use nalgebra::DMatrix;
use rayon::prelude::*;

/// Relative step of the parameter directions (θ ± δ) for the central differences of the
/// model's right-hand side and of the concentration conversion.
pub const PARAMETER_STEP: f64 = 1e-5;

/// One measurement: where it is and how it is weighted.
#[derive(Debug, Clone)]
pub struct Observation {
    pub sample: usize,
    pub column: usize,
    /// Index of the run in [`FitSetup::runs`], and of the solve point within the run.
    pub run: usize,
    pub point: usize,
    pub measured: f64,
    pub sigma: f64,
}

/// Where a run is solved: its points in the reactor's own coordinate (SI), and whether each
/// point is its own steady state (CSTR).
#[derive(Debug, Clone)]
pub struct RunPlan {
    pub points: Vec<f64>,
    pub steady: bool,
}

/// The model's value and gradient at each (point, column) of one run.
type RunValues = Vec<Vec<(f64, Vec<f64>)>>;

/// The fit problem the optimiser sees.
pub struct FitProblem<'a> {
    pub setup: &'a FitSetup,
    pub opts: SolveOptions,
    pub observations: Vec<Observation>,
    pub plans: Vec<RunPlan>,
}

/// The size path of a vessel (`reactor.time`, `.volume`, `.catalyst`) and its SI unit.
fn size_path(net: &Network) -> (&'static str, &'static str) {
    match net.reactor {
        Reactor::Batch { .. } => ("reactor.time", "s"),
        Reactor::Pfr { .. } | Reactor::Cstr { .. } => ("reactor.volume", "m3"),
        Reactor::Pbr { .. } => ("reactor.catalyst", "kg"),
    }
}

/// The override setting the vessel's size (SI).
fn size_override(net: &Network, size: f64) -> Override {
    let (path, unit) = size_path(net);
    Override {
        path: path.into(),
        value: format!("{size:?} {unit}"),
    }
}

impl<'a> FitProblem<'a> {
    /// Place every measurement: its run, its solve point and its σ.
    pub fn new(setup: &'a FitSetup, opts: SolveOptions) -> Result<FitProblem<'a>, String> {
        let data = &setup.data;
        let mut plans = Vec::new();
        for run in &setup.runs {
            let net = &run.network;
            let steady = matches!(net.reactor, Reactor::Cstr { .. });
            let to_size = |x: f64| match data.independent {
                Independent::ResidenceTime => x * net.feed.volumetric,
                _ => x,
            };
            let mut points: Vec<f64> = data.run_samples(&run.id).map(|s| to_size(s.x)).collect();
            points.sort_by(f64::total_cmp);
            points.dedup();
            if steady && let Some(s) = data.run_samples(&run.id).find(|s| s.x == 0.0) {
                return Err(format!(
                    "{}:{}: a CSTR sample at zero {} is its feed, not a steady state: drop the row",
                    data.file,
                    s.line,
                    data.independent.name()
                ));
            }
            if !steady && points.last().is_none_or(|&x| x <= 0.0) {
                return Err(format!(
                    "{}: run `{}` has samples only at {} = 0",
                    data.file,
                    run.id,
                    data.independent.name()
                ));
            }
            plans.push(RunPlan { points, steady });
        }
        let mut observations = Vec::new();
        for (si, s) in data.samples.iter().enumerate() {
            let run = setup
                .runs
                .iter()
                .position(|r| r.id == s.run)
                .expect("every data run has a run");
            let x = match data.independent {
                Independent::ResidenceTime => s.x * setup.runs[run].network.feed.volumetric,
                _ => s.x,
            };
            let point = plans[run]
                .points
                .iter()
                .position(|&p| p == x)
                .expect("every sample's x is a point of its run");
            for (c, v) in s.values.iter().enumerate() {
                if let Some(m) = v {
                    observations.push(Observation {
                        sample: si,
                        column: c,
                        run,
                        point,
                        measured: *m,
                        sigma: setup.errors[c].sigma(*m),
                    });
                }
            }
        }
        Ok(FitProblem {
            setup,
            opts,
            observations,
            plans,
        })
    }

    /// The parameters' overrides at θ.
    pub fn theta_overrides(&self, theta: &[f64]) -> Vec<Override> {
        self.setup
            .params
            .iter()
            .zip(theta)
            .map(|(p, &t)| p.set_theta(t))
            .collect()
    }

    /// One solve of a run: the network at the overrides `base` with its size set, the
    /// overrides it was loaded with (base and the size) and the options asking for `points`.
    fn sized(
        &self,
        run: usize,
        base: &[Override],
        size: f64,
        points: Points,
    ) -> Result<(Network, Vec<Override>, SolveOptions), String> {
        let mut extra = base.to_vec();
        extra.push(size_override(&self.setup.runs[run].network, size));
        let net = self.network(run, &extra)?;
        let mut opts = self.opts.clone();
        opts.points = points;
        Ok((net, extra, opts))
    }

    /// Load one network of a run at θ with the solve's size, and pass the check.
    fn network(&self, run: usize, extra: &[Override]) -> Result<Network, String> {
        let r = &self.setup.runs[run];
        let net = self
            .setup
            .study
            .load(extra)
            .map_err(|e| format!("run `{}`: {e}", r.id))?;
        let findings = Findings::of(&net);
        if !findings.errors.is_empty() {
            return Err(format!(
                "run `{}`: the network has error findings at these values: {}",
                r.id,
                findings.errors.join("; ")
            ));
        }
        Ok(net)
    }

    /// The model's values (data units) and, with `jacobian`, their gradients in θ, at every
    /// point and column of one run.
    fn run_values(&self, run: usize, theta: &[f64], jacobian: bool) -> Result<RunValues, String> {
        let plan = &self.plans[run];
        let r = &self.setup.runs[run];
        let mut base: Vec<Override> = r.overrides.clone();
        base.extend(self.theta_overrides(theta));
        let ncol = self.setup.data.columns.len();
        let mut out = Vec::with_capacity(plan.points.len());
        let end = *plan.points.last().expect("a run has points");
        for (size, points) in solves(plan.steady, &plan.points, end) {
            let (net, extra, opts) = self.sized(run, &base, size, points)?;
            let failed = |e: crate::solve::SolveError| format!("run `{}`: {e}", r.id);
            let (sim, sens, pert) = if jacobian {
                // The directions are taken about the current θ: each parameter moved to it.
                let at_theta: Vec<parameters::Parameter> = self
                    .setup
                    .params
                    .iter()
                    .zip(theta)
                    .map(|(p, &t)| {
                        let mut q = p.clone();
                        q.si = p.si_at(t);
                        q.value = p.in_unit(q.si);
                        q
                    })
                    .collect();
                let pert =
                    parameters::perturbed(&self.setup.study, &extra, &at_theta, PARAMETER_STEP)
                        .map_err(|e| format!("run `{}`: {e}", r.id))?;
                let s = simulate_sensitivities(&net, &pert, &opts).map_err(failed)?;
                (s.sim.clone(), Some(s), pert)
            } else {
                let sim = crate::solve::simulate(&net, &opts).map_err(failed)?;
                (sim, None, Vec::new())
            };
            let rows: Vec<usize> = if plan.steady {
                vec![sim.x.len() - 1]
            } else {
                if sim.x.len() != plan.points.len() {
                    return Err(format!(
                        "run `{}`: the solve gave {} points for {} samples",
                        r.id,
                        sim.x.len(),
                        plan.points.len()
                    ));
                }
                (0..plan.points.len()).collect()
            };
            let balance = Balance::new(&net).map_err(|e| format!("run `{}`: {e}", r.id))?;
            let shifted: Vec<(Balance, Balance)> = if jacobian && self.has_concentrations() {
                pert.iter()
                    .map(|p| {
                        Ok((
                            Balance::new(&p.plus).map_err(|e| format!("run `{}`: {e}", r.id))?,
                            Balance::new(&p.minus).map_err(|e| format!("run `{}`: {e}", r.id))?,
                        ))
                    })
                    .collect::<Result<_, String>>()?
            } else {
                Vec::new()
            };
            for &i in &rows {
                let mut cols = Vec::with_capacity(ncol);
                for c in 0..ncol {
                    cols.push(self.value_at(
                        &net,
                        &balance,
                        &sim,
                        sens.as_ref(),
                        &pert,
                        &shifted,
                        i,
                        c,
                    ));
                }
                out.push(cols);
            }
        }
        Ok(out)
    }

    fn has_concentrations(&self) -> bool {
        self.setup
            .data
            .columns
            .iter()
            .any(|c| c.measure == Measure::Concentration)
    }

    /// One column's model value at profile point i (data unit) and its gradient.
    #[allow(clippy::too_many_arguments)]
    fn value_at(
        &self,
        net: &Network,
        balance: &Balance,
        sim: &Simulation,
        sens: Option<&crate::solve::sensitivity::Sensitivities>,
        pert: &[Perturbed],
        shifted: &[(Balance, Balance)],
        i: usize,
        c: usize,
    ) -> (f64, Vec<f64>) {
        let col = &self.setup.data.columns[c];
        let j = col.index;
        let np = self.setup.params.len();
        let x = sim.x[i];
        match col.measure {
            Measure::Amount | Measure::Flow => {
                let v = sim.states[i][j] / col.factor;
                let g = match sens {
                    Some(s) => (0..np).map(|k| s.d_states[k][i][j] / col.factor).collect(),
                    None => Vec::new(),
                };
                (v, g)
            }
            Measure::Concentration => {
                let y = sim.model_state(i, net.feed.pressure);
                let mut c0 = Vec::new();
                balance.concentrations(x, &y, &mut c0);
                let v = c0[j] / col.factor;
                let g = match sens {
                    None => Vec::new(),
                    Some(s) => (0..np)
                        .map(|k| {
                            let half = 0.5 * pert[k].step;
                            let dir = self.state_direction(balance, s, k, i, y.len());
                            let yp: Vec<f64> =
                                y.iter().zip(&dir).map(|(a, d)| a + half * d).collect();
                            let ym: Vec<f64> =
                                y.iter().zip(&dir).map(|(a, d)| a - half * d).collect();
                            let (mut cp, mut cm) = (Vec::new(), Vec::new());
                            shifted[k].0.concentrations(x, &yp, &mut cp);
                            shifted[k].1.concentrations(x, &ym, &mut cm);
                            (cp[j] - cm[j]) / pert[k].step / col.factor
                        })
                        .collect(),
                };
                (v, g)
            }
        }
    }

    /// ∂(model state)/∂θ_k at profile point i, in the layout of `Simulation::model_state`:
    /// the species' sensitivities and the temperature's where it is a state (the others are
    /// not moved).
    fn state_direction(
        &self,
        balance: &Balance,
        s: &crate::solve::sensitivity::Sensitivities,
        k: usize,
        i: usize,
        len: usize,
    ) -> Vec<f64> {
        let mut d = vec![0.0; len];
        let n = balance.n_species();
        d[..n].copy_from_slice(&s.d_states[k][i][..n]);
        if let (Some(ti), Some(dt)) = (balance.temperature_index(), &s.d_temperature)
            && ti < len
        {
            d[ti] = dt[k][i];
        }
        d
    }

    /// The model's values at every observation (data units) with their gradients.
    pub fn model(&self, theta: &[f64], jacobian: bool) -> Result<Vec<(f64, Vec<f64>)>, String> {
        let per_run: Vec<RunValues> = (0..self.plans.len())
            .into_par_iter()
            .map(|run| self.run_values(run, theta, jacobian))
            .collect::<Result<_, String>>()?;
        Ok(self
            .observations
            .iter()
            .map(|o| per_run[o.run][o.point][o.column].clone())
            .collect())
    }

    /// The model on a fine grid along one run (for plots): x (SI, the reactor's coordinate)
    /// and each column's value in the data's unit.
    pub fn curve(
        &self,
        run: usize,
        theta: &[f64],
        n: usize,
    ) -> Result<(Vec<f64>, Vec<Vec<f64>>), String> {
        let plan = &self.plans[run];
        let r = &self.setup.runs[run];
        let end = plan.points.last().copied().unwrap_or(0.0);
        let ncol = self.setup.data.columns.len();
        let grid: Vec<f64> = if plan.steady {
            let lo = plan.points.first().copied().unwrap_or(end) * 0.5;
            (0..n)
                .map(|k| lo + (end - lo) * k as f64 / (n - 1) as f64)
                .filter(|&x| x > 0.0)
                .collect()
        } else {
            (0..n).map(|k| end * k as f64 / (n - 1) as f64).collect()
        };
        let mut base: Vec<Override> = r.overrides.clone();
        base.extend(self.theta_overrides(theta));
        let mut values = vec![Vec::new(); ncol];
        for (size, points) in solves(plan.steady, &grid, end) {
            let (net, _, opts) = self.sized(run, &base, size, points)?;
            let sim =
                crate::solve::simulate(&net, &opts).map_err(|e| format!("run `{}`: {e}", r.id))?;
            let balance = Balance::new(&net).map_err(|e| format!("run `{}`: {e}", r.id))?;
            let rows: Vec<usize> = if plan.steady {
                vec![sim.x.len() - 1]
            } else {
                (0..sim.x.len()).collect()
            };
            for i in rows {
                for (c, v) in values.iter_mut().enumerate() {
                    v.push(self.value_at(&net, &balance, &sim, None, &[], &[], i, c).0);
                }
            }
        }
        Ok((grid, values))
    }
}

/// The solves that give a run's model at `points`: a tube or a batch in one solve of size
/// `end` with its profile at exactly those points, a CSTR one steady state per point (its
/// size set to the point). Each: (size, where the profile is wanted).
fn solves(steady: bool, points: &[f64], end: f64) -> Vec<(f64, Points)> {
    if steady {
        points.iter().map(|&x| (x, Points::End)).collect()
    } else {
        vec![(end, Points::At(points.to_vec()))]
    }
}

impl LeastSquares for FitProblem<'_> {
    fn n_residuals(&self) -> usize {
        self.observations.len()
    }

    fn evaluate(
        &mut self,
        theta: &[f64],
        jacobian: bool,
    ) -> Result<(Vec<f64>, Option<DMatrix<f64>>), String> {
        let model = self.model(theta, jacobian)?;
        let r: Vec<f64> = self
            .observations
            .iter()
            .zip(&model)
            .map(|(o, (m, _))| (m - o.measured) / o.sigma)
            .collect();
        if let Some(k) = r.iter().position(|v| !v.is_finite()) {
            return Err(format!(
                "the model gives a non-finite value at {}:{}",
                self.setup.data.file, self.setup.data.samples[self.observations[k].sample].line
            ));
        }
        let jac = jacobian.then(|| {
            let np = theta.len();
            DMatrix::from_fn(self.observations.len(), np, |i, k| {
                model[i].1[k] / self.observations[i].sigma
            })
        });
        Ok((r, jac))
    }
}
