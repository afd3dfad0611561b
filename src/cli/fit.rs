//! `rxnet fit`: estimate values of a study from measured data; with several studies, rank
//! the candidate networks against the same data.

use super::Format;
use super::input::{check_tolerance, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json, prepare, write_to};
use rxnet::Override;
use rxnet::fit::setup::{FitError, FitRequest, setup};
use rxnet::fit::{self, Fitted};
use rxnet::report::fit::{CandidatesJson, discrimination_text, fit_text};
use rxnet::report::plot;
use std::path::{Path, PathBuf};

/// Arguments of `rxnet fit`.
#[derive(clap::Args)]
pub struct FitArgs {
    /// The study (several: candidate networks ranked against the same data).
    #[arg(required = true)]
    files: Vec<PathBuf>,
    /// The data CSV (default: the study's `fit.data`).
    #[arg(long, value_name = "FILE.csv")]
    data: Option<PathBuf>,
    /// The runs table CSV (default: the study's `fit.runs`).
    #[arg(long, value_name = "FILE.csv")]
    runs: Option<PathBuf>,
    /// A value to estimate, PATH or PATH=LO..HI (e.g. "reactions.r1.rate.Ea=0 kJ/mol..300
    /// kJ/mol"); may repeat; replaces the study's `fit.estimate` list.
    #[arg(long, value_name = "PATH[=LO..HI]")]
    estimate: Vec<String>,
    /// Number of starts of the multistart (default: the study's `fit.starts`, else 6).
    #[arg(long)]
    starts: Option<usize>,
    /// Write the fitted study (one study only) to this new file.
    #[arg(long, value_name = "OUT.yaml")]
    write: Option<PathBuf>,
    /// Write SVG plots here: data against model per run, and a parity plot.
    #[arg(long, value_name = "DIR")]
    plots: Option<PathBuf>,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Change a value of the study for every run, PATH=VALUE; may repeat.
    #[arg(long = "set", value_name = "PATH=VALUE")]
    set: Vec<Override>,
    /// Relative tolerance of every integration (default: the study's `solver.rtol`, else 1e-8).
    #[arg(long)]
    rtol: Option<f64>,
}

fn code_of(e: &FitError) -> i32 {
    match e {
        FitError::Invalid(_) => EXIT_INVALID,
        FitError::Failed(_) | FitError::Findings(_) => EXIT_FINDINGS,
    }
}

/// Whether two paths name the same file (both existing), or the same path text.
fn same_file(a: &Path, b: &Path) -> bool {
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(x), Ok(y)) => x == y,
        _ => a == b,
    }
}

/// A run id as a file-name part.
fn file_part(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

pub fn fit(a: &FitArgs) -> i32 {
    if let Err(m) = check_tolerance("rtol", a.rtol) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    if a.write.is_some() && a.files.len() > 1 {
        eprintln!("error: --write takes one study; several studies are candidates to rank");
        return EXIT_INVALID;
    }
    // Output places are checked before the work.
    let write_target = match &a.write {
        None => None,
        Some(out) => {
            if a.files.iter().any(|f| same_file(f, out)) {
                eprintln!(
                    "error: --write {}: that is the study itself; write the fitted study to a new file",
                    out.display()
                );
                return EXIT_INVALID;
            }
            match prepare(out) {
                Ok(t) => Some((out.clone(), t)),
                Err(m) => {
                    eprintln!("error: cannot write {}: {m}", out.display());
                    return EXIT_INVALID;
                }
            }
        }
    };
    if let Some(dir) = &a.plots {
        if dir.exists() && !dir.is_dir() {
            eprintln!("error: --plots {}: not a directory", dir.display());
            return EXIT_INVALID;
        }
        if let Err(e) = std::fs::create_dir_all(dir) {
            eprintln!("error: --plots {}: cannot create it: {e}", dir.display());
            return EXIT_INVALID;
        }
    }
    let opts = solve_opts(a.rtol);
    let mut fits: Vec<Fitted> = Vec::new();
    for file in &a.files {
        let req = FitRequest {
            study: file.clone(),
            set: a.set.clone(),
            data: a.data.clone(),
            runs: a.runs.clone(),
            estimate: a.estimate.clone(),
            starts: a.starts,
        };
        let result = setup(&req).and_then(|s| fit::fit(s, &opts));
        match result {
            Ok(f) => fits.push(f),
            Err(e) => {
                eprintln!("error: {e}");
                return code_of(&e);
            }
        }
    }
    let discrimination = if fits.len() > 1 {
        match fit::discriminate::discriminate(&fits) {
            Ok(d) => Some(d),
            Err(e) => {
                eprintln!("error: {e}");
                return code_of(&e);
            }
        }
    } else {
        None
    };
    let mut code = 0;
    if let Some((out, target)) = &write_target {
        match written(&fits[0], &a.set) {
            Ok(text) => {
                if let Err(m) = write_to(target, &text) {
                    eprintln!("error: cannot write {}: {m}", out.display());
                    code = EXIT_FINDINGS;
                }
            }
            Err(m) => {
                eprintln!("error: --write {}: {m}", out.display());
                code = EXIT_FINDINGS;
            }
        }
    }
    if let Some(dir) = &a.plots
        && let Err(m) = plots(dir, &fits, &opts)
    {
        eprintln!("error: --plots {}: {m}", dir.display());
        code = EXIT_FINDINGS;
    }
    let reports: Vec<&fit::FitReport> = fits.iter().map(|f| &f.report).collect();
    let text = match (&discrimination, a.format) {
        (None, Format::Json) => json(&reports[0]),
        (None, Format::Text) => fit_text(reports[0]),
        (Some(d), Format::Json) => json(&CandidatesJson {
            candidates: reports.clone(),
            ranking: &d.ranking,
            f_tests: &d.f_tests,
        }),
        (Some(d), Format::Text) => discrimination_text(&reports, d),
    };
    emit(&text, code)
}

/// The fitted study's text, checked: it loads, and its values are the estimates.
fn written(f: &Fitted, set: &[Override]) -> Result<String, String> {
    let text = fit::write::fitted_text(f)?;
    let study =
        rxnet::studies::study::Study::new(text.clone(), "the written study".into(), set.to_vec())
            .map_err(|e| format!("the written study does not parse: {e}"))?;
    study
        .load(&[])
        .map_err(|e| format!("the written study does not load: {e}"))?;
    for e in &f.report.estimates {
        let p = rxnet::studies::parameters::read(&study, &e.path)
            .map_err(|m| format!("the written study: {m}"))?;
        if (p.si - e.value).abs() > 1e-9 * e.value.abs().max(1e-300) {
            return Err(format!(
                "the written study has `{}` = {} SI, the estimate is {}",
                e.path, p.si, e.value
            ));
        }
    }
    Ok(text)
}

/// The SVG plots: data against model per run of each candidate, and a parity plot each.
fn plots(dir: &Path, fits: &[Fitted], opts: &rxnet::solve::SolveOptions) -> Result<(), String> {
    for f in fits {
        let stem = file_part(
            &Path::new(&f.setup.file)
                .file_stem()
                .map_or("study".into(), |s| s.to_string_lossy().to_string()),
        );
        let problem = fit::residuals::FitProblem::new(&f.setup, opts.clone())?;
        let theta = &f.multistart.best().theta;
        let data = &f.setup.data;
        let units: Vec<&str> = data.columns.iter().map(|c| c.unit.as_str()).collect();
        let unit = if units.iter().all(|u| *u == units[0]) {
            units[0].to_string()
        } else {
            "data units".to_string()
        };
        for (k, run) in f.setup.runs.iter().enumerate() {
            let (grid, values) = problem.curve(k, theta, 101)?;
            // Back to the data's own x unit (τ: the grid is V, x = V/v0).
            let v0 = run.network.feed.volumetric;
            let to_x = |size: f64| match data.independent {
                fit::data::Independent::ResidenceTime => size / v0 / data.x_factor,
                _ => size / data.x_factor,
            };
            let series: Vec<plot::FitSeries> = data
                .columns
                .iter()
                .enumerate()
                .map(|(c, col)| plot::FitSeries {
                    name: col.species.clone(),
                    model_x: grid.iter().map(|&g| to_x(g)).collect(),
                    model_y: values[c].clone(),
                    data: data
                        .run_samples(&run.id)
                        .filter_map(|s| s.values[c].map(|v| (s.x / data.x_factor, v)))
                        .collect(),
                })
                .collect();
            let svg = plot::fit_run_svg(
                &format!(
                    "{}: run {} (markers: data, lines: fitted model)",
                    f.setup.file, run.id
                ),
                &format!("{} ({})", data.independent.name(), data.x_unit),
                &unit,
                &series,
            )?;
            super::output::write_file(
                &dir.join(format!("{stem}_run_{}.svg", file_part(&run.id))),
                &svg,
            )?;
        }
        let points: Vec<(String, f64, f64)> = f
            .parity
            .iter()
            .map(|p| (p.species.clone(), p.measured, p.model))
            .collect();
        let svg = plot::parity_svg(
            &format!("{}: model against measured", f.setup.file),
            &unit,
            &points,
        )?;
        super::output::write_file(&dir.join(format!("{stem}_parity.svg")), &svg)?;
    }
    Ok(())
}
