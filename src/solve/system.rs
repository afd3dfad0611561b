//! What an integration is asked to solve and how it can fail: the [`OdeSystem`] a reactor
//! model supplies and the [`OdeError`] an integration returns. Both the driver ([`super::ode`])
//! and the equations it hands to the BDF solver ([`super::equations`]) use them, so they live
//! here and the imports run one way: `ode` → `equations` → `system`.

/// The right-hand side and its Jacobian, supplied by the reactor model (one description, so
/// they can't drift).
pub trait OdeSystem {
    /// Number of states (length of `y`).
    fn dim(&self) -> usize;
    /// dy/dx at (x, y) into `dydx` (len dim).
    fn rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]);
    /// Jacobian ∂f/∂y at (x, y) as (row, col, value) triplets appended to `out`
    /// (row = equation, col = state). Duplicates sum.
    ///
    /// The set of (row, col) pairs must be the structural pattern of the Jacobian: emit an
    /// entry even when its value happens to be zero at this (x, y). The sparse solver fixes the
    /// pattern from the first evaluation at y0 and reports [`OdeError::SparsityChanged`] if a
    /// later evaluation leaves it.
    fn jacobian(&self, x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>);
}

/// Why an integration failed. Each variant carries the x where it happened and says what the
/// user can try.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum OdeError {
    #[error("invalid input: {what}")]
    InvalidInput { what: String },
    #[error(
        "the right-hand side gave a non-finite value in component {index} at x = {x:.6e}; \
         check the rate expressions for division by zero, overflow or negative amounts raised \
         to fractional powers, or give the model a guard for such states"
    )]
    NonFiniteRhs { x: f64, index: usize },
    #[error(
        "the Jacobian gave a non-finite entry (row {row}, col {col}) at x = {x:.6e}; check the \
         derivative expressions of the rate laws"
    )]
    NonFiniteJacobian { x: f64, row: usize, col: usize },
    #[error("the Jacobian gave entry (row {row}, col {col}) outside the {dim}x{dim} system")]
    JacobianIndexOutOfRange { row: usize, col: usize, dim: usize },
    #[error(
        "the Jacobian entry (row {row}, col {col}) at x = {x:.6e} is outside the sparsity pattern \
         found at x = 0; emit every structural entry (also zeros) or use LinearAlgebra::Dense"
    )]
    SparsityChanged { x: f64, row: usize, col: usize },
    #[error("the root function gave a non-finite value at x = {x:.6e}; check its expression")]
    NonFiniteRoot { x: f64 },
    #[error(
        "the solution became non-finite in component {index} at x = {x:.6e}; tighten rtol/atol or \
         check the model"
    )]
    NonFiniteState { x: f64, index: usize },
    #[error(
        "step size became too small at x = {x:.6e}; the solution may blow up or have a singularity \
         there, the Jacobian may be wrong, or the tolerances too tight (try a larger atol/rtol)"
    )]
    StepSizeTooSmall { x: f64 },
    #[error(
        "reached the maximum of {max_steps} steps at x = {x:.6e}; raise `solver.max_steps` in the \
         study file (or `--set solver.max_steps=N`) or loosen the tolerances"
    )]
    MaxSteps { x: f64, max_steps: usize },
    #[error(
        "the solver failed to converge at x = {x:.6e} ({reason}); check the Jacobian against the \
         right-hand side, or loosen the tolerances"
    )]
    ConvergenceFailure { x: f64, reason: String },
    #[error("the ODE solver failed at x = {x:.6e}: {reason}")]
    Solver { x: f64, reason: String },
}

impl OdeError {
    /// Where along the integration it failed, to move onto another coordinate (a piece of a
    /// longer integration); `None` when the failure happened before it started.
    pub fn position_mut(&mut self) -> Option<&mut f64> {
        match self {
            OdeError::NonFiniteRhs { x, .. }
            | OdeError::NonFiniteJacobian { x, .. }
            | OdeError::SparsityChanged { x, .. }
            | OdeError::NonFiniteRoot { x }
            | OdeError::NonFiniteState { x, .. }
            | OdeError::StepSizeTooSmall { x }
            | OdeError::MaxSteps { x, .. }
            | OdeError::ConvergenceFailure { x, .. }
            | OdeError::Solver { x, .. } => Some(x),
            OdeError::InvalidInput { .. } | OdeError::JacobianIndexOutOfRange { .. } => None,
        }
    }

    /// Where the failure happened (the reactor position), when known.
    pub fn position(&self) -> Option<f64> {
        self.clone().position_mut().map(|x| *x)
    }
}
