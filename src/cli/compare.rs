//! `rxnet compare`: studies and reactor types side by side, ranked by a target.

use super::input::{check_tolerance, read_study, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json, push_caution};
use rxnet::Override;
use rxnet::report::num;
use rxnet::studies::compare::{self, Kind};
use rxnet::studies::target::Target;
use std::fmt::Write;
use std::path::PathBuf;

/// Split `s` into lines of at most `width` characters at spaces (a longer word stays whole).
fn wrap(s: &str, width: usize) -> Vec<String> {
    let mut lines = vec![String::new()];
    for w in s.split_whitespace() {
        let cur = lines.last_mut().expect("one line");
        if !cur.is_empty() && cur.chars().count() + 1 + w.chars().count() > width {
            lines.push(w.to_string());
        } else {
            if !cur.is_empty() {
                cur.push(' ');
            }
            cur.push_str(w);
        }
    }
    lines
}

/// `rxnet compare FILE... [--reactors pfr,cstr,batch] [--rank-by TARGET] [--set PATH=VALUE]`;
/// each `--set` applies to every study, as if its file said so.
#[allow(clippy::too_many_arguments)]
pub fn compare(
    files: &[PathBuf],
    set: &[Override],
    reactors: &[String],
    heat: &[String],
    rank_by: Option<&str>,
    at_conversion: Option<f64>,
    optimum: Option<&str>,
    min_conversion: Option<f64>,
    as_json: bool,
    rtol: Option<f64>,
    steady_state: Option<rxnet::solve::SteadyStateChoice>,
) -> i32 {
    if let Err(m) = check_tolerance("rtol", rtol) {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    if let Some(x) = at_conversion
        && !(x > 0.0 && x < 1.0)
    {
        eprintln!("error: --at-conversion must lie in (0, 1), got {x}");
        return EXIT_INVALID;
    }
    if let Some(x) = min_conversion
        && !(0.0..1.0).contains(&x)
    {
        eprintln!("error: --min-conversion must lie in [0, 1), got {x}");
        return EXIT_INVALID;
    }
    if min_conversion.is_some() && optimum.is_none() {
        eprintln!("error: --min-conversion applies to --optimum; give --optimum TARGET too");
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
    let mut heats = Vec::new();
    for h in heat {
        match compare::HeatChoice::parse(h) {
            Ok(c) => heats.push(c),
            Err(m) => {
                eprintln!("error: --heat: {m}");
                return EXIT_INVALID;
            }
        }
    }
    if heats.is_empty() {
        heats.push(compare::HeatChoice::AsGiven);
    }
    let opts = rxnet::solve::SolveOptions {
        steady_state,
        ..solve_opts(rtol)
    };
    let mut rows = Vec::new();
    for f in files {
        let (_, net, _) = match read_study(f, set) {
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
        let screen = compare::Screen {
            rank_by: &rank,
            at_conversion,
            optimum,
            min_conversion,
        };
        // A study whose contacting pattern is its own (a train with joins, side feeds, a
        // membrane, dosing, a recycle) is screened as itself beside the reactor types.
        let own = [None];
        let kinds_here: &[Option<Kind>] = if compare::fixed_pattern(&net) {
            &own
        } else {
            &kinds
        };
        for h in &heats {
            let net = h.apply(&net);
            for k in kinds_here {
                rows.push(compare::evaluate(
                    &f.display().to_string(),
                    &net,
                    *k,
                    &screen,
                    &opts,
                ));
            }
        }
    }
    compare::rank(&mut rows);
    let text = if as_json {
        json(&rows)
    } else {
        let mut t = table(&rows, optimum, at_conversion.is_some());
        push_caution(
            &mut t,
            rxnet::safety::strongest(rows.iter().map(|r| r.caution)),
        );
        t
    };
    let code = emit(
        &text,
        if rows.iter().all(|r| r.error.is_some()) || rows.iter().any(|r| r.optimum_note.is_some()) {
            EXIT_FINDINGS
        } else {
            0
        },
    );
    for r in &rows {
        if let Some(n) = &r.optimum_note {
            eprintln!("note: {} ({}): no optimum size: {n}", r.study, r.reactor);
        }
    }
    code
}

/// The text table: one unit per column (space time τ = V/v0 or batch time t in s; catalyst
/// mass W in kg for a packed bed), no column twice, full study names wrapped in the last column.
fn table(rows: &[compare::CompareRow], optimum: Option<&str>, resized: bool) -> String {
    let f = |v: Option<f64>| v.map(num).unwrap_or_else(|| "—".into());
    let any_pbr = rows.iter().any(|r| r.size_variable == "W");
    let any_time = rows.iter().any(|r| r.size_variable != "W");
    let any_sel = rows.iter().any(|r| r.selectivity_over_all.is_some());
    let desired: Vec<&str> = {
        let mut d: Vec<&str> = rows.iter().filter_map(|r| r.desired.as_deref()).collect();
        d.sort();
        d.dedup();
        d
    };
    let d_name = if desired.len() == 1 { desired[0] } else { "D" };
    // The ranking column is left out where it repeats the yield or the selectivity column.
    let rank_dup = |r: &compare::CompareRow| {
        r.desired.as_ref().is_some_and(|d| {
            r.rank_by == format!("yield:{d}") || r.rank_by == format!("selectivity:{d}/all")
        })
    };
    let show_rank = !rows.iter().all(rank_dup);
    let mut ranks: Vec<&str> = rows.iter().map(|r| r.rank_by.as_str()).collect();
    ranks.sort();
    ranks.dedup();
    let rank_head = if ranks.len() == 1 {
        ranks[0].to_string()
    } else {
        "rank value".into()
    };
    let amount_rank = rows
        .iter()
        .any(|r| !r.rank_by.contains(':') && r.rank_by != "conversion");
    let mut cols: Vec<(String, Vec<String>)> = vec![
        (
            "rank".into(),
            (1..=rows.len()).map(|i| i.to_string()).collect(),
        ),
        (
            "type".into(),
            rows.iter().map(|r| r.reactor.clone()).collect(),
        ),
    ];
    if rows.iter().any(|r| r.heat != "isothermal") {
        cols.push(("heat".into(), rows.iter().map(|r| r.heat.into()).collect()));
    }
    if any_time {
        cols.push((
            "τ or t [s]".into(),
            rows.iter().map(|r| f(r.space_time_s)).collect(),
        ));
    }
    if any_pbr {
        cols.push((
            "W [kg]".into(),
            rows.iter()
                .map(|r| f((r.size_variable == "W").then_some(r.size).flatten()))
                .collect(),
        ));
    }
    cols.push(("X".into(), rows.iter().map(|r| f(r.conversion)).collect()));
    if !desired.is_empty() {
        cols.push((
            format!("yield:{d_name}"),
            rows.iter().map(|r| f(r.yield_desired)).collect(),
        ));
    }
    if any_sel {
        cols.push((
            format!("selectivity:{d_name}/all"),
            rows.iter().map(|r| f(r.selectivity_over_all)).collect(),
        ));
    }
    if rows.iter().any(|r| r.hot_spot.is_some()) {
        cols.push((
            "T_hot [K]".into(),
            rows.iter()
                .map(|r| {
                    let t = f(r.hot_spot);
                    if r.over_limit {
                        format!("{t} > T_max")
                    } else {
                        t
                    }
                })
                .collect(),
        ));
    }
    if show_rank {
        cols.push((
            if amount_rank {
                format!("{rank_head} [per key fed]")
            } else {
                rank_head
            },
            rows.iter().map(|r| f(r.rank_value)).collect(),
        ));
    }
    if let Some(t) = optimum {
        let units: Vec<&str> = {
            let mut u: Vec<&str> = rows.iter().filter_map(|r| r.optimum_unit).collect();
            u.sort();
            u.dedup();
            u
        };
        if any_time {
            cols.push((
                "optimum τ or t [s]".into(),
                rows.iter().map(|r| f(r.optimum_space_time_s)).collect(),
            ));
        }
        if any_pbr {
            cols.push((
                "optimum W [kg]".into(),
                rows.iter()
                    .map(|r| f((r.size_variable == "W").then_some(r.optimum_size).flatten()))
                    .collect(),
            ));
        }
        // One unit per column: amounts of flow (mol/s) and batch (mol) entries apart.
        for u in units {
            let head = if u == "1" {
                format!("optimum {t}")
            } else {
                format!("optimum {t} [{u}]")
            };
            cols.push((
                head,
                rows.iter()
                    .map(|r| {
                        if r.optimum_unit == Some(u) {
                            f(r.optimum_value)
                        } else {
                            "".into()
                        }
                    })
                    .collect(),
            ));
        }
    }
    let widths: Vec<usize> = cols
        .iter()
        .map(|(h, v)| {
            v.iter()
                .map(|s| s.chars().count())
                .chain([h.chars().count()])
                .max()
                .unwrap_or(0)
        })
        .collect();
    let mut o = String::new();
    let pad = |s: &str, w: usize, left: bool| {
        let n = w.saturating_sub(s.chars().count());
        if left {
            format!("{s}{}", " ".repeat(n))
        } else {
            format!("{}{s}", " ".repeat(n))
        }
    };
    let mut head = String::new();
    for (i, (h, _)) in cols.iter().enumerate() {
        head.push_str(&pad(h, widths[i], i < 2));
        head.push_str("  ");
    }
    let indent = head.chars().count();
    let _ = writeln!(o, "{head}study");
    for (k, r) in rows.iter().enumerate() {
        let mut line = String::new();
        for (i, (_, v)) in cols.iter().enumerate() {
            line.push_str(&pad(&v[k], widths[i], i < 2));
            line.push_str("  ");
        }
        let name = wrap(&format!("{} ({})", r.study, r.file), 48);
        let _ = writeln!(o, "{line}{}", name[0]);
        for more in &name[1..] {
            let _ = writeln!(o, "{}{more}", " ".repeat(indent));
        }
        if let Some(e) = &r.error {
            let _ = writeln!(o, "{}failed: {e}", " ".repeat(indent));
        }
        if let Some(n) = &r.optimum_note {
            let _ = writeln!(o, "{}no optimum size: {n}", " ".repeat(indent));
        }
    }
    let _ = writeln!(
        o,
        "\nτ = V/v0 for a PFR or CSTR, t for a batch. yield: of the desired product on the key reactant consumed; selectivity:{d_name}/all: {d_name} formed over all other products formed together (molar); `run` gives {d_name} over each product, the target selectivity:{d_name}/U."
    );
    if amount_rank {
        let _ = writeln!(
            o,
            "an amount is ranked per amount of key reactant fed (F/F_A0 or N/N_A0), so flow and batch entries compare."
        );
    }
    if resized {
        let _ = writeln!(o, "every entry was resized to the same conversion first.");
    }
    o
}
