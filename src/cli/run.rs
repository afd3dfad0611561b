//! `rxnet run`: simulate the study's reactor and report outlet, conversion, yields and
//! selectivities (and the profile along the reactor, on request).

use super::input::{check_atol_for, check_tolerance, load};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, OutputFile, emit, json, prepare, push_caution};
use clap::ValueEnum;
use rxnet::model::Network;
use rxnet::report::{num, plot};
use rxnet::solve::{Points, Simulation, SolveOptions, SteadyStateChoice};
use rxnet::studies::evaluate::{self, EvalError};
use rxnet::{Override, report};
use std::path::PathBuf;

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum RunFormat {
    Table,
    Csv,
    Json,
}

/// Arguments of `rxnet run`.
#[derive(clap::Args)]
pub struct RunArgs {
    file: PathBuf,
    #[arg(long, value_enum, default_value_t = RunFormat::Table)]
    format: RunFormat,
    /// Write the profile along the reactor to this CSV file.
    #[arg(long, value_name = "FILE.csv")]
    profile: Option<PathBuf>,
    /// Number of evenly spaced profile points, inlet and outlet included (default 51 when a profile is asked).
    #[arg(long)]
    points: Option<usize>,
    /// Report every internal step of the integrator instead of even points.
    #[arg(long, conflicts_with = "points")]
    steps: bool,
    /// Relative tolerance of the integration, 1e-13 to 1e-2 (default 1e-8).
    #[arg(long)]
    rtol: Option<f64>,
    /// Absolute tolerance on the species state, in mol/s (flow) or mol (batch), at most 1e-3 of the total feed; default per species (see docs/methods.md).
    #[arg(long)]
    atol: Option<f64>,
    /// Also print the element balance closure.
    #[arg(long, short)]
    verbose: bool,
    /// Draw the species profile along the reactor to this SVG file.
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// CSTR with several steady states: which one to report, `lowest` or `highest` conversion of
    /// the key, or a number from 1 in order of rising conversion (default: the study file's
    /// `solver.steady_state`, else lowest). All are listed.
    #[arg(long, value_name = "WHICH")]
    steady_state: Option<SteadyStateChoice>,
    /// Draw only these species (comma-separated names), e.g. to leave out a solvent.
    #[arg(long, value_name = "NAMES", value_delimiter = ',', requires = "plot")]
    plot_species: Vec<String>,
    /// Leave these species (comma-separated names) out of the plot.
    #[arg(
        long,
        value_name = "NAMES",
        value_delimiter = ',',
        requires = "plot",
        conflicts_with = "plot_species"
    )]
    plot_exclude: Vec<String>,
    #[arg(long = "set", value_name = "PATH=VALUE")]
    set: Vec<Override>,
}

/// The solve options of `rxnet run` and whether a profile is wanted.
fn run_options(a: &RunArgs) -> (bool, SolveOptions) {
    let want_profile = a.profile.is_some()
        || a.plot.is_some()
        || a.format == RunFormat::Csv
        || a.points.is_some()
        || a.steps;
    let points = if a.steps {
        Points::Steps
    } else if want_profile {
        Points::Even(a.points.unwrap_or(if a.plot.is_some() { 201 } else { 51 }))
    } else {
        Points::End
    };
    let opts = SolveOptions {
        rtol: a.rtol,
        atol: a.atol,
        points,
        steady_state: a.steady_state,
        ..Default::default()
    };
    (want_profile, opts)
}

/// `rxnet run FILE`: exit 0 on success, 1 when the solve fails, 2 for invalid input.
pub fn run(a: &RunArgs) -> i32 {
    if let Err(m) = check_tolerance("rtol", a.rtol).and_then(|_| check_tolerance("atol", a.atol)) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    if let Some(n) = a.points
        && !(2..=1_000_000).contains(&n)
    {
        eprintln!("error: --points must be between 2 and 1000000, got {n}");
        return EXIT_INVALID;
    }
    // The output files are opened before the work (a regular file as its temporary file
    // beside it): a directory, a missing directory or a path the user may not write is
    // refused now, not after the solve. They are filled and moved into place at the end;
    // on any failure or interrupt the temporary files are removed.
    let mut outputs: Vec<(&PathBuf, OutputFile)> = Vec::new();
    for path in a.profile.iter().chain(&a.plot) {
        match prepare(path).and_then(|t| OutputFile::open(&t)) {
            Ok(f) => outputs.push((path, f)),
            Err(e) => {
                eprintln!("error: cannot write {}: {e}", path.display());
                return EXIT_INVALID;
            }
        }
    }
    let net = match load(&a.file, &a.set) {
        Ok(n) => n,
        Err(code) => return code,
    };
    let plotted = match plotted_species(&net, a) {
        Ok(p) => p,
        Err(m) => {
            eprintln!("error: {m}");
            return EXIT_INVALID;
        }
    };
    if let Err(m) = check_atol_for(&net, a.atol) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    // Through the one gate: the consistency check (on a second thread while the reactor is
    // solved, for a network large enough to be worth one), the solve, the result checks and
    // the metrics.
    let (want_profile, opts) = run_options(a);
    let ev = match evaluate::evaluate(&net, &opts, true) {
        Ok(ev) => ev,
        Err(EvalError::Findings(errors)) => {
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
            eprintln!("error: {}: {e}", a.file.display());
            return if e.is_invalid_input() {
                EXIT_INVALID
            } else {
                EXIT_FINDINGS
            };
        }
    };
    // The check's warnings bear on this result: repeat them where the user looks.
    for w in &ev.warnings {
        eprintln!("warning: {}: {w}", a.file.display());
    }
    let (balance, sim, m, train) = (ev.balance, ev.sim, ev.metrics, ev.train);
    let mut rep = report::run::build(
        &net,
        &balance,
        &sim,
        &m,
        // JSON carries the profile whenever one was computed; the table shows it when points
        // were asked for (`--points`, `--steps`), not merely for a --profile or --plot file.
        match a.format {
            RunFormat::Json => want_profile,
            RunFormat::Table => a.points.is_some() || a.steps,
            RunFormat::Csv => false,
        },
    );
    if let Some(t) = &train {
        report::train::set_outlet(&mut rep, &net, t);
    }
    let csv = || match &train {
        Some(t) => report::train::profile_csv(&net, t),
        None => report::run::profile_csv(&net, &balance, &sim),
    };
    for (path, file) in outputs {
        let content = if Some(path) == a.profile.as_ref() {
            Ok(csv())
        } else {
            profile_plot(&net, &sim, &plotted)
        };
        if let Err(e) = content.and_then(|c| file.finish(&c)) {
            eprintln!("error: cannot write {}: {e}", path.display());
            return EXIT_FINDINGS;
        }
    }
    let text = match a.format {
        RunFormat::Table => {
            let mut t = report::run::text(&rep, a.verbose);
            push_caution(&mut t, rep.caution);
            t
        }
        RunFormat::Csv => csv(),
        RunFormat::Json => json(&rep),
    };
    // A result that breaks the process limit is a finding: shown, and exit 1.
    let code = match &rep.heat {
        Some(h) if h.exceeds_limit() => {
            eprintln!(
                "error: {}: the process limit T_max = {} K is exceeded (hot spot {} K{})",
                a.file.display(),
                report::num(h.t_max.unwrap_or(f64::NAN)),
                report::num(h.hot_spot.temperature),
                h.cooling_failure
                    .map(|c| format!(
                        ", cooling-failure temperature {} K",
                        report::num(c.temperature)
                    ))
                    .unwrap_or_default()
            );
            EXIT_FINDINGS
        }
        _ => 0,
    };
    for w in &sim.warnings {
        eprintln!("warning: {}: {w}", a.file.display());
    }
    emit(&text, code)
}

/// The species drawn by `--plot`: those named by `--plot-species`, or all but those named by
/// `--plot-exclude`; an unknown name is an error.
fn plotted_species(net: &Network, a: &RunArgs) -> Result<Vec<bool>, String> {
    let find = |flag: &str, name: &str| -> Result<usize, String> {
        net.species
            .iter()
            .position(|s| s.name == name.trim())
            .ok_or_else(|| {
                let known: Vec<&str> = net.species.iter().map(|s| s.name.as_str()).collect();
                format!(
                    "--{flag}: no species `{}` in the study (species: {})",
                    name.trim(),
                    known.join(", ")
                )
            })
    };
    let mut drawn = vec![a.plot_species.is_empty(); net.species.len()];
    for name in &a.plot_species {
        drawn[find("plot-species", name)?] = true;
    }
    for name in &a.plot_exclude {
        drawn[find("plot-exclude", name)?] = false;
    }
    if a.plot.is_some() && !drawn.iter().any(|d| *d) {
        return Err("--plot-exclude leaves no species to draw".into());
    }
    Ok(drawn)
}

/// The species profile of a run as SVG, with the maximum of the desired product marked when it
/// lies inside the reactor.
fn profile_plot(net: &Network, sim: &Simulation, drawn: &[bool]) -> Result<String, String> {
    // A CSTR with an energy balance: the heat generated and removed against T, states marked.
    if let Some((st, h)) = sim
        .steady
        .as_ref()
        .and_then(|st| st.heat.as_ref().map(|h| (st, h)))
    {
        let marks: Vec<(f64, f64, String)> = st
            .states
            .iter()
            .enumerate()
            .filter_map(|(k, s)| {
                let t = s.temperature?;
                let q = interpolate(&h.curves.temperature, &h.curves.removed, t);
                Some((
                    t,
                    q,
                    format!(
                        "{}: T = {} K, X = {}, {}",
                        k + 1,
                        num(t),
                        num(s.conversion),
                        if s.stable { "stable" } else { "unstable" }
                    ),
                ))
            })
            .collect();
        return plot::heat_balance_svg(
            &net.name,
            &h.curves.temperature,
            &h.curves.generated,
            &h.curves.removed,
            &marks,
        );
    }
    let batch = net.reactor.is_batch();
    let unit = if batch { "mol" } else { "mol/s" };
    let series: Vec<(String, Vec<f64>)> = net
        .species
        .iter()
        .enumerate()
        .filter(|(j, _)| drawn[*j] && sim.states.iter().any(|y| y[*j] != sim.states[0][*j]))
        .map(|(j, s)| (s.name.clone(), sim.states.iter().map(|y| y[j]).collect()))
        .collect();
    let mark = net.desired.filter(|d| drawn[*d]).and_then(|d| {
        let (k, v) = sim
            .states
            .iter()
            .enumerate()
            .map(|(k, y)| (k, y[d]))
            .max_by(|a, b| a.1.total_cmp(&b.1))?;
        (k > 0 && k + 1 < sim.states.len()).then(|| {
            (
                sim.x[k],
                v,
                format!(
                    "max {} near {} = {} {}",
                    net.species[d].name,
                    sim.x_name,
                    num(sim.x[k]),
                    sim.x_unit
                ),
            )
        })
    });
    plot::line_svg(&plot::LinePlot {
        title: &net.name,
        x_label: &format!(
            "{} [{}]",
            match sim.x_name {
                "V" => "reactor volume V",
                "W" => "catalyst mass W",
                _ => "time t",
            },
            sim.x_unit
        ),
        y_label: &format!(
            "{} [{unit}]",
            if batch { "amount N" } else { "molar flow F" }
        ),
        x: &sim.x,
        series,
        mark,
    })
}

/// Linear interpolation of y(x) at `at` on ascending x (the end values outside).
fn interpolate(x: &[f64], y: &[f64], at: f64) -> f64 {
    match x.iter().position(|v| *v >= at) {
        None => *y.last().unwrap_or(&f64::NAN),
        Some(0) => y[0],
        Some(k) => {
            let w = (at - x[k - 1]) / (x[k] - x[k - 1]);
            y[k - 1] + w * (y[k] - y[k - 1])
        }
    }
}
