//! The report of a train (or of a vessel with side feeds or a recycle): every unit's inlet and
//! outlet, its conversion, yield and selectivity on what it was given, its bypass and recycle;
//! and the profile along the train's cumulative coordinate with a column naming the unit.

use super::num;
use super::run::csv_field;
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

/// Put the train's outlet stream into a run report: its volumetric flow and concentrations
/// (a join or a side feed changes the flow; the report's single-vessel figures do not know).
pub fn set_outlet(rep: &mut super::run::RunReport, net: &Network, run: &TrainRun) {
    let v = run.outlet.volumetric;
    rep.outlet_volumetric_flow = Some(v);
    rep.temperature = net.feed.temperature;
    rep.concentrations = net
        .species
        .iter()
        .zip(&run.outlet.amounts)
        .map(|(s, f)| (s.name.clone(), f / v))
        .collect();
    rep.outlet_pressure = run.outlet.pressure;
    rep.size = run.profile.size;
    rep.units = Some(units(net, run));
    if net.train.is_some() {
        rep.reactor = "train";
    }
    rep.heat = crate::safety::HeatFigures::of_train(net, run);
    // The single-vessel figures of a side route describe one vessel: a train's are per unit
    // (its `fed` and `left`), so they are not repeated for the whole.
    rep.distributed_feed = None;
    rep.permeate = None;
    if rep.profile.is_some() {
        rep.profile = Some(profile(net, run));
    }
}

/// The train's profile for the report: each point's state, T and P where any unit has them,
/// and its instantaneous selectivities from its own unit's balance, labelled with its unit.
fn profile(net: &Network, run: &TrainRun) -> Vec<super::run::ProfilePoint> {
    let sim = &run.profile;
    let others: Vec<String> = net
        .desired
        .map(|d| {
            metrics::products(net)
                .into_iter()
                .filter(|&u| u != d)
                .map(|u| net.species[u].name.clone())
                .collect()
        })
        .unwrap_or_default();
    (0..sim.x.len())
        .map(|k| {
            let inst = point_selectivity(run, k);
            let over_all = inst.as_deref().and_then(super::run::over_all);
            super::run::ProfilePoint {
                unit: Some(run.labels[k].clone()),
                x: sim.x[k],
                state: net
                    .species
                    .iter()
                    .zip(&sim.states[k])
                    .map(|(s, v)| (s.name.clone(), *v))
                    .collect(),
                temperature: sim.temperature.as_ref().map(|t| t[k]),
                coolant_temperature: None,
                pressure: sim.pressure.as_ref().map(|p| p[k]),
                volumetric_flow: None,
                volume: None,
                permeate: None,
                instantaneous_selectivity: others
                    .iter()
                    .enumerate()
                    .map(|(j, name)| {
                        (
                            name.clone(),
                            inst.as_ref().and_then(|s| s.get(j)).and_then(|s| s.value),
                        )
                    })
                    .collect(),
                instantaneous_selectivity_over_all: over_all,
            }
        })
        .collect()
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
            let selectivity_over_all = net.desired.and_then(|d| {
                crate::studies::target::Target::SelectivityAll(d)
                    .value_against(net, &u.fed, &u.left)
            });
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

/// The train's profile as CSV: the unit, the cumulative coordinate, species flows, T where any
/// unit has an energy balance, P where any varies, and the instantaneous selectivities from
/// each point's own unit.
pub fn profile_csv(net: &Network, run: &TrainRun) -> String {
    let sim = &run.profile;
    let mut o = String::new();
    let _ = write!(o, "unit,{} [{}]", sim.x_name, sim.x_unit);
    for s in &net.species {
        let _ = write!(o, ",{}", csv_field(&format!("{} [mol/s]", s.name)));
    }
    if sim.pressure.is_some() {
        o.push_str(",P [Pa]");
    }
    if sim.temperature.is_some() {
        o.push_str(",T [K]");
    }
    let others: Vec<usize> = net
        .desired
        .map(|d| {
            metrics::products(net)
                .into_iter()
                .filter(|&u| u != d)
                .collect()
        })
        .unwrap_or_default();
    if let Some(d) = net.desired {
        let name = &net.species[d].name;
        for &u in &others {
            let _ = write!(
                o,
                ",{}",
                csv_field(&format!("S_inst {name}/{} [-]", net.species[u].name))
            );
        }
    }
    o.push('\n');
    for (k, x) in sim.x.iter().enumerate() {
        let _ = write!(o, "{},{x:.12e}", csv_field(&run.labels[k]));
        for v in &sim.states[k] {
            let _ = write!(o, ",{v:.12e}");
        }
        if let Some(p) = &sim.pressure {
            let _ = write!(o, ",{:.12e}", p[k]);
        }
        if let Some(t) = &sim.temperature {
            let _ = write!(o, ",{:.12e}", t[k]);
        }
        if net.desired.is_some() {
            let inst = point_selectivity(run, k);
            for j in 0..others.len() {
                match inst.as_ref().and_then(|s| s.get(j)).and_then(|s| s.value) {
                    Some(v) => {
                        let _ = write!(o, ",{v:.12e}");
                    }
                    None => o.push(','),
                }
            }
        }
        o.push('\n');
    }
    o
}

/// The instantaneous selectivities at profile point k from its own unit's balance (`None` for
/// the feed and a unit's outlet after a split or bypass).
fn point_selectivity(run: &TrainRun, k: usize) -> Option<Vec<metrics::Selectivity>> {
    run.places[k].map(|(u, p, i)| {
        let piece = &run.units[u].pieces[p];
        metrics::instantaneous_selectivity(
            &piece.network,
            &piece.balance,
            piece.sim.x[i],
            &piece.sim.model_state(i, piece.network.feed.pressure),
        )
    })
}
