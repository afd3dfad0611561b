//! Thermodynamic consistency around dependent reactions.
//!
//! Wegscheider condition: if ν_dep = Σ c_i ν_i then, at the same temperature,
//! K_dep = Π K_i^c_i, i.e. ln K_dep = Σ c_i ln K_i. Hess's law likewise gives
//! ΔH_dep = Σ c_i ΔH_i, without which the K's can agree at one temperature only.
//! K(T) follows van't Hoff from ΔH: K(T) = K_ref exp(−ΔH/R (1/T − 1/T_ref)).

use super::stoich::Dependent;
use crate::exact::to_f64;
use crate::model::Network;
use crate::units::GAS_CONSTANT;

/// Allowed mismatch in ln K (a relative difference of about 1e-6 in K).
pub const LN_K_TOLERANCE: f64 = 1e-6;

/// ln K_c of reaction i at temperature T (None for a one-way reaction).
pub fn ln_keq(net: &Network, i: usize, t: f64) -> Option<f64> {
    let r = &net.reactions[i];
    let eq = r.rate.equilibrium.as_ref()?;
    let dh = r.dh.unwrap_or(0.0);
    Some(eq.k_ref.ln() - dh / GAS_CONSTANT * (1.0 / t - 1.0 / r.rate.t_ref))
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
    dependent
        .iter()
        .filter_map(|d| {
            let ln_dep = ln_keq(net, d.reaction, t)?;
            let mut ln_comb = 0.0;
            for (i, c) in &d.combination {
                ln_comb += to_f64(c) * ln_keq(net, *i, t)?;
            }
            let members = std::iter::once(d.reaction).chain(d.combination.iter().map(|(i, _)| *i));
            let any_dh = members.clone().any(|i| net.reactions[i].dh.is_some());
            let dh = any_dh.then(|| {
                let combined: f64 = d
                    .combination
                    .iter()
                    .map(|(i, c)| to_f64(c) * net.reactions[*i].dh.unwrap_or(0.0))
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
