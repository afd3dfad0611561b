//! `rxnet sweep`: a full grid over one or more inputs, in parallel, as CSV or JSON, with an
//! optional plot.

use super::input::{check_tolerance, read_study, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json, write_atomic};
use rxnet::model::{Network, Override};
use rxnet::report::plot;
use rxnet::studies::study::Study;
use rxnet::studies::sweep::{self, Axis, Columns};
use rxnet::studies::target::Target;
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

/// `rxnet sweep FILE --vary PATH=LO:HI:N ...`
pub fn sweep(a: &SweepArgs) -> i32 {
    if let Err(m) = check_tolerance("rtol", a.rtol, 1.0) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    let mut axes = Vec::new();
    for v in &a.vary {
        match Axis::parse(v) {
            Ok(ax) => axes.push(ax),
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
    let total = match sweep::grid_size(&axes) {
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
    let (study, net) = match read_study(&a.file, &a.set) {
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
    let count = shard.map(|(k, n)| (total + n - k) / n).unwrap_or(total);
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
    let rows = match sweep::run(&study, &cols, &axes, shard, &solve_opts(a.rtol), &tick) {
        Ok(r) => r,
        Err(m) => {
            eprintln!("error: {m}");
            return EXIT_INVALID;
        }
    };
    if let Some(b) = bar {
        b.finish_and_clear();
    }
    let failed = rows.iter().filter(|r| r.result.is_err()).count();
    let text = if a.json {
        let items: Vec<serde_json::Value> = rows
            .iter()
            .map(|r| {
                let inputs: serde_json::Map<String, serde_json::Value> =
                    axes.iter().zip(&r.inputs).map(|(ax, v)| (ax.var.path.clone(), serde_json::json!(v))).collect();
                match &r.result {
                    Ok(p) => serde_json::json!({
                        "point": r.point, "inputs": inputs, "status": "ok", "conversion": p.conversion,
                        "yield": cols.products.iter().zip(&p.yields).map(|(k, v)| (k.clone(), serde_json::json!(v))).collect::<serde_json::Map<_, _>>(),
                        "selectivity": cols.others.iter().zip(&p.selectivity).map(|(k, v)| (k.clone(), serde_json::json!(v))).collect::<serde_json::Map<_, _>>(),
                        "outlet": cols.species.iter().zip(&p.outlet).map(|(k, v)| (k.clone(), serde_json::json!(v))).collect::<serde_json::Map<_, _>>(),
                    }),
                    Err(e) => serde_json::json!({"point": r.point, "inputs": inputs, "status": "failed", "error": e}),
                }
            })
            .collect();
        json(&items)
    } else {
        sweep::csv(&cols, &rows, shard.is_none_or(|(k, _)| k == 1))
    };
    if let Some(path) = &a.plot
        && let Err(e) = sweep_plot(&net, &study, &axes, &rows, &target)
            .and_then(|s| write_atomic(path, &s).map_err(|e| e.to_string()))
    {
        eprintln!("error: cannot write {}: {e}", path.display());
        return EXIT_FINDINGS;
    }
    match &a.out {
        Some(path) => {
            if let Err(e) = write_atomic(path, &text) {
                eprintln!("error: cannot write {}: {e}", path.display());
                return EXIT_FINDINGS;
            }
        }
        None => {
            let code = emit(&text, 0);
            if code != 0 {
                return code;
            }
        }
    }
    if failed > 0 {
        eprintln!(
            "note: {failed} of {} points failed; their rows carry the error",
            rows.len()
        );
    }
    0
}

fn sweep_plot(
    net: &Network,
    study: &Study,
    axes: &[Axis],
    rows: &[sweep::SweepRow],
    target: &Target,
) -> Result<String, String> {
    // The target at each point, from its outlet.
    let value = |r: &sweep::SweepRow| -> Option<f64> {
        let p = r.result.as_ref().ok()?;
        let sets: Vec<Override> = axes
            .iter()
            .zip(&r.inputs)
            .map(|(a, v)| a.var.set(*v))
            .collect();
        let n = study.load(&sets).ok()?;
        target.value(&n, &p.outlet)
    };
    let label = target.label(net);
    let axis_label = |a: &Axis| {
        if a.var.unit.is_empty() {
            a.var.path.clone()
        } else {
            format!("{} [{}]", a.var.path, a.var.unit)
        }
    };
    if axes.len() == 1 {
        let xs: Vec<f64> = rows.iter().map(|r| r.inputs[0]).collect();
        let ys: Vec<f64> = rows.iter().map(|r| value(r).unwrap_or(f64::NAN)).collect();
        let conv: Vec<f64> = rows
            .iter()
            .map(|r| r.result.as_ref().map(|p| p.conversion).unwrap_or(f64::NAN))
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
            z[i][j] = value(r);
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
