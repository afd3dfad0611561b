//! Solving a reactor model: BDF integration along the reactor (PFR, packed bed, batch) or the
//! steady-state Newton solve (CSTR). A failed solve is an error that says where and why, never
//! a result.

pub mod equations;
pub mod krylov;
pub mod newton;
pub mod ode;
pub mod system;

use crate::model::{Network, Reactor};
use crate::reactor::{Balance, Model};
use crate::units::GAS_CONSTANT;
use ode::{LinearAlgebra, OdeError, OdeOptions, OdeSystem, Output};

/// Where results are wanted along the reactor.
#[derive(Debug, Clone, PartialEq)]
pub enum Points {
    /// Only the outlet.
    End,
    /// N evenly spaced points from inlet to outlet.
    Even(usize),
    /// Every internal step of the integrator.
    Steps,
}

/// Tolerances and output of a solve. `None` takes the study file's value, then the default.
#[derive(Debug, Clone)]
pub struct SolveOptions {
    pub rtol: Option<f64>,
    /// Absolute tolerance on the species state (mol/s or mol).
    pub atol: Option<f64>,
    pub max_steps: Option<usize>,
    pub points: Points,
    pub linear_algebra: LinearAlgebra,
}

impl Default for SolveOptions {
    fn default() -> Self {
        SolveOptions {
            rtol: None,
            atol: None,
            max_steps: None,
            points: Points::End,
            linear_algebra: LinearAlgebra::Auto,
        }
    }
}

/// A packed bed whose integration fails with P/P0 below this has run out of pressure.
pub const PRESSURE_COLLAPSE: f64 = 0.05;

/// Default relative tolerance of the integration.
pub const DEFAULT_RTOL: f64 = 1e-8;
/// Default absolute tolerance, as a fraction of the total feed (F_T0 or N_T0).
pub const DEFAULT_ATOL_FRACTION: f64 = 1e-12;

/// Solver statistics for the report.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct SolveStats {
    pub method: &'static str,
    pub steps: usize,
    pub rhs_evals: usize,
    pub jac_evals: usize,
    pub lu_factorizations: usize,
    /// Krylov linear algebra only (large networks): linear solves, GMRES iterations over all
    /// of them, and solves that fell back to the complete LU.
    pub linear_solves: usize,
    pub krylov_iterations: usize,
    pub krylov_fallbacks: usize,
    pub newton_iterations: usize,
    pub continuation_stages: usize,
    /// CSTR: ‖F_0 − F + V f(F)‖∞ at the solution (mol/s).
    pub residual: Option<f64>,
    pub rtol: f64,
    pub atol: f64,
}

/// The result of one reactor solve.
#[derive(Debug, Clone)]
pub struct Simulation {
    /// Independent variable name: V (m3), W (kg) or t (s).
    pub x_name: &'static str,
    pub x_unit: &'static str,
    /// Reactor size: V, W or batch time, SI.
    pub size: f64,
    /// Profile points (the outlet only for a CSTR).
    pub x: Vec<f64>,
    /// Species state at each point: F_j (mol/s) or N_j (mol).
    pub states: Vec<Vec<f64>>,
    /// Pressure at each point (Pa) where it varies (packed bed with pressure drop).
    pub pressure: Option<Vec<f64>>,
    pub stats: SolveStats,
}

impl Simulation {
    pub fn outlet(&self) -> &[f64] {
        self.states
            .last()
            .expect("a simulation has at least the outlet")
    }
}

#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SolveError {
    #[error("{0}")]
    Setup(String),
    #[error("integration of the {reactor} failed at {x_name} = {x:.6e} {x_unit}: {source}")]
    Integration {
        reactor: &'static str,
        x_name: &'static str,
        x_unit: &'static str,
        x: f64,
        source: OdeError,
    },
    #[error("CSTR steady state: {0}")]
    Newton(#[from] newton::NewtonError),
    #[error(
        "species `{species}` goes negative ({value:.3e} {unit}) at {x_name} = {x:.6e} {x_unit}: the solution is not physical; tighten --rtol/--atol, or check the rate laws (orders, units of k)"
    )]
    Negative {
        species: String,
        value: f64,
        unit: &'static str,
        x_name: &'static str,
        x: f64,
        x_unit: &'static str,
    },
    #[error(
        "the pressure in the packed bed falls to zero at W = {w:.6e} kg, before the end of the bed (αW → 1): use less catalyst, a smaller bed constant α or a larger cross-section"
    )]
    PressureCollapse { w: f64 },
}

/// Any reactor model as the integrator's system (the balances are autonomous: x unused).
struct Adapter<'a, M: Model>(&'a M);

impl<M: Model> OdeSystem for Adapter<'_, M> {
    fn dim(&self) -> usize {
        self.0.layout().len()
    }
    fn rhs(&self, _x: f64, y: &[f64], dydx: &mut [f64]) {
        self.0.rhs(y, dydx)
    }
    fn jacobian(&self, _x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        self.0.jacobian(y, out)
    }
}

/// The reactor's independent variable: (name, unit, end value).
pub fn reactor_axis(net: &Network) -> (&'static str, &'static str, f64) {
    match net.reactor {
        Reactor::Pfr { volume } | Reactor::Cstr { volume } => ("V", "m3", volume),
        Reactor::Pbr { catalyst, .. } => ("W", "kg", catalyst),
        Reactor::Batch { time, .. } => ("t", "s", time),
    }
}

/// The tolerances in force: command line, else study file, else defaults.
pub fn tolerances(net: &Network, opts: &SolveOptions) -> (f64, f64) {
    let rtol = opts.rtol.or(net.solver.rtol).unwrap_or(DEFAULT_RTOL);
    let atol = opts
        .atol
        .or(net.solver.atol)
        .unwrap_or(DEFAULT_ATOL_FRACTION * net.feed.total());
    (rtol, atol)
}

/// How negative a species may go before the solution is rejected: beyond the integration's
/// own error (a few atol, plus rtol of the total).
fn negative_limit(rtol: f64, atol: f64, total: f64) -> f64 {
    100.0 * atol + 10.0 * rtol * total
}

/// Solve the network's reactor.
pub fn simulate(net: &Network, opts: &SolveOptions) -> Result<Simulation, SolveError> {
    let balance = Balance::new(net).map_err(SolveError::Setup)?;
    simulate_with(net, &balance, opts)
}

/// Solve with a balance already set up (studies reuse it across runs).
pub fn simulate_with(
    net: &Network,
    balance: &Balance,
    opts: &SolveOptions,
) -> Result<Simulation, SolveError> {
    let (x_name, x_unit, size) = reactor_axis(net);
    let (rtol, atol) = tolerances(net, opts);
    let n = net.species.len();
    let total = net.feed.total();
    let mut stats = SolveStats {
        rtol,
        atol,
        ..Default::default()
    };
    let sim = if let Reactor::Cstr { volume } = net.reactor {
        stats.method = "damped Newton (analytic Jacobian)";
        // Residual tolerance: far below what the ODE tolerances ask of a flow reactor.
        let tol = (1e-3 * rtol * total)
            .max(1e-14 * total)
            .min(atol.max(1e-14 * total));
        let (f, ns) = newton::solve_cstr(balance, &net.feed.amounts, volume, tol)?;
        stats.newton_iterations = ns.iterations;
        stats.continuation_stages = ns.continuation_stages;
        stats.residual = Some(ns.residual);
        Simulation {
            x_name,
            x_unit,
            size,
            x: vec![volume],
            states: vec![f],
            pressure: None,
            stats,
        }
    } else {
        let y0 = balance.initial_state(net);
        let ode_opts = ode_options(net, balance, opts);
        stats.method = match ode_opts.linear_algebra.resolve(balance.dim()) {
            LinearAlgebra::Dense => "BDF (diffsol, analytic Jacobian, dense LU)",
            LinearAlgebra::Sparse => "BDF (diffsol, analytic Jacobian, sparse LU)",
            _ => "BDF (diffsol, analytic Jacobian, GMRES with dropped-entry LU preconditioner)",
        };
        let out = match opts.points {
            Points::End => Output::End,
            Points::Even(k) => Output::evenly_spaced(k, size),
            Points::Steps => Output::Steps,
        };
        let reactor = reactor_name(net);
        let sol =
            ode::integrate(&Adapter(balance), &y0, size, &out, &ode_opts).map_err(|source| {
                let x = match &source {
                    OdeError::NonFiniteRhs { x, .. }
                    | OdeError::NonFiniteJacobian { x, .. }
                    | OdeError::SparsityChanged { x, .. }
                    | OdeError::NonFiniteRoot { x }
                    | OdeError::NonFiniteState { x, .. }
                    | OdeError::StepSizeTooSmall { x }
                    | OdeError::MaxSteps { x, .. }
                    | OdeError::ConvergenceFailure { x, .. }
                    | OdeError::Solver { x, .. } => *x,
                    _ => 0.0,
                };
                if balance.has_pressure() && x > 0.0 {
                    // Was it the pressure collapsing? Look at p = P/P0 just before the failure.
                    let before = ode::integrate(
                        &Adapter(balance),
                        &y0,
                        x * (1.0 - 1e-6),
                        &Output::End,
                        &ode_opts,
                    );
                    if let Ok(sol) = before
                        && sol.y.last().is_some_and(|y| y[n] < PRESSURE_COLLAPSE)
                    {
                        return SolveError::PressureCollapse { w: x };
                    }
                }
                SolveError::Integration {
                    reactor,
                    x_name,
                    x_unit,
                    x,
                    source,
                }
            })?;
        stats.steps = sol.stats.steps;
        stats.rhs_evals = sol.stats.rhs_evals;
        stats.jac_evals = sol.stats.jac_evals;
        stats.lu_factorizations = sol.stats.lu_factorizations;
        stats.linear_solves = sol.stats.linear_solves;
        stats.krylov_iterations = sol.stats.krylov_iterations;
        stats.krylov_fallbacks = sol.stats.krylov_fallbacks;
        let pressure = balance.has_pressure().then(|| {
            sol.y
                .iter()
                .map(|y| y[n] * net.feed.pressure)
                .collect::<Vec<f64>>()
        });
        if let Some(p) = &pressure
            && let Some(k) = p.iter().position(|v| !(*v > 0.0))
        {
            return Err(SolveError::PressureCollapse { w: sol.x[k] });
        }
        Simulation {
            x_name,
            x_unit,
            size,
            x: sol.x,
            states: sol
                .y
                .into_iter()
                .map(|mut y| {
                    y.truncate(n);
                    y
                })
                .collect(),
            pressure,
            stats,
        }
    };
    let limit = negative_limit(rtol, atol, total);
    let unit = if net.reactor.is_batch() {
        "mol"
    } else {
        "mol/s"
    };
    for (x, y) in sim.x.iter().zip(&sim.states) {
        if let Some((j, v)) = y.iter().enumerate().find(|(_, v)| **v < -limit) {
            return Err(SolveError::Negative {
                species: net.species[j].name.clone(),
                value: *v,
                unit,
                x_name,
                x: *x,
                x_unit,
            });
        }
    }
    Ok(sim)
}

/// Volume of a batch charge at state N (constant-pressure gas: N_T R T / P; else fixed).
pub fn batch_volume(net: &Network, n: &[f64]) -> f64 {
    match net.reactor {
        Reactor::Batch {
            mode: crate::model::BatchMode::ConstantPressure,
            ..
        } => n.iter().sum::<f64>() * GAS_CONSTANT * net.feed.temperature / net.feed.pressure,
        _ => net.feed.volumetric,
    }
}

/// The integrated reactor's name for messages.
fn reactor_name(net: &Network) -> &'static str {
    match net.reactor {
        Reactor::Pfr { .. } => "PFR",
        Reactor::Pbr { .. } => "packed bed",
        Reactor::Cstr { .. } => "CSTR",
        Reactor::Batch { .. } => "batch reactor",
    }
}

/// The ODE options of a solve (tolerances in force, pressure state tolerance).
pub fn ode_options(net: &Network, balance: &Balance, opts: &SolveOptions) -> OdeOptions {
    let (rtol, atol) = tolerances(net, opts);
    let mut atols = vec![atol; balance.dim()];
    if balance.has_pressure() {
        atols[net.species.len()] = 1e-12;
    }
    OdeOptions {
        rtol,
        atol: atols,
        max_steps: opts.max_steps.or(net.solver.max_steps).unwrap_or(200_000),
        first_step: None,
        // The caller's explicit choice, else the study file's, else by size.
        linear_algebra: match opts.linear_algebra {
            LinearAlgebra::Auto => net.solver.linear_algebra.unwrap_or(LinearAlgebra::Auto),
            chosen => chosen,
        },
    }
}

fn study_error(net: &Network, x: f64, source: OdeError) -> SolveError {
    let (x_name, x_unit, _) = reactor_axis(net);
    SolveError::Integration {
        reactor: reactor_name(net),
        x_name,
        x_unit,
        x,
        source,
    }
}

/// Integrate the (autonomous, isothermal) balances from state `y0` over a length `length` of
/// the reactor and return the end state (full state: species, then p where modelled).
pub fn advance(
    net: &Network,
    balance: &Balance,
    y0: &[f64],
    length: f64,
    opts: &SolveOptions,
) -> Result<Vec<f64>, SolveError> {
    let o = ode_options(net, balance, opts);
    let sol = ode::integrate(&Adapter(balance), y0, length, &Output::End, &o)
        .map_err(|e| study_error(net, length, e))?;
    Ok(sol
        .y
        .last()
        .expect("the solution has its end point")
        .clone())
}

/// Integrate from `y0` over `length` until g(y) crosses zero. Returns the crossing (distance
/// from the start, full state) if any, and the last state reached.
#[allow(clippy::type_complexity)]
pub fn trace_root(
    net: &Network,
    balance: &Balance,
    y0: &[f64],
    length: f64,
    g: &dyn Fn(&[f64]) -> f64,
    opts: &SolveOptions,
) -> Result<(Option<(f64, Vec<f64>)>, Vec<f64>), SolveError> {
    let o = ode_options(net, balance, opts);
    let gx = |_x: f64, y: &[f64]| g(y);
    let (sol, root) = ode::integrate_until_root(&Adapter(balance), &gx, y0, length, &o)
        .map_err(|e| study_error(net, length, e))?;
    let last = sol
        .y
        .last()
        .expect("the solution has its end point")
        .clone();
    Ok((root, last))
}
