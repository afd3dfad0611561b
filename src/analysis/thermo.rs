//! Thermodynamic consistency around dependent reactions.
//!
//! Wegscheider condition: if ν_dep = Σ c_i ν_i then, at the same temperature,
//! K_dep = Π K_i^c_i, i.e. ln K_dep = Σ c_i ln K_i. Hess's law likewise gives
//! ΔH_dep = Σ c_i ΔH_i, without which the K's can agree at one temperature only.
//! K(T) follows van't Hoff from ΔH: K(T) = K_ref exp(−ΔH/R (1/T − 1/T_ref)), with ΔCp where
//! the species give it ([`crate::thermo`]).
//!
//! Where the species give ΔH_i and K_i (enthalpies of formation, entropies and heat
//! capacities), a reaction's own `dH` and `K_eq` are compared against them at its T_ref
//! ([`species_data`]). Equilibrium constants computed from species data satisfy Wegscheider's
//! condition by construction (ln K_i = −Σ_j ν_ij G_j/(R T) is linear in ν).

use super::stoich::Dependent;
use crate::model::Network;
use crate::thermo::ReactionThermo;

/// Allowed mismatch in ln K (a relative difference of about 1e-6 in K).
pub const LN_K_TOLERANCE: f64 = 1e-6;

/// ln K_c of reaction i at temperature T (None for a one-way reaction): the given K_eq
/// carried to T by the integrated van't Hoff equation, with ΔCp where the species have Cp
/// ([`ReactionThermo`]).
pub fn ln_keq(net: &Network, i: usize, t: f64) -> Option<f64> {
    net.reactions[i].rate.equilibrium.as_ref()?;
    ReactionThermo::new(net, i).ln_k(t)
}

/// One checked dependent reaction.
#[derive(Debug, Clone)]
pub struct CycleCheck {
    pub reaction: usize,
    pub temperature: f64,
    /// K of the dependent reaction as given, at T.
    pub k_given: f64,
    /// Π K_i^c_i at T.
    pub k_combined: f64,
    pub consistent: bool,
    /// ΔH given vs Σ c_i ΔH_i (J/mol), when any ΔH is given.
    pub dh: Option<(f64, f64)>,
}

/// Check every dependent reaction whose members are all reversible with K_eq given.
pub fn check(net: &Network, dependent: &[Dependent]) -> Vec<CycleCheck> {
    let t = net.feed.temperature;
    // ln K of each reaction, computed once however many dependent reactions it is part of.
    let mut memo: Vec<Option<Option<f64>>> = vec![None; net.reactions.len()];
    let mut ln_k = |i: usize| *memo[i].get_or_insert_with(|| ln_keq(net, i, t));
    dependent
        .iter()
        .filter_map(|d| {
            let ln_dep = ln_k(d.reaction)?;
            let mut ln_comb = 0.0;
            for (i, c) in d.combination.iter() {
                ln_comb += c.to_f64() * ln_k(i)?;
            }
            let members = std::iter::once(d.reaction).chain(d.combination.columns());
            let any_dh = members.clone().any(|i| net.reactions[i].dh.is_some());
            let dh = any_dh.then(|| {
                let combined: f64 = d
                    .combination
                    .iter()
                    .map(|(i, c)| c.to_f64() * net.reactions[i].dh.unwrap_or(0.0))
                    .sum();
                (net.reactions[d.reaction].dh.unwrap_or(0.0), combined)
            });
            Some(CycleCheck {
                reaction: d.reaction,
                temperature: t,
                k_given: ln_dep.exp(),
                k_combined: ln_comb.exp(),
                consistent: (ln_dep - ln_comb).abs() <= LN_K_TOLERANCE,
                dh,
            })
        })
        .collect()
}

/// Largest accepted difference between a reaction's `dH` and the ΔH its species give, J/mol
/// (0.5 kJ/mol: about the uncertainty of tabulated enthalpies of formation).
pub const DH_SPECIES_TOLERANCE: f64 = 500.0;

/// Largest accepted relative difference between a reaction's `K_eq` and the K its species
/// give (1e-3).
pub const K_SPECIES_TOLERANCE: f64 = 1e-3;

/// One reaction's own `dH` and `K_eq` against its species data, at its T_ref.
#[derive(Debug, Clone)]
pub struct SpeciesDataCheck {
    pub reaction: usize,
    /// T_ref of the reaction, K.
    pub temperature: f64,
    /// (given, from species) ΔH, J/mol, when both exist.
    pub dh: Option<(f64, f64)>,
    /// (given, from species) K_c in SI, when both exist.
    pub k: Option<(f64, f64)>,
}

impl SpeciesDataCheck {
    /// ΔH within [`DH_SPECIES_TOLERANCE`] (or not compared).
    pub fn dh_consistent(&self) -> bool {
        self.dh
            .is_none_or(|(g, s)| (g - s).abs() <= DH_SPECIES_TOLERANCE)
    }
    /// K within [`K_SPECIES_TOLERANCE`] relative (or not compared).
    pub fn k_consistent(&self) -> bool {
        self.k
            .is_none_or(|(g, s)| (g / s - 1.0).abs() <= K_SPECIES_TOLERANCE)
    }
}

/// Compare every reaction's `dH` and `K_eq` with the ΔH and K of its species, where both
/// exist, at the reaction's T_ref (where `dH` and `K_eq` are given).
pub fn species_data(net: &Network) -> Vec<SpeciesDataCheck> {
    net.reactions
        .iter()
        .enumerate()
        .filter_map(|(i, r)| {
            if r.dh.is_none() && r.rate.equilibrium.is_none() {
                return None;
            }
            let t = r.rate.t_ref;
            let sp = ReactionThermo::from_species(net, i);
            let dh = r.dh.zip(sp.dh(t));
            let k = r
                .rate
                .equilibrium
                .as_ref()
                .map(|e| e.k_ref)
                .zip(sp.ln_k(t).map(f64::exp));
            (dh.is_some() || k.is_some()).then_some(SpeciesDataCheck {
                reaction: i,
                temperature: t,
                dh,
                k,
            })
        })
        .collect()
}
