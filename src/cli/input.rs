//! What every command reads: the study file (with `--set` overrides) and the command-line
//! values shared by several commands (tolerances). Errors are printed here, and the exit code
//! returned, so each command reads as its own steps.

use super::output::{EXIT_FINDINGS, EXIT_INVALID};
use rxnet::load_file;
use rxnet::model::{Network, Override, read_text};
use rxnet::solve::SolveOptions;
use rxnet::studies::evaluate::Findings;
use rxnet::studies::study::Study;
use std::path::Path;

/// Load a study file for a single evaluation (check, table, run).
pub fn load(file: &Path, set: &[Override]) -> Result<rxnet::Network, i32> {
    load_file(file, set).map_err(|e| {
        eprintln!("error: {e}");
        EXIT_INVALID
    })
}

/// A tolerance given on the command line, in the ranges the loader applies to `solver.rtol`
/// and `solver.atol` ([`rxnet::solve::check_rtol`]); the cap of atol against the feed is
/// checked once the study is loaded ([`check_atol_for`]).
pub fn check_tolerance(name: &str, v: Option<f64>) -> Result<(), String> {
    match (name, v) {
        (_, None) => Ok(()),
        ("rtol", Some(x)) => rxnet::solve::check_rtol(x).map_err(|m| format!("--{m}")),
        (_, Some(x)) if !(x > 0.0 && x.is_finite()) => {
            Err(format!("--{name} must be a positive number, got {x}"))
        }
        _ => Ok(()),
    }
}

/// `--atol` against the loaded study's feed: at most [`rxnet::solve::MAX_ATOL_FRACTION`] of
/// the total feed.
pub fn check_atol_for(net: &Network, atol: Option<f64>) -> Result<(), String> {
    let unit = if net.reactor.is_batch() {
        "mol"
    } else {
        "mol/s"
    };
    match atol {
        Some(a) => {
            rxnet::solve::check_atol(a, net.feed.total(), unit).map_err(|m| format!("--{m}"))
        }
        None => Ok(()),
    }
}

/// Read a study for a design command, with the consistency check of its base network (refused
/// on error findings; the findings are returned so later evaluations of the same network need
/// not check it again); errors are printed, the exit code returned.
pub fn read_study(file: &Path, set: &[Override]) -> Result<(Study, Network, Findings), i32> {
    read_study_keeping_text(file, set, false)
        .map(|(_, study, net, findings)| (study, net, findings))
}

/// [`read_study`], with the study text as read (a sweep's shards hash it).
pub fn read_study_text(
    file: &Path,
    set: &[Override],
) -> Result<(String, Study, Network, Findings), i32> {
    read_study_keeping_text(file, set, true)
}

fn read_study_keeping_text(
    file: &Path,
    set: &[Override],
    keep: bool,
) -> Result<(String, Study, Network, Findings), i32> {
    let text = read_text(file).map_err(|e| {
        eprintln!("error: {e}");
        EXIT_INVALID
    })?;
    let kept = if keep { text.clone() } else { String::new() };
    let study =
        Study::new(text, rxnet::model::source::display_name(file), set.to_vec()).map_err(|e| {
            eprintln!("error: {e}");
            EXIT_INVALID
        })?;
    let net = study.load(&[]).map_err(|e| {
        eprintln!("error: {e}");
        EXIT_INVALID
    })?;
    let findings = Findings::of(&net);
    if !findings.errors.is_empty() {
        eprintln!(
            "error: {}: the network has error findings; run `rxnet check` on it",
            file.display()
        );
        return Err(EXIT_FINDINGS);
    }
    Ok((kept, study, net, findings))
}

pub fn solve_opts(rtol: Option<f64>) -> SolveOptions {
    SolveOptions {
        rtol,
        ..Default::default()
    }
}
