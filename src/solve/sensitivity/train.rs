//! Forward sensitivities of a train (vessels in series, joins, side feeds, a bypass).

use super::{Perturbed, Sensitivities};
use crate::model::Network;
use crate::solve::{SolveError, SolveOptions};

/// The sensitivities of a train's profile and outlet, unit by unit.
pub fn sensitivities(
    _net: &Network,
    _perturbed: &[Perturbed],
    _opts: &SolveOptions,
) -> Result<Sensitivities, SolveError> {
    Err(SolveError::Setup(
        "sensitivities of a train (vessels in series, side feeds or a recycle) are not yet supported".into(),
    ))
}
