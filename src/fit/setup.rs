//! From a study file and the command line to a fit problem: the estimated parameters (read at
//! their `--set` paths, scale by the default rule or as asked, bounds converted to θ), the
//! measurement error of every observation, the data and each run's overrides, and the
//! reparameterised Arrhenius form of every estimated rate constant.
//!
//! Reparameterisation (common practice): k(T) = k(T_ref) exp(−Ea/R (1/T − 1/T_ref)) with T_ref
//! far from the data makes k and Ea almost perfectly correlated. Every reaction whose k or Ea
//! is estimated therefore gets T_ref = T_fit = 1/mean(1/T_run) over the runs (rounded to
//! 0.1 K) and k = k(T_fit) before fitting; an equilibrium or adsorption constant with a heat
//! (dH) moves to T_fit by van't Hoff in the same way, so the model is unchanged.

use super::data::{Data, DataError, Measure, read_csv_text};
use super::lm::Bounds;
use super::runs::RunsTable;
use crate::model::{EstimateSpec, FitBound, FitSection, LoadError, Network, Override};
use crate::studies::parameters::{self, Parameter, Scale};
use crate::studies::study::Study;
use crate::units::{Dim, parse_unit};
use std::path::{Path, PathBuf};

/// Why a fit cannot be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    /// Bad input: the study, the fit section, the data, the runs or the command line (exit 2).
    #[error("{0}")]
    Invalid(String),
    /// A computation failed: the model at the start point, the optimiser (exit 1).
    #[error("{0}")]
    Failed(String),
    /// The study has error findings at a run's conditions (exit 1, as every command).
    #[error("{0}")]
    Findings(String),
}

impl From<DataError> for FitError {
    fn from(e: DataError) -> Self {
        FitError::Invalid(e.to_string())
    }
}

impl From<LoadError> for FitError {
    fn from(e: LoadError) -> Self {
        FitError::Invalid(e.to_string())
    }
}

/// What the command line adds to (or puts in place of) the study's `fit:` section.
#[derive(Debug, Clone, Default)]
pub struct FitRequest {
    /// The study file.
    pub study: PathBuf,
    /// `--set` overrides for every run.
    pub set: Vec<Override>,
    pub data: Option<PathBuf>,
    pub runs: Option<PathBuf>,
    /// `--estimate PATH[=LO..HI]`: in place of the section's list when given.
    pub estimate: Vec<String>,
    pub starts: Option<usize>,
}

/// One run of the data: its id, its overrides, and its feed temperature.
#[derive(Debug, Clone)]
pub struct Run {
    pub id: String,
    pub overrides: Vec<Override>,
    /// Feed temperature of the run as loaded (K).
    pub temperature: f64,
    /// The run's network at the study's values (to place the samples: v0 for τ).
    pub network: Network,
}

/// The measurement error of one data column: σ = sqrt(absolute² + (relative·|measured|)²),
/// absolute in the column's unit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ColumnError {
    pub absolute: f64,
    pub relative: f64,
}

impl ColumnError {
    pub fn sigma(&self, measured: f64) -> f64 {
        (self.absolute.powi(2) + (self.relative * measured.abs()).powi(2)).sqrt()
    }
}

/// Everything a fit needs.
#[derive(Debug, Clone)]
pub struct FitSetup {
    /// The study's file name as shown.
    pub file: String,
    /// The study's path (for `--write`).
    pub path: PathBuf,
    /// The study with the command line's overrides and the reparameterisation.
    pub study: Study,
    /// The reparameterisation's overrides alone (T_ref and the moved constants), for `--write`.
    pub reparameterisation: Vec<Override>,
    pub params: Vec<Parameter>,
    pub bounds: Bounds,
    pub data: Data,
    pub runs: Vec<Run>,
    pub errors: Vec<ColumnError>,
    /// Whether the study gave an error model (else σ = 1 in the data's unit).
    pub weighted: bool,
    /// T_fit (K), when a rate constant or activation energy is estimated.
    pub t_fit: Option<f64>,
    /// The reactions given T_ref = T_fit.
    pub reparameterised: Vec<String>,
    /// Starts of the multistart (the study's `starts`, `--starts`, else [`DEFAULT_STARTS`]).
    pub starts: usize,
    /// Whether the number of starts was asked for; if not, the other starts are made only
    /// when the first fit ends poorly.
    pub starts_given: bool,
    pub warnings: Vec<String>,
}

/// Default number of starts of the multistart, made when the first fit ends poorly
/// ([`crate::fit::first_fit_is_poor`]).
pub const DEFAULT_STARTS: usize = 6;

/// A reaction addressed by a path segment (its id or its index).
fn reaction_index(net: &Network, seg: &str) -> Option<usize> {
    match seg.parse::<usize>() {
        Ok(i) if i < net.reactions.len() => Some(i),
        Ok(_) => None,
        Err(_) => net.reactions.iter().position(|r| r.id == seg),
    }
}

/// `reactions.<r>.rate.k` or `.Ea`: the reaction's index.
fn arrhenius_reaction(net: &Network, path: &str) -> Option<usize> {
    let segs: Vec<&str> = path.split('.').collect();
    match segs.as_slice() {
        ["reactions", r, "rate", "k" | "Ea"] => reaction_index(net, r),
        _ => None,
    }
}

/// The dimension of a parameter's unit (dimensionless for a bare number).
fn unit_dim(p: &Parameter) -> Dim {
    if p.unit.is_empty() {
        Dim::NONE
    } else {
        parse_unit(&p.unit).map(|u| u.dim).unwrap_or(Dim::NONE)
    }
}

/// Parse `--estimate PATH[=LO..HI]`.
fn cli_estimate(text: &str) -> Result<EstimateSpec, FitError> {
    let bad = |m: String| FitError::Invalid(format!("--estimate {text}: {m}"));
    let (path, range) = match text.split_once('=') {
        Some((p, r)) => (p.trim(), Some(r)),
        None => (text.trim(), None),
    };
    if path.is_empty() || path.split('.').any(|s| s.is_empty()) {
        return Err(bad(
            "expected PATH or PATH=LO..HI, e.g. reactions.r1.rate.Ea=0 kJ/mol..300 kJ/mol".into(),
        ));
    }
    let bound = |t: &str| -> Result<Option<FitBound>, FitError> {
        let t = t.trim();
        if t.is_empty() {
            return Ok(None);
        }
        let q = crate::units::parse_quantity(t).map_err(|e| bad(format!("`{t}`: {e}")))?;
        Ok(Some(FitBound {
            si: q.si,
            dim: q.dim,
            text: t.to_string(),
        }))
    };
    let (min, max) = match range {
        None => (None, None),
        Some(r) => {
            let (lo, hi) = r
                .split_once("..")
                .ok_or_else(|| bad("bounds are LO..HI (either may be empty)".into()))?;
            (bound(lo)?, bound(hi)?)
        }
    };
    if let (Some(lo), Some(hi)) = (&min, &max)
        && !(lo.si < hi.si)
    {
        return Err(bad(format!("`{}` is not below `{}`", lo.text, hi.text)));
    }
    Ok(EstimateSpec {
        path: path.to_string(),
        min,
        max,
        log: None,
        field: format!("--estimate {text}"),
        position: None,
    })
}

/// Where a `fit:` entry is, for messages: `file:line:column: field `fit.estimate[1]``, or the
/// command-line option.
fn located(file: &str, spec: &EstimateSpec) -> String {
    match spec.position {
        Some(p) => format!("{file}:{}:{}: field `{}`", p.line, p.column, spec.field),
        None if spec.field.starts_with("--") => spec.field.clone(),
        None => format!("{file}: field `{}`", spec.field),
    }
}

/// A bound on a parameter, in θ and in the parameter's unit.
fn bound_theta(p: &Parameter, b: &FitBound, upper: bool, at: &str) -> Result<(f64, f64), FitError> {
    let dim = unit_dim(p);
    let zero = b.si == 0.0 && b.dim.approx_eq(Dim::NONE);
    if !b.dim.approx_eq(dim) && !zero {
        return Err(FitError::Invalid(format!(
            "{at}: the bound `{}` does not have the dimensions of `{}` ({})",
            b.text,
            p.path,
            if p.unit.is_empty() {
                "dimensionless".to_string()
            } else {
                format!("unit `{}`", p.unit)
            }
        )));
    }
    let si = b.si;
    let theta = match p.scale {
        Scale::Linear => si,
        Scale::Log if si > 0.0 => si.ln(),
        Scale::Log if !upper => f64::NEG_INFINITY,
        Scale::Log => {
            return Err(FitError::Invalid(format!(
                "{at}: the upper bound of `{}` (log scale) must be positive",
                p.path
            )));
        }
    };
    Ok((theta, p.in_unit(si)))
}

/// Resolve a path given in the study relative to the study's directory.
fn beside(study: &Path, name: &str) -> PathBuf {
    let p = Path::new(name);
    if p.is_absolute() {
        return p.to_path_buf();
    }
    study
        .parent()
        .map_or_else(|| p.to_path_buf(), |d| d.join(p))
}

/// The absolute error's dimension for a measurement.
fn measure_dim(m: Measure) -> Dim {
    match m {
        Measure::Concentration => Dim::concentration(),
        Measure::Amount => Dim::AMOUNT,
        Measure::Flow => Dim::AMOUNT.div(Dim::TIME),
    }
}

/// Read and check everything a fit needs.
pub fn setup(req: &FitRequest) -> Result<FitSetup, FitError> {
    let text = crate::model::read_text(&req.study)?;
    let file = crate::model::source::display_name(&req.study);
    let base = Study::new(text, file.clone(), req.set.clone())
        .map_err(|e| FitError::Invalid(e.to_string()))?;
    let net = base
        .load(&[])
        .map_err(|e| FitError::Invalid(e.to_string()))?;
    if crate::solve::train::is_flowsheet(&net) {
        return Err(FitError::Invalid(format!(
            "{file}: fitting is for a single vessel; this study is a train (or a vessel with side feeds or a recycle)"
        )));
    }
    let section: FitSection = base.parsed.fit_section()?;
    let mut warnings = Vec::new();

    // --- data and runs
    let data_path = match (&req.data, &section.data) {
        (Some(p), _) => p.clone(),
        (None, Some(d)) => beside(&req.study, d),
        (None, None) => {
            return Err(FitError::Invalid(format!(
                "{file}: no data: give `fit: {{data: FILE.csv}}` in the study or --data FILE.csv"
            )));
        }
    };
    let data_name = data_path.display().to_string();
    let mut data = Data::parse(&read_csv_text(&data_path, &data_name)?, &data_name)?;
    data.check_against(&net)?;
    // A gas's concentration in a bed with pressure drop follows P/P0, whose sensitivity the
    // solve does not give: its derivative would be incomplete, so flows are asked for.
    if net.phase == crate::model::Phase::Gas
        && matches!(
            net.reactor,
            crate::model::Reactor::Pbr {
                pressure_drop: Some(_),
                ..
            }
        )
        && let Some(c) = data
            .columns
            .iter()
            .find(|c| c.measure == Measure::Concentration)
    {
        return Err(FitError::Invalid(format!(
            "{}:{}:{}: concentrations of a gas in a packed bed with pressure drop cannot be fitted (their derivative needs that of P/P0); give molar flows (mol/s)",
            data.file, data.header_line, c.column
        )));
    }
    let runs_path = match (&req.runs, &section.runs) {
        (Some(p), _) => Some(p.clone()),
        (None, Some(r)) => Some(beside(&req.study, r)),
        (None, None) => None,
    };
    let table = match &runs_path {
        None => None,
        Some(p) => {
            let name = p.display().to_string();
            Some(RunsTable::parse(&read_csv_text(p, &name)?, &name)?)
        }
    };
    let mut runs = Vec::new();
    for (id, line) in &data.runs {
        let (overrides, row) = match &table {
            None => (Vec::new(), None),
            Some(t) => match t.row(id) {
                Some(r) => (r.sets.iter().map(|(o, _)| o.clone()).collect(), Some(r)),
                None => {
                    return Err(FitError::Invalid(format!(
                        "{}:{line}:1: run `{id}` is not in the runs table {}",
                        data.file, t.file
                    )));
                }
            },
        };
        let network = base.load(&overrides).map_err(|e| {
            let at = match (row, &table) {
                (Some(r), Some(t)) => format!("{}:{}: run `{id}`", t.file, r.line),
                _ => format!("run `{id}`"),
            };
            FitError::Invalid(format!("{at}: {e}"))
        })?;
        runs.push(Run {
            id: id.clone(),
            temperature: network.feed.temperature,
            overrides,
            network,
        });
    }
    if let Some(t) = &table {
        for r in &t.rows {
            if !data.runs.iter().any(|(id, _)| *id == r.run) {
                warnings.push(format!(
                    "{}:{}: run `{}` has no data and is not used",
                    t.file, r.line, r.run
                ));
            }
        }
    }

    // --- what is estimated
    let specs: Vec<EstimateSpec> = if req.estimate.is_empty() {
        section.estimate.clone()
    } else {
        req.estimate
            .iter()
            .map(|e| cli_estimate(e))
            .collect::<Result<_, _>>()?
    };
    if specs.is_empty() {
        return Err(FitError::Invalid(format!(
            "{file}: nothing to estimate: list the values under `fit: {{estimate: [...]}}` or give --estimate PATH"
        )));
    }
    for (k, s) in specs.iter().enumerate() {
        if specs[..k].iter().any(|o| o.path == s.path) {
            return Err(FitError::Invalid(format!(
                "{}: `{}` is estimated twice",
                located(&file, s),
                s.path
            )));
        }
        if req.set.iter().any(|o| o.path == s.path) {
            return Err(FitError::Invalid(format!(
                "{}: `{}` is both estimated and set with --set",
                located(&file, s),
                s.path
            )));
        }
        if let Some(t) = &table
            && let Some(h) = t
                .rows
                .iter()
                .flat_map(|r| r.sets.iter())
                .find(|(o, _)| o.path == s.path)
        {
            return Err(FitError::Invalid(format!(
                "{}:1:{}: `{}` is set per run and also estimated; a fit estimates one value for every run",
                t.file, h.1, s.path
            )));
        }
    }

    // τ places a sample at V = τ·v0 with the run's v0 as written; a fitted v0 would move it.
    if data.independent == super::data::Independent::ResidenceTime
        && let Some(s) = specs.iter().find(|s| s.path == "feed.volumetric")
    {
        return Err(FitError::Invalid(format!(
            "{}: `feed.volumetric` cannot be estimated from data in residence time (τ = V/v0 places each sample with the study's v0); give the data in V",
            located(&file, s)
        )));
    }

    // --- T_fit and the reparameterisation
    let arrhenius: Vec<usize> = {
        let mut v: Vec<usize> = specs
            .iter()
            .filter_map(|s| arrhenius_reaction(&net, &s.path))
            .collect();
        v.sort_unstable();
        v.dedup();
        v
    };
    let mut reparameterisation = Vec::new();
    let mut reparameterised = Vec::new();
    let t_fit = if arrhenius.is_empty() {
        None
    } else {
        let mean_inv = runs.iter().map(|r| 1.0 / r.temperature).sum::<f64>() / runs.len() as f64;
        let t = (10.0 / mean_inv).round() / 10.0;
        for &i in &arrhenius {
            let r = &net.reactions[i];
            let t_ref = r.rate.t_ref;
            // The factor by which a constant with energy `e` (Ea or a ΔH) changes from T_ref to T_fit.
            let moved = |e: f64| crate::kinetics::arrhenius(1.0, e, t_ref, t);
            let base_path = format!("reactions.{}.rate", r.id);
            let scale = |path: String, factor: f64| -> Result<Option<Override>, FitError> {
                if factor == 1.0 {
                    return Ok(None);
                }
                let p =
                    parameters::read(&base, &path).map_err(|e| FitError::Invalid(e.to_string()))?;
                Ok(Some(p.set_theta(match p.scale {
                    Scale::Log => p.theta() + factor.ln(),
                    Scale::Linear => p.si * factor,
                })))
            };
            if let Some(o) = scale(format!("{base_path}.k"), moved(r.rate.ea))? {
                reparameterisation.push(o);
            }
            let has = |key: &str| {
                base.parsed
                    .value_at(&base.overrides, &format!("{base_path}.{key}"))
                    .ok()
                    .flatten()
                    .is_some()
            };
            if let (Some(dh), true) = (r.dh, has("K_eq"))
                && dh != 0.0
                && let Some(o) = scale(format!("{base_path}.K_eq"), moved(dh))?
            {
                reparameterisation.push(o);
            }
            if let crate::model::RateForm::Hyperbolic { adsorption, .. } = &r.rate.form {
                for a in adsorption.iter().filter(|a| a.dh != 0.0) {
                    let name = &net.species[a.species].name;
                    if let Some(o) = scale(format!("{base_path}.adsorption.{name}.K"), moved(a.dh))?
                    {
                        reparameterisation.push(o);
                    }
                }
            }
            reparameterisation.push(Override {
                path: format!("{base_path}.T_ref"),
                value: format!("{t:?} K"),
            });
            reparameterised.push(r.id.clone());
        }
        Some(t)
    };
    let mut all = req.set.clone();
    all.extend(reparameterisation.iter().cloned());
    let study = Study {
        parsed: base.parsed.clone(),
        overrides: all,
    };
    study
        .load(&[])
        .map_err(|e| FitError::Invalid(format!("the reparameterised study at T_fit: {e}")))?;

    // --- the parameters, their scales and bounds
    let mut params = Vec::new();
    let (mut lo, mut hi) = (Vec::new(), Vec::new());
    for s in &specs {
        let at = located(&file, s);
        let mut p = parameters::read(&study, &s.path)
            .map_err(|e| FitError::Invalid(format!("{at}: {e}")))?;
        if let Some(log) = s.log {
            p.scale = if log { Scale::Log } else { Scale::Linear };
        }
        if p.scale == Scale::Log && !(p.si > 0.0) {
            return Err(FitError::Invalid(format!(
                "{at}: `{}` is {} {}, which a log scale cannot hold: use scale: linear",
                s.path, p.value, p.unit
            )));
        }
        let (tlo, vlo) = match &s.min {
            Some(b) => {
                let (t, v) = bound_theta(&p, b, false, &at)?;
                (t, Some(v))
            }
            None => (f64::NEG_INFINITY, None),
        };
        let (thi, vhi) = match &s.max {
            Some(b) => {
                let (t, v) = bound_theta(&p, b, true, &at)?;
                (t, Some(v))
            }
            None => (f64::INFINITY, None),
        };
        let th = p.theta();
        if th < tlo || th > thi {
            return Err(FitError::Invalid(format!(
                "{at}: the study's value of `{}` ({} {}) is outside its bounds",
                s.path, p.value, p.unit
            )));
        }
        p.lo = vlo;
        p.hi = vhi;
        lo.push(tlo);
        hi.push(thi);
        params.push(p);
    }

    // --- the measurement error of each column
    let weighted = !section.error.is_empty();
    let mut errors = Vec::new();
    for c in &data.columns {
        if !weighted {
            errors.push(ColumnError {
                absolute: 1.0,
                relative: 0.0,
            });
            continue;
        }
        let spec = section
            .error
            .iter()
            .find(|e| e.species == c.species)
            .or_else(|| section.error.iter().find(|e| e.species == "default"));
        let Some(e) = spec else {
            let at = section
                .position
                .map_or(String::new(), |p| format!(":{}:{}", p.line, p.column));
            return Err(FitError::Invalid(format!(
                "{file}{at}: field `fit.error`: no measurement error for `{}` (and no `default`)",
                c.species
            )));
        };
        let absolute = match &e.absolute {
            None => 0.0,
            Some(a) => {
                let want = measure_dim(c.measure);
                if !a.dim.approx_eq(want) {
                    let at = e
                        .position
                        .map_or(String::new(), |p| format!(":{}:{}", p.line, p.column));
                    return Err(FitError::Invalid(format!(
                        "{file}{at}: field `{}.absolute`: `{}` is not {} like the data of `{}` ({})",
                        e.field,
                        a.text,
                        match c.measure {
                            Measure::Concentration => "a concentration",
                            Measure::Amount => "an amount",
                            Measure::Flow => "a molar flow",
                        },
                        c.species,
                        c.unit
                    )));
                }
                a.si / c.factor
            }
        };
        errors.push(ColumnError {
            absolute,
            relative: e.relative,
        });
    }
    // A measurement whose σ is zero (relative error only, measured 0) cannot be weighted.
    for s in &data.samples {
        for (k, v) in s.values.iter().enumerate() {
            if let Some(m) = v
                && !(errors[k].sigma(*m) > 0.0)
            {
                return Err(FitError::Invalid(format!(
                    "{}:{}:{}: the measurement is {m} and `{}` has only a relative error, so its σ is 0: give an absolute error too",
                    data.file, s.line, data.columns[k].column, data.columns[k].species
                )));
            }
        }
    }
    let n = data.observations();
    if n <= params.len() {
        return Err(FitError::Invalid(format!(
            "{}: {n} measurement(s) for {} parameter(s): a fit needs more measurements than parameters",
            data.file,
            params.len()
        )));
    }
    let starts_given = req.starts.or(section.starts).is_some();
    let starts = req.starts.or(section.starts).unwrap_or(DEFAULT_STARTS);
    if starts == 0 || starts > crate::model::MAX_STARTS {
        return Err(FitError::Invalid(format!(
            "--starts must be 1 to {}, got {starts}",
            crate::model::MAX_STARTS
        )));
    }
    Ok(FitSetup {
        path: req.study.clone(),
        file,
        study,
        reparameterisation,
        params,
        bounds: Bounds { lo, hi },
        data,
        runs,
        errors,
        weighted,
        t_fit,
        reparameterised,
        starts,
        starts_given,
        warnings,
    })
}
