//! The screening safety figures of a non-isothermal run: the adiabatic temperature rise of the
//! feed, the hot spot and its margin to the process limit T_max, a coolant stream's outlet
//! temperature, and for a batch the temperature the charge would reach if the cooling failed.
//!
//! ```text
//! ΔT_ad  = (−ΔE_k(T0)/|ν_k|) y_k0 / Σ_j y_j0 (Cp_j(T0) − u R)
//! T_cf(t) = T(t) + ΔT_ad y_k(t)/y_k0                       (batch, cooling failure at t)
//! ```
//!
//! with k the key reactant and ΔE_k the heat of the most exothermic reaction that consumes it,
//! per mole of k (ΔE = ΔH, or ΔU in a constant-volume gas batch; the conventions of
//! [`crate::reactor::Energy`]). For one reaction with constant heat capacities the adiabatic
//! reactor follows T − T0 = ΔT_ad X exactly (Fogler ch. 11, Levenspiel ch. 9, from memory);
//! for a network the heat of later steps can add to it, and the cooling-failure temperature
//! counts the key's unreacted heat only (the maximum temperature of the synthesis reaction of
//! common process-safety practice, Stoessel, Thermal Safety of Chemical Processes, from
//! memory). These are screening values: a process-safety review (calorimetry, decomposition
//! of the mixture, relief sizing) under local codes decides.

use crate::model::Network;
use crate::reactor::Balance;
use crate::solve::Simulation;
use serde::Serialize;

/// A temperature and where along the reactor it occurs (SI: K, and m3, kg or s).
#[derive(Debug, Clone, Copy, Serialize)]
pub struct Located {
    pub temperature: f64,
    pub at: f64,
}

/// The heat figures of one non-isothermal run (SI).
#[derive(Debug, Clone, Serialize)]
pub struct HeatFigures {
    /// `adiabatic` or `heat exchange`.
    pub heat: &'static str,
    pub inlet_temperature: f64,
    pub outlet_temperature: f64,
    /// ΔT_ad of the feed, K (negative for an endothermic key reaction), and the reaction it is
    /// counted on.
    pub adiabatic_rise: f64,
    pub adiabatic_rise_reaction: String,
    /// The highest temperature along the profile (the outlet of a CSTR).
    pub hot_spot: Located,
    /// The lowest (an endothermic reactor's cold spot).
    pub cold_spot: Located,
    /// The process limit, K, if given.
    pub t_max: Option<f64>,
    /// T_max − hot spot, K (negative: the limit is exceeded).
    pub margin: Option<f64>,
    /// A coolant stream's temperature where it leaves the reactor, K.
    pub coolant_outlet: Option<f64>,
    /// Batch: the largest cooling-failure temperature T + ΔT_ad × (unreacted fraction of the
    /// key) over the batch, and when.
    pub cooling_failure: Option<Located>,
}

impl HeatFigures {
    /// The figures of a run with an energy balance; `None` for an isothermal one.
    pub fn of(net: &Network, balance: &Balance, sim: &Simulation) -> Option<HeatFigures> {
        let e = balance.energy()?;
        let t = sim.temperature.as_ref()?;
        let (rise, reaction) = e.adiabatic_rise(net);
        // The extremes located between the integrator's steps; a CSTR (one point) is its own.
        let (hot_spot, cold_spot) = match sim.temperature_range {
            Some(r) => (
                Located {
                    temperature: r.max,
                    at: r.max_at,
                },
                Located {
                    temperature: r.min,
                    at: r.min_at,
                },
            ),
            None => {
                let k = t.len() - 1;
                let at = Located {
                    temperature: t[k],
                    at: sim.x[k],
                };
                (at, at)
            }
        };
        let cooling_failure = sim.cooling_failure.map(|c| Located {
            temperature: c.max,
            at: c.max_at,
        });
        let coolant_outlet = sim.coolant.as_ref().map(|c| {
            match e.coolant_stream() {
                // Counter-current: the coolant leaves at the reactor inlet, T_a(0) of the
                // solution shown (the profile may hold the outlet only).
                Some((_, _, true)) => sim
                    .counter_current
                    .as_ref()
                    .map_or(c[0], |cc| cc.solutions[cc.shown].coolant_outlet_temperature),
                _ => *c.last().expect("a profile has its outlet"),
            }
        });
        Some(HeatFigures {
            heat: net.heat.name(),
            inlet_temperature: net.feed.temperature,
            outlet_temperature: *t.last().expect("a profile has its outlet"),
            adiabatic_rise: rise,
            adiabatic_rise_reaction: reaction
                .map(|i| net.reactions[i].id.clone())
                .unwrap_or_default(),
            hot_spot,
            cold_spot,
            t_max: net.t_max,
            margin: net.t_max.map(|m| m - hot_spot.temperature),
            coolant_outlet,
            cooling_failure,
        })
    }

    /// Whether the process limit T_max is exceeded (by the hot spot, or for a batch by the
    /// cooling-failure temperature: that is the one a loss of cooling would reach).
    /// The figures of a train: each unit's with an energy balance, gathered on the train's
    /// coordinate (the hottest and coldest point of any unit, the train's outlet temperature,
    /// the last unit's coolant outlet) with ΔT_ad of the train's feed from the first such
    /// unit's energy balance.
    pub fn of_train(net: &Network, run: &crate::solve::train::TrainRun) -> Option<HeatFigures> {
        let mut all =
            run.units.iter().flat_map(|u| &u.pieces).filter_map(|p| {
                HeatFigures::of(&p.network, &p.balance, &p.sim).map(|h| (p.offset, h))
            });
        let (offset, mut out) = all.next()?;
        out.hot_spot.at += offset;
        out.cold_spot.at += offset;
        out.inlet_temperature = net.feed.temperature;
        out.heat = net.heat_name();
        for (offset, h) in all {
            if h.hot_spot.temperature > out.hot_spot.temperature {
                out.hot_spot = Located {
                    temperature: h.hot_spot.temperature,
                    at: h.hot_spot.at + offset,
                };
            }
            if h.cold_spot.temperature < out.cold_spot.temperature {
                out.cold_spot = Located {
                    temperature: h.cold_spot.temperature,
                    at: h.cold_spot.at + offset,
                };
            }
            if h.coolant_outlet.is_some() {
                out.coolant_outlet = h.coolant_outlet;
            }
        }
        out.outlet_temperature = run.outlet.temperature;
        out.margin = net.t_max.map(|m| m - out.hot_spot.temperature);
        Some(out)
    }

    pub fn exceeds_limit(&self) -> bool {
        self.t_max.is_some_and(|m| {
            self.hot_spot.temperature > m || self.cooling_failure.is_some_and(|c| c.temperature > m)
        })
    }
}

/// The caution under every report of a study with an energy balance.
pub const CAUTION: &str = "caution: these temperatures are screening values from the kinetics and heats given; they do not model decomposition of the mixture, side reactions at high temperature, loss of agitation or relief. Runaway, relief and the temperature limit must be assessed in a process-safety review (calorimetry, relief sizing) under local codes and licensed practice.";

/// The caution under every isothermal report of a network with an exothermic reaction: the
/// result holds only if the heat is removed as fast as it is released.
pub const ISOTHERMAL_CAUTION: &str = "caution: exothermic reactions; this isothermal result assumes the heat is removed (set reactor.heat for an energy balance). Assess runaway and relief under local codes.";

/// The caution a report on `net` carries, the same in every command that reports a result
/// (`run`, `size`, `optimize`, `sensitivity`, `compare`, `sweep`): [`CAUTION`] when the reactor,
/// or any unit of its train, has an energy balance; [`ISOTHERMAL_CAUTION`] when it is
/// isothermal and a reaction releases heat (ΔH < 0); none otherwise.
pub fn caution(net: &Network) -> Option<&'static str> {
    let balance = net.heat.balance().is_some()
        || net
            .train
            .as_ref()
            .is_some_and(|t| t.units.iter().any(|u| u.heat.balance().is_some()));
    if balance {
        Some(CAUTION)
    } else if net.reactions.iter().any(|r| r.dh.is_some_and(|h| h < 0.0)) {
        Some(ISOTHERMAL_CAUTION)
    } else {
        None
    }
}

/// The one caution under a report of several studies or heat models side by side: the
/// energy-balance caution when any entry has one, else the isothermal one when any entry
/// carries it.
pub fn strongest(cautions: impl IntoIterator<Item = Option<&'static str>>) -> Option<&'static str> {
    cautions.into_iter().flatten().max_by_key(|c| *c == CAUTION)
}
