//! Loading a study file into a known-good [`Network`]: parse once, convert to SI, validate once.
//!
//! Every error names the file, the line and column where known, and the field path
//! (`reactions[1].rate.k`), says what was expected, and suggests a fix where one is obvious.
//!
//! This module reads and parses the text, applies the command-line overrides and builds the
//! network section by section: [`species`], [`reactor`] (first: it fixes the rate basis),
//! [`feed`], [`reactions`] and [`solver`]. [`messages`] holds the wording of errors and the
//! "did you mean" suggestions.

mod contacting;
mod dosing;
mod feed;
mod fit;
mod heat;
mod messages;
mod reactions;
mod reactor;
mod solver;
mod species;
mod stream;
mod walls;

pub use fit::{ErrorSpec, EstimateSpec, FitBound, FitSection, MAX_STARTS};
pub(crate) use messages::closest;

use super::file::*;
use super::locate::{Locator, Position};
use super::*;
use crate::units::{Dim, describe, dimension_mismatch, gauge_note, parse_quantity, unit_text};
use feed::build_feed;
use indexmap::IndexMap;
use messages::{serde_path, significant, strip_location, unknown_field_hint, yaml_wording};
use reactions::{build_reaction, default_key};
use solver::build_solver;
use species::build_species;
use std::fmt;

/// Largest study file accepted, in bytes (a study is a few kilobytes; a generated network of
/// 10,000 reactions is a few megabytes).
pub const MAX_FILE_BYTES: usize = super::source::MAX_STUDY_BYTES;

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
    load_str(&text, &super::source::display_name(path), overrides)
}

/// Read a study's text from a path, or from standard input for `-` (see [`super::source`]:
/// one byte cap for every kind of file, a UTF-8 byte-order mark dropped).
pub fn read_text(path: &std::path::Path) -> Result<String, LoadError> {
    super::source::read_study(path)
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
    /// The study under one list of base overrides, set up for points that change only
    /// `reactor.…` fields ([`ParsedStudy::load_reactor_point`]); made on first use.
    reactor_points: std::sync::OnceLock<(Vec<Override>, Option<std::sync::Arc<ReactorPoints>>)>,
}

impl ParsedStudy {
    /// Parse `text` (errors name `file`).
    pub fn new(text: String, file: String) -> Result<ParsedStudy, LoadError> {
        let tree = parse_text(&text, &file)?;
        Ok(ParsedStudy {
            text,
            file,
            tree,
            reactor_points: std::sync::OnceLock::new(),
        })
    }

    /// The network with `overrides` applied, validated as [`load_str`] would.
    pub fn load(&self, overrides: &[Override]) -> Result<Network, LoadError> {
        load_parsed(self.tree.clone(), &self.text, &self.file, overrides)
    }

    /// The network with `base` and then `point` applied: the same network, notes and errors
    /// as [`ParsedStudy::load`] of both lists, made faster when every path of `point` lies
    /// under `reactor.` in a study with a single `reactor` (a sweep over the size or the
    /// cooling, an optimiser over the volume): then only the `reactor` section is read
    /// again and the species, feed and reactions are taken from a load of the study under
    /// `base` (they cannot depend on the reactor except through the rate basis, the phase, the
    /// feed temperature and a batch charge's volume, which are compared; a difference builds
    /// them again). Anything that
    /// fails on that path, and any other point, is loaded whole, so errors read the same.
    pub fn load_reactor_point(
        &self,
        base: &[Override],
        point: &[Override],
    ) -> Result<Network, LoadError> {
        let whole = || {
            let mut all = base.to_vec();
            all.extend_from_slice(point);
            self.load(&all)
        };
        if point.is_empty() || !point.iter().all(|o| o.path.starts_with("reactor.")) {
            return whole();
        }
        let (for_base, points) = self.reactor_points.get_or_init(|| {
            (
                base.to_vec(),
                ReactorPoints::new(self, base).map(Into::into),
            )
        });
        match points {
            Some(rp) if for_base.as_slice() == base => rp.load(self, point).or_else(|_| whole()),
            _ => whole(),
        }
    }

    /// The YAML value at a `--set` path after `overrides` (list items by index or by `id`,
    /// as an override resolves them); `Ok(None)` where the file gives no value there.
    pub fn value_at(
        &self,
        overrides: &[Override],
        path: &str,
    ) -> Result<Option<serde_yaml::Value>, String> {
        let mut tree = self.tree.clone();
        for o in overrides {
            apply_override(&mut tree, o)
                .map_err(|m| format!("cannot apply --set {}={}: {m}", o.path, o.value))?;
        }
        let mut cur = &tree;
        for seg in path.split('.') {
            cur = match cur {
                serde_yaml::Value::Mapping(m) => match m.get(seg) {
                    Some(v) => v,
                    None => return Ok(None),
                },
                serde_yaml::Value::Sequence(items) => match find_item(items, seg) {
                    Some(i) => &items[i],
                    None => return Ok(None),
                },
                _ => return Err(format!("`{seg}` is below a scalar")),
            };
        }
        Ok(Some(cur.clone()))
    }
}

/// A study under its base overrides, kept for loading points that change only fields of its
/// single `reactor` section: the raw study as deserialized, the `reactor` subtree (to which a
/// point's overrides are applied), and the species, feed and reactions as built ([`Fixed`]).
#[derive(Debug)]
pub struct ReactorPoints {
    raw: RawStudy,
    reactor: serde_yaml::Value,
    fixed: Fixed,
}

impl ReactorPoints {
    /// `None` when the study under `base` does not load or is not a single `reactor`.
    fn new(parsed: &ParsedStudy, base: &[Override]) -> Option<ReactorPoints> {
        let mut tree = parsed.tree.clone();
        for o in base {
            apply_override(&mut tree, o).ok()?;
        }
        let reactor = tree.get("reactor")?.clone();
        let raw: RawStudy = serde_path_to_error::deserialize(tree).ok()?;
        if raw.train.is_some() || raw.reactor.is_none() {
            return None;
        }
        let cx = Cx::new(&parsed.file, &parsed.text);
        let (_, fixed) = build_sections(&raw, raw.reactor.as_ref(), &cx, Reuse::Record).ok()?;
        Some(ReactorPoints {
            raw,
            reactor,
            fixed: fixed?,
        })
    }

    /// The network at a point whose overrides all lie under `reactor.`: the overrides
    /// applied to the `reactor` subtree (walked from the root as [`apply_override`] walks the
    /// whole tree), the section deserialized, the network built with the fixed sections.
    fn load(&self, parsed: &ParsedStudy, point: &[Override]) -> Result<Network, LoadError> {
        let failed = || LoadError {
            file: parsed.file.clone(),
            position: None,
            field: String::new(),
            message: String::new(),
            hint: None,
        };
        let mut root = serde_yaml::Mapping::with_capacity(1);
        root.insert("reactor".into(), self.reactor.clone());
        let mut root = serde_yaml::Value::Mapping(root);
        for o in point {
            apply_override(&mut root, o).map_err(|_| failed())?;
        }
        let tree = match root {
            serde_yaml::Value::Mapping(mut m) => m.remove("reactor").ok_or_else(failed)?,
            _ => return Err(failed()),
        };
        let reactor: RawReactor = serde_path_to_error::deserialize(tree).map_err(|_| failed())?;
        let cx = Cx::new(&parsed.file, &parsed.text);
        build_sections(&self.raw, Some(&reactor), &cx, Reuse::From(&self.fixed)).map(|(n, _)| n)
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
    build(&raw, &cx)
}

/// The list item a path segment names: by its index from 0, or (reactions, train units) by
/// its `id`; `None` past the end or for an id no item has.
pub(crate) fn find_item(items: &[serde_yaml::Value], seg: &str) -> Option<usize> {
    match seg.parse::<usize>() {
        Ok(i) => (i < items.len()).then_some(i),
        Err(_) => items
            .iter()
            .position(|it| it.get("id").and_then(|v| v.as_str()) == Some(seg)),
    }
}

/// Whether `text` is a quantity written as a number and a unit, e.g. `1.25 L` or
/// `4e-6 m3/(mol*s)`, that the YAML parser would read as that very string: it starts with a
/// digit (so it is no indicator, alias, tag, null or boolean), holds only letters, digits,
/// single inner spaces and `. / * ^ ( ) + -` (none of which ends or comments a plain scalar),
/// and has a space (so the core schema cannot resolve it as an integer or a float, whose forms
/// have none). YAML 1.2 §7.3.3 plain scalars and §10.3 core schema (from memory);
/// `plain_quantities_read_as_the_yaml_parser_reads_them` checks this against `serde_yaml`.
/// A sweep point sets such a value at every point, and the parser costs about 10,000
/// instructions a call.
fn plain_quantity(text: &str) -> bool {
    let b = text.as_bytes();
    b.first().is_some_and(u8::is_ascii_digit)
        && b.len() <= 200
        && b.contains(&b' ')
        && !b.ends_with(b" ")
        && !b.windows(2).any(|w| w == b"  ")
        && b.iter()
            .all(|c| c.is_ascii_alphanumeric() || b" ./*^()+-".contains(c))
}

/// The YAML scalar an override's value text stands for.
fn override_value(text: &str) -> Result<serde_yaml::Value, String> {
    if plain_quantity(text) {
        return Ok(serde_yaml::Value::String(text.to_string()));
    }
    serde_yaml::from_str(text).map_err(|e| {
        format!(
            "the value is not a YAML scalar: {}",
            yaml_wording(&e.to_string())
        )
    })
}

fn apply_override(root: &mut serde_yaml::Value, o: &Override) -> Result<(), String> {
    use serde_yaml::Value;
    let new: Value = override_value(&o.value)?;
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
                let idx = find_item(items, seg).ok_or_else(|| match seg.parse::<usize>() {
                    Ok(i) => format!("index {i} is past the end ({} items)", items.len()),
                    Err(_) => format!("no item with id `{seg}`"),
                })?;
                &mut items[idx]
            }
            _ => return Err(format!("`{seg}` is below a scalar")),
        };
    }
    *cur = new;
    Ok(())
}

/// Loading context: the file's name, its text and the position map, built from the text on
/// the first error (a valid study never needs it, and building it costs about as much as
/// parsing the YAML).
struct Cx<'t> {
    file: String,
    text: &'t str,
    loc: std::cell::OnceCell<Locator>,
    /// Conversions to tell the user about (gauge pressures, mass feeds, rate constants on a
    /// species basis or in partial pressures); they end in [`Network::notes`].
    notes: std::cell::RefCell<Vec<String>>,
}

impl Cx<'_> {
    fn new<'t>(file: &str, text: &'t str) -> Cx<'t> {
        Cx {
            file: file.to_string(),
            text,
            loc: std::cell::OnceCell::new(),
            notes: std::cell::RefCell::new(Vec::new()),
        }
    }

    /// Record a conversion for `check` to show, prefixed with its field.
    fn note(&self, field: &str, text: &str) {
        self.notes.borrow_mut().push(format!("{field}: {text}"));
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
    /// quantity for the message ("a molar flow", "a rate constant"); `example` is a value
    /// with its unit ("2 mol/s").
    fn qty(
        &self,
        field: &str,
        q: &RawQty,
        want: Dim,
        what: &str,
        example: &str,
    ) -> Result<f64, LoadError> {
        let (si, dim) = self.raw_qty(field, q, want, what, example)?;
        if !dim.approx_eq(want) {
            return Err(self.wrong_dimensions(field, q, dim, want, what, example, ""));
        }
        Ok(si)
    }

    /// A quantity in SI with its dimension, not yet checked against `want` (which only
    /// words the message for a bare number). A gauge pressure is noted.
    fn raw_qty(
        &self,
        field: &str,
        q: &RawQty,
        want: Dim,
        what: &str,
        example: &str,
    ) -> Result<(f64, Dim), LoadError> {
        let (si, dim) = match q {
            RawQty::Number(x) => {
                if !want.approx_eq(Dim::NONE) {
                    let unit = unit_text(example);
                    return Err(self.err(
                        field,
                        &format!(
                            "the bare number {x} needs a unit: expected {what} in units such as {unit} ({})",
                            describe(want)
                        ),
                        Some(format!("write it with its unit, e.g. \"{x} {unit}\"")),
                    ));
                }
                (*x, Dim::NONE)
            }
            RawQty::Text(s) => {
                let q = parse_quantity(s).map_err(|e| {
                    self.err(field, &format!("`{s}` is not a valid quantity: {e}"), None)
                })?;
                if let Some(n) = gauge_note(s) {
                    self.note(field, &n);
                }
                (q.si, q.dim)
            }
        };
        if !si.is_finite() {
            return Err(self.err(field, "the value is not a finite number", None));
        }
        Ok((si, dim))
    }

    /// "wrong dimensions for {what}: got kJ (energy), expected kJ/mol (energy per amount)",
    /// in the unit the user wrote; `also` names a second accepted form, if any.
    #[allow(clippy::too_many_arguments)]
    fn wrong_dimensions(
        &self,
        field: &str,
        q: &RawQty,
        got: Dim,
        want: Dim,
        what: &str,
        example: &str,
        also: &str,
    ) -> LoadError {
        let got_unit = match q {
            RawQty::Number(_) => "",
            RawQty::Text(s) => unit_text(s),
        };
        self.err(
            field,
            &format!(
                "wrong dimensions for {what}: {}{also}",
                dimension_mismatch(got_unit, got, unit_text(example), want)
            ),
            Some(format!("e.g. \"{example}\"")),
        )
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

/// What [`build`] may take from an earlier load of the same study instead of building it again.
enum Reuse<'a> {
    /// Build every section.
    Nothing,
    /// Build every section and keep the species and reactions ([`Fixed`]).
    Record,
    /// Take the species, the feed when neither load is of a batch reactor, and the reactions
    /// when they were built with the same rate basis, phase and feed temperature.
    From(&'a Fixed),
}

/// The sections of a study that its `reactor` section cannot change: the species, and the
/// reactions as built (before K_eq from species data) with the rate basis, phase and feed
/// temperature they were built with, each with the notes it recorded. A study whose points
/// differ only in `reactor.…` fields builds them once ([`ReactorPoints`]).
#[derive(Debug)]
struct Fixed {
    species: Vec<Species>,
    index: IndexMap<String, usize>,
    species_notes: Vec<String>,
    reactions: Vec<Reaction>,
    reaction_notes: Vec<String>,
    basis: RateBasis,
    phase: Phase,
    feed_temperature: f64,
    /// The feed as built, its notes, and whether it was built for a batch reactor (whose
    /// charge may depend on the vessel's volume; a flow reactor's feed does not).
    feed: Feed,
    feed_notes: Vec<String>,
    feed_batch: bool,
}

fn build(raw: &RawStudy, cx: &Cx) -> Result<Network, LoadError> {
    build_sections(raw, raw.reactor.as_ref(), cx, Reuse::Nothing).map(|(net, _)| net)
}

/// Build the network from the raw study with `reactor` as its `reactor` section, taking what
/// `reuse` allows from an earlier load; with [`Reuse::Record`], also return the sections a
/// later load may take.
fn build_sections(
    raw: &RawStudy,
    reactor: Option<&RawReactor>,
    cx: &Cx,
    reuse: Reuse,
) -> Result<(Network, Option<Fixed>), LoadError> {
    // --- species
    let notes_before = cx.notes.borrow().len();
    let (species, index) = match &reuse {
        Reuse::From(f) => {
            cx.notes
                .borrow_mut()
                .extend(f.species_notes.iter().cloned());
            (f.species.clone(), f.index.clone())
        }
        _ => build_species(&raw.species, cx)?,
    };
    let species_notes = cx.notes.borrow()[notes_before..].to_vec();
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

    // --- reactor (needed first: it fixes the rate basis); a train's units in order
    let vessels = contacting::vessels(reactor, raw.train.as_ref(), cx)?;
    let reactors = contacting::build_reactors(&vessels, phase, cx)?;
    let reactor = reactors[0].clone();
    let basis = if matches!(reactor, Reactor::Pbr { .. }) {
        RateBasis::CatalystMass
    } else {
        RateBasis::Volume
    };

    // --- feed (temperature needed as the default T_ref). A flow reactor's feed does not depend
    // on the reactor section (a batch charge given as concentrations needs its volume), so a
    // point that changes only the reactor of a flow reactor takes the recorded one.
    let notes_before = cx.notes.borrow().len();
    let feed = match &reuse {
        Reuse::From(f) if !f.feed_batch && !reactor.is_batch() => {
            cx.notes.borrow_mut().extend(f.feed_notes.iter().cloned());
            f.feed.clone()
        }
        _ => build_feed(&raw.feed, "feed", phase, &reactor, &index, &species, cx)?,
    };
    let feed_notes = cx.notes.borrow()[notes_before..].to_vec();
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
    let notes_before = cx.notes.borrow().len();
    let reactions = match &reuse {
        Reuse::From(f)
            if f.basis == basis
                && f.phase == phase
                && f.feed_temperature.to_bits() == feed.temperature.to_bits() =>
        {
            cx.notes
                .borrow_mut()
                .extend(f.reaction_notes.iter().cloned());
            f.reactions.clone()
        }
        _ => build_reactions(raw, &index, basis, phase, feed.temperature, cx)?,
    };
    let reaction_notes = cx.notes.borrow()[notes_before..].to_vec();

    // --- key and desired
    let (key, key_is_default) = match &raw.key {
        Some(k) => (cx.species("key", k, &index)?, false),
        None => (default_key(&reactions, &feed, cx)?, true),
    };
    let desired = match &raw.desired {
        Some(d) => Some(cx.species("desired", d, &index)?),
        None => None,
    };
    let solver = build_solver(raw.solver.as_ref(), &reactor, feed.total(), cx)?;
    let (heat, t_max, contacting, train) = contacting::build_vessels(
        &vessels,
        &reactors,
        &stream::StreamContext {
            phase,
            feed: &feed,
            index: &index,
            species: &species,
        },
        &reactions,
        cx,
    )?;
    debug_assert_eq!(feed.amounts.len(), ns);

    let fixed = matches!(reuse, Reuse::Record).then(|| Fixed {
        species: species.clone(),
        index: index.clone(),
        species_notes,
        reactions: reactions.clone(),
        reaction_notes,
        basis,
        phase,
        feed_temperature: feed.temperature,
        feed: feed.clone(),
        feed_notes,
        feed_batch: reactor.is_batch(),
    });
    let mut net = Network {
        name: raw
            .name
            .clone()
            .unwrap_or_else(|| "unnamed study".to_string()),
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
        heat,
        t_max,
        contacting,
        train,
        notes: Vec::new(),
    };
    equilibrium_from_species(&mut net, cx)?;
    net.notes = cx.notes.take();
    Ok((net, fixed))
}

/// The reactions, in file order, each id once.
fn build_reactions(
    raw: &RawStudy,
    index: &IndexMap<String, usize>,
    basis: RateBasis,
    phase: Phase,
    feed_temperature: f64,
    cx: &Cx,
) -> Result<Vec<Reaction>, LoadError> {
    let mut reactions: Vec<Reaction> = Vec::with_capacity(raw.reactions.len());
    let mut by_id: std::collections::HashMap<String, usize> =
        std::collections::HashMap::with_capacity(raw.reactions.len());
    for (i, rr) in raw.reactions.iter().enumerate() {
        let r = build_reaction(i, rr, index, basis, phase, feed_temperature, cx)?;
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
    Ok(reactions)
}

/// A reversible reaction written without `K_eq` takes K_c(T) from its species' H_f and S
/// (ΔG° = ΔH° − T ΔS° = −R T ln K°; `crate::thermo::ReactionThermo`); its value at T_ref is
/// recorded, and a reaction whose species lack the data is refused, naming what is missing.
fn equilibrium_from_species(net: &mut Network, cx: &Cx) -> Result<(), LoadError> {
    for i in 0..net.reactions.len() {
        let r = &net.reactions[i];
        if !r.rate.equilibrium.as_ref().is_some_and(|e| e.from_species) {
            continue;
        }
        let missing: Vec<String> = r
            .net
            .iter()
            .filter(|&&(j, _)| {
                let t = &net.species[j].thermo;
                t.h_f.is_none() || t.s.is_none()
            })
            .map(|&(j, _)| format!("`{}`", net.species[j].name))
            .collect();
        let ln_k = crate::thermo::ReactionThermo::from_species(net, i).ln_k(r.rate.t_ref);
        match ln_k {
            Some(l) if missing.is_empty() && l.is_finite() => {
                let eq = net.reactions[i]
                    .rate
                    .equilibrium
                    .as_mut()
                    .expect("checked above");
                eq.k_ref = l.exp();
                cx.note(
                    &format!("reactions[{i}]"),
                    &format!(
                        "K_eq of `{}` from its species' H_f and S: K_c = {} (SI) at T_ref = {} K",
                        net.reactions[i].id,
                        messages::significant(l.exp()),
                        messages::significant(net.reactions[i].rate.t_ref)
                    ),
                );
            }
            _ => {
                return Err(cx.err(
                    &format!("reactions[{i}].rate"),
                    &format!(
                        "a reversible reaction (`<=>`) needs `K_eq`, its concentration-based equilibrium constant, or H_f and S of every species it changes{}",
                        if missing.is_empty() {
                            String::new()
                        } else {
                            format!(" (missing for {})", missing.join(", "))
                        }
                    ),
                    Some("e.g. `K_eq: 4.5`, or `H_f: -110.5 kJ/mol` and `S: 197.7 J/(mol*K)` under each species".into()),
                ));
            }
        }
    }
    Ok(())
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

    /// An override value taken for a plain quantity is exactly the YAML value `serde_yaml`
    /// reads from it (the reference parser), and the texts the parser reads otherwise (numbers,
    /// words, nulls, booleans, quoted or commented text, flow collections) are not taken:
    /// hand-picked texts, and 20,000 random ones from the accepted alphabet with the
    /// characters that matter to YAML (`:`, `#`, quotes, brackets, tabs) mixed in.
    #[test]
    fn plain_quantities_read_as_the_yaml_parser_reads_them() {
        let reference = |t: &str| serde_yaml::from_str::<serde_yaml::Value>(t).ok();
        for t in [
            "1 L",
            "1.0049502475123757 L",
            "4e-6 m3/(mol*s)",
            "25 degC",
            "320 K",
            "2 mol/s",
            "1.5 kJ/(kg*K)",
            "0.2 m3/h",
            "100 L",
            "1e5 Pa",
            "1 2",
            "3 - 4",
        ] {
            assert!(plain_quantity(t), "{t}");
            assert_eq!(
                Some(override_value(t).unwrap()),
                reference(t),
                "`{t}` read differently"
            );
        }
        for t in [
            "1", "1.5", "1e5", "0x1F", "-1 L", ".5 L", "~", "null", "true", "", " 1 L", "1 L ",
            "1  L", "1 L # c", "1: L", "1 'L'", "1 [L]", "1\tL", "1 L\n", "1 °C", "inf K",
        ] {
            assert!(!plain_quantity(t), "`{t}` must go through the parser");
        }
        // Half the texts from the accepted characters alone, half with YAML's own mixed in.
        let accepted: Vec<char> = "0123456789 ./*^()+-eEaLxK".chars().collect();
        let mixed: Vec<char> = "0123456789 ./*^()+-eEaLxK:#'\"[]{},&!|>%@`\t"
            .chars()
            .collect();
        let mut rng = crate::random::SplitMix64(16);
        let mut taken = 0;
        for k in 0..20_000 {
            let alphabet = if k % 2 == 0 { &accepted } else { &mixed };
            let len = rng.range(1, 12);
            let mut t: String = (0..len)
                .map(|_| alphabet[rng.range(0, alphabet.len() - 1)])
                .collect();
            if rng.unit() < 0.7 {
                t.insert(0, char::from(b'0' + rng.range(0, 9) as u8));
            }
            if plain_quantity(&t) {
                taken += 1;
                assert_eq!(
                    Some(override_value(&t).unwrap()),
                    reference(&t),
                    "`{t}` read differently"
                );
            }
        }
        assert!(
            taken > 1000,
            "only {taken} random texts exercised the plain path"
        );
    }

    /// Every scalar under `reactor` of a study, as (path, value) with the path as `--set`
    /// writes it.
    fn reactor_leaves(v: &serde_yaml::Value, path: String, out: &mut Vec<(String, String)>) {
        match v {
            serde_yaml::Value::Mapping(m) => {
                for (k, x) in m {
                    if let Some(k) = k.as_str() {
                        reactor_leaves(x, format!("{path}.{k}"), out);
                    }
                }
            }
            serde_yaml::Value::Sequence(items) => {
                for (i, x) in items.iter().enumerate() {
                    reactor_leaves(x, format!("{path}.{i}"), out);
                }
            }
            serde_yaml::Value::String(t) => out.push((path, t.clone())),
            serde_yaml::Value::Number(n) => out.push((path, n.to_string())),
            serde_yaml::Value::Bool(b) => out.push((path, b.to_string())),
            _ => {}
        }
    }

    /// A point that changes only `reactor.…` fields, loaded with the species and reactions of
    /// the base load, gives the same network (every field, notes included) or the same error
    /// as loading the whole study with the point's overrides: for every bundled study and
    /// every scalar under its `reactor`, set to its own value, to 1.37 times its number, to
    /// a negative number and to a word, and for a change of reactor type (a new rate basis).
    #[test]
    fn reactor_points_load_as_the_whole_study() {
        let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/networks");
        let mut files: Vec<_> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| p.extension().is_some_and(|e| e == "yaml"))
            .collect();
        files.sort();
        let (mut compared, mut reused) = (0, 0);
        for path in files {
            let text = std::fs::read_to_string(&path).unwrap();
            let parsed = ParsedStudy::new(text, path.display().to_string()).unwrap();
            let Some(reactor) = parsed.tree.get("reactor") else {
                continue;
            };
            let mut leaves = Vec::new();
            reactor_leaves(reactor, "reactor".into(), &mut leaves);
            let base: Vec<Override> = vec!["solver.rtol=1e-7".parse().unwrap()];
            let mut points: Vec<Vec<Override>> = vec![
                vec!["reactor.type=pbr".parse().unwrap()],
                vec!["reactor.type=cstr".parse().unwrap()],
                vec!["reactor.no_such_field=1".parse().unwrap()],
            ];
            for (p, v) in &leaves {
                let num_end = v
                    .find(|c: char| !(c.is_ascii_digit() || "+-.eE".contains(c)))
                    .unwrap_or(v.len());
                let mut values = vec![v.clone(), "-2".to_string(), "many".to_string()];
                if let Ok(x) = v[..num_end].parse::<f64>() {
                    values.push(format!("{}{}", x * 1.37, &v[num_end..]));
                }
                for value in values {
                    points.push(vec![Override {
                        path: p.clone(),
                        value,
                    }]);
                }
            }
            if leaves.len() >= 2 {
                let (a, b) = (&leaves[0], &leaves[leaves.len() - 1]);
                points.push(vec![
                    Override {
                        path: a.0.clone(),
                        value: a.1.clone(),
                    },
                    Override {
                        path: b.0.clone(),
                        value: b.1.clone(),
                    },
                ]);
            }
            for point in points {
                let mut all = base.clone();
                all.extend(point.iter().cloned());
                let whole = parsed.load(&all).map(|n| format!("{n:?}"));
                let fast = parsed
                    .load_reactor_point(&base, &point)
                    .map(|n| format!("{n:?}"));
                assert_eq!(whole, fast, "{} with {point:?}", path.display());
                compared += 1;
                // The points were loaded by the reuse itself, not only by its fallback.
                let rp = ReactorPoints::new(&parsed, &base);
                if let Some(Ok(n)) = rp.map(|rp| rp.load(&parsed, &point)) {
                    assert_eq!(fast, Ok(format!("{n:?}")));
                    reused += 1;
                }
            }
        }
        assert!(compared > 50, "{compared} points compared");
        assert!(
            reused > 30,
            "{reused} of {compared} points loaded by the reuse"
        );
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
