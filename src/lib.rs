//! rxnet: a multiple-reaction network solver for reaction engineers.
//!
//! The pipeline reads one way: study file -> [`model::Network`] -> [`analysis`] -> reactor
//! model -> solver -> metrics -> report. See docs/architecture.md for the map.

pub mod analysis;
pub mod exact;
pub mod generate;
pub mod kinetics;
pub mod metrics;
pub mod model;
pub mod reactor;
pub mod report;
pub mod solve;
pub mod units;

pub use model::{LoadError, Network, Override, load_file, load_str};
