//! Rate laws: each reaction's rate and its derivatives from one description.
//!
//! For reaction i at temperature T and concentrations C (SI):
//!
//! ```text
//! r_i = k_i(T) [ Π_j C_j^a_j − (1/K_i(T)) Π_j C_j^(a_j+ν_j) ] / D_i^n        (reverse term only if reversible)
//! k_i(T) = k_ref exp(−Ea/R (1/T − 1/T_ref))                                    (Arrhenius)
//! K_i(T) = K_ref exp(−ΔH/R (1/T − 1/T_ref))                                    (van't Hoff)
//! D_i    = 1 + Σ_m K_m(T) C_m^b_m   (hyperbolic laws; D = 1 for a power law)
//! ```
//!
//! The reverse term is r_forward · Q/K written without dividing by a concentration, so it stays
//! finite when a reactant is absent: with mass-action orders it is k/K Π C_products^ν
//! (common practice). The rate and its gradient ∂r_i/∂C_j are computed by the same function,
//! [`RateSet::eval`], so the analytic Jacobian cannot drift from the rate.
//!
//! Powers: an integer exponent is applied to the concentration as it is (smooth through zero, so
//! a small negative overshoot of the integrator does not break the Jacobian). A fractional order
//! 0 < a < 1 has an infinite slope at C = 0, so a reactant that runs out is approached with a
//! rate that stiffens without bound and the integrator overshoots below zero; below the tiny
//! concentration [`C_FLOOR`] it is replaced by a smooth (C¹) floor that is linear through zero:
//!
//! ```text
//! C^a                                  C ≥ c_f
//! c_f^a [ (2 − a) x + (a − 1) x² ]     0 ≤ C < c_f,  x = C/c_f   (value and slope match at c_f)
//! c_f^a (2 − a) x                      C < 0
//! ```
//!
//! so a small overshoot meets a rate of the opposite sign that returns it to zero, as an
//! integer order does, instead of being left below zero. The law is exact above c_f; below it,
//! the amount still to react is under c_f, so no reported amount moves by more than c_f times
//! the volumetric flow (see docs/methods.md). Other fractional orders are applied to max(C, 0),
//! with derivative 0 at C ≤ 0 (for a > 1 the slope is already 0 at C = 0).

use std::ops::Range;

use crate::model::{Network, RateForm};
use crate::units::GAS_CONSTANT;

/// An exponent, sorted at build time: integer powers are applied with `powi` and need no
/// rounding test per evaluation.
#[derive(Debug, Clone, Copy)]
enum Exponent {
    Int(i32),
    Real(f64),
}

impl Exponent {
    fn new(e: f64) -> Exponent {
        let n = e.round();
        if (e - n).abs() < 1e-12 && n.abs() <= 64.0 {
            Exponent::Int(n as i32)
        } else {
            Exponent::Real(e)
        }
    }
}

/// One power factor C^e, with the place of its species in the rate's `depends_on` list (where
/// its derivative goes).
#[derive(Debug, Clone, Copy)]
struct Factor {
    species: usize,
    exponent: Exponent,
    slot: usize,
}

/// (K_m,ref, ΔH_m, factor C_m^b_m) of one denominator term.
type AdsorptionTerm = (f64, f64, Factor);

#[derive(Debug, Clone)]
struct Compiled {
    k_ref: f64,
    ea: f64,
    t_ref: f64,
    forward: Vec<Factor>,
    /// (K_ref, ΔH for van't Hoff, reverse factors).
    reverse: Option<(f64, f64, Vec<Factor>)>,
    /// K(T) from the reaction's thermochemistry when it is more than van't Hoff with a
    /// constant ΔH: Kirchhoff's ΔH(T) with ΔCp, or ΔG° of the species ([`crate::thermo`]).
    keq_thermo: Option<crate::thermo::LnKForm>,
    /// (K_m,ref, ΔH_m, factor) terms and the power n.
    denominator: Option<(Vec<AdsorptionTerm>, f64)>,
    /// Species whose concentration this rate depends on (sorted, unique).
    depends_on: Vec<usize>,
}

/// The temperature-dependent constants of one rate at one temperature, with their logarithmic
/// slopes d ln(·)/dT for ∂r/∂T (computed once per law at the feed temperature for the
/// isothermal models, and once per evaluation of the right-hand side for the others).
#[derive(Debug, Clone, Default)]
pub struct AtTemperature {
    k: f64,
    /// 1/K_eq(T), for a reversible step.
    inv_k_eq: f64,
    /// K_m(T) of each adsorption term.
    k_ads: Vec<f64>,
    /// d ln k/dT = Ea/(R T²).
    dlnk: f64,
    /// d ln K_eq/dT = ΔH/(R T²) (van't Hoff).
    dln_keq: f64,
    /// d ln K_m/dT = ΔH_m/(R T²) of each adsorption term.
    dln_kads: Vec<f64>,
}

/// All rate laws of a network, ready to evaluate.
#[derive(Debug, Clone)]
pub struct RateSet {
    laws: Vec<Compiled>,
    /// The temperature `cached` was computed at.
    temperature: f64,
    cached: Vec<AtTemperature>,
    /// What the rate-only evaluation at the network's temperature reads, packed: the rhs of a
    /// large network evaluates every law thousands of times, and each law's own vectors are
    /// separate heap blocks that the allocator may scatter. On the generated 3000/10000 network
    /// the rate-only evaluation took about 2.7× longer with glibc's allocator than with
    /// mimalloc for that reason, and the Jacobian's evaluation (the gradient path, reading
    /// `full` and `deps` below) 5× longer than the same arrays packed. Arrays walked in order
    /// do not depend on the allocator and stay small enough for the cache.
    hot: Vec<HotLaw>,
    /// The forward and reverse factors of every law: law i's forward factors are
    /// `packed[hot[i].forward_start..hot[i].reverse_start]`, its reverse ones up to
    /// `hot[i + 1].forward_start` (or the end).
    packed: Vec<HotFactor>,
    /// The same factors with their gradient slots, at the same positions, for the gradient
    /// path, and every law's `depends_on` list end to end (law i's from `hot[i].deps_start`).
    full: Vec<Factor>,
    deps: Vec<usize>,
    /// Per species, the concentration (mol/m3) below which a fractional order 0 < a < 1 follows
    /// the smooth floor of the module notes.
    floor: Vec<f64>,
}

/// A rate law at the network's temperature: k and 1/K_eq (0 for an irreversible step), where
/// its factors start in [`RateSet`]'s packed array, and whether it is hyperbolic (which takes
/// the general path).
#[derive(Debug, Clone, Copy)]
struct HotLaw {
    k: f64,
    inv_k_eq: f64,
    forward_start: u32,
    reverse_start: u32,
    deps_start: u32,
    hyperbolic: bool,
    /// How many reverse factors it has (255 standing for 255 or more).
    n_reverse: u8,
}

/// C^e in 16 bytes: the integer exponent, or [`HotFactor::REAL`] with the real one in `real`.
#[derive(Debug, Clone, Copy)]
struct HotFactor {
    real: f64,
    species: u32,
    int: i32,
}

impl HotFactor {
    const REAL: i32 = i32::MIN;

    fn new(f: &Factor) -> HotFactor {
        let (real, int) = match f.exponent {
            Exponent::Int(n) => (n as f64, n),
            Exponent::Real(e) => (e, HotFactor::REAL),
        };
        HotFactor {
            real,
            species: f.species as u32,
            int,
        }
    }

    /// C^e, as [`power`] computes it.
    #[inline(always)]
    fn value(&self, c: &[f64], floor: &[f64]) -> f64 {
        let x = c[self.species as usize];
        match self.int {
            1 => x,
            2 => x * x,
            HotFactor::REAL => power(x, Exponent::Real(self.real), floor[self.species as usize]).0,
            n => power(x, Exponent::Int(n), 0.0).0,
        }
    }
}

/// The smallest concentration floor (mol/m3) of a fractional order 0 < a < 1 (module notes):
/// 1e-30 mol/m3, a bound for a floor computed from a tolerance. The floor in use is set per
/// species by the solver ([`RateSet::set_floor`]) at the concentration its absolute tolerance
/// resolves.
pub const C_FLOOR: f64 = 1e-30;

/// Value and derivative of C^e (see the module notes on powers); `cf` is the species' floor.
#[inline]
fn power(c: f64, e: Exponent, cf: f64) -> (f64, f64) {
    match e {
        Exponent::Int(0) => (1.0, 0.0),
        Exponent::Int(1) => (c, 1.0),
        Exponent::Int(2) => (c * c, 2.0 * c),
        Exponent::Int(n) => (c.powi(n), n as f64 * c.powi(n - 1)),
        Exponent::Real(e) if e > 0.0 && e < 1.0 && c < cf => {
            let top = cf.powf(e);
            let x = c / cf;
            if x >= 0.0 {
                (
                    top * ((2.0 - e) * x + (e - 1.0) * x * x),
                    top / cf * ((2.0 - e) + 2.0 * (e - 1.0) * x),
                )
            } else {
                (top * (2.0 - e) * x, top / cf * (2.0 - e))
            }
        }
        Exponent::Real(e) => {
            if c > 0.0 {
                let v = c.powf(e);
                (v, e * v / c)
            } else {
                (0.0_f64.powf(e), 0.0)
            }
        }
    }
}

/// Π_j C_j^e_j.
#[inline]
fn product_value(factors: &[Factor], c: &[f64], floor: &[f64]) -> f64 {
    let mut total = 1.0;
    for f in factors {
        total *= match f.exponent {
            Exponent::Int(1) => c[f.species],
            Exponent::Int(2) => c[f.species] * c[f.species],
            e => power(c[f.species], e, floor[f.species]).0,
        };
    }
    total
}

/// Π_j C_j^e_j, with its gradient times `scale` added into `grad` (indexed like `depends_on`).
fn product(
    factors: &[Factor],
    c: &[f64],
    floor: &[f64],
    grad: &mut [(usize, f64)],
    scale: f64,
) -> f64 {
    let mut vals = [(0.0, 0.0); 8];
    let big: Vec<(f64, f64)>;
    let pv: &[(f64, f64)] = if factors.len() <= 8 {
        for (k, f) in factors.iter().enumerate() {
            vals[k] = power(c[f.species], f.exponent, floor[f.species]);
        }
        &vals[..factors.len()]
    } else {
        big = factors
            .iter()
            .map(|f| power(c[f.species], f.exponent, floor[f.species]))
            .collect();
        &big
    };
    let total: f64 = pv.iter().map(|(v, _)| v).product();
    for (k, f) in factors.iter().enumerate() {
        // ∂/∂C_k = e C_k^(e−1) Π_{m≠k} C_m^e_m, without dividing by C_k.
        let others: f64 = pv
            .iter()
            .enumerate()
            .filter(|(m, _)| *m != k)
            .map(|(_, (v, _))| v)
            .product();
        grad[f.slot].1 += pv[k].1 * others * scale;
    }
    total
}

/// k(T) = k_ref exp(−E/R (1/T − 1/T_ref)), the Arrhenius (or van't Hoff, with E = ΔH) form
/// about a reference temperature; exactly k_ref at T_ref or with E = 0.
pub(crate) fn arrhenius(k_ref: f64, e: f64, t_ref: f64, t: f64) -> f64 {
    if e == 0.0 || t == t_ref {
        k_ref
    } else {
        k_ref * (-e / GAS_CONSTANT * (1.0 / t - 1.0 / t_ref)).exp()
    }
}

/// d ln(k)/dT of an Arrhenius (or van't Hoff) form with energy `e`: e/(R T²).
fn log_slope(e: f64, t: f64) -> f64 {
    e / (GAS_CONSTANT * t * t)
}

impl Compiled {
    /// 1/K_eq(T) and d ln K_eq/dT (0 and 0 for a one-way step).
    #[inline]
    fn inv_k_eq(&self, t: f64) -> (f64, f64) {
        match (&self.reverse, &self.keq_thermo) {
            (None, _) => (0.0, 0.0),
            (Some(_), Some(form)) => {
                let (ln_k, slope) = form.eval(t);
                ((-ln_k).exp(), slope)
            }
            (Some((k, dh, _)), None) => {
                (1.0 / arrhenius(*k, *dh, self.t_ref, t), log_slope(*dh, t))
            }
        }
    }

    fn at(&self, t: f64) -> AtTemperature {
        let (k_ads, dln_kads) =
            self.denominator
                .as_ref()
                .map_or_else(Default::default, |(terms, _)| {
                    terms
                        .iter()
                        .map(|(k, dh, _)| (arrhenius(*k, *dh, self.t_ref, t), log_slope(*dh, t)))
                        .unzip()
                });
        AtTemperature {
            k: arrhenius(self.k_ref, self.ea, self.t_ref, t),
            inv_k_eq: self.inv_k_eq(t).0,
            k_ads,
            dlnk: log_slope(self.ea, t),
            dln_keq: self.inv_k_eq(t).1,
            dln_kads,
        }
    }
}

impl RateSet {
    /// Compile the network's rate laws, with their constants at the feed temperature.
    pub fn new(net: &Network) -> RateSet {
        let factor = |species: usize, exponent: f64| Factor {
            species,
            exponent: Exponent::new(exponent),
            slot: usize::MAX,
        };
        let laws: Vec<Compiled> = net
            .reactions
            .iter()
            .enumerate()
            .map(|(i, r)| {
                let law = &r.rate;
                let mut forward: Vec<Factor> =
                    law.orders.iter().map(|&(j, e)| factor(j, e)).collect();
                let mut reverse = law.equilibrium.as_ref().map(|eq| {
                    // Exponents a_j + ν_j over every species in the orders or the equation.
                    let mut ex: Vec<(usize, f64)> = law.orders.clone();
                    for &(j, nu) in &r.net {
                        match ex.iter_mut().find(|(s, _)| *s == j) {
                            Some(e) => e.1 += nu,
                            None => ex.push((j, nu)),
                        }
                    }
                    let factors: Vec<Factor> = ex
                        .into_iter()
                        .filter(|(_, e)| e.abs() > 1e-14)
                        .map(|(j, e)| factor(j, e))
                        .collect();
                    (eq.k_ref, r.dh.unwrap_or(0.0), factors)
                });
                let mut denominator = match &law.form {
                    RateForm::Power => None,
                    RateForm::Hyperbolic { adsorption, power } => Some((
                        adsorption
                            .iter()
                            .map(|a| (a.k_ref, a.dh, factor(a.species, a.order)))
                            .collect::<Vec<_>>(),
                        *power,
                    )),
                };
                let mut depends_on: Vec<usize> = forward.iter().map(|f| f.species).collect();
                if let Some((_, _, fs)) = &reverse {
                    depends_on.extend(fs.iter().map(|f| f.species));
                }
                if let Some((terms, _)) = &denominator {
                    depends_on.extend(terms.iter().map(|(_, _, f)| f.species));
                }
                depends_on.sort_unstable();
                depends_on.dedup();
                let slot_of = |f: &mut Factor| {
                    f.slot = depends_on
                        .binary_search(&f.species)
                        .expect("every factor's species is in depends_on");
                };
                forward.iter_mut().for_each(slot_of);
                if let Some((_, _, fs)) = &mut reverse {
                    fs.iter_mut().for_each(slot_of);
                }
                if let Some((terms, _)) = &mut denominator {
                    terms.iter_mut().for_each(|(_, _, f)| slot_of(f));
                }
                // van't Hoff with a constant ΔH unless ΔCp or the species' ΔG° say more.
                let keq_thermo = reverse.as_ref().and_then(|_| {
                    let th = crate::thermo::ReactionThermo::new(net, i);
                    let more =
                        th.includes_dcp() || th.k_source() == Some(crate::thermo::KSource::Species);
                    if more { th.ln_k_form() } else { None }
                });
                Compiled {
                    k_ref: law.k_ref,
                    ea: law.ea,
                    t_ref: law.t_ref,
                    forward,
                    reverse,
                    keq_thermo,
                    denominator,
                    depends_on,
                }
            })
            .collect();
        let temperature = net.feed.temperature;
        let cached = laws.iter().map(|l| l.at(temperature)).collect();
        // u32 indices: a network with 4e9 factors could not be loaded in memory anyway.
        let mut packed = Vec::new();
        let mut full = Vec::new();
        let mut deps = Vec::new();
        let hot = laws
            .iter()
            .zip(&cached)
            .map(|(law, at): (&Compiled, &AtTemperature)| {
                let forward_start = packed.len() as u32;
                packed.extend(law.forward.iter().map(HotFactor::new));
                full.extend_from_slice(&law.forward);
                let reverse_start = packed.len() as u32;
                let mut n_reverse = 0;
                if let Some((_, _, fs)) = &law.reverse {
                    packed.extend(fs.iter().map(HotFactor::new));
                    full.extend_from_slice(fs);
                    n_reverse = fs.len().min(255) as u8;
                }
                let deps_start = deps.len() as u32;
                deps.extend_from_slice(&law.depends_on);
                HotLaw {
                    k: at.k,
                    inv_k_eq: at.inv_k_eq,
                    forward_start,
                    reverse_start,
                    deps_start,
                    hyperbolic: law.denominator.is_some(),
                    n_reverse,
                }
            })
            .collect();
        RateSet {
            laws,
            temperature,
            cached,
            hot,
            packed,
            full,
            deps,
            floor: vec![C_FLOOR; net.species.len()],
        }
    }

    /// Set the concentration floor (mol/m3) of each species' fractional orders 0 < a < 1
    /// (module notes); values below [`C_FLOOR`] are raised to it.
    pub fn set_floor(&mut self, floor: &[f64]) {
        self.floor = floor.iter().map(|f| f.max(C_FLOOR)).collect();
    }

    /// The concentration floor of each species (mol/m3).
    pub fn floor(&self) -> &[f64] {
        &self.floor
    }

    /// Law i's factor ranges in the packed arrays: forward, reverse, and its `depends_on`.
    #[inline]
    fn ranges(&self, i: usize) -> (Range<usize>, Range<usize>, Range<usize>) {
        let h = &self.hot[i];
        let (end, deps_end) = self
            .hot
            .get(i + 1)
            .map_or((self.packed.len(), self.deps.len()), |n| {
                (n.forward_start as usize, n.deps_start as usize)
            });
        let (a, b) = (h.forward_start as usize, h.reverse_start as usize);
        (a..b, b..end, h.deps_start as usize..deps_end)
    }

    pub fn len(&self) -> usize {
        self.laws.len()
    }

    pub fn is_empty(&self) -> bool {
        self.laws.is_empty()
    }

    /// Rate of power-law reaction i at the network's temperature from the packed arrays: the
    /// same products, in the same order, as the general path of [`RateSet::eval`].
    #[inline(always)]
    fn power_law_rate(&self, k: f64, inv_k_eq: f64, i: usize, c: &[f64]) -> f64 {
        let (forward, reverse, _) = self.ranges(i);
        let mut num = 1.0;
        for f in &self.packed[forward] {
            num *= f.value(c, &self.floor);
        }
        // An irreversible law has no reverse factors and 1/K = 0: the term is exactly 0.
        let mut rev = 1.0;
        for f in &self.packed[reverse] {
            rev *= f.value(c, &self.floor);
        }
        k * (num - rev * inv_k_eq)
    }

    /// Every rate at the network's own temperature and concentrations `c`, handed to
    /// `each(i, r_i)` in law order: the values [`RateSet::eval`] gives, bit for bit. Laws of
    /// one or two factors each way (every mass-action step of up to two reactants) take
    /// straight-line products, (1·a)·b = a·b exactly, instead of a loop each; the rhs of an
    /// isothermal model spent most of its time setting up those short loops.
    #[inline(always)]
    pub fn for_each_isothermal_rate(&self, c: &[f64], mut each: impl FnMut(usize, f64)) {
        let floor = &self.floor[..];
        let packed = &self.packed[..];
        let product = |fs: &[HotFactor]| fs.iter().fold(1.0, |p, f| p * f.value(c, floor));
        for (i, h) in self.hot.iter().enumerate() {
            if h.hyperbolic {
                each(i, self.eval_general(i, self.temperature, c, None));
                continue;
            }
            let (a, b) = (h.forward_start as usize, h.reverse_start as usize);
            let num = match b - a {
                1 => packed[a].value(c, floor),
                2 => packed[a].value(c, floor) * packed[a + 1].value(c, floor),
                _ => product(&packed[a..b]),
            };
            let rev = match h.n_reverse {
                0 => 1.0,
                1 => packed[b].value(c, floor),
                2 => packed[b].value(c, floor) * packed[b + 1].value(c, floor),
                _ => product(&packed[self.ranges(i).1]),
            };
            each(i, h.k * (num - rev * h.inv_k_eq));
        }
    }

    /// The temperature the isothermal constants were computed at (the feed's), K.
    pub fn temperature(&self) -> f64 {
        self.temperature
    }

    /// Species that rate i depends on.
    pub fn depends_on(&self, i: usize) -> &[usize] {
        &self.deps[self.ranges(i).2]
    }

    /// Rate of reaction i at T and C; with `grad`, also ∂r_i/∂C_j for j in `depends_on(i)`,
    /// written into `grad` as (species, derivative) in that order.
    ///
    /// At the network's own temperature the constants k(T), K_eq(T) and K_m(T) come from the
    /// values computed once in [`RateSet::new`]; at any other T they are evaluated afresh.
    ///
    /// The power-law path at the network's temperature is inlined into the caller: the rhs
    /// calls this once per reaction, and the two calls it cost (to here and to the packed
    /// product) were a third of a small network's rhs.
    #[inline(always)]
    pub fn eval(&self, i: usize, t: f64, c: &[f64], grad: Option<&mut Vec<(usize, f64)>>) -> f64 {
        if grad.is_none() && t == self.temperature {
            let h = &self.hot[i];
            if !h.hyperbolic {
                return self.power_law_rate(h.k, h.inv_k_eq, i, c);
            }
        }
        self.eval_general(i, t, c, grad)
    }

    /// [`RateSet::eval`] off the inlined path: a gradient, another temperature or a
    /// hyperbolic law.
    #[inline(never)]
    fn eval_general(
        &self,
        i: usize,
        t: f64,
        c: &[f64],
        grad: Option<&mut Vec<(usize, f64)>>,
    ) -> f64 {
        if t == self.temperature {
            self.eval_at(i, &self.cached[i], c, grad, None)
        } else {
            self.eval_at(i, &self.laws[i].at(t), c, grad, None)
        }
    }

    /// Every rate at temperature T and concentrations `c`, into `r` (the right-hand side of a
    /// non-isothermal model): the same values as [`RateSet::eval`] at T, with k(T) and
    /// K_eq(T) computed on the way, so a power law takes the packed path without building its
    /// [`AtTemperature`].
    pub fn rates_at(&self, t: f64, c: &[f64], r: &mut [f64]) {
        if t == self.temperature {
            self.for_each_isothermal_rate(c, |i, v| r[i] = v);
            return;
        }
        for (i, (law, ri)) in self.laws.iter().zip(r.iter_mut()).enumerate() {
            *ri = if law.denominator.is_none() {
                let k = arrhenius(law.k_ref, law.ea, law.t_ref, t);
                self.power_law_rate(k, law.inv_k_eq(t).0, i, c)
            } else {
                self.eval_at(i, &law.at(t), c, None, None)
            };
        }
    }

    /// The constants of every law at temperature T (one exponential per constant), for
    /// [`RateSet::eval_at`]: the non-isothermal models compute them once per evaluation.
    pub fn constants(&self, t: f64, out: &mut Vec<AtTemperature>) {
        out.clear();
        if t == self.temperature {
            out.extend_from_slice(&self.cached);
        } else {
            out.extend(self.laws.iter().map(|l| l.at(t)));
        }
    }

    /// Rate of reaction i with the constants `at` (from [`RateSet::constants`]); with `grad`,
    /// ∂r_i/∂C_j as in [`RateSet::eval`]; with `dr_dt`, ∂r_i/∂T at constant concentrations:
    ///
    /// ```text
    /// ∂r/∂T = r d ln k/dT + (k/D^n) (1/K) Π C^(a+ν) d ln K/dT − n (r/D) Σ_m K_m C_m^b_m d ln K_m/dT
    /// ```
    pub fn eval_at(
        &self,
        i: usize,
        at: &AtTemperature,
        c: &[f64],
        grad: Option<&mut Vec<(usize, f64)>>,
        dr_dt: Option<&mut f64>,
    ) -> f64 {
        let law = &self.laws[i];
        let (forward, reverse, deps) = self.ranges(i);
        let k = at.k;
        if grad.is_none() && dr_dt.is_none() && law.denominator.is_none() {
            return self.power_law_rate(k, at.inv_k_eq, i, c);
        }
        let Some(g) = grad else {
            let fwd = product_value(&self.full[forward], c, &self.floor);
            let rev = if law.reverse.is_some() {
                product_value(&self.full[reverse], c, &self.floor) * at.inv_k_eq
            } else {
                0.0
            };
            let num = fwd - rev;
            let (d, dd_dt) = match &law.denominator {
                None => (1.0, 0.0),
                Some((terms, _)) => {
                    let mut d = 1.0;
                    let mut dd = 0.0;
                    for (m, (_, _, f)) in terms.iter().enumerate() {
                        let v =
                            at.k_ads[m] * power(c[f.species], f.exponent, self.floor[f.species]).0;
                        d += v;
                        dd += v * at.dln_kads[m];
                    }
                    (d, dd)
                }
            };
            let n = law.denominator.as_ref().map_or(1.0, |(_, n)| *n);
            let dn = if law.denominator.is_some() {
                d.powf(n)
            } else {
                1.0
            };
            let r = k * num / dn;
            if let Some(out) = dr_dt {
                *out = r * at.dlnk + k * rev * at.dln_keq / dn - n * r * dd_dt / d;
            }
            return r;
        };
        g.clear();
        g.extend(self.deps[deps].iter().map(|&j| (j, 0.0)));
        // Numerator N = Π C^a − (1/K) Π C^(a+ν); gradient of N collected first.
        let mut num = product(&self.full[forward], c, &self.floor, g, 1.0);
        let mut rev = 0.0;
        if law.reverse.is_some() {
            rev = product(&self.full[reverse], c, &self.floor, g, -at.inv_k_eq) * at.inv_k_eq;
            num -= rev;
        }
        match &law.denominator {
            None => {
                for e in g.iter_mut() {
                    e.1 *= k;
                }
                let r = k * num;
                if let Some(out) = dr_dt {
                    *out = r * at.dlnk + k * rev * at.dln_keq;
                }
                r
            }
            Some((terms, n)) => {
                // r = k N / D^n; ∂r = k (∂N / D^n − n N D^(−n−1) ∂D).
                let mut d = 1.0;
                let mut dd_dt = 0.0;
                let mut dgrad = vec![0.0; g.len()];
                for (m, (_, _, f)) in terms.iter().enumerate() {
                    let (v, dv) = power(c[f.species], f.exponent, self.floor[f.species]);
                    d += at.k_ads[m] * v;
                    dd_dt += at.k_ads[m] * v * at.dln_kads[m];
                    dgrad[f.slot] += at.k_ads[m] * dv;
                }
                let dn = d.powf(*n);
                for (e, de) in g.iter_mut().zip(dgrad.iter()) {
                    e.1 = k * (e.1 / dn - n * num * de / (dn * d));
                }
                let r = k * num / dn;
                if let Some(out) = dr_dt {
                    *out = r * at.dlnk + k * rev * at.dln_keq / dn - n * r * dd_dt / d;
                }
                r
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::load_str;

    fn study(reactions: &str) -> Network {
        let text = format!(
            "name: t\nphase: liquid\nspecies: {{A: {{}}, B: {{}}, C: {{}}, I: {{}}}}\nreactions:\n{reactions}\nfeed: {{T: 300 K, volumetric: 1 L/s, flows: {{A: 1 mol/s, B: 0.5 mol/s, C: 0.2 mol/s}}}}\nreactor: {{type: pfr, volume: 1 L}}\n"
        );
        load_str(&text, "test", &[]).unwrap()
    }

    /// Every law's analytic gradient against central finite differences (common practice).
    fn check_gradient(net: &Network, t: f64, c: &[f64]) {
        let rs = RateSet::new(net);
        let mut g = Vec::new();
        for i in 0..rs.len() {
            rs.eval(i, t, c, Some(&mut g));
            for &(j, d) in &g {
                let h = 1e-6 * c[j].abs().max(1e-3);
                let mut cp = c.to_vec();
                let mut cm = c.to_vec();
                cp[j] += h;
                cm[j] -= h;
                let fd = (rs.eval(i, t, &cp, None) - rs.eval(i, t, &cm, None)) / (2.0 * h);
                let scale = d.abs().max(fd.abs()).max(1e-12);
                assert!(
                    (d - fd).abs() / scale < 1e-6,
                    "reaction {i} species {j}: analytic {d} vs fd {fd}"
                );
            }
        }
    }

    /// Irreversible with Arrhenius, reversible with van't Hoff, fractional order, hyperbolic
    /// with two adsorption terms, self-catalysed.
    const MIXED_LAWS: &str = "  - {id: r1, stoich: A + B -> C, rate: {k: 2e-3 m3/(mol*s), Ea: 30 kJ/mol, T_ref: 320 K}}\n\
         \x20 - {id: r2, stoich: 2 A <=> C, rate: {k: 1e-3 m3/(mol*s), K_eq: 0.5 m3/mol, dH: -20 kJ/mol}}\n\
         \x20 - {id: r3, stoich: A -> B, rate: {k: 0.3 (mol/m3)^(-0.5)/s, orders: {A: 1.5}}}\n\
         \x20 - {id: r4, stoich: A + B -> C, rate: {law: hyperbolic, k: 1e-2 m3/(mol*s), adsorption: {A: {K: 0.01 m3/mol}, C: {K: 0.002 (m3/mol)^2, order: 2, dH: -15 kJ/mol}}, inhibition_power: 2}}\n\
         \x20 - {id: r5, stoich: 2 B -> B + C, rate: {k: 1e-3 m3/(mol*s)}}";

    #[test]
    fn power_reversible_hyperbolic_gradients_match_finite_differences() {
        let net = study(MIXED_LAWS);
        check_gradient(&net, 330.0, &[800.0, 450.0, 120.0, 0.0]);
        check_gradient(&net, 300.0, &[5.0, 1e-3, 3.0, 0.0]);
    }

    /// A reversible third-order step (two forward factors, one of order 3), appended to
    /// [`MIXED_LAWS`] as r6.
    const THIRD_ORDER: &str = "\n  - {id: r6, stoich: A + 2 B <=> I, rate: {k: 1e-6 (mol/m3)^(-3)/s, orders: {A: 1, B: 3}, K_eq: 2 (m3/mol)^2}}";

    /// The packed rate-only path at the feed temperature gives exactly the rate of the general
    /// path (the one that also returns the gradient) for every law of [`MIXED_LAWS`] and a
    /// reversible third-order step, also with a species at zero and one slightly negative.
    #[test]
    fn packed_rates_equal_the_general_path() {
        let net = study(&format!("{MIXED_LAWS}{THIRD_ORDER}"));
        let rs = RateSet::new(&net);
        assert_eq!(rs.len(), 6);
        let t = net.feed.temperature;
        let mut g = Vec::new();
        for c in [
            [800.0, 450.0, 120.0, 3.0],
            [5.0, 0.0, 3.0, 0.0],
            [-1e-9, 2.0, 0.0, 7.0],
        ] {
            for i in 0..rs.len() {
                let general = rs.eval(i, t, &c, Some(&mut g));
                let packed = rs.eval(i, t, &c, None);
                assert_eq!(packed.to_bits(), general.to_bits(), "reaction {i} at {c:?}");
            }
        }
    }

    /// The rhs's one pass over every law gives each law's [`RateSet::eval`] bit for bit: one,
    /// two and three factors forward and back, integer and real orders, a hyperbolic law.
    #[test]
    fn one_pass_isothermal_rates_equal_eval() {
        let net = study(&format!(
            "{MIXED_LAWS}{THIRD_ORDER}\n  - {{id: r7, stoich: I <=> A + B + C, rate: {{k: 0.2 1/s, K_eq: 3e4 (mol/m3)^2}}}}\n  - {{id: r8, stoich: A + B + C -> 2 I, rate: {{k: 1e-9 (m3/mol)^2/s}}}}"
        ));
        let rs = RateSet::new(&net);
        assert_eq!(rs.len(), 8);
        let t = net.feed.temperature;
        for c in [
            [800.0, 450.0, 120.0, 3.0],
            [5.0, 0.0, 3.0, 0.0],
            [-1e-9, 2.0, 0.0, 7.0],
            [1e-40, 3e5, 0.25, 1e-12],
        ] {
            let mut seen = 0;
            rs.for_each_isothermal_rate(&c, |i, r| {
                assert_eq!(i, seen);
                seen += 1;
                let one = rs.eval(i, t, &c, None);
                assert_eq!(r.to_bits(), one.to_bits(), "reaction {i} at {c:?}");
            });
            assert_eq!(seen, rs.len());
        }
    }

    /// The floor of a fractional order 0 < a < 1 below C_FLOOR: value and slope continuous at
    /// C_FLOOR and at zero (C¹), exact C^a above, zero at zero, the opposite sign below zero,
    /// and the slope the derivative of the value (central differences).
    #[test]
    fn fractional_order_floor_is_smooth_and_restoring() {
        const C_FLOOR: f64 = 1e-9;
        for a in [0.25, 0.5, 0.75] {
            let e = Exponent::Real(a);
            let power = |c: f64, e: Exponent| power(c, e, C_FLOOR);
            let (v_above, d_above) = power(C_FLOOR * (1.0 + 1e-9), e);
            let (v_below, d_below) = power(C_FLOOR * (1.0 - 1e-9), e);
            assert!(
                (v_above - v_below).abs() <= 1e-8 * v_above,
                "value jumps at C_FLOOR"
            );
            assert!(
                (d_above - d_below).abs() <= 1e-6 * d_above,
                "slope jumps at C_FLOOR"
            );
            let c = 3.0 * C_FLOOR;
            assert_eq!(power(c, e).0, c.powf(a), "exact above the floor");
            assert_eq!(power(0.0, e).0, 0.0);
            assert!(
                power(-1e-3 * C_FLOOR, e).0 < 0.0,
                "no restoring rate below zero"
            );
            let (d0m, d0p) = (power(-1e-20, e).1, power(1e-20, e).1);
            assert!((d0m - d0p).abs() <= 1e-6 * d0p, "slope jumps at zero");
            for x in [-0.5, 0.1, 0.5, 0.9] {
                let c = x * C_FLOOR;
                let h = 1e-6 * C_FLOOR;
                let fd = (power(c + h, e).0 - power(c - h, e).0) / (2.0 * h);
                let d = power(c, e).1;
                assert!(
                    (fd - d).abs() <= 1e-6 * d.abs(),
                    "a = {a}, x = {x}: {fd} vs {d}"
                );
            }
        }
    }

    /// ∂r/∂T of every law (Arrhenius, van't Hoff, adsorption heats) against central
    /// differences in T (common practice), on both paths (with and without the gradient).
    #[test]
    fn temperature_derivative_matches_finite_differences() {
        let net = study(MIXED_LAWS);
        let rs = RateSet::new(&net);
        let c = [800.0, 450.0, 120.0, 3.0];
        let (mut at, mut atp, mut atm) = (Vec::new(), Vec::new(), Vec::new());
        let t = 335.0;
        let h = 1e-4;
        rs.constants(t, &mut at);
        rs.constants(t + h, &mut atp);
        rs.constants(t - h, &mut atm);
        let mut g = Vec::new();
        for i in 0..rs.len() {
            let (mut d1, mut d2) = (0.0, 0.0);
            let r1 = rs.eval_at(i, &at[i], &c, None, Some(&mut d1));
            let r2 = rs.eval_at(i, &at[i], &c, Some(&mut g), Some(&mut d2));
            assert_eq!(r1, rs.eval(i, t, &c, None));
            assert!((r1 - r2).abs() <= 1e-14 * r1.abs());
            let fd = (rs.eval_at(i, &atp[i], &c, None, None)
                - rs.eval_at(i, &atm[i], &c, None, None))
                / (2.0 * h);
            for d in [d1, d2] {
                assert!(
                    (d - fd).abs() <= 1e-6 * fd.abs().max(1e-12),
                    "reaction {i}: {d} vs {fd}"
                );
            }
        }
    }

    /// With species heat capacities a reversible step's K(T) carries ΔCp (integrated van't
    /// Hoff, [`crate::thermo::ReactionThermo`]): the rate vanishes at the closed-form K(T) for
    /// constant ΔCp, ln K = ln K0 − (ΔH0 − ΔCp T0)/R (1/T − 1/T0) + ΔCp/R ln(T/T0) (integrated
    /// van't Hoff with Kirchhoff's ΔH; Smith, Van Ness & Abbott, from memory), and ∂r/∂T
    /// matches central differences.
    #[test]
    fn equilibrium_constant_carries_heat_capacity_difference() {
        let net = load_str(
            "name: t\nphase: liquid\nspecies: {A: {cp: 100 J/(mol*K)}, B: {cp: 160 J/(mol*K)}}\nreactions:\n  - {id: r, stoich: A <=> B, rate: {k: 0.1 1/s, K_eq: 4, T_ref: 300 K, dH: -30 kJ/mol}}\nfeed: {T: 300 K, volumetric: 1 L/s, flows: {A: 1 mol/s}}\nreactor: {type: pfr, volume: 1 L}\n",
            "t",
            &[],
        )
        .unwrap();
        let rs = RateSet::new(&net);
        let (t0, t, dh0, dcp) = (300.0_f64, 380.0_f64, -30e3_f64, 60.0_f64);
        let r_gas = 8.314_462_618_153_24;
        let ln_k = 4.0_f64.ln() - (dh0 - dcp * t0) / r_gas * (1.0 / t - 1.0 / t0)
            + dcp / r_gas * (t / t0).ln();
        let k = ln_k.exp();
        let r = rs.eval(0, t, &[100.0, 100.0 * k], None);
        assert!(r.abs() < 1e-10, "rate at the closed-form K(T): {r}");
        let (mut at, mut p, mut m) = (Vec::new(), Vec::new(), Vec::new());
        let h = 1e-4;
        rs.constants(t, &mut at);
        rs.constants(t + h, &mut p);
        rs.constants(t - h, &mut m);
        let c = [300.0, 50.0];
        let mut d = 0.0;
        rs.eval_at(0, &at[0], &c, None, Some(&mut d));
        let fd = (rs.eval_at(0, &p[0], &c, None, None) - rs.eval_at(0, &m[0], &c, None, None))
            / (2.0 * h);
        assert!((d - fd).abs() < 1e-6 * fd.abs(), "{d} vs {fd}");
    }

    /// The one-pass rates of the non-isothermal right-hand side equal the general path's at
    /// any temperature, law by law (the same products in the same order).
    #[test]
    fn rates_at_equals_eval_at_any_temperature() {
        let net = study(MIXED_LAWS);
        let rs = RateSet::new(&net);
        let c = [800.0, 450.0, 120.0, 3.0];
        let mut r = vec![0.0; rs.len()];
        let mut at = Vec::new();
        for t in [300.0, 312.5, 360.0] {
            rs.rates_at(t, &c, &mut r);
            rs.constants(t, &mut at);
            for i in 0..rs.len() {
                let general = rs.eval_at(i, &at[i], &c, None, None);
                assert!(
                    (r[i] - general).abs() <= 1e-14 * general.abs(),
                    "reaction {i} at {t} K: {} vs {general}",
                    r[i]
                );
            }
        }
    }

    #[test]
    fn reversible_rate_vanishes_at_equilibrium() {
        // A <=> B with K = 4: r = k (C_A − C_B/K) = 0 at C_B/C_A = K (definition of K_c).
        let net = study("  - {id: r, stoich: A <=> B, rate: {k: 0.1 1/s, K_eq: 4}}");
        let rs = RateSet::new(&net);
        let r = rs.eval(0, 300.0, &[100.0, 400.0, 0.0, 0.0], None);
        assert!(r.abs() < 1e-12);
        let r = rs.eval(0, 300.0, &[100.0, 0.0, 0.0, 0.0], None);
        assert!((r - 10.0).abs() < 1e-12);
    }

    #[test]
    fn arrhenius_doubles_as_expected() {
        // k(T)/k(T_ref) = exp(−Ea/R (1/T − 1/T_ref)) (Arrhenius; R from CODATA 2018).
        let net =
            study("  - {id: r, stoich: A -> B, rate: {k: 1 1/s, Ea: 50 kJ/mol, T_ref: 300 K}}");
        let rs = RateSet::new(&net);
        let r = rs.eval(0, 310.0, &[1.0, 0.0, 0.0, 0.0], None);
        let expect = (-50_000.0_f64 / 8.314_462_618 * (1.0 / 310.0 - 1.0 / 300.0)).exp();
        assert!((r - expect).abs() / expect < 1e-9);
    }
}
