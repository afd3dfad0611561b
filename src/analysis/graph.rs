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

/// At most this many related pairs are kept (in order of the first reaction, then the second).
/// A species shared by many reactions (oxygen in an oxidation network, a radical in a chain)
/// relates every pair of them, so the number of pairs can grow as the square of the reactions;
/// the count stays exact, only the list is cut.
pub const MAX_LISTED_PAIRS: usize = 10_000;

#[derive(Debug, Clone)]
pub struct GraphReport {
    /// The first [`MAX_LISTED_PAIRS`] related pairs.
    pub pairs: Vec<Pair>,
    /// How many pairs are related in all.
    pub pair_count: usize,
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
    let (g, _, rx) = build_graph(net);
    let ns = net.species.len();
    let nr = net.reactions.len();
    // Species nodes were added first, so a node index below the species count is a species.
    let species_of = |n: NodeIndex| (n.index() < ns).then_some(n.index());
    // Per reaction, the species on one side of it: net reactants (edges in), net products (out).
    let side = |dir: Direction| -> Vec<Vec<usize>> {
        (0..nr)
            .map(|i| {
                g.neighbors_directed(rx[i], dir)
                    .filter_map(species_of)
                    .collect()
            })
            .collect()
    };
    let consumed = side(Direction::Incoming);
    let made = side(Direction::Outgoing);
    let mut consumers: Vec<Vec<usize>> = vec![Vec::new(); ns];
    let mut makers: Vec<Vec<usize>> = vec![Vec::new(); ns];
    for i in 0..nr {
        for &j in &consumed[i] {
            consumers[j].push(i);
        }
        for &j in &made[i] {
            makers[j].push(i);
        }
    }
    // Pairs (a, b), a < b, found through the species they share: the work is the sum over
    // species of (reactions touching it)², not reactions². `slot[b]` is b's place in `links`
    // while reaction a is visited (stamped by a, so it never needs clearing).
    let mut pairs = Vec::new();
    let mut pair_count = 0usize;
    let mut stamp = vec![usize::MAX; nr];
    let mut slot = vec![0usize; nr];
    let mut links: Vec<(usize, Vec<usize>, Vec<usize>)> = Vec::new();
    for a in 0..nr {
        links.clear();
        let mut link = |b: usize, j: usize, series: bool| {
            if b <= a {
                return;
            }
            if stamp[b] != a {
                stamp[b] = a;
                slot[b] = links.len();
                links.push((b, Vec::new(), Vec::new()));
            }
            let l = &mut links[slot[b]];
            if series { l.1.push(j) } else { l.2.push(j) }
        };
        for &j in &consumed[a] {
            for &b in &consumers[j] {
                link(b, j, false);
            }
            for &b in &makers[j] {
                link(b, j, true);
            }
        }
        for &j in &made[a] {
            for &b in &consumers[j] {
                link(b, j, true);
            }
        }
        pair_count += links.len();
        if pairs.len() >= MAX_LISTED_PAIRS {
            continue;
        }
        links.sort_unstable_by_key(|l| l.0);
        for (b, mut via, mut shared) in links.drain(..) {
            if pairs.len() >= MAX_LISTED_PAIRS {
                break;
            }
            via.sort_unstable();
            via.dedup();
            shared.sort_unstable();
            shared.dedup();
            let relation = match (!via.is_empty(), !shared.is_empty()) {
                (true, true) => Relation::SeriesParallel,
                (true, false) => Relation::Series,
                _ => Relation::Parallel,
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
    // A reaction either makes or consumes a species net, never both, so one maker and one
    // consumer are always two different reactions.
    let intermediates: Vec<usize> = (0..ns)
        .filter(|&j| !makers[j].is_empty() && !consumers[j].is_empty())
        .collect();
    let Reachability {
        unreachable_species,
        dead_reactions,
    } = reachability(net);
    GraphReport {
        pairs,
        pair_count,
        intermediates,
        unreachable_species,
        dead_reactions,
    }
}

/// What can ever form from the feed: the part of [`GraphReport`] the findings use.
#[derive(Debug, Clone)]
pub struct Reachability {
    /// Species in some reaction that never become present.
    pub unreachable_species: Vec<usize>,
    /// Reactions that never run.
    pub dead_reactions: Vec<usize>,
}

/// The reachability fixed point of the module documentation, without the pairs and
/// intermediates of [`analyse`].
pub fn reachability(net: &Network) -> Reachability {
    let nr = net.reactions.len();
    // Reachability fixed point from the fed species.
    let mut present: Vec<bool> = net.fed_species();
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
    let mut involved = vec![false; net.species.len()];
    for r in &net.reactions {
        for t in r.reactants.iter().chain(r.products.iter()) {
            involved[t.species] = true;
        }
    }
    Reachability {
        unreachable_species: (0..net.species.len())
            .filter(|&j| !present[j] && involved[j])
            .collect(),
        dead_reactions: (0..nr).filter(|&i| !runs[i]).collect(),
    }
}
