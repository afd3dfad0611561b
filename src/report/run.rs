//! The report of one reactor run: outlet, concentrations, conversion, yields, selectivities,
//! and the conditions an engineer checks beside them: the outlet volumetric flow of a flow
//! reactor, the final volume and pressure of a batch, the bed constant α of a packed bed.
//!
//! Conditions of a state (ideal gas, isothermal at T0; CODATA R; common practice):
//! - gas flow reactor: v = F_T R T / P, with P the local pressure (P0 without pressure drop),
//!   which is v = v0 (F_T/F_T0)(P0/P); for a first-order A -> products at constant P this is
//!   v = v0 (1 + ε X) (Levenspiel ch. 5);
//! - gas batch at constant volume: P = N_T R T / V; at constant pressure: V = N_T R T / P0;
//! - liquid (constant density): v = v0 and V = V0, plus in a tube what its distributed feeds
//!   have added by x (v = v0 + Σ_d q_d ∫_0^x w_d); the pressure is the feed's, not computed.

use super::num;
use crate::metrics::{self, Metrics};
use crate::model::{BatchMode, Network, Phase, Reactor};
use crate::reactor::Balance;
use crate::solve::{Simulation, SolveStats};
use crate::units::GAS_CONSTANT;
use indexmap::IndexMap;
use serde::Serialize;
use std::fmt::Write;

/// One profile point (JSON).
#[derive(Debug, Clone, Serialize)]
pub struct ProfilePoint {
    /// A train: the unit the point belongs to (`T2`, or `T2 outlet` after a split or bypass).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub unit: Option<String>,
    pub x: f64,
    pub state: IndexMap<String, f64>,
    /// Temperature, K, where it varies (energy balance).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub temperature: Option<f64>,
    /// Coolant temperature, K, where it varies (a coolant stream, a batch jacket ramp).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub coolant_temperature: Option<f64>,
    /// Pressure, Pa, where it varies (packed bed with pressure drop, constant-volume gas batch).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pressure: Option<f64>,
    /// Volumetric flow v, m3/s, of a gas flow reactor (it varies with the moles and P) or of a
    /// liquid tube with distributed feeds (it grows with them).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub volumetric_flow: Option<f64>,
    /// Volume V, m3, of a constant-pressure gas batch (it follows the moles) or of a
    /// semibatch (it follows the dosing and withdrawal).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub volume: Option<f64>,
    /// A tube with a membrane wall: the net amount of each membrane species through the wall
    /// from the inlet to this point, mol/s (positive: permeate out of the tube; negative: fed
    /// through the wall from the sweep side).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub permeate: Option<IndexMap<String, f64>>,
    /// Instantaneous selectivity R_D/R_U of the desired product over each other product.
    pub instantaneous_selectivity: IndexMap<String, Option<f64>>,
    /// Instantaneous selectivity of the desired product over all other products together,
    /// R_D / Σ_U R_U (null when no other product forms, or no desired product is named).
    pub instantaneous_selectivity_over_all: Option<f64>,
}

/// `rxnet run` as JSON: numbers in SI (mol/s or mol, m3, kg, s, K, Pa).
#[derive(Debug, Clone, Serialize)]
pub struct RunReport {
    pub study: String,
    pub reactor: &'static str,
    pub phase: crate::model::Phase,
    /// Independent variable: V (m3), W (kg) or t (s).
    pub size_variable: &'static str,
    pub size: f64,
    pub temperature: f64,
    pub inlet_pressure: f64,
    /// Pressure at the outlet (flow reactors) or at the end (batch), Pa: from the pressure drop
    /// of a packed bed, N_T R T / V for a constant-volume gas batch, else the inlet pressure.
    pub outlet_pressure: f64,
    /// Inlet volumetric flow v0, m3/s (flow reactors).
    pub inlet_volumetric_flow: Option<f64>,
    /// Outlet volumetric flow v, m3/s (flow reactors): F_T R T / P for a gas, v0 for a liquid
    /// (plus the streams fed along a tube).
    pub outlet_volumetric_flow: Option<f64>,
    /// Charged volume V0, m3 (batch).
    pub initial_volume: Option<f64>,
    /// Volume at the end, m3 (batch): N_T R T / P0 for a constant-pressure gas batch,
    /// V(t_end) = V0 + ∫(q_in − q_out) dt for a semibatch, else V0.
    pub final_volume: Option<f64>,
    /// Semibatch: the amount of each species dosed over the batch, mol (species dosed only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dosed: Option<IndexMap<String, f64>>,
    /// Semibatch with withdrawal: the amount of each species withdrawn over the batch, mol.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub withdrawn: Option<IndexMap<String, f64>>,
    /// Bed constant α of the pressure drop, 1/kg (packed bed with pressure drop): as given,
    /// or computed from the Ergun equation (docs/methods.md).
    pub ergun_alpha: Option<f64>,
    /// mol/s (flow reactors) or mol (batch).
    pub state_unit: &'static str,
    pub outlet: IndexMap<String, f64>,
    /// Outlet concentrations, mol/m3.
    pub concentrations: IndexMap<String, f64>,
    pub key: String,
    pub conversion: f64,
    #[serde(rename = "yield")]
    pub yields: IndexMap<String, Option<f64>>,
    pub yield_basis: IndexMap<String, String>,
    /// Null when the product is fed and net consumed.
    pub yield_on_feed: IndexMap<String, Option<f64>>,
    /// Why a yield is null ("not defined"), per product; only the products whose yield is null.
    pub yield_not_defined: IndexMap<String, String>,
    pub desired: Option<String>,
    /// S_D/U for each other product U (null: not defined, see `selectivity_not_defined`).
    pub selectivity: IndexMap<String, Option<f64>>,
    /// Why a selectivity is null, per other product.
    pub selectivity_not_defined: IndexMap<String, String>,
    pub element_closure: IndexMap<String, f64>,
    /// A tube with distributed feeds: everything they fed along the tube, per species, mol/s
    /// (the conversion, yields and element closure count it as fed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub distributed_feed: Option<IndexMap<String, f64>>,
    /// A tube with a membrane wall: the net amount of each membrane species through the wall
    /// over the whole tube, mol/s (positive: permeate, counted as having left; negative: fed
    /// through the wall, counted as fed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub permeate: Option<IndexMap<String, f64>>,
    pub solver: SolveStats,
    /// CSTR: every steady state found (rising conversion), which one this report shows, and
    /// their stability.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub steady_states: Option<SteadyStatesReport>,
    /// A counter-current coolant: every solution of the boundary-value problem and which one
    /// this report shows.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub coolant_solutions: Option<CoolantSolutionsReport>,
    /// Temperatures of a run with an energy balance: inlet and outlet, the adiabatic rise,
    /// hot spot, margin to T_max, coolant outlet, batch cooling-failure temperature (K, and
    /// where in the size variable's unit); absent for an isothermal run.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub heat: Option<crate::safety::HeatFigures>,
    /// Warnings about the solution (heat-capacity data used outside their range).
    pub warnings: Vec<String>,
    /// The safety caution of the study (`safety::caution`): with an energy balance, or
    /// isothermal with an exothermic reaction; absent otherwise.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub caution: Option<&'static str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub profile: Option<Vec<ProfilePoint>>,
    /// A train (or a vessel with side feeds or a recycle): every unit, in order. The outlet,
    /// conversion, yields and selectivities above are then the train's, on everything fed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub units: Option<Vec<super::units::UnitReport>>,
}

/// One CSTR steady state in the report (SI: mol/s, 1/s).
#[derive(Debug, Clone, Serialize)]
pub struct SteadyStateEntry {
    /// 1-based, in order of rising conversion of the key.
    pub number: usize,
    pub conversion: f64,
    pub stable: bool,
    /// Largest real part of the eigenvalues of the transient CSTR's Jacobian, 1/s.
    pub max_eigenvalue_real_per_s: f64,
    /// Reactor temperature, K (a CSTR with an energy balance).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub temperature: Option<f64>,
    pub outlet: IndexMap<String, f64>,
}

/// The ignition and extinction points of a CSTR along one parameter (K).
#[derive(Debug, Clone, Serialize)]
pub struct TurningPointsReport {
    /// The parameter's value at the ignition point of lowest reactor temperature (where the
    /// cold branch ends), K; null when the steady-state curve has none in the scanned window.
    pub ignition: Option<f64>,
    /// Its value at the extinction point of highest reactor temperature (where the hot branch
    /// ends), K; null when there is none.
    pub extinction: Option<f64>,
    /// Every turning point found, in order of rising reactor temperature.
    pub points: Vec<crate::solve::cstr_heat::TurningPoint>,
}

/// The ignition and extinction points of a search, keyed `feed_T` and `coolant_T`.
fn turning_points_report(
    all: &[crate::solve::cstr_heat::TurningPoint],
) -> IndexMap<&'static str, TurningPointsReport> {
    let mut out = IndexMap::new();
    for (key, parameter) in [
        ("feed_T", "feed temperature"),
        ("coolant_T", "coolant temperature"),
    ] {
        let mut points: Vec<_> = all
            .iter()
            .filter(|p| p.parameter == parameter)
            .cloned()
            .collect();
        if points.is_empty() && key == "coolant_T" {
            continue;
        }
        points.sort_by(|a, b| a.reactor_temperature_k.total_cmp(&b.reactor_temperature_k));
        out.insert(
            key,
            TurningPointsReport {
                ignition: points
                    .iter()
                    .find(|p| p.kind == "ignition")
                    .map(|p| p.value_k),
                extinction: points
                    .iter()
                    .rev()
                    .find(|p| p.kind == "extinction")
                    .map(|p| p.value_k),
                points,
            },
        );
    }
    out
}

/// The steady states of a CSTR run.
#[derive(Debug, Clone, Serialize)]
pub struct SteadyStatesReport {
    pub count: usize,
    /// The number (1-based) of the state this report's outlet shows.
    pub shown: usize,
    /// The choice in force: `lowest`, `highest` or a number.
    pub choice: String,
    pub states: Vec<SteadyStateEntry>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
    /// With an energy balance: the temperatures scanned for states, K.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub scan_window_k: Option<(f64, f64)>,
    /// With an energy balance: the ignition and extinction points along the feed and coolant
    /// temperatures (K), where the steady-state curve has them in the scanned range.
    /// Keyed by the parameter, `feed_T` and `coolant_T` (the latter with heat exchange only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub turning_points: Option<IndexMap<&'static str, TurningPointsReport>>,
}

/// One solution of a counter-current coolant problem (K, and V m3 or W kg).
#[derive(Debug, Clone, Serialize)]
pub struct CoolantSolutionEntry {
    /// 1-based, in order of rising coolant outlet temperature.
    pub number: usize,
    /// T_a at the reactor inlet, where the coolant leaves.
    pub coolant_outlet_temperature: f64,
    pub hot_spot_temperature: f64,
    pub hot_spot_at: f64,
    pub conversion: f64,
}

/// The solutions of a counter-current coolant problem (shooting on T_a(0)).
#[derive(Debug, Clone, Serialize)]
pub struct CoolantSolutionsReport {
    pub count: usize,
    /// The number (1-based) of the solution this report's profile and outlet show.
    pub shown: usize,
    /// The rule that picked it.
    pub choice: String,
    pub solutions: Vec<CoolantSolutionEntry>,
    /// The range of coolant outlet temperatures searched, K.
    pub searched_from: f64,
    pub searched_to: f64,
    pub trials: usize,
    pub failed_trials: usize,
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub notes: Vec<String>,
}

/// Pressure and volumetric flow (flow reactors) or volume (batch) of profile point `k`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conditions {
    /// Pa.
    pub pressure: f64,
    /// m3/s (flow reactors) or m3 (batch).
    pub volumetric: f64,
}

/// The conditions of profile point `k` (see the module docs for the equations).
pub fn conditions(net: &Network, sim: &Simulation, k: usize) -> Conditions {
    let feed = &net.feed;
    let p_local = sim.pressure.as_ref().map_or(feed.pressure, |p| p[k]);
    if net.phase != Phase::Gas {
        // A liquid tube's volumetric flow grows with the streams fed along it.
        let added = if net.reactor.is_batch() {
            0.0
        } else {
            crate::reactor::added_volumetric(net, sim.x[k])
        };
        return Conditions {
            pressure: p_local,
            volumetric: if net.reactor.is_batch() {
                // A semibatch's liquid volume follows its dosing and withdrawal.
                crate::reactor::liquid_volume(net, sim.x[k])
            } else {
                feed.volumetric + added
            },
        };
    }
    let n_rt =
        sim.states[k].iter().sum::<f64>() * GAS_CONSTANT * sim.temperature_at(k, feed.temperature);
    match net.reactor {
        Reactor::Batch {
            mode: BatchMode::ConstantVolume,
            ..
        } => Conditions {
            pressure: n_rt / feed.volumetric,
            volumetric: feed.volumetric,
        },
        Reactor::Batch {
            mode: BatchMode::ConstantPressure,
            ..
        } => Conditions {
            pressure: feed.pressure,
            volumetric: n_rt / feed.pressure,
        },
        _ => Conditions {
            pressure: p_local,
            volumetric: n_rt / p_local,
        },
    }
}

/// Everything the distributed feeds of a tube fed, per species (mol/s), the species they carry.
fn distributed_total(net: &Network) -> Option<IndexMap<String, f64>> {
    let d = &net.contacting.distributed;
    if d.is_empty() {
        return None;
    }
    Some(
        net.species
            .iter()
            .enumerate()
            .filter(|(j, _)| d.iter().any(|f| f.stream.amounts[*j] != 0.0))
            .map(|(j, s)| {
                (
                    s.name.clone(),
                    d.iter().map(|f| f.stream.amounts[j]).sum::<f64>(),
                )
            })
            .collect(),
    )
}

/// The net amount of each membrane species through the wall up to profile point k (mol/s,
/// positive out), from the exchange of the run.
fn permeate_at(
    net: &Network,
    balance: &Balance,
    sim: &Simulation,
    k: usize,
) -> Option<IndexMap<String, f64>> {
    let ex = sim.exchanged.as_ref()?;
    let walls = balance.walls()?;
    let species = walls.membrane_species();
    if species.is_empty() {
        return None;
    }
    Some(
        species
            .into_iter()
            .map(|j| {
                (
                    net.species[j].name.clone(),
                    ex.left[k][j] - ex.entered[k][j] + walls.fed_by(j, sim.x[k]),
                )
            })
            .collect(),
    )
}

/// Whether the coolant temperature varies along a batch (a jacket ramp) without being a state.
fn coolant_varies(net: &Network) -> bool {
    matches!(
        net.heat.balance().and_then(|e| e.exchange.as_ref()),
        Some(crate::model::Exchange {
            coolant: crate::model::Coolant::Ramp { .. },
            ..
        })
    )
}

/// The coolant temperature at profile point k where it varies: a coolant stream's state, or
/// a batch jacket's ramp.
pub fn coolant_temperature(net: &Network, sim: &Simulation, k: usize) -> Option<f64> {
    if let Some(t) = &sim.coolant {
        return Some(t[k]);
    }
    match net.heat.balance().and_then(|e| e.exchange.as_ref()) {
        Some(
            x @ crate::model::Exchange {
                coolant: crate::model::Coolant::Ramp { .. },
                ..
            },
        ) => Some(x.coolant.temperature_at(sim.x[k])),
        _ => None,
    }
}

/// Which conditions vary along the profile, and so get a column: (pressure, volumetric).
fn varying(net: &Network, sim: &Simulation) -> (bool, bool) {
    if net.phase != Phase::Gas {
        // A liquid tube with distributed feeds: v grows along it; a semibatch's volume too.
        let grows = !net.reactor.is_batch() && !net.contacting.distributed.is_empty();
        return (false, grows || is_semibatch(net));
    }
    match net.reactor {
        Reactor::Batch {
            mode: BatchMode::ConstantVolume,
            ..
        } => (true, false),
        Reactor::Batch {
            mode: BatchMode::ConstantPressure,
            ..
        } => (false, true),
        _ => (sim.pressure.is_some(), true),
    }
}

/// Whether the study is a semibatch (a batch with dosing or withdrawal).
fn is_semibatch(net: &Network) -> bool {
    net.reactor.is_batch()
        && (!net.contacting.dosing.is_empty() || net.contacting.withdrawal.is_some())
}

/// R_D / Σ_U R_U from the per-product instantaneous selectivities: Σ_U R_U / R_D = Σ_U 1/S_D/U.
pub(crate) fn over_all(per_product: &[metrics::Selectivity]) -> Option<f64> {
    if per_product.is_empty() {
        return None;
    }
    // S = R_D/R_U; a product whose rate is zero has S = None and adds nothing to the sum.
    let inverse: f64 = per_product
        .iter()
        .filter_map(|s| s.value)
        .map(|s| 1.0 / s)
        .sum();
    if inverse.is_nan() || inverse == 0.0 {
        None
    } else if inverse.is_infinite() {
        Some(0.0) // R_D = 0 while another product forms
    } else {
        Some(1.0 / inverse)
    }
}

/// Build the report of a run.
pub fn build(
    net: &Network,
    balance: &Balance,
    sim: &Simulation,
    m: &Metrics,
    with_profile: bool,
) -> RunReport {
    let out = sim.outlet();
    let names = |v: &[f64]| -> IndexMap<String, f64> {
        net.species
            .iter()
            .zip(v)
            .map(|(s, x)| (s.name.clone(), *x))
            .collect()
    };
    let last = sim.x.len() - 1;
    let y = sim.model_state(last, net.feed.pressure);
    let mut c = Vec::new();
    balance.concentrations(sim.x[last], &y, &mut c);
    let (p_varies, v_varies) = varying(net, sim);
    let batch = net.reactor.is_batch();
    let profile = with_profile.then(|| {
        sim.x
            .iter()
            .enumerate()
            .map(|(k, x)| {
                let cond = conditions(net, sim, k);
                let inst = metrics::instantaneous_selectivity(
                    net,
                    balance,
                    *x,
                    &sim.model_state(k, net.feed.pressure),
                );
                ProfilePoint {
                    unit: None,
                    x: *x,
                    state: names(&sim.states[k]),
                    temperature: sim.temperature.as_ref().map(|t| t[k]),
                    coolant_temperature: coolant_temperature(net, sim, k),
                    pressure: p_varies.then_some(cond.pressure),
                    volumetric_flow: (v_varies && !batch).then_some(cond.volumetric),
                    volume: (v_varies && batch).then_some(cond.volumetric),
                    permeate: permeate_at(net, balance, sim, k),
                    instantaneous_selectivity_over_all: over_all(&inst),
                    instantaneous_selectivity: inst
                        .into_iter()
                        .map(|s| (s.over, s.value))
                        .collect(),
                }
            })
            .collect()
    });
    let end = conditions(net, sim, last);
    RunReport {
        study: net.name.clone(),
        reactor: net.reactor.kind(),
        phase: net.phase,
        size_variable: sim.x_name,
        size: sim.size,
        temperature: net.feed.temperature,
        inlet_pressure: net.feed.pressure,
        outlet_pressure: end.pressure,
        inlet_volumetric_flow: (!batch).then_some(net.feed.volumetric),
        outlet_volumetric_flow: (!batch).then_some(end.volumetric),
        initial_volume: batch.then_some(net.feed.volumetric),
        final_volume: batch.then_some(end.volumetric),
        dosed: (!net.contacting.dosing.is_empty() && batch).then(|| {
            let d = crate::reactor::dosed_by(net, sim.size);
            net.species
                .iter()
                .zip(d)
                .filter(|(_, v)| *v > 0.0)
                .map(|(s, v)| (s.name.clone(), v))
                .collect()
        }),
        withdrawn: (net.contacting.withdrawal.is_some() && batch)
            .then(|| sim.exchanged.as_ref().and_then(|e| e.left.last()))
            .flatten()
            .map(|l| names(l)),
        ergun_alpha: balance.alpha(),
        heat: crate::safety::HeatFigures::of(net, balance, sim),
        warnings: sim.warnings.clone(),
        caution: crate::safety::caution(net),
        state_unit: if net.reactor.is_batch() {
            "mol"
        } else {
            "mol/s"
        },
        outlet: names(out),
        concentrations: names(&c),
        key: m.key.clone(),
        conversion: m.conversion,
        yields: m
            .yields
            .iter()
            .map(|y| (y.species.clone(), y.on_key))
            .collect(),
        yield_basis: m
            .yields
            .iter()
            .map(|y| (y.species.clone(), y.basis.clone()))
            .collect(),
        yield_on_feed: m
            .yields
            .iter()
            .map(|y| (y.species.clone(), y.on_feed))
            .collect(),
        yield_not_defined: m
            .yields
            .iter()
            .filter_map(|y| Some((y.species.clone(), y.not_defined.clone()?)))
            .collect(),
        desired: m.desired.clone(),
        selectivity: m
            .selectivity
            .iter()
            .map(|s| (s.over.clone(), s.value))
            .collect(),
        selectivity_not_defined: m
            .selectivity
            .iter()
            .filter_map(|s| Some((s.over.clone(), s.not_defined.clone()?)))
            .collect(),
        element_closure: m
            .element_closure
            .iter()
            .map(|c| (c.element.clone(), c.relative))
            .collect(),
        distributed_feed: distributed_total(net),
        permeate: permeate_at(net, balance, sim, last),
        solver: sim.stats.clone(),
        steady_states: sim.steady.as_ref().map(|st| SteadyStatesReport {
            count: st.states.len(),
            shown: st.shown + 1,
            choice: st.choice.clone(),
            states: st
                .states
                .iter()
                .enumerate()
                .map(|(k, s)| SteadyStateEntry {
                    number: k + 1,
                    conversion: s.conversion,
                    stable: s.stable,
                    max_eigenvalue_real_per_s: s.max_eigenvalue_real,
                    temperature: s.temperature,
                    outlet: names(&s.flows),
                })
                .collect(),
            note: st.note.clone(),
            scan_window_k: st.heat.as_ref().map(|h| h.window_k),
            turning_points: st
                .heat
                .as_ref()
                .map(|h| turning_points_report(&h.turning_points)),
        }),
        coolant_solutions: sim
            .counter_current
            .as_ref()
            .map(|cc| CoolantSolutionsReport {
                count: cc.solutions.len(),
                shown: cc.shown + 1,
                choice: cc.choice.to_string(),
                solutions: cc
                    .solutions
                    .iter()
                    .enumerate()
                    .map(|(k, s)| CoolantSolutionEntry {
                        number: k + 1,
                        coolant_outlet_temperature: s.coolant_outlet_temperature,
                        hot_spot_temperature: s.hot_spot.temperature,
                        hot_spot_at: s.hot_spot.at,
                        conversion: s.conversion,
                    })
                    .collect(),
                searched_from: cc.scan.0,
                searched_to: cc.scan.1,
                trials: cc.trials,
                failed_trials: cc.failed_trials,
                notes: cc.notes.clone(),
            }),
        profile,
        units: None,
    }
}

fn size_text(r: &RunReport) -> String {
    match r.size_variable {
        "V" => format!("V = {} m3 ({} L)", num(r.size), num(r.size * 1e3)),
        "W" => format!("W = {} kg catalyst", num(r.size)),
        _ => format!("t = {} s ({} h)", num(r.size), num(r.size / 3600.0)),
    }
}

/// The heat figures of a non-isothermal run (see [`crate::safety`]).
fn heat_text(o: &mut String, r: &RunReport, h: &crate::safety::HeatFigures) {
    let unit = match r.size_variable {
        "V" => "m3",
        "W" => "kg",
        _ => "s",
    };
    let x = r.size_variable;
    let _ = writeln!(
        o,
        "\n  temperature: T_{} = {} K, T_{} = {} K; adiabatic {} of the feed ΔT_ad = {} K (on {}, per its key {})",
        if x == "t" { "0" } else { "in" },
        num(h.inlet_temperature),
        if x == "t" { "end" } else { "out" },
        num(h.outlet_temperature),
        if h.adiabatic_rise < 0.0 {
            "drop (endothermic)"
        } else {
            "rise"
        },
        num(h.adiabatic_rise),
        h.adiabatic_rise_reaction,
        r.key
    );
    let _ = writeln!(
        o,
        "  hot spot {} K at {x} = {} {unit}{}",
        num(h.hot_spot.temperature),
        num(h.hot_spot.at),
        if h.cold_spot.temperature < h.inlet_temperature {
            format!(
                "; lowest {} K at {x} = {} {unit}",
                num(h.cold_spot.temperature),
                num(h.cold_spot.at)
            )
        } else {
            String::new()
        }
    );
    if let Some(c) = h.coolant_outlet {
        let _ = writeln!(o, "  coolant leaves at {} K", num(c));
    }
    if let Some(c) = &h.cooling_failure {
        let _ = writeln!(
            o,
            "  if the cooling failed, the charge could reach {} K (T + ΔT_ad × unreacted fraction of {}; largest at t = {} s)",
            num(c.temperature),
            r.key,
            num(c.at)
        );
    }
    if let (Some(m), Some(margin)) = (h.t_max, h.margin) {
        if h.exceeds_limit() {
            let _ = writeln!(
                o,
                "  T_max = {} K IS EXCEEDED{}",
                num(m),
                if margin < 0.0 {
                    format!(" by the hot spot, by {} K", num(-margin))
                } else {
                    " by the cooling-failure temperature".to_string()
                }
            );
        } else {
            let _ = writeln!(
                o,
                "  T_max = {} K: margin {} K to the hot spot",
                num(m),
                num(margin)
            );
        }
    }
    for w in &r.warnings {
        let _ = writeln!(o, "  warning: {w}");
    }
}

/// The run as a readable table.
pub fn text(r: &RunReport, verbose: bool) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "{}", r.study);
    let _ = writeln!(
        o,
        "{} ({}), {}, {}{}{}",
        match &r.units {
            Some(u) if u.len() > 1 => format!(
                "{} units in series ({})",
                u.len(),
                u.iter()
                    .map(|u| format!("{} {}", u.id, u.kind))
                    .collect::<Vec<_>>()
                    .join(" -> ")
            ),
            _ => r.reactor.to_uppercase(),
        },
        match r.phase {
            crate::model::Phase::Gas => "gas",
            crate::model::Phase::Liquid => "liquid",
        },
        size_text(r),
        match &r.heat {
            None => format!("T = {} K", num(r.temperature)),
            Some(h) => format!(
                "{}, T_{} = {} K",
                h.heat,
                if r.size_variable == "t" { "0" } else { "in" },
                num(r.temperature)
            ),
        },
        if r.phase == crate::model::Phase::Gas {
            format!(", P_in = {} bar", num(r.inlet_pressure / 1e5))
        } else {
            String::new()
        },
        if r.size_variable != "t" && (r.outlet_pressure - r.inlet_pressure).abs() > 0.0 {
            format!(", P_out = {} bar", num(r.outlet_pressure / 1e5))
        } else {
            String::new()
        }
    );
    let mut conditions = Vec::new();
    if let (Some(v0), Some(v)) = (r.inlet_volumetric_flow, r.outlet_volumetric_flow) {
        conditions.push(format!(
            "v_in = {} L/s, v_out = {} L/s",
            num(v0 * 1e3),
            num(v * 1e3)
        ));
    }
    if let (Some(v0), Some(v)) = (r.initial_volume, r.final_volume) {
        conditions.push(format!(
            "V_0 = {} L, V_end = {} L",
            num(v0 * 1e3),
            num(v * 1e3)
        ));
        if r.phase == crate::model::Phase::Gas {
            conditions.push(format!("P_end = {} bar", num(r.outlet_pressure / 1e5)));
        }
    }
    if let Some(a) = r.ergun_alpha {
        conditions.push(format!("bed constant α = {} 1/kg", num(a)));
    }
    if !conditions.is_empty() {
        let _ = writeln!(o, "{}", conditions.join(", "));
    }
    let listed = |m: &IndexMap<String, f64>, unit: &str| {
        m.iter()
            .map(|(s, v)| format!("{s} {} {unit}", num(*v)))
            .collect::<Vec<_>>()
            .join(", ")
    };
    if let Some(d) = &r.distributed_feed {
        let _ = writeln!(o, "fed along the tube: {}", listed(d, "mol/s"));
    }
    if let Some(p) = &r.permeate {
        let _ = writeln!(
            o,
            "through the wall (net, out of the tube positive): {}",
            listed(p, "mol/s")
        );
    }
    if let Some(d) = &r.dosed {
        let _ = writeln!(o, "dosed over the batch: {}", listed(d, "mol"));
    }
    if let Some(w) = &r.withdrawn {
        let _ = writeln!(o, "withdrawn over the batch: {}", listed(w, "mol"));
    }
    let w = r.outlet.keys().map(|k| k.len()).max().unwrap_or(7).max(7);
    let flow = if r.state_unit == "mol" {
        "N [mol]"
    } else {
        "F [mol/s]"
    };
    let _ = writeln!(
        o,
        "\n  {:<w$}  {:>14}  {:>14}",
        "species", flow, "C [mol/L]"
    );
    for (s, v) in &r.outlet {
        let _ = writeln!(
            o,
            "  {:<w$}  {:>14}  {:>14}",
            s,
            num(*v),
            num(r.concentrations[s] / 1e3)
        );
    }
    if let Some(st) = &r.steady_states
        && (st.count > 1 || st.scan_window_k.is_some())
    {
        let _ = writeln!(
            o,
            "\n  {} steady state{} (conversion of {}; stable when every eigenvalue of the transient has a negative real part):",
            st.count,
            if st.count == 1 { "" } else { "s" },
            r.key
        );
        for e in &st.states {
            let _ = writeln!(
                o,
                "    {}. X = {}{}  {} (largest eigenvalue real part {:.3e} 1/s){}",
                e.number,
                num(e.conversion),
                e.temperature
                    .map(|t| format!(", T = {} K", num(t)))
                    .unwrap_or_default(),
                if e.stable { "stable  " } else { "unstable" },
                e.max_eigenvalue_real_per_s,
                if e.number == st.shown {
                    "  <- shown"
                } else {
                    ""
                }
            );
        }
        let _ = writeln!(
            o,
            "  this report shows steady state {} (choice `{}`; pick another with --steady-state lowest|highest|N or solver.steady_state)",
            st.shown, st.choice
        );
        if let Some((lo, hi)) = st.scan_window_k {
            let _ = writeln!(
                o,
                "  states sought between T = {} K and {} K (heat generated against heat removed)",
                num(lo),
                num(hi)
            );
        }
        if let Some(tp) = st
            .turning_points
            .as_ref()
            .filter(|t| t.values().any(|p| !p.points.is_empty()))
        {
            let _ = writeln!(
                o,
                "  ignition and extinction (turning points of the steady state against a temperature; the others held):"
            );
            for p in tp.values().flat_map(|t| &t.points) {
                let _ = writeln!(
                    o,
                    "    {} at {} {} K (reactor T = {} K, X = {})",
                    p.kind,
                    p.parameter,
                    num(p.value_k),
                    num(p.reactor_temperature_k),
                    num(p.conversion)
                );
            }
        }
    }
    if let Some(note) = r.steady_states.as_ref().and_then(|s| s.note.as_ref()) {
        let _ = writeln!(o, "\n  note: {note}");
    }
    if let Some(cc) = &r.coolant_solutions {
        let _ = writeln!(
            o,
            "\n  counter-current coolant: {} solution{} with the coolant leaving at T_a(0) between {} and {} K ({} trials{}):",
            cc.count,
            if cc.count == 1 { "" } else { "s" },
            num(cc.searched_from),
            num(cc.searched_to),
            cc.trials,
            if cc.failed_trials > 0 {
                format!(", {} failed", cc.failed_trials)
            } else {
                String::new()
            }
        );
        for s in &cc.solutions {
            let _ = writeln!(
                o,
                "    {}. T_a(0) = {} K, hot spot {} K at {} = {}, X = {}{}",
                s.number,
                num(s.coolant_outlet_temperature),
                num(s.hot_spot_temperature),
                r.size_variable,
                num(s.hot_spot_at),
                num(s.conversion),
                if cc.count > 1 && s.number == cc.shown {
                    "  <- shown"
                } else {
                    ""
                }
            );
        }
        if cc.count > 1 {
            let _ = writeln!(
                o,
                "  the boundary-value problem has several solutions; this report shows solution {} ({}); which one the tube runs at depends on how it is started up",
                cc.shown, cc.choice
            );
        }
        for n in &cc.notes {
            let _ = writeln!(o, "  note: {n}");
        }
    }
    if let Some(units) = &r.units {
        super::units::text(
            &mut o,
            units,
            &r.key,
            r.desired.as_deref(),
            if r.size_variable == "W" { "kg" } else { "m3" },
        );
    }
    if let Some(h) = &r.heat {
        heat_text(&mut o, r, h);
    }
    let _ = writeln!(o, "\n  conversion of {}: {}", r.key, num(r.conversion));
    let not_defined = |why: Option<&String>| match why {
        Some(w) => format!("not defined ({w})"),
        None => "not defined".to_string(),
    };
    for (s, y) in &r.yields {
        let why = r.yield_not_defined.get(s);
        let _ = writeln!(
            o,
            "  yield of {s} on {}: {}; on {} fed: {}",
            r.key,
            match y {
                Some(v) => format!("{} ({})", num(*v), r.yield_basis[s]),
                None => not_defined(why),
            },
            r.key,
            match r.yield_on_feed[s] {
                Some(v) => num(v),
                None => not_defined(why),
            }
        );
    }
    if let Some(d) = &r.desired {
        for (u, s) in &r.selectivity {
            let _ = writeln!(
                o,
                "  selectivity {d}/{u}: {}",
                match s {
                    Some(v) => num(*v),
                    None => not_defined(r.selectivity_not_defined.get(u)),
                }
            );
        }
    }
    if verbose && !r.element_closure.is_empty() {
        let parts: Vec<String> = r
            .element_closure
            .iter()
            .map(|(e, c)| format!("{e} {c:.1e}"))
            .collect();
        let _ = writeln!(
            o,
            "  element balance closure (relative): {}",
            parts.join(", ")
        );
    }
    if let Some(profile) = &r.profile {
        profile_text(&mut o, r, profile);
    }
    let s = &r.solver;
    if s.newton_iterations > 0 || s.residual.is_some() {
        let _ = writeln!(
            o,
            "\n{}: {} iterations, {} continuation stages, residual {:.1e} {}, last Newton step {:.1e} {}",
            s.method,
            s.newton_iterations,
            s.continuation_stages,
            s.residual.unwrap_or(0.0),
            r.state_unit,
            s.newton_step.unwrap_or(0.0),
            r.state_unit
        );
    } else {
        let _ = writeln!(
            o,
            "\n{}: {} steps, {} rhs, {} Jacobians, {} LU; rtol {:.0e}, atol {:.1e} {}",
            s.method,
            s.steps,
            s.rhs_evals,
            s.jac_evals,
            s.lu_factorizations,
            s.rtol,
            s.atol,
            r.state_unit
        );
        if s.linear_solves > 0 {
            let _ = writeln!(
                o,
                "  {} GMRES iterations in {} linear solves ({:.1} each), {} fell back to the complete LU",
                s.krylov_iterations,
                s.linear_solves,
                s.krylov_iterations as f64 / s.linear_solves as f64,
                s.krylov_fallbacks
            );
        }
    }
    o
}

/// The profile as a readable table: the independent variable, every species, the pressure
/// and volumetric flow (or volume) where they vary, and the instantaneous selectivities.
fn profile_text(o: &mut String, r: &RunReport, profile: &[ProfilePoint]) {
    let unit = |x: &str| match x {
        "V" => "m3",
        "W" => "kg",
        _ => "s",
    };
    let labelled = profile[0].unit.is_some();
    let mut header = vec![format!("{} [{}]", r.size_variable, unit(r.size_variable))];
    if labelled {
        header.insert(0, "unit".into());
    }
    header.extend(r.outlet.keys().map(|s| format!("{s} [{}]", r.state_unit)));
    let first = &profile[0];
    if first.pressure.is_some() {
        header.push("P [bar]".into());
    }
    if first.volumetric_flow.is_some() {
        header.push("v [L/s]".into());
    }
    if first.volume.is_some() {
        header.push("V [L]".into());
    }
    if first.temperature.is_some() {
        header.push("T [K]".into());
    }
    if first.coolant_temperature.is_some() {
        header.push("T_coolant [K]".into());
    }
    if let Some(q) = &first.permeate {
        header.extend(q.keys().map(|s| format!("permeate {s} [mol/s]")));
    }
    if let Some(d) = &r.desired {
        header.extend(
            first
                .instantaneous_selectivity
                .keys()
                .map(|u| format!("S_inst {d}/{u}")),
        );
        header.push(format!("S_inst {d}/all"));
    }
    let rows: Vec<Vec<String>> = profile
        .iter()
        .map(|p| {
            let mut row = vec![num(p.x)];
            if let Some(u) = &p.unit {
                row.insert(0, u.clone());
            }
            row.extend(p.state.values().map(|v| num(*v)));
            row.extend(p.pressure.map(|v| num(v / 1e5)));
            row.extend(p.volumetric_flow.map(|v| num(v * 1e3)));
            row.extend(p.volume.map(|v| num(v * 1e3)));
            row.extend(p.temperature.map(num));
            row.extend(p.coolant_temperature.map(num));
            if let Some(q) = &p.permeate {
                row.extend(q.values().map(|v| num(*v)));
            }
            if r.desired.is_some() {
                row.extend(
                    p.instantaneous_selectivity
                        .values()
                        .map(|s| s.map(num).unwrap_or_else(|| "—".into())),
                );
                row.push(
                    p.instantaneous_selectivity_over_all
                        .map(num)
                        .unwrap_or_else(|| "—".into()),
                );
            }
            row
        })
        .collect();
    let widths: Vec<usize> = (0..header.len())
        .map(|c| {
            rows.iter()
                .map(|row| row[c].chars().count())
                .chain([header[c].chars().count()])
                .max()
                .unwrap_or(0)
        })
        .collect();
    let line = |cells: &[String]| -> String {
        let parts: Vec<String> = cells
            .iter()
            .zip(&widths)
            .map(|(c, w)| format!("{c:>w$}"))
            .collect();
        format!("  {}\n", parts.join("  "))
    };
    let _ = write!(o, "\nprofile ({} points):\n", profile.len());
    o.push_str(&line(&header));
    for row in &rows {
        o.push_str(&line(row));
    }
    if r.desired.is_some() {
        let _ = writeln!(
            o,
            "  S_inst: instantaneous selectivity, the desired product's net rate of formation over another's (— where it is not defined: either product being net consumed, or the other not being formed); /all: over all other products being formed together."
        );
    }
}

/// The profile as CSV: the independent variable, every species, then P where it varies
/// (packed bed with pressure drop, constant-volume gas batch), the volumetric flow v of a gas
/// flow reactor (or of a liquid tube with distributed feeds) or the volume V of a
/// constant-pressure gas batch, T and the coolant's T where they are states, the net permeate
/// of each membrane species (positive out of the tube), then the instantaneous
/// selectivities of the desired product over each other product and over all of them (empty
/// where not defined).
pub fn profile_csv(net: &Network, balance: &Balance, sim: &Simulation) -> String {
    let mut o = String::new();
    let batch = net.reactor.is_batch();
    let unit = if batch { "mol" } else { "mol/s" };
    let (p_varies, v_varies) = varying(net, sim);
    let _ = write!(o, "{} [{}]", sim.x_name, sim.x_unit);
    for s in &net.species {
        let _ = write!(o, ",{}", csv_field(&format!("{} [{unit}]", s.name)));
    }
    if p_varies {
        let _ = write!(o, ",P [Pa]");
    }
    if v_varies {
        let _ = write!(o, "{}", if batch { ",V [m3]" } else { ",v [m3/s]" });
    }
    if sim.temperature.is_some() {
        let _ = write!(o, ",T [K]");
    }
    if sim.coolant.is_some() || coolant_varies(net) {
        let _ = write!(o, ",T_coolant [K]");
    }
    let membrane = balance
        .walls()
        .map(|w| w.membrane_species())
        .unwrap_or_default();
    for &j in &membrane {
        let _ = write!(
            o,
            ",{}",
            csv_field(&format!("permeate {} [mol/s]", net.species[j].name))
        );
    }
    if let Some(d) = net.desired {
        let name = &net.species[d].name;
        for u in metrics::products(net).into_iter().filter(|&u| u != d) {
            let _ = write!(
                o,
                ",{}",
                csv_field(&format!("S_inst {name}/{} [-]", net.species[u].name))
            );
        }
        let _ = write!(o, ",{}", csv_field(&format!("S_inst {name}/all [-]")));
    }
    o.push('\n');
    let opt = |o: &mut String, v: Option<f64>| match v {
        Some(v) => {
            let _ = write!(o, ",{v:.12e}");
        }
        None => o.push(','),
    };
    for (k, x) in sim.x.iter().enumerate() {
        let _ = write!(o, "{x:.12e}");
        for v in &sim.states[k] {
            let _ = write!(o, ",{v:.12e}");
        }
        let cond = conditions(net, sim, k);
        if p_varies {
            let _ = write!(o, ",{:.12e}", cond.pressure);
        }
        if v_varies {
            let _ = write!(o, ",{:.12e}", cond.volumetric);
        }
        if let Some(t) = &sim.temperature {
            let _ = write!(o, ",{:.12e}", t[k]);
        }
        if let Some(ta) = coolant_temperature(net, sim, k) {
            let _ = write!(o, ",{ta:.12e}");
        }
        if let Some(q) = permeate_at(net, balance, sim, k) {
            for v in q.values() {
                let _ = write!(o, ",{v:.12e}");
            }
        }
        if net.desired.is_some() {
            let inst = metrics::instantaneous_selectivity(
                net,
                balance,
                sim.x[k],
                &sim.model_state(k, net.feed.pressure),
            );
            for s in &inst {
                opt(&mut o, s.value);
            }
            opt(&mut o, over_all(&inst));
        }
        o.push('\n');
    }
    o
}

/// One CSV field, quoted when it holds a comma, a quote or a line break (RFC 4180).
pub fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}
