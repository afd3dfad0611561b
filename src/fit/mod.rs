//! Fitting a study to measured data (`rxnet fit`): weighted nonlinear least squares on the
//! reactor model, with the Jacobian from forward sensitivities.

pub mod data;
pub mod lm;
pub mod runs;
pub mod setup;
