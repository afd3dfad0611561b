//! Weighted nonlinear least squares: a bounded Levenberg–Marquardt optimiser and a small
//! deterministic multistart around it.
//!
//! The problem is `min_θ F(θ) = Σ r_i(θ)²` with `lo ≤ θ ≤ hi`, where the residuals are already
//! weighted (`r = (model − measured)/σ`, see [`super::statistics`]). The caller supplies `r(θ)`
//! and its Jacobian `J_ij = ∂r_i/∂θ_j` through [`LeastSquares`].
//!
//! # Method
//! Levenberg (Q. Appl. Math. 2, 1944, 164–168) and Marquardt (J. SIAM 11, 1963, 431–441):
//! each iteration solves the damped, scaled linear
//! least-squares problem
//!
//! ```text
//!     min_p ‖r + J p‖² + λ ‖D p‖²
//! ```
//!
//! with Moré's diagonal scaling ("The Levenberg–Marquardt algorithm: implementation and
//! theory", in Numerical Analysis, ed. G. A. Watson, Springer, 1978, 105–116) `D = diag(d_j)`, `d_j` the running maximum over the
//! iterations of the Jacobian's column norms ‖J_·j‖ (so the method is invariant to the units
//! of θ). With `J̃ = J D⁻¹ = U Σ Vᵀ` (thin SVD) the step is `D p = −V diag(σ_k/(σ_k² + λ)) Uᵀ r`,
//! singular values below `ε·σ_max·max(N, P)` treated as zero (a rank-deficient J gives no step
//! along the directions it does not see). The damping λ follows the gain ratio
//! `ρ = (F(θ) − F(θ+p)) / (F(θ) − ‖r + J p‖²)` by the rule of Nielsen (1999; also Madsen,
//! Nielsen & Tingleff, "Methods for non-linear least squares problems", 2004, §3.2):
//! a step with ρ > 10⁻⁴ is accepted and λ ← λ·max(1/3, 1 − (2ρ − 1)³), ν ← 2; otherwise
//! λ ← λ·ν, ν ← 2ν. Start: λ₀ = 10⁻³·σ_max².
//!
//! Bounds (a projected Levenberg–Marquardt method, Kanzow, Yamashita & Fukushima, J. Comput.
//! Appl. Math. 172 (2004) 375–397, with the active set of Bertsekas's projected Newton method,
//! SIAM J. Control Optim. 20 (1982) 221–246): a parameter sitting on a bound whose gradient
//! component `g = Jᵀr` pushes it outward is held for the iteration; the step is solved in the
//! others and the trial point projected onto the box, `θ+ = clip(θ + p)`. The predicted
//! reduction is that of the projected step, so the gain ratio judges the step actually taken.
//!
//! # Stopping (after the tests of MINPACK's lmder, Moré, Garbow & Hillstrom, ANL-80-74, 1980)
//! - gtol: `max_j |g_j| / (‖J_·j‖ ‖r‖) ≤ gtol` over the free parameters (the cosine of the
//!   angle between r and each column: the projected gradient is zero to that tolerance);
//! - ftol: a step is accepted whose actual relative reduction of F is `≤ ftol` while the
//!   undamped (Gauss–Newton, λ = 0, projected) step promises no more than `ftol·F` either;
//! - xtol: a step is accepted while the undamped step is `‖D p_GN‖ ≤ xtol·(‖D θ‖ + xtol)`;
//! - rounding: the trial steps shrink below the rounding level of θ without any reduction of
//!   F (the tolerances asked for are tighter than the arithmetic allows): converged, so said.
//!
//! MINPACK measures xtol and ftol on the damped step; measuring them on the undamped one
//! means a step cut short by a large λ (after rejections or failed evaluations) is never taken
//! for convergence.
//!
//! A model evaluation that fails (an `Err`, or a non-finite residual) at a trial point rejects
//! the step (λ up), never gives a result; at the start point it is an error. A run that can
//! only go on where the model fails stops with `converged = false` and the model's message.

use crate::random::SplitMix64;
use nalgebra::{DMatrix, DVector};

/// What the optimiser calls: residuals r(θ) and their Jacobian J (rows = residuals).
pub trait LeastSquares {
    /// Number of residuals N (fixed for the problem).
    fn n_residuals(&self) -> usize;
    /// Residuals at θ and, when `jacobian` is true, the N×P Jacobian ∂r/∂θ.
    /// An `Err` is a failed model evaluation (for example a failed integration).
    /// [`levenberg_marquardt`] asks for the Jacobian at every point it evaluates, trial points
    /// included (most trial steps are accepted, and then no second solve is needed).
    fn evaluate(
        &mut self,
        theta: &[f64],
        jacobian: bool,
    ) -> Result<(Vec<f64>, Option<DMatrix<f64>>), String>;
}

/// Bounds in θ; `f64::NEG_INFINITY` / `f64::INFINITY` for none.
#[derive(Debug, Clone, PartialEq)]
pub struct Bounds {
    pub lo: Vec<f64>,
    pub hi: Vec<f64>,
}

impl Bounds {
    /// No bounds on `n` parameters.
    pub fn unbounded(n: usize) -> Self {
        Bounds {
            lo: vec![f64::NEG_INFINITY; n],
            hi: vec![f64::INFINITY; n],
        }
    }

    /// θ moved onto the box componentwise.
    pub fn clip(&self, theta: &[f64]) -> Vec<f64> {
        theta
            .iter()
            .zip(self.lo.iter().zip(&self.hi))
            .map(|(&t, (&lo, &hi))| t.max(lo).min(hi))
            .collect()
    }

    fn check(&self, n: usize) -> Result<(), String> {
        if self.lo.len() != n || self.hi.len() != n {
            return Err(format!(
                "bounds given for {} / {} parameters, expected {n}",
                self.lo.len(),
                self.hi.len()
            ));
        }
        for j in 0..n {
            let (lo, hi) = (self.lo[j], self.hi[j]);
            if lo.is_nan() || hi.is_nan() || !(lo < hi) {
                return Err(format!(
                    "parameter {}: lower bound {lo} is not below upper bound {hi}",
                    j + 1
                ));
            }
        }
        Ok(())
    }
}

/// Tolerances and the iteration limit (an iteration = one Jacobian).
#[derive(Debug, Clone, PartialEq)]
pub struct LmOptions {
    pub max_iterations: usize,
    pub xtol: f64,
    pub ftol: f64,
    pub gtol: f64,
}

impl Default for LmOptions {
    fn default() -> Self {
        LmOptions {
            max_iterations: 200,
            xtol: 1e-10,
            ftol: 1e-12,
            gtol: 1e-10,
        }
    }
}

/// The end point of one run of the optimiser.
#[derive(Debug, Clone)]
pub struct LmResult {
    /// θ at the end (the best point found).
    pub theta: Vec<f64>,
    /// r(θ).
    pub residuals: Vec<f64>,
    /// J(θ), N×P.
    pub jacobian: DMatrix<f64>,
    /// Σ r².
    pub ssr: f64,
    /// Iterations (Jacobians formed).
    pub iterations: usize,
    /// Calls of [`LeastSquares::evaluate`], failed ones included.
    pub evaluations: usize,
    /// A stopping test was met (false: iteration limit, or the model failed near θ).
    pub converged: bool,
    /// Which test stopped the run, in words.
    pub reason: String,
    /// θ_j on its lower or upper bound (within 1e-10 relative).
    pub at_bound: Vec<bool>,
}

/// Damping ratio below which a trial step is rejected.
const ACCEPT: f64 = 1e-4;

/// Evaluation at a point: residuals, Jacobian, F.
struct Point {
    theta: Vec<f64>,
    r: DVector<f64>,
    jac: DMatrix<f64>,
    f: f64,
}

fn evaluate_point(
    p: &mut dyn LeastSquares,
    theta: &[f64],
    evaluations: &mut usize,
) -> Result<Point, String> {
    *evaluations += 1;
    let n = p.n_residuals();
    let (r, jac) = p.evaluate(theta, true)?;
    if r.len() != n {
        return Err(format!(
            "the model gave {} residuals, expected {n}",
            r.len()
        ));
    }
    if let Some(k) = r.iter().position(|v| !v.is_finite()) {
        return Err(format!("residual {} is not finite ({})", k + 1, r[k]));
    }
    let jac = jac.ok_or_else(|| "the model gave no Jacobian".to_string())?;
    if jac.nrows() != n || jac.ncols() != theta.len() {
        return Err(format!(
            "the model's Jacobian is {}×{}, expected {n}×{}",
            jac.nrows(),
            jac.ncols(),
            theta.len()
        ));
    }
    if jac.iter().any(|v| !v.is_finite()) {
        return Err("the Jacobian has a non-finite entry".to_string());
    }
    let r = DVector::from_vec(r);
    let f = r.norm_squared();
    Ok(Point {
        theta: theta.to_vec(),
        r,
        jac,
        f,
    })
}

fn on_bound(theta: &[f64], b: &Bounds) -> Vec<bool> {
    theta
        .iter()
        .enumerate()
        .map(|(j, &t)| {
            let near = |x: f64| x.is_finite() && (t - x).abs() <= 1e-10 * x.abs().max(1.0);
            near(b.lo[j]) || near(b.hi[j])
        })
        .collect()
}

/// Bounded Levenberg–Marquardt from `theta0` (see the module documentation for the method).
///
/// Errors: inconsistent sizes or bounds, a start outside the bounds, a failed evaluation at the
/// start point. A run that stops on the iteration limit or on repeated failed evaluations is a
/// result with `converged = false` and the reason.
pub fn levenberg_marquardt(
    p: &mut dyn LeastSquares,
    theta0: &[f64],
    b: &Bounds,
    o: &LmOptions,
) -> Result<LmResult, String> {
    let np = theta0.len();
    if np == 0 {
        return Err("no parameters to estimate".to_string());
    }
    b.check(np)?;
    for (j, &t) in theta0.iter().enumerate() {
        if !t.is_finite() {
            return Err(format!("start value of parameter {} is not finite", j + 1));
        }
        if t < b.lo[j] || t > b.hi[j] {
            return Err(format!(
                "start value {t} of parameter {} is outside its bounds [{}, {}]",
                j + 1,
                b.lo[j],
                b.hi[j]
            ));
        }
    }
    for (name, v) in [("xtol", o.xtol), ("ftol", o.ftol), ("gtol", o.gtol)] {
        if !(v >= 0.0) || !v.is_finite() {
            return Err(format!("{name} must be a finite number ≥ 0, got {v}"));
        }
    }
    let n = p.n_residuals();
    let mut evaluations = 0usize;
    let mut cur = evaluate_point(p, theta0, &mut evaluations)
        .map_err(|e| format!("the model fails at the start point: {e}"))?;

    let mut d = vec![0.0f64; np];
    let mut lambda = f64::NAN;
    let mut nu = 2.0f64;
    let mut iterations = 0usize;
    let eps = f64::EPSILON;
    // The last failed evaluation of the run, for the reason of a run that does not converge.
    let mut failure_seen: Option<String> = None;

    let finish = |cur: Point, iterations, evaluations, converged, reason: String| LmResult {
        at_bound: on_bound(&cur.theta, b),
        theta: cur.theta,
        residuals: cur.r.iter().copied().collect(),
        jacobian: cur.jac,
        ssr: cur.f,
        iterations,
        evaluations,
        converged,
        reason,
    };

    // No step reduces F any more: at rounding level (converged), or because the model fails
    // at the trial points (not converged: the run stopped at the edge of where the model works).
    let stalled = |cur: Point, iterations, evaluations, failure: Option<String>| {
        let f = cur.f;
        match failure {
            Some(e) => finish(
                cur,
                iterations,
                evaluations,
                false,
                format!("stopped where the model fails at every longer trial step: {e}"),
            ),
            None => finish(
                cur,
                iterations,
                evaluations,
                true,
                format!("no further reduction of SSR = {f:.6e} possible at rounding level"),
            ),
        }
    };

    loop {
        iterations += 1;
        // Moré's scaling: running maximum of the column norms (1 for a column never seen).
        let col_norms: Vec<f64> = (0..np).map(|j| cur.jac.column(j).norm()).collect();
        for j in 0..np {
            d[j] = d[j].max(col_norms[j]);
        }
        let dj: Vec<f64> = d.iter().map(|&x| if x > 0.0 { x } else { 1.0 }).collect();

        if cur.f == 0.0 {
            return Ok(finish(
                cur,
                iterations,
                evaluations,
                true,
                "zero residual".to_string(),
            ));
        }
        let g = cur.jac.tr_mul(&cur.r);
        // Active set: held on a bound when the descent direction −g points out of the box.
        let free: Vec<usize> = (0..np)
            .filter(|&j| {
                let t = cur.theta[j];
                !((t <= b.lo[j] && g[j] > 0.0) || (t >= b.hi[j] && g[j] < 0.0))
            })
            .collect();
        // gtol: projected, scaled gradient.
        let rnorm = cur.f.sqrt();
        let gnorm = free
            .iter()
            .filter(|&&j| col_norms[j] > 0.0)
            .map(|&j| (g[j] / (col_norms[j] * rnorm)).abs())
            .fold(0.0, f64::max);
        if gnorm <= o.gtol {
            return Ok(finish(
                cur,
                iterations,
                evaluations,
                true,
                format!("gradient test: scaled projected gradient {gnorm:.3e} ≤ gtol"),
            ));
        }
        if iterations > o.max_iterations {
            let mut reason = format!("iteration limit ({}) reached", o.max_iterations);
            if let Some(e) = &failure_seen {
                reason.push_str(&format!(" (the model failed at some trial points: {e})"));
            }
            return Ok(finish(cur, iterations - 1, evaluations, false, reason));
        }

        // Scaled Jacobian of the free parameters and its SVD.
        let m = free.len();
        let mut js = DMatrix::<f64>::zeros(n.max(m), m);
        for (c, &j) in free.iter().enumerate() {
            for i in 0..n {
                js[(i, c)] = cur.jac[(i, j)] / dj[j];
            }
        }
        let svd = nalgebra::SVD::try_new(js, true, true, eps, 0)
            .ok_or_else(|| "the singular value decomposition of J did not converge".to_string())?;
        let (u, vt) = match (&svd.u, &svd.v_t) {
            (Some(u), Some(vt)) => (u, vt),
            _ => return Err("SVD without singular vectors".to_string()),
        };
        let sv = &svd.singular_values;
        let smax = sv.iter().copied().fold(0.0, f64::max);
        let cutoff = eps * smax * (n.max(np) as f64);
        let mut rr = DVector::<f64>::zeros(n.max(m));
        rr.rows_mut(0, n).copy_from(&cur.r);
        let utr = u.tr_mul(&rr);
        // The undamped (Gauss–Newton, λ = 0) step, projected: what the linearised model
        // promises at best. The xtol and ftol tests use it, so that a step cut short by a
        // large λ (after failed evaluations or rejections) is never taken for convergence.
        let (gn_size, gn_pred) = {
            let mut q = DVector::<f64>::zeros(m);
            for k in 0..sv.len() {
                if sv[k] > cutoff {
                    let c = utr[k] / sv[k];
                    for (jj, qj) in q.iter_mut().enumerate() {
                        *qj -= vt[(k, jj)] * c;
                    }
                }
            }
            let mut gn = cur.theta.clone();
            for (c, &j) in free.iter().enumerate() {
                gn[j] += q[c] / dj[j];
            }
            let gn = b.clip(&gn);
            let s = DVector::from_iterator(np, gn.iter().zip(&cur.theta).map(|(a, c)| a - c));
            let size = s
                .iter()
                .zip(&dj)
                .map(|(x, w)| (x * w) * (x * w))
                .sum::<f64>()
                .sqrt();
            let js = &cur.jac * &s;
            (size, -2.0 * cur.r.dot(&js) - js.norm_squared())
        };
        if lambda.is_nan() {
            lambda = 1e-3 * smax * smax;
            if !(lambda > 0.0) {
                lambda = 1e-3;
            }
        }

        // Inner loop: raise λ until a step is accepted.
        // A failed evaluation in this iteration: the step was cut by the model, not by the
        // problem, so a small step then says nothing about convergence.
        let mut last_failure: Option<String> = None;
        loop {
            let mut q = DVector::<f64>::zeros(m);
            for k in 0..sv.len() {
                if sv[k] > cutoff {
                    let c = sv[k] / (sv[k] * sv[k] + lambda) * utr[k];
                    for (jj, qj) in q.iter_mut().enumerate() {
                        *qj -= vt[(k, jj)] * c;
                    }
                }
            }
            let mut trial = cur.theta.clone();
            for (c, &j) in free.iter().enumerate() {
                trial[j] += q[c] / dj[j];
            }
            let trial = b.clip(&trial);
            let step: Vec<f64> = trial.iter().zip(&cur.theta).map(|(a, c)| a - c).collect();
            let dstep = step
                .iter()
                .zip(&dj)
                .map(|(s, w)| (s * w) * (s * w))
                .sum::<f64>()
                .sqrt();
            let dtheta = cur
                .theta
                .iter()
                .zip(&dj)
                .map(|(t, w)| (t * w) * (t * w))
                .sum::<f64>()
                .sqrt();
            // Rounding level: the step no longer changes θ meaningfully.
            let negligible = step
                .iter()
                .zip(&cur.theta)
                .all(|(s, t)| s.abs() <= 4.0 * eps * t.abs().max(f64::MIN_POSITIVE))
                || dstep <= 4.0 * eps * dtheta;
            if negligible {
                return Ok(stalled(cur, iterations, evaluations, last_failure));
            }
            // Predicted reduction of the projected step: F − ‖r + J s‖² = −2 rᵀJs − ‖Js‖².
            let s = DVector::from_vec(step.clone());
            let js_step = &cur.jac * &s;
            let pred = -2.0 * cur.r.dot(&js_step) - js_step.norm_squared();
            if !(pred > 0.0) {
                lambda *= nu;
                nu *= 2.0;
                continue;
            }
            match evaluate_point(p, &trial, &mut evaluations) {
                Err(e) => {
                    failure_seen = Some(e.clone());
                    last_failure = Some(e);
                    lambda *= nu;
                    nu *= 2.0;
                }
                Ok(next) => {
                    let actual = cur.f - next.f;
                    let rho = actual / pred;
                    if rho > ACCEPT {
                        lambda *= (1.0f64 / 3.0).max(1.0 - (2.0 * rho - 1.0).powi(3));
                        nu = 2.0;
                        let f_old = cur.f;
                        cur = next;
                        if actual / f_old <= o.ftol && gn_pred / f_old <= o.ftol && rho <= 2.0 {
                            return Ok(finish(
                                cur,
                                iterations,
                                evaluations,
                                true,
                                "relative reduction of SSR ≤ ftol".to_string(),
                            ));
                        }
                        if gn_size <= o.xtol * (dtheta + o.xtol) {
                            return Ok(finish(
                                cur,
                                iterations,
                                evaluations,
                                true,
                                "relative step ≤ xtol".to_string(),
                            ));
                        }
                        break;
                    }
                    lambda *= nu;
                    nu *= 2.0;
                }
            }
            if !lambda.is_finite() {
                return Ok(stalled(cur, iterations, evaluations, last_failure));
            }
        }
    }
}

/// How the multistart spreads its start points.
#[derive(Debug, Clone, PartialEq)]
pub struct MultistartOptions {
    /// Number of starts including θ0 itself (1 = no multistart).
    pub starts: usize,
    /// Half-width in θ of the box around θ0 for each parameter (see [`default_half_widths`]).
    pub half_width: Vec<f64>,
    /// Seed of the deterministic generator (the same seed gives the same starts).
    pub seed: u64,
}

/// One start of a multistart and where it ended.
#[derive(Debug, Clone)]
pub struct StartOutcome {
    pub theta0: Vec<f64>,
    /// The run, or why it could not start (the model failed at this start point).
    pub outcome: Result<LmResult, String>,
}

/// All the starts, the best one, and how they agree.
#[derive(Debug, Clone)]
pub struct MultistartResult {
    /// Every start in order; `starts[0]` is θ0.
    pub starts: Vec<StartOutcome>,
    /// Index of the kept run: the lowest SSR among the converged runs (among all finished
    /// runs if none converged).
    pub best: usize,
    /// Runs that converged.
    pub converged: usize,
    /// Distinct minima among the converged runs: SSR values more than 1e-6 relative apart
    /// (equal SSR at different θ — a valley of an unidentifiable combination — counts once).
    pub distinct_minima: usize,
    /// Converged runs that reached the best minimum (same SSR within 1e-6 relative).
    pub at_best: usize,
}

impl MultistartResult {
    /// The kept run.
    pub fn best(&self) -> &LmResult {
        match &self.starts[self.best].outcome {
            Ok(r) => r,
            Err(_) => unreachable!("the best start is always a finished run"),
        }
    }
}

/// Default half-widths in θ: one decade each way (ln 10) for a parameter on the log scale;
/// half its magnitude for a linear one (a quarter of the bounded range when it is zero, else 1).
pub fn default_half_widths(theta0: &[f64], log_scale: &[bool], b: &Bounds) -> Vec<f64> {
    theta0
        .iter()
        .enumerate()
        .map(|(j, &t)| {
            if log_scale.get(j).copied().unwrap_or(false) {
                std::f64::consts::LN_10
            } else if t != 0.0 {
                0.5 * t.abs()
            } else if b.lo[j].is_finite() && b.hi[j].is_finite() {
                0.25 * (b.hi[j] - b.lo[j])
            } else {
                1.0
            }
        })
        .collect()
}

/// The `count` start points after θ0: a Latin hypercube (McKay, Beckman & Conover,
/// Technometrics 21, 1979) in the box θ0 ± half_width, each coordinate in its own stratum,
/// then clipped to the bounds.
pub fn start_points(
    theta0: &[f64],
    half_width: &[f64],
    b: &Bounds,
    count: usize,
    seed: u64,
) -> Vec<Vec<f64>> {
    let np = theta0.len();
    let mut rng = SplitMix64(seed);
    let mut points = vec![vec![0.0; np]; count];
    for j in 0..np {
        // Fisher–Yates shuffle of the strata for this coordinate.
        let mut strata: Vec<usize> = (0..count).collect();
        for i in (1..count).rev() {
            let k = (rng.next_u64() % (i as u64 + 1)) as usize;
            strata.swap(i, k);
        }
        for (i, point) in points.iter_mut().enumerate() {
            let u = (strata[i] as f64 + rng.unit()) / count as f64;
            point[j] = theta0[j] + half_width[j] * (2.0 * u - 1.0);
        }
    }
    points.into_iter().map(|x| b.clip(&x)).collect()
}

fn same_minimum(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-6 * a.abs().max(b.abs()) + 1e-14
}

/// Multistart: the first start θ0, then `starts − 1` Latin-hypercube points (seeded) in the box
/// θ0 ± half_width clipped to the bounds, each run by [`levenberg_marquardt`]; the lowest SSR
/// kept, every run reported.
///
/// Errors: those of [`levenberg_marquardt`] at θ0 (a model failing at the user's own start is
/// an error); a later start where the model fails is recorded as a failed start.
pub fn multistart(
    p: &mut dyn LeastSquares,
    theta0: &[f64],
    b: &Bounds,
    o: &LmOptions,
    m: &MultistartOptions,
) -> Result<MultistartResult, String> {
    if m.starts == 0 {
        return Err("the number of starts must be at least 1".to_string());
    }
    if m.half_width.len() != theta0.len() {
        return Err(format!(
            "{} half-widths given for {} parameters",
            m.half_width.len(),
            theta0.len()
        ));
    }
    if let Some(j) = m
        .half_width
        .iter()
        .position(|w| !(w.is_finite() && *w >= 0.0))
    {
        return Err(format!(
            "half-width of parameter {} must be finite and ≥ 0",
            j + 1
        ));
    }
    let first = levenberg_marquardt(p, theta0, b, o)?;
    multistart_after(p, first, theta0, b, o, m)
}

/// The multistart when the descent from θ0 has already been made (`first`, its result): the
/// other `m.starts − 1` starts, and the best of all.
pub fn multistart_after(
    p: &mut dyn LeastSquares,
    first: LmResult,
    theta0: &[f64],
    b: &Bounds,
    o: &LmOptions,
    m: &MultistartOptions,
) -> Result<MultistartResult, String> {
    if m.starts == 0 {
        return Err("the number of starts must be at least 1".to_string());
    }
    let mut starts = vec![StartOutcome {
        theta0: theta0.to_vec(),
        outcome: Ok(first),
    }];
    for x0 in start_points(theta0, &m.half_width, b, m.starts - 1, m.seed) {
        let outcome = levenberg_marquardt(p, &x0, b, o);
        starts.push(StartOutcome {
            theta0: x0,
            outcome,
        });
    }
    let finished: Vec<(usize, &LmResult)> = starts
        .iter()
        .enumerate()
        .filter_map(|(i, s)| s.outcome.as_ref().ok().map(|r| (i, r)))
        .collect();
    let lowest = |pool: &mut dyn Iterator<Item = &(usize, &LmResult)>| {
        pool.min_by(|a, b| a.1.ssr.total_cmp(&b.1.ssr)).map(|x| x.0)
    };
    let best = lowest(&mut finished.iter().filter(|(_, r)| r.converged))
        .or_else(|| lowest(&mut finished.iter()))
        .unwrap_or(0);
    let mut ssrs: Vec<f64> = finished
        .iter()
        .filter(|(_, r)| r.converged)
        .map(|(_, r)| r.ssr)
        .collect();
    ssrs.sort_by(f64::total_cmp);
    let converged = ssrs.len();
    let mut distinct_minima = 0;
    let mut last: Option<f64> = None;
    for &s in &ssrs {
        if last.is_none_or(|l| !same_minimum(l, s)) {
            distinct_minima += 1;
            last = Some(s);
        }
    }
    let best_ssr = match &starts[best].outcome {
        Ok(r) => r.ssr,
        Err(_) => f64::NAN,
    };
    let at_best = ssrs.iter().filter(|&&s| same_minimum(s, best_ssr)).count();
    Ok(MultistartResult {
        starts,
        best,
        converged,
        distinct_minima,
        at_best,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// r = [θ₁ − 1, 10(θ₂ − θ₁²)]: Rosenbrock's function as least squares, minimum at (1, 1)
    /// with F = 0 (Rosenbrock, Comput. J. 3, 1960; common practice as a test problem).
    struct Rosenbrock;
    impl LeastSquares for Rosenbrock {
        fn n_residuals(&self) -> usize {
            2
        }
        fn evaluate(
            &mut self,
            t: &[f64],
            jac: bool,
        ) -> Result<(Vec<f64>, Option<DMatrix<f64>>), String> {
            let r = vec![t[0] - 1.0, 10.0 * (t[1] - t[0] * t[0])];
            let j = jac.then(|| DMatrix::from_row_slice(2, 2, &[1.0, 0.0, -20.0 * t[0], 10.0]));
            Ok((r, j))
        }
    }

    #[test]
    fn rosenbrock_reaches_its_minimum() {
        // Minimum (1, 1) of Rosenbrock's function (closed form).
        let r = levenberg_marquardt(
            &mut Rosenbrock,
            &[-1.2, 1.0],
            &Bounds::unbounded(2),
            &LmOptions::default(),
        )
        .unwrap();
        assert!(r.converged, "{}", r.reason);
        assert!((r.theta[0] - 1.0).abs() < 1e-8 && (r.theta[1] - 1.0).abs() < 1e-8);
        assert_eq!(r.at_bound, vec![false, false]);
    }

    /// Rosenbrock again, but the model refuses θ₁ > 0.5: every trial beyond it must be
    /// rejected, and the run ends at the best point it could reach, never beyond.
    struct Fragile {
        inner: Rosenbrock,
        failures: usize,
    }
    impl LeastSquares for Fragile {
        fn n_residuals(&self) -> usize {
            2
        }
        fn evaluate(
            &mut self,
            t: &[f64],
            jac: bool,
        ) -> Result<(Vec<f64>, Option<DMatrix<f64>>), String> {
            if t[0] > 0.5 {
                self.failures += 1;
                return Err("integration failed".to_string());
            }
            self.inner.evaluate(t, jac)
        }
    }

    #[test]
    fn failed_evaluations_reject_the_step() {
        let mut p = Fragile {
            inner: Rosenbrock,
            failures: 0,
        };
        let r = levenberg_marquardt(
            &mut p,
            &[-1.2, 1.0],
            &Bounds::unbounded(2),
            &LmOptions::default(),
        )
        .unwrap();
        assert!(
            r.theta[0] <= 0.5,
            "a failed point was returned: {:?}",
            r.theta
        );
        assert!(p.failures > 0, "the test never reached the failing region");
        // Stopped by the model's failures, not at a minimum: not converged, and said why.
        assert!(!r.converged, "{}", r.reason);
        assert!(r.reason.contains("integration failed"), "{}", r.reason);
        // The returned residuals are the model's own at the returned θ.
        let (rr, _) = Rosenbrock.evaluate(&r.theta, false).unwrap();
        assert_eq!(rr, r.residuals);
        // Failing at the start point is an error.
        assert!(
            levenberg_marquardt(
                &mut p,
                &[0.9, 1.0],
                &Bounds::unbounded(2),
                &LmOptions::default()
            )
            .is_err()
        );
    }

    #[test]
    fn multistart_records_failed_starts_and_keeps_the_rest() {
        // Starts spread over θ₁ ∈ [−2, 2]: those beyond 0.5 fail where the model fails and are
        // recorded as failed; the kept run is a finished one in the region where the model works.
        let mut p = Fragile {
            inner: Rosenbrock,
            failures: 0,
        };
        let o = MultistartOptions {
            starts: 9,
            half_width: vec![2.0, 0.5],
            seed: 3,
        };
        let b = Bounds::unbounded(2);
        let ms = multistart(&mut p, &[0.0, 0.0], &b, &LmOptions::default(), &o).unwrap();
        assert_eq!(ms.starts.len(), 9);
        let failed = ms.starts.iter().filter(|s| s.outcome.is_err()).count();
        assert!(failed >= 1, "no start fell where the model fails");
        assert!(ms.best().theta[0] <= 0.5);
        assert!(ms.starts[ms.best].outcome.is_ok());
        // θ0 itself failing is an error, not a silent multistart from other points.
        assert!(multistart(&mut p, &[0.9, 0.0], &b, &LmOptions::default(), &o).is_err());
    }

    #[test]
    fn bounds_are_respected_and_reported() {
        // With θ₁ ≤ 0.5 the constrained minimum of Rosenbrock's function is at θ₁ = 0.5,
        // θ₂ = 0.25 (the second residual vanishes; the first is smallest at the bound).
        let b = Bounds {
            lo: vec![f64::NEG_INFINITY, f64::NEG_INFINITY],
            hi: vec![0.5, f64::INFINITY],
        };
        let r =
            levenberg_marquardt(&mut Rosenbrock, &[-1.2, 1.0], &b, &LmOptions::default()).unwrap();
        assert!(r.converged, "{}", r.reason);
        assert_eq!(r.at_bound, vec![true, false]);
        assert!((r.theta[0] - 0.5).abs() < 1e-12 && (r.theta[1] - 0.25).abs() < 1e-8);
        // A start outside the bounds is refused.
        assert!(
            levenberg_marquardt(&mut Rosenbrock, &[0.9, 1.0], &b, &LmOptions::default()).is_err()
        );
    }

    #[test]
    fn start_points_are_deterministic_stratified_and_clipped() {
        let b = Bounds {
            lo: vec![-1.0, 0.0],
            hi: vec![1.0, 10.0],
        };
        let a = start_points(&[0.0, 9.0], &[1.0, 4.0], &b, 8, 7);
        assert_eq!(a, start_points(&[0.0, 9.0], &[1.0, 4.0], &b, 8, 7));
        assert_ne!(a, start_points(&[0.0, 9.0], &[1.0, 4.0], &b, 8, 8));
        // Latin hypercube: one point in each eighth of [−1, 1] for the first coordinate.
        let mut strata: Vec<usize> = a.iter().map(|x| ((x[0] + 1.0) / 0.25) as usize).collect();
        strata.sort();
        assert_eq!(strata, (0..8).collect::<Vec<_>>());
        assert!(a.iter().all(|x| x[1] >= 5.0 && x[1] <= 10.0));
    }
}
