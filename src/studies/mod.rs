//! Design studies on top of the pipeline: optimise, sweep, compare. Each calls the same
//! load → solve → metrics path many times; per-run set-up is one load and one `Balance`.

pub mod compare;
pub mod conversion;
pub mod evaluate;
pub mod optimize;
pub mod parameters;
pub mod runaway;
pub mod sensitivity;
pub mod shard;
pub mod study;
pub mod sweep;
pub mod target;
