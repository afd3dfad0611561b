//! The `reactions` section: equations, rate laws and their constants (with the rate-law
//! examples that error messages suggest), and the default key reactant.

use super::messages::significant;
use super::{Cx, LoadError, conc, molar_energy};
use crate::model::equation::{bad_name_message, parse_equation, valid_name};
use crate::model::file::*;
use crate::model::*;
use crate::units::{Dim, GAS_CONSTANT};
use indexmap::IndexMap;

pub(super) fn build_reaction(
    i: usize,
    rr: &RawReaction,
    index: &IndexMap<String, usize>,
    basis: RateBasis,
    phase: Phase,
    t_feed: f64,
    cx: &Cx,
) -> Result<Reaction, LoadError> {
    let base = format!("reactions[{i}]");
    let fid = format!("{base}.id");
    if !valid_name(&rr.id) {
        return Err(cx.err(&fid, &bad_name_message(&rr.id, "reaction id"), None));
    }
    let fs = format!("{base}.stoich");
    let eq = parse_equation(&rr.stoich, &|s| index.contains_key(s))
        .map_err(|e| cx.err(&fs, &format!("bad equation `{}`: {e}", rr.stoich), None))?;
    let term = |t: &super::equation::Term| -> Result<Term, LoadError> {
        Ok(Term {
            species: cx.species(&fs, &t.species, index)?,
            coefficient: t.coefficient,
            exact: t.exact.clone(),
        })
    };
    let reactants: Vec<Term> = eq.reactants.iter().map(term).collect::<Result<_, _>>()?;
    let products: Vec<Term> = eq.products.iter().map(term).collect::<Result<_, _>>()?;
    let mut net_exact: Vec<(usize, BigRational)> = Vec::new();
    for (name, c) in eq.net() {
        let j = index[&name];
        if !num_traits::Zero::is_zero(&c) {
            net_exact.push((j, c));
        }
    }
    net_exact.sort_by_key(|(j, _)| *j);
    let net: Vec<(usize, f64)> = net_exact
        .iter()
        .map(|(j, c)| (*j, crate::exact::to_f64(c)))
        .collect();
    let sum_nu: f64 = net.iter().map(|(_, v)| v).sum();

    // --- rate law
    let rate = &rr.rate;
    let fr = format!("{base}.rate");
    let law = rate.law.unwrap_or(RawLaw::Power);
    let orders: Vec<(usize, f64)> = match &rate.orders {
        None => {
            let mut o: Vec<(usize, f64)> = Vec::new();
            for t in &reactants {
                match o.iter_mut().find(|(j, _)| *j == t.species) {
                    Some(e) => e.1 += t.coefficient,
                    None => o.push((t.species, t.coefficient)),
                }
            }
            o
        }
        Some(m) => {
            let mut o = Vec::new();
            for (name, a) in m {
                let f = format!("{fr}.orders.{name}");
                let j = cx.species(&f, name, index)?;
                if !a.is_finite() || a.abs() > 20.0 {
                    return Err(cx.err(
                        &f,
                        &format!("order {a} is out of range (|order| ≤ 20)"),
                        None,
                    ));
                }
                if *a != 0.0 {
                    o.push((j, *a));
                }
            }
            o
        }
    };
    let n_total: f64 = orders.iter().map(|(_, a)| a).sum();
    // In partial pressures (ideal gas, p_j = C_j R T at the reactor temperature, which is the
    // feed temperature: reactors are isothermal): r = k_p Π p_j^a = k_p (R T)^n Π C_j^a, so
    // k_c = k_p (R T)^n; K_p = Π p_j^ν = K_c (R T)^Σν; K_m,p p^b = K_m,p (R T)^b C^b
    // (common practice). Converted here, so the rest of the program sees concentrations only.
    let pressures = rate.in_terms_of == Some(RawRateVariables::PartialPressures);
    if pressures && phase != Phase::Gas {
        return Err(cx.err(
            &format!("{fr}.in_terms_of"),
            "a rate law in partial pressures needs `phase: gas` (p_j = C_j R T holds for an ideal gas only)",
            Some("write the law in concentrations (drop `in_terms_of`) or set `phase: gas`".into()),
        ));
    }
    let rt = GAS_CONSTANT * t_feed;
    let pressure_note = |field: &str, given: &RawQty, factor: &str, si: f64, dim: Dim| {
        let written = match given {
            RawQty::Text(t) => t.trim().to_string(),
            RawQty::Number(x) => x.to_string(),
        };
        cx.note(
            field,
            &format!(
                "`{written}` in partial pressures, converted with p_j = C_j R T at T = {} K to {factor} = {}",
                significant(t_feed),
                crate::units::format_si(si, dim)
            ),
        );
    };
    let per_bar = |n: f64| -> String {
        if n.abs() < 1e-12 {
            String::new()
        } else if (n - 1.0).abs() < 1e-12 {
            "*bar".into()
        } else {
            format!("*bar^{n}")
        }
    };
    let (k_dim, k_example) = if pressures {
        match basis {
            RateBasis::Volume => (
                conc().div(Dim::TIME).div(Dim::pressure().powf(n_total)),
                format!("2e-3 mol/(m3*s{})", per_bar(n_total)),
            ),
            RateBasis::CatalystMass => (
                Dim::AMOUNT
                    .div(Dim::MASS)
                    .div(Dim::TIME)
                    .div(Dim::pressure().powf(n_total)),
                format!("0.04 mol/(kg*s{})", per_bar(n_total)),
            ),
        }
    } else {
        // Volumetric rate r [mol m^-3 s^-1] = k Π C^a  =>  [k] = (mol/m3)^(1−n) / s.
        // Per catalyst mass r' [mol kg^-1 s^-1]      =>  [k] = mol kg^-1 s^-1 (mol/m3)^(−n).
        match basis {
            RateBasis::Volume => (
                conc().powf(1.0 - n_total).div(Dim::TIME),
                volumetric_example(n_total),
            ),
            RateBasis::CatalystMass => (
                Dim::AMOUNT
                    .div(Dim::MASS)
                    .div(Dim::TIME)
                    .mul(conc().powf(-n_total)),
                catalytic_example(n_total),
            ),
        }
    };
    let in_p = if pressures {
        " in partial pressures"
    } else {
        ""
    };
    let what = match basis {
        RateBasis::Volume => {
            format!("a rate constant for total order {n_total} per unit volume{in_p}")
        }
        RateBasis::CatalystMass => {
            format!("a rate constant for total order {n_total} per unit catalyst mass{in_p}")
        }
    };
    let fk = format!("{fr}.k");
    let mut k_ref = cx.qty(&fk, &rate.k, k_dim, &what, &k_example)?;
    if k_ref < 0.0 {
        return Err(cx.err(&fk, "a rate constant cannot be negative", None));
    }
    if pressures {
        // k_c = k_p (R T)^n; at T_ref this keeps k(T) = k_p(T) (R T)^n exact at the reactor
        // temperature T with Arrhenius applied to k_p.
        k_ref *= rt.powf(n_total);
        let c_dim = match basis {
            RateBasis::Volume => conc().powf(1.0 - n_total).div(Dim::TIME),
            RateBasis::CatalystMass => Dim::AMOUNT
                .div(Dim::MASS)
                .div(Dim::TIME)
                .mul(conc().powf(-n_total)),
        };
        pressure_note(
            &fk,
            &rate.k,
            &format!("k_c = k_p (R T)^{n_total}"),
            k_ref,
            c_dim,
        );
    }
    // A rate constant on a species basis: −r_A = k_A Π C^a is the rate of A, which changes
    // at ν_A r, so the k of the reaction is k_A / |ν_A| (common practice).
    if let Some(name) = &rate.basis_species {
        let f = format!("{fr}.basis_species");
        let j = cx.species(&f, name, index)?;
        let nu = net.iter().find(|(s, _)| *s == j).map_or(0.0, |(_, v)| *v);
        if nu == 0.0 {
            return Err(cx.err(
                &f,
                &format!(
                    "`{name}` has net coefficient 0 in `{}`: it is neither consumed nor formed, so a rate of {name} cannot define k",
                    rr.stoich.trim()
                ),
                Some("name a species the reaction consumes or forms".into()),
            ));
        }
        let k_species = k_ref;
        k_ref /= nu.abs();
        cx.note(
            &f,
            &format!(
                "k is the rate of {}{name}, and {name} changes at |ν_{name}| = {} times the rate of reaction: k of the reaction = k_{name} / |ν_{name}| = {} / {} = {} (SI)",
                if nu < 0.0 { "disappearance of " } else { "formation of " },
                significant(nu.abs()),
                significant(k_species),
                significant(nu.abs()),
                significant(k_ref)
            ),
        );
    }
    let ea = match &rate.Ea {
        None => 0.0,
        Some(q) => cx.qty(
            &format!("{fr}.Ea"),
            q,
            molar_energy(),
            "an activation energy",
            "38 kJ/mol",
        )?,
    };
    let t_ref = match &rate.T_ref {
        None => t_feed,
        Some(q) => {
            let f = format!("{fr}.T_ref");
            let t = cx.qty(&f, q, Dim::TEMPERATURE, "a temperature", "320 K")?;
            cx.positive(&f, t, "the reference temperature")?
        }
    };
    let dh = match &rate.dH {
        None => None,
        Some(q) => Some(cx.qty(
            &format!("{fr}.dH"),
            q,
            molar_energy(),
            "a heat of reaction",
            "-120 kJ/mol",
        )?),
    };
    let equilibrium = match (&rate.K_eq, eq.reversible) {
        (Some(_), false) => {
            return Err(cx.err(
                &format!("{fr}.K_eq"),
                "K_eq is given for a one-way reaction",
                Some("write the equation with `<=>` to make it reversible, or drop K_eq".into()),
            ));
        }
        // No K_eq: from the species' H_f and S, once the network is built (load/mod.rs).
        (None, true) => Some(Equilibrium {
            k_ref: f64::NAN,
            from_species: true,
        }),
        (None, false) => None,
        (Some(q), true) => {
            // K_c = Π C_j^ν_j at equilibrium  =>  [K_c] = (mol/m3)^Σν;
            // K_p = Π p_j^ν_j = K_c (R T)^Σν  =>  [K_p] = Pa^Σν.
            let f = format!("{fr}.K_eq");
            let (want, ex, what) = if pressures {
                (
                    Dim::pressure().powf(sum_nu),
                    if sum_nu.abs() < 1e-12 {
                        "12".to_string()
                    } else {
                        format!("12 bar^{sum_nu}")
                    },
                    format!("a partial-pressure equilibrium constant K_p with Σν = {sum_nu}"),
                )
            } else {
                (
                    conc().powf(sum_nu),
                    if sum_nu.abs() < 1e-12 {
                        "12".to_string()
                    } else {
                        format!("12 (mol/L)^{sum_nu}")
                    },
                    format!("a concentration equilibrium constant with Σν = {sum_nu}"),
                )
            };
            let mut k = cx.qty(&f, q, want, &what, &ex)?;
            if pressures {
                k *= rt.powf(-sum_nu);
                if sum_nu.abs() > 1e-12 {
                    pressure_note(
                        &f,
                        q,
                        &format!("K_c = K_p (R T)^{}", -sum_nu),
                        k,
                        conc().powf(sum_nu),
                    );
                }
            }
            Some(Equilibrium {
                k_ref: cx.positive(&f, k, "K_eq")?,
                from_species: false,
            })
        }
    };
    let form = match law {
        RawLaw::Power => {
            if rate.adsorption.is_some() || rate.inhibition_power.is_some() {
                return Err(cx.err(
                    &fr,
                    "`adsorption` and `inhibition_power` belong to `law: hyperbolic`",
                    Some("add `law: hyperbolic`".into()),
                ));
            }
            RateForm::Power
        }
        RawLaw::Hyperbolic => {
            let Some(ads) = rate.adsorption.as_ref().filter(|a| !a.is_empty()) else {
                return Err(cx.err(
                    &fr,
                    "a hyperbolic law needs `adsorption`: the species in its denominator, e.g. {A: {K: 0.5 m3/mol}}",
                    None,
                ));
            };
            let mut adsorption = Vec::new();
            for (name, a) in ads {
                let fa = format!("{fr}.adsorption.{name}");
                let species = cx.species(&fa, name, index)?;
                let order = a.order.unwrap_or(1.0);
                if !order.is_finite() || order <= 0.0 || order > 20.0 {
                    return Err(cx.err(
                        &format!("{fa}.order"),
                        &format!("adsorption order must be in (0, 20], got {order}"),
                        None,
                    ));
                }
                let fk = format!("{fa}.K");
                let k = if pressures {
                    let ex = if (order - 1.0).abs() < 1e-12 {
                        "0.8 1/bar".to_string()
                    } else {
                        format!("0.8 bar^-{order}")
                    };
                    let kp = cx.qty(
                        &fk,
                        &a.K,
                        Dim::pressure().powf(-order),
                        "an adsorption constant in partial pressures",
                        &ex,
                    )?;
                    let kc = kp * rt.powf(order);
                    pressure_note(
                        &fk,
                        &a.K,
                        &format!("K_c = K_p (R T)^{order}"),
                        kc,
                        conc().powf(-order),
                    );
                    kc
                } else {
                    cx.qty(
                        &fk,
                        &a.K,
                        conc().powf(-order),
                        "an adsorption constant",
                        "0.5 m3/mol",
                    )?
                };
                if k < 0.0 {
                    return Err(cx.err(
                        &format!("{fa}.K"),
                        "an adsorption constant cannot be negative",
                        None,
                    ));
                }
                let dh = match &a.dH {
                    None => 0.0,
                    Some(q) => cx.qty(
                        &format!("{fa}.dH"),
                        q,
                        molar_energy(),
                        "a heat of adsorption",
                        "-20 kJ/mol",
                    )?,
                };
                adsorption.push(Adsorption {
                    species,
                    k_ref: k,
                    order,
                    dh,
                });
            }
            let power = rate.inhibition_power.unwrap_or(1.0);
            if !power.is_finite() || power <= 0.0 || power > 10.0 {
                return Err(cx.err(
                    &format!("{fr}.inhibition_power"),
                    &format!("must be in (0, 10], got {power}"),
                    None,
                ));
            }
            RateForm::Hyperbolic { adsorption, power }
        }
    };
    Ok(Reaction {
        id: rr.id.clone(),
        equation: rr.stoich.trim().to_string(),
        reactants,
        products,
        reversible: eq.reversible,
        net,
        net_exact,
        rate: RateLaw {
            form,
            k_ref,
            ea,
            t_ref,
            orders,
            equilibrium,
            basis,
        },
        dh,
    })
}

fn volumetric_example(n: f64) -> String {
    if (n - 1.0).abs() < 1e-12 {
        "0.5 1/s".into()
    } else if n.abs() < 1e-12 {
        "0.5 mol/(m3*s)".into()
    } else if (n - 2.0).abs() < 1e-12 {
        "4e-3 m3/(mol*s)".into()
    } else {
        format!("0.5 (mol/m3)^({})/s", 1.0 - n)
    }
}

fn catalytic_example(n: f64) -> String {
    if n.abs() < 1e-12 {
        "0.5 mol/(kg*s)".into()
    } else if (n - 1.0).abs() < 1e-12 {
        "0.5 m3/(kg*s)".into()
    } else {
        format!("0.5 mol/(kg*s)*(mol/m3)^({})", -n)
    }
}

/// The limiting reactant of the feed for the first reaction with a fed reactant: the smallest
/// F_j0/|ν_j| over that reaction's reactants (common practice).
pub(super) fn default_key(
    reactions: &[Reaction],
    feed: &Feed,
    cx: &Cx,
) -> Result<usize, LoadError> {
    // The limiting fed reactant of the first reaction that has one (net coefficients).
    if let Some(j) = reactions
        .iter()
        .find_map(|r| r.limiting_reactant(&feed.amounts))
    {
        return Ok(j);
    }
    Err(cx.err(
        "key",
        "no reaction has a reactant in the feed, so no key reactant can be chosen",
        Some("feed a reactant, or name the conversion basis with `key:`".into()),
    ))
}
