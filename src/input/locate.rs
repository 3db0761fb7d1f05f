//! Where each field of a YAML document sits in its text.
//!
//! `serde_yaml` reports positions for the errors it finds itself, but the
//! checks that span several fields (Q_gd ≤ Q_g, drive below V_GS max, ...) run
//! after deserialisation, when positions are gone. This module walks the YAML
//! event stream once and records the line and column of every value under its
//! dotted field path (`switch.q_gd`, `board.timer.dead_time.segments[2].step`),
//! so a later check can point at the exact spot.
//!
//! The same walk is the syntax pass: when the text is not valid YAML, or a
//! mapping repeats a key, the locator carries a [`SyntaxProblem`] worded for
//! the user (unclosed bracket or quote, bad indentation, tab, missing `:`)
//! at the place where the fix goes. Reporting it before deserialising keeps
//! a syntax error from hiding behind a field error from the part read first.

use std::collections::HashMap;

use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::{Marker, ScanError};

/// A 1-based line and column in a source text.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Position {
    pub line: usize,
    pub column: usize,
}

/// A problem found while indexing: the text is not valid YAML, or a mapping
/// repeats a key. Worded for the user, with the place to point at.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SyntaxProblem {
    pub position: Position,
    /// Dotted field path, empty when the problem belongs to no one field.
    pub field: String,
    pub message: String,
    /// A repeated key: valid to a lenient parser, so the caller reports it
    /// without asking a second parser to confirm.
    pub duplicate: bool,
}

/// Field path → position of the field's value (and of its key).
#[derive(Debug, Default, Clone)]
pub struct Locator {
    values: HashMap<String, Position>,
    keys: HashMap<String, Position>,
    problem: Option<SyntaxProblem>,
    /// The text holds at least one YAML node (not only comments).
    has_content: bool,
}

impl Locator {
    /// Index `text`. A text that does not parse gives a locator with no
    /// positions and the [`SyntaxProblem`] that stopped the parser.
    pub fn new(text: &str) -> Locator {
        let mut walker = Walker::new(text);
        let mut parser = Parser::new_from_str(text);
        if let Err(e) = parser.load(&mut walker, false) {
            return Locator {
                problem: Some(explain(&e, &walker)),
                has_content: true,
                ..Locator::default()
            };
        }
        let problem = walker.duplicate.take().map(|d| SyntaxProblem {
            position: d.second,
            message: format!(
                "duplicate key `{}` (first at line {})",
                last_key(&d.path),
                d.first.line
            ),
            field: d.path,
            duplicate: true,
        });
        Locator {
            values: walker.values,
            keys: walker.keys,
            problem,
            has_content: walker.nodes > 0,
        }
    }

    /// Why the text could not be indexed, if it could not.
    pub fn problem(&self) -> Option<&SyntaxProblem> {
        self.problem.as_ref()
    }

    /// Whether the text holds any YAML node (a file of comments holds none).
    pub fn has_content(&self) -> bool {
        self.has_content
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

    /// The keys written directly in the mapping at `path` (`""` for the top
    /// level), in no particular order.
    pub fn children(&self, path: &str) -> Vec<&str> {
        self.keys
            .keys()
            .filter_map(|k| {
                let rest = if path.is_empty() {
                    k.as_str()
                } else {
                    k.strip_prefix(path)?.strip_prefix('.')?
                };
                (!rest.contains(['.', '['])).then_some(rest)
            })
            .collect()
    }
}

fn parent(path: &str) -> Option<&str> {
    let cut = path.rfind(['.', '['])?;
    Some(&path[..cut])
}

fn last_key(path: &str) -> &str {
    path.rsplit('.').next().unwrap_or(path)
}

enum Frame {
    Mapping {
        path: String,
        pending_key: Option<String>,
        /// No key seen yet: the first key's position becomes the mapping's
        /// (the parser's mapping-start mark lies after the first key).
        first: bool,
        /// Where its `{` stands, for a flow mapping.
        flow: Option<Position>,
    },
    Sequence {
        path: String,
        next_index: usize,
        /// Where its `[` stands, for a flow sequence.
        flow: Option<Position>,
    },
}

impl Frame {
    fn flow(&self) -> Option<(Position, &str)> {
        match self {
            Frame::Mapping { flow, path, .. } | Frame::Sequence { flow, path, .. } => {
                flow.map(|p| (p, path.as_str()))
            }
        }
    }
}

/// A key written twice in one mapping.
struct Duplicate {
    path: String,
    first: Position,
    second: Position,
}

struct Walker<'a> {
    lines: Vec<&'a str>,
    stack: Vec<Frame>,
    values: HashMap<String, Position>,
    keys: HashMap<String, Position>,
    duplicate: Option<Duplicate>,
    nodes: usize,
    /// The characters of each line longer than [`LONG_LINE`] bytes, so a
    /// lookup by column on a long line is not a walk from its start (which
    /// made a 1 MB one-line file quadratic).
    long_lines: HashMap<usize, Vec<char>>,
}

/// A line longer than this many bytes gets its characters indexed.
const LONG_LINE: usize = 256;

impl<'a> Walker<'a> {
    fn new(text: &'a str) -> Walker<'a> {
        let lines: Vec<&'a str> = text.lines().collect();
        let long_lines = lines
            .iter()
            .enumerate()
            .filter(|(_, l)| l.len() > LONG_LINE)
            .map(|(i, l)| (i, l.chars().collect()))
            .collect();
        Walker {
            long_lines,
            lines,
            stack: Vec::new(),
            values: HashMap::new(),
            keys: HashMap::new(),
            duplicate: None,
            nodes: 0,
        }
    }

    /// The character at a 1-based position, if the text has one there.
    fn char_at(&self, pos: Position) -> Option<char> {
        let index = pos.line.checked_sub(1)?;
        let column = pos.column.checked_sub(1)?;
        if let Some(chars) = self.long_lines.get(&index) {
            return chars.get(column).copied();
        }
        self.lines.get(index)?.chars().nth(column)
    }

    /// The path a new node at this point of the stream gets, or `None` when
    /// the node is a mapping key.
    fn next_node_path(&mut self, key_text: Option<&str>, mark: Marker) -> Option<String> {
        let pos = position(mark);
        match self.stack.last_mut() {
            None => Some(String::new()),
            Some(Frame::Sequence {
                path, next_index, ..
            }) => {
                let p = format!("{path}[{next_index}]");
                *next_index += 1;
                Some(p)
            }
            Some(Frame::Mapping {
                path,
                pending_key,
                first,
                ..
            }) => match pending_key.take() {
                Some(key) => Some(join(path, &key)),
                None => {
                    // This node is a key.
                    if *first {
                        *first = false;
                        self.values.insert(path.clone(), pos);
                    }
                    let key = key_text.unwrap_or("?").to_string();
                    let full = join(path, &key);
                    if let Some(first) = self.keys.get(&full)
                        && key_text.is_some()
                        && self.duplicate.is_none()
                    {
                        self.duplicate = Some(Duplicate {
                            path: full.clone(),
                            first: *first,
                            second: pos,
                        });
                    }
                    self.keys.entry(full).or_insert(pos);
                    *pending_key = Some(key);
                    None
                }
            },
        }
    }

    /// The `[` or `{` at `pos`, when a collection starting there is a flow one.
    fn flow_at(&self, pos: Position) -> Option<Position> {
        matches!(self.char_at(pos), Some('[' | '{')).then_some(pos)
    }
}

fn position(mark: Marker) -> Position {
    Position {
        line: mark.line(),
        column: mark.col() + 1,
    }
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

impl MarkedEventReceiver for Walker<'_> {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        let pos = position(mark);
        match ev {
            Event::Scalar(text, ..) => {
                self.nodes += 1;
                if let Some(path) = self.next_node_path(Some(&text), mark) {
                    self.values.insert(path, pos);
                }
            }
            Event::Alias(_) => {
                self.nodes += 1;
                if let Some(path) = self.next_node_path(None, mark) {
                    self.values.insert(path, pos);
                }
            }
            Event::MappingStart(..) => {
                self.nodes += 1;
                let flow = self.flow_at(pos);
                let path = match self.next_node_path(None, mark) {
                    Some(path) => {
                        self.values.insert(path.clone(), pos);
                        path
                    }
                    // A complex key: give it an opaque name and skip its insides.
                    None => "?".into(),
                };
                self.stack.push(Frame::Mapping {
                    path,
                    pending_key: None,
                    first: true,
                    flow,
                });
            }
            Event::SequenceStart(..) => {
                self.nodes += 1;
                let flow = self.flow_at(pos);
                let path = self
                    .next_node_path(None, mark)
                    .unwrap_or_else(|| "?".into());
                self.values.insert(path.clone(), pos);
                self.stack.push(Frame::Sequence {
                    path,
                    next_index: 0,
                    flow,
                });
            }
            Event::MappingEnd | Event::SequenceEnd => {
                self.stack.pop();
            }
            _ => {}
        }
    }
}

// ------------------------------------------------------ syntax explanations

/// Word the parser's error for a reader of the file: what is wrong, in plain
/// words, at the place where the fix goes.
fn explain(err: &ScanError, walker: &Walker) -> SyntaxProblem {
    let text = Text(&walker.lines);
    let mark = text.clamp(position(*err.marker()));
    let info = err.info();
    let problem = |position, field: &str, message: String| SyntaxProblem {
        position,
        field: field.to_string(),
        message,
        duplicate: false,
    };
    if info.contains("quoted scalar") && matches!(walker.char_at(mark), Some('"' | '\'')) {
        let quote = walker.char_at(mark).unwrap_or('"');
        return problem(
            mark,
            &pending_path(walker),
            format!("unclosed quoted string; close it with `{quote}`"),
        );
    }
    if info.contains("tab") {
        let at = text.tab_in_indentation(mark.line).unwrap_or(mark);
        return problem(
            at,
            "",
            "a tab in the indentation; YAML indents with spaces only".into(),
        );
    }
    if let Some((open, path)) = walker.stack.iter().rev().find_map(Frame::flow) {
        if info.contains("invalid trailing content") {
            return problem(
                mark,
                path,
                "unexpected text after the closing quote (a missing `,`?)".into(),
            );
        }
        return problem_in_flow(&text, walker, open, path, mark).map_or_else(
            || problem(mark, path, plain(info)),
            |(p, m)| problem(p, path, m),
        );
    }
    if let Some((at, message)) = text.bad_indentation(mark.line) {
        return problem(at, "", message);
    }
    if let Some((at, message)) = text.missing_colon_before(mark.line) {
        return problem(at, "", message);
    }
    problem(mark, "", plain(info))
}

/// A syntax error inside a `[ ... ]` or `{ ... }` that starts at `open`.
fn problem_in_flow(
    text: &Text,
    walker: &Walker,
    open: Position,
    path: &str,
    mark: Position,
) -> Option<(Position, String)> {
    let bracket = walker.char_at(open)?;
    let close = if bracket == '[' { ']' } else { '}' };
    // `mark` is already clamped: past the end it sits after the last content.
    let at_line_start = text.first_column(mark.line) == Some(mark.column);
    if text.closes(open) {
        if !at_line_start {
            return None;
        }
        let holder = if path.is_empty() {
            "it".to_string()
        } else {
            format!("`{}`", last_key(path))
        };
        return Some((
            mark,
            format!(
                "bad indentation: this line continues the `{bracket} ... {close}` opened at line {}; indent it further than {holder}",
                open.line
            ),
        ));
    }
    let at = if at_line_start {
        text.end_of_content_before(mark.line).unwrap_or(mark)
    } else {
        mark
    };
    Some((
        at,
        format!(
            "unclosed `{bracket}` (opened at line {}, column {}); add the missing `{close}`",
            open.line, open.column
        ),
    ))
}

/// The path of the value the parser was reading when it stopped.
fn pending_path(walker: &Walker) -> String {
    match walker.stack.last() {
        Some(Frame::Mapping {
            path,
            pending_key: Some(key),
            ..
        }) => join(path, key),
        Some(Frame::Mapping { path, .. }) => path.clone(),
        Some(Frame::Sequence {
            path, next_index, ..
        }) => format!("{path}[{next_index}]"),
        None => String::new(),
    }
}

/// The parser's own words, rephrased where a plainer wording is known.
fn plain(info: &str) -> String {
    let known = [
        (
            "invalid trailing content after",
            "unexpected text after the closing quote",
        ),
        (
            "mapping values are not allowed",
            "unexpected `:` here; a plain value cannot contain `: ` (quote the value, or put the key on its own line)",
        ),
        ("simple key expect ':'", "expected `:` after this key"),
        (
            "did not find expected key",
            "expected a `key: value` line here",
        ),
        (
            "block sequence entries are not allowed",
            "unexpected `- ` here; a list item needs its own line under a key",
        ),
    ];
    for (needle, words) in known {
        if info.contains(needle) {
            return words.to_string();
        }
    }
    let info = info.split_once(", ").map_or(info, |(head, tail)| {
        if head.starts_with("while ") {
            tail
        } else {
            info
        }
    });
    format!("not valid YAML: {info}")
}

/// The source text as lines, with the small look-ups the explanations need.
struct Text<'a, 'b>(&'b [&'a str]);

impl Text<'_, '_> {
    fn line(&self, line: usize) -> Option<&str> {
        self.0.get(line.checked_sub(1)?).copied()
    }

    fn is_past_end(&self, pos: Position) -> bool {
        pos.line > self.0.len()
    }

    /// A position past the last line moves to the end of the last content.
    fn clamp(&self, pos: Position) -> Position {
        if self.is_past_end(pos) {
            self.end_of_content_before(self.0.len() + 1).unwrap_or(pos)
        } else {
            pos
        }
    }

    /// Column of the first non-blank character of `line`.
    fn first_column(&self, line: usize) -> Option<usize> {
        let l = self.line(line)?;
        let indent = l.chars().take_while(|c| *c == ' ').count();
        (indent < l.chars().count()).then_some(indent + 1)
    }

    /// The 1-based line numbers before `line` that hold more than comments.
    fn content_lines_before(&self, line: usize) -> impl Iterator<Item = usize> + '_ {
        (1..line.min(self.0.len() + 1))
            .rev()
            .filter(|l| !content(self.0[l - 1]).is_empty())
    }

    /// Just after the last character of the last content line before `line`.
    fn end_of_content_before(&self, line: usize) -> Option<Position> {
        let l = self.content_lines_before(line).next()?;
        Some(Position {
            line: l,
            column: content(self.0[l - 1]).chars().count() + 1,
        })
    }

    /// The first tab in the leading white space of `line` or a later line.
    fn tab_in_indentation(&self, line: usize) -> Option<Position> {
        (line.max(1)..=self.0.len()).find_map(|l| {
            let lead = self.0[l - 1]
                .chars()
                .take_while(|c| c.is_whitespace())
                .position(|c| c == '\t')?;
            Some(Position {
                line: l,
                column: lead + 1,
            })
        })
    }

    /// Whether the `[` or `{` at `open` is closed later in the text
    /// (quotes and comments skipped).
    fn closes(&self, open: Position) -> bool {
        let mut depth = 0usize;
        for l in open.line..=self.0.len() {
            let skip = if l == open.line { open.column - 1 } else { 0 };
            let mut quote: Option<char> = None;
            let mut prev = ' ';
            for c in self.0[l - 1].chars().skip(skip) {
                match (quote, c) {
                    (Some(q), c) if c == q => quote = None,
                    (Some(_), _) => {}
                    (None, '"' | '\'') => quote = Some(c),
                    (None, '#') if prev.is_whitespace() => break,
                    (None, '[' | '{') => depth += 1,
                    (None, ']' | '}') => {
                        depth = depth.saturating_sub(1);
                        if depth == 0 {
                            return true;
                        }
                    }
                    _ => {}
                }
                prev = c;
            }
        }
        false
    }

    /// A key whose indentation lines up with no mapping above it: the
    /// message lists the indentations that would be valid.
    fn bad_indentation(&self, line: usize) -> Option<(Position, String)> {
        let text = content(self.line(line)?);
        let indent = text.chars().take_while(|c| *c == ' ').count();
        let levels = self.levels_above(line);
        if levels.is_empty() || levels.iter().any(|(col, _)| *col == indent) {
            return None;
        }
        let what = match text.trim_start().split_once(':') {
            Some((key, _)) if !key.contains(['"', '\'', '[', '{', ' ']) => format!("`{key}`"),
            _ => "this line".to_string(),
        };
        let choices: Vec<String> = levels
            .iter()
            .map(|(col, owner)| match owner {
                Some(k) => format!("{col} (a key of `{k}`)"),
                None => format!("{col} (a top-level key)"),
            })
            .collect();
        Some((
            Position {
                line,
                column: indent + 1,
            },
            format!(
                "bad indentation: {what} is indented {indent} {}, which lines up with no key above it; indent it {}",
                if indent == 1 { "space" } else { "spaces" },
                or_list(&choices)
            ),
        ))
    }

    /// The indentations of the keys `line` could belong to, innermost first,
    /// each with the key that holds them (`None` at the top level).
    fn levels_above(&self, line: usize) -> Vec<(usize, Option<String>)> {
        let mut chain: Vec<(usize, String)> = Vec::new();
        for l in self.content_lines_before(line) {
            let text = content(self.0[l - 1]);
            let indent = text.chars().take_while(|c| *c == ' ').count();
            if chain.last().is_none_or(|(i, _)| indent < *i) {
                let key = text
                    .trim_start()
                    .trim_start_matches("- ")
                    .split(':')
                    .next()
                    .unwrap_or("")
                    .trim()
                    .to_string();
                chain.push((indent, key));
            }
        }
        (0..chain.len())
            .map(|i| (chain[i].0, chain.get(i + 1).map(|(_, k)| k.clone())))
            .collect()
    }

    /// A line before `line` that was meant as `key: value` but lacks the
    /// `: ` (the parser notices only on the next line).
    fn missing_colon_before(&self, line: usize) -> Option<(Position, String)> {
        let l = self.content_lines_before(line).next()?;
        let text = content(self.0[l - 1]);
        let body = text.trim_start();
        if body.starts_with(['-', '[', '{', '"', '\''])
            || body.contains(": ")
            || body.ends_with(':')
        {
            return None;
        }
        let indent = text.chars().count() - body.chars().count();
        match body.find(':') {
            Some(c) => Some((
                Position {
                    line: l,
                    column: indent + body[..c].chars().count() + 2,
                },
                format!("expected a space after the `:` in `{body}`"),
            )),
            None => Some((
                Position {
                    line: l,
                    column: indent + 1,
                },
                format!("expected `key: value`; `{body}` has no `:`"),
            )),
        }
    }
}

/// A line without its comment and trailing blanks (a `#` after a blank,
/// outside quotes, starts a comment).
fn content(line: &str) -> &str {
    let mut quote: Option<char> = None;
    let mut prev = ' ';
    for (i, c) in line.char_indices() {
        match (quote, c) {
            (Some(q), c) if c == q => quote = None,
            (Some(_), _) => {}
            (None, '"' | '\'') if prev.is_whitespace() || "[{:,".contains(prev) => quote = Some(c),
            (None, '#') if prev.is_whitespace() => return line[..i].trim_end(),
            _ => {}
        }
        prev = c;
    }
    line.trim_end()
}

/// `a`, `a or b`, `a, b or c`.
fn or_list(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [one] => one.clone(),
        [init @ .., last] => format!("{} or {last}", init.join(", ")),
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
    fn broken_yaml_gives_empty_locator_and_the_problem() {
        let loc = Locator::new("a: [1,\n");
        assert_eq!(loc.value("a"), None);
        let p = loc.problem().expect("a syntax problem");
        assert_eq!(
            p.message,
            "unclosed `[` (opened at line 1, column 4); add the missing `]`"
        );
        // The end of the file is past the last line: the caret goes after `[1,`.
        assert_eq!(p.position, Position { line: 1, column: 7 });
        assert_eq!(p.field, "a");
    }

    fn problem(text: &str) -> SyntaxProblem {
        Locator::new(text)
            .problem()
            .cloned()
            .expect("a syntax problem")
    }

    #[test]
    fn duplicate_key_points_at_the_second() {
        let p = problem("a:\n  b: 1\n  c: 2\n  b: 3\n");
        assert!(p.duplicate);
        assert_eq!(p.field, "a.b");
        assert_eq!(p.position, Position { line: 4, column: 3 });
        assert_eq!(p.message, "duplicate key `b` (first at line 2)");
    }

    #[test]
    fn indentation_names_the_valid_levels() {
        let p = problem("top:\n  mid:\n    x: 1\n   y: 2\n");
        assert_eq!(p.position, Position { line: 4, column: 4 });
        assert_eq!(
            p.message,
            "bad indentation: `y` is indented 3 spaces, which lines up with no key above it; \
             indent it 4 (a key of `mid`), 2 (a key of `top`) or 0 (a top-level key)"
        );
    }

    #[test]
    fn tab_is_found_on_its_own_line() {
        let p = problem("a:\n  b: x\n\tc: y\n");
        assert_eq!(p.position, Position { line: 3, column: 1 });
        assert_eq!(
            p.message,
            "a tab in the indentation; YAML indents with spaces only"
        );
    }

    #[test]
    fn unclosed_quote_points_at_the_quote() {
        let p = problem("a:\n  b: \"abc\n");
        assert_eq!(p.position, Position { line: 2, column: 6 });
        assert_eq!(p.field, "a.b");
        assert_eq!(p.message, "unclosed quoted string; close it with `\"`");
    }

    #[test]
    fn flow_closed_later_is_an_indentation_problem() {
        // Closed on the next line, but that line is not indented past `b`.
        let p = problem("a:\n  b: [1,\n  2]\n");
        assert_eq!(p.position, Position { line: 3, column: 3 });
        assert_eq!(
            p.message,
            "bad indentation: this line continues the `[ ... ]` opened at line 2; indent it further than `b`"
        );
    }

    #[test]
    fn comments_only_has_no_content_and_children_are_listed() {
        let loc = Locator::new("# nothing\n\n");
        assert!(loc.problem().is_none());
        assert!(!loc.has_content());
        let loc = Locator::new("a:\n  b: 1\n  c: { d: 2 }\n");
        assert!(loc.has_content());
        let mut kids = loc.children("a");
        kids.sort_unstable();
        assert_eq!(kids, ["b", "c"]);
        assert_eq!(loc.children(""), ["a"]);
    }

    #[test]
    fn content_strips_comments_outside_quotes() {
        assert_eq!(content("  a: \"x # y\"  # note"), "  a: \"x # y\"");
        assert_eq!(content("  a: b#c"), "  a: b#c");
    }
}
