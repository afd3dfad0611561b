//! Reactor balance equations: PFR, packed bed (PBR), CSTR and batch, isothermal.
//!
//! All share one form. With y the species state (molar flows F_j for flow reactors, moles N_j
//! for a batch) and S = Σ_j y_j:
//!
//! ```text
//! dy_j/dx = σ Σ_i ν_ij r_i(C),   C_m = κ y_m
//! ```
//!
//! | reactor, phase              | x | κ                 | σ     |
//! |-----------------------------|---|-------------------|-------|
//! | PFR/CSTR liquid             | V | 1/v0              | 1     |
//! | PFR/CSTR gas (ideal)        | V | C_T0 p / S        | 1     |
//! | PBR gas, pressure drop      | W | C_T0 p / S, p = P/P0 a state | 1 |
//! | batch, constant volume      | t | 1/V               | V     |
//! | batch gas, constant pressure| t | C_T0 / S          | S/C_T0|
//!
//! with C_T0 = P0/(R T0), so the gas row is C_j = C_T0 (F_j/F_T)(P/P0)(T0/T) at T = T0
//! (ideal gas; common practice). A packed bed's rates are per catalyst mass, so x = W. Its
//! pressure follows dp/dW = −(α/2p)(F_T/F_T0)(T/T0) (Ergun equation lumped into the bed
//! constant α; Ergun, Chem. Eng. Prog. 48, 1952, with the lumping of common practice).
//! The CSTR at steady state solves F_j0 − F_j + V Σ_i ν_ij r_i(C(F)) = 0 with the same κ.
//!
//! The Jacobian of the right-hand side is built from the rates' own gradients
//! ([`crate::kinetics::RateSet::eval`]) by the chain rule, over the sparse stoichiometry.

//! # How a reactor model is shaped
//!
//! A model is three things, each from one description so they cannot drift apart:
//! its **state layout** ([`StateLayout`]: what each entry of the state vector is, with a name
//! and a unit for reports — species first, then e.g. the pressure ratio of a packed bed), its
//! **right-hand side** dy/dx, and its **Jacobian** ∂(dy/dx)/∂y. The [`Model`] trait is that
//! contract; the solver integrates any `Model`. [`Balance`] is the isothermal single-vessel
//! model. Models with more states (temperature, coolant temperature, volume of a dosed batch)
//! add entries to their layout and terms to their rhs and Jacobian; a train of vessels maps an
//! inlet stream to an outlet stream unit by unit, mixing points and side feeds being streams too.

mod balance;
mod energy;
mod ergun;
pub mod mixing;
mod nonisothermal;
mod semibatch;
mod semibatch_terms;
mod state;
mod wall_terms;
mod walls;

pub use balance::Balance;
pub use energy::Energy;
pub use ergun::ergun_alpha;
pub use semibatch::{breakpoints, dosed_by, liquid_volume};
pub use state::{StateKind, StateLayout, StateVar};
pub use walls::{Walls, added_volumetric};

/// A reactor model as the solver sees it: the state layout, dy/dx and its Jacobian.
pub trait Model {
    /// What each entry of the state is.
    fn layout(&self) -> &StateLayout;
    /// dy/dx at position x (V, W or t) and state y.
    fn rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]);
    /// ∂(dy/dx)/∂y at x and state y as (row, column, value) triplets; duplicates add. The sparse
    /// solvers fix their pattern from the first call, so every structural entry is emitted,
    /// zero or not.
    fn jacobian(&self, x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>);
}
