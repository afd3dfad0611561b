//! Analysis of a loaded network: stoichiometry, atom balances, the reaction graph and
//! thermodynamic consistency, gathered into one [`Check`] with its findings.

pub mod atoms;
pub mod graph;
pub mod stoich;
pub mod table;
pub mod thermo;

use crate::exact::Terms;
use crate::model::Network;
use serde::Serialize;
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::sync::Arc;

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
    pub combination: Combination,
    /// The same as text, exact ("direct = reform + shift").
    pub text: String,
}

/// Reaction id -> coefficient, in id order: the exact terms with the reaction ids shared by
/// every combination of a check rather than copied into each (a large network has millions of
/// terms). Written as a JSON object of f64s, the same as a `BTreeMap<String, f64>`.
#[derive(Debug, Clone)]
pub struct Combination {
    ids: Arc<[String]>,
    /// Sorted by the reaction's id.
    terms: Terms,
}

impl Combination {
    /// `place[i]` is reaction i's place among the ids in sorted order.
    fn new(ids: &Arc<[String]>, place: &[u32], mut terms: Terms) -> Self {
        terms.sort_by_column_key(|i| place[i]);
        Combination {
            ids: ids.clone(),
            terms,
        }
    }

    /// (reaction id, coefficient) in id order.
    pub fn iter(&self) -> impl Iterator<Item = (&String, f64)> {
        self.terms.iter().map(|(i, c)| (&self.ids[i], c.to_f64()))
    }

    pub fn len(&self) -> usize {
        self.terms.len()
    }

    pub fn is_empty(&self) -> bool {
        self.terms.is_empty()
    }

    /// The coefficient of the reaction with this id, if it is in the combination.
    pub fn get(&self, id: &str) -> Option<f64> {
        self.iter().find(|(i, _)| i.as_str() == id).map(|(_, c)| c)
    }
}

impl Serialize for Combination {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_map(self.iter())
    }
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

/// The dependent reaction and its combination as text: "direct = reform + 2 shift − 1/2 r3".
fn combination_text(net: &Network, d: &stoich::Dependent) -> String {
    let mut s = String::with_capacity(16 + 12 * d.combination.len());
    s.push_str(&net.reactions[d.reaction].id);
    s.push_str(" =");
    for (n, (i, c)) in d.combination.iter().enumerate() {
        let id = &net.reactions[i].id;
        let sign = match (n == 0, c.is_negative()) {
            (true, true) => " −",
            (true, false) => " ",
            (false, true) => " − ",
            (false, false) => " + ",
        };
        s.push_str(sign);
        let mag = c.abs();
        if !mag.is_one() {
            let _ = write!(s, "{mag} ");
        }
        s.push_str(id);
    }
    s
}

/// The results of every analysis of a network, before they are written out.
struct Analyses {
    st: stoich::Stoichiometry,
    bal: Vec<atoms::AtomBalance>,
    el: atoms::ElementMatrix,
    gr: graph::GraphReport,
    cycles: Vec<thermo::CycleCheck>,
    from_species: Vec<thermo::SpeciesDataCheck>,
}

impl Analyses {
    fn of(net: &Network) -> Self {
        let st = stoich::analyse(net);
        let cycles = thermo::check(net, &st.dependent);
        Analyses {
            bal: atoms::balances(net),
            el: atoms::element_matrix(net),
            gr: graph::analyse(net),
            cycles,
            from_species: thermo::species_data(net),
            st,
        }
    }
}

impl Analyses {
    /// The parts of the analyses the findings use.
    fn inputs(&self) -> FindingInputs<'_> {
        FindingInputs {
            rank: self.st.rank,
            dependent: &self.st.dependent,
            bal: &self.bal,
            el: &self.el,
            unreachable_species: &self.gr.unreachable_species,
            dead_reactions: &self.gr.dead_reactions,
            cycles: &self.cycles,
            from_species: &self.from_species,
        }
    }
}

/// What the findings are made from: of the stoichiometry, the rank (against the element
/// bound) and the dependent combinations (duplicates, and the equilibrium cycles computed from
/// them); of the graph, what cannot form or run from the feed; the atom balances, the element
/// matrix and the species-data checks. The conservation laws, the related pairs and the
/// intermediates are the report's only.
struct FindingInputs<'a> {
    rank: usize,
    dependent: &'a [stoich::Dependent],
    bal: &'a [atoms::AtomBalance],
    el: &'a atoms::ElementMatrix,
    unreachable_species: &'a [usize],
    dead_reactions: &'a [usize],
    cycles: &'a [thermo::CycleCheck],
    from_species: &'a [thermo::SpeciesDataCheck],
}

/// Run the analyses the findings use and return the findings only: what `run` and the studies
/// need to decide whether a network may be simulated, without the report of [`check`] (whose
/// lists of combinations can hold millions of terms on a large network) and without the
/// analyses only the report shows (conservation laws, related pairs, intermediates). The same
/// findings as `check(net).findings`: each input is computed by the same exact method.
pub fn findings(net: &Network) -> Vec<Finding> {
    let dep = stoich::dependence(net);
    let cycles = thermo::check(net, &dep.dependent);
    let bal = atoms::balances(net);
    let el = atoms::element_matrix(net);
    let reach = graph::reachability(net);
    let from_species = thermo::species_data(net);
    findings_of(
        net,
        FindingInputs {
            rank: dep.rank,
            dependent: &dep.dependent,
            bal: &bal,
            el: &el,
            unreachable_species: &reach.unreachable_species,
            dead_reactions: &reach.dead_reactions,
            cycles: &cycles,
            from_species: &from_species,
        },
    )
}

/// Run every analysis and gather the findings.
pub fn check(net: &Network) -> Check {
    let a = Analyses::of(net);
    let findings = findings_of(net, a.inputs());
    report_of(net, a, findings)
}

/// The findings of the analyses, errors first.
fn findings_of(net: &Network, a: FindingInputs<'_>) -> Vec<Finding> {
    let FindingInputs {
        rank,
        dependent,
        bal,
        el,
        unreachable_species,
        dead_reactions,
        cycles,
        from_species,
    } = a;
    let sp = |j: usize| net.species[j].name.clone();
    let rx = |i: usize| net.reactions[i].id.clone();
    let mut findings: Vec<Finding> = Vec::new();
    let mut add = |severity, message: String| findings.push(Finding { severity, message });
    for note in &net.notes {
        add(Severity::Info, note.clone());
    }

    for b in bal {
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
    for d in dependent {
        if d.combination.len() == 1 {
            let (i, c) = d.combination.get(0);
            let what = if c.is_one() {
                "the same reaction as".to_string()
            } else {
                format!("{c} times")
            };
            add(
                Severity::Warning,
                format!(
                    "duplicate reaction: `{}` is {what} `{}`; both rates act on the species",
                    rx(d.reaction),
                    rx(i)
                ),
            );
        }
    }
    if let Some(bound) = el.bound
        && rank > bound
    {
        add(
            Severity::Error,
            format!(
                "{} independent reactions, but the elements allow at most {bound} (species − rank of the element matrix)",
                rank
            ),
        );
    }
    for c in cycles {
        if !c.consistent {
            let d = dependent
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
    for c in from_species {
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
    let entering = net.fed_species();
    // Per species, in one pass over the reactions: written in any, consumed net by any.
    let mut written = vec![false; net.species.len()];
    let mut consumed = vec![false; net.species.len()];
    for r in &net.reactions {
        for t in r.reactants.iter().chain(r.products.iter()) {
            written[t.species] = true;
        }
        for &(j, _) in &r.net {
            if r.nu(j) < 0.0 {
                consumed[j] = true;
            }
        }
    }
    for (j, s) in net.species.iter().enumerate() {
        let in_any = written[j];
        let fed = entering[j];
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
        } else if fed && !consumed[j] {
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
    if !entering[key] {
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
    for &j in unreachable_species {
        add(
            Severity::Warning,
            format!("species `{}` can never form from this feed", sp(j)),
        );
    }
    for &i in dead_reactions {
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
    findings
}

/// Everything `rxnet check` reports, from the analyses and their findings.
fn report_of(net: &Network, a: Analyses, findings: Vec<Finding>) -> Check {
    let Analyses {
        st,
        bal,
        el,
        gr,
        cycles,
        from_species,
    } = a;
    let sp = |j: usize| net.species[j].name.clone();
    let rx = |i: usize| net.reactions[i].id.clone();
    let ids: Arc<[String]> = net.reactions.iter().map(|r| r.id.clone()).collect();
    let mut by_id: Vec<u32> = (0..ids.len() as u32).collect();
    by_id.sort_unstable_by(|a, b| ids[*a as usize].cmp(&ids[*b as usize]));
    let mut place = vec![0u32; ids.len()];
    for (k, &i) in by_id.iter().enumerate() {
        place[i as usize] = k as u32;
    }
    Check {
        name: net.name.clone(),
        species: net.species.len(),
        reactions: net.reactions.len(),
        rank: st.rank,
        independent: st.independent.iter().map(|&i| rx(i)).collect(),
        // Each combination is freed once written out: a large network holds millions of terms.
        dependent: st
            .dependent
            .into_iter()
            .map(|d| DependentOut {
                reaction: rx(d.reaction),
                text: combination_text(net, &d),
                combination: Combination::new(&ids, &place, d.combination),
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

#[cfg(test)]
mod tests {
    use super::*;

    /// The findings as comparable pairs.
    fn pairs(f: &[Finding]) -> Vec<(Severity, String)> {
        f.iter().map(|f| (f.severity, f.message.clone())).collect()
    }

    /// `findings` (what `run` computes) against the findings of the full `check`.
    fn same_findings_as_check(net: &Network) -> Vec<(Severity, String)> {
        let fast = pairs(&findings(net));
        assert_eq!(fast, pairs(&check(net).findings));
        fast
    }

    /// Isomers A, B, C, D (C4H8, so every step is atom-balanced) in reversible steps, with
    /// dependent reactions of every kind the findings read: `ac` = `ab` + `bc` closes a cycle
    /// whose K's and heats agree (K_ac = 2 × 3 = 6, ΔH_ac = −10 − 10 = −20 kJ/mol; Wegscheider's
    /// condition and Hess's law, from memory); `ad` = `ab` + `bc` + `cd` breaks both (K_ad must be
    /// 2 × 3 × 5 = 30, the file gives 31; ΔH must be −30, the file gives −50); `ab2` is twice
    /// `ab` (a duplicate whose K = 2² = 4 agrees); `de2` repeats the one-way `de`.
    const CYCLES: &str = "name: consistent and broken cycles, duplicates (test values)
phase: liquid
species: {A: {formula: C4H8}, B: {formula: C4H8}, C: {formula: C4H8}, D: {formula: C4H8}, E: {formula: C4H8}}
reactions:
  - {id: ab, stoich: A <=> B, rate: {k: 0.01 1/s, K_eq: 2, dH: -10 kJ/mol, T_ref: 350 K}}
  - {id: bc, stoich: B <=> C, rate: {k: 0.01 1/s, K_eq: 3, dH: -10 kJ/mol, T_ref: 350 K}}
  - {id: ac, stoich: A <=> C, rate: {k: 0.01 1/s, K_eq: 6, dH: -20 kJ/mol, T_ref: 350 K}}
  - {id: cd, stoich: C <=> D, rate: {k: 0.01 1/s, K_eq: 5, dH: -10 kJ/mol, T_ref: 350 K}}
  - {id: ad, stoich: A <=> D, rate: {k: 0.01 1/s, K_eq: 31, dH: -50 kJ/mol, T_ref: 350 K}}
  - {id: ab2, stoich: 2 A <=> 2 B, rate: {k: 0.01 m3/(mol*s), K_eq: 4, dH: -20 kJ/mol, T_ref: 350 K}}
  - {id: de, stoich: D -> E, rate: {k: 0.01 1/s}}
  - {id: de2, stoich: D -> E, rate: {k: 0.02 1/s}}
feed: {T: 350 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
desired: E
";

    #[test]
    fn findings_alone_match_the_check_on_cycles_and_duplicates() {
        let net = crate::load_str(CYCLES, "cycles", &[]).expect("loads");
        let f = same_findings_as_check(&net);
        let has = |s: &str| f.iter().any(|(_, m)| m.contains(s));
        assert!(has("duplicate reaction: `ab2` is 2 times `ab`"), "{f:?}");
        assert!(
            has("duplicate reaction: `de2` is the same reaction as `de`"),
            "{f:?}"
        );
        assert!(
            has("Wegscheider): ad = ab + bc + cd requires K_ad = 3.000000e1"),
            "{f:?}"
        );
        assert!(has("Hess's law for `ad`"), "{f:?}");
        assert!(!f.iter().any(|(_, m)| m.contains("ac =")), "{f:?}");
        assert!(!has("Hess's law for `ac`"), "{f:?}");
        assert!(!has("Wegscheider): ab2"), "{f:?}");
        // Rank 4 (ab, bc, cd, de), within the element bound: every species is C4H8, so the
        // element matrix has rank 1 and at most 5 − 1 = 4 reactions are independent.
        assert!(!has("the elements allow"), "{f:?}");
    }

    /// More independent reactions than the elements allow: the rank in the finding is exact.
    #[test]
    fn findings_alone_report_the_element_bound_with_the_exact_rank() {
        // A = C2H4 and B = C4H8 (2 A -> B balanced); the element matrix of C2H4, C4H8 has rank
        // 1 (H = 2 C in both), so at most 2 − 1 = 1 independent reaction (Denbigh; from memory),
        // but the unbalanced `ab` (A -> B) makes the rank 2.
        let text = "name: element bound (test values)
phase: liquid
species: {A: {formula: C2H4}, B: {formula: C4H8}}
reactions:
  - {id: dimer, stoich: 2 A -> B, rate: {k: 0.01 m3/(mol*s)}}
  - {id: ab, stoich: A -> B, rate: {k: 0.01 1/s}}
feed: {T: 350 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
";
        let net = crate::load_str(text, "bound", &[]).expect("loads");
        let f = same_findings_as_check(&net);
        assert!(
            f.iter().any(|(s, m)| *s == Severity::Error
                && m.starts_with("2 independent reactions, but the elements allow at most 1")),
            "{f:?}"
        );
    }
}
