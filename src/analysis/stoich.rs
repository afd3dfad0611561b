//! Stoichiometry of the network: exact rank of ν, a set of independent reactions, the
//! combination that gives each dependent reaction, and the conservation laws.
//!
//! The number of independent reactions is the rank of the stoichiometric matrix (Denbigh, The
//! Principles of Chemical Equilibrium; from memory). Conservation laws are a basis of the left
//! null space {y : yᵀν = 0}: every such y is a combination of species amounts that no reaction
//! changes (element balances are among them).

use crate::exact::{Q, QMatrix, column_dependence, left_null_space};
use crate::model::Network;
use num_bigint::BigInt;
use num_traits::Zero;

/// A dependent reaction and its combination of independent ones: ν_dep = Σ c_i ν_i.
#[derive(Debug, Clone)]
pub struct Dependent {
    pub reaction: usize,
    pub combination: Vec<(usize, Q)>,
}

/// Result of the stoichiometric analysis.
#[derive(Debug, Clone)]
pub struct Stoichiometry {
    pub rank: usize,
    /// Independent reactions, greedy in file order.
    pub independent: Vec<usize>,
    pub dependent: Vec<Dependent>,
    /// Basis of the conservation laws, integer coefficients per species.
    pub conservation_laws: Vec<Vec<BigInt>>,
}

/// The exact stoichiometric matrix (species x reactions).
pub fn exact_matrix(net: &Network) -> QMatrix {
    let mut m = QMatrix::zeros(net.species.len(), net.reactions.len());
    for (i, r) in net.reactions.iter().enumerate() {
        for (j, c) in &r.net_exact {
            m.set(*j, i, c.clone());
        }
    }
    m
}

/// Rank, independent set, dependent combinations and conservation laws, all exact.
pub fn analyse(net: &Network) -> Stoichiometry {
    let m = exact_matrix(net);
    let dep = column_dependence(&m);
    let dependent = dep
        .dependent
        .into_iter()
        .map(|(reaction, combination)| Dependent {
            reaction,
            combination: combination
                .into_iter()
                .filter(|(_, c)| !c.is_zero())
                .collect(),
        })
        .collect();
    Stoichiometry {
        rank: dep.independent.len(),
        independent: dep.independent,
        dependent,
        conservation_laws: left_null_space(&m),
    }
}
