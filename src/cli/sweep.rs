//! `rxnet sweep`: a full grid over one or more inputs, in parallel, as CSV or JSON, with an
//! optional plot.

use super::input::{check_tolerance, read_study, read_study_text, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, write_atomic};
use rxnet::model::{Network, Override};
use rxnet::report::plot;
use rxnet::studies::shard::{self, Provenance, SweepIdentity};
use rxnet::studies::study::Study;
use rxnet::studies::sweep::{self, Axis, Columns};
use rxnet::studies::target::Target;
use std::io::Write;
use std::path::PathBuf;

pub struct SweepArgs {
    pub file: PathBuf,
    pub vary: Vec<String>,
    pub out: Option<PathBuf>,
    pub json: bool,
    pub shard: Option<String>,
    pub plot: Option<PathBuf>,
    pub plot_target: Option<String>,
    pub rtol: Option<f64>,
    pub set: Vec<Override>,
}

fn parse_shard(s: &str) -> Result<(usize, usize), String> {
    let (k, n) = s
        .split_once('/')
        .ok_or_else(|| format!("--shard `{s}`: expected K/N, e.g. 2/8"))?;
    let k: usize = k
        .trim()
        .parse()
        .map_err(|_| format!("--shard `{s}`: K is not a whole number"))?;
    let n: usize = n
        .trim()
        .parse()
        .map_err(|_| format!("--shard `{s}`: N is not a whole number"))?;
    if n == 0 || k == 0 || k > n {
        return Err(format!("--shard `{s}`: need 1 ≤ K ≤ N"));
    }
    Ok((k, n))
}

/// Where the rows go as they finish: standard output, or `--out` through
/// [`super::output::OutputFile`] (a temporary file beside a regular file, renamed over it once
/// the sweep is complete, so an interrupted sweep never leaves a half-written file that looks
/// complete; a FIFO or a device written in place; the temporary file removed on failure and
/// on interrupt).
enum Sink {
    Stdout(std::io::BufWriter<std::io::Stdout>),
    File(std::io::BufWriter<super::output::OutputFile>),
}

impl Sink {
    fn open(out: Option<&PathBuf>) -> std::io::Result<Sink> {
        Ok(match out {
            None => Sink::Stdout(std::io::BufWriter::new(std::io::stdout())),
            Some(path) => {
                let target = super::output::prepare(path).map_err(std::io::Error::other)?;
                let file =
                    super::output::OutputFile::open(&target).map_err(std::io::Error::other)?;
                Sink::File(std::io::BufWriter::new(file))
            }
        })
    }

    fn write(&mut self, text: &str) -> std::io::Result<()> {
        match self {
            Sink::Stdout(w) => w.write_all(text.as_bytes()),
            Sink::File(w) => w.write_all(text.as_bytes()),
        }
    }

    /// Flush, and move the finished file into place.
    fn finish(self) -> std::io::Result<()> {
        match self {
            Sink::Stdout(mut w) => w.flush(),
            Sink::File(w) => w
                .into_inner()
                .map_err(|e| e.into_error())?
                .commit()
                .map_err(std::io::Error::other),
        }
    }

    /// Give up: the temporary file is removed when the output file is dropped uncommitted.
    fn abandon(self) {
        drop(self);
    }
}

/// What the plot needs of one point (kept instead of the row, so a plotted sweep does not hold
/// every outlet).
struct PlotPoint {
    point: usize,
    input: f64,
    value: Option<f64>,
    conversion: Option<f64>,
}

/// One row as JSON.
fn json_row(cols: &Columns, axes: &[Axis], r: &sweep::SweepRow) -> serde_json::Value {
    let inputs: serde_json::Map<String, serde_json::Value> = axes
        .iter()
        .zip(&r.inputs)
        .map(|(ax, v)| (ax.var.path.clone(), serde_json::json!(v)))
        .collect();
    let map = |keys: &[String], vals: &[Option<f64>]| {
        keys.iter()
            .zip(vals)
            .map(|(k, v)| (k.clone(), serde_json::json!(v)))
            .collect::<serde_json::Map<_, _>>()
    };
    match &r.result {
        Ok(p) => {
            let mut v = serde_json::json!({
                "point": r.point, "inputs": inputs, "status": p.status(), "conversion": p.conversion,
                "yield": map(&cols.products, &p.yields),
                "selectivity": map(&cols.others, &p.selectivity),
                "outlet": cols.species.iter().zip(&p.outlet).map(|(k, v)| (k.clone(), serde_json::json!(v))).collect::<serde_json::Map<_, _>>(),
            });
            if let Some((out, hot)) = p.temperatures {
                v["outlet_temperature"] = serde_json::json!(out);
                v["hot_spot_temperature"] = serde_json::json!(hot);
            }
            if !p.not_defined.is_empty() {
                v["not_defined"] = p
                    .not_defined
                    .iter()
                    .map(|(k, why)| (k.clone(), serde_json::json!(why)))
                    .collect::<serde_json::Map<_, _>>()
                    .into();
            }
            v
        }
        Err(e) => {
            serde_json::json!({"point": r.point, "inputs": inputs, "status": "failed", "error": e})
        }
    }
}

/// A JSON row as an element of the output's array ([`shard::json_element`]): indented by two
/// spaces in the unsharded array, by four under a shard's `rows`.
fn json_element(v: &serde_json::Value, indent: &str) -> String {
    shard::json_element(
        &serde_json::to_string_pretty(v).expect("JSON values serialize"),
        indent,
    )
}

/// `rxnet sweep FILE --vary PATH=LO:HI:N ...`: exit 0 when at least one point succeeded (the
/// failed ones are counted on stderr and in the output), 1 when every point failed (no plot
/// is drawn), 2 for invalid input.
pub fn sweep(a: &SweepArgs) -> i32 {
    if let Err(m) = check_tolerance("rtol", a.rtol) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    let mut axes: Vec<Axis> = Vec::new();
    for v in &a.vary {
        match Axis::parse(v) {
            Ok(ax) => {
                // `axes` holds the --vary parsed so far, in order, so `first` indexes both.
                if let Some(first) = axes.iter().position(|b| b.var.path == ax.var.path) {
                    eprintln!(
                        "error: --vary {v}: `{}` is already varied (by `--vary {}`); vary each input once",
                        ax.var.path, a.vary[first]
                    );
                    return EXIT_INVALID;
                }
                axes.push(ax)
            }
            Err(m) => {
                eprintln!("error: --vary {m}");
                return EXIT_INVALID;
            }
        }
    }
    let shard = match a.shard.as_deref().map(parse_shard).transpose() {
        Ok(s) => s,
        Err(m) => {
            eprintln!("error: {m}");
            return EXIT_INVALID;
        }
    };
    let total = match sweep::grid_size(&axes, shard) {
        Ok(t) => t,
        Err(m) => {
            eprintln!("error: {m}");
            return EXIT_INVALID;
        }
    };
    if a.plot.is_some() && (axes.len() > 2 || shard.is_some()) {
        eprintln!("error: --plot draws one or two varied inputs of an unsharded sweep");
        return EXIT_INVALID;
    }
    // The output paths are checked before the work (a directory, a path the user may not
    // write); the files themselves are written at the end.
    for path in a.out.iter().chain(&a.plot) {
        if let Err(e) = super::output::prepare(path) {
            eprintln!("error: cannot write {}: {e}", path.display());
            return EXIT_INVALID;
        }
    }
    // A shard hashes the study text for its provenance; an unsharded sweep needs no copy.
    let read = match shard {
        Some(_) => read_study_text(&a.file, &a.set),
        None => read_study(&a.file, &a.set).map(|(s, n, f)| (String::new(), s, n, f)),
    };
    let (text, study, net, findings) = match read {
        Ok(s) => s,
        Err(c) => return c,
    };
    // The corners of the grid must load, so a bad path or unit fails before any work.
    for ax in &axes {
        for x in [ax.var.lo, ax.var.hi] {
            if let Err(e) = study.load(&[ax.var.set(x)]) {
                eprintln!("error: --vary {} at {x}: {e}", ax.var.path);
                return EXIT_INVALID;
            }
        }
    }
    let plot_target = match &a.plot_target {
        Some(t) => t.clone(),
        None => match net.desired {
            Some(d) => format!("yield:{}", net.species[d].name),
            None => "conversion".into(),
        },
    };
    let target = match Target::parse(&plot_target, &net) {
        Ok(t) => t,
        Err(m) => {
            eprintln!("error: --plot-target: {m}");
            return EXIT_INVALID;
        }
    };
    let cols = Columns::new(&net, &axes);
    let count = shard.map_or(total, |(k, n)| sweep::shard_size(total, k, n));
    let bar = (count >= 50 && std::io::IsTerminal::is_terminal(&std::io::stderr())).then(|| {
        let b = indicatif::ProgressBar::new(count as u64);
        b.set_style(
            indicatif::ProgressStyle::with_template("{bar:40} {pos}/{len} points, {eta} left")
                .expect("valid template"),
        );
        b
    });
    let tick = || {
        if let Some(b) = &bar {
            b.inc(1);
        }
    };
    let out_name = |e: &std::io::Error| match &a.out {
        Some(p) => format!("error: cannot write {}: {e}", p.display()),
        None => format!("error: cannot write to standard output: {e}"),
    };
    let mut sink = match Sink::open(a.out.as_ref()) {
        Ok(s) => s,
        Err(e) => {
            eprintln!("{}", out_name(&e));
            return EXIT_FINDINGS;
        }
    };
    // A shard begins with its provenance (`studies::shard`): CSV comment lines, or a JSON
    // object whose `rows` hold the rows. The unsharded output has none.
    let provenance = shard.map(|k| {
        let name = rxnet::model::source::display_name(&a.file);
        let identity = SweepIdentity {
            study_text: &text,
            study_name: &name,
            vary: &a.vary,
            set: &a.set,
            rtol: a.rtol,
            format: if a.json {
                shard::Format::Json
            } else {
                shard::Format::Csv
            },
        };
        Provenance::new(k, identity.sha256(), total)
    });
    drop(text);
    if let Some(p) = &provenance {
        let preamble = if a.json {
            p.json_opening()
        } else {
            p.csv_preamble()
        };
        if let Err(e) = sink.write(&preamble) {
            sink.abandon();
            if e.kind() == std::io::ErrorKind::BrokenPipe {
                return 0;
            }
            eprintln!("{}", out_name(&e));
            return EXIT_FINDINGS;
        }
    }
    let indent = if provenance.is_some() {
        shard::JSON_SHARD_INDENT
    } else {
        shard::JSON_INDENT
    };
    let header = shard.is_none_or(|(k, _)| k == 1);
    let opening = if a.json {
        if provenance.is_some() {
            String::new()
        } else {
            "[".to_string()
        }
    } else if header {
        sweep::csv_header(&cols)
    } else {
        String::new()
    };
    let mut failed = 0usize;
    let mut done = 0usize;
    let mut plot_points: Vec<PlotPoint> = Vec::new();
    let want_plot = a.plot.is_some();
    let mut write_rows = |rows: &[sweep::SweepRow]| -> std::io::Result<()> {
        if done == 0 {
            sink.write(&opening)?;
        }
        let text = if a.json {
            let mut t = String::new();
            for (i, r) in rows.iter().enumerate() {
                t.push_str(if done + i == 0 { "\n" } else { ",\n" });
                t.push_str(&json_element(&json_row(&cols, &axes, r), indent));
            }
            t
        } else {
            sweep::csv_rows(&cols, rows)
        };
        sink.write(&text)?;
        failed += rows.iter().filter(|r| r.result.is_err()).count();
        done += rows.len();
        if want_plot {
            plot_points.extend(rows.iter().map(|r| PlotPoint {
                point: r.point,
                input: r.inputs[0],
                value: plot_value(&study, &axes, r, &target),
                conversion: r.result.as_ref().ok().map(|p| p.conversion),
            }));
        }
        Ok(())
    };
    let ran = sweep::run(
        &study,
        Some(&findings),
        &cols,
        &axes,
        shard,
        &solve_opts(a.rtol),
        &tick,
        &mut write_rows,
    );
    if let Some(b) = bar {
        b.finish_and_clear();
    }
    let closing = match ran {
        Ok(()) if a.json && provenance.is_some() => shard::json_shard_closing(done).to_string(),
        // Unsharded, the opening `[` is written with the first rows.
        Ok(()) if a.json && done == 0 => "[]\n".to_string(),
        Ok(()) if a.json => shard::json_closing(done).to_string(),
        Ok(()) if failed > 0 => sweep::csv_failed_trailer(failed, done),
        Ok(()) => String::new(),
        Err(sweep::SweepError::Grid(m)) => {
            sink.abandon();
            eprintln!("error: {m}");
            return EXIT_INVALID;
        }
        Err(sweep::SweepError::Sink(e)) => {
            sink.abandon();
            if e.kind() == std::io::ErrorKind::BrokenPipe {
                // The reader quit (`| head`): end quietly.
                return 0;
            }
            eprintln!("{}", out_name(&e));
            return EXIT_FINDINGS;
        }
    };
    if let Err(e) = sink.write(&closing).and_then(|_| sink.finish()) {
        if e.kind() == std::io::ErrorKind::BrokenPipe {
            return 0;
        }
        eprintln!("{}", out_name(&e));
        return EXIT_FINDINGS;
    }
    // A shard is part of a sweep: that its own points all failed says nothing of the sweep
    // (`rxnet merge` judges the whole), so a shard job ends 0 and a job array's merge runs.
    if done > 0 && failed == done && shard.is_some() {
        eprintln!(
            "note: every point of this shard failed ({failed} of {done}); the rows carry the errors"
        );
        return 0;
    }
    if done > 0 && failed == done {
        eprintln!(
            "error: {}: every point of the sweep failed ({failed} of {done}); the rows carry the errors{}",
            a.file.display(),
            if a.plot.is_some() {
                "; no plot drawn"
            } else {
                ""
            }
        );
        return EXIT_FINDINGS;
    }
    if let Some(path) = &a.plot
        && let Err(e) = sweep_plot(&net, &axes, &plot_points, &target)
            .and_then(|s| write_atomic(path, &s).map_err(|e| e.to_string()))
    {
        eprintln!("error: cannot write {}: {e}", path.display());
        return EXIT_FINDINGS;
    }
    if failed > 0 {
        eprintln!("note: {failed} of {done} points failed; their rows carry the error");
    }
    // The rows are data for other programs; the caution a report carries goes to the reader.
    if let Some(c) = rxnet::safety::caution(&net) {
        eprintln!("{c}");
    }
    0
}

/// The plotted target at one point, from its outlet (None where it failed or is not defined).
fn plot_value(study: &Study, axes: &[Axis], r: &sweep::SweepRow, target: &Target) -> Option<f64> {
    let p = r.result.as_ref().ok()?;
    let sets: Vec<Override> = axes
        .iter()
        .zip(&r.inputs)
        .map(|(a, v)| a.var.set(*v))
        .collect();
    let n = study.load(&sets).ok()?;
    target.value(&n, &p.outlet)
}

fn sweep_plot(
    net: &Network,
    axes: &[Axis],
    rows: &[PlotPoint],
    target: &Target,
) -> Result<String, String> {
    let label = target.label(net);
    let axis_label = |a: &Axis| {
        if a.var.unit.is_empty() {
            a.var.path.clone()
        } else {
            format!("{} [{}]", a.var.path, a.var.unit)
        }
    };
    if axes.len() == 1 {
        let xs: Vec<f64> = rows.iter().map(|r| r.input).collect();
        let ys: Vec<f64> = rows.iter().map(|r| r.value.unwrap_or(f64::NAN)).collect();
        let conv: Vec<f64> = rows
            .iter()
            .map(|r| r.conversion.unwrap_or(f64::NAN))
            .collect();
        let mut series = vec![(label.clone(), ys)];
        if label != "conversion" {
            series.push(("conversion".into(), conv));
        }
        plot::line_svg(&plot::LinePlot {
            title: &format!("{}: {label} against {}", net.name, axes[0].var.path),
            x_label: &axis_label(&axes[0]),
            y_label: "value (dimensionless)",
            x: &xs,
            series,
            mark: None,
        })
    } else {
        let xs: Vec<f64> = (0..axes[0].n).map(|k| axes[0].value(k)).collect();
        let ys: Vec<f64> = (0..axes[1].n).map(|k| axes[1].value(k)).collect();
        let mut z = vec![vec![None; ys.len()]; xs.len()];
        for r in rows {
            let (i, j) = (r.point / axes[1].n, r.point % axes[1].n);
            z[i][j] = r.value;
        }
        plot::heat_svg(&plot::HeatMap {
            title: &format!("{}: {label}", net.name),
            x_label: &axis_label(&axes[0]),
            y_label: &axis_label(&axes[1]),
            z_label: &label,
            xs: &xs,
            ys: &ys,
            z,
        })
    }
}
