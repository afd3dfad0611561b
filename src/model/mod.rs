//! The study model: species, reactions, rate laws, feed and reactor, all in SI.
//!
//! A [`Network`] is built only by [`load`] (from a study file) and is known-good afterwards:
//! every species named anywhere exists, every quantity is in SI, every rate constant's
//! dimensions match its law, the feed is non-negative and not empty. Later stages rely on it
//! and do not re-check.

pub mod contacting;
pub mod equation;
mod file;
pub mod formula;
pub mod heat_capacity;
mod load;
pub mod locate;
pub mod solver_settings;
pub mod source;

pub use contacting::{
    Contacting, DistributedFeed, Dosing, Permeation, Schedule, SideFeed, Train, Unit, Withdrawal,
};
pub use load::{
    ErrorSpec, EstimateSpec, FitBound, FitSection, LoadError, MAX_STARTS, Override, ParsedStudy,
    load_file, load_str, read_text,
};

use formula::Formula;
use num_rational::BigRational;

/// Liquid (constant density) or ideal gas.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Phase {
    Liquid,
    Gas,
}

/// One species of the study.
#[derive(Debug, Clone)]
pub struct Species {
    pub name: String,
    /// Elemental formula, where given; atom balances are checked for reactions whose species all have one.
    pub formula: Option<Formula>,
    /// Molar mass in kg/mol, where given (or computed from the formula); needed by the Ergun equation.
    pub molar_mass: Option<f64>,
    /// Heat capacity, enthalpy of formation and entropy, where given (energy balances, K(T)).
    pub thermo: heat_capacity::SpeciesThermo,
}

/// A species and its coefficient on one side of an equation, as written.
#[derive(Debug, Clone)]
pub struct Term {
    pub species: usize,
    pub coefficient: f64,
    pub exact: BigRational,
}

/// Per unit of what a rate is expressed: reactor volume (homogeneous) or catalyst mass (packed bed).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RateBasis {
    /// r in mol/(m3 s).
    Volume,
    /// r' in mol/(kg_cat s).
    CatalystMass,
}

/// One adsorption term K_m(T) C_m^b_m of a hyperbolic rate's denominator.
#[derive(Debug, Clone)]
pub struct Adsorption {
    pub species: usize,
    /// K_m at T_ref in SI ((mol/m3)^-b).
    pub k_ref: f64,
    /// Exponent b_m on the concentration.
    pub order: f64,
    /// Heat of adsorption (J/mol), K_m(T) = K_m,ref exp(−ΔH/R (1/T − 1/T_ref)); 0 when not given.
    pub dh: f64,
}

/// The form of a rate law beyond its power-law numerator.
#[derive(Debug, Clone)]
pub enum RateForm {
    /// r = k Π C_j^a_j.
    Power,
    /// r = k Π C_j^a_j / (1 + Σ_m K_m C_m^b_m)^n (adsorption-limited catalytic step).
    Hyperbolic {
        adsorption: Vec<Adsorption>,
        power: f64,
    },
}

/// The equilibrium constant of a reversible reaction.
#[derive(Debug, Clone)]
pub struct Equilibrium {
    /// Concentration-based K_c at T_ref, SI units (mol/m3)^Σν (a K_p given in partial
    /// pressures is already converted with (R T)^(−Σν) at the feed temperature).
    pub k_ref: f64,
    /// No `K_eq` was written: K_c(T) follows from the species' H_f and S (ΔG° = −RT ln K°),
    /// and `k_ref` is its value at T_ref.
    pub from_species: bool,
}

/// A rate law, in SI, at a reference temperature.
#[derive(Debug, Clone)]
pub struct RateLaw {
    pub form: RateForm,
    /// Rate constant at T_ref, SI, on the concentration basis and per unit of extent: a k
    /// given on a species basis is already divided by |ν|, and one given in partial pressures
    /// already multiplied by (R T)^n at the reactor (feed) temperature T, so that k(T) is
    /// exact there (see docs/methods.md).
    pub k_ref: f64,
    /// Arrhenius activation energy, J/mol (0: no temperature dependence).
    pub ea: f64,
    /// Reference temperature of k_ref, K_eq and adsorption constants, K.
    pub t_ref: f64,
    /// Concentration exponents (species, order); default the reactant-side coefficients.
    pub orders: Vec<(usize, f64)>,
    /// Present for reversible reactions.
    pub equilibrium: Option<Equilibrium>,
    pub basis: RateBasis,
}

/// One reaction. Its rate is a rate of reaction (per unit of extent): species j is produced at
/// Σ_i ν_ij r_i.
#[derive(Debug, Clone)]
pub struct Reaction {
    pub id: String,
    /// The equation as written in the file.
    pub equation: String,
    pub reactants: Vec<Term>,
    pub products: Vec<Term>,
    pub reversible: bool,
    /// Net coefficients ν_ij (products − reactants), species ascending, zeros dropped.
    pub net: Vec<(usize, f64)>,
    /// The same, exact.
    pub net_exact: Vec<(usize, BigRational)>,
    pub rate: RateLaw,
    /// Heat of reaction ΔH_r (J per mol of extent), if given; sets K_eq(T) by van't Hoff.
    pub dh: Option<f64>,
}

impl Reaction {
    /// Σ_j ν_ij: the change in total moles per unit extent.
    pub fn mole_change(&self) -> f64 {
        self.net.iter().map(|(_, v)| v).sum()
    }
    /// ν of species j in this reaction (0 when absent).
    pub fn nu(&self, j: usize) -> f64 {
        self.net
            .iter()
            .find(|(s, _)| *s == j)
            .map(|(_, v)| *v)
            .unwrap_or(0.0)
    }
    /// The limiting reactant of this reaction in a feed of `amounts` (F_j0 or N_j0): the fed
    /// species with the smallest amount per unit of its net consumption, F_j0/|ν_j| (common
    /// practice). Counted on net coefficients, so a species the reaction makes on balance (B
    /// in the autocatalytic A + 2 B -> 3 B) is never the limiting one.
    pub fn limiting_reactant(&self, amounts: &[f64]) -> Option<usize> {
        self.net
            .iter()
            .filter(|&&(j, nu)| nu < 0.0 && amounts[j] > 0.0)
            .map(|&(j, nu)| (j, amounts[j] / -nu))
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(j, _)| j)
    }
    /// Whether species j is written on the reactant side.
    pub fn has_reactant(&self, j: usize) -> bool {
        self.reactants.iter().any(|t| t.species == j)
    }
    /// Whether species j is written on the product side.
    pub fn has_product(&self, j: usize) -> bool {
        self.products.iter().any(|t| t.species == j)
    }
}

/// The feed (flow reactors) or initial charge (batch), in SI.
#[derive(Debug, Clone)]
pub struct Feed {
    /// K.
    pub temperature: f64,
    /// Pa (for a liquid: recorded, not used by the balances).
    pub pressure: f64,
    /// Per species: F_j0 in mol/s (flow reactors) or N_j0 in mol (batch).
    pub amounts: Vec<f64>,
    /// v0 in m3/s (flow) or the charged volume V0 in m3 (batch).
    pub volumetric: f64,
}

impl Feed {
    /// F_T0 (or N_T0).
    pub fn total(&self) -> f64 {
        self.amounts.iter().sum()
    }
}

/// Pressure drop along a packed bed.
#[derive(Debug, Clone)]
pub enum PressureDrop {
    /// dy/dW = −(α/2y)(F_T/F_T0)(T/T0), y = P/P0, with α in 1/kg given directly.
    Lumped { alpha: f64 },
    /// α from the Ergun equation and the bed properties (all SI).
    Ergun {
        particle_diameter: f64,
        void_fraction: f64,
        cross_section: f64,
        viscosity: f64,
        solid_density: f64,
    },
}

/// Batch operation: fixed volume, or fixed pressure (ideal gas; the volume follows the moles).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum BatchMode {
    ConstantVolume,
    ConstantPressure,
}

/// The reactor and its size, SI.
#[derive(Debug, Clone)]
pub enum Reactor {
    Pfr {
        volume: f64,
    },
    Pbr {
        catalyst: f64,
        pressure_drop: Option<PressureDrop>,
    },
    Cstr {
        volume: f64,
    },
    Batch {
        volume: f64,
        time: f64,
        mode: BatchMode,
    },
}

impl Reactor {
    /// Short lowercase name as in the file (`pfr`, `pbr`, `cstr`, `batch`).
    pub fn kind(&self) -> &'static str {
        match self {
            Reactor::Pfr { .. } => "pfr",
            Reactor::Pbr { .. } => "pbr",
            Reactor::Cstr { .. } => "cstr",
            Reactor::Batch { .. } => "batch",
        }
    }
    /// Whether the feed is an initial charge (moles) rather than flows.
    pub fn is_batch(&self) -> bool {
        matches!(self, Reactor::Batch { .. })
    }

    /// The vessel's size: V (PFR, CSTR), catalyst mass W (packed bed) or batch time, SI.
    pub fn size(&self) -> f64 {
        match self {
            Reactor::Pfr { volume } | Reactor::Cstr { volume } => *volume,
            Reactor::Pbr { catalyst, .. } => *catalyst,
            Reactor::Batch { time, .. } => *time,
        }
    }

    /// Set the vessel's size (V, W or batch time, SI).
    pub fn set_size(&mut self, size: f64) {
        match self {
            Reactor::Pfr { volume } | Reactor::Cstr { volume } => *volume = size,
            Reactor::Pbr { catalyst, .. } => *catalyst = size,
            Reactor::Batch { time, .. } => *time = size,
        }
    }
}

/// How the reactor's temperature is found.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum Heat {
    /// The reactor is held at the feed temperature (heat of reaction removed perfectly).
    #[default]
    Isothermal,
    /// Temperature is a state: the energy balance of the reactor with its heat exchange.
    Balance(EnergyBalance),
}

impl Heat {
    /// The energy balance, when the reactor has one.
    pub fn balance(&self) -> Option<&EnergyBalance> {
        match self {
            Heat::Isothermal => None,
            Heat::Balance(e) => Some(e),
        }
    }
    /// Short name for reports: `isothermal`, `adiabatic` or `cooled`.
    pub fn name(&self) -> &'static str {
        match self {
            Heat::Isothermal => "isothermal",
            Heat::Balance(EnergyBalance { exchange: None, .. }) => "adiabatic",
            Heat::Balance(_) => "heat exchange",
        }
    }
}

/// The energy balance of a non-isothermal reactor, SI.
#[derive(Debug, Clone, PartialEq)]
pub struct EnergyBalance {
    /// Heat exchange through the wall; `None` is adiabatic.
    pub exchange: Option<Exchange>,
    /// Heat capacity of the liquid mixture per volume, J/(m3 K), used instead of the species'
    /// molar heat capacities (process-development liquids whose species data are unknown).
    pub mixture_cp: Option<f64>,
}

/// Heat exchange with a coolant (or heating medium) through the wall.
#[derive(Debug, Clone, PartialEq)]
pub struct Exchange {
    /// U times exchange area: per reactor volume W/(m3 K) (PFR), per catalyst mass W/(kg K)
    /// (packed bed), or in total W/K (CSTR, batch).
    pub ua: f64,
    pub coolant: Coolant,
}

/// The coolant side of the heat exchange.
#[derive(Debug, Clone, PartialEq)]
pub enum Coolant {
    /// A constant temperature T_a (K).
    Constant { temperature: f64 },
    /// A batch jacket whose temperature rises (or falls) at `rate` K/s from `start` and stays at
    /// `end` once it gets there.
    Ramp { start: f64, rate: f64, end: f64 },
    /// A coolant stream along a tube: inlet temperature (K), capacity ṁ c_p (W/K), and whether
    /// it flows against the reacting stream (entering at the reactor outlet).
    Stream {
        inlet: f64,
        capacity: f64,
        counter_current: bool,
    },
}

impl Coolant {
    /// The coolant temperature at time t of a batch (constant or ramp).
    pub fn temperature_at(&self, t: f64) -> f64 {
        match *self {
            Coolant::Constant { temperature } => temperature,
            Coolant::Ramp { start, rate, end } => {
                let v = start + rate * t;
                if rate >= 0.0 { v.min(end) } else { v.max(end) }
            }
            Coolant::Stream { inlet, .. } => inlet,
        }
    }
}

/// Integration settings from the file (the command line may override them).
#[derive(Debug, Clone, Default)]
pub struct SolverSettings {
    pub rtol: Option<f64>,
    /// Absolute tolerance in the state's units (mol/s or mol).
    pub atol: Option<f64>,
    pub max_steps: Option<usize>,
    /// How the Newton systems of the integration are solved; `None` chooses by size.
    pub linear_algebra: Option<solver_settings::LinearAlgebra>,
    /// CSTR: which steady state to report when there are several (`solver.steady_state`).
    pub steady_state: Option<solver_settings::SteadyStateChoice>,
}

/// A loaded, validated study.
#[derive(Debug, Clone)]
pub struct Network {
    pub name: String,
    /// The file it came from (for messages), or `<string>`.
    pub source: String,
    pub phase: Phase,
    pub species: Vec<Species>,
    pub reactions: Vec<Reaction>,
    pub feed: Feed,
    pub reactor: Reactor,
    /// Index of the key (conversion basis) species.
    pub key: usize,
    /// Whether the key was chosen automatically as the limiting reactant.
    pub key_is_default: bool,
    /// Index of the desired product, if named.
    pub desired: Option<usize>,
    pub solver: SolverSettings,
    /// Energy balance or isothermal (`reactor.heat`).
    pub heat: Heat,
    /// A temperature the process must not exceed (`reactor.T_max`, K), if given.
    pub t_max: Option<f64>,
    /// What else enters or leaves the vessel (side feeds, dosing, membrane, recycle); empty
    /// for a plain vessel.
    pub contacting: Contacting,
    /// Vessels in series (`train` in the file). When present, `reactor`, `heat` and
    /// `contacting` above are its first unit's, and the evaluation runs the whole train.
    pub train: Option<Train>,
    /// Conversions made on loading that change what the user wrote beyond a unit factor (a
    /// gauge pressure made absolute, a rate constant on a species basis or in partial
    /// pressures put on the reaction and concentration basis), each as a sentence naming the
    /// field; `check` lists them.
    pub notes: Vec<String>,
}

impl Network {
    /// Indices of the species that some reaction changes (a non-zero net coefficient), sorted.
    pub fn reacting_species(&self) -> Vec<usize> {
        let mut reacting: Vec<usize> = self
            .reactions
            .iter()
            .flat_map(|r| r.net.iter().map(|(j, _)| *j))
            .collect();
        reacting.sort_unstable();
        reacting.dedup();
        reacting
    }

    /// Every vessel's reactor and heat model: a train's units in order, or the one vessel.
    pub fn vessels(&self) -> Vec<(&Reactor, &Heat)> {
        match &self.train {
            Some(t) => t.units.iter().map(|u| (&u.reactor, &u.heat)).collect(),
            None => vec![(&self.reactor, &self.heat)],
        }
    }

    /// The heat model's short name for reports: the vessel's (`isothermal`, `adiabatic`,
    /// `heat exchange`), or a train's when every unit has the same one, else `per unit`.
    pub fn heat_name(&self) -> &'static str {
        let vessels = self.vessels();
        let first = vessels[0].1.name();
        if vessels.iter().all(|(_, h)| h.name() == first) {
            first
        } else {
            "per unit"
        }
    }

    /// Which species enter the study by any route: the feed, a join before a unit of a train,
    /// a side, distributed or dosed stream, or the wall. The consistency check reasons from
    /// these (what can form, whether the key is fed).
    pub fn fed_species(&self) -> Vec<bool> {
        let mut fed: Vec<bool> = self.feed.amounts.iter().map(|&a| a > 0.0).collect();
        match &self.train {
            Some(t) => {
                for u in &t.units {
                    u.contacting.mark_entering(&mut fed);
                    if let Some(j) = &u.join {
                        for (f, a) in fed.iter_mut().zip(&j.amounts) {
                            *f |= *a > 0.0;
                        }
                    }
                }
            }
            None => self.contacting.mark_entering(&mut fed),
        }
        fed
    }

    /// Index of a species by name.
    pub fn species_index(&self, name: &str) -> Option<usize> {
        self.species.iter().position(|s| s.name == name)
    }
    /// Index of a reaction by id.
    pub fn reaction_index(&self, id: &str) -> Option<usize> {
        self.reactions.iter().position(|r| r.id == id)
    }
    /// The stoichiometric matrix ν (species x reactions) in compressed sparse column form.
    pub fn stoich_matrix(&self) -> sprs::CsMat<f64> {
        let mut tri = sprs::TriMat::new((self.species.len(), self.reactions.len()));
        for (i, r) in self.reactions.iter().enumerate() {
            for &(j, v) in &r.net {
                tri.add_triplet(j, i, v);
            }
        }
        tri.to_csc()
    }
}

/// The name in `names` closest to `name` (at most two edits, or equal ignoring case), for
/// "did you mean" hints.
pub fn closest_name<'a>(name: &str, names: &[&'a str]) -> Option<&'a str> {
    load::closest(name, names.iter().copied())
}

impl Network {
    /// The heat exchange of the energy balance, if any, to change in place (a screen that
    /// moves a study to another vessel).
    pub fn heat_exchange_mut(&mut self) -> Option<&mut Exchange> {
        match &mut self.heat {
            Heat::Balance(e) => e.exchange.as_mut(),
            Heat::Isothermal => None,
        }
    }

    /// The reactor size (V, W or batch time, SI); a train's total size.
    pub fn size(&self) -> f64 {
        if let Some(t) = &self.train {
            return t.units.iter().map(|u| u.reactor.size()).sum();
        }
        self.reactor.size()
    }

    /// The same study with another reactor size (V, W or batch time, SI, positive). A train
    /// keeps its proportions: every unit (with the positions of its side feeds and
    /// distributed feeds) is scaled so that the total is `size`.
    pub fn with_size(&self, size: f64) -> Network {
        let mut n = self.clone();
        if let Some(t) = &mut n.train {
            let factor = size / self.size();
            for u in &mut t.units {
                let s = u.reactor.size() * factor;
                u.reactor.set_size(s);
                u.contacting.scale_positions(factor);
            }
            let first = t.units[0].clone();
            n.reactor = first.reactor;
            n.contacting = first.contacting;
            return n;
        }
        // Side feeds keep their fraction of the way along (a tube with side feeds is searched
        // by scaling, as a train is; a distributed feed stays where the file puts it).
        let factor = size / self.size();
        for s in &mut n.contacting.side_feeds {
            s.at *= factor;
        }
        n.reactor.set_size(size);
        n
    }

    /// The key of the reactor size in the study file (`reactor.volume`, ...).
    pub fn size_path(&self) -> &'static str {
        if self.train.is_some() {
            return "size (the train's total, every unit in proportion)";
        }
        match self.reactor {
            Reactor::Pfr { .. } | Reactor::Cstr { .. } => "reactor.volume",
            Reactor::Pbr { .. } => "reactor.catalyst",
            Reactor::Batch { .. } => "reactor.time",
        }
    }
}
