//! Forward sensitivities of a reactor solve: ∂(states)/∂θ_k for each parameter θ_k, integrated
//! with the states (tubes and batches) or from the implicit-function theorem at the steady
//! state (CSTRs). The parameter enters only through the network: each direction is given as
//! the network at θ_k + δ and θ_k − δ ([`Perturbed`]), and ∂f/∂θ_k is the central difference
//! of the model's right-hand side (or residual) between the two at the same state.

/// One parameter's direction: the network at θ+δ and θ−δ (and, for a train unit, the inlet
/// stream moved by ±δ·s_in as well); `step` = 2δ.
#[derive(Debug, Clone)]
pub struct Perturbed {
    pub plus: crate::model::Network,
    pub minus: crate::model::Network,
    pub step: f64,
}
