//! Analysis of a loaded network: stoichiometry, atom balances, the reaction graph and
//! thermodynamic consistency, gathered into one [`Check`] with its findings.

pub mod atoms;
pub mod graph;
pub mod stoich;
pub mod table;
pub mod thermo;

use crate::exact::to_f64;
use crate::model::Network;
use serde::Serialize;
use std::collections::BTreeMap;

/// How serious a finding is: errors make `rxnet check` exit 1.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    Info,
    Warning,
    Error,
}

#[derive(Debug, Clone, Serialize)]
pub struct Finding {
    pub severity: Severity,
    pub message: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct DependentOut {
    pub reaction: String,
    /// Independent reaction id -> coefficient c_i in ν_dep = Σ c_i ν_i.
    pub combination: BTreeMap<String, f64>,
    /// The same as text, exact ("direct = reform + shift").
    pub text: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct AtomBalanceOut {
    pub reaction: String,
    /// Null when a species of the reaction has no formula.
    pub balanced: Option<bool>,
    pub imbalance: BTreeMap<String, f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct PairOut {
    pub reactions: [String; 2],
    pub relation: &'static str,
    pub via: Vec<String>,
    pub shared_reactants: Vec<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct CycleOut {
    pub reaction: String,
    /// K.
    pub temperature: f64,
    pub k_given: f64,
    pub k_combined: f64,
    pub consistent: bool,
}

/// A reaction's own `dH` and `K_eq` against what its species data give, at its T_ref.
#[derive(Debug, Clone, Serialize)]
pub struct SpeciesDataOut {
    pub reaction: String,
    /// K.
    pub temperature: f64,
    /// J/mol, when both are known.
    pub dh_given: Option<f64>,
    pub dh_species: Option<f64>,
    /// K_c in SI, when both are known.
    pub k_given: Option<f64>,
    pub k_species: Option<f64>,
    pub consistent: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct ElementsOut {
    pub elements: Vec<String>,
    pub rank: usize,
    /// species − rank(elements), when every species has a formula.
    pub max_independent_reactions: Option<usize>,
}

/// Everything `rxnet check` reports, ready for text or JSON.
#[derive(Debug, Clone, Serialize)]
pub struct Check {
    pub name: String,
    pub species: usize,
    pub reactions: usize,
    pub rank: usize,
    pub independent: Vec<String>,
    pub dependent: Vec<DependentOut>,
    pub atom_balance: Vec<AtomBalanceOut>,
    pub element_matrix: ElementsOut,
    /// Each law as species -> integer coefficient; Σ coef·N_j is constant.
    pub conservation_laws: Vec<BTreeMap<String, String>>,
    /// Related pairs, the first `graph::MAX_LISTED_PAIRS` of them.
    pub classification: Vec<PairOut>,
    /// How many pairs of reactions are related in all (`classification` may list fewer).
    pub related_pairs: usize,
    pub intermediates: Vec<String>,
    pub unreachable_species: Vec<String>,
    pub dead_reactions: Vec<String>,
    pub equilibrium_cycles: Vec<CycleOut>,
    /// Reactions whose `dH` or `K_eq` can be compared with species data.
    pub species_data: Vec<SpeciesDataOut>,
    pub findings: Vec<Finding>,
}

impl Check {
    pub fn has_errors(&self) -> bool {
        self.findings.iter().any(|f| f.severity == Severity::Error)
    }
}

fn fmt_coef(c: &crate::exact::Q) -> String {
    if c.is_integer() {
        c.to_integer().to_string()
    } else {
        format!("{}/{}", c.numer(), c.denom())
    }
}

fn combination_text(net: &Network, d: &stoich::Dependent) -> String {
    use num_traits::{One, Signed};
    let mut s = format!("{} =", net.reactions[d.reaction].id);
    for (n, (i, c)) in d.combination.iter().enumerate() {
        let id = &net.reactions[*i].id;
        let mag = c.abs();
        let sign = if c.is_negative() { "−" } else { "+" };
        let body = if mag.is_one() {
            id.clone()
        } else {
            format!("{} {id}", fmt_coef(&mag))
        };
        if n == 0 {
            if c.is_negative() {
                s.push_str(&format!(" −{body}"));
            } else {
                s.push_str(&format!(" {body}"));
            }
        } else {
            s.push_str(&format!(" {sign} {body}"));
        }
    }
    s
}

/// Run every analysis and gather the findings.
pub fn check(net: &Network) -> Check {
    let st = stoich::analyse(net);
    let bal = atoms::balances(net);
    let el = atoms::element_matrix(net);
    let gr = graph::analyse(net);
    let cycles = thermo::check(net, &st.dependent);
    let from_species = thermo::species_data(net);
    let sp = |j: usize| net.species[j].name.clone();
    let rx = |i: usize| net.reactions[i].id.clone();
    let mut findings: Vec<Finding> = Vec::new();
    let mut add = |severity, message: String| findings.push(Finding { severity, message });
    for note in &net.notes {
        add(Severity::Info, note.clone());
    }

    for b in &bal {
        let r = &net.reactions[b.reaction];
        if !b.checked {
            let names: Vec<String> = b.missing_formula.iter().map(|&j| sp(j)).collect();
            add(
                Severity::Info,
                format!(
                    "atom balance of `{}` not checked: no formula for {}",
                    r.id,
                    names.join(", ")
                ),
            );
        } else if !b.balanced {
            let parts: Vec<String> = b
                .imbalance
                .iter()
                .map(|(e, n)| format!("{e} {n:+}"))
                .collect();
            add(
                Severity::Error,
                format!(
                    "`{}` ({}) is not atom-balanced: {} (products minus reactants)",
                    r.id,
                    r.equation,
                    parts.join(", ")
                ),
            );
        }
    }
    for d in &st.dependent {
        if d.combination.len() == 1 {
            let (i, c) = &d.combination[0];
            let what = if c == &num_traits::One::one() {
                "the same reaction as".to_string()
            } else {
                format!("{} times", fmt_coef(c))
            };
            add(
                Severity::Warning,
                format!(
                    "duplicate reaction: `{}` is {what} `{}`; both rates act on the species",
                    rx(d.reaction),
                    rx(*i)
                ),
            );
        }
    }
    if let Some(bound) = el.bound
        && st.rank > bound
    {
        add(
            Severity::Error,
            format!(
                "{} independent reactions, but the elements allow at most {bound} (species − rank of the element matrix)",
                st.rank
            ),
        );
    }
    for c in &cycles {
        if !c.consistent {
            let d = st
                .dependent
                .iter()
                .find(|d| d.reaction == c.reaction)
                .expect("checked");
            add(
                Severity::Error,
                format!(
                    "equilibrium constants disagree around a cycle (Wegscheider): {} requires K_{} = {:.6e} at {:.2} K from the others, but the file gives {:.6e}",
                    combination_text(net, d),
                    rx(c.reaction),
                    c.k_combined,
                    c.temperature,
                    c.k_given
                ),
            );
        }
        if let Some((given, combined)) = c.dh
            && (given - combined).abs() > 1e-6 * given.abs().max(combined.abs()).max(1.0)
        {
            add(
                Severity::Warning,
                format!(
                    "heats of reaction disagree with Hess's law for `{}`: given {:.6e} J/mol, combination gives {:.6e} J/mol (a missing dH counts as 0); the K's can then agree at one temperature only",
                    rx(c.reaction),
                    given,
                    combined
                ),
            );
        }
    }
    for c in &from_species {
        let r = &net.reactions[c.reaction];
        if let Some((given, species)) = c.k
            && !c.k_consistent()
        {
            add(
                Severity::Error,
                format!(
                    "`{}`: K_eq = {:.6e} given at {:.2} K, but the species data give {:.6e} \
                     (ΔG° = ΔH° − TΔS°; they must agree within {} relative)",
                    r.id,
                    given,
                    c.temperature,
                    species,
                    thermo::K_SPECIES_TOLERANCE
                ),
            );
        }
        if let Some((given, species)) = c.dh
            && !c.dh_consistent()
        {
            add(
                Severity::Warning,
                format!(
                    "`{}`: dH = {:.4} kJ/mol given at {:.2} K, but the species data give {:.4} \
                     kJ/mol (Kirchhoff from the enthalpies of formation; they should agree \
                     within {} kJ/mol); rxnet uses the given dH",
                    r.id,
                    given / 1e3,
                    c.temperature,
                    species / 1e3,
                    thermo::DH_SPECIES_TOLERANCE / 1e3
                ),
            );
        }
    }
    // Species usage.
    for (j, s) in net.species.iter().enumerate() {
        let in_any = net
            .reactions
            .iter()
            .any(|r| r.has_reactant(j) || r.has_product(j));
        let fed = net.feed.amounts[j] > 0.0 || dosed(net, j);
        if !in_any && !fed {
            add(
                Severity::Warning,
                format!(
                    "species `{}` is in no reaction and not fed: it plays no part",
                    s.name
                ),
            );
        } else if !in_any && fed {
            add(
                Severity::Info,
                format!(
                    "species `{}` is fed and in no reaction: treated as an inert",
                    s.name
                ),
            );
        } else if fed && !net.reactions.iter().any(|r| r.nu(j) < 0.0) {
            add(
                Severity::Info,
                format!(
                    "fed species `{}` is consumed by no reaction (only made, or a catalyst)",
                    s.name
                ),
            );
        }
    }
    let key = net.key;
    if !net.reactions.iter().any(|r| r.nu(key) < 0.0) {
        add(
            Severity::Error,
            format!(
                "key species `{}` is a net reactant of no reaction, so its conversion means nothing",
                sp(key)
            ),
        );
    }
    if net.feed.amounts[key] <= 0.0 && !dosed(net, key) {
        add(
            Severity::Error,
            format!(
                "key species `{}` is not fed: conversion (F_A0 − F_A)/F_A0 is undefined",
                sp(key)
            ),
        );
    }
    if let Some(d) = net.desired
        && !net.reactions.iter().any(|r| r.nu(d) > 0.0)
    {
        add(
            Severity::Error,
            format!("desired product `{}` is made by no reaction", sp(d)),
        );
    }
    for &j in &gr.unreachable_species {
        add(
            Severity::Warning,
            format!("species `{}` can never form from this feed", sp(j)),
        );
    }
    for &i in &gr.dead_reactions {
        add(
            Severity::Warning,
            format!("reaction `{}` can never run from this feed", rx(i)),
        );
    }
    for r in &net.reactions {
        if r.rate.k_ref == 0.0 {
            add(
                Severity::Warning,
                format!("reaction `{}` has k = 0: it never runs", r.id),
            );
        }
    }
    if net.reactions.iter().any(|r| r.dh.is_some_and(|h| h < 0.0)) {
        add(
            Severity::Info,
            if net.heat.balance().is_some() {
                format!(
                    "exothermic reactions present: the {} energy balance gives screening temperatures (hot spot, adiabatic rise); \
                     assess thermal runaway, decomposition and pressure relief with a process-safety review under your local codes",
                    net.heat.name()
                )
            } else {
                "exothermic reactions present: this study is isothermal, which assumes the heat is removed (set `reactor.heat` for an energy balance); \
                 assess thermal runaway and pressure relief with a process-safety review under your local codes"
                    .to_string()
            },
        );
    }
    findings.sort_by_key(|f| std::cmp::Reverse(f.severity));

    Check {
        name: net.name.clone(),
        species: net.species.len(),
        reactions: net.reactions.len(),
        rank: st.rank,
        independent: st.independent.iter().map(|&i| rx(i)).collect(),
        dependent: st
            .dependent
            .iter()
            .map(|d| DependentOut {
                reaction: rx(d.reaction),
                combination: d
                    .combination
                    .iter()
                    .map(|(i, c)| (rx(*i), to_f64(c)))
                    .collect(),
                text: combination_text(net, d),
            })
            .collect(),
        atom_balance: bal
            .iter()
            .map(|b| AtomBalanceOut {
                reaction: rx(b.reaction),
                balanced: b.checked.then_some(b.balanced),
                imbalance: b.imbalance.clone(),
            })
            .collect(),
        element_matrix: ElementsOut {
            elements: el.elements.clone(),
            rank: el.rank,
            max_independent_reactions: el.bound,
        },
        conservation_laws: st
            .conservation_laws
            .iter()
            .map(|v| v.iter().map(|(j, c)| (sp(*j), c.to_string())).collect())
            .collect(),
        classification: gr
            .pairs
            .iter()
            .map(|p| PairOut {
                reactions: [rx(p.first), rx(p.second)],
                relation: p.relation.as_str(),
                via: p.via.iter().map(|&j| sp(j)).collect(),
                shared_reactants: p.shared.iter().map(|&j| sp(j)).collect(),
            })
            .collect(),
        related_pairs: gr.pair_count,
        intermediates: gr.intermediates.iter().map(|&j| sp(j)).collect(),
        unreachable_species: gr.unreachable_species.iter().map(|&j| sp(j)).collect(),
        dead_reactions: gr.dead_reactions.iter().map(|&i| rx(i)).collect(),
        equilibrium_cycles: cycles
            .iter()
            .map(|c| CycleOut {
                reaction: rx(c.reaction),
                temperature: c.temperature,
                k_given: c.k_given,
                k_combined: c.k_combined,
                consistent: c.consistent,
            })
            .collect(),
        species_data: from_species
            .iter()
            .map(|c| SpeciesDataOut {
                reaction: rx(c.reaction),
                temperature: c.temperature,
                dh_given: c.dh.map(|d| d.0),
                dh_species: c.dh.map(|d| d.1),
                k_given: c.k.map(|k| k.0),
                k_species: c.k.map(|k| k.1),
                consistent: c.dh_consistent() && c.k_consistent(),
            })
            .collect(),
        findings,
    }
}

/// Whether species j is dosed into a semibatch (it is fed, over time).
fn dosed(net: &Network, j: usize) -> bool {
    net.contacting
        .dosing
        .iter()
        .any(|d| d.concentrations[j] > 0.0)
}
