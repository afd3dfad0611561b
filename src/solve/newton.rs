//! Damped Newton iteration for the CSTR steady state, with continuation in the volume.
//!
//! Unknowns F (outlet molar flows); residual G(F) = F_0 − F + V f(F), where f is the reactor's
//! right-hand side Σ_i ν_ij r_i(C(F)); Jacobian ∂G/∂F = −I + V ∂f/∂F from the analytic rate
//! gradients. Each step solves ∂G/∂F ΔF = −G by LU (nalgebra), keeps F ≥ 0 by a
//! fraction-to-the-boundary rule, and halves the step until ‖G‖ falls (Armijo backtracking;
//! Nocedal & Wright, Numerical Optimization, ch. 3 and 11, from memory). When Newton from the
//! feed fails, the volume is raised from a small fraction of V, each solution starting the next
//! (natural-parameter continuation, common practice).

use crate::reactor::Balance;
use nalgebra::{DMatrix, DVector};

/// What the iteration did.
#[derive(Debug, Clone, Default)]
pub struct NewtonStats {
    pub iterations: usize,
    pub continuation_stages: usize,
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

fn residual(b: &Balance, f0: &[f64], v: f64, f: &[f64], g: &mut [f64]) -> bool {
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

/// One Newton solve at fixed V from the start `f`. Returns the iterations used.
fn newton(
    b: &Balance,
    f0: &[f64],
    v: f64,
    f: &mut [f64],
    tol: f64,
) -> Result<usize, (NewtonError, usize)> {
    let n = f.len();
    let mut g = vec![0.0; n];
    if !residual(b, f0, v, f, &mut g) {
        return Err((NewtonError::NonFinite, 0));
    }
    let mut trip = Vec::new();
    for it in 1..=MAX_ITER {
        let gn = norm_inf(&g);
        if gn <= tol {
            return Ok(it - 1);
        }
        trip.clear();
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
        if jm.iter().any(|x| !x.is_finite()) {
            return Err((NewtonError::NonFinite, it));
        }
        let rhs = DVector::from_iterator(n, g.iter().map(|x| -x));
        let Some(step) = jm.lu().solve(&rhs) else {
            return Err((NewtonError::Singular { volume: v }, it));
        };
        // Fraction to the boundary: keep every positive flow positive.
        let mut lam: f64 = 1.0;
        for j in 0..n {
            if step[j] < 0.0 && f[j] > 0.0 {
                lam = lam.min(0.995 * f[j] / -step[j]);
            }
        }
        let phi0 = g.iter().map(|x| x * x).sum::<f64>();
        let mut trial = vec![0.0; n];
        let mut gt = vec![0.0; n];
        let mut accepted = false;
        while lam > 1e-10 {
            for j in 0..n {
                trial[j] = f[j] + lam * step[j];
                if f[j] <= 0.0 && trial[j] < 0.0 {
                    trial[j] = 0.0;
                }
            }
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

/// Solve F_0 − F + V f(F) = 0 for F, starting from the feed, with continuation in V when needed.
/// `tol` bounds ‖G‖∞ (mol/s).
pub fn solve_cstr(
    b: &Balance,
    f0: &[f64],
    volume: f64,
    tol: f64,
) -> Result<(Vec<f64>, NewtonStats), NewtonError> {
    let mut stats = NewtonStats::default();
    let mut f = f0.to_vec();
    match newton(b, f0, volume, &mut f, tol) {
        Ok(it) => {
            stats.iterations = it;
        }
        Err((e, it)) => {
            stats.iterations = it;
            if e == NewtonError::NonFinite {
                return Err(e);
            }
            // Continuation: s from 1e-4 up to 1, growing by 3x while Newton converges easily.
            f = f0.to_vec();
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
                let mut trial = f.clone();
                match newton(b, f0, volume * s, &mut trial, tol) {
                    Ok(it) => {
                        stats.iterations += it;
                        f = trial;
                        s_done = s;
                        if s_done >= 1.0 {
                            break;
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
                            let mut g = vec![0.0; f.len()];
                            residual(b, f0, volume * s, &trial, &mut g);
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
    }
    let mut g = vec![0.0; f.len()];
    residual(b, f0, volume, &f, &mut g);
    stats.residual = norm_inf(&g);
    Ok((f, stats))
}

/// dF/dV at a steady state: differentiating F_0 − F + V f(F) = 0 in V gives
/// (−I + V ∂f/∂F) dF/dV = −f(F) (implicit function theorem). None if the matrix is singular.
pub fn volume_sensitivity(b: &Balance, volume: f64, f: &[f64]) -> Option<Vec<f64>> {
    let n = f.len();
    let mut trip = Vec::new();
    b.jacobian(f, &mut trip);
    let mut jm = DMatrix::<f64>::zeros(n, n);
    for &(r, c, val) in &trip {
        if r < n && c < n {
            jm[(r, c)] += volume * val;
        }
    }
    for j in 0..n {
        jm[(j, j)] -= 1.0;
    }
    let mut rhs = vec![0.0; n];
    b.rhs(f, &mut rhs);
    let rhs = DVector::from_iterator(n, rhs.iter().map(|x| -x));
    let x = jm.lu().solve(&rhs)?;
    let out: Vec<f64> = x.iter().copied().collect();
    out.iter().all(|v| v.is_finite()).then_some(out)
}
