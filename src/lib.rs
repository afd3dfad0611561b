//! rxnet: a multiple-reaction network solver for reaction engineers.
//!
//! The pipeline reads one way: study file -> [`model::Network`] -> [`analysis`] -> reactor
//! model -> solver -> metrics -> report. See docs/architecture.md for the map.

// `!(x > 0.0)` is deliberate throughout: it is true for NaN as well, which must be refused.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

pub mod analysis;
pub mod exact;
pub mod fit;
pub mod generate;
pub mod kinetics;
pub mod metrics;
pub mod model;
mod random;
pub mod reactor;
pub mod report;
pub mod safety;
pub mod solve;
pub mod studies;
pub mod thermo;
pub mod units;

pub use model::{LoadError, Network, Override, load_file, load_str};
