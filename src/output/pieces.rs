//! Cutting a template into pieces before it is compiled.
//!
//! Why: the template parser asks for the line and column of every token it
//! meets by counting characters from the start of the text, so compiling a
//! template costs time that grows with the square of its length (about
//! 35 ms for the three bundled templates together, more than the search of
//! a small design). Pieces of a few hundred bytes, compiled one by one and
//! rendered one after another into the same text, cost a small fraction
//! of that and give the same output.
//!
//! A cut falls only at a line end. Outside every block nothing of one piece
//! can reach into the next. Inside `{{#if}}` / `{{#unless}}` blocks whose
//! opening, `{{else}}` and closing tags each stand alone on their line, a
//! cut closes the open blocks at the end of the piece and opens them again
//! (with `{{else}}` where the cut is in the else part) at the start of the
//! next: those tags test the same value again, and a tag alone on its line
//! leaves no trace in the output (the standalone rule of the Handlebars
//! language, <https://handlebarsjs.com/guide/expressions.html>, whitespace
//! control; the bundled golden cases check the output is the same as the
//! template compiled whole, `tests/golden.rs`). Other blocks (`each`,
//! `with`, helpers) are never cut inside.
//!
//! A template with raw blocks (`{{{{`) or whitespace control (`~`) stays
//! whole. A miscounted block shows as a piece that does not compile, and
//! the caller then compiles the template whole.

/// Bytes a piece grows to before the next allowed cut closes it: a bound of
/// our own choice (pieces of a few hundred bytes make the parser's
/// quadratic term small against the rest of compiling, and keep the
/// pieces few enough that rendering them one by one costs little).
pub const PIECE_BYTES: usize = 384;

/// `text` cut into pieces at allowed line ends (see the module
/// documentation), each piece's own text at least `piece_bytes` long
/// except the last. One piece (the whole text) where cutting is not safe.
pub fn top_level_pieces(text: &str, piece_bytes: usize) -> Vec<String> {
    let Some(tags) = scan_tags(text) else {
        return vec![text.to_string()];
    };
    let Some(blocks) = match_blocks(text, &tags) else {
        return vec![text.to_string()];
    };
    cut(text, &tags, &blocks, piece_bytes)
}

/// The flag a piece renders nothing without: `Some(flag)` when the whole
/// piece is one `{{#if flag}}` block with no else part, `flag` a plain name
/// of the context's top level. Such a piece needs compiling only where the
/// flag is true (`emit`).
pub fn gate(piece: &str) -> Option<&str> {
    let tags = scan_tags(piece)?;
    let (first, last) = (tags.first()?, tags.last()?);
    let flag = first.body.strip_prefix("#if ")?.trim();
    let plain = !flag.is_empty() && flag.chars().all(|c| c.is_ascii_alphanumeric() || c == '_');
    let whole = first.start == 0
        && piece[last.end..].trim().is_empty()
        && last.change == DepthChange::Close;
    // The first tag's block must close at the last tag, with no else at
    // its depth.
    let mut depth = 0usize;
    for (i, t) in tags.iter().enumerate() {
        match t.change {
            DepthChange::Open => depth += 1,
            DepthChange::Close => {
                depth = depth.checked_sub(1)?;
                if depth == 0 && i + 1 != tags.len() {
                    return None;
                }
            }
            DepthChange::None if depth == 1 && (t.body.starts_with("else") || t.body == "^") => {
                return None;
            }
            DepthChange::None => {}
        }
    }
    (plain && whole && depth == 0).then_some(flag)
}

/// One tag of the template: where it is and what it does to blocks.
#[derive(Debug, Clone, Copy)]
struct Tag<'a> {
    start: usize,
    end: usize,
    change: DepthChange,
    /// The tag's text after `{{`, trimmed.
    body: &'a str,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum DepthChange {
    Open,
    Close,
    None,
}

/// Every tag in order, or `None` where the template must stay whole.
fn scan_tags(text: &str) -> Option<Vec<Tag<'_>>> {
    if text.contains("{{{{") {
        return None;
    }
    let mut tags = Vec::new();
    let mut pos = 0;
    while let Some(at) = text[pos..].find("{{").map(|a| pos + a) {
        let (end, change) = tag_at_offset(text, at)?;
        let body = text[at + 2..end.saturating_sub(2).max(at + 2)]
            .trim_start_matches('{')
            .trim();
        tags.push(Tag {
            start: at,
            end,
            change,
            body,
        });
        pos = end;
    }
    Some(tags)
}

/// What a cut inside a block needs to know of it.
#[derive(Debug, Clone)]
struct Block {
    /// Index of the opening tag in the tag list.
    open: usize,
    /// The opening tag's text, to open it again.
    open_text: String,
    /// The closing tag's text, to close it early.
    close_text: String,
    /// Index of its depth's `{{else}}`, if any.
    else_at: Option<usize>,
    /// Whether a cut may fall inside it.
    splittable: bool,
}

/// Whether the tag `t` stands alone on its line (nothing else on it).
fn alone_on_line(text: &str, t: &Tag<'_>) -> bool {
    let before = text[..t.start].rsplit('\n').next().unwrap_or("");
    let after = text[t.end..].split('\n').next().unwrap_or("");
    let has_newline_after = text[t.end..].contains('\n');
    before.trim().is_empty() && after.trim().is_empty() && has_newline_after
}

/// The blocks of the template keyed by their opening tag's index, or `None`
/// when the tags do not nest.
fn match_blocks(text: &str, tags: &[Tag<'_>]) -> Option<std::collections::BTreeMap<usize, Block>> {
    let mut blocks = std::collections::BTreeMap::new();
    let mut stack: Vec<Block> = Vec::new();
    for (i, t) in tags.iter().enumerate() {
        match t.change {
            DepthChange::Open => {
                let kind = t.body[1..].split_whitespace().next().unwrap_or("");
                stack.push(Block {
                    open: i,
                    open_text: text[t.start..t.end].to_string(),
                    close_text: String::new(),
                    else_at: None,
                    splittable: t.body.starts_with('#')
                        && (kind == "if" || kind == "unless")
                        && alone_on_line(text, t),
                });
            }
            DepthChange::Close => {
                let mut b = stack.pop()?;
                b.close_text = text[t.start..t.end].to_string();
                b.splittable &= alone_on_line(text, t);
                blocks.insert(b.open, b);
            }
            DepthChange::None => {
                if let Some(b) = stack.last_mut()
                    && (t.body.starts_with("else") || t.body == "^")
                {
                    let plain = t.body == "else" && b.else_at.is_none();
                    b.splittable &= plain && alone_on_line(text, t);
                    b.else_at = Some(i);
                }
            }
        }
    }
    stack.is_empty().then_some(blocks)
}

/// The pieces: cut at line ends where every enclosing block is splittable.
fn cut(
    text: &str,
    tags: &[Tag<'_>],
    blocks: &std::collections::BTreeMap<usize, Block>,
    piece_bytes: usize,
) -> Vec<String> {
    let mut pieces = Vec::new();
    let mut current = String::new();
    let mut own = 0;
    let mut open: Vec<&Block> = Vec::new();
    let mut pos = 0;
    let mut next_tag = 0;
    while pos < text.len() {
        let tag_start = tags.get(next_tag).map_or(text.len(), |t| t.start);
        // Plain text up to the next tag: cut at its line ends.
        let between = &text[pos..tag_start];
        let mut from = 0;
        for (i, _) in between.match_indices('\n') {
            let line_end = i + 1;
            current.push_str(&between[from..line_end]);
            own += line_end - from;
            from = line_end;
            let at = pos + line_end;
            if own >= piece_bytes && at < text.len() && open.iter().all(|b| b.splittable) {
                for b in open.iter().rev() {
                    current.push_str(&b.close_text);
                    current.push('\n');
                }
                pieces.push(std::mem::take(&mut current));
                own = 0;
                for b in &open {
                    current.push_str(&b.open_text);
                    current.push('\n');
                    if b.else_at.is_some_and(|e| e < next_tag) {
                        current.push_str("{{else}}\n");
                    }
                }
            }
        }
        current.push_str(&between[from..]);
        own += between.len() - from;
        let Some(t) = tags.get(next_tag) else { break };
        // A block that may be cut inside starts a piece of its own, so
        // that its pieces can each be one block (`gate`).
        if t.change == DepthChange::Open
            && open.is_empty()
            && blocks.get(&next_tag).is_some_and(|b| b.splittable)
            && current.ends_with('\n')
        {
            pieces.push(std::mem::take(&mut current));
            own = 0;
        }
        current.push_str(&text[t.start..t.end]);
        own += t.end - t.start;
        match t.change {
            DepthChange::Open => open.extend(blocks.get(&next_tag)),
            DepthChange::Close => {
                open.pop();
            }
            DepthChange::None => {}
        }
        pos = t.end;
        next_tag += 1;
    }
    pieces.push(current);
    pieces
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
    fn cuts_outside_blocks_and_inside_plain_if_blocks() {
        let text = "a {{x}}\n{{#if y}}\nb\nc\n{{/if}}\nd\n{{#each z}}\n{{this}}\n{{/each}}\ne\n";
        let pieces = top_level_pieces(text, 2);
        assert_eq!(
            pieces,
            vec![
                "a {{x}}\n",
                "{{#if y}}\n{{/if}}\n",
                "{{#if y}}\nb\n{{/if}}\n",
                "{{#if y}}\nc\n{{/if}}\n",
                "{{#if y}}\n{{/if}}\n",
                "d\n",
                "{{#each z}}\n{{this}}\n{{/each}}\n",
                "e\n"
            ]
        );
    }

    #[test]
    fn a_cut_in_the_else_part_opens_the_else_again() {
        let text = "{{#if x}}\nb\n{{else}}\nc\nd\n{{/if}}\n";
        let pieces = top_level_pieces(text, 3);
        assert_eq!(
            pieces,
            vec![
                "{{#if x}}\n{{/if}}\n",
                "{{#if x}}\nb\n{{else}}\n{{/if}}\n",
                "{{#if x}}\n{{else}}\nc\nd\n{{/if}}\n",
                "{{#if x}}\n{{else}}\n{{/if}}\n",
            ]
        );
    }

    #[test]
    fn blocks_not_alone_on_their_lines_or_with_chains_are_not_cut_inside() {
        for text in [
            "{{#if x}}a\nb\nc\n{{/if}}\n",
            "{{#if x}}\na\nb\n{{else if y}}\nc\n{{/if}}\n",
            "{{#with x}}\na\nb\n{{/with}}\n",
            "{{#if x}}\na\nb\n{{^}}\nc\n{{/if}}\n",
        ] {
            assert_eq!(top_level_pieces(text, 1), vec![text], "{text:?}");
        }
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
    fn comments_do_not_change_the_depth() {
        let text = "{{!-- {{#if --}}\na\n{{#each x}}\nb\n{{/each}}\nd\n";
        assert_eq!(
            top_level_pieces(text, 1),
            vec![
                "{{!-- {{#if --}}\n",
                "a\n",
                "{{#each x}}\nb\n{{/each}}\n",
                "d\n"
            ]
        );
    }

    #[test]
    fn gates_are_whole_if_blocks_without_else() {
        assert_eq!(
            gate("{{#if a}}\nx\n{{#if b}}\ny\n{{else}}\nz\n{{/if}}\n{{/if}}\n"),
            Some("a")
        );
        for piece in [
            "x\n{{#if a}}\ny\n{{/if}}\n",
            "{{#if a}}\ny\n{{/if}}\nx\n",
            "{{#if a}}\ny\n{{else}}\nz\n{{/if}}\n",
            "{{#if a}}\ny\n{{/if}}\n{{#if a}}\nz\n{{/if}}\n",
            "{{#if (eq a 1)}}\ny\n{{/if}}\n",
            "{{#if a.b}}\ny\n{{/if}}\n",
            "{{#unless a}}\ny\n{{/unless}}\n",
        ] {
            assert_eq!(gate(piece), None, "{piece:?}");
        }
    }

    /// The handlebars engine itself renders the pieces one after another
    /// as it renders the whole text, for every truth value of the blocks
    /// and every piece size (an independent check of the cutting rule).
    #[test]
    fn pieces_render_as_the_whole_text() {
        let text = "top {{v}}\n{{#if a}}\n  one {{v}}\n  {{#unless b}}\n  two\n  three\n  {{else}}\n  four\n  five\n  {{/unless}}\n  six\n{{else}}\n  seven\n  {{#each list}}\n  {{this}}\n  {{/each}}\n  eight\n{{/if}}\nend\n";
        let mut hb = handlebars::Handlebars::new();
        hb.set_strict_mode(true);
        for (a, b) in [(true, true), (true, false), (false, true), (false, false)] {
            let ctx = serde_json::json!({"v": 1, "a": a, "b": b, "list": [1, 2]});
            let whole = hb.render_template(text, &ctx).expect("renders");
            for size in [1, 2, 5, 10, 20, 1000] {
                let pieces = top_level_pieces(text, size);
                let joined: String = pieces
                    .iter()
                    .map(|p| hb.render_template(p, &ctx).expect("a piece renders"))
                    .collect();
                assert_eq!(joined, whole, "a {a} b {b} size {size}: {pieces:?}");
            }
        }
    }
}
