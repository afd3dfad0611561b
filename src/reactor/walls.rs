//! A tube's walls: streams fed along a stretch of the tube (distributed feeds) and species
//! crossing a membrane wall: their data here, their terms in the balances of
//! [`super::Balance`] in `wall_terms.rs`.
//!
//! With x the tube coordinate (V of a PFR, W of a packed bed), y_j the molar flows, κ the
//! concentration scale of the balances (C_j = κ y_j) and w_d(x) the normalised shape of
//! distributed feed d (∫ w_d dx = 1):
//!
//! ```text
//! dF_j/dx  += Σ_d F_j,d w_d(x) − k_m,j (κ F_j − C_j,sweep)
//! dQ_j/dx   =                     k_m,j (κ F_j − C_j,sweep)       (cumulative permeate)
//! dv/dx     = Σ_d q_d w_d(x)                                       (liquid only)
//! dT/dx    += −Σ_d w_d(x) Σ_j F_j,d ∫_{T_d}^{T} Cp_j dT / Σ_j F_j Cp_j
//!             (with a mixture heat capacity c_v: −Σ_d q_d w_d(x) c_v (T − T_d) / (c_v v(x)))
//! ```
//!
//! (species balance over a slice dx of a tube with a lateral inflow and a wall flux; common
//! practice, e.g. Levenspiel, Chemical Reaction Engineering, 3rd ed., ch. 7 for the
//! distributed feed, from memory). The distributed stream enters at its own temperature T_d and
//! is heated (or cooled) to T by the reacting stream. Permeate leaves at the stream's
//! temperature T and so carries its own enthalpy out: no T term. A species entering through the
//! wall from the sweep (κ F_j < C_j,sweep) is taken to enter at the reactor temperature T too
//! (the sweep side at the tube's temperature), so it brings no T term either.
//!
//! A liquid's volumetric flow grows with the distributed stream (v(x) = v0 + Σ_d q_d ∫_0^x
//! w_d, the balances' `growth`); the membrane does not change v: the permeating species are
//! taken as dilute in the liquid (a flux of a concentrated species would change the volume
//! too, which the model leaves out). For a gas, v follows F_T, T and P in κ by itself.
//! The wall flux's Jacobian has −k_m κ on the diagonal, the gas terms −k_m F_j ∂κ/∂F_k
//! (∂κ/∂F_k = −κ/F_T), −k_m F_j κ/p for a packed bed's pressure ratio p and −k_m F_j ∂κ/∂T
//! (∂κ/∂T = −κ/T) with an energy balance, by the chain rule of [`super::Balance::jacobian_at`].

use super::state::StateKind;
use crate::model::{Network, Permeation, Phase, Schedule};

/// One distributed feed as the balances use it.
#[derive(Debug, Clone)]
pub(super) struct FedAlong {
    /// (species, F_j,d) of the whole stream over its stretch, mol/s, the non-zero ones.
    pub(super) flows: Vec<(usize, f64)>,
    /// w_d(x), normalised to ∫ w_d dx = 1.
    pub(super) shape: Schedule,
    /// T_d of the stream, K.
    pub(super) temperature: f64,
    /// q_d, m3/s.
    pub(super) volumetric: f64,
}

/// The walls of a tube (distributed feeds and membrane), with the state positions of the
/// permeate quadratures.
#[derive(Debug, Clone)]
pub struct Walls {
    pub(super) fed: Vec<FedAlong>,
    pub(super) membrane: Vec<Permeation>,
    /// State index of the cumulative permeate Q_j of each membrane entry (same order).
    pub(super) permeate: Vec<usize>,
    /// The interior points of the tube where a feed starts, stops or changes slope.
    pub(super) breakpoints: Vec<f64>,
}

impl Walls {
    /// The walls of the network's vessel, `None` without them; an error on a vessel that is
    /// not a tube (the loader refuses that; a network changed in code gets the same answer).
    pub(super) fn new(net: &Network) -> Result<Option<Walls>, String> {
        let c = &net.contacting;
        if c.distributed.is_empty() && c.membrane.is_empty() {
            return Ok(None);
        }
        if !matches!(
            net.reactor,
            crate::model::Reactor::Pfr { .. } | crate::model::Reactor::Pbr { .. }
        ) {
            return Err(format!(
                "distributed feeds and membrane walls belong to a tube (pfr or pbr), not a {}",
                net.reactor.kind()
            ));
        }
        let size = net.size();
        let fed: Vec<FedAlong> = c
            .distributed
            .iter()
            .map(|d| FedAlong {
                flows: d
                    .stream
                    .amounts
                    .iter()
                    .enumerate()
                    .filter(|(_, f)| **f != 0.0)
                    .map(|(j, f)| (j, *f))
                    .collect(),
                shape: d.shape.clone(),
                temperature: d.stream.temperature,
                volumetric: d.stream.volumetric,
            })
            .collect();
        let mut breakpoints: Vec<f64> = fed
            .iter()
            .flat_map(|f| f.shape.breakpoints())
            .filter(|x| *x > 0.0 && *x < size)
            .collect();
        breakpoints.sort_by(f64::total_cmp);
        breakpoints.dedup();
        Ok(Some(Walls {
            fed,
            membrane: c.membrane.clone(),
            permeate: Vec::new(),
            breakpoints,
        }))
    }

    /// The extra states: one cumulative permeate per membrane species.
    pub(super) fn states(&self) -> Vec<StateKind> {
        self.membrane
            .iter()
            .map(|p| StateKind::Permeate(p.species))
            .collect()
    }

    /// Record where the permeate states sit in the layout.
    pub(super) fn place(&mut self, layout: &super::StateLayout) {
        self.permeate = self
            .membrane
            .iter()
            .map(|p| {
                layout
                    .index_of(StateKind::Permeate(p.species))
                    .expect("the layout has the permeate states")
            })
            .collect();
    }

    /// The liquid's volumetric inflow per unit of x of each distributed feed, q_d w_d(x).
    pub(super) fn growth(&self, net: &Network) -> Vec<Schedule> {
        if net.phase != Phase::Liquid {
            return Vec::new();
        }
        self.fed
            .iter()
            .map(|f| Schedule {
                points: f
                    .shape
                    .points
                    .iter()
                    .map(|&(x, w)| (x, w * f.volumetric))
                    .collect(),
            })
            .collect()
    }
}

impl Walls {
    /// The species crossing the membrane wall, in the order written.
    pub fn membrane_species(&self) -> Vec<usize> {
        self.membrane.iter().map(|p| p.species).collect()
    }

    /// How much of species j the distributed feeds fed by x (mol/s).
    pub fn fed_by(&self, j: usize, x: f64) -> f64 {
        self.fed
            .iter()
            .filter_map(|f| {
                let fj = f.flows.iter().find(|(k, _)| *k == j)?.1;
                Some(fj * f.shape.integral(f.shape.points[0].0, x))
            })
            .sum()
    }
}

/// The liquid's volumetric flow added by the distributed feeds up to x (m3/s): Σ_d q_d times
/// the fraction of stream d that has entered by x; 0 for a gas (whose v follows F_T, T, P).
pub fn added_volumetric(net: &Network, x: f64) -> f64 {
    if net.phase != Phase::Liquid {
        return 0.0;
    }
    net.contacting
        .distributed
        .iter()
        .map(|d| d.stream.volumetric * d.fraction_by(x))
        .sum()
}
