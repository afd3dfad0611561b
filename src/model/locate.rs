//! Where each field of a study file stands in its text, so that an error found after parsing
//! (an unknown species in `reactions[1].stoich`, a rate constant with the wrong dimensions) can
//! name the line and column as well as the field.
//!
//! serde_yaml gives positions only for syntax errors; this map is built once from the marked
//! event stream of yaml-rust2 and then looked up by field path (`reactions[1].rate.k`).

use std::collections::HashMap;
use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::Marker;

/// A position in the source: 1-based line and column.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Position {
    pub line: usize,
    pub column: usize,
}

/// Field path -> position of its key (for mapping entries) and of its value.
#[derive(Debug, Default, Clone)]
pub struct Locator {
    keys: HashMap<String, Position>,
    values: HashMap<String, Position>,
    /// The first key written twice in one mapping: its path and the position of the repeat.
    duplicate: Option<(String, Position)>,
}

enum Frame {
    Map { path: String, key: Option<String> },
    Seq { path: String, index: usize },
}

struct Builder {
    stack: Vec<Frame>,
    loc: Locator,
    /// Depth of a complex (non-scalar) mapping key being skipped.
    skipping: usize,
}

fn pos(m: Marker) -> Position {
    Position {
        line: m.line(),
        column: m.col() + 1,
    }
}

impl Builder {
    /// Path of the value about to start, or None when the event is a mapping key.
    fn child_path(&self) -> Option<String> {
        match self.stack.last() {
            None => Some(String::new()),
            Some(Frame::Map { key: None, .. }) => None,
            Some(Frame::Map { path, key: Some(k) }) => Some(join(path, k)),
            Some(Frame::Seq { path, index }) => Some(format!("{path}[{index}]")),
        }
    }

    fn advance(&mut self) {
        match self.stack.last_mut() {
            Some(Frame::Map { key, .. }) => *key = None,
            Some(Frame::Seq { index, .. }) => *index += 1,
            None => {}
        }
    }
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

impl MarkedEventReceiver for Builder {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        if self.skipping > 0 {
            match ev {
                Event::MappingStart(..) | Event::SequenceStart(..) => self.skipping += 1,
                Event::MappingEnd | Event::SequenceEnd => {
                    self.skipping -= 1;
                    if self.skipping == 0
                        && let Some(Frame::Map { key, .. }) = self.stack.last_mut()
                    {
                        *key = Some("?".to_string());
                    }
                }
                _ => {}
            }
            return;
        }
        match ev {
            Event::Scalar(text, ..) => match self.child_path() {
                None => {
                    if let Some(Frame::Map { path, key }) = self.stack.last_mut() {
                        let p = join(path, &text);
                        match self.loc.keys.entry(p) {
                            std::collections::hash_map::Entry::Occupied(e) => {
                                if self.loc.duplicate.is_none() {
                                    self.loc.duplicate = Some((e.key().clone(), pos(mark)));
                                }
                            }
                            std::collections::hash_map::Entry::Vacant(e) => {
                                e.insert(pos(mark));
                            }
                        }
                        *key = Some(text);
                    }
                }
                Some(p) => {
                    self.loc.values.entry(p).or_insert(pos(mark));
                    self.advance();
                }
            },
            Event::Alias(_) => {
                if let Some(p) = self.child_path() {
                    self.loc.values.entry(p).or_insert(pos(mark));
                    self.advance();
                } else if let Some(Frame::Map { key, .. }) = self.stack.last_mut() {
                    *key = Some("*".to_string());
                }
            }
            Event::MappingStart(..) | Event::SequenceStart(..) => match self.child_path() {
                None => self.skipping = 1,
                Some(p) => {
                    self.loc.values.entry(p.clone()).or_insert(pos(mark));
                    self.stack.push(if matches!(ev, Event::MappingStart(..)) {
                        Frame::Map { path: p, key: None }
                    } else {
                        Frame::Seq { path: p, index: 0 }
                    });
                }
            },
            Event::MappingEnd | Event::SequenceEnd => {
                self.stack.pop();
                self.advance();
            }
            _ => {}
        }
    }
}

impl Locator {
    /// Build the map from the source text. A text that does not parse gives an empty map (the
    /// YAML syntax error itself is reported by serde_yaml, with its position).
    pub fn new(source: &str) -> Locator {
        let mut b = Builder {
            stack: Vec::new(),
            loc: Locator::default(),
            skipping: 0,
        };
        let mut parser = Parser::new_from_str(source);
        if parser.load(&mut b, false).is_err() {
            return Locator::default();
        }
        b.loc
    }

    /// Position of a field: its key where it is a mapping entry, else its value. Falls back to
    /// the nearest enclosing field that is known.
    pub fn find(&self, path: &str) -> Option<Position> {
        let mut p = path.to_string();
        loop {
            if let Some(x) = self.keys.get(&p).or_else(|| self.values.get(&p)) {
                return Some(*x);
            }
            let cut = p.rfind(['.', '['])?;
            p.truncate(cut);
        }
    }

    /// The first key repeated within one mapping (path and position of the second
    /// occurrence), which YAML forbids and serde_yaml reports without a useful position.
    pub fn duplicate_key(&self) -> Option<(&str, Position)> {
        self.duplicate.as_ref().map(|(k, p)| (k.as_str(), *p))
    }

    /// Position of a field's value (for an error about the value itself).
    pub fn find_value(&self, path: &str) -> Option<Position> {
        self.values.get(path).copied().or_else(|| self.find(path))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nested_paths_have_positions() {
        let src = "name: x\nreactions:\n  - id: r1\n    rate: {k: 1 1/s}\n  - id: r2\n    rate:\n      k: 2 1/s\n";
        let l = Locator::new(src);
        assert_eq!(l.find("name").unwrap().line, 1);
        assert_eq!(l.find("reactions[0].id").unwrap().line, 3);
        assert_eq!(l.find("reactions[0].rate.k").unwrap().line, 4);
        let k2 = l.find("reactions[1].rate.k").unwrap();
        assert_eq!((k2.line, k2.column), (7, 7));
        // Unknown deeper path falls back to the nearest known parent.
        assert_eq!(l.find("reactions[1].rate.k.zzz").unwrap().line, 7);
    }

    #[test]
    fn a_repeated_key_is_found_at_its_second_occurrence() {
        let l = Locator::new("name: x\nfeed:\n  T: 300 K\n  P: 1 bar\n  T: 310 K\n");
        let (k, p) = l.duplicate_key().expect("a duplicate");
        assert_eq!((k, p.line, p.column), ("feed.T", 5, 3));
        assert!(Locator::new("a: 1\nb: {a: 2}\n").duplicate_key().is_none());
    }

    #[test]
    fn bad_yaml_gives_empty_map() {
        let l = Locator::new("a: [1, 2\n");
        assert!(l.find("a").is_none());
    }
}
