//! The report of `rxnet fit`: text for people (values in the study's own units) and JSON for
//! programs (SI; θ, covariance and correlation on each parameter's scale).

use super::num;
use crate::fit::FitReport;
use crate::fit::discriminate::Discrimination;
use std::fmt::Write;

/// The JSON of several candidates with their ranking and nested tests.
#[derive(serde::Serialize)]
pub struct CandidatesJson<'a> {
    pub candidates: Vec<&'a FitReport>,
    pub ranking: &'a [crate::fit::discriminate::Ranked],
    pub f_tests: &'a [crate::fit::discriminate::NestedTest],
}

/// A standard error and interval in the study's unit: (se, lo, hi).
fn in_file_units(e: &crate::fit::EstimateReport) -> (Option<f64>, Option<[f64; 2]>) {
    // The study's unit over SI: file value / SI value (1 for a bare number; for degC the
    // interval converts point by point below, the SE by the factor alone).
    let unit = (!e.file_unit.is_empty())
        .then(|| crate::units::parse_unit(&e.file_unit).ok())
        .flatten();
    let to_file = |si: f64| unit.map_or(si, |u| (si - u.offset) / u.factor);
    let factor = unit.map_or(1.0, |u| u.factor);
    let se = e.se_theta.map(|s| {
        if e.scale == "log" {
            // δp ≈ p δ(ln p) (first order).
            e.file_value.abs() * s
        } else {
            s / factor
        }
    });
    let ci = e.ci95.map(|[a, b]| [to_file(a), to_file(b)]);
    (se, ci)
}

/// One candidate as text.
pub fn fit_text(r: &FitReport) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "Fit of {} to {}", r.study, r.data);
    let _ = writeln!(
        s,
        "  {} measurements, {} parameter{}, {} degrees of freedom; {}; {} iterations, {}",
        r.observations,
        r.parameters,
        if r.parameters == 1 { "" } else { "s" },
        r.dof,
        r.starts_rule,
        r.iterations,
        if r.converged {
            "converged"
        } else {
            "NOT converged"
        }
    );
    let _ = writeln!(
        s,
        "  SSR = {}   s² = {}   AIC = {}   BIC = {}",
        num(r.ssr),
        num(r.s2),
        r.aic.map_or("-".into(), num),
        r.bic.map_or("-".into(), num)
    );
    if let Some(t) = r.t_fit {
        let _ = writeln!(
            s,
            "  rate constants at T_fit = {} K (the reference temperature of every reaction whose k or Ea is estimated)",
            num(t)
        );
    }
    let _ = writeln!(
        s,
        "\nEstimates (units as in the study; 95 % intervals from the t distribution)"
    );
    let w = r
        .estimates
        .iter()
        .map(|e| e.path.chars().count())
        .max()
        .unwrap_or(4)
        .max(9);
    let _ = writeln!(
        s,
        "  {:w$}  {:>13}  {:>11}  {:>27}  unit",
        "parameter", "value", "std. error", "95 % interval"
    );
    for e in &r.estimates {
        let (se, ci) = in_file_units(e);
        let ci = match ci {
            Some([a, b]) => format!("{} .. {}", num(a), num(b)),
            None if !e.identifiable => "not identifiable".into(),
            None => "-".into(),
        };
        let _ = writeln!(
            s,
            "  {:w$}  {:>13}  {:>11}  {:>27}  {}{}{}",
            e.path,
            num(e.file_value),
            se.map_or("-".into(), num),
            ci,
            e.file_unit,
            if e.scale == "log" {
                "  (log scale)"
            } else {
                ""
            },
            if e.at_bound { "  AT BOUND" } else { "" }
        );
    }
    if r.estimates.len() > 1 {
        let _ = writeln!(s, "\nCorrelation (θ)");
        for (k, row) in r.correlation.iter().enumerate() {
            let cells: Vec<String> = row
                .iter()
                .map(|c| c.map_or("     -".into(), |v| format!("{v:>6.3}")))
                .collect();
            let _ = writeln!(s, "  {:w$}  {}", r.estimates[k].path, cells.join(" "));
        }
    }
    for u in &r.unidentifiable {
        let _ = writeln!(
            s,
            "\nNot identifiable: {} (eigenvalue ratio {:.1e})",
            u.combination
                .iter()
                .map(|t| format!("{:+.3}·{}", t.weight, t.path))
                .collect::<Vec<_>>()
                .join(" "),
            u.eigenvalue_ratio
        );
    }
    let _ = writeln!(s, "\nWeighted residuals (model − measured)/σ");
    for sp in &r.residuals.by_species {
        let _ = writeln!(
            s,
            "  species {:12} n = {:4}  rms = {:>9}  mean = {:>10}",
            sp.species,
            sp.n,
            num(sp.rms),
            num(sp.mean)
        );
    }
    for run in &r.residuals.by_run {
        let _ = writeln!(
            s,
            "  run     {:12} n = {:4}  rms = {:>9}",
            run.run,
            run.n,
            num(run.rms)
        );
    }
    if let Some(l) = &r.lack_of_fit {
        let _ = writeln!(
            s,
            "\nLack of fit (replicates): SS_PE = {} on {} df, SS_LF = {} on {} df, F = {}, p = {}",
            num(l.ss_pure_error),
            l.df_pure_error,
            num(l.ss_lack_of_fit),
            l.df_lack_of_fit,
            l.f.map_or("-".into(), num),
            l.p.map_or("-".into(), num)
        );
    }
    for wn in &r.warnings {
        let _ = writeln!(s, "warning: {wn}");
    }
    s
}

/// Several candidates: each one's report, then the ranking and the nested tests.
pub fn discrimination_text(fits: &[&FitReport], d: &Discrimination) -> String {
    let mut s = String::new();
    for r in fits {
        s.push_str(&fit_text(r));
        s.push('\n');
    }
    let _ = writeln!(
        s,
        "Ranking by AIC (Akaike weights: the relative support of the data)"
    );
    let w = d
        .ranking
        .iter()
        .map(|r| r.study.chars().count())
        .max()
        .unwrap_or(5)
        .max(5);
    let _ = writeln!(
        s,
        "  {:w$}  {:>12}  {:>10}  {:>8}  {:>12}",
        "study", "AIC", "ΔAIC", "weight", "BIC"
    );
    for r in &d.ranking {
        let _ = writeln!(
            s,
            "  {:w$}  {:>12}  {:>10}  {:>8.4}  {:>12}",
            r.study,
            num(r.aic),
            num(r.delta_aic),
            r.weight,
            r.bic.map_or("-".into(), num)
        );
    }
    if !d.f_tests.is_empty() {
        let _ = writeln!(
            s,
            "\nNested F-tests (does the fuller network fit significantly better?)"
        );
        for t in &d.f_tests {
            let _ = writeln!(
                s,
                "  {} within {}: F = {} on ({}, {}) df, p = {}",
                t.simpler,
                t.fuller,
                num(t.f),
                t.df1,
                t.df2,
                num(t.p)
            );
        }
    }
    s
}
