//! The balance equations of one vessel (see the module docs of [`crate::reactor`] for the one
//! form they share): isothermal here, with the energy balance of [`super::energy`] when the
//! study has one.

use super::Model;
use super::energy::Energy;
use super::ergun::ergun_alpha;
use super::state::{StateKind, StateLayout};
use crate::kinetics::RateSet;
use crate::model::{BatchMode, Network, Phase, Reactor};
use crate::units::GAS_CONSTANT;

/// How concentrations follow from the state, and how the rates are scaled.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Mixture {
    /// C = y / v(x), rates scaled by σ = v(x) for a batch (y in mol) and by 1 for a flow
    /// reactor (y in mol/s). v(x) is the inlet volumetric flow or the charged volume, grown by
    /// whatever a dosing or a distributed feed adds along x ([`Balance::fixed_volume`]).
    Fixed { volume: f64, batch: bool },
    /// C = c_tot p y / S (ideal gas at T0), σ = 1 (flow reactors).
    GasFlow { c_tot: f64 },
    /// C = c_tot y / S, σ = S / c_tot (constant-pressure gas batch).
    GasConstantPressure { c_tot: f64 },
}

/// The balance equations of one reactor for one network: isothermal at the feed temperature,
/// or with temperature as a state when the study has an energy balance.
#[derive(Debug, Clone)]
pub struct Balance {
    pub rates: RateSet,
    /// The energy balance, when temperature is a state.
    pub(super) energy: Option<Energy>,
    /// Positions of T and of the coolant temperature in the state, where present.
    pub(super) t_index: Option<usize>,
    pub(super) coolant_index: Option<usize>,
    /// Net coefficients (species, ν) of all reactions in one array, reaction i's at
    /// `nu[nu_starts[i]..nu_starts[i + 1]]` (one block walked in order, whatever the allocator;
    /// see `RateSet`'s packed factors).
    pub(super) nu: Vec<(usize, f64)>,
    pub(super) nu_starts: Vec<usize>,
    pub(super) n_species: usize,
    pub(super) mixture: Mixture,
    pub(super) temperature: f64,
    /// Bed constant α (1/kg) when the pressure drop is modelled: then state n is p = P/P0.
    pub(super) alpha: Option<f64>,
    /// S at the inlet (F_T0), for the pressure equation.
    pub(super) total0: f64,
    /// Species with a non-zero ν in some reaction (rows of the Jacobian that can be non-zero).
    pub(super) reactive: Vec<usize>,
    /// What each state entry is: the species, then p = P/P0 when the pressure drop is modelled.
    layout: StateLayout,
    /// A liquid's volume (batch) or volumetric flow (tube) grows along x by ∫ q dx over these
    /// schedules (net volumetric inflow per unit of x: dosing less withdrawal, or a feed
    /// distributed along the tube); empty for a plain vessel.
    pub(super) growth: Vec<crate::model::Schedule>,
    /// A tube's distributed feeds and membrane wall ([`super::walls`]), if it has any.
    pub(super) walls: Option<super::walls::Walls>,
    /// Dosing and withdrawal of a semibatch ([`super::semibatch`]); `None` for a plain vessel.
    pub(super) semibatch: Option<super::semibatch::Semibatch>,
    /// Where the rates change form along x (a distributed feed's or a dosing's start, end and
    /// kinks), ascending: the integration is cut there ([`crate::solve::pieces`]).
    pub(super) breaks: Vec<f64>,
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
                batch: false,
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
                        batch: true,
                    },
                },
                None,
            ),
        };
        let energy = Energy::new(net)?;
        let mut extra = Vec::new();
        if alpha.is_some() {
            extra.push(StateKind::PressureRatio);
        }
        if let Some(e) = &energy {
            extra.push(StateKind::Temperature);
            if e.coolant_stream().is_some() {
                extra.push(StateKind::CoolantTemperature);
            }
        }
        let mut walls = super::walls::Walls::new(net)?;
        extra.extend(walls.iter().flat_map(|w| w.states()));
        let semibatch = super::semibatch::Semibatch::new(net);
        if let Some(s) = &semibatch {
            extra.extend(s.extra_states(net.species.len()));
        }
        let layout = StateLayout::new(net, &extra);
        if let Some(w) = &mut walls {
            w.place(&layout);
        }
        let semibatch = semibatch.map(|s| s.place(&layout));
        let mut breaks: Vec<f64> = walls
            .as_ref()
            .map_or(&[][..], |w| &w.breakpoints[..])
            .iter()
            .copied()
            .chain(super::semibatch::breakpoints(net, net.size()))
            .collect();
        breaks.sort_by(f64::total_cmp);
        breaks.dedup();
        let mut growth = walls.as_ref().map_or_else(Vec::new, |w| w.growth(net));
        growth.extend(semibatch.as_ref().map_or_else(Vec::new, |s| s.growth()));
        Ok(Balance {
            growth,
            walls,
            t_index: layout.index_of(StateKind::Temperature),
            coolant_index: layout.index_of(StateKind::CoolantTemperature),
            energy,
            layout,
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
            semibatch,
            breaks,
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

    /// Initial state from the feed (a counter-current coolant starts at its inlet temperature
    /// here; the solver finds its temperature at the reactor inlet by shooting).
    pub fn initial_state(&self, net: &Network) -> Vec<f64> {
        let mut y = net.feed.amounts.clone();
        if self.alpha.is_some() {
            y.push(1.0);
        }
        if let Some(e) = &self.energy {
            y.push(net.feed.temperature);
            if let Some((inlet, _, _)) = e.coolant_stream() {
                y.push(inlet);
            }
        }
        // The permeate of a membrane wall and a semibatch's withdrawn amounts start at zero.
        y.resize(self.dim(), 0.0);
        y
    }

    /// Whether temperature is a state (the study has an energy balance).
    pub fn has_energy(&self) -> bool {
        self.energy.is_some()
    }

    /// The energy balance, when there is one.
    pub fn energy(&self) -> Option<&Energy> {
        self.energy.as_ref()
    }

    /// Position of T in the state, when it is one.
    pub fn temperature_index(&self) -> Option<usize> {
        self.t_index
    }

    /// Position of the coolant stream's temperature in the state, when it is one.
    pub fn coolant_index(&self) -> Option<usize> {
        self.coolant_index
    }

    /// The temperature at state y (the feed temperature when isothermal).
    pub fn temperature_of(&self, y: &[f64]) -> f64 {
        self.t_index.map_or(self.temperature, |i| y[i])
    }

    pub(super) fn pressure_ratio(&self, y: &[f64]) -> f64 {
        if self.alpha.is_some() {
            y[self.n_species]
        } else {
            1.0
        }
    }

    /// The liquid's volume (batch, m3) or volumetric flow (flow reactor, m3/s) at x: the
    /// charge or inlet flow plus ∫_0^x q dx of every growth schedule.
    pub fn fixed_volume(&self, x: f64) -> f64 {
        let Mixture::Fixed { volume, .. } = self.mixture else {
            return f64::NAN;
        };
        volume + self.growth.iter().map(|g| g.integral(0.0, x)).sum::<f64>()
    }

    /// (κ, σ) of a liquid at x: κ = 1/v(x), σ = v(x) for a batch and 1 for a flow reactor.
    #[inline]
    pub(super) fn fixed_scales(&self, x: f64, volume: f64, batch: bool) -> (f64, f64) {
        let v = if self.growth.is_empty() {
            volume
        } else {
            self.fixed_volume(x)
        };
        (1.0 / v, if batch { v } else { 1.0 })
    }

    /// (κ, σ, S) at x and state y.
    pub(super) fn scales(&self, x: f64, y: &[f64]) -> (f64, f64, f64) {
        if let Some(e) = &self.energy {
            return self.scales_at(e, x, y);
        }
        let s: f64 = y[..self.n_species].iter().sum();
        match self.mixture {
            Mixture::Fixed { volume, batch } => {
                let (k, sg) = self.fixed_scales(x, volume, batch);
                (k, sg, s)
            }
            Mixture::GasFlow { c_tot } => (c_tot * self.pressure_ratio(y) / s, 1.0, s),
            Mixture::GasConstantPressure { c_tot } => (c_tot / s, s / c_tot, s),
        }
    }

    /// Concentrations C_j (mol/m3) at x and state y.
    pub fn concentrations(&self, x: f64, y: &[f64], c: &mut Vec<f64>) {
        let (kappa, _, _) = self.scales(x, y);
        c.clear();
        c.extend(y[..self.n_species].iter().map(|v| kappa * v));
    }

    /// Rates r_i at x and state y.
    pub fn reaction_rates(&self, x: f64, y: &[f64], r: &mut Vec<f64>) {
        let mut c = Vec::with_capacity(self.n_species);
        self.concentrations(x, y, &mut c);
        let t = self.temperature_of(y);
        r.clear();
        r.extend((0..self.rates.len()).map(|i| self.rates.eval(i, t, &c, None)));
    }

    /// dy/dx at state y at the reactor inlet (x = 0); the balances are autonomous except a
    /// batch whose jacket follows a ramp ([`Balance::rhs_at`]).
    pub fn rhs(&self, y: &[f64], dydx: &mut [f64]) {
        self.rhs_at(0.0, y, dydx)
    }

    /// dy/dx at x and state y.
    pub fn rhs_at(&self, x: f64, y: &[f64], dydx: &mut [f64]) {
        if let Some(e) = &self.energy {
            return self.rhs_energy(e, x, y, dydx);
        }
        let (kappa, sigma, s) = self.scales(x, y);
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
        let c = &*c;
        let mut add = |i: usize, rate: f64| {
            let r = sigma * rate;
            for &(j, v) in &self.nu[self.nu_starts[i]..self.nu_starts[i + 1]] {
                dydx[j] += v * r;
            }
        };
        if self.temperature == self.rates.temperature() {
            self.rates.for_each_isothermal_rate(c, &mut add);
        } else {
            for i in 0..self.rates.len() {
                add(i, self.rates.eval(i, self.temperature, c, None));
            }
        }
        if let Some(alpha) = self.alpha {
            let p = y[self.n_species];
            dydx[self.n_species] = -alpha / (2.0 * p) * (s / self.total0);
        }
        if let Some(w) = &self.walls {
            self.add_walls(w, x, y, kappa, dydx);
        }
        self.exchange_rhs(x, y, dydx);
    }

    /// ∂(dy/dx)/∂y at x = 0 as (row, column, value) triplets; duplicates add.
    pub fn jacobian(&self, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        self.jacobian_at(0.0, y, out)
    }

    /// ∂(dy/dx)/∂y at x as (row, column, value) triplets; duplicates add.
    pub fn jacobian_at(&self, x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        if let Some(e) = &self.energy {
            return self.jacobian_energy(e, x, y, out);
        }
        let n = self.n_species;
        let (kappa, sigma, s) = self.scales(x, y);
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
        if let Some(w) = &self.walls {
            self.wall_jacobian(w, x, y, None, out);
        }
        self.exchange_jacobian(x, out);
    }
}

impl Model for Balance {
    fn layout(&self) -> &StateLayout {
        &self.layout
    }
    fn rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]) {
        Balance::rhs_at(self, x, y, dydx)
    }
    fn jacobian(&self, x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        Balance::jacobian_at(self, x, y, out)
    }
}

#[cfg(test)]
mod tests_support {
    pub(super) use super::*;
    pub(super) use crate::model::load_str;

    pub(super) fn fd_check(text: &str, y: &[f64]) {
        let net = load_str(text, "test", &[]).unwrap();
        let b = Balance::new(&net).unwrap();
        let n = b.dim();
        let mut trip = Vec::new();
        let x = 120.0;
        b.jacobian_at(x, y, &mut trip);
        let mut j = vec![vec![0.0; n]; n];
        for (r, c, v) in trip {
            j[r][c] += v;
        }
        for k in 0..n {
            let h = 1e-7 * y[k].abs().max(1e-6);
            let (mut yp, mut ym) = (y.to_vec(), y.to_vec());
            yp[k] += h;
            ym[k] -= h;
            let (mut fp, mut fm) = (vec![0.0; n], vec![0.0; n]);
            b.rhs_at(x, &yp, &mut fp);
            b.rhs_at(x, &ym, &mut fm);
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
}

#[cfg(test)]
mod tests {
    use super::tests_support::*;

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

#[cfg(test)]
mod energy_tests {
    use super::tests_support::*;

    const CP: &str = "name: t\nspecies: {A: {cp: 150 J/(mol*K)}, B: {cp: 90 J/(mol*K)}, C: {cp: 120 J/(mol*K)}, D: {cp: 60 J/(mol*K)}, E: {cp: 40 J/(mol*K)}, I: {cp: 30 J/(mol*K)}}\n";
    const REACTIONS: &str = "reactions:\n  - {id: r1, stoich: A + B -> 2 C, rate: {k: 1e-3 m3/(mol*s), Ea: 60 kJ/mol, T_ref: 450 K, dH: -90 kJ/mol}}\n  - {id: r2, stoich: C <=> D, rate: {k: 0.2 1/s, Ea: 40 kJ/mol, K_eq: 3, dH: -30 kJ/mol}}\n  - {id: r3, stoich: A -> D + E, rate: {law: hyperbolic, k: 0.05 1/s, Ea: 80 kJ/mol, dH: 20 kJ/mol, adsorption: {D: {K: 0.01 m3/mol, dH: -10 kJ/mol}}}}\n";

    /// The Jacobians of the energy balances (T, coolant stream, pressure, gas scaling, batch
    /// internal energy, jacket ramp) against central finite differences (common practice).
    #[test]
    fn energy_jacobians_match_finite_differences() {
        let y = [0.8, 0.5, 0.3, 0.2, 0.1, 0.4];
        let with = |extra: &[f64]| [&y[..], extra].concat();
        fd_check(
            &format!(
                "{CP}phase: liquid\n{REACTIONS}feed: {{T: 300 K, volumetric: 2 L/s, flows: {{A: 1 mol/s, B: 1 mol/s}}}}\nreactor: {{type: pfr, volume: 1 m3, heat: adiabatic}}\n"
            ),
            &with(&[470.0]),
        );
        fd_check(
            &format!(
                "{CP}phase: gas\n{REACTIONS}feed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, B: 1 mol/s, I: 1 mol/s}}}}\nreactor: {{type: pfr, volume: 1 m3, heat: {{U: 100 W/(m2*K), area: 50 m2/m3, coolant: {{T_in: 450 K, mass_flow: 0.5 kg/s, cp: 4 kJ/(kg*K), direction: counter_current}}}}}}\n"
            ),
            &with(&[520.0, 470.0]),
        );
        fd_check(
            &format!(
                "{CP}phase: gas\n{REACTIONS}feed: {{T: 500 K, P: 5 bar, amounts: {{A: 1 mol, B: 1 mol, I: 1 mol}}}}\nreactor: {{type: batch, time: 1 h, mode: constant_pressure, heat: {{UA: 20 W/K, coolant: {{T: 480 K}}}}}}\n"
            ),
            &with(&[520.0]),
        );
        fd_check(
            &format!(
                "{CP}phase: gas\n{REACTIONS}feed: {{T: 500 K, P: 5 bar, amounts: {{A: 1 mol, B: 1 mol, I: 1 mol}}}}\nreactor: {{type: batch, time: 1 h, volume: 24.9433 L, heat: {{UA: 20 W/K, coolant: {{T: 400 K, ramp: 1 K/min, T_final: 520 K}}}}}}\n"
            ),
            &with(&[520.0]),
        );
        fd_check(
            &format!(
                "name: t\nspecies: {{A: {{}}, B: {{}}, C: {{}}, D: {{}}, E: {{}}, I: {{}}}}\nphase: liquid\n{REACTIONS}feed: {{T: 300 K, amounts: {{A: 1 mol, B: 1 mol}}}}\nreactor: {{type: batch, time: 1 h, volume: 3 L, heat: {{mixture_cp: 3.9 kJ/(kg*K), density: 900 kg/m3}}}}\n"
            ),
            &with(&[330.0]),
        );
        let pbr = format!(
            "{CP}phase: gas\nreactions:\n  - {{id: r1, stoich: A + B -> 2 C, rate: {{k: 1e-6 m6/(mol*kg*s), Ea: 50 kJ/mol, dH: -50 kJ/mol}}}}\n  - {{id: r2, stoich: C <=> D, rate: {{k: 0.2 m3/(kg*s), K_eq: 3, dH: -20 kJ/mol}}}}\nfeed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, B: 1 mol/s, I: 1 mol/s}}}}\nreactor: {{type: pbr, catalyst: 10 kg, pressure_drop: {{alpha: 0.01 1/kg}}, heat: {{UA: 30 W/(kg*K), coolant: {{T_in: 480 K, mass_flow: 0.2 kg/s, cp: 2 kJ/(kg*K), direction: co_current}}}}}}\n"
        );
        fd_check(&pbr, &with(&[0.7, 530.0, 490.0]));
    }
}

#[cfg(test)]
mod wall_tests {
    use super::tests_support::*;

    const CP: &str = "name: t\nspecies: {A: {cp: 150 J/(mol*K)}, B: {cp: 90 J/(mol*K)}, C: {cp: 120 J/(mol*K)}, D: {cp: 60 J/(mol*K)}, E: {cp: 40 J/(mol*K)}, I: {cp: 30 J/(mol*K)}}\n";
    const REACTIONS: &str = "reactions:\n  - {id: r1, stoich: A + B -> 2 C, rate: {k: 1e-3 m3/(mol*s), Ea: 60 kJ/mol, T_ref: 450 K, dH: -90 kJ/mol}}\n  - {id: r2, stoich: C <=> D, rate: {k: 0.2 1/s, Ea: 40 kJ/mol, K_eq: 3, dH: -30 kJ/mol}}\n";
    /// A distributed feed whose shape is non-zero at the check's x = 120 and a membrane with a
    /// species leaving and one entering from the sweep.
    const WALLS: &str = "  distributed_feeds: [{from: 100 m3, to: 250 m3, flows: {B: 0.7 mol/s, I: 0.2 mol/s}, volumetric: 1 L/s, T: 350 K, shape: [[100 m3, 1], [150 m3, 3], [250 m3, 0.5]]}]\n  membrane: [{species: C, coefficient: 0.01 1/s}, {species: A, coefficient: 0.003 1/s, sweep: 900 mol/m3}]\n";

    /// The Jacobians with a tube's walls (distributed feed, membrane; liquid, gas, packed bed
    /// with pressure drop, energy balances with species Cp and with a mixture heat capacity)
    /// against central finite differences (common practice).
    #[test]
    fn wall_jacobians_match_finite_differences() {
        // species, then permeate of C and A (plus P/P0, T where present, before them).
        let y = [0.8, 0.5, 0.3, 0.2, 0.1, 0.4];
        let with = |extra: &[f64]| [&y[..], extra].concat();
        let liquid = format!(
            "{CP}phase: liquid\n{REACTIONS}feed: {{T: 300 K, volumetric: 2 L/s, flows: {{A: 1 mol/s, B: 1 mol/s}}}}\nreactor:\n  type: pfr\n  volume: 300 m3\n{WALLS}"
        );
        fd_check(&liquid, &with(&[0.01, -0.02]));
        let liquid_heat = liquid.replace("  type: pfr\n", "  type: pfr\n  heat: adiabatic\n");
        fd_check(&liquid_heat, &with(&[330.0, 0.01, -0.02]));
        let mixture = liquid.replace(
            "  type: pfr\n",
            "  type: pfr\n  heat: {mixture_cp: 3.9 kJ/(kg*K), density: 900 kg/m3, UA: 5 W/(m3*K), coolant: {T: 300 K}}\n",
        );
        fd_check(&mixture, &with(&[330.0, 0.01, -0.02]));
        let gas = format!(
            "{CP}phase: gas\n{REACTIONS}feed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, B: 1 mol/s, I: 1 mol/s}}}}\nreactor:\n  type: pfr\n  volume: 300 m3\n{}",
            WALLS
                .replace("sweep: 900 mol/m3", "sweep: 200 mol/m3")
                .replace(", volumetric: 1 L/s", "")
        );
        fd_check(&gas, &with(&[0.01, -0.02]));
        let gas_heat = gas.replace(
            "  type: pfr\n",
            "  type: pfr\n  heat: {U: 100 W/(m2*K), area: 50 m2/m3, coolant: {T: 450 K}}\n",
        );
        fd_check(&gas_heat, &with(&[520.0, 0.01, -0.02]));
        let pbr = format!(
            "{CP}phase: gas\nreactions:\n  - {{id: r1, stoich: A + B -> 2 C, rate: {{k: 1e-6 m6/(mol*kg*s), Ea: 50 kJ/mol, dH: -50 kJ/mol}}}}\n  - {{id: r2, stoich: C <=> D, rate: {{k: 0.2 m3/(kg*s), K_eq: 3, dH: -20 kJ/mol}}}}\nfeed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, B: 1 mol/s, I: 1 mol/s}}}}\nreactor:\n  type: pbr\n  catalyst: 300 kg\n  heat: {{UA: 30 W/(kg*K), coolant: {{T: 480 K}}}}\n  membrane: [{{species: C, coefficient: 0.01 m3/(kg*s)}}, {{species: A, coefficient: 0.003 m3/(kg*s), sweep: 200 mol/m3}}]\n"
        );
        fd_check(&pbr, &with(&[530.0, 0.01, -0.02]));
        let pbr_dp = pbr.replace(
            "  catalyst: 300 kg\n",
            "  catalyst: 300 kg\n  pressure_drop: {alpha: 0.001 1/kg}\n",
        );
        fd_check(&pbr_dp, &with(&[0.7, 530.0, 0.01, -0.02]));
        let pbr_feed = format!(
            "{CP}phase: gas\nreactions:\n  - {{id: r1, stoich: A + B -> 2 C, rate: {{k: 1e-6 m6/(mol*kg*s), Ea: 50 kJ/mol, dH: -50 kJ/mol}}}}\nfeed: {{T: 500 K, P: 5 bar, flows: {{A: 1 mol/s, B: 1 mol/s, I: 1 mol/s}}}}\nreactor:\n  type: pbr\n  catalyst: 300 kg\n  heat: adiabatic\n  distributed_feeds: [{{from: 100 kg, flows: {{B: 0.7 mol/s}}, T: 420 K}}]\n  membrane: [{{species: C, coefficient: 0.01 m3/(kg*s)}}]\n"
        );
        fd_check(&pbr_feed, &with(&[530.0, 0.01]));
    }
}

#[cfg(test)]
mod semibatch_tests {
    use super::tests_support::*;

    const SPECIES: &str = "name: t\nspecies: {A: {cp: 150 J/(mol*K)}, B: {cp: 90 J/(mol*K)}, C: {cp: 120 J/(mol*K)}, D: {cp: 60 J/(mol*K)}, E: {cp: 40 J/(mol*K)}, I: {cp: 30 J/(mol*K)}}\nphase: liquid\n";
    const REACTIONS: &str = "reactions:\n  - {id: r1, stoich: A + B -> 2 C, rate: {k: 1e-3 m3/(mol*s), Ea: 60 kJ/mol, T_ref: 300 K, dH: -90 kJ/mol}}\n  - {id: r2, stoich: C <=> D, rate: {k: 0.2 1/s, Ea: 40 kJ/mol, K_eq: 3, dH: -30 kJ/mol}}\n  - {id: r3, stoich: A -> D + E, rate: {law: hyperbolic, k: 0.05 1/s, Ea: 80 kJ/mol, dH: 20 kJ/mol, adsorption: {D: {K: 0.01 m3/mol, dH: -10 kJ/mol}}}}\n";
    const DOSING: &str = "dosing: [{concentrations: {B: 2 mol/L, I: 0.5 mol/L}, T: 290 K, rate: [[0 s, 0.01 L/s], [300 s, 0.03 L/s]]}, {concentrations: {A: 1 mol/L}, rate: 0.02 L/s, from: 60 s, to: 200 s}]\n  withdrawal: {rate: 0.015 L/s, from: 100 s, to: 400 s}";

    /// The semibatch terms' Jacobian (withdrawal −q_out/V on the diagonal and its quadrature
    /// rows, the dosed liquid's enthalpy, the contents' growing heat capacity) against central
    /// finite differences (common practice), at t = 120 s where both dosings and the
    /// withdrawal run.
    #[test]
    fn semibatch_jacobians_match_finite_differences() {
        let y = [0.8, 0.5, 0.3, 0.2, 0.1, 0.4];
        let withdrawn = [0.01, 0.02, 0.03, 0.0, 0.0, 0.05];
        let full = |extra: &[f64]| [&y[..], extra, &withdrawn[..]].concat();
        fd_check(
            &format!(
                "{SPECIES}{REACTIONS}feed: {{T: 300 K, amounts: {{A: 1 mol, B: 1 mol}}}}\nreactor:\n  type: batch\n  time: 1 h\n  volume: 3 L\n  {DOSING}\n"
            ),
            &full(&[]),
        );
        fd_check(
            &format!(
                "{SPECIES}{REACTIONS}feed: {{T: 300 K, amounts: {{A: 1 mol, B: 1 mol}}}}\nreactor:\n  type: batch\n  time: 1 h\n  volume: 3 L\n  heat: {{UA: 20 W/K, coolant: {{T: 310 K}}}}\n  {DOSING}\n"
            ),
            &full(&[330.0]),
        );
        fd_check(
            &format!(
                "{SPECIES}{REACTIONS}feed: {{T: 300 K, amounts: {{A: 1 mol, B: 1 mol}}}}\nreactor:\n  type: batch\n  time: 1 h\n  volume: 3 L\n  heat: {{mixture_cp: 3.9 kJ/(kg*K), density: 900 kg/m3, UA: 20 W/K, coolant: {{T: 310 K}}}}\n  {DOSING}\n"
            ),
            &full(&[330.0]),
        );
    }
}
