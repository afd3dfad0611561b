//! The `feed` section: temperature, pressure and the feed flows (flow reactors) or initial
//! charge (batch), as flows, concentrations or amounts.

use super::messages::significant;
use super::species::species_map;
use super::{Cx, LoadError, conc};
use crate::model::file::*;
use crate::model::*;
use crate::units::{Dim, GAS_CONSTANT};
use indexmap::IndexMap;

/// Relative mismatch allowed between a gas charge's total concentration and P/(R T).
const IDEAL_GAS_CONSISTENCY: f64 = 0.01;

#[allow(clippy::too_many_arguments)]
pub(super) fn build_feed(
    f: &RawFeed,
    at: &str,
    phase: Phase,
    reactor: &Reactor,
    index: &IndexMap<String, usize>,
    species: &[Species],
    cx: &Cx,
) -> Result<Feed, LoadError> {
    let temperature = cx.qty(
        &format!("{at}.T"),
        &f.t,
        Dim::TEMPERATURE,
        "a temperature",
        "320 K",
    )?;
    if temperature <= 0.0 {
        return Err(cx.err(
            &format!("{at}.T"),
            &format!(
                "the temperature is at or below absolute zero: {} K",
                significant(temperature)
            ),
            Some("check the value and its unit (`K`, or `degC` alone as in `25 degC`)".into()),
        ));
    }
    cx.positive(&format!("{at}.T"), temperature, "the absolute temperature")?;
    let pressure = match &f.p {
        Some(p) => {
            let v = cx.qty(
                &format!("{at}.P"),
                p,
                Dim::pressure(),
                "a pressure",
                "20 bar",
            )?;
            if let RawQty::Text(t) = p
                && v <= 0.0
                && crate::units::gauge_note(t).is_some()
            {
                return Err(cx.err(
                    &format!("{at}.P"),
                    &format!(
                        "the gauge reading `{}` is {} Pa absolute (gauge + 101325 Pa, the standard atmosphere): at or below a perfect vacuum",
                        t.trim(),
                        significant(v)
                    ),
                    Some("a gauge reading below vacuum is impossible; check the sign, or give the absolute pressure (`bar`, `psia`)".into()),
                ));
            }
            Some(cx.positive(&format!("{at}.P"), v, "the pressure")?)
        }
        None => None,
    };
    let gas = phase == Phase::Gas;
    let batch = reactor.is_batch();
    let c_total_ideal = pressure.map(|p| p / (GAS_CONSTANT * temperature));

    let (amounts, volumetric) = if batch {
        if f.flows.is_some() {
            return Err(cx.err(
                &format!("{at}.flows"),
                "a batch reactor is charged, not fed: give `amounts` (mol) or `concentrations`",
                None,
            ));
        }
        if f.volumetric.is_some() {
            return Err(cx.err(
                &format!("{at}.volumetric"),
                "a batch charge has no volumetric flow; its volume is `reactor.volume`",
                None,
            ));
        }
        let Reactor::Batch { volume, mode, .. } = reactor else {
            unreachable!("batch checked above")
        };
        let amounts = match (&f.amounts, &f.concentrations) {
            (Some(_), Some(_)) => {
                return Err(cx.err(at, "give the charge as `amounts` or as `concentrations`, not both", None))
            }
            (None, None) => {
                return Err(cx.err(
                    at,
                    "a batch charge needs `amounts` (e.g. {A: 10 mol}) or `concentrations` (e.g. {A: 1 mol/L})",
                    None,
                ))
            }
            (Some(a), None) => species_map(&format!("{at}.amounts"), a, index, Dim::AMOUNT, "an amount", "10 mol", "2 kg", species, cx)?,
            (None, Some(c)) => {
                if *volume == 0.0 {
                    return Err(cx.err(
                        "reactor",
                        "a charge given as concentrations needs `reactor.volume`",
                        None,
                    ));
                }
                let cs = species_map(&format!("{at}.concentrations"), c, index, conc(), "a concentration", "1 mol/L", "50 g/L", species, cx)?;
                cs.iter().map(|c| c * volume).collect()
            }
        };
        let total: f64 = amounts.iter().sum();
        if !(total > 0.0) {
            return Err(cx.err(
                at,
                "the charge is empty: at least one species needs a positive amount",
                None,
            ));
        }
        let v0 = if gas {
            let v_ideal = ideal_gas_volume(cx, at, pressure, total, temperature)?;
            if *mode == BatchMode::ConstantPressure && *volume == 0.0 {
                v_ideal
            } else {
                let rel = (v_ideal - volume).abs() / volume;
                if rel > IDEAL_GAS_CONSISTENCY {
                    return Err(cx.err(
                        &format!("{at}.P"),
                        &format!(
                            "the gas charge does not fit the vessel: N_T0 R T0 / P0 = {v_ideal:.6e} m3 but reactor.volume = {volume:.6e} m3 (ideal gas)"
                        ),
                        Some("check the amounts, T, P and the volume".into()),
                    ));
                }
                *volume
            }
        } else {
            *volume
        };
        (amounts, v0)
    } else {
        if f.amounts.is_some() {
            return Err(cx.err(
                &format!("{at}.amounts"),
                "`amounts` is a batch charge; a flow reactor takes `flows` (mol/s) or `volumetric` with `concentrations`",
                None,
            ));
        }
        match (&f.flows, &f.concentrations) {
            (Some(_), Some(_)) => {
                return Err(cx.err(
                    at,
                    "give the feed as `flows` or as `volumetric` with `concentrations`, not both",
                    None,
                ));
            }
            (None, None) => return Err(cx.err(
                at,
                "the feed needs `flows` (e.g. {A: 2 mol/s}) or `volumetric` with `concentrations`",
                None,
            )),
            (Some(fl), None) => {
                let amounts = species_map(
                    &format!("{at}.flows"),
                    fl,
                    index,
                    Dim::AMOUNT.div(Dim::TIME),
                    "a molar flow",
                    "2 mol/s",
                    "1200 kg/h",
                    species,
                    cx,
                )?;
                let total: f64 = amounts.iter().sum();
                if !(total > 0.0) {
                    return Err(cx.err(
                        &format!("{at}.flows"),
                        "the feed is empty: at least one species needs a positive flow",
                        None,
                    ));
                }
                let given = match &f.volumetric {
                    Some(q) => {
                        let v = cx.qty(
                            &format!("{at}.volumetric"),
                            q,
                            Dim::volume().div(Dim::TIME),
                            "a volumetric flow",
                            "50 L/min",
                        )?;
                        Some(cx.positive(&format!("{at}.volumetric"), v, "the volumetric flow")?)
                    }
                    None => None,
                };
                let v0 = if gas {
                    let v_ideal = ideal_gas_volume(cx, at, pressure, total, temperature)?;
                    if let Some(v) = given
                        && (v - v_ideal).abs() / v_ideal > IDEAL_GAS_CONSISTENCY
                    {
                        return Err(cx.err(
                                &format!("{at}.volumetric"),
                                &format!("for an ideal gas F_T0 R T0 / P0 = {v_ideal:.6e} m3/s, but volumetric = {v:.6e} m3/s"),
                                Some("drop `volumetric` (it follows from flows, T and P) or correct it".into()),
                            ));
                    }
                    v_ideal
                } else {
                    given.ok_or_else(|| {
                        cx.err(
                            at,
                            "a liquid feed given as molar flows needs `volumetric` (the volumetric flow v0) to give concentrations",
                            Some("e.g. `volumetric: 50 L/min`".into()),
                        )
                    })?
                };
                (amounts, v0)
            }
            (None, Some(c)) => {
                let v0 = match &f.volumetric {
                    Some(q) => {
                        let v = cx.qty(&format!("{at}.volumetric"), q, Dim::volume().div(Dim::TIME), "a volumetric flow", "50 L/min")?;
                        cx.positive(&format!("{at}.volumetric"), v, "the volumetric flow")?
                    }
                    None => {
                        return Err(cx.err(
                            at,
                            "a feed given as concentrations needs `volumetric` (the volumetric flow v0)",
                            Some("e.g. `volumetric: 50 L/min`".into()),
                        ))
                    }
                };
                let cs = species_map(
                    &format!("{at}.concentrations"),
                    c,
                    index,
                    conc(),
                    "a concentration",
                    "1 mol/L",
                    "50 g/L",
                    species,
                    cx,
                )?;
                let amounts: Vec<f64> = cs.iter().map(|c| c * v0).collect();
                if !(amounts.iter().sum::<f64>() > 0.0) {
                    return Err(cx.err(
                        &format!("{at}.concentrations"),
                        "the feed is empty: at least one species needs a positive concentration",
                        None,
                    ));
                }
                if gas {
                    let ct = c_total_ideal.ok_or_else(|| {
                        cx.err(
                            at,
                            "a gas-phase study needs the feed pressure `P`",
                            Some("e.g. `P: 2 bar`".into()),
                        )
                    })?;
                    let sum: f64 = cs.iter().sum();
                    if (sum - ct).abs() / ct > IDEAL_GAS_CONSISTENCY {
                        return Err(cx.err(
                            &format!("{at}.concentrations"),
                            &format!("the gas concentrations sum to {sum:.6e} mol/m3 but P0/(R T0) = {ct:.6e} mol/m3 (ideal gas)"),
                            Some("list every species of the gas, inerts included, or correct T or P".into()),
                        ));
                    }
                }
                (amounts, v0)
            }
        }
    };
    if gas && pressure.is_none() {
        return Err(cx.err(
            at,
            "a gas-phase study needs the feed pressure `P`",
            Some("e.g. `P: 2 bar`".into()),
        ));
    }
    Ok(Feed {
        temperature,
        pressure: pressure.unwrap_or(101_325.0),
        amounts,
        volumetric,
    })
}

/// The ideal-gas volume (or volumetric flow) of `total` mol (or mol/s) at the feed's T and P,
/// V = N R T / P (common practice); a gas study must give P.
fn ideal_gas_volume(
    cx: &Cx,
    at: &str,
    pressure: Option<f64>,
    total: f64,
    temperature: f64,
) -> Result<f64, LoadError> {
    let p = pressure.ok_or_else(|| {
        cx.err(
            at,
            "a gas-phase study needs the feed pressure `P`",
            Some("e.g. `P: 2 bar`".into()),
        )
    })?;
    Ok(total * GAS_CONSTANT * temperature / p)
}
