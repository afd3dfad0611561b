//! The fitted study as a new file (`rxnet fit --write OUT.yaml`): the original text with each
//! estimated value replaced in place (comments, order and layout kept), in the study's own
//! unit, and `T_ref: T_fit` (with the rate constants moved to it) for every reparameterised
//! reaction. A key the file does not write (a `T_ref` left to its default) is added beside the
//! reaction's `k`.

use super::Fitted;
use crate::model::Override;
use crate::model::locate::Locator;

/// One edit of the text: replace `start..end` (byte offsets) with `text`.
struct Edit {
    start: usize,
    end: usize,
    text: String,
}

/// Byte offset of a 1-based (line, column in characters) position.
fn offset(text: &str, line: usize, column: usize) -> Option<usize> {
    let start = if line == 1 {
        0
    } else {
        text.match_indices('\n').nth(line - 2)?.0 + 1
    };
    let rest = &text[start..];
    let by = rest
        .char_indices()
        .nth(column - 1)
        .map_or(rest.len(), |(b, _)| b);
    Some(start + by)
}

/// End (byte offset) of the scalar starting at `start`: a quoted scalar to its closing quote,
/// a plain one to the end of the line, a comment, or a flow separator.
fn scalar_end(text: &str, start: usize) -> usize {
    let rest = &text[start..];
    let mut chars = rest.char_indices();
    match chars.next() {
        Some((_, q @ ('"' | '\''))) => {
            let mut escaped = false;
            for (b, c) in chars {
                if q == '"' && c == '\\' && !escaped {
                    escaped = true;
                    continue;
                }
                if c == q && !escaped {
                    return start + b + c.len_utf8();
                }
                escaped = false;
            }
            text.len()
        }
        _ => {
            let mut end = rest.len();
            let mut prev_space = false;
            for (b, c) in rest.char_indices() {
                if matches!(c, '\n' | '\r' | ',' | '}' | ']') || (c == '#' && prev_space) {
                    end = b;
                    break;
                }
                prev_space = c == ' ' || c == '\t';
            }
            start + rest[..end].trim_end().len()
        }
    }
}

/// The value text to write: the number with the unit, quoted as the original was.
fn value_text(original: &str, value: &str) -> String {
    match original.chars().next() {
        Some('"') => format!("\"{value}\""),
        Some('\'') => format!("'{value}'"),
        _ => value.to_string(),
    }
}

/// The text of the fitted study.
pub fn fitted_text(f: &Fitted) -> Result<String, String> {
    let parsed = &f.setup.study.parsed;
    let text = &parsed.text;
    let loc = Locator::new(text);
    let mut sets: Vec<Override> = Vec::new();
    // The reparameterisation first (T_ref, constants moved to T_fit), then the estimates,
    // which win where both name a path.
    for o in &f.setup.reparameterisation {
        sets.push(o.clone());
    }
    for e in &f.report.estimates {
        let v = if e.file_unit.is_empty() {
            format!("{}", e.file_value)
        } else {
            format!("{} {}", e.file_value, e.file_unit)
        };
        sets.retain(|o| o.path != e.path);
        sets.push(Override {
            path: e.path.clone(),
            value: v,
        });
    }
    // One edit per place in the text: a path by index and the same by id are one place, and
    // the later (the estimate) wins.
    let mut placed: Vec<(String, &Override)> = Vec::new();
    for o in &sets {
        let field = parsed
            .field_path(&o.path)
            .ok_or_else(|| format!("`{}` has no place in {} to write to", o.path, parsed.file))?;
        placed.retain(|(f, _)| *f != field);
        placed.push((field, o));
    }
    let mut edits: Vec<Edit> = Vec::new();
    for (field, o) in placed {
        let exists = parsed.value_at(&[], &o.path).ok().flatten().is_some();
        if exists {
            let p = loc
                .find_value(&field)
                .ok_or_else(|| format!("`{}` cannot be located in {}", o.path, parsed.file))?;
            let start = offset(text, p.line, p.column)
                .ok_or_else(|| format!("`{}` cannot be located in {}", o.path, parsed.file))?;
            let end = scalar_end(text, start);
            edits.push(Edit {
                start,
                end,
                text: value_text(&text[start..end], &o.value),
            });
        } else {
            // A key not written (T_ref): beside its sibling `k`.
            let (parent, key) = field
                .rsplit_once('.')
                .ok_or_else(|| format!("`{}` cannot be added to {}", o.path, parsed.file))?;
            let sibling = format!("{parent}.k");
            let k_path = format!("{}.k", o.path.rsplit_once('.').map_or("", |x| x.0));
            let k_written = parsed.value_at(&[], &k_path).ok().flatten().is_some();
            let kp = loc.find(&sibling).filter(|_| k_written).ok_or_else(|| {
                format!(
                    "`{}` cannot be added to {}: no `k` beside it",
                    o.path, parsed.file
                )
            })?;
            let vp = loc
                .find_value(&sibling)
                .ok_or_else(|| format!("`{}` cannot be added to {}", o.path, parsed.file))?;
            let key_at = offset(text, kp.line, kp.column).unwrap_or(0);
            let v_start = offset(text, vp.line, vp.column).unwrap_or(key_at);
            let v_end = scalar_end(text, v_start);
            let line_start = text[..key_at].rfind('\n').map_or(0, |i| i + 1);
            let before = text[line_start..key_at].trim_end();
            let flow = before.ends_with('{') || before.ends_with(',');
            if flow {
                edits.push(Edit {
                    start: v_end,
                    end: v_end,
                    text: format!(", {key}: {}", o.value),
                });
            } else {
                let line_end = text[v_end..].find('\n').map_or(text.len(), |i| v_end + i);
                let indent = " ".repeat(kp.column - 1);
                edits.push(Edit {
                    start: line_end,
                    end: line_end,
                    text: format!("\n{indent}{key}: {}", o.value),
                });
            }
        }
    }
    edits.sort_by_key(|e| std::cmp::Reverse(e.start));
    let mut out = text.clone();
    for e in edits {
        out.replace_range(e.start..e.end, &e.text);
    }
    Ok(out)
}
