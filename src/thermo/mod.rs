//! Thermochemistry of a network: each reaction's heat ΔH_i(T) by Kirchhoff's law and its
//! equilibrium constant K_i(T) by the integrated van't Hoff equation or from ΔG° of its
//! species ([`ReactionThermo`]), built on the species data of
//! [`crate::model::heat_capacity`] (re-exported here).

mod reaction;

pub use crate::model::heat_capacity::*;
pub use reaction::{
    C_STANDARD_LIQUID, EnthalpySource, KSource, LnKForm, P_STANDARD, ReactionEnthalpy,
    ReactionThermo, reaction_enthalpies,
};
