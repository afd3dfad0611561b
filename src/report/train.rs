//! The report of a train (or of a vessel with side feeds or a recycle): its outlet, units
//! ([`super::units`]) and heat figures put into the run report, and the profile along the
//! train's cumulative coordinate with a column naming the unit.

use super::run::csv_field;
use super::units::units;
use crate::metrics;
use crate::model::Network;
use crate::solve::train::TrainRun;
use std::fmt::Write;

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
