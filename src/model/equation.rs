//! Reaction equations such as `D + H2 -> M`, `0.5 O2 + H2 -> H2O` or `A <=> B`.
//!
//! Grammar (our own, documented in docs/network-format.md):
//!
//! ```text
//! equation := side arrow side
//! arrow    := "->" (one way) | "<=>" (reversible)
//! side     := term ("+" term)*
//! term     := [coefficient] species      coefficient: a positive decimal, e.g. 2, 0.5, 1.5e0
//! species  := a letter or '_' followed by letters, digits, '_', '(', ')', '[', ']', ',' or '\''
//! ```
//!
//! The coefficient is separated from the name by white space (`2 H2`); a coefficient glued to
//! the name (`2H2`) is accepted only where the glued token is not itself a species name.
//! A species may stand on both sides (`2 B -> B + C`): its net coefficient is the difference.

use crate::exact::rational_from_decimal as exact_decimal;
use num_rational::BigRational;
use num_traits::{Signed, Zero};

/// One term of one side: species name and its coefficient as written.
#[derive(Debug, Clone, PartialEq)]
pub struct Term {
    pub species: String,
    pub coefficient: f64,
    /// The same coefficient as an exact rational (for exact rank computations).
    pub exact: BigRational,
}

/// A parsed equation, names not yet resolved against the species list.
#[derive(Debug, Clone, PartialEq)]
pub struct Equation {
    pub reactants: Vec<Term>,
    pub products: Vec<Term>,
    pub reversible: bool,
}

/// What is wrong with an equation; the loader adds file, line and field.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EquationError {
    #[error("no reaction arrow: write `->` for a one-way reaction or `<=>` for a reversible one")]
    NoArrow,
    #[error("more than one arrow; an equation has exactly one `->` or `<=>`")]
    SeveralArrows,
    #[error("unknown arrow `{0}`: write `->` (one way) or `<=>` (reversible)")]
    BadArrow(String),
    #[error("the {0} side is empty")]
    EmptySide(&'static str),
    #[error("empty term in the {0} side (two `+` in a row, or a `+` at an end)")]
    EmptyTerm(&'static str),
    #[error("`{0}` is not a coefficient and a species name (expected e.g. `2 H2` or `0.5 O2`)")]
    BadTerm(String),
    #[error("coefficient `{0}` must be a finite positive decimal number")]
    BadCoefficient(String),
    #[error("{}", bad_name_message(.0, "species name"))]
    BadName(String),
    #[error("the equation has no net change: every species cancels")]
    NoNetChange,
}

/// What a name (species or reaction id) may hold. Names are ASCII: the rest of the format
/// (equations, `--set` paths, CSV headers, formulas) is read as ASCII, and a Greek letter or
/// an accented one looks like another letter in many fonts; write `alpha`, `beta`.
pub const NAME_RULE: &str =
    "ASCII letters or `_` first, then ASCII letters, digits, `_`, brackets, `,` or `'`";

/// Why `name` is not a valid name of this `kind` ("species name", "reaction id"), saying so
/// plainly when it holds a letter outside ASCII (α, β, é).
pub fn bad_name_message(name: &str, kind: &str) -> String {
    match name.chars().find(|c| c.is_alphabetic() && !c.is_ascii()) {
        Some(c) => format!(
            "`{name}` is not a valid {kind}: `{c}` is not an ASCII letter; names use ASCII letters only (write e.g. `alpha` for α), then ASCII letters, digits, `_`, brackets, `,` or `'`"
        ),
        None => format!("`{name}` is not a valid {kind} ({NAME_RULE})"),
    }
}

/// Whether `s` is a valid name ([`NAME_RULE`]).
pub fn valid_name(s: &str) -> bool {
    let mut chars = s.chars();
    match chars.next() {
        Some(c) if c.is_ascii_alphabetic() || c == '_' => {}
        _ => return false,
    }
    chars.all(|c| c.is_ascii_alphanumeric() || "_()[],'".contains(c))
}

fn parse_coefficient(s: &str) -> Result<(f64, BigRational), EquationError> {
    let bad = || EquationError::BadCoefficient(s.to_string());
    let exact = exact_decimal(s).ok_or_else(bad)?;
    if !exact.is_positive() {
        return Err(bad());
    }
    let value: f64 = s.parse().map_err(|_| bad())?;
    if !value.is_finite() || value <= 0.0 {
        return Err(bad());
    }
    Ok((value, exact))
}

fn parse_term(
    text: &str,
    side: &'static str,
    is_species: &dyn Fn(&str) -> bool,
) -> Result<Term, EquationError> {
    let words: Vec<&str> = text.split_whitespace().collect();
    match words.as_slice() {
        [] => Err(EquationError::EmptyTerm(side)),
        [name] => {
            if valid_name(name) || is_species(name) {
                if !valid_name(name) {
                    return Err(EquationError::BadName(name.to_string()));
                }
                return Ok(Term {
                    species: name.to_string(),
                    coefficient: 1.0,
                    exact: BigRational::from_integer(1.into()),
                });
            }
            // A glued coefficient: "2H2". Split at the first letter or '_'.
            let split = name
                .char_indices()
                .find(|(_, c)| c.is_ascii_alphabetic() || *c == '_')
                .map(|(i, _)| i);
            match split {
                Some(i) if i > 0 && valid_name(&name[i..]) => {
                    let (coefficient, exact) = parse_coefficient(&name[..i])?;
                    Ok(Term {
                        species: name[i..].to_string(),
                        coefficient,
                        exact,
                    })
                }
                _ => Err(EquationError::BadName(name.to_string())),
            }
        }
        [coef, name] => {
            let (coefficient, exact) = parse_coefficient(coef)?;
            if !valid_name(name) {
                return Err(EquationError::BadName(name.to_string()));
            }
            Ok(Term {
                species: name.to_string(),
                coefficient,
                exact,
            })
        }
        _ => Err(EquationError::BadTerm(text.trim().to_string())),
    }
}

fn parse_side(
    text: &str,
    side: &'static str,
    is_species: &dyn Fn(&str) -> bool,
) -> Result<Vec<Term>, EquationError> {
    if text.trim().is_empty() {
        return Err(EquationError::EmptySide(side));
    }
    text.split('+')
        .map(|t| parse_term(t, side, is_species))
        .collect()
}

/// Parse an equation. `is_species` tells whether a token is a declared species name, so that a
/// glued coefficient (`2H2`) is split only when the whole token is not a species itself.
pub fn parse_equation(
    text: &str,
    is_species: &dyn Fn(&str) -> bool,
) -> Result<Equation, EquationError> {
    if text.contains("<->") {
        return Err(EquationError::BadArrow("<->".to_string()));
    }
    let (reversible, arrow) = if text.contains("<=>") {
        (true, "<=>")
    } else if text.contains("->") {
        (false, "->")
    } else {
        for bad in ["<->", "=>", "<-", "=", "→", "⇌", ">"] {
            if text.contains(bad) {
                return Err(EquationError::BadArrow(bad.to_string()));
            }
        }
        return Err(EquationError::NoArrow);
    };
    let parts: Vec<&str> = text.split(arrow).collect();
    if parts.len() != 2 || parts[1].contains("->") || parts[1].contains("<=>") {
        return Err(EquationError::SeveralArrows);
    }
    let (left, right) = (parts[0], parts[1]);
    for stray in ["<", ">", "="] {
        if left.contains(stray) || right.contains(stray) {
            return Err(EquationError::SeveralArrows);
        }
    }
    let reactants = parse_side(left, "reactant", is_species)?;
    let products = parse_side(right, "product", is_species)?;
    let eq = Equation {
        reactants,
        products,
        reversible,
    };
    if eq.net().iter().all(|(_, c)| c.is_zero()) {
        return Err(EquationError::NoNetChange);
    }
    Ok(eq)
}

impl Equation {
    /// Net exact coefficients ν_j = (products) − (reactants) per species name, in order of first
    /// appearance; species that cancel keep a zero entry (callers drop them).
    pub fn net(&self) -> Vec<(String, BigRational)> {
        let mut out: Vec<(String, BigRational)> = Vec::new();
        let mut add = |name: &str, c: BigRational| {
            if let Some(e) = out.iter_mut().find(|(n, _)| n == name) {
                e.1 += c;
            } else {
                out.push((name.to_string(), c));
            }
        };
        for t in &self.reactants {
            add(&t.species, -t.exact.clone());
        }
        for t in &self.products {
            add(&t.species, t.exact.clone());
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn none(_: &str) -> bool {
        false
    }

    #[test]
    fn simple_and_decimal_coefficients() {
        let e = parse_equation("H2 + 0.5 O2 -> H2O", &none).unwrap();
        assert_eq!(e.reactants.len(), 2);
        assert_eq!(e.reactants[1].coefficient, 0.5);
        assert!(!e.reversible);
        let net = e.net();
        assert_eq!(net[1].1, BigRational::new((-1).into(), 2.into()));
    }

    #[test]
    fn reversible_and_glued_coefficient() {
        let e = parse_equation("CH4 + 2H2O <=> CO2 + 4 H2", &none).unwrap();
        assert!(e.reversible);
        assert_eq!(e.reactants[1].species, "H2O");
        assert_eq!(e.reactants[1].coefficient, 2.0);
        assert_eq!(e.products[1].coefficient, 4.0);
    }

    #[test]
    fn glued_token_that_is_a_species_stays_whole() {
        let is = |s: &str| s == "B2";
        let e = parse_equation("B2 -> C", &is).unwrap();
        assert_eq!(e.reactants[0].species, "B2");
    }

    #[test]
    fn species_on_both_sides_nets_out() {
        let e = parse_equation("2 B -> B + C", &none).unwrap();
        let net = e.net();
        assert_eq!(
            net[0],
            ("B".to_string(), BigRational::from_integer((-1).into()))
        );
    }

    #[test]
    fn malformed_equations_are_errors() {
        for bad in [
            "A B",
            "A = B",
            "A => B",
            "A -> B -> C",
            "-> B",
            "A ->",
            "A + + B -> C",
            "0 A -> B",
            "-1 A -> B",
            "2 3 A -> B",
            "A -> A",
            "1.2.3A -> B",
            "A <-> B",
        ] {
            assert!(parse_equation(bad, &none).is_err(), "{bad} accepted");
        }
    }
}
