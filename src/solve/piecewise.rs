//! Integration across the times where the right-hand side has a kink or a jump (a semibatch's
//! dosing or withdrawal starting, stopping or changing slope): the interval is cut at those
//! breakpoints and each piece integrated on its own, the integrator stopping exactly at the
//! end of each (BDF's error estimate assumes a smooth right-hand side within a step; stepping
//! over a jump costs accuracy or many rejected steps). Inside a piece the right-hand side is
//! evaluated strictly within it, so a rate that jumps at the piece's ends is taken from the
//! piece's own side.

use super::ode::{self, Extreme, Functional, OdeError, OdeOptions, OdeSolution, OdeSystem, Output};

/// The system on piece [a, b] of the reactor coordinate, seen from a: x = 0 is the reactor's
/// a, and x is kept strictly inside (a, b) by a relative 1e-12 of the piece at its ends.
struct Piece<'a> {
    sys: &'a dyn OdeSystem,
    a: f64,
    b: f64,
}

impl Piece<'_> {
    #[inline]
    fn at(&self, x: f64) -> f64 {
        let margin = 1e-12 * (self.b - self.a);
        (self.a + x).clamp(self.a + margin, self.b - margin)
    }
}

impl OdeSystem for Piece<'_> {
    fn dim(&self) -> usize {
        self.sys.dim()
    }
    fn rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]) {
        self.sys.rhs(self.at(x), y, dydx)
    }
    fn jacobian(&self, x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        self.sys.jacobian(self.at(x), y, out)
    }
}

/// The error of a piece placed on the reactor coordinate (the piece starts at `by`).
fn shifted(mut e: OdeError, by: f64) -> OdeError {
    match &mut e {
        OdeError::NonFiniteRhs { x, .. }
        | OdeError::NonFiniteJacobian { x, .. }
        | OdeError::SparsityChanged { x, .. }
        | OdeError::NonFiniteRoot { x }
        | OdeError::NonFiniteState { x, .. }
        | OdeError::StepSizeTooSmall { x }
        | OdeError::MaxSteps { x, .. }
        | OdeError::ConvergenceFailure { x, .. }
        | OdeError::Solver { x, .. } => *x += by,
        OdeError::InvalidInput { .. } | OdeError::JacobianIndexOutOfRange { .. } => {}
    }
    e
}

/// [`ode::integrate_watching`] over [0, x_end] cut at `breaks` (ascending, inside (0, x_end)):
/// the same output (requested points, every step, or the end), the extremes of the watched
/// functionals over the whole interval, and the statistics summed over the pieces. Without
/// breakpoints it is exactly [`ode::integrate_watching`].
pub fn integrate_watching(
    sys: &dyn OdeSystem,
    y0: &[f64],
    x_end: f64,
    out: &Output,
    opts: &OdeOptions,
    watch: &[Functional],
    breaks: &[f64],
) -> Result<OdeSolution, OdeError> {
    if breaks.is_empty() {
        return ode::integrate_watching(sys, y0, x_end, out, opts, watch).map(|(s, _)| s);
    }
    let mut edges = vec![0.0];
    edges.extend(breaks.iter().copied().filter(|&b| b > 0.0 && b < x_end));
    edges.push(x_end);
    let mut xs: Vec<f64> = Vec::new();
    let mut ys: Vec<Vec<f64>> = Vec::new();
    let mut extremes: Vec<Extreme> = Vec::new();
    let mut stats = ode::OdeStats::default();
    let mut y = y0.to_vec();
    let mut o = opts.clone();
    let last = edges.len() - 2;
    for (k, w) in edges.windows(2).enumerate() {
        let (a, b) = (w[0], w[1]);
        let piece = Piece { sys, a, b };
        let length = b - a;
        // The points of this piece (the first piece also takes x = 0), relative to a, and
        // always the piece's end to carry the state on.
        let mut asked: Vec<f64> = Vec::new();
        let (piece_out, wanted) = match out {
            Output::Points(p) => {
                asked = p
                    .iter()
                    .copied()
                    .filter(|&x| (x > a || (k == 0 && x >= a)) && (x <= b || k == last))
                    .collect();
                let mut rel: Vec<f64> = asked.iter().map(|&x| (x - a).clamp(0.0, length)).collect();
                if rel.last() != Some(&length) {
                    rel.push(length);
                }
                (Output::Points(rel), asked.len())
            }
            Output::Steps => (Output::Steps, usize::MAX),
            Output::End => (Output::End, usize::from(k == last)),
        };
        let (sol, ext) = ode::integrate_watching(&piece, &y, length, &piece_out, &o, watch)
            .map_err(|e| shifted(e, a))?;
        y = sol
            .y
            .last()
            .expect("a piece ends with its end point")
            .clone();
        let skip = usize::from(k > 0 && matches!(out, Output::Steps));
        for (i, (x, yk)) in sol.x.iter().zip(sol.y).skip(skip).take(wanted).enumerate() {
            // The points asked for are reported at exactly their x.
            xs.push(asked.get(i).copied().unwrap_or(a + x));
            ys.push(yk);
        }
        for (i, e) in ext.into_iter().enumerate() {
            let e = Extreme {
                max: e.max,
                max_at: a + e.max_at,
                min: e.min,
                min_at: a + e.min_at,
            };
            match extremes.get_mut(i) {
                None => extremes.push(e),
                Some(m) => {
                    if e.max > m.max {
                        (m.max, m.max_at) = (e.max, e.max_at);
                    }
                    if e.min < m.min {
                        (m.min, m.min_at) = (e.min, e.min_at);
                    }
                }
            }
        }
        let s = &sol.stats;
        stats.steps += s.steps;
        stats.rhs_evals += s.rhs_evals;
        stats.jac_evals += s.jac_evals;
        stats.lu_factorizations += s.lu_factorizations;
        stats.linear_solves += s.linear_solves;
        stats.krylov_iterations += s.krylov_iterations;
        stats.krylov_fallbacks += s.krylov_fallbacks;
        // The step budget is for the whole interval.
        o.max_steps = opts.max_steps.saturating_sub(stats.steps).max(1);
    }
    if matches!(out, Output::End) {
        xs = vec![x_end];
    }
    if let Some(x) = xs.last_mut()
        && (*x - x_end).abs() <= 1e-12 * x_end
    {
        *x = x_end;
    }
    Ok(OdeSolution {
        x: xs,
        y: ys,
        stats,
        extremes,
    })
}

/// Integrate from `y0` over [0, length] of `sys` cut at `breaks` and return the end state.
pub fn integrate_to_end(
    sys: &dyn OdeSystem,
    y0: &[f64],
    length: f64,
    opts: &OdeOptions,
    breaks: &[f64],
) -> Result<Vec<f64>, OdeError> {
    let sol = integrate_watching(sys, y0, length, &Output::End, opts, &[], breaks)?;
    Ok(sol
        .y
        .last()
        .expect("the solution has its end point")
        .clone())
}

/// [`ode::integrate_until_root`] cut at `breaks`: the first crossing of g(x, y) = 0 over the
/// pieces in order, or none; returns the crossing and the last state reached.
#[allow(clippy::type_complexity)]
pub fn until_root(
    sys: &dyn OdeSystem,
    g: &dyn Fn(f64, &[f64]) -> f64,
    y0: &[f64],
    x_end: f64,
    opts: &OdeOptions,
    breaks: &[f64],
) -> Result<(Option<(f64, Vec<f64>)>, Vec<f64>), OdeError> {
    let mut edges = vec![0.0];
    edges.extend(breaks.iter().copied().filter(|&b| b > 0.0 && b < x_end));
    edges.push(x_end);
    let mut y = y0.to_vec();
    for w in edges.windows(2) {
        let (a, b) = (w[0], w[1]);
        let piece = Piece { sys, a, b };
        let gx = |x: f64, y: &[f64]| g(a + x, y);
        let (sol, root) =
            ode::integrate_until_root(&piece, &gx, &y, b - a, opts).map_err(|e| shifted(e, a))?;
        if let Some((x, yr)) = root {
            return Ok((Some((a + x, yr.clone())), yr));
        }
        y = sol
            .y
            .last()
            .expect("the solution has its end point")
            .clone();
    }
    Ok((None, y))
}
