//! `reactor.heat` and `reactor.T_max`: isothermal (the default), adiabatic, or heat exchange
//! with a coolant; the liquid mixture heat capacity; the temperature limit of the process.

use super::messages::significant;
use super::{Cx, LoadError};
use crate::model::file::*;
use crate::model::*;
use crate::units::Dim;

fn watts_per_kelvin() -> Dim {
    Dim::energy().div(Dim::TIME).div(Dim::TEMPERATURE)
}

/// A reactor's heat model and temperature limit, after the species, feed and reactions are
/// known (an energy balance needs a heat capacity for every species that is fed or made and an
/// enthalpy for every reaction).
#[allow(clippy::too_many_arguments)]
pub(super) fn build_heat(
    r: &RawReactor,
    at: &str,
    reactor: &Reactor,
    phase: Phase,
    species: &[Species],
    reactions: &[Reaction],
    feed: &Feed,
    cx: &Cx,
) -> Result<(Heat, Option<f64>), LoadError> {
    let t_max = match &r.t_max {
        None => None,
        Some(q) => {
            let v = cx.qty(
                &format!("{at}.T_max"),
                q,
                Dim::TEMPERATURE,
                "a temperature",
                "450 K",
            )?;
            Some(cx.positive(&format!("{at}.T_max"), v, "the absolute temperature")?)
        }
    };
    let heat = match &r.heat {
        None => Heat::Isothermal,
        Some(RawHeat::Word(w)) => match w.as_str() {
            "isothermal" => Heat::Isothermal,
            "adiabatic" => Heat::Balance(EnergyBalance {
                exchange: None,
                mixture_cp: None,
            }),
            other => {
                return Err(cx.err(
                    &format!("{at}.heat"),
                    &format!("unknown heat model `{other}`"),
                    Some(
                        "write `isothermal`, `adiabatic`, or a map with the heat exchange, e.g. {U: 300 W/(m2*K), area: 40 m2/m3, coolant: {T: 300 K}}"
                            .into(),
                    ),
                ));
            }
        },
        Some(RawHeat::Map(m)) => Heat::Balance(build_balance(m, at, reactor, phase, cx)?),
    };
    if let Heat::Balance(e) = &heat {
        require_data(e, at, phase, reactor, species, reactions, feed, cx)?;
    }
    Ok((heat, t_max))
}

fn build_balance(
    m: &RawHeatMap,
    at: &str,
    reactor: &Reactor,
    phase: Phase,
    cx: &Cx,
) -> Result<EnergyBalance, LoadError> {
    let kind = reactor.kind();
    let tube = matches!(reactor, Reactor::Pfr { .. } | Reactor::Pbr { .. });
    // What "per unit of reactor size" means for the exchange area and UA.
    let (size_dim, area_ex, ua_ex, per) = match reactor {
        Reactor::Pfr { .. } => (
            Dim::volume(),
            "40 m2/m3",
            "12 kW/(m3*K)",
            "per reactor volume",
        ),
        Reactor::Pbr { .. } => (Dim::MASS, "0.5 m2/kg", "150 W/(kg*K)", "per catalyst mass"),
        _ => (Dim::NONE, "5 m2", "1.5 kW/K", "in total"),
    };
    let exchange_given = m.u.is_some() || m.area.is_some() || m.ua.is_some() || m.coolant.is_some();
    let exchange = if !exchange_given {
        None
    } else {
        let ua = match (&m.u, &m.area, &m.ua) {
            (Some(u), Some(a), None) => {
                let u = cx.qty(
                    &format!("{at}.heat.U"),
                    u,
                    watts_per_kelvin().div(Dim::LENGTH.powf(2.0)),
                    "an overall heat-transfer coefficient",
                    "300 W/(m2*K)",
                )?;
                let u = cx.positive(&format!("{at}.heat.U"), u, "U")?;
                let a = cx.qty(
                    &format!("{at}.heat.area"),
                    a,
                    Dim::LENGTH.powf(2.0).div(size_dim),
                    &format!("the exchange area {per} of a {kind}"),
                    area_ex,
                )?;
                u * cx.positive(&format!("{at}.heat.area"), a, "the exchange area")?
            }
            (None, None, Some(ua)) => {
                let v = cx.qty(
                    &format!("{at}.heat.UA"),
                    ua,
                    watts_per_kelvin().div(size_dim),
                    &format!("U times the exchange area {per} of a {kind}"),
                    ua_ex,
                )?;
                cx.positive(&format!("{at}.heat.UA"), v, "UA")?
            }
            (Some(_), None, None) | (None, Some(_), None) => {
                return Err(cx.err(
                    &format!("{at}.heat"),
                    "heat exchange needs both `U` and `area`",
                    Some(format!(
                        "e.g. `U: 300 W/(m2*K)` and `area: {area_ex}`, or the product `UA: {ua_ex}`"
                    )),
                ));
            }
            (None, None, None) => {
                return Err(cx.err(
                    &format!("{at}.heat"),
                    "a coolant is given but no heat-transfer coefficient",
                    Some(format!("add `U: 300 W/(m2*K)` and `area: {area_ex}`, or `UA: {ua_ex}`; drop `coolant` for an adiabatic reactor")),
                ));
            }
            _ => {
                return Err(cx.err(
                    &format!("{at}.heat.UA"),
                    "give either `U` with `area`, or their product `UA`, not both",
                    None,
                ));
            }
        };
        let Some(c) = &m.coolant else {
            return Err(cx.err(
                &format!("{at}.heat"),
                "heat exchange needs the `coolant`",
                Some(if tube {
                    "e.g. `coolant: {T: 300 K}` (constant temperature) or `coolant: {T_in: 300 K, mass_flow: 2 kg/s, cp: 4.18 kJ/(kg*K), direction: counter_current}`".into()
                } else {
                    "e.g. `coolant: {T: 300 K}`".into()
                }),
            ));
        };
        Exchange {
            ua,
            coolant: build_coolant(c, at, reactor, cx)?,
        }
        .into()
    };
    let mixture_cp = match (&m.mixture_cp, &m.density) {
        (None, None) => None,
        (None, Some(_)) => {
            return Err(cx.err(
                &format!("{at}.heat.density"),
                "`density` is used only with a mixture heat capacity per mass",
                Some("add `mixture_cp: 3.9 kJ/(kg*K)`, or drop `density`".into()),
            ));
        }
        (Some(q), density) => {
            let f = &format!("{at}.heat.mixture_cp");
            if phase == Phase::Gas {
                return Err(cx.err(
                    f,
                    "a mixture heat capacity is for liquids; a gas's heat capacity follows its composition",
                    Some("give each species its `cp` instead".into()),
                ));
            }
            let per_mass = Dim::energy().div(Dim::MASS).div(Dim::TEMPERATURE);
            let per_volume = Dim::energy().div(Dim::volume()).div(Dim::TEMPERATURE);
            let (v, dim) = cx.raw_qty(f, q, per_mass, "a heat capacity", "3.9 kJ/(kg*K)")?;
            let v = cx.positive(f, v, "the mixture heat capacity")?;
            if dim.approx_eq(per_volume) {
                if density.is_some() {
                    return Err(cx.err(
                        &format!("{at}.heat.density"),
                        "the mixture heat capacity is already per volume; `density` is not used",
                        None,
                    ));
                }
                Some(v)
            } else if dim.approx_eq(per_mass) {
                let Some(d) = density else {
                    return Err(cx.err(
                        f,
                        "a heat capacity per mass needs the liquid's `density`",
                        Some("add `density: 950 kg/m3`, or give the heat capacity per volume, e.g. `3.7 MJ/(m3*K)`".into()),
                    ));
                };
                let rho = cx.qty(
                    &format!("{at}.heat.density"),
                    d,
                    Dim::MASS.div(Dim::volume()),
                    "a density",
                    "950 kg/m3",
                )?;
                Some(v * cx.positive(&format!("{at}.heat.density"), rho, "the density")?)
            } else {
                return Err(cx.wrong_dimensions(
                    f,
                    q,
                    dim,
                    per_mass,
                    "a mixture heat capacity",
                    "3.9 kJ/(kg*K)",
                    ", or per volume such as 3.7 MJ/(m3*K)",
                ));
            }
        }
    };
    Ok(EnergyBalance {
        exchange,
        mixture_cp,
    })
}

fn build_coolant(
    c: &RawCoolant,
    at: &str,
    reactor: &Reactor,
    cx: &Cx,
) -> Result<Coolant, LoadError> {
    let temp = |k: &str, q: &RawQty| -> Result<f64, LoadError> {
        let f = format!("{at}.heat.coolant.{k}");
        let v = cx.qty(&f, q, Dim::TEMPERATURE, "a temperature", "300 K")?;
        cx.positive(&f, v, "the absolute temperature")
    };
    let tube = matches!(reactor, Reactor::Pfr { .. } | Reactor::Pbr { .. });
    let stream =
        c.t_in.is_some() || c.mass_flow.is_some() || c.cp.is_some() || c.direction.is_some();
    if stream {
        if !tube {
            return Err(cx.err(
                &format!("{at}.heat.coolant"),
                &format!(
                    "a coolant stream along the wall is modelled for a tube (pfr, pbr); a {} takes a coolant temperature",
                    reactor.kind()
                ),
                Some("write `coolant: {T: 300 K}`".into()),
            ));
        }
        if c.t.is_some() || c.ramp.is_some() || c.t_final.is_some() {
            return Err(cx.err(
                &format!("{at}.heat.coolant"),
                "give either a coolant temperature `T` or a coolant stream (`T_in`, `mass_flow`, `cp`, `direction`), not both",
                None,
            ));
        }
        fn need<'a>(
            cx: &Cx,
            at: &str,
            k: &str,
            q: &'a Option<RawQty>,
        ) -> Result<&'a RawQty, LoadError> {
            q.as_ref().ok_or_else(|| {
                cx.err(
                    &format!("{at}.heat.coolant"),
                    &format!("a coolant stream needs `{k}`"),
                    Some("e.g. `coolant: {T_in: 300 K, mass_flow: 2 kg/s, cp: 4.18 kJ/(kg*K), direction: counter_current}`".into()),
                )
            })
        }
        let inlet = temp("T_in", need(cx, at, "T_in", &c.t_in)?)?;
        let m = cx.qty(
            &format!("{at}.heat.coolant.mass_flow"),
            need(cx, at, "mass_flow", &c.mass_flow)?,
            Dim::MASS.div(Dim::TIME),
            "a mass flow",
            "2 kg/s",
        )?;
        let m = cx.positive(
            &format!("{at}.heat.coolant.mass_flow"),
            m,
            "the coolant mass flow",
        )?;
        let cp = cx.qty(
            &format!("{at}.heat.coolant.cp"),
            need(cx, at, "cp", &c.cp)?,
            Dim::energy().div(Dim::MASS).div(Dim::TEMPERATURE),
            "a heat capacity per mass",
            "4.18 kJ/(kg*K)",
        )?;
        let cp = cx.positive(
            &format!("{at}.heat.coolant.cp"),
            cp,
            "the coolant heat capacity",
        )?;
        let Some(direction) = c.direction else {
            return Err(cx.err(
                &format!("{at}.heat.coolant"),
                "a coolant stream needs its `direction`: `co_current` or `counter_current`",
                None,
            ));
        };
        return Ok(Coolant::Stream {
            inlet,
            capacity: m * cp,
            counter_current: direction == RawDirection::CounterCurrent,
        });
    }
    let Some(t) = &c.t else {
        return Err(cx.err(
            &format!("{at}.heat.coolant"),
            "the coolant needs its temperature `T`",
            Some("e.g. `coolant: {T: 300 K}`".into()),
        ));
    };
    let start = temp("T", t)?;
    match (&c.ramp, &c.t_final) {
        (None, None) => Ok(Coolant::Constant { temperature: start }),
        (Some(ramp), end) => {
            if !reactor.is_batch() {
                return Err(cx.err(
                    &format!("{at}.heat.coolant.ramp"),
                    "a temperature ramp is modelled for a batch jacket",
                    None,
                ));
            }
            let rate = cx.qty(
                &format!("{at}.heat.coolant.ramp"),
                ramp,
                Dim::TEMPERATURE.div(Dim::TIME),
                "a rate of temperature change",
                "0.5 K/min",
            )?;
            let Some(end) = end else {
                return Err(cx.err(
                    &format!("{at}.heat.coolant"),
                    "a ramp needs the temperature it stops at, `T_final`",
                    Some("e.g. `T_final: 340 K`".into()),
                ));
            };
            let end = temp("T_final", end)?;
            if rate == 0.0 || (end - start) * rate < 0.0 {
                return Err(cx.err(
                    &format!("{at}.heat.coolant.ramp"),
                    &format!(
                        "a ramp of {} K/s never takes the jacket from {} K to T_final = {} K",
                        significant(rate),
                        significant(start),
                        significant(end)
                    ),
                    None,
                ));
            }
            Ok(Coolant::Ramp { start, rate, end })
        }
        (None, Some(_)) => Err(cx.err(
            &format!("{at}.heat.coolant.T_final"),
            "`T_final` ends a jacket ramp; give the `ramp` too (e.g. `ramp: 0.5 K/min`)",
            None,
        )),
    }
}

/// An energy balance needs ΔH of every reaction and Cp of every species that is fed or made
/// (unless a mixture heat capacity stands in for them).
#[allow(clippy::too_many_arguments)]
fn require_data(
    e: &EnergyBalance,
    at: &str,
    phase: Phase,
    reactor: &Reactor,
    species: &[Species],
    reactions: &[Reaction],
    feed: &Feed,
    cx: &Cx,
) -> Result<(), LoadError> {
    for (i, r) in reactions.iter().enumerate() {
        let from_species = r.net.iter().all(|&(j, _)| species[j].thermo.h_f.is_some());
        if r.dh.is_none() && !from_species {
            return Err(cx.err(
                &format!("{at}.heat"),
                &format!(
                    "an energy balance needs the heat of reaction of `{}` ({})",
                    r.id, r.equation
                ),
                Some(format!(
                    "give `reactions[{i}].rate.dH` (e.g. `dH: -85 kJ/mol`), or `H_f` of each of its species"
                )),
            ));
        }
    }
    if e.mixture_cp.is_some() {
        return Ok(());
    }
    let made: Vec<usize> = reactions
        .iter()
        .flat_map(|r| r.net.iter().filter(|(_, v)| *v > 0.0).map(|(j, _)| *j))
        .collect();
    for (j, s) in species.iter().enumerate() {
        if (feed.amounts[j] > 0.0 || made.contains(&j)) && s.thermo.cp.is_none() {
            let liquid = if phase == Phase::Liquid {
                ", or a mixture heat capacity `heat.mixture_cp` (e.g. `3.9 kJ/(kg*K)` with `density`)"
            } else {
                ""
            };
            return Err(cx.err(
                &format!("{at}.heat"),
                &format!("an energy balance needs the heat capacity of `{}`", s.name),
                Some(format!(
                    "give `species.{}.cp` (e.g. `cp: 75 J/(mol*K)`){liquid}",
                    s.name
                )),
            ));
        }
        if phase == Phase::Gas
            && matches!(
                reactor,
                Reactor::Batch {
                    mode: BatchMode::ConstantVolume,
                    ..
                }
            )
            && let Some(crate::model::heat_capacity::HeatCapacity::Constant(cp)) = s.thermo.cp
            && cp <= crate::units::GAS_CONSTANT
        {
            return Err(cx.err(
                &format!("species.{}.cp", s.name),
                &format!(
                    "an ideal gas has Cp > R = 8.314 J/(mol K) (Cv = Cp − R is used in a constant-volume batch); got {} J/(mol K)",
                    significant(cp)
                ),
                None,
            ));
        }
    }
    Ok(())
}
