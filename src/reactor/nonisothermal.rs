//! The balance equations of one vessel with temperature as a state: the right-hand side and
//! Jacobian of [`Balance`] when the study has an energy balance ([`super::energy`] holds the
//! equations and the data; this file evaluates them).

use super::balance::{Balance, Mixture};
use super::energy::Energy;
use crate::units::GAS_CONSTANT;

impl Balance {
    /// (κ, σ, S) at state y with the local temperature (see the module notes).
    pub(super) fn scales_at(&self, e: &Energy, x: f64, y: &[f64]) -> (f64, f64, f64) {
        let s: f64 = y[..self.n_species].iter().sum();
        let t = self.temperature_of(y);
        let theta = if e.gas_scaling { e.t0 / t } else { 1.0 };
        match self.mixture {
            Mixture::Fixed { volume, batch } => {
                let (k, sg) = self.fixed_scales(x, volume, batch);
                (k, sg, s)
            }
            Mixture::GasFlow { c_tot } => (c_tot * theta * self.pressure_ratio(y) / s, 1.0, s),
            Mixture::GasConstantPressure { c_tot } => (c_tot * theta / s, s / (c_tot * theta), s),
        }
    }

    /// The coolant temperature at x and state y.
    fn coolant_temperature(&self, e: &Energy, x: f64, y: &[f64]) -> f64 {
        self.coolant_index.map_or_else(|| e.coolant_at(x), |k| y[k])
    }

    /// dy/dx with the energy balance (module notes).
    pub(super) fn rhs_energy(&self, e: &Energy, x: f64, y: &[f64], dydx: &mut [f64]) {
        let n = self.n_species;
        let ti = self.t_index.expect("an energy balance has T in its state");
        let t = y[ti];
        let (kappa, sigma, s) = self.scales_at(e, x, y);
        let c: Vec<f64> = y[..n].iter().map(|v| kappa * v).collect();
        let mut rates = vec![0.0; self.rates.len()];
        self.rates.rates_at(t, &c, &mut rates);
        dydx.iter_mut().for_each(|v| *v = 0.0);
        // Σ_i σ r_i h_i, then the species' part of ΔE through dy/dx.
        let mut with_offset = 0.0;
        for (i, nu) in self
            .nu_starts
            .windows(2)
            .map(|w| &self.nu[w[0]..w[1]])
            .enumerate()
        {
            let r = sigma * rates[i];
            with_offset += r * e.offset[i];
            for &(j, v) in nu {
                dydx[j] += v * r;
            }
        }
        let urt = e.u * GAS_CONSTANT * t;
        let mut release = -with_offset;
        for (j, d) in dydx[..n].iter().enumerate() {
            if *d != 0.0 {
                release -= (e.h(j, t) - urt) * d;
            }
        }
        let ta = self.coolant_temperature(e, x, y);
        let (cap, _) = self.heat_capacity(e, x, &y[..n], t);
        let (dosed, _) = self.dosing_heat(e, x, t);
        dydx[ti] = (e.ua * (ta - t) + release + dosed) / cap;
        if let Some(w) = &self.walls {
            self.add_walls(w, x, y, kappa, dydx);
            dydx[ti] += self.wall_heat(e, w, x, t).0 / cap;
        }
        if let (Some(k), Some((_, capacity, counter))) = (self.coolant_index, e.coolant_stream()) {
            let sign = if counter { -1.0 } else { 1.0 };
            dydx[k] = sign * e.ua * (t - ta) / capacity;
        }
        if let Some(alpha) = self.alpha {
            let p = y[n];
            dydx[n] = -alpha / (2.0 * p) * (s / self.total0) * (t / e.t0);
        }
        self.exchange_rhs(x, y, dydx);
    }

    /// κ, σ and S at state y with their derivatives: uniform in the species (∂κ/∂y_k,
    /// ∂σ/∂y_k) and in T (through T0/T for a gas) — the chain rule shared by the Jacobian and
    /// the CSTR's heat release.
    fn scale_slopes(&self, e: &Energy, x: f64, y: &[f64]) -> ScaleSlopes {
        let t = self.temperature_of(y);
        let (kappa, sigma, s) = self.scales_at(e, x, y);
        let (dkappa, dsigma) = match self.mixture {
            Mixture::Fixed { .. } => (0.0, 0.0),
            Mixture::GasFlow { .. } => (-kappa / s, 0.0),
            Mixture::GasConstantPressure { .. } => (-kappa / s, sigma / s),
        };
        ScaleSlopes {
            kappa,
            sigma,
            s,
            dkappa,
            dsigma,
            dkappa_dt: if e.gas_scaling { -kappa / t } else { 0.0 },
            dsigma_dt: if e.sigma_scaling { sigma / t } else { 0.0 },
        }
    }

    /// ΔE_i(T) of reaction i with net coefficients `nu`, and dΔE_i/dT = ΔCp_i − u R Σν.
    fn reaction_energy(&self, e: &Energy, i: usize, nu: &[(usize, f64)], t: f64) -> (f64, f64) {
        let ur = e.u * GAS_CONSTANT;
        let mut de = e.offset[i];
        let mut de_dt = 0.0;
        for &(j, v) in nu {
            de += v * (e.h(j, t) - ur * t);
            de_dt += v * (e.cp_at(j, t) - ur);
        }
        (de, de_dt)
    }

    /// ∂(dy/dx)/∂y with the energy balance, every structural entry emitted.
    pub(super) fn jacobian_energy(
        &self,
        e: &Energy,
        x: f64,
        y: &[f64],
        out: &mut Vec<(usize, usize, f64)>,
    ) {
        let n = self.n_species;
        let ti = self.t_index.expect("an energy balance has T in its state");
        let t = y[ti];
        let p = self.pressure_ratio(y);
        let ScaleSlopes {
            kappa,
            sigma,
            s,
            dkappa,
            dsigma,
            dkappa_dt,
            dsigma_dt,
        } = self.scale_slopes(e, x, y);
        let c: Vec<f64> = y[..n].iter().map(|v| kappa * v).collect();
        let mut at = Vec::new();
        self.rates.constants(t, &mut at);
        let mut uniform = vec![0.0; n];
        let mut col_t = vec![0.0; n];
        let mut col_p = vec![0.0; n];
        let mut energy_row = vec![0.0; n];
        let mut energy_uniform = 0.0;
        let (mut release, mut release_dt, mut release_dp) = (0.0, 0.0, 0.0);
        let mut grad = Vec::new();
        for (i, nu) in self
            .nu_starts
            .windows(2)
            .map(|w| &self.nu[w[0]..w[1]])
            .enumerate()
        {
            let mut dr_dt = 0.0;
            let r = self
                .rates
                .eval_at(i, &at[i], &c, Some(&mut grad), Some(&mut dr_dt));
            let a: f64 = grad.iter().map(|&(m, g)| g * y[m]).sum();
            // Total ∂r/∂T: explicit, and through κ(T).
            let dr_dt = dr_dt + a * dkappa_dt;
            let (de, de_dt) = self.reaction_energy(e, i, nu, t);
            for &(j, v) in nu {
                for &(k, g) in &grad {
                    out.push((j, k, sigma * v * g * kappa));
                }
                uniform[j] += sigma * v * a * dkappa + dsigma * v * r;
                col_t[j] += v * (sigma * dr_dt + dsigma_dt * r);
                col_p[j] += sigma * v * a * kappa / p;
            }
            release -= sigma * r * de;
            for &(k, g) in &grad {
                energy_row[k] -= de * sigma * g * kappa;
            }
            energy_uniform -= de * (sigma * a * dkappa + dsigma * r);
            release_dt -= de * (sigma * dr_dt + dsigma_dt * r) + sigma * r * de_dt;
            release_dp -= de * sigma * a * kappa / p;
        }
        let dense = dkappa != 0.0 || dsigma != 0.0;
        for &j in &self.reactive {
            if dense {
                for k in 0..n {
                    out.push((j, k, uniform[j]));
                }
            }
            out.push((j, ti, col_t[j]));
        }
        let ta = self.coolant_temperature(e, x, y);
        let (cap, dcap_dt) = self.heat_capacity(e, x, &y[..n], t);
        let (dosed, dosed_dt) = self.dosing_heat(e, x, t);
        let f_t = (e.ua * (ta - t) + release + dosed) / cap;
        for (k, row) in energy_row.iter().enumerate() {
            out.push((
                ti,
                k,
                (row + energy_uniform - f_t * e.capacity_slope(k, t)) / cap,
            ));
        }
        out.push((
            ti,
            ti,
            (-e.ua + release_dt + dosed_dt - f_t * dcap_dt) / cap,
        ));
        if let (Some(k), Some((_, capacity, counter))) = (self.coolant_index, e.coolant_stream()) {
            let sign = if counter { -1.0 } else { 1.0 };
            out.push((ti, k, e.ua / cap));
            out.push((k, ti, sign * e.ua / capacity));
            out.push((k, k, -sign * e.ua / capacity));
        }
        if let Some(alpha) = self.alpha {
            for &j in &self.reactive {
                out.push((j, n, col_p[j]));
            }
            out.push((ti, n, release_dp / cap));
            // dp/dW = −α S T / (2 p S0 T0).
            let f_p = -alpha / (2.0 * p) * (s / self.total0) * (t / e.t0);
            for k in 0..n {
                out.push((n, k, f_p / s));
            }
            out.push((n, n, -f_p / p));
            out.push((n, ti, f_p / t));
        }
        if let Some(w) = &self.walls {
            self.wall_jacobian(w, x, y, Some((e, ti, cap)), out);
        }
        self.exchange_jacobian(x, out);
    }
}

impl Balance {
    /// The heat the reactions release per unit of reactor size at state y (species, then T),
    /// q = −σ Σ_i r_i ΔE_i(T) (W/m3 in a flow reactor: V q is the CSTR's heat generated G);
    /// with `grad` (length n + 1), also ∂q/∂y_k of the species and ∂q/∂T in the last entry, by
    /// the same chain rule as the energy row of the Jacobian. For reactors without a pressure
    /// state (CSTR, batch); `None` when the balance has no energy balance.
    pub(crate) fn heat_release(&self, y: &[f64], grad: Option<&mut [f64]>) -> Option<f64> {
        let e = self.energy.as_ref()?;
        let n = self.n_species;
        let t = self.temperature_of(y);
        let ScaleSlopes {
            kappa,
            sigma,
            dkappa,
            dsigma,
            dkappa_dt,
            dsigma_dt,
            ..
        } = self.scale_slopes(e, 0.0, y);
        let c: Vec<f64> = y[..n].iter().map(|v| kappa * v).collect();
        let mut at = Vec::new();
        self.rates.constants(t, &mut at);
        let mut q = 0.0;
        let mut rgrad = Vec::new();
        let mut out = grad;
        if let Some(g) = out.as_deref_mut() {
            g.iter_mut().for_each(|v| *v = 0.0);
        }
        for (i, nu) in self
            .nu_starts
            .windows(2)
            .map(|w| &self.nu[w[0]..w[1]])
            .enumerate()
        {
            let (de, de_dt) = self.reaction_energy(e, i, nu, t);
            match out.as_deref_mut() {
                None => q -= sigma * self.rates.eval_at(i, &at[i], &c, None, None) * de,
                Some(g) => {
                    let mut dr_dt = 0.0;
                    let r = self
                        .rates
                        .eval_at(i, &at[i], &c, Some(&mut rgrad), Some(&mut dr_dt));
                    let a: f64 = rgrad.iter().map(|&(m, gm)| gm * y[m]).sum();
                    let dr_dt = dr_dt + a * dkappa_dt;
                    q -= sigma * r * de;
                    for &(k, gk) in &rgrad {
                        g[k] -= de * sigma * gk * kappa;
                    }
                    let uniform = de * (sigma * a * dkappa + dsigma * r);
                    for gk in g[..n].iter_mut() {
                        *gk -= uniform;
                    }
                    g[n] -= de * (sigma * dr_dt + dsigma_dt * r) + sigma * r * de_dt;
                }
            }
        }
        Some(q)
    }
}

/// κ, σ and S with their uniform derivatives in the species and in T
/// ([`Balance::scale_slopes`]).
struct ScaleSlopes {
    kappa: f64,
    sigma: f64,
    s: f64,
    dkappa: f64,
    dsigma: f64,
    dkappa_dt: f64,
    dsigma_dt: f64,
}
