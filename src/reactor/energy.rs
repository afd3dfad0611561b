//! The energy balance of a non-isothermal reactor: temperature (and a coolant stream's
//! temperature) as states beside the species.
//!
//! With y the species state, x the reactor coordinate (V, W or t) and σ the rate scale of
//! [`super`]'s table:
//!
//! ```text
//! dT/dx   = [Q + Σ_i σ r_i (−ΔE_i(T))] / Σ_j y_j (Cp_j(T) − u R)
//! Q       = Ua (T_a − T)                       (0 when adiabatic)
//! ΔE_i(T) = ΔH_i(T) − u R T Σ_j ν_ij,   ΔH_i(T) = h_i + Σ_j ν_ij H_j(T),   H_j = ∫ Cp_j dT
//! dT_a/dx = ± Ua (T − T_a)/(ṁ_c c_p,c)          (+ co-current, − counter-current)
//! ```
//!
//! u = 1 in a constant-volume gas batch (the internal-energy balance of a closed vessel, with
//! Cv = Cp − R of an ideal gas), else 0: flowing streams and a constant-pressure batch carry
//! enthalpy, and for a liquid Cv ≈ Cp and ΔU ≈ ΔH (incompressible; common practice). ΔH_i(T)
//! is Kirchhoff's law, ΔH_i(T) = ΔH_i(T_ref) + ∫_{T_ref}^{T} ΔCp_i dT, written with one
//! constant h_i per reaction so that a single pass over the species' H_j(T) gives every
//! reaction's enthalpy, and Σ_j F_j H_j + ∫Q is conserved along the reactor exactly
//! (Fogler, Elements of Chemical Reaction Engineering, ch. 11–12; Levenspiel, Chemical
//! Reaction Engineering, ch. 9; both from memory). With a liquid mixture heat capacity per
//! volume c_v the denominator is c_v v0 (flow) or c_v V (batch) and ΔCp = 0. For a gas the
//! concentrations follow the local temperature, C_j = C_T0 p (T0/T) F_j/F_T, and the packed
//! bed's pressure gradient carries the factor T/T0.

use crate::model::{BatchMode, Coolant, Heat, Network, Phase, Reactor};
use crate::thermo::HeatCapacity;
use crate::units::GAS_CONSTANT;

/// The energy-balance data of one reactor.
#[derive(Debug, Clone)]
pub struct Energy {
    /// Cp of each species; `None` for species that are never present (or with a mixture
    /// heat capacity).
    pub(super) cp: Vec<Option<HeatCapacity>>,
    /// Heat capacity rate of a liquid mixture (W/K) or of a batch charge (J/K), when given in
    /// place of species data.
    pub(super) mixture: Option<f64>,
    /// h_i of ΔH_i(T) = h_i + Σ_j ν_ij H_j(T) (J/mol).
    pub(super) offset: Vec<f64>,
    /// 1 for the internal-energy balance of a constant-volume gas batch, else 0.
    pub(super) u: f64,
    /// Ua per unit of reactor size (W/(m3 K), W/(kg K)) or UA (W/K); 0 when adiabatic.
    pub(super) ua: f64,
    pub(super) coolant: Option<Coolant>,
    /// Feed temperature T0 (K).
    pub(super) t0: f64,
    /// Whether concentrations scale with T0/T (an ideal gas at fixed pressure).
    pub(super) gas_scaling: bool,
    /// Whether σ scales with T/T0 too (constant-pressure gas batch: σ is the volume).
    pub(super) sigma_scaling: bool,
}

impl Energy {
    /// The energy balance of the network's reactor, or `None` when it is isothermal. Fails
    /// when a needed heat capacity or heat of reaction is missing (the loader checks this for
    /// study files; a network built in code gets the same message).
    pub fn new(net: &Network) -> Result<Option<Energy>, String> {
        let Heat::Balance(e) = &net.heat else {
            return Ok(None);
        };
        let gas = net.phase == Phase::Gas;
        let (u, sigma_scaling, basis) = match net.reactor {
            Reactor::Batch { mode, .. } => match (gas, mode) {
                (true, BatchMode::ConstantVolume) => (1.0, false, net.feed.volumetric),
                (true, BatchMode::ConstantPressure) => (0.0, true, 0.0),
                _ => (0.0, false, net.feed.volumetric),
            },
            _ => (0.0, false, net.feed.volumetric),
        };
        let mixture = e.mixture_cp.map(|c| c * basis);
        let cp: Vec<Option<HeatCapacity>> = if mixture.is_some() {
            vec![None; net.species.len()]
        } else {
            net.species.iter().map(|s| s.thermo.cp.clone()).collect()
        };
        let sensible = |j: usize, t: f64| cp[j].as_ref().map_or(0.0, |c| c.sensible(t));
        // ΔH_i(T) from the reaction's `dH` or its species' H_f, by Kirchhoff's law
        // ([`crate::thermo::ReactionThermo`]), put in the form h_i + Σ_j ν_ij H_j(T) over the
        // species whose H_j the balance carries.
        let enthalpies = crate::thermo::reaction_enthalpies(net);
        let mut offset = Vec::with_capacity(net.reactions.len());
        for (r, dh) in net.reactions.iter().zip(&enthalpies) {
            let Some(dh) = dh else {
                return Err(format!(
                    "an energy balance needs the heat of reaction of `{}`: give its `dH` or `H_f` of each species",
                    r.id
                ));
            };
            let complete = !dh.terms.is_empty() && r.net.iter().all(|&(j, _)| cp[j].is_some());
            offset.push(if complete {
                dh.offset
            } else {
                // ΔCp not known for every species (or a mixture heat capacity): ΔH as at the
                // reaction's reference temperature, less what the carried H_j add there.
                let t_ref = r.rate.t_ref;
                dh.at(net, t_ref)
                    - r.net
                        .iter()
                        .map(|&(j, v)| v * sensible(j, t_ref))
                        .sum::<f64>()
            });
        }
        if mixture.is_none() {
            let fed_or_made = |j: usize| {
                net.feed.amounts[j] > 0.0
                    || net.reactions.iter().any(|r| r.nu(j) > 0.0)
                    || net
                        .contacting
                        .dosing
                        .iter()
                        .any(|d| d.concentrations[j] > 0.0)
            };
            if let Some(j) = (0..net.species.len()).find(|&j| fed_or_made(j) && cp[j].is_none()) {
                return Err(format!(
                    "an energy balance needs the heat capacity of `{}`",
                    net.species[j].name
                ));
            }
        }
        let (ua, coolant) = match &e.exchange {
            None => (0.0, None),
            Some(x) => (x.ua, Some(x.coolant.clone())),
        };
        Ok(Some(Energy {
            cp,
            mixture,
            offset,
            u,
            ua,
            coolant,
            t0: net.feed.temperature,
            gas_scaling: gas && !(u == 1.0),
            sigma_scaling,
        }))
    }

    /// Whether the coolant is a stream with its own temperature state.
    pub fn coolant_stream(&self) -> Option<(f64, f64, bool)> {
        match self.coolant {
            Some(Coolant::Stream {
                inlet,
                capacity,
                counter_current,
            }) => Some((inlet, capacity, counter_current)),
            _ => None,
        }
    }

    /// The coolant temperature at x when it is not a state (constant or ramp).
    pub(super) fn coolant_at(&self, x: f64) -> f64 {
        self.coolant
            .as_ref()
            .map_or(self.t0, |c| c.temperature_at(x))
    }

    /// H_j(T) of species j (J/mol; 0 without data).
    #[inline]
    pub(super) fn h(&self, j: usize, t: f64) -> f64 {
        self.cp[j].as_ref().map_or(0.0, |c| c.sensible(t))
    }

    /// ΔH_i(T) of reaction i with net coefficients `nu`.
    pub fn reaction_enthalpy(&self, i: usize, nu: &[(usize, f64)], t: f64) -> f64 {
        self.offset[i] + nu.iter().map(|&(j, v)| v * self.h(j, t)).sum::<f64>()
    }

    /// ΔT_ad of the feed (see [`crate::safety`]): the heat of the most exothermic reaction
    /// that consumes the key, per mole of key, times the key fed, over the feed's heat capacity
    /// at T0; and that reaction. (0, None) when no reaction consumes the key.
    pub fn adiabatic_rise(&self, net: &Network) -> (f64, Option<usize>) {
        let k = net.key;
        let t0 = net.feed.temperature;
        let best = net
            .reactions
            .iter()
            .enumerate()
            .filter(|(_, r)| r.nu(k) < 0.0)
            .map(|(i, r)| {
                let de = self.reaction_enthalpy(i, &r.net, t0)
                    - self.u * GAS_CONSTANT * t0 * r.mole_change();
                (i, de / -r.nu(k))
            })
            .min_by(|a, b| a.1.total_cmp(&b.1));
        let Some((i, de)) = best else {
            return (0.0, None);
        };
        let (cap, _) = self.capacity(&net.feed.amounts, t0);
        (-de * net.feed.amounts[k] / cap, Some(i))
    }

    /// Σ_j y_j (Cp_j(T) − u R) (or the mixture's), and its derivative in T.
    pub(super) fn capacity(&self, y: &[f64], t: f64) -> (f64, f64) {
        if let Some(m) = self.mixture {
            return (m, 0.0);
        }
        let mut c = 0.0;
        let mut dc = 0.0;
        for (yj, cp) in y.iter().zip(&self.cp) {
            if let Some(cp) = cp {
                c += yj * (cp.cp(t) - self.u * GAS_CONSTANT);
                dc += yj * cp.dcp_dt(t);
            }
        }
        (c, dc)
    }

    /// The heat capacity rate of the stream (W/K) or of the charge (J/K) at species state y
    /// and temperature t: Σ_j y_j (Cp_j(T) − u R), or the mixture's.
    pub fn capacity_rate(&self, y: &[f64], t: f64) -> f64 {
        self.capacity(y, t).0
    }

    /// ∂/∂y_k of the heat capacity sum: Cp_k(T) − u R (0 with a mixture heat capacity).
    pub(super) fn capacity_slope(&self, k: usize, t: f64) -> f64 {
        if self.mixture.is_some() {
            0.0
        } else {
            self.cp[k]
                .as_ref()
                .map_or(0.0, |cp| cp.cp(t) - self.u * GAS_CONSTANT)
        }
    }

    /// Cp_j(T) (0 without data).
    pub(super) fn cp_at(&self, j: usize, t: f64) -> f64 {
        self.cp[j].as_ref().map_or(0.0, |c| c.cp(t))
    }

    /// The species whose heat capacity data hold over a range that T lies outside, with the
    /// range.
    pub fn out_of_range(&self, t: f64) -> impl Iterator<Item = (usize, (f64, f64))> + '_ {
        self.cp.iter().enumerate().filter_map(move |(j, c)| {
            let (lo, hi) = c.as_ref()?.range()?;
            (t < lo || t > hi).then_some((j, (lo, hi)))
        })
    }

    /// UA of the wall (W/K for a CSTR or batch; per unit size for a tube); 0 when adiabatic.
    pub(crate) fn ua(&self) -> f64 {
        self.ua
    }

    /// The coolant temperature of a constant-temperature coolant (the feed temperature when
    /// there is none, where UA = 0 makes it irrelevant).
    pub(crate) fn constant_coolant(&self) -> Option<f64> {
        match self.coolant {
            Some(Coolant::Constant { temperature }) => Some(temperature),
            None => Some(self.t0),
            _ => None,
        }
    }

    /// The sensible heat taking the feed F_0 from T0 to T, Σ_j F_j0 ∫_{T0}^{T} Cp_j dT (or
    /// c_v v0 (T − T0) with a mixture heat capacity), W, and its derivative in T, W/K.
    pub(crate) fn feed_sensible(&self, f0: &[f64], t: f64) -> (f64, f64) {
        if let Some(m) = self.mixture {
            return (m * (t - self.t0), m);
        }
        let mut q = 0.0;
        let mut dq = 0.0;
        for (j, f) in f0.iter().enumerate() {
            if *f != 0.0 {
                q += f * (self.h(j, t) - self.h(j, self.t0));
                dq += f * self.cp_at(j, t);
            }
        }
        (q, dq)
    }

    /// Σ_j y_j Cp_j(T) (or the mixture's heat capacity rate), for the holdup of a CSTR.
    pub(crate) fn flow_capacity(&self, y: &[f64], t: f64) -> f64 {
        self.capacity(y, t).0
    }
}
