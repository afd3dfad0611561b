//! The `species` section: names, formulas and molar masses, and per-species maps of
//! quantities (feed flows, concentrations, amounts).

use super::{Cx, LoadError};
use crate::model::Species;
use crate::model::equation::{bad_name_message, valid_name};
use crate::model::file::{RawQty, RawSpecies};
use crate::model::formula::Formula;
use crate::units::Dim;
use indexmap::IndexMap;

/// The declared species, in file order, and the index of each name.
pub(super) fn build_species(
    raw: &IndexMap<String, Option<RawSpecies>>,
    cx: &Cx,
) -> Result<(Vec<Species>, IndexMap<String, usize>), LoadError> {
    if raw.is_empty() {
        return Err(cx.err("species", "no species declared", None));
    }
    let mut index: IndexMap<String, usize> = IndexMap::new();
    let mut species = Vec::with_capacity(raw.len());
    for (i, (name, sp)) in raw.iter().enumerate() {
        let field = format!("species.{name}");
        if !valid_name(name) {
            return Err(cx.err(&field, &bad_name_message(name, "species name"), None));
        }
        let sp = sp.as_ref();
        let formula = match sp.and_then(|s| s.formula.as_deref()) {
            None => None,
            Some(f) => Some(Formula::parse(f).map_err(|e| {
                cx.err(
                    &format!("{field}.formula"),
                    &format!("bad formula `{f}`: {e}"),
                    None,
                )
            })?),
        };
        let molar_mass = match sp.and_then(|s| s.molar_mass.as_ref()) {
            None => formula.as_ref().and_then(|f| f.molar_mass()),
            Some(q) => {
                let f = format!("{field}.molar_mass");
                let m = cx.qty(
                    &f,
                    q,
                    Dim::MASS.div(Dim::AMOUNT),
                    "a molar mass",
                    "28.0 g/mol",
                )?;
                Some(cx.positive(&f, m, "a molar mass")?)
            }
        };
        index.insert(name.clone(), i);
        species.push(Species {
            name: name.clone(),
            formula,
            molar_mass,
        });
    }
    Ok((species, index))
}

/// Read a per-species map of quantities into a vector over all species.
pub(super) fn species_map(
    field: &str,
    map: &IndexMap<String, RawQty>,
    index: &IndexMap<String, usize>,
    want: Dim,
    what: &str,
    ex: &str,
    cx: &Cx,
) -> Result<Vec<f64>, LoadError> {
    let mut out = vec![0.0; index.len()];
    for (name, q) in map {
        let f = format!("{field}.{name}");
        let j = cx.species(&f, name, index)?;
        let v = cx.qty(&f, q, want, what, ex)?;
        if v < 0.0 {
            return Err(cx.err(
                &f,
                &format!("{what} cannot be negative, got {v} (SI)"),
                None,
            ));
        }
        out[j] = v;
    }
    Ok(out)
}
