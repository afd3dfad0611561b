//! A stream other than the feed (a `join`, a side feed, a distributed feed): read by the
//! feed's own rules, with the feed's temperature and pressure as defaults. Shared by the
//! loaders of every contacting pattern (`contacting.rs`, `walls.rs`, `dosing.rs`).

use super::feed::build_feed;
use super::{Cx, LoadError};
use crate::model::file::*;
use crate::model::*;
use indexmap::IndexMap;

/// What every stream loader needs to know about the study.
pub(super) struct StreamContext<'a> {
    pub phase: Phase,
    pub feed: &'a Feed,
    pub index: &'a IndexMap<String, usize>,
    pub species: &'a [Species],
}

/// A stream other than the feed (a join, a side feed, a distributed feed) at field `at`: flows,
/// or concentrations with the volumetric flow, by the feed's own rules (units, ideal gas,
/// not empty); temperature and pressure default to the feed's.
pub(super) fn build_stream(
    s: &RawStream,
    at: &str,
    sc: &StreamContext,
    cx: &Cx,
) -> Result<Feed, LoadError> {
    // Defaults written as quantities in SI, read back exactly ({:?} is the shortest
    // round-trip form of an f64).
    let raw = RawFeed {
        t: s.t
            .clone()
            .unwrap_or_else(|| RawQty::Text(format!("{:?} K", sc.feed.temperature))),
        p: Some(
            s.p.clone()
                .unwrap_or_else(|| RawQty::Text(format!("{:?} Pa", sc.feed.pressure))),
        ),
        flows: s.flows.clone(),
        amounts: None,
        volumetric: s.volumetric.clone(),
        concentrations: s.concentrations.clone(),
    };
    // Loaded as the feed of a flow reactor (the reactor's size plays no part).
    build_feed(
        &raw,
        at,
        sc.phase,
        &Reactor::Pfr { volume: 1.0 },
        sc.index,
        sc.species,
        cx,
    )
}
