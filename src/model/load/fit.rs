//! The study's `fit:` section (what `rxnet fit` estimates, from which data, with which
//! measurement error), read with the same located errors as the other sections. Paths and
//! species are checked here as far as the study alone allows; the parameters themselves are
//! read from the study by [`crate::fit::setup`].

use super::messages::{serde_path, strip_location, unknown_field_hint, yaml_wording};
use super::{Cx, LoadError, ParsedStudy};
use crate::model::file::{RawEstimate, RawFit, RawQty, RawScale};
use crate::model::locate::Position;
use crate::units::{Dim, parse_quantity};

/// A bound as written, with its SI value and dimension.
#[derive(Debug, Clone, PartialEq)]
pub struct FitBound {
    pub si: f64,
    pub dim: Dim,
    pub text: String,
}

/// One estimated value of the `fit:` section.
#[derive(Debug, Clone, PartialEq)]
pub struct EstimateSpec {
    pub path: String,
    pub min: Option<FitBound>,
    pub max: Option<FitBound>,
    /// `None`: the default rule for the parameter.
    pub log: Option<bool>,
    /// `fit.estimate[k]` and its position, for messages.
    pub field: String,
    pub position: Option<Position>,
}

/// One species' measurement error (`default` for the others).
#[derive(Debug, Clone, PartialEq)]
pub struct ErrorSpec {
    pub species: String,
    /// Absolute standard deviation (SI value and dimension), if given.
    pub absolute: Option<FitBound>,
    /// Relative standard deviation as a fraction (2 % → 0.02); 0 when not given.
    pub relative: f64,
    pub field: String,
    pub position: Option<Position>,
}

/// The `fit:` section, read.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FitSection {
    pub data: Option<String>,
    pub runs: Option<String>,
    pub estimate: Vec<EstimateSpec>,
    pub error: Vec<ErrorSpec>,
    pub starts: Option<usize>,
    /// The position of `fit:` itself (for errors about the whole section).
    pub position: Option<Position>,
}

/// Largest multistart count accepted.
pub const MAX_STARTS: usize = 1000;

impl ParsedStudy {
    /// The study's `fit:` section (empty when there is none), with every error located in the
    /// study's text.
    pub fn fit_section(&self) -> Result<FitSection, LoadError> {
        let cx = Cx::new(&self.file, &self.text);
        let Some(value) = self.tree.get("fit").cloned() else {
            return Ok(FitSection::default());
        };
        if value.is_null() {
            return Ok(FitSection::default());
        }
        let raw: RawFit = serde_path_to_error::deserialize(value).map_err(|e| {
            let sub = serde_path(e.path());
            let path = if sub.is_empty() {
                "fit".to_string()
            } else if sub.starts_with('[') {
                format!("fit{sub}")
            } else {
                format!("fit.{sub}")
            };
            let inner = yaml_wording(&e.into_inner().to_string().replace("struct Raw", "mapping "));
            let hint = unknown_field_hint(&inner);
            cx.err(&path, &strip_location(&inner), hint)
        })?;
        read(&raw, &cx, self)
    }
}

impl ParsedStudy {
    /// The field path of a `--set` path in the text's own terms (`reactions.first.rate.k` →
    /// `reactions[0].rate.k`), for locating a value in the text; `None` where the tree has no
    /// such place (the last key may be missing: its parent must exist).
    pub fn field_path(&self, path: &str) -> Option<String> {
        let mut cur = &self.tree;
        let mut out = String::new();
        let segs: Vec<&str> = path.split('.').collect();
        for (n, seg) in segs.iter().enumerate() {
            match cur {
                serde_yaml::Value::Mapping(m) => {
                    if !out.is_empty() {
                        out.push('.');
                    }
                    out.push_str(seg);
                    match m.get(*seg) {
                        Some(v) => cur = v,
                        None if n + 1 == segs.len() => return Some(out),
                        None => return None,
                    }
                }
                serde_yaml::Value::Sequence(items) => {
                    let i = super::find_item(items, seg)?;
                    out.push_str(&format!("[{i}]"));
                    cur = &items[i];
                }
                _ => return None,
            }
        }
        Some(out)
    }
}

fn read(raw: &RawFit, cx: &Cx, parsed: &ParsedStudy) -> Result<FitSection, LoadError> {
    let species: Vec<String> = parsed
        .tree
        .get("species")
        .and_then(|s| s.as_mapping())
        .map(|m| {
            m.keys()
                .filter_map(|k| k.as_str().map(str::to_string))
                .collect()
        })
        .unwrap_or_default();
    let mut out = FitSection {
        data: raw.data.clone(),
        runs: raw.runs.clone(),
        position: cx.loc().find("fit"),
        ..Default::default()
    };
    for (field, v) in [("fit.data", &raw.data), ("fit.runs", &raw.runs)] {
        if v.as_ref().is_some_and(|s| s.trim().is_empty()) {
            return Err(cx.err(field, "the file name is empty", None));
        }
    }
    if let Some(s) = raw.starts {
        if s == 0 || s as usize > MAX_STARTS {
            return Err(cx.err(
                "fit.starts",
                &format!("the number of starts must be 1 to {MAX_STARTS}, got {s}"),
                Some("1 fits from the study's values only".into()),
            ));
        }
        out.starts = Some(s as usize);
    }
    for (k, e) in raw.estimate.iter().flatten().enumerate() {
        let field = format!("fit.estimate[{k}]");
        let (path, min, max, scale) = match e {
            RawEstimate::Path(p) => (p.clone(), None, None, None),
            RawEstimate::Map(m) => (m.path.clone(), m.min.clone(), m.max.clone(), m.scale),
        };
        let path = path.trim().to_string();
        if path.is_empty() || path.split('.').any(|s| s.is_empty()) {
            return Err(cx.err(
                &field,
                &format!("`{path}` is not a --set path such as reactions.r1.rate.k"),
                None,
            ));
        }
        if out.estimate.iter().any(|p| p.path == path) {
            return Err(cx.err(&field, &format!("`{path}` is estimated twice"), None));
        }
        let bound = |name: &str, q: Option<RawQty>| -> Result<Option<FitBound>, LoadError> {
            let f = format!("{field}.{name}");
            match q {
                None => Ok(None),
                Some(RawQty::Number(x)) if x.is_finite() => Ok(Some(FitBound {
                    si: x,
                    dim: Dim::NONE,
                    text: format!("{x}"),
                })),
                Some(RawQty::Number(_)) => Err(cx.err(&f, "the bound is not finite", None)),
                Some(RawQty::Text(t)) => {
                    let q = parse_quantity(&t).map_err(|e| {
                        cx.err(&f, &format!("`{t}` is not a valid quantity: {e}"), None)
                    })?;
                    Ok(Some(FitBound {
                        si: q.si,
                        dim: q.dim,
                        text: t,
                    }))
                }
            }
        };
        let min = bound("min", min)?;
        let max = bound("max", max)?;
        if let (Some(lo), Some(hi)) = (&min, &max) {
            if !lo.dim.approx_eq(hi.dim) && lo.si != 0.0 && hi.si != 0.0 {
                return Err(cx.err(
                    &field,
                    &format!(
                        "min `{}` and max `{}` have different dimensions",
                        lo.text, hi.text
                    ),
                    None,
                ));
            }
            if !(lo.si < hi.si) {
                return Err(cx.err(
                    &field,
                    &format!("min `{}` is not below max `{}`", lo.text, hi.text),
                    None,
                ));
            }
        }
        out.estimate.push(EstimateSpec {
            path,
            min,
            max,
            log: scale.map(|s| s == RawScale::Log),
            position: cx.loc().find(&field),
            field,
        });
    }
    for (name, e) in raw.error.iter().flatten() {
        let field = format!("fit.error.{name}");
        if name != "default" && !species.iter().any(|s| s == name) {
            return Err(cx.err(
                &field,
                &format!("unknown species `{name}`"),
                Some("name a species of the study, or `default` for all the others".into()),
            ));
        }
        let absolute = match &e.absolute {
            None => None,
            Some(q) => {
                let f = format!("{field}.absolute");
                let (si, dim, text) = match q {
                    RawQty::Number(x) => (*x, Dim::NONE, format!("{x}")),
                    RawQty::Text(t) => {
                        let q = parse_quantity(t).map_err(|e| {
                            cx.err(&f, &format!("`{t}` is not a valid quantity: {e}"), None)
                        })?;
                        (q.si, q.dim, t.clone())
                    }
                };
                if !(si > 0.0 && si.is_finite()) {
                    return Err(cx.err(
                        &f,
                        &format!("the absolute error must be positive, got `{text}`"),
                        None,
                    ));
                }
                Some(FitBound { si, dim, text })
            }
        };
        let relative = match &e.relative {
            None => 0.0,
            Some(q) => {
                let f = format!("{field}.relative");
                let v = match q {
                    RawQty::Number(x) => *x,
                    RawQty::Text(t) => {
                        let t = t.trim();
                        let num = t.strip_suffix('%').map(str::trim);
                        match num.and_then(|n| n.parse::<f64>().ok()) {
                            Some(p) => p / 100.0,
                            None => {
                                return Err(cx.err(
                                    &f,
                                    &format!(
                                        "`{t}` is not a relative error: write a percentage such as `2 %` or a fraction such as 0.02"
                                    ),
                                    None,
                                ));
                            }
                        }
                    }
                };
                if !(v > 0.0 && v.is_finite()) {
                    return Err(cx.err(&f, "the relative error must be positive", None));
                }
                v
            }
        };
        if absolute.is_none() && relative == 0.0 {
            return Err(cx.err(
                &field,
                "give `absolute`, `relative` or both",
                Some("e.g. {relative: 2 %, absolute: 0.005 mol/L}".into()),
            ));
        }
        out.error.push(ErrorSpec {
            species: name.clone(),
            absolute,
            relative,
            position: cx.loc().find(&field),
            field,
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    const BASE: &str = "phase: liquid\nspecies: {A: , B: }\nreactions:\n  - {id: r1, stoich: A -> B, rate: {k: 0.1 1/s}}\nfeed: {T: 300 K, volumetric: 1 L, amounts: {A: 1 mol}}\nreactor: {type: batch, time: 10 s}\n";

    fn section(fit: &str) -> Result<FitSection, LoadError> {
        let text = format!("{BASE}{fit}");
        ParsedStudy::new(text, "s.yaml".into())?.fit_section()
    }

    #[test]
    fn a_fit_section_reads() {
        let f = section(
            "fit:\n  data: d.csv\n  estimate:\n    - reactions.r1.rate.k\n    - {path: reactions.r1.rate.Ea, min: 0 kJ/mol, max: 300 kJ/mol}\n  error:\n    default: {absolute: 0.01 mol/L}\n    B: {relative: 2 %, absolute: 0.005 mol/L}\n  starts: 3\n",
        )
        .unwrap();
        assert_eq!(f.estimate.len(), 2);
        assert_eq!(f.estimate[1].max.as_ref().unwrap().si, 300e3);
        assert_eq!(f.error[1].relative, 0.02);
        // 0.005 mol/L = 5 mol/m3 (NIST SP 811).
        assert!((f.error[1].absolute.as_ref().unwrap().si - 5.0).abs() < 1e-12);
        assert_eq!(f.starts, Some(3));
    }

    #[test]
    fn errors_are_located() {
        let e = section("fit:\n  estimate: [reactions.r1.rate.k]\n  eror: {}\n").unwrap_err();
        assert_eq!(e.position.unwrap().line, 9, "{e}");
        let e = section("fit:\n  error:\n    Q: {absolute: 1 mol/L}\n").unwrap_err();
        assert_eq!(e.position.unwrap().line, 9, "{e}");
        assert!(e.to_string().contains("unknown species `Q`"), "{e}");
        let e = section("fit:\n  estimate:\n    - {path: a.b, min: 2, max: 1}\n").unwrap_err();
        assert_eq!(e.position.unwrap().line, 9, "{e}");
        let e = section("fit:\n  starts: 0\n").unwrap_err();
        assert_eq!(e.position.unwrap().line, 8, "{e}");
        // The whole study refuses an unknown key under `fit` too (every command).
        assert!(crate::model::load_str(&format!("{BASE}fit: {{datum: x}}\n"), "s", &[]).is_err());
    }
}
