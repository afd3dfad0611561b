//! The terms of a semibatch's dosing and withdrawal in the batch balances of [`Balance`] (the
//! equations are in [`super::semibatch`]): the dosed species and the withdrawal in dN/dt, the
//! withdrawn amounts' quadrature, the dosed liquid's heat, and their Jacobian entries.

use super::balance::Balance;
use super::energy::Energy;

impl Balance {
    /// Position of the first withdrawn-amount state (species j at + j), with a withdrawal.
    pub fn withdrawn_index(&self) -> Option<usize> {
        self.semibatch.as_ref().and_then(|s| s.withdrawn)
    }

    /// Adds the dosing and withdrawal terms to dy/dt (species, withdrawn amounts).
    #[inline]
    pub(super) fn exchange_rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]) {
        let Some(s) = &self.semibatch else { return };
        let n = self.n_species;
        for d in &s.dosing {
            let q = d.rate.value(x);
            if q != 0.0 {
                for (f, c) in dydx[..n].iter_mut().zip(&d.concentrations) {
                    *f += c * q;
                }
            }
        }
        if let (Some(w), Some(l0)) = (&s.withdrawal, s.withdrawn) {
            let per = w.value(x) / self.fixed_volume(x);
            for j in 0..n {
                let out = per * y[j];
                dydx[j] -= out;
                dydx[l0 + j] = out;
            }
        }
    }

    /// Adds ∂/∂y of the withdrawal terms: −q_out/V on the species' diagonal, +q_out/V for the
    /// withdrawn amounts (dosing does not depend on the state). Emitted whether or not the
    /// withdrawal runs at x, so the sparse pattern is fixed.
    pub(super) fn exchange_jacobian(&self, x: f64, out: &mut Vec<(usize, usize, f64)>) {
        let Some(s) = &self.semibatch else { return };
        if let (Some(w), Some(l0)) = (&s.withdrawal, s.withdrawn) {
            let per = w.value(x) / self.fixed_volume(x);
            for j in 0..self.n_species {
                out.push((j, j, -per));
                out.push((l0 + j, j, per));
            }
        }
    }

    /// The heat the dosed liquid takes to reach the contents' temperature, as a rate of heat
    /// gained by the contents (W), with its T-derivative: −Σ_d q_d Σ_j C_j,d ∫_{T_d}^{T} Cp_j dT,
    /// or −Σ_d q_d c_v (T − T_d) with a mixture heat capacity. Zero for a plain vessel.
    #[inline]
    pub(super) fn dosing_heat(&self, e: &Energy, x: f64, t: f64) -> (f64, f64) {
        let Some(s) = &self.semibatch else {
            return (0.0, 0.0);
        };
        let (mut h, mut dh) = (0.0, 0.0);
        for d in &s.dosing {
            let q = d.rate.value(x);
            if q == 0.0 {
                continue;
            }
            match e.mixture {
                Some(m) => {
                    let cv = m / s.v0;
                    h -= q * cv * (t - d.temperature);
                    dh -= q * cv;
                }
                None => {
                    for (j, c) in d.concentrations.iter().enumerate() {
                        if *c != 0.0 {
                            h -= q * c * (e.h(j, t) - e.h(j, d.temperature));
                            dh -= q * c * e.cp_at(j, t);
                        }
                    }
                }
            }
        }
        (h, dh)
    }
}
