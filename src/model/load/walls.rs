//! Tubes: `distributed_feeds` (streams spread over a stretch of the length) and `membrane`
//! (species crossing the wall).
//!
//! A distributed feed is the whole stream over its stretch (flows, or concentrations with the
//! volumetric flow, by the feed's rules; T and P default to the feed's), entering between
//! `from` (default 0) and `to` (default the tube's size) with a relative intensity `shape`
//! ([[x, weight], ...], linear between, uniform when not given), normalised here to an
//! integral of 1 so that species j enters at F_j,side · w(x) per unit of x.
//! A membrane lists the species crossing the wall with their transport coefficient (per tube
//! volume, 1/s; per catalyst mass of a packed bed, m3/(kg*s)) and the sweep side's
//! concentration (default 0).

use super::messages::significant;
use super::stream::{StreamContext, build_stream};
use super::{Cx, LoadError};
use crate::model::file::*;
use crate::model::*;
use crate::units::Dim;

/// The tube's size and how its coordinate is written: (size, dimension, what, example, unit).
fn tube_axis(reactor: &Reactor) -> Option<(f64, Dim, &'static str, &'static str, &'static str)> {
    match reactor {
        Reactor::Pfr { volume } => Some((*volume, Dim::volume(), "a tube volume", "0.4 m3", "m3")),
        Reactor::Pbr { catalyst, .. } => {
            Some((*catalyst, Dim::MASS, "a catalyst mass", "40 kg", "kg"))
        }
        _ => None,
    }
}

/// The refusal of a wall key on a vessel that is not a tube.
fn not_a_tube(at: &str, key: &str, what: &str, reactor: &Reactor, cx: &Cx) -> LoadError {
    cx.err(
        &format!("{at}.{key}"),
        &format!(
            "{what} belong to a tube (type: pfr or pbr), not a {}",
            reactor.kind()
        ),
        Some(match reactor {
            Reactor::Batch { .. } => {
                "a stream added to a batch over time is `dosing` (semibatch)".into()
            }
            _ => "a stream joining a tank is a `join` of a unit in a `train`".into(),
        }),
    )
}

pub(super) fn build_walls(
    r: &RawReactor,
    at: &str,
    reactor: &Reactor,
    sc: &StreamContext,
    cx: &Cx,
) -> Result<(Vec<DistributedFeed>, Vec<Permeation>), LoadError> {
    let distributed = match &r.distributed_feeds {
        None => Vec::new(),
        Some(list) => build_distributed(list, r.heat.as_ref(), at, reactor, sc, cx)?,
    };
    let membrane = match &r.membrane {
        None => Vec::new(),
        Some(list) => build_membrane(list, at, reactor, sc, cx)?,
    };
    Ok((distributed, membrane))
}

/// The distributed feeds of a tube, each with its shape normalised to an integral of 1.
fn build_distributed(
    list: &[RawDistributedFeed],
    heat: Option<&RawHeat>,
    at: &str,
    reactor: &Reactor,
    sc: &StreamContext,
    cx: &Cx,
) -> Result<Vec<DistributedFeed>, LoadError> {
    let Some((size, dim, what, ex, unit)) = tube_axis(reactor) else {
        return Err(not_a_tube(
            at,
            "distributed_feeds",
            "distributed feeds",
            reactor,
            cx,
        ));
    };
    if let Reactor::Pbr {
        pressure_drop: Some(_),
        ..
    } = reactor
    {
        // The bed's pressure-drop equation holds the mass flux of the inlet stream; a stream
        // added along the bed changes it.
        return Err(cx.err(
            &format!("{at}.distributed_feeds"),
            "a distributed feed along a packed bed with `pressure_drop` is not modelled: the pressure-drop equation holds the inlet's mass flux, which the added stream changes",
            Some("drop `pressure_drop` (a bed with a small pressure drop), or feed the stream at the inlet".into()),
        ));
    }
    let mut out = Vec::with_capacity(list.len());
    for (k, d) in list.iter().enumerate() {
        let f = format!("{at}.distributed_feeds[{k}]");
        let end = |key: &str, q: &Option<RawQty>, default: f64| -> Result<f64, LoadError> {
            match q {
                None => Ok(default),
                Some(q) => cx.qty(&format!("{f}.{key}"), q, dim, what, ex),
            }
        };
        let from = end("from", &d.from, 0.0)?;
        let to = end("to", &d.to, size)?;
        let size_text = format!("{} {unit}", significant(size));
        if !(from >= 0.0 && from < size) {
            return Err(cx.err(
                &format!("{f}.from"),
                &format!(
                    "the stretch starts inside the tube: 0 <= from < {size_text}, got {} {unit}",
                    significant(from)
                ),
                None,
            ));
        }
        if !(to > from && to <= size) {
            return Err(cx.err(
                &format!("{f}.to"),
                &format!(
                    "the stretch ends after it starts and within the tube: {} {unit} < to <= {size_text}, got {} {unit}",
                    significant(from),
                    significant(to)
                ),
                None,
            ));
        }
        let shape = match &d.shape {
            None => Schedule::constant(from, to, 1.0 / (to - from)),
            Some(points) => build_shape(points, &f, from, to, (dim, what, ex, unit), cx)?,
        };
        let stream = build_stream(&d.stream(), &f, sc, cx)?;
        needs_cp(r_heat_uses_species_cp(heat), &stream, &f, sc, cx)?;
        out.push(DistributedFeed { stream, shape });
    }
    Ok(out)
}

/// Whether the vessel's `heat` is an energy balance on the species' heat capacities (not
/// isothermal, no `mixture_cp`).
fn r_heat_uses_species_cp(heat: Option<&RawHeat>) -> bool {
    match heat {
        None => false,
        Some(RawHeat::Word(w)) => w.trim() != "isothermal",
        Some(RawHeat::Map(m)) => m.mixture_cp.is_none(),
    }
}

/// With an energy balance on species data, every species a distributed stream brings needs
/// its heat capacity (the stream is brought to the tube's temperature).
fn needs_cp(
    energy: bool,
    stream: &Feed,
    f: &str,
    sc: &StreamContext,
    cx: &Cx,
) -> Result<(), LoadError> {
    if !energy {
        return Ok(());
    }
    if let Some(j) = (0..stream.amounts.len())
        .find(|&j| stream.amounts[j] > 0.0 && sc.species[j].thermo.cp.is_none())
    {
        let name = &sc.species[j].name;
        return Err(cx.err(
            f,
            &format!(
                "an energy balance needs the heat capacity of `{name}`, which this stream brings along the tube"
            ),
            Some(format!(
                "give `species.{name}.cp` (e.g. `cp: 75 J/(mol*K)`), or a `heat.mixture_cp` for a liquid"
            )),
        ));
    }
    Ok(())
}

/// A shape [[x, weight], ...]: x ascending within [from, to], weights ≥ 0 and not all 0;
/// returned scaled to an integral of 1.
fn build_shape(
    points: &[(RawQty, f64)],
    f: &str,
    from: f64,
    to: f64,
    (dim, what, ex, unit): (Dim, &str, &str, &str),
    cx: &Cx,
) -> Result<Schedule, LoadError> {
    let field = format!("{f}.shape");
    if points.len() < 2 {
        return Err(cx.err(
            &field,
            "a shape needs at least two points [x, weight]",
            Some(format!(
                "e.g. `shape: [[0 {unit}, 1], [1 {unit}, 3]]` (relative intensity, linear between)"
            )),
        ));
    }
    let mut xs: Vec<(f64, f64)> = Vec::with_capacity(points.len());
    for (i, (x, w)) in points.iter().enumerate() {
        let x = cx.qty(&format!("{field}[{i}][0]"), x, dim, what, ex)?;
        if !(x >= from && x <= to) {
            return Err(cx.err(
                &format!("{field}[{i}][0]"),
                &format!(
                    "a shape point lies within the stretch {} {unit} .. {} {unit}, got {} {unit}",
                    significant(from),
                    significant(to),
                    significant(x)
                ),
                Some("set `from` and `to` around the shape, or move the point".into()),
            ));
        }
        if let Some(&(prev, _)) = xs.last()
            && !(x > prev)
        {
            return Err(cx.err(
                &format!("{field}[{i}][0]"),
                "the shape's points go in ascending x, each further along than the one before",
                None,
            ));
        }
        if !(w.is_finite() && *w >= 0.0) {
            return Err(cx.err(
                &format!("{field}[{i}][1]"),
                &format!("a shape weight is zero or positive, got {w}"),
                Some("the weight is a relative intensity of the feed along the tube".into()),
            ));
        }
        xs.push((x, *w));
    }
    let mut shape = Schedule { points: xs };
    let total = shape.total();
    if !(total > 0.0 && total.is_finite()) {
        return Err(cx.err(
            &field,
            "the shape's weights are all zero: nothing would enter",
            Some("give at least one positive weight".into()),
        ));
    }
    shape.points.iter_mut().for_each(|p| p.1 /= total);
    Ok(shape)
}

/// The species crossing the wall, each once.
fn build_membrane(
    list: &[RawPermeation],
    at: &str,
    reactor: &Reactor,
    sc: &StreamContext,
    cx: &Cx,
) -> Result<Vec<Permeation>, LoadError> {
    let (want, what, ex) = match reactor {
        Reactor::Pfr { .. } => (
            Dim::NONE.div(Dim::TIME),
            "a transport coefficient per tube volume",
            "0.8 1/s",
        ),
        Reactor::Pbr { .. } => (
            Dim::volume().div(Dim::MASS.mul(Dim::TIME)),
            "a transport coefficient per catalyst mass",
            "0.002 m3/(kg*s)",
        ),
        _ => return Err(not_a_tube(at, "membrane", "membrane walls", reactor, cx)),
    };
    let mut out: Vec<Permeation> = Vec::with_capacity(list.len());
    for (k, m) in list.iter().enumerate() {
        let f = format!("{at}.membrane[{k}]");
        let species = cx.species(&format!("{f}.species"), m.species.trim(), sc.index)?;
        if out.iter().any(|p| p.species == species) {
            return Err(cx.err(
                &format!("{f}.species"),
                &format!(
                    "`{}` is listed twice in the membrane",
                    sc.species[species].name
                ),
                Some("give each species crossing the wall once, with one coefficient".into()),
            ));
        }
        let coefficient = cx.qty(&format!("{f}.coefficient"), &m.coefficient, want, what, ex)?;
        if !(coefficient >= 0.0) {
            return Err(cx.err(
                &format!("{f}.coefficient"),
                &format!(
                    "the transport coefficient is zero or positive, got {}",
                    significant(coefficient)
                ),
                Some(
                    "the direction of the flux follows from the concentrations on the two sides"
                        .into(),
                ),
            ));
        }
        let sweep = match &m.sweep {
            None => 0.0,
            Some(q) => {
                let c = cx.qty(
                    &format!("{f}.sweep"),
                    q,
                    Dim::concentration(),
                    "a concentration on the sweep side",
                    "0 mol/m3",
                )?;
                if !(c >= 0.0) {
                    return Err(cx.err(
                        &format!("{f}.sweep"),
                        &format!(
                            "a concentration is zero or positive, got {} mol/m3",
                            significant(c)
                        ),
                        None,
                    ));
                }
                c
            }
        };
        out.push(Permeation {
            species,
            coefficient,
            sweep,
        });
    }
    Ok(out)
}
