//! `rxnet optimize`: the reactor size, or other inputs, that maximise a target.

use super::input::{check_tolerance, read_study, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json, push_caution};
use rxnet::model::{Network, Override, Reactor};
use rxnet::report::{self, num};
use rxnet::solve;
use rxnet::studies::optimize::{Bound, optimize_size, optimize_vars, value_unit};
use rxnet::studies::study::{SPLIT_MIN, Split, Variable, overrides};
use rxnet::studies::target::Target;
use rxnet::units::parse_quantity;
use std::fmt::Write;
use std::path::Path;

/// A size bound: a quantity with the size's unit (m3, kg or s, or any unit of that dimension).
/// A bare number is refused (it would be taken silently as SI), except 0.
fn size_bound(s: &str, net: &Network) -> Result<f64, String> {
    let q = parse_quantity(s).map_err(|e| format!("bound `{s}`: {e}"))?;
    let (_, unit, _) = solve::reactor_axis(net);
    let want = size_dim(net);
    if q.dim.approx_eq(rxnet::units::Dim::NONE) {
        if q.si == 0.0 {
            return Ok(0.0);
        }
        return Err(format!(
            "bound `{s}` needs a unit: the size {} is in {unit}, e.g. \"{s} {}\"",
            net.size_path(),
            example_unit(net)
        ));
    }
    if q.dim.approx_eq(want) {
        Ok(q.si)
    } else {
        Err(format!(
            "bound `{s}` has the wrong dimensions: {}, for the size",
            rxnet::units::dimension_mismatch(rxnet::units::unit_text(s), q.dim, unit, want)
        ))
    }
}

fn size_dim(net: &Network) -> rxnet::units::Dim {
    match solve::reactor_axis(net).1 {
        "m3" => rxnet::units::Dim::volume(),
        "kg" => rxnet::units::Dim::MASS,
        _ => rxnet::units::Dim::TIME,
    }
}

fn example_unit(net: &Network) -> &'static str {
    match solve::reactor_axis(net).1 {
        "m3" => "L",
        "kg" => "kg",
        _ => "s",
    }
}

/// The SI unit of a dimension, by its usual name where it has one.
fn si_unit(dim: rxnet::units::Dim) -> String {
    use rxnet::units::Dim;
    if dim.approx_eq(Dim::pressure()) {
        "Pa".into()
    } else if dim.approx_eq(Dim::energy()) {
        "J".into()
    } else if dim.approx_eq(Dim::energy().div(Dim::AMOUNT)) {
        "J/mol".into()
    } else {
        dim.to_string()
    }
}

/// A variable's value in SI with its SI unit (the bounds may be in °C, L, bar...).
fn to_si(v: &Variable, x: f64) -> (f64, String) {
    if v.unit.is_empty() {
        return (x, "1".into());
    }
    match parse_quantity(&format!("{x} {}", v.unit)) {
        Ok(q) => (q.si, si_unit(q.dim)),
        // The bounds were loaded with this unit, so it parses; keep the number as given.
        Err(_) => (x, v.unit.clone()),
    }
}

/// A number with its unit for text output (dimensionless values print bare).
fn with_unit(x: f64, unit: &str) -> String {
    if unit == "1" || unit.is_empty() {
        num(x)
    } else {
        format!("{} {unit}", num(x))
    }
}

#[derive(serde::Serialize)]
struct Best {
    /// The optimal size V, W or t (SI, `size_unit`) when the size alone was varied.
    #[serde(skip_serializing_if = "Option::is_none")]
    size: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    size_unit: Option<&'static str>,
    /// τ = V/v0 of a PFR or CSTR at the optimum, s.
    #[serde(skip_serializing_if = "Option::is_none")]
    space_time_s: Option<f64>,
    value: f64,
    /// mol/s or mol for an amount, 1 for a ratio.
    value_unit: &'static str,
    /// Each varied input at the optimum, in SI (its unit in `units`).
    point: indexmap::IndexMap<String, f64>,
    units: indexmap::IndexMap<String, String>,
    /// null: an interior maximum (the target's slope was checked to change sign there).
    on_bound: indexmap::IndexMap<String, Option<Bound>>,
    /// On a bound: true when the target still improves beyond it (widen the bounds).
    #[serde(skip_serializing_if = "Option::is_none")]
    improves_beyond_bound: Option<bool>,
}

#[derive(serde::Serialize)]
struct OptimizeReport {
    target: String,
    best: Best,
    run: report::run::RunReport,
}

/// `rxnet optimize FILE --maximize TARGET [--over VAR --bounds LO HI]...`
#[allow(clippy::too_many_arguments)]
pub fn optimize(
    file: &Path,
    maximize: &str,
    over: &[String],
    bounds: &[String],
    min_conversion: Option<f64>,
    as_json: bool,
    rtol: Option<f64>,
    set: &[Override],
) -> i32 {
    if let Err(m) = check_tolerance("rtol", rtol) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    if let Some(x) = min_conversion
        && !(0.0..1.0).contains(&x)
    {
        eprintln!("error: --min-conversion must lie in [0, 1), got {x}");
        return EXIT_INVALID;
    }
    let (study, net, findings) = match read_study(file, set) {
        Ok(s) => s,
        Err(c) => return c,
    };
    let target = match Target::parse(maximize, &net) {
        Ok(t) => t,
        Err(m) => {
            eprintln!("error: --maximize: {m}");
            return EXIT_INVALID;
        }
    };
    let opts = solve_opts(rtol);
    // `size` names the reactor's size key (reactor.volume, reactor.catalyst or reactor.time).
    let over: Vec<String> = over
        .iter()
        .map(|o| {
            if o.trim() == "size" {
                net.size_path().to_string()
            } else {
                o.trim().to_string()
            }
        })
        .collect();
    for (i, o) in over.iter().enumerate() {
        if over[..i].contains(o) {
            eprintln!("error: --over {o} is given twice");
            return EXIT_INVALID;
        }
    }
    // `split`: the train's total size divided between its units (no bounds of its own).
    let split = if over.iter().any(|o| o == "split") {
        match Split::of(&net) {
            Ok(s) => Some(s),
            Err(m) => {
                eprintln!("error: --over split: {m}");
                return EXIT_INVALID;
            }
        }
    } else {
        None
    };
    let over: Vec<String> = over.into_iter().filter(|o| o != "split").collect();
    let size_only =
        split.is_none() && (over.is_empty() || (over.len() == 1 && over[0] == net.size_path()));
    let (_, xu, _) = solve::reactor_axis(&net);
    let vu = value_unit(&net, &target);
    let (best, net_best) = if size_only {
        let (lo, hi) = match bounds {
            [] => (0.0, net.size()),
            [lo, hi] => match (size_bound(lo, &net), size_bound(hi, &net)) {
                (Ok(l), Ok(h)) => (l, h),
                (Err(m), _) | (_, Err(m)) => {
                    eprintln!("error: --bounds: {m}");
                    return EXIT_INVALID;
                }
            },
            _ => {
                eprintln!("error: give one --bounds LO HI for the size");
                return EXIT_INVALID;
            }
        };
        match optimize_size(&net, &target, lo, hi, min_conversion, &opts) {
            Ok(o) => {
                let path = net.size_path().to_string();
                let flow = matches!(net.reactor, Reactor::Pfr { .. } | Reactor::Cstr { .. });
                (
                    Best {
                        size: Some(o.size),
                        size_unit: Some(xu),
                        space_time_s: flow.then(|| o.size / net.feed.volumetric),
                        value: o.value,
                        value_unit: vu,
                        point: [(path.clone(), o.size)].into_iter().collect(),
                        units: [(path.clone(), xu.to_string())].into_iter().collect(),
                        on_bound: [(path, o.on_bound)].into_iter().collect(),
                        improves_beyond_bound: o.on_bound.map(|_| o.improves_beyond),
                    },
                    net.with_size(o.size),
                )
            }
            Err(e) => {
                eprintln!("error: {}: {e}", file.display());
                return if e.is_invalid_input() {
                    EXIT_INVALID
                } else {
                    EXIT_FINDINGS
                };
            }
        }
    } else {
        if bounds.len() != 2 * over.len() {
            eprintln!(
                "error: give one --bounds LO HI for each --over ({} inputs, {} bounds){}",
                over.len(),
                bounds.len() / 2,
                if split.is_some() {
                    "; `split` takes none (the total is held)"
                } else {
                    ""
                }
            );
            return EXIT_INVALID;
        }
        let mut vars = Vec::new();
        for (k, path) in over.iter().enumerate() {
            let (lo, hi) = (&bounds[2 * k], &bounds[2 * k + 1]);
            // The size's bounds need a unit, as when the size is varied alone.
            if path == net.size_path() {
                for b in [lo, hi] {
                    if let Err(m) = size_bound(b, &net) {
                        eprintln!("error: --bounds of {path}: {m}");
                        return EXIT_INVALID;
                    }
                }
            }
            match Variable::new(path, lo, hi) {
                Ok(v) => vars.push(v),
                Err(m) => {
                    eprintln!("error: --bounds: {m}");
                    return EXIT_INVALID;
                }
            }
        }
        if let Some(sp) = split.clone() {
            vars.extend(sp.variables());
        }
        // The bounds themselves must load (same validation as the file: a bare number for a
        // dimensional input is refused there, as in --set).
        for v in vars.iter().filter(|v| v.split.is_none()) {
            for x in [v.lo, v.hi] {
                if let Err(e) = study.load(&[v.set(x)]) {
                    eprintln!("error: --over {} at {x}: {e}", v.path);
                    return EXIT_INVALID;
                }
            }
        }
        match optimize_vars(&study, &vars, maximize, min_conversion, &opts) {
            Ok(o) => {
                let sets: Vec<Override> = overrides(&vars, &o.point);
                let nb = match study.load(&sets) {
                    Ok(n) => n,
                    Err(e) => {
                        eprintln!("error: {e}");
                        return EXIT_INVALID;
                    }
                };
                // Each plain input in SI; a split as the units' sizes it gives.
                let mut point = indexmap::IndexMap::new();
                let mut units = indexmap::IndexMap::new();
                let mut on_bound = indexmap::IndexMap::new();
                for ((v, x), b) in vars.iter().zip(&o.point).zip(&o.on_bound) {
                    if v.split.is_none() {
                        let (x, u) = to_si(v, *x);
                        point.insert(v.path.clone(), x);
                        units.insert(v.path.clone(), u);
                        on_bound.insert(v.path.clone(), *b);
                    }
                }
                if let Some(sp) = &split {
                    let u: Vec<f64> = vars
                        .iter()
                        .zip(&o.point)
                        .filter(|(v, _)| v.split.is_some())
                        .map(|(_, x)| *x)
                        .collect();
                    // A unit squeezed to the smallest share the split allows sits on its lower
                    // bound: unit k when its fraction u_k is at the floor or a unit before it
                    // took all but the floor (u_i at the ceiling), the last unit when any
                    // fraction is at the ceiling (it gets what the others leave).
                    let floor = SPLIT_MIN * (1.0 + 1e-6);
                    let ceiling = |us: &[f64]| us.iter().any(|f| *f >= 1.0 - floor);
                    let at_floor: Vec<bool> = (0..u.len())
                        .map(|k| u[k] <= floor || ceiling(&u[..k]))
                        .chain(std::iter::once(ceiling(&u)))
                        .collect();
                    // A unit that took all the others leave it (u_k at the ceiling) is on its
                    // upper bound.
                    let took_all = |k: usize| k < u.len() && u[k] >= 1.0 - floor;
                    for (k, ((p, size), low)) in
                        sp.paths.iter().zip(sp.sizes(&u)).zip(at_floor).enumerate()
                    {
                        point.insert(p.clone(), size);
                        units.insert(p.clone(), sp.unit.to_string());
                        let bound = if low {
                            Some(Bound::Lower)
                        } else if took_all(k) {
                            Some(Bound::Upper)
                        } else {
                            None
                        };
                        on_bound.insert(p.clone(), bound);
                    }
                }
                (
                    Best {
                        size: None,
                        size_unit: None,
                        space_time_s: None,
                        value: o.value,
                        value_unit: vu,
                        point,
                        units,
                        on_bound,
                        improves_beyond_bound: None,
                    },
                    nb,
                )
            }
            Err(e) => {
                eprintln!("error: {}: {e}", file.display());
                return if e.is_invalid_input() {
                    EXIT_INVALID
                } else {
                    EXIT_FINDINGS
                };
            }
        }
    };
    // The optimum through the evaluation gate: the same checks as `run` (a size-only optimum
    // reuses the study's check, which does not read the size).
    let evaluated = if size_only {
        rxnet::studies::evaluate::evaluate_with(&net_best, &findings, &opts)
    } else {
        rxnet::studies::evaluate::evaluate(&net_best, &opts, false)
    };
    let (balance, sim, m, train) = match evaluated {
        Ok(ev) => (ev.balance, ev.sim, ev.metrics, ev.train),
        Err(e) => {
            eprintln!("error: {}: at the optimum: {e}", file.display());
            return if e.is_invalid_input() {
                EXIT_INVALID
            } else {
                EXIT_FINDINGS
            };
        }
    };
    let mut run = report::run::build(&net_best, &balance, &sim, &m, false);
    if let Some(t) = &train {
        report::train::set_outlet(&mut run, &net_best, t);
    }
    let rep = OptimizeReport {
        target: target.label(&net),
        best,
        run,
    };
    let text = if as_json {
        json(&rep)
    } else {
        let mut o = String::new();
        let _ = writeln!(o, "maximise {} of {}", rep.target, net.name);
        for (path, x) in &rep.best.point {
            let unit = rep.best.units.get(path).map(String::as_str).unwrap_or("");
            let bound = match rep.best.on_bound.get(path).copied().flatten() {
                Some(b) => {
                    let name = match b {
                        Bound::Lower => "lower bound",
                        Bound::Upper => "upper bound",
                        Bound::MinConversion => "conversion constraint",
                        Bound::ValidRegion => {
                            "edge of the valid region: a point just beyond fails the study's checks or has no defined value"
                        }
                        Bound::TemperatureLimit => {
                            "process limit T_max: just beyond, the hot spot would exceed it"
                        }
                    };
                    if rep.best.improves_beyond_bound == Some(true) {
                        format!("  (on the {name}; {} still improves beyond it)", rep.target)
                    } else {
                        format!("  (on the {name})")
                    }
                }
                None => "  (interior maximum: the slope changes sign there)".to_string(),
            };
            // The value as given in the bounds' unit, beside the SI value.
            let given = over
                .iter()
                .position(|p| p == path)
                .and_then(|k| {
                    let u = bounds[2 * k + 1].trim();
                    let end = u
                        .find(|c: char| !(c.is_ascii_digit() || "+-.eE".contains(c)))
                        .unwrap_or(u.len());
                    let u = u[end..].trim();
                    (!u.is_empty() && u != unit).then(|| u.to_string())
                })
                .and_then(|u| {
                    let one = parse_quantity(&format!("1 {u}")).ok()?;
                    let zero = parse_quantity(&format!("0 {u}")).ok()?;
                    let f = one.si - zero.si;
                    (f != 0.0).then(|| format!(" = {} {u}", num((x - zero.si) / f)))
                })
                .unwrap_or_else(|| {
                    if unit == "m3" {
                        format!(" = {} L", num(x * 1e3))
                    } else {
                        String::new()
                    }
                });
            let _ = writeln!(o, "  best {path} = {}{given}{bound}", with_unit(*x, unit));
        }
        if let Some(t) = rep.best.space_time_s {
            let _ = writeln!(o, "  space time τ = V/v0 = {} s", num(t));
        }
        let _ = writeln!(o, "  {} = {}\n", rep.target, with_unit(rep.best.value, vu));
        o.push_str(&report::run::text(&rep.run, false));
        push_caution(&mut o, rep.run.caution);
        o
    };
    emit(&text, 0)
}
