//! Tubes: `distributed_feeds` (streams spread over a stretch of the length) and `membrane`
//! (species crossing the wall).

use super::contacting::StreamContext;
use super::{Cx, LoadError};
use crate::model::file::*;
use crate::model::*;

pub(super) fn build_walls(
    r: &RawReactor,
    at: &str,
    _reactor: &Reactor,
    _sc: &StreamContext,
    cx: &Cx,
) -> Result<(Vec<DistributedFeed>, Vec<Permeation>), LoadError> {
    if r.distributed_feeds.is_some() || r.membrane.is_some() {
        return Err(cx.err(
            at,
            "distributed feeds and membrane walls: in progress",
            None,
        ));
    }
    Ok((Vec::new(), Vec::new()))
}
