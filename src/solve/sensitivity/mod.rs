//! Forward sensitivities of a reactor solve: ∂(states)/∂θ_k for each parameter θ_k, integrated
//! with the states (tubes, packed beds and batches: [`vessel`]) or from the implicit-function
//! theorem at the steady state shown (CSTRs: [`steady`]); trains unit by unit ([`train`]).
//!
//! A parameter enters only through the network: each direction is given as the network at
//! θ_k + δ and θ_k − δ ([`Perturbed`]), and ∂f/∂θ_k is the central difference of the model's
//! right-hand side (or steady-state residual) between the two at the same state, the
//! difference-quotient sensitivity right-hand side CVODES uses by default (Hindmarsh et al.,
//! ACM TOMS 31, 2005, from memory). Its error is O(δ²) in the model alone (no integration error
//! enters it), far below the integration's tolerance for δ ~ 1e-5 on the log scale.

pub mod steady;
pub mod train;
pub mod vessel;

use crate::model::{Network, Reactor};
use crate::solve::{Simulation, SolveError, SolveOptions};

/// One parameter's direction: the network at θ+δ and θ−δ (and, for a train unit, the inlet
/// stream moved by ±δ·s_in as well); `step` = 2δ.
#[derive(Debug, Clone)]
pub struct Perturbed {
    pub plus: Network,
    pub minus: Network,
    pub step: f64,
}

/// A solve with its forward sensitivities.
#[derive(Debug, Clone)]
pub struct Sensitivities {
    /// The nominal solve, identical to `simulate(net, opts)`.
    pub sim: Simulation,
    /// d_states[k][i][j] = ∂ states[i][j] / ∂θ_k (profile point i, species j), at the fixed
    /// positions `sim.x`.
    pub d_states: Vec<Vec<Vec<f64>>>,
    /// ∂T/∂θ_k at each profile point where T is a state (energy balance).
    pub d_temperature: Option<Vec<Vec<f64>>>,
    /// ∂(outlet species)/∂θ_k including a moving end (a size parameter): f(y_end)·∂x_end/∂θ
    /// added to the sensitivity at the nominal end.
    pub d_outlet: Vec<Vec<f64>>,
}

/// The solve of `net` and the sensitivities of its states to the parameters whose directions
/// `perturbed` gives.
pub fn simulate_sensitivities(
    net: &Network,
    perturbed: &[Perturbed],
    opts: &SolveOptions,
) -> Result<Sensitivities, SolveError> {
    for (k, p) in perturbed.iter().enumerate() {
        if !(p.step.is_finite() && p.step > 0.0) {
            return Err(SolveError::Setup(format!(
                "sensitivity: parameter {} has a step of {} (it must be positive)",
                k + 1,
                p.step
            )));
        }
    }
    if crate::solve::train::is_flowsheet(net) {
        return train::sensitivities(net, perturbed, opts);
    }
    for (k, p) in perturbed.iter().enumerate() {
        if crate::solve::train::is_flowsheet(&p.plus) || crate::solve::train::is_flowsheet(&p.minus)
        {
            return Err(SolveError::Setup(format!(
                "sensitivity: parameter {} turns the single vessel into a train",
                k + 1
            )));
        }
        if std::mem::discriminant(&p.plus.reactor) != std::mem::discriminant(&net.reactor)
            || std::mem::discriminant(&p.minus.reactor) != std::mem::discriminant(&net.reactor)
        {
            return Err(SolveError::Setup(format!(
                "sensitivity: parameter {} changes the kind of reactor",
                k + 1
            )));
        }
    }
    match net.reactor {
        Reactor::Cstr { .. } => steady::sensitivities(net, perturbed, opts),
        _ => vessel::sensitivities(net, perturbed, opts),
    }
}
