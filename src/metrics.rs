//! What an engineer decides with: conversion, yields, selectivities and the element balance.
//!
//! Definitions (common practice; textbook notation), with F for flows or N for a batch:
//! - conversion of the key reactant A: X = (F_A0 − F_A)/F_A0;
//! - yield of product j on A: Y_j = (F_j − F_j0)/(F_A0 − F_A) · |ν_A|/ν_j, the stoichiometric
//!   ratio of the reaction that makes j, where j is made by that one reaction only and it
//!   consumes A; otherwise (j made in series, or by several reactions) the ratio is 1 and the
//!   yield is on a molar basis;
//! - yield of j on the feed: (F_j − F_j0)/F_A0;
//! - overall selectivity of the desired D over another product U: S_D/U = (F_D − F_D0)/(F_U − F_U0);
//! - instantaneous selectivity along the reactor: R_D/R_U, the net rates of formation.
//! - element balance closure: |Σ_j a_ej F_j − Σ_j a_ej F_j0| / Σ_j a_ej F_j0 for each element e.
//!
//! A yield or selectivity that has no meaning is "not defined" with the reason, never a number:
//! the key reactant net produced (autocatalysis) or not consumed (the denominator of Y is ~0), a
//! "product" that was fed and is net consumed, a selectivity whose two products were not both
//! formed. An amount formed or consumed within `ROUND_OFF` of the total feed is round-off and
//! counts as zero (an explicit rule, not a clip: the printed state still shows the number).

use crate::model::Network;
use serde::Serialize;

/// An amount formed or consumed smaller than this fraction of the total feed is round-off of
/// the integration and counts as zero in the ratios below.
pub const ROUND_OFF: f64 = 1e-13;

/// The yield of one product.
#[derive(Debug, Clone, Serialize)]
pub struct Yield {
    pub species: String,
    /// On the key reactant consumed (None when not defined; `not_defined` says why).
    pub on_key: Option<f64>,
    /// "stoichiometric (reaction ID)" or "molar".
    pub basis: String,
    /// On the key reactant fed (None when the product is net consumed).
    pub on_feed: Option<f64>,
    /// Why `on_key` (and `on_feed`, when it too is None) has no value.
    pub not_defined: Option<String>,
}

/// One selectivity of the desired product over another.
#[derive(Debug, Clone, Serialize)]
pub struct Selectivity {
    pub over: String,
    /// None when not defined; `not_defined` says why (e.g. the other product is not formed,
    /// so the ratio is unbounded).
    pub value: Option<f64>,
    pub not_defined: Option<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct Closure {
    pub element: String,
    /// Relative closure |out − in| / in.
    pub relative: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct Metrics {
    pub key: String,
    pub conversion: f64,
    pub yields: Vec<Yield>,
    pub desired: Option<String>,
    pub selectivity: Vec<Selectivity>,
    /// Element balance closure (elements of species that all have formulas).
    pub element_closure: Vec<Closure>,
}

/// Which reactions make a species (ν_ij > 0).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Makers {
    None,
    One(usize),
    Several,
}

/// The makers of every species, in one pass over the reactions' non-zero coefficients
/// (linear in them; asking each species of a 3000-species network in turn took 10 % of a run).
fn makers(net: &Network) -> Vec<Makers> {
    let mut m = vec![Makers::None; net.species.len()];
    for (i, r) in net.reactions.iter().enumerate() {
        for &(j, v) in &r.net {
            if v > 0.0 {
                m[j] = match m[j] {
                    Makers::None => Makers::One(i),
                    _ => Makers::Several,
                };
            }
        }
    }
    m
}

/// Products: species with a positive net coefficient in some reaction, other than the key.
pub fn products(net: &Network) -> Vec<usize> {
    products_of(net, &makers(net))
}

fn products_of(net: &Network, makers: &[Makers]) -> Vec<usize> {
    (0..net.species.len())
        .filter(|&j| j != net.key && makers[j] != Makers::None)
        .collect()
}

/// The stoichiometric ratio |ν_A|/ν_j when a single reaction makes j and it consumes A.
pub fn yield_ratio(net: &Network, j: usize) -> Option<(usize, f64)> {
    let makers: Vec<usize> = (0..net.reactions.len())
        .filter(|&i| net.reactions[i].nu(j) > 0.0)
        .collect();
    match makers.as_slice() {
        [i] => ratio_through(net, *i, j),
        _ => None,
    }
}

/// |ν_A|/ν_j of reaction i, the only maker of j, when it consumes the key A.
fn ratio_through(net: &Network, i: usize, j: usize) -> Option<(usize, f64)> {
    let r = &net.reactions[i];
    let a = net.key;
    (r.nu(a) < 0.0).then(|| (i, r.nu(a).abs() / r.nu(j)))
}

/// An amount formed (or consumed), zero within round-off of the total feed.
pub fn formed(delta: f64, total: f64) -> f64 {
    if delta.abs() <= ROUND_OFF * total {
        0.0
    } else {
        delta
    }
}

/// The yield of product j on the key reactant: (value on the key consumed, on the key fed,
/// why not defined). `made` = F_j − F_j0, `consumed` = F_A0 − F_A, both already through [`formed`].
pub fn yield_value(
    net: &Network,
    fed_key: f64,
    j: usize,
    made: f64,
    consumed: f64,
    factor: f64,
) -> (Option<f64>, Option<f64>, Option<String>) {
    let key = &net.species[net.key].name;
    let name = &net.species[j].name;
    let fed = fed_key;
    if made < 0.0 {
        let why = format!("`{name}` is fed and net consumed");
        return (None, None, Some(why));
    }
    let on_feed = (fed > 0.0).then(|| made / fed);
    if consumed < 0.0 {
        return (
            None,
            on_feed,
            Some(format!("the key reactant `{key}` is net produced")),
        );
    }
    if consumed == 0.0 {
        return (None, on_feed, Some(format!("no `{key}` consumed")));
    }
    (Some(made * factor / consumed), on_feed, None)
}

/// The overall selectivity of D over U from their amounts formed (already through [`formed`]).
pub fn selectivity_value(
    d_name: &str,
    u_name: &str,
    made_d: f64,
    made_u: f64,
) -> (Option<f64>, Option<String>) {
    if made_d < 0.0 {
        (None, Some(format!("`{d_name}` is fed and net consumed")))
    } else if made_u < 0.0 {
        (None, Some(format!("`{u_name}` is fed and net consumed")))
    } else if made_u == 0.0 && made_d == 0.0 {
        (
            None,
            Some(format!("neither `{d_name}` nor `{u_name}` formed")),
        )
    } else if made_u == 0.0 {
        (None, Some(format!("`{u_name}` not formed: unbounded")))
    } else {
        (Some(made_d / made_u), None)
    }
}

/// The selectivity of the desired product d over all other products formed together,
/// (F_d − F_d0)/Σ_U (F_U − F_U0), of what left (`left`) against what was fed (`fed`); `None`
/// where it is not defined (the rules of [`selectivity_value`]).
pub fn selectivity_over_all(net: &Network, d: usize, fed: &[f64], left: &[f64]) -> Option<f64> {
    let total: f64 = fed.iter().sum();
    let others: f64 = products(net)
        .into_iter()
        .filter(|&u| u != d)
        .map(|u| left[u] - fed[u])
        .sum();
    selectivity_value(
        &net.species[d].name,
        "the other products",
        formed(left[d] - fed[d], total),
        formed(others, total),
    )
    .0
}

/// Metrics of an outlet state against the feed.
pub fn compute(net: &Network, outlet: &[f64]) -> Metrics {
    compute_against(net, &net.feed.amounts, outlet)
}

/// Metrics of what left (`outlet`: the outlet with whatever left by side routes, a membrane's
/// permeate or a withdrawal) against everything fed (`fed`: the feed with every side feed,
/// join, distributed feed and dosing), per species. A contacting pattern is judged on what it
/// was given and what it gave: conversion of the key is (fed − left)/fed.
pub fn compute_against(net: &Network, fed: &[f64], outlet: &[f64]) -> Metrics {
    let f0 = fed;
    let a = net.key;
    let total: f64 = fed.iter().sum();
    let consumed = f0[a] - outlet[a];
    let conversion = if f0[a] > 0.0 {
        consumed / f0[a]
    } else {
        f64::NAN
    };
    let consumed_net = formed(consumed, total);
    let makers = makers(net);
    let products = products_of(net, &makers);
    let yields = products
        .iter()
        .map(|&j| {
            let made = formed(outlet[j] - f0[j], total);
            let ratio = match makers[j] {
                Makers::One(i) => ratio_through(net, i, j),
                _ => None,
            };
            let (basis, factor) = match ratio {
                Some((i, k)) => (format!("stoichiometric ({})", net.reactions[i].id), k),
                None => ("molar".to_string(), 1.0),
            };
            let (on_key, on_feed, not_defined) =
                yield_value(net, f0[a], j, made, consumed_net, factor);
            Yield {
                species: net.species[j].name.clone(),
                on_key,
                basis,
                on_feed,
                not_defined,
            }
        })
        .collect();
    let (desired, selectivity) = match net.desired {
        None => (None, vec![]),
        Some(d) => (
            Some(net.species[d].name.clone()),
            products
                .iter()
                .filter(|&&u| u != d)
                .map(|&u| {
                    let (value, not_defined) = selectivity_value(
                        &net.species[d].name,
                        &net.species[u].name,
                        formed(outlet[d] - f0[d], total),
                        formed(outlet[u] - f0[u], total),
                    );
                    Selectivity {
                        over: net.species[u].name.clone(),
                        value,
                        not_defined,
                    }
                })
                .collect(),
        ),
    };
    Metrics {
        key: net.species[a].name.clone(),
        conversion,
        yields,
        desired,
        selectivity,
        element_closure: element_closure_against(net, f0, outlet),
    }
}

/// Element balance closure of a state against the feed.
pub fn element_closure(net: &Network, state: &[f64]) -> Vec<Closure> {
    element_closure_against(net, &net.feed.amounts, state)
}

/// Element closure of `state` against `fed` (the feed with whatever entered by side routes;
/// `state` with whatever left by them).
pub fn element_closure_against(net: &Network, fed: &[f64], state: &[f64]) -> Vec<Closure> {
    if net.species.iter().any(|s| s.formula.is_none()) {
        return vec![];
    }
    let atoms = |j: usize| net.species[j].formula.as_ref().expect("checked").atoms();
    let mut elements: Vec<&String> = (0..net.species.len())
        .flat_map(|j| atoms(j).keys())
        .collect();
    elements.sort();
    elements.dedup();
    // count[e·n + j]: atoms of element e in species j, 0 where it has none; filled from each
    // formula's own atoms, instead of a look-up by name per element and species. The sums
    // below run over every species in order, zeros included, as before.
    let n = state.len();
    let mut count = vec![0.0; elements.len() * n];
    for j in 0..n {
        for (name, &a) in atoms(j) {
            if let Ok(e) = elements.binary_search(&name) {
                count[e * n + j] = a;
            }
        }
    }
    elements
        .into_iter()
        .enumerate()
        .map(|(e, name)| {
            let count = &count[e * n..(e + 1) * n];
            let inn: f64 = (0..n).map(|j| count[j] * fed[j]).sum();
            let out: f64 = (0..n).map(|j| count[j] * state[j]).sum();
            let scale = inn.abs().max(1e-300);
            Closure {
                element: name.clone(),
                relative: (out - inn).abs() / scale,
            }
        })
        .collect()
}

/// Instantaneous selectivity R_D/R_U (net rates of formation) at a state, for each other product;
/// not defined where D or U is being net consumed, or U is not being formed.
/// `pressure_ratio` is P/P0 at that state (1 where the pressure does not vary).
pub fn instantaneous_selectivity(
    net: &Network,
    balance: &crate::reactor::Balance,
    x: f64,
    y: &[f64],
) -> Vec<Selectivity> {
    let Some(d) = net.desired else { return vec![] };
    let mut r = Vec::new();
    balance.reaction_rates(x, y, &mut r);
    // Net rate of formation of every species, Σ_i ν_ij r_i, in one pass over the reactions'
    // non-zero coefficients, in reaction order as before (the zero terms added nothing).
    let mut formation = vec![0.0; net.species.len()];
    for (rx, ri) in net.reactions.iter().zip(&r) {
        for &(j, v) in &rx.net {
            formation[j] += v * ri;
        }
    }
    let rd = formation[d];
    products(net)
        .into_iter()
        .filter(|&u| u != d)
        .map(|u| {
            let ru = formation[u];
            // Defined only where both are formed (the same rule as the overall selectivity):
            // a product being net consumed has no selectivity, not a negative one.
            let why = if rd < 0.0 {
                Some(format!("`{}` being net consumed", net.species[d].name))
            } else if ru < 0.0 {
                Some(format!("`{}` being net consumed", net.species[u].name))
            } else if ru <= 1e-300 {
                Some(format!("`{}` not being formed", net.species[u].name))
            } else {
                None
            };
            Selectivity {
                over: net.species[u].name.clone(),
                value: why.is_none().then(|| rd / ru),
                not_defined: why,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::generate::{GeneratorSpec, generate_study};

    /// A generated network (many products, several makers each, some made by one reaction).
    fn generated() -> Network {
        let spec = GeneratorSpec {
            species: 40,
            reactions: 120,
            seed: 7,
            ..GeneratorSpec::default()
        };
        let text = generate_study(&spec).expect("generates");
        crate::load_str(&text, "generated.yaml", &[]).expect("loads")
    }

    /// The one-pass products and stoichiometric yield bases are the definitions asked of each
    /// species in turn: a positive ν_ij in some reaction, and a single maker consuming the key.
    #[test]
    fn one_pass_products_and_yield_bases_match_the_definitions() {
        let net = generated();
        let by_definition: Vec<usize> = (0..net.species.len())
            .filter(|&j| j != net.key && net.reactions.iter().any(|r| r.nu(j) > 0.0))
            .collect();
        assert!(by_definition.len() > 10);
        assert_eq!(products(&net), by_definition);
        let outlet: Vec<f64> = net.feed.amounts.iter().map(|f| 0.5 * f + 1e-3).collect();
        let m = compute(&net, &outlet);
        assert_eq!(m.yields.len(), by_definition.len());
        let mut stoichiometric = 0;
        for (y, &j) in m.yields.iter().zip(&by_definition) {
            assert_eq!(y.species, net.species[j].name);
            match yield_ratio(&net, j) {
                Some((i, _)) => {
                    stoichiometric += 1;
                    assert_eq!(y.basis, format!("stoichiometric ({})", net.reactions[i].id));
                }
                None => assert_eq!(y.basis, "molar"),
            }
        }
        assert!(stoichiometric > 0, "some product has a single maker");
    }
}
