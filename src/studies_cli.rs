//! The design-study commands of the binary: optimize, sweep, compare, and the plots.

use crate::cli::{EXIT_FINDINGS, EXIT_INVALID, check_tolerance, emit, json, write_atomic};
use rxnet::model::{Network, Override, read_text};
use rxnet::report::{self, num, plot};
use rxnet::solve::{self, Simulation, SolveOptions};
use rxnet::studies::compare::{self, Kind};
use rxnet::studies::optimize::{Study, Variable, optimize_size, optimize_vars};
use rxnet::studies::sweep::{self, Axis, Columns};
use rxnet::studies::target::Target;
use rxnet::units::parse_quantity;
use rxnet::{metrics, reactor};
use std::fmt::Write;
use std::path::{Path, PathBuf};

/// Read a study for a design command; errors are printed, the exit code returned.
fn read_study(file: &Path, set: &[Override]) -> Result<(Study, Network), i32> {
    let text = read_text(file).map_err(|e| {
        eprintln!("error: {e}");
        EXIT_INVALID
    })?;
    let study = Study::new(text, file.display().to_string(), set.to_vec()).map_err(|e| {
        eprintln!("error: {e}");
        EXIT_INVALID
    })?;
    let net = study.load(&[]).map_err(|e| {
        eprintln!("error: {e}");
        EXIT_INVALID
    })?;
    let c = rxnet::analysis::check(&net);
    if c.has_errors() {
        eprintln!(
            "error: {}: the network has error findings; run `rxnet check` on it",
            file.display()
        );
        return Err(EXIT_FINDINGS);
    }
    Ok((study, net))
}

fn solve_opts(rtol: Option<f64>) -> SolveOptions {
    SolveOptions {
        rtol,
        ..Default::default()
    }
}

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
                return if matches!(e, rxnet::studies::optimize::StudyError::Invalid(_)) {
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
    emit(&text);
    0
}

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
            emit(&text);
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

/// The species profile of a run as SVG, with the maximum of the desired product marked when it
/// lies inside the reactor.
pub fn profile_plot(net: &Network, sim: &Simulation) -> Result<String, String> {
    let batch = net.reactor.is_batch();
    let unit = if batch { "mol" } else { "mol/s" };
    let series: Vec<(String, Vec<f64>)> = net
        .species
        .iter()
        .enumerate()
        .filter(|(j, _)| sim.states.iter().any(|y| y[*j] != sim.states[0][*j]))
        .map(|(j, s)| (s.name.clone(), sim.states.iter().map(|y| y[j]).collect()))
        .collect();
    let mark = net.desired.and_then(|d| {
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

/// `rxnet compare FILE... [--reactors pfr,cstr,batch] [--rank-by TARGET]`
pub fn compare(
    files: &[PathBuf],
    reactors: &[String],
    rank_by: Option<&str>,
    at_conversion: Option<f64>,
    optimum: Option<&str>,
    as_json: bool,
    rtol: Option<f64>,
) -> i32 {
    if let Err(m) = check_tolerance("rtol", rtol, 1.0) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    if let Some(x) = at_conversion
        && !(x > 0.0 && x < 1.0)
    {
        eprintln!("error: --at-conversion must lie in (0, 1), got {x}");
        return EXIT_INVALID;
    }
    let mut kinds = Vec::new();
    for r in reactors {
        match Kind::parse(r) {
            Ok(k) => kinds.push(Some(k)),
            Err(m) => {
                eprintln!("error: --reactors: {m}");
                return EXIT_INVALID;
            }
        }
    }
    if kinds.is_empty() {
        kinds.push(None);
    }
    let opts = solve_opts(rtol);
    let mut rows = Vec::new();
    for f in files {
        let (_, net) = match read_study(f, &[]) {
            Ok(s) => s,
            Err(c) => return c,
        };
        let rank = match rank_by {
            Some(t) => t.to_string(),
            None => match net.desired {
                Some(d) => format!("yield:{}", net.species[d].name),
                None => "conversion".into(),
            },
        };
        for t in [Some(rank.as_str()), optimum].into_iter().flatten() {
            if let Err(m) = Target::parse(t, &net) {
                eprintln!("error: {}: {m}", f.display());
                return EXIT_INVALID;
            }
        }
        for k in &kinds {
            rows.push(compare::evaluate(
                &f.display().to_string(),
                &net,
                *k,
                &rank,
                at_conversion,
                optimum,
                &opts,
            ));
        }
    }
    compare::rank(&mut rows);
    let text = if as_json {
        json(&rows)
    } else {
        let mut o = String::new();
        let _ = writeln!(
            o,
            "{:<4} {:<34} {:<6} {:>12} {:>10} {:>10} {:>12} {:>12}{}",
            "rank",
            "study",
            "type",
            "size (SI)",
            "X",
            "yield",
            "selectivity",
            rank_by.unwrap_or("yield"),
            if optimum.is_some() {
                "   optimum size / value"
            } else {
                ""
            }
        );
        for (i, r) in rows.iter().enumerate() {
            let f = |v: Option<f64>| v.map(num).unwrap_or_else(|| "—".into());
            let study: String = r.study.chars().take(34).collect();
            let _ = write!(
                o,
                "{:<4} {:<34} {:<6} {:>12} {:>10} {:>10} {:>12} {:>12}",
                i + 1,
                study,
                r.reactor,
                f(r.size),
                f(r.conversion),
                f(r.yield_desired),
                f(r.selectivity_desired),
                f(r.rank_value)
            );
            if optimum.is_some() {
                let _ = write!(o, "   {} / {}", f(r.optimum_size), f(r.optimum_value));
            }
            if let Some(e) = &r.error {
                let _ = write!(o, "   failed: {e}");
            }
            o.push('\n');
        }
        let _ = writeln!(
            o,
            "\nyield: of the desired product on the key reactant; selectivity: desired over all other products formed (molar)."
        );
        if at_conversion.is_some() {
            let _ = writeln!(o, "every entry was resized to the same conversion first.");
        }
        o
    };
    emit(&text);
    if rows.iter().all(|r| r.error.is_some()) {
        EXIT_FINDINGS
    } else {
        0
    }
}
