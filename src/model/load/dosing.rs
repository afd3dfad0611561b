//! Batch: `dosing` (semibatch streams) and `withdrawal`.

use super::contacting::StreamContext;
use super::{Cx, LoadError};
use crate::model::file::*;
use crate::model::*;

pub(super) fn build_semibatch(
    r: &RawReactor,
    at: &str,
    _reactor: &Reactor,
    _sc: &StreamContext,
    cx: &Cx,
) -> Result<(Vec<Dosing>, Option<Withdrawal>), LoadError> {
    if r.dosing.is_some() || r.withdrawal.is_some() {
        return Err(cx.err(at, "dosing and withdrawal: in progress", None));
    }
    Ok((Vec::new(), None))
}
