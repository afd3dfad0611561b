//! Semibatch operation: a liquid batch with dosing streams and an optional continuous
//! withdrawal: its data here, its terms in `semibatch_terms.rs`, added to the batch balances
//! of [`super::balance`] and [`super::nonisothermal`] by one hook each.
//!
//! With q_d(t) the volumetric rate of dosing stream d (concentrations C_j,d, temperature T_d)
//! and q_out(t) the withdrawal rate, all piecewise linear in t ([`crate::model::Schedule`]):
//!
//! ```text
//! V(t)     = V0 + ∫_0^t (Σ_d q_d − q_out) dt                       (explicit in t)
//! dN_j/dt  = V Σ_i ν_ij r_i(N/V) + Σ_d C_j,d q_d(t) − q_out(t) N_j / V(t)
//! dL_j/dt  = q_out(t) N_j / V(t)                                   (withdrawn so far; a state only with withdrawal)
//! C_tot dT/dt = Q + Σ_i V r_i (−ΔH_i(T)) − Σ_d q_d Σ_j C_j,d ∫_{T_d}^{T} Cp_j dT
//! C_tot    = Σ_j N_j Cp_j(T)      or, with a mixture heat capacity c_v, c_v V(t)
//! ```
//!
//! (the dosing term is −Σ_d q_d c_v (T − T_d) with c_v). This is the batch energy balance
//! (Fogler, Elements of Chemical Reaction Engineering, ch. 11–13, semibatch reactors; from
//! memory) with the dosed liquid's enthalpy: d(Σ_j N_j H_j)/dt gains Σ_d q_d Σ_j C_j,d H_j(T_d),
//! and the withdrawal takes out the contents' own enthalpy, Σ_j (q_out N_j/V) H_j(T), which
//! cancels against the withdrawal's share of Σ_j H_j dN_j/dt: no T term (leaving at T). The
//! liquid is taken as of constant density (volumes add; common practice), so V(t) is known
//! before the integration and κ = 1/V(t), σ = V(t) of the batch row of [`super`]'s table.

use super::state::StateKind;
use crate::model::{Dosing, Network, Schedule};

/// The dosing and withdrawal of a batch, as the balance evaluates them.
#[derive(Debug, Clone)]
pub(super) struct Semibatch {
    pub(super) dosing: Vec<Dosing>,
    pub(super) withdrawal: Option<Schedule>,
    /// Position of the first withdrawn-amount state L_0 (L_j follows at + j), with withdrawal.
    pub(super) withdrawn: Option<usize>,
    /// The charge's volume V0, m3.
    pub(super) v0: f64,
}

impl Semibatch {
    /// The semibatch terms of the network, `None` for a plain vessel.
    pub(super) fn new(net: &Network) -> Option<Semibatch> {
        let c = &net.contacting;
        if !net.reactor.is_batch() || (c.dosing.is_empty() && c.withdrawal.is_none()) {
            return None;
        }
        Some(Semibatch {
            dosing: c.dosing.clone(),
            withdrawal: c.withdrawal.as_ref().map(|w| w.rate.clone()),
            withdrawn: None,
            v0: net.feed.volumetric,
        })
    }

    /// The states the semibatch adds to the layout: the withdrawn amount of every species,
    /// when there is a withdrawal.
    pub(super) fn extra_states(&self, n_species: usize) -> Vec<StateKind> {
        if self.withdrawal.is_some() {
            (0..n_species).map(StateKind::Withdrawn).collect()
        } else {
            Vec::new()
        }
    }

    /// Places the withdrawn-amount states once the layout is known.
    pub(super) fn place(mut self, layout: &super::StateLayout) -> Semibatch {
        self.withdrawn = layout.index_of(StateKind::Withdrawn(0));
        self
    }

    /// The net volumetric inflows whose integral grows the volume: every dosing rate, and the
    /// withdrawal's with its sign reversed.
    pub(super) fn growth(&self) -> Vec<Schedule> {
        let mut g: Vec<Schedule> = self.dosing.iter().map(|d| d.rate.clone()).collect();
        if let Some(w) = &self.withdrawal {
            g.push(Schedule {
                points: w.points.iter().map(|&(t, q)| (t, -q)).collect(),
            });
        }
        g
    }
}

/// The liquid volume of a batch at time t, m3: V0 + ∫_0^t (Σ_d q_d − q_out) dt (the charge's
/// volume for a plain batch). The loader has checked that it stays positive over the batch.
pub fn liquid_volume(net: &Network, t: f64) -> f64 {
    let c = &net.contacting;
    net.feed.volumetric
        + c.dosing
            .iter()
            .map(|d| d.rate.integral(0.0, t))
            .sum::<f64>()
        - c.withdrawal
            .as_ref()
            .map_or(0.0, |w| w.rate.integral(0.0, t))
}

/// The amount of each species dosed from the start to time t, mol: Σ_d C_j,d ∫_0^t q_d dt
/// (closed form of the piecewise-linear rates).
pub fn dosed_by(net: &Network, t: f64) -> Vec<f64> {
    let mut out = vec![0.0; net.species.len()];
    for d in &net.contacting.dosing {
        let v = d.rate.integral(0.0, t);
        for (o, c) in out.iter_mut().zip(&d.concentrations) {
            *o += c * v;
        }
    }
    out
}

/// The times where a dosing or withdrawal rate starts, stops or changes slope, strictly inside
/// (0, end): the right-hand side has a kink or a jump there, so the integration restarts at
/// each.
pub fn breakpoints(net: &Network, end: f64) -> Vec<f64> {
    let c = &net.contacting;
    if !net.reactor.is_batch() {
        return Vec::new();
    }
    let mut t: Vec<f64> = c
        .dosing
        .iter()
        .map(|d| &d.rate)
        .chain(c.withdrawal.as_ref().map(|w| &w.rate))
        .flat_map(|s| s.breakpoints())
        .filter(|&t| t > 0.0 && t < end)
        .collect();
    t.sort_by(f64::total_cmp);
    t.dedup();
    t
}
