//! Fitting a study to measured data (`rxnet fit`): weighted nonlinear least squares on the
//! reactor model, with the Jacobian from forward sensitivities.
//!
//! [`setup`] reads the study's `fit:` section, the data ([`data`]) and the runs table
//! ([`runs`]); [`residuals`] evaluates the model at the samples with its sensitivities;
//! [`lm`] minimises (bounded Levenberg–Marquardt, multistart); [`statistics`] says how well
//! each parameter is determined; [`discriminate`] ranks candidate studies. [`fit`] runs one
//! candidate end to end.

pub mod data;
pub mod discriminate;
pub mod lm;
pub mod residuals;
pub mod runs;
pub mod setup;
pub mod statistics;
pub mod write;

use crate::solve::SolveOptions;
use crate::studies::parameters::Scale;
use lm::{LmOptions, LmResult, MultistartOptions, MultistartResult};
use residuals::FitProblem;
use serde::Serialize;
use setup::{FitError, FitSetup};
use statistics::Statistics;

/// Seed of the multistart's start points (fixed: the same fit gives the same starts).
pub const MULTISTART_SEED: u64 = 15;

/// s² above this with a stated measurement error is reported as a poor fit: the residuals
/// are then about twice the stated σ or more (a rule of thumb, common practice).
pub const POOR_FIT_S2: f64 = 4.0;

/// A fitted candidate: the setup, the optimiser's runs, the statistics and the report record.
#[derive(Debug, Clone)]
pub struct Fitted {
    pub setup: FitSetup,
    pub multistart: MultistartResult,
    pub stats: Statistics,
    pub report: FitReport,
    /// The model at each observation at the optimum (data units), in observation order, and
    /// the observations' (run, species, measured).
    pub parity: Vec<ParityPoint>,
}

/// One observation against the fitted model (data units).
#[derive(Debug, Clone)]
pub struct ParityPoint {
    pub run: String,
    pub species: String,
    pub x: f64,
    pub measured: f64,
    pub model: f64,
}

/// One estimated parameter, as reported (SI).
#[derive(Debug, Clone, Serialize)]
pub struct EstimateReport {
    pub path: String,
    pub scale: &'static str,
    pub theta: f64,
    /// SI value.
    pub value: f64,
    /// SI unit text.
    pub unit: String,
    pub se_theta: Option<f64>,
    /// 95 % interval in SI value space (exp of the θ interval for a log parameter).
    pub ci95: Option<[f64; 2]>,
    pub identifiable: bool,
    pub at_bound: bool,
    /// The value in the study's own unit (for the text report and `--write`).
    #[serde(skip)]
    pub file_value: f64,
    #[serde(skip)]
    pub file_unit: String,
}

/// One parameter of an undetermined combination.
#[derive(Debug, Clone, Serialize)]
pub struct CombinationTerm {
    pub path: String,
    pub weight: f64,
}

/// A combination of parameters the data do not determine.
#[derive(Debug, Clone, Serialize)]
pub struct Unidentifiable {
    pub combination: Vec<CombinationTerm>,
    pub eigenvalue_ratio: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct SpeciesResiduals {
    pub species: String,
    pub n: usize,
    pub rms: f64,
    pub mean: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct RunResiduals {
    pub run: String,
    pub n: usize,
    pub rms: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct ResidualSummary {
    pub by_species: Vec<SpeciesResiduals>,
    pub by_run: Vec<RunResiduals>,
}

/// The lack-of-fit test as reported.
#[derive(Debug, Clone, Serialize)]
pub struct LackOfFitReport {
    pub ss_pure_error: f64,
    pub df_pure_error: usize,
    pub ss_lack_of_fit: f64,
    pub df_lack_of_fit: usize,
    #[serde(rename = "F")]
    pub f: Option<f64>,
    pub p: Option<f64>,
}

/// One candidate's result: the JSON of `rxnet fit` (SI; covariance and correlation in θ).
#[derive(Debug, Clone, Serialize)]
pub struct FitReport {
    pub study: String,
    pub data: String,
    pub observations: usize,
    pub parameters: usize,
    pub dof: usize,
    pub converged: bool,
    pub iterations: usize,
    pub starts: usize,
    /// Why that many starts: as asked, or the first fit judged poor (and why) or good.
    pub starts_rule: String,
    pub ssr: f64,
    pub s2: f64,
    pub aic: Option<f64>,
    pub bic: Option<f64>,
    #[serde(rename = "T_fit")]
    pub t_fit: Option<f64>,
    pub estimates: Vec<EstimateReport>,
    pub covariance: Vec<Vec<Option<f64>>>,
    pub correlation: Vec<Vec<Option<f64>>>,
    pub unidentifiable: Vec<Unidentifiable>,
    pub residuals: ResidualSummary,
    pub lack_of_fit: Option<LackOfFitReport>,
    pub warnings: Vec<String>,
}

/// The SI unit of a parameter's value, by its usual name where it has one.
pub fn si_unit(file_unit: &str) -> String {
    use crate::units::Dim;
    if file_unit.is_empty() {
        return String::new();
    }
    let Ok(u) = crate::units::parse_unit(file_unit) else {
        return file_unit.to_string();
    };
    let d = u.dim;
    if d.approx_eq(Dim::NONE) {
        String::new()
    } else if d.approx_eq(Dim::energy().div(Dim::AMOUNT)) {
        "J/mol".into()
    } else if d.approx_eq(Dim::TEMPERATURE) {
        "K".into()
    } else if d.approx_eq(Dim::pressure()) {
        "Pa".into()
    } else if d.approx_eq(Dim::TIME.powf(-1.0)) {
        "1/s".into()
    } else {
        d.to_string()
    }
}

/// Why a first fit (from the study's values) may have ended on a poor minimum, so that the
/// multistart is worth its cost; `None` when it is judged good: converged, no parameter on a
/// bound, and, with an error model given, s² = SSR/dof no more than three standard deviations
/// of χ²_dof/dof above 1, i.e. s² ≤ 1 + 3 √(2/dof) (the residuals as large as the stated
/// errors; the normal approximation of χ²/dof, common practice). Without an error model
/// (σ = 1 in the data's unit) there is no scale to judge s² by, so the multistart is made.
pub fn first_fit_is_poor(first: &LmResult, weighted: bool, dof: usize) -> Option<String> {
    if !first.converged {
        return Some("did not converge".into());
    }
    if first.at_bound.iter().any(|b| *b) {
        return Some("ended with a parameter on a bound".into());
    }
    if !weighted {
        return Some("has no error model to judge its residuals by".into());
    }
    let s2 = first.ssr / dof.max(1) as f64;
    let limit = 1.0 + 3.0 * (2.0 / dof.max(1) as f64).sqrt();
    (s2 > limit).then(|| {
        format!("left s² = {s2:.3}, above {limit:.3}, larger residuals than the stated errors")
    })
}

/// Fit one candidate: Levenberg–Marquardt from the study's values, a multistart when that first
/// fit ends poorly ([`first_fit_is_poor`]) or when starts are asked for, then the statistics at
/// the best minimum and the warnings.
pub fn fit(setup: FitSetup, solve: &SolveOptions) -> Result<Fitted, FitError> {
    let mut problem = FitProblem::new(&setup, solve.clone()).map_err(FitError::Invalid)?;
    let theta0: Vec<f64> = setup.params.iter().map(|p| p.theta()).collect();
    let log: Vec<bool> = setup.params.iter().map(|p| p.scale == Scale::Log).collect();
    let failed_at_start = |e: String| {
        if e.contains("error findings") {
            FitError::Findings(format!("{}: {e}", setup.file))
        } else {
            FitError::Failed(format!(
                "{}: the model cannot be evaluated at the study's values: {e}",
                setup.file
            ))
        }
    };
    let first =
        lm::levenberg_marquardt(&mut problem, &theta0, &setup.bounds, &LmOptions::default())
            .map_err(failed_at_start)?;
    let dof = problem.observations.len().saturating_sub(theta0.len());
    let poor = first_fit_is_poor(&first, setup.weighted, dof);
    let m = MultistartOptions {
        starts: if setup.starts_given || poor.is_some() {
            setup.starts
        } else {
            1
        },
        half_width: lm::default_half_widths(&theta0, &log, &setup.bounds),
        seed: MULTISTART_SEED,
    };
    let start_rule = if setup.starts_given {
        format!("{} start(s) as asked", setup.starts)
    } else if let Some(why) = &poor {
        format!("{} starts: the first fit {why}", setup.starts)
    } else {
        "one start: the first fit converged, inside the bounds, with s² within the stated errors (--starts N for a multistart)".to_string()
    };
    let ms = lm::multistart_after(
        &mut problem,
        first,
        &theta0,
        &setup.bounds,
        &LmOptions::default(),
        &m,
    )
    .map_err(failed_at_start)?;
    // Starts that end at the same minimum (SSR within 1e-6 relative, as the multistart counts
    // distinct minima) are one answer: the earliest is kept, so the study's own start wins
    // over a point further along a valley of equal SSR (an undetermined combination, where
    // the lowest SSR is only the integration's noise).
    let mut ms = ms;
    let best_ssr = ms.best().ssr;
    if let Some(k) = ms.starts.iter().position(|s| {
        s.outcome
            .as_ref()
            .is_ok_and(|r| r.converged && (r.ssr - best_ssr).abs() <= 1e-6 * best_ssr.abs() + 1e-14)
    }) {
        ms.best = k;
    }
    let best = ms.best().clone();
    // Replicates: the same run, species and x.
    let groups: Vec<usize> = {
        let mut keys: Vec<(usize, usize, u64)> = Vec::new();
        problem
            .observations
            .iter()
            .map(|o| {
                let key = (o.run, o.column, setup.data.samples[o.sample].x.to_bits());
                match keys.iter().position(|k| *k == key) {
                    Some(g) => g,
                    None => {
                        keys.push(key);
                        keys.len() - 1
                    }
                }
            })
            .collect()
    };
    let stats = statistics::statistics(&best, Some(&groups))
        .map_err(|e| FitError::Failed(format!("{}: {e}", setup.file)))?;
    let model = problem
        .model(&best.theta, false)
        .map_err(|e| FitError::Failed(format!("{}: {e}", setup.file)))?;
    let parity: Vec<ParityPoint> = problem
        .observations
        .iter()
        .zip(&model)
        .map(|(o, (m, _))| ParityPoint {
            run: setup.runs[o.run].id.clone(),
            species: setup.data.columns[o.column].species.clone(),
            x: setup.data.samples[o.sample].x,
            measured: o.measured,
            model: *m,
        })
        .collect();

    // --- the estimates
    let estimates: Vec<EstimateReport> = setup
        .params
        .iter()
        .enumerate()
        .map(|(k, p)| {
            let th = best.theta[k];
            let value = p.si_at(th);
            let ci95 = stats.ci95[k].map(|[a, b]| [p.si_at(a), p.si_at(b)]);
            EstimateReport {
                path: p.path.clone(),
                scale: p.scale.name(),
                theta: th,
                value,
                unit: si_unit(&p.unit),
                se_theta: stats.se[k],
                ci95,
                identifiable: stats.identifiable[k],
                at_bound: best.at_bound[k],
                file_value: p.in_unit(value),
                file_unit: p.unit.clone(),
            }
        })
        .collect();
    let unidentifiable: Vec<Unidentifiable> = stats
        .unidentifiable
        .iter()
        .map(|c| Unidentifiable {
            combination: c
                .weights
                .iter()
                .map(|&(j, w)| CombinationTerm {
                    path: setup.params[j].path.clone(),
                    weight: w,
                })
                .collect(),
            eigenvalue_ratio: c.eigenvalue_ratio,
        })
        .collect();

    // --- residual summaries (weighted residuals r)
    let r = &best.residuals;
    let by_species = setup
        .data
        .columns
        .iter()
        .enumerate()
        .map(|(c, col)| {
            let v: Vec<f64> = problem
                .observations
                .iter()
                .zip(r)
                .filter(|(o, _)| o.column == c)
                .map(|(_, r)| *r)
                .collect();
            SpeciesResiduals {
                species: col.species.clone(),
                n: v.len(),
                rms: rms(&v),
                mean: mean(&v),
            }
        })
        .collect();
    let by_run = setup
        .runs
        .iter()
        .enumerate()
        .map(|(k, run)| {
            let v: Vec<f64> = problem
                .observations
                .iter()
                .zip(r)
                .filter(|(o, _)| o.run == k)
                .map(|(_, r)| *r)
                .collect();
            RunResiduals {
                run: run.id.clone(),
                n: v.len(),
                rms: rms(&v),
            }
        })
        .collect();

    // --- warnings
    let mut warnings = setup.warnings.clone();
    if !best.converged {
        warnings.push(format!(
            "the optimiser did not converge: {}; the estimates are the best point found",
            best.reason
        ));
    }
    for e in &estimates {
        if e.at_bound {
            warnings.push(format!(
                "`{}` ended on a bound ({} {}): the data push it past the range given; its interval assumes it free",
                e.path, e.file_value, e.file_unit
            ));
        }
    }
    for u in &unidentifiable {
        warnings.push(format!(
            "not identifiable from these data: the combination {} (eigenvalue ratio {:.1e}); its parameters get no standard error",
            u.combination
                .iter()
                .map(|t| format!("{:+.2}·{}", t.weight, t.path))
                .collect::<Vec<_>>()
                .join(" "),
            u.eigenvalue_ratio
        ));
    }
    if setup.weighted && stats.s2 > POOR_FIT_S2 {
        warnings.push(format!(
            "poor fit: s² = {:.3} with the stated measurement errors (about 1 expected): the model misses the data by more than their error",
            stats.s2
        ));
    }
    if let Some(l) = &stats.lack_of_fit
        && let Some(p) = l.p
        && p < 0.05
    {
        warnings.push(format!(
            "lack of fit: the model misses the data by more than the replicates scatter (F = {:.3}, p = {:.2e})",
            l.f.unwrap_or(f64::NAN),
            p
        ));
    }
    if ms.best != 0 {
        warnings.push(format!(
            "start {} of {} found a lower minimum than the study's values",
            ms.best + 1,
            ms.starts.len()
        ));
    }
    if ms.distinct_minima > 1 {
        warnings.push(format!(
            "the starts ended in {} distinct minima; the lowest is reported",
            ms.distinct_minima
        ));
    }
    let report = FitReport {
        study: setup.file.clone(),
        data: setup.data.file.clone(),
        observations: stats.observations,
        parameters: stats.parameters,
        dof: stats.dof,
        converged: best.converged,
        iterations: best.iterations,
        starts: ms.starts.len(),
        starts_rule: start_rule,
        ssr: stats.ssr,
        s2: stats.s2,
        aic: stats.aic,
        bic: stats.bic,
        t_fit: setup.t_fit,
        estimates,
        covariance: stats.covariance.clone(),
        correlation: stats.correlation.clone(),
        unidentifiable,
        residuals: ResidualSummary { by_species, by_run },
        lack_of_fit: stats.lack_of_fit.as_ref().map(|l| LackOfFitReport {
            ss_pure_error: l.ss_pure_error,
            df_pure_error: l.df_pure_error,
            ss_lack_of_fit: l.ss_lack_of_fit,
            df_lack_of_fit: l.df_lack_of_fit,
            f: l.f,
            p: l.p,
        }),
        warnings,
    };
    drop(problem);
    Ok(Fitted {
        setup,
        multistart: ms,
        stats,
        report,
        parity,
    })
}

fn rms(v: &[f64]) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt()
}

fn mean(v: &[f64]) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    v.iter().sum::<f64>() / v.len() as f64
}
