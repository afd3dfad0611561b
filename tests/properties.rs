//! Property tests on generated networks.
//!
//! The networks are built from one monomer unit M = C2H4: species A_k = M_k (C_{2k}H_{4k},
//! k = 1..n) and isomers I_k of the same formula, with atom-balanced one-way reactions
//!
//! - combination   A_i + A_j -> A_(i+j)       (second order, k in m3/(mol s))
//! - scission      A_(i+j) -> A_i + A_j        (first order, k in 1/s)
//! - isomerisation A_k -> I_k                  (first order, k in 1/s)
//!
//! with random positive rate constants, run in a liquid PFR, CSTR or constant-volume batch.
//! Properties (all from the balance equations dy/dx = σ Σ_i ν_ij r_i and the element balance
//! Σ_j a_ej ν_ij = 0 of every reaction; common practice):
//!
//! 1. every element (C, H) is conserved along every reported profile point to 1e-9 relative;
//! 2. no species goes negative beyond the integration tolerance (10 atol + rtol F_T0);
//! 3. the rank of ν is unchanged by adding integer combinations of its reactions, which
//!    `analysis::check` then reports as dependent with a combination that reproduces them;
//! 4. at a CSTR solution, F0 − F + V Σ_i ν_ij r_i(F) (recomputed with `Balance::rhs`) is
//!    below the Newton tolerance.

mod common;

use proptest::prelude::*;
use proptest::test_runner::Config;
use rxnet::analysis;
use rxnet::reactor::Balance;
use rxnet::solve::{self, Points, SolveOptions};
use std::collections::BTreeMap;

#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    Pfr,
    Cstr,
    Batch,
}

#[derive(Debug, Clone)]
enum Rx {
    Combine { i: usize, j: usize, k: f64 },
    Split { i: usize, j: usize, k: f64 },
    Isomerise { n: usize, k: f64 },
}

#[derive(Debug, Clone)]
struct Spec {
    /// Largest oligomer A_n.
    n: usize,
    reactions: Vec<Rx>,
    /// Feed of A_1..A_n: mol/s (flow) or mol per m3 of vessel (batch), A_1 positive.
    feed: Vec<f64>,
    kind: Kind,
}

impl Spec {
    /// Oligomer sizes that have an isomer species.
    fn isomers(&self) -> Vec<usize> {
        let mut v: Vec<usize> = self
            .reactions
            .iter()
            .filter_map(|r| match r {
                Rx::Isomerise { n, .. } => Some(*n),
                _ => None,
            })
            .collect();
        v.sort_unstable();
        v.dedup();
        v
    }

    /// Species names with their monomer count (C_{2m}H_{4m}).
    fn species(&self) -> Vec<(String, usize)> {
        let mut s: Vec<(String, usize)> = (1..=self.n).map(|k| (format!("A{k}"), k)).collect();
        s.extend(self.isomers().into_iter().map(|k| (format!("I{k}"), k)));
        s
    }

    /// Net integer coefficients of each reaction, by species name.
    fn nets(&self) -> Vec<BTreeMap<String, i64>> {
        self.reactions
            .iter()
            .map(|r| {
                let mut m = BTreeMap::new();
                let mut add = |s: String, c: i64| *m.entry(s).or_insert(0) += c;
                match *r {
                    Rx::Combine { i, j, .. } => {
                        add(format!("A{i}"), -1);
                        add(format!("A{j}"), -1);
                        add(format!("A{}", i + j), 1);
                    }
                    Rx::Split { i, j, .. } => {
                        add(format!("A{}", i + j), -1);
                        add(format!("A{i}"), 1);
                        add(format!("A{j}"), 1);
                    }
                    Rx::Isomerise { n, .. } => {
                        add(format!("A{n}"), -1);
                        add(format!("I{n}"), 1);
                    }
                }
                m.retain(|_, c| *c != 0);
                m
            })
            .collect()
    }

    /// The study file; `extra` are further reactions (already formatted list items).
    fn yaml(&self, extra: &str) -> String {
        let mut y = String::from(
            "name: generated oligomer network (demo values)\nphase: liquid\nspecies:\n",
        );
        for (name, m) in self.species() {
            y.push_str(&format!("  {name}: {{formula: C{}H{}}}\n", 2 * m, 4 * m));
        }
        y.push_str("reactions:\n");
        for (n, r) in self.reactions.iter().enumerate() {
            let (eq, k) = match *r {
                Rx::Combine { i, j, k } => (
                    format!("A{i} + A{j} -> A{}", i + j),
                    format!("{k:e} m3/(mol*s)"),
                ),
                Rx::Split { i, j, k } => {
                    (format!("A{} -> A{i} + A{j}", i + j), format!("{k:e} 1/s"))
                }
                Rx::Isomerise { n, k } => (format!("A{n} -> I{n}"), format!("{k:e} 1/s")),
            };
            y.push_str(&format!(
                "  - {{id: r{n}, stoich: {eq}, rate: {{k: {k}}}}}\n"
            ));
        }
        y.push_str(extra);
        let amounts = |unit: &str| {
            self.feed
                .iter()
                .enumerate()
                .filter(|(_, f)| **f > 0.0)
                .map(|(k, f)| format!("A{}: {f:e} {unit}", k + 1))
                .collect::<Vec<_>>()
                .join(", ")
        };
        match self.kind {
            Kind::Batch => {
                // 1 m3 vessel: the amounts in mol are also the concentrations in mol/m3.
                y.push_str(&format!(
                    "feed:\n  T: 330 K\n  amounts: {{{}}}\nreactor:\n  type: batch\n  volume: 1 m3\n  time: 1000 s\n",
                    amounts("mol")
                ));
            }
            Kind::Pfr | Kind::Cstr => {
                // v0 = 1 L/s, so F = 1 mol/s is C = 1000 mol/m3; τ = V/v0 = 1000 s.
                y.push_str(&format!(
                    "feed:\n  T: 330 K\n  volumetric: 1 L/s\n  flows: {{{}}}\nreactor:\n  type: {}\n  volume: 1 m3\n",
                    amounts("mol/s"),
                    if self.kind == Kind::Pfr { "pfr" } else { "cstr" }
                ));
            }
        }
        y.push_str("key: A1\n");
        y
    }
}

/// One reaction from raw draws: which kind, two indices and a rate constant scale in (0, 1).
fn reaction(n: usize, kind: u8, a: usize, b: usize, scale: f64) -> Rx {
    // Second order: k C ≈ 1e-7..1e-5 m3/(mol s) × 1000 mol/m3 = 1e-4..1e-2 1/s; with τ = 1000 s
    // the Damköhler numbers run from 0.1 to 10. First order: k = 1e-4..1e-2 1/s likewise.
    let k2 = 10f64.powf(-7.0 + 2.0 * scale);
    let k1 = 10f64.powf(-4.0 + 2.0 * scale);
    match kind % 3 {
        0 => {
            let i = 1 + a % (n - 1);
            let j = 1 + b % (n - i);
            Rx::Combine { i, j, k: k2 }
        }
        1 => {
            let i = 1 + a % (n - 1);
            let j = 1 + b % (n - i);
            Rx::Split { i, j, k: k1 }
        }
        _ => Rx::Isomerise {
            n: 1 + a % n,
            k: k1,
        },
    }
}

fn spec() -> impl Strategy<Value = Spec> {
    (2usize..=5)
        .prop_flat_map(|n| {
            (
                Just(n),
                prop::collection::vec((0u8..3, 0usize..16, 0usize..16, 0.0f64..1.0), 1..=6),
                prop::collection::vec(prop::option::of(0.1f64..2.0), n),
                0.5f64..2.0,
                prop_oneof![Just(Kind::Pfr), Just(Kind::Cstr), Just(Kind::Batch)],
            )
        })
        .prop_map(|(n, raw, feed_opt, a1, kind)| {
            let reactions = raw
                .into_iter()
                .map(|(t, a, b, s)| reaction(n, t, a, b, s))
                .collect();
            let mut feed: Vec<f64> = feed_opt.into_iter().map(|f| f.unwrap_or(0.0)).collect();
            feed[0] = a1;
            // Batch: 1000 mol in 1 m3 is 1 mol/L, as for the flow reactors.
            if kind == Kind::Batch {
                feed.iter_mut().for_each(|f| *f *= 1000.0);
            }
            Spec {
                n,
                reactions,
                feed,
                kind,
            }
        })
}

fn config(cases: u32) -> Config {
    Config {
        cases,
        // Keep the tree clean: a failing case is printed, not written to a file.
        failure_persistence: None,
        ..Config::default()
    }
}

/// Carbon and hydrogen held by state y (species in file order), from the formulas.
fn elements(net: &rxnet::Network, y: &[f64]) -> (f64, f64) {
    common::carbon_hydrogen(net, y)
}

fn load(spec: &Spec, extra: &str) -> rxnet::Network {
    let text = spec.yaml(extra);
    rxnet::load_str(&text, "generated.yaml", &[])
        .unwrap_or_else(|e| panic!("generated study does not load: {e}\n{text}"))
}

/// Rank of an integer matrix by Gaussian elimination with partial pivoting (entries are
/// small integers, so f64 with a relative threshold is exact enough).
fn rank(m: Vec<Vec<f64>>) -> usize {
    common::float_rank(m, 1e-9)
}

proptest! {
    #![proptest_config(config(256))]

    /// Properties 1, 2 and 4 on one generated network and reactor.
    #[test]
    fn balances_hold_along_every_profile(spec in spec()) {
        let net = load(&spec, "");
        let opts = SolveOptions { points: Points::Even(21), ..SolveOptions::default() };
        let sim = solve::simulate(&net, &opts)
            .unwrap_or_else(|e| panic!("solve failed: {e}\n{}", spec.yaml("")));
        let (rtol, atol) = solve::tolerances(&net, &opts);
        let total0 = net.feed.total();
        let (c0, h0) = elements(&net, &net.feed.amounts);

        // 1. Element balances at every reported point (the BDF Newton step keeps linear
        // invariants of the rates, so only rounding remains).
        for (x, y) in sim.x.iter().zip(&sim.states) {
            let (c, h) = elements(&net, y);
            prop_assert!(((c - c0) / c0).abs() <= 1e-9, "C at x = {x}: {c} vs {c0}");
            prop_assert!(((h - h0) / h0).abs() <= 1e-9, "H at x = {x}: {h} vs {h0}");
        }

        // 2. No species below −(10 atol + rtol F_T0), far inside the solver's own cut-off.
        let floor = -(10.0 * atol + rtol * total0);
        for (x, y) in sim.x.iter().zip(&sim.states) {
            for (s, v) in net.species.iter().zip(y) {
                prop_assert!(*v >= floor, "{} = {v:e} at x = {x} (floor {floor:e})", s.name);
            }
        }

        // 4. CSTR: recompute the steady-state residual F0 − F + V Σ ν r(F) with the balance.
        if let rxnet::model::Reactor::Cstr { volume } = net.reactor {
            let balance = Balance::new(&net).expect("no Ergun bed here");
            let f = sim.outlet();
            let mut dfdv = vec![0.0; balance.dim()];
            balance.rhs(f, &mut dfdv);
            let residual = net
                .feed
                .amounts
                .iter()
                .zip(f)
                .zip(&dfdv)
                .map(|((f0, f), g)| (f0 - f + volume * g).abs())
                .fold(0.0, f64::max);
            // The Newton tolerance in force (src/solve/mod.rs): min(1e-3 rtol F_T0, atol),
            // at least 1e-14 F_T0, with 1e-12 of the flow scale for rounding of V Σ ν r.
            // Newton also stops when its full step δ moves no flow by more than
            // tol + 1e-12 |F_j| (src/solve/newton.rs); the residual left is then J δ with
            // J = −I + V ∂f/∂F, so at most ‖J‖∞ (tol + 1e-12 max |F_j|).
            let tol = (1e-3 * rtol * total0).max(1e-14 * total0).min(atol.max(1e-14 * total0));
            let scale = dfdv.iter().map(|g| (volume * g).abs()).fold(total0, f64::max);
            let n = f.len();
            let jm = solve::newton::residual_jacobian(&balance, volume, f);
            let j_norm = (0..n)
                .map(|r| (0..n).map(|c| jm[(r, c)].abs()).sum::<f64>())
                .fold(0.0, f64::max);
            let f_max = f.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let step_bound = j_norm * (tol + 1e-12 * f_max);
            prop_assert!(
                residual <= tol + 1e-12 * scale + step_bound,
                "CSTR residual {residual:e} > {tol:e} (reported {:?})",
                sim.stats.residual
            );
        }
    }
}

proptest! {
    #![proptest_config(config(256))]

    /// Property 3: adding integer combinations of the reactions keeps the rank, and check
    /// reports each added reaction as dependent with a combination that reproduces it.
    #[test]
    fn combinations_of_reactions_are_dependent(
        spec in spec(),
        coefs in prop::collection::vec(prop::collection::vec(-3i64..=3, 6), 1..=3),
    ) {
        let base = load(&spec, "");
        let base_check = analysis::check(&base);
        let names: Vec<String> = base.species.iter().map(|s| s.name.clone()).collect();
        let nets = spec.nets();

        // Independent rank of ν (species x reactions) from the integer coefficients.
        let matrix: Vec<Vec<f64>> = names
            .iter()
            .map(|s| nets.iter().map(|m| *m.get(s).unwrap_or(&0) as f64).collect())
            .collect();
        prop_assert_eq!(base_check.rank, rank(matrix));

        // New reactions ν_new = Σ c_i ν_i (skipping those in which everything cancels).
        let mut extra = String::new();
        let mut added: Vec<(String, BTreeMap<String, i64>)> = Vec::new();
        for (n, c) in coefs.iter().enumerate() {
            let mut comb: BTreeMap<String, i64> = BTreeMap::new();
            for (i, m) in nets.iter().enumerate() {
                for (s, v) in m {
                    *comb.entry(s.clone()).or_insert(0) += c[i % c.len()] * v;
                }
            }
            comb.retain(|_, v| *v != 0);
            if comb.is_empty() {
                continue;
            }
            let side = |neg: bool| {
                comb.iter()
                    .filter(|(_, v)| (**v < 0) == neg)
                    .map(|(s, v)| format!("{} {s}", v.abs()))
                    .collect::<Vec<_>>()
                    .join(" + ")
            };
            let (lhs, rhs) = (side(true), side(false));
            // A combination with an empty side (everything made from nothing) is not an
            // equation; it cannot arise from mass-conserving reactions, but skip it safely.
            if lhs.is_empty() || rhs.is_empty() {
                continue;
            }
            let first = comb.iter().find(|(_, v)| **v < 0).map(|(s, _)| s.clone()).expect("lhs");
            let id = format!("combo{n}");
            extra.push_str(&format!(
                "  - {{id: {id}, stoich: {lhs} -> {rhs}, rate: {{k: 1e-4 1/s, orders: {{{first}: 1}}}}}}\n"
            ));
            added.push((id, comb));
        }
        let net = load(&spec, &extra);
        let ch = analysis::check(&net);
        prop_assert_eq!(ch.rank, base_check.rank, "rank changed by combinations:\n{}", spec.yaml(&extra));
        prop_assert_eq!(ch.reactions, spec.reactions.len() + added.len());
        for (id, comb) in &added {
            let d = ch.dependent.iter().find(|d| &d.reaction == id);
            prop_assert!(d.is_some(), "`{id}` not reported dependent:\n{}", spec.yaml(&extra));
            let d = d.expect("checked");
            // Σ c_i ν_i over the reported combination reproduces ν of the added reaction.
            for s in &names {
                let got: f64 = d
                    .combination
                    .iter()
                    .map(|(rid, c)| {
                        let i = net.reaction_index(rid).expect("reported id exists");
                        c * net.reactions[i].nu(net.species_index(s).expect("species"))
                    })
                    .sum();
                let want = *comb.get(s).unwrap_or(&0) as f64;
                prop_assert!((got - want).abs() <= 1e-9 * want.abs().max(1.0),
                    "`{id}`, species {s}: combination gives {got}, reaction has {want}");
            }
        }
        // Added reactions are atom-balanced (combinations of balanced ones): no error findings
        // about atoms.
        prop_assert!(ch.atom_balance.iter().all(|b| b.balanced == Some(true)));
    }
}

/// The energy balance's closure on a generated network (property 5): with species enthalpies
/// H_j(T) = H_f,j + Cp_j (T − 298.15) (constant Cp; the reactions' ΔH follow from them by
/// Hess's and Kirchhoff's laws) and Arrhenius rates,
///
/// - a liquid PFR with a co-current coolant stream keeps Σ_j F_j H_j(T) + ṁ_c c_p,c T_a
///   constant along the tube (what the stream loses the coolant gains);
/// - an adiabatic liquid CSTR's outlet carries the enthalpy of its feed, Σ_j F_j H_j(T) =
///   Σ_j F_j0 H_j(T0), at every steady state it reports;
/// - an adiabatic liquid batch keeps Σ_j N_j H_j(T) constant, and an adiabatic constant-volume
///   gas batch keeps Σ_j N_j (H_j(T) − R T) (the internal energy of a closed vessel)
///
/// (first law for open and closed systems; Fogler ch. 11, from memory). Checked at every
/// profile point to 1e-8 of the sensible-enthalpy scale Σ_j y_j0 Cp_j T0, with rtol 1e-11.
mod energy_closure {
    use super::*;

    /// (Cp in J/(mol K), H_f in kJ/mol) per species, and which reactor.
    fn heat_spec() -> impl Strategy<Value = (Spec, Vec<(f64, f64)>, u8)> {
        (
            spec(),
            prop::collection::vec((60.0f64..200.0, -10.0f64..10.0), 10),
            0u8..3,
        )
    }

    fn study(spec: &Spec, data: &[(f64, f64)], which: u8) -> String {
        let base = spec.yaml("");
        let mut out = String::new();
        let mut k = 0;
        for line in base.lines() {
            let mut l = line.to_string();
            if let Some(rest) = l.strip_suffix("}")
                && l.trim_start().starts_with(['A', 'I'])
                && l.contains("formula")
            {
                let (cp, hf) = data[k % data.len()];
                k += 1;
                l = format!("{rest}, cp: {cp} J/(mol*K), H_f: {hf} kJ/mol}}");
            }
            if l.contains("rate: {k: ") {
                l = l.replace("}}", ", Ea: 25 kJ/mol, T_ref: 330 K}}");
            }
            out.push_str(&l);
            out.push('\n');
        }
        let heat = match which {
            0 => {
                "  heat: {UA: 2 kW/(m3*K), coolant: {T_in: 320 K, mass_flow: 0.2 kg/s, cp: 4 kJ/(kg*K), direction: co_current}}\n"
            }
            _ => "  heat: adiabatic\n",
        };
        let out = match which {
            0 => out
                .replace("  type: batch\n", "  type: pfr\n")
                .replace("  type: cstr\n", "  type: pfr\n"),
            _ => out,
        };
        let mut out = out.replace("reactor:\n", &format!("reactor:\n{heat}"));
        if which == 0 && spec.kind == Kind::Batch {
            // A batch spec turned into a tube: flows from the charge (1 m3 vessel, v0 = 1 L/s).
            out = out
                .replace("  time: 1000 s\n", "")
                .replace("  amounts: {", "  volumetric: 1 L/s\n  flows: {")
                .replace(" mol,", " mol/s,")
                .replace(" mol}", " mol/s}");
        }
        if which == 2 {
            // Gas, constant volume: 1000 mol per m3 at 330 K is 27.4 bar.
            out = out.replace("phase: liquid", "phase: gas");
            if spec.kind != Kind::Batch {
                return String::new();
            }
            let n: f64 = spec.feed.iter().sum();
            let p = n * 8.314_462_618 * 330.0 / 1.0;
            out = out.replace("  T: 330 K\n", &format!("  T: 330 K\n  P: {p} Pa\n"));
        }
        out.push_str("solver: {rtol: 1e-11}\n");
        out
    }

    proptest! {
        #![proptest_config(config(96))]

        #[test]
        fn enthalpy_is_conserved_along_every_profile((spec, data, which) in heat_spec()) {
            let text = study(&spec, &data, which);
            prop_assume!(!text.is_empty());
            let net = rxnet::load_str(&text, "generated.yaml", &[])
                .unwrap_or_else(|e| panic!("generated study does not load: {e}\n{text}"));
            let opts = SolveOptions { points: Points::Even(21), ..SolveOptions::default() };
            let sim = match solve::simulate(&net, &opts) {
                Ok(s) => s,
                // A strongly endothermic draw may cool a batch towards absolute zero: refused
                // as unphysical, which is the rule, not a closure failure.
                Err(solve::SolveError::Unphysical(_)) => return Ok(()),
                Err(e) => panic!("solve failed: {e}\n{text}"),
            };
            let r = 8.314_462_618_153_24;
            let u = if which == 2 { 1.0 } else { 0.0 };
            let t = sim.temperature.as_ref().expect("energy balance");
            let h = |j: usize, tk: f64| {
                let (cp, hf) = (
                    match net.species[j].thermo.cp { Some(rxnet::thermo::HeatCapacity::Constant(c)) => c, _ => unreachable!() },
                    net.species[j].thermo.h_f.expect("H_f given"),
                );
                hf + cp * (tk - 298.15) - u * r * tk
            };
            let coolant_capacity = 0.2 * 4000.0;
            let total = |k: usize| {
                let mut s: f64 = sim.states[k].iter().enumerate().map(|(j, y)| y * h(j, t[k])).sum();
                if let Some(ta) = &sim.coolant {
                    s += coolant_capacity * ta[k];
                }
                s
            };
            let t0 = net.feed.temperature;
            let scale: f64 = net.feed.amounts.iter().enumerate()
                .map(|(j, y)| y * match net.species[j].thermo.cp { Some(rxnet::thermo::HeatCapacity::Constant(c)) => c, _ => 0.0 } * t0)
                .sum();
            // What enters: the feed at T0 (and the coolant at its inlet temperature).
            let e0: f64 = net.feed.amounts.iter().enumerate().map(|(j, y)| y * h(j, t0)).sum::<f64>()
                + if sim.coolant.is_some() { coolant_capacity * 320.0 } else { 0.0 };
            // Every steady state of a CSTR, not only the one shown.
            if let Some(st) = &sim.steady {
                for s in &st.states {
                    let tk = s.temperature.expect("a non-isothermal state has its T");
                    let e: f64 = s.flows.iter().enumerate().map(|(j, y)| y * h(j, tk)).sum();
                    prop_assert!((e - e0).abs() <= 1e-8 * scale, "CSTR state at {tk} K: {e} vs {e0}\n{text}");
                }
            }
            for (k, (x, tk)) in sim.x.iter().zip(t).enumerate() {
                let e = total(k);
                prop_assert!(
                    (e - e0).abs() <= 1e-8 * scale,
                    "enthalpy at x = {x}: {e} vs {e0} (scale {scale}, T = {tk})\n{text}"
                );
            }
        }
    }
}
