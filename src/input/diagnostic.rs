//! Errors in the user's input files, with the place they point at.
//!
//! Every bad input ends as one `InputError`: the file, the 1-based line and
//! column, the dotted field path and a sentence saying what was expected. Its
//! `Display` is the whole message the user sees (tests assert it verbatim),
//! followed by the offending source line and a caret.

use std::fmt;

use crate::input::locate::Position;

/// One problem in one input file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputError {
    /// The file as the user named it (or `bundled:NAME` for a built-in file).
    pub file: String,
    pub position: Option<Position>,
    /// Dotted field path such as `switch.q_gd`; empty for whole-file problems.
    pub field: String,
    pub message: String,
    /// The source line at `position`, for the caret display.
    pub source_line: Option<String>,
}

impl InputError {
    /// An error that concerns a whole file (unreadable, not found).
    pub fn file(file: impl Into<String>, message: impl Into<String>) -> InputError {
        InputError {
            file: file.into(),
            position: None,
            field: String::new(),
            message: message.into(),
            source_line: None,
        }
    }

    /// An error at a position in `text`. A position past the end of the
    /// text (the parser ran off the last line) moves to the end of the last
    /// line that holds something, so the caret still has a line to sit under.
    pub fn at(
        file: impl Into<String>,
        text: &str,
        position: Option<Position>,
        field: impl Into<String>,
        message: impl Into<String>,
    ) -> InputError {
        let position = position.map(|p| clamp_to_text(text, p));
        let source_line = position.and_then(|p| text.lines().nth(p.line.saturating_sub(1)));
        let mut field = field.into();
        if field.is_empty()
            && let Some(p) = position
        {
            // A syntax problem has no field of its own: name the keys the
            // place lies under, so every refusal names a field.
            field = enclosing_keys(text, p.line);
        }
        InputError {
            file: file.into(),
            position,
            field,
            message: message.into(),
            source_line: source_line.map(|s| s.trim_end().to_string()),
        }
    }
}

/// The dotted path of the block keys that line `line` (1-based) lies under
/// or holds, read from indentation alone (a cheap guess that needs no
/// valid YAML); `(top level)` when there are none.
pub fn enclosing_keys(text: &str, line: usize) -> String {
    let mut keys: Vec<(usize, &str)> = Vec::new();
    for l in text.lines().take(line) {
        let body = l.trim_start_matches([' ', '\t', '-']);
        // A tab counts as four spaces here: a guess for a line that
        // mixes them.
        let indent = l[..l.len() - body.len()]
            .chars()
            .map(|c| if c == '\t' { 4 } else { 1 })
            .sum::<usize>();
        if body.starts_with('#') || body.is_empty() {
            continue;
        }
        if let Some((key, _)) = body.split_once(':')
            && !key.is_empty()
            && key
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
        {
            keys.retain(|(at, _)| *at < indent);
            keys.push((indent, key));
        }
    }
    if keys.is_empty() {
        return "(top level)".into();
    }
    keys.iter().map(|(_, k)| *k).collect::<Vec<_>>().join(".")
}

/// `p`, or just after the last non-blank line's text when `p` lies past it.
fn clamp_to_text(text: &str, p: Position) -> Position {
    let lines: Vec<&str> = text.lines().collect();
    if p.line <= lines.len() && p.line >= 1 {
        return p;
    }
    match lines.iter().rposition(|l| !l.trim().is_empty()) {
        Some(i) => Position {
            line: i + 1,
            column: lines[i].trim_end().chars().count() + 1,
        },
        None => p,
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(p) = self.position {
            write!(f, ":{}:{}", p.line, p.column)?;
        }
        if !self.field.is_empty() {
            write!(f, ": {}", shortened(&self.field, MAX_SHOWN_CHARS))?;
        }
        write!(f, ": {}", shortened(&self.message, MAX_MESSAGE_CHARS))?;
        if let (Some(p), Some(src)) = (self.position, &self.source_line) {
            let gutter = p.line.to_string();
            let pad = " ".repeat(gutter.len());
            let (src, column) = shown_line(src, p.column);
            // The caret sits under the column; tabs are kept so it lines up.
            let lead: String = src
                .chars()
                .take(column.saturating_sub(1))
                .map(|c| if c == '\t' { '\t' } else { ' ' })
                .collect();
            write!(f, "\n {gutter} | {src}\n {pad} | {lead}^")?;
        }
        Ok(())
    }
}

impl std::error::Error for InputError {}

/// Longest message shown, in characters: 600, a bound of our own choice
/// (a message that quotes a junk key or value stays readable).
pub const MAX_MESSAGE_CHARS: usize = 600;

/// `text` cut to `max` characters with `…` at the cut.
fn shortened(text: &str, max: usize) -> std::borrow::Cow<'_, str> {
    if text.chars().count() <= max {
        return text.into();
    }
    let mut s: String = text.chars().take(max - 1).collect();
    s.push('…');
    s.into()
}

/// Widest source line echoed under a message, in characters: 120, a bound
/// of our own choice (a terminal's width; a 10 MB line is no help).
pub const MAX_SHOWN_CHARS: usize = 120;

/// The part of `line` to echo, at most [`MAX_SHOWN_CHARS`] characters with
/// `…` where it was cut, keeping `column` (1-based) in view; and the
/// column within the shown text.
fn shown_line(line: &str, column: usize) -> (String, usize) {
    let chars: Vec<char> = line
        .chars()
        .map(|c| {
            if c.is_control() && c != '\t' {
                '\u{FFFD}'
            } else {
                c
            }
        })
        .collect();
    if chars.len() <= MAX_SHOWN_CHARS {
        return (chars.into_iter().collect(), column);
    }
    let width = MAX_SHOWN_CHARS - 2; // room for an ellipsis at each end
    let col0 = column.saturating_sub(1).min(chars.len());
    let start = if col0 < width { 0 } else { col0 - width / 2 };
    let end = (start + width).min(chars.len());
    let mut shown = String::new();
    let mut column = col0 - start + 1;
    if start > 0 {
        shown.push('…');
        column += 1;
    }
    shown.extend(&chars[start..end]);
    if end < chars.len() {
        shown.push('…');
    }
    (shown, column)
}

/// The closest of `candidates` to `word`, when close enough to be a likely
/// slip (edit distance ≤ a third of the word, at least 1). A swap of two
/// neighbours wins over other slips of the same distance; then the nearer,
/// then the first alphabetically.
pub fn did_you_mean<'a>(word: &str, candidates: &[&'a str]) -> Option<&'a str> {
    suggest_field(word, candidates, &[])
}

/// [`did_you_mean`] for a mapping key: among the close candidates, prefer a
/// swap of two neighbours (`q_dg` → `q_gd`), then a field not yet `present`
/// in the mapping (the misspelt key most likely stands for a missing one),
/// then the smaller edit distance, then alphabetical order.
pub fn suggest_field<'a>(word: &str, candidates: &[&'a str], present: &[&str]) -> Option<&'a str> {
    let word_l = word.to_lowercase();
    let limit = (word.chars().count() / 3).max(1);
    candidates
        .iter()
        .filter_map(|c| {
            let c_l = c.to_lowercase();
            let d = edit_distance(&word_l, &c_l);
            (d <= limit).then(|| {
                let rank = (!is_transposition(&word_l, &c_l), present.contains(c), d, *c);
                (rank, *c)
            })
        })
        .min_by(|a, b| a.0.cmp(&b.0))
        .map(|(_, c)| c)
}

/// Whether `b` is `a` with exactly two neighbouring characters swapped.
pub fn is_transposition(a: &str, b: &str) -> bool {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    if a.len() != b.len() {
        return false;
    }
    let diff: Vec<usize> = (0..a.len()).filter(|&i| a[i] != b[i]).collect();
    matches!(diff.as_slice(), [i, j] if *j == i + 1 && a[*i] == b[*j] && a[*j] == b[*i])
}

/// Levenshtein distance, counting a swap of two neighbours as one edit
/// (optimal string alignment; Damerau 1964).
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, cell) in d[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut v = (d[i - 1][j] + 1)
                .min(d[i][j - 1] + 1)
                .min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                v = v.min(d[i - 2][j - 2] + 1);
            }
            d[i][j] = v;
        }
    }
    d[a.len()][b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn display_has_place_field_message_and_caret() {
        let text = "switch:\n  q_gd: \"80 nC\"\n";
        let e = InputError::at(
            "s.yaml",
            text,
            Some(Position { line: 2, column: 9 }),
            "switch.q_gd",
            "too large",
        );
        assert_eq!(
            e.to_string(),
            "s.yaml:2:9: switch.q_gd: too large\n 2 |   q_gd: \"80 nC\"\n   |         ^"
        );
    }

    #[test]
    fn suggestions() {
        assert_eq!(
            did_you_mean("q_gdd", &["q_g", "q_gd", "q_gs"]),
            Some("q_gd")
        );
        assert_eq!(did_you_mean("zzzz", &["q_g", "q_gd"]), None);
        assert_eq!(edit_distance("ab", "ba"), 1);
    }

    #[test]
    fn a_swap_beats_a_deletion_of_the_same_distance() {
        // Both are one edit from `q_dg`; alphabetical order alone picks `q_g`.
        assert_eq!(edit_distance("q_dg", "q_g"), 1);
        assert_eq!(edit_distance("q_dg", "q_gd"), 1);
        assert_eq!(did_you_mean("q_dg", &["q_g", "q_gd"]), Some("q_gd"));
        assert!(is_transposition("q_dg", "q_gd"));
        assert!(!is_transposition("q_dg", "q_g"));
        assert!(!is_transposition("abc", "cba"));
    }

    #[test]
    fn a_missing_field_beats_a_present_one() {
        // `v_tj` is one edit from both; `v_th` is already in the mapping.
        let present = ["v_th"];
        assert_eq!(
            suggest_field("v_tj", &["v_th", "v_tz"], &present),
            Some("v_tz")
        );
        assert_eq!(suggest_field("v_tj", &["v_th", "v_tz"], &[]), Some("v_th"));
    }

    #[test]
    fn a_position_past_the_end_moves_to_the_last_line() {
        let text = "a: [1,\n  2\n\n";
        let e = InputError::at(
            "f.yaml",
            text,
            Some(Position { line: 4, column: 1 }),
            "a",
            "unclosed",
        );
        assert_eq!(e.position, Some(Position { line: 2, column: 4 }));
        assert_eq!(
            e.to_string(),
            "f.yaml:2:4: a: unclosed\n 2 |   2\n   |    ^"
        );
    }
}
