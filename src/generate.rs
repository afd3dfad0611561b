//! Synthetic study files: atom-consistent mass-action networks of any size, for benchmarks and
//! stress tests of the loader, the checks and the solvers.
//!
//! # Construction
//!
//! The species are oligomers of one unit CH2: species `P{n}_{a}` is isomer `a` of the n-mer,
//! formula C_n H_2n. Sizes run from 1 to S = max(2, ⌈√N⌉ + 1) for N species; the monomer `P1_1`
//! is the only species of size 1 and the other N − 1 species are spread evenly over sizes
//! 2..=S. Every step conserves the number of units, so every step is atom-balanced
//! (C and H are both proportional to the units). The steps are
//!
//! | kind           | form                 | order | k dimensions  | Σν | K_eq dimensions |
//! |----------------|----------------------|-------|---------------|----|-----------------|
//! | isomerisation  | X_n -> Y_n           | 1     | 1/s           | 0  | none            |
//! | combination    | X_n + Y_m -> Z_(n+m) | 2     | m3/(mol*s)    | −1 | m3/mol          |
//! | dimerisation   | 2 X_n -> Z_2n        | 2     | m3/(mol*s)    | −1 | m3/mol          |
//! | splitting      | Z_(n+m) -> X_n + Y_m | 1     | 1/s           | +1 | mol/m3          |
//! | exchange       | X_n + Y_m -> U_p + W_q, p + q = n + m | 2 | m3/(mol*s) | 0 | none |
//!
//! Rate laws are mass action (orders equal to the reactant coefficients, the default of the
//! study format), so r = k Π C_j^|ν_j| − (k/K) Π C_products^ν.
//!
//! **Reachability.** The first `fed` species (the monomer first) are fed. Every other species,
//! in order of size, is first made by one *spanning* step from species before it: an
//! isomerisation of an earlier isomer of its size, or a combination of two smaller species
//! (always present earlier). So every species can form from the feed and the network is
//! connected. The first spanning step always consumes the monomer, the key species.
//!
//! **Rate constants.** The pseudo-first-order rate constant κ = k·C_ref^(order−1) is drawn
//! log-uniform in [1e-3, 1e7] 1/s, with C_ref the total feed concentration (F_T0/v0 for a
//! liquid, P/(RT) for a gas, N_T0/V for a batch), so the spread of time scales is ten decades
//! whatever the order: k = κ for a first-order step, κ/C_ref in m3/(mol·s) for a second-order
//! one. For a reversible step κ goes to the faster direction: with K' = K_c·C_ref^(−Σν) the
//! ratio of forward to reverse pseudo-first-order constants, κ_f = κ·min(1, K') and
//! κ_r = κ_f/K', so no time scale is shorter than 1e-7 s.
//!
//! **Equilibrium constants.** Each species gets a reference concentration c°_j = C_ref·10^u,
//! u uniform in [−1.5, 1.5], and a reversible step gets K_c = Π_j (c°_j)^ν_j in (mol/m3)^Σν.
//! Any combination of steps then satisfies K_dep = Π K_i^c_i exactly (Wegscheider's condition,
//! which holds for constants derived from species potentials; common practice), so the cycle
//! check of `rxnet check` passes for every dependent step.
//!
//! **Uniqueness.** No two steps have the same net stoichiometry up to sign (a step and its
//! reverse count as one), and no species stands on both sides of a step.
//!
//! The pseudo-random numbers come from splitmix64 (Steele, Lea & Flood, "Fast splittable
//! pseudorandom number generators", OOPSLA 2014, from memory), so one seed gives one file on
//! every platform without a dependency.

use crate::random::SplitMix64;
use std::collections::HashSet;
use std::fmt::Write as _;

use crate::model::Phase;
use crate::units::GAS_CONSTANT;

/// The reactor of a generated study.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GeneratedReactor {
    /// Plug flow, sized for a space time τ = V/v0 of [`SPACE_TIME`] seconds.
    Pfr,
    /// Constant-volume batch run for [`SPACE_TIME`] seconds.
    Batch,
}

/// What to generate.
#[derive(Debug, Clone)]
pub struct GeneratorSpec {
    /// Number of species N (at least 2).
    pub species: usize,
    /// Number of reactions; at least N − fed (one spanning step per species not fed).
    pub reactions: usize,
    /// Seed of the pseudo-random generator: the same spec gives the same text.
    pub seed: u64,
    /// Liquid (constant density) or ideal gas.
    pub phase: Phase,
    pub reactor: GeneratedReactor,
    /// Share of the steps written reversible (`<=>` with K_eq), in [0, 1].
    pub reversible_fraction: f64,
    /// Number of fed species (the monomer and the next smallest), 1..=N.
    pub fed: usize,
}

impl Default for GeneratorSpec {
    /// 100 species, 300 reactions, seed 1, liquid PFR, 30 % reversible steps, 3 fed species.
    fn default() -> Self {
        GeneratorSpec {
            species: 100,
            reactions: 300,
            seed: 1,
            phase: Phase::Liquid,
            reactor: GeneratedReactor::Pfr,
            reversible_fraction: 0.3,
            fed: 3,
        }
    }
}

/// Space time of a generated PFR (V/v0) and duration of a generated batch run, in s.
pub const SPACE_TIME: f64 = 100.0;
/// Range of the pseudo-first-order rate constant κ, 1/s.
pub const KAPPA_RANGE: (f64, f64) = (1e-3, 1e7);
/// Feed temperature, K.
const TEMPERATURE: f64 = 320.0;
/// Gas feed pressure, Pa.
const GAS_PRESSURE: f64 = 10.0e5;
/// Total liquid feed (mol/s) and volumetric flow (m3/s): C_ref = 1000 mol/m3. Plant scale on
/// purpose: the integrator's x is V in m3, and its smallest allowed step is absolute (diffsol's
/// default minimum, f64::EPSILON), so with v0 = 1 L/s the fast start-up transients of large
/// networks need steps below it (see docs/performance.md).
const LIQUID_FLOW: f64 = 100.0;
const LIQUID_V0: f64 = 0.1;
/// Total batch charge, mol (liquid: in 1 m3).
const BATCH_AMOUNT: f64 = 1000.0;

/// The species layout: sizes and isomers, in order of size.
struct Layout {
    /// Size (number of CH2 units) of each species.
    size: Vec<usize>,
    /// Species indices of each size; `by_size[n]` for n in 1..=S (index 0 unused).
    by_size: Vec<Vec<usize>>,
    /// Isomer number (from 1) of each species.
    isomer: Vec<usize>,
}

impl Layout {
    fn new(n_species: usize) -> Layout {
        let max_size = ((n_species as f64).sqrt().ceil() as usize + 1).clamp(2, n_species);
        let others = n_species - 1;
        let sizes = max_size - 1;
        let mut size = vec![1];
        let mut isomer = vec![1];
        let mut by_size = vec![Vec::new(), vec![0]];
        for (k, n) in (2..=max_size).enumerate() {
            let count = others / sizes + usize::from(k < others % sizes);
            let mut members = Vec::with_capacity(count);
            for a in 1..=count {
                members.push(size.len());
                size.push(n);
                isomer.push(a);
            }
            by_size.push(members);
        }
        Layout {
            size,
            by_size,
            isomer,
        }
    }
    fn max_size(&self) -> usize {
        self.by_size.len() - 1
    }
    fn name(&self, j: usize) -> String {
        format!("P{}_{}", self.size[j], self.isomer[j])
    }
    /// A random species of size n (which must exist).
    fn pick(&self, rng: &mut SplitMix64, n: usize) -> usize {
        let m = &self.by_size[n];
        m[rng.range(0, m.len() - 1)]
    }
    /// A random species of size n among those before `limit` (at least one must exist).
    fn pick_before(&self, rng: &mut SplitMix64, n: usize, limit: usize) -> usize {
        let m = &self.by_size[n];
        let count = m.partition_point(|&j| j < limit);
        m[rng.range(0, count - 1)]
    }
}

/// One step: reactant and product species (a species twice on a side stands for coefficient 2).
struct Step {
    reactants: Vec<usize>,
    products: Vec<usize>,
}

impl Step {
    /// Net coefficients, species ascending, with the sign fixed so that the first is negative:
    /// a step and its reverse give the same key.
    fn key(&self) -> Vec<(usize, i32)> {
        let mut net: Vec<(usize, i32)> = Vec::new();
        for (list, sign) in [(&self.reactants, -1), (&self.products, 1)] {
            for &j in list {
                match net.iter_mut().find(|(s, _)| *s == j) {
                    Some(e) => e.1 += sign,
                    None => net.push((j, sign)),
                }
            }
        }
        net.retain(|(_, v)| *v != 0);
        net.sort_unstable();
        if net.first().is_some_and(|(_, v)| *v > 0) {
            net.iter_mut().for_each(|e| e.1 = -e.1);
        }
        net
    }
    /// Whether some species stands on both sides.
    fn overlaps(&self) -> bool {
        self.reactants.iter().any(|j| self.products.contains(j))
    }
    fn order(&self) -> usize {
        self.reactants.len()
    }
    fn mole_change(&self) -> i32 {
        self.products.len() as i32 - self.reactants.len() as i32
    }
}

/// Text of one side: `2 X` for a species listed twice.
fn side(layout: &Layout, list: &[usize]) -> String {
    match list {
        [a, b] if a == b => format!("2 {}", layout.name(*a)),
        _ => list
            .iter()
            .map(|&j| layout.name(j))
            .collect::<Vec<_>>()
            .join(" + "),
    }
}

/// A random step of the kinds in the module table, over all species.
fn random_step(layout: &Layout, rng: &mut SplitMix64) -> Step {
    let s = layout.max_size();
    let u = rng.unit();
    if u < 0.2 {
        // Isomerisation: a size with at least two isomers (size ≥ 2 always has one when N > 2).
        let n = rng.range(2, s);
        let x = layout.pick(rng, n);
        let y = layout.pick(rng, n);
        Step {
            reactants: vec![x],
            products: vec![y],
        }
    } else if u < 0.6 {
        // Combination (or dimerisation when both picks coincide), or splitting.
        let n = rng.range(2, s);
        let m = rng.range(1, n - 1);
        let z = layout.pick(rng, n);
        let x = layout.pick(rng, m);
        let y = if rng.unit() < 0.25 && 2 * m == n {
            x
        } else {
            layout.pick(rng, n - m)
        };
        if rng.unit() < 0.65 {
            Step {
                reactants: vec![x, y],
                products: vec![z],
            }
        } else {
            Step {
                reactants: vec![z],
                products: vec![x, y],
            }
        }
    } else if u < 0.7 {
        // Dimerisation 2 X_n -> Z_2n.
        let n = rng.range(1, s / 2);
        let x = layout.pick(rng, n);
        let z = layout.pick(rng, 2 * n);
        Step {
            reactants: vec![x, x],
            products: vec![z],
        }
    } else {
        // Exchange X_n + Y_m -> U_p + W_q with p + q = n + m.
        let n = rng.range(1, s);
        let m = rng.range(1, s);
        let t = n + m;
        let lo = t.saturating_sub(s).max(1);
        let hi = (t - 1).min(s);
        let p = rng.range(lo, hi);
        let x = layout.pick(rng, n);
        let y = layout.pick(rng, m);
        let a = layout.pick(rng, p);
        let b = layout.pick(rng, t - p);
        Step {
            reactants: vec![x, y],
            products: vec![a, b],
        }
    }
}

/// The step that first makes species `j` from species before it (all of them reachable).
fn spanning_step(layout: &Layout, rng: &mut SplitMix64, j: usize, first: bool) -> Step {
    let n = layout.size[j];
    let earlier_isomers = layout.isomer[j] > 1;
    if !first && earlier_isomers && rng.unit() < 0.4 {
        let x = layout.pick_before(rng, n, j);
        return Step {
            reactants: vec![x],
            products: vec![j],
        };
    }
    // Combination of sizes m and n − m, both smaller than n, so every candidate is before j.
    let m = if first { 1 } else { rng.range(1, n / 2) };
    let x = layout.pick(rng, m);
    let y = if n - m == m && (first || rng.unit() < 0.5) {
        x
    } else {
        layout.pick(rng, n - m)
    };
    Step {
        reactants: vec![x, y],
        products: vec![j],
    }
}

/// Generate a study file (YAML text, the format of docs/network-format.md) for `spec`.
///
/// Errors: fewer than 2 species, `fed` outside 1..=N, fewer reactions than the N − fed
/// spanning steps, a `reversible_fraction` outside [0, 1], or more reactions than distinct
/// steps can be found for this many species.
pub fn generate_study(spec: &GeneratorSpec) -> Result<String, String> {
    let n = spec.species;
    if n < 2 {
        return Err(format!("need at least 2 species, got {n}"));
    }
    if spec.fed == 0 || spec.fed > n {
        return Err(format!("fed must be in 1..={n}, got {}", spec.fed));
    }
    if spec.reactions < n - spec.fed {
        return Err(format!(
            "{} reactions cannot make {} species that are not fed reachable: need at least {}",
            spec.reactions,
            n - spec.fed,
            n - spec.fed
        ));
    }
    if !(0.0..=1.0).contains(&spec.reversible_fraction) {
        return Err(format!(
            "reversible_fraction must be in [0, 1], got {}",
            spec.reversible_fraction
        ));
    }
    let layout = Layout::new(n);
    let mut rng = SplitMix64(spec.seed);

    let mut steps: Vec<Step> = Vec::with_capacity(spec.reactions);
    let mut seen: HashSet<Vec<(usize, i32)>> = HashSet::with_capacity(spec.reactions);
    for j in spec.fed..n {
        // A spanning step makes j for the first time, so it is new; retry only on the rare
        // overlap (an isomer picked as its own source cannot happen: sources precede j).
        let step = spanning_step(&layout, &mut rng, j, j == spec.fed);
        seen.insert(step.key());
        steps.push(step);
    }
    let budget = 200 * spec.reactions + 1000;
    let mut tries = 0;
    while steps.len() < spec.reactions {
        tries += 1;
        if tries > budget {
            return Err(format!(
                "found only {} distinct steps for {n} species after {budget} tries; ask for fewer reactions",
                steps.len()
            ));
        }
        let step = random_step(&layout, &mut rng);
        if step.overlaps() {
            continue;
        }
        let key = step.key();
        if key.is_empty() || !seen.insert(key) {
            continue;
        }
        steps.push(step);
    }

    // Feed and the reference concentration C_ref.
    let shares: Vec<f64> = (0..spec.fed)
        .map(|k| if k == 0 { 2.0 } else { 0.5 + rng.unit() })
        .collect();
    let share_sum: f64 = shares.iter().sum();
    let batch = spec.reactor == GeneratedReactor::Batch;
    let gas = spec.phase == Phase::Gas;
    let total = if batch { BATCH_AMOUNT } else { LIQUID_FLOW };
    let amounts: Vec<f64> = shares
        .iter()
        .map(|s| round_sig(total * s / share_sum))
        .collect();
    let total: f64 = amounts.iter().sum();
    let c_gas = GAS_PRESSURE / (GAS_CONSTANT * TEMPERATURE);
    let c_ref = match (gas, batch) {
        (true, _) => c_gas,
        (false, true) => total / 1.0,
        (false, false) => total / LIQUID_V0,
    };
    let c_std: Vec<f64> = (0..n)
        .map(|_| c_ref * 10f64.powf(-1.5 + 3.0 * rng.unit()))
        .collect();

    let mut out = String::with_capacity(120 * (spec.reactions + n) + 512);
    let phase = if gas { "gas" } else { "liquid" };
    let kind = if batch { "batch" } else { "PFR" };
    let _ = writeln!(
        out,
        "# Generated by rxnet::generate (seed {}): {n} oligomer species C_nH_2n, {} mass-action steps.\n\
         # Synthetic values for benchmarks, not data for any real process.",
        spec.seed, spec.reactions
    );
    let _ = writeln!(
        out,
        "name: generated {phase} {kind}, {n} species, {} reactions (seed {})",
        spec.reactions, spec.seed
    );
    let _ = writeln!(out, "phase: {phase}\nspecies:");
    for j in 0..n {
        let s = layout.size[j];
        let c = if s == 1 { String::new() } else { s.to_string() };
        let _ = writeln!(out, "  {}: {{formula: C{c}H{}}}", layout.name(j), 2 * s);
    }
    out.push_str("reactions:\n");
    for (i, st) in steps.iter().enumerate() {
        let reversible = rng.unit() < spec.reversible_fraction;
        let kappa = rng.log_uniform(KAPPA_RANGE.0, KAPPA_RANGE.1);
        let dn = st.mole_change();
        // K_c = Π c°_j^ν_j in (mol/m3)^Σν, and K' = K_c C_ref^(−Σν), the dimensionless ratio
        // of the forward to the reverse pseudo-first-order constant at C_ref.
        let k_eq = reversible.then(|| {
            let ln_k: f64 = st.products.iter().map(|&j| c_std[j].ln()).sum::<f64>()
                - st.reactants.iter().map(|&j| c_std[j].ln()).sum::<f64>();
            ln_k.exp()
        });
        // The faster direction gets κ, so neither exceeds the top of KAPPA_RANGE.
        let kappa_fwd = match k_eq {
            Some(k) => kappa * (k * c_ref.powi(-dn)).min(1.0),
            None => kappa,
        };
        let k = match st.order() {
            1 => format!("{kappa_fwd:.6e} 1/s"),
            _ => format!("{:.6e} m3/(mol*s)", kappa_fwd / c_ref),
        };
        let arrow = if reversible { "<=>" } else { "->" };
        let _ = write!(
            out,
            "  - {{id: r{}, stoich: {} {arrow} {}, rate: {{k: {k}",
            i + 1,
            side(&layout, &st.reactants),
            side(&layout, &st.products)
        );
        if let Some(kv) = k_eq {
            let unit = match dn {
                0 => "",
                -1 => " m3/mol",
                1 => " mol/m3",
                d => unreachable!("steps change the moles by −1, 0 or +1, not {d}"),
            };
            let _ = write!(out, ", K_eq: {kv:.12e}{unit}");
        }
        out.push_str("}}\n");
    }
    out.push_str("feed:\n");
    let _ = writeln!(out, "  T: {TEMPERATURE} K");
    if gas {
        let _ = writeln!(out, "  P: {} bar", GAS_PRESSURE / 1e5);
    }
    if !batch && !gas {
        let _ = writeln!(out, "  volumetric: {} L/s", LIQUID_V0 * 1e3);
    }
    let list: Vec<String> = (0..spec.fed)
        .map(|j| {
            let unit = if batch { "mol" } else { "mol/s" };
            format!("{}: {} {unit}", layout.name(j), amounts[j])
        })
        .collect();
    let key = if batch { "amounts" } else { "flows" };
    let _ = writeln!(out, "  {key}: {{{}}}", list.join(", "));
    out.push_str("reactor:\n");
    match (batch, gas) {
        (false, false) => {
            let _ = writeln!(
                out,
                "  type: pfr\n  volume: {:.12e} m3",
                SPACE_TIME * LIQUID_V0
            );
        }
        (false, true) => {
            // v0 = F_T0 R T0 / P0 (ideal gas), V = τ v0.
            let v0 = total * GAS_CONSTANT * TEMPERATURE / GAS_PRESSURE;
            let _ = writeln!(out, "  type: pfr\n  volume: {:.12e} m3", SPACE_TIME * v0);
        }
        (true, false) => {
            let _ = writeln!(out, "  type: batch\n  volume: 1 m3\n  time: {SPACE_TIME} s");
        }
        (true, true) => {
            // A gas charge fills V = N_T0 R T0 / P0 (ideal gas).
            let v = total * GAS_CONSTANT * TEMPERATURE / GAS_PRESSURE;
            let _ = writeln!(
                out,
                "  type: batch\n  volume: {v:.12e} m3\n  time: {SPACE_TIME} s"
            );
        }
    }
    let _ = writeln!(out, "key: {}", layout.name(0));
    let _ = writeln!(out, "desired: {}", layout.name(n - 1));
    Ok(out)
}

/// Round to 6 significant digits, so the written feed is the one used for C_ref.
fn round_sig(x: f64) -> f64 {
    format!("{x:.5e}").parse().unwrap_or(x)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{self, Severity};
    use crate::model::Reactor;

    fn spec(species: usize, reactions: usize, seed: u64) -> GeneratorSpec {
        GeneratorSpec {
            species,
            reactions,
            seed,
            fed: 3.min(species - 1).max(1),
            ..GeneratorSpec::default()
        }
    }

    fn errors(text: &str) -> Vec<String> {
        let net = crate::load_str(text, "generated", &[]).expect("generated study loads");
        analysis::check(&net)
            .findings
            .into_iter()
            .filter(|f| f.severity == Severity::Error)
            .map(|f| f.message)
            .collect()
    }

    #[test]
    fn generated_studies_load_and_check_clean() {
        for (n, r, seed) in [(2, 1, 1), (5, 8, 2), (20, 60, 3), (60, 180, 4)] {
            let text = generate_study(&spec(n, r, seed)).unwrap();
            assert_eq!(errors(&text), Vec::<String>::new(), "{n}/{r}:\n{text}");
        }
    }

    #[test]
    fn every_phase_and_reactor_loads_and_checks_clean() {
        for phase in [Phase::Liquid, Phase::Gas] {
            for reactor in [GeneratedReactor::Pfr, GeneratedReactor::Batch] {
                let s = GeneratorSpec {
                    species: 30,
                    reactions: 90,
                    seed: 7,
                    phase,
                    reactor,
                    reversible_fraction: 0.5,
                    fed: 2,
                };
                let text = generate_study(&s).unwrap();
                let net = crate::load_str(&text, "generated", &[]).unwrap();
                assert_eq!(net.phase, phase);
                assert_eq!(
                    matches!(net.reactor, Reactor::Batch { .. }),
                    reactor == GeneratedReactor::Batch
                );
                assert_eq!(errors(&text), Vec::<String>::new(), "{phase:?} {reactor:?}");
            }
        }
    }

    #[test]
    fn every_species_reachable_and_no_duplicates() {
        let text = generate_study(&spec(80, 240, 11)).unwrap();
        let net = crate::load_str(&text, "generated", &[]).unwrap();
        let c = analysis::check(&net);
        assert!(
            c.unreachable_species.is_empty(),
            "{:?}",
            c.unreachable_species
        );
        assert!(c.dead_reactions.is_empty(), "{:?}", c.dead_reactions);
        // A multiple of another step would show as a one-member dependent combination.
        assert!(c.dependent.iter().all(|d| d.combination.len() > 1));
        assert!(
            !c.findings.iter().any(|f| f.message.contains("duplicate")),
            "{:?}",
            c.findings
        );
        // Species count and the independent steps the single unit allows: N − 1 (the element
        // matrix of C_nH_2n has rank 1).
        assert_eq!(c.element_matrix.max_independent_reactions, Some(79));
    }

    #[test]
    fn counts_as_asked_and_reversible_share() {
        for (n, r) in [(100, 300), (1000, 3000)] {
            let t0 = std::time::Instant::now();
            let text = generate_study(&spec(n, r, 5)).unwrap();
            let took = t0.elapsed();
            // "well under a second" even in a debug build.
            assert!(took.as_secs_f64() < 1.0, "{n}/{r} took {took:?}");
            let net = crate::load_str(&text, "generated", &[]).unwrap();
            assert_eq!(net.species.len(), n);
            assert_eq!(net.reactions.len(), r);
            let rev = net.reactions.iter().filter(|x| x.reversible).count() as f64 / r as f64;
            // Binomial share 0.3 with sd √(0.21/r) ≤ 0.027: 5 sd.
            assert!((rev - 0.3).abs() < 0.14, "reversible share {rev}");
            let fed = net.feed.amounts.iter().filter(|a| **a > 0.0).count();
            assert_eq!(fed, 3);
        }
    }

    #[test]
    fn same_seed_same_text_other_seed_other_text() {
        let a = generate_study(&spec(50, 150, 42)).unwrap();
        let b = generate_study(&spec(50, 150, 42)).unwrap();
        let c = generate_study(&spec(50, 150, 43)).unwrap();
        assert_eq!(a, b);
        assert_ne!(a, c);
    }

    #[test]
    fn rate_constants_span_the_stated_range() {
        let text = generate_study(&spec(200, 600, 9)).unwrap();
        let net = crate::load_str(&text, "generated", &[]).unwrap();
        let c_ref = net.feed.total() / net.feed.volumetric;
        let mut lo = f64::INFINITY;
        let mut hi = 0.0_f64;
        for r in &net.reactions {
            let order: f64 = r.rate.orders.iter().map(|(_, a)| a).sum();
            // κ = k C_ref^(order − 1) is the pseudo-first-order constant; for a reversible
            // step the reverse one is κ_f / (K_c C_ref^(−Σν)) and the faster of the two is
            // the drawn κ.
            let kappa_f = r.rate.k_ref * c_ref.powf(order - 1.0);
            let fastest = match &r.rate.equilibrium {
                Some(eq) => {
                    let k_dimless = eq.k_ref * c_ref.powf(-r.mole_change());
                    kappa_f.max(kappa_f / k_dimless)
                }
                None => kappa_f,
            };
            assert!(
                fastest >= KAPPA_RANGE.0 * 0.999 && fastest <= KAPPA_RANGE.1 * 1.001,
                "{}: fastest κ = {fastest}",
                r.id
            );
            lo = lo.min(fastest);
            hi = hi.max(fastest);
        }
        // 600 log-uniform draws over 10 decades: the extremes fall within a decade of the ends.
        assert!(lo < 1e-2 && hi > 1e6, "κ in [{lo}, {hi}]");
        assert!(net.reactions.iter().any(|r| r.reactants.len() == 1));
        assert!(net.reactions.iter().any(|r| r.reactants.len() == 2));
        assert!(
            net.reactions
                .iter()
                .any(|r| r.reactants.len() == 1 && r.reactants[0].coefficient == 2.0)
        );
    }

    #[test]
    fn bad_specs_are_errors() {
        assert!(generate_study(&spec(1, 5, 1)).is_err());
        assert!(generate_study(&spec(100, 50, 1)).is_err());
        let mut s = spec(10, 20, 1);
        s.fed = 0;
        assert!(generate_study(&s).is_err());
        s.fed = 11;
        assert!(generate_study(&s).is_err());
        let mut s = spec(10, 20, 1);
        s.reversible_fraction = 1.5;
        assert!(generate_study(&s).is_err());
        // Three species of sizes 1, 2 allow only a few distinct steps.
        assert!(generate_study(&spec(3, 500, 1)).is_err());
    }
}
