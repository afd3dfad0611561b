//! The isothermal balance equations of one vessel (see the module docs of [`crate::reactor`]
//! for the one form they share).

use super::Model;
use super::ergun::ergun_alpha;
use super::state::{StateKind, StateLayout};
use crate::kinetics::RateSet;
use crate::model::{BatchMode, Network, Phase, Reactor};
use crate::units::GAS_CONSTANT;

/// How concentrations follow from the state, and how the rates are scaled.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Mixture {
    /// C = y / v (v constant), rates scaled by σ.
    Fixed { volume: f64, sigma: f64 },
    /// C = c_tot p y / S (ideal gas at T0), σ = 1 (flow reactors).
    GasFlow { c_tot: f64 },
    /// C = c_tot y / S, σ = S / c_tot (constant-pressure gas batch).
    GasConstantPressure { c_tot: f64 },
}

/// The balance equations of one reactor for one network, isothermal at the feed temperature.
#[derive(Debug, Clone)]
pub struct Balance {
    pub rates: RateSet,
    /// Net coefficients (species, ν) of all reactions in one array, reaction i's at
    /// `nu[nu_starts[i]..nu_starts[i + 1]]` (one block walked in order, whatever the allocator;
    /// see `RateSet`'s packed factors).
    nu: Vec<(usize, f64)>,
    nu_starts: Vec<usize>,
    n_species: usize,
    mixture: Mixture,
    temperature: f64,
    /// Bed constant α (1/kg) when the pressure drop is modelled: then state n is p = P/P0.
    alpha: Option<f64>,
    /// S at the inlet (F_T0), for the pressure equation.
    total0: f64,
    /// Species with a non-zero ν in some reaction (rows of the Jacobian that can be non-zero).
    reactive: Vec<usize>,
    /// What each state entry is: the species, then p = P/P0 when the pressure drop is modelled.
    layout: StateLayout,
}

/// Networks with at most this many species keep their concentrations on the stack in
/// [`Balance::rhs`].
const SMALL_NETWORK: usize = 32;

impl Balance {
    /// Set up the balances of the network's reactor. Fails only when the Ergun equation needs a
    /// molar mass that no species gives.
    pub fn new(net: &Network) -> Result<Balance, String> {
        let feed = &net.feed;
        let c_tot = feed.pressure / (GAS_CONSTANT * feed.temperature);
        let gas = net.phase == Phase::Gas;
        // Flow reactors: an ideal gas, or a liquid of constant density.
        let flow = if gas {
            Mixture::GasFlow { c_tot }
        } else {
            Mixture::Fixed {
                volume: feed.volumetric,
                sigma: 1.0,
            }
        };
        let (mixture, alpha) = match &net.reactor {
            Reactor::Pfr { .. } | Reactor::Cstr { .. } => (flow, None),
            Reactor::Pbr { pressure_drop, .. } => {
                let alpha = match pressure_drop {
                    None => None,
                    Some(pd) => Some(ergun_alpha(net, pd).ok_or_else(|| {
                        "the Ergun equation needs the molar mass of every fed species: give `molar_mass` (or a formula of common elements) for each"
                            .to_string()
                    })?),
                };
                (flow, alpha)
            }
            Reactor::Batch { mode, .. } => (
                match (gas, mode) {
                    (true, BatchMode::ConstantPressure) => Mixture::GasConstantPressure { c_tot },
                    _ => Mixture::Fixed {
                        volume: feed.volumetric,
                        sigma: feed.volumetric,
                    },
                },
                None,
            ),
        };
        let extra: &[StateKind] = if alpha.is_some() {
            &[StateKind::PressureRatio]
        } else {
            &[]
        };
        Ok(Balance {
            layout: StateLayout::new(net, extra),
            reactive: net.reacting_species(),
            rates: RateSet::new(net),
            nu: net
                .reactions
                .iter()
                .flat_map(|r| r.net.iter().copied())
                .collect(),
            nu_starts: std::iter::once(0)
                .chain(net.reactions.iter().scan(0, |end, r| {
                    *end += r.net.len();
                    Some(*end)
                }))
                .collect(),
            n_species: net.species.len(),
            mixture,
            temperature: feed.temperature,
            alpha,
            total0: feed.total(),
        })
    }

    /// Number of states: species, plus p = P/P0 for a bed with pressure drop.
    pub fn dim(&self) -> usize {
        self.layout.len()
    }

    /// What each state entry is.
    pub fn layout(&self) -> &StateLayout {
        &self.layout
    }

    pub fn n_species(&self) -> usize {
        self.n_species
    }

    /// Whether state `n_species` is the pressure ratio p = P/P0.
    pub fn has_pressure(&self) -> bool {
        self.alpha.is_some()
    }

    /// The bed constant α in use, if any.
    pub fn alpha(&self) -> Option<f64> {
        self.alpha
    }

    /// Initial state from the feed.
    pub fn initial_state(&self, net: &Network) -> Vec<f64> {
        let mut y = net.feed.amounts.clone();
        if self.alpha.is_some() {
            y.push(1.0);
        }
        y
    }

    fn pressure_ratio(&self, y: &[f64]) -> f64 {
        if self.alpha.is_some() {
            y[self.n_species]
        } else {
            1.0
        }
    }

    /// (κ, σ, S) at state y.
    fn scales(&self, y: &[f64]) -> (f64, f64, f64) {
        let s: f64 = y[..self.n_species].iter().sum();
        match self.mixture {
            Mixture::Fixed { volume, sigma } => (1.0 / volume, sigma, s),
            Mixture::GasFlow { c_tot } => (c_tot * self.pressure_ratio(y) / s, 1.0, s),
            Mixture::GasConstantPressure { c_tot } => (c_tot / s, s / c_tot, s),
        }
    }

    /// Concentrations C_j (mol/m3) at state y.
    pub fn concentrations(&self, y: &[f64], c: &mut Vec<f64>) {
        let (kappa, _, _) = self.scales(y);
        c.clear();
        c.extend(y[..self.n_species].iter().map(|v| kappa * v));
    }

    /// Rates r_i at state y.
    pub fn reaction_rates(&self, y: &[f64], r: &mut Vec<f64>) {
        let mut c = Vec::with_capacity(self.n_species);
        self.concentrations(y, &mut c);
        r.clear();
        r.extend((0..self.rates.len()).map(|i| self.rates.eval(i, self.temperature, &c, None)));
    }

    /// dy/dx at state y.
    pub fn rhs(&self, y: &[f64], dydx: &mut [f64]) {
        let (kappa, sigma, s) = self.scales(y);
        // C on the stack for small networks (no allocation per call), on the heap beyond.
        let mut small = [0.0; SMALL_NETWORK];
        let mut large = Vec::new();
        let c: &mut [f64] = if self.n_species <= SMALL_NETWORK {
            &mut small[..self.n_species]
        } else {
            large.resize(self.n_species, 0.0);
            &mut large
        };
        for (cj, yj) in c.iter_mut().zip(y) {
            *cj = kappa * yj;
        }
        dydx.iter_mut().for_each(|v| *v = 0.0);
        for (i, nu) in self
            .nu_starts
            .windows(2)
            .map(|w| &self.nu[w[0]..w[1]])
            .enumerate()
        {
            let r = sigma * self.rates.eval(i, self.temperature, c, None);
            for &(j, v) in nu {
                dydx[j] += v * r;
            }
        }
        if let Some(alpha) = self.alpha {
            let p = y[self.n_species];
            dydx[self.n_species] = -alpha / (2.0 * p) * (s / self.total0);
        }
    }

    /// ∂(dy/dx)/∂y as (row, column, value) triplets; duplicates add.
    pub fn jacobian(&self, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        let n = self.n_species;
        let (kappa, sigma, s) = self.scales(y);
        let c: Vec<f64> = y[..n].iter().map(|v| kappa * v).collect();
        // ∂κ/∂y_k (uniform in k) and ∂σ/∂y_k (uniform in k).
        let (dkappa, dsigma) = match self.mixture {
            Mixture::Fixed { .. } => (0.0, 0.0),
            Mixture::GasFlow { .. } => (-kappa / s, 0.0),
            Mixture::GasConstantPressure { c_tot } => (-kappa / s, 1.0 / c_tot),
        };
        let mut dense = vec![0.0; if dkappa != 0.0 || dsigma != 0.0 { n } else { 0 }];
        let mut grad = Vec::new();
        let mut dp_col = vec![0.0; if self.alpha.is_some() { n } else { 0 }];
        for (i, nu) in self
            .nu_starts
            .windows(2)
            .map(|w| &self.nu[w[0]..w[1]])
            .enumerate()
        {
            let r = self.rates.eval(i, self.temperature, &c, Some(&mut grad));
            // a_i = Σ_m g_im y_m: the part of ∂r_i that comes through κ.
            let a: f64 = grad.iter().map(|&(m, g)| g * y[m]).sum();
            for &(j, v) in nu {
                for &(k, g) in &grad {
                    out.push((j, k, sigma * v * g * kappa));
                }
                if !dense.is_empty() {
                    dense[j] += sigma * v * a * dkappa + dsigma * v * r;
                }
                if !dp_col.is_empty() {
                    // κ ∝ p, so ∂r/∂p = a κ / p.
                    dp_col[j] += sigma * v * a * kappa / self.pressure_ratio(y);
                }
            }
        }
        // Emit the structural pattern (also entries that are zero at this state), as the sparse
        // solver fixes its pattern from the first evaluation.
        if !dense.is_empty() {
            for &j in &self.reactive {
                for k in 0..n {
                    out.push((j, k, dense[j]));
                }
            }
        }
        if let Some(alpha) = self.alpha {
            let p = y[n];
            for &j in &self.reactive {
                out.push((j, n, dp_col[j]));
            }
            // dp/dW = −α S / (2 p S0).
            for k in 0..n {
                out.push((n, k, -alpha / (2.0 * p * self.total0)));
            }
            out.push((n, n, alpha * s / (2.0 * p * p * self.total0)));
        }
    }
}

impl Model for Balance {
    fn layout(&self) -> &StateLayout {
        &self.layout
    }
    fn rhs(&self, y: &[f64], dydx: &mut [f64]) {
        Balance::rhs(self, y, dydx)
    }
    fn jacobian(&self, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        Balance::jacobian(self, y, out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::load_str;

    fn fd_check(text: &str, y: &[f64]) {
        let net = load_str(text, "test", &[]).unwrap();
        let b = Balance::new(&net).unwrap();
        let n = b.dim();
        let mut trip = Vec::new();
        b.jacobian(y, &mut trip);
        let mut j = vec![vec![0.0; n]; n];
        for (r, c, v) in trip {
            j[r][c] += v;
        }
        for k in 0..n {
            let h = 1e-6 * y[k].abs().max(1e-6);
            let (mut yp, mut ym) = (y.to_vec(), y.to_vec());
            yp[k] += h;
            ym[k] -= h;
            let (mut fp, mut fm) = (vec![0.0; n], vec![0.0; n]);
            b.rhs(&yp, &mut fp);
            b.rhs(&ym, &mut fm);
            for r in 0..n {
                let fd = (fp[r] - fm[r]) / (2.0 * h);
                let scale = fd.abs().max(j[r][k].abs()).max(1e-10);
                assert!(
                    (fd - j[r][k]).abs() / scale < 1e-5,
                    "J[{r}][{k}] = {} vs fd {fd}",
                    j[r][k]
                );
            }
        }
    }

    const REACTIONS: &str = "reactions:\n  - {id: r1, stoich: A + B -> 2 C, rate: {k: 1e-3 m3/(mol*s)}}\n  - {id: r2, stoich: C <=> D, rate: {k: 0.2 1/s, K_eq: 3}}\n  - {id: r3, stoich: A -> D + E, rate: {law: hyperbolic, k: 0.05 1/s, adsorption: {D: {K: 0.01 m3/mol}}}}\n";
    const SPECIES: &str = "name: t\nspecies: {A: {}, B: {}, C: {}, D: {}, E: {}, I: {}}\n";

    /// Jacobians of every reactor form against central finite differences (common practice).
    #[test]
    fn jacobians_match_finite_differences() {
        let y = [0.8, 0.5, 0.3, 0.2, 0.1, 0.4];
        fd_check(
            &format!(
                "{SPECIES}phase: liquid\n{REACTIONS}feed: {{T: 300 K, volumetric: 2 L/s, flows: {{A: 1 mol/s, B: 1 mol/s}}}}\nreactor: {{type: pfr, volume: 1 m3}}\n"
            ),
            &y,
        );
        fd_check(
            &format!(
                "{SPECIES}phase: gas\n{REACTIONS}feed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, B: 1 mol/s, I: 1 mol/s}}}}\nreactor: {{type: cstr, volume: 1 m3}}\n"
            ),
            &y,
        );
        fd_check(
            &format!(
                "{SPECIES}phase: gas\n{REACTIONS}feed: {{T: 500 K, P: 5 bar, amounts: {{A: 1 mol, B: 1 mol, I: 1 mol}}}}\nreactor: {{type: batch, time: 1 h, mode: constant_pressure}}\n"
            ),
            &y,
        );
        fd_check(
            &format!(
                "{SPECIES}phase: liquid\n{REACTIONS}feed: {{T: 300 K, amounts: {{A: 1 mol, B: 1 mol}}}}\nreactor: {{type: batch, time: 1 h, volume: 3 L}}\n"
            ),
            &y,
        );
        let pbr = "name: t\nspecies: {A: {}, B: {}, C: {}, D: {}, E: {}, I: {}}\nphase: gas\nreactions:\n  - {id: r1, stoich: A + B -> 2 C, rate: {k: 1e-6 m6/(mol*kg*s)}}\n  - {id: r2, stoich: C <=> D, rate: {k: 0.2 m3/(kg*s), K_eq: 3}}\nfeed: {T: 500 K, P: 5 bar, flows: {A: 1 mol/s, B: 1 mol/s, I: 1 mol/s}}\nreactor: {type: pbr, catalyst: 10 kg, pressure_drop: {alpha: 0.01 1/kg}}\n";
        fd_check(pbr, &[0.8, 0.5, 0.3, 0.2, 0.1, 0.4, 0.7]);
    }
}
