//! The multiple-reaction stoichiometric table of the feed, in extents of reaction:
//! F_j = F_j0 + Σ_i ν_ij ξ_i, F_T = F_T0 + Σ_i (Σ_j ν_ij) ξ_i (N for a batch charge).
//!
//! For the key reactant A: Θ_j = F_j0/F_A0, δ_i = Σ_j ν_ij / |ν_A,i| for each reaction that
//! involves A, and for a gas ε_i = y_A0 δ_i (common practice; textbook notation). The limiting
//! reactant of a reaction is its reactant with the smallest F_j0/|ν_j|.

use crate::model::{Network, Phase};
use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub struct TableRow {
    pub species: String,
    /// F_j0 (mol/s) or N_j0 (mol).
    pub feed: f64,
    /// Θ_j = F_j0/F_A0.
    pub theta: Option<f64>,
    /// The reactions that change j, with ν_ij.
    pub change: Vec<Change>,
    /// The outlet as text, e.g. "F_D,0 − ξ_to_mono".
    pub outlet: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct Change {
    pub reaction: String,
    pub nu: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct ReactionColumn {
    pub id: String,
    /// Σ_j ν_ij.
    pub mole_change: f64,
    /// δ_i relative to the key reactant (None when the key is not in this reaction).
    pub delta: Option<f64>,
    /// ε_i = y_A0 δ_i (gas only).
    pub epsilon: Option<f64>,
    /// The reaction's limiting reactant in this feed (None when a reactant is not fed).
    pub limiting: Option<String>,
    /// Reactants of this reaction absent from the feed (made by other reactions, if at all).
    pub unfed_reactants: Vec<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct StoichTable {
    pub basis: &'static str,
    pub unit: &'static str,
    pub key: String,
    pub key_is_default: bool,
    pub y_key0: f64,
    pub rows: Vec<TableRow>,
    pub reactions: Vec<ReactionColumn>,
    pub total_feed: f64,
    /// F_T as text.
    pub total_outlet: String,
    /// Where species also enter besides the feed (joins, side or distributed feeds, dosing,
    /// a membrane's sweep): the table is the feed's, and those streams add where they enter.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub other_streams: Option<String>,
}

fn signed_term(nu: f64, id: &str) -> String {
    let sign = if nu < 0.0 { "−" } else { "+" };
    let mag = nu.abs();
    if (mag - 1.0).abs() < 1e-12 {
        format!(" {sign} ξ_{id}")
    } else {
        format!(" {sign} {mag} ξ_{id}")
    }
}

pub fn build(net: &Network) -> StoichTable {
    let batch = net.reactor.is_batch();
    let sym = if batch { "N" } else { "F" };
    let a = net.key;
    let fa0 = net.feed.amounts[a];
    let ft0 = net.feed.total();
    let rows = net
        .species
        .iter()
        .enumerate()
        .map(|(j, s)| {
            let change: Vec<Change> = net
                .reactions
                .iter()
                .filter_map(|r| {
                    let nu = r.nu(j);
                    (nu != 0.0).then(|| Change {
                        reaction: r.id.clone(),
                        nu,
                    })
                })
                .collect();
            let mut outlet = format!("{sym}_{},0", s.name);
            for c in &change {
                outlet.push_str(&signed_term(c.nu, &c.reaction));
            }
            TableRow {
                species: s.name.clone(),
                feed: net.feed.amounts[j],
                theta: (fa0 > 0.0).then(|| net.feed.amounts[j] / fa0),
                change,
                outlet,
            }
        })
        .collect();
    let y_a0 = fa0 / ft0;
    let reactions = net
        .reactions
        .iter()
        .map(|r| {
            let nu_a = r.nu(a);
            let delta = (nu_a != 0.0).then(|| r.mole_change() / nu_a.abs());
            let unfed_reactants: Vec<String> = r
                .reactants
                .iter()
                .filter(|t| net.feed.amounts[t.species] <= 0.0)
                .map(|t| net.species[t.species].name.clone())
                .collect();
            let limiting = r
                .limiting_reactant(&net.feed.amounts)
                .map(|j| net.species[j].name.clone())
                .filter(|_| unfed_reactants.is_empty());
            ReactionColumn {
                id: r.id.clone(),
                mole_change: r.mole_change(),
                delta,
                epsilon: if net.phase == Phase::Gas {
                    delta.map(|d| y_a0 * d)
                } else {
                    None
                },
                limiting,
                unfed_reactants,
            }
        })
        .collect::<Vec<_>>();
    let mut total_outlet = format!("{sym}_T,0");
    for c in &reactions {
        if c.mole_change != 0.0 {
            total_outlet.push_str(&signed_term(c.mole_change, &c.id));
        }
    }
    StoichTable {
        basis: if batch {
            "moles (batch charge)"
        } else {
            "molar flows"
        },
        unit: if batch { "mol" } else { "mol/s" },
        key: net.species[a].name.clone(),
        key_is_default: net.key_is_default,
        y_key0: y_a0,
        rows,
        reactions,
        total_feed: ft0,
        total_outlet,
        other_streams: other_streams(net),
    }
}

/// The routes by which species enter besides the feed, named, or `None` for a study with one
/// feed.
fn other_streams(net: &Network) -> Option<String> {
    let mut routes: Vec<&str> = Vec::new();
    let contacting = std::iter::once(&net.contacting).chain(
        net.train
            .iter()
            .flat_map(|t| t.units.iter().map(|u| &u.contacting)),
    );
    for c in contacting {
        for (on, what) in [
            (!c.side_feeds.is_empty(), "side feeds"),
            (!c.distributed.is_empty(), "distributed feeds"),
            (!c.dosing.is_empty(), "dosing"),
            (
                c.membrane.iter().any(|p| p.sweep > 0.0),
                "a membrane's sweep",
            ),
        ] {
            if on && !routes.contains(&what) {
                routes.push(what);
            }
        }
    }
    if net
        .train
        .as_ref()
        .is_some_and(|t| t.units.iter().any(|u| u.join.is_some()))
    {
        routes.insert(0, "joins between units");
    }
    let s = if net.reactor.is_batch() { "N" } else { "F" };
    (!routes.is_empty()).then(|| {
        format!(
            "this table is of the feed; species also enter by {}, which add to {s}_j0 where they enter ({s}_j = {s}_j0 + what entered + Σ_i ν_ij ξ_i; `run` reports the totals)",
            routes.join(", ")
        )
    })
}
