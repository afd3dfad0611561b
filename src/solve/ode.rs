//! Integration of the reactor balance equations dy/dx = f(x, y).
//!
//! `x` is the independent variable of the reactor model (reactor volume, catalyst mass or
//! time), always starting at x = 0; `y` holds the species flows or moles (later also pressure
//! and temperature). Reaction networks are stiff (rate constants spanning 1e-3..1e7), so the
//! integrator is the variable-order BDF method of the `diffsol` crate, driven by the analytic
//! Jacobian ∂f/∂y that the reactor model supplies as (row, col, value) triplets.
//!
//! The BDF iteration solves, at every step, the Newton system (I − hγJ)Δy = r. The triplets
//! are summed once per (x, y) and written straight into diffsol's matrix
//! ([`super::equations`]), so the right-hand side and its Jacobian come from one description
//! in the reactor model and cannot drift apart.
//!
//! Every value this module hands back is checked to be finite: a non-finite right-hand side,
//! Jacobian entry, root function or state becomes an [`OdeError`], never a silently wrong number.

use std::cell::{Cell, RefCell};
use std::rc::Rc;

use super::dense_lu::DenseLu;
use super::equations::{AssembledJacobian, Equations, Shared};
use super::krylov::{KrylovSolver, KrylovStats, WeightSource};
pub use super::system::{OdeError, OdeSystem};
use diffsol::{
    Bdf, BdfState, DefaultDenseMatrix, DiffsolError, FaerSparseLU, FaerSparseMat, NalgebraMat,
    NoAug, OdeBuilder, OdeEquations, OdeEquationsImplicit, OdeSolverMethod, OdeSolverProblem,
    OdeSolverState, OdeSolverStopReason, Vector, VectorRef, error::OdeSolverError,
    matrix::MatrixRef,
};

pub use crate::model::solver_settings::{AUTO_KRYLOV_ABOVE, LinearAlgebra};

/// Smallest step allowed, as a fraction of the integration length or of the system's own
/// scale at the start, whichever is shorter.
pub const MIN_STEP_FRACTION: f64 = 1e-22;

/// Tolerance of the BDF Newton iteration on the weighted RMS norm of its correction, with the
/// iteration's estimated convergence factor η = ρ/(1 − ρ) in front: converged when
/// η‖Δ‖ < 0.2 (diffsol's default, set explicitly so that the Krylov solver, which stops
/// relative to it, and the iteration agree).
const NEWTON_TOLERANCE: f64 = 0.2;

/// Most Newton iterations per step attempt with the Krylov solver (diffsol's default is 10).
///
/// The BDF Newton iteration keeps its matrix I − hγJ for up to 20 steps and J for up to 50
/// while it converges at all. On the generated networks of docs/performance.md the lagged
/// matrix often contracts the correction only by 0.5–0.65 per iteration, and diffsol then
/// iterates 5–9 times per step rather than refreshing it: a third of all Newton iterations
/// were spent in such steps. With a cap of 4 a slowly converging iteration counts as a
/// convergence failure, after which diffsol refreshes the Jacobian (or the matrix with the
/// current step size) and retries the same step; its rate test also gives up early when the
/// measured rate cannot reach the tolerance within the cap. CVODE caps the corrector at 3
/// iterations for the same reason (Hindmarsh et al., ACM TOMS 31 (2005) 363, `maxcor`, from
/// memory). Measured on the generated 300/1000 and 1000/3000 networks (docs/performance.md):
/// caps of 3, 4, 5 and 10 gave 1.48/1.57, 1.55/1.61, 1.66/1.69 and 1.97/2.14 Newton
/// iterations per step, and at 1000/3000 a cap of 4 took the fewest instructions
/// (3.12 × 10⁹ against 3.24 × 10⁹ with 3, callgrind, δ ≤ 1e-3). The dense and sparse direct paths keep
/// diffsol's default (small systems, unchanged results).
const KRYLOV_NEWTON_ITERATIONS: usize = 4;

/// Tolerances and limits of the integration.
///
/// The local error of each step is kept below 1 in the weighted RMS norm
/// ‖e_i / (atol_i + rtol·|y_i|)‖ (common practice for BDF codes).
#[derive(Debug, Clone)]
pub struct OdeOptions {
    /// Relative tolerance, 1e-13 ≤ rtol < 1.
    pub rtol: f64,
    /// Absolute tolerance per state (length dim), or a single value used for every state.
    pub atol: Vec<f64>,
    /// Largest number of accepted steps before giving up with [`OdeError::MaxSteps`].
    pub max_steps: usize,
    /// First step size; `None` lets the solver estimate it from f(0, y0).
    pub first_step: Option<f64>,
    /// Dense or sparse linear algebra for the Newton iteration.
    pub linear_algebra: LinearAlgebra,
}

impl Default for OdeOptions {
    /// rtol = 1e-6, atol = 1e-10 for every state, 100 000 steps, estimated first step, Auto.
    fn default() -> Self {
        Self {
            rtol: 1e-6,
            atol: vec![1e-10],
            max_steps: 100_000,
            first_step: None,
            linear_algebra: LinearAlgebra::Auto,
        }
    }
}

/// Where the solution is wanted: the end only, the given x values (e.g.
/// [`Output::evenly_spaced`]: N evenly spaced points including 0 and x_end), or every internal
/// step.
#[derive(Debug, Clone, PartialEq)]
pub enum Output {
    /// Only x = x_end.
    End,
    /// Exactly these x values (non-decreasing, within [0, x_end]), from the solver's dense
    /// output.
    Points(Vec<f64>),
    /// x = 0 and every accepted internal step up to x_end.
    Steps,
}

impl Output {
    /// `n` ≥ 2 evenly spaced points x_i = i·x_end/(n−1), the first exactly 0 and the last
    /// exactly `x_end`.
    pub fn evenly_spaced(n: usize, x_end: f64) -> Output {
        let n = n.max(2);
        let mut xs: Vec<f64> = (0..n)
            .map(|i| x_end * (i as f64) / ((n - 1) as f64))
            .collect();
        xs[n - 1] = x_end;
        Output::Points(xs)
    }
}

/// The solution at the requested x values: `y[i]` is the state at `x[i]`.
#[derive(Debug, Clone)]
pub struct OdeSolution {
    pub x: Vec<f64>,
    pub y: Vec<Vec<f64>>,
    pub stats: OdeStats,
    /// Extremes of the watched functionals ([`integrate_watching`]); empty otherwise.
    pub extremes: Vec<Extreme>,
}

/// Work done by the integrator.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct OdeStats {
    /// Accepted steps (diffsol `number_of_steps`).
    pub steps: usize,
    /// Calls of [`OdeSystem::rhs`].
    pub rhs_evals: usize,
    /// Calls of [`OdeSystem::jacobian`].
    pub jac_evals: usize,
    /// Newton-matrix LU factorizations (diffsol `number_of_linear_solver_setups`); with
    /// [`LinearAlgebra::Krylov`], factorizations of the preconditioner.
    pub lu_factorizations: usize,
    /// [`LinearAlgebra::Krylov`] only: linear solves, GMRES iterations over all of them, and
    /// solves that fell back to the complete LU.
    pub linear_solves: usize,
    pub krylov_iterations: usize,
    pub krylov_fallbacks: usize,
}

/// Root function g(x, y).
type RootFn<'g> = &'g dyn Fn(f64, &[f64]) -> f64;

/// Integrate dy/dx = f(x, y) from x = 0, y = y0 to `x_end` with BDF and the analytic Jacobian,
/// returning the solution where `out` asks for it.
pub fn integrate(
    sys: &dyn OdeSystem,
    y0: &[f64],
    x_end: f64,
    out: &Output,
    opts: &OdeOptions,
) -> Result<OdeSolution, OdeError> {
    validate(sys, y0, x_end, opts)?;
    if let Output::Points(xs) = out {
        validate_points(xs, x_end)?;
    }
    run(sys, y0, x_end, out, opts, None, &[]).map(|(sol, _)| sol)
}

/// A linear function of the state, w(y) = Σ c_i y_i, as (index, coefficient) pairs.
pub type Functional = Vec<(usize, f64)>;

/// The largest and smallest value of a watched [`Functional`] over [0, x_end], and where.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Extreme {
    pub max: f64,
    pub max_at: f64,
    pub min: f64,
    pub min_at: f64,
}

impl Extreme {
    /// These extremes moved `offset` along the coordinate (a piece or a unit placed on a
    /// longer one).
    pub fn shifted(&self, offset: f64) -> Extreme {
        Extreme {
            max_at: self.max_at + offset,
            min_at: self.min_at + offset,
            ..*self
        }
    }

    /// Widen these extremes by `other`'s (the extremes over both ranges).
    pub fn include(&mut self, other: &Extreme) {
        if other.max > self.max {
            self.max = other.max;
            self.max_at = other.max_at;
        }
        if other.min < self.min {
            self.min = other.min;
            self.min_at = other.min_at;
        }
    }

    fn consider(&mut self, x: f64, v: f64) {
        if v > self.max {
            self.max = v;
            self.max_at = x;
        }
        if v < self.min {
            self.min = v;
            self.min_at = x;
        }
    }
}

/// Integrate as [`integrate`] does and also find the extremes of each functional in `watch`
/// over the whole interval, whatever `out` asks for: besides the ends and every accepted step,
/// where dw/dx = Σ c_i f_i(x, y) changes sign within a step the turning point is located on
/// the step's interpolating polynomial by the Illinois method, so a hot spot between two
/// steps is found to the solver's tolerance rather than to the step length.
pub fn integrate_watching(
    sys: &dyn OdeSystem,
    y0: &[f64],
    x_end: f64,
    out: &Output,
    opts: &OdeOptions,
    watch: &[Functional],
) -> Result<(OdeSolution, Vec<Extreme>), OdeError> {
    validate(sys, y0, x_end, opts)?;
    if let Output::Points(xs) = out {
        validate_points(xs, x_end)?;
    }
    let (sol, _) = run(sys, y0, x_end, out, opts, None, watch)?;
    let ext = sol.extremes.clone();
    Ok((sol, ext))
}

/// Integrate until g(x, y) crosses zero (e.g. d(F_B)/dV changes sign at the maximum of an
/// intermediate) or x_end; return the crossing x and y located to solver tolerance, or None.
///
/// After each accepted step from x_a to x_b with g(x_a)·g(x_b) < 0 (or g(x_b) = 0) the root is
/// located on the BDF interpolating polynomial of that step by the Illinois variant of regula
/// falsi (Dahlquist & Björck, Numerical Methods, from memory) down to a bracket of a few ulps; the
/// integration stops there. A zero of g at x = 0 itself is not a crossing. The solution holds x = 0
/// and every accepted step before the crossing, then the crossing point (or x_end).
#[allow(clippy::type_complexity)] // the signature is the public contract, spelled out
pub fn integrate_until_root(
    sys: &dyn OdeSystem,
    g: &dyn Fn(f64, &[f64]) -> f64,
    y0: &[f64],
    x_end: f64,
    opts: &OdeOptions,
) -> Result<(OdeSolution, Option<(f64, Vec<f64>)>), OdeError> {
    validate(sys, y0, x_end, opts)?;
    run(sys, y0, x_end, &Output::Steps, opts, Some(g), &[])
}

fn invalid(what: String) -> OdeError {
    OdeError::InvalidInput { what }
}

/// Checks done before diffsol sees the problem (diffsol panics or misbehaves on some of these).
fn validate(
    sys: &dyn OdeSystem,
    y0: &[f64],
    x_end: f64,
    opts: &OdeOptions,
) -> Result<(), OdeError> {
    let n = sys.dim();
    if n == 0 {
        return Err(invalid("the system has no states (dim = 0)".into()));
    }
    if y0.len() != n {
        return Err(invalid(format!(
            "y0 has {} values, the system has {n} states",
            y0.len()
        )));
    }
    if let Some(i) = y0.iter().position(|v| !v.is_finite()) {
        return Err(invalid(format!("y0[{i}] = {} is not finite", y0[i])));
    }
    if !(x_end.is_finite() && x_end > 0.0) {
        return Err(invalid(format!("x_end = {x_end} must be finite and > 0")));
    }
    if !(opts.rtol.is_finite() && (super::MIN_RTOL..1.0).contains(&opts.rtol)) {
        return Err(invalid(format!(
            "rtol = {} must lie in [{:e}, 1)",
            opts.rtol,
            super::MIN_RTOL
        )));
    }
    if opts.atol.len() != n && opts.atol.len() != 1 {
        return Err(invalid(format!(
            "atol has {} values; give one per state ({n}) or a single value",
            opts.atol.len()
        )));
    }
    if let Some(i) = opts.atol.iter().position(|a| !(a.is_finite() && *a > 0.0)) {
        return Err(invalid(format!(
            "atol[{i}] = {} must be finite and > 0",
            opts.atol[i]
        )));
    }
    if opts.max_steps == 0 {
        return Err(invalid("max_steps must be at least 1".into()));
    }
    if let Some(h) = opts.first_step
        && !(h.is_finite() && h > 0.0 && h <= x_end)
    {
        return Err(invalid(format!(
            "first_step = {h} must be finite and in (0, x_end]"
        )));
    }
    Ok(())
}

fn validate_points(xs: &[f64], x_end: f64) -> Result<(), OdeError> {
    if xs.is_empty() {
        return Err(invalid("Output::Points has no points".into()));
    }
    for (i, &x) in xs.iter().enumerate() {
        if !(x.is_finite() && (0.0..=x_end).contains(&x)) {
            return Err(invalid(format!(
                "output point x[{i}] = {x} is outside [0, {x_end}]"
            )));
        }
        if i > 0 && x < xs[i - 1] {
            return Err(invalid(format!(
                "output points must not decrease (x[{i}] = {x})"
            )));
        }
    }
    Ok(())
}

/// Map a diffsol error at solver position `x` to an [`OdeError`].
fn map_err(e: DiffsolError, x: f64, max_steps: usize) -> OdeError {
    match &e {
        DiffsolError::OdeSolverError(ose) => match ose {
            OdeSolverError::StepSizeTooSmall { time } => OdeError::StepSizeTooSmall { x: *time },
            OdeSolverError::TooManyTimesteps { time, .. } => OdeError::MaxSteps {
                x: *time,
                max_steps,
            },
            OdeSolverError::TooManyNonlinearSolverFailures { time, .. }
            | OdeSolverError::TooManyErrorTestFailures { time, .. } => {
                OdeError::ConvergenceFailure {
                    x: *time,
                    reason: ose.to_string(),
                }
            }
            _ => OdeError::Solver {
                x,
                reason: e.to_string(),
            },
        },
        DiffsolError::NonLinearSolverError(_) => OdeError::ConvergenceFailure {
            x,
            reason: e.to_string(),
        },
        _ => OdeError::Solver {
            x,
            reason: e.to_string(),
        },
    }
}

type RootResult = (OdeSolution, Option<(f64, Vec<f64>)>);

fn run(
    sys: &dyn OdeSystem,
    y0: &[f64],
    x_end: f64,
    out: &Output,
    opts: &OdeOptions,
    g: Option<RootFn>,
    watch: &[Functional],
) -> Result<RootResult, OdeError> {
    let n = sys.dim();
    let la = opts.linear_algebra.resolve(n);
    let mut sh = Shared::new(sys);
    if la == LinearAlgebra::Krylov {
        sh.latest = Some(Rc::new(WeightSource {
            newton_tolerance: NEWTON_TOLERANCE,
            rtol: opts.rtol,
            atol: opts.atol.clone(),
            y: RefCell::new(y0.to_vec()),
        }));
        sh.krylov = Some(Rc::new(Cell::new(KrylovStats::default())));
    }
    let sh = sh;
    let own_scale = own_scale(sys, y0, opts).min(x_end);
    // One body for all matrix types: the closure types are unnameable, so a macro rather than
    // a generic function carries the builder.
    macro_rules! solve_with {
        ($mat:ty, $lu:ty, $make:expr) => {{
            let fail = |e: DiffsolError| {
                sh.take_fault()
                    .unwrap_or_else(|| map_err(e, 0.0, opts.max_steps))
            };
            let eqn = Equations::<$mat>::new(&sh, y0);
            if let Some(e) = sh.take_fault() {
                return Err(e);
            }
            let mut problem = OdeBuilder::<$mat>::new()
                .rtol(opts.rtol)
                .atol(opts.atol.iter().copied())
                .build_from_eqn(eqn.map_err(fail)?)
                .map_err(fail)?;
            if let Some(e) = sh.take_fault() {
                return Err(e);
            }
            problem.ode_options.max_number_timesteps = opts.max_steps;
            problem.ode_options.nonlinear_solver_tolerance = NEWTON_TOLERANCE;
            if la == LinearAlgebra::Krylov {
                problem.ode_options.max_nonlinear_solver_iterations = KRYLOV_NEWTON_ITERATIONS;
            }
            // diffsol's default step floor is an absolute f64::EPSILON, which is wrong for a
            // reactor measured in m3 (a 0.1 m3 PFR with fast steps needs steps far below it);
            // make the floor relative to the length of the integration instead.
            problem.ode_options.min_timestep = MIN_STEP_FRACTION * x_end.min(own_scale);
            let mut state = problem.bdf_state::<$lu>().map_err(fail)?;
            match opts.first_step {
                Some(h) => *state.as_mut().h = h,
                // diffsol's estimate (Hairer, Nørsett & Wanner, from memory), kept within the
                // system's own scale and the horizon.
                None => {
                    let h = state.as_mut().h;
                    if !(h.is_finite() && *h > 0.0) || *h > own_scale {
                        *h = 1e-3 * own_scale;
                    }
                }
            }
            // A reactor shorter than the first step estimated from the rates (a batch of
            // 1e-300 s) is integrated in steps no longer than itself; otherwise the solver sees
            // its end within round-off of its first step and refuses to start.
            if *state.as_mut().h > x_end {
                *state.as_mut().h = x_end;
            }
            if let Some(e) = sh.take_fault() {
                return Err(e);
            }
            let mut solver = problem.bdf_with(state, $make).map_err(fail)?;
            drive(
                &mut solver,
                &sh,
                x_end,
                out,
                opts,
                g,
                sys,
                watch,
                <$mat as AssembledJacobian>::state,
            )
        }};
    }
    match la {
        LinearAlgebra::Sparse => {
            solve_with!(
                FaerSparseMat<f64>,
                FaerSparseLU<f64>,
                FaerSparseLU::default()
            )
        }
        LinearAlgebra::Krylov => {
            let (Some(w), Some(k)) = (sh.latest.clone(), sh.krylov.clone()) else {
                unreachable!("set above for the Krylov solver")
            };
            let ls: KrylovSolver = KrylovSolver::new(w, k);
            solve_with!(FaerSparseMat<f64>, KrylovSolver, ls)
        }
        _ => solve_with!(NalgebraMat<f64>, DenseLu, DenseLu::default()),
    }
}

/// The system's own scale of x at the start: the weighted-RMS ratio ‖y0‖/‖f(0, y0)‖ with
/// weights atol_i + rtol·|y0_i| (the quantity behind the usual first-step estimate; Hairer,
/// Nørsett & Wanner, Solving ODEs I, §II.4, from memory). Infinite when nothing changes at the
/// start. The step floor and the first step are taken relative to this scale rather than to
/// the horizon, so that a horizon of 1e20 s or 1e300 m3 (a system that just reaches
/// equilibrium) is covered by steps that start on the chemistry's scale and grow.
fn own_scale(sys: &dyn OdeSystem, y0: &[f64], opts: &OdeOptions) -> f64 {
    let n = sys.dim();
    let mut f = vec![0.0; n];
    sys.rhs(0.0, y0, &mut f);
    let atol = |i: usize| opts.atol[if opts.atol.len() == 1 { 0 } else { i }];
    let (mut dy, mut df) = (0.0, 0.0);
    for i in 0..n {
        let w = atol(i) + opts.rtol * y0[i].abs();
        dy += (y0[i] / w).powi(2);
        df += (f[i] / w).powi(2);
    }
    // A state of zeros still has the scale of its tolerance.
    let dy = dy.sqrt().max(1.0);
    let df = df.sqrt();
    if df.is_finite() && df > 0.0 {
        dy / df
    } else {
        f64::INFINITY
    }
}

/// The BDF solver of a problem with a given linear solver: diffsol's own `bdf_solver` builds
/// it with `LS::default()`, which cannot carry the Krylov solver's error weights.
trait BdfWith<Eqn>
where
    Eqn: OdeEquationsImplicit,
    Eqn::V: DefaultDenseMatrix<T = Eqn::T, C = Eqn::C>,
{
    fn bdf_with<LS: diffsol::LinearSolver<Eqn::M>>(
        &self,
        state: BdfState<Eqn::V>,
        linear_solver: LS,
    ) -> Result<Bdf<'_, Eqn, LS>, DiffsolError>;
}

impl<Eqn> BdfWith<Eqn> for OdeSolverProblem<Eqn>
where
    Eqn: OdeEquationsImplicit,
    Eqn::V: DefaultDenseMatrix<T = Eqn::T, C = Eqn::C>,
    for<'b> &'b Eqn::V: VectorRef<Eqn::V>,
    for<'b> &'b Eqn::M: MatrixRef<Eqn::M>,
{
    fn bdf_with<LS: diffsol::LinearSolver<Eqn::M>>(
        &self,
        state: BdfState<Eqn::V>,
        linear_solver: LS,
    ) -> Result<Bdf<'_, Eqn, LS>, DiffsolError> {
        Bdf::<'_, Eqn, LS, <Eqn::V as DefaultDenseMatrix>::M, NoAug<Eqn>>::new(
            self,
            state,
            linear_solver,
        )
    }
}

fn check_finite(x: f64, y: &[f64]) -> Result<(), OdeError> {
    match y.iter().position(|v| !v.is_finite()) {
        Some(index) => Err(OdeError::NonFiniteState { x, index }),
        None => Ok(()),
    }
}

fn eval_g(g: &dyn Fn(f64, &[f64]) -> f64, x: f64, y: &[f64]) -> Result<f64, OdeError> {
    let v = g(x, y);
    if v.is_finite() {
        Ok(v)
    } else {
        Err(OdeError::NonFiniteRoot { x })
    }
}

/// The stepping loop shared by the dense and sparse solvers. `as_slice` views the solver's
/// state as one slice, so that a step whose state is not kept (only the end is wanted) is
/// checked where it lies instead of being copied out first.
#[allow(clippy::too_many_arguments)]
fn drive<'a, Eqn, S>(
    solver: &mut S,
    sh: &Shared,
    x_end: f64,
    out: &Output,
    opts: &OdeOptions,
    g: Option<RootFn>,
    sys: &dyn OdeSystem,
    watch: &[Functional],
    as_slice: fn(&Eqn::V) -> &[f64],
) -> Result<RootResult, OdeError>
where
    Eqn: OdeEquations<T = f64> + 'a,
    S: OdeSolverMethod<'a, Eqn>,
{
    let stats = |solver: &S| {
        let s = solver.get_statistics();
        let k = sh.krylov.as_ref().map(|k| k.get()).unwrap_or_default();
        OdeStats {
            steps: s.number_of_steps,
            rhs_evals: sh.rhs_evals.get(),
            jac_evals: sh.jac_evals.get(),
            lu_factorizations: s.number_of_linear_solver_setups,
            linear_solves: k.solves,
            krylov_iterations: k.iterations,
            krylov_fallbacks: k.fallbacks,
        }
    };
    let interp = |solver: &S, x: f64| -> Result<Vec<f64>, OdeError> {
        let y = solver
            .interpolate(x)
            .map_err(|e| map_err(e, x, opts.max_steps))?
            .clone_as_vec();
        check_finite(x, &y)?;
        Ok(y)
    };

    let y0 = solver.state().y.clone_as_vec();
    let mut xs = Vec::new();
    let mut ys = Vec::new();
    let points: &[f64] = match out {
        Output::Points(p) => p,
        _ => &[],
    };
    let mut next_point = 0;
    while next_point < points.len() && points[next_point] <= 0.0 {
        xs.push(points[next_point]);
        ys.push(y0.clone());
        next_point += 1;
    }
    if matches!(out, Output::Steps) {
        xs.push(0.0);
        ys.push(y0.clone());
    }
    let mut g_prev = match g {
        Some(g) => Some(eval_g(g, 0.0, &y0)?),
        None => None,
    };
    // Watched functionals: value, and slope dw/dx from the right-hand side.
    let value = |w: &Functional, y: &[f64]| w.iter().map(|&(i, c)| c * y[i]).sum::<f64>();
    let mut f_buf = vec![0.0; y0.len()];
    let mut slope = |w: &Functional, x: f64, y: &[f64]| -> f64 {
        sys.rhs(x, y, &mut f_buf);
        w.iter().map(|&(i, c)| c * f_buf[i]).sum::<f64>()
    };
    let mut extremes: Vec<Extreme> = watch
        .iter()
        .map(|w| {
            let v = value(w, &y0);
            Extreme {
                max: v,
                max_at: 0.0,
                min: v,
                min_at: 0.0,
            }
        })
        .collect();
    let mut slope_prev: Vec<f64> = watch.iter().map(|w| slope(w, 0.0, &y0)).collect();

    solver
        .set_stop_time(x_end)
        .map_err(|e| map_err(e, 0.0, opts.max_steps))?;
    let mut x_prev = 0.0;
    loop {
        let res = solver.step();
        if let Some(e) = sh.take_fault() {
            return Err(e);
        }
        let x_now = solver.state().t;
        let reason = res.map_err(|e| map_err(e, x_now, opts.max_steps))?;
        let at_end = matches!(reason, OdeSolverStopReason::TstopReached);
        let y_now = as_slice(solver.state().y);
        check_finite(x_now, y_now)?;
        for (k, w) in watch.iter().enumerate() {
            extremes[k].consider(x_now, value(w, y_now));
            let d = slope(w, x_now, y_now);
            let d0 = slope_prev[k];
            if d0 != 0.0 && d != 0.0 && (d0 < 0.0) != (d < 0.0) && x_now > x_prev {
                let xr = illinois(
                    |x| {
                        let y = interp(solver, x)?;
                        let mut f = vec![0.0; y.len()];
                        sys.rhs(x, &y, &mut f);
                        Ok(w.iter().map(|&(i, c)| c * f[i]).sum::<f64>())
                    },
                    x_prev,
                    d0,
                    x_now,
                    d,
                )?;
                let yr = interp(solver, xr)?;
                extremes[k].consider(xr, value(w, &yr));
            }
            slope_prev[k] = d;
        }

        if let (Some(g), Some(ga)) = (g, g_prev) {
            let gb = eval_g(g, x_now, y_now)?;
            if gb == 0.0 || ga * gb < 0.0 {
                let (xr, yr) = if gb == 0.0 {
                    (x_now, y_now.to_vec())
                } else {
                    let xr =
                        illinois(|x| eval_g(g, x, &interp(solver, x)?), x_prev, ga, x_now, gb)?;
                    (xr, interp(solver, xr)?)
                };
                if let Some(e) = sh.take_fault() {
                    return Err(e);
                }
                xs.push(xr);
                ys.push(yr.clone());
                let sol = OdeSolution {
                    x: xs,
                    y: ys,
                    stats: stats(solver),
                    extremes,
                };
                return Ok((sol, Some((xr, yr))));
            }
            g_prev = Some(gb);
        }

        while next_point < points.len() && (points[next_point] <= x_now || at_end) {
            let xp = points[next_point];
            let yp = if xp >= x_now {
                y_now.to_vec()
            } else {
                interp(solver, xp)?
            };
            xs.push(xp);
            ys.push(yp);
            next_point += 1;
        }
        if matches!(out, Output::Steps) || (at_end && matches!(out, Output::End)) {
            xs.push(x_now);
            ys.push(y_now.to_vec());
        }
        if at_end {
            break;
        }
        x_prev = x_now;
    }
    Ok((
        OdeSolution {
            x: xs,
            y: ys,
            stats: stats(solver),
            extremes,
        },
        None,
    ))
}

/// Zero of `f` in [lo, hi] with f(lo)·f(hi) < 0 by the Illinois variant of regula falsi
/// (Dahlquist & Björck, Numerical Methods, from memory): the secant point of the bracket ends,
/// with the function value kept at an end that survives twice in a row halved so that the
/// bracket shrinks from both sides; a bisection step replaces a secant point that falls too
/// close to an end. Stops when the bracket is a few ulps wide.
fn illinois(
    f: impl Fn(f64) -> Result<f64, OdeError>,
    mut lo: f64,
    mut flo: f64,
    mut hi: f64,
    mut fhi: f64,
) -> Result<f64, OdeError> {
    // which end the previous iteration moved: -1 lo, +1 hi, 0 none yet
    let mut moved = 0i8;
    for _ in 0..300 {
        let width = hi - lo;
        if width <= 4.0 * f64::EPSILON * lo.abs().max(hi.abs()) {
            break;
        }
        let mut c = hi - fhi * width / (fhi - flo);
        if !(c > lo + 1e-3 * width && c < hi - 1e-3 * width) {
            c = 0.5 * (lo + hi);
        }
        let fc = f(c)?;
        if fc == 0.0 {
            return Ok(c);
        }
        if (fc < 0.0) == (fhi < 0.0) {
            hi = c;
            fhi = fc;
            if moved == 1 {
                flo *= 0.5;
            }
            moved = 1;
        } else {
            lo = c;
            flo = fc;
            if moved == -1 {
                fhi *= 0.5;
            }
            moved = -1;
        }
    }
    Ok(0.5 * (lo + hi))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Relative difference |a − b| / |b|.
    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    /// First-order chain A → B → C, rates r1 = k1·C_A, r2 = k2·C_B.
    struct Series {
        k1: f64,
        k2: f64,
    }

    impl OdeSystem for Series {
        fn dim(&self) -> usize {
            3
        }
        fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
            d[0] = -self.k1 * y[0];
            d[1] = self.k1 * y[0] - self.k2 * y[1];
            d[2] = self.k2 * y[1];
        }
        fn jacobian(&self, _x: f64, _y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            out.extend([
                (0, 0, -self.k1),
                (1, 0, self.k1),
                (1, 1, -self.k2),
                (2, 1, self.k2),
            ]);
        }
    }

    /// Bateman closed form for A → B → C from C_A0 = 1 (Levenspiel, Chemical Reaction
    /// Engineering 3rd ed. ch. 8, from memory): C_A = e^(−k1 x),
    /// C_B = k1/(k2−k1)(e^(−k1 x) − e^(−k2 x)), C_C = 1 − C_A − C_B.
    fn bateman(k1: f64, k2: f64, x: f64) -> [f64; 3] {
        let a = (-k1 * x).exp();
        let b = k1 / (k2 - k1) * ((-k1 * x).exp() - (-k2 * x).exp());
        [a, b, 1.0 - a - b]
    }

    fn tight(n: usize) -> OdeOptions {
        OdeOptions {
            rtol: 1e-10,
            atol: vec![1e-14; n],
            ..OdeOptions::default()
        }
    }

    #[test]
    fn series_reaction_matches_bateman() {
        let sys = Series { k1: 1.0, k2: 2.0 };
        let sol = integrate(&sys, &[1.0, 0.0, 0.0], 3.0, &Output::End, &tight(3)).unwrap();
        assert_eq!(sol.x, vec![3.0]);
        let exact = bateman(1.0, 2.0, 3.0);
        // Levenspiel ch. 8 closed form (from memory), 1e-7 relative
        for i in 0..3 {
            assert!(
                rel(sol.y[0][i], exact[i]) <= 1e-7,
                "i={i} {:?} vs {exact:?}",
                sol.y[0]
            );
        }
        assert!(sol.stats.steps > 0 && sol.stats.rhs_evals > 0 && sol.stats.jac_evals > 0);
        assert!(sol.stats.lu_factorizations > 0);
    }

    #[test]
    fn points_output_returns_exactly_those_x() {
        let sys = Series { k1: 1.0, k2: 2.0 };
        let xs = vec![0.0, 0.1, 0.1, 0.5, 1.0 / 3.0 + 1.0, 2.9999, 3.0];
        let sol = integrate(
            &sys,
            &[1.0, 0.0, 0.0],
            3.0,
            &Output::Points(xs.clone()),
            &tight(3),
        )
        .unwrap();
        assert_eq!(sol.x, xs);
        assert_eq!(sol.y.len(), xs.len());
        for (x, y) in sol.x.iter().zip(&sol.y) {
            let exact = bateman(1.0, 2.0, *x);
            // Levenspiel ch. 8 closed form (from memory); interpolated points to 1e-7 absolute
            for i in 0..3 {
                assert!((y[i] - exact[i]).abs() <= 1e-7, "x={x} i={i}");
            }
        }
        let Output::Points(even) = Output::evenly_spaced(7, 3.0) else {
            unreachable!()
        };
        assert_eq!(even.len(), 7);
        assert_eq!((even[0], even[6]), (0.0, 3.0));
        let sol = integrate(
            &sys,
            &[1.0, 0.0, 0.0],
            3.0,
            &Output::Points(even.clone()),
            &tight(3),
        )
        .unwrap();
        assert_eq!(sol.x, even);
        assert_eq!(sol.y[0], vec![1.0, 0.0, 0.0]);
    }

    #[test]
    fn steps_output_is_increasing_and_ends_at_x_end() {
        let sys = Series { k1: 1.0, k2: 2.0 };
        let sol = integrate(
            &sys,
            &[1.0, 0.0, 0.0],
            3.0,
            &Output::Steps,
            &OdeOptions::default(),
        )
        .unwrap();
        assert_eq!(sol.x[0], 0.0);
        assert_eq!(*sol.x.last().unwrap(), 3.0);
        assert!(sol.x.windows(2).all(|w| w[1] > w[0]));
        assert_eq!(sol.x.len(), sol.stats.steps + 1);
        for (x, y) in sol.x.iter().zip(&sol.y) {
            let exact = bateman(1.0, 2.0, *x);
            // Levenspiel ch. 8 closed form (from memory) at the default rtol 1e-6
            assert!((y[1] - exact[1]).abs() <= 1e-5, "x={x}");
        }
    }

    /// Robertson's chemical kinetics test problem (Hairer & Wanner, Solving ODEs II, the
    /// chemical kinetics test): y1' = −0.04 y1 + 1e4 y2 y3, y2' = 0.04 y1 − 1e4 y2 y3 − 3e7 y2²,
    /// y3' = 3e7 y2².
    struct Robertson;

    impl OdeSystem for Robertson {
        fn dim(&self) -> usize {
            3
        }
        fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
            d[0] = -0.04 * y[0] + 1e4 * y[1] * y[2];
            d[1] = 0.04 * y[0] - 1e4 * y[1] * y[2] - 3e7 * y[1] * y[1];
            d[2] = 3e7 * y[1] * y[1];
        }
        fn jacobian(&self, _x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            out.extend([
                (0, 0, -0.04),
                (0, 1, 1e4 * y[2]),
                (0, 2, 1e4 * y[1]),
                (1, 0, 0.04),
                (1, 1, -1e4 * y[2] - 6e7 * y[1]),
                (1, 2, -1e4 * y[1]),
                // split in two entries on purpose: duplicates must sum
                (2, 1, 3e7 * y[1]),
                (2, 1, 3e7 * y[1]),
            ]);
        }
    }

    #[test]
    fn robertson_at_40() {
        let opts = OdeOptions {
            rtol: 1e-10,
            atol: vec![1e-14, 1e-18, 1e-14],
            ..OdeOptions::default()
        };
        for la in [LinearAlgebra::Dense, LinearAlgebra::Krylov] {
            let opts = OdeOptions {
                linear_algebra: la,
                ..opts.clone()
            };
            let start = std::time::Instant::now();
            let sol = integrate(&Robertson, &[1.0, 0.0, 0.0], 40.0, &Output::End, &opts).unwrap();
            let elapsed = start.elapsed();
            let y = &sol.y[0];
            // y1(40) = 0.7158270687 (published reference table, Hairer & Wanner II; from memory)
            assert!(rel(y[0], 0.7158270687) <= 1e-6, "{la:?} y1 = {}", y[0]);
            // y2(40) = 9.185534764e-6, y3(40) = 0.2841637457 (same table, from memory)
            assert!(rel(y[1], 9.185534764e-6) <= 1e-5, "{la:?} y2 = {}", y[1]);
            assert!(rel(y[2], 0.2841637457) <= 1e-5, "{la:?} y3 = {}", y[2]);
            // mass conservation: the three rates sum to zero (Hairer & Wanner II)
            assert!((y[0] + y[1] + y[2] - 1.0).abs() <= 1e-9);
            eprintln!(
                "Robertson to x=40, {la:?}: {elapsed:?}, y = {y:?}, {:?}",
                sol.stats
            );
        }
    }

    #[test]
    fn robertson_long_range_is_stiff_stable() {
        // to x = 4e10 the solution decays to y1 → 0, y3 → 1 (Hairer & Wanner II, the
        // chemical kinetics test); a non-stiff method would need ~1e12 steps.
        let opts = OdeOptions {
            rtol: 1e-8,
            atol: vec![1e-12, 1e-16, 1e-12],
            ..OdeOptions::default()
        };
        let sol = integrate(&Robertson, &[1.0, 0.0, 0.0], 4e10, &Output::End, &opts).unwrap();
        let y = &sol.y[0];
        assert!(sol.stats.steps < 5000, "{:?}", sol.stats);
        assert!(y[0] < 1e-4 && y[0] >= -1e-10 && y[2] > 0.9999, "{y:?}");
        assert!((y[0] + y[1] + y[2] - 1.0).abs() <= 1e-9);
    }

    #[test]
    fn very_stiff_series_matches_bateman() {
        // k1 = 1e7, k2 = 1e-3: the rate constant range of real networks; Bateman closed form
        // (Levenspiel ch. 8, from memory)
        let sys = Series { k1: 1e7, k2: 1e-3 };
        let opts = OdeOptions {
            rtol: 1e-9,
            atol: vec![1e-14; 3],
            ..OdeOptions::default()
        };
        let xs = vec![1e-7, 1e-6, 1.0, 100.0, 1000.0];
        for la in [LinearAlgebra::Dense, LinearAlgebra::Krylov] {
            let opts = OdeOptions {
                linear_algebra: la,
                ..opts.clone()
            };
            let out = Output::Points(xs.clone());
            let sol = integrate(&sys, &[1.0, 0.0, 0.0], 1000.0, &out, &opts).unwrap();
            for (x, y) in sol.x.iter().zip(&sol.y) {
                let exact = bateman(1e7, 1e-3, *x);
                assert!(
                    (y[1] - exact[1]).abs() <= 1e-7,
                    "{la:?} x={x} {} vs {}",
                    y[1],
                    exact[1]
                );
                assert!((y[0] - exact[0]).abs() <= 1e-7, "{la:?} x={x}");
            }
            assert!(sol.stats.steps < 2000, "{:?}", sol.stats);
        }
    }

    #[test]
    fn root_finds_maximum_of_intermediate() {
        let sys = Series { k1: 1.0, k2: 2.0 };
        // g = dC_B/dx, zero at the maximum of C_B
        let g = |x: f64, y: &[f64]| {
            let mut d = [0.0; 3];
            sys.rhs(x, y, &mut d);
            d[1]
        };
        let (sol, root) = integrate_until_root(&sys, &g, &[1.0, 0.0, 0.0], 3.0, &tight(3)).unwrap();
        let (xr, yr) = root.expect("the maximum of C_B lies inside [0, 3]");
        // x_max = ln(k2/k1)/(k2 − k1) (Levenspiel ch. 8, from memory)
        let x_max = (2.0f64).ln() / (2.0 - 1.0);
        eprintln!(
            "root: xr - x_max = {:e}, C_B - 1/4 = {:e}",
            xr - x_max,
            yr[1] - 0.25
        );
        assert!((xr - x_max).abs() <= 1e-8, "xr = {xr}, x_max = {x_max}");
        // C_B,max = k1/(k2−k1)(e^(−k1 x) − e^(−k2 x)) at x_max = 1/2 − 1/4 (same source)
        assert!((yr[1] - 0.25).abs() <= 1e-9);
        assert_eq!(*sol.x.last().unwrap(), xr);
        assert!(sol.x.iter().all(|&x| x <= xr));
    }

    #[test]
    fn root_absent_runs_to_end() {
        let sys = Series { k1: 1.0, k2: 2.0 };
        // C_A − 2 never crosses zero from C_A0 = 1
        let g = |_x: f64, y: &[f64]| y[0] - 2.0;
        let (sol, root) = integrate_until_root(&sys, &g, &[1.0, 0.0, 0.0], 3.0, &tight(3)).unwrap();
        assert!(root.is_none());
        assert_eq!(*sol.x.last().unwrap(), 3.0);
        let g_nan = |_x: f64, _y: &[f64]| f64::NAN;
        let err = integrate_until_root(&sys, &g_nan, &[1.0, 0.0, 0.0], 3.0, &tight(3)).unwrap_err();
        assert!(matches!(err, OdeError::NonFiniteRoot { .. }), "{err}");
    }

    /// y0' = −y0, y1' = sqrt(y0 − 1/2): NaN as soon as y0 < 1/2, i.e. past x = ln 2.
    struct SqrtBlowup;

    impl OdeSystem for SqrtBlowup {
        fn dim(&self) -> usize {
            2
        }
        fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
            d[0] = -y[0];
            d[1] = (y[0] - 0.5).sqrt();
        }
        fn jacobian(&self, _x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            out.push((0, 0, -1.0));
            out.push((1, 0, 0.5 / (y[0] - 0.5).sqrt()));
        }
    }

    #[test]
    fn nan_rhs_is_an_error() {
        let err = integrate(
            &SqrtBlowup,
            &[1.0, 0.0],
            2.0,
            &Output::End,
            &OdeOptions::default(),
        )
        .unwrap_err();
        match err {
            // y0 = e^(−x) falls below 1/2 at x = ln 2 ≈ 0.693 (closed form)
            OdeError::NonFiniteRhs { x, index } => {
                assert_eq!(index, 1);
                assert!(x > 0.6 && x < 0.8, "x = {x}");
            }
            e => panic!("unexpected {e}"),
        }
        // NaN already at the start
        let err = integrate(
            &SqrtBlowup,
            &[0.25, 0.0],
            2.0,
            &Output::End,
            &OdeOptions::default(),
        )
        .unwrap_err();
        assert!(
            matches!(err, OdeError::NonFiniteRhs { x: 0.0, index: 1 }),
            "{err}"
        );
        assert!(err.to_string().contains("component 1"));
    }

    struct BadIndex;

    impl OdeSystem for BadIndex {
        fn dim(&self) -> usize {
            1
        }
        fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
            d[0] = -y[0];
        }
        fn jacobian(&self, _x: f64, _y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            out.push((0, 1, -1.0));
        }
    }

    #[test]
    fn bad_jacobian_index_is_an_error() {
        let err =
            integrate(&BadIndex, &[1.0], 1.0, &Output::End, &OdeOptions::default()).unwrap_err();
        assert_eq!(
            err,
            OdeError::JacobianIndexOutOfRange {
                row: 0,
                col: 1,
                dim: 1
            }
        );
    }

    /// Finite rhs y' = −y, but a Jacobian entry that is NaN.
    struct NanJacobian;

    impl OdeSystem for NanJacobian {
        fn dim(&self) -> usize {
            1
        }
        fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
            d[0] = -y[0];
        }
        fn jacobian(&self, _x: f64, _y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            out.push((0, 0, f64::NAN));
        }
    }

    #[test]
    fn nan_jacobian_is_an_error() {
        for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
            let opts = OdeOptions {
                linear_algebra: la,
                ..OdeOptions::default()
            };
            let err = integrate(&NanJacobian, &[1.0], 1.0, &Output::End, &opts).unwrap_err();
            assert_eq!(
                err,
                OdeError::NonFiniteJacobian {
                    x: 0.0,
                    row: 0,
                    col: 0
                },
                "{la:?}"
            );
        }
    }

    #[test]
    fn invalid_input_is_an_error() {
        let sys = Series { k1: 1.0, k2: 2.0 };
        let y0 = [1.0, 0.0, 0.0];
        let o = OdeOptions::default();
        let bad = |r: Result<OdeSolution, OdeError>| {
            assert!(matches!(r, Err(OdeError::InvalidInput { .. })), "{r:?}")
        };
        bad(integrate(&sys, &y0, 0.0, &Output::End, &o));
        bad(integrate(&sys, &y0, -1.0, &Output::End, &o));
        bad(integrate(&sys, &y0, f64::NAN, &Output::End, &o));
        bad(integrate(&sys, &y0, f64::INFINITY, &Output::End, &o));
        bad(integrate(
            &sys,
            &[1.0, f64::NAN, 0.0],
            1.0,
            &Output::End,
            &o,
        ));
        bad(integrate(&sys, &[1.0, 0.0], 1.0, &Output::End, &o));
        bad(integrate(
            &sys,
            &y0,
            1.0,
            &Output::End,
            &OdeOptions {
                rtol: 0.0,
                ..o.clone()
            },
        ));
        bad(integrate(
            &sys,
            &y0,
            1.0,
            &Output::End,
            &OdeOptions {
                atol: vec![1e-8; 2],
                ..o.clone()
            },
        ));
        bad(integrate(
            &sys,
            &y0,
            1.0,
            &Output::End,
            &OdeOptions {
                atol: vec![0.0],
                ..o.clone()
            },
        ));
        bad(integrate(
            &sys,
            &y0,
            1.0,
            &Output::End,
            &OdeOptions {
                first_step: Some(2.0),
                ..o.clone()
            },
        ));
        bad(integrate(
            &sys,
            &y0,
            1.0,
            &Output::Points(vec![0.5, 0.2]),
            &o,
        ));
        bad(integrate(
            &sys,
            &y0,
            1.0,
            &Output::Points(vec![0.5, 1.5]),
            &o,
        ));
        bad(integrate(&sys, &y0, 1.0, &Output::Points(vec![]), &o));
        struct Empty;
        impl OdeSystem for Empty {
            fn dim(&self) -> usize {
                0
            }
            fn rhs(&self, _x: f64, _y: &[f64], _d: &mut [f64]) {}
            fn jacobian(&self, _x: f64, _y: &[f64], _o: &mut Vec<(usize, usize, f64)>) {}
        }
        bad(integrate(&Empty, &[], 1.0, &Output::End, &o));
    }

    #[test]
    fn max_steps_is_an_error() {
        let opts = OdeOptions {
            max_steps: 5,
            ..OdeOptions::default()
        };
        let err = integrate(&Robertson, &[1.0, 0.0, 0.0], 40.0, &Output::End, &opts).unwrap_err();
        assert!(
            matches!(err, OdeError::MaxSteps { max_steps: 5, .. }),
            "{err}"
        );
    }

    #[test]
    fn first_step_is_honoured() {
        let sys = Series { k1: 1.0, k2: 2.0 };
        let opts = OdeOptions {
            first_step: Some(1e-9),
            ..tight(3)
        };
        let sol = integrate(&sys, &[1.0, 0.0, 0.0], 3.0, &Output::Steps, &opts).unwrap();
        assert!((sol.x[1] - 1e-9).abs() <= 1e-15, "x1 = {}", sol.x[1]);
        let exact = bateman(1.0, 2.0, 3.0);
        // Levenspiel ch. 8 closed form (from memory)
        assert!(rel(sol.y.last().unwrap()[1], exact[1]) <= 1e-7);
    }

    /// Chain A_0 → A_1 → … → A_{n−1} of first-order steps with k_i = 1 + i/10.
    struct Chain(usize);

    impl Chain {
        fn k(i: usize) -> f64 {
            1.0 + i as f64 / 10.0
        }
    }

    impl OdeSystem for Chain {
        fn dim(&self) -> usize {
            self.0
        }
        fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
            let n = self.0;
            for (i, di) in d.iter_mut().enumerate().take(n) {
                let out = if i + 1 < n { Self::k(i) * y[i] } else { 0.0 };
                let inp = if i > 0 {
                    Self::k(i - 1) * y[i - 1]
                } else {
                    0.0
                };
                *di = inp - out;
            }
        }
        fn jacobian(&self, _x: f64, _y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            let n = self.0;
            for i in 0..n - 1 {
                out.push((i, i, -Self::k(i)));
                out.push((i + 1, i, Self::k(i)));
            }
        }
    }

    #[test]
    fn sparse_and_dense_agree_on_long_chain() {
        let n = 80;
        let mut y0 = vec![0.0; n];
        y0[0] = 1.0;
        let base = OdeOptions {
            rtol: 1e-9,
            atol: vec![1e-14],
            ..OdeOptions::default()
        };
        let mut sols = Vec::new();
        for la in [
            LinearAlgebra::Dense,
            LinearAlgebra::Sparse,
            LinearAlgebra::Krylov,
            LinearAlgebra::Auto,
        ] {
            let opts = OdeOptions {
                linear_algebra: la,
                ..base.clone()
            };
            let start = std::time::Instant::now();
            let sol = integrate(&Chain(n), &y0, 20.0, &Output::End, &opts).unwrap();
            eprintln!("chain n={n} {la:?}: {:?} {:?}", start.elapsed(), sol.stats);
            sols.push(sol);
        }
        let y = &sols[1].y[0];
        // first two members: Bateman closed form (Levenspiel ch. 8, from memory)
        let exact = bateman(Chain::k(0), Chain::k(1), 20.0);
        assert!((y[0] - exact[0]).abs() <= 1e-12);
        assert!(rel(y[1], exact[1]) <= 1e-6);
        // the chain conserves the total amount
        assert!((y.iter().sum::<f64>() - 1.0).abs() <= 1e-9);
        for s in &sols[..] {
            for (i, (a, b)) in s.y[0].iter().zip(y).enumerate() {
                assert!((a - b).abs() <= 1e-8 * b.abs().max(1e-6), "i={i}");
            }
        }
    }

    /// A Jacobian whose pattern grows after x = 0 (entry (0,1) appears only once y1 > 0).
    struct Growing;

    impl OdeSystem for Growing {
        fn dim(&self) -> usize {
            2
        }
        fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
            d[0] = -y[0] + 0.1 * y[1];
            d[1] = y[0] - 0.1 * y[1];
        }
        fn jacobian(&self, _x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            out.extend([(0, 0, -1.0), (1, 0, 1.0)]);
            if y[1] > 0.0 {
                out.extend([(0, 1, 0.1), (1, 1, -0.1)]);
            }
        }
    }

    #[test]
    fn sparse_pattern_change_is_an_error() {
        let opts = OdeOptions {
            linear_algebra: LinearAlgebra::Sparse,
            ..OdeOptions::default()
        };
        let err = integrate(&Growing, &[1.0, 0.0], 10.0, &Output::End, &opts).unwrap_err();
        assert!(
            matches!(err, OdeError::SparsityChanged { row: 0, col: 1, .. }),
            "{err}"
        );
        // dense copes, and the total is conserved (the two rates cancel)
        let opts = OdeOptions {
            linear_algebra: LinearAlgebra::Dense,
            ..OdeOptions::default()
        };
        let sol = integrate(&Growing, &[1.0, 0.0], 10.0, &Output::End, &opts).unwrap();
        assert!((sol.y[0][0] + sol.y[0][1] - 1.0).abs() <= 1e-9);
    }
}
