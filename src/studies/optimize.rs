//! `rxnet optimize`: the reactor size, or any other input, that maximises a target.
//!
//! Size of a PFR, packed bed or batch: the outlet quantity along the reactor is a smooth
//! function of x (V, W or t), and its interior maxima are where d(target)/dx changes sign. The
//! balances are autonomous (isothermal), so one integration locates every sign change in turn
//! with diffsol's dense output (`solve::trace_root`), restarting at each; the best of those, the
//! bounds, and the point where the conversion constraint becomes active is the optimum, to
//! solver tolerance — no grid.
//!
//! Size of a CSTR: each V is a steady-state solve; d(target)/dV follows from dF/dV =
//! −(−I + V ∂f/∂F)⁻¹ f(F) (implicit function theorem). A log-spaced scan brackets the sign
//! changes, which bisection then narrows to 1e-13 relative.
//!
//! Any other input (T, P, a feed ratio, any `--set` path): a bounded 1-D search (a coarse scan
//! of 9 points, then golden-section search around the best; Kiefer 1953, common practice), and
//! for two or more inputs a coarse grid refined by Nelder–Mead (Nelder & Mead, Computer
//! Journal 7, 1965) with the points clamped to the bounds. Each evaluation is a full load and
//! run, so an override meets the same validation as the file.

use super::study::{Study, StudyError, Variable};
use super::target::Target;
use crate::metrics;
use crate::model::{Network, Override, Reactor};
use crate::reactor::Balance;
use crate::solve::{self, SolveError, SolveOptions, newton};

/// Which bound the optimum sits on, if any.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Bound {
    Lower,
    Upper,
    MinConversion,
}

#[derive(Debug, Clone)]
pub struct SizeOptimum {
    /// V, W or t at the optimum, SI.
    pub size: f64,
    pub value: f64,
    pub on_bound: Option<Bound>,
    /// How many candidate points were compared.
    pub candidates: usize,
}

fn conversion(net: &Network, y: &[f64]) -> f64 {
    let a = net.key;
    (net.feed.amounts[a] - y[a]) / net.feed.amounts[a]
}

/// Smallest size used in place of a lower bound of zero, relative to the upper bound (ratios
/// such as yields are undefined at zero size; their limit there is the inlet's instantaneous value).
const ZERO_SIZE: f64 = 1e-9;

/// Optimise the reactor size within [lo, hi] (SI).
pub fn optimize_size(
    net: &Network,
    target: &Target,
    lo: f64,
    hi: f64,
    min_conversion: Option<f64>,
    opts: &SolveOptions,
) -> Result<SizeOptimum, StudyError> {
    if !(hi > 0.0 && lo >= 0.0 && lo < hi && hi.is_finite()) {
        return Err(StudyError::Invalid(format!(
            "bounds must satisfy 0 ≤ LO < HI, got {lo} and {hi}"
        )));
    }
    if net.feed.amounts[net.key] <= 0.0 {
        return Err(StudyError::Invalid("the key reactant is not fed".into()));
    }
    let lo_eff = lo.max(ZERO_SIZE * hi);
    let balance = Balance::new(net).map_err(StudyError::Invalid)?;
    // (x, state) candidates; the constraint's active point, if any.
    let (cands, x_conv) = if let Reactor::Cstr { .. } = net.reactor {
        cstr_candidates(net, &balance, target, lo_eff, hi, min_conversion)?
    } else {
        flow_candidates(net, &balance, target, lo_eff, hi, min_conversion, opts)?
    };
    let n_cands = cands.len();
    let mut best: Option<(f64, f64)> = None;
    for (x, y) in &cands {
        if *x < lo_eff * (1.0 - 1e-12) || *x > hi * (1.0 + 1e-12) {
            continue;
        }
        if let Some(xc) = x_conv
            && *x < xc * (1.0 - 1e-12)
        {
            continue;
        }
        if let Some(v) = target.value(net, y)
            && best.is_none_or(|(_, bv)| v > bv)
        {
            best = Some((*x, v));
        }
    }
    let (size, value) = best.ok_or_else(|| {
        StudyError::Infeasible(format!(
            "no size in [{lo_eff:.6e}, {hi:.6e}] gives a defined value of {}",
            target.label(net)
        ))
    })?;
    let near = |a: f64, b: f64| (a - b).abs() <= 1e-9 * hi;
    let on_bound = if x_conv.is_some_and(|xc| near(size, xc)) {
        Some(Bound::MinConversion)
    } else if near(size, hi) {
        Some(Bound::Upper)
    } else if near(size, lo_eff) {
        Some(Bound::Lower)
    } else {
        None
    };
    Ok(SizeOptimum {
        size,
        value,
        on_bound,
        candidates: n_cands,
    })
}

type Candidates = (Vec<(f64, Vec<f64>)>, Option<f64>);

fn flow_candidates(
    net: &Network,
    b: &Balance,
    target: &Target,
    lo: f64,
    hi: f64,
    min_conversion: Option<f64>,
    opts: &SolveOptions,
) -> Result<Candidates, StudyError> {
    let y0 = b.initial_state(net);
    let mut cands = Vec::new();
    let slope = |y: &[f64]| {
        let mut d = vec![0.0; y.len()];
        b.rhs(y, &mut d);
        target.slope_sign(net, y, &d)
    };
    let (mut x, mut y) = (0.0, y0.clone());
    for _ in 0..1000 {
        let len = hi - x;
        if len <= 1e-12 * hi {
            break;
        }
        let (root, end) = solve::trace_root(net, b, &y, len, &slope, opts)?;
        match root {
            Some((dx, yr)) => {
                x += dx;
                cands.push((x, yr.clone()));
                y = yr;
                // Step a hair past the stationary point so it is not found again.
                let nudge = (1e-9 * hi).min(hi - x);
                if nudge > 0.0 {
                    y = solve::advance(net, b, &y, nudge, opts)?;
                    x += nudge;
                }
            }
            None => {
                cands.push((hi, end));
                break;
            }
        }
    }
    cands.push((lo, solve::advance(net, b, &y0, lo, opts)?));
    let mut x_conv = None;
    if let Some(xmin) = min_conversion {
        let g = |y: &[f64]| conversion(net, y) - xmin;
        let (root, end) = solve::trace_root(net, b, &y0, hi, &g, opts)?;
        match root {
            Some((xc, yc)) => {
                cands.push((xc, yc));
                x_conv = Some(xc);
            }
            None => {
                if conversion(net, &end) < xmin {
                    return Err(StudyError::Infeasible(format!(
                        "the conversion reaches only {:.6} at the upper bound {hi:.6e}, below the required {xmin}",
                        conversion(net, &end)
                    )));
                }
            }
        }
    }
    Ok((cands, x_conv))
}

fn cstr_candidates(
    net: &Network,
    b: &Balance,
    target: &Target,
    lo: f64,
    hi: f64,
    min_conversion: Option<f64>,
) -> Result<Candidates, StudyError> {
    let total = net.feed.total();
    let tol = 1e-14 * total;
    let solve_at = |v: f64| -> Result<Vec<f64>, StudyError> {
        crate::solve::cstr_outlet(net, b, v, tol, None).map_err(StudyError::Solve)
    };
    let slope_at = |v: f64| -> Result<(f64, Vec<f64>), StudyError> {
        let f = solve_at(v)?;
        let d = newton::volume_sensitivity(b, v, &f).ok_or({
            StudyError::Solve(SolveError::Newton(newton::NewtonError::Singular {
                volume: v,
            }))
        })?;
        Ok((target.slope_sign(net, &f, &d), f))
    };
    const SCAN: usize = 41;
    let (ul, uh) = (lo.ln(), hi.ln());
    let mut grid = Vec::with_capacity(SCAN);
    for k in 0..SCAN {
        let v = (ul + (uh - ul) * k as f64 / (SCAN - 1) as f64).exp();
        grid.push((v, slope_at(v)?));
    }
    let mut cands: Vec<(f64, Vec<f64>)> =
        vec![(lo, grid[0].1.1.clone()), (hi, grid[SCAN - 1].1.1.clone())];
    for w in grid.windows(2) {
        let ((va, (sa, _)), (vb, (sb, _))) = (&w[0], &w[1]);
        if *sa > 0.0 && *sb <= 0.0 {
            // Bisection on ln V keeps the bracket [a, b] with slope(a) > 0 ≥ slope(b).
            let (a, c) = bisect_ln(*va, *vb, |v| Ok(slope_at(v)?.0 > 0.0))?;
            let v = (0.5 * (a + c)).exp();
            cands.push((v, solve_at(v)?));
        }
    }
    let mut x_conv = None;
    if let Some(xmin) = min_conversion {
        let conv = |v: f64| -> Result<f64, StudyError> { Ok(conversion(net, &solve_at(v)?)) };
        if conv(hi)? < xmin {
            return Err(StudyError::Infeasible(format!(
                "the conversion reaches only {:.6} at the upper bound V = {hi:.6e} m3, below the required {xmin}",
                conv(hi)?
            )));
        }
        if conv(lo)? < xmin {
            let (_, c) = bisect_ln(lo, hi, |v| Ok(conv(v)? < xmin))?;
            let v = c.exp();
            cands.push((v, solve_at(v)?));
            x_conv = Some(v);
        }
    }
    Ok((cands, x_conv))
}

/// Bisection on ln V over [lo, hi]: keeps `left(V)` true at the lower end of the bracket and
/// false at the upper, until the bracket is 1e-14 wide in ln V. Returns the bracket (ln V).
pub(crate) fn bisect_ln(
    lo: f64,
    hi: f64,
    mut left: impl FnMut(f64) -> Result<bool, StudyError>,
) -> Result<(f64, f64), StudyError> {
    let (mut a, mut c) = (lo.ln(), hi.ln());
    for _ in 0..200 {
        if c - a < 1e-14 {
            break;
        }
        let m = 0.5 * (a + c);
        if left(m.exp())? {
            a = m;
        } else {
            c = m;
        }
    }
    Ok((a, c))
}

#[derive(Debug, Clone)]
pub struct VarOptimum {
    /// Best value of each variable, in the unit of its bounds.
    pub point: Vec<f64>,
    pub value: f64,
    /// For each variable: on which bound it sits, if any.
    pub on_bound: Vec<Option<Bound>>,
    pub evaluations: usize,
}

/// Evaluate the target at one point (None when infeasible or the solve fails there).
fn evaluate(
    study: &Study,
    vars: &[Variable],
    x: &[f64],
    target_text: &str,
    min_conversion: Option<f64>,
    opts: &SolveOptions,
) -> Result<Option<f64>, StudyError> {
    let sets: Vec<Override> = vars.iter().zip(x).map(|(v, x)| v.set(*x)).collect();
    let net = study.load(&sets)?;
    let target = Target::parse(target_text, &net).map_err(StudyError::Invalid)?;
    let sim = match solve::simulate(&net, opts) {
        Ok(s) => s,
        Err(_) => return Ok(None),
    };
    let out = sim.outlet();
    if let Some(xmin) = min_conversion
        && metrics::compute(&net, out).conversion < xmin
    {
        return Ok(None);
    }
    Ok(target.value(&net, out))
}

/// Maximise the target over general inputs within their bounds.
pub fn optimize_vars(
    study: &Study,
    vars: &[Variable],
    target_text: &str,
    min_conversion: Option<f64>,
    opts: &SolveOptions,
) -> Result<VarOptimum, StudyError> {
    let d = vars.len();
    let mut evals = 0usize;
    let mut f = |x: &[f64]| -> Result<f64, StudyError> {
        evals += 1;
        Ok(evaluate(study, vars, x, target_text, min_conversion, opts)?
            .unwrap_or(f64::NEG_INFINITY))
    };
    // Coarse grid: 9 points in 1-D, 7 per axis in 2-D, 5 beyond.
    let per: usize = match d {
        1 => 9,
        2 => 7,
        _ => 5,
    };
    let mut best_x = vec![0.0; d];
    let mut best_f = f64::NEG_INFINITY;
    let total: usize = per
        .checked_pow(d as u32)
        .filter(|t| *t <= 20_000)
        .ok_or_else(|| {
            StudyError::Invalid(format!("{d} variables are too many for this search"))
        })?;
    for idx in 0..total {
        let mut k = idx;
        let x: Vec<f64> = vars
            .iter()
            .map(|v| {
                let i = k % per;
                k /= per;
                v.lo + (v.hi - v.lo) * i as f64 / (per - 1) as f64
            })
            .collect();
        let fx = f(&x)?;
        if fx > best_f {
            best_f = fx;
            best_x = x;
        }
    }
    if best_f == f64::NEG_INFINITY {
        return Err(StudyError::Infeasible(
            "the target is undefined or infeasible at every point of the coarse grid".into(),
        ));
    }
    if d == 1 {
        let v = &vars[0];
        let h = (v.hi - v.lo) / (per - 1) as f64;
        let (a, b) = ((best_x[0] - h).max(v.lo), (best_x[0] + h).min(v.hi));
        let (x, fx) = golden_max(&mut |x| f(&[x]), a, b, 1e-10 * (v.hi - v.lo))?;
        if fx >= best_f {
            best_x = vec![x];
            best_f = fx;
        }
    } else {
        let (x, fx) = nelder_mead(&mut f, &best_x, vars)?;
        if fx >= best_f {
            best_x = x;
            best_f = fx;
        }
    }
    let on_bound = vars
        .iter()
        .zip(&best_x)
        .map(|(v, x)| {
            let tol = 1e-6 * (v.hi - v.lo);
            if (x - v.lo).abs() <= tol {
                Some(Bound::Lower)
            } else if (x - v.hi).abs() <= tol {
                Some(Bound::Upper)
            } else {
                None
            }
        })
        .collect();
    Ok(VarOptimum {
        point: best_x,
        value: best_f,
        on_bound,
        evaluations: evals,
    })
}

/// Golden-section search for the maximum of f on [a, b] (Kiefer 1953; common practice).
fn golden_max(
    f: &mut dyn FnMut(f64) -> Result<f64, StudyError>,
    mut a: f64,
    mut b: f64,
    tol: f64,
) -> Result<(f64, f64), StudyError> {
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut fc, mut fd) = (f(c)?, f(d)?);
    for _ in 0..200 {
        if (b - a).abs() <= tol {
            break;
        }
        if fc >= fd {
            b = d;
            d = c;
            fd = fc;
            c = b - r * (b - a);
            fc = f(c)?;
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + r * (b - a);
            fd = f(d)?;
        }
    }
    Ok(if fc >= fd { (c, fc) } else { (d, fd) })
}

/// Nelder–Mead maximisation with the vertices clamped to the bounds.
fn nelder_mead(
    f: &mut dyn FnMut(&[f64]) -> Result<f64, StudyError>,
    start: &[f64],
    vars: &[Variable],
) -> Result<(Vec<f64>, f64), StudyError> {
    let d = start.len();
    let clamp = |x: &mut Vec<f64>| {
        for (xi, v) in x.iter_mut().zip(vars) {
            *xi = xi.clamp(v.lo, v.hi);
        }
    };
    let mut simplex: Vec<(Vec<f64>, f64)> = Vec::with_capacity(d + 1);
    simplex.push((start.to_vec(), f(start)?));
    for i in 0..d {
        let mut x = start.to_vec();
        let step = 0.1 * (vars[i].hi - vars[i].lo);
        x[i] = if x[i] + step <= vars[i].hi {
            x[i] + step
        } else {
            x[i] - step
        };
        let fx = f(&x)?;
        simplex.push((x, fx));
    }
    for _ in 0..400 {
        simplex.sort_by(|a, b| b.1.total_cmp(&a.1));
        let spread = (0..d)
            .map(|i| {
                let (lo, hi) = simplex
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), s| {
                        (l.min(s.0[i]), h.max(s.0[i]))
                    });
                (hi - lo) / (vars[i].hi - vars[i].lo)
            })
            .fold(0.0, f64::max);
        if spread < 1e-9 {
            break;
        }
        let centroid: Vec<f64> = (0..d)
            .map(|i| simplex[..d].iter().map(|s| s.0[i]).sum::<f64>() / d as f64)
            .collect();
        let worst = simplex[d].clone();
        let along = |t: f64| -> Vec<f64> {
            (0..d)
                .map(|i| centroid[i] + t * (worst.0[i] - centroid[i]))
                .collect()
        };
        let mut xr = along(-1.0);
        clamp(&mut xr);
        let fr = f(&xr)?;
        if fr > simplex[0].1 {
            let mut xe = along(-2.0);
            clamp(&mut xe);
            let fe = f(&xe)?;
            simplex[d] = if fe > fr { (xe, fe) } else { (xr, fr) };
        } else if fr > simplex[d - 1].1 {
            simplex[d] = (xr, fr);
        } else {
            let mut xc = along(0.5);
            clamp(&mut xc);
            let fc = f(&xc)?;
            if fc > worst.1 {
                simplex[d] = (xc, fc);
            } else {
                let best = simplex[0].0.clone();
                for s in simplex.iter_mut().skip(1) {
                    let mut x: Vec<f64> =
                        (0..d).map(|i| best[i] + 0.5 * (s.0[i] - best[i])).collect();
                    clamp(&mut x);
                    *s = (x.clone(), f(&x)?);
                }
            }
        }
    }
    simplex.sort_by(|a, b| b.1.total_cmp(&a.1));
    Ok(simplex.swap_remove(0))
}
