//! The `species` section: names, formulas and molar masses, and per-species maps of
//! quantities (feed flows, concentrations, amounts).

use super::messages::significant;
use super::{Cx, LoadError, conc};
use crate::model::Species;
use crate::model::equation::{bad_name_message, valid_name};
use crate::model::file::{RawCp, RawCpPolynomial, RawQty, RawSpecies};
use crate::model::formula::Formula;
use crate::model::heat_capacity::{HeatCapacity, SpeciesThermo, T_STANDARD};
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
        let thermo = match sp {
            None => SpeciesThermo::default(),
            Some(sp) => build_thermo(&field, sp, cx)?,
        };
        index.insert(name.clone(), i);
        species.push(Species {
            name: name.clone(),
            formula,
            molar_mass,
            thermo,
        });
    }
    Ok((species, index))
}

/// Largest disagreement accepted between a given `H_f` and the one a polynomial carries, J/mol.
const H_F_AGREEMENT: f64 = 100.0;
/// Largest disagreement accepted between a given `S` and the one a polynomial carries,
/// J/(mol K).
const S_AGREEMENT: f64 = 0.1;

/// `cp`, `H_f` and `S` of one species (`field` is `species.NAME`). H_f and S default to the
/// values a polynomial form carries (Shomate H and G, NASA a6 and a7); given as well, they
/// must agree with them.
fn build_thermo(field: &str, sp: &RawSpecies, cx: &Cx) -> Result<SpeciesThermo, LoadError> {
    let cp = match &sp.cp {
        None => None,
        Some(RawCp::Constant(q)) => {
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
        Some(RawCp::Polynomial(p)) => Some(polynomial(&format!("{field}.cp"), p, cx)?),
    };
    let h_f = match &sp.H_f {
        None => None,
        Some(q) => Some(cx.qty(
            &format!("{field}.H_f"),
            q,
            Dim::energy().div(Dim::AMOUNT),
            "an enthalpy of formation",
            "-110.5 kJ/mol",
        )?),
    };
    let s = match &sp.S {
        None => None,
        Some(q) => Some(cx.qty(
            &format!("{field}.S"),
            q,
            Dim::energy().div(Dim::AMOUNT).div(Dim::TEMPERATURE),
            "an absolute entropy",
            "197.7 J/(mol*K)",
        )?),
    };
    // A polynomial fitted only above 298.15 K does not hold there: its own values at 298.15 K
    // are extrapolations that make H(T) and S(T) right inside its range, and a tabulated
    // value at 298.15 K cannot be checked against them.
    if let Some(p) = cp.as_ref().filter(|c| !c.covers_standard()) {
        let lo = p.range().map_or(0.0, |r| r.0);
        let given = match (p, &h_f, &s) {
            (HeatCapacity::Nasa7 { .. }, Some(_), _) => Some("H_f"),
            (_, _, Some(_)) => Some("S"),
            _ => None,
        };
        if let Some(key) = given {
            return Err(cx.err(
                &format!("{field}.{key}"),
                &format!(
                    "`{key}` at {T_STANDARD} K cannot be checked against a polynomial whose \
                     range starts at {} K; the polynomial's own terms give it",
                    significant(lo)
                ),
                Some(format!(
                    "drop `{key}`, or use a set of coefficients whose range includes {T_STANDARD} K"
                )),
            ));
        }
    }
    let form = |cp: &HeatCapacity| match cp {
        HeatCapacity::Shomate { .. } => "the Shomate H coefficient",
        _ => "the NASA polynomial (a6)",
    };
    let h_f = match (h_f, cp.as_ref().and_then(|c| c.implied_h_f())) {
        (Some(given), Some(implied)) if (given - implied).abs() > H_F_AGREEMENT => {
            return Err(cx.err(
                &format!("{field}.H_f"),
                &format!(
                    "H_f = {} kJ/mol disagrees with {} kJ/mol that {} gives at {T_STANDARD} K \
                     (they must agree within {} kJ/mol)",
                    significant(given / 1e3),
                    significant(implied / 1e3),
                    form(cp.as_ref().expect("implied")),
                    H_F_AGREEMENT / 1e3
                ),
                Some("drop `H_f` (the polynomial carries it) or correct one of them".into()),
            ));
        }
        (Some(given), _) => Some(given),
        (None, implied) => implied,
    };
    let s = match (s, cp.as_ref().and_then(|c| c.implied_s())) {
        (Some(given), Some(implied)) if (given - implied).abs() > S_AGREEMENT => {
            let what = match cp.as_ref().expect("implied") {
                HeatCapacity::Shomate { .. } => "the Shomate form (with its G coefficient)",
                _ => "the NASA polynomial (a7)",
            };
            return Err(cx.err(
                &format!("{field}.S"),
                &format!(
                    "S = {} J/(mol*K) disagrees with {} J/(mol*K) that {what} gives at \
                     {T_STANDARD} K (they must agree within {S_AGREEMENT} J/(mol*K))",
                    significant(given),
                    significant(implied),
                ),
                Some("drop `S` (the polynomial carries it) or correct one of them".into()),
            ));
        }
        (Some(given), _) => Some(given),
        (None, implied) => implied,
    };
    Ok(SpeciesThermo { cp, h_f, s })
}

/// Coefficients of a polynomial form: exactly `n` finite numbers.
fn coefficients(
    field: &str,
    v: &[f64],
    n: usize,
    what: &str,
    cx: &Cx,
) -> Result<Vec<f64>, LoadError> {
    if v.len() != n {
        return Err(cx.err(
            field,
            &format!("{what} needs exactly {n} coefficients, got {}", v.len()),
            None,
        ));
    }
    if let Some(k) = v.iter().position(|x| !x.is_finite()) {
        return Err(cx.err(
            field,
            &format!("coefficient {} of {what} is not a finite number", k + 1),
            None,
        ));
    }
    Ok(v.to_vec())
}

/// A Shomate or NASA 7 heat capacity with its range (`field` is `species.NAME.cp`).
fn polynomial(field: &str, p: &RawCpPolynomial, cx: &Cx) -> Result<HeatCapacity, LoadError> {
    let rf = format!("{field}.range");
    let range = match &p.range {
        None => {
            return Err(cx.err(
                field,
                "a polynomial heat capacity needs the `range` of temperatures it holds over",
                Some("add e.g. `range: [298 K, 1300 K]` as published with the coefficients".into()),
            ));
        }
        Some(r) if r.len() != 2 => {
            return Err(cx.err(
                &rf,
                &format!(
                    "a range is two temperatures [low, high], got {} values",
                    r.len()
                ),
                Some("e.g. `range: [298 K, 1300 K]`".into()),
            ));
        }
        Some(r) => {
            let mut t = [0.0; 2];
            for (k, q) in r.iter().enumerate() {
                let f = format!("{rf}[{k}]");
                let v = cx.qty(&f, q, Dim::TEMPERATURE, "a temperature", "298 K")?;
                t[k] = cx.positive(&f, v, "a temperature of the range")?;
            }
            if t[0] >= t[1] {
                return Err(cx.err(
                    &rf,
                    &format!(
                        "the range must go from low to high, got [{} K, {} K]",
                        significant(t[0]),
                        significant(t[1])
                    ),
                    None,
                ));
            }
            (t[0], t[1])
        }
    };
    let cp = match (&p.shomate, &p.nasa7) {
        (Some(_), Some(_)) | (None, None) => {
            return Err(cx.err(
                field,
                "a polynomial heat capacity is one of `shomate: [A, B, C, D, E, F, G, H]` or \
                 `nasa7: {low: [...], high: [...], T_mid: ...}`",
                Some("give exactly one of the two".into()),
            ));
        }
        (Some(c), None) => {
            let v = coefficients(&format!("{field}.shomate"), c, 8, "the Shomate form", cx)?;
            let mut c = [0.0; 8];
            c.copy_from_slice(&v);
            HeatCapacity::Shomate { c, range }
        }
        (None, Some(n)) => {
            let nf = format!("{field}.nasa7");
            let mut low = [0.0; 7];
            let mut high = [0.0; 7];
            low.copy_from_slice(&coefficients(
                &format!("{nf}.low"),
                &n.low,
                7,
                "a NASA 7 polynomial",
                cx,
            )?);
            high.copy_from_slice(&coefficients(
                &format!("{nf}.high"),
                &n.high,
                7,
                "a NASA 7 polynomial",
                cx,
            )?);
            let mf = format!("{nf}.T_mid");
            let t = cx.qty(&mf, &n.T_mid, Dim::TEMPERATURE, "a temperature", "1000 K")?;
            let t_mid = cx.positive(&mf, t, "T_mid")?;
            if !(range.0..=range.1).contains(&t_mid) {
                return Err(cx.err(
                    &mf,
                    &format!(
                        "T_mid = {} K lies outside the range [{} K, {} K]",
                        significant(t_mid),
                        significant(range.0),
                        significant(range.1)
                    ),
                    None,
                ));
            }
            HeatCapacity::Nasa7 {
                low,
                high,
                t_mid,
                range,
            }
        }
    };
    // A heat capacity is positive; a polynomial that is not over its own range has wrong
    // coefficients (a sign, an exponent, the wrong units).
    const SAMPLES: usize = 64;
    for k in 0..=SAMPLES {
        let t = range.0 + (range.1 - range.0) * k as f64 / SAMPLES as f64;
        let c = cp.cp(t);
        if !(c > 0.0 && c.is_finite()) {
            return Err(cx.err(
                field,
                &format!(
                    "the polynomial gives Cp = {} J/(mol*K) at {} K, inside its range: the \
                     coefficients cannot be right",
                    significant(c),
                    significant(t)
                ),
                Some("check signs, exponents and that they are in the form's own units".into()),
            ));
        }
    }
    Ok(cp)
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
