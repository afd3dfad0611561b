//! `rxnet optimize`: the reactor size, or other inputs, that maximise a target.

use super::input::{check_tolerance, read_study, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json};
use rxnet::model::{Network, Override};
use rxnet::report::{self, num};
use rxnet::solve;
use rxnet::studies::optimize::{optimize_size, optimize_vars};
use rxnet::studies::study::{StudyError, Variable};
use rxnet::studies::target::Target;
use rxnet::units::parse_quantity;
use rxnet::{metrics, reactor};
use std::fmt::Write;
use std::path::Path;

/// A size bound: SI number, or a quantity with the size's unit.
fn size_bound(s: &str, net: &Network) -> Result<f64, String> {
    let q = parse_quantity(s).map_err(|e| format!("bound `{s}`: {e}"))?;
    let (_, unit, _) = solve::reactor_axis(net);
    let want = match unit {
        "m3" => rxnet::units::Dim::volume(),
        "kg" => rxnet::units::Dim::MASS,
        _ => rxnet::units::Dim::TIME,
    };
    if q.dim.approx_eq(rxnet::units::Dim::NONE) || q.dim.approx_eq(want) {
        Ok(q.si)
    } else {
        Err(format!(
            "bound `{s}` has dimensions {}, but the size is in {unit}",
            q.dim
        ))
    }
}

#[derive(serde::Serialize)]
struct Best {
    #[serde(skip_serializing_if = "Option::is_none")]
    size: Option<f64>,
    value: f64,
    point: indexmap::IndexMap<String, f64>,
    on_bound: indexmap::IndexMap<String, Option<rxnet::studies::optimize::Bound>>,
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
    if let Err(m) = check_tolerance("rtol", rtol, 1.0) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    if let Some(x) = min_conversion
        && !(0.0..1.0).contains(&x)
    {
        eprintln!("error: --min-conversion must lie in [0, 1), got {x}");
        return EXIT_INVALID;
    }
    let (study, net) = match read_study(file, set) {
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
    let size_only =
        over.is_empty() || (over.len() == 1 && (over[0] == "size" || over[0] == net.size_path()));
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
                let mut point = indexmap::IndexMap::new();
                point.insert(net.size_path().to_string(), o.size);
                let mut on_bound = indexmap::IndexMap::new();
                on_bound.insert(net.size_path().to_string(), o.on_bound);
                (
                    Best {
                        size: Some(o.size),
                        value: o.value,
                        point,
                        on_bound,
                    },
                    net.with_size(o.size),
                )
            }
            Err(e) => {
                eprintln!("error: {}: {e}", file.display());
                // A bad request (bounds) is a command-line error; anything else a failed study.
                return if matches!(e, StudyError::Invalid(_)) {
                    EXIT_INVALID
                } else {
                    EXIT_FINDINGS
                };
            }
        }
    } else {
        if bounds.len() != 2 * over.len() {
            eprintln!(
                "error: give one --bounds LO HI for each --over ({} inputs, {} bounds)",
                over.len(),
                bounds.len() / 2
            );
            return EXIT_INVALID;
        }
        let mut vars = Vec::new();
        for (k, path) in over.iter().enumerate() {
            match Variable::new(path, &bounds[2 * k], &bounds[2 * k + 1]) {
                Ok(v) => vars.push(v),
                Err(m) => {
                    eprintln!("error: --bounds: {m}");
                    return EXIT_INVALID;
                }
            }
        }
        // The bounds themselves must load (same validation as the file).
        for v in &vars {
            for x in [v.lo, v.hi] {
                if let Err(e) = study.load(&[v.set(x)]) {
                    eprintln!("error: --over {} at {x}: {e}", v.path);
                    return EXIT_INVALID;
                }
            }
        }
        match optimize_vars(&study, &vars, maximize, min_conversion, &opts) {
            Ok(o) => {
                let sets: Vec<Override> =
                    vars.iter().zip(&o.point).map(|(v, x)| v.set(*x)).collect();
                let nb = match study.load(&sets) {
                    Ok(n) => n,
                    Err(e) => {
                        eprintln!("error: {e}");
                        return EXIT_INVALID;
                    }
                };
                (
                    Best {
                        size: None,
                        value: o.value,
                        point: vars
                            .iter()
                            .zip(&o.point)
                            .map(|(v, x)| (v.path.clone(), *x))
                            .collect(),
                        on_bound: vars
                            .iter()
                            .zip(&o.on_bound)
                            .map(|(v, b)| (v.path.clone(), *b))
                            .collect(),
                    },
                    nb,
                )
            }
            Err(e) => {
                eprintln!("error: {}: {e}", file.display());
                return EXIT_FINDINGS;
            }
        }
    };
    let balance = match reactor::Balance::new(&net_best) {
        Ok(b) => b,
        Err(m) => {
            eprintln!("error: {m}");
            return EXIT_INVALID;
        }
    };
    let sim = match solve::simulate_with(&net_best, &balance, &opts) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("error: {}: at the optimum: {e}", file.display());
            return EXIT_FINDINGS;
        }
    };
    let m = metrics::compute(&net_best, sim.outlet());
    let run = report::run::build(&net_best, &balance, &sim, &m, false);
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
            let bound = match rep.best.on_bound.get(path).copied().flatten() {
                Some(b) => format!(
                    "  (on the {} bound)",
                    serde_json::to_string(&b)
                        .unwrap_or_default()
                        .trim_matches('"')
                ),
                None => String::new(),
            };
            let _ = writeln!(o, "  best {path} = {}{bound}", num(*x));
        }
        if let (Some(s), false) = (rep.best.size, net.reactor.is_batch())
            && !matches!(net.reactor, rxnet::model::Reactor::Pbr { .. })
        {
            let _ = writeln!(
                o,
                "  space time τ = V/v0 = {} s",
                num(s / net.feed.volumetric)
            );
        }
        let _ = writeln!(o, "  {} = {}\n", rep.target, num(rep.best.value));
        o.push_str(&report::run::text(&rep.run, false));
        o
    };
    emit(&text, 0)
}
