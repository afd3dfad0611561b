//! How reactants are brought together: the streams a vessel exchanges besides its inlet and
//! outlet (`side_feeds`, `recycle` here, each stream read by [`super::stream`]; `distributed_feeds` and `membrane` in [`super::walls`];
//! `dosing` and `withdrawal` in [`super::dosing`]), and a `train` of vessels with their
//! mixing points (`join`) and bypasses.

use super::heat::build_heat;
use super::reactor::build_reactor;
use super::stream::{StreamContext, build_stream};
use super::{Cx, LoadError};
use crate::model::file::*;
use crate::model::*;

/// A unit-only key written under `reactor` (a single vessel).
fn unit_only(r: &RawReactor, at: &str, cx: &Cx) -> Result<(), LoadError> {
    for (given, key, what) in [
        (r.id.is_some(), "id", "names a unit of a `train`"),
        (
            r.join.is_some(),
            "join",
            "is a feed joining before a unit of a `train`",
        ),
        (
            r.bypass.is_some(),
            "bypass",
            "is the fraction of a stream going around a unit of a `train`",
        ),
    ] {
        if given {
            return Err(cx.err(
                &format!("{at}.{key}"),
                &format!("`{key}` {what}; a single `reactor` has none"),
                Some("write the vessels as a list under `train:` (each with an `id`)".into()),
            ));
        }
    }
    Ok(())
}

/// The side feeds of a tube, ascending in `at`, each strictly inside the tube.
fn build_side_feeds(
    r: &RawReactor,
    at: &str,
    reactor: &Reactor,
    sc: &StreamContext,
    cx: &Cx,
) -> Result<Vec<SideFeed>, LoadError> {
    let Some(list) = &r.side_feeds else {
        return Ok(Vec::new());
    };
    let (size, dim, what, ex) = match reactor {
        Reactor::Pfr { volume } => (
            *volume,
            crate::units::Dim::volume(),
            "a tube volume",
            "0.4 m3",
        ),
        Reactor::Pbr { catalyst, .. } => (
            *catalyst,
            crate::units::Dim::MASS,
            "a catalyst mass",
            "40 kg",
        ),
        _ => {
            return Err(cx.err(
                &format!("{at}.side_feeds"),
                &format!(
                    "side feeds enter along a tube (type: pfr or pbr), not a {}",
                    reactor.kind()
                ),
                Some(match reactor {
                    Reactor::Batch { .. } => "dose a batch with `dosing` (semibatch)".into(),
                    _ => "for a stream joining a tank, write a `train` and give the unit a `join`"
                        .into(),
                }),
            ));
        }
    };
    let mut out: Vec<SideFeed> = Vec::with_capacity(list.len());
    for (k, s) in list.iter().enumerate() {
        let f = format!("{at}.side_feeds[{k}]");
        let x = cx.qty(&format!("{f}.at"), &s.at, dim, what, ex)?;
        if !(x > 0.0 && x < size) {
            return Err(cx.err(
                &format!("{f}.at"),
                &format!(
                    "a side feed enters strictly inside the tube: 0 < at < {} ({}), got {}",
                    super::messages::significant(size),
                    if dim == crate::units::Dim::MASS {
                        "kg"
                    } else {
                        "m3"
                    },
                    super::messages::significant(x)
                ),
                Some("a stream at the inlet belongs in the feed (or a `join` of a train)".into()),
            ));
        }
        if let Some(prev) = out.last()
            && !(x > prev.at)
        {
            return Err(cx.err(
                &format!("{f}.at"),
                "list the side feeds in the order they enter, each further along than the one before",
                None,
            ));
        }
        let stream = build_stream(&s.stream(), &f, sc, cx)?;
        out.push(SideFeed { at: x, stream });
    }
    Ok(out)
}

/// The recycle ratio of a tube (volume returned to the inlet per volume leaving), R ≥ 0.
fn build_recycle(
    r: &RawReactor,
    at: &str,
    reactor: &Reactor,
    cx: &Cx,
) -> Result<Option<f64>, LoadError> {
    let Some(ratio) = r.recycle else {
        return Ok(None);
    };
    let f = format!("{at}.recycle");
    if !matches!(reactor, Reactor::Pfr { .. } | Reactor::Pbr { .. }) {
        return Err(cx.err(
            &f,
            &format!(
                "a recycle returns part of a tube's outlet to its inlet (type: pfr or pbr), not a {}'s",
                reactor.kind()
            ),
            Some("a tank with a recycle is the same tank: its contents are already mixed".into()),
        ));
    }
    if !(ratio.is_finite() && ratio >= 0.0) {
        return Err(cx.err(
            &f,
            &format!("the recycle ratio R (volume returned / volume leaving) is zero or positive, got {ratio}"),
            Some("e.g. `recycle: 2`".into()),
        ));
    }
    Ok(Some(ratio))
}

/// Everything a vessel exchanges besides its inlet and outlet.
pub(super) fn build_contacting(
    r: &RawReactor,
    at: &str,
    reactor: &Reactor,
    sc: &StreamContext,
    cx: &Cx,
) -> Result<Contacting, LoadError> {
    let (distributed, membrane) = super::walls::build_walls(r, at, reactor, sc, cx)?;
    let (dosing, withdrawal) = super::dosing::build_semibatch(r, at, reactor, sc, cx)?;
    Ok(Contacting {
        side_feeds: build_side_feeds(r, at, reactor, sc, cx)?,
        distributed,
        membrane,
        dosing,
        withdrawal,
        recycle: build_recycle(r, at, reactor, cx)?,
    })
}

/// The vessels as written: one `reactor`, or the units of a `train` (each with its field path).
pub(super) fn vessels<'r>(
    reactor: Option<&'r RawReactor>,
    train: Option<&'r Vec<RawReactor>>,
    cx: &Cx,
) -> Result<Vec<(&'r RawReactor, String)>, LoadError> {
    match (reactor, train) {
        (Some(r), None) => {
            unit_only(r, "reactor", cx)?;
            Ok(vec![(r, "reactor".to_string())])
        }
        (None, Some(units)) => {
            if units.is_empty() {
                return Err(cx.err(
                    "train",
                    "a train needs at least one unit",
                    Some("e.g. `train: [{id: R1, type: cstr, volume: 1 m3}, {id: R2, type: cstr, volume: 1 m3}]`".into()),
                ));
            }
            Ok(units
                .iter()
                .enumerate()
                .map(|(k, u)| (u, format!("train[{k}]")))
                .collect())
        }
        (Some(_), Some(_)) => Err(cx.err(
            "train",
            "give one vessel as `reactor` or vessels in series as `train`, not both",
            None,
        )),
        (None, None) => Err(cx.err(
            "reactor",
            "missing field `reactor` (or `train` for vessels in series)",
            Some("e.g. `reactor: {type: pfr, volume: 1 m3}`".into()),
        )),
    }
}

/// The reactor of every vessel (first, as the first fixes the rate basis): a train's units are
/// flow reactors of one rate basis (all per volume, or all packed beds per catalyst mass).
pub(super) fn build_reactors(
    vessels: &[(&RawReactor, String)],
    phase: Phase,
    cx: &Cx,
) -> Result<Vec<Reactor>, LoadError> {
    let mut out = Vec::with_capacity(vessels.len());
    for (r, at) in vessels {
        out.push(build_reactor(r, at, phase, cx)?);
    }
    if vessels.len() > 1 || at_is_train(&vessels[0].1) {
        for (k, (reactor, (_, at))) in out.iter().zip(vessels).enumerate() {
            if reactor.is_batch() {
                return Err(cx.err(
                    &format!("{at}.type"),
                    "a train is of flow units (cstr, pfr, pbr); a batch stands alone",
                    Some(
                        "for a dosed batch write one `reactor: {type: batch, dosing: ...}`".into(),
                    ),
                ));
            }
            if (matches!(reactor, Reactor::Pbr { .. })) != matches!(out[0], Reactor::Pbr { .. }) {
                return Err(cx.err(
                    &format!("{at}.type"),
                    &format!(
                        "unit {} is {} but the first unit is {}: the rate laws are per catalyst mass in a packed bed and per volume elsewhere, so one network cannot run in both",
                        k + 1,
                        reactor.kind(),
                        out[0].kind()
                    ),
                    Some("make every unit a packed bed, or none".into()),
                ));
            }
        }
    }
    Ok(out)
}

fn at_is_train(at: &str) -> bool {
    at.starts_with("train")
}

/// Heat, contacting, joins and bypasses of every vessel, once species, feed and reactions are
/// known. Returns the first vessel's (heat, T_max, contacting) and the train, if the study is
/// one.
#[allow(clippy::too_many_arguments)]
pub(super) fn build_vessels(
    vessels: &[(&RawReactor, String)],
    reactors: &[Reactor],
    sc: &StreamContext,
    reactions: &[Reaction],
    cx: &Cx,
) -> Result<(Heat, Option<f64>, Contacting, Option<Train>), LoadError> {
    let mut units = Vec::with_capacity(vessels.len());
    let mut t_max = None;
    let mut ids: Vec<&str> = Vec::new();
    for (k, ((r, at), reactor)) in vessels.iter().zip(reactors).enumerate() {
        let (heat, limit) =
            build_heat(r, at, reactor, sc.phase, sc.species, reactions, sc.feed, cx)?;
        if let Some(v) = limit {
            t_max = Some(t_max.map_or(v, |t: f64| t.min(v)));
        }
        let contacting = build_contacting(r, at, reactor, sc, cx)?;
        if !at_is_train(at) {
            return Ok((heat, t_max, contacting, None));
        }
        let id = match &r.id {
            Some(id) if !id.trim().is_empty() => id.trim().to_string(),
            _ => {
                return Err(cx.err(
                    at,
                    &format!("unit {} of the train needs an `id`", k + 1),
                    Some("e.g. `id: R1`; reports and `--set train.R1.volume=...` name the unit by it".into()),
                ));
            }
        };
        if ids.contains(&id.as_str()) {
            return Err(cx.err(
                &format!("{at}.id"),
                &format!("duplicate unit id `{id}`"),
                Some("give each unit its own id".into()),
            ));
        }
        ids.push(r.id.as_deref().unwrap_or_default().trim());
        let join = match &r.join {
            None => None,
            Some(s) => {
                if k == 0 {
                    return Err(cx.err(
                        &format!("{at}.join"),
                        "the first unit's inlet is the feed: a stream joining before it belongs in `feed`",
                        None,
                    ));
                }
                Some(build_stream(s, &format!("{at}.join"), sc, cx)?)
            }
        };
        let bypass = match r.bypass {
            None => 0.0,
            Some(b) if (0.0..1.0).contains(&b) => b,
            Some(b) => {
                return Err(cx.err(
                    &format!("{at}.bypass"),
                    &format!("the bypass fraction lies in [0, 1), got {b}"),
                    Some("e.g. `bypass: 0.1` sends a tenth of the unit's inlet around it".into()),
                ));
            }
        };
        units.push(Unit {
            id,
            reactor: reactor.clone(),
            heat,
            contacting,
            join,
            bypass,
        });
    }
    let first = &units[0];
    Ok((
        first.heat.clone(),
        t_max,
        first.contacting.clone(),
        Some(Train { units }),
    ))
}
