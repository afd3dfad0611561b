//! The `species` section: names, formulas and molar masses, and per-species maps of
//! quantities (feed flows, concentrations, amounts).

use super::messages::significant;
use super::{Cx, LoadError, conc};
use crate::model::Species;
use crate::model::equation::{bad_name_message, valid_name};
use crate::model::file::{RawQty, RawSpecies};
use crate::model::formula::Formula;
use crate::thermo::{HeatCapacity, SpeciesThermo};
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
        let cp = match sp.and_then(|s| s.cp.as_ref()) {
            None => None,
            Some(q) => {
                let f = format!("{field}.cp");
                let v = cx.qty(
                    &f,
                    q,
                    Dim::energy().div(Dim::AMOUNT).div(Dim::TEMPERATURE),
                    "a molar heat capacity",
                    "75 J/(mol*K)",
                )?;
                Some(HeatCapacity::Constant(cx.positive(
                    &f,
                    v,
                    "a heat capacity",
                )?))
            }
        };
        index.insert(name.clone(), i);
        species.push(Species {
            name: name.clone(),
            formula,
            molar_mass,
            thermo: SpeciesThermo {
                cp,
                ..Default::default()
            },
        });
    }
    Ok((species, index))
}

/// Per-species quantities (`feed.flows`, `feed.amounts`, `feed.concentrations`) in SI.
/// Each may also be given by mass (`kg/h`, `lb`, `g/L`: `want` times mass per amount) and is
/// then divided by the species' molar mass, F_j = ṁ_j / M_j, with a note.
#[allow(clippy::too_many_arguments)]
pub(super) fn species_map(
    field: &str,
    map: &IndexMap<String, RawQty>,
    index: &IndexMap<String, usize>,
    want: Dim,
    what: &str,
    ex: &str,
    mass_ex: &str,
    species: &[Species],
    cx: &Cx,
) -> Result<Vec<f64>, LoadError> {
    let by_mass = want.mul(Dim::MASS.div(Dim::AMOUNT));
    let mut out = vec![0.0; index.len()];
    for (name, q) in map {
        let f = format!("{field}.{name}");
        let j = cx.species(&f, name, index)?;
        let (si, dim) = cx.raw_qty(&f, q, want, what, ex)?;
        let v = if dim.approx_eq(want) {
            si
        } else if dim.approx_eq(by_mass) {
            let written = match q {
                RawQty::Text(t) => t.trim().to_string(),
                RawQty::Number(x) => x.to_string(),
            };
            let Some(m) = species[j].molar_mass else {
                return Err(cx.err(
                    &f,
                    &format!(
                        "`{written}` is a mass; converting it to moles needs the molar mass of {name}, which is not known"
                    ),
                    Some(format!(
                        "give `species.{name}.molar_mass` (e.g. `molar_mass: 46.07 g/mol`) or `species.{name}.formula`, or write the value in moles"
                    )),
                ));
            };
            let v = si / m;
            cx.note(
                &f,
                &format!(
                    "`{written}` of {name} converted with its molar mass {} g/mol to {} {}",
                    significant(m * 1e3),
                    significant(v),
                    if want.approx_eq(Dim::AMOUNT) {
                        "mol"
                    } else if want.approx_eq(conc()) {
                        "mol/m3"
                    } else {
                        "mol/s"
                    },
                ),
            );
            v
        } else {
            return Err(cx.wrong_dimensions(
                &f,
                q,
                dim,
                want,
                what,
                ex,
                &format!(", or a mass such as {mass_ex} (with the molar mass of {name})"),
            ));
        };
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
