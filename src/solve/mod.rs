//! Solving a reactor model: BDF integration along the reactor (PFR, packed bed, batch) or the
//! steady-state Newton solve (CSTR). A failed solve is an error that says where and why, never
//! a result.

pub mod cstr_heat;
pub mod dense_lu;
pub mod equations;
pub mod hotspot;
pub mod krylov;
pub mod newton;
pub mod ode;
pub mod pieces;
pub mod sensitivity;
pub mod shooting;
pub mod steady;
pub mod system;
pub mod train;

use crate::model::{Network, Reactor};
use crate::reactor::{Balance, Model};
use crate::units::GAS_CONSTANT;
use ode::{LinearAlgebra, OdeError, OdeOptions, OdeSystem, Output};
pub use steady::{SteadyState, SteadyStateChoice};

/// Where results are wanted along the reactor.
#[derive(Debug, Clone, PartialEq)]
pub enum Points {
    /// Only the outlet.
    End,
    /// N evenly spaced points from inlet to outlet.
    Even(usize),
    /// Every internal step of the integrator.
    Steps,
    /// Exactly these positions (SI, non-decreasing, within the reactor): the points of a
    /// measured profile.
    At(Vec<f64>),
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
    /// CSTR: which steady state to report when there are several.
    pub steady_state: Option<SteadyStateChoice>,
}

impl Default for SolveOptions {
    fn default() -> Self {
        SolveOptions {
            rtol: None,
            atol: None,
            max_steps: None,
            points: Points::End,
            linear_algebra: LinearAlgebra::Auto,
            steady_state: None,
        }
    }
}

/// A packed bed whose integration fails with P/P0 below this has run out of pressure.
pub const PRESSURE_COLLAPSE: f64 = 0.05;

/// Default relative tolerance of the integration.
pub const DEFAULT_RTOL: f64 = 1e-8;
pub use crate::model::solver_settings::{
    MAX_ATOL_FRACTION, MAX_RTOL, MIN_RTOL, check_atol, check_rtol,
};
/// An amount more negative than this fraction of the total feed is refused as unphysical,
/// whatever the tolerances (an absolute guard: 1e-7 of the feed is below the six significant
/// figures a report prints, and above the round-off of any accepted tolerance's honest error).
pub const NEGATIVE_FRACTION: f64 = 1e-7;

/// Default absolute tolerance of a species, as a fraction of its scale (see [`species_atol`]).
pub const DEFAULT_ATOL_FRACTION: f64 = 1e-12;
/// The smallest scale of a species for its default absolute tolerance, as a fraction of the
/// total feed: a trace of 1e-9 of the feed is the finest resolved by default.
pub const MIN_SCALE_FRACTION: f64 = 1e-9;

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
    /// CSTR: the largest flow change one more Newton step would make (mol/s), the distance to
    /// the exact steady state to first order.
    pub newton_step: Option<f64>,
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
    /// Temperature at each point (K) when the reactor has an energy balance.
    pub temperature: Option<Vec<f64>>,
    /// Coolant stream temperature at each point (K), where it is a state.
    pub coolant: Option<Vec<f64>>,
    /// The highest and lowest temperature over the whole reactor and where, located between
    /// the integrator's steps (energy balance only; the profile points may miss them).
    pub temperature_range: Option<ode::Extreme>,
    /// Batch with an energy balance: the extremes of T + ΔT_ad N_k/N_k0, the temperature the
    /// charge would reach if the cooling failed (see [`crate::safety`]).
    pub cooling_failure: Option<ode::Extreme>,
    /// Warnings about the solution that do not make it wrong, each a sentence (heat-capacity
    /// data used outside their range, with the species, T and where).
    pub warnings: Vec<String>,
    pub stats: SolveStats,
    /// CSTR: every steady state found (rising key conversion) and which one `states` holds.
    pub steady: Option<CstrSteadyStates>,
    /// A counter-current coolant: every solution of the boundary-value problem and which one
    /// the profile shows.
    pub counter_current: Option<shooting::CounterCurrent>,
    /// What entered and left by routes other than the inlet and the outlet (side and
    /// distributed feeds, dosing, the wall, withdrawal), cumulative to each profile point;
    /// `None` for a plain vessel.
    pub exchanged: Option<Exchanged>,
}

/// The species that entered and left a vessel by side routes, cumulative from the inlet (or
/// the start of a batch) to each profile point: mol/s along a tube, mol over a batch's time.
/// With them every profile point closes its element balance:
/// feed + entered = state + left + Σ_i ν_i ξ_i.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Exchanged {
    /// Per profile point, per species: entered through side feeds, a distributed feed, dosing
    /// or the wall (a species fed through a membrane).
    pub entered: Vec<Vec<f64>>,
    /// Per profile point, per species: left through the wall (permeate) or by withdrawal.
    pub left: Vec<Vec<f64>>,
}

/// The steady states of a CSTR solve.
#[derive(Debug, Clone, serde::Serialize)]
pub struct CstrSteadyStates {
    /// In order of rising conversion of the key.
    pub states: Vec<SteadyState>,
    /// Index into `states` of the one reported (0-based).
    pub shown: usize,
    /// The choice in force.
    pub choice: String,
    /// Why the search for further states was not made or not finished, if so.
    pub note: Option<String>,
    /// With an energy balance: the temperature search, its heat curves and the ignition and
    /// extinction points.
    pub heat: Option<cstr_heat::HeatSearch>,
}

impl Simulation {
    /// The model's whole state at profile point k, in its layout order: species, then P/P0,
    /// T and the coolant temperature where they are states (`p0` is the feed pressure).
    pub fn model_state(&self, k: usize, p0: f64) -> Vec<f64> {
        let mut y = self.states[k].clone();
        if let Some(p) = &self.pressure {
            y.push(p[k] / p0);
        }
        if let Some(t) = &self.temperature {
            y.push(t[k]);
        }
        if let Some(t) = &self.coolant {
            y.push(t[k]);
        }
        y
    }

    /// Temperature at profile point k: the state's where there is an energy balance, else the
    /// feed temperature `t0`.
    pub fn temperature_at(&self, k: usize, t0: f64) -> f64 {
        self.temperature.as_ref().map_or(t0, |t| t[k])
    }

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
    #[error("CSTR steady state: {0}")]
    SteadyStateChoice(String),
    #[error(
        "species `{species}` goes negative ({value:.3e} {unit}, beyond the 1e-7 of the total feed allowed for round-off) at {x_name} = {x:.6e} {x_unit}: the solution is not physical; tighten --rtol/--atol, or check the rate laws (orders, units of k)"
    )]
    Negative {
        species: String,
        value: f64,
        unit: &'static str,
        x_name: &'static str,
        x: f64,
        x_unit: &'static str,
    },
    #[error("{0}")]
    Unphysical(String),
    #[error("counter-current coolant: {0}")]
    BoundaryValue(String),
    /// A unit of a train failed.
    #[error("unit `{unit}`: {source}")]
    Unit {
        unit: String,
        source: Box<SolveError>,
    },
    /// A recycle loop did not converge.
    #[error("{0}")]
    Recycle(String),
    #[error(
        "the pressure in the packed bed falls to zero at W = {w:.6e} kg, before the end of the bed (αW → 1): use less catalyst, a smaller bed constant α or a larger cross-section"
    )]
    PressureCollapse { w: f64 },
}

/// Any reactor model as the integrator's system.
struct Adapter<'a, M: Model>(&'a M);

impl<M: Model> OdeSystem for Adapter<'_, M> {
    fn dim(&self) -> usize {
        self.0.layout().len()
    }
    fn rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]) {
        self.0.rhs(x, y, dydx)
    }
    fn jacobian(&self, x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        self.0.jacobian(x, y, out)
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

/// The tolerances in force: command line, else study file, else defaults; the absolute one is
/// the smallest of [`species_atol`].
pub fn tolerances(net: &Network, opts: &SolveOptions) -> (f64, f64) {
    let rtol = opts.rtol.or(net.solver.rtol).unwrap_or(DEFAULT_RTOL);
    let atol = species_atol(net, opts)
        .into_iter()
        .fold(f64::INFINITY, f64::min);
    (rtol, atol)
}

/// The absolute tolerance of each species (mol/s or mol): the one given on the command line or
/// in the study file for all, else per species [`DEFAULT_ATOL_FRACTION`] of its scale. The
/// scale of a fed species is its feed; of one not fed (a product), the smallest feed of a
/// consumed species (it cannot be made from less without a larger relative change of that
/// reactant); never below [`MIN_SCALE_FRACTION`] of the total feed. A trace reactant is thus
/// resolved relative to its own feed, not to a solvent that dominates the total (at 99.99 %
/// conversion of a trace the old single atol of 1e-12 F_T0 left 2e-6 relative error).
pub fn species_atol(net: &Network, opts: &SolveOptions) -> Vec<f64> {
    let n = net.species.len();
    if let Some(a) = opts.atol.or(net.solver.atol) {
        return vec![a; n];
    }
    // What a semibatch doses over the batch counts with the charge.
    let mut f0 = net.feed.amounts.clone();
    if let Reactor::Batch { time, .. } = net.reactor {
        for (f, d) in f0.iter_mut().zip(crate::reactor::dosed_by(net, time)) {
            *f += d;
        }
    }
    let total: f64 = f0.iter().sum();
    let smallest_reactant = (0..n)
        .filter(|&j| f0[j] > 0.0 && net.reactions.iter().any(|r| r.nu(j) < 0.0))
        .map(|j| f0[j])
        .fold(f64::INFINITY, f64::min);
    let least = MIN_SCALE_FRACTION * total;
    (0..n)
        .map(|j| {
            let scale = if f0[j] > 0.0 {
                f0[j]
            } else if smallest_reactant.is_finite() {
                smallest_reactant
            } else {
                total
            };
            DEFAULT_ATOL_FRACTION * scale.max(least)
        })
        .collect()
}

/// The balance with the concentration floor of its fractional orders set where the absolute
/// tolerances in force resolve each species: c_f,j = atol_j / v0 (v0 the feed volumetric flow,
/// or the batch volume). Below it the integrator controls no digit of the species, so the
/// floor changes the rate law nowhere the answer is resolved (docs/methods.md).
fn floored<'a>(
    net: &Network,
    balance: &'a Balance,
    opts: &SolveOptions,
) -> std::borrow::Cow<'a, Balance> {
    let v = net.feed.volumetric;
    let floor: Vec<f64> = species_atol(net, opts)
        .into_iter()
        .map(|a| if v > 0.0 { a / v } else { 0.0 })
        .collect();
    if balance.rates.floor() == floor.as_slice() {
        std::borrow::Cow::Borrowed(balance)
    } else {
        let mut b = balance.clone();
        b.rates.set_floor(&floor);
        std::borrow::Cow::Owned(b)
    }
}

/// How negative a species may go before the solution is rejected: a fixed fraction of the
/// feed, in physical terms, never scaled by the tolerances (a loose tolerance must not make a
/// negative amount acceptable).
fn negative_limit(total: f64) -> f64 {
    NEGATIVE_FRACTION * total
}

/// Solve the network's reactor.
pub fn simulate(net: &Network, opts: &SolveOptions) -> Result<Simulation, SolveError> {
    if train::is_flowsheet(net) {
        // Vessels in series, or a stream split or joined: unit by unit; the profile runs
        // along the whole train (`train::solve` gives every unit too).
        return train::solve(net, opts).map(|t| t.profile);
    }
    let balance = Balance::new(net).map_err(SolveError::Setup)?;
    simulate_with(net, &balance, opts)
}

/// Solve with a balance already set up (studies reuse it across runs).
pub fn simulate_with(
    net: &Network,
    balance: &Balance,
    opts: &SolveOptions,
) -> Result<Simulation, SolveError> {
    if train::is_flowsheet(net) {
        return Err(SolveError::Setup(
            "this study is a train (or a vessel with side feeds or a recycle): solve it with `simulate` or `train::solve`, which run it unit by unit".into(),
        ));
    }
    let balance = &*floored(net, balance, opts);
    let (x_name, x_unit, size) = reactor_axis(net);
    let (rtol, atol) = tolerances(net, opts);
    let n = net.species.len();
    let total = net.feed.total();
    let state_unit = if net.reactor.is_batch() {
        "mol"
    } else {
        "mol/s"
    };
    // The same ranges as the loader and the command line (a library caller gets them too).
    check_rtol(rtol).map_err(SolveError::Setup)?;
    if let Some(a) = opts.atol.or(net.solver.atol) {
        check_atol(a, total, state_unit).map_err(SolveError::Setup)?;
    }
    let mut stats = SolveStats {
        rtol,
        atol,
        ..Default::default()
    };
    let counter = balance
        .energy()
        .and_then(|e| e.coolant_stream())
        .is_some_and(|c| c.2);
    let sim = if let Reactor::Cstr { volume } = net.reactor
        && balance.has_energy()
    {
        stats.method = "temperature scan of the heat generated and removed, Brent's method, Newton on (F, T) with the analytic Jacobian";
        let tol = cstr_tolerance(rtol, atol, total);
        let (all, search, mut warnings) = cstr_heat::find_all(net, balance, volume, tol)?;
        let choice = opts
            .steady_state
            .or(net.solver.steady_state)
            .unwrap_or_default();
        let shown = all.pick(choice).map_err(SolveError::SteadyStateChoice)?;
        let st = &all.states[shown];
        // A hotter state the vessel can ignite to (a disturbance, a start-up) over the process
        // limit is named even when the state shown is below it.
        if let Some(t_max) = net.t_max {
            for (k, s) in all.states.iter().enumerate() {
                if let Some(t) = s.temperature
                    && k != shown
                    && t > t_max
                {
                    warnings.push(format!(
                        "steady state {} (T = {t:.2} K, X = {:.4}) is above T_max = {t_max} K: the CSTR can ignite to it",
                        k + 1,
                        s.conversion
                    ));
                }
            }
        }
        stats.newton_iterations = all.stats.iterations;
        stats.residual = Some(st.residual);
        stats.newton_step = Some(st.newton_step);
        Simulation {
            x_name,
            x_unit,
            size,
            x: vec![volume],
            states: vec![st.flows.clone()],
            pressure: None,
            temperature: Some(vec![st.temperature.unwrap_or(net.feed.temperature)]),
            coolant: None,
            temperature_range: None,
            cooling_failure: None,
            counter_current: None,
            exchanged: None,
            warnings,
            stats,
            steady: Some(CstrSteadyStates {
                shown,
                choice: choice.to_string(),
                note: all.note,
                states: all.states,
                heat: Some(search),
            }),
        }
    } else if let Reactor::Cstr { volume } = net.reactor {
        stats.method = "damped Newton on the extents (analytic Jacobian)";
        let tol = cstr_tolerance(rtol, atol, total);
        let all = steady::find_all(net, balance, volume, tol)?;
        let choice = opts
            .steady_state
            .or(net.solver.steady_state)
            .unwrap_or_default();
        let shown = all.pick(choice).map_err(SolveError::SteadyStateChoice)?;
        let f = all.states[shown].flows.clone();
        stats.newton_iterations = all.stats.iterations;
        stats.continuation_stages = all.stats.continuation_stages;
        stats.residual = Some(all.states[shown].residual);
        stats.newton_step = Some(all.states[shown].newton_step);
        Simulation {
            x_name,
            x_unit,
            size,
            x: vec![volume],
            states: vec![f],
            pressure: None,
            temperature: None,
            coolant: None,
            temperature_range: None,
            cooling_failure: None,
            warnings: Vec::new(),
            stats,
            counter_current: None,
            exchanged: None,
            steady: Some(CstrSteadyStates {
                shown,
                choice: choice.to_string(),
                note: all.note,
                states: all.states,
                heat: None,
            }),
        }
    } else {
        let ode_opts = ode_options(net, balance, opts);
        // A counter-current coolant: T_a(0) from the boundary-value problem, else the inlet.
        let (y0, counter_current) = if counter {
            let (y0, cc) = shooting::solve(net, balance, &ode_opts)?;
            (y0, Some(cc))
        } else {
            (balance.initial_state(net), None)
        };
        stats.method = match ode_opts.linear_algebra.resolve(balance.dim()) {
            LinearAlgebra::Dense => "BDF (diffsol, analytic Jacobian, dense LU)",
            LinearAlgebra::Sparse => "BDF (diffsol, analytic Jacobian, sparse LU)",
            _ => "BDF (diffsol, analytic Jacobian, GMRES with dropped-entry LU preconditioner)",
        };
        let out = match &opts.points {
            Points::End => Output::End,
            Points::Even(k) => Output::evenly_spaced(*k, size),
            Points::Steps => Output::Steps,
            Points::At(xs) => {
                check_points(xs, size, x_name, x_unit)?;
                Output::Points(xs.clone())
            }
        };
        let reactor = reactor_name(net);
        // With an energy balance, watch T (and a batch's cooling-failure temperature) for
        // their extremes between steps.
        let mut watch: Vec<ode::Functional> = Vec::new();
        if let (Some(ti), Some(e)) = (balance.temperature_index(), balance.energy()) {
            watch.push(vec![(ti, 1.0)]);
            let k = net.key;
            let n_k0 = net.feed.amounts[k];
            if net.reactor.is_batch() && n_k0 > 0.0 {
                let (rise, _) = e.adiabatic_rise(net);
                watch.push(vec![(ti, 1.0), (k, rise / n_k0)]);
            }
        }
        let (sol, _) = pieces::integrate_watching(
            &Adapter(balance),
            &y0,
            size,
            &out,
            &ode_opts,
            &watch,
            balance.breakpoints(),
        )
        .map_err(|source| {
            let x = source.position().unwrap_or(0.0);
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
        let temperature_range = sol.extremes.first().copied();
        let cooling_failure = sol.extremes.get(1).copied();
        let column = |i: Option<usize>| i.map(|i| sol.y.iter().map(|y| y[i]).collect::<Vec<f64>>());
        let temperature = column(balance.temperature_index());
        let coolant = column(balance.coolant_index());
        // What entered and left besides the inlet and outlet: a tube's walls, or a
        // semibatch's dosing and withdrawal.
        let exchanged = balance
            .wall_exchange(&sol.x, &sol.y)
            .map(|e| Exchanged {
                entered: e.entered,
                left: e.left,
            })
            .or_else(|| semibatch_exchanged(net, balance, &sol.x, &sol.y));
        if let Some(t) = &temperature
            && let Some(k) = t.iter().position(|v| !(*v > 0.0))
        {
            return Err(SolveError::Unphysical(format!(
                "the temperature of the {reactor} falls to absolute zero at {x_name} = {:.6e} {x_unit}: check the heat of reaction's sign and units, and the coolant",
                sol.x[k]
            )));
        }
        // The temperatures to check against the heat-capacity ranges: the profile points and
        // the extremes over the whole reactor (located between steps).
        let mut warnings = temperature
            .as_ref()
            .map(|t| {
                let (mut xs, mut ts) = (sol.x.clone(), t.clone());
                if let Some(r) = temperature_range {
                    xs.extend([r.max_at, r.min_at]);
                    ts.extend([r.max, r.min]);
                }
                range_warnings(net, balance, &xs, &ts, x_name, x_unit)
            })
            .unwrap_or_default();
        warnings.extend(balance.wall_warning(net));
        if exchanged.is_some() && balance.has_energy() && !net.contacting.dosing.is_empty() {
            warnings.push(
                "semibatch: the cooling-failure temperature is figured on the charged key and the charge's heat capacity; the heat of dosed reagent accumulated unreacted (the usual hazard of a dosed exothermic batch) is not assessed: judge it with a safety review and calorimetry, under your local codes and licensed practice".into(),
            );
        }
        Simulation {
            x_name,
            x_unit,
            size,
            temperature,
            coolant,
            temperature_range,
            cooling_failure,
            warnings,
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
            steady: None,
            counter_current,
            exchanged,
        }
    };
    let limit = negative_limit(total);
    let unit = state_unit;
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

/// Requested profile positions must lie in [0, size] and not decrease.
fn check_points(xs: &[f64], size: f64, x_name: &str, x_unit: &str) -> Result<(), SolveError> {
    if xs.is_empty() {
        return Err(SolveError::Setup(
            "no profile positions were asked for".into(),
        ));
    }
    for (i, &x) in xs.iter().enumerate() {
        if !(x.is_finite() && (0.0..=size).contains(&x)) {
            return Err(SolveError::Setup(format!(
                "profile position {x_name} = {x} {x_unit} is outside the reactor (0 to {size} {x_unit})"
            )));
        }
        if i > 0 && x < xs[i - 1] {
            return Err(SolveError::Setup(format!(
                "profile positions must not decrease ({x_name} = {x} {x_unit} after {})",
                xs[i - 1]
            )));
        }
    }
    Ok(())
}

/// The residual tolerance of a CSTR solve, mol/s: far below what the ODE tolerances ask of a
/// flow reactor.
fn cstr_tolerance(rtol: f64, atol: f64, total: f64) -> f64 {
    (1e-3 * rtol * total)
        .max(1e-14 * total)
        .min(atol.max(1e-14 * total))
}

/// One warning per species whose heat-capacity data are used outside their range along the
/// profile: the furthest temperature reached beyond the range and where.
fn range_warnings(
    net: &Network,
    balance: &Balance,
    x: &[f64],
    t: &[f64],
    x_name: &str,
    x_unit: &str,
) -> Vec<String> {
    let Some(e) = balance.energy() else {
        return Vec::new();
    };
    /// (excess beyond the range, T, x, range) of one species.
    type Excursion = (f64, f64, f64, (f64, f64));
    let mut worst: Vec<Option<Excursion>> = vec![None; net.species.len()];
    for (xk, tk) in x.iter().zip(t) {
        for (j, (lo, hi)) in e.out_of_range(*tk) {
            let excess = (lo - tk).max(tk - hi);
            if worst[j].is_none_or(|w| excess > w.0) {
                worst[j] = Some((excess, *tk, *xk, (lo, hi)));
            }
        }
    }
    worst
        .iter()
        .enumerate()
        .filter_map(|(j, w)| {
            let (_, tk, xk, (lo, hi)) = (*w)?;
            Some(format!(
                "the heat capacity of `{}` is used outside its range {lo}..{hi} K: T = {tk:.1} K at {x_name} = {xk:.4e} {x_unit} (the polynomial is extrapolated)",
                net.species[j].name
            ))
        })
        .collect()
}

/// The outlet of the network's CSTR at volume `v`: the steady state picked by `choice`, else by
/// the study file's `solver.steady_state`, else the one of lowest conversion (design studies
/// call this, so they follow the same choice as `run`). `tol` bounds ‖G‖∞ (mol/s).
pub fn cstr_outlet(
    net: &Network,
    balance: &Balance,
    v: f64,
    tol: f64,
    choice: Option<SteadyStateChoice>,
) -> Result<Vec<f64>, SolveError> {
    let all = if balance.has_energy() {
        cstr_heat::find_all(net, balance, v, tol)?.0
    } else {
        steady::find_all(net, balance, v, tol)?
    };
    let choice = choice.or(net.solver.steady_state).unwrap_or_default();
    let k = all.pick(choice).map_err(SolveError::SteadyStateChoice)?;
    Ok(all.states[k].flows.clone())
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
    let (rtol, _) = tolerances(net, opts);
    let mut atols = species_atol(net, opts);
    atols.resize(balance.dim(), 0.0);
    if balance.has_pressure() {
        atols[net.species.len()] = 1e-12;
    }
    // A semibatch's withdrawn amounts: the tolerance of their species.
    if let Some(l0) = balance.withdrawn_index() {
        for j in 0..net.species.len() {
            atols[l0 + j] = atols[j];
        }
    }
    // Temperatures: 1e-9 of the feed temperature (about 3e-7 K), below any digit reported.
    for i in [balance.temperature_index(), balance.coolant_index()]
        .into_iter()
        .flatten()
    {
        atols[i] = 1e-9 * net.feed.temperature;
    }
    // A membrane's permeate of species j: the species' own tolerance.
    for (i, v) in balance.layout().vars().iter().enumerate() {
        if let crate::reactor::StateKind::Permeate(j) = v.kind {
            atols[i] = atols[j];
        }
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

/// An integration over `length` that failed: placed where it failed, else at its end.
fn study_error(net: &Network, length: f64, source: OdeError) -> SolveError {
    let (x_name, x_unit, _) = reactor_axis(net);
    SolveError::Integration {
        reactor: reactor_name(net),
        x_name,
        x_unit,
        x: source.position().unwrap_or(length),
        source,
    }
}

/// Integrate the balances from state `y0` at position `x0` over a length `length` of the
/// reactor and return the end state (full state: species, then p, T and the coolant
/// temperature where modelled).
pub fn advance(
    net: &Network,
    balance: &Balance,
    y0: &[f64],
    x0: f64,
    length: f64,
    opts: &SolveOptions,
) -> Result<Vec<f64>, SolveError> {
    let balance = &*floored(net, balance, opts);
    let o = ode_options(net, balance, opts);
    pieces::advance(&Adapter(balance), y0, x0, length, &o, balance.breakpoints())
        .map_err(|e| study_error(net, length, e))
}

/// What a semibatch dosed and withdrew up to each profile point: the dosed amounts in closed
/// form from the rates, the withdrawn ones from their quadrature states. `None` for a plain
/// vessel.
fn semibatch_exchanged(
    net: &Network,
    balance: &Balance,
    x: &[f64],
    y: &[Vec<f64>],
) -> Option<Exchanged> {
    let c = &net.contacting;
    if !net.reactor.is_batch() || (c.dosing.is_empty() && c.withdrawal.is_none()) {
        return None;
    }
    let n = net.species.len();
    Some(Exchanged {
        entered: x
            .iter()
            .map(|&t| crate::reactor::dosed_by(net, t))
            .collect(),
        left: y
            .iter()
            .map(|yk| match balance.withdrawn_index() {
                Some(l0) => yk[l0..l0 + n].to_vec(),
                None => vec![0.0; n],
            })
            .collect(),
    })
}

/// Integrate from `y0` at position `x0` over `length` until g(x, y) crosses zero (x the
/// reactor position). Returns the crossing (distance from `x0`, full state) if any, and the
/// last state reached.
#[allow(clippy::type_complexity)]
pub fn trace_root(
    net: &Network,
    balance: &Balance,
    y0: &[f64],
    x0: f64,
    length: f64,
    g: &dyn Fn(f64, &[f64]) -> f64,
    opts: &SolveOptions,
) -> Result<(Option<(f64, Vec<f64>)>, Vec<f64>), SolveError> {
    let balance = &*floored(net, balance, opts);
    let o = ode_options(net, balance, opts);
    pieces::until_root(
        &Adapter(balance),
        g,
        y0,
        x0,
        length,
        &o,
        balance.breakpoints(),
    )
    .map_err(|e| study_error(net, length, e))
}
