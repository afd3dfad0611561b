//! `rxnet compare`: studies and reactor types side by side, ranked by a target.

use super::input::{check_tolerance, read_study, solve_opts};
use super::output::{EXIT_FINDINGS, EXIT_INVALID, emit, json};
use rxnet::report::num;
use rxnet::studies::compare::{self, Kind};
use rxnet::studies::target::Target;
use std::fmt::Write;
use std::path::PathBuf;

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
    emit(
        &text,
        if rows.iter().all(|r| r.error.is_some()) {
            EXIT_FINDINGS
        } else {
            0
        },
    )
}
