//! Errors in the user's input files, with the place they point at.
//!
//! Every bad input ends as one `InputError`: the file, the 1-based line and
//! column, the dotted field path and a sentence saying what was expected. Its
//! `Display` is the whole message the user sees (tests assert it verbatim),
//! followed by the offending source line and a caret.

use std::fmt;

use crate::locate::Position;

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

    /// An error at a position in `text`.
    pub fn at(
        file: impl Into<String>,
        text: &str,
        position: Option<Position>,
        field: impl Into<String>,
        message: impl Into<String>,
    ) -> InputError {
        let source_line = position.and_then(|p| text.lines().nth(p.line.saturating_sub(1)));
        InputError {
            file: file.into(),
            position,
            field: field.into(),
            message: message.into(),
            source_line: source_line.map(|s| s.trim_end().to_string()),
        }
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(p) = self.position {
            write!(f, ":{}:{}", p.line, p.column)?;
        }
        if !self.field.is_empty() {
            write!(f, ": {}", self.field)?;
        }
        write!(f, ": {}", self.message)?;
        if let (Some(p), Some(src)) = (self.position, &self.source_line) {
            let gutter = p.line.to_string();
            let pad = " ".repeat(gutter.len());
            // The caret sits under the column; tabs are kept so it lines up.
            let lead: String = src
                .chars()
                .take(p.column.saturating_sub(1))
                .map(|c| if c == '\t' { '\t' } else { ' ' })
                .collect();
            write!(f, "\n {gutter} | {src}\n {pad} | {lead}^")?;
        }
        Ok(())
    }
}

impl std::error::Error for InputError {}

/// The closest of `candidates` to `word` by edit distance, when close enough
/// to be a likely slip (distance ≤ a third of the word, at least 1).
pub fn did_you_mean<'a>(word: &str, candidates: &[&'a str]) -> Option<&'a str> {
    let limit = (word.chars().count() / 3).max(1);
    candidates
        .iter()
        .map(|c| (edit_distance(&word.to_lowercase(), &c.to_lowercase()), *c))
        .filter(|(d, _)| *d <= limit)
        .min_by_key(|(d, c)| (*d, *c))
        .map(|(_, c)| c)
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
}
