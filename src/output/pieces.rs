//! Cutting a template into top-level pieces before it is compiled.
//!
//! Why: the template parser asks for the line and column of every token it
//! meets by counting characters from the start of the text, so compiling a
//! template costs time that grows with the square of its length (about
//! 35 ms for the three bundled templates together, more than the search of
//! a small design). Pieces of a few kilobytes, compiled one by one and
//! rendered one after another into the same text, cost a small fraction
//! of that and give the same output, because a cut falls only between
//! whole lines outside every block, where nothing of one piece can reach
//! into the next.
//!
//! A cut is never made where the text could make a piece depend on its
//! neighbour: a template with raw blocks (`{{{{`) or whitespace control
//! (`~`) stays whole. A miscounted block shows as a piece that does not
//! compile, and the caller then compiles the template whole.

/// Bytes a piece grows to before the next allowed cut closes it: a bound of
/// our own choice (2 KiB pieces make the parser's quadratic term small
/// against the rest of compiling, and keep the pieces few).
pub const PIECE_BYTES: usize = 2048;

/// `text` cut into pieces at line ends outside every block, each piece at
/// least `piece_bytes` long except the last; the pieces joined give `text`
/// back. One piece (the whole text) where cutting is not safe.
pub fn top_level_pieces(text: &str, piece_bytes: usize) -> Vec<&str> {
    match cut_points(text, piece_bytes) {
        Some(cuts) => {
            let mut ends = cuts.clone();
            ends.push(text.len());
            let mut starts = vec![0];
            starts.extend(cuts);
            starts
                .iter()
                .zip(&ends)
                .map(|(&s, &e)| &text[s..e])
                .collect()
        }
        None => vec![text],
    }
}

/// The byte offsets where pieces start (after the first), or `None` where
/// the template must stay whole.
fn cut_points(text: &str, piece_bytes: usize) -> Option<Vec<usize>> {
    if text.contains("{{{{") {
        return None;
    }
    let mut cuts = Vec::new();
    let mut last_cut = 0;
    let mut depth: usize = 0;
    let mut pos = 0;
    loop {
        let tag_at = text[pos..].find("{{").map(|a| pos + a);
        if depth == 0 {
            let between = &text[pos..tag_at.unwrap_or(text.len())];
            for (i, _) in between.match_indices('\n') {
                let cut = pos + i + 1;
                if cut - last_cut >= piece_bytes && cut < text.len() {
                    cuts.push(cut);
                    last_cut = cut;
                }
            }
        }
        let Some(at) = tag_at else { break };
        let (end, change) = tag_at_offset(text, at)?;
        depth = match change {
            DepthChange::Open => depth + 1,
            DepthChange::Close => depth.checked_sub(1)?,
            DepthChange::None => depth,
        };
        pos = end;
    }
    (depth == 0).then_some(cuts)
}

enum DepthChange {
    Open,
    Close,
    None,
}

/// The tag starting at `at` (a `{{`): where it ends and how it changes the
/// block depth; `None` for an unclosed tag or whitespace control.
fn tag_at_offset(text: &str, at: usize) -> Option<(usize, DepthChange)> {
    let inner = &text[at + 2..];
    if let Some(comment) = inner.strip_prefix("!--") {
        let end = comment.find("--}}")?;
        return Some((at + 5 + end + 4, DepthChange::None));
    }
    let end = inner.find("}}")?;
    let tag = &inner[..end];
    if tag.starts_with('!') {
        return Some((at + 2 + end + 2, DepthChange::None));
    }
    if tag.contains('~') {
        return None;
    }
    let body = tag.trim_start_matches('{').trim_start();
    let change = if body.starts_with('#') || (body.starts_with('^') && body.len() > 1) {
        DepthChange::Open
    } else if body.starts_with('/') {
        DepthChange::Close
    } else {
        DepthChange::None
    };
    Some((at + 2 + end + 2, change))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pieces_join_to_the_text_and_cut_only_outside_blocks() {
        let text = "a {{x}}\n{{#if y}}\nb\nc\n{{/if}}\nd\n{{#each z}}\n{{this}}\n{{/each}}\ne\n";
        let pieces = top_level_pieces(text, 1);
        assert_eq!(pieces.concat(), text);
        assert_eq!(
            pieces,
            vec![
                "a {{x}}\n",
                "{{#if y}}\nb\nc\n{{/if}}\n",
                "d\n",
                "{{#each z}}\n{{this}}\n{{/each}}\n",
                "e\n"
            ]
        );
    }

    #[test]
    fn pieces_grow_to_their_size_before_a_cut() {
        let text = "1\n2\n3\n4\n5\n";
        assert_eq!(top_level_pieces(text, 4), vec!["1\n2\n", "3\n4\n", "5\n"]);
        assert_eq!(top_level_pieces(text, 100), vec![text]);
    }

    #[test]
    fn unsafe_texts_stay_whole() {
        for text in [
            "a\n{{~x}}\nb\n",
            "a\n{{{{raw}}}}\n{{x}}\n{{{{/raw}}}}\nb\n",
            "a\n{{#if x}}\nb\n",
            "a\n{{/if}}\nb\n",
            "a\n{{x\nb\n",
        ] {
            assert_eq!(top_level_pieces(text, 1), vec![text], "{text:?}");
        }
    }

    #[test]
    fn comments_and_else_do_not_change_the_depth() {
        let text = "{{!-- {{#if --}}\na\n{{#if x}}\nb\n{{else}}\nc\n{{^}}\n{{/if}}\nd\n";
        let pieces = top_level_pieces(text, 1);
        assert_eq!(pieces.concat(), text);
        assert_eq!(
            pieces,
            vec![
                "{{!-- {{#if --}}\n",
                "a\n",
                "{{#if x}}\nb\n{{else}}\nc\n{{^}}\n{{/if}}\n",
                "d\n"
            ]
        );
    }
}
