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

use super::conversion::{Reach, beyond_message, bisect_ln, cstr_tolerance, reach_conversion};
use super::study::{Study, StudyError, Variable};
use super::target::{Limit, Target};
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
    /// The edge of the region where the study is valid: a point just beyond fails a check
    /// (e.g. K_eq breaking Wegscheider's condition) or has no defined target value.
    ValidRegion,
    /// The process limit T_max (`reactor.T_max`): just beyond, the hot spot (or a batch's
    /// cooling-failure temperature) would exceed it.
    TemperatureLimit,
}

#[derive(Debug, Clone)]
pub struct SizeOptimum {
    /// V, W or t at the optimum, SI.
    pub size: f64,
    pub value: f64,
    /// None: an interior maximum, where d(target)/dx was checked to change sign from + to −.
    pub on_bound: Option<Bound>,
    /// On a bound: whether the target still improves beyond it (d(target)/dx > 0 at the upper
    /// bound, < 0 at the lower bound or the conversion constraint), so that widening the
    /// bounds would move the optimum.
    pub improves_beyond: bool,
    /// How many candidate points were compared.
    pub candidates: usize,
}

fn conversion(net: &Network, y: &[f64]) -> f64 {
    let a = net.key;
    (net.feed.amounts[a] - y[a]) / net.feed.amounts[a]
}

/// Smallest size used in place of a lower bound of zero, relative to the upper bound (ratios
/// such as yields are undefined at zero size; their limit there comes from the inlet's rates).
const ZERO_SIZE: f64 = 1e-9;

/// Relative offset on each side of a stationary point at which the slope's sign is checked.
const SIDE: f64 = 1e-4;

/// Relative spread below which a target counts as the same at every size.
const FLAT: f64 = 1e-6;

/// The unit of a target's value: mol/s or mol for an amount, 1 for the ratios.
pub fn value_unit(net: &Network, target: &Target) -> &'static str {
    match target {
        Target::Amount(_) if net.reactor.is_batch() => "mol",
        Target::Amount(_) => "mol/s",
        _ => "1",
    }
}

/// The state and the target's slope at any size: a fresh integration from the inlet (flow,
/// batch) or a steady-state solve (CSTR).
struct Probe<'a> {
    net: &'a Network,
    b: &'a Balance,
    target: &'a Target,
    opts: &'a SolveOptions,
    cstr: bool,
}

impl Probe<'_> {
    fn state(&self, x: f64) -> Result<Vec<f64>, StudyError> {
        if self.cstr {
            let tol = cstr_tolerance(self.net, self.b, x);
            solve::cstr_outlet(self.net, self.b, x, tol, self.opts.steady_state)
                .map_err(StudyError::Solve)
        } else {
            let y0 = self.b.initial_state(self.net);
            Ok(solve::advance(self.net, self.b, &y0, 0.0, x, self.opts)?)
        }
    }

    /// A number with the sign of d(target)/dx at size x, and the state there.
    fn slope(&self, x: f64) -> Result<(f64, Vec<f64>), StudyError> {
        let y = self.state(x)?;
        let d = if self.cstr {
            newton::volume_sensitivity(self.b, x, &y).ok_or(StudyError::Solve(
                SolveError::Newton(newton::NewtonError::Singular { volume: x }),
            ))?
        } else {
            let mut d = vec![0.0; y.len()];
            self.b.rhs_at(x, &y, &mut d);
            d
        };
        Ok((self.target.slope_sign(self.net, &y, &d), y))
    }

    /// True when the target rises before x and falls after it (checked at x(1 ∓ SIDE)).
    fn is_maximum(&self, x: f64, lo: f64, hi: f64) -> Result<bool, StudyError> {
        let (a, c) = (x * (1.0 - SIDE), x * (1.0 + SIDE));
        if a < lo || c > hi {
            return Ok(false);
        }
        Ok(self.slope(a)?.0 > 0.0 && self.slope(c)?.0 < 0.0)
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum PointKind {
    /// Where the process limit T_max is reached (the end of the feasible sizes).
    TemperatureLimit,
    /// The lower bound the user gave (a size > 0).
    Lower,
    /// The smallest size tried when the lower bound is zero (not a bound: the limit x → 0).
    Smallest,
    Upper,
    Constraint,
    /// A zero of d(target)/dx, not yet classified.
    Stationary,
}

/// Optimise the reactor size within [lo, hi] (SI). A lower bound of 0 is the limit of a
/// vanishing reactor: when the target's supremum is approached there (a yield or selectivity
/// that is best at the inlet), no finite size is optimal and the answer is an
/// `Infeasible` error that says so, unless `min_conversion` keeps the size away from zero.
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
    super::conversion::refuse_walls(net, "the optimum size")?;
    if solve::train::is_flowsheet(net) {
        return optimize_train_size(net, target, lo, hi, min_conversion, opts);
    }
    super::conversion::refuse_heat_cstr(net, "the optimum volume")?;
    // The search along the batch time judges targets on the charge alone; a semibatch's
    // metrics count what was dosed and withdrawn by each time, which it does not follow.
    let c = &net.contacting;
    if net.reactor.is_batch() && (!c.dosing.is_empty() || c.withdrawal.is_some()) {
        return Err(StudyError::Invalid(
            "the best batch time of a semibatch is not searched along one integration (its targets count what was dosed and withdrawn by each time): sweep it instead, `rxnet sweep --vary \"reactor.time=1 h:4 h:13\"`, where each point is a whole run (mind that a dosing's `to` defaults to the batch time), or optimize the dosing itself (`--over reactor.dosing.0.rate`)".into(),
        ));
    }
    let min_conversion = min_conversion.filter(|x| *x > 0.0);
    let lo_open = lo == 0.0;
    let lo_eff = if lo_open { ZERO_SIZE * hi } else { lo };
    let balance = Balance::new(net).map_err(StudyError::Invalid)?;
    if solve::shooting::is_counter_current(&balance) {
        return Err(StudyError::Invalid(solve::shooting::size_study_refusal(
            "the best reactor size",
        )));
    }
    let cstr = matches!(net.reactor, Reactor::Cstr { .. });
    let probe = Probe {
        net,
        b: &balance,
        target,
        opts,
        cstr,
    };
    // The process limit: the hot spot over [0, x] only grows with x, so sizes beyond the first
    // point where T reaches T_max are infeasible; the search ends there.
    let x_limit = if cstr {
        None
    } else {
        temperature_limit(net, &balance, hi, opts)?
    };
    if x_limit.is_some_and(|x| x <= lo_eff) {
        return Err(StudyError::Infeasible(format!(
            "the process limit T_max = {} K is reached at {} = {} {}, at or below the lower bound: no size in the bounds keeps the reactor below it",
            crate::report::num(net.t_max.unwrap_or(f64::NAN)),
            solve::reactor_axis(net).0,
            crate::report::num(x_limit.unwrap_or(0.0)),
            solve::reactor_axis(net).1,
        )));
    }
    let hi = x_limit.map_or(hi, |x| x.min(hi));
    let (stationary, mut x_conv) = if cstr {
        cstr_candidates(&probe, lo_eff, hi, min_conversion)?
    } else {
        flow_candidates(net, &balance, target, hi, min_conversion, opts)?
    };
    // A constraint already met at the lower end does not restrict the interval.
    if x_conv.is_some_and(|xc| xc <= lo_eff) {
        x_conv = None;
    }
    let start = x_conv.unwrap_or(lo_eff);
    let mut points: Vec<(f64, Vec<f64>, PointKind)> = vec![
        (
            lo_eff,
            probe.state(lo_eff)?,
            if lo_open {
                PointKind::Smallest
            } else {
                PointKind::Lower
            },
        ),
        (
            hi,
            probe.state(hi)?,
            if x_limit == Some(hi) {
                PointKind::TemperatureLimit
            } else {
                PointKind::Upper
            },
        ),
    ];
    if let Some(xc) = x_conv {
        points.push((xc, probe.state(xc)?, PointKind::Constraint));
    }
    for (x, y) in stationary {
        if x > start * (1.0 + 1e-12) && x < hi * (1.0 - 1e-12) {
            points.push((x, y, PointKind::Stationary));
        }
    }
    let n_cands = points.len();
    // Values at the feasible points, best first.
    let mut valued: Vec<(f64, f64, PointKind)> = points
        .iter()
        .filter(|(x, _, _)| *x >= start * (1.0 - 1e-12))
        .filter_map(|(x, y, k)| target.value(net, y).map(|v| (*x, v, *k)))
        .collect();
    valued.sort_by(|a, b| b.1.total_cmp(&a.1));
    let label = target.label(net);
    let (xn, xu, _) = solve::reactor_axis(net);
    let vu = value_unit(net, target);
    let with_unit = |v: f64| {
        if vu == "1" {
            crate::report::num(v)
        } else {
            format!("{} {vu}", crate::report::num(v))
        }
    };
    if valued.is_empty() {
        return Err(StudyError::Infeasible(format!(
            "no size in [{} {xu}, {} {xu}] gives a defined value of {label}",
            crate::report::num(start),
            crate::report::num(hi)
        )));
    }
    // The limit at zero size counts when nothing keeps the size away from zero.
    let at_zero = lo_open && x_conv.is_none();
    let limit = if at_zero {
        let y0 = balance.initial_state(net);
        let mut d = vec![0.0; y0.len()];
        balance.rhs(&y0, &mut d);
        Some(target.limit_at_zero_size(net, &y0, &d))
    } else {
        None
    };
    // The same value everywhere (e.g. the yield of parallel reactions of equal order).
    let (vmax, vmin) = (valued[0].1, valued[valued.len() - 1].1);
    let (mut top, mut bottom) = (vmax, vmin);
    if let Some(Limit::Value(l)) = limit {
        top = top.max(l);
        bottom = bottom.min(l);
    }
    if !matches!(limit, Some(Limit::PlusInfinity))
        && top - bottom <= FLAT * top.abs().max(bottom.abs())
    {
        return Err(StudyError::Infeasible(format!(
            "{label} is {} at every {xn} in [{} {xu}, {} {xu}] (to {FLAT:e} relative): it does not depend on the size, so no size is optimal",
            with_unit(vmax),
            crate::report::num(if at_zero { 0.0 } else { start }),
            crate::report::num(hi)
        )));
    }
    // The best point that is a bound, the constraint, or a verified maximum.
    let mut best = None;
    for &(x, v, k) in &valued {
        if k != PointKind::Stationary || probe.is_maximum(x, start, hi)? {
            best = Some((x, v, k));
            break;
        }
    }
    let (size, value, kind) = best.expect("the bounds are among the points");
    let remedy =
        "add --min-conversion X (or a positive lower bound) to make the problem well posed";
    if let Some(l) = limit {
        let tol = FLAT * value.abs();
        let sup = match l {
            Limit::PlusInfinity => Some(format!(
                "{label} grows without bound as {xn} -> 0 (the other product is not formed at the inlet): no finite optimum; {remedy}"
            )),
            Limit::Value(l) if l >= value - tol || kind == PointKind::Smallest => Some(format!(
                "{label} approaches {} as {xn} -> 0 and is smaller at every positive {xn}: no finite optimum; {remedy}",
                with_unit(l)
            )),
            _ if kind == PointKind::Smallest => Some(format!(
                "{label} is largest at the smallest {xn} tried ({} {xu}) and rises further as {xn} -> 0: no finite optimum; {remedy}",
                crate::report::num(size)
            )),
            _ => None,
        };
        if let Some(m) = sup {
            return Err(StudyError::Infeasible(m));
        }
    }
    let on_bound = match kind {
        PointKind::Lower | PointKind::Smallest => Some(Bound::Lower),
        PointKind::Upper => Some(Bound::Upper),
        PointKind::TemperatureLimit => Some(Bound::TemperatureLimit),
        PointKind::Constraint => Some(Bound::MinConversion),
        PointKind::Stationary => None,
    };
    let improves_beyond = match on_bound {
        None => false,
        Some(Bound::Upper | Bound::TemperatureLimit) => probe.slope(size)?.0 > 0.0,
        Some(_) => probe.slope(size)?.0 < 0.0,
    };
    Ok(SizeOptimum {
        size,
        value,
        on_bound,
        improves_beyond,
        candidates: n_cands,
    })
}

type Candidates = (Vec<(f64, Vec<f64>)>, Option<f64>);

/// Where along a non-isothermal PFR, packed bed or batch the process limit T_max is first
/// reached: T itself, and for a batch also the cooling-failure temperature T + ΔT_ad N_k/N_k0
/// ([`crate::safety`]). `None` without a limit, without an energy balance, or when it is not
/// reached within `hi`. A feed already above the limit is infeasible.
fn temperature_limit(
    net: &Network,
    b: &Balance,
    hi: f64,
    opts: &SolveOptions,
) -> Result<Option<f64>, StudyError> {
    let (Some(t_max), Some(ti), Some(e)) = (net.t_max, b.temperature_index(), b.energy()) else {
        return Ok(None);
    };
    let k = net.key;
    let n_k0 = net.feed.amounts[k];
    let rise = if net.reactor.is_batch() && n_k0 > 0.0 {
        e.adiabatic_rise(net).0 / n_k0
    } else {
        0.0
    };
    let guard = |_x: f64, y: &[f64]| y[ti].max(y[ti] + rise * y[k]) - t_max;
    let y0 = b.initial_state(net);
    if guard(0.0, &y0) >= 0.0 {
        return Err(StudyError::Infeasible(format!(
            "the feed is already at or above the process limit T_max = {} K{}",
            crate::report::num(t_max),
            if rise != 0.0 {
                " (counting the cooling-failure temperature of the charge)"
            } else {
                ""
            }
        )));
    }
    let (root, _) = solve::trace_root(net, b, &y0, 0.0, hi, &guard, opts)?;
    Ok(root.map(|(x, _)| x))
}

/// The error when the conversion constraint is not met at the upper bound: how far it gets,
/// and whether a larger reactor would meet it (the size that does) or none can (X_eq).
fn short_of(net: &Network, xmin: f64, reached: f64, hi: f64, opts: &SolveOptions) -> StudyError {
    let (xn, xu, _) = solve::reactor_axis(net);
    let head = format!(
        "the conversion reaches only {reached:.6} at the upper bound {xn} = {} {xu}, below the required {xmin}",
        crate::report::num(hi)
    );
    let tail = match reach_conversion(net, xmin, opts) {
        Ok(Reach::Size(s)) => format!(
            "; it is reached at {xn} = {} {xu}: raise the upper bound",
            crate::report::num(s)
        ),
        Ok(Reach::Beyond { x_max, reason }) => {
            format!("; {}", beyond_message(net, xmin, x_max, &reason))
        }
        Err(_) => String::new(),
    };
    StudyError::Infeasible(format!("{head}{tail}"))
}

/// The zeros of d(target)/dx along a PFR, packed bed or batch over (0, hi] (one integration,
/// restarted past each zero), and where the conversion constraint becomes active.
fn flow_candidates(
    net: &Network,
    b: &Balance,
    target: &Target,
    hi: f64,
    min_conversion: Option<f64>,
    opts: &SolveOptions,
) -> Result<Candidates, StudyError> {
    let y0 = b.initial_state(net);
    let mut cands = Vec::new();
    let slope = |x: f64, y: &[f64]| {
        let mut d = vec![0.0; y.len()];
        b.rhs_at(x, y, &mut d);
        target.slope_sign(net, y, &d)
    };
    let (mut x, mut y) = (0.0, y0.clone());
    for _ in 0..1000 {
        let len = hi - x;
        if len <= 1e-12 * hi {
            break;
        }
        let (root, _) = solve::trace_root(net, b, &y, x, len, &slope, opts)?;
        match root {
            Some((dx, yr)) => {
                x += dx;
                cands.push((x, yr.clone()));
                y = yr;
                // Step a hair past the stationary point so it is not found again.
                let nudge = (1e-9 * hi).min(hi - x);
                if nudge > 0.0 {
                    y = solve::advance(net, b, &y, x, nudge, opts)?;
                    x += nudge;
                }
            }
            None => break,
        }
    }
    let mut x_conv = None;
    if let Some(xmin) = min_conversion {
        let g = |_x: f64, y: &[f64]| conversion(net, y) - xmin;
        let (root, end) = solve::trace_root(net, b, &y0, 0.0, hi, &g, opts)?;
        match root {
            Some((xc, _)) => x_conv = Some(xc),
            None => {
                if conversion(net, &end) < xmin {
                    return Err(short_of(net, xmin, conversion(net, &end), hi, opts));
                }
            }
        }
    }
    Ok((cands, x_conv))
}

/// The maxima of the target over a CSTR's volume (a log-spaced scan of d(target)/dV, each
/// change of sign from + to − narrowed by bisection), and where the conversion constraint
/// becomes active.
fn cstr_candidates(
    p: &Probe,
    lo: f64,
    hi: f64,
    min_conversion: Option<f64>,
) -> Result<Candidates, StudyError> {
    const SCAN: usize = 41;
    let (ul, uh) = (lo.ln(), hi.ln());
    let mut grid = Vec::with_capacity(SCAN);
    for k in 0..SCAN {
        let v = (ul + (uh - ul) * k as f64 / (SCAN - 1) as f64).exp();
        grid.push((v, p.slope(v)?.0));
    }
    let mut cands: Vec<(f64, Vec<f64>)> = Vec::new();
    for w in grid.windows(2) {
        let ((va, sa), (vb, sb)) = (w[0], w[1]);
        if sa > 0.0 && sb <= 0.0 {
            // Bisection on ln V keeps the bracket [a, b] with slope(a) > 0 ≥ slope(b).
            let (a, c) = bisect_ln(va, vb, |v| Ok(p.slope(v)?.0 > 0.0))?;
            let v = (0.5 * (a + c)).exp();
            cands.push((v, p.state(v)?));
        }
    }
    let mut x_conv = None;
    if let Some(xmin) = min_conversion {
        let conv = |v: f64| -> Result<f64, StudyError> { Ok(conversion(p.net, &p.state(v)?)) };
        if conv(hi)? < xmin {
            return Err(short_of(p.net, xmin, conv(hi)?, hi, p.opts));
        }
        if conv(lo)? < xmin {
            let (_, c) = bisect_ln(lo, hi, |v| Ok(conv(v)? < xmin))?;
            x_conv = Some(c.exp());
        }
    }
    Ok((cands, x_conv))
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

/// Why a candidate has no value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NoValue {
    /// Its hot spot exceeds the process limit T_max.
    OverTemperatureLimit,
    /// It fails a check or the solve, misses the conversion constraint, or its target is not
    /// defined.
    Other,
}

/// Evaluate the target at one point.
fn evaluate(
    study: &Study,
    vars: &[Variable],
    x: &[f64],
    target_text: &str,
    min_conversion: Option<f64>,
    opts: &SolveOptions,
) -> Result<Result<f64, NoValue>, StudyError> {
    let sets: Vec<Override> = super::study::overrides(vars, x);
    let net = study.load(&sets)?;
    let target = Target::parse(target_text, &net).map_err(StudyError::Invalid)?;
    // Through the evaluation gate: a candidate `run` would refuse (error findings at this
    // point, a failed or unphysical solve) is infeasible.
    let ev = match super::evaluate::evaluate(&net, opts, false) {
        Ok(ev) => ev,
        Err(_) => return Ok(Err(NoValue::Other)),
    };
    if let Some(xmin) = min_conversion
        && ev.metrics.conversion < xmin
    {
        return Ok(Err(NoValue::Other));
    }
    // The process limit: a candidate whose hot spot exceeds T_max is infeasible.
    if ev.heat.as_ref().is_some_and(|h| h.exceeds_limit()) {
        return Ok(Err(NoValue::OverTemperatureLimit));
    }
    Ok(target
        .value_against(&net, &ev.fed, &ev.left)
        .ok_or(NoValue::Other))
}

/// Points of the coarse grid on ln(total size) that brackets a train's optimum.
const TRAIN_GRID: usize = 13;

/// A train (or a tube with side feeds or a recycle): the total size in [lo, hi] that maximises
/// the target with every unit scaled in proportion ([`Network::with_size`]). Each candidate is
/// the whole train through the evaluation gate, so the size is searched on a grid in ln(size)
/// and refined by golden section around the best grid point (the target taken as unimodal
/// there, as it is for the usual rise-and-fall of an intermediate); an optimum on a bound says
/// whether the target still improves beyond it.
fn optimize_train_size(
    net: &Network,
    target: &Target,
    lo: f64,
    hi: f64,
    min_conversion: Option<f64>,
    opts: &SolveOptions,
) -> Result<SizeOptimum, StudyError> {
    let open_at_zero = lo == 0.0;
    let lo = if open_at_zero { 1e-3 * hi } else { lo };
    let mut candidates = 0usize;
    let mut value = |size: f64| -> Result<Option<f64>, StudyError> {
        candidates += 1;
        let n = net.with_size(size);
        let ev = match super::evaluate::evaluate(&n, opts, false) {
            Ok(ev) => ev,
            Err(e) if e.is_invalid_input() => return Err(StudyError::Invalid(e.to_string())),
            Err(_) => return Ok(None),
        };
        if min_conversion.is_some_and(|x| ev.metrics.conversion < x)
            || ev.heat.as_ref().is_some_and(|h| h.exceeds_limit())
        {
            return Ok(None);
        }
        Ok(target.value_against(&n, &ev.fed, &ev.left))
    };
    let (a, b) = (lo.ln(), hi.ln());
    let grid: Vec<f64> = (0..TRAIN_GRID)
        .map(|k| a + (b - a) * k as f64 / (TRAIN_GRID - 1) as f64)
        .collect();
    let mut values = Vec::with_capacity(TRAIN_GRID);
    for &g in &grid {
        values.push(value(g.exp())?);
    }
    let best = (0..TRAIN_GRID)
        .filter(|&k| values[k].is_some())
        .max_by(|&i, &j| values[i].unwrap().total_cmp(&values[j].unwrap()))
        .ok_or_else(|| {
            StudyError::Infeasible(
                "no size between the bounds gives a value of the target (every candidate failed, missed the conversion constraint or exceeded T_max)".into(),
            )
        })?;
    let on_bound = match best {
        0 => Some(Bound::Lower),
        k if k == TRAIN_GRID - 1 => Some(Bound::Upper),
        _ => None,
    };
    if let Some(side) = on_bound {
        let size = grid[best].exp();
        // Whether the target still improves beyond the bound: one step further out.
        let step = (b - a) / (TRAIN_GRID - 1) as f64 * 1e-3;
        let beyond = match side {
            Bound::Lower => grid[best] - step,
            _ => grid[best] + step,
        };
        let improves_beyond = value(beyond.exp())?.is_some_and(|v| v > values[best].unwrap());
        if open_at_zero && side == Bound::Lower && improves_beyond {
            return Err(StudyError::Infeasible(format!(
                "{} is best at the smallest total size tried ({:.3e}) and still improves below it: its supremum is approached as the train shrinks to nothing: no finite optimum; add --min-conversion X (or a positive lower bound) to make the problem well posed",
                target.label(net),
                size
            )));
        }
        return Ok(SizeOptimum {
            size,
            value: values[best].unwrap(),
            on_bound,
            improves_beyond,
            candidates,
        });
    }
    let mut f =
        |x: f64| -> Result<f64, StudyError> { Ok(value(x.exp())?.unwrap_or(f64::NEG_INFINITY)) };
    let (x, v) = golden_max(&mut f, grid[best - 1], grid[best + 1], 1e-9)?;
    Ok(SizeOptimum {
        size: x.exp(),
        value: v,
        on_bound: None,
        improves_beyond: false,
        candidates,
    })
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
        .collect::<Vec<_>>();
    let mut on_bound = on_bound;
    // An input the target does not depend on (the same value at both of its bounds and at
    // the best point, the other inputs at their best) would be reported on an arbitrary bound.
    for (i, v) in vars.iter().enumerate() {
        let mut same = true;
        for end in [v.lo, v.hi] {
            let mut x = best_x.clone();
            x[i] = end;
            let fx = f(&x)?;
            same &= (fx - best_f).abs() <= FLAT * best_f.abs();
        }
        if same {
            return Err(StudyError::Infeasible(format!(
                "{target_text} is the same ({}) at both bounds of {} and between: it does not depend on {}, so no value of it is optimal; drop --over {}",
                crate::report::num(best_f),
                v.path,
                v.path,
                v.path
            )));
        }
    }
    // An interior value must be a maximum along each input: no better value a little to
    // either side (the search may otherwise stop on a slope it could not resolve).
    for (i, v) in vars.iter().enumerate() {
        if on_bound[i].is_some() {
            continue;
        }
        let h = 1e-4 * (v.hi - v.lo);
        for side in [-h, h] {
            let mut x = best_x.clone();
            x[i] = (x[i] + side).clamp(v.lo, v.hi);
            let fx = f(&x)?;
            if fx == f64::NEG_INFINITY {
                // No value there: the best point is where the valid region ends (or the process
                // limit T_max), not a maximum with a slope changing sign.
                let why = evaluate(study, vars, &x, target_text, min_conversion, opts)?;
                on_bound[i] = Some(if why == Err(NoValue::OverTemperatureLimit) {
                    Bound::TemperatureLimit
                } else {
                    Bound::ValidRegion
                });
            } else if fx > best_f + 1e-9 * best_f.abs() {
                return Err(StudyError::Infeasible(format!(
                    "the search ended at {} = {} {} where {target_text} still rises toward {} = {} {}: no verified maximum",
                    v.path, best_x[i], v.unit, v.path, x[i], v.unit
                )));
            }
        }
    }
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
