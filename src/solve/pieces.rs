//! Integration across breakpoints of the right-hand side: a distributed feed that starts or
//! stops part-way along a tube makes dy/dx jump there, and a shape given by points makes it
//! kink at each. A BDF method assumes a smooth right-hand side over each step (its error
//! estimate is a derivative of the interpolating polynomial); stepping across a jump costs
//! rejected steps at best and accuracy at worst. So the tube is integrated piece by piece
//! between the breakpoints, each piece a fresh start from the state where the last one ended
//! (common practice for piecewise-smooth ODEs; Hairer, Nørsett & Wanner, Solving ODEs I,
//! §II.6, from memory).

use super::ode::{self, Extreme, Functional, OdeError, OdeOptions, OdeSolution, OdeSystem, Output};

/// A piece [a, a + len] of a system: the integrator's x = 0 is the system's a, and the
/// system is evaluated inside the piece (its ends moved in by [`INSIDE`] of its length), so a
/// right-hand side that jumps at a breakpoint shows each piece its own side of the jump.
struct From<'a> {
    sys: &'a dyn OdeSystem,
    a: f64,
    len: f64,
}

/// How far inside its piece the right-hand side is evaluated at the piece's ends, as a
/// fraction of the piece's length: far below any tolerance where the right-hand side is smooth
/// (a shape is linear within a piece), and away from the other side of a jump.
const INSIDE: f64 = 1e-12;

impl From<'_> {
    fn at(&self, x: f64) -> f64 {
        let d = INSIDE * self.len;
        self.a + x.clamp(d, self.len - d)
    }
}

impl OdeSystem for From<'_> {
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

/// An error of a piece starting at `x0`, placed on the whole tube's coordinate.
fn placed(mut e: OdeError, x0: f64) -> OdeError {
    if let Some(x) = e.position_mut() {
        *x += x0;
    }
    e
}

/// The pieces [a, b] of [x0, x0 + length] cut at the `breaks` strictly inside.
fn pieces(x0: f64, length: f64, breaks: &[f64]) -> Vec<(f64, f64)> {
    let end = x0 + length;
    let mut cuts: Vec<f64> = vec![x0];
    cuts.extend(breaks.iter().copied().filter(|b| *b > x0 && *b < end));
    cuts.push(end);
    cuts.windows(2)
        .filter(|w| w[1] > w[0])
        .map(|w| (w[0], w[1]))
        .collect()
}

/// [`ode::integrate_watching`] from x = 0 to `x_end`, cut at `breaks`: the same output (points,
/// steps or the end, on the whole coordinate), the watched extremes over all pieces, and the
/// work of all pieces added up. Without breaks inside, exactly one call of the integrator.
pub fn integrate_watching(
    sys: &dyn OdeSystem,
    y0: &[f64],
    x_end: f64,
    out: &Output,
    opts: &OdeOptions,
    watch: &[Functional],
    breaks: &[f64],
) -> Result<(OdeSolution, Vec<Extreme>), OdeError> {
    let parts = pieces(0.0, x_end, breaks);
    if parts.len() <= 1 {
        return ode::integrate_watching(sys, y0, x_end, out, opts, watch);
    }
    let mut whole = OdeSolution {
        x: Vec::new(),
        y: Vec::new(),
        stats: Default::default(),
        extremes: Vec::new(),
    };
    let mut y = y0.to_vec();
    for (k, &(a, b)) in parts.iter().enumerate() {
        let len = b - a;
        let last = k + 1 == parts.len();
        // This piece's output on its own coordinate, the end always included (the next piece
        // starts there); `keep` says which of them the caller asked for.
        // This piece's output on its own coordinate, the end always included (the next piece
        // starts there), with the whole coordinate of each requested point (`None`: not
        // asked for).
        let (local, at): (Output, Vec<Option<f64>>) = match out {
            Output::End => (Output::Points(vec![len]), vec![last.then_some(b)]),
            Output::Steps => (Output::Steps, Vec::new()),
            Output::Points(xs) => {
                let mine: Vec<f64> = xs
                    .iter()
                    .copied()
                    .filter(|&x| (x > a || (k == 0 && x >= a)) && x <= b)
                    .collect();
                let mut pts: Vec<f64> = mine.iter().map(|&x| (x - a).clamp(0.0, len)).collect();
                let mut at: Vec<Option<f64>> = mine.into_iter().map(Some).collect();
                if pts.last() != Some(&len) {
                    pts.push(len);
                    at.push(None);
                }
                (Output::Points(pts), at)
            }
        };
        let (sol, ext) =
            ode::integrate_watching(&From { sys, a, len }, &y, len, &local, opts, watch)
                .map_err(|e| placed(e, a))?;
        let steps = sol.x.len();
        for (i, (x, yi)) in sol.x.iter().zip(&sol.y).enumerate() {
            let whole_x = match out {
                // Every step, the first of a later piece being the end of the one before; the
                // last is `b` exactly.
                Output::Steps if k > 0 && i == 0 => None,
                Output::Steps if i + 1 == steps => Some(b),
                Output::Steps => Some(a + x),
                _ => at[i],
            };
            if let Some(xw) = whole_x {
                whole.x.push(xw);
                whole.y.push(yi.clone());
            }
        }
        y = sol.y.last().expect("a piece has its end point").clone();
        let s = &sol.stats;
        let w = &mut whole.stats;
        w.steps += s.steps;
        w.rhs_evals += s.rhs_evals;
        w.jac_evals += s.jac_evals;
        w.lu_factorizations += s.lu_factorizations;
        w.linear_solves += s.linear_solves;
        w.krylov_iterations += s.krylov_iterations;
        w.krylov_fallbacks += s.krylov_fallbacks;
        for (i, e) in ext.iter().enumerate() {
            let e = e.shifted(a);
            match whole.extremes.get_mut(i) {
                None => whole.extremes.push(e),
                Some(acc) => acc.include(&e),
            }
        }
    }
    let ext = whole.extremes.clone();
    Ok((whole, ext))
}

/// The end state of an integration from `y0` at `x0` over `length`, cut at `breaks`.
pub fn advance(
    sys: &dyn OdeSystem,
    y0: &[f64],
    x0: f64,
    length: f64,
    opts: &OdeOptions,
    breaks: &[f64],
) -> Result<Vec<f64>, OdeError> {
    let mut y = y0.to_vec();
    for (a, b) in pieces(x0, length, breaks) {
        let len = b - a;
        let sol = ode::integrate(&From { sys, a, len }, &y, len, &Output::End, opts)
            .map_err(|e| placed(e, a - x0))?;
        y = sol
            .y
            .last()
            .expect("the solution has its end point")
            .clone();
    }
    Ok(y)
}

/// [`ode::integrate_until_root`] from `y0` at `x0` over `length`, cut at `breaks`; `g` takes
/// the position on the whole coordinate. Returns the crossing (distance from `x0`, state) if
/// any, and the last state reached.
#[allow(clippy::type_complexity)]
pub fn until_root(
    sys: &dyn OdeSystem,
    g: &dyn Fn(f64, &[f64]) -> f64,
    y0: &[f64],
    x0: f64,
    length: f64,
    opts: &OdeOptions,
    breaks: &[f64],
) -> Result<(Option<(f64, Vec<f64>)>, Vec<f64>), OdeError> {
    let mut y = y0.to_vec();
    for (a, b) in pieces(x0, length, breaks) {
        let ga = |x: f64, yy: &[f64]| g(a + x, yy);
        let len = b - a;
        let (sol, root) = ode::integrate_until_root(&From { sys, a, len }, &ga, &y, len, opts)
            .map_err(|e| placed(e, a - x0))?;
        if let Some((xr, yr)) = root {
            return Ok((Some((a - x0 + xr, yr.clone())), yr));
        }
        y = sol
            .y
            .last()
            .expect("the solution has its end point")
            .clone();
    }
    Ok((None, y))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// dy/dx = H(x − 1) (a unit step at x = 1): y(2) = 1 exactly, and the piecewise solve
    /// lands on it to round-off (the jump is never stepped across).
    struct Step;
    impl OdeSystem for Step {
        fn dim(&self) -> usize {
            1
        }
        fn rhs(&self, x: f64, _y: &[f64], d: &mut [f64]) {
            d[0] = if x >= 1.0 { 1.0 } else { 0.0 };
        }
        fn jacobian(&self, _x: f64, _y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
            out.push((0, 0, 0.0));
        }
    }

    #[test]
    fn pieces_cut_at_breaks_and_keep_the_output() {
        let opts = OdeOptions {
            rtol: 1e-10,
            atol: vec![1e-12],
            ..Default::default()
        };
        let out = Output::evenly_spaced(5, 2.0);
        let (sol, _) = integrate_watching(&Step, &[0.0], 2.0, &out, &opts, &[], &[1.0]).unwrap();
        assert_eq!(sol.x, vec![0.0, 0.5, 1.0, 1.5, 2.0]);
        // ∫_0^x H(s − 1) ds = max(0, x − 1) (exact).
        for (x, y) in sol.x.iter().zip(&sol.y) {
            assert!((y[0] - (x - 1.0).max(0.0)).abs() < 1e-12, "{x}: {}", y[0]);
        }
        let end = advance(&Step, &[0.0], 0.0, 2.0, &opts, &[1.0]).unwrap();
        assert!((end[0] - 1.0).abs() < 1e-12);
        let g = |_x: f64, y: &[f64]| y[0] - 0.25;
        let (root, _) = until_root(&Step, &g, &[0.0], 0.0, 2.0, &opts, &[1.0]).unwrap();
        let (xr, _) = root.unwrap();
        assert!((xr - 1.25).abs() < 1e-9, "{xr}");
    }
}
