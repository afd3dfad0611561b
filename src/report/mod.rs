//! Reports for people (text tables with units) and for programs (JSON in SI).
//! Units leave SI only here.

use crate::analysis::table::StoichTable;
use crate::analysis::{Check, Severity};
pub mod fit;
pub mod plot;
pub mod run;
pub mod train;
pub mod units;

use std::fmt::Write;

/// A number in a compact engineering form: 6 significant digits.
pub fn num(x: f64) -> String {
    if x == 0.0 {
        return "0".into();
    }
    let a = x.abs();
    if (1e-3..1e6).contains(&a) {
        let s = format!("{:.*}", (5 - a.log10().floor() as i32).max(0) as usize, x);
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    } else {
        format!("{x:.5e}")
    }
}

fn severity_word(s: Severity) -> &'static str {
    match s {
        Severity::Error => "error",
        Severity::Warning => "warning",
        Severity::Info => "note",
    }
}

/// Lists in the text report (reactions, laws, pairs, cycles) show at most this many entries,
/// then a count of the rest: a 10,000-reaction mechanism would otherwise print megabytes. The
/// JSON report (`--format json`) always lists everything; findings are never cut.
pub const TEXT_LIST_LIMIT: usize = 50;

/// ", … and N more (--format json lists all)" when `total` exceeds `shown`, else nothing.
fn more(total: usize, shown: usize) -> String {
    if total > shown {
        format!(" … and {} more (--format json lists all)", total - shown)
    } else {
        String::new()
    }
}

/// A combination `r9 = r1 − 2 r4 + …` cut after [`TEXT_COMBINATION_TERMS`] terms, with the
/// number of terms left out.
fn shorten_combination(text: &str) -> String {
    // Terms after the first are separated by " + " or " − ".
    let cuts: Vec<usize> = text
        .match_indices(" + ")
        .chain(text.match_indices(" − "))
        .map(|(i, _)| i)
        .collect();
    if cuts.len() < TEXT_COMBINATION_TERMS {
        return text.to_string();
    }
    let mut cuts = cuts;
    cuts.sort_unstable();
    let left = cuts.len() + 1 - TEXT_COMBINATION_TERMS;
    format!(
        "{} … and {left} more terms (--format json lists all)",
        &text[..cuts[TEXT_COMBINATION_TERMS - 1]]
    )
}

/// Terms of a dependent-reaction combination shown in the text report.
const TEXT_COMBINATION_TERMS: usize = 12;

/// `rxnet check` as text.
pub fn check_text(c: &Check) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "{}", c.name);
    let _ = writeln!(o, "{} species, {} reactions", c.species, c.reactions);
    let _ = writeln!(o, "\nStoichiometry");
    let _ = writeln!(o, "  rank of the stoichiometric matrix: {}", c.rank);
    let _ = writeln!(
        o,
        "  independent reactions: {}{}",
        c.independent[..c.independent.len().min(TEXT_LIST_LIMIT)].join(", "),
        more(c.independent.len(), TEXT_LIST_LIMIT)
    );
    if c.dependent.is_empty() {
        let _ = writeln!(o, "  dependent reactions: none");
    } else {
        let _ = writeln!(o, "  dependent reactions ({}):", c.dependent.len());
        for d in c.dependent.iter().take(TEXT_LIST_LIMIT) {
            let _ = writeln!(o, "    {}", shorten_combination(&d.text));
        }
        if c.dependent.len() > TEXT_LIST_LIMIT {
            let _ = writeln!(o, "   {}", more(c.dependent.len(), TEXT_LIST_LIMIT));
        }
    }
    let _ = writeln!(o, "\nAtom balances");
    // A long network lists only the reactions that are not balanced (up to the limit).
    let long = c.atom_balance.len() > TEXT_LIST_LIMIT;
    let mut shown = 0;
    for b in &c.atom_balance {
        if long && (b.balanced == Some(true) || shown == TEXT_LIST_LIMIT) {
            continue;
        }
        shown += 1;
        let state = match b.balanced {
            None => "not checked (formula missing)".to_string(),
            Some(true) => "balanced".to_string(),
            Some(false) => {
                let parts: Vec<String> = b
                    .imbalance
                    .iter()
                    .map(|(e, n)| format!("{e} {n:+}"))
                    .collect();
                format!("UNBALANCED: {} (products − reactants)", parts.join(", "))
            }
        };
        let _ = writeln!(o, "  {:<16} {state}", b.reaction);
    }
    if long {
        let balanced = c.atom_balance.iter().filter(|b| b.balanced == Some(true));
        let _ = writeln!(
            o,
            "  {} of {} reactions balanced{}",
            balanced.count(),
            c.atom_balance.len(),
            if shown == TEXT_LIST_LIMIT {
                " (first unbalanced or unchecked listed above; --format json lists all)"
            } else {
                ""
            }
        );
    }
    let e = &c.element_matrix;
    if !e.elements.is_empty() {
        let _ = write!(o, "  elements {} (rank {})", e.elements.join(" "), e.rank);
        match e.max_independent_reactions {
            Some(b) => {
                let _ = writeln!(o, ": at most {b} independent reactions (species − rank)");
            }
            None => {
                let _ = writeln!(o);
            }
        }
    }
    let _ = writeln!(
        o,
        "\nConservation laws (Σ coefficient × amount is constant)"
    );
    if c.conservation_laws.is_empty() {
        let _ = writeln!(o, "  none");
    }
    for law in c.conservation_laws.iter().take(TEXT_LIST_LIMIT) {
        let mut line = String::new();
        for (n, (s, k)) in law.iter().enumerate() {
            let (neg, mag) = match k.strip_prefix('-') {
                Some(m) => (true, m),
                None => (false, k.as_str()),
            };
            let body = if mag == "1" {
                s.clone()
            } else {
                format!("{mag} {s}")
            };
            line.push_str(&match (n, neg) {
                (0, false) => body,
                (0, true) => format!("−{body}"),
                (_, false) => format!(" + {body}"),
                (_, true) => format!(" − {body}"),
            });
        }
        let _ = writeln!(o, "  {line}");
    }
    if c.conservation_laws.len() > TEXT_LIST_LIMIT {
        let _ = writeln!(o, " {}", more(c.conservation_laws.len(), TEXT_LIST_LIMIT));
    }
    let _ = writeln!(o, "\nReaction graph");
    if c.related_pairs == 0 {
        let _ = writeln!(o, "  no related pairs");
    } else if c.related_pairs > TEXT_LIST_LIMIT {
        let _ = writeln!(o, "  {} related pairs", c.related_pairs);
    }
    for p in c.classification.iter().take(TEXT_LIST_LIMIT) {
        let mut why = Vec::new();
        if !p.via.is_empty() {
            why.push(format!("via {}", p.via.join(", ")));
        }
        if !p.shared_reactants.is_empty() {
            why.push(format!("share {}", p.shared_reactants.join(", ")));
        }
        let _ = writeln!(
            o,
            "  {} / {}: {} ({})",
            p.reactions[0],
            p.reactions[1],
            p.relation,
            why.join("; ")
        );
    }
    if c.related_pairs > TEXT_LIST_LIMIT {
        let _ = writeln!(o, " {}", more(c.related_pairs, TEXT_LIST_LIMIT));
    }
    let _ = writeln!(
        o,
        "  intermediates: {}",
        if c.intermediates.is_empty() {
            "none".to_string()
        } else {
            format!(
                "{}{}",
                c.intermediates[..c.intermediates.len().min(TEXT_LIST_LIMIT)].join(", "),
                more(c.intermediates.len(), TEXT_LIST_LIMIT)
            )
        }
    );
    if !c.equilibrium_cycles.is_empty() {
        let _ = writeln!(
            o,
            "\nEquilibrium constants around dependent reactions (Wegscheider)"
        );
        for cy in c.equilibrium_cycles.iter().take(TEXT_LIST_LIMIT) {
            let _ = writeln!(
                o,
                "  {:<16} K given {}  K from combination {}  at {} K: {}",
                cy.reaction,
                num(cy.k_given),
                num(cy.k_combined),
                num(cy.temperature),
                if cy.consistent {
                    "consistent"
                } else {
                    "MISMATCH"
                }
            );
        }
        if c.equilibrium_cycles.len() > TEXT_LIST_LIMIT {
            let _ = writeln!(o, " {}", more(c.equilibrium_cycles.len(), TEXT_LIST_LIMIT));
        }
    }
    if !c.species_data.is_empty() {
        let _ = writeln!(
            o,
            "\nReaction data against species data (at each reaction's T_ref)"
        );
        for sd in c.species_data.iter().take(TEXT_LIST_LIMIT) {
            let mut parts = Vec::new();
            if let (Some(g), Some(s)) = (sd.dh_given, sd.dh_species) {
                parts.push(format!(
                    "dH given {} kJ/mol  from species {} kJ/mol",
                    num(g / 1e3),
                    num(s / 1e3)
                ));
            }
            if let (Some(g), Some(s)) = (sd.k_given, sd.k_species) {
                parts.push(format!("K given {}  from species {}", num(g), num(s)));
            }
            let _ = writeln!(
                o,
                "  {:<16} {}  at {} K: {}",
                sd.reaction,
                parts.join("  "),
                num(sd.temperature),
                if sd.consistent {
                    "consistent"
                } else {
                    "MISMATCH"
                }
            );
        }
        if c.species_data.len() > TEXT_LIST_LIMIT {
            let _ = writeln!(o, " {}", more(c.species_data.len(), TEXT_LIST_LIMIT));
        }
    }
    let _ = writeln!(o, "\nFindings");
    if c.findings.is_empty() {
        let _ = writeln!(o, "  none");
    }
    for f in &c.findings {
        let _ = writeln!(o, "  {}: {}", severity_word(f.severity), f.message);
    }
    let errors = c
        .findings
        .iter()
        .filter(|f| f.severity == Severity::Error)
        .count();
    let warnings = c
        .findings
        .iter()
        .filter(|f| f.severity == Severity::Warning)
        .count();
    let _ = writeln!(o, "\n{errors} error(s), {warnings} warning(s)");
    o
}

/// `rxnet table` as text.
pub fn table_text(t: &StoichTable) -> String {
    let mut o = String::new();
    let sym = if t.unit == "mol" { "N" } else { "F" };
    let _ = writeln!(o, "Stoichiometric table ({}, {})", t.basis, t.unit);
    let _ = writeln!(
        o,
        "key reactant A = {}{}; y_A0 = {}",
        t.key,
        if t.key_is_default {
            " (limiting reactant of the feed)"
        } else {
            ""
        },
        num(t.y_key0)
    );
    let w = t
        .rows
        .iter()
        .map(|r| r.species.len())
        .max()
        .unwrap_or(4)
        .max(7);
    let _ = writeln!(
        o,
        "\n  {:<w$}  {:>12}  {:>10}  outlet",
        "species",
        format!("{sym}_j,0"),
        "Θ_j"
    );
    for r in &t.rows {
        let theta = r.theta.map(num).unwrap_or_else(|| "—".into());
        let _ = writeln!(
            o,
            "  {:<w$}  {:>12}  {:>10}  {sym}_{} = {}",
            r.species,
            num(r.feed),
            theta,
            r.species,
            r.outlet
        );
    }
    let _ = writeln!(
        o,
        "  {:<w$}  {:>12}  {:>10}  {sym}_T = {}",
        "total",
        num(t.total_feed),
        "",
        t.total_outlet
    );
    let _ = writeln!(
        o,
        "\n  {:<16}  {:>8}  {:>10}  {:>10}  limiting reactant",
        "reaction", "Σν", "δ", "ε"
    );
    for c in &t.reactions {
        let d = c.delta.map(num).unwrap_or_else(|| "—".into());
        let e = c.epsilon.map(num).unwrap_or_else(|| "—".into());
        let lim = match &c.limiting {
            Some(l) => l.clone(),
            None => format!("— ({} not fed)", c.unfed_reactants.join(", ")),
        };
        let _ = writeln!(
            o,
            "  {:<16}  {:>8}  {:>10}  {:>10}  {lim}",
            c.id,
            num(c.mole_change),
            d,
            e
        );
    }
    let _ = writeln!(
        o,
        "\nδ = Σν / |ν_A| for reactions that involve A; ε = y_A0 δ (gas only); ξ_i is the extent of reaction i ({}).",
        t.unit
    );
    if let Some(n) = &t.other_streams {
        let _ = writeln!(o, "note: {n}.");
    }
    o
}
