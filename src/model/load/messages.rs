//! The wording of load errors: serde and YAML messages rewritten for a study file's author,
//! numbers shown without conversion noise, and "did you mean" suggestions by edit distance.

/// A number rounded to 10 significant digits for a message, so that a unit conversion's last
/// bits (−300 °C = −26.850000000000023 K) do not show.
pub(super) fn significant(v: f64) -> String {
    let r: f64 = format!("{v:.9e}").parse().unwrap_or(v);
    if r != 0.0 && !(1e-4..1e12).contains(&r.abs()) {
        format!("{r:e}")
    } else {
        format!("{r}")
    }
}

/// serde and serde_yaml wording rewritten for a study file's author: internal type names
/// (`mapping Feed`, `u128`, `any YAML value`) replaced by what the file should hold.
pub(super) fn yaml_wording(message: &str) -> String {
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
pub(super) fn serde_path(p: &serde_path_to_error::Path) -> String {
    let s = p.to_string();
    if s == "." {
        String::new()
    } else {
        s.trim_end_matches(".?").replace("?.", "").to_string()
    }
}

pub(super) fn strip_location(s: &str) -> String {
    match s.find(" at line ") {
        Some(i) => s[..i].to_string(),
        None => s.to_string(),
    }
}

pub(super) fn unknown_field_hint(msg: &str) -> Option<String> {
    // serde: "unknown field `x`, expected one of `a`, `b`"
    let rest = msg.strip_prefix("unknown field `")?;
    let (name, rest) = rest.split_once('`')?;
    let cands: Vec<&str> = rest.split('`').skip(1).step_by(2).collect();
    closest(name, cands.iter().copied()).map(|c| format!("did you mean `{c}`?"))
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
