//! Fitting a network to measurements: the least-squares optimiser and the statistics of the fit.

pub mod lm;
pub mod statistics;
