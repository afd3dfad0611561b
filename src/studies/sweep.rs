//! `rxnet sweep`: a full grid over one or more inputs, each point a full run, in parallel.
//!
//! Points are numbered in row-major order (the last `--vary` changes fastest). `--shard K/N`
//! keeps the points whose number p satisfies p mod N = K − 1, so the shards of a cluster job
//! array together cover the grid once. Each shard file begins with its provenance and only
//! shard 1 writes the CSV header; [`super::shard`] writes the provenance and merges the
//! shards back into the unsharded file, byte for byte (`rxnet merge`).

use super::evaluate::{Findings, evaluate_study};
use super::study::{Study, Variable};
use crate::metrics;
use crate::model::Network;
use crate::solve::SolveOptions;
use rayon::prelude::*;

/// Most points one run of a sweep may have, the whole grid or one shard of it (a bound on the
/// time one command takes); a larger grid is split with `--shard K/N`.
pub const MAX_POINTS: usize = 1_000_000;

/// Most points of a grid split into shards: a million shards of [`MAX_POINTS`]. Point numbers
/// and an axis's positions k/(n − 1) stay exact in f64 (below 2^53) far beyond it.
pub const MAX_GRID: usize = 1_000_000_000_000;

/// One varied input: `PATH=LO:HI:N` or `PATH=LO:HI:N:log`.
#[derive(Debug, Clone)]
pub struct Axis {
    pub var: Variable,
    pub n: usize,
    pub log: bool,
}

impl Axis {
    pub fn parse(s: &str) -> Result<Axis, String> {
        let (path, spec) = s.split_once('=').ok_or_else(|| {
            format!("`{s}`: a varied input is PATH=LO:HI:N, e.g. feed.T=300 K:400 K:11")
        })?;
        let parts: Vec<&str> = spec.split(':').collect();
        let (lo, hi, n, log) = match parts.as_slice() {
            [lo, hi, n] => (*lo, *hi, *n, false),
            [lo, hi, n, "log"] => (*lo, *hi, *n, true),
            _ => return Err(format!("`{s}`: expected PATH=LO:HI:N or PATH=LO:HI:N:log")),
        };
        let n: usize = n
            .trim()
            .parse()
            .map_err(|_| format!("`{s}`: the number of points `{n}` is not a whole number"))?;
        if n == 0 {
            return Err(format!("`{s}`: at least one point is needed"));
        }
        if n > MAX_GRID {
            return Err(format!(
                "`{s}`: {n} points on one axis is more than the {MAX_GRID} a grid may have"
            ));
        }
        let var = Variable::new(path.trim(), lo, hi)?;
        if log && var.lo <= 0.0 {
            return Err(format!("`{s}`: a log axis needs LO > 0"));
        }
        Ok(Axis { var, n, log })
    }

    /// The k-th value of the axis.
    pub fn value(&self, k: usize) -> f64 {
        if self.n == 1 {
            return self.var.lo;
        }
        let t = k as f64 / (self.n - 1) as f64;
        if self.log {
            (self.var.lo.ln() + t * (self.var.hi.ln() - self.var.lo.ln())).exp()
        } else {
            self.var.lo + t * (self.var.hi - self.var.lo)
        }
    }
}

/// The metrics of one successful point.
#[derive(Debug, Clone)]
pub struct PointResult {
    pub conversion: f64,
    /// Per product (column order of [`Columns`]).
    pub yields: Vec<Option<f64>>,
    pub selectivity: Vec<Option<f64>>,
    /// (column, reason) of each yield or selectivity that is not defined at this point.
    pub not_defined: Vec<(String, String)>,
    pub outlet: Vec<f64>,
    /// With an energy balance: (outlet temperature, hot spot), K.
    pub temperatures: Option<(f64, f64)>,
    /// The hot spot (or a batch's cooling-failure temperature) exceeds the study's T_max.
    pub over_limit: bool,
}

impl PointResult {
    /// The status column: `ok`, or `over T_max` for a point beyond the process limit.
    pub fn status(&self) -> &'static str {
        if self.over_limit { "over T_max" } else { "ok" }
    }
}

#[derive(Debug, Clone)]
pub struct SweepRow {
    pub point: usize,
    pub inputs: Vec<f64>,
    pub result: Result<PointResult, String>,
}

/// Column names, fixed by the base study.
#[derive(Debug, Clone)]
pub struct Columns {
    pub inputs: Vec<String>,
    pub products: Vec<String>,
    pub desired: Option<String>,
    pub others: Vec<String>,
    pub species: Vec<String>,
    pub state_unit: &'static str,
    /// Whether the study has an energy balance (then the T_out and T_hot columns).
    pub heat: bool,
}

impl Columns {
    pub fn new(net: &Network, axes: &[Axis]) -> Columns {
        let products: Vec<String> = metrics::products(net)
            .iter()
            .map(|&j| net.species[j].name.clone())
            .collect();
        let desired = net.desired.map(|d| net.species[d].name.clone());
        let others = products
            .iter()
            .filter(|p| Some(*p) != desired.as_ref())
            .cloned()
            .collect();
        Columns {
            inputs: axes
                .iter()
                .map(|a| {
                    if a.var.unit.is_empty() {
                        a.var.path.clone()
                    } else {
                        format!("{} [{}]", a.var.path, a.var.unit)
                    }
                })
                .collect(),
            products,
            desired,
            others,
            species: net.species.iter().map(|s| s.name.clone()).collect(),
            heat: net.heat.balance().is_some(),
            state_unit: if net.reactor.is_batch() {
                "mol"
            } else {
                "mol/s"
            },
        }
    }
}

/// Total number of grid points, refused above [`MAX_GRID`], and when this run (the grid, or
/// shard K of N of it) would have more than [`MAX_POINTS`] points.
pub fn grid_size(axes: &[Axis], shard: Option<(usize, usize)>) -> Result<usize, String> {
    let mut total: usize = 1;
    for a in axes {
        total = total
            .checked_mul(a.n)
            .filter(|t| *t <= MAX_GRID)
            .ok_or_else(|| format!("the grid has more than {MAX_GRID} points; use fewer points"))?;
    }
    let fewest_shards = total.div_ceil(MAX_POINTS);
    match shard {
        None if total > MAX_POINTS => Err(format!(
            "the grid has {total} points, more than the {MAX_POINTS} one run of a sweep may have; split it into {fewest_shards} or more shards with --shard K/N (docs/cluster.md)"
        )),
        Some((k, n)) if shard_size(total, k, n) > MAX_POINTS => Err(format!(
            "shard {k} of {n} has {} of the grid's {total} points, more than the {MAX_POINTS} one run of a sweep may have; use N ≥ {fewest_shards}",
            shard_size(total, k, n)
        )),
        _ => Ok(total),
    }
}

/// The number of points of shard `k` of `n` of a grid of `total`: those p < total with
/// p mod n = k − 1.
pub fn shard_size(total: usize, k: usize, n: usize) -> usize {
    (total + n - k) / n
}

/// Inputs of point p (row-major, last axis fastest).
pub fn point_inputs(axes: &[Axis], p: usize) -> Vec<f64> {
    let mut k = p;
    let mut idx = vec![0; axes.len()];
    for (i, a) in axes.iter().enumerate().rev() {
        idx[i] = k % a.n;
        k /= a.n;
    }
    axes.iter().zip(idx).map(|(a, i)| a.value(i)).collect()
}

/// One point through the evaluation gate ([`super::evaluate`]): the same load, consistency
/// check, solve, result checks and metrics as `rxnet run`, so a point `run` would refuse
/// (e.g. K_eq breaking Wegscheider's condition at this temperature, the key not fed) is a
/// failed row, never an `ok` one.
fn run_point(
    study: &Study,
    base: Option<&Findings>,
    cols: &Columns,
    axes: &[Axis],
    inputs: &[f64],
    opts: &SolveOptions,
) -> Result<PointResult, String> {
    let sets: Vec<_> = axes
        .iter()
        .zip(inputs)
        .map(|(a, v)| a.var.set(*v))
        .collect();
    let (_, ev) = evaluate_study(study, &sets, opts, base).map_err(|e| e.to_string())?;
    let m = &ev.metrics;
    let find_y = |name: &String| m.yields.iter().find(|y| &y.species == name);
    let find_s = |name: &String| m.selectivity.iter().find(|s| &s.over == name);
    let mut not_defined = Vec::new();
    for p in &cols.products {
        if let Some(why) = find_y(p).and_then(|y| y.not_defined.clone()) {
            not_defined.push((format!("yield:{p}"), why));
        }
    }
    if let Some(d) = &cols.desired {
        for u in &cols.others {
            if let Some(why) = find_s(u).and_then(|s| s.not_defined.clone()) {
                not_defined.push((format!("selectivity:{d}/{u}"), why));
            }
        }
    }
    Ok(PointResult {
        conversion: m.conversion,
        yields: cols
            .products
            .iter()
            .map(|p| find_y(p).and_then(|y| y.on_key))
            .collect(),
        selectivity: cols
            .others
            .iter()
            .map(|u| find_s(u).and_then(|s| s.value))
            .collect(),
        not_defined,
        outlet: ev.sim.outlet().to_vec(),
        temperatures: ev
            .heat
            .as_ref()
            .map(|h| (h.outlet_temperature, h.hot_spot.temperature)),
        over_limit: ev.heat.as_ref().is_some_and(|h| h.exceeds_limit()),
    })
}

/// Points evaluated together before their rows are handed on: enough to keep every core busy,
/// few enough that a sweep's memory does not grow with its size.
pub const CHUNK: usize = 1024;

/// The point numbers of the grid or of one shard of it, in order.
pub fn point_numbers(total: usize, shard: Option<(usize, usize)>) -> impl Iterator<Item = usize> {
    let (first, step) = match shard {
        None => (0, 1),
        Some((k, n)) => (k - 1, n),
    };
    (first..total).step_by(step)
}

/// Run the grid (or one shard of it) in parallel, a chunk of [`CHUNK`] points at a time, and
/// hand each chunk's rows, in point order, to `sink` as soon as the chunk is done, while the
/// next chunk is evaluated (so writing the rows does not leave the cores idle); memory is
/// bounded by two chunks whatever the number of points. `progress` is called once per finished
/// point. Stops at the first error of `sink`. `base` is the consistency check of the study
/// without the varied inputs (the caller has it from reading the study), reused at every
/// point when only reactor fields vary; without it every point is checked.
#[allow(clippy::too_many_arguments)]
pub fn run<E>(
    study: &Study,
    base: Option<&Findings>,
    cols: &Columns,
    axes: &[Axis],
    shard: Option<(usize, usize)>,
    opts: &SolveOptions,
    progress: &(dyn Fn() + Sync),
    sink: &mut dyn FnMut(&[SweepRow]) -> Result<(), E>,
) -> Result<(), SweepError<E>> {
    let total = grid_size(axes, shard).map_err(SweepError::Grid)?;
    let mut points = point_numbers(total, shard);
    let evaluate = |chunk: &[usize]| -> Vec<SweepRow> {
        chunk
            .par_iter()
            .map(|&p| {
                let inputs = point_inputs(axes, p);
                let result = run_point(study, base, cols, axes, &inputs, opts);
                progress();
                SweepRow {
                    point: p,
                    inputs,
                    result,
                }
            })
            .collect()
    };
    let next_chunk =
        |points: &mut dyn Iterator<Item = usize>| -> Vec<usize> { points.take(CHUNK).collect() };
    let mut done: Vec<SweepRow> = evaluate(&next_chunk(&mut points));
    loop {
        let chunk = next_chunk(&mut points);
        if chunk.is_empty() {
            if !done.is_empty() {
                sink(&done).map_err(SweepError::Sink)?;
            }
            return Ok(());
        }
        // The pool evaluates this chunk (from a thread of its own, which waits on the pool)
        // while this thread hands the finished rows on.
        let (rows, sunk) = std::thread::scope(|scope| {
            let evaluating = scope.spawn(|| evaluate(&chunk));
            let sunk = sink(&done);
            let rows = evaluating
                .join()
                .unwrap_or_else(|p| std::panic::resume_unwind(p));
            (rows, sunk)
        });
        sunk.map_err(SweepError::Sink)?;
        done = rows;
    }
}

/// Why a sweep stopped: the grid is too large, or the consumer of the rows failed (a write).
#[derive(Debug)]
pub enum SweepError<E> {
    Grid(String),
    Sink(E),
}

/// A number in its shortest round-trip form, in scientific notation when very small or large.
pub fn fmt_num(x: f64) -> String {
    let mut s = String::new();
    push_num(&mut s, x);
    s
}

/// [`fmt_num`] appended to `out` (no string of its own: a sweep writes a dozen numbers a row).
pub fn push_num(out: &mut String, x: f64) {
    use std::fmt::Write;
    let a = x.abs();
    let _ = if x == 0.0 || (1e-4..1e15).contains(&a) {
        write!(out, "{x}")
    } else {
        write!(out, "{x:e}")
    };
}

/// The CSV header line (with its newline).
pub fn csv_header(cols: &Columns) -> String {
    use crate::report::run::csv_field;
    let mut h: Vec<String> = vec!["point".into()];
    h.extend(cols.inputs.iter().cloned());
    h.push("status".into());
    h.push("conversion".into());
    h.extend(cols.products.iter().map(|p| format!("yield:{p}")));
    if let Some(d) = &cols.desired {
        h.extend(cols.others.iter().map(|u| format!("selectivity:{d}/{u}")));
    }
    h.extend(
        cols.species
            .iter()
            .map(|s| format!("{s} [{}]", cols.state_unit)),
    );
    if cols.heat {
        h.push("T_out [K]".into());
        h.push("T_hot [K]".into());
    }
    h.push("error".into());
    let mut o = h.iter().map(|s| csv_field(s)).collect::<Vec<_>>().join(",");
    o.push('\n');
    o
}

/// The rows as CSV lines; numbers in SI (inputs in the unit of their bounds), shortest
/// round-trip form. A failed point has status `failed`, empty numbers and the error in the
/// last column; a yield or selectivity that is not defined is an empty field.
pub fn csv_rows(cols: &Columns, rows: &[SweepRow]) -> String {
    use crate::report::run::csv_field;
    use std::fmt::Write;
    // Each field is written straight into the text, a comma before every field but the first.
    let mut o = String::with_capacity(rows.len() * 256);
    let num = |o: &mut String, v: f64| {
        o.push(',');
        push_num(o, v);
    };
    let opt = |o: &mut String, v: Option<f64>| {
        o.push(',');
        if let Some(v) = v {
            push_num(o, v);
        }
    };
    for r in rows {
        let _ = write!(o, "{}", r.point);
        for v in &r.inputs {
            num(&mut o, *v);
        }
        match &r.result {
            Ok(p) => {
                o.push(',');
                o.push_str(p.status());
                num(&mut o, p.conversion);
                for v in &p.yields {
                    opt(&mut o, *v);
                }
                if cols.desired.is_some() {
                    for v in &p.selectivity {
                        opt(&mut o, *v);
                    }
                }
                for v in &p.outlet {
                    num(&mut o, *v);
                }
                if cols.heat {
                    let (out, hot) = p.temperatures.unwrap_or((f64::NAN, f64::NAN));
                    num(&mut o, out);
                    num(&mut o, hot);
                }
                // the empty error column
                o.push(',');
            }
            Err(e) => {
                o.push_str(",failed");
                let blanks = 1
                    + cols.products.len()
                    + if cols.desired.is_some() {
                        cols.others.len()
                    } else {
                        0
                    }
                    + cols.species.len()
                    + if cols.heat { 2 } else { 0 };
                for _ in 0..blanks {
                    o.push(',');
                }
                o.push(',');
                o.push_str(&csv_field(e));
            }
        }
        o.push('\n');
    }
    o
}

/// The last line of a CSV in which some points failed, a comment that CSV readers skip with a
/// comment character of `#` (e.g. pandas `comment="#"`); the `status` column carries the same
/// per row. Absent when no point failed, so a clean sweep is plain CSV.
pub fn csv_failed_trailer(failed: usize, points: usize) -> String {
    format!("# failed: {failed} of {points} points\n")
}
