//! The `reactor` section: the reactor type and size, batch mode, and the packed bed's pressure
//! drop (lumped α or the Ergun equation).

use super::{Cx, LoadError};
use crate::model::file::*;
use crate::model::*;
use crate::units::Dim;

pub(super) fn build_reactor(
    r: &RawReactor,
    at: &str,
    phase: Phase,
    cx: &Cx,
) -> Result<Reactor, LoadError> {
    let kind = match r.kind {
        RawReactorType::Pfr => "pfr",
        RawReactorType::Pbr => "pbr",
        RawReactorType::Cstr => "cstr",
        RawReactorType::Batch => "batch",
    };
    let not_for = |field: &str, what: &str| {
        cx.err(
            &format!("{at}.{field}"),
            &format!("`{field}` does not apply to a {kind} reactor"),
            Some(what.to_string()),
        )
    };
    let size = |field: &str,
                q: &Option<RawQty>,
                want: Dim,
                what: &str,
                ex: &str|
     -> Result<f64, LoadError> {
        let f = format!("{at}.{field}");
        match q {
            None => Err(cx.err(
                at,
                &format!("a {kind} reactor needs `{field}` ({what})"),
                Some(format!("e.g. `{field}: {ex}`")),
            )),
            Some(q) => {
                let v = cx.qty(&f, q, want, what, ex)?;
                cx.positive(&f, v, what)
            }
        }
    };
    if r.kind != RawReactorType::Pbr {
        if r.catalyst.is_some() {
            return Err(not_for(
                "catalyst",
                "catalyst mass sizes a packed bed (type: pbr)",
            ));
        }
        if r.pressure_drop.is_some() {
            return Err(not_for(
                "pressure_drop",
                "pressure drop is modelled for a packed bed (type: pbr)",
            ));
        }
    }
    if r.kind != RawReactorType::Batch {
        if r.time.is_some() {
            return Err(not_for(
                "time",
                "a flow reactor is sized by volume or catalyst; `time` is for type: batch",
            ));
        }
        if r.mode.is_some() {
            return Err(not_for(
                "mode",
                "`mode` (constant_volume or constant_pressure) is for type: batch",
            ));
        }
    }
    let volume = || {
        size(
            "volume",
            &r.volume,
            Dim::volume(),
            "reactor volume",
            "1.2 m3",
        )
    };
    Ok(match r.kind {
        RawReactorType::Pfr => Reactor::Pfr { volume: volume()? },
        RawReactorType::Cstr => Reactor::Cstr { volume: volume()? },
        RawReactorType::Pbr => {
            if r.volume.is_some() {
                return Err(not_for(
                    "volume",
                    "a packed bed is sized by its catalyst mass: `catalyst: 300 kg`",
                ));
            }
            let catalyst = size(
                "catalyst",
                &r.catalyst,
                Dim::MASS,
                "catalyst mass",
                "300 kg",
            )?;
            let pressure_drop = match &r.pressure_drop {
                None => None,
                Some(pd) => Some(build_pressure_drop(pd, at, phase, cx)?),
            };
            Reactor::Pbr {
                catalyst,
                pressure_drop,
            }
        }
        RawReactorType::Batch => {
            let mode = match r.mode {
                None | Some(RawBatchMode::ConstantVolume) => BatchMode::ConstantVolume,
                Some(RawBatchMode::ConstantPressure) => BatchMode::ConstantPressure,
            };
            if mode == BatchMode::ConstantPressure && phase == Phase::Liquid {
                return Err(cx.err(
                    &format!("{at}.mode"),
                    "constant_pressure batch operation is modelled for an ideal gas; a liquid batch has constant volume",
                    Some("drop `mode`, or set `phase: gas`".into()),
                ));
            }
            let time = size("time", &r.time, Dim::TIME, "batch time", "2 h")?;
            let volume = match (&r.volume, mode) {
                // A constant-pressure gas batch gets its initial volume from the charge.
                (None, BatchMode::ConstantPressure) => 0.0,
                _ => volume()?,
            };
            Reactor::Batch { volume, time, mode }
        }
    })
}

fn build_pressure_drop(
    pd: &RawPressureDrop,
    at: &str,
    phase: Phase,
    cx: &Cx,
) -> Result<PressureDrop, LoadError> {
    let f = |k: &str| format!("{at}.pressure_drop.{k}");
    if phase == Phase::Liquid {
        return Err(cx.err(
            &format!("{at}.pressure_drop"),
            "pressure drop is modelled for a gas-phase packed bed (ideal gas); a liquid's rates do not depend on pressure here",
            Some("drop `pressure_drop`, or set `phase: gas`".into()),
        ));
    }
    let ergun_given = pd.particle_diameter.is_some()
        || pd.void_fraction.is_some()
        || pd.cross_section.is_some()
        || pd.viscosity.is_some()
        || pd.solid_density.is_some();
    if let Some(a) = &pd.alpha {
        if ergun_given {
            return Err(cx.err(
                &format!("{at}.pressure_drop"),
                "give either the lumped bed constant `alpha` or the bed properties for the Ergun equation, not both",
                None,
            ));
        }
        let alpha = cx.qty(
            &f("alpha"),
            a,
            Dim::MASS.powf(-1.0),
            "a bed constant α",
            "0.002 1/kg",
        )?;
        if !(alpha >= 0.0) {
            return Err(cx.err(&f("alpha"), "α must be zero or positive", None));
        }
        return Ok(PressureDrop::Lumped { alpha });
    }
    let need =
        |k: &str, q: &Option<RawQty>, want: Dim, what: &str, ex: &str| -> Result<f64, LoadError> {
            match q {
                None => Err(cx.err(
                    &format!("{at}.pressure_drop"),
                    &format!("the Ergun equation needs `{k}` ({what})"),
                    Some(format!(
                        "e.g. `{k}: {ex}`, or give the lumped constant `alpha: 0.002 1/kg`"
                    )),
                )),
                Some(q) => {
                    let v = cx.qty(&f(k), q, want, what, ex)?;
                    cx.positive(&f(k), v, what)
                }
            }
        };
    let particle_diameter = need(
        "particle_diameter",
        &pd.particle_diameter,
        Dim::LENGTH,
        "particle diameter",
        "3 mm",
    )?;
    let cross_section = need(
        "cross_section",
        &pd.cross_section,
        Dim::LENGTH.powf(2.0),
        "bed cross-section",
        "0.01 m2",
    )?;
    let viscosity = need(
        "viscosity",
        &pd.viscosity,
        Dim::MASS.div(Dim::LENGTH).div(Dim::TIME),
        "gas viscosity",
        "1.5e-5 Pa*s",
    )?;
    let solid_density = need(
        "solid_density",
        &pd.solid_density,
        Dim::MASS.div(Dim::volume()),
        "catalyst solid density",
        "2000 kg/m3",
    )?;
    let void_fraction =
        match pd.void_fraction {
            None => return Err(cx.err(
                &format!("{at}.pressure_drop"),
                "the Ergun equation needs `void_fraction` (bed porosity, a number between 0 and 1)",
                None,
            )),
            Some(v) if v > 0.0 && v < 1.0 => v,
            Some(v) => {
                return Err(cx.err(
                    &f("void_fraction"),
                    &format!("void fraction must lie strictly between 0 and 1, got {v}"),
                    None,
                ));
            }
        };
    Ok(PressureDrop::Ergun {
        particle_diameter,
        void_fraction,
        cross_section,
        viscosity,
        solid_density,
    })
}
