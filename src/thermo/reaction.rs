//! Heat of reaction and equilibrium constant of each reaction as functions of temperature,
//! from the reaction's own data (`dH`, `K_eq` at its T_ref) and the species' heat capacities,
//! enthalpies of formation and entropies.
//!
//! With Hs_j an antiderivative of Cp_j ([`HeatCapacity::sensible`]) and Ss_j one of Cp_j/T:
//!
//! ```text
//! Kirchhoff:       ΔH_i(T) = ΔH_i(T0) + ∫_{T0}^{T} ΔCp_i dT = c_i + Σ_j ν_ij Hs_j(T)
//! van't Hoff:      d ln K_i/dT = ΔH_i(T)/(R T²), integrated exactly (by parts,
//!                  ∫ Hs/T² dT = −Hs/T + Ss):
//!                  ln K_i(T) = ln K_i(T0) − ΔH_i(T)/(R T) + ΔH_i(T0)/(R T0)
//!                              + Σ_j ν_ij [Ss_j(T) − Ss_j(T0)]/R
//! from species:    ΔG°_i(T) = ΔH°_i(T) − T ΔS°_i(T),  ln K°_i = −ΔG°_i/(R T)
//!                  gas:    K_c = K° (P°/(R T))^Σν,  P° = 1 bar
//!                  liquid: K_c = K° (c°)^Σν,         c° = 1 mol/L
//! ```
//! (Smith, Van Ness & Abbott, Introduction to Chemical Engineering Thermodynamics, ch. 4 and
//! 13, from memory.) ΔCp is taken into account when every species the reaction changes has a
//! heat capacity; otherwise ΔCp is taken as zero and ΔH as constant, as for a bare `dH`.

use super::{HeatCapacity, T_STANDARD};
use crate::model::{Network, Phase};
use crate::units::GAS_CONSTANT;

/// Standard-state pressure of gas-phase species data, 1 bar (IUPAC, common practice), Pa.
pub const P_STANDARD: f64 = 1.0e5;

/// Standard-state concentration assumed for liquid-phase species data, 1 mol/L (the ideal
/// dilute solution standard state of tabulated solute data, common practice), mol/m3.
pub const C_STANDARD_LIQUID: f64 = 1000.0;

/// Where a reaction's ΔH comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EnthalpySource {
    /// The reaction's own `dH` at its T_ref.
    Given,
    /// Σ_j ν_j ΔfH°_j of its species.
    Species,
}

/// Where a reaction's equilibrium constant comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum KSource {
    /// The reaction's own `K_eq` at its T_ref, carried to T by the integrated van't Hoff
    /// equation (constant when the reaction has no ΔH).
    Given,
    /// ΔG° = ΔH° − T ΔS° of its species.
    Species,
}

/// The temperature dependence of one reaction's heat and equilibrium constant, built once
/// from a network and evaluated in closed form at any T (no quadrature, no error beyond
/// rounding).
#[derive(Debug, Clone)]
pub struct ReactionThermo {
    /// (species, ν_j, Cp_j) of every species the reaction changes; empty when one of them has
    /// no heat capacity (ΔCp is then zero).
    terms: Vec<(usize, f64, HeatCapacity)>,
    /// c in ΔH(T) = c + Σ ν_j Hs_j(T), J/mol.
    dh0: Option<f64>,
    /// c of the ΔH that ln K(T) is built on, when it is not `dh0`: K taken from the species
    /// (no `K_eq` written) uses the species' ΔH even where the reaction gives its own `dH`
    /// for the energy balance.
    k_dh0: Option<f64>,
    dh_source: Option<EnthalpySource>,
    /// L in ln K(T) = L − ΔH(T)/(R T) + Σ ν_j Ss_j(T)/R + n ln(P°/(R T)).
    lk0: Option<f64>,
    k_source: Option<KSource>,
    /// n above: Σν for K_c of a gas from species data, else 0.
    gas_nu: f64,
}

/// The coefficients of [`ReactionThermo::ln_k`]:
///
/// ```text
/// ln K(T) = l − (c + Σ ν_j Hs_j(T))/(R T) + Σ ν_j Ss_j(T)/R + gas_nu ln(P°/(R T))
/// ```
///
/// with Hs_j = `sensible`, Ss_j = `entropy_antiderivative` of species j's Cp (`terms`, empty
/// when ΔCp is taken as zero). The rate laws evaluate it at every temperature of a
/// non-isothermal solve.
#[derive(Debug, Clone, PartialEq)]
pub struct LnKForm {
    pub l: f64,
    pub c: f64,
    pub gas_nu: f64,
    /// Σ ν_j Cp_j over the species with a constant Cp (their Hs and Ss are Cp (T − 298.15)
    /// and Cp ln(T/298.15), so they sum to one term).
    pub dcp_constant: f64,
    /// The species whose Cp is a polynomial.
    pub terms: Vec<(usize, f64, HeatCapacity)>,
}

impl LnKForm {
    /// ln K(T) and d ln K/dT = ΔH(T)/(R T²) − gas_nu/T.
    pub fn eval(&self, t: f64) -> (f64, f64) {
        let (mut hs, mut ss) = (0.0, 0.0);
        if self.dcp_constant != 0.0 {
            hs = self.dcp_constant * (t - crate::thermo::T_STANDARD);
            ss = self.dcp_constant * (t / crate::thermo::T_STANDARD).ln();
        }
        for (_, nu, cp) in &self.terms {
            hs += nu * cp.sensible(t);
            ss += nu * cp.entropy_antiderivative(t);
        }
        let dh = self.c + hs;
        let rt = GAS_CONSTANT * t;
        let mut ln_k = self.l - dh / rt + ss / GAS_CONSTANT;
        if self.gas_nu != 0.0 {
            ln_k += self.gas_nu * (P_STANDARD / rt).ln();
        }
        (ln_k, dh / (rt * t) - self.gas_nu / t)
    }
}

/// ΔH_i(T) = offset + Σ_(j, ν) ν Hs_j(T) with Hs_j = `net.species[j].thermo.cp.sensible`:
/// the form the energy balances evaluate. `terms` is empty when ΔCp is taken as zero.
#[derive(Debug, Clone, PartialEq)]
pub struct ReactionEnthalpy {
    pub offset: f64,
    pub terms: Vec<(usize, f64)>,
}

impl ReactionEnthalpy {
    /// ΔH at T, J/mol of extent.
    pub fn at(&self, net: &Network, t: f64) -> f64 {
        self.offset
            + self
                .terms
                .iter()
                .map(|&(j, nu)| {
                    nu * net.species[j]
                        .thermo
                        .cp
                        .as_ref()
                        .map_or(0.0, |cp| cp.sensible(t))
                })
                .sum::<f64>()
    }
}

/// Per reaction, ΔH_i(T) in the form c_i + Σ_j ν_ij Hs_j(T), or `None` for a reaction with
/// neither `dH` nor H_f for every species.
pub fn reaction_enthalpies(net: &Network) -> Vec<Option<ReactionEnthalpy>> {
    (0..net.reactions.len())
        .map(|i| ReactionThermo::new(net, i).enthalpy())
        .collect()
}

/// (species, ν, Cp) of the reaction, or empty when a species has no heat capacity.
fn cp_terms(net: &Network, i: usize) -> Vec<(usize, f64, HeatCapacity)> {
    let r = &net.reactions[i];
    let mut terms = Vec::with_capacity(r.net.len());
    for &(j, nu) in &r.net {
        match &net.species[j].thermo.cp {
            Some(cp) => terms.push((j, nu, cp.clone())),
            None => return Vec::new(),
        }
    }
    terms
}

impl ReactionThermo {
    /// The thermochemistry rxnet uses for reaction `i`: ΔH from its `dH` if given, else from
    /// the species' H_f; K from its `K_eq` (van't Hoff with that ΔH) if given, else from the
    /// species' H_f and S.
    pub fn new(net: &Network, i: usize) -> ReactionThermo {
        let r = &net.reactions[i];
        let species = ReactionThermo::from_species(net, i);
        let mut out = ReactionThermo {
            terms: species.terms.clone(),
            dh0: None,
            k_dh0: None,
            dh_source: None,
            lk0: None,
            k_source: None,
            gas_nu: 0.0,
        };
        if let Some(dh) = r.dh {
            out.dh0 = Some(dh - out.sum_hs(r.rate.t_ref));
            out.dh_source = Some(EnthalpySource::Given);
        } else if species.dh0.is_some() {
            out.dh0 = species.dh0;
            out.dh_source = species.dh_source;
        }
        if let Some(eq) = r.rate.equilibrium.as_ref().filter(|e| !e.from_species) {
            let t0 = r.rate.t_ref;
            // ln K(T0) = L − ΔH(T0)/(R T0) + Σ ν Ss(T0)/R.
            out.lk0 = Some(match out.dh(t0) {
                Some(dh) => {
                    eq.k_ref.ln() + dh / (GAS_CONSTANT * t0) - out.sum_ss(t0) / GAS_CONSTANT
                }
                None => eq.k_ref.ln(),
            });
            out.k_source = Some(KSource::Given);
        } else if species.lk0.is_some()
            && (out.dh_source == species.dh_source
                || r.rate.equilibrium.as_ref().is_some_and(|e| e.from_species))
        {
            out.lk0 = species.lk0;
            out.k_source = species.k_source;
            out.gas_nu = species.gas_nu;
            if out.dh0 != species.dh0 {
                out.k_dh0 = species.dh0;
            }
        }
        out
    }

    /// What the species data alone give for reaction `i` (ignoring its `dH` and `K_eq`): ΔH
    /// when every species it changes has H_f, K when they also all have S. Used to check the
    /// reaction's own values against them.
    pub fn from_species(net: &Network, i: usize) -> ReactionThermo {
        let r = &net.reactions[i];
        let mut out = ReactionThermo {
            terms: cp_terms(net, i),
            dh0: None,
            k_dh0: None,
            dh_source: None,
            lk0: None,
            k_source: None,
            gas_nu: 0.0,
        };
        let sum = |f: &dyn Fn(&super::SpeciesThermo) -> Option<f64>| -> Option<f64> {
            r.net
                .iter()
                .map(|&(j, nu)| f(&net.species[j].thermo).map(|v| nu * v))
                .sum()
        };
        let Some(dh298) = sum(&|s| s.h_f) else {
            return out;
        };
        // ΔH(T) = Σ ν [H_f + increment(T)], increment = sensible + a constant offset.
        let offsets: f64 = out
            .terms
            .iter()
            .map(|(_, nu, cp)| nu * cp.enthalpy_offset())
            .sum();
        out.dh0 = Some(dh298 + offsets);
        out.dh_source = Some(EnthalpySource::Species);
        let Some(ds298) = sum(&|s| s.s) else {
            return out;
        };
        // ln K° = −ΔH/(R T) + ΔS/R with ΔS(T) = ΔS°298 + Σ ν [Ss(T) − Ss(298.15)].
        let mut lk0 = (ds298 - out.sum_ss(T_STANDARD)) / GAS_CONSTANT;
        match net.phase {
            Phase::Gas => out.gas_nu = r.mole_change(),
            Phase::Liquid => lk0 += r.mole_change() * C_STANDARD_LIQUID.ln(),
        }
        out.lk0 = Some(lk0);
        out.k_source = Some(KSource::Species);
        out
    }

    /// Σ ν_j Hs_j(T) over the terms (0 without ΔCp).
    fn sum_hs(&self, t: f64) -> f64 {
        self.terms
            .iter()
            .map(|(_, nu, cp)| nu * cp.sensible(t))
            .sum()
    }

    /// Σ ν_j Ss_j(T) over the terms (0 without ΔCp).
    fn sum_ss(&self, t: f64) -> f64 {
        self.terms
            .iter()
            .map(|(_, nu, cp)| nu * cp.entropy_antiderivative(t))
            .sum()
    }

    /// ΔH_i(T), J per mol of extent (Kirchhoff), or `None` without `dH` or species H_f.
    pub fn dh(&self, t: f64) -> Option<f64> {
        Some(self.dh0? + self.sum_hs(t))
    }

    /// ΔCp_i(T) = Σ_j ν_ij Cp_j(T), J/(mol K); 0 when a species has no heat capacity.
    pub fn dcp(&self, t: f64) -> f64 {
        self.terms.iter().map(|(_, nu, cp)| nu * cp.cp(t)).sum()
    }

    /// The ΔH(T) that ln K(T) is built on (see `k_dh0`).
    fn k_dh(&self, t: f64) -> Option<f64> {
        Some(self.k_dh0.or(self.dh0)? + self.sum_hs(t))
    }

    /// Whether ΔCp is taken into account (every species the reaction changes has Cp).
    pub fn includes_dcp(&self) -> bool {
        !self.terms.is_empty()
    }

    /// ln K_c,i(T), K_c in SI ((mol/m3)^Σν), or `None` when neither `K_eq` nor the species'
    /// H_f and S are given. With `K_eq` and no ΔH at all, K is constant.
    pub fn ln_k(&self, t: f64) -> Option<f64> {
        let l = self.lk0?;
        let Some(dh) = self.k_dh(t) else {
            return Some(l);
        };
        Some(
            l - dh / (GAS_CONSTANT * t)
                + self.sum_ss(t) / GAS_CONSTANT
                + self.gas_nu * (P_STANDARD / (GAS_CONSTANT * t)).ln(),
        )
    }

    /// d ln K_c,i/dT = ΔH_i(T)/(R T²) (van't Hoff), the exact derivative of [`Self::ln_k`];
    /// for K_c of a gas from species data it carries the −Σν/T of (P°/(R T))^Σν as well.
    pub fn d_ln_k_dt(&self, t: f64) -> Option<f64> {
        self.lk0?;
        let dh = self.k_dh(t).unwrap_or(0.0);
        Some(dh / (GAS_CONSTANT * t * t) - self.gas_nu / t)
    }

    /// ln K(T) as coefficients for a fast evaluation ([`LnKForm`]), `None` without a K.
    pub fn ln_k_form(&self) -> Option<LnKForm> {
        let l = self.lk0?;
        Some(match self.k_dh0.or(self.dh0) {
            None => LnKForm {
                l,
                c: 0.0,
                gas_nu: 0.0,
                dcp_constant: 0.0,
                terms: Vec::new(),
            },
            Some(c) => LnKForm {
                l,
                c,
                gas_nu: self.gas_nu,
                dcp_constant: self
                    .terms
                    .iter()
                    .filter_map(|(_, nu, cp)| match cp {
                        HeatCapacity::Constant(v) => Some(nu * v),
                        _ => None,
                    })
                    .sum(),
                terms: self
                    .terms
                    .iter()
                    .filter(|(_, _, cp)| !matches!(cp, HeatCapacity::Constant(_)))
                    .map(|(j, nu, cp)| (*j, *nu, cp.clone()))
                    .collect(),
            },
        })
    }

    /// Where ΔH comes from, if anywhere.
    pub fn enthalpy_source(&self) -> Option<EnthalpySource> {
        self.dh_source
    }

    /// Where K comes from, if anywhere.
    pub fn k_source(&self) -> Option<KSource> {
        self.k_source
    }

    /// ΔH in the form the energy balances evaluate, c + Σ ν_j Hs_j(T).
    pub fn enthalpy(&self) -> Option<ReactionEnthalpy> {
        Some(ReactionEnthalpy {
            offset: self.dh0?,
            terms: self.terms.iter().map(|(j, nu, _)| (*j, *nu)).collect(),
        })
    }
}
