//! `rxnet sensitivity FILE`: the local sensitivities of a target to the study's parameters,
//! ranked (see [`rxnet::studies::sensitivity`]).

use super::Format;
use super::input::{check_tolerance, read_study};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json, push_caution};
use rxnet::Override;
use rxnet::report::num;
use rxnet::solve::{SolveOptions, SteadyStateChoice};
use rxnet::studies::evaluate::EvalError;
use rxnet::studies::sensitivity::{Report, Request, SensitivityError, sensitivity};
use std::fmt::Write;
use std::path::PathBuf;

/// Arguments of `rxnet sensitivity`.
#[derive(clap::Args)]
pub struct SensitivityArgs {
    file: PathBuf,
    /// B (outlet amount), yield:B, selectivity:B/C, selectivity:B/all or conversion (default:
    /// the yield of the desired product).
    #[arg(long, value_name = "TARGET")]
    target: Option<String>,
    /// A parameter by its --set path, e.g. reactions.first.rate.k; may repeat (default: every
    /// rate constant, Ea, K, feed value, size, coolant T and U of the study).
    #[arg(long, value_name = "PATH")]
    of: Vec<String>,
    /// Also the normalised sensitivities at N evenly spaced points along the reactor.
    #[arg(long, value_name = "N")]
    profile: Option<usize>,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Relative tolerance of the integration (default: the study's `solver.rtol`, else 1e-8).
    #[arg(long)]
    rtol: Option<f64>,
    /// CSTR with several steady states: which one, `lowest` (default), `highest` or a number.
    #[arg(long, value_name = "WHICH")]
    steady_state: Option<SteadyStateChoice>,
    /// Change a value of the study, PATH=VALUE (e.g. feed.T="350 K"); may repeat.
    #[arg(long = "set", value_name = "PATH=VALUE")]
    set: Vec<Override>,
}

/// `rxnet sensitivity FILE`: exit 0 with the table, 1 when the network has error findings or
/// the solve fails, 2 for invalid input.
pub fn run(a: &SensitivityArgs) -> i32 {
    if let Err(m) = check_tolerance("rtol", a.rtol) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    let (study, _, findings) = match read_study(&a.file, &a.set) {
        Ok(s) => s,
        Err(code) => return code,
    };
    let req = Request {
        target: a.target.clone(),
        of: a.of.clone(),
        profile: a.profile,
        solve: SolveOptions {
            rtol: a.rtol,
            steady_state: a.steady_state,
            ..Default::default()
        },
    };
    let rep = match sensitivity(&study, Some(&findings), &req) {
        Ok(r) => r,
        Err(SensitivityError::Gate(EvalError::Findings(errors))) => {
            eprintln!(
                "error: {}: the network has error findings; run `rxnet check` on it:",
                a.file.display()
            );
            for f in errors {
                eprintln!("  {f}");
            }
            return EXIT_FINDINGS;
        }
        Err(e) => {
            // Messages about a parameter's path name the file already.
            let m = e.to_string();
            if m.starts_with(&study.parsed.file) {
                eprintln!("error: {m}");
            } else {
                eprintln!("error: {}: {m}", a.file.display());
            }
            return if e.is_invalid_input() {
                EXIT_INVALID
            } else {
                EXIT_FINDINGS
            };
        }
    };
    for w in &rep.warnings {
        eprintln!("warning: {}: {w}", a.file.display());
    }
    let text = match a.format {
        Format::Json => json(&rep),
        Format::Text => {
            let mut t = text(&rep);
            push_caution(&mut t, rep.caution);
            t
        }
    };
    emit(&text, 0)
}

fn opt(v: Option<f64>) -> String {
    v.map_or_else(|| "-".to_string(), num)
}

/// The ranked table (and the profile, if asked).
fn text(r: &Report) -> String {
    let mut o = String::new();
    let _ = writeln!(
        o,
        "Sensitivities of {} = {} ({})",
        r.target,
        num(r.value),
        r.study
    );
    let _ = writeln!(
        o,
        "normalised: d ln({}) / d ln(p); absolute: d({}) / dp in SI\n",
        r.target, r.target
    );
    let w = r
        .sensitivities
        .iter()
        .map(|s| s.path.len())
        .max()
        .unwrap_or(9)
        .max(9);
    let _ = writeln!(
        o,
        "{:>4}  {:<w$}  {:>22}  {:>12}  {:>12}",
        "rank", "parameter", "value", "normalised", "absolute"
    );
    for (i, s) in r.sensitivities.iter().enumerate() {
        let value = format!("{} {}", num(s.value), s.unit);
        let _ = writeln!(
            o,
            "{:>4}  {:<w$}  {:>22}  {:>12}  {:>12}",
            i + 1,
            s.path,
            value.trim(),
            opt(s.normalized),
            num(s.absolute)
        );
    }
    if let Some(points) = &r.profile {
        let _ = writeln!(
            o,
            "\nnormalised sensitivities along the reactor ({} in {}), columns in rank order:",
            r.x_name, r.x_unit
        );
        let _ = write!(o, "{:>12}  {:>12}", r.x_name, r.target);
        for k in 0..r.sensitivities.len() {
            let _ = write!(o, "  {:>10}", format!("#{}", k + 1));
        }
        o.push('\n');
        for p in points {
            let _ = write!(o, "{:>12}  {:>12}", num(p.x), opt(p.value));
            for v in &p.normalized {
                let _ = write!(o, "  {:>10}", opt(*v));
            }
            o.push('\n');
        }
    }
    o
}
