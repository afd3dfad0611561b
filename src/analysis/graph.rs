//! The species–reaction graph (petgraph): how reactions are related (series, parallel), which
//! species are intermediates, and what can ever form from the feed.
//!
//! Definitions used (common practice):
//! - two reactions are in **series** when a net product of one is a net reactant of the other;
//! - they are **parallel** when they share a net reactant (they compete for it);
//! - a species is an **intermediate** when one reaction makes it and another consumes it.
//!
//! Reachability is a fixed point over the bipartite graph: a reaction can run forward once
//! every species on its reactant side and every species with a positive order is present; a
//! reversible one can also run backward once every product is present. What a reaction that
//! can run makes becomes present. Species never present and reactions that never run are
//! reported.

use crate::model::Network;
use petgraph::Direction;
use petgraph::graph::{DiGraph, NodeIndex};
use serde::Serialize;

/// How a pair of reactions is related.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Relation {
    Series,
    Parallel,
    SeriesParallel,
}

impl Relation {
    pub fn as_str(self) -> &'static str {
        match self {
            Relation::Series => "series",
            Relation::Parallel => "parallel",
            Relation::SeriesParallel => "series-parallel",
        }
    }
}

/// A related pair of reactions, with the species that relate them.
#[derive(Debug, Clone)]
pub struct Pair {
    pub first: usize,
    pub second: usize,
    pub relation: Relation,
    /// Species passed from one to the other (series link).
    pub via: Vec<usize>,
    /// Shared reactants (parallel link).
    pub shared: Vec<usize>,
}

#[derive(Debug, Clone)]
pub struct GraphReport {
    pub pairs: Vec<Pair>,
    pub intermediates: Vec<usize>,
    pub unreachable_species: Vec<usize>,
    pub dead_reactions: Vec<usize>,
}

/// The bipartite graph: species -> reaction for a net reactant, reaction -> species for a net product.
pub fn build_graph(net: &Network) -> (DiGraph<(), f64>, Vec<NodeIndex>, Vec<NodeIndex>) {
    let mut g = DiGraph::new();
    let sp: Vec<NodeIndex> = net.species.iter().map(|_| g.add_node(())).collect();
    let rx: Vec<NodeIndex> = net.reactions.iter().map(|_| g.add_node(())).collect();
    for (i, r) in net.reactions.iter().enumerate() {
        for &(j, nu) in &r.net {
            if nu < 0.0 {
                g.add_edge(sp[j], rx[i], -nu);
            } else {
                g.add_edge(rx[i], sp[j], nu);
            }
        }
    }
    (g, sp, rx)
}

pub fn analyse(net: &Network) -> GraphReport {
    let (g, sp, rx) = build_graph(net);
    // Species nodes were added first, so a node index below the species count is a species.
    let species_of = |n: NodeIndex| (n.index() < sp.len()).then_some(n.index());
    let consumed = |i: usize| -> Vec<usize> {
        g.neighbors_directed(rx[i], Direction::Incoming)
            .filter_map(species_of)
            .collect()
    };
    let made = |i: usize| -> Vec<usize> {
        g.neighbors_directed(rx[i], Direction::Outgoing)
            .filter_map(species_of)
            .collect()
    };
    let nr = net.reactions.len();
    let mut pairs = Vec::new();
    for a in 0..nr {
        for b in a + 1..nr {
            let (ca, ma, cb, mb) = (consumed(a), made(a), consumed(b), made(b));
            let mut via: Vec<usize> = ma
                .iter()
                .filter(|j| cb.contains(j))
                .chain(mb.iter().filter(|j| ca.contains(j)))
                .copied()
                .collect();
            via.sort();
            via.dedup();
            let mut shared: Vec<usize> = ca.iter().filter(|j| cb.contains(j)).copied().collect();
            shared.sort();
            let relation = match (!via.is_empty(), !shared.is_empty()) {
                (true, true) => Relation::SeriesParallel,
                (true, false) => Relation::Series,
                (false, true) => Relation::Parallel,
                (false, false) => continue,
            };
            pairs.push(Pair {
                first: a,
                second: b,
                relation,
                via,
                shared,
            });
        }
    }
    let intermediates: Vec<usize> = (0..net.species.len())
        .filter(|&j| {
            let makers: Vec<NodeIndex> = g.neighbors_directed(sp[j], Direction::Incoming).collect();
            let users: Vec<NodeIndex> = g.neighbors_directed(sp[j], Direction::Outgoing).collect();
            makers.iter().any(|m| users.iter().any(|u| u != m))
        })
        .collect();

    // Reachability fixed point from the fed species.
    let mut present: Vec<bool> = net.feed.amounts.iter().map(|&a| a > 0.0).collect();
    let mut runs = vec![false; nr];
    loop {
        let mut changed = false;
        for (i, r) in net.reactions.iter().enumerate() {
            if runs[i] {
                continue;
            }
            let forward = r.reactants.iter().all(|t| present[t.species])
                && r.rate.orders.iter().all(|&(j, a)| a <= 0.0 || present[j])
                && r.rate.k_ref > 0.0;
            let backward =
                r.reversible && r.products.iter().all(|t| present[t.species]) && r.rate.k_ref > 0.0;
            if forward || backward {
                runs[i] = true;
                changed = true;
                for t in r.products.iter().chain(r.reactants.iter()) {
                    // A reaction that runs either way can make what stands on the other side;
                    // forward makes products, backward reactants.
                    let makes = (forward && r.has_product(t.species))
                        || (backward && r.has_reactant(t.species));
                    if makes && !present[t.species] {
                        present[t.species] = true;
                    }
                }
            }
        }
        if !changed {
            break;
        }
    }
    let involved = |j: usize| {
        net.reactions
            .iter()
            .any(|r| r.has_reactant(j) || r.has_product(j))
    };
    GraphReport {
        pairs,
        intermediates,
        unreachable_species: (0..net.species.len())
            .filter(|&j| !present[j] && involved(j))
            .collect(),
        dead_reactions: (0..nr).filter(|&i| !runs[i]).collect(),
    }
}
