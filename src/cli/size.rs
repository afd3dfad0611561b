//! `rxnet size`: the reactor size (PFR or CSTR volume, catalyst mass, batch time) at which the
//! key reactant reaches a given conversion; when the conversion is beyond reach (equilibrium,
//! or a co-reactant that runs out) it says so and gives the largest conversion, X_eq.

use super::Format;
use super::input::{check_tolerance, read_study, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json, push_caution};
use rxnet::model::{Override, Reactor};
use rxnet::report::{self, num};
use rxnet::solve;
use rxnet::studies::conversion::{Reach, beyond_message, reach_conversion};
use std::fmt::Write;
use std::path::PathBuf;

/// Arguments of `rxnet size`.
#[derive(clap::Args)]
pub struct SizeArgs {
    file: PathBuf,
    /// Key conversion to reach, in (0, 1).
    #[arg(long, value_name = "X")]
    conversion: f64,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    #[command(flatten)]
    solver: super::SolverFlags,
    /// Change a value of the study, PATH=VALUE (e.g. reactor.type=cstr); may repeat.
    #[arg(long = "set", value_name = "PATH=VALUE")]
    set: Vec<Override>,
}

/// `rxnet size --format json`: numbers in SI, each unit named beside it.
#[derive(serde::Serialize)]
struct SizeReport {
    key: String,
    conversion: f64,
    /// False when the conversion cannot be reached at any size.
    reachable: bool,
    /// V, W or t.
    size_variable: &'static str,
    /// m3, kg or s.
    size_unit: &'static str,
    /// The size that reaches the conversion (null when it is beyond reach).
    size: Option<f64>,
    /// τ = V/v0 of a PFR or CSTR, s.
    space_time_s: Option<f64>,
    /// When beyond reach: the conversion approached as the size grows without bound.
    #[serde(skip_serializing_if = "Option::is_none")]
    conversion_limit: Option<f64>,
    /// When beyond reach: "equilibrium" or what runs out.
    #[serde(skip_serializing_if = "Option::is_none")]
    limited_by: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    run: Option<report::run::RunReport>,
}

pub fn size(a: &SizeArgs) -> i32 {
    if let Err(m) = check_tolerance("rtol", a.solver.rtol) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    let x = a.conversion;
    if !(x > 0.0 && x < 1.0) {
        eprintln!("error: --conversion must lie in (0, 1), got {x}");
        return EXIT_INVALID;
    }
    let set = super::with_steady_state(a.set.clone(), a.solver.steady_state);
    let (_, net, findings) = match read_study(&a.file, &set) {
        Ok(s) => s,
        Err(c) => return c,
    };
    let opts = solve_opts(a.solver.rtol);
    let (xn, xu, _) = solve::reactor_axis(&net);
    let key = net.species[net.key].name.clone();
    let flow = matches!(net.reactor, Reactor::Pfr { .. } | Reactor::Cstr { .. });
    let file = a.file.display();
    let mut rep = SizeReport {
        key,
        conversion: x,
        reachable: false,
        size_variable: xn,
        size_unit: xu,
        size: None,
        space_time_s: None,
        conversion_limit: None,
        limited_by: None,
        run: None,
    };
    let s = match reach_conversion(&net, x, &opts) {
        Ok(Reach::Size(s)) => s,
        Ok(Reach::Beyond { x_max, reason }) => {
            eprintln!("error: {file}: {}", beyond_message(&net, x, x_max, &reason));
            if a.format == Format::Json {
                rep.conversion_limit = Some(x_max);
                rep.limited_by = Some(reason);
                return emit(&json(&rep), EXIT_FINDINGS);
            }
            return EXIT_FINDINGS;
        }
        Err(e) => {
            eprintln!("error: {file}: {e}");
            return if e.is_invalid_input() {
                EXIT_INVALID
            } else {
                EXIT_FINDINGS
            };
        }
    };
    let sized = net.with_size(s);
    // The sized study through the evaluation gate: the same checks as `run`; only the size
    // changed, which the consistency check does not read, so its findings are reused.
    let (balance, sim, m, train) =
        match rxnet::studies::evaluate::evaluate_with(&sized, &findings, &opts) {
            Ok(ev) => (ev.balance, ev.sim, ev.metrics, ev.train),
            Err(e) => {
                eprintln!("error: {file}: at the size found: {e}");
                return if e.is_invalid_input() {
                    EXIT_INVALID
                } else {
                    EXIT_FINDINGS
                };
            }
        };
    rep.reachable = true;
    rep.size = Some(s);
    rep.space_time_s = flow.then(|| s / net.feed.volumetric);
    let mut run = report::run::build(&sized, &balance, &sim, &m, false);
    if let Some(t) = &train {
        // A train: the total size, every unit scaled in proportion; each unit is listed.
        report::train::set_outlet(&mut run, &sized, t);
    }
    rep.run = Some(run);
    let text = if a.format == Format::Json {
        json(&rep)
    } else {
        let mut o = String::new();
        let _ = writeln!(
            o,
            "size of {} for a conversion of {} of {x}",
            net.name, rep.key
        );
        let extra = match xu {
            "m3" => format!(" ({} L)", num(s * 1e3)),
            "s" if s >= 120.0 => format!(" ({} min)", num(s / 60.0)),
            _ => String::new(),
        };
        let _ = writeln!(
            o,
            "  {xn} = {} {xu}{extra}{}",
            num(s),
            if train.is_some() && sized.train.is_some() {
                " in total, every unit scaled in proportion"
            } else {
                ""
            }
        );
        if let Some(t) = rep.space_time_s {
            let _ = writeln!(o, "  space time τ = V/v0 = {} s", num(t));
        }
        o.push('\n');
        o.push_str(&report::run::text(
            rep.run.as_ref().expect("set above"),
            false,
        ));
        push_caution(&mut o, rep.run.as_ref().and_then(|r| r.caution));
        o
    };
    emit(&text, 0)
}
