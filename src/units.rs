//! Physical quantities: parsing unit strings and converting values to SI.
//!
//! A unit is reduced to a [`Unit`]: an SI factor, a [`Dim`] (exponents over the SI base
//! dimensions kg, m, s, mol, K) and an additive offset, so that
//!
//! ```text
//! value_SI = value * factor + offset
//! ```
//!
//! The offset is non-zero only for the affine units: the temperatures `degC`
//! (T/K = t/°C + 273.15, NIST SP 811 §4.2.1.1) and `degF` (T/K = (t/°F + 459.67)/1.8,
//! NIST SP 811 App. B.9), and the gauge pressures `barg` and `psig` (absolute = gauge + one
//! standard atmosphere, 101 325 Pa). An affine unit is only accepted alone, as the unit of a
//! plain quantity (`25 degC`, `2 barg`): inside a compound unit (`degF/s`, `mol/(m3*s*barg)`)
//! the offset has no meaning, and the parser refuses it with the unit to use instead.
//!
//! Dimension errors are worded for people with [`describe`] and [`dimension_mismatch`]:
//! "got kJ (energy), expected kJ/mol (energy per amount)", never SI base exponents alone.
//!
//! # Unit grammar
//!
//! ```text
//! product  := power (( '*' | '·' | '/' | <space> ) power)*      evaluated left to right
//! power    := primary ( '^' exponent )?
//! primary  := name digits? | '(' product ')' | '1'
//! exponent := ('+'|'-')? number | '(' ('+'|'-')? number ')'
//! ```
//!
//! * `/` and `*` bind equally and are applied left to right, so `a/b*c` means `(a/b)*c`.
//!   Write `a/(b*c)` to divide by both.
//! * Digits directly after a unit name are a power: `m3` = `m^3`, `mol2/L2` = `mol^2/L^2`;
//!   a following `^` raises that again, so `m3^2` = `m^6`.
//! * Units separated only by a space are multiplied (`kg m2 s^-2`), which is also the form
//!   [`Dim`]'s `Display` writes. After a `/` at the same level this is refused as ambiguous
//!   (`J/mol K` could mean `J/(mol*K)` or `J/mol*K`).
//! * The numeral `1` may stand for a dimensionless factor, as in `1/s`.

use std::fmt;
use thiserror::Error;

/// Molar gas constant R in J/(mol K).
///
/// R = N_A · k, with N_A = 6.022 140 76e23 mol⁻¹ and k = 1.380 649e-23 J/K both exact in the
/// 2019 SI (CODATA 2018), so R = 8.314 462 618 153 24 J/(mol K) exactly; this is the f64
/// nearest to that value.
pub const GAS_CONSTANT: f64 = 8.314_462_618_153_24;

/// Largest magnitude accepted for a single exponent (`^p` or trailing digits).
const MAX_EXPONENT: f64 = 100.0;
/// Deepest parenthesis nesting accepted, so parsing cannot exhaust the stack.
const MAX_DEPTH: usize = 32;
/// Exponents closer than this are treated as equal (and as zero when near 0).
const DIM_TOL: f64 = 1e-9;

/// Physical dimension as exponents over the SI base dimensions used here.
///
/// Exponents are `f64` because fractional ones occur, e.g. the rate constant of a reaction
/// of order 1.5 has dimension (mol m⁻³)^(-0.5) s⁻¹.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Dim {
    pub mass: f64,
    pub length: f64,
    pub time: f64,
    pub amount: f64,
    pub temperature: f64,
}

// `mul`/`div` are the requested inherent names; `std::ops::Mul`/`Div` are implemented too.
#[allow(clippy::should_implement_trait)]
impl Dim {
    /// Dimensionless.
    pub const NONE: Dim = Dim::new(0.0, 0.0, 0.0, 0.0, 0.0);
    /// Mass (kg).
    pub const MASS: Dim = Dim::new(1.0, 0.0, 0.0, 0.0, 0.0);
    /// Length (m).
    pub const LENGTH: Dim = Dim::new(0.0, 1.0, 0.0, 0.0, 0.0);
    /// Time (s).
    pub const TIME: Dim = Dim::new(0.0, 0.0, 1.0, 0.0, 0.0);
    /// Amount of substance (mol).
    pub const AMOUNT: Dim = Dim::new(0.0, 0.0, 0.0, 1.0, 0.0);
    /// Thermodynamic temperature (K).
    pub const TEMPERATURE: Dim = Dim::new(0.0, 0.0, 0.0, 0.0, 1.0);

    const fn new(mass: f64, length: f64, time: f64, amount: f64, temperature: f64) -> Dim {
        Dim {
            mass,
            length,
            time,
            amount,
            temperature,
        }
    }

    /// Dimension of a product: exponents add.
    pub fn mul(self, o: Dim) -> Dim {
        Dim::new(
            self.mass + o.mass,
            self.length + o.length,
            self.time + o.time,
            self.amount + o.amount,
            self.temperature + o.temperature,
        )
    }

    /// Dimension of a quotient: exponents subtract.
    pub fn div(self, o: Dim) -> Dim {
        Dim::new(
            self.mass - o.mass,
            self.length - o.length,
            self.time - o.time,
            self.amount - o.amount,
            self.temperature - o.temperature,
        )
    }

    /// Dimension of a power: exponents are multiplied by `p`.
    pub fn powf(self, p: f64) -> Dim {
        Dim::new(
            self.mass * p,
            self.length * p,
            self.time * p,
            self.amount * p,
            self.temperature * p,
        )
    }

    /// True when every exponent differs by less than 1e-9.
    pub fn approx_eq(self, o: Dim) -> bool {
        self.components()
            .iter()
            .zip(o.components().iter())
            .all(|(a, b)| (a.1 - b.1).abs() < DIM_TOL)
    }

    /// Amount concentration, mol m⁻³.
    pub const fn concentration() -> Dim {
        Dim::new(0.0, -3.0, 0.0, 1.0, 0.0)
    }

    /// Energy, J = kg m² s⁻².
    pub const fn energy() -> Dim {
        Dim::new(1.0, 2.0, -2.0, 0.0, 0.0)
    }

    /// Pressure, Pa = kg m⁻¹ s⁻².
    pub const fn pressure() -> Dim {
        Dim::new(1.0, -1.0, -2.0, 0.0, 0.0)
    }

    /// Volume, m³.
    pub const fn volume() -> Dim {
        Dim::new(0.0, 3.0, 0.0, 0.0, 0.0)
    }

    /// Power, W = kg m² s⁻³.
    const fn power() -> Dim {
        Dim::new(1.0, 2.0, -3.0, 0.0, 0.0)
    }

    /// Force, N = kg m s⁻².
    const fn force() -> Dim {
        Dim::new(1.0, 1.0, -2.0, 0.0, 0.0)
    }

    fn components(self) -> [(&'static str, f64); 5] {
        [
            ("kg", self.mass),
            ("m", self.length),
            ("mol", self.amount),
            ("K", self.temperature),
            ("s", self.time),
        ]
    }

    fn is_finite(self) -> bool {
        self.components().iter().all(|c| c.1.is_finite())
    }
}

impl std::ops::Mul for Dim {
    type Output = Dim;
    fn mul(self, o: Dim) -> Dim {
        Dim::mul(self, o)
    }
}

impl std::ops::Div for Dim {
    type Output = Dim;
    fn div(self, o: Dim) -> Dim {
        Dim::div(self, o)
    }
}

/// Writes an exponent: integers without a decimal point, others in shortest form.
fn fmt_exponent(p: f64) -> String {
    let r = p.round();
    if (p - r).abs() < DIM_TOL && r.abs() < 1e15 {
        format!("{}", r as i64)
    } else {
        format!("{p}")
    }
}

impl fmt::Display for Dim {
    /// Readable SI form: positive exponents first, then negative ones, each group in the
    /// order kg, m, mol, K, s (time last, as in `m3 mol^-1 s^-1`). Positive integer powers
    /// are written as trailing digits (`m3`), others with `^` (`s^-1`, `m^1.5`); a dimensionless value prints as `1`.
    /// The output is accepted back by [`parse_unit`].
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let comps = self.components();
        let mut parts: Vec<String> = Vec::new();
        for positive in [true, false] {
            for (sym, p) in comps {
                if p.abs() < DIM_TOL || (p > 0.0) != positive {
                    continue;
                }
                let is_int = (p - p.round()).abs() < DIM_TOL;
                if (p - 1.0).abs() < DIM_TOL {
                    parts.push(sym.to_string());
                } else if positive && is_int {
                    parts.push(format!("{sym}{}", fmt_exponent(p)));
                } else {
                    parts.push(format!("{sym}^{}", fmt_exponent(p)));
                }
            }
        }
        if parts.is_empty() {
            write!(f, "1")
        } else {
            write!(f, "{}", parts.join(" "))
        }
    }
}

/// A unit reduced to SI: `si = value * factor + offset`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Unit {
    pub factor: f64,
    pub dim: Dim,
    pub offset: f64,
}

/// A value in SI base units with its dimension.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Quantity {
    pub si: f64,
    pub dim: Dim,
}

/// Errors from [`parse_unit`] and [`parse_quantity`]. Columns count characters from 1.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum UnitError {
    #[error(
        "empty unit or quantity; expected e.g. `320 K`, `4.0e-3 m3/(mol*s)`, `25 degC` or a bare number such as `12` (dimensionless)"
    )]
    Empty,
    #[error(
        "`{text}` is not a finite number; values must be finite (NaN and infinity are rejected)"
    )]
    NotFinite { text: String },
    #[error(
        "quantity `{text}` must start with a number (e.g. `2.5`, `-120`, `4.0e-3`) followed by an optional unit"
    )]
    MissingNumber { text: String },
    #[error("unknown unit `{name}` in `{input}`{}. Known units: {known}",
        suggestion_text(.suggestion), known = known_units())]
    UnknownUnit {
        name: String,
        input: String,
        suggestion: Option<String>,
    },
    #[error(
        "unexpected character `{ch}` at column {col} in unit `{input}`; a unit is built from unit names, `*` or `·`, `/`, parentheses, `^` powers and the numeral 1"
    )]
    UnexpectedChar { ch: char, col: usize, input: String },
    #[error("expected {expected} at column {col} in unit `{input}`, found {found}")]
    Expected {
        expected: &'static str,
        found: String,
        col: usize,
        input: String,
    },
    #[error("`(` at column {col} in unit `{input}` is never closed; add a matching `)`")]
    UnclosedParen { col: usize, input: String },
    #[error("`)` at column {col} in unit `{input}` has no matching `(`")]
    UnmatchedParen { col: usize, input: String },
    #[error(
        "ambiguous unit `{input}`: the unit at column {col} follows a `/` without an operator; write `a/(b*c)` to divide by both or `a/b*c` to multiply by c"
    )]
    AmbiguousDivision { col: usize, input: String },
    #[error("exponent `{text}` at column {col} in unit `{input}` is not accepted: {reason}")]
    BadExponent {
        text: String,
        col: usize,
        input: String,
        reason: &'static str,
    },
    #[error(
        "numeral `{text}` at column {col} in unit `{input}`: only the numeral 1 may stand in a unit (as in `1/s`); put other numbers in the value"
    )]
    BadNumeral {
        text: String,
        col: usize,
        input: String,
    },
    #[error(
        "`{name}` in `{input}`: {name} has an offset ({relation}) and is only accepted alone, e.g. `{example}`; {advice}"
    )]
    AffineCombined {
        name: String,
        input: String,
        relation: &'static str,
        example: &'static str,
        advice: &'static str,
    },
    #[error("unit `{input}` overflows: its SI factor or dimension exponents are not finite")]
    Overflow { input: String },
    #[error("unit `{input}` nests parentheses deeper than {MAX_DEPTH} levels")]
    TooDeep { input: String },
    #[error("quantity `{text}` is not finite once converted to SI")]
    ValueOverflow { text: String },
}

fn suggestion_text(s: &Option<String>) -> String {
    match s.as_deref() {
        Some(s @ ("degC" | "degF")) => format!(
            "; did you mean `{s}`? (temperatures on the {} scale are written `{s}`, e.g. `37 {s}`)",
            if s == "degC" { "Celsius" } else { "Fahrenheit" }
        ),
        Some(s) => format!("; did you mean `{s}`?"),
        None => String::new(),
    }
}

struct UnitDef {
    name: &'static str,
    factor: f64,
    dim: Dim,
}

const fn def(name: &'static str, factor: f64, dim: Dim) -> UnitDef {
    UnitDef { name, factor, dim }
}

/// Pound-force per square inch in Pa from exact definitions: lb = 0.453 592 37 kg,
/// g_n = 9.806 65 m s⁻², in = 0.0254 m (NIST SP 811 App. B.8 lists 6.894 757 E+03).
const PSI: f64 = 0.453_592_37 * 9.806_65 / (0.0254 * 0.0254);
/// Thermochemical calorie, exactly 4.184 J (NIST SP 811 App. B.8).
const CAL_TH: f64 = 4.184;
/// Pound (avoirdupois), exactly 0.453 592 37 kg (NIST SP 811 App. B.8).
const LB: f64 = 0.453_592_37;
/// Foot, exactly 0.3048 m (NIST SP 811 App. B.8).
const FT: f64 = 0.3048;
/// US liquid gallon, exactly 231 in³ = 3.785 411 784e-3 m³ (NIST SP 811 App. B.8 lists
/// 3.785 412 E-03).
const GAL_US: f64 = 3.785_411_784e-3;
/// Standard atmosphere, exactly 101 325 Pa (NIST SP 811 App. B.8): the atmosphere added to a
/// gauge reading (`barg`, `psig`) to give the absolute pressure.
pub const STANDARD_ATMOSPHERE: f64 = 101_325.0;
/// Torr, exactly 101 325/760 Pa (NIST SP 811 App. B.8 lists 1.333 224 E+02).
const TORR: f64 = STANDARD_ATMOSPHERE / 760.0;
/// Conventional millimetre of mercury, 13.5951 g/cm³ × 9.806 65 m/s² × 1 mm
/// = 133.322 387 415 Pa (NIST SP 811 App. B.8 lists 1.333 224 E+02).
const MMHG: f64 = 13_595.1 * 9.806_65 * 1e-3;
/// Kelvin per degree Rankine or Fahrenheit: T/K = (T/°R)/1.8 (NIST SP 811 App. B.9).
const PER_RANKINE: f64 = 1.0 / 1.8;

/// Known units. Factors are exact by definition; see NIST SP 811 App. B.8 and the SI
/// prefixes (SP 811 Table 5). `degC` is handled separately because of its offset.
const UNITS: &[UnitDef] = &[
    def("mol", 1.0, Dim::AMOUNT),
    def("kmol", 1e3, Dim::AMOUNT),
    def("mmol", 1e-3, Dim::AMOUNT),
    def("s", 1.0, Dim::TIME),
    def("min", 60.0, Dim::TIME),
    def("h", 3600.0, Dim::TIME),
    def("hr", 3600.0, Dim::TIME),
    def("m", 1.0, Dim::LENGTH),
    def("km", 1e3, Dim::LENGTH),
    def("dm", 1e-1, Dim::LENGTH),
    def("cm", 1e-2, Dim::LENGTH),
    def("mm", 1e-3, Dim::LENGTH),
    def("ft", FT, Dim::LENGTH),
    def("L", 1e-3, Dim::volume()),
    def("l", 1e-3, Dim::volume()),
    def("mL", 1e-6, Dim::volume()),
    def("ml", 1e-6, Dim::volume()),
    def("gal", GAL_US, Dim::volume()),
    def("kg", 1.0, Dim::MASS),
    def("g", 1e-3, Dim::MASS),
    def("lb", LB, Dim::MASS),
    // Pound-mole: the amount whose mass in pounds equals the molar mass in g/mol, i.e.
    // 453.592 37 mol (common practice; lb from NIST SP 811 App. B.8).
    def("lbmol", LB * 1e3, Dim::AMOUNT),
    def("K", 1.0, Dim::TEMPERATURE),
    def("degR", PER_RANKINE, Dim::TEMPERATURE),
    def("°R", PER_RANKINE, Dim::TEMPERATURE),
    def("Pa", 1.0, Dim::pressure()),
    def("kPa", 1e3, Dim::pressure()),
    def("MPa", 1e6, Dim::pressure()),
    def("bar", 1e5, Dim::pressure()),
    def("bara", 1e5, Dim::pressure()),
    def("mbar", 1e2, Dim::pressure()),
    def("atm", 101_325.0, Dim::pressure()),
    def("psi", PSI, Dim::pressure()),
    def("psia", PSI, Dim::pressure()),
    def("torr", TORR, Dim::pressure()),
    def("Torr", TORR, Dim::pressure()),
    def("mmHg", MMHG, Dim::pressure()),
    def("J", 1.0, Dim::energy()),
    def("kJ", 1e3, Dim::energy()),
    def("MJ", 1e6, Dim::energy()),
    def("cal", CAL_TH, Dim::energy()),
    def("kcal", 1e3 * CAL_TH, Dim::energy()),
    def("W", 1.0, Dim::power()),
    def("kW", 1e3, Dim::power()),
    def("N", 1.0, Dim::force()),
];

/// A unit with an offset: `si = value * factor + offset`. Accepted only alone.
struct AffineDef {
    name: &'static str,
    factor: f64,
    offset: f64,
    dim: Dim,
    /// The conversion in words, for messages.
    relation: &'static str,
    example: &'static str,
    /// What to write instead inside a compound unit.
    advice: &'static str,
}

const CELSIUS_RELATION: &str = "T/K = t/°C + 273.15";
const CELSIUS_ADVICE: &str = "use K for temperature differences and rates such as `K/min`";
const FAHRENHEIT_RELATION: &str = "T/K = (t/°F + 459.67)/1.8";
const FAHRENHEIT_ADVICE: &str =
    "use degR (or K) for temperature differences and rates such as `degR/min`";
const GAUGE_RELATION: &str = "absolute = gauge + 101325 Pa, the standard atmosphere";

/// Affine units. Celsius: T/K = t/°C + 273.15 (NIST SP 811 §4.2.1.1); Fahrenheit:
/// T/K = (t/°F + 459.67)/1.8 (NIST SP 811 App. B.9); gauge pressure: absolute = gauge + one
/// standard atmosphere (101 325 Pa, NIST SP 811 App. B.8), the usual reference of a gauge.
const AFFINE: &[AffineDef] = &[
    AffineDef {
        name: "degC",
        factor: 1.0,
        offset: 273.15,
        dim: Dim::TEMPERATURE,
        relation: CELSIUS_RELATION,
        example: "25 degC",
        advice: CELSIUS_ADVICE,
    },
    AffineDef {
        name: "°C",
        factor: 1.0,
        offset: 273.15,
        dim: Dim::TEMPERATURE,
        relation: CELSIUS_RELATION,
        example: "25 °C",
        advice: CELSIUS_ADVICE,
    },
    AffineDef {
        name: "degF",
        factor: PER_RANKINE,
        offset: 459.67 * PER_RANKINE,
        dim: Dim::TEMPERATURE,
        relation: FAHRENHEIT_RELATION,
        example: "100 degF",
        advice: FAHRENHEIT_ADVICE,
    },
    AffineDef {
        name: "°F",
        factor: PER_RANKINE,
        offset: 459.67 * PER_RANKINE,
        dim: Dim::TEMPERATURE,
        relation: FAHRENHEIT_RELATION,
        example: "100 °F",
        advice: FAHRENHEIT_ADVICE,
    },
    AffineDef {
        name: "barg",
        factor: 1e5,
        offset: STANDARD_ATMOSPHERE,
        dim: Dim::pressure(),
        relation: GAUGE_RELATION,
        example: "2 barg",
        advice: "inside a compound unit write the absolute `bar`, e.g. `mol/(m3*s*bar)`",
    },
    AffineDef {
        name: "psig",
        factor: PSI,
        offset: STANDARD_ATMOSPHERE,
        dim: Dim::pressure(),
        relation: GAUGE_RELATION,
        example: "30 psig",
        advice: "inside a compound unit write the absolute `psi`",
    },
];

fn affine(name: &str) -> Option<&'static AffineDef> {
    AFFINE.iter().find(|a| a.name == name)
}

/// Whether `unit` is a gauge-pressure unit (`barg`, `psig`): its reading is converted to an
/// absolute pressure by adding one standard atmosphere, [`STANDARD_ATMOSPHERE`].
pub fn is_gauge(unit: &str) -> bool {
    matches!(unit.trim(), "barg" | "psig")
}

/// For a quantity given in a gauge unit, the sentence saying how it was converted, e.g.
/// "`2 barg` is a gauge reading: absolute pressure = 2e5 Pa + 101325 Pa (standard atmosphere)
/// = 301325 Pa"; `None` for any other quantity (including text that does not parse).
pub fn gauge_note(text: &str) -> Option<String> {
    let t = text.trim();
    let n = number_prefix_len(t);
    if n == 0 || !is_gauge(&t[n..]) {
        return None;
    }
    let q = parse_quantity(t).ok()?;
    let gauge = q.si - STANDARD_ATMOSPHERE;
    Some(format!(
        "`{t}` is a gauge reading: absolute pressure = {} Pa + {} Pa (standard atmosphere) = {} Pa",
        format_number(gauge),
        format_number(STANDARD_ATMOSPHERE),
        format_number(q.si)
    ))
}

fn known_units() -> String {
    let mut names: Vec<String> = UNITS.iter().map(|u| u.name.to_string()).collect();
    names.extend(
        AFFINE
            .iter()
            .filter(|a| a.name.is_ascii())
            .map(|a| format!("{} (alone)", a.name)),
    );
    names.join(", ")
}

/// Names people write for a unit this parser spells differently: (written, meant).
/// `C` and `F` alone would be the coulomb and the farad, which no study uses; a temperature
/// is meant.
const MISSPELLINGS: &[(&str, &str)] = &[
    ("C", "degC"),
    ("oC", "degC"),
    ("Celsius", "degC"),
    ("F", "degF"),
    ("oF", "degF"),
    ("Fahrenheit", "degF"),
    ("R", "degR"),
    ("Rankine", "degR"),
    ("degK", "K"),
    ("°K", "K"),
    ("lbm", "lb"),
    ("lbs", "lb"),
    ("kgmol", "kmol"),
    ("gallon", "gal"),
    ("feet", "ft"),
    ("hrs", "hr"),
];

/// Levenshtein distance over chars (inputs are short unit names).
fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.iter().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let cost = usize::from(ca != cb);
            cur[j + 1] = (prev[j] + cost).min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// A close known unit name: same letters ignoring case first, else the nearest name within
/// two edits (and fewer edits than the name has characters).
fn suggest_unit(name: &str) -> Option<String> {
    if let Some((_, meant)) = MISSPELLINGS.iter().find(|(w, _)| *w == name) {
        return Some(meant.to_string());
    }
    let all = UNITS
        .iter()
        .map(|u| u.name)
        .chain(AFFINE.iter().map(|a| a.name));
    if let Some(hit) = all
        .clone()
        .find(|k| k.to_lowercase() == name.to_lowercase())
    {
        return Some(hit.to_string());
    }
    let len = name.chars().count();
    all.map(|k| (edit_distance(name, k), k))
        .filter(|(d, _)| *d <= 2 && *d < len)
        .min_by_key(|(d, _)| *d)
        .map(|(_, k)| k.to_string())
}

#[derive(Debug, Clone, PartialEq)]
enum Tok {
    /// Unit name with optional trailing power digits.
    Name(String, Option<String>),
    Num(String),
    Times,
    Slash,
    Open,
    Close,
    Caret,
    Plus,
    Minus,
}

#[derive(Debug, Clone)]
struct Token {
    tok: Tok,
    col: usize,
    text: String,
}

fn is_name_char(c: char) -> bool {
    c.is_alphabetic() || c == '°' || c == 'µ'
}

fn tokenize(input: &str) -> Result<Vec<Token>, UnitError> {
    let chars: Vec<char> = input.chars().collect();
    let mut out = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        let c = chars[i];
        let col = i + 1;
        if c.is_whitespace() {
            i += 1;
            continue;
        }
        let single = match c {
            '*' | '·' | '⋅' => Some(Tok::Times),
            '/' => Some(Tok::Slash),
            '(' => Some(Tok::Open),
            ')' => Some(Tok::Close),
            '^' => Some(Tok::Caret),
            '+' => Some(Tok::Plus),
            '-' | '−' => Some(Tok::Minus),
            _ => None,
        };
        if let Some(tok) = single {
            out.push(Token {
                tok,
                col,
                text: c.to_string(),
            });
            i += 1;
        } else if is_name_char(c) {
            let start = i;
            while i < chars.len() && is_name_char(chars[i]) {
                i += 1;
            }
            let name: String = chars[start..i].iter().collect();
            let dstart = i;
            while i < chars.len() && chars[i].is_ascii_digit() {
                i += 1;
            }
            let digits: String = chars[dstart..i].iter().collect();
            let power = (!digits.is_empty()).then_some(digits);
            out.push(Token {
                tok: Tok::Name(name, power),
                col,
                text: chars[start..i].iter().collect(),
            });
        } else if c.is_ascii_digit() || c == '.' {
            let start = i;
            while i < chars.len() && (chars[i].is_ascii_digit() || chars[i] == '.') {
                i += 1;
            }
            let text: String = chars[start..i].iter().collect();
            out.push(Token {
                tok: Tok::Num(text.clone()),
                col,
                text,
            });
        } else {
            return Err(UnitError::UnexpectedChar {
                ch: c,
                col,
                input: input.to_string(),
            });
        }
    }
    Ok(out)
}

/// Factor and dimension of a (sub)expression; offsets never occur inside expressions.
type Fd = (f64, Dim);

struct Parser<'a> {
    toks: Vec<Token>,
    pos: usize,
    input: &'a str,
    /// Column just past the end, for errors at end of input.
    end_col: usize,
}

impl Parser<'_> {
    fn peek(&self) -> Option<&Token> {
        self.toks.get(self.pos)
    }

    fn expected(&self, expected: &'static str) -> UnitError {
        let (found, col) = match self.peek() {
            Some(t) => (format!("`{}`", t.text), t.col),
            None => ("end of input".to_string(), self.end_col),
        };
        UnitError::Expected {
            expected,
            found,
            col,
            input: self.input.to_string(),
        }
    }

    fn check(&self, fd: Fd) -> Result<Fd, UnitError> {
        if fd.0.is_finite() && fd.0 > 0.0 && fd.1.is_finite() {
            Ok(fd)
        } else {
            Err(UnitError::Overflow {
                input: self.input.to_string(),
            })
        }
    }

    fn product(&mut self, depth: usize) -> Result<Fd, UnitError> {
        let mut acc = self.power(depth)?;
        let mut after_slash = false;
        while let Some(t) = self.peek() {
            match t.tok {
                Tok::Times => {
                    self.pos += 1;
                    let r = self.power(depth)?;
                    acc = (acc.0 * r.0, acc.1.mul(r.1));
                }
                Tok::Slash => {
                    self.pos += 1;
                    let r = self.power(depth)?;
                    acc = (acc.0 / r.0, acc.1.div(r.1));
                    after_slash = true;
                }
                Tok::Name(..) | Tok::Open | Tok::Num(_) => {
                    if after_slash {
                        return Err(UnitError::AmbiguousDivision {
                            col: t.col,
                            input: self.input.to_string(),
                        });
                    }
                    let r = self.power(depth)?;
                    acc = (acc.0 * r.0, acc.1.mul(r.1));
                }
                _ => break,
            }
            acc = self.check(acc)?;
        }
        Ok(acc)
    }

    fn power(&mut self, depth: usize) -> Result<Fd, UnitError> {
        let base = self.primary(depth)?;
        if matches!(
            self.peek(),
            Some(Token {
                tok: Tok::Caret,
                ..
            })
        ) {
            self.pos += 1;
            let p = self.exponent()?;
            return self.raise(base, p);
        }
        Ok(base)
    }

    fn raise(&self, base: Fd, p: f64) -> Result<Fd, UnitError> {
        let factor = if p.fract() == 0.0 {
            // |p| <= MAX_EXPONENT, so the cast is exact; powi is more accurate here.
            base.0.powi(p as i32)
        } else {
            base.0.powf(p)
        };
        self.check((factor, base.1.powf(p)))
    }

    fn exponent(&mut self) -> Result<f64, UnitError> {
        let paren = matches!(self.peek(), Some(Token { tok: Tok::Open, .. }));
        if paren {
            self.pos += 1;
        }
        let mut sign = 1.0;
        let mut sign_text = "";
        match self.peek().map(|t| &t.tok) {
            Some(Tok::Minus) => {
                sign = -1.0;
                sign_text = "-";
                self.pos += 1;
            }
            Some(Tok::Plus) => {
                sign_text = "+";
                self.pos += 1;
            }
            _ => {}
        }
        let Some(Token {
            tok: Tok::Num(text),
            col,
            ..
        }) = self.peek().cloned()
        else {
            return Err(self.expected("a number as exponent (e.g. `^2`, `^-1`, `^(-0.5)`)"));
        };
        self.pos += 1;
        let full = format!("{sign_text}{text}");
        let value = match text.parse::<f64>() {
            Ok(v) if v.is_finite() => sign * v,
            _ => {
                return Err(UnitError::BadExponent {
                    text: full,
                    col,
                    input: self.input.to_string(),
                    reason: "it is not a number (write e.g. `2`, `-1` or `1.5`)",
                });
            }
        };
        if value.abs() > MAX_EXPONENT {
            return Err(UnitError::BadExponent {
                text: full,
                col,
                input: self.input.to_string(),
                reason: "exponents must lie between -100 and 100",
            });
        }
        if paren {
            match self.peek() {
                Some(Token {
                    tok: Tok::Close, ..
                }) => self.pos += 1,
                _ => return Err(self.expected("`)` closing the exponent")),
            }
        }
        Ok(value)
    }

    fn primary(&mut self, depth: usize) -> Result<Fd, UnitError> {
        let Some(t) = self.peek().cloned() else {
            return Err(self.expected("a unit name, `(` or `1`"));
        };
        match t.tok {
            Tok::Name(name, power) => {
                self.pos += 1;
                let base = self.lookup(&name)?;
                match power {
                    None => Ok(base),
                    Some(digits) => {
                        let p = match digits.parse::<u32>() {
                            Ok(p) if f64::from(p) <= MAX_EXPONENT && p > 0 => f64::from(p),
                            Ok(0) => {
                                return Err(UnitError::BadExponent {
                                    text: digits,
                                    col: t.col + name.chars().count(),
                                    input: self.input.to_string(),
                                    reason: "a zero power after a unit name is almost surely a typo; drop the unit instead",
                                });
                            }
                            _ => {
                                return Err(UnitError::BadExponent {
                                    text: digits,
                                    col: t.col + name.chars().count(),
                                    input: self.input.to_string(),
                                    reason: "exponents must lie between -100 and 100",
                                });
                            }
                        };
                        self.raise(base, p)
                    }
                }
            }
            Tok::Open => {
                if depth >= MAX_DEPTH {
                    return Err(UnitError::TooDeep {
                        input: self.input.to_string(),
                    });
                }
                self.pos += 1;
                let inner = self.product(depth + 1)?;
                match self.peek() {
                    Some(Token {
                        tok: Tok::Close, ..
                    }) => {
                        self.pos += 1;
                        Ok(inner)
                    }
                    None => Err(UnitError::UnclosedParen {
                        col: t.col,
                        input: self.input.to_string(),
                    }),
                    Some(_) => Err(self.expected("an operator or `)`")),
                }
            }
            Tok::Num(text) => {
                if text.parse::<f64>() == Ok(1.0) {
                    self.pos += 1;
                    Ok((1.0, Dim::NONE))
                } else {
                    Err(UnitError::BadNumeral {
                        text,
                        col: t.col,
                        input: self.input.to_string(),
                    })
                }
            }
            _ => Err(self.expected("a unit name, `(` or `1`")),
        }
    }

    fn lookup(&self, name: &str) -> Result<Fd, UnitError> {
        if let Some(a) = affine(name) {
            return Err(UnitError::AffineCombined {
                name: a.name.to_string(),
                input: self.input.to_string(),
                relation: a.relation,
                example: a.example,
                advice: a.advice,
            });
        }
        match UNITS.iter().find(|u| u.name == name) {
            Some(u) => Ok((u.factor, u.dim)),
            None => Err(UnitError::UnknownUnit {
                name: name.to_string(),
                input: self.input.to_string(),
                suggestion: suggest_unit(name),
            }),
        }
    }
}

/// Parses a unit string into its SI factor, dimension and offset (see the module docs for
/// the grammar). `a/b*c` is read left to right as `(a/b)*c`.
///
/// Examples: `L/(mol*s)` → factor 1e-3, dimension m³ mol⁻¹ s⁻¹; `degC` → factor 1,
/// offset 273.15, dimension K.
pub fn parse_unit(s: &str) -> Result<Unit, UnitError> {
    // A sweep or an optimiser loads the same study thousands of times, with the same handful of
    // unit strings; parsing is pure, so successful results are remembered per thread (a small,
    // bounded table: a hostile file cannot grow it past UNIT_CACHE_SIZE entries).
    thread_local! {
        static CACHE: std::cell::RefCell<std::collections::HashMap<String, Unit>> =
            std::cell::RefCell::new(std::collections::HashMap::new());
    }
    if s.len() <= 64
        && let Some(u) = CACHE.with(|c| c.borrow().get(s).copied())
    {
        return Ok(u);
    }
    let u = parse_unit_uncached(s)?;
    if s.len() <= 64 {
        CACHE.with(|c| {
            let mut c = c.borrow_mut();
            if c.len() < UNIT_CACHE_SIZE {
                c.insert(s.to_string(), u);
            }
        });
    }
    Ok(u)
}

/// Most unit strings remembered per thread by [`parse_unit`].
const UNIT_CACHE_SIZE: usize = 256;

fn parse_unit_uncached(s: &str) -> Result<Unit, UnitError> {
    let trimmed = s.trim();
    if trimmed.is_empty() {
        return Err(UnitError::Empty);
    }
    if let Some(a) = affine(trimmed) {
        return Ok(Unit {
            factor: a.factor,
            dim: a.dim,
            offset: a.offset,
        });
    }
    let toks = tokenize(trimmed)?;
    let mut p = Parser {
        toks,
        pos: 0,
        input: trimmed,
        end_col: trimmed.chars().count() + 1,
    };
    let (factor, dim) = p.product(0)?;
    if let Some(t) = p.peek() {
        return Err(match t.tok {
            Tok::Close => UnitError::UnmatchedParen {
                col: t.col,
                input: trimmed.to_string(),
            },
            _ => p.expected("`*`, `/` or the end of the unit"),
        });
    }
    Ok(Unit {
        factor,
        dim,
        offset: 0.0,
    })
}

/// Length in bytes of the leading decimal number of `s` (sign, digits, optional fraction,
/// optional exponent with at least one digit), or 0 when there is none.
fn number_prefix_len(s: &str) -> usize {
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let mut digits = 0;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
        digits += 1;
    }
    if i < b.len() && b[i] == b'.' {
        i += 1;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
            digits += 1;
        }
    }
    if digits == 0 {
        return 0;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        let exp_start = j;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        if j > exp_start {
            i = j;
        }
    }
    i
}

/// Parses a number with an optional unit and converts it to SI:
/// `si = value * factor + offset`.
///
/// Examples: `"4.0e-3 m3/(mol*s)"` → 4.0e-6 m³ mol⁻¹ s⁻¹, `"25 degC"` → 298.15 K,
/// `"-120 kJ/mol"` → -1.2e5 J/mol, `"12"` → 12 (dimensionless).
pub fn parse_quantity(s: &str) -> Result<Quantity, UnitError> {
    let text = s.trim();
    if text.is_empty() {
        return Err(UnitError::Empty);
    }
    let unsigned = text.trim_start_matches(['+', '-']).to_ascii_lowercase();
    if unsigned.starts_with("nan") || unsigned.starts_with("inf") {
        return Err(UnitError::NotFinite {
            text: text.to_string(),
        });
    }
    let n = number_prefix_len(text);
    if n == 0 {
        return Err(UnitError::MissingNumber {
            text: text.to_string(),
        });
    }
    let num_text = &text[..n];
    let value: f64 = num_text.parse().map_err(|_| UnitError::MissingNumber {
        text: text.to_string(),
    })?;
    if !value.is_finite() {
        return Err(UnitError::NotFinite {
            text: num_text.to_string(),
        });
    }
    let rest = text[n..].trim();
    if rest.is_empty() {
        return Ok(Quantity {
            si: value,
            dim: Dim::NONE,
        });
    }
    let unit = parse_unit(rest)?;
    let si = value * unit.factor + unit.offset;
    if !si.is_finite() {
        return Err(UnitError::ValueOverflow {
            text: text.to_string(),
        });
    }
    Ok(Quantity { si, dim: unit.dim })
}

/// Formats a value with 6 significant digits (trailing zeros dropped; scientific notation
/// outside 1e-3 ≤ |v| < 1e6) followed by the SI dimension, e.g. `1.2 m3`,
/// `8.31446 kg m2 s^-2 mol^-1 K^-1`. Dimensionless values print without a unit.
pub fn format_si(value: f64, dim: Dim) -> String {
    let num = format_number(value);
    if dim.approx_eq(Dim::NONE) {
        num
    } else {
        format!("{num} {dim}")
    }
}

/// Named dimensions: (dimension, words, example unit). The first match wins.
fn named_dimensions() -> [(Dim, &'static str, &'static str); 29] {
    let amount_rate = Dim::AMOUNT.div(Dim::TIME);
    [
        (Dim::NONE, "dimensionless", "1"),
        (Dim::MASS, "mass", "kg"),
        (Dim::LENGTH, "length", "m"),
        (Dim::LENGTH.powf(2.0), "area", "m2"),
        (Dim::volume(), "volume", "m3"),
        (Dim::TIME, "time", "s"),
        (Dim::AMOUNT, "amount", "mol"),
        (Dim::TEMPERATURE, "temperature", "K"),
        (Dim::pressure(), "pressure", "bar"),
        (Dim::energy(), "energy", "kJ"),
        (Dim::power(), "power", "kW"),
        (Dim::force(), "force", "N"),
        (
            Dim::concentration(),
            "amount per volume, a concentration",
            "mol/L",
        ),
        (amount_rate, "amount per time, a molar flow", "mol/s"),
        (
            Dim::volume().div(Dim::TIME),
            "volume per time, a volumetric flow",
            "L/min",
        ),
        (
            Dim::MASS.div(Dim::TIME),
            "mass per time, a mass flow",
            "kg/h",
        ),
        (
            Dim::energy().div(Dim::AMOUNT),
            "energy per amount",
            "kJ/mol",
        ),
        (
            Dim::energy().div(Dim::AMOUNT).div(Dim::TEMPERATURE),
            "energy per amount and temperature",
            "J/(mol*K)",
        ),
        (
            Dim::MASS.div(Dim::AMOUNT),
            "mass per amount, a molar mass",
            "g/mol",
        ),
        (
            Dim::MASS.div(Dim::volume()),
            "mass per volume, a density",
            "kg/m3",
        ),
        (Dim::AMOUNT.div(Dim::MASS), "amount per mass", "mol/kg"),
        (
            Dim::TIME.powf(-1.0),
            "per time, a first-order rate constant",
            "1/s",
        ),
        (Dim::MASS.powf(-1.0), "per mass", "1/kg"),
        (Dim::pressure().powf(-1.0), "per pressure", "1/bar"),
        (
            Dim::concentration().powf(-1.0),
            "volume per amount",
            "L/mol",
        ),
        (
            Dim::concentration().div(Dim::TIME),
            "amount per volume and time, a volumetric rate",
            "mol/(m3*s)",
        ),
        (
            amount_rate.div(Dim::MASS),
            "amount per mass and time, a rate per catalyst mass",
            "mol/(kg*s)",
        ),
        (
            Dim::volume().div(Dim::AMOUNT).div(Dim::TIME),
            "volume per amount and time, a second-order rate constant",
            "L/(mol*s)",
        ),
        (
            Dim::pressure().mul(Dim::TIME),
            "pressure times time, a viscosity",
            "Pa*s",
        ),
    ]
}

/// Words for one base dimension raised to `p`.
fn base_words(name: &str, p: f64) -> String {
    match (name, fmt_exponent(p.abs()).as_str()) {
        ("length", "2") => "area".into(),
        ("length", "3") => "volume".into(),
        (n, "1") => n.into(),
        (n, e) => format!("{n}^{e}"),
    }
}

/// The dimension in words, e.g. "energy per amount", "pressure", "amount per volume, a
/// concentration"; a dimension without a common name is spelt out from the base dimensions
/// ("volume^1.5 per amount^0.5 and time"), with pressure factored out where it occurs
/// ("amount per volume and time per pressure^2").
pub fn describe(d: Dim) -> String {
    if let Some((_, words, _)) = named_dimensions().iter().find(|(n, _, _)| n.approx_eq(d)) {
        return (*words).to_string();
    }
    // A rate or constant in partial pressures: d = X / pressure^p with X named.
    for p in 1..=6 {
        let x = d.mul(Dim::pressure().powf(f64::from(p)));
        if let Some((_, words, _)) = named_dimensions().iter().find(|(n, _, _)| n.approx_eq(x)) {
            // Prefer the short name after the comma ("a volumetric rate") when there is one.
            let words = match words.split_once(", ") {
                Some((_, short)) => short.trim_start_matches("a "),
                None => words,
            };
            let sep = if words.contains(" per ") { ", " } else { " " };
            return if p == 1 {
                format!("{words}{sep}per pressure")
            } else {
                format!("{words}{sep}per pressure^{p}")
            };
        }
    }
    let c = [
        ("mass", d.mass),
        ("length", d.length),
        ("amount", d.amount),
        ("temperature", d.temperature),
        ("time", d.time),
    ];
    let up: Vec<String> = c
        .iter()
        .filter(|(_, p)| *p > DIM_TOL)
        .map(|(n, p)| base_words(n, *p))
        .collect();
    let down: Vec<String> = c
        .iter()
        .filter(|(_, p)| *p < -DIM_TOL)
        .map(|(n, p)| base_words(n, *p))
        .collect();
    let join = |v: &[String]| match v.len() {
        0 => String::new(),
        1 => v[0].clone(),
        n => format!("{} and {}", v[..n - 1].join(", "), v[n - 1]),
    };
    match (up.is_empty(), down.is_empty()) {
        (false, true) => join(&up),
        (true, false) => format!("per {}", join(&down)),
        _ => format!("{} per {}", join(&up), join(&down)),
    }
}

/// A unit of dimension `d` a person would write: the example unit of a named dimension
/// (`kJ/mol`), else the SI form of [`Dim`]'s `Display` (`m^1.5 mol^-0.5 s^-1`).
pub fn example_unit(d: Dim) -> String {
    match named_dimensions().iter().find(|(n, _, _)| n.approx_eq(d)) {
        Some((_, _, u)) => (*u).to_string(),
        None => d.to_string(),
    }
}

/// The message for a quantity of the wrong dimension, in the user's units:
/// "got kJ (energy), expected kJ/mol (energy per amount)".
///
/// `got_unit` is the unit as the user wrote it (empty for a bare number); `want_unit` an
/// example unit of the expected dimension as the user would write it (empty: one is chosen
/// with [`example_unit`]).
pub fn dimension_mismatch(got_unit: &str, got: Dim, want_unit: &str, want: Dim) -> String {
    let got_text = if got_unit.trim().is_empty() {
        "a bare number".to_string()
    } else {
        got_unit.trim().to_string()
    };
    let want_text = if want_unit.trim().is_empty() {
        example_unit(want)
    } else {
        want_unit.trim().to_string()
    };
    format!(
        "got {got_text} ({}), expected {want_text} ({})",
        describe(got),
        describe(want)
    )
}

/// The unit part of a quantity as written: `"4 kJ/mol"` → `"kJ/mol"`, `"12"` → `""`.
pub fn unit_text(quantity: &str) -> &str {
    let t = quantity.trim();
    t[number_prefix_len(t)..].trim()
}

fn trim_fraction(s: &str) -> &str {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.')
    } else {
        s
    }
}

fn format_number(v: f64) -> String {
    if !v.is_finite() {
        return format!("{v}");
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let sci = format!("{v:.5e}");
    let (mantissa, exp) = sci.split_once('e').unwrap_or((&sci, "0"));
    let exp: i32 = exp.parse().unwrap_or(0);
    if (-3..6).contains(&exp) {
        let decimals = usize::try_from(5 - exp).unwrap_or(0);
        trim_fraction(&format!("{v:.decimals$}")).to_string()
    } else {
        format!("{}e{exp}", trim_fraction(mantissa))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * a.abs().max(b.abs())
    }

    fn unit(s: &str) -> Unit {
        parse_unit(s).unwrap_or_else(|e| panic!("`{s}` should parse: {e}"))
    }

    fn assert_unit(s: &str, factor: f64, dim: Dim) {
        let u = unit(s);
        assert!(
            close(u.factor, factor, 1e-12),
            "{s}: factor {} != {factor}",
            u.factor
        );
        assert!(u.dim.approx_eq(dim), "{s}: dim {} != {dim}", u.dim);
        assert_eq!(u.offset, 0.0, "{s}: unexpected offset");
    }

    fn dim(mass: f64, length: f64, time: f64, amount: f64, temperature: f64) -> Dim {
        Dim::new(mass, length, time, amount, temperature)
    }

    #[test]
    fn base_and_prefixed_units() {
        // SI base units and SI prefixes, NIST SP 811 §4.1 and Table 5.
        assert_unit("mol", 1.0, Dim::AMOUNT);
        assert_unit("kmol", 1e3, Dim::AMOUNT);
        assert_unit("mmol", 1e-3, Dim::AMOUNT);
        assert_unit("s", 1.0, Dim::TIME);
        assert_unit("m", 1.0, Dim::LENGTH);
        assert_unit("km", 1e3, Dim::LENGTH);
        assert_unit("dm", 1e-1, Dim::LENGTH);
        assert_unit("cm", 1e-2, Dim::LENGTH);
        assert_unit("mm", 1e-3, Dim::LENGTH);
        assert_unit("kg", 1.0, Dim::MASS);
        assert_unit("g", 1e-3, Dim::MASS);
        assert_unit("K", 1.0, Dim::TEMPERATURE);
        assert_unit("kPa", 1e3, Dim::pressure());
        assert_unit("MPa", 1e6, Dim::pressure());
        assert_unit("kJ", 1e3, Dim::energy());
        assert_unit("MJ", 1e6, Dim::energy());
        // Derived units J = kg m2 s-2, Pa = N/m2, W = J/s, NIST SP 811 Table 3.
        assert_unit("J", 1.0, dim(1.0, 2.0, -2.0, 0.0, 0.0));
        assert_unit("Pa", 1.0, dim(1.0, -1.0, -2.0, 0.0, 0.0));
        assert_unit("N/m2", 1.0, Dim::pressure());
        assert_unit("W", 1.0, dim(1.0, 2.0, -3.0, 0.0, 0.0));
        assert_unit("kW", 1e3, unit("J/s").dim);
    }

    #[test]
    fn non_si_factors_nist_sp811() {
        // NIST SP 811 (2008) App. B.8: minute = 6.0 E+01 s, hour = 3.6 E+03 s (exact).
        assert_unit("min", 60.0, Dim::TIME);
        assert_unit("h", 3600.0, Dim::TIME);
        // NIST SP 811 App. B.8: liter = 1.0 E-03 m3 (exact).
        assert_unit("L", 1e-3, Dim::volume());
        assert_unit("l", 1e-3, Dim::volume());
        assert_unit("mL", 1e-6, Dim::volume());
        assert_unit("ml", 1e-6, Dim::volume());
        assert_unit("dm3", 1e-3, Dim::volume());
        assert_unit("cm3", 1e-6, Dim::volume());
        assert_unit("m3", 1.0, Dim::volume());
        assert_unit("m^3", 1.0, Dim::volume());
        // NIST SP 811 App. B.8: atmosphere, standard = 1.013 25 E+05 Pa (exact).
        assert_unit("atm", 101_325.0, Dim::pressure());
        // NIST SP 811 App. B.8: bar = 1.0 E+05 Pa (exact); millibar = 1.0 E+02 Pa.
        assert_unit("bar", 1e5, Dim::pressure());
        assert_unit("mbar", 1e2, Dim::pressure());
        // NIST SP 811 App. B.8: calorie_th = 4.184 J, kilocalorie_th = 4.184 E+03 J (exact).
        assert_unit("cal", 4.184, Dim::energy());
        assert_unit("kcal", 4184.0, Dim::energy());
        // NIST SP 811 App. B.8: pound-force per square inch = 6.894 757 E+03 Pa (7 digits).
        let psi = unit("psi");
        assert!(close(psi.factor, 6.894_757e3, 1e-7), "psi = {}", psi.factor);
        assert!(psi.dim.approx_eq(Dim::pressure()));
        // Same value from its exact definitions (lb = 0.453 592 37 kg, g_n = 9.806 65 m/s2,
        // in = 0.0254 m; NIST SP 811 App. B.8/B.9): 6894.757 293 168 Pa.
        assert!(close(psi.factor, 6_894.757_293_168, 1e-12));
    }

    #[test]
    fn engineering_units_nist_sp811() {
        // Each factor as NIST SP 811 (2008) App. B.8 prints it (7 significant digits), and
        // from the exact definition where there is one.
        // hour = 3.6 E+03 s (exact).
        assert_unit("hr", 3600.0, Dim::TIME);
        // foot = 3.048 E-01 m (exact).
        assert_unit("ft", 0.3048, Dim::LENGTH);
        // cubic foot = 2.831 685 E-02 m3; exactly 0.3048^3 = 0.028 316 846 592.
        let ft3 = unit("ft3");
        assert!(
            close(ft3.factor, 2.831_685e-2, 5e-7),
            "ft3 = {}",
            ft3.factor
        );
        assert_unit("ft3", 0.028_316_846_592, Dim::volume());
        // gallon (U.S.) = 3.785 412 E-03 m3; exactly 231 in3 = 3.785 411 784e-3 m3.
        let gal = unit("gal");
        assert!(
            close(gal.factor, 3.785_412e-3, 5e-7),
            "gal = {}",
            gal.factor
        );
        assert_unit("gal", 231.0 * 0.0254_f64.powi(3), Dim::volume());
        // pound (avoirdupois) = 4.535 924 E-01 kg; exactly 0.453 592 37 kg.
        let lb = unit("lb");
        assert!(close(lb.factor, 4.535_924e-1, 5e-7));
        assert_unit("lb", 0.453_592_37, Dim::MASS);
        // pound-mole = 453.592 37 mol (common practice: lb in g over 1 g/mol).
        assert_unit("lbmol", 453.592_37, Dim::AMOUNT);
        // torr = 1.333 224 E+02 Pa; exactly 101 325/760 Pa.
        let torr = unit("torr");
        assert!(
            close(torr.factor, 1.333_224e2, 5e-7),
            "torr = {}",
            torr.factor
        );
        assert_unit("torr", 101_325.0 / 760.0, Dim::pressure());
        assert_unit("Torr", 101_325.0 / 760.0, Dim::pressure());
        // millimeter of mercury, conventional = 1.333 224 E+02 Pa (133.322 387 415 Pa).
        let mmhg = unit("mmHg");
        assert!(
            close(mmhg.factor, 1.333_224e2, 5e-7),
            "mmHg = {}",
            mmhg.factor
        );
        assert_unit("mmHg", 133.322_387_415, Dim::pressure());
        // psia and bara are the absolute psi and bar.
        assert_unit("psia", unit("psi").factor, Dim::pressure());
        assert_unit("bara", 1e5, Dim::pressure());
        // degree Rankine: T/K = (T/°R)/1.8 (NIST SP 811 App. B.9), no offset, so it may
        // stand in compound units.
        assert_unit("degR", 1.0 / 1.8, Dim::TEMPERATURE);
        assert_unit("°R", 1.0 / 1.8, Dim::TEMPERATURE);
        assert_unit("degR/min", 1.0 / 108.0, Dim::TEMPERATURE.div(Dim::TIME));
        // Compounds through the parser: kmol/h = 1e3/3600 mol/s (hour, App. B.8).
        assert_unit("kmol/h", 1e3 / 3600.0, Dim::AMOUNT.div(Dim::TIME));
        assert_unit("kmol/hr", 1e3 / 3600.0, Dim::AMOUNT.div(Dim::TIME));
        assert_unit("lbmol/hr", 453.592_37 / 3600.0, Dim::AMOUNT.div(Dim::TIME));
        assert_unit("kg/h", 1.0 / 3600.0, Dim::MASS.div(Dim::TIME));
        assert_unit("lb/hr", 0.453_592_37 / 3600.0, Dim::MASS.div(Dim::TIME));
        assert_unit(
            "gal/min",
            3.785_411_784e-3 / 60.0,
            Dim::volume().div(Dim::TIME),
        );
        assert_unit(
            "ft3/min",
            0.028_316_846_592 / 60.0,
            Dim::volume().div(Dim::TIME),
        );
        assert_unit(
            "lbmol/ft3",
            453.592_37 / 0.028_316_846_592,
            Dim::concentration(),
        );
        // cal_th/(lb degR) = 4.184/(0.453 592 37/1.8) J/(kg K) = 16.6 J/(kg K).
        assert_unit(
            "cal/(lb*degR)",
            4.184 * 1.8 / 0.453_592_37,
            Dim::energy().div(Dim::MASS).div(Dim::TEMPERATURE),
        );
    }

    #[test]
    fn fahrenheit_and_gauge_offsets() {
        // NIST SP 811 App. B.9: T/K = (t/°F + 459.67)/1.8. 212 °F = 373.15 K, 32 °F =
        // 273.15 K, -459.67 °F = 0 K.
        for (f, k) in [
            ("212 degF", 373.15),
            ("32 degF", 273.15),
            ("98.6 °F", 310.15),
        ] {
            let q = parse_quantity(f).unwrap();
            assert!(close(q.si, k, 1e-13), "{f} = {} K", q.si);
            assert!(q.dim.approx_eq(Dim::TEMPERATURE));
        }
        assert!(parse_quantity("-459.67 degF").unwrap().si.abs() < 1e-12);
        // 671.67 °R = 373.15 K (T/K = (T/°R)/1.8, App. B.9).
        assert!(close(
            parse_quantity("671.67 degR").unwrap().si,
            373.15,
            1e-13
        ));
        // Gauge: absolute = gauge + 101 325 Pa (standard atmosphere, App. B.8).
        let q = parse_quantity("2 barg").unwrap();
        assert!(close(q.si, 301_325.0, 1e-15));
        assert!(q.dim.approx_eq(Dim::pressure()));
        assert_eq!(parse_quantity("0 barg").unwrap().si, 101_325.0);
        // 14.695 949 psi is one standard atmosphere: 0 psig = 14.695 949 psia (App. B.8).
        let q = parse_quantity("30 psig").unwrap();
        assert!(close(q.si, 30.0 * 6_894.757_293_168 + 101_325.0, 1e-12));
        assert!(close(101_325.0 / unit("psi").factor, 14.695_949, 1e-7));
        // The note says the atmosphere and the result.
        let note = gauge_note("2 barg").expect("a note for a gauge reading");
        assert!(note.contains("gauge"), "{note}");
        assert!(note.contains("101325 Pa (standard atmosphere)"), "{note}");
        assert!(note.contains("= 301325 Pa"), "{note}");
        assert_eq!(gauge_note("2 bar"), None);
        assert_eq!(gauge_note("2 bara"), None);
        assert!(gauge_note(" 30 psig ").is_some());
    }

    #[test]
    fn affine_units_refused_inside_compounds() {
        for (s, name, hint) in [
            ("degF/s", "degF", "degR/min"),
            ("K*degF", "degF", "degR"),
            ("mol/(m3*s*barg)", "barg", "`bar`"),
            ("psig^2", "psig", "`psi`"),
            ("degC/min", "degC", "K/min"),
        ] {
            let e = err(s);
            assert!(
                matches!(&e, UnitError::AffineCombined { name: n, .. } if n == name),
                "{s}: {e:?}"
            );
            let msg = e.to_string();
            assert!(msg.contains("only accepted alone"), "{msg}");
            assert!(msg.contains(hint), "{s}: {msg}");
        }
        assert!(err("barg/s").to_string().contains("standard atmosphere"));
    }

    #[test]
    fn temperature_letters_suggest_the_scale() {
        // `37 C` means Celsius: C alone would be the coulomb, which no study uses.
        let msg = qerr("37 C").to_string();
        assert!(msg.contains("did you mean `degC`?"), "{msg}");
        assert!(msg.contains("Celsius"), "{msg}");
        let msg = qerr("100 F").to_string();
        assert!(msg.contains("did you mean `degF`?"), "{msg}");
        let msg = qerr("300 degK").to_string();
        assert!(msg.contains("did you mean `K`?"), "{msg}");
        let msg = qerr("3 lbm").to_string();
        assert!(msg.contains("did you mean `lb`?"), "{msg}");
        let msg = err("hrs").to_string();
        assert!(msg.contains("did you mean `hr`?"), "{msg}");
        let msg = err("furlong").to_string();
        assert!(
            msg.contains("degF (alone)") && msg.contains("barg (alone)"),
            "{msg}"
        );
    }

    #[test]
    fn dimensions_in_words() {
        let e = Dim::energy();
        let molar = e.div(Dim::AMOUNT);
        assert_eq!(
            dimension_mismatch("kJ", e, "kJ/mol", molar),
            "got kJ (energy), expected kJ/mol (energy per amount)"
        );
        assert_eq!(describe(Dim::pressure()), "pressure");
        assert_eq!(describe(Dim::TEMPERATURE), "temperature");
        assert_eq!(describe(Dim::volume()), "volume");
        assert_eq!(describe(Dim::MASS), "mass");
        assert_eq!(describe(Dim::TIME), "time");
        assert_eq!(describe(Dim::AMOUNT), "amount");
        assert_eq!(
            describe(Dim::AMOUNT.div(Dim::TIME)),
            "amount per time, a molar flow"
        );
        assert_eq!(
            describe(Dim::concentration()),
            "amount per volume, a concentration"
        );
        assert_eq!(
            describe(unit("1/s").dim),
            "per time, a first-order rate constant"
        );
        // Order 1.5: (mol/m3)^-0.5 / s, spelt out from the base dimensions.
        assert_eq!(
            describe(unit("(mol/m3)^(-0.5)/s").dim),
            "length^1.5 per amount^0.5 and time"
        );
        // A rate constant in partial pressures, order 2.
        assert_eq!(
            describe(unit("mol/(kg*s*bar^2)").dim),
            "rate per catalyst mass, per pressure^2"
        );
        assert_eq!(
            describe(unit("mol/(m3*s*bar)").dim),
            "volumetric rate per pressure"
        );
        assert_eq!(example_unit(Dim::pressure()), "bar");
        assert_eq!(
            dimension_mismatch("", Dim::NONE, "", Dim::TEMPERATURE),
            "got a bare number (dimensionless), expected K (temperature)"
        );
        assert_eq!(unit_text(" 4 kJ/mol "), "kJ/mol");
        assert_eq!(unit_text("12"), "");
    }

    #[test]
    fn celsius_offset() {
        // NIST SP 811 §4.2.1.1: T/K = t/°C + 273.15.
        let u = unit("degC");
        assert_eq!(u.factor, 1.0);
        assert_eq!(u.offset, 273.15);
        assert!(u.dim.approx_eq(Dim::TEMPERATURE));
        assert_eq!(unit("°C"), u);
        let q = parse_quantity("25 degC").unwrap();
        assert!(close(q.si, 298.15, 1e-14));
        let q = parse_quantity("-273.15 degC").unwrap();
        assert!(q.si.abs() < 1e-12);
    }

    #[test]
    fn gas_constant_codata_2018() {
        // CODATA 2018 / 2019 SI: N_A = 6.022 140 76e23 /mol and k = 1.380 649e-23 J/K exact.
        let n_a = 6.022_140_76e23;
        let k_b = 1.380_649e-23;
        assert!(close(GAS_CONSTANT, n_a * k_b, 1e-15));
        // CODATA 2018 listed value R = 8.314 462 618... J mol^-1 K^-1.
        assert!((GAS_CONSTANT - 8.314_462_618).abs() < 1e-9);
        // R in cal_th/(mol K): 8.314 462 618 / 4.184 = 1.987 204 259 (common practice).
        let r_cal = parse_quantity("1 J/(mol*K)").unwrap().si * GAS_CONSTANT
            / parse_unit("cal/(mol*K)").unwrap().factor;
        assert!(close(r_cal, 1.987_204_259, 1e-9));
    }

    #[test]
    fn compound_units() {
        // L = 1e-3 m3 (NIST SP 811 App. B.8), so L/(mol*s) = 1e-3 m3 mol-1 s-1.
        assert_unit("L/(mol*s)", 1e-3, dim(0.0, 3.0, -1.0, -1.0, 0.0));
        assert_unit("L/(mol·s)", 1e-3, dim(0.0, 3.0, -1.0, -1.0, 0.0));
        // Second-order-in-volume rate constant: m6 mol-2 s-1.
        assert_unit("m3^2/(mol^2*s)", 1.0, dim(0.0, 6.0, -1.0, -2.0, 0.0));
        assert_unit("m3^2", 1.0, dim(0.0, 6.0, 0.0, 0.0, 0.0));
        // (mol/L)^2 = (1e3 mol m-3)^2 = 1e6 mol2 m-6.
        assert_unit("mol2/L2", 1e6, dim(0.0, -6.0, 0.0, 2.0, 0.0));
        assert_unit("(mol/L)^2", 1e6, dim(0.0, -6.0, 0.0, 2.0, 0.0));
        // Molar energy: kJ/mol = 1e3 J/mol; kcal/mol = 4184 J/mol (cal_th, NIST SP 811).
        assert_unit("kJ/mol", 1e3, Dim::energy().div(Dim::AMOUNT));
        assert_unit("kcal/mol", 4184.0, Dim::energy().div(Dim::AMOUNT));
        // Reciprocal time three ways; 1/min = 1/60 s-1 (NIST SP 811 App. B.8).
        assert_unit("1/s", 1.0, dim(0.0, 0.0, -1.0, 0.0, 0.0));
        assert_unit("s^-1", 1.0, dim(0.0, 0.0, -1.0, 0.0, 0.0));
        assert_unit("s^(-1)", 1.0, dim(0.0, 0.0, -1.0, 0.0, 0.0));
        assert_unit("1/min", 1.0 / 60.0, dim(0.0, 0.0, -1.0, 0.0, 0.0));
        assert_unit("1/h", 1.0 / 3600.0, dim(0.0, 0.0, -1.0, 0.0, 0.0));
        // Rate constant of order 1.5: (mol/m3)^(1-1.5)/s.
        assert_unit("(mol/m3)^(-0.5)/s", 1.0, dim(0.0, 1.5, -1.0, -0.5, 0.0));
        assert_unit(
            "(mol/L)^-0.5/s",
            1e-3_f64.powf(0.5),
            dim(0.0, 1.5, -1.0, -0.5, 0.0),
        );
        // Concentration: mol/L = 1e3 mol m-3; mmol/mL = 1e3 mol m-3.
        assert_unit("mol/L", 1e3, Dim::concentration());
        assert_unit("mmol/mL", 1e3, Dim::concentration());
        // Pressure-based rate: mol/(L*s*bar) = 1e3 / 1e5 mol m-3 s-1 Pa-1.
        assert_unit(
            "mol/(L*s*bar)",
            1e-2,
            Dim::concentration().div(Dim::TIME).div(Dim::pressure()),
        );
        // Space-separated product, as written by Display.
        assert_unit("kg m2 s^-2", 1.0, Dim::energy());
        assert_unit("g cm^-3", 1e3, dim(1.0, -3.0, 0.0, 0.0, 0.0));
        // Spaces around operators are allowed.
        assert_unit(" m3 / ( mol * s ) ", 1.0, dim(0.0, 3.0, -1.0, -1.0, 0.0));
    }

    #[test]
    fn left_to_right_division() {
        // a/b*c = (a/b)*c: J/mol*K = J K mol-1.
        assert_unit("J/mol*K", 1.0, dim(1.0, 2.0, -2.0, -1.0, 1.0));
        assert_unit("J/(mol*K)", 1.0, dim(1.0, 2.0, -2.0, -1.0, -1.0));
        assert_unit("m/s/s", 1.0, dim(0.0, 1.0, -2.0, 0.0, 0.0));
    }

    #[test]
    fn quantities() {
        // L/(mol s) = 1e-3 m3 mol-1 s-1 (NIST SP 811), so 4.0e-3 -> 4.0e-6.
        let q = parse_quantity("4.0e-3 L/(mol*s)").unwrap();
        assert!(close(q.si, 4.0e-6, 1e-12));
        let q = parse_quantity("4.0e-3 m3/(mol*s)").unwrap();
        assert!(close(q.si, 4.0e-3, 1e-15));
        assert!(q.dim.approx_eq(dim(0.0, 3.0, -1.0, -1.0, 0.0)));
        let q = parse_quantity("320 K").unwrap();
        assert_eq!(q.si, 320.0);
        assert!(q.dim.approx_eq(Dim::TEMPERATURE));
        let q = parse_quantity("-120 kJ/mol").unwrap();
        assert!(close(q.si, -1.2e5, 1e-15));
        assert!(q.dim.approx_eq(Dim::energy().div(Dim::AMOUNT)));
        let q = parse_quantity("12").unwrap();
        assert_eq!(q.si, 12.0);
        assert!(q.dim.approx_eq(Dim::NONE));
        // atm = 101 325 Pa (NIST SP 811 App. B.8).
        assert!(close(parse_quantity("2 atm").unwrap().si, 202_650.0, 1e-15));
        assert!(close(parse_quantity("1e5Pa").unwrap().si, 1e5, 1e-15));
        assert!(close(parse_quantity("+.5 h").unwrap().si, 1800.0, 1e-15));
        assert!(close(parse_quantity("3 1/s").unwrap().si, 3.0, 1e-15));
    }

    #[test]
    fn display_and_format() {
        let rate = Dim::concentration().div(Dim::TIME);
        assert_eq!(rate.to_string(), "mol m^-3 s^-1");
        assert_eq!(Dim::NONE.to_string(), "1");
        assert_eq!(Dim::energy().to_string(), "kg m2 s^-2");
        assert_eq!(unit("m3/(mol*s)").dim.to_string(), "m3 mol^-1 s^-1");
        assert_eq!(
            unit("(mol/m3)^(-0.5)/s").dim.to_string(),
            "m^1.5 mol^-0.5 s^-1"
        );
        assert_eq!(format_si(1.2, Dim::volume()), "1.2 m3");
        assert_eq!(format_si(12.0, Dim::NONE), "12");
        assert_eq!(format_si(101_325.0, Dim::pressure()), "101325 kg m^-1 s^-2");
        assert_eq!(format_si(1.5e-10, Dim::TIME), "1.5e-10 s");
        assert_eq!(format_si(2.5e7, Dim::NONE), "2.5e7");
        assert_eq!(format_si(0.30000000000000004, Dim::NONE), "0.3");
        assert_eq!(format_si(999_999.7, Dim::NONE), "1e6");
        assert_eq!(format_si(-0.001234567, Dim::NONE), "-0.00123457");
        // Display output parses back to the same dimension.
        for d in [
            rate,
            Dim::energy(),
            Dim::pressure(),
            unit("(mol/m3)^(-0.5)/s").dim,
            unit("J/(mol*K)").dim,
        ] {
            let back = unit(&d.to_string());
            assert!(back.dim.approx_eq(d), "{d} -> {}", back.dim);
            assert_eq!(back.factor, 1.0);
        }
    }

    #[test]
    fn dim_arithmetic() {
        let v = Dim::LENGTH.powf(3.0);
        assert!(v.approx_eq(Dim::volume()));
        assert!(Dim::AMOUNT.div(v).approx_eq(Dim::concentration()));
        assert!((Dim::AMOUNT / v).approx_eq(Dim::concentration()));
        assert!((Dim::pressure() * v).approx_eq(Dim::energy()));
        assert!(!Dim::NONE.approx_eq(Dim::new(0.0, 0.0, 0.0, 0.0, 1e-8)));
        assert!(Dim::NONE.approx_eq(Dim::new(0.0, 0.0, 0.0, 0.0, 1e-10)));
    }

    fn err(s: &str) -> UnitError {
        match parse_unit(s) {
            Ok(u) => panic!("`{s}` should be rejected, got {u:?}"),
            Err(e) => e,
        }
    }

    fn qerr(s: &str) -> UnitError {
        match parse_quantity(s) {
            Ok(q) => panic!("`{s}` should be rejected, got {q:?}"),
            Err(e) => e,
        }
    }

    #[test]
    fn bad_units() {
        assert_eq!(err(""), UnitError::Empty);
        assert_eq!(err("   "), UnitError::Empty);
        assert!(matches!(err("m/"), UnitError::Expected { col: 3, .. }));
        assert!(matches!(err("(m"), UnitError::UnclosedParen { col: 1, .. }));
        assert!(matches!(
            err("m)"),
            UnitError::UnmatchedParen { col: 2, .. }
        ));
        assert!(matches!(err("m^"), UnitError::Expected { .. }));
        assert!(matches!(err("m^x"), UnitError::Expected { .. }));
        assert!(matches!(err("m^1.2.3"), UnitError::BadExponent { .. }));
        assert!(matches!(err("m^(2"), UnitError::Expected { .. }));
        assert!(matches!(err("m^^2"), UnitError::Expected { .. }));
        assert!(matches!(err("m**2"), UnitError::Expected { .. }));
        assert!(matches!(err("m^2^3"), UnitError::Expected { .. }));
        assert!(matches!(err("m^999"), UnitError::BadExponent { .. }));
        assert!(matches!(
            err("m99999999999999999999"),
            UnitError::BadExponent { .. }
        ));
        assert!(matches!(err("m0"), UnitError::BadExponent { .. }));
        assert!(matches!(err("()"), UnitError::Expected { .. }));
        assert!(matches!(
            err("m3%"),
            UnitError::UnexpectedChar {
                ch: '%',
                col: 3,
                ..
            }
        ));
        assert!(matches!(err("2/s"), UnitError::BadNumeral { .. }));
        assert!(matches!(err("degC/min"), UnitError::AffineCombined { .. }));
        assert!(matches!(err("K*degC"), UnitError::AffineCombined { .. }));
        assert!(matches!(err("degC^2"), UnitError::AffineCombined { .. }));
        assert!(matches!(
            err("J/mol K"),
            UnitError::AmbiguousDivision { col: 7, .. }
        ));
        assert!(matches!(err("s-1"), UnitError::Expected { .. }));
        // Spaces beside an operator are spacing only, as docs/network-format.md says.
        for spaced in ["kJ/ mol", "kJ / mol", "kJ /mol"] {
            let a = parse_unit(spaced).expect("spaced division");
            let b = parse_unit("kJ/mol").expect("kJ/mol");
            assert_eq!((a.factor, a.dim), (b.factor, b.dim), "{spaced}");
        }
        let deep = format!("{}m{}", "(".repeat(1000), ")".repeat(1000));
        assert!(matches!(err(&deep), UnitError::TooDeep { .. }));
        // Nested powers that overflow the dimension or factor.
        let huge = format!("{}km{}", "(".repeat(30), "^100)".repeat(30));
        assert!(matches!(err(&huge), UnitError::Overflow { .. }));
    }

    #[test]
    fn unknown_unit_messages() {
        let e = err("KJ/mol");
        assert_eq!(
            e,
            UnitError::UnknownUnit {
                name: "KJ".into(),
                input: "KJ/mol".into(),
                suggestion: Some("kJ".into()),
            }
        );
        let msg = e.to_string();
        assert!(msg.contains("did you mean `kJ`?"), "{msg}");
        assert!(msg.contains("Known units: mol, kmol"), "{msg}");
        assert!(msg.contains("atm") && msg.contains("degC"), "{msg}");
        match err("mols") {
            UnitError::UnknownUnit { suggestion, .. } => {
                assert_eq!(suggestion.as_deref(), Some("mol"))
            }
            e => panic!("unexpected {e:?}"),
        }
        match err("furlong") {
            UnitError::UnknownUnit { suggestion, .. } => assert_eq!(suggestion, None),
            e => panic!("unexpected {e:?}"),
        }
        let msg = err("degC/min").to_string();
        assert!(msg.contains("K/min"), "{msg}");
        let msg = err("J/mol K").to_string();
        assert!(msg.contains("a/(b*c)"), "{msg}");
    }

    #[test]
    fn bad_quantities() {
        assert_eq!(qerr(""), UnitError::Empty);
        assert!(matches!(qerr("NaN K"), UnitError::NotFinite { .. }));
        assert!(matches!(qerr("-inf"), UnitError::NotFinite { .. }));
        assert!(matches!(qerr("Infinity Pa"), UnitError::NotFinite { .. }));
        assert!(matches!(qerr("1e400 Pa"), UnitError::NotFinite { .. }));
        assert!(matches!(qerr("K 320"), UnitError::MissingNumber { .. }));
        assert!(matches!(qerr("- 5 K"), UnitError::MissingNumber { .. }));
        assert!(matches!(qerr("."), UnitError::MissingNumber { .. }));
        assert!(matches!(qerr("1.0.0 K"), UnitError::BadNumeral { .. }));
        assert!(matches!(qerr("5 K K)"), UnitError::UnmatchedParen { .. }));
        assert!(matches!(qerr("1e308 kPa"), UnitError::ValueOverflow { .. }));
        assert!(matches!(qerr("1 2 K"), UnitError::BadNumeral { .. }));
        assert!(matches!(qerr("3 furlong"), UnitError::UnknownUnit { .. }));
    }

    /// Pseudo-random strings over the grammar's alphabet must give a value or an error,
    /// never a panic, and accepted units must be finite and positive.
    #[test]
    fn random_inputs_never_panic() {
        let alphabet: Vec<char> = "mLlkgsKPa°Cdeg()*/^·-+.0123456789 e%µ".chars().collect();
        let mut state: u64 = 0x2545_F491_4F6C_DD1D;
        let mut next = || {
            // xorshift64
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        let mut accepted = 0;
        for _ in 0..20_000 {
            let len = (next() % 12) as usize;
            let s: String = (0..len)
                .map(|_| alphabet[(next() % alphabet.len() as u64) as usize])
                .collect();
            match parse_unit(&s) {
                Ok(u) => {
                    accepted += 1;
                    assert!(u.factor.is_finite() && u.factor > 0.0, "{s}: {u:?}");
                    assert!(u.dim.is_finite(), "{s}: {u:?}");
                }
                Err(e) => assert!(!e.to_string().is_empty()),
            }
            match parse_quantity(&s) {
                Ok(q) => assert!(q.si.is_finite(), "{s}: {q:?}"),
                Err(e) => assert!(!e.to_string().is_empty()),
            }
        }
        assert!(
            accepted > 0,
            "the generator should produce some valid units"
        );
    }
}
