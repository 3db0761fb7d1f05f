//! What the plots' texts need to lay themselves out without a font file:
//! a conservative estimate of a text's width, the legend packed into
//! columns under a plot, and the key of the failing spans wrapped to the
//! picture's width; with the small SVG writers they share (coordinates,
//! escaping, a text element).
//!
//! **Invariant:** pure and deterministic, like [`crate::output::svg`]; a
//! width estimate is never narrower than DejaVu Sans draws the text (the
//! first font the plots ask for, and the widest of the list), so a layout
//! made from it does not run out of the picture (`tests/plot_layout.rs`
//! measures in a browser).

use std::fmt::Write as _;

pub(crate) const INK: &str = "#222222";
pub(crate) const CHOSEN: &str = "#111111";

/// Height of one legend or key row, in pixels.
const ROW: f64 = 20.0;
/// Height of a wrapped key line's continuation.
const WRAPPED: f64 = 16.0;
/// From a swatch's left edge to its label's.
const SWATCH_W: f64 = 26.0;
/// Between two legend columns.
const COLUMN_GAP: f64 = 22.0;

/// A coordinate at two decimals, never `-0.00`.
pub(crate) fn n(v: f64) -> String {
    let s = format!("{:.2}", if v.is_finite() { v } else { 0.0 });
    if s == "-0.00" { "0.00".into() } else { s }
}

/// Escape text for XML and HTML (element content and quoted attributes).
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for ch in text.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// A text element; `extra` holds further attributes (its own `fill`
/// replaces the default ink).
pub(crate) fn text(out: &mut String, x: f64, y: f64, anchor: &str, extra: &str, body: &str) {
    let fill = if extra.contains(" fill=") {
        String::new()
    } else {
        format!(r#" fill="{INK}""#)
    };
    let _ = writeln!(
        out,
        r#"<text x="{}" y="{}" text-anchor="{anchor}"{fill}{extra}>{}</text>"#,
        n(x),
        n(y),
        escape(body)
    );
}

/// Advance width of one character in ems, rounded up from DejaVu Sans
/// (its metrics, from memory; the browser test checks the result).
fn advance_em(c: char) -> f64 {
    match c {
        ' ' => 0.33,
        'i' | 'j' | 'l' | 'I' | 'J' | '\'' | ',' | '.' | ':' | ';' | '|' | '!' => 0.34,
        'f' | 't' | 'r' | '(' | ')' | '[' | ']' | '-' | '/' => 0.43,
        'm' | 'M' | 'W' | '%' | '@' | '—' => 1.0,
        'w' | '+' | '=' | '<' | '>' | '≤' | '≥' | '#' | '×' => 0.84,
        'A'..='Z' => 0.80,
        'a'..='z' | '0'..='9' => 0.65,
        _ => 0.80,
    }
}

/// Width of `s` set at `px` pixels: never narrower than DejaVu Sans draws
/// it (bold adds its wider strokes).
pub(crate) fn text_width(s: &str, px: f64, bold: bool) -> f64 {
    let ems: f64 = s.chars().map(advance_em).sum();
    let weight = if bold { 1.12 } else { 1.0 };
    ems * px * weight + 2.0
}

/// One legend entry's mark.
pub(crate) enum Swatch<'a> {
    Fill(&'a str),
    Line {
        colour: &'a str,
        dash: Option<&'a str>,
    },
    /// The washed-out look of a span that fails, with the span's letter.
    Wash(Option<char>),
    Dot,
}

/// Draw one swatch with its row's text baseline at `y`.
fn swatch(out: &mut String, sw: &Swatch, x: f64, y: f64) {
    match sw {
        Swatch::Fill(c) => {
            let _ = writeln!(
                out,
                r#"<rect x="{}" y="{}" width="18" height="12" fill="{c}"/>"#,
                n(x),
                n(y - 10.0)
            );
        }
        Swatch::Line { colour, dash } => {
            let dash = dash
                .map(|d| format!(r#" stroke-dasharray="{d}""#))
                .unwrap_or_default();
            let _ = writeln!(
                out,
                r#"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke="{colour}" stroke-width="2"{dash}/>"#,
                n(x),
                n(y - 4.0),
                n(x + 18.0),
                n(y - 4.0)
            );
        }
        Swatch::Wash(letter) => {
            let _ = writeln!(
                out,
                r##"<rect x="{}" y="{}" width="18" height="14" fill="#f1f1f1" stroke="#9e9e9e" stroke-width="1"/>"##,
                n(x),
                n(y - 11.0)
            );
            if let Some(l) = letter {
                span_letter(out, x + 9.0, y, *l);
            }
        }
        Swatch::Dot => {
            let _ = writeln!(
                out,
                r##"<circle cx="{}" cy="{}" r="5" fill="#ffffff" stroke="{CHOSEN}" stroke-width="2"/>"##,
                n(x + 9.0),
                n(y - 4.0)
            );
        }
    }
}

/// A failing span's letter, centred on `x` (the same mark above the span
/// and in the key, so the eye matches them).
pub(crate) fn span_letter(out: &mut String, x: f64, y: f64, letter: char) {
    text(
        out,
        x,
        y,
        "middle",
        r#" class="span-letter" font-size="11" font-weight="bold""#,
        &letter.to_string(),
    );
}

/// The width a legend entry takes.
fn entry_width(label: &str) -> f64 {
    SWATCH_W + text_width(label, 12.0, false)
}

/// Rows per column: the fewest that let the columns (each as wide as its
/// widest entry, filled top to bottom) fit in `width`; one column when
/// nothing narrower fits.
fn rows_per_column(widths: &[f64], width: f64) -> usize {
    (1..=widths.len().max(1))
        .find(|rows| {
            let cols: Vec<f64> = widths
                .chunks(*rows)
                .map(|c| c.iter().copied().fold(0.0, f64::max))
                .collect();
            let total = cols.iter().sum::<f64>() + COLUMN_GAP * (cols.len() as f64 - 1.0);
            total <= width
        })
        .unwrap_or(widths.len().max(1))
}

/// The legend under a plot: entries in columns from `(x, y)` (the first
/// row's baseline) within `width`, read down each column. Returns the
/// height taken (nothing for no entries).
pub(crate) fn legend(
    out: &mut String,
    x: f64,
    y: f64,
    width: f64,
    entries: &[(Swatch, String)],
) -> f64 {
    if entries.is_empty() {
        return 0.0;
    }
    let widths: Vec<f64> = entries.iter().map(|(_, l)| entry_width(l)).collect();
    let rows = rows_per_column(&widths, width);
    let _ = writeln!(out, r#"<g class="legend">"#);
    let mut col_x = x;
    for (col, chunk) in entries.chunks(rows).enumerate() {
        for (i, (sw, label)) in chunk.iter().enumerate() {
            let yy = y + ROW * i as f64;
            swatch(out, sw, col_x, yy);
            text(out, col_x + SWATCH_W, yy, "start", "", label);
        }
        let w = widths[col * rows..(col * rows + chunk.len())]
            .iter()
            .copied()
            .fold(0.0, f64::max);
        col_x += w + COLUMN_GAP;
    }
    let _ = writeln!(out, "</g>");
    ROW * rows as f64
}

/// `s` broken at spaces into lines no wider than `width` at 12 px (a
/// single word wider than that stays whole on its line).
pub(crate) fn wrap(s: &str, width: f64) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    let mut cur = String::new();
    for word in s.split(' ') {
        let tried = if cur.is_empty() {
            word.to_string()
        } else {
            format!("{cur} {word}")
        };
        if cur.is_empty() || text_width(&tried, 12.0, false) <= width {
            cur = tried;
        } else {
            lines.push(std::mem::replace(&mut cur, word.to_string()));
        }
    }
    lines.push(cur);
    lines
}

/// The key of the failing spans under a plot, from `(x, y)` (the first
/// baseline): each span's letter in a washed box and its words, wrapped
/// within `width`. Returns the height taken.
pub(crate) fn span_key(
    out: &mut String,
    x: f64,
    y: f64,
    width: f64,
    spans: &[(char, String)],
) -> f64 {
    if spans.is_empty() {
        return 0.0;
    }
    let _ = writeln!(out, r#"<g class="span-key">"#);
    let mut yy = y;
    for (letter, words) in spans {
        swatch(out, &Swatch::Wash(Some(*letter)), x, yy);
        for (i, line) in wrap(words, width - SWATCH_W).iter().enumerate() {
            if i > 0 {
                yy += WRAPPED;
            }
            text(
                out,
                x + SWATCH_W,
                yy,
                "start",
                r#" class="span-words""#,
                line,
            );
        }
        yy += ROW;
    }
    let _ = writeln!(out, "</g>");
    yy - y
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The widest label a column holds decides its width; three entries of
    /// 100 px (22 px apart) fit in 350 px as three columns, in 250 px as two
    /// rows of two columns, in 90 px as one column.
    #[test]
    fn columns_are_as_many_as_fit() {
        assert_eq!(rows_per_column(&[100.0; 3], 350.0), 1);
        assert_eq!(rows_per_column(&[100.0; 3], 250.0), 2);
        assert_eq!(rows_per_column(&[100.0; 3], 90.0), 3);
        assert_eq!(rows_per_column(&[], 90.0), 1);
    }

    /// Wrapped lines keep every word in order and stay within the width
    /// unless a word alone is wider.
    #[test]
    fn wrapping_keeps_words_and_width() {
        let s = "above 70.7 kHz: fails sampling-window, duty-range, frequency-band, resolution";
        let lines = wrap(s, 200.0);
        assert!(lines.len() > 1);
        assert_eq!(lines.join(" "), s);
        for l in &lines {
            assert!(
                text_width(l, 12.0, false) <= 200.0 || !l.contains(' '),
                "{l}"
            );
        }
        assert_eq!(wrap("one", 1.0), vec!["one".to_string()]);
    }

    /// DejaVu Sans at 12 px sets "motor ripple copper" 119.4 px wide
    /// (9.947 em from its advance widths); the estimate is not narrower.
    #[test]
    fn width_estimate_is_conservative() {
        let w = text_width("motor ripple copper", 12.0, false);
        assert!((119.4..135.0).contains(&w), "{w}");
    }
}
