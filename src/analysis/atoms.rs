//! Atom balances from the species formulas and the element matrix.
//!
//! A reaction is balanced when Σ_j ν_j a_ej = 0 for every element e (a_ej atoms of e in j).
//! With an element matrix A (elements x species) of rank r, at most (species − r) reactions can
//! be independent (Denbigh, The Principles of Chemical Equilibrium; from memory).

use crate::exact::{Q, QMatrix, rank, rational_from_decimal, rational_from_f64, to_f64};
use crate::model::Network;
use num_bigint::BigInt;
use num_traits::{ToPrimitive, Zero};
use std::collections::{BTreeMap, HashMap};

/// The atom balance of one reaction.
#[derive(Debug, Clone)]
pub struct AtomBalance {
    pub reaction: usize,
    /// False when a species of the reaction has no formula (then nothing is checked).
    pub checked: bool,
    pub balanced: bool,
    /// Net atoms per element, products minus reactants (only non-zero entries).
    pub imbalance: BTreeMap<String, f64>,
    /// Species of the reaction without a formula.
    pub missing_formula: Vec<usize>,
}

/// The element matrix and the bound it sets.
#[derive(Debug, Clone)]
pub struct ElementMatrix {
    pub elements: Vec<String>,
    pub rank: usize,
    /// species − rank(A): the most independent reactions these species allow. None when some
    /// species lacks a formula.
    pub bound: Option<usize>,
}

/// Exact count of an element: formula counts are decimals, so go through their shortest text.
fn exact_count(x: f64) -> Q {
    rational_from_decimal(&format!("{x}"))
        .or_else(|| rational_from_f64(x))
        .unwrap_or_else(Q::zero)
}

/// [`exact_count`] remembered by value: a large network repeats a handful of counts.
#[derive(Default)]
struct Counts(HashMap<u64, Q>);

impl Counts {
    fn get(&mut self, x: f64) -> &Q {
        self.0.entry(x.to_bits()).or_insert_with(|| exact_count(x))
    }
}

/// A sum of exact terms: small integers add in an `i128`, anything else as a [`Q`].
#[derive(Default)]
struct Sum {
    small: i128,
    rest: Option<Q>,
}

impl Sum {
    fn add(&mut self, nu: &Q, count: &Q) {
        if nu.is_integer()
            && count.is_integer()
            && let (Some(a), Some(b)) = (nu.numer().to_i64(), count.numer().to_i64())
            && let Some(s) = self.small.checked_add(a as i128 * b as i128)
        {
            self.small = s;
            return;
        }
        let t = nu * count;
        match &mut self.rest {
            Some(r) => *r += t,
            None => self.rest = Some(t),
        }
    }

    fn value(self) -> Q {
        let small = Q::from_integer(BigInt::from(self.small));
        match self.rest {
            Some(r) => r + small,
            None => small,
        }
    }
}

/// Balance of every reaction.
pub fn balances(net: &Network) -> Vec<AtomBalance> {
    let mut counts = Counts::default();
    net.reactions
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let missing: Vec<usize> = r
                .net_exact
                .iter()
                .map(|(j, _)| *j)
                .filter(|j| net.species[*j].formula.is_none())
                .collect();
            if !missing.is_empty() {
                return AtomBalance {
                    reaction: i,
                    checked: false,
                    balanced: false,
                    imbalance: BTreeMap::new(),
                    missing_formula: missing,
                };
            }
            let mut sum: BTreeMap<&String, Sum> = BTreeMap::new();
            for (j, nu) in &r.net_exact {
                let f = net.species[*j].formula.as_ref().expect("checked above");
                for (el, n) in f.atoms() {
                    sum.entry(el).or_default().add(nu, counts.get(*n));
                }
            }
            let sum = sum.into_iter().map(|(e, v)| (e.clone(), v.value()));
            let imbalance: BTreeMap<String, f64> = sum
                .filter(|(_, v)| !v.is_zero())
                .map(|(e, v)| (e, to_f64(&v)))
                .collect();
            AtomBalance {
                reaction: i,
                checked: true,
                balanced: imbalance.is_empty(),
                imbalance,
                missing_formula: vec![],
            }
        })
        .collect()
}

/// The element matrix over all species with formulas.
pub fn element_matrix(net: &Network) -> ElementMatrix {
    let mut elements: Vec<String> = net
        .species
        .iter()
        .filter_map(|s| s.formula.as_ref())
        .flat_map(|f| f.atoms().keys().cloned())
        .collect();
    elements.sort();
    elements.dedup();
    let with: Vec<usize> = (0..net.species.len())
        .filter(|j| net.species[*j].formula.is_some())
        .collect();
    let mut counts = Counts::default();
    let m = QMatrix::from_fn(elements.len(), with.len(), |e, c| {
        let f = net.species[with[c]].formula.as_ref().expect("filtered");
        f.atoms()
            .get(&elements[e])
            .map(|n| counts.get(*n).clone())
            .unwrap_or_else(Q::zero)
    });
    let r = rank(&m);
    let bound = (with.len() == net.species.len()).then(|| net.species.len() - r);
    ElementMatrix {
        elements,
        rank: r,
        bound,
    }
}
