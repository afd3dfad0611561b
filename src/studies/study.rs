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
    /// One of the N − 1 variables of a train's split of its total size (`--over split`); the
    /// split's variables are set together ([`overrides`]).
    pub split: Option<std::sync::Arc<Split>>,
}

/// Smallest stick-breaking fraction of a split: every unit keeps at least about this share of
/// what the units before it left.
pub const SPLIT_MIN: f64 = 1e-3;

/// The split of a train's total size between its N units, the total held (`optimize --over
/// split`): N − 1 variables u_k in [SPLIT_MIN, 1 − SPLIT_MIN] give the shares by stick
/// breaking, share_k = u_k Π_{i<k} (1 − u_i) and the last unit the rest, so that every split
/// with positive sizes is reachable from a box (common practice for optimising over a simplex).
#[derive(Debug, Clone, PartialEq)]
pub struct Split {
    /// Each unit's size key, `train.<id>.volume` (or `.catalyst`).
    pub paths: Vec<String>,
    /// The total size held, SI (m3 or kg).
    pub total: f64,
    /// `m3` or `kg`.
    pub unit: &'static str,
}

impl Split {
    /// The split of a study's train; refused for a single vessel or a one-unit train.
    pub fn of(net: &Network) -> Result<Split, String> {
        let Some(t) = net.train.as_ref().filter(|t| t.units.len() >= 2) else {
            return Err(
                "--over split divides a train's total size between its units; this study has one vessel".into(),
            );
        };
        let catalyst = matches!(t.units[0].reactor, crate::model::Reactor::Pbr { .. });
        let key = if catalyst { "catalyst" } else { "volume" };
        Ok(Split {
            paths: t
                .units
                .iter()
                .map(|u| format!("train.{}.{key}", u.id))
                .collect(),
            total: net.size(),
            unit: if catalyst { "kg" } else { "m3" },
        })
    }

    /// The N − 1 variables, starting from an equal split.
    pub fn variables(self) -> Vec<Variable> {
        let shared = std::sync::Arc::new(self);
        (1..shared.paths.len())
            .map(|k| Variable {
                path: format!("split.{k}"),
                lo: SPLIT_MIN,
                hi: 1.0 - SPLIT_MIN,
                unit: String::new(),
                split: Some(shared.clone()),
            })
            .collect()
    }

    /// Each unit's size (SI) from the stick-breaking fractions `u`.
    pub fn sizes(&self, u: &[f64]) -> Vec<f64> {
        let mut left = 1.0;
        let mut out = Vec::with_capacity(self.paths.len());
        for &f in u {
            out.push(self.total * left * f);
            left *= 1.0 - f;
        }
        out.push(self.total * left);
        out
    }

    /// The overrides that set each unit's size.
    pub fn overrides(&self, u: &[f64]) -> Vec<Override> {
        self.paths
            .iter()
            .zip(self.sizes(u))
            .map(|(p, v)| Override {
                path: p.clone(),
                value: format!("{v:?} {}", self.unit),
            })
            .collect()
    }
}

/// The overrides of a point `x` of `vars`: each variable's own, and a split's N − 1 variables
/// together as the N unit sizes.
pub fn overrides(vars: &[Variable], x: &[f64]) -> Vec<Override> {
    let mut out = Vec::new();
    let mut split: Option<(&Split, Vec<f64>)> = None;
    for (v, &xv) in vars.iter().zip(x) {
        match &v.split {
            None => out.push(v.set(xv)),
            Some(s) => split.get_or_insert_with(|| (s, Vec::new())).1.push(xv),
        }
    }
    if let Some((s, u)) = split {
        out.extend(s.overrides(&u));
    }
    out
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
            split: None,
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

    /// The network with the study's overrides and then `extra` applied. Points that change
    /// only `reactor.…` fields reuse the species and reactions built once
    /// ([`crate::model::ParsedStudy::load_reactor_point`]): the same network and errors.
    pub fn load(&self, extra: &[Override]) -> Result<Network, StudyError> {
        self.parsed
            .load_reactor_point(&self.overrides, extra)
            .map_err(|e| StudyError::Load(e.to_string()))
    }
}
