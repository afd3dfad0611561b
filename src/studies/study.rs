//! A study as every design command sees it: the file parsed once, with the command line's
//! overrides, loaded again for each evaluation so that an override meets the same validation
//! as the file; the inputs a study varies (`Variable`); and the errors of a design study.

use crate::model::{Network, Override};
use crate::solve::SolveError;

#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StudyError {
    #[error("{0}")]
    Solve(#[from] SolveError),
    #[error("{0}")]
    Load(String),
    #[error("{0}")]
    Invalid(String),
    #[error("{0}")]
    Infeasible(String),
}

impl StudyError {
    /// A bad request (bounds, a target, a file that does not load): exit 2, like
    /// `EvalError::is_invalid_input`; anything else is a failed study (exit 1).
    pub fn is_invalid_input(&self) -> bool {
        matches!(self, StudyError::Invalid(_))
    }
}

/// One input varied by a general optimisation: a `--set` path and its bounds, in the unit the
/// user gave (`unit` is appended to each value set; empty for a bare number).
#[derive(Debug, Clone)]
pub struct Variable {
    pub path: String,
    pub lo: f64,
    pub hi: f64,
    pub unit: String,
}

impl Variable {
    /// Parse bounds such as "300 K" and "400 K" (the same unit on both) or bare numbers.
    pub fn new(path: &str, lo: &str, hi: &str) -> Result<Variable, String> {
        let split = |s: &str| -> Result<(f64, String), String> {
            let s = s.trim();
            let end = s
                .find(|c: char| !(c.is_ascii_digit() || "+-.eE".contains(c)))
                .unwrap_or(s.len());
            let (num, unit) = s.split_at(end);
            let v: f64 = num
                .parse()
                .map_err(|_| format!("`{s}` is not a number with an optional unit (e.g. 350 K)"))?;
            if !v.is_finite() {
                return Err(format!("`{s}` is not finite"));
            }
            Ok((v, unit.trim().to_string()))
        };
        let (l, ul) = split(lo)?;
        let (h, uh) = split(hi)?;
        if ul != uh {
            return Err(format!(
                "the bounds of {path} must use the same unit (`{ul}` and `{uh}`)"
            ));
        }
        if !(l < h) {
            return Err(format!(
                "the bounds of {path} must satisfy LO < HI, got {l} and {h}"
            ));
        }
        Ok(Variable {
            path: path.to_string(),
            lo: l,
            hi: h,
            unit: ul,
        })
    }

    pub fn set(&self, v: f64) -> Override {
        Override {
            path: self.path.clone(),
            value: if self.unit.is_empty() {
                format!("{v}")
            } else {
                format!("{v} {}", self.unit)
            },
        }
    }
}

/// A study parsed once, with the command line's overrides, so every evaluation goes through
/// the same loading and validation (overrides applied to the YAML tree, whole study checked)
/// without parsing the text again.
#[derive(Debug, Clone)]
pub struct Study {
    pub parsed: crate::model::ParsedStudy,
    pub overrides: Vec<Override>,
}

impl Study {
    /// Parse `text` (named `file` in messages); `overrides` apply to every load.
    pub fn new(text: String, file: String, overrides: Vec<Override>) -> Result<Study, StudyError> {
        let parsed = crate::model::ParsedStudy::new(text, file)
            .map_err(|e| StudyError::Load(e.to_string()))?;
        Ok(Study { parsed, overrides })
    }

    pub fn load(&self, extra: &[Override]) -> Result<Network, StudyError> {
        let mut all = self.overrides.clone();
        all.extend_from_slice(extra);
        self.parsed
            .load(&all)
            .map_err(|e| StudyError::Load(e.to_string()))
    }
}
