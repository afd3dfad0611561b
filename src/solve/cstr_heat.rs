//! Every steady state of a CSTR with an energy balance, its stability, and the ignition and
//! extinction points along the feed and coolant temperatures.
//!
//! The steady states solve (Fogler, Elements of Chemical Reaction Engineering, ch. 12;
//! Levenspiel, Chemical Reaction Engineering, ch. 9; both from memory)
//!
//! ```text
//! F_j0 − F_j + V Σ_i ν_ij r_i(C, T) = 0
//! UA (T_a − T) − Σ_j F_j0 ∫_{T0}^{T} Cp_j dT + V Σ_i r_i (−ΔH_i(T)) = 0
//! ```
//!
//! with C from the reactor temperature (liquid C = F/v0; ideal gas C = P/(R T) F/F_T) and
//! ΔH_i(T), Cp_j the energy balance's own ([`crate::reactor::Energy`]; c_v v0 (T − T0) with a
//! liquid mixture heat capacity). For each T the species equations are an isothermal CSTR at
//! T; with its outlet F(T), the heat generated is G(T) = V Σ_i r_i (−ΔH_i(T)) and the heat
//! removed R(T) = Σ_j F_j0 ∫_{T0}^{T} Cp_j dT + UA (T − T_a), and the steady states are the
//! zeros of D(T) = G(T) − R(T) (van Heerden, Ind. Eng. Chem. 45, 1953, from memory).
//!
//! **Search.** T is scanned on a grid of [`SCAN_STEP`] from the lower of T0 and T_a (T0 when
//! adiabatic) up, each isothermal solve starting from the previous one's extents (continuation
//! in T), and down from there when needed. Upwards the scan stops, at least 5 steps beyond the
//! higher of T0 and T_a, where D < 0 and G has saturated, |dG/dT| ≤ 0.01 dR/dT (the reactions
//! are complete, or frozen: no further crossing unless G steepens again), or where R > 0 and
//! every reaction is irreversible and endothermic (G ≤ 0 < R beyond); at the latest
//! [`CEILING`] above. Downwards it stops where D > 0 and G has saturated, or where R < 0 and
//! every reaction is irreversible and exothermic (G ≥ 0 > R below); at the latest at 0.1 of the
//! start. Each sign change of D between grid points is refined by Brent's method to 1e-12 of T,
//! then polished by Newton on the whole (F, T) system with its analytic Jacobian. A pair of
//! zeros closer than one step (near a turning point) is caught by the tangency function
//! S(T) = dD/dT along the isothermal outlet, S = ∂E/∂T − ∂E/∂F (∂G_s/∂F)⁻¹ ∂G_s/∂T (the
//! Schur complement of the full Jacobian), whose zeros between grid points are refined too: D
//! at a zero of S of the other sign than at the ends brackets two states.
//!
//! **What can be missed** (docs/methods.md): states beyond where the scan stopped (a second,
//! more strongly activated reaction that makes G rise again above the saturation point, or
//! more than [`CEILING`] above the feed and coolant); two states within one step of each other
//! whose S does not change sign between grid points; and, where the isothermal CSTR itself has
//! several steady states at one T (substrate inhibition, autocatalysis), the others than the one
//! followed by continuation in T.
//!
//! **Stability.** The transient CSTR: for a liquid (constant v0 and density) the holdup is
//! N_j = τ F_j and its heat capacity Σ_j N_j Cp_j = τ Σ_j F_j Cp_j (or c_v V), so
//! τ d(F, T)/dt = (G_s, E / Σ_j F_j Cp_j)·... and the Jacobian is J / τ row by row, with J the
//! Jacobian of the steady-state residual (species rows as they are, the energy row divided by
//! Σ_j F_j Cp_j). For a gas the same form is used with τ = V P/(R T F_T) at the state
//! (a simplification: the outflow's response to the holdup's expansion is neglected).
//! Stable when every eigenvalue has a negative real part (Lyapunov's indirect method, common
//! practice); the middle state of three is a saddle.
//!
//! **Ignition and extinction.** G(T) does not depend on T0 or T_a (at fixed feed molar flows
//! and, for a liquid, fixed v0), so along the steady-state curve the feed temperature is a
//! function of the reactor temperature, Σ_j F_j0 H_j(T0) = Σ_j F_j0 H_j(T) + UA (T − T_a) − G(T),
//! and so is the coolant temperature, T_a = T + (Σ_j F_j0 ∫_{T0}^{T} Cp_j dT − G(T))/UA. Both
//! have their turning points where dG/dT = dR/dT, i.e. S(T) = 0: a local maximum of the
//! parameter (S from − to + as T rises) is an ignition point, a local minimum an extinction
//! point.

use super::SolveError;
use super::newton::{self, Extents, NewtonStats};
use super::steady::{SteadyState, SteadyStates};
use crate::model::{Heat, Network, Phase};
use crate::reactor::{Balance, Energy};
use crate::units::GAS_CONSTANT;
use nalgebra::{DMatrix, DVector};

/// Temperature step of the scan, K.
pub const SCAN_STEP: f64 = 0.5;
/// How far above the higher of T0 and T_a the scan goes at most, K.
pub const CEILING: f64 = 3000.0;
/// G counts as saturated where |dG/dT| is below this fraction of dR/dT.
const SATURATED: f64 = 0.01;

/// The heat-generated and heat-removed curves on the scan grid (SI: K, W).
#[derive(Debug, Clone, serde::Serialize)]
pub struct HeatCurves {
    pub temperature: Vec<f64>,
    pub generated: Vec<f64>,
    pub removed: Vec<f64>,
}

/// An ignition or extinction point along a parameter.
#[derive(Debug, Clone, serde::Serialize)]
pub struct TurningPoint {
    /// "ignition" (the lower branch ends as the parameter rises past it) or "extinction" (the
    /// upper branch ends as it falls below it).
    pub kind: &'static str,
    /// "feed temperature" or "coolant temperature".
    pub parameter: &'static str,
    /// The parameter's value there, K.
    pub value_k: f64,
    /// The reactor temperature at the turning point, K.
    pub reactor_temperature_k: f64,
    /// The key conversion there.
    pub conversion: f64,
}

/// What the search did and found besides the states.
#[derive(Debug, Clone, serde::Serialize)]
pub struct HeatSearch {
    /// The temperatures scanned, K.
    pub window_k: (f64, f64),
    pub step_k: f64,
    pub turning_points: Vec<TurningPoint>,
    /// G(T) and R(T) on the grid, for the plot.
    #[serde(skip)]
    pub curves: HeatCurves,
    /// Reactor temperature of each state (same order as the states), K.
    #[serde(skip)]
    pub temperatures: Vec<f64>,
}

/// One point of the scan: the isothermal outlet at T and the heat terms.
#[derive(Debug, Clone)]
struct Point {
    t: f64,
    f: Vec<f64>,
    xi: Vec<f64>,
    /// G(T), R(T), W.
    g: f64,
    r: f64,
    /// dD/dT along the isothermal outlet, W/K (NaN where the species Jacobian is singular).
    s: f64,
    /// dR/dT, W/K.
    rp: f64,
}

impl Point {
    fn d(&self) -> f64 {
        self.g - self.r
    }
}

struct Search<'a> {
    net: &'a Network,
    b: &'a Balance,
    e: &'a Energy,
    iso: Network,
    volume: f64,
    tol: f64,
    floor: Vec<f64>,
    ua: f64,
    ta: f64,
    newton_iterations: std::cell::Cell<usize>,
}

impl Search<'_> {
    /// The isothermal outlet at T (flows, extents), from `guess` (extents) when given.
    fn species_at(&self, t: f64, guess: Option<&[f64]>) -> Result<(Vec<f64>, Vec<f64>), String> {
        let mut n = self.iso.clone();
        n.feed.temperature = t;
        let mut b = Balance::new(&n)?;
        b.rates.set_floor(&self.floor);
        let ext = Extents::new(&n, &b);
        let limit = -1e-9 * n.feed.total();
        if let Some(g) = guess {
            let mut xi = g.to_vec();
            if let Ok(it) = newton::newton(&ext, self.volume, &mut xi, self.tol) {
                self.add_iterations(it);
                let mut f = vec![0.0; n.species.len()];
                ext.flows(&xi, &mut f);
                if f.iter().all(|v| *v >= limit) {
                    return Ok((f, xi));
                }
            }
        }
        let (f, stats) = newton::solve_extents(&ext, self.volume, self.tol)
            .map_err(|e| format!("the isothermal outlet at T = {t:.6} K: {e}"))?;
        self.add_iterations(stats.iterations);
        let xi = ext.extents_of(&f);
        Ok((f, xi))
    }

    fn add_iterations(&self, it: usize) {
        self.newton_iterations
            .set(self.newton_iterations.get() + it);
    }

    /// (G, R, the residual of the whole system, its Jacobian) at flows F and temperature T.
    fn system(&self, f: &[f64], t: f64) -> (f64, f64, Vec<f64>, DMatrix<f64>) {
        system_at(
            self.net,
            self.b,
            self.e,
            self.volume,
            self.ua,
            self.ta,
            f,
            t,
        )
    }

    fn point(&self, t: f64, guess: Option<&[f64]>) -> Result<Point, String> {
        let (f, xi) = self.species_at(t, guess)?;
        let (g, r, _, jm) = self.system(&f, t);
        let n = f.len();
        let (_, slope) = self.e.feed_sensible(&self.net.feed.amounts, t);
        if !(g.is_finite() && r.is_finite()) {
            return Err(format!("the heat generated is not finite at T = {t:.6} K"));
        }
        Ok(Point {
            t,
            f,
            xi,
            g,
            r,
            s: schur(&jm, n),
            rp: slope + self.ua,
        })
    }

    /// Whether G has saturated at p: |dG/dT| ≤ 0.01 dR/dT.
    fn saturated(&self, p: &Point) -> bool {
        p.s.is_finite() && (p.s + p.rp).abs() <= SATURATED * p.rp
    }

    /// Brent's method on `value` over [a, b] (values of opposite signs), each evaluation
    /// starting from the extents of the nearer bracket end. Returns the point at the root.
    fn refine(&self, a: &Point, b: &Point, value: fn(&Point) -> f64) -> Result<Point, String> {
        let (mut pa, mut pb) = (a.clone(), b.clone());
        let (mut fa, mut fb) = (value(&pa), value(&pb));
        if fa == 0.0 {
            return Ok(pa);
        }
        if fb == 0.0 {
            return Ok(pb);
        }
        // Brent (1973), in the usual form (Press et al., Numerical Recipes, ch. 9; from memory).
        let (mut xa, mut xb) = (pa.t, pb.t);
        let (mut xc, mut fc) = (xa, fa);
        let mut pc = pa.clone();
        let mut d = xb - xa;
        let mut e = d;
        for _ in 0..200 {
            if fb.signum() == fc.signum() {
                xc = xa;
                fc = fa;
                pc = pa.clone();
                d = xb - xa;
                e = d;
            }
            if fc.abs() < fb.abs() {
                std::mem::swap(&mut pa, &mut pb);
                xa = xb;
                xb = xc;
                xc = xa;
                fa = fb;
                fb = fc;
                fc = fa;
                pb = pc.clone();
                pc = pa.clone();
                // After the rotation: a = old b, b = old c, c = old b.
            }
            let tol = 1e-12 * xb.abs();
            let m = 0.5 * (xc - xb);
            if m.abs() <= tol || fb == 0.0 {
                return Ok(pb);
            }
            if e.abs() >= tol && fa.abs() > fb.abs() {
                let s = fb / fa;
                let (mut p, mut q);
                if xa == xc {
                    p = 2.0 * m * s;
                    q = 1.0 - s;
                } else {
                    let qq = fa / fc;
                    let r = fb / fc;
                    p = s * (2.0 * m * qq * (qq - r) - (xb - xa) * (r - 1.0));
                    q = (qq - 1.0) * (r - 1.0) * (s - 1.0);
                }
                if p > 0.0 {
                    q = -q;
                } else {
                    p = -p;
                }
                if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                    e = d;
                    d = p / q;
                } else {
                    d = m;
                    e = m;
                }
            } else {
                d = m;
                e = m;
            }
            xa = xb;
            fa = fb;
            pa = pb.clone();
            xb += if d.abs() > tol { d } else { tol.copysign(m) };
            let guess = if (xb - pa.t).abs() <= (xb - pc.t).abs() {
                pa.xi.clone()
            } else {
                pc.xi.clone()
            };
            pb = self.point(xb, Some(&guess))?;
            fb = value(&pb);
        }
        Ok(pb)
    }

    /// Newton on the whole (F, T) system from p; returns (F, T, the last step's largest flow
    /// change) or None when it does not settle (the Brent point then stands).
    fn polish(&self, p: &Point) -> Option<(Vec<f64>, f64, f64)> {
        let n = p.f.len();
        let mut f = p.f.clone();
        let mut t = p.t;
        for _ in 0..12 {
            let (_, _, res, jm) = self.system(&f, t);
            let rhs = DVector::from_iterator(n + 1, res.iter().map(|v| -v));
            let dz = jm.lu().solve(&rhs)?;
            if dz.iter().any(|v| !v.is_finite()) {
                return None;
            }
            for j in 0..n {
                f[j] += dz[j];
            }
            t += dz[n];
            self.add_iterations(1);
            let last = (0..n).fold(0.0, |m: f64, j| m.max(dz[j].abs()));
            if (t - p.t).abs() > 1e-3 * p.t.max(1.0) {
                return None;
            }
            if dz[n].abs() <= 1e-12 * t && last <= self.tol {
                let limit = -1e-9 * self.net.feed.total();
                return f.iter().all(|v| *v >= limit).then_some((f, t, last));
            }
        }
        None
    }
}

/// S = J_nn − J_n,:n (J_:n,:n)⁻¹ J_:n,n: dD/dT along the isothermal outlet; NaN when the
/// species block is singular.
/// (G, R, the residual of the whole steady-state system, its Jacobian in (F, T)) at flows F
/// and temperature T: the species rows F_j0 − F_j + V Σ_i ν_ij r_i and the energy row
/// G(T) − R(T) of the module's equations.
#[allow(clippy::too_many_arguments)]
fn system_at(
    net: &Network,
    b: &Balance,
    e: &Energy,
    volume: f64,
    ua: f64,
    ta: f64,
    f: &[f64],
    t: f64,
) -> (f64, f64, Vec<f64>, DMatrix<f64>) {
    let n = f.len();
    let v = volume;
    let mut y = f.to_vec();
    y.push(t);
    let mut d = vec![0.0; n + 1];
    b.rhs_at(0.0, &y, &mut d);
    let mut trip = Vec::new();
    b.jacobian_at(0.0, &y, &mut trip);
    let mut gq = vec![0.0; n + 1];
    let q = b
        .heat_release(&y, Some(&mut gq))
        .expect("the balance has an energy balance");
    let (sens, slope) = e.feed_sensible(&net.feed.amounts, t);
    let g = v * q;
    let r = sens + ua * (t - ta);
    let mut res = vec![0.0; n + 1];
    for j in 0..n {
        res[j] = net.feed.amounts[j] - f[j] + v * d[j];
    }
    res[n] = g - r;
    let mut jm = DMatrix::<f64>::zeros(n + 1, n + 1);
    for &(row, col, val) in &trip {
        if row < n {
            jm[(row, col)] += v * val;
        }
    }
    for j in 0..n {
        jm[(j, j)] -= 1.0;
        jm[(n, j)] = v * gq[j];
    }
    jm[(n, n)] = v * gq[n] - slope - ua;
    (g, r, res, jm)
}

/// The residual of the steady-state balances (species rows mol/s, energy row W) of the
/// network's CSTR at `volume`, flows `f` and temperature `t`, and its Jacobian in (F, T): the
/// system whose zeros [`find_all`] finds, for the implicit-function derivative of a state.
pub(crate) fn steady_residual(
    net: &Network,
    b: &Balance,
    volume: f64,
    f: &[f64],
    t: f64,
) -> Result<(Vec<f64>, DMatrix<f64>), SolveError> {
    let (e, ta) = energy_and_coolant(b)?;
    let (_, _, res, jm) = system_at(net, b, e, volume, e.ua(), ta, f, t);
    Ok((res, jm))
}

/// The CSTR's energy balance and its coolant's constant temperature; refused without either.
fn energy_and_coolant(b: &Balance) -> Result<(&Energy, f64), SolveError> {
    let e = b
        .energy()
        .ok_or_else(|| SolveError::Setup("the CSTR has no energy balance".into()))?;
    let ta = e.constant_coolant().ok_or_else(|| {
        SolveError::Setup(
            "a CSTR exchanges heat with a coolant at a constant temperature only".into(),
        )
    })?;
    Ok((e, ta))
}

fn schur(jm: &DMatrix<f64>, n: usize) -> f64 {
    let a = jm.view((0, 0), (n, n)).into_owned();
    let b = jm.view((0, n), (n, 1)).into_owned();
    match a.lu().solve(&b) {
        Some(x) => {
            let mut s = jm[(n, n)];
            for k in 0..n {
                s -= jm[(n, k)] * x[(k, 0)];
            }
            if s.is_finite() { s } else { f64::NAN }
        }
        None => f64::NAN,
    }
}

/// Whether every reaction is irreversible and releases (sign −1) or takes up (sign +1) heat at
/// T.
fn all_of_sign(net: &Network, e: &Energy, t: f64, sign: f64) -> bool {
    net.reactions
        .iter()
        .enumerate()
        .all(|(i, r)| !r.reversible && e.reaction_enthalpy(i, &r.net, t) * sign > 0.0)
}

/// The steady states of a CSTR with an energy balance (`b` has T as its state after the
/// species), in order of rising key conversion, with what the search found besides and the
/// heat-capacity range warnings.
pub fn find_all(
    net: &Network,
    b: &Balance,
    volume: f64,
    tol: f64,
) -> Result<(SteadyStates, HeatSearch, Vec<String>), SolveError> {
    let (e, ta) = energy_and_coolant(b)?;
    let mut iso = net.clone();
    iso.heat = Heat::Isothermal;
    let s = Search {
        net,
        b,
        e,
        iso,
        volume,
        tol,
        floor: b.rates.floor().to_vec(),
        ua: e.ua(),
        ta,
        newton_iterations: std::cell::Cell::new(0),
    };
    let t0 = net.feed.temperature;
    let (lo0, hi0) = if s.ua > 0.0 {
        (t0.min(ta), t0.max(ta))
    } else {
        (t0, t0)
    };
    let h = SCAN_STEP;
    let fail = |m: String| SolveError::Unphysical(format!("CSTR steady states: {m}"));
    let mut note: Option<String> = None;
    // Downwards from lo0.
    let start = s.point(lo0, None).map_err(fail)?;
    let mut below: Vec<Point> = Vec::new();
    {
        let floor_t = 0.1 * lo0;
        let mut prev = start.clone();
        let mut k = 1;
        loop {
            let settled = k > 5
                && ((prev.d() > 0.0 && s.saturated(&prev))
                    || (prev.r < 0.0 && all_of_sign(net, e, prev.t, -1.0)));
            if settled {
                break;
            }
            let t = lo0 - k as f64 * h;
            if t < floor_t {
                if prev.d() < 0.0 {
                    note = Some(format!(
                        "the scan stopped at its floor T = {:.1} K with the heat removed still above the heat generated; a colder state may exist",
                        prev.t
                    ));
                }
                break;
            }
            let p = s.point(t, Some(&prev.xi)).map_err(fail)?;
            below.push(p.clone());
            prev = p;
            k += 1;
        }
    }
    below.reverse();
    let mut grid = below;
    grid.push(start.clone());
    {
        let ceiling = hi0 + CEILING;
        let mut prev = start;
        let mut k = 1;
        loop {
            let settled = prev.t >= hi0 + 5.0 * h
                && ((prev.d() < 0.0 && s.saturated(&prev))
                    || (prev.r > 0.0 && all_of_sign(net, e, prev.t, 1.0)));
            if settled {
                break;
            }
            let t = lo0 + k as f64 * h;
            if t > ceiling {
                if prev.d() > 0.0 {
                    note = Some(format!(
                        "the heat generated still exceeds the heat removed at T = {:.1} K, the top of the scan: the reactor would run away beyond it (no steady state found there)",
                        prev.t
                    ));
                }
                break;
            }
            let p = s.point(t, Some(&prev.xi)).map_err(fail)?;
            grid.push(p.clone());
            prev = p;
            k += 1;
        }
    }
    // Roots of D and of S between grid points.
    let mut roots: Vec<Point> = Vec::new();
    let mut tangents: Vec<(Point, f64)> = Vec::new();
    for w in grid.windows(2) {
        let (a, c) = (&w[0], &w[1]);
        if a.d() == 0.0 {
            roots.push(a.clone());
        }
        let mut tangent = None;
        if a.s.is_finite() && c.s.is_finite() && a.s.signum() != c.s.signum() {
            let p = s.refine(a, c, |p| p.s).map_err(fail)?;
            tangents.push((p.clone(), c.s - a.s));
            tangent = Some(p);
        }
        if a.d().signum() != c.d().signum() && c.d() != 0.0 {
            roots.push(s.refine(a, c, Point::d).map_err(fail)?);
        } else if let Some(p) = tangent
            && a.d() != 0.0
            && p.d().signum() != a.d().signum()
        {
            // Two states within one step: one on each side of the tangency.
            roots.push(s.refine(a, &p, Point::d).map_err(fail)?);
            roots.push(s.refine(&p, c, Point::d).map_err(fail)?);
        }
    }
    if let Some(last) = grid.last()
        && last.d() == 0.0
    {
        roots.push(last.clone());
    }
    roots.sort_by(|a, c| a.t.total_cmp(&c.t));
    roots.dedup_by(|a, c| (a.t - c.t).abs() <= 1e-9 * c.t);
    if roots.is_empty() {
        return Err(SolveError::Unphysical(format!(
            "no steady state of the CSTR was found between T = {:.1} K and {:.1} K: {}",
            grid[0].t,
            grid[grid.len() - 1].t,
            note.as_deref()
                .unwrap_or("the heat generated and removed do not balance in that range")
        )));
    }
    let key = net.key;
    let fk0 = net.feed.amounts[key];
    let conversion = |f: &[f64]| if fk0 > 0.0 { (fk0 - f[key]) / fk0 } else { 0.0 };
    let mut states: Vec<(SteadyState, f64)> = Vec::new();
    for p in &roots {
        let (f, t, step) = s.polish(p).unwrap_or((p.f.clone(), p.t, f64::NAN));
        let (_, _, res, jm) = s.system(&f, t);
        let n = f.len();
        let residual = res[..n].iter().fold(0.0, |m: f64, v| m.max(v.abs()));
        let growth = max_eigenvalue_real(net, e, volume, &f, t, &jm);
        let step = if step.is_finite() {
            step
        } else {
            newton_step_of(&jm, &res, n)
        };
        states.push((
            SteadyState {
                conversion: conversion(&f),
                stable: growth < 0.0,
                max_eigenvalue_real: growth,
                residual,
                newton_step: step,
                temperature: Some(t),
                flows: f,
            },
            t,
        ));
    }
    states.sort_by(|a, c| a.0.conversion.total_cmp(&c.0.conversion));
    // Turning points along T0 and T_a.
    let mut turning = Vec::new();
    for (p, rise) in &tangents {
        // S from − to + as T rises: the parameter has a maximum there (ignition).
        let kind = if *rise > 0.0 {
            "ignition"
        } else {
            "extinction"
        };
        let target = {
            let (sens, _) = e.feed_sensible(&net.feed.amounts, p.t);
            sens + s.ua * (p.t - ta) - p.g
        };
        if let Some(t0_star) = feed_temperature_for(e, &net.feed.amounts, target, t0) {
            turning.push(TurningPoint {
                kind,
                parameter: "feed temperature",
                value_k: t0_star,
                reactor_temperature_k: p.t,
                conversion: conversion(&p.f),
            });
        }
        if s.ua > 0.0 {
            let (sens, _) = e.feed_sensible(&net.feed.amounts, p.t);
            let ta_star = p.t + (sens - p.g) / s.ua;
            if ta_star > 0.0 {
                turning.push(TurningPoint {
                    kind,
                    parameter: "coolant temperature",
                    value_k: ta_star,
                    reactor_temperature_k: p.t,
                    conversion: conversion(&p.f),
                });
            }
        }
    }
    let mut warnings = Vec::new();
    for (j, sp) in net.species.iter().enumerate() {
        let out: Vec<f64> = states
            .iter()
            .map(|s| s.1)
            .filter(|t| e.out_of_range(*t).any(|(k, _)| k == j))
            .collect();
        if let Some((_, (lo, hi))) = out
            .first()
            .and_then(|t| e.out_of_range(*t).find(|(k, _)| *k == j))
        {
            warnings.push(format!(
                "the heat capacity of `{}` is used outside its range {lo}..{hi} K at the steady state{} T = {} K (the polynomial is extrapolated)",
                sp.name,
                if out.len() > 1 { "s" } else { "" },
                out.iter()
                    .map(|t| format!("{t:.1}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
    }
    let search = HeatSearch {
        window_k: (grid[0].t, grid[grid.len() - 1].t),
        step_k: h,
        turning_points: turning,
        curves: HeatCurves {
            temperature: grid.iter().map(|p| p.t).collect(),
            generated: grid.iter().map(|p| p.g).collect(),
            removed: grid.iter().map(|p| p.r).collect(),
        },
        temperatures: states.iter().map(|s| s.1).collect(),
    };
    let stats = NewtonStats {
        iterations: s.newton_iterations.get(),
        ..Default::default()
    };
    Ok((
        SteadyStates {
            states: states.into_iter().map(|s| s.0).collect(),
            note,
            stats,
        },
        search,
        warnings,
    ))
}

/// The largest flow change of one Newton step on the whole system at its residual.
fn newton_step_of(jm: &DMatrix<f64>, res: &[f64], n: usize) -> f64 {
    let rhs = DVector::from_iterator(n + 1, res.iter().map(|v| -v));
    match jm.clone().lu().solve(&rhs) {
        Some(dz) => (0..n).fold(0.0, |m: f64, j| m.max(dz[j].abs())),
        None => f64::NAN,
    }
}

/// The feed temperature T0' at which Σ_j F_j0 ∫_{T0}^{T0'} Cp_j dT = `target` (Newton on a
/// monotone function), or None when it is not physical.
fn feed_temperature_for(e: &Energy, f0: &[f64], target: f64, t0: f64) -> Option<f64> {
    let mut x = t0;
    for _ in 0..100 {
        let (q, dq) = e.feed_sensible(f0, x);
        if !(dq > 0.0) {
            return None;
        }
        let dx = (target - q) / dq;
        x += dx.clamp(-0.5 * x, 0.5 * x.max(1.0) + 1000.0);
        if !(x > 0.0) {
            return None;
        }
        if dx.abs() <= 1e-12 * x {
            return Some(x);
        }
    }
    None
}

/// The largest real part of the eigenvalues of the transient CSTR's Jacobian at (F, T), 1/s
/// (module notes): the residual's Jacobian `jm` with the energy row divided by the heat
/// capacity rate Σ_j F_j Cp_j(T) (or c_v v0), all over the residence time τ; +∞ when it
/// cannot be computed (reported unstable rather than stable).
fn max_eigenvalue_real(
    net: &Network,
    e: &Energy,
    volume: f64,
    f: &[f64],
    t: f64,
    jm: &DMatrix<f64>,
) -> f64 {
    let n = f.len();
    let tau = match net.phase {
        Phase::Liquid => volume / net.feed.volumetric,
        Phase::Gas => {
            let ft: f64 = f.iter().sum();
            volume * net.feed.pressure / (GAS_CONSTANT * t * ft)
        }
    };
    let cap = e.flow_capacity(f, t);
    if !(tau > 0.0 && cap > 0.0) {
        return f64::INFINITY;
    }
    let mut m = jm.clone();
    for k in 0..=n {
        m[(n, k)] /= cap;
    }
    m /= tau;
    if m.iter().any(|v| !v.is_finite()) {
        return f64::INFINITY;
    }
    match nalgebra::Schur::try_new(m, 1e-14, 10_000) {
        Some(sch) => sch
            .complex_eigenvalues()
            .iter()
            .fold(f64::NEG_INFINITY, |a, z| a.max(z.re)),
        None => f64::INFINITY,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::load_str;

    const CP: &str = "name: t\nspecies: {A: {cp: 150 J/(mol*K)}, B: {cp: 90 J/(mol*K)}, C: {cp: 120 J/(mol*K)}, D: {cp: 60 J/(mol*K)}, E: {cp: 40 J/(mol*K)}, I: {cp: 30 J/(mol*K)}}\n";
    const REACTIONS: &str = "reactions:\n  - {id: r1, stoich: A + B -> 2 C, rate: {k: 1e-3 m3/(mol*s), Ea: 60 kJ/mol, T_ref: 450 K, dH: -90 kJ/mol}}\n  - {id: r2, stoich: C <=> D, rate: {k: 0.2 1/s, Ea: 40 kJ/mol, K_eq: 3, dH: -30 kJ/mol}}\n  - {id: r3, stoich: A -> D + E, rate: {law: hyperbolic, k: 0.05 1/s, Ea: 80 kJ/mol, dH: 20 kJ/mol, adsorption: {D: {K: 0.01 m3/mol, dH: -10 kJ/mol}}}}\n";

    /// The Jacobian of the whole (F, T) residual against central finite differences (common
    /// practice), for a liquid and a gas CSTR.
    #[test]
    fn full_jacobian_matches_finite_differences() {
        for text in [
            format!(
                "{CP}phase: liquid\n{REACTIONS}feed: {{T: 300 K, volumetric: 2 L/s, flows: {{A: 1 mol/s, B: 1 mol/s}}}}\nreactor: {{type: cstr, volume: 1 m3, heat: {{UA: 200 W/K, coolant: {{T: 310 K}}}}}}\n"
            ),
            format!(
                "{CP}phase: gas\n{REACTIONS}feed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, B: 1 mol/s, I: 1 mol/s}}}}\nreactor: {{type: cstr, volume: 1 m3, heat: {{UA: 50 W/K, coolant: {{T: 480 K}}}}}}\n"
            ),
        ] {
            let net = load_str(&text, "test", &[]).unwrap();
            let b = Balance::new(&net).unwrap();
            let e = b.energy().unwrap();
            let mut iso = net.clone();
            iso.heat = Heat::Isothermal;
            let s = Search {
                net: &net,
                b: &b,
                e,
                iso,
                volume: 1.0,
                tol: 1e-12,
                floor: b.rates.floor().to_vec(),
                ua: e.ua(),
                ta: e.constant_coolant().unwrap(),
                newton_iterations: std::cell::Cell::new(0),
            };
            let f = [0.8, 0.5, 0.3, 0.2, 0.1, 1.0];
            // Near the feed temperatures, where V r is of the order of the flows (far above,
            // V r ≫ F and the differences of the residual lose the flows to round-off).
            let t = if net.phase == Phase::Gas {
                480.0
            } else {
                310.0
            };
            let n = f.len();
            let (g, _, _, jm) = s.system(&f, t);
            let mut z: Vec<f64> = f.to_vec();
            // G is the heat release of the tube's energy balance at the same state:
            // Σ F Cp dT/dV = UA (T_a − T) + q.
            let mut d = vec![0.0; n + 1];
            b.rhs_at(
                0.0,
                &{
                    let mut y = f.to_vec();
                    y.push(t);
                    y
                },
                &mut d,
            );
            let q = e.flow_capacity(&f, t) * d[n] - s.ua * (s.ta - t);
            assert!(
                (g - q).abs() <= 1e-9 * g.abs().max(q.abs()),
                "G = {g}, q = {q}"
            );
            z.push(t);
            for k in 0..=n {
                let h = 1e-6 * z[k].abs().max(1e-3);
                let (mut zp, mut zm) = (z.clone(), z.clone());
                zp[k] += h;
                zm[k] -= h;
                let (_, _, rp, _) = s.system(&zp[..n], zp[n]);
                let (_, _, rm, _) = s.system(&zm[..n], zm[n]);
                for r in 0..=n {
                    let fd = (rp[r] - rm[r]) / (2.0 * h);
                    let scale = fd.abs().max(jm[(r, k)].abs()).max(1e-8);
                    assert!(
                        (fd - jm[(r, k)]).abs() / scale < 1e-5,
                        "{}: J[{r}][{k}] = {} vs fd {fd}",
                        net.phase == Phase::Gas,
                        jm[(r, k)]
                    );
                }
            }
        }
    }
}
