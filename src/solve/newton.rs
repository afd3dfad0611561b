//! Damped Newton iteration for the CSTR steady state, with pseudo-transient continuation and
//! continuation in the volume as fallbacks.
//!
//! Residual G(F) = F_0 − F + V f(F), where f is the reactor's right-hand side
//! Σ_i ν_ij r_i(C(F)); ∂G/∂F = −I + V ∂f/∂F from the analytic rate gradients.
//!
//! **Unknowns: the extents.** The iteration moves the outlet along the reactions only,
//! F = F_0 + Σ_i ν_i ξ_i (ξ_i in mol/s, scaled by the feed), so every iterate closes the element
//! and stoichiometric balances exactly, however large V k is: with V k/v0 = 1e300 the
//! outlet of A → B is F_A = F_A0/(1 + kτ) ~ 1e-300 mol/s, which no additive update of F_A and
//! F_B separately can reach without losing F_B to cancellation. Each step solves the
//! least-squares problem (−I + V ∂f/∂F) N^T Δξ = −G by SVD with the columns scaled to unit
//! length (dependent reactions give a minimum-norm step), keeps F ≥ 0 by a
//! fraction-to-the-boundary rule, and halves the step until ‖G‖ falls (Armijo backtracking;
//! Nocedal & Wright, Numerical Optimization, ch. 3 and 11, from memory). It stops when ‖G‖∞ ≤ tol
//! or when the full step changes no flow by more than tol + 1e-12 |F_j| (the step is the
//! distance to the solution to first order).
//!
//! When Newton from the feed fails, the transient CSTR is integrated from the feed towards its
//! steady state with the BDF solver (pseudo-transient continuation: dF/dθ = G(F), θ in
//! residence times for a liquid; Kelley & Keyes, SIAM J. Numer. Anal. 35, 1998, from memory)
//! and Newton is restarted from where it ends; when that fails too, the volume is raised from
//! a small fraction of V, each solution starting the next (natural-parameter continuation,
//! common practice).

use super::ode::{self, LinearAlgebra, OdeOptions, OdeSystem, Output};
use crate::model::Network;
use crate::reactor::Balance;
use nalgebra::{DMatrix, DVector};

/// What the iteration did.
#[derive(Debug, Clone, Default)]
pub struct NewtonStats {
    pub iterations: usize,
    pub continuation_stages: usize,
    /// Pseudo-transient continuation used (the BDF integration of the transient CSTR).
    pub pseudo_transient: bool,
    /// ‖G‖∞ at the solution, mol/s.
    pub residual: f64,
}

#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum NewtonError {
    #[error(
        "the rates are not finite at the trial flows (species or reaction rates overflow); check units and rate constants"
    )]
    NonFinite,
    #[error(
        "the Newton iteration for the CSTR steady state did not converge (‖G‖∞ = {residual:.3e} mol/s at V = {volume:.6e} m3 after {iterations} iterations and {stages} continuation stages); try a different volume, check the rate constants' units, or look for multiple steady states"
    )]
    NoConvergence {
        residual: f64,
        volume: f64,
        iterations: usize,
        stages: usize,
    },
    #[error(
        "the steady-state Jacobian is singular at V = {volume:.6e} m3 (a turning point or an unreactive species' balance); try a slightly different volume"
    )]
    Singular { volume: f64 },
}

const MAX_ITER: usize = 80;
const MAX_STAGES: usize = 200;

/// One CSTR's steady-state equations in extent form: the feed, the balance and the reactions'
/// net coefficients ν_i (columns of N^T).
pub struct Extents<'a> {
    pub balance: &'a Balance,
    pub feed: &'a [f64],
    nu: Vec<Vec<(usize, f64)>>,
}

impl<'a> Extents<'a> {
    pub fn new(net: &'a Network, balance: &'a Balance) -> Extents<'a> {
        Extents {
            balance,
            feed: &net.feed.amounts,
            nu: net.reactions.iter().map(|r| r.net.clone()).collect(),
        }
    }

    /// Number of reactions (unknowns).
    pub fn len(&self) -> usize {
        self.nu.len()
    }

    pub fn is_empty(&self) -> bool {
        self.nu.is_empty()
    }

    /// F = F_0 + N^T ξ.
    pub fn flows(&self, xi: &[f64], f: &mut [f64]) {
        f.copy_from_slice(self.feed);
        for (i, nu) in self.nu.iter().enumerate() {
            for &(j, v) in nu {
                f[j] += v * xi[i];
            }
        }
    }

    /// N^T d for an extent change d.
    fn flow_change(&self, d: &[f64], out: &mut [f64]) {
        out.iter_mut().for_each(|x| *x = 0.0);
        for (i, nu) in self.nu.iter().enumerate() {
            for &(j, v) in nu {
                out[j] += v * d[i];
            }
        }
    }

    /// Extents that give flows F (least squares in N^T ξ = F − F_0; exact when F was reached
    /// by the reactions).
    pub fn extents_of(&self, f: &[f64]) -> Vec<f64> {
        let n = f.len();
        let r = self.nu.len();
        let mut m = DMatrix::<f64>::zeros(n, r);
        for (i, nu) in self.nu.iter().enumerate() {
            for &(j, v) in nu {
                m[(j, i)] = v;
            }
        }
        let rhs = DVector::from_iterator(n, (0..n).map(|j| f[j] - self.feed[j]));
        let svd = m.svd(true, true);
        let eps = 1e-12 * svd.singular_values.max();
        match svd.solve(&rhs, eps) {
            Ok(x) if x.iter().all(|v| v.is_finite()) => x.iter().copied().collect(),
            _ => vec![0.0; r],
        }
    }
}

/// G = F_0 − F + V f(F); false when not finite.
pub fn residual(b: &Balance, f0: &[f64], v: f64, f: &[f64], g: &mut [f64]) -> bool {
    let mut rhs = vec![0.0; f.len()];
    b.rhs(f, &mut rhs);
    for j in 0..f.len() {
        g[j] = f0[j] - f[j] + v * rhs[j];
    }
    g.iter().all(|x| x.is_finite())
}

fn norm_inf(x: &[f64]) -> f64 {
    x.iter().fold(0.0, |m, v| m.max(v.abs()))
}

/// ∂G/∂F = −I + V ∂f/∂F at F, dense.
pub fn residual_jacobian(b: &Balance, v: f64, f: &[f64]) -> DMatrix<f64> {
    let n = f.len();
    let mut trip = Vec::new();
    b.jacobian(f, &mut trip);
    let mut jm = DMatrix::<f64>::zeros(n, n);
    for &(r, c, val) in &trip {
        if r < n && c < n {
            jm[(r, c)] += v * val;
        }
    }
    for j in 0..n {
        jm[(j, j)] -= 1.0;
    }
    jm
}

/// The Newton step in the extents at flows F with residual G: the least-squares solution of
/// (−I + V ∂f/∂F) N^T Δξ = −G, columns scaled to unit length, by SVD.
fn newton_step(e: &Extents, v: f64, f: &[f64], g: &[f64]) -> Result<Vec<f64>, NewtonError> {
    let b = e.balance;
    let n = f.len();
    let r = e.len();
    let jm = residual_jacobian(b, v, f);
    if jm.iter().any(|x| !x.is_finite()) {
        return Err(NewtonError::NonFinite);
    }
    // A = (−I + V ∂f/∂F) N^T, columns scaled to unit length.
    let mut a = DMatrix::<f64>::zeros(n, r);
    for (i, nu) in e.nu.iter().enumerate() {
        for &(j, val) in nu {
            for row in 0..n {
                a[(row, i)] += jm[(row, j)] * val;
            }
        }
    }
    let mut colscale = vec![1.0; r];
    for (i, scale) in colscale.iter_mut().enumerate() {
        let norm = a.column(i).norm();
        if norm > 0.0 && norm.is_finite() {
            *scale = 1.0 / norm;
            a.column_mut(i).scale_mut(*scale);
        }
    }
    let rhs = DVector::from_iterator(n, g.iter().map(|x| -x));
    let svd = a.svd(true, true);
    let smax = svd.singular_values.max();
    let Ok(y) = svd.solve(&rhs, 1e-12 * smax) else {
        return Err(NewtonError::Singular { volume: v });
    };
    let step: Vec<f64> = (0..r).map(|i| y[i] * colscale[i]).collect();
    if step.iter().any(|x| !x.is_finite()) {
        return Err(NewtonError::Singular { volume: v });
    }
    Ok(step)
}

/// The largest flow change |ΔF_j| of one more Newton step at extents ξ (mol/s): the distance to
/// the exact steady state, to first order.
pub fn step_size(e: &Extents, v: f64, xi: &[f64]) -> f64 {
    let mut f = vec![0.0; e.feed.len()];
    e.flows(xi, &mut f);
    let mut g = vec![0.0; f.len()];
    if !residual(e.balance, e.feed, v, &f, &mut g) {
        return f64::NAN;
    }
    match newton_step(e, v, &f, &g) {
        Ok(d) => {
            let mut df = vec![0.0; f.len()];
            e.flow_change(&d, &mut df);
            norm_inf(&df)
        }
        Err(_) => f64::NAN,
    }
}

/// One Newton solve at fixed V from the extents `xi`. Returns the iterations used.
pub fn newton(
    e: &Extents,
    v: f64,
    xi: &mut [f64],
    tol: f64,
) -> Result<usize, (NewtonError, usize)> {
    let b = e.balance;
    let f0 = e.feed;
    let n = f0.len();
    let r = e.len();
    let mut f = vec![0.0; n];
    e.flows(xi, &mut f);
    let mut g = vec![0.0; n];
    if !residual(b, f0, v, &f, &mut g) {
        return Err((NewtonError::NonFinite, 0));
    }
    let mut df = vec![0.0; n];
    let mut trial_xi = vec![0.0; r];
    let mut trial = vec![0.0; n];
    let mut gt = vec![0.0; n];
    for it in 1..=MAX_ITER {
        let gn = norm_inf(&g);
        if gn <= tol {
            return Ok(it - 1);
        }
        let step = match newton_step(e, v, &f, &g) {
            Ok(d) => d,
            Err(err) => return Err((err, it)),
        };
        e.flow_change(&step, &mut df);
        // Converged on the step: the full Newton step estimates the distance to the solution,
        // so |ΔF_j| ≤ tol + 1e-12 |F_j| for every species means F is the solution to within
        // tol. This matters where the residual cannot fall below tol in floating point (V k ~
        // 1e300: F_A0 − F_A rounds to F_A0).
        if (0..n).all(|j| df[j].abs() <= tol + 1e-12 * f[j].abs()) {
            for i in 0..r {
                trial_xi[i] = xi[i] + step[i];
            }
            e.flows(&trial_xi, &mut trial);
            if trial.iter().all(|x| *x >= 0.0) {
                xi.copy_from_slice(&trial_xi);
            }
            return Ok(it);
        }
        // Fraction to the boundary: keep every positive flow positive.
        let mut lam: f64 = 1.0;
        for j in 0..n {
            if df[j] < 0.0 && f[j] > 0.0 {
                lam = lam.min(0.995 * f[j] / -df[j]);
            }
        }
        let phi0 = g.iter().map(|x| x * x).sum::<f64>();
        let mut accepted = false;
        while lam > 1e-10 {
            for i in 0..r {
                trial_xi[i] = xi[i] + lam * step[i];
            }
            e.flows(&trial_xi, &mut trial);
            if residual(b, f0, v, &trial, &mut gt) {
                let phi = gt.iter().map(|x| x * x).sum::<f64>();
                if phi <= (1.0 - 1e-4 * lam) * phi0 || norm_inf(&gt) <= tol {
                    accepted = true;
                    break;
                }
            }
            lam *= 0.5;
        }
        if !accepted {
            return Err((
                NewtonError::NoConvergence {
                    residual: gn,
                    volume: v,
                    iterations: it,
                    stages: 0,
                },
                it,
            ));
        }
        xi.copy_from_slice(&trial_xi);
        f.copy_from_slice(&trial);
        g.copy_from_slice(&gt);
    }
    Err((
        NewtonError::NoConvergence {
            residual: norm_inf(&g),
            volume: v,
            iterations: MAX_ITER,
            stages: 0,
        },
        MAX_ITER,
    ))
}

/// The transient CSTR in pseudo-time: dF/dθ = G(F) = F_0 − F + V f(F). For a liquid θ = t v0/V
/// (residence times); its steady states are those of the CSTR and, started from the feed, it
/// runs to the state a reactor filled with feed reaches.
struct Transient<'a> {
    b: &'a Balance,
    f0: &'a [f64],
    v: f64,
}

impl OdeSystem for Transient<'_> {
    fn dim(&self) -> usize {
        self.f0.len()
    }
    fn rhs(&self, _x: f64, y: &[f64], d: &mut [f64]) {
        // A non-finite value is left for the integrator, which fails with its own message.
        let _ = residual(self.b, self.f0, self.v, y, d);
    }
    fn jacobian(&self, _x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        let n = y.len();
        let start = out.len();
        self.b.jacobian(y, out);
        for t in &mut out[start..] {
            t.2 *= self.v;
        }
        for j in 0..n {
            out.push((j, j, -1.0));
        }
    }
}

/// Pseudo-transient continuation: integrate the transient CSTR from the feed over up to 1e8
/// residence times and return the state reached (None when the integration fails).
fn pseudo_transient(b: &Balance, f0: &[f64], v: f64, tol: f64) -> Option<Vec<f64>> {
    let sys = Transient { b, f0, v };
    let opts = OdeOptions {
        rtol: 1e-8,
        atol: vec![tol.max(1e-300)],
        max_steps: 100_000,
        first_step: None,
        linear_algebra: LinearAlgebra::Auto,
    };
    for theta in [1e3, 1e8] {
        if let Ok(sol) = ode::integrate(&sys, f0, theta, &Output::End, &opts) {
            let y = sol.y.last()?.clone();
            let mut g = vec![0.0; y.len()];
            if residual(b, f0, v, &y, &mut g) && norm_inf(&g) <= 1e3 * tol.max(1e-8 * norm_inf(f0))
            {
                return Some(y);
            }
        }
    }
    None
}

/// Solve F_0 − F + V f(F) = 0 for F: Newton from the feed, then pseudo-transient continuation,
/// then continuation in V. `tol` bounds ‖G‖∞ (mol/s).
pub fn solve_cstr(
    net: &Network,
    b: &Balance,
    volume: f64,
    tol: f64,
) -> Result<(Vec<f64>, NewtonStats), NewtonError> {
    let e = Extents::new(net, b);
    solve_extents(&e, volume, tol)
}

/// [`solve_cstr`] on equations already set up.
pub fn solve_extents(
    e: &Extents,
    volume: f64,
    tol: f64,
) -> Result<(Vec<f64>, NewtonStats), NewtonError> {
    let b = e.balance;
    let f0 = e.feed;
    let mut stats = NewtonStats::default();
    let r = e.len();
    let mut xi = vec![0.0; r];
    let first = newton(e, volume, &mut xi, tol);
    let done = match first {
        Ok(it) => {
            stats.iterations = it;
            true
        }
        Err((NewtonError::NonFinite, _)) => return Err(NewtonError::NonFinite),
        Err((_, it)) => {
            stats.iterations = it;
            false
        }
    };
    if !done {
        // Pseudo-transient continuation from the feed, then Newton from where it ends.
        let mut solved = false;
        if let Some(y) = pseudo_transient(b, f0, volume, tol) {
            stats.pseudo_transient = true;
            let mut trial = e.extents_of(&y);
            if let Ok(it) = newton(e, volume, &mut trial, tol) {
                stats.iterations += it;
                xi = trial;
                solved = true;
            }
        }
        if !solved {
            xi = continuation(e, volume, tol, &mut stats)?;
        }
    }
    let mut f = vec![0.0; f0.len()];
    e.flows(&xi, &mut f);
    let mut g = vec![0.0; f.len()];
    residual(b, f0, volume, &f, &mut g);
    stats.residual = norm_inf(&g);
    Ok((f, stats))
}

/// Natural-parameter continuation in V: s from 1e-4 up to 1, growing by 3x while Newton
/// converges easily.
fn continuation(
    e: &Extents,
    volume: f64,
    tol: f64,
    stats: &mut NewtonStats,
) -> Result<Vec<f64>, NewtonError> {
    let mut xi = vec![0.0; e.len()];
    let mut s_done = 0.0;
    let mut ds: f64 = 1e-4;
    loop {
        if stats.continuation_stages >= MAX_STAGES {
            return Err(NewtonError::NoConvergence {
                residual: f64::NAN,
                volume: volume * s_done,
                iterations: stats.iterations,
                stages: stats.continuation_stages,
            });
        }
        stats.continuation_stages += 1;
        let s = (s_done + ds).min(1.0);
        let mut trial = xi.clone();
        match newton(e, volume * s, &mut trial, tol) {
            Ok(it) => {
                stats.iterations += it;
                xi = trial;
                s_done = s;
                if s_done >= 1.0 {
                    return Ok(xi);
                }
                if it < 6 {
                    ds *= 3.0;
                }
            }
            Err((NewtonError::NonFinite, _)) => return Err(NewtonError::NonFinite),
            Err((_, it)) => {
                stats.iterations += it;
                ds *= 0.25;
                if ds < 1e-12 {
                    let mut f = vec![0.0; e.feed.len()];
                    e.flows(&trial, &mut f);
                    let mut g = vec![0.0; f.len()];
                    residual(e.balance, e.feed, volume * s, &f, &mut g);
                    return Err(NewtonError::NoConvergence {
                        residual: norm_inf(&g),
                        volume: volume * s,
                        iterations: stats.iterations,
                        stages: stats.continuation_stages,
                    });
                }
            }
        }
    }
}

/// dF/dV at a steady state: differentiating F_0 − F + V f(F) = 0 in V gives
/// (−I + V ∂f/∂F) dF/dV = −f(F) (implicit function theorem). None if the matrix is singular.
pub fn volume_sensitivity(b: &Balance, volume: f64, f: &[f64]) -> Option<Vec<f64>> {
    let n = f.len();
    let jm = residual_jacobian(b, volume, f);
    let mut rhs = vec![0.0; n];
    b.rhs(f, &mut rhs);
    let rhs = DVector::from_iterator(n, rhs.iter().map(|x| -x));
    let x = jm.lu().solve(&rhs)?;
    let out: Vec<f64> = x.iter().copied().collect();
    out.iter().all(|v| v.is_finite()).then_some(out)
}
