//! Stoichiometry of the network: exact rank of ν, a set of independent reactions, the
//! combination that gives each dependent reaction, and the conservation laws.
//!
//! The number of independent reactions is the rank of the stoichiometric matrix (Denbigh, The
//! Principles of Chemical Equilibrium; from memory). Conservation laws are a basis of the left
//! null space {y : yᵀν = 0}: every such y is a combination of species amounts that no reaction
//! changes (element balances are among them).

use crate::exact::{SparseQMatrix, Terms};
use crate::model::Network;
use num_bigint::BigInt;

/// A dependent reaction and its combination of independent ones: ν_dep = Σ c_i ν_i.
#[derive(Debug, Clone)]
pub struct Dependent {
    pub reaction: usize,
    pub combination: Terms,
}

/// Result of the stoichiometric analysis.
#[derive(Debug, Clone)]
pub struct Stoichiometry {
    pub rank: usize,
    /// Independent reactions, greedy in file order.
    pub independent: Vec<usize>,
    pub dependent: Vec<Dependent>,
    /// Basis of the conservation laws: each a sparse list of (species, integer coefficient).
    pub conservation_laws: Vec<Vec<(usize, BigInt)>>,
}

/// The exact stoichiometric matrix over the given species rows (x reactions), sparse: its
/// memory follows the non-zero coefficients, not species × reactions.
fn exact_matrix(net: &Network, rows: &[usize]) -> SparseQMatrix {
    let mut row_of = vec![usize::MAX; net.species.len()];
    for (r, &j) in rows.iter().enumerate() {
        row_of[j] = r;
    }
    SparseQMatrix::from_entries(
        rows.len(),
        net.reactions.len(),
        net.reactions.iter().enumerate().flat_map(|(i, r)| {
            let row_of = &row_of;
            r.net_exact
                .iter()
                .map(move |(j, c)| (row_of[*j], i, c.clone()))
        }),
    )
}

/// The reactions' part of [`Stoichiometry`]: rank, independent set and dependent
/// combinations, without the conservation laws.
#[derive(Debug, Clone)]
pub struct ReactionDependence {
    pub rank: usize,
    /// Independent reactions, greedy in file order.
    pub independent: Vec<usize>,
    pub dependent: Vec<Dependent>,
}

/// Rank, independent set and dependent combinations, exact, as [`analyse`] gives them, without
/// computing the conservation laws (the consistency findings do not use them).
pub fn dependence(net: &Network) -> ReactionDependence {
    let m = exact_matrix(net, &net.reacting_species());
    let dep = m.column_dependence_exact();
    drop(m);
    ReactionDependence {
        rank: dep.independent.len(),
        independent: dep.independent,
        dependent: dep
            .dependent
            .into_iter()
            .map(|(reaction, combination)| Dependent {
                reaction,
                combination,
            })
            .collect(),
    }
}

/// Rank, independent set, dependent combinations and conservation laws, all exact.
///
/// Only species that some reaction changes enter the matrix: each of the others (inerts,
/// catalysts that cancel) is its own conservation law, N_j = constant. This keeps the work and
/// memory to the reacting part of a network with many inert species.
pub fn analyse(net: &Network) -> Stoichiometry {
    // `net` and `net_exact` hold the same species (the first is converted from the second).
    let reacting = net.reacting_species();
    let m = exact_matrix(net, &reacting);
    let dep = m.dependence();
    drop(m);
    let dependent = dep
        .dependent
        .into_iter()
        .map(|(reaction, combination)| Dependent {
            reaction,
            combination,
        })
        .collect();
    let mut conservation_laws: Vec<Vec<(usize, BigInt)>> = dep
        .left_null_space
        .into_iter()
        .map(|v| v.into_iter().map(|(r, c)| (reacting[r], c)).collect())
        .collect();
    let mut is_reacting = vec![false; net.species.len()];
    for &j in &reacting {
        is_reacting[j] = true;
    }
    conservation_laws.extend(
        (0..net.species.len())
            .filter(|&j| !is_reacting[j])
            .map(|j| vec![(j, BigInt::from(1))]),
    );
    Stoichiometry {
        rank: dep.independent.len(),
        independent: dep.independent,
        dependent,
        conservation_laws,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::exact::modular::Mersenne61;

    /// A generated network (small integer coefficients, as real mechanisms have) is answered
    /// by the prime field with every answer confirmed, and the answer is the rational one.
    #[test]
    fn generated_network_takes_the_prime_field_path() {
        let spec = crate::generate::GeneratorSpec {
            species: 300,
            reactions: 1000,
            seed: 3,
            ..Default::default()
        };
        let text = crate::generate::generate_study(&spec).expect("generated");
        let net = crate::load_str(&text, "generated", &[]).expect("loads");
        let m = exact_matrix(&net, &net.reacting_species());
        let fast = m
            .dependence_modular(Mersenne61)
            .expect("confirmed mod 2^61 − 1");
        assert_eq!(fast, m.dependence_rational());
        assert_eq!(fast.independent.len(), 299);
        assert_eq!(fast.left_null_space.len(), 1);
        // The reactions alone, as the findings compute them.
        let d = dependence(&net);
        assert_eq!(d.independent, fast.independent);
        assert_eq!(d.rank, 299);
        let pairs: Vec<(usize, Terms)> = d
            .dependent
            .into_iter()
            .map(|d| (d.reaction, d.combination))
            .collect();
        assert_eq!(pairs, fast.dependent);
    }

    /// A duplicate with a factor beyond what reconstruction modulo 2^61 − 1 recovers
    /// (|a| ≤ 2^30): the prime field declines, the rational elimination answers, and the
    /// findings alone still name the exact factor (r2 = 3000000007 r1, read off the file).
    #[test]
    fn findings_alone_on_the_rational_fall_back() {
        let text = "name: duplicate with a large factor (test values)
phase: liquid
species: {A: {}, B: {}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.01 1/s}}
  - {id: r2, stoich: 3000000007 A -> 3000000007 B, rate: {k: 0.01 1/s, orders: {A: 1}}}
feed: {T: 350 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
";
        let net = crate::load_str(text, "large factor", &[]).expect("loads");
        let m = exact_matrix(&net, &net.reacting_species());
        assert!(m.column_dependence_modular(Mersenne61).is_none());
        let d = dependence(&net);
        assert_eq!((d.rank, d.independent.clone()), (1, vec![0]));
        let f: Vec<String> = crate::analysis::findings(&net)
            .into_iter()
            .map(|f| f.message)
            .collect();
        let full: Vec<String> = crate::analysis::check(&net)
            .findings
            .into_iter()
            .map(|f| f.message)
            .collect();
        assert_eq!(f, full);
        assert!(
            f.iter()
                .any(|m| m.contains("`r2` is 3000000007 times `r1`")),
            "{f:?}"
        );
    }
}
