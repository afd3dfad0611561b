//! `rxnet runaway`: the runaway boundary of a cooled tube or batch over one input, as a table,
//! CSV or JSON, with an optional plot of the hot spot and its normalised sensitivity.

use super::input::{check_tolerance, read_study, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json, prepare, write_to};
use rxnet::model::Override;
use rxnet::report::{num, plot};
use rxnet::studies::runaway::{self, CAUTION, Runaway};
use rxnet::studies::study::Variable;
use std::fmt::Write;
use std::path::PathBuf;

#[derive(Clone, Copy, clap::ValueEnum, PartialEq, Eq)]
pub enum RunawayFormat {
    Table,
    Csv,
    Json,
}

/// Arguments of `rxnet runaway`.
#[derive(clap::Args)]
pub struct RunawayArgs {
    file: PathBuf,
    /// The input to scan, a --set path with a number, e.g. reactor.heat.coolant.T, feed.T,
    /// reactor.heat.U or reactor.heat.UA.
    #[arg(long, value_name = "PATH")]
    input: String,
    /// Lower end of the scan, with its unit (e.g. "300 K").
    #[arg(long, value_name = "VALUE", allow_hyphen_values = true)]
    from: String,
    /// Upper end of the scan, same unit.
    #[arg(long, value_name = "VALUE", allow_hyphen_values = true)]
    to: String,
    /// Set this path to the same value as the input at every point (e.g. --tie feed.T with
    /// --input reactor.heat.coolant.T: a batch charged at the jacket temperature); may repeat.
    #[arg(long, value_name = "PATH")]
    tie: Vec<String>,
    /// Number of evenly spaced scan points (at least 3).
    #[arg(long, default_value_t = 21)]
    points: usize,
    /// Draw the hot spot and its normalised sensitivity against the input to this SVG file.
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    #[arg(long, value_enum, default_value_t = RunawayFormat::Table)]
    format: RunawayFormat,
    /// Relative tolerance of every integration (default: the study's `solver.rtol`, else 1e-8).
    #[arg(long)]
    rtol: Option<f64>,
    /// Change a value of the study, PATH=VALUE; may repeat.
    #[arg(long = "set", value_name = "PATH=VALUE")]
    set: Vec<Override>,
}

/// One scan point in the JSON report.
#[derive(serde::Serialize)]
struct PointJson {
    value: f64,
    status: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    hot_spot_temperature: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    hot_spot_at: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    slope: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    sensitivity: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    error: Option<String>,
}

/// `rxnet runaway --format json`: SI numbers except the input, which keeps the unit of its
/// bounds (`input_unit`).
#[derive(serde::Serialize)]
struct RunawayJson<'a> {
    study: String,
    input: &'a str,
    input_unit: &'a str,
    criterion: &'static str,
    /// Central-difference step as a fraction of the input value.
    step_fraction: f64,
    /// V (m3), W (kg) or t (s): where the hot spot lies.
    hot_spot_position: String,
    points: Vec<PointJson>,
    failed: usize,
    critical: Option<&'a runaway::Critical>,
    caution: &'static str,
}

fn unit_suffix(var: &Variable) -> String {
    if var.unit.is_empty() {
        String::new()
    } else {
        format!(" [{}]", var.unit)
    }
}

fn table(r: &Runaway, study: &str) -> String {
    let mut o = String::new();
    let u = unit_suffix(&r.var);
    let _ = writeln!(o, "{study}");
    let _ = writeln!(
        o,
        "runaway boundary over {}{u}: hot spot T_hot and its normalised sensitivity s = (φ/T_hot) dT_hot/dφ (central differences, step {:.2e} of φ)\n",
        r.var.path, r.step_fraction
    );
    let _ = writeln!(
        o,
        "  {:>14}  {:>12}  {:>14}  {:>14}  {:>12}",
        format!("{}", r.var.path.rsplit('.').next().unwrap_or(&r.var.path)),
        "T_hot [K]",
        format!("at {} [{}]", r.x_name, r.x_unit),
        "dT_hot/dφ",
        "s"
    );
    for p in &r.points {
        match &p.result {
            Ok(v) => {
                let _ = writeln!(
                    o,
                    "  {:>14}  {:>12}  {:>14}  {:>14}  {:>12}",
                    num(p.value),
                    num(v.hot_spot.temperature),
                    num(v.hot_spot.at),
                    num(v.slope),
                    num(v.sensitivity)
                );
            }
            Err(e) => {
                let _ = writeln!(o, "  {:>14}  failed: {e}", num(p.value));
            }
        }
    }
    if r.failed > 0 {
        let _ = writeln!(
            o,
            "\n  {} of {} points failed (listed above)",
            r.failed,
            r.points.len()
        );
    }
    match &r.critical {
        Some(c) => {
            let _ = writeln!(
                o,
                "\n  critical {} = {}{} (largest s = {}, T_hot = {} K){}",
                r.var.path,
                num(c.value),
                if r.var.unit.is_empty() {
                    String::new()
                } else {
                    format!(" {}", r.var.unit)
                },
                num(c.sensitivity),
                num(c.hot_spot),
                if c.at_bound {
                    "; the largest s lies at an end of the range, so the boundary may lie beyond it: widen --from/--to"
                } else {
                    ""
                }
            );
        }
        None => {
            let _ = writeln!(o, "\n  no point succeeded: no critical value");
        }
    }
    let _ = writeln!(
        o,
        "  criterion: maximum of the normalised sensitivity of the hot spot (Morbidelli & Varma, 1988)"
    );
    let _ = writeln!(o, "\n  caution: {CAUTION}");
    o
}

fn csv(r: &Runaway) -> String {
    use rxnet::report::run::csv_field;
    use rxnet::studies::sweep::fmt_num;
    let mut o = String::new();
    let head = [
        format!("{}{}", r.var.path, unit_suffix(&r.var)),
        "status".into(),
        "T_hot [K]".into(),
        format!("hot spot {} [{}]", r.x_name, r.x_unit),
        "dT_hot/dphi".into(),
        "sensitivity".into(),
        "error".into(),
    ];
    let _ = writeln!(
        o,
        "{}",
        head.iter()
            .map(|h| csv_field(h))
            .collect::<Vec<_>>()
            .join(",")
    );
    for p in &r.points {
        let row = match &p.result {
            Ok(v) => vec![
                fmt_num(p.value),
                "ok".into(),
                fmt_num(v.hot_spot.temperature),
                fmt_num(v.hot_spot.at),
                fmt_num(v.slope),
                fmt_num(v.sensitivity),
                String::new(),
            ],
            Err(e) => vec![
                fmt_num(p.value),
                "failed".into(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                csv_field(e),
            ],
        };
        let _ = writeln!(o, "{}", row.join(","));
    }
    if let Some(c) = &r.critical {
        let _ = writeln!(
            o,
            "# critical {} = {} (s = {}, T_hot = {} K{})",
            r.var.path,
            fmt_num(c.value),
            fmt_num(c.sensitivity),
            fmt_num(c.hot_spot),
            if c.at_bound {
                ", at an end of the range"
            } else {
                ""
            }
        );
    }
    if r.failed > 0 {
        let _ = writeln!(o, "# failed: {} of {} points", r.failed, r.points.len());
    }
    let _ = writeln!(o, "# caution: {CAUTION}");
    o
}

fn plot_svg(r: &Runaway) -> Result<String, String> {
    let ok: Vec<(f64, &runaway::RunawayValues)> = r
        .points
        .iter()
        .filter_map(|p| p.result.as_ref().ok().map(|v| (p.value, v)))
        .collect();
    let x: Vec<f64> = ok.iter().map(|(x, _)| *x).collect();
    let label = format!("{}{}", r.var.path, unit_suffix(&r.var));
    let mark_t = r
        .critical
        .as_ref()
        .map(|c| (c.value, c.hot_spot, "critical".to_string()));
    let mark_s = r
        .critical
        .as_ref()
        .map(|c| (c.value, c.sensitivity, format!("critical {}", num(c.value))));
    plot::stacked_svg(&[
        plot::LinePlot {
            title: "hot spot (screening values; see the caution in the report)",
            x_label: &label,
            y_label: "T_hot [K]",
            x: &x,
            series: vec![(
                "T_hot".into(),
                ok.iter().map(|(_, v)| v.hot_spot.temperature).collect(),
            )],
            mark: mark_t,
        },
        plot::LinePlot {
            title: "normalised sensitivity s = (φ/T_hot) dT_hot/dφ",
            x_label: &label,
            y_label: "s [-]",
            x: &x,
            series: vec![("s".into(), ok.iter().map(|(_, v)| v.sensitivity).collect())],
            mark: mark_s,
        },
    ])
}

/// `rxnet runaway FILE --input PATH --from A --to B`: exit 0 with a critical value, 1 when
/// every point failed (or the output could not be written), 2 for invalid input.
pub fn runaway(a: &RunawayArgs) -> i32 {
    if let Err(m) = check_tolerance("rtol", a.rtol) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    let var = match Variable::new(a.input.trim(), &a.from, &a.to) {
        Ok(v) => v,
        Err(m) => {
            eprintln!("error: --input {}: {m}", a.input);
            return EXIT_INVALID;
        }
    };
    let plot_target = match a.plot.as_ref().map(|p| prepare(p)).transpose() {
        Ok(t) => t,
        Err(e) => {
            eprintln!(
                "error: cannot write {}: {e}",
                a.plot.as_ref().unwrap().display()
            );
            return EXIT_INVALID;
        }
    };
    let (study, net, findings) = match read_study(&a.file, &a.set) {
        Ok(s) => s,
        Err(c) => return c,
    };
    let opts = solve_opts(a.rtol);
    let input = runaway::Input {
        var,
        tied: a.tie.iter().map(|t| t.trim().to_string()).collect(),
    };
    let affects = std::iter::once(&input.var.path)
        .chain(&input.tied)
        .any(|p| rxnet::studies::evaluate::path_affects_check(p));
    let base = (!affects).then_some(&findings);
    let r = match runaway::run(&study, &input, a.points, &opts, base) {
        Ok(r) => r,
        Err(e) => {
            eprintln!("error: {e}");
            return if e.is_invalid_input() {
                EXIT_INVALID
            } else {
                EXIT_FINDINGS
            };
        }
    };
    if r.failed > 0 {
        eprintln!(
            "warning: {} of {} points failed (see the report)",
            r.failed,
            r.points.len()
        );
    }
    let code = if r.critical.is_some() {
        0
    } else {
        EXIT_FINDINGS
    };
    if let (Some(path), Some(target)) = (&a.plot, &plot_target) {
        if r.critical.is_none() {
            eprintln!("error: every point failed; no plot drawn");
        } else if let Err(e) = plot_svg(&r).and_then(|svg| write_to(target, &svg)) {
            eprintln!("error: cannot write {}: {e}", path.display());
            return EXIT_FINDINGS;
        }
    }
    let text = match a.format {
        RunawayFormat::Table => table(&r, &net.name),
        RunawayFormat::Csv => csv(&r),
        RunawayFormat::Json => json(&RunawayJson {
            study: net.name.clone(),
            input: &r.var.path,
            input_unit: &r.var.unit,
            criterion: "maximum of the normalised sensitivity s = (phi/T_hot) dT_hot/dphi of the hot spot (Morbidelli & Varma, AIChE J. 1988)",
            step_fraction: r.step_fraction,
            hot_spot_position: format!("{} [{}]", r.x_name, r.x_unit),
            points: r
                .points
                .iter()
                .map(|p| match &p.result {
                    Ok(v) => PointJson {
                        value: p.value,
                        status: "ok",
                        hot_spot_temperature: Some(v.hot_spot.temperature),
                        hot_spot_at: Some(v.hot_spot.at),
                        slope: Some(v.slope),
                        sensitivity: Some(v.sensitivity),
                        error: None,
                    },
                    Err(e) => PointJson {
                        value: p.value,
                        status: "failed",
                        hot_spot_temperature: None,
                        hot_spot_at: None,
                        slope: None,
                        sensitivity: None,
                        error: Some(e.clone()),
                    },
                })
                .collect(),
            failed: r.failed,
            critical: r.critical.as_ref(),
            caution: CAUTION,
        }),
    };
    emit(&text, code)
}
