//! Where each field of a YAML document sits in its text.
//!
//! `serde_yaml` reports positions for the errors it finds itself, but the
//! checks that span several fields (Q_gd ≤ Q_g, drive below V_GS max, ...) run
//! after deserialisation, when positions are gone. This module walks the YAML
//! event stream once and records the line and column of every value under its
//! dotted field path (`switch.q_gd`, `board.timer.dead_time.segments[2].step`),
//! so a later check can point at the exact spot.

use std::collections::HashMap;

use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::Marker;

/// A 1-based line and column in a source text.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Position {
    pub line: usize,
    pub column: usize,
}

/// Field path → position of the field's value (and of its key).
#[derive(Debug, Default, Clone)]
pub struct Locator {
    values: HashMap<String, Position>,
    keys: HashMap<String, Position>,
}

impl Locator {
    /// Index `text`. A text that does not parse gives an empty locator: the
    /// deserialiser reports the syntax error with its own position.
    pub fn new(text: &str) -> Locator {
        let mut walker = Walker::default();
        let mut parser = Parser::new_from_str(text);
        if parser.load(&mut walker, false).is_err() {
            return Locator::default();
        }
        Locator {
            values: walker.values,
            keys: walker.keys,
        }
    }

    /// Position of the value at `path`, or of the nearest enclosing field that
    /// exists (a missing field is reported where its parent mapping starts).
    pub fn value(&self, path: &str) -> Option<Position> {
        let mut p = path;
        loop {
            if let Some(pos) = self.values.get(p) {
                return Some(*pos);
            }
            p = parent(p)?;
        }
    }

    /// Position of the key of the field at `path` (for unknown-key reports).
    pub fn key(&self, path: &str) -> Option<Position> {
        self.keys.get(path).copied().or_else(|| self.value(path))
    }
}

fn parent(path: &str) -> Option<&str> {
    let cut = path.rfind(['.', '['])?;
    Some(&path[..cut])
}

enum Frame {
    Mapping {
        path: String,
        pending_key: Option<String>,
        /// No key seen yet: the first key's position becomes the mapping's
        /// (the parser's mapping-start mark lies after the first key).
        first: bool,
    },
    Sequence {
        path: String,
        next_index: usize,
    },
}

#[derive(Default)]
struct Walker {
    stack: Vec<Frame>,
    values: HashMap<String, Position>,
    keys: HashMap<String, Position>,
}

impl Walker {
    /// The path a new node at this point of the stream gets, or `None` when
    /// the node is a mapping key.
    fn next_node_path(&mut self, key_text: Option<&str>, mark: Marker) -> Option<String> {
        let pos = Position {
            line: mark.line(),
            column: mark.col() + 1,
        };
        match self.stack.last_mut() {
            None => Some(String::new()),
            Some(Frame::Sequence { path, next_index }) => {
                let p = format!("{path}[{next_index}]");
                *next_index += 1;
                Some(p)
            }
            Some(Frame::Mapping {
                path,
                pending_key,
                first,
            }) => match pending_key.take() {
                Some(key) => Some(join(path, &key)),
                None => {
                    // This node is a key.
                    if *first {
                        *first = false;
                        self.values.insert(path.clone(), pos);
                    }
                    let key = key_text.unwrap_or("?").to_string();
                    self.keys.insert(join(path, &key), pos);
                    *pending_key = Some(key);
                    None
                }
            },
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

impl MarkedEventReceiver for Walker {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        let pos = Position {
            line: mark.line(),
            column: mark.col() + 1,
        };
        match ev {
            Event::Scalar(text, ..) => {
                if let Some(path) = self.next_node_path(Some(&text), mark) {
                    self.values.insert(path, pos);
                }
            }
            Event::Alias(_) => {
                if let Some(path) = self.next_node_path(None, mark) {
                    self.values.insert(path, pos);
                }
            }
            Event::MappingStart(..) => {
                if let Some(path) = self.next_node_path(None, mark) {
                    self.values.insert(path.clone(), pos);
                    self.stack.push(Frame::Mapping {
                        path,
                        pending_key: None,
                        first: true,
                    });
                } else {
                    // A complex key: give it an opaque name and skip its insides.
                    self.stack.push(Frame::Mapping {
                        path: "?".into(),
                        pending_key: None,
                        first: true,
                    });
                }
            }
            Event::SequenceStart(..) => {
                let path = self
                    .next_node_path(None, mark)
                    .unwrap_or_else(|| "?".into());
                self.values.insert(path.clone(), pos);
                self.stack.push(Frame::Sequence {
                    path,
                    next_index: 0,
                });
            }
            Event::MappingEnd | Event::SequenceEnd => {
                self.stack.pop();
            }
            _ => {}
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_nested_values_and_sequence_items() {
        let text = "switch:\n  name: a\n  q_gd: \"12 nC\"\n  curve: [[\"1 V\", 2], [\"3 V\", 4]]\n  list:\n    - x\n    - y: 1\n";
        let loc = Locator::new(text);
        assert_eq!(
            loc.value("switch.q_gd"),
            Some(Position { line: 3, column: 9 })
        );
        assert_eq!(
            loc.key("switch.q_gd"),
            Some(Position { line: 3, column: 3 })
        );
        assert_eq!(
            loc.value("switch.curve[1][0]"),
            Some(Position {
                line: 4,
                column: 24
            })
        );
        assert_eq!(
            loc.value("switch.list[1].y"),
            Some(Position {
                line: 7,
                column: 10
            })
        );
        // A missing field falls back to its parent.
        assert_eq!(
            loc.value("switch.q_g"),
            Some(Position { line: 2, column: 3 })
        );
    }

    #[test]
    fn broken_yaml_gives_empty_locator() {
        let loc = Locator::new("a: [1,\n");
        assert_eq!(loc.value("a"), None);
    }
}
