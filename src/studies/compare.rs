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
use crate::metrics;
use crate::model::{BatchMode, Network, Phase, Reactor};
use crate::reactor::Balance;
use crate::solve::{self, SolveOptions};

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

/// The size at which the key conversion reaches `x` (searched up to 1000 times the study's size).
pub fn size_for_conversion(net: &Network, x: f64, opts: &SolveOptions) -> Result<f64, StudyError> {
    let b = Balance::new(net).map_err(StudyError::Invalid)?;
    let a = net.key;
    let f0 = net.feed.amounts[a];
    let conv = |y: &[f64]| (f0 - y[a]) / f0;
    let cap = 1e3 * net.size();
    if let Reactor::Cstr { .. } = net.reactor {
        let tol = 1e-14 * net.feed.total();
        let at = |v: f64| -> Result<f64, StudyError> {
            let f = crate::solve::cstr_outlet(net, &b, v, tol, opts.steady_state)
                .map_err(StudyError::Solve)?;
            Ok(conv(&f))
        };
        if at(cap)? < x {
            return Err(StudyError::Infeasible(format!(
                "conversion {x} is not reached below V = {cap:.3e} m3"
            )));
        }
        let (lo, hi) = bisect_ln(1e-9 * net.size(), cap, |v| Ok(at(v)? < x))?;
        Ok((0.5 * (lo + hi)).exp())
    } else {
        let y0 = b.initial_state(net);
        let g = |y: &[f64]| conv(y) - x;
        match solve::trace_root(net, &b, &y0, cap, &g, opts)?.0 {
            Some((s, _)) => Ok(s),
            None => Err(StudyError::Infeasible(format!(
                "conversion {x} is not reached within {cap:.3e} (1000 × the study's size)"
            ))),
        }
    }
}

#[derive(Debug, Clone, serde::Serialize)]
pub struct CompareRow {
    pub file: String,
    pub study: String,
    pub reactor: &'static str,
    /// V (m3), W (kg) or t (s) used.
    pub size: Option<f64>,
    pub conversion: Option<f64>,
    pub desired: Option<String>,
    pub yield_desired: Option<f64>,
    /// Desired product formed over all other products formed (molar).
    pub selectivity_desired: Option<f64>,
    pub rank_value: Option<f64>,
    pub optimum_size: Option<f64>,
    pub optimum_value: Option<f64>,
    pub error: Option<String>,
}

/// One entry of the screen: the network as `kind` (or as it is), run, measured.
pub fn evaluate(
    file: &str,
    net: &Network,
    kind: Option<Kind>,
    rank_by: &str,
    at_conversion: Option<f64>,
    optimize: Option<&str>,
    opts: &SolveOptions,
) -> CompareRow {
    let mut row = CompareRow {
        file: file.to_string(),
        study: net.name.clone(),
        reactor: net.reactor.kind(),
        size: None,
        conversion: None,
        desired: net.desired.map(|d| net.species[d].name.clone()),
        yield_desired: None,
        selectivity_desired: None,
        rank_value: None,
        optimum_size: None,
        optimum_value: None,
        error: None,
    };
    let result = (|| -> Result<(), String> {
        let mut n = match kind {
            Some(k) => as_reactor(net, k)?,
            None => net.clone(),
        };
        row.reactor = n.reactor.kind();
        if let Some(x) = at_conversion {
            let s = size_for_conversion(&n, x, opts).map_err(|e| e.to_string())?;
            n = n.with_size(s);
        }
        row.size = Some(n.size());
        let sim = solve::simulate(&n, opts).map_err(|e| e.to_string())?;
        let out = sim.outlet();
        let m = metrics::compute(&n, out);
        row.conversion = Some(m.conversion);
        if let Some(d) = n.desired {
            row.yield_desired = m
                .yields
                .iter()
                .find(|y| y.species == n.species[d].name)
                .and_then(|y| y.on_key);
            let f0 = &n.feed.amounts;
            let others: f64 = metrics::products(&n)
                .into_iter()
                .filter(|&u| u != d)
                .map(|u| out[u] - f0[u])
                .sum();
            row.selectivity_desired =
                (others.abs() > 1e-13 * n.feed.total()).then(|| (out[d] - f0[d]) / others);
        }
        let t = Target::parse(rank_by, &n)?;
        row.rank_value = t.value(&n, out);
        if let Some(o) = optimize {
            let t = Target::parse(o, &n)?;
            let best =
                optimize_size(&n, &t, 0.0, n.size(), None, opts).map_err(|e| e.to_string())?;
            row.optimum_size = Some(best.size);
            row.optimum_value = Some(best.value);
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
