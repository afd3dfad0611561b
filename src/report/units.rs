//! Every unit of a train as the run report lists it: its inlet and outlet, its conversion,
//! yield and selectivity on what it was given, its bypass and recycle (JSON and a text table).

use super::num;
use crate::metrics;
use crate::model::Network;
use crate::solve::train::TrainRun;
use indexmap::IndexMap;
use serde::Serialize;
use std::fmt::Write;

/// A recycle loop as converged (JSON).
#[derive(Debug, Clone, Serialize)]
pub struct RecycleReport {
    pub ratio: f64,
    pub iterations: usize,
    /// The last change of the recycle stream per pass, relative to the fresh flow.
    pub change: f64,
    /// The recycle stream, mol/s per species.
    pub stream: IndexMap<String, f64>,
}

/// One unit of a train (JSON, SI).
#[derive(Debug, Clone, Serialize)]
pub struct UnitReport {
    pub id: String,
    #[serde(rename = "type")]
    pub kind: &'static str,
    /// V (m3) or W (kg).
    pub size: f64,
    /// Where the unit starts on the train's coordinate.
    pub starts_at: f64,
    pub inlet_temperature: f64,
    pub outlet_temperature: f64,
    /// The stream entering (after its join), mol/s.
    pub inlet: IndexMap<String, f64>,
    /// The stream leaving (after the recycle split and the bypass), mol/s.
    pub outlet: IndexMap<String, f64>,
    /// What joined before the unit, mol/s (units after the first).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub joined: Option<IndexMap<String, f64>>,
    /// Conversion of the key in this unit, on everything the unit was given.
    pub conversion: f64,
    /// Yield of the desired product on the key consumed in this unit.
    pub yield_desired: Option<f64>,
    /// Selectivity of the desired product over all other products made in this unit.
    pub selectivity_over_all: Option<f64>,
    pub bypass: f64,
    pub side_feeds: usize,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub recycle: Option<RecycleReport>,
    /// A tank: how many steady states were found (the one shown is the study's choice).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub steady_states: Option<usize>,
    /// The unit's highest temperature, K (energy balance).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub hot_spot: Option<f64>,
}

/// Every unit's report.
pub fn units(net: &Network, run: &TrainRun) -> Vec<UnitReport> {
    let names = |v: &[f64]| -> IndexMap<String, f64> {
        net.species
            .iter()
            .zip(v)
            .map(|(s, x)| (s.name.clone(), *x))
            .collect()
    };
    run.units
        .iter()
        .enumerate()
        .map(|(k, u)| {
            let m = metrics::compute_against(net, &u.fed, &u.left);
            let yield_desired = m.desired.as_ref().and_then(|d| {
                m.yields
                    .iter()
                    .find(|y| &y.species == d)
                    .and_then(|y| y.on_key)
            });
            let selectivity_over_all = net
                .desired
                .and_then(|d| metrics::selectivity_over_all(net, d, &u.fed, &u.left));
            let joined = (k > 0 && u.inlet.amounts != run.units[k - 1].outlet.amounts).then(|| {
                let prev = &run.units[k - 1].outlet.amounts;
                names(
                    &u.inlet
                        .amounts
                        .iter()
                        .zip(prev)
                        .map(|(i, o)| i - o)
                        .collect::<Vec<_>>(),
                )
            });
            let hot_spot = u
                .pieces
                .iter()
                .filter_map(|p| {
                    p.sim.temperature_range.map(|r| r.max).or_else(|| {
                        p.sim
                            .temperature
                            .as_ref()
                            .and_then(|t| t.iter().copied().reduce(f64::max))
                    })
                })
                .reduce(f64::max);
            UnitReport {
                id: u.id.clone(),
                kind: u.kind,
                size: u.size,
                starts_at: u.offset,
                inlet_temperature: u.inlet.temperature,
                outlet_temperature: u.outlet.temperature,
                inlet: names(&u.inlet.amounts),
                outlet: names(&u.outlet.amounts),
                joined,
                conversion: m.conversion,
                yield_desired,
                selectivity_over_all,
                bypass: u.bypass,
                side_feeds: u.pieces.len() - 1,
                recycle: u.recycle.as_ref().map(|r| RecycleReport {
                    ratio: r.ratio,
                    iterations: r.iterations,
                    change: r.change,
                    stream: names(&r.stream.amounts),
                }),
                steady_states: u
                    .pieces
                    .first()
                    .and_then(|p| p.sim.steady.as_ref())
                    .map(|s| s.states.len()),
                hot_spot: hot_spot.filter(|_| u.pieces.iter().any(|p| p.balance.has_energy())),
            }
        })
        .collect()
}

/// The units as a table: one row per unit.
pub fn text(
    o: &mut String,
    units: &[UnitReport],
    key: &str,
    desired: Option<&str>,
    size_unit: &str,
) {
    let _ = writeln!(
        o,
        "\n  units (in order; conversion, yield and selectivity on what each unit was given):"
    );
    let _ = write!(
        o,
        "  {:<12} {:<5} {:>12} {:>10} {:>10} {:>10}",
        "unit",
        "type",
        format!("size [{size_unit}]"),
        "T_in [K]",
        "T_out [K]",
        format!("X_{key}")
    );
    if let Some(d) = desired {
        let _ = write!(o, " {:>10} {:>12}", format!("Y_{d}"), format!("S_{d}/all"));
    }
    o.push('\n');
    let opt = |v: Option<f64>| v.map_or("n/d".to_string(), num);
    for u in units {
        let _ = write!(
            o,
            "  {:<12} {:<5} {:>12} {:>10} {:>10} {:>10}",
            u.id,
            u.kind,
            num(u.size),
            num(u.inlet_temperature),
            num(u.outlet_temperature),
            num(u.conversion)
        );
        if desired.is_some() {
            let _ = write!(
                o,
                " {:>10} {:>12}",
                opt(u.yield_desired),
                opt(u.selectivity_over_all)
            );
        }
        o.push('\n');
        let mut notes = Vec::new();
        if let Some(j) = &u.joined {
            let parts: Vec<String> = j
                .iter()
                .filter(|(_, v)| **v != 0.0)
                .map(|(s, v)| format!("{s} {} mol/s", num(*v)))
                .collect();
            notes.push(format!("joined before it: {}", parts.join(", ")));
        }
        if u.bypass > 0.0 {
            notes.push(format!("bypass {}", num(u.bypass)));
        }
        if u.side_feeds > 0 {
            notes.push(format!("{} side feed(s)", u.side_feeds));
        }
        if let Some(r) = &u.recycle {
            notes.push(format!(
                "recycle R = {} ({} passes, last change {:.1e})",
                num(r.ratio),
                r.iterations,
                r.change
            ));
        }
        if let Some(n) = u.steady_states
            && n > 1
        {
            notes.push(format!("{n} steady states (the study's choice shown)"));
        }
        if let Some(t) = u.hot_spot {
            notes.push(format!("hot spot {} K", num(t)));
        }
        if !notes.is_empty() {
            let _ = writeln!(o, "  {:<12} {}", "", notes.join("; "));
        }
    }
}
