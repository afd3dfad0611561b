//! The terms of a tube's walls in the balances of [`Balance`] (the equations are in
//! [`super::walls`]): the distributed feeds and the membrane flux in dy/dx, the feed's heat in
//! the T row, their Jacobian entries, the liquid's growing heat capacity, and what entered and
//! left by the walls at each profile point.

use super::balance::{Balance, Mixture};
use super::energy::Energy;
use super::walls::Walls;

/// What entered and left by the walls, cumulative to each profile point, per species (the
/// solver's `Exchanged` is built from it).
#[derive(Debug, Clone, Default)]
pub struct Exchange {
    pub entered: Vec<Vec<f64>>,
    pub left: Vec<Vec<f64>>,
}
use crate::model::Network;

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
    pub fn wall_exchange(&self, xs: &[f64], ys: &[Vec<f64>]) -> Option<Exchange> {
        let w = self.walls.as_ref()?;
        let n = self.n_species;
        let mut ex = Exchange::default();
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
