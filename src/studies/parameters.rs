//! The numeric parameters of a study, addressed by their `--set` paths
//! (`reactions.first.rate.k`, `feed.T`, `reactor.volume`): their values as written (number and
//! unit, read from the parsed YAML tree), in SI, on the scale a sensitivity or a fit works in
//! (θ = ln p for positive quantities, θ = p for the others), and the networks with one
//! parameter moved up and down, for central differences of the model's right-hand side.

use crate::model::{Network, Override};
use crate::solve::sensitivity::Perturbed;
use crate::studies::study::{Study, StudyError};
use crate::units::{Dim, parse_unit, unit_text};

/// The scale a parameter is varied on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scale {
    /// θ = ln p (SI): positive quantities whose relative change matters (rate constants,
    /// equilibrium and adsorption constants, sizes, flows, concentrations, pressures, U).
    Log,
    /// θ = p (SI): quantities with a meaningful zero or offset (activation energies, heats of
    /// reaction, orders, temperatures).
    Linear,
}

impl Scale {
    pub fn name(self) -> &'static str {
        match self {
            Scale::Log => "log",
            Scale::Linear => "linear",
        }
    }
}

/// One numeric value of a study.
#[derive(Debug, Clone, PartialEq)]
pub struct Parameter {
    /// The `--set` path that addresses it.
    pub path: String,
    /// The value in `unit` (as written in the file, or SI if bare).
    pub value: f64,
    /// The file's unit text (`""` for a bare number).
    pub unit: String,
    /// The same value in SI.
    pub si: f64,
    pub scale: Scale,
    /// Bounds in `unit`, if any (a fit's `min`/`max`).
    pub lo: Option<f64>,
    pub hi: Option<f64>,
}

impl Parameter {
    /// θ: Log → ln(si), Linear → si.
    pub fn theta(&self) -> f64 {
        match self.scale {
            Scale::Log => self.si.ln(),
            Scale::Linear => self.si,
        }
    }

    /// The SI value at θ.
    pub fn si_at(&self, theta: f64) -> f64 {
        match self.scale {
            Scale::Log => theta.exp(),
            Scale::Linear => theta,
        }
    }

    /// The value in `unit` of an SI value (undoing the unit's factor and offset, so `degC` and
    /// gauge pressures are written back as the file writes them).
    pub fn in_unit(&self, si: f64) -> f64 {
        if self.unit.is_empty() {
            return si;
        }
        match parse_unit(&self.unit) {
            Ok(u) => (si - u.offset) / u.factor,
            // `read` parsed this unit already; a Parameter built by hand with a bad unit
            // keeps the SI value, which the loader then refuses with the path named.
            Err(_) => si,
        }
    }

    /// The override setting the parameter to θ (value written in `unit`, `{:?}` formatting so
    /// that no digit is lost).
    pub fn set_theta(&self, theta: f64) -> Override {
        let v = self.in_unit(self.si_at(theta));
        Override {
            path: self.path.clone(),
            value: if self.unit.is_empty() {
                format!("{v:?}")
            } else {
                format!("{v:?} {}", self.unit)
            },
        }
    }

    /// The size of θ over which a Linear parameter's step is taken: max(|p|, a typical
    /// magnitude of its kind), so that a zero value still gets a usable step. 1 for Log.
    pub fn step_scale(&self) -> f64 {
        match self.scale {
            Scale::Log => 1.0,
            Scale::Linear => self.si.abs().max(self.typical()),
        }
    }

    /// A typical SI magnitude of a Linear parameter of this kind (10 kJ/mol for energies per
    /// amount, 300 K for temperatures, 1 otherwise).
    fn typical(&self) -> f64 {
        let dim = if self.unit.is_empty() {
            Dim::NONE
        } else {
            parse_unit(&self.unit).map(|u| u.dim).unwrap_or(Dim::NONE)
        };
        if dim.approx_eq(Dim::energy().div(Dim::AMOUNT)) {
            1e4
        } else if dim.approx_eq(Dim::TEMPERATURE) {
            300.0
        } else {
            1.0
        }
    }
}

/// The default scale of a value: Linear for temperatures, energies per amount (Ea, dH),
/// reaction orders and anything not positive (a logarithm needs p > 0); Log for the rest
/// (rate, equilibrium and adsorption constants, sizes, flows, concentrations, pressures, U).
fn default_scale(path: &str, dim: Dim, si: f64) -> Scale {
    let last = path.rsplit('.').next().unwrap_or(path);
    let linear_key = matches!(
        last,
        "Ea" | "dH" | "T" | "T_ref" | "T_in" | "order" | "inhibition_power" | "void_fraction"
    ) || path.contains(".orders.");
    if linear_key
        || dim.approx_eq(Dim::TEMPERATURE)
        || dim.approx_eq(Dim::energy().div(Dim::AMOUNT))
        || !(si > 0.0)
    {
        Scale::Linear
    } else {
        Scale::Log
    }
}

/// Read the value at a `--set` path in a parsed study (number and unit text, from the YAML
/// tree with the study's own overrides applied). A reaction's `Ea` not written is 0 kJ/mol
/// (the loader's default); any other missing value is an error naming the path.
pub fn read(study: &Study, path: &str) -> Result<Parameter, StudyError> {
    let invalid = |m: String| StudyError::Invalid(format!("{}: `{path}`: {m}", study.parsed.file));
    if path.starts_with("reactions.")
        && (path.contains(".rate.orders.")
            || (path.contains(".adsorption.") && path.ends_with(".order")))
    {
        // The constant's units follow the exponent (k in (mol/m3)^(1−n)/s for a law on
        // concentrations, an adsorption K in (mol/m3)^(−b)), so an exponent moved alone
        // leaves its constant in units the loader rightly refuses; an order is chosen
        // between candidate studies instead.
        return Err(invalid(
            "an order cannot be varied alone: the units of its rate or adsorption constant depend on it, so every moved order would need that constant rewritten in new units; write one study per candidate order and rank them against the data with `rxnet fit A.yaml B.yaml` (AIC, nested F-test)".into(),
        ));
    }
    let value = study
        .parsed
        .value_at(&study.overrides, path)
        .map_err(&invalid)?;
    let (value, unit, si, dim) = match value {
        None if path.starts_with("reactions.") && path.ends_with(".rate.Ea") => {
            // The rate constant's reaction must exist for its Ea to default.
            let k = path.trim_end_matches(".Ea").to_string() + ".k";
            if study
                .parsed
                .value_at(&study.overrides, &k)
                .map_err(&invalid)?
                .is_none()
            {
                return Err(invalid("the study has no such reaction".into()));
            }
            (
                0.0,
                "kJ/mol".to_string(),
                0.0,
                Dim::energy().div(Dim::AMOUNT),
            )
        }
        None => {
            return Err(invalid(
                "the study gives no value here (a parameter must be written in the file or set with --set)".into(),
            ));
        }
        Some(serde_yaml::Value::Number(n)) => {
            let x = n
                .as_f64()
                .filter(|x| x.is_finite())
                .ok_or_else(|| invalid("the value is not a finite number".into()))?;
            (x, String::new(), x, Dim::NONE)
        }
        Some(serde_yaml::Value::String(s)) => {
            let unit = unit_text(&s).to_string();
            let q = crate::units::parse_quantity(&s)
                .map_err(|e| invalid(format!("`{s}` is not a valid quantity: {e}")))?;
            let num = s.trim();
            let num = &num[..num.len() - unit.len()].trim();
            let value: f64 = num
                .parse()
                .map_err(|_| invalid(format!("`{s}` does not start with a number")))?;
            (value, unit, q.si, q.dim)
        }
        Some(_) => {
            return Err(invalid(
                "not a number: a parameter is a single value such as `2e-3 1/s` or `350 K`".into(),
            ));
        }
    };
    Ok(Parameter {
        path: path.to_string(),
        value,
        scale: default_scale(path, dim, si),
        unit,
        si,
        lo: None,
        hi: None,
    })
}

/// Every numeric parameter of a study (for `sensitivity`), in the order of the file: each
/// reaction's k, Ea (if written and not 0), K_eq (if written) and adsorption constants K; the
/// feed's T, P, volumetric flow and each non-zero flow, amount or concentration; each vessel's
/// size (V, W or batch time) and its coolant temperature and U (or UA).
pub fn every(study: &Study, net: &Network) -> Vec<Parameter> {
    let mut paths: Vec<String> = Vec::new();
    let has = |p: &str| {
        study
            .parsed
            .value_at(&study.overrides, p)
            .ok()
            .flatten()
            .is_some()
    };
    let keys = |p: &str| -> Vec<String> {
        match study.parsed.value_at(&study.overrides, p).ok().flatten() {
            Some(serde_yaml::Value::Mapping(m)) => m
                .keys()
                .filter_map(|k| k.as_str().map(str::to_string))
                .collect(),
            _ => Vec::new(),
        }
    };
    for r in &net.reactions {
        let base = format!("reactions.{}.rate", r.id);
        paths.push(format!("{base}.k"));
        for key in ["Ea", "K_eq"] {
            let p = format!("{base}.{key}");
            if has(&p) {
                paths.push(p);
            }
        }
        for s in keys(&format!("{base}.adsorption")) {
            paths.push(format!("{base}.adsorption.{s}.K"));
        }
    }
    for key in ["T", "P", "volumetric"] {
        let p = format!("feed.{key}");
        if has(&p) {
            paths.push(p);
        }
    }
    for map in ["flows", "amounts", "concentrations"] {
        for s in keys(&format!("feed.{map}")) {
            paths.push(format!("feed.{map}.{s}"));
        }
    }
    let vessels: Vec<String> = match &net.train {
        Some(t) if has("train") => t.units.iter().map(|u| format!("train.{}", u.id)).collect(),
        _ => vec!["reactor".to_string()],
    };
    for v in vessels {
        for key in [
            "volume",
            "catalyst",
            "time",
            "heat.U",
            "heat.UA",
            "heat.coolant.T",
            "heat.coolant.T_in",
        ] {
            let p = format!("{v}.{key}");
            // A batch's size is its time; its volume only scales the charge.
            if key == "volume" && has(&format!("{v}.time")) {
                continue;
            }
            if has(&p) {
                paths.push(p);
            }
        }
    }
    paths
        .iter()
        .filter_map(|p| read(study, p).ok())
        // A parameter at zero (Ea = 0, a species not fed) has no relative sensitivity.
        .filter(|p| p.si != 0.0)
        .collect()
}

/// The networks with each parameter moved to θ ± δ, δ = h for a Log parameter and
/// h·max(|p|, typical) for a Linear one; `step` = 2δ (the central difference's divisor).
/// `extra` overrides apply to every load before the parameter's own.
pub fn perturbed(
    study: &Study,
    extra: &[Override],
    params: &[Parameter],
    h: f64,
) -> Result<Vec<Perturbed>, StudyError> {
    if !(h > 0.0 && h.is_finite()) {
        return Err(StudyError::Invalid(format!(
            "the parameter step must be positive, got {h}"
        )));
    }
    params
        .iter()
        .map(|p| {
            let delta = h * p.step_scale();
            let theta = p.theta();
            let load = |t: f64| {
                let mut all = extra.to_vec();
                all.push(p.set_theta(t));
                study.load(&all).map_err(|e| match e {
                    StudyError::Load(m) => StudyError::Load(format!(
                        "parameter `{}` moved by {:+e} on its {} scale: {m}",
                        p.path,
                        t - theta,
                        p.scale.name()
                    )),
                    other => other,
                })
            };
            Ok(Perturbed {
                plus: load(theta + delta)?,
                minus: load(theta - delta)?,
                step: 2.0 * delta,
                scale: p.step_scale(),
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    const STUDY: &str = r#"
name: test
phase: liquid
species: {A: {}, B: {}, C: {}}
reactions:
  - id: first
    stoich: A -> B
    rate: {k: 2.0e-3 1/min, Ea: 50 kJ/mol, T_ref: 300 K}
  - id: second
    stoich: B <=> C
    rate: {k: 0.5 1/h, K_eq: 4}
feed:
  T: 25 degC
  volumetric: 2 L/s
  concentrations: {A: 1 mol/L, B: 0 mol/L}
reactor: {type: pfr, volume: 1.5 m3}
"#;

    fn study(over: Vec<Override>) -> Study {
        Study::new(STUDY.into(), "t.yaml".into(), over).unwrap()
    }

    #[test]
    fn reads_value_unit_and_si() {
        let s = study(vec![]);
        let k = read(&s, "reactions.first.rate.k").unwrap();
        assert_eq!(k.value, 2.0e-3);
        assert_eq!(k.unit, "1/min");
        // 1 min = 60 s exactly (NIST SP 811, Table 6).
        assert!((k.si - 2.0e-3 / 60.0).abs() < 1e-18);
        assert_eq!(k.scale, Scale::Log);
        assert!((k.theta() - (2.0e-3f64 / 60.0).ln()).abs() < 1e-14);
        // By index, as an override addresses it.
        assert_eq!(read(&s, "reactions.0.rate.k").unwrap().si, k.si);
        let bare = read(&s, "reactions.second.rate.K_eq").unwrap();
        assert_eq!(
            (bare.value, bare.unit.as_str(), bare.scale),
            (4.0, "", Scale::Log)
        );
        // 25 degC = 298.15 K (NIST SP 811, 4.2.1.1).
        let t = read(&s, "feed.T").unwrap();
        assert_eq!(t.scale, Scale::Linear);
        assert!((t.si - 298.15).abs() < 1e-12);
        assert_eq!(
            read(&s, "reactions.first.rate.Ea").unwrap().scale,
            Scale::Linear
        );
        // Ea not written: 0.
        let ea = read(&s, "reactions.second.rate.Ea").unwrap();
        assert_eq!((ea.si, ea.scale), (0.0, Scale::Linear));
    }

    #[test]
    fn missing_paths_are_named() {
        let s = study(vec![]);
        for p in [
            "reactions.third.rate.k",
            "feed.P",
            "reactions.third.rate.Ea",
        ] {
            let e = read(&s, p).unwrap_err().to_string();
            assert!(e.contains(p) && e.contains("t.yaml"), "{e}");
        }
        let e = read(&s, "feed.concentrations").unwrap_err().to_string();
        assert!(e.contains("not a number"), "{e}");
    }

    #[test]
    fn the_study_overrides_apply() {
        let s = study(vec!["feed.T=310 K".parse().unwrap()]);
        let t = read(&s, "feed.T").unwrap();
        assert_eq!((t.value, t.unit.as_str(), t.si), (310.0, "K", 310.0));
    }

    #[test]
    fn set_theta_round_trips_through_the_loader() {
        let s = study(vec![]);
        let t = read(&s, "feed.T").unwrap();
        let o = t.set_theta(t.theta() + 1.0);
        assert!(o.value.ends_with(" degC"), "{}", o.value);
        let net = s.load(&[o]).unwrap();
        assert!((net.feed.temperature - 299.15).abs() < 1e-9);
        let k = read(&s, "reactions.first.rate.k").unwrap();
        let net = s.load(&[k.set_theta(k.theta() + 0.1)]).unwrap();
        // The rate constant is at T_ref = 300 K, as written.
        let want = 2.0e-3 / 60.0 * 0.1f64.exp();
        assert!((net.reactions[0].rate.k_ref - want).abs() < 1e-15 * want);
        let b = read(&s, "reactions.second.rate.K_eq").unwrap();
        let o = b.set_theta(b.theta() - 20.0);
        assert!(!o.value.contains(' '), "{}", o.value);
        let net = s.load(&[o]).unwrap();
        let k_eq = net.reactions[1].rate.equilibrium.as_ref().unwrap().k_ref;
        assert!((k_eq - 4.0 * (-20f64).exp()).abs() < 1e-15 * k_eq);
    }

    #[test]
    fn every_lists_the_study_parameters() {
        let s = study(vec![]);
        let net = s.load(&[]).unwrap();
        let paths: Vec<String> = every(&s, &net).into_iter().map(|p| p.path).collect();
        assert_eq!(
            paths,
            [
                "reactions.first.rate.k",
                "reactions.first.rate.Ea",
                "reactions.second.rate.k",
                "reactions.second.rate.K_eq",
                "feed.T",
                "feed.volumetric",
                "feed.concentrations.A",
                "reactor.volume",
            ]
        );
    }

    #[test]
    fn perturbed_networks_move_one_parameter() {
        let s = study(vec![]);
        let params = vec![
            read(&s, "reactions.first.rate.k").unwrap(),
            read(&s, "feed.T").unwrap(),
        ];
        let h = 1e-4;
        let p = perturbed(&s, &[], &params, h).unwrap();
        let k0 = 2.0e-3 / 60.0;
        assert!((p[0].plus.reactions[0].rate.k_ref - k0 * h.exp()).abs() < 1e-15 * k0);
        assert!((p[0].minus.reactions[0].rate.k_ref - k0 * (-h).exp()).abs() < 1e-15 * k0);
        assert_eq!(p[0].step, 2.0 * h);
        assert!(
            (p[1].plus.feed.temperature - p[1].minus.feed.temperature - p[1].step).abs() < 1e-9
        );
        // Linear: δ = h·max(|T|, 300 K).
        assert!((p[1].step - 2.0 * h * 300.0).abs() < 1e-12);
        assert!(perturbed(&s, &[], &params, 0.0).is_err());
    }
}
