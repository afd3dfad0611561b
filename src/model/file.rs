//! The study file as written: serde structures that mirror the YAML keys one to one.
//! Unknown keys are refused (`deny_unknown_fields`) so that a typo never passes silently.
//! Every key is documented in docs/network-format.md.

use indexmap::IndexMap;
use serde::Deserialize;
use serde::de::{self, Deserializer, Visitor};
use std::fmt;

/// A quantity as written: a bare number or a string "number unit".
#[derive(Debug, Clone, PartialEq)]
pub enum RawQty {
    Number(f64),
    Text(String),
}

impl<'de> Deserialize<'de> for RawQty {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl Visitor<'_> for V {
            type Value = RawQty;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a quantity: a number with its unit, e.g. \"2 mol/s\" or \"320 K\"")
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<RawQty, E> {
                Ok(RawQty::Number(v))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawQty, E> {
                Ok(RawQty::Number(v as f64))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawQty, E> {
                Ok(RawQty::Number(v as f64))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawQty, E> {
                Ok(RawQty::Text(v.to_string()))
            }
        }
        d.deserialize_any(V)
    }
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawStudy {
    pub name: Option<String>,
    pub phase: Option<RawPhase>,
    pub species: IndexMap<String, Option<RawSpecies>>,
    pub reactions: Vec<RawReaction>,
    pub feed: RawFeed,
    /// One vessel; exactly one of `reactor` and `train` is given.
    pub reactor: Option<RawReactor>,
    /// Vessels in series, each a reactor map with an `id`.
    pub train: Option<Vec<RawReactor>>,
    pub key: Option<String>,
    pub desired: Option<String>,
    pub solver: Option<RawSolver>,
    /// Fitting the study to data (`rxnet fit`): parsed with the study so every command refuses
    /// a malformed section; read by `ParsedStudy::fit_section` (load/fit.rs).
    #[allow(dead_code)]
    pub fit: Option<RawFit>,
}

#[derive(Debug, Deserialize, Clone, Copy)]
#[serde(rename_all = "lowercase")]
pub enum RawPhase {
    Liquid,
    Gas,
}

#[derive(Debug, Deserialize, Default)]
#[serde(deny_unknown_fields)]
#[allow(non_snake_case)]
pub struct RawSpecies {
    pub formula: Option<String>,
    pub molar_mass: Option<RawQty>,
    /// Molar heat capacity at constant pressure: a constant or a polynomial form.
    pub cp: Option<RawCp>,
    /// Standard enthalpy of formation at 298.15 K.
    pub H_f: Option<RawQty>,
    /// Absolute standard entropy at 298.15 K and 1 bar.
    pub S: Option<RawQty>,
}

/// A species heat capacity as written: a quantity (`75 J/(mol*K)`) or a map with a
/// polynomial form and its range.
#[derive(Debug, Clone, PartialEq)]
pub enum RawCp {
    Constant(RawQty),
    Polynomial(RawCpPolynomial),
}

impl<'de> Deserialize<'de> for RawCp {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawCp;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str(
                    "a heat capacity: a quantity such as \"75 J/(mol*K)\", or a map \
                     {shomate: [A, B, C, D, E, F, G, H], range: [298 K, 1300 K]} or \
                     {nasa7: {low: [..7], high: [..7], T_mid: 1000 K}, range: [200 K, 3500 K]}",
                )
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<RawCp, E> {
                Ok(RawCp::Constant(RawQty::Number(v)))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawCp, E> {
                Ok(RawCp::Constant(RawQty::Number(v as f64)))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawCp, E> {
                Ok(RawCp::Constant(RawQty::Number(v as f64)))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawCp, E> {
                Ok(RawCp::Constant(RawQty::Text(v.to_string())))
            }
            fn visit_map<A: de::MapAccess<'de>>(self, map: A) -> Result<RawCp, A::Error> {
                RawCpPolynomial::deserialize(de::value::MapAccessDeserializer::new(map))
                    .map(RawCp::Polynomial)
            }
        }
        d.deserialize_any(V)
    }
}

/// `cp: {shomate: [...], range: [...]}` or `cp: {nasa7: {...}, range: [...]}`.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCpPolynomial {
    /// Shomate coefficients A..H (NIST units).
    pub shomate: Option<Vec<f64>>,
    pub nasa7: Option<RawNasa7>,
    /// The temperatures the polynomial holds between.
    pub range: Option<Vec<RawQty>>,
}

/// NASA 7-coefficient polynomials (Cp/R, H/(R T), S/R) below and above `T_mid`.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(non_snake_case)]
pub struct RawNasa7 {
    pub low: Vec<f64>,
    pub high: Vec<f64>,
    pub T_mid: RawQty,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawReaction {
    pub id: String,
    pub stoich: String,
    pub rate: RawRate,
}

#[derive(Debug, Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "lowercase")]
pub enum RawLaw {
    Power,
    Hyperbolic,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(non_snake_case)]
pub struct RawRate {
    pub law: Option<RawLaw>,
    pub k: RawQty,
    pub orders: Option<IndexMap<String, f64>>,
    pub Ea: Option<RawQty>,
    pub T_ref: Option<RawQty>,
    pub K_eq: Option<RawQty>,
    pub dH: Option<RawQty>,
    /// Hyperbolic only: species -> adsorption term.
    pub adsorption: Option<IndexMap<String, RawAdsorption>>,
    /// Hyperbolic only: exponent n of the denominator (default 1).
    pub inhibition_power: Option<f64>,
    /// The species whose rate `k` gives (−r_A = k Π C^a for a reactant A, r_A for a product),
    /// instead of the rate of reaction; converted on load by k / |ν_A|.
    pub basis_species: Option<String>,
    /// Whether the law is written in concentrations (default) or in partial pressures
    /// (k, K_eq and adsorption constants then in pressure units; converted on load).
    pub in_terms_of: Option<RawRateVariables>,
}

/// What a rate law's composition terms are: C_j (mol/m3) or p_j = C_j R T (Pa).
#[derive(Debug, Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum RawRateVariables {
    Concentrations,
    PartialPressures,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(non_snake_case)]
pub struct RawAdsorption {
    pub K: RawQty,
    pub order: Option<f64>,
    pub dH: Option<RawQty>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawFeed {
    #[serde(rename = "T")]
    pub t: RawQty,
    #[serde(rename = "P")]
    pub p: Option<RawQty>,
    pub flows: Option<IndexMap<String, RawQty>>,
    pub amounts: Option<IndexMap<String, RawQty>>,
    pub volumetric: Option<RawQty>,
    pub concentrations: Option<IndexMap<String, RawQty>>,
}

#[derive(Debug, Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "lowercase")]
pub enum RawReactorType {
    Pfr,
    Pbr,
    Cstr,
    Batch,
}

#[derive(Debug, Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum RawBatchMode {
    ConstantVolume,
    ConstantPressure,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawReactor {
    #[serde(rename = "type")]
    pub kind: RawReactorType,
    pub volume: Option<RawQty>,
    pub catalyst: Option<RawQty>,
    pub time: Option<RawQty>,
    pub mode: Option<RawBatchMode>,
    pub pressure_drop: Option<RawPressureDrop>,
    pub heat: Option<RawHeat>,
    #[serde(rename = "T_max")]
    pub t_max: Option<RawQty>,
    /// A unit of a train: its name, addressable as `train.<id>` by `--set`.
    pub id: Option<String>,
    /// A unit of a train: a feed joining the stream just before the unit.
    pub join: Option<RawStream>,
    /// A unit of a train: the fraction of its inlet that goes around it.
    pub bypass: Option<f64>,
    /// Tubes: streams injected at points along the length.
    pub side_feeds: Option<Vec<RawSideFeed>>,
    /// Tubes: streams spread over a stretch of the length.
    pub distributed_feeds: Option<Vec<RawDistributedFeed>>,
    /// Tubes: species crossing the wall.
    pub membrane: Option<Vec<RawPermeation>>,
    /// Batch: dosing streams (semibatch).
    pub dosing: Option<Vec<RawDosing>>,
    /// Batch: continuous withdrawal of the contents.
    pub withdrawal: Option<RawWithdrawal>,
    /// Tubes: the recycle ratio R.
    pub recycle: Option<f64>,
}

/// A stream other than the feed (a join, a side feed, a distributed feed): flows, or
/// concentrations with the volumetric flow; temperature and pressure default to the feed's.
#[derive(Debug, Deserialize, Clone)]
#[serde(deny_unknown_fields)]
pub struct RawStream {
    #[serde(rename = "T")]
    pub t: Option<RawQty>,
    #[serde(rename = "P")]
    pub p: Option<RawQty>,
    pub flows: Option<IndexMap<String, RawQty>>,
    pub concentrations: Option<IndexMap<String, RawQty>>,
    pub volumetric: Option<RawQty>,
}

/// `side_feeds: [{at: 0.4 m3, flows: {...}, volumetric: ..., T: ...}]`.
#[derive(Debug, Deserialize, Clone)]
#[serde(deny_unknown_fields)]
pub struct RawSideFeed {
    pub at: RawQty,
    #[serde(rename = "T")]
    pub t: Option<RawQty>,
    #[serde(rename = "P")]
    pub p: Option<RawQty>,
    pub flows: Option<IndexMap<String, RawQty>>,
    pub concentrations: Option<IndexMap<String, RawQty>>,
    pub volumetric: Option<RawQty>,
}

impl RawSideFeed {
    /// The stream part (everything but `at`).
    pub fn stream(&self) -> RawStream {
        RawStream {
            t: self.t.clone(),
            p: self.p.clone(),
            flows: self.flows.clone(),
            concentrations: self.concentrations.clone(),
            volumetric: self.volumetric.clone(),
        }
    }
}

/// `distributed_feeds: [{from: 0 m3, to: 1 m3, flows: {...}, volumetric: ..., shape: [[x, w], ...]}]`.
#[derive(Debug, Deserialize, Clone)]
#[serde(deny_unknown_fields)]
pub struct RawDistributedFeed {
    pub from: Option<RawQty>,
    pub to: Option<RawQty>,
    /// Relative intensity along the stretch: points [x, weight], linear between.
    pub shape: Option<Vec<(RawQty, f64)>>,
    #[serde(rename = "T")]
    pub t: Option<RawQty>,
    #[serde(rename = "P")]
    pub p: Option<RawQty>,
    pub flows: Option<IndexMap<String, RawQty>>,
    pub concentrations: Option<IndexMap<String, RawQty>>,
    pub volumetric: Option<RawQty>,
}

impl RawDistributedFeed {
    /// The stream part (the whole stream over the stretch).
    pub fn stream(&self) -> RawStream {
        RawStream {
            t: self.t.clone(),
            p: self.p.clone(),
            flows: self.flows.clone(),
            concentrations: self.concentrations.clone(),
            volumetric: self.volumetric.clone(),
        }
    }
}

/// `membrane: [{species: H2, coefficient: 0.8 1/s, sweep: 0 mol/m3}]`.
#[derive(Debug, Deserialize, Clone)]
#[serde(deny_unknown_fields)]
pub struct RawPermeation {
    pub species: String,
    pub coefficient: RawQty,
    pub sweep: Option<RawQty>,
}

/// `dosing: [{concentrations: {...}, rate: 2 L/min, from: 0 s, to: 1 h, T: ...}]`, or a rate
/// profile `rate: [[0 h, 2 L/min], [1 h, 1 L/min]]`.
#[derive(Debug, Deserialize, Clone)]
#[serde(deny_unknown_fields)]
pub struct RawDosing {
    #[serde(rename = "T")]
    pub t: Option<RawQty>,
    pub concentrations: Option<IndexMap<String, RawQty>>,
    pub rate: Option<RawVolumetricRate>,
    pub from: Option<RawQty>,
    pub to: Option<RawQty>,
}

/// A volumetric rate: one quantity (`2 L/min`, constant over the window), or points
/// `[[0 h, 2 L/min], [1 h, 1 L/min]]`, linear between.
#[derive(Debug, Clone, PartialEq)]
pub enum RawVolumetricRate {
    Constant(RawQty),
    Profile(Vec<(RawQty, RawQty)>),
}

impl<'de> Deserialize<'de> for RawVolumetricRate {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawVolumetricRate;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str(
                    "a volumetric rate such as \"2 L/min\", or points [[0 h, 2 L/min], [1 h, 1 L/min]]",
                )
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<RawVolumetricRate, E> {
                Ok(RawVolumetricRate::Constant(RawQty::Number(v)))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawVolumetricRate, E> {
                Ok(RawVolumetricRate::Constant(RawQty::Number(v as f64)))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawVolumetricRate, E> {
                Ok(RawVolumetricRate::Constant(RawQty::Number(v as f64)))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawVolumetricRate, E> {
                Ok(RawVolumetricRate::Constant(RawQty::Text(v.to_string())))
            }
            fn visit_seq<A: de::SeqAccess<'de>>(
                self,
                seq: A,
            ) -> Result<RawVolumetricRate, A::Error> {
                Vec::<(RawQty, RawQty)>::deserialize(de::value::SeqAccessDeserializer::new(seq))
                    .map(RawVolumetricRate::Profile)
            }
        }
        d.deserialize_any(V)
    }
}

/// `withdrawal: {rate: 1 L/min, from: 1 h, to: 2 h}`.
#[derive(Debug, Deserialize, Clone)]
#[serde(deny_unknown_fields)]
pub struct RawWithdrawal {
    pub rate: RawVolumetricRate,
    pub from: Option<RawQty>,
    pub to: Option<RawQty>,
}

/// `reactor.heat`: a word (`isothermal`, `adiabatic`) or the map of the heat exchange.
#[derive(Debug)]
pub enum RawHeat {
    Word(String),
    Map(Box<RawHeatMap>),
}

impl<'de> Deserialize<'de> for RawHeat {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawHeat;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("`isothermal`, `adiabatic`, or a map such as {U: 300 W/(m2*K), area: 40 m2/m3, coolant: {T: 300 K}}")
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawHeat, E> {
                Ok(RawHeat::Word(v.to_string()))
            }
            fn visit_map<A: de::MapAccess<'de>>(self, m: A) -> Result<RawHeat, A::Error> {
                RawHeatMap::deserialize(de::value::MapAccessDeserializer::new(m))
                    .map(|m| RawHeat::Map(Box::new(m)))
            }
        }
        d.deserialize_any(V)
    }
}

#[derive(Debug, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawHeatMap {
    #[serde(rename = "U")]
    pub u: Option<RawQty>,
    pub area: Option<RawQty>,
    #[serde(rename = "UA")]
    pub ua: Option<RawQty>,
    pub coolant: Option<RawCoolant>,
    pub mixture_cp: Option<RawQty>,
    pub density: Option<RawQty>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCoolant {
    #[serde(rename = "T")]
    pub t: Option<RawQty>,
    pub ramp: Option<RawQty>,
    #[serde(rename = "T_final")]
    pub t_final: Option<RawQty>,
    #[serde(rename = "T_in")]
    pub t_in: Option<RawQty>,
    pub mass_flow: Option<RawQty>,
    pub cp: Option<RawQty>,
    pub direction: Option<RawDirection>,
}

#[derive(Debug, Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum RawDirection {
    CoCurrent,
    CounterCurrent,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawPressureDrop {
    pub alpha: Option<RawQty>,
    pub particle_diameter: Option<RawQty>,
    pub void_fraction: Option<f64>,
    pub cross_section: Option<RawQty>,
    pub viscosity: Option<RawQty>,
    pub solid_density: Option<RawQty>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSolver {
    pub rtol: Option<f64>,
    pub atol: Option<RawQty>,
    pub max_steps: Option<usize>,
    pub linear_algebra: Option<String>,
    /// CSTR: `lowest`, `highest` or a number (in order of rising conversion).
    pub steady_state: Option<RawQty>,
}

/// `fit:` — what `rxnet fit` estimates, from which data, with which measurement error.
#[derive(Debug, Deserialize, Clone)]
#[serde(deny_unknown_fields)]
pub struct RawFit {
    /// The data CSV, relative to the study file.
    pub data: Option<String>,
    /// The runs table CSV, relative to the study file.
    pub runs: Option<String>,
    pub estimate: Option<Vec<RawEstimate>>,
    /// Per species (or `default`): the measurement's standard deviation.
    pub error: Option<IndexMap<String, RawMeasurementError>>,
    /// Multistart count (1 = a single start).
    pub starts: Option<u64>,
}

/// One estimated value: a --set path, or a map with bounds and a scale.
#[derive(Debug, Clone, PartialEq)]
pub enum RawEstimate {
    Path(String),
    Map(RawEstimateMap),
}

impl<'de> Deserialize<'de> for RawEstimate {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawEstimate;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str(
                    "a --set path such as reactions.r1.rate.k, or a map {path: ..., min: ..., max: ..., scale: log}",
                )
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawEstimate, E> {
                Ok(RawEstimate::Path(v.to_string()))
            }
            fn visit_map<A: de::MapAccess<'de>>(self, m: A) -> Result<RawEstimate, A::Error> {
                RawEstimateMap::deserialize(de::value::MapAccessDeserializer::new(m))
                    .map(RawEstimate::Map)
            }
        }
        d.deserialize_any(V)
    }
}

/// `{path: reactions.r1.rate.Ea, min: 0 kJ/mol, max: 300 kJ/mol, scale: linear}`.
#[derive(Debug, Deserialize, Clone, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct RawEstimateMap {
    pub path: String,
    pub min: Option<RawQty>,
    pub max: Option<RawQty>,
    pub scale: Option<RawScale>,
}

/// How a parameter is estimated: its logarithm (positive quantities) or the value itself.
#[derive(Debug, Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "lowercase")]
pub enum RawScale {
    Log,
    Linear,
}

/// `{relative: 2 %, absolute: 0.005 mol/L}`: σ = sqrt(absolute² + (relative·|measured|)²).
#[derive(Debug, Deserialize, Clone, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct RawMeasurementError {
    pub absolute: Option<RawQty>,
    pub relative: Option<RawQty>,
}
