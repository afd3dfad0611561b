//! Chemical formulas: element counts from strings such as `Ca(OH)2`, `K4[Fe(CN)6]`,
//! `CuSO4·5H2O` or `Fe0.95O`.
//!
//! # Grammar
//!
//! ```text
//! formula := part ( sep multiplier? part )*
//! sep     := '·' | '⋅' | '•' | '*' | '.'
//! part    := item+
//! item    := Element count? | '(' part ')' count? | '[' part ']' count?
//! count   := digits ( '.' digits )?            must be > 0
//! ```
//!
//! Element symbols are checked against the 118 elements H..Og. A `.` between two digits is
//! a decimal point (`Fe0.95O`); any other `.` separates an adduct/hydrate, so write
//! `CuSO4·5H2O` or `CuSO4*5H2O`; `CuSO4.5H2O` is refused as ambiguous (decimal count or hydrate?).
//! The multiplier after a separator applies to the whole following part:
//! `CuSO4·5H2O` = Cu1 S1 O4 + 5 × (H2 O1). Ionic charges (`SO4^2-`, `Na+`) are not
//! supported.

use std::collections::BTreeMap;
use thiserror::Error;

/// Deepest bracket nesting accepted, so parsing cannot exhaust the stack.
const MAX_DEPTH: usize = 32;

/// The 118 element symbols in order of atomic number (IUPAC periodic table, from memory).
const ELEMENTS: [&str; 118] = [
    "H", "He", "Li", "Be", "B", "C", "N", "O", "F", "Ne", "Na", "Mg", "Al", "Si", "P", "S", "Cl",
    "Ar", "K", "Ca", "Sc", "Ti", "V", "Cr", "Mn", "Fe", "Co", "Ni", "Cu", "Zn", "Ga", "Ge", "As",
    "Se", "Br", "Kr", "Rb", "Sr", "Y", "Zr", "Nb", "Mo", "Tc", "Ru", "Rh", "Pd", "Ag", "Cd", "In",
    "Sn", "Sb", "Te", "I", "Xe", "Cs", "Ba", "La", "Ce", "Pr", "Nd", "Pm", "Sm", "Eu", "Gd", "Tb",
    "Dy", "Ho", "Er", "Tm", "Yb", "Lu", "Hf", "Ta", "W", "Re", "Os", "Ir", "Pt", "Au", "Hg", "Tl",
    "Pb", "Bi", "Po", "At", "Rn", "Fr", "Ra", "Ac", "Th", "Pa", "U", "Np", "Pu", "Am", "Cm", "Bk",
    "Cf", "Es", "Fm", "Md", "No", "Lr", "Rf", "Db", "Sg", "Bh", "Hs", "Mt", "Ds", "Rg", "Cn", "Nh",
    "Fl", "Mc", "Lv", "Ts", "Og",
];

fn is_element(s: &str) -> bool {
    ELEMENTS.contains(&s)
}

/// Element counts of a chemical formula.
#[derive(Debug, Clone, PartialEq)]
pub struct Formula {
    atoms: BTreeMap<String, f64>,
}

/// Errors from [`Formula::parse`]. Positions count characters from 1.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum FormulaError {
    #[error("empty formula; expected e.g. `H2O`, `Ca(OH)2` or `CuSO4·5H2O`")]
    Empty,
    #[error(
        "ambiguous `{text}`: a decimal count or a hydrate? Write a hydrate as `CuSO4·5H2O` or `CuSO4*5H2O`; a decimal count of 1 or more before another element as a group, e.g. `(Li)1.5Co`"
    )]
    Ambiguous { text: String },
    #[error("unknown element `{symbol}` at position {pos}{}", hint(.suggestion))]
    UnknownElement {
        symbol: String,
        pos: usize,
        suggestion: Option<String>,
    },
    #[error(
        "`{text}` at position {pos} starts with a lowercase letter; element symbols start with an uppercase letter{}",
        hint(.suggestion)
    )]
    Lowercase {
        text: String,
        pos: usize,
        suggestion: Option<String>,
    },
    #[error(
        "unexpected character `{ch}` at position {pos}; a formula holds element symbols, counts, `(` `)` `[` `]` and a hydrate separator `·`, `*` or `.`"
    )]
    UnexpectedChar { ch: char, pos: usize },
    #[error("`{open}` at position {pos} is never closed")]
    UnclosedBracket { open: char, pos: usize },
    #[error("`{close}` at position {pos} has no matching opening bracket")]
    UnmatchedClose { close: char, pos: usize },
    #[error("`{close}` at position {pos} does not match `{open}` at position {open_pos}")]
    MismatchedBracket {
        open: char,
        open_pos: usize,
        close: char,
        pos: usize,
    },
    #[error("empty group `{text}` at position {pos}")]
    EmptyGroup { text: String, pos: usize },
    #[error(
        "nothing to count at position {pos}: a hydrate separator must have a formula on both sides, as in `CuSO4·5H2O`"
    )]
    EmptyPart { pos: usize },
    #[error("count `{text}` at position {pos} is zero; leave the element out instead")]
    ZeroCount { text: String, pos: usize },
    #[error("count `{text}` at position {pos} is not a usable finite number")]
    BadCount { text: String, pos: usize },
    #[error(
        "number `{text}` at position {pos} does not follow an element or a group; a leading multiplier is only accepted after a hydrate separator (`CuSO4·5H2O`)"
    )]
    StrayCount { text: String, pos: usize },
    #[error(
        "charge `{text}` at position {pos}: ionic charges are not supported; give the neutral formula"
    )]
    ChargeNotSupported { text: String, pos: usize },
    #[error("brackets nested deeper than {MAX_DEPTH} levels at position {pos}")]
    TooDeep { pos: usize },
    #[error("element counts leave the range of positive finite numbers (overflow or underflow)")]
    Overflow,
}

fn hint(s: &Option<String>) -> String {
    match s {
        Some(s) => format!("; did you mean {s}?"),
        None => String::new(),
    }
}

fn is_separator(c: char) -> bool {
    matches!(c, '·' | '⋅' | '•' | '*' | '.')
}

type Counts = BTreeMap<String, f64>;

fn add_scaled(into: &mut Counts, from: &Counts, k: f64) -> Result<(), FormulaError> {
    for (el, n) in from {
        let e = into.entry(el.clone()).or_insert(0.0);
        *e += n * k;
        if !(e.is_finite() && *e > 0.0) {
            return Err(FormulaError::Overflow);
        }
    }
    Ok(())
}

struct Parser {
    chars: Vec<char>,
    i: usize,
}

impl Parser {
    fn peek(&self) -> Option<char> {
        self.chars.get(self.i).copied()
    }

    fn pos(&self) -> usize {
        self.i + 1
    }

    /// Reads an optional count: digits with an optional decimal part (`.` followed by a
    /// digit). Returns `None` when no digit is next.
    fn count(&mut self) -> Result<Option<f64>, FormulaError> {
        let start = self.i;
        while self.peek().is_some_and(|c| c.is_ascii_digit()) {
            self.i += 1;
        }
        if self.i == start {
            return Ok(None);
        }
        if self.peek() == Some('.')
            && self
                .chars
                .get(self.i + 1)
                .is_some_and(|c| c.is_ascii_digit())
        {
            self.i += 1;
            while self.peek().is_some_and(|c| c.is_ascii_digit()) {
                self.i += 1;
            }
        }
        let text: String = self.chars[start..self.i].iter().collect();
        let pos = start + 1;
        match text.parse::<f64>() {
            Ok(0.0) => Err(FormulaError::ZeroCount { text, pos }),
            Ok(v) if v.is_finite() => Ok(Some(v)),
            _ => Err(FormulaError::BadCount { text, pos }),
        }
    }

    /// Parses items until a closing bracket, a separator or the end.
    fn part(&mut self, depth: usize) -> Result<Counts, FormulaError> {
        let mut acc = Counts::new();
        let mut prev_single: Option<char> = None;
        while let Some(c) = self.peek() {
            let pos = self.pos();
            if c.is_ascii_uppercase() {
                let start = self.i;
                self.i += 1;
                while self.peek().is_some_and(|c| c.is_ascii_lowercase()) {
                    self.i += 1;
                }
                let symbol: String = self.chars[start..self.i].iter().collect();
                if !is_element(&symbol) {
                    return Err(FormulaError::UnknownElement {
                        suggestion: suggest_element(&symbol, prev_single),
                        symbol,
                        pos,
                    });
                }
                let n = self.count()?;
                prev_single = if symbol.len() == 1 && n.is_none() {
                    Some(c)
                } else {
                    None
                };
                let one = Counts::from([(symbol, 1.0)]);
                add_scaled(&mut acc, &one, n.unwrap_or(1.0))?;
            } else if c == '(' || c == '[' {
                prev_single = None;
                if depth >= MAX_DEPTH {
                    return Err(FormulaError::TooDeep { pos });
                }
                self.i += 1;
                let inner = self.part(depth + 1)?;
                let close = if c == '(' { ')' } else { ']' };
                match self.peek() {
                    Some(k) if k == close => self.i += 1,
                    Some(k @ (')' | ']')) => {
                        return Err(FormulaError::MismatchedBracket {
                            open: c,
                            open_pos: pos,
                            close: k,
                            pos: self.pos(),
                        });
                    }
                    _ => return Err(FormulaError::UnclosedBracket { open: c, pos }),
                }
                if inner.is_empty() {
                    return Err(FormulaError::EmptyGroup {
                        text: format!("{c}{close}"),
                        pos,
                    });
                }
                let n = self.count()?.unwrap_or(1.0);
                add_scaled(&mut acc, &inner, n)?;
            } else if c == ')' || c == ']' {
                if depth == 0 {
                    return Err(FormulaError::UnmatchedClose { close: c, pos });
                }
                break;
            } else if is_separator(c) {
                if depth > 0 {
                    return Err(FormulaError::UnexpectedChar { ch: c, pos });
                }
                break;
            } else if c.is_ascii_lowercase() {
                let start = self.i;
                while self.peek().is_some_and(|c| c.is_ascii_alphabetic()) {
                    self.i += 1;
                }
                let text: String = self.chars[start..self.i].iter().collect();
                return Err(FormulaError::Lowercase {
                    suggestion: suggest_lowercase(&text),
                    text,
                    pos,
                });
            } else if c.is_ascii_digit() {
                let start = self.i;
                while self.peek().is_some_and(|c| c.is_ascii_digit() || c == '.') {
                    self.i += 1;
                }
                let text: String = self.chars[start..self.i].iter().collect();
                return Err(FormulaError::StrayCount { text, pos });
            } else if matches!(c, '+' | '-' | '^' | '−') {
                let text: String = self.chars[self.i..].iter().collect();
                return Err(FormulaError::ChargeNotSupported { text, pos });
            } else {
                return Err(FormulaError::UnexpectedChar { ch: c, pos });
            }
        }
        Ok(acc)
    }

    fn formula(&mut self) -> Result<Counts, FormulaError> {
        let mut total = Counts::new();
        let mut first = true;
        loop {
            let part_pos = self.pos();
            let mult = if first {
                1.0
            } else {
                self.count()?.unwrap_or(1.0)
            };
            let part = self.part(0)?;
            if part.is_empty() {
                return Err(FormulaError::EmptyPart { pos: part_pos });
            }
            add_scaled(&mut total, &part, mult)?;
            first = false;
            match self.peek() {
                None => break,
                Some(c) if is_separator(c) => self.i += 1,
                // `part` only stops at the end, a separator, or returns an error.
                Some(c) => {
                    return Err(FormulaError::UnexpectedChar {
                        ch: c,
                        pos: self.pos(),
                    });
                }
            }
        }
        Ok(total)
    }
}

/// Suggestion for an unknown symbol that starts with an uppercase letter.
fn suggest_element(symbol: &str, prev_single: Option<char>) -> Option<String> {
    let mut chars = symbol.chars();
    let first = chars.next()?;
    // `CL` typed for `Cl`: the previous one-letter element plus this letter in lowercase.
    if let (Some(p), 1) = (prev_single, symbol.chars().count()) {
        let joined = format!("{p}{}", first.to_ascii_lowercase());
        if is_element(&joined) {
            return Some(format!("`{joined}`"));
        }
    }
    // Too many letters: `Hee` -> `He`, `Oxy` -> `O`.
    let two: String = symbol.chars().take(2).collect();
    if symbol.chars().count() > 2 && is_element(&two) {
        return Some(format!("`{two}`"));
    }
    let one = first.to_string();
    if symbol.chars().count() > 1 && is_element(&one) && !is_element(&two) {
        let same: Vec<&str> = ELEMENTS
            .iter()
            .copied()
            .filter(|e| e.starts_with(first) && e.len() == 2)
            .collect();
        if same.is_empty() {
            return Some(format!("`{one}`"));
        }
        return Some(format!("`{one}` or one of {}", same.join(", ")));
    }
    let same: Vec<&str> = ELEMENTS
        .iter()
        .copied()
        .filter(|e| e.starts_with(first))
        .collect();
    match same.len() {
        0 => None,
        1 => Some(format!("`{}`", same[0])),
        _ => Some(format!("one of {}", same.join(", "))),
    }
}

/// Suggestion for a lowercase run such as `cl` or `h`: the capitalised element.
fn suggest_lowercase(text: &str) -> Option<String> {
    let mut chars = text.chars();
    let first = chars.next()?.to_ascii_uppercase();
    let second = chars.next();
    if let Some(s) = second {
        let two = format!("{first}{s}");
        if is_element(&two) {
            return Some(format!("`{two}`"));
        }
    }
    let one = first.to_string();
    is_element(&one).then(|| format!("`{one}`"))
}

impl Formula {
    /// Parses a formula into element counts (see the module docs for the grammar).
    ///
    /// Counts multiply through brackets: `K4[Fe(CN)6]` = K4 Fe1 C6 N6. A hydrate
    /// multiplier scales the following part: `CuSO4·5H2O` = Cu1 S1 O9 H10.
    pub fn parse(s: &str) -> Result<Formula, FormulaError> {
        let chars: Vec<char> = s.chars().collect();
        let lead = chars.iter().take_while(|c| c.is_whitespace()).count();
        let trail = chars.iter().rev().take_while(|c| c.is_whitespace()).count();
        if lead == chars.len() {
            return Err(FormulaError::Empty);
        }
        let mut p = Parser {
            chars: chars[..chars.len() - trail].to_vec(),
            i: lead,
        };
        // `CuSO4.5H2O`: a dot between digits reads as a decimal count (Fe0.95O), but after a
        // whole count of 1 or more and before an element it is far more often a hydrate
        // separator. Refuse the ambiguity rather than guess.
        for w in 1..p.chars.len().saturating_sub(2) {
            let c = &p.chars;
            if c[w] == '.' && c[w - 1].is_ascii_digit() && c[w + 1].is_ascii_digit() {
                let int_start = (0..w)
                    .rev()
                    .take_while(|&k| c[k].is_ascii_digit())
                    .last()
                    .unwrap_or(w - 1);
                let whole: String = c[int_start..w].iter().collect();
                let after = c[w + 1..].iter().find(|ch| !ch.is_ascii_digit());
                let after_element = int_start > 0 && c[int_start - 1].is_ascii_alphabetic();
                if after_element
                    && whole.parse::<u64>().map(|v| v >= 1).unwrap_or(false)
                    && after.is_some_and(|ch| ch.is_ascii_uppercase() || *ch == '(' || *ch == '[')
                {
                    return Err(FormulaError::Ambiguous {
                        text: c[int_start..].iter().take(w - int_start + 4).collect(),
                    });
                }
            }
        }
        let atoms = p.formula()?;
        Ok(Formula { atoms })
    }

    /// Element symbol -> number of atoms.
    pub fn atoms(&self) -> &BTreeMap<String, f64> {
        &self.atoms
    }

    /// Molar mass in kg/mol from standard atomic weights, when every element is in
    /// [`ATOMIC_WEIGHTS`]; None otherwise (then a study gives `molar_mass` itself).
    pub fn molar_mass(&self) -> Option<f64> {
        let mut grams = 0.0;
        for (el, n) in &self.atoms {
            let w = ATOMIC_WEIGHTS.iter().find(|(s, _)| s == el)?.1;
            grams += w * n;
        }
        Some(grams * 1e-3)
    }
}

/// Standard atomic weights (g/mol) of common elements, abridged conventional values of the
/// IUPAC Commission on Isotopic Abundances and Atomic Weights (from memory; four to five
/// significant digits, ample for gas densities in the Ergun equation).
pub const ATOMIC_WEIGHTS: &[(&str, f64)] = &[
    ("H", 1.008),
    ("He", 4.0026),
    ("Li", 6.94),
    ("B", 10.81),
    ("C", 12.011),
    ("N", 14.007),
    ("O", 15.999),
    ("F", 18.998),
    ("Ne", 20.180),
    ("Na", 22.990),
    ("Mg", 24.305),
    ("Al", 26.982),
    ("Si", 28.085),
    ("P", 30.974),
    ("S", 32.06),
    ("Cl", 35.45),
    ("Ar", 39.95),
    ("K", 39.098),
    ("Ca", 40.078),
    ("Ti", 47.867),
    ("Cr", 51.996),
    ("Mn", 54.938),
    ("Fe", 55.845),
    ("Co", 58.933),
    ("Ni", 58.693),
    ("Cu", 63.546),
    ("Zn", 65.38),
    ("Br", 79.904),
    ("Mo", 95.95),
    ("Pd", 106.42),
    ("Ag", 107.87),
    ("Sn", 118.71),
    ("I", 126.90),
    ("Xe", 131.29),
    ("Pt", 195.08),
];

#[cfg(test)]
mod tests {
    use super::*;

    fn atoms(s: &str) -> Vec<(String, f64)> {
        let f = Formula::parse(s).unwrap_or_else(|e| panic!("`{s}` should parse: {e}"));
        f.atoms().iter().map(|(k, v)| (k.clone(), *v)).collect()
    }

    fn expect(s: &str, want: &[(&str, f64)]) {
        let mut want: Vec<(String, f64)> = want.iter().map(|(k, v)| (k.to_string(), *v)).collect();
        want.sort_by(|a, b| a.0.cmp(&b.0));
        let got = atoms(s);
        assert_eq!(got.len(), want.len(), "{s}: {got:?} vs {want:?}");
        for ((ge, gn), (we, wn)) in got.iter().zip(want.iter()) {
            assert_eq!(ge, we, "{s}");
            assert!((gn - wn).abs() < 1e-12, "{s}: {ge} {gn} != {wn}");
        }
    }

    #[test]
    fn periodic_table_has_118_distinct_symbols() {
        // IUPAC: elements 1 (H) to 118 (Og).
        let mut v = ELEMENTS.to_vec();
        v.sort_unstable();
        v.dedup();
        assert_eq!(v.len(), 118);
        assert_eq!(ELEMENTS[0], "H");
        assert_eq!(ELEMENTS[25], "Fe"); // Z = 26
        assert_eq!(ELEMENTS[117], "Og"); // Z = 118
    }

    #[test]
    fn simple_and_grouped() {
        // 1,3-butadiene C4H6 (common practice).
        expect("C4H6", &[("C", 4.0), ("H", 6.0)]);
        expect("H2O", &[("H", 2.0), ("O", 1.0)]);
        // Calcium hydroxide Ca(OH)2.
        expect("Ca(OH)2", &[("Ca", 1.0), ("O", 2.0), ("H", 2.0)]);
        // Potassium ferrocyanide K4[Fe(CN)6].
        expect(
            "K4[Fe(CN)6]",
            &[("K", 4.0), ("Fe", 1.0), ("C", 6.0), ("N", 6.0)],
        );
        // Repeated elements add up: acetic acid CH3COOH = C2 H4 O2.
        expect("CH3COOH", &[("C", 2.0), ("H", 4.0), ("O", 2.0)]);
        // Ammonium sulfate (NH4)2SO4.
        expect(
            "(NH4)2SO4",
            &[("N", 2.0), ("H", 8.0), ("S", 1.0), ("O", 4.0)],
        );
        // CO is carbon monoxide, Co cobalt.
        expect("CO", &[("C", 1.0), ("O", 1.0)]);
        expect("Co", &[("Co", 1.0)]);
        expect("  Og  ", &[("Og", 1.0)]);
    }

    #[test]
    fn hydrates() {
        // Copper(II) sulfate pentahydrate: Cu1 S1 O(4+5) H10.
        let want = [("Cu", 1.0), ("S", 1.0), ("O", 9.0), ("H", 10.0)];
        expect("CuSO4·5H2O", &want);
        expect("CuSO4*5H2O", &want);
        expect("CuSO4⋅5H2O", &want);
        // '.' not between digits separates: sodium carbonate monohydrate.
        expect(
            "Na2CO3.H2O",
            &[("Na", 2.0), ("C", 1.0), ("O", 4.0), ("H", 2.0)],
        );
        // Calcium sulfate hemihydrate CaSO4·0.5H2O.
        expect(
            "CaSO4·0.5H2O",
            &[("Ca", 1.0), ("S", 1.0), ("O", 4.5), ("H", 1.0)],
        );
        // Two adduct parts.
        expect(
            "NH3·BF3·2H2O",
            &[("N", 1.0), ("H", 7.0), ("B", 1.0), ("F", 3.0), ("O", 2.0)],
        );
    }

    #[test]
    fn decimal_counts() {
        // Wüstite Fe0.95O (non-stoichiometric, common practice).
        expect("Fe0.95O", &[("Fe", 0.95), ("O", 1.0)]);
        expect(
            "La0.8Sr0.2MnO3",
            &[("La", 0.8), ("Sr", 0.2), ("Mn", 1.0), ("O", 3.0)],
        );
        // A '.' between a whole count and more digits before an element is ambiguous.
        assert!(matches!(
            Formula::parse("CuSO4.5H2O"),
            Err(FormulaError::Ambiguous { .. })
        ));
        expect("(Li)1.5Co", &[("Li", 1.5), ("Co", 1.0)]);
    }

    #[test]
    fn molar_mass_from_standard_atomic_weights() {
        // H2O: 2(1.008) + 15.999 = 18.015 g/mol (IUPAC standard atomic weights, from memory).
        let m = Formula::parse("H2O").unwrap().molar_mass().unwrap();
        assert!((m - 18.015e-3).abs() < 1e-9);
        assert!(Formula::parse("Og").unwrap().molar_mass().is_none());
    }

    fn err(s: &str) -> FormulaError {
        match Formula::parse(s) {
            Ok(f) => panic!("`{s}` should be rejected, got {f:?}"),
            Err(e) => e,
        }
    }

    #[test]
    fn bad_formulas() {
        assert_eq!(err(""), FormulaError::Empty);
        assert_eq!(err("   "), FormulaError::Empty);
        assert_eq!(
            err("Xx"),
            FormulaError::UnknownElement {
                symbol: "Xx".into(),
                pos: 1,
                suggestion: Some("`Xe`".into()),
            }
        );
        assert_eq!(
            err("CCL4"),
            FormulaError::UnknownElement {
                symbol: "L".into(),
                pos: 3,
                suggestion: Some("`Cl`".into()),
            }
        );
        assert!(
            matches!(err("Hee"), FormulaError::UnknownElement { suggestion: Some(s), .. } if s == "`He`")
        );
        assert!(matches!(
            err("Qq"),
            FormulaError::UnknownElement {
                suggestion: None,
                ..
            }
        ));
        assert!(matches!(
            err("cl2"),
            FormulaError::Lowercase { pos: 1, suggestion: Some(s), .. } if s == "`Cl`"
        ));
        assert!(matches!(
            err("H2O)"),
            FormulaError::UnmatchedClose { close: ')', pos: 4 }
        ));
        assert!(matches!(
            err("Ca(OH2"),
            FormulaError::UnclosedBracket { open: '(', pos: 3 }
        ));
        assert!(matches!(
            err("Ca(OH]2"),
            FormulaError::MismatchedBracket {
                open: '(',
                open_pos: 3,
                close: ']',
                pos: 6
            }
        ));
        assert!(matches!(
            err("Ca()2"),
            FormulaError::EmptyGroup { pos: 3, .. }
        ));
        assert!(matches!(err("H0"), FormulaError::ZeroCount { pos: 2, .. }));
        assert!(matches!(err("Fe0.0O"), FormulaError::ZeroCount { .. }));
        assert!(matches!(err("CuSO4·0H2O"), FormulaError::ZeroCount { .. }));
        assert!(matches!(
            err("2H2O"),
            FormulaError::StrayCount { pos: 1, .. }
        ));
        assert!(matches!(
            err("(OH)2 3"),
            FormulaError::UnexpectedChar { ch: ' ', pos: 6 }
        ));
        assert!(matches!(
            err("Na+"),
            FormulaError::ChargeNotSupported { pos: 3, .. }
        ));
        assert!(matches!(
            err("SO4^2-"),
            FormulaError::ChargeNotSupported { pos: 4, .. }
        ));
        assert!(matches!(err("CuSO4·"), FormulaError::EmptyPart { pos: 7 }));
        assert!(matches!(err("·H2O"), FormulaError::EmptyPart { pos: 1 }));
        assert!(matches!(err("CuSO4··H2O"), FormulaError::EmptyPart { .. }));
        assert!(matches!(
            err("Ca(OH·H2O)"),
            FormulaError::UnexpectedChar { ch: '·', .. }
        ));
        assert!(matches!(
            err("H%"),
            FormulaError::UnexpectedChar { ch: '%', pos: 2 }
        ));
        let deep = format!("{}H{}", "(".repeat(500), ")".repeat(500));
        assert!(matches!(err(&deep), FormulaError::TooDeep { .. }));
        let big = format!("H{}", "9".repeat(400));
        assert!(matches!(err(&big), FormulaError::BadCount { .. }));
        let overflow = format!("{}H{}", "(".repeat(30), ")999999999999".repeat(30));
        assert_eq!(err(&overflow), FormulaError::Overflow);
    }

    #[test]
    fn messages_name_position_and_text() {
        let msg = err("CCL4").to_string();
        assert!(
            msg.contains("`L`") && msg.contains("position 3") && msg.contains("`Cl`"),
            "{msg}"
        );
        let msg = err("SO4^2-").to_string();
        assert!(
            msg.contains("not supported") && msg.contains("^2-"),
            "{msg}"
        );
        let msg = err("Ca(OH]2").to_string();
        assert!(
            msg.contains("position 6") && msg.contains("position 3"),
            "{msg}"
        );
    }

    /// Pseudo-random strings must give a formula or an error, never a panic; accepted
    /// formulas have only known elements and positive finite counts.
    #[test]
    fn random_inputs_never_panic() {
        let alphabet: Vec<char> = "HCONaClFeKSu()[]·*.0123456789 +xL".chars().collect();
        let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        let mut accepted = 0;
        for _ in 0..20_000 {
            let len = (next() % 14) as usize;
            let s: String = (0..len)
                .map(|_| alphabet[(next() % alphabet.len() as u64) as usize])
                .collect();
            match Formula::parse(&s) {
                Ok(f) => {
                    accepted += 1;
                    for (el, n) in f.atoms() {
                        assert!(is_element(el), "{s}: {el}");
                        assert!(n.is_finite() && *n > 0.0, "{s}: {el} {n}");
                    }
                }
                Err(e) => assert!(!e.to_string().is_empty()),
            }
        }
        assert!(
            accepted > 0,
            "the generator should produce some valid formulas"
        );
    }
}
