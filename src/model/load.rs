//! Loading a study file into a known-good [`Network`]: parse once, convert to SI, validate once.
//!
//! Every error names the file, the line and column where known, and the field path
//! (`reactions[1].rate.k`), says what was expected, and suggests a fix where one is obvious.

use super::equation::{parse_equation, valid_name};
use super::file::*;
use super::formula::Formula;
use super::locate::{Locator, Position};
use super::*;
use crate::units::{Dim, GAS_CONSTANT, parse_quantity};
use indexmap::IndexMap;
use std::fmt;

/// Largest study file accepted, in bytes (a study is a few kilobytes; a generated network of
/// 10,000 reactions is a few megabytes).
pub const MAX_FILE_BYTES: usize = 64 * 1024 * 1024;

/// A study file that cannot be read or is not a valid study.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadError {
    pub file: String,
    pub position: Option<Position>,
    /// Field path such as `reactions[1].rate.k`; empty for the whole file.
    pub field: String,
    pub message: String,
    pub hint: Option<String>,
}

impl fmt::Display for LoadError {
    fn fmt(&self, f: &mut fmt::Formatter) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(p) = self.position {
            write!(f, ":{}:{}", p.line, p.column)?;
        }
        if !self.field.is_empty() {
            write!(
                f,
                ": field `{}`",
                shorten(&self.field, MAX_MESSAGE_CHARS / 4)
            )?;
        }
        write!(f, ": {}", shorten(&self.message, MAX_MESSAGE_CHARS))?;
        if let Some(h) = &self.hint {
            write!(f, " ({})", shorten(h, MAX_MESSAGE_CHARS / 2))?;
        }
        Ok(())
    }
}

impl std::error::Error for LoadError {}

/// Longest message (in characters) printed for a load error. Messages quote the offending
/// text, and a hostile file can make that text megabytes long (a unit of a million nested
/// parentheses); the start says what is wrong, the rest is cut with a count.
pub const MAX_MESSAGE_CHARS: usize = 600;

/// `text` cut to at most `max` characters, with the number of characters left out.
fn shorten(text: &str, max: usize) -> std::borrow::Cow<'_, str> {
    match text.char_indices().nth(max) {
        None => std::borrow::Cow::Borrowed(text),
        Some((cut, _)) => {
            let left = text[cut..].chars().count();
            std::borrow::Cow::Owned(format!("{} … [{left} more characters]", &text[..cut]))
        }
    }
}

/// A command-line change to one scalar of the study, `path=value`, applied before validation
/// so it meets the same checks as the file. In a path, a list item may be named by its index
/// or, for reactions, by its id: `reactions.to_full.rate.k`.
#[derive(Debug, Clone, PartialEq)]
pub struct Override {
    pub path: String,
    pub value: String,
}

impl std::str::FromStr for Override {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let (p, v) = s
            .split_once('=')
            .ok_or_else(|| format!("`{s}`: an override is PATH=VALUE, e.g. feed.T=\"350 K\""))?;
        let p = p.trim();
        if p.is_empty() || p.split('.').any(|seg| seg.is_empty()) {
            return Err(format!("`{s}`: empty path segment in `{p}`"));
        }
        Ok(Override {
            path: p.to_string(),
            value: v.trim().to_string(),
        })
    }
}

/// Read and load a study file.
pub fn load_file(path: &std::path::Path, overrides: &[Override]) -> Result<Network, LoadError> {
    let text = read_text(path)?;
    load_str(&text, &path.display().to_string(), overrides)
}

/// Read a study file's text: refuses files over [`MAX_FILE_BYTES`] and text that is not UTF-8.
pub fn read_text(path: &std::path::Path) -> Result<String, LoadError> {
    let name = path.display().to_string();
    let whole = |message: String| LoadError {
        file: name.clone(),
        position: None,
        field: String::new(),
        message,
        hint: None,
    };
    let meta = std::fs::metadata(path).map_err(|e| whole(format!("cannot read the file: {e}")))?;
    if meta.len() > MAX_FILE_BYTES as u64 {
        return Err(whole(format!(
            "the file is {} bytes; a study file may have at most {MAX_FILE_BYTES} bytes",
            meta.len()
        )));
    }
    let bytes = std::fs::read(path).map_err(|e| whole(format!("cannot read the file: {e}")))?;
    String::from_utf8(bytes).map_err(|e| {
        whole(format!(
            "the file is not UTF-8 text (invalid byte at offset {})",
            e.utf8_error().valid_up_to()
        ))
    })
}

/// Load a study from its text; `file` names it in messages.
pub fn load_str(text: &str, file: &str, overrides: &[Override]) -> Result<Network, LoadError> {
    load_parsed(parse_text(text, file)?, text, file, overrides)
}

/// A study text parsed into its YAML tree, for loading it many times with different overrides
/// (every point of a sweep, every evaluation of an optimiser) without parsing the text again.
/// Each load still applies its overrides to the tree and validates the whole study.
#[derive(Debug, Clone)]
pub struct ParsedStudy {
    pub text: String,
    pub file: String,
    tree: serde_yaml::Value,
}

impl ParsedStudy {
    /// Parse `text` (errors name `file`).
    pub fn new(text: String, file: String) -> Result<ParsedStudy, LoadError> {
        let tree = parse_text(&text, &file)?;
        Ok(ParsedStudy { text, file, tree })
    }

    /// The network with `overrides` applied, validated as [`load_str`] would.
    pub fn load(&self, overrides: &[Override]) -> Result<Network, LoadError> {
        load_parsed(self.tree.clone(), &self.text, &self.file, overrides)
    }
}

/// The YAML tree of a study text.
fn parse_text(text: &str, file: &str) -> Result<serde_yaml::Value, LoadError> {
    let cx = Cx::new(file, text);
    if text.len() > MAX_FILE_BYTES {
        return Err(cx.err("", "the study text is too large", None));
    }
    let value: serde_yaml::Value = serde_yaml::from_str(text).map_err(|e| {
        let message = strip_location(&e.to_string());
        if message.starts_with("duplicate entry")
            && let Some((key, at)) = cx.loc().duplicate_key()
        {
            return LoadError {
                file: file.to_string(),
                position: Some(at),
                field: key.to_string(),
                message: "this key is given twice in the same mapping".into(),
                hint: Some("keep one of the two".into()),
            };
        }
        let position = e.location().map(|l| Position {
            line: l.line(),
            column: l.column(),
        });
        LoadError {
            file: file.to_string(),
            position,
            field: String::new(),
            message: format!("not valid YAML: {}", yaml_wording(&message)),
            hint: None,
        }
    })?;
    if value.is_null() {
        return Err(cx.err(
            "",
            "the file is empty; a study needs species, reactions, feed and reactor",
            None,
        ));
    }
    Ok(value)
}

/// Apply `overrides` to a parsed tree and build the network; `text` gives the positions for
/// messages (its position map is built only if there is an error to place).
fn load_parsed(
    mut value: serde_yaml::Value,
    text: &str,
    file: &str,
    overrides: &[Override],
) -> Result<Network, LoadError> {
    let cx = Cx::new(file, text);
    for o in overrides {
        apply_override(&mut value, o).map_err(|m| LoadError {
            file: file.to_string(),
            position: None,
            field: o.path.clone(),
            message: format!("cannot apply --set {}={}: {m}", o.path, o.value),
            hint: None,
        })?;
    }
    let raw: RawStudy = serde_path_to_error::deserialize(value).map_err(|e| {
        let path = serde_path(e.path());
        let inner = e
            .into_inner()
            .to_string()
            .replace(
                "expected struct RawStudy",
                "expected a mapping with the keys species, reactions, feed and reactor",
            )
            .replace("struct Raw", "mapping ");
        let inner = yaml_wording(&inner);
        let hint = unknown_field_hint(&inner);
        cx.err(&path, &strip_location(&inner), hint)
    })?;
    build(raw, &cx)
}

/// A number rounded to 10 significant digits for a message, so that a unit conversion's last
/// bits (−300 °C = −26.850000000000023 K) do not show.
fn significant(v: f64) -> String {
    let r: f64 = format!("{v:.9e}").parse().unwrap_or(v);
    if r != 0.0 && !(1e-4..1e12).contains(&r.abs()) {
        format!("{r:e}")
    } else {
        format!("{r}")
    }
}

/// serde and serde_yaml wording rewritten for a study file's author: internal type names
/// (`mapping Feed`, `u128`, `any YAML value`) replaced by what the file should hold.
fn yaml_wording(message: &str) -> String {
    let mut m = message.to_string();
    if m.contains(" as u128") || m.contains(" as i128") {
        return "a whole number too large for any field (integers are limited to 64 bits)".into();
    }
    // "expected mapping Feed" -> "expected a mapping (the `feed` section)"
    for (ty, section) in [
        ("mapping Feed", "feed"),
        ("mapping Reactor", "reactor"),
        ("mapping Solver", "solver"),
        ("mapping Species", "species.NAME"),
        ("mapping Reaction", "reactions[i]"),
        ("mapping Rate", "reactions[i].rate"),
        ("mapping PressureDrop", "reactor.pressure_drop"),
        ("mapping Adsorption", "reactions[i].rate.adsorption.NAME"),
    ] {
        if let Some(i) = m.find(ty) {
            let end = i + ty.len();
            // Only the whole type name ("mapping Rate", not a prefix of "mapping RateLaw").
            if !m[end..].starts_with(|c: char| c.is_alphanumeric()) {
                m.replace_range(i..end, &format!("a mapping (the `{section}` section)"));
            }
        }
    }
    m
}

/// serde's path display uses `?` for unknown segments; keep what is known.
fn serde_path(p: &serde_path_to_error::Path) -> String {
    let s = p.to_string();
    if s == "." {
        String::new()
    } else {
        s.trim_end_matches(".?").replace("?.", "").to_string()
    }
}

fn strip_location(s: &str) -> String {
    match s.find(" at line ") {
        Some(i) => s[..i].to_string(),
        None => s.to_string(),
    }
}

fn unknown_field_hint(msg: &str) -> Option<String> {
    // serde: "unknown field `x`, expected one of `a`, `b`"
    let rest = msg.strip_prefix("unknown field `")?;
    let (name, rest) = rest.split_once('`')?;
    let cands: Vec<&str> = rest.split('`').skip(1).step_by(2).collect();
    closest(name, cands.iter().copied()).map(|c| format!("did you mean `{c}`?"))
}

fn apply_override(root: &mut serde_yaml::Value, o: &Override) -> Result<(), String> {
    use serde_yaml::Value;
    let new: Value = serde_yaml::from_str(&o.value).map_err(|e| {
        format!(
            "the value is not a YAML scalar: {}",
            yaml_wording(&e.to_string())
        )
    })?;
    if new.is_mapping() || new.is_sequence() {
        return Err(
            "only a scalar can be set (a number, a word or a quantity such as \"2 mol/s\")".into(),
        );
    }
    let segs: Vec<&str> = o.path.split('.').collect();
    let mut cur = root;
    for (n, seg) in segs.iter().enumerate() {
        let last = n + 1 == segs.len();
        cur = match cur {
            Value::Mapping(m) => {
                let key = Value::String(seg.to_string());
                if !m.contains_key(&key) {
                    if last
                        || matches!(
                            *seg,
                            "rate"
                                | "feed"
                                | "reactor"
                                | "solver"
                                | "pressure_drop"
                                | "orders"
                                | "flows"
                                | "concentrations"
                                | "amounts"
                        )
                    {
                        let fresh = if last {
                            Value::Null
                        } else {
                            Value::Mapping(Default::default())
                        };
                        m.insert(key.clone(), fresh);
                    } else {
                        return Err(format!("no field `{seg}` here"));
                    }
                }
                m.get_mut(&key).expect("inserted above")
            }
            Value::Sequence(items) => {
                let idx = match seg.parse::<usize>() {
                    Ok(i) if i < items.len() => i,
                    Ok(i) => {
                        return Err(format!("index {i} is past the end ({} items)", items.len()));
                    }
                    Err(_) => items
                        .iter()
                        .position(|it| it.get("id").and_then(|v| v.as_str()) == Some(seg))
                        .ok_or_else(|| format!("no item with id `{seg}`"))?,
                };
                &mut items[idx]
            }
            _ => return Err(format!("`{seg}` is below a scalar")),
        };
    }
    *cur = new;
    Ok(())
}

/// Closest candidate by edit distance (at most 2 edits, or equal ignoring case).
pub(crate) fn closest<'a>(name: &str, cands: impl Iterator<Item = &'a str>) -> Option<&'a str> {
    let mut best: Option<(usize, &str)> = None;
    for c in cands {
        let d = if c.eq_ignore_ascii_case(name) {
            0
        } else {
            levenshtein(name, c)
        };
        if d <= 2 && d < name.len().max(1) && best.is_none_or(|(bd, _)| d < bd) {
            best = Some((d, c));
        }
    }
    best.map(|(_, c)| c)
}

fn levenshtein(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for i in 1..=a.len() {
        let mut cur = vec![i; b.len() + 1];
        for j in 1..=b.len() {
            let sub = prev[j - 1] + usize::from(a[i - 1] != b[j - 1]);
            cur[j] = sub.min(prev[j] + 1).min(cur[j - 1] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// Loading context: the file's name, its text and the position map, built from the text on
/// the first error (a valid study never needs it, and building it costs about as much as
/// parsing the YAML).
struct Cx<'t> {
    file: String,
    text: &'t str,
    loc: std::cell::OnceCell<Locator>,
}

impl Cx<'_> {
    fn new<'t>(file: &str, text: &'t str) -> Cx<'t> {
        Cx {
            file: file.to_string(),
            text,
            loc: std::cell::OnceCell::new(),
        }
    }

    fn loc(&self) -> &Locator {
        self.loc.get_or_init(|| Locator::new(self.text))
    }

    fn err(&self, field: &str, message: &str, hint: Option<String>) -> LoadError {
        LoadError {
            file: self.file.clone(),
            position: self.loc().find(field),
            field: field.to_string(),
            message: message.to_string(),
            hint,
        }
    }

    /// Convert a quantity to SI, checking its dimensions. `what` describes the expected
    /// quantity for the message ("a molar flow", "a rate constant").
    fn qty(
        &self,
        field: &str,
        q: &RawQty,
        want: Dim,
        what: &str,
        example: &str,
    ) -> Result<f64, LoadError> {
        let (si, dim) = match q {
            RawQty::Number(x) => {
                if !want.approx_eq(Dim::NONE) {
                    return Err(self.err(
                        field,
                        &format!(
                            "the bare number {x} needs a unit: expected {what} in units of {want}"
                        ),
                        Some(format!(
                            "write it with its unit, e.g. \"{x} {}\"",
                            example.split_once(' ').map(|(_, u)| u).unwrap_or(example)
                        )),
                    ));
                }
                (*x, Dim::NONE)
            }
            RawQty::Text(s) => {
                let q = parse_quantity(s).map_err(|e| {
                    self.err(field, &format!("`{s}` is not a valid quantity: {e}"), None)
                })?;
                (q.si, q.dim)
            }
        };
        if !dim.approx_eq(want) {
            return Err(self.err(
                field,
                &format!("wrong dimensions: expected {what} ({want}), got {dim}"),
                Some(format!("e.g. \"{example}\"")),
            ));
        }
        if !si.is_finite() {
            return Err(self.err(field, "the value is not a finite number", None));
        }
        Ok(si)
    }

    /// A positive, finite, normal number. Subnormal values (below 2.2e-308 in SI) are refused:
    /// no physical size is that small, and arithmetic on them loses precision silently
    /// (IEEE 754), so a typo such as `1e-320 m3` would otherwise end as a solver failure.
    fn positive(&self, field: &str, v: f64, what: &str) -> Result<f64, LoadError> {
        if v > 0.0 && v.is_finite() && v.is_normal() {
            Ok(v)
        } else if v > 0.0 && v.is_finite() {
            Err(self.err(
                field,
                &format!("{what} is too small to compute with, got {v:e} (SI)"),
                Some("check the exponent and the unit".into()),
            ))
        } else {
            Err(self.err(
                field,
                &format!("{what} must be positive, got {} (SI)", significant(v)),
                None,
            ))
        }
    }

    fn species(
        &self,
        field: &str,
        name: &str,
        index: &IndexMap<String, usize>,
    ) -> Result<usize, LoadError> {
        index.get(name).copied().ok_or_else(|| {
            let hint = closest(name, index.keys().map(|s| s.as_str()))
                .map(|c| format!("did you mean `{c}`?"))
                .or_else(|| Some("declare it under `species:`".to_string()));
            self.err(field, &format!("unknown species `{name}`"), hint)
        })
    }
}

fn conc() -> Dim {
    Dim::concentration()
}
fn molar_energy() -> Dim {
    Dim::energy().div(Dim::AMOUNT)
}

fn build(raw: RawStudy, cx: &Cx) -> Result<Network, LoadError> {
    // --- species
    if raw.species.is_empty() {
        return Err(cx.err("species", "no species declared", None));
    }
    let mut index: IndexMap<String, usize> = IndexMap::new();
    let mut species = Vec::with_capacity(raw.species.len());
    for (i, (name, sp)) in raw.species.iter().enumerate() {
        let field = format!("species.{name}");
        if !valid_name(name) {
            return Err(cx.err(
                &field,
                &format!("`{name}` is not a valid species name"),
                Some(
                    "a letter or `_` first, then letters, digits, `_`, brackets, `,` or `'`".into(),
                ),
            ));
        }
        let sp = sp.as_ref();
        let formula = match sp.and_then(|s| s.formula.as_deref()) {
            None => None,
            Some(f) => Some(Formula::parse(f).map_err(|e| {
                cx.err(
                    &format!("{field}.formula"),
                    &format!("bad formula `{f}`: {e}"),
                    None,
                )
            })?),
        };
        let molar_mass = match sp.and_then(|s| s.molar_mass.as_ref()) {
            None => formula.as_ref().and_then(|f| f.molar_mass()),
            Some(q) => {
                let f = format!("{field}.molar_mass");
                let m = cx.qty(
                    &f,
                    q,
                    Dim::MASS.div(Dim::AMOUNT),
                    "a molar mass",
                    "28.0 g/mol",
                )?;
                Some(cx.positive(&f, m, "a molar mass")?)
            }
        };
        index.insert(name.clone(), i);
        species.push(Species {
            name: name.clone(),
            formula,
            molar_mass,
        });
    }
    let ns = species.len();

    let phase = match raw.phase {
        Some(RawPhase::Liquid) => Phase::Liquid,
        Some(RawPhase::Gas) => Phase::Gas,
        None => {
            return Err(cx.err(
                "phase",
                "missing field `phase`",
                Some("write `phase: liquid` or `phase: gas`".into()),
            ));
        }
    };

    // --- reactor (needed first: it fixes the rate basis)
    let reactor = build_reactor(&raw.reactor, phase, cx)?;
    let basis = if matches!(reactor, Reactor::Pbr { .. }) {
        RateBasis::CatalystMass
    } else {
        RateBasis::Volume
    };

    // --- feed (temperature needed as the default T_ref)
    let feed = build_feed(&raw.feed, phase, &reactor, &index, cx)?;
    if let Reactor::Pbr {
        pressure_drop: Some(PressureDrop::Ergun { .. }),
        ..
    } = &reactor
    {
        // The Ergun equation needs the mass flux G = Σ F_j0 M_j / A_c of the feed.
        let missing: Vec<&str> = feed
            .amounts
            .iter()
            .enumerate()
            .filter(|(j, f)| **f > 0.0 && species[*j].molar_mass.is_none())
            .map(|(j, _)| species[j].name.as_str())
            .collect();
        if let Some(first) = missing.first() {
            return Err(cx.err(
                "reactor.pressure_drop",
                &format!(
                    "the Ergun equation needs the molar mass of every fed species (for the mass \
                     flux); none is known for {}",
                    missing
                        .iter()
                        .map(|n| format!("`{n}`"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
                Some(format!(
                    "give `species.{first}.molar_mass` (e.g. `molar_mass: 28 g/mol`) or a \
                     `formula` of common elements, or use the lumped constant `alpha`"
                )),
            ));
        }
    }

    // --- reactions
    if raw.reactions.is_empty() {
        return Err(cx.err("reactions", "no reactions given", None));
    }
    let mut reactions: Vec<Reaction> = Vec::with_capacity(raw.reactions.len());
    let mut by_id: std::collections::HashMap<String, usize> =
        std::collections::HashMap::with_capacity(raw.reactions.len());
    for (i, rr) in raw.reactions.iter().enumerate() {
        let r = build_reaction(i, rr, &index, basis, feed.temperature, cx)?;
        if let Some(prev) = by_id.get(&r.id).map(|&k| &reactions[k]) {
            return Err(cx.err(
                &format!("reactions[{i}].id"),
                &format!(
                    "duplicate reaction id `{}` (already used by `{}`)",
                    r.id, prev.equation
                ),
                Some("give each reaction its own id".into()),
            ));
        }
        by_id.insert(r.id.clone(), reactions.len());
        reactions.push(r);
    }

    // --- key and desired
    let (key, key_is_default) = match &raw.key {
        Some(k) => (cx.species("key", k, &index)?, false),
        None => (default_key(&reactions, &feed, cx)?, true),
    };
    let desired = match &raw.desired {
        Some(d) => Some(cx.species("desired", d, &index)?),
        None => None,
    };
    let solver = build_solver(raw.solver.as_ref(), &reactor, cx)?;
    debug_assert_eq!(feed.amounts.len(), ns);

    Ok(Network {
        name: raw.name.unwrap_or_else(|| "unnamed study".to_string()),
        source: cx.file.clone(),
        phase,
        species,
        reactions,
        feed,
        reactor,
        key,
        key_is_default,
        desired,
        solver,
    })
}

fn build_reactor(r: &RawReactor, phase: Phase, cx: &Cx) -> Result<Reactor, LoadError> {
    let kind = match r.kind {
        RawReactorType::Pfr => "pfr",
        RawReactorType::Pbr => "pbr",
        RawReactorType::Cstr => "cstr",
        RawReactorType::Batch => "batch",
    };
    let not_for = |field: &str, what: &str| {
        cx.err(
            &format!("reactor.{field}"),
            &format!("`{field}` does not apply to a {kind} reactor"),
            Some(what.to_string()),
        )
    };
    let size = |field: &str,
                q: &Option<RawQty>,
                want: Dim,
                what: &str,
                ex: &str|
     -> Result<f64, LoadError> {
        let f = format!("reactor.{field}");
        match q {
            None => Err(cx.err(
                "reactor",
                &format!("a {kind} reactor needs `{field}` ({what})"),
                Some(format!("e.g. `{field}: {ex}`")),
            )),
            Some(q) => {
                let v = cx.qty(&f, q, want, what, ex)?;
                cx.positive(&f, v, what)
            }
        }
    };
    if r.kind != RawReactorType::Pbr {
        if r.catalyst.is_some() {
            return Err(not_for(
                "catalyst",
                "catalyst mass sizes a packed bed (type: pbr)",
            ));
        }
        if r.pressure_drop.is_some() {
            return Err(not_for(
                "pressure_drop",
                "pressure drop is modelled for a packed bed (type: pbr)",
            ));
        }
    }
    if r.kind != RawReactorType::Batch {
        if r.time.is_some() {
            return Err(not_for(
                "time",
                "a flow reactor is sized by volume or catalyst; `time` is for type: batch",
            ));
        }
        if r.mode.is_some() {
            return Err(not_for(
                "mode",
                "`mode` (constant_volume or constant_pressure) is for type: batch",
            ));
        }
    }
    let volume = || {
        size(
            "volume",
            &r.volume,
            Dim::volume(),
            "reactor volume",
            "1.2 m3",
        )
    };
    Ok(match r.kind {
        RawReactorType::Pfr => Reactor::Pfr { volume: volume()? },
        RawReactorType::Cstr => Reactor::Cstr { volume: volume()? },
        RawReactorType::Pbr => {
            if r.volume.is_some() {
                return Err(not_for(
                    "volume",
                    "a packed bed is sized by its catalyst mass: `catalyst: 300 kg`",
                ));
            }
            let catalyst = size(
                "catalyst",
                &r.catalyst,
                Dim::MASS,
                "catalyst mass",
                "300 kg",
            )?;
            let pressure_drop = match &r.pressure_drop {
                None => None,
                Some(pd) => Some(build_pressure_drop(pd, phase, cx)?),
            };
            Reactor::Pbr {
                catalyst,
                pressure_drop,
            }
        }
        RawReactorType::Batch => {
            let mode = match r.mode {
                None | Some(RawBatchMode::ConstantVolume) => BatchMode::ConstantVolume,
                Some(RawBatchMode::ConstantPressure) => BatchMode::ConstantPressure,
            };
            if mode == BatchMode::ConstantPressure && phase == Phase::Liquid {
                return Err(cx.err(
                    "reactor.mode",
                    "constant_pressure batch operation is modelled for an ideal gas; a liquid batch has constant volume",
                    Some("drop `mode`, or set `phase: gas`".into()),
                ));
            }
            let time = size("time", &r.time, Dim::TIME, "batch time", "2 h")?;
            let volume = match (&r.volume, mode) {
                // A constant-pressure gas batch gets its initial volume from the charge.
                (None, BatchMode::ConstantPressure) => 0.0,
                _ => volume()?,
            };
            Reactor::Batch { volume, time, mode }
        }
    })
}

fn build_pressure_drop(
    pd: &RawPressureDrop,
    phase: Phase,
    cx: &Cx,
) -> Result<PressureDrop, LoadError> {
    let f = |k: &str| format!("reactor.pressure_drop.{k}");
    if phase == Phase::Liquid {
        return Err(cx.err(
            "reactor.pressure_drop",
            "pressure drop is modelled for a gas-phase packed bed (ideal gas); a liquid's rates do not depend on pressure here",
            Some("drop `pressure_drop`, or set `phase: gas`".into()),
        ));
    }
    let ergun_given = pd.particle_diameter.is_some()
        || pd.void_fraction.is_some()
        || pd.cross_section.is_some()
        || pd.viscosity.is_some()
        || pd.solid_density.is_some();
    if let Some(a) = &pd.alpha {
        if ergun_given {
            return Err(cx.err(
                "reactor.pressure_drop",
                "give either the lumped bed constant `alpha` or the bed properties for the Ergun equation, not both",
                None,
            ));
        }
        let alpha = cx.qty(
            &f("alpha"),
            a,
            Dim::MASS.powf(-1.0),
            "a bed constant α",
            "0.002 1/kg",
        )?;
        if !(alpha >= 0.0) {
            return Err(cx.err(&f("alpha"), "α must be zero or positive", None));
        }
        return Ok(PressureDrop::Lumped { alpha });
    }
    let need =
        |k: &str, q: &Option<RawQty>, want: Dim, what: &str, ex: &str| -> Result<f64, LoadError> {
            match q {
                None => Err(cx.err(
                    "reactor.pressure_drop",
                    &format!("the Ergun equation needs `{k}` ({what})"),
                    Some(format!(
                        "e.g. `{k}: {ex}`, or give the lumped constant `alpha: 0.002 1/kg`"
                    )),
                )),
                Some(q) => {
                    let v = cx.qty(&f(k), q, want, what, ex)?;
                    cx.positive(&f(k), v, what)
                }
            }
        };
    let particle_diameter = need(
        "particle_diameter",
        &pd.particle_diameter,
        Dim::LENGTH,
        "particle diameter",
        "3 mm",
    )?;
    let cross_section = need(
        "cross_section",
        &pd.cross_section,
        Dim::LENGTH.powf(2.0),
        "bed cross-section",
        "0.01 m2",
    )?;
    let viscosity = need(
        "viscosity",
        &pd.viscosity,
        Dim::MASS.div(Dim::LENGTH).div(Dim::TIME),
        "gas viscosity",
        "1.5e-5 Pa*s",
    )?;
    let solid_density = need(
        "solid_density",
        &pd.solid_density,
        Dim::MASS.div(Dim::volume()),
        "catalyst solid density",
        "2000 kg/m3",
    )?;
    let void_fraction =
        match pd.void_fraction {
            None => return Err(cx.err(
                "reactor.pressure_drop",
                "the Ergun equation needs `void_fraction` (bed porosity, a number between 0 and 1)",
                None,
            )),
            Some(v) if v > 0.0 && v < 1.0 => v,
            Some(v) => {
                return Err(cx.err(
                    &f("void_fraction"),
                    &format!("void fraction must lie strictly between 0 and 1, got {v}"),
                    None,
                ));
            }
        };
    Ok(PressureDrop::Ergun {
        particle_diameter,
        void_fraction,
        cross_section,
        viscosity,
        solid_density,
    })
}

/// Read a per-species map of quantities into a vector over all species.
fn species_map(
    field: &str,
    map: &IndexMap<String, RawQty>,
    index: &IndexMap<String, usize>,
    want: Dim,
    what: &str,
    ex: &str,
    cx: &Cx,
) -> Result<Vec<f64>, LoadError> {
    let mut out = vec![0.0; index.len()];
    for (name, q) in map {
        let f = format!("{field}.{name}");
        let j = cx.species(&f, name, index)?;
        let v = cx.qty(&f, q, want, what, ex)?;
        if v < 0.0 {
            return Err(cx.err(
                &f,
                &format!("{what} cannot be negative, got {v} (SI)"),
                None,
            ));
        }
        out[j] = v;
    }
    Ok(out)
}

/// Relative mismatch allowed between a gas charge's total concentration and P/(R T).
const IDEAL_GAS_CONSISTENCY: f64 = 0.01;

fn build_feed(
    f: &RawFeed,
    phase: Phase,
    reactor: &Reactor,
    index: &IndexMap<String, usize>,
    cx: &Cx,
) -> Result<Feed, LoadError> {
    let temperature = cx.qty("feed.T", &f.t, Dim::TEMPERATURE, "a temperature", "320 K")?;
    if temperature <= 0.0 {
        return Err(cx.err(
            "feed.T",
            &format!(
                "the temperature is at or below absolute zero: {} K",
                significant(temperature)
            ),
            Some("check the value and its unit (`K`, or `degC` alone as in `25 degC`)".into()),
        ));
    }
    cx.positive("feed.T", temperature, "the absolute temperature")?;
    let pressure = match &f.p {
        Some(p) => {
            let v = cx.qty("feed.P", p, Dim::pressure(), "a pressure", "20 bar")?;
            Some(cx.positive("feed.P", v, "the pressure")?)
        }
        None => None,
    };
    let gas = phase == Phase::Gas;
    let batch = reactor.is_batch();
    let c_total_ideal = pressure.map(|p| p / (GAS_CONSTANT * temperature));

    let (amounts, volumetric) = if batch {
        if f.flows.is_some() {
            return Err(cx.err(
                "feed.flows",
                "a batch reactor is charged, not fed: give `amounts` (mol) or `concentrations`",
                None,
            ));
        }
        if f.volumetric.is_some() {
            return Err(cx.err(
                "feed.volumetric",
                "a batch charge has no volumetric flow; its volume is `reactor.volume`",
                None,
            ));
        }
        let Reactor::Batch { volume, mode, .. } = reactor else {
            unreachable!("batch checked above")
        };
        let amounts = match (&f.amounts, &f.concentrations) {
            (Some(_), Some(_)) => {
                return Err(cx.err("feed", "give the charge as `amounts` or as `concentrations`, not both", None))
            }
            (None, None) => {
                return Err(cx.err(
                    "feed",
                    "a batch charge needs `amounts` (e.g. {A: 10 mol}) or `concentrations` (e.g. {A: 1 mol/L})",
                    None,
                ))
            }
            (Some(a), None) => species_map("feed.amounts", a, index, Dim::AMOUNT, "an amount", "10 mol", cx)?,
            (None, Some(c)) => {
                if *volume == 0.0 {
                    return Err(cx.err(
                        "reactor",
                        "a charge given as concentrations needs `reactor.volume`",
                        None,
                    ));
                }
                let cs = species_map("feed.concentrations", c, index, conc(), "a concentration", "1 mol/L", cx)?;
                cs.iter().map(|c| c * volume).collect()
            }
        };
        let total: f64 = amounts.iter().sum();
        if !(total > 0.0) {
            return Err(cx.err(
                "feed",
                "the charge is empty: at least one species needs a positive amount",
                None,
            ));
        }
        let v0 = if gas {
            let p = pressure.ok_or_else(|| {
                cx.err(
                    "feed",
                    "a gas-phase study needs the feed pressure `P`",
                    Some("e.g. `P: 2 bar`".into()),
                )
            })?;
            let v_ideal = total * GAS_CONSTANT * temperature / p;
            if *mode == BatchMode::ConstantPressure && *volume == 0.0 {
                v_ideal
            } else {
                let rel = (v_ideal - volume).abs() / volume;
                if rel > IDEAL_GAS_CONSISTENCY {
                    return Err(cx.err(
                        "feed.P",
                        &format!(
                            "the gas charge does not fit the vessel: N_T0 R T0 / P0 = {v_ideal:.6e} m3 but reactor.volume = {volume:.6e} m3 (ideal gas)"
                        ),
                        Some("check the amounts, T, P and the volume".into()),
                    ));
                }
                *volume
            }
        } else {
            *volume
        };
        (amounts, v0)
    } else {
        if f.amounts.is_some() {
            return Err(cx.err(
                "feed.amounts",
                "`amounts` is a batch charge; a flow reactor takes `flows` (mol/s) or `volumetric` with `concentrations`",
                None,
            ));
        }
        match (&f.flows, &f.concentrations) {
            (Some(_), Some(_)) => {
                return Err(cx.err(
                    "feed",
                    "give the feed as `flows` or as `volumetric` with `concentrations`, not both",
                    None,
                ));
            }
            (None, None) => return Err(cx.err(
                "feed",
                "the feed needs `flows` (e.g. {A: 2 mol/s}) or `volumetric` with `concentrations`",
                None,
            )),
            (Some(fl), None) => {
                let amounts = species_map(
                    "feed.flows",
                    fl,
                    index,
                    Dim::AMOUNT.div(Dim::TIME),
                    "a molar flow",
                    "2 mol/s",
                    cx,
                )?;
                let total: f64 = amounts.iter().sum();
                if !(total > 0.0) {
                    return Err(cx.err(
                        "feed.flows",
                        "the feed is empty: at least one species needs a positive flow",
                        None,
                    ));
                }
                let given = match &f.volumetric {
                    Some(q) => {
                        let v = cx.qty(
                            "feed.volumetric",
                            q,
                            Dim::volume().div(Dim::TIME),
                            "a volumetric flow",
                            "50 L/min",
                        )?;
                        Some(cx.positive("feed.volumetric", v, "the volumetric flow")?)
                    }
                    None => None,
                };
                let v0 = if gas {
                    let p = pressure.ok_or_else(|| {
                        cx.err(
                            "feed",
                            "a gas-phase study needs the feed pressure `P`",
                            Some("e.g. `P: 2 bar`".into()),
                        )
                    })?;
                    let v_ideal = total * GAS_CONSTANT * temperature / p;
                    if let Some(v) = given
                        && (v - v_ideal).abs() / v_ideal > IDEAL_GAS_CONSISTENCY
                    {
                        return Err(cx.err(
                                "feed.volumetric",
                                &format!("for an ideal gas F_T0 R T0 / P0 = {v_ideal:.6e} m3/s, but volumetric = {v:.6e} m3/s"),
                                Some("drop `volumetric` (it follows from flows, T and P) or correct it".into()),
                            ));
                    }
                    v_ideal
                } else {
                    given.ok_or_else(|| {
                        cx.err(
                            "feed",
                            "a liquid feed given as molar flows needs `volumetric` (the volumetric flow v0) to give concentrations",
                            Some("e.g. `volumetric: 50 L/min`".into()),
                        )
                    })?
                };
                (amounts, v0)
            }
            (None, Some(c)) => {
                let v0 = match &f.volumetric {
                    Some(q) => {
                        let v = cx.qty("feed.volumetric", q, Dim::volume().div(Dim::TIME), "a volumetric flow", "50 L/min")?;
                        cx.positive("feed.volumetric", v, "the volumetric flow")?
                    }
                    None => {
                        return Err(cx.err(
                            "feed",
                            "a feed given as concentrations needs `volumetric` (the volumetric flow v0)",
                            Some("e.g. `volumetric: 50 L/min`".into()),
                        ))
                    }
                };
                let cs = species_map(
                    "feed.concentrations",
                    c,
                    index,
                    conc(),
                    "a concentration",
                    "1 mol/L",
                    cx,
                )?;
                let amounts: Vec<f64> = cs.iter().map(|c| c * v0).collect();
                if !(amounts.iter().sum::<f64>() > 0.0) {
                    return Err(cx.err(
                        "feed.concentrations",
                        "the feed is empty: at least one species needs a positive concentration",
                        None,
                    ));
                }
                if gas {
                    let ct = c_total_ideal.ok_or_else(|| {
                        cx.err(
                            "feed",
                            "a gas-phase study needs the feed pressure `P`",
                            Some("e.g. `P: 2 bar`".into()),
                        )
                    })?;
                    let sum: f64 = cs.iter().sum();
                    if (sum - ct).abs() / ct > IDEAL_GAS_CONSISTENCY {
                        return Err(cx.err(
                            "feed.concentrations",
                            &format!("the gas concentrations sum to {sum:.6e} mol/m3 but P0/(R T0) = {ct:.6e} mol/m3 (ideal gas)"),
                            Some("list every species of the gas, inerts included, or correct T or P".into()),
                        ));
                    }
                }
                (amounts, v0)
            }
        }
    };
    if gas && pressure.is_none() {
        return Err(cx.err(
            "feed",
            "a gas-phase study needs the feed pressure `P`",
            Some("e.g. `P: 2 bar`".into()),
        ));
    }
    Ok(Feed {
        temperature,
        pressure: pressure.unwrap_or(101_325.0),
        amounts,
        volumetric,
    })
}

fn build_reaction(
    i: usize,
    rr: &RawReaction,
    index: &IndexMap<String, usize>,
    basis: RateBasis,
    t_feed: f64,
    cx: &Cx,
) -> Result<Reaction, LoadError> {
    let base = format!("reactions[{i}]");
    let fid = format!("{base}.id");
    if !valid_name(&rr.id) {
        return Err(cx.err(
            &fid,
            &format!("`{}` is not a valid reaction id", rr.id),
            Some("a letter or `_` first, then letters, digits, `_`, brackets, `,` or `'`".into()),
        ));
    }
    let fs = format!("{base}.stoich");
    let eq = parse_equation(&rr.stoich, &|s| index.contains_key(s))
        .map_err(|e| cx.err(&fs, &format!("bad equation `{}`: {e}", rr.stoich), None))?;
    let term = |t: &super::equation::Term| -> Result<Term, LoadError> {
        Ok(Term {
            species: cx.species(&fs, &t.species, index)?,
            coefficient: t.coefficient,
            exact: t.exact.clone(),
        })
    };
    let reactants: Vec<Term> = eq.reactants.iter().map(term).collect::<Result<_, _>>()?;
    let products: Vec<Term> = eq.products.iter().map(term).collect::<Result<_, _>>()?;
    let mut net_exact: Vec<(usize, BigRational)> = Vec::new();
    for (name, c) in eq.net() {
        let j = index[&name];
        if !num_traits::Zero::is_zero(&c) {
            net_exact.push((j, c));
        }
    }
    net_exact.sort_by_key(|(j, _)| *j);
    let net: Vec<(usize, f64)> = net_exact
        .iter()
        .map(|(j, c)| (*j, crate::exact::to_f64(c)))
        .collect();
    let sum_nu: f64 = net.iter().map(|(_, v)| v).sum();

    // --- rate law
    let rate = &rr.rate;
    let fr = format!("{base}.rate");
    let law = rate.law.unwrap_or(RawLaw::Power);
    let orders: Vec<(usize, f64)> = match &rate.orders {
        None => {
            let mut o: Vec<(usize, f64)> = Vec::new();
            for t in &reactants {
                match o.iter_mut().find(|(j, _)| *j == t.species) {
                    Some(e) => e.1 += t.coefficient,
                    None => o.push((t.species, t.coefficient)),
                }
            }
            o
        }
        Some(m) => {
            let mut o = Vec::new();
            for (name, a) in m {
                let f = format!("{fr}.orders.{name}");
                let j = cx.species(&f, name, index)?;
                if !a.is_finite() || a.abs() > 20.0 {
                    return Err(cx.err(
                        &f,
                        &format!("order {a} is out of range (|order| ≤ 20)"),
                        None,
                    ));
                }
                if *a != 0.0 {
                    o.push((j, *a));
                }
            }
            o
        }
    };
    let n_total: f64 = orders.iter().map(|(_, a)| a).sum();
    // Volumetric rate r [mol m^-3 s^-1] = k Π C^a  =>  [k] = (mol/m3)^(1−n) / s.
    // Per catalyst mass r' [mol kg^-1 s^-1]      =>  [k] = mol kg^-1 s^-1 (mol/m3)^(−n).
    let (k_dim, k_example) = match basis {
        RateBasis::Volume => (
            conc().powf(1.0 - n_total).div(Dim::TIME),
            volumetric_example(n_total),
        ),
        RateBasis::CatalystMass => (
            Dim::AMOUNT
                .div(Dim::MASS)
                .div(Dim::TIME)
                .mul(conc().powf(-n_total)),
            catalytic_example(n_total),
        ),
    };
    let what = match basis {
        RateBasis::Volume => format!("a rate constant for total order {n_total} per unit volume"),
        RateBasis::CatalystMass => {
            format!("a rate constant for total order {n_total} per unit catalyst mass")
        }
    };
    let k_ref = cx.qty(&format!("{fr}.k"), &rate.k, k_dim, &what, &k_example)?;
    if k_ref < 0.0 {
        return Err(cx.err(
            &format!("{fr}.k"),
            "a rate constant cannot be negative",
            None,
        ));
    }
    let ea = match &rate.Ea {
        None => 0.0,
        Some(q) => cx.qty(
            &format!("{fr}.Ea"),
            q,
            molar_energy(),
            "an activation energy",
            "38 kJ/mol",
        )?,
    };
    let t_ref = match &rate.T_ref {
        None => t_feed,
        Some(q) => {
            let f = format!("{fr}.T_ref");
            let t = cx.qty(&f, q, Dim::TEMPERATURE, "a temperature", "320 K")?;
            cx.positive(&f, t, "the reference temperature")?
        }
    };
    let dh = match &rate.dH {
        None => None,
        Some(q) => Some(cx.qty(
            &format!("{fr}.dH"),
            q,
            molar_energy(),
            "a heat of reaction",
            "-120 kJ/mol",
        )?),
    };
    let equilibrium = match (&rate.K_eq, eq.reversible) {
        (Some(_), false) => {
            return Err(cx.err(
                &format!("{fr}.K_eq"),
                "K_eq is given for a one-way reaction",
                Some("write the equation with `<=>` to make it reversible, or drop K_eq".into()),
            ))
        }
        (None, true) => {
            return Err(cx.err(
                &fr,
                "a reversible reaction (`<=>`) needs `K_eq`, its concentration-based equilibrium constant",
                None,
            ))
        }
        (None, false) => None,
        (Some(q), true) => {
            // K_c = Π C_j^ν_j at equilibrium  =>  [K_c] = (mol/m3)^Σν.
            let f = format!("{fr}.K_eq");
            let want = conc().powf(sum_nu);
            let ex = if sum_nu.abs() < 1e-12 { "12".to_string() } else { format!("12 (mol/L)^{sum_nu}") };
            let k = cx.qty(&f, q, want, &format!("a concentration equilibrium constant with Σν = {sum_nu}"), &ex)?;
            Some(Equilibrium { k_ref: cx.positive(&f, k, "K_eq")? })
        }
    };
    let form = match law {
        RawLaw::Power => {
            if rate.adsorption.is_some() || rate.inhibition_power.is_some() {
                return Err(cx.err(
                    &fr,
                    "`adsorption` and `inhibition_power` belong to `law: hyperbolic`",
                    Some("add `law: hyperbolic`".into()),
                ));
            }
            RateForm::Power
        }
        RawLaw::Hyperbolic => {
            let Some(ads) = rate.adsorption.as_ref().filter(|a| !a.is_empty()) else {
                return Err(cx.err(
                    &fr,
                    "a hyperbolic law needs `adsorption`: the species in its denominator, e.g. {A: {K: 0.5 m3/mol}}",
                    None,
                ));
            };
            let mut adsorption = Vec::new();
            for (name, a) in ads {
                let fa = format!("{fr}.adsorption.{name}");
                let species = cx.species(&fa, name, index)?;
                let order = a.order.unwrap_or(1.0);
                if !order.is_finite() || order <= 0.0 || order > 20.0 {
                    return Err(cx.err(
                        &format!("{fa}.order"),
                        &format!("adsorption order must be in (0, 20], got {order}"),
                        None,
                    ));
                }
                let k = cx.qty(
                    &format!("{fa}.K"),
                    &a.K,
                    conc().powf(-order),
                    "an adsorption constant",
                    "0.5 m3/mol",
                )?;
                if k < 0.0 {
                    return Err(cx.err(
                        &format!("{fa}.K"),
                        "an adsorption constant cannot be negative",
                        None,
                    ));
                }
                let dh = match &a.dH {
                    None => 0.0,
                    Some(q) => cx.qty(
                        &format!("{fa}.dH"),
                        q,
                        molar_energy(),
                        "a heat of adsorption",
                        "-20 kJ/mol",
                    )?,
                };
                adsorption.push(Adsorption {
                    species,
                    k_ref: k,
                    order,
                    dh,
                });
            }
            let power = rate.inhibition_power.unwrap_or(1.0);
            if !power.is_finite() || power <= 0.0 || power > 10.0 {
                return Err(cx.err(
                    &format!("{fr}.inhibition_power"),
                    &format!("must be in (0, 10], got {power}"),
                    None,
                ));
            }
            RateForm::Hyperbolic { adsorption, power }
        }
    };
    Ok(Reaction {
        id: rr.id.clone(),
        equation: rr.stoich.trim().to_string(),
        reactants,
        products,
        reversible: eq.reversible,
        net,
        net_exact,
        rate: RateLaw {
            form,
            k_ref,
            ea,
            t_ref,
            orders,
            equilibrium,
            basis,
        },
        dh,
    })
}

fn volumetric_example(n: f64) -> String {
    if (n - 1.0).abs() < 1e-12 {
        "0.5 1/s".into()
    } else if n.abs() < 1e-12 {
        "0.5 mol/(m3*s)".into()
    } else if (n - 2.0).abs() < 1e-12 {
        "4e-3 m3/(mol*s)".into()
    } else {
        format!("0.5 (mol/m3)^({})/s", 1.0 - n)
    }
}

fn catalytic_example(n: f64) -> String {
    if n.abs() < 1e-12 {
        "0.5 mol/(kg*s)".into()
    } else if (n - 1.0).abs() < 1e-12 {
        "0.5 m3/(kg*s)".into()
    } else {
        format!("0.5 mol/(kg*s)*(mol/m3)^({})", -n)
    }
}

/// The limiting reactant of the feed for the first reaction with a fed reactant: the smallest
/// F_j0/|ν_j| over that reaction's reactants (common practice).
fn default_key(reactions: &[Reaction], feed: &Feed, cx: &Cx) -> Result<usize, LoadError> {
    for r in reactions {
        let best = r
            .reactants
            .iter()
            .filter(|t| feed.amounts[t.species] > 0.0)
            .map(|t| (t.species, feed.amounts[t.species] / t.coefficient))
            .min_by(|a, b| a.1.total_cmp(&b.1));
        if let Some((j, _)) = best {
            return Ok(j);
        }
    }
    Err(cx.err(
        "key",
        "no reaction has a reactant in the feed, so no key reactant can be chosen",
        Some("feed a reactant, or name the conversion basis with `key:`".into()),
    ))
}

/// The tightest relative tolerance accepted: about 50 × the f64 machine epsilon (2.2e-16,
/// IEEE 754). A tighter error test cannot be met in double precision and would only end in a
/// step-size failure (common practice).
pub const MIN_RTOL: f64 = 1e-14;

fn build_solver(
    s: Option<&RawSolver>,
    reactor: &Reactor,
    cx: &Cx,
) -> Result<SolverSettings, LoadError> {
    let Some(s) = s else {
        return Ok(SolverSettings::default());
    };
    let rtol = match s.rtol {
        None => None,
        Some(r) if (MIN_RTOL..1.0).contains(&r) => Some(r),
        Some(r) => {
            return Err(cx.err(
                "solver.rtol",
                &format!("rtol must lie in [{MIN_RTOL:e}, 1), got {}", significant(r)),
                Some(if r > 0.0 && r < MIN_RTOL {
                    format!(
                        "below {MIN_RTOL:e} the error test asks for more than double precision \
                         resolves (machine epsilon 2.2e-16); 1e-8 is the default"
                    )
                } else {
                    "1e-8 is the default".to_string()
                }),
            ));
        }
    };
    let atol = match &s.atol {
        None => None,
        Some(q) => {
            let (want, ex) = if reactor.is_batch() {
                (Dim::AMOUNT, "1e-10 mol")
            } else {
                (Dim::AMOUNT.div(Dim::TIME), "1e-10 mol/s")
            };
            let v = cx.qty(
                "solver.atol",
                q,
                want,
                "an absolute tolerance on the state",
                ex,
            )?;
            Some(cx.positive("solver.atol", v, "atol")?)
        }
    };
    let max_steps = match s.max_steps {
        Some(0) => return Err(cx.err("solver.max_steps", "max_steps must be at least 1", None)),
        m => m,
    };
    use crate::solve::ode::LinearAlgebra;
    let linear_algebra = match s.linear_algebra.as_deref().map(str::trim) {
        None | Some("auto") => None,
        Some("dense") => Some(LinearAlgebra::Dense),
        Some("sparse") => Some(LinearAlgebra::Sparse),
        Some("krylov") => Some(LinearAlgebra::Krylov),
        Some(other) => {
            return Err(cx.err(
                "solver.linear_algebra",
                &format!("unknown linear algebra `{other}`"),
                Some("one of auto, dense, sparse, krylov".into()),
            ));
        }
    };
    let steady_state = match &s.steady_state {
        None => None,
        Some(raw) => {
            let text = match raw {
                RawQty::Number(v) => v.to_string(),
                RawQty::Text(t) => t.clone(),
            };
            Some(
                text.parse()
                    .map_err(|m: String| cx.err("solver.steady_state", &m, None))?,
            )
        }
    };
    Ok(SolverSettings {
        rtol,
        atol,
        max_steps,
        linear_algebra,
        steady_state,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn suggestions_find_close_names() {
        let names = ["H2", "CH4", "CO2"];
        assert_eq!(closest("CH5", names.iter().copied()), Some("CH4"));
        assert_eq!(closest("co2", names.iter().copied()), Some("CO2"));
        assert_eq!(closest("N2O5", names.iter().copied()), None);
    }

    #[test]
    fn override_parses() {
        let o: Override = "feed.T=350 K".parse().unwrap();
        assert_eq!(o.path, "feed.T");
        assert_eq!(o.value, "350 K");
        assert!("feedT".parse::<Override>().is_err());
        assert!("feed..T=3".parse::<Override>().is_err());
    }
}
