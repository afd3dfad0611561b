//! `rxnet compare`: alternative schemes and reactor types side by side.
//!
//! A flow study becomes another flow reactor at the same volume; a batch at the same space
//! time: t = τ = V/v0, charge N_j0 = F_j0 τ in a vessel of volume V (constant pressure for a
//! gas, matching the isobaric flow reactor). A batch becomes a flow reactor with v0 = V/t and
//! F_j0 = N_j0/t. A packed bed's rates are per catalyst mass, so it is compared only as itself.
//! With `--at-conversion X` every entry is resized to reach that conversion, so yields and
//! selectivities are compared at equal conversion.

use super::optimize::{bisect_ln, optimize_size};
use super::study::StudyError;
use super::target::Target;
use crate::model::{BatchMode, Network, Phase, Reactor};
use crate::reactor::Balance;
use crate::solve::{self, SolveOptions, newton};

/// A reactor type to screen.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Pfr,
    Cstr,
    Batch,
}

impl Kind {
    pub fn parse(s: &str) -> Result<Kind, String> {
        match s.trim() {
            "pfr" => Ok(Kind::Pfr),
            "cstr" => Ok(Kind::Cstr),
            "batch" => Ok(Kind::Batch),
            other => Err(format!(
                "`{other}` is not a reactor type to screen (pfr, cstr, batch)"
            )),
        }
    }
}

/// The study with its reactor replaced by `kind` (see the module notes).
pub fn as_reactor(net: &Network, kind: Kind) -> Result<Network, String> {
    let mut n = net.clone();
    match (&net.reactor, kind) {
        (Reactor::Pbr { .. }, _) => {
            return Err("a packed bed (rates per catalyst mass) is compared only as itself".into());
        }
        (Reactor::Pfr { volume } | Reactor::Cstr { volume }, Kind::Pfr) => {
            n.reactor = Reactor::Pfr { volume: *volume }
        }
        (Reactor::Pfr { volume } | Reactor::Cstr { volume }, Kind::Cstr) => {
            n.reactor = Reactor::Cstr { volume: *volume }
        }
        (Reactor::Pfr { volume } | Reactor::Cstr { volume }, Kind::Batch) => {
            let tau = volume / net.feed.volumetric;
            n.feed.amounts = net.feed.amounts.iter().map(|f| f * tau).collect();
            n.feed.volumetric = *volume;
            n.reactor = Reactor::Batch {
                volume: *volume,
                time: tau,
                mode: if net.phase == Phase::Gas {
                    BatchMode::ConstantPressure
                } else {
                    BatchMode::ConstantVolume
                },
            };
        }
        (Reactor::Batch { .. }, Kind::Batch) => {}
        (Reactor::Batch { volume, time, .. }, k) => {
            let v0 = net.feed.volumetric / time;
            n.feed.amounts = net.feed.amounts.iter().map(|a| a / time).collect();
            n.feed.volumetric = v0;
            let volume = if *volume > 0.0 {
                *volume
            } else {
                net.feed.volumetric
            };
            n.reactor = if k == Kind::Pfr {
                Reactor::Pfr { volume }
            } else {
                Reactor::Cstr { volume }
            };
        }
    }
    Ok(n)
}

/// How far a reactor can take the key conversion.
#[derive(Debug, Clone, PartialEq)]
pub enum Reach {
    /// The size (V, W or t, SI) at which the conversion is reached.
    Size(f64),
    /// The conversion is never reached: it approaches `x_max` as the size grows without bound.
    Beyond {
        x_max: f64,
        /// Why: "equilibrium" (a reversible reaction stops) or the co-reactant that runs out.
        reason: String,
    },
}

/// Largest number of decades the size is grown by while looking for a conversion.
const DECADES: usize = 40;

/// Why the conversion stops at the end state `y`: a reactant of the key's reactions (other
/// than the key) that is used up, else equilibrium (a reversible reaction), else no reaction.
fn limit_reason(net: &Network, y: &[f64]) -> String {
    let a = net.key;
    let total = net.feed.total();
    for r in &net.reactions {
        if r.nu(a) >= 0.0 {
            continue;
        }
        for t in &r.reactants {
            if t.species != a && y[t.species] <= 1e-9 * total {
                return format!("{} runs out", net.species[t.species].name);
            }
        }
    }
    if net.reactions.iter().any(|r| r.reversible) {
        "equilibrium".into()
    } else {
        "the reactions stop".into()
    }
}

/// The size at which the key conversion reaches `x` in this reactor, or the most it can reach.
///
/// PFR, packed bed, batch: one integration from the inlet, stopped where X − x changes sign,
/// extended tenfold at a time beyond the study's size. The conversion counts as settled (X_eq,
/// or the co-reactant exhausted) when the amounts change by less than 1e-10 of the feed over
/// another tenfold length (max_j |dF_j/dx| · x ≤ 1e-11 F_total).
/// CSTR: X(V) by steady-state solves at V = size · 10^k until it passes x, then bisection on
/// ln V to 1e-14; settled when a tenfold V changes X by less than 1e-10, X_eq then extrapolated
/// from the 1/V tail, X_eq ≈ X(10V) + (X(10V) − X(V))/9.
pub fn reach_conversion(net: &Network, x: f64, opts: &SolveOptions) -> Result<Reach, StudyError> {
    let b = Balance::new(net).map_err(StudyError::Invalid)?;
    let a = net.key;
    let f0 = net.feed.amounts[a];
    if f0 <= 0.0 {
        return Err(StudyError::Invalid(format!(
            "the key reactant {} is not fed",
            net.species[a].name
        )));
    }
    let conv = |y: &[f64]| (f0 - y[a]) / f0;
    let total = net.feed.total();
    let size = net.size();
    if let Reactor::Cstr { .. } = net.reactor {
        let at = |v: f64| -> Result<(f64, Vec<f64>), StudyError> {
            let tol = super::optimize::cstr_tolerance(net, &b, v);
            let (f, _) = newton::solve_cstr(&b, &net.feed.amounts, v, tol)
                .map_err(|e| StudyError::Solve(e.into()))?;
            Ok((conv(&f), f))
        };
        let mut lo = 1e-9 * size;
        let mut prev: Option<f64> = None;
        for k in 0..DECADES {
            let v = size * 10f64.powi(k as i32);
            let (xv, f) = at(v)?;
            if xv >= x {
                let (l, h) = bisect_ln(lo, v, |v| Ok(at(v)?.0 < x))?;
                return Ok(Reach::Size((0.5 * (l + h)).exp()));
            }
            if let Some(p) = prev
                && (xv - p).abs() <= 1e-10
            {
                return Ok(Reach::Beyond {
                    x_max: xv + (xv - p) / 9.0,
                    reason: limit_reason(net, &f),
                });
            }
            prev = Some(xv);
            lo = v;
        }
        Err(StudyError::Infeasible(format!(
            "conversion {x} is not reached below V = {:.3e} m3 and the conversion has not settled",
            size * 10f64.powi(DECADES as i32 - 1)
        )))
    } else {
        let g = |y: &[f64]| conv(y) - x;
        let mut y = b.initial_state(net);
        let (mut from, mut len) = (0.0, size);
        let mut d = vec![0.0; y.len()];
        for _ in 0..DECADES {
            let (root, end) = solve::trace_root(net, &b, &y, len, &g, opts)?;
            if let Some((s, _)) = root {
                return Ok(Reach::Size(from + s));
            }
            from += len;
            b.rhs(&end, &mut d);
            let n = net.species.len();
            let change = d[..n].iter().fold(0.0f64, |m, v| m.max(v.abs())) * from;
            if change <= 1e-11 * total {
                return Ok(Reach::Beyond {
                    x_max: conv(&end),
                    reason: limit_reason(net, &end),
                });
            }
            y = end;
            len = 9.0 * from;
        }
        let (xn, xu, _) = solve::reactor_axis(net);
        Err(StudyError::Infeasible(format!(
            "conversion {x} is not reached below {xn} = {from:.3e} {xu} and the conversion has not settled"
        )))
    }
}

/// The size at which the key conversion reaches `x`; an `Infeasible` error naming the largest
/// conversion when `x` is beyond it.
pub fn size_for_conversion(net: &Network, x: f64, opts: &SolveOptions) -> Result<f64, StudyError> {
    match reach_conversion(net, x, opts)? {
        Reach::Size(s) => Ok(s),
        Reach::Beyond { x_max, reason } => Err(StudyError::Infeasible(beyond_message(
            net, x, x_max, &reason,
        ))),
    }
}

/// "conversion 0.9 of A is beyond equilibrium: X approaches X_eq = 0.666667 as V -> ∞".
pub fn beyond_message(net: &Network, x: f64, x_max: f64, reason: &str) -> String {
    let (xn, _, _) = solve::reactor_axis(net);
    let key = &net.species[net.key].name;
    if reason == "equilibrium" {
        format!(
            "conversion {x} of {key} is beyond equilibrium: the conversion approaches X_eq = {} as {xn} -> ∞",
            crate::report::num(x_max)
        )
    } else {
        format!(
            "conversion {x} of {key} is beyond reach ({reason}): the conversion approaches {} as {xn} -> ∞",
            crate::report::num(x_max)
        )
    }
}

/// One entry of a screen. Numbers in SI; each size is given with its variable and unit.
#[derive(Debug, Clone, serde::Serialize)]
pub struct CompareRow {
    pub file: String,
    pub study: String,
    pub reactor: &'static str,
    /// "V", "W" or "t".
    pub size_variable: &'static str,
    /// "m3", "kg" or "s".
    pub size_unit: &'static str,
    /// V (m3), W (kg) or t (s) used.
    pub size: Option<f64>,
    /// τ = V/v0 of a PFR or CSTR, or t of a batch, s (None for a packed bed).
    pub space_time_s: Option<f64>,
    pub conversion: Option<f64>,
    pub desired: Option<String>,
    /// Yield of the desired product on the key reactant consumed (as `run` defines it).
    pub yield_desired: Option<f64>,
    /// Desired product formed over all other products formed together (molar), the target
    /// `selectivity:D/all`; `run`'s per-product S_D/U is the target `selectivity:D/U`.
    pub selectivity_over_all: Option<f64>,
    /// The ranking target as given, e.g. `selectivity:R/S`.
    pub rank_by: String,
    /// Its value. An amount target is ranked per amount of key reactant fed (F_B/F_A0 or
    /// N_B/N_A0, mol/mol), so that flow and batch entries share one unit.
    pub rank_value: Option<f64>,
    /// "1" (a ratio, or an amount per key fed).
    pub rank_unit: &'static str,
    /// The size that maximises the `--optimum` target (same variable and unit as `size`).
    pub optimum_size: Option<f64>,
    pub optimum_space_time_s: Option<f64>,
    pub optimum_value: Option<f64>,
    /// mol/s, mol or 1.
    pub optimum_unit: Option<&'static str>,
    /// Why there is no optimum size (e.g. the supremum is approached as the size goes to 0).
    pub optimum_note: Option<String>,
    pub error: Option<String>,
}

/// The options of one screen.
#[derive(Debug, Clone, Default)]
pub struct Screen<'a> {
    pub rank_by: &'a str,
    pub at_conversion: Option<f64>,
    pub optimum: Option<&'a str>,
    pub min_conversion: Option<f64>,
}

/// τ = V/v0 (PFR, CSTR) or t (batch), s; None for a packed bed.
fn time_scale(n: &Network, size: f64) -> Option<f64> {
    match n.reactor {
        Reactor::Pfr { .. } | Reactor::Cstr { .. } => Some(size / n.feed.volumetric),
        Reactor::Batch { .. } => Some(size),
        Reactor::Pbr { .. } => None,
    }
}

/// One entry of the screen: the network as `kind` (or as it is), run, measured.
pub fn evaluate(
    file: &str,
    net: &Network,
    kind: Option<Kind>,
    screen: &Screen,
    opts: &SolveOptions,
) -> CompareRow {
    let (xn, xu, _) = solve::reactor_axis(net);
    let mut row = CompareRow {
        file: file.to_string(),
        study: net.name.clone(),
        reactor: net.reactor.kind(),
        size_variable: xn,
        size_unit: xu,
        size: None,
        space_time_s: None,
        conversion: None,
        desired: net.desired.map(|d| net.species[d].name.clone()),
        yield_desired: None,
        selectivity_over_all: None,
        rank_by: screen.rank_by.to_string(),
        rank_value: None,
        rank_unit: "1",
        optimum_size: None,
        optimum_space_time_s: None,
        optimum_value: None,
        optimum_unit: None,
        optimum_note: None,
        error: None,
    };
    let result = (|| -> Result<(), String> {
        let mut n = match kind {
            Some(k) => as_reactor(net, k)?,
            None => net.clone(),
        };
        row.reactor = n.reactor.kind();
        let (xn, xu, _) = solve::reactor_axis(&n);
        row.size_variable = xn;
        row.size_unit = xu;
        if let Some(x) = screen.at_conversion {
            let s = size_for_conversion(&n, x, opts).map_err(|e| e.to_string())?;
            n = n.with_size(s);
        }
        row.size = Some(n.size());
        row.space_time_s = time_scale(&n, n.size());
        // Through the evaluation gate: the same checks as `run` for each entry.
        let ev = super::evaluate::evaluate(&n, opts, false).map_err(|e| e.to_string())?;
        let out = ev.sim.outlet();
        let m = &ev.metrics;
        row.conversion = Some(m.conversion);
        if let Some(d) = n.desired {
            row.yield_desired = m
                .yields
                .iter()
                .find(|y| y.species == n.species[d].name)
                .and_then(|y| y.on_key);
            if !super::target::others(&n, d).is_empty() {
                row.selectivity_over_all = Target::SelectivityAll(d).value(&n, out);
            }
        }
        let t = Target::parse(screen.rank_by, &n)?;
        row.rank_value = match t {
            Target::Amount(j) => Some(out[j] / n.feed.amounts[n.key]),
            _ => t.value(&n, out),
        };
        if let Some(o) = screen.optimum {
            let t = Target::parse(o, &n)?;
            row.optimum_unit = Some(super::optimize::value_unit(&n, &t));
            match optimize_size(&n, &t, 0.0, n.size(), screen.min_conversion, opts) {
                Ok(best) => {
                    row.optimum_size = Some(best.size);
                    row.optimum_space_time_s = time_scale(&n, best.size);
                    row.optimum_value = Some(best.value);
                }
                Err(StudyError::Infeasible(m)) => row.optimum_note = Some(m),
                Err(e) => return Err(e.to_string()),
            }
        }
        Ok(())
    })();
    if let Err(e) = result {
        row.error = Some(e);
    }
    row
}

/// Rank rows by their target value, best first; rows without a value last.
pub fn rank(rows: &mut [CompareRow]) {
    rows.sort_by(|a, b| match (a.rank_value, b.rank_value) {
        (Some(x), Some(y)) => y.total_cmp(&x),
        (Some(_), None) => std::cmp::Ordering::Less,
        (None, Some(_)) => std::cmp::Ordering::Greater,
        (None, None) => std::cmp::Ordering::Equal,
    });
}
