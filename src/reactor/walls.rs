//! A tube's walls: streams fed along a stretch of the tube (distributed feeds) and species
//! crossing a membrane wall, as terms of the balances of [`Balance`].
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
//! (∂κ/∂T = −κ/T) with an energy balance, by the chain rule of [`Balance::jacobian_at`].

use super::balance::{Balance, Mixture};
use super::energy::Energy;
use super::state::StateKind;
use crate::model::{Network, Permeation, Phase, Schedule};
use crate::solve::Exchanged;

/// One distributed feed as the balances use it.
#[derive(Debug, Clone)]
pub(super) struct FedAlong {
    /// (species, F_j,d) of the whole stream over its stretch, mol/s, the non-zero ones.
    flows: Vec<(usize, f64)>,
    /// w_d(x), normalised to ∫ w_d dx = 1.
    shape: Schedule,
    /// T_d of the stream, K.
    temperature: f64,
    /// q_d, m3/s.
    volumetric: f64,
}

/// The walls of a tube (distributed feeds and membrane), with the state positions of the
/// permeate quadratures.
#[derive(Debug, Clone)]
pub struct Walls {
    fed: Vec<FedAlong>,
    membrane: Vec<Permeation>,
    /// State index of the cumulative permeate Q_j of each membrane entry (same order).
    permeate: Vec<usize>,
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

impl Balance {
    /// The tube's walls, if it has any.
    pub fn walls(&self) -> Option<&Walls> {
        self.walls.as_ref()
    }

    /// Points inside the reactor where the balances' right-hand side has a kink or a jump (a
    /// distributed feed starting, stopping or changing slope), ascending: integrate between
    /// them, not across.
    pub fn breakpoints(&self) -> &[f64] {
        &self.breaks
    }

    /// ∂κ/∂y_k (uniform in k), for the gas of a flow reactor; 0 for a liquid.
    fn wall_dkappa(&self, kappa: f64, s: f64) -> f64 {
        match self.mixture {
            Mixture::GasFlow { .. } => -kappa / s,
            _ => 0.0,
        }
    }

    /// Add the wall terms to dy/dx at x, state y, concentration scale κ (species and permeate
    /// rows; the T row is [`Balance::wall_heat`]).
    pub(super) fn add_walls(&self, w: &Walls, x: f64, y: &[f64], kappa: f64, dydx: &mut [f64]) {
        for f in &w.fed {
            let wx = f.shape.value(x);
            if wx != 0.0 {
                for &(j, fj) in &f.flows {
                    dydx[j] += fj * wx;
                }
            }
        }
        for (p, &q) in w.membrane.iter().zip(&w.permeate) {
            let flux = p.coefficient * (kappa * y[p.species] - p.sweep);
            dydx[p.species] -= flux;
            dydx[q] = flux;
        }
    }

    /// The heat the distributed streams take to come to T, per unit of x (W/m3 or W/kg; ≤ 0
    /// when they enter colder), and its derivative in T: −Σ_d w_d(x) Σ_j F_j,d (H_j(T) −
    /// H_j(T_d)), or −Σ_d q_d w_d(x) c_v (T − T_d) with a mixture heat capacity c_v.
    pub(super) fn wall_heat(&self, e: &Energy, w: &Walls, x: f64, t: f64) -> (f64, f64) {
        let (mut q, mut dq) = (0.0, 0.0);
        let c_v = match (e.mixture, self.mixture) {
            (Some(m), Mixture::Fixed { volume, .. }) => Some(m / volume),
            _ => None,
        };
        for f in &w.fed {
            let wx = f.shape.value(x);
            if wx == 0.0 {
                continue;
            }
            match c_v {
                Some(c_v) => {
                    q -= wx * f.volumetric * c_v * (t - f.temperature);
                    dq -= wx * f.volumetric * c_v;
                }
                None => {
                    for &(j, fj) in &f.flows {
                        q -= wx * fj * (e.h(j, t) - e.h(j, f.temperature));
                        dq -= wx * fj * e.cp_at(j, t);
                    }
                }
            }
        }
        (q, dq)
    }

    /// The heat capacity of the stream (W/K) or charge (J/K) and its derivative in T: the
    /// species' Σ_j y_j (Cp_j − u R), or a mixture heat capacity c_v times the liquid's volume
    /// or volumetric flow at x, which grows with a distributed feed (or dosing).
    pub(super) fn heat_capacity(&self, e: &Energy, x: f64, y: &[f64], t: f64) -> (f64, f64) {
        let (cap, dcap) = e.capacity(y, t);
        match (e.mixture, self.mixture) {
            (Some(_), Mixture::Fixed { volume, .. }) if !self.growth.is_empty() => {
                (cap * self.fixed_volume(x) / volume, dcap)
            }
            _ => (cap, dcap),
        }
    }

    /// The Jacobian entries of the wall terms (species and permeate rows; every structural
    /// entry, zero or not). `energy` is (e, T index, heat capacity) when there is an energy
    /// balance.
    pub(super) fn wall_jacobian(
        &self,
        w: &Walls,
        x: f64,
        y: &[f64],
        energy: Option<(&Energy, usize, f64)>,
        out: &mut Vec<(usize, usize, f64)>,
    ) {
        let n = self.n_species;
        let s: f64 = y[..n].iter().sum();
        let kappa = match energy {
            Some((e, ..)) => self.scales_at(e, x, y).0,
            None => self.scales(x, y).0,
        };
        let dkappa = self.wall_dkappa(kappa, s);
        let t = self.temperature_of(y);
        let dkappa_dt = match energy {
            Some((e, ..)) if e.gas_scaling => -kappa / t,
            _ => 0.0,
        };
        let p = self.pressure_ratio(y);
        for (perm, &q) in w.membrane.iter().zip(&w.permeate) {
            let (j, km) = (perm.species, perm.coefficient);
            let yj = y[j];
            for (row, sign) in [(j, -1.0), (q, 1.0)] {
                out.push((row, j, sign * km * kappa));
                if dkappa != 0.0 {
                    for k in 0..n {
                        out.push((row, k, sign * km * yj * dkappa));
                    }
                }
                if self.alpha.is_some() {
                    out.push((row, n, sign * km * yj * kappa / p));
                }
                if let Some((_, ti, ..)) = energy {
                    out.push((row, ti, sign * km * yj * dkappa_dt));
                }
            }
        }
        if let Some((e, ti, cap)) = energy
            && !w.fed.is_empty()
        {
            // dT/dx gains h(x, T)/cap: ∂/∂T = (∂h/∂T − (h/cap) ∂cap/∂T)/cap, ∂/∂y_k =
            // −(h/cap) (∂cap/∂y_k)/cap.
            let (h, dh) = self.wall_heat(e, w, x, t);
            let (_, dcap_dt) = self.heat_capacity(e, x, &y[..n], t);
            let g = h / cap;
            out.push((ti, ti, (dh - g * dcap_dt) / cap));
            for k in 0..n {
                out.push((ti, k, -g * e.capacity_slope(k, t) / cap));
            }
        }
    }

    /// With an energy balance and a distributed feed: the adiabatic temperature rise reported
    /// (ΔT_ad, [`crate::safety`]) is the inlet feed's, and the streams fed along the tube bring
    /// more reactant and heat capacity; say so beside the result.
    pub fn wall_warning(&self, net: &Network) -> Option<String> {
        let w = self.walls.as_ref()?;
        (self.energy.is_some() && !w.fed.is_empty()).then(|| {
            format!(
                "the adiabatic temperature rise ΔT_ad is that of the inlet feed of `{}`; the streams fed along the tube bring more reactant (and heat capacity), so the rise they allow can differ: judge the hazard on the temperature profile",
                net.species[net.key].name
            )
        })
    }

    /// What entered and left through the walls, cumulative to each profile point (x, full
    /// state y): the distributed streams' share by x (F_j,d times the fraction of the shape's
    /// integral up to x) and the net wall flux Q_j, counted as entered where negative (a
    /// species fed through the wall) and as left (permeate) where positive.
    pub fn wall_exchange(&self, xs: &[f64], ys: &[Vec<f64>]) -> Option<Exchanged> {
        let w = self.walls.as_ref()?;
        let n = self.n_species;
        let mut ex = Exchanged::default();
        for (x, y) in xs.iter().zip(ys) {
            let mut entered = vec![0.0; n];
            let mut left = vec![0.0; n];
            for f in &w.fed {
                let share = f.shape.integral(f.shape.points[0].0, *x);
                for &(j, fj) in &f.flows {
                    entered[j] += fj * share;
                }
            }
            for (p, &q) in w.membrane.iter().zip(&w.permeate) {
                let through = y[q];
                if through >= 0.0 {
                    left[p.species] += through;
                } else {
                    entered[p.species] -= through;
                }
            }
            ex.entered.push(entered);
            ex.left.push(left);
        }
        Some(ex)
    }

    /// The net wall flux Q_j (mol/s, positive out of the tube) of each membrane species at the
    /// full state y, as (species, Q_j).
    pub fn permeated(&self, y: &[f64]) -> Vec<(usize, f64)> {
        self.walls.as_ref().map_or_else(Vec::new, |w| {
            w.membrane
                .iter()
                .zip(&w.permeate)
                .map(|(p, &q)| (p.species, y[q]))
                .collect()
        })
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
