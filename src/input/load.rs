//! Reading the input files: from disk or from the bundled set compiled into
//! the binary, with references between them resolved and every syntax, type
//! and unit error turned into an [`InputError`] that names the place.
//!
//! **Invariant:** this is the only module that reads files.

use std::path::{Component, Path, PathBuf};

use serde::Deserialize;
use serde::de::DeserializeOwned;

use crate::input::bundled;
use crate::input::diagnostic::{InputError, did_you_mean, suggest_field};
use crate::input::locate::{Locator, Position};

/// Where a file comes from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Origin {
    /// A file on disk, as the user named it (or as resolved from a reference).
    Disk(PathBuf),
    /// A file compiled into the binary, by its path under the repository
    /// (`boards/switches/tarn-40.yaml`).
    Bundled(String),
}

impl Origin {
    /// How the file is named in messages and in the rationale.
    pub fn display(&self) -> String {
        match self {
            Origin::Disk(p) => p.display().to_string(),
            Origin::Bundled(p) => format!("bundled:{}", bundled::short_name(p)),
        }
    }

    /// Resolve a reference written inside this file: a path relative to the
    /// file's folder, or `bundled:NAME`. Upward (`..`) and absolute paths are
    /// refused so a design folder stays self-contained.
    pub fn resolve(&self, reference: &str, kind: bundled::Kind) -> Result<Origin, String> {
        if let Some(name) = reference.strip_prefix("bundled:") {
            return bundled::find(name, kind)
                .map(|p| Origin::Bundled(p.to_string()))
                .ok_or_else(|| no_bundled(name, kind));
        }
        let rel = Path::new(reference);
        if reference.trim().is_empty() {
            return Err(format!(
                "expected a {} file path or \"bundled:NAME\"",
                kind.noun()
            ));
        }
        if rel.is_absolute() {
            return Err(format!(
                "\"{reference}\" is an absolute path; expected a path relative to this file (or \"bundled:NAME\")"
            ));
        }
        if rel.components().any(|c| matches!(c, Component::ParentDir)) {
            return Err(format!(
                "\"{reference}\" climbs out of this file's folder with \"..\"; keep the {} beside or below it (or use \"bundled:NAME\")",
                kind.noun()
            ));
        }
        match self {
            Origin::Disk(p) => {
                let dir = p.parent().unwrap_or(Path::new(""));
                let joined = dir.join(rel);
                // A symbolic link may lead out of the folder without `..`:
                // the file actually reached must lie in this file's folder.
                // (A missing file is reported when it is read.)
                let here = if dir.as_os_str().is_empty() {
                    Path::new(".")
                } else {
                    dir
                };
                if let (Ok(target), Ok(folder)) =
                    (std::fs::canonicalize(&joined), std::fs::canonicalize(here))
                    && !target.starts_with(&folder)
                {
                    return Err(format!(
                        "\"{reference}\" leads through a symbolic link to {}, outside this file's folder; keep the {} beside or below it (or use \"bundled:NAME\")",
                        target.display(),
                        kind.noun()
                    ));
                }
                Ok(Origin::Disk(joined))
            }
            Origin::Bundled(p) => {
                let dir = Path::new(p).parent().unwrap_or(Path::new(""));
                let joined = dir.join(rel).to_string_lossy().replace('\\', "/");
                if bundled::text(&joined).is_some() {
                    Ok(Origin::Bundled(joined))
                } else {
                    Err(format!("no bundled file \"{joined}\""))
                }
            }
        }
    }
}

/// Why `bundled:NAME` names no bundled file of `kind`, with the nearest
/// name when one is close. A switch may be named with or without its
/// `switches/` folder, so both spellings are compared.
pub fn no_bundled(name: &str, kind: bundled::Kind) -> String {
    let full = bundled::names(kind);
    let short: Vec<&str> = full.iter().map(|n| without_folder(n)).collect();
    // The spelling the user chose (with or without the folder) is offered back.
    let pool = if name.contains('/') { &full } else { &short };
    match did_you_mean(name.trim(), pool) {
        Some(s) => format!(
            "no bundled {} named \"{name}\"; did you mean \"bundled:{s}\"?",
            kind.noun()
        ),
        None => format!(
            "no bundled {} named \"{name}\"; expected one of: {}",
            kind.noun(),
            short
                .iter()
                .map(|n| format!("bundled:{n}"))
                .collect::<Vec<_>>()
                .join(", ")
        ),
    }
}

fn without_folder(name: &str) -> &str {
    name.rsplit('/').next().unwrap_or(name)
}

/// One input file, read, with the positions of its fields.
#[derive(Debug, Clone)]
pub struct SourceFile {
    pub origin: Origin,
    pub text: String,
    pub locator: Locator,
}

/// Largest input file read: 1 MiB, a bound of our own choice (the bundled
/// files are a few kilobytes; the cap keeps every later step fast and a
/// device such as `/dev/zero` from filling memory). Templates share it.
pub const MAX_FILE_BYTES: u64 = 1 << 20;

/// Why [`read_text`] refused a file, worded for the user, with the place
/// when there is one (the first byte that is not UTF-8).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ReadRefusal(pub String, pub Option<Position>);

fn refusal(message: String) -> ReadRefusal {
    ReadRefusal(message, None)
}

/// Read a regular file of at most [`MAX_FILE_BYTES`] as UTF-8 text. A FIFO,
/// device, socket or folder is refused without being opened for reading
/// (opening a FIFO would block), and the read stops one byte past the cap,
/// so nothing waits or grows without bound.
/// `kind` names what the file should be ("a YAML file").
pub fn read_text(path: &Path, kind: &str) -> Result<String, ReadRefusal> {
    use std::io::Read;
    let meta = std::fs::metadata(path).map_err(|e| {
        refusal(match e.kind() {
            std::io::ErrorKind::NotFound => "no such file".to_string(),
            _ => format!("cannot read it: {e}"),
        })
    })?;
    if meta.is_dir() {
        return Err(refusal(format!("is a folder; expected {kind}")));
    }
    if !meta.is_file() {
        return Err(refusal(format!(
            "is not a regular file (a pipe, socket or device); expected {kind}"
        )));
    }
    let too_big = || {
        refusal(format!(
            "is larger than {} bytes (1 MiB), the largest input pwmplan reads",
            MAX_FILE_BYTES
        ))
    };
    if meta.len() > MAX_FILE_BYTES {
        return Err(too_big());
    }
    let file = std::fs::File::open(path).map_err(|e| refusal(format!("cannot read it: {e}")))?;
    let mut bytes = Vec::new();
    file.take(MAX_FILE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| refusal(format!("cannot read it: {e}")))?;
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(too_big());
    }
    String::from_utf8(bytes).map_err(|e| {
        // The place of the first byte that is not UTF-8.
        let head = &e.as_bytes()[..e.utf8_error().valid_up_to()];
        let line_start = head.iter().rposition(|b| *b == b'\n').map_or(0, |i| i + 1);
        let column = String::from_utf8_lossy(&head[line_start..]).chars().count() + 1;
        let line = head.iter().filter(|b| **b == b'\n').count() + 1;
        ReadRefusal(
            format!("not UTF-8 text (a byte here is not UTF-8); expected {kind}"),
            Some(Position { line, column }),
        )
    })
}

/// Deepest nesting of flow collections (`[` and `{`) accepted: 64, a
/// bound of our own choice (a design nests three deep; the YAML parsers
/// recurse once per level and slow down on thousands).
pub const MAX_FLOW_DEPTH: usize = 64;

/// Problems found by one cheap linear pass before any parser runs: a NUL
/// or other control character (named as such), an alias to an anchor not
/// defined above it, and flow collections
/// nested deeper than [`MAX_FLOW_DEPTH`]. Returns the place, the field path
/// of the block keys above it, and the message.
pub fn shape_problem(text: &str) -> Option<(Position, String, String)> {
    // Block keys by indentation, for the field path of a problem.
    let mut keys: Vec<(usize, String)> = Vec::new();
    let mut depth = 0usize;
    let mut quote: Option<char> = None;
    let mut anchors = std::collections::BTreeSet::new();
    for (i, line) in text.split('\n').enumerate() {
        if depth == 0 && quote.is_none() {
            let body = line.trim_start_matches([' ', '-']);
            let indent = line.len() - body.len();
            if let Some((key, _)) = body.split_once(':')
                && !key.is_empty()
                && key
                    .chars()
                    .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
            {
                keys.retain(|(at, _)| *at < indent);
                keys.push((indent, key.to_string()));
            }
        }
        let path = |keys: &[(usize, String)]| {
            keys.iter()
                .map(|(_, k)| k.as_str())
                .collect::<Vec<_>>()
                .join(".")
        };
        let mut comment = false;
        let chars: Vec<char> = line.chars().collect();
        for (col, &ch) in chars.iter().enumerate() {
            let at = Position {
                line: i + 1,
                column: col + 1,
            };
            if ch == '\0' {
                return Some((
                    at,
                    path(&keys),
                    "a NUL byte (character 0) in the text; expected YAML text without control characters".into(),
                ));
            }
            if ch.is_control() && ch != '\t' && ch != '\r' {
                return Some((
                    at,
                    path(&keys),
                    format!(
                        "a control character (U+{:04X}) in the text; expected YAML text without control characters",
                        u32::from(ch)
                    ),
                ));
            }
            if comment {
                continue;
            }
            match (quote, ch) {
                (Some(q), c) if c == q => quote = None,
                (Some(_), _) => {}
                (None, '"' | '\'') if depth > 0 => quote = Some(ch),
                (None, '#') => comment = true,
                (None, '&' | '*')
                    if col == 0 || matches!(chars[col - 1], ' ' | '\t' | '[' | '{' | ',') =>
                {
                    let name: String = chars[col + 1..]
                        .iter()
                        .take_while(|c| {
                            !c.is_whitespace() && !matches!(c, ',' | '[' | ']' | '{' | '}')
                        })
                        .collect();
                    if ch == '&' {
                        anchors.insert(name);
                    } else if !anchors.contains(&name) {
                        return Some((
                            at,
                            path(&keys),
                            format!(
                                "the alias `*{name}` names no anchor: no `&{name}` is defined above it; expected a value, or an anchor defined before its alias"
                            ),
                        ));
                    }
                }
                (None, '[' | '{') => {
                    depth += 1;
                    if depth > MAX_FLOW_DEPTH {
                        return Some((
                            at,
                            path(&keys),
                            format!(
                                "`{ch}` nested more than {MAX_FLOW_DEPTH} deep; expected at most {MAX_FLOW_DEPTH} levels of `[` and `{{`"
                            ),
                        ));
                    }
                }
                (None, ']' | '}') => depth = depth.saturating_sub(1),
                _ => {}
            }
        }
        // A quote does not run past its line in a flow collection here.
        quote = None;
    }
    None
}

impl SourceFile {
    pub fn read(origin: Origin) -> Result<SourceFile, InputError> {
        let text = match &origin {
            Origin::Disk(p) => {
                read_text(p, "a YAML file").map_err(|ReadRefusal(why, at)| match at {
                    // Not UTF-8: the place, under the keys it lies in.
                    Some(at) => {
                        let lossy = std::fs::read(p)
                            .map(|b| String::from_utf8_lossy(&b).to_string())
                            .unwrap_or_default();
                        InputError::at(origin.display(), &lossy, Some(at), "", why)
                    }
                    None => InputError::file(origin.display(), why),
                })?
            }
            Origin::Bundled(p) => bundled::text(p)
                .ok_or_else(|| InputError::file(origin.display(), "no such bundled file"))?
                .to_string(),
        };
        if let Some((position, field, message)) = shape_problem(&text) {
            return Err(InputError::at(
                origin.display(),
                &text,
                Some(position),
                field,
                message,
            ));
        }
        Ok(SourceFile::from_text(origin, text))
    }

    pub fn from_text(origin: Origin, text: String) -> SourceFile {
        let locator = Locator::new(&text);
        SourceFile {
            origin,
            text,
            locator,
        }
    }

    /// An error about the value at `field`.
    pub fn error(&self, field: &str, message: impl Into<String>) -> InputError {
        // The value's place; else its key's; else the nearest enclosing
        // field the locator found (a mangled key may hide the field itself).
        let mut position = self
            .locator
            .value(field)
            .or_else(|| self.locator.key(field));
        let mut up = field;
        while position.is_none()
            && let Some((parent, _)) = up.rsplit_once(['.', '['])
        {
            up = parent;
            position = self.locator.value(up).or_else(|| self.locator.key(up));
        }
        InputError::at(
            self.origin.display(),
            &self.text,
            position.or(Some(Position { line: 1, column: 1 })),
            field,
            message,
        )
    }

    /// [`Self::parse`] as a switch file (one copy of its deserialiser, built
    /// here, for every caller).
    pub fn parse_switch(&self) -> Result<crate::input::spec::SwitchFile, InputError> {
        self.parse()
    }

    /// [`Self::parse`] as a board file.
    pub fn parse_board(&self) -> Result<crate::input::spec::BoardFile, InputError> {
        self.parse()
    }

    /// [`Self::parse`] as a design file.
    pub fn parse_design(&self) -> Result<crate::input::spec::DesignFile, InputError> {
        self.parse()
    }

    /// Deserialise the whole file into `T`, mapping every failure to an
    /// [`InputError`] at the place it concerns. YAML syntax is checked first,
    /// so a syntax error is not hidden behind a field error from the part
    /// the deserialiser read before it.
    pub fn parse<T: DeserializeOwned>(&self) -> Result<T, InputError> {
        let top = top_key::<T>();
        let expect_top = top.as_deref().map_or("expected YAML".to_string(), |k| {
            format!("expected a top-level `{k}:` key")
        });
        if self.text.trim().is_empty() {
            return Err(InputError::at(
                self.origin.display(),
                &self.text,
                Some(Position { line: 1, column: 1 }),
                top.as_deref().unwrap_or("(top level)"),
                format!("the file is empty; {expect_top}"),
            ));
        }
        if let Some(p) = self.locator.problem()
            && (p.duplicate || !is_yaml(&self.text))
        {
            return Err(InputError::at(
                self.origin.display(),
                &self.text,
                Some(p.position),
                p.field.clone(),
                p.message.clone(),
            ));
        }
        if self.locator.problem().is_none() && !self.locator.has_content() {
            return Err(InputError::at(
                self.origin.display(),
                &self.text,
                Some(Position { line: 1, column: 1 }),
                top.as_deref().unwrap_or("(top level)"),
                format!("the file has no content; {expect_top}"),
            ));
        }
        if let Some(m) = self.kind_mismatch::<T>() {
            return Err(InputError::at(
                self.origin.display(),
                &self.text,
                Some(m.position),
                "",
                m.describe("this"),
            ));
        }
        // Enums are written as one-key maps (`linear: { min: 1, max: 8 }`)
        // rather than YAML tags.
        let de = serde_yaml::Deserializer::from_str(&self.text);
        serde_yaml::with::singleton_map_recursive::deserialize(de).map_err(|e| self.convert(&e))
    }

    /// When `T` is one file kind (top-level `design:`, `board:` or
    /// `switch:`) and this file is plainly another, what each is.
    pub fn kind_mismatch<T: DeserializeOwned>(&self) -> Option<KindMismatch> {
        let expected = top_key::<T>()?;
        let tops = self.locator.children("");
        if tops.contains(&expected.as_str()) {
            return None;
        }
        let found = tops
            .into_iter()
            .find(|k| KIND_KEYS.contains(k) && *k != expected)?;
        Some(KindMismatch {
            found: found.to_string(),
            expected,
            position: self.locator.key(found)?,
        })
    }

    fn convert(&self, e: &serde_yaml::Error) -> InputError {
        let position = e.location().map(|l| Position {
            line: l.line(),
            column: l.column(),
        });
        if position.is_none() && e.to_string().contains("more than one document") {
            // The second document's start: a `---` after the first content.
            let second = self
                .text
                .lines()
                .enumerate()
                .skip_while(|(_, l)| {
                    l.trim().is_empty() || l.trim_start().starts_with('#') || l.starts_with("---")
                })
                .find(|(_, l)| l.starts_with("---") || l.starts_with("..."))
                .map(|(i, _)| Position {
                    line: i + 1,
                    column: 1,
                });
            return InputError::at(
                self.origin.display(),
                &self.text,
                second.or(Some(Position { line: 1, column: 1 })),
                "",
                "a second YAML document (`---` or `...`) begins here; expected one document per file",
            );
        }
        let (path, message) = split_yaml_message(&e.to_string());
        let present = self.locator.children(&path);
        let (field, message) = refine(&path, &message, &present);
        InputError::at(self.origin.display(), &self.text, position, field, message)
    }
}

/// The top-level keys that name a file kind.
const KIND_KEYS: [&str; 3] = ["design", "board", "switch"];

/// A file of one kind where another was expected.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KindMismatch {
    /// Top-level key found (`board`).
    pub found: String,
    /// Top-level key expected (`design`).
    pub expected: String,
    /// Where the found key stands.
    pub position: Position,
}

impl KindMismatch {
    /// The sentence with `subject` (`this`, or the file's name) as subject.
    pub fn describe(&self, subject: &str) -> String {
        format!(
            "{subject} is a {} file; expected a {} file (top-level key `{}:`)",
            self.found, self.expected, self.expected
        )
    }
}

/// The one top-level key a file struct `T` requires, read from the error
/// `T` gives for an empty mapping (`missing field `design``), so each file
/// kind names itself without a table to keep in step.
fn top_key<T: DeserializeOwned>() -> Option<String> {
    let e = serde_yaml::from_str::<T>("{}").err()?.to_string();
    let rest = e.split_once("missing field `")?.1;
    Some(rest.split_once('`')?.0.to_string())
}

/// Whether the lenient parser the deserialiser uses accepts `text` as YAML.
/// The stricter indexing parser's complaint is reported only when both
/// agree the text is broken.
fn is_yaml(text: &str) -> bool {
    serde::de::IgnoredAny::deserialize(serde_yaml::Deserializer::from_str(text)).is_ok()
}

/// Split serde_yaml's `path: message at line L column C` into path and message.
fn split_yaml_message(raw: &str) -> (String, String) {
    let mut msg = raw.to_string();
    if let Some(at) = msg.find(" at line ") {
        // Cut " at line L column C" (it may be followed by ", while ...").
        let rest = &msg[at + " at line ".len()..];
        let end = rest
            .find(" column ")
            .map(|c| {
                let after = &rest[c + " column ".len()..];
                c + " column ".len()
                    + after
                        .find(|ch: char| !ch.is_ascii_digit())
                        .unwrap_or(after.len())
            })
            .unwrap_or(0);
        msg = format!("{}{}", &msg[..at], &rest[end..]);
    }
    if let Some((head, tail)) = msg.split_once(": ")
        && !head.is_empty()
        && !head.contains([' ', '`', '"'])
    {
        return (head.to_string(), tail.to_string());
    }
    (String::new(), msg)
}

/// Turn serde's wording into ours: the field path gets the missing or unknown
/// key appended, unknown keys and variants get a suggestion (`present`: the
/// keys already in the mapping), and Rust type names become words.
fn refine(path: &str, message: &str, present: &[&str]) -> (String, String) {
    let join = |key: &str| {
        if path.is_empty() {
            key.to_string()
        } else {
            format!("{path}.{key}")
        }
    };
    if let Some(rest) = message.strip_prefix("unknown field `")
        && let Some((key, expected)) = rest.split_once('`')
    {
        let choices = backticked(expected);
        let others: Vec<&str> = present.iter().copied().filter(|k| *k != key).collect();
        let hint = match suggest_field(key, &choices, &others) {
            Some(s) => format!("unknown field; did you mean `{s}`?"),
            None => format!("unknown field; expected one of {}", list(&choices)),
        };
        return (join(key), hint);
    }
    if let Some(rest) = message.strip_prefix("unknown variant `")
        && let Some((word, expected)) = rest.split_once('`')
    {
        let choices = backticked(expected);
        let hint = match did_you_mean(word, &choices) {
            Some(s) => format!("unknown value `{word}`; did you mean `{s}`?"),
            None => format!("unknown value `{word}`; expected one of {}", list(&choices)),
        };
        return (path.to_string(), hint);
    }
    if let Some(rest) = message.strip_prefix("missing field `")
        && let Some((key, _)) = rest.split_once('`')
    {
        return (join(key), "missing; this field is required".to_string());
    }
    if let Some(rest) = message.strip_prefix("duplicate field `")
        && let Some((key, _)) = rest.split_once('`')
    {
        return (join(key), format!("duplicate key `{key}`"));
    }
    (path.to_string(), plain_types(message))
}

/// serde's `invalid type: FOUND, expected WHAT` (and `invalid value`,
/// `invalid length`) in plain words: `expected WHAT, found FOUND`, with Rust
/// type names replaced by what the user writes.
fn plain_types(message: &str) -> String {
    let Some((head, expected)) = message.split_once(", expected ") else {
        return message.to_string();
    };
    let expected_words = plain_expected(expected);
    if let Some(found) = head.strip_prefix("invalid type: ") {
        if found == "unit value" {
            return format!("empty value; expected {expected_words}");
        }
        if let Some(n) = negative_integer(found)
            && unsigned_max(expected).is_some()
        {
            return format!("expected a whole number ≥ 0, found {n}");
        }
        return format!("expected {expected_words}, found {}", plain_found(found));
    }
    if let Some(found) = head.strip_prefix("invalid value: ") {
        let number = found
            .strip_prefix("integer `")
            .and_then(|n| n.strip_suffix('`'));
        if let (Some(n), Some(max)) = (number, unsigned_max(expected)) {
            return if n.starts_with('-') {
                format!("expected a whole number ≥ 0, found {n}")
            } else {
                format!("expected a whole number from 0 to {max}, found {n}")
            };
        }
        return format!("expected {expected_words}, found {}", plain_found(found));
    }
    if let Some(n) = head.strip_prefix("invalid length ") {
        return format!("expected {expected_words}, found {n} item{}", plural(n));
    }
    message.to_string()
}

/// The number in serde's ``integer `-3` `` when it is negative.
fn negative_integer(found: &str) -> Option<&str> {
    let n = found.strip_prefix("integer `")?.strip_suffix('`')?;
    n.starts_with('-').then_some(n)
}

fn plural(n: &str) -> &'static str {
    if n == "1" { "" } else { "s" }
}

/// The largest value of an unsigned Rust integer type named in a message.
fn unsigned_max(ty: &str) -> Option<u64> {
    Some(match ty {
        "u8" => u8::MAX.into(),
        "u16" => u16::MAX.into(),
        "u32" => u32::MAX.into(),
        "u64" | "usize" => u64::MAX,
        _ => return None,
    })
}

/// serde's name for what it wanted, in the words a file's author uses.
fn plain_expected(expected: &str) -> String {
    match expected {
        "u8" | "u16" | "u32" | "u64" | "usize" | "i8" | "i16" | "i32" | "i64" | "isize" => {
            return "a whole number such as 16".into();
        }
        "f32" | "f64" => return "a number such as 10".into(),
        "a boolean" => return "`true` or `false`".into(),
        "a string" => return "a text value".into(),
        "a sequence" => return "a list such as `[a, b]`".into(),
        _ => {}
    }
    if let Some(name) = expected.strip_prefix("struct ") {
        return match name.strip_suffix("File") {
            Some(kind) => format!(
                "a mapping with the top-level key `{}:`",
                kind.to_lowercase()
            ),
            None => "a mapping of `key: value` fields".into(),
        };
    }
    if expected.starts_with("enum ") {
        return "one of the listed words".into();
    }
    if let Some(n) = expected
        .strip_prefix("a tuple of size ")
        .or_else(|| expected.strip_prefix("tuple of "))
        .map(|n| n.trim_end_matches(" elements"))
    {
        return format!("a list of {n} items such as `[a, b]`");
    }
    expected.to_string()
}

/// serde's description of what it found, in plain words.
fn plain_found(found: &str) -> String {
    match found {
        "sequence" => return "a list".into(),
        "map" => return "a mapping".into(),
        "unit value" => return "an empty value".into(),
        _ => {}
    }
    for (prefix, words) in [
        ("integer ", "the number "),
        ("floating point ", "the number "),
    ] {
        if let Some(rest) = found.strip_prefix(prefix) {
            return format!("{words}{}", rest.trim_matches('`'));
        }
    }
    for (prefix, words) in [("boolean ", ""), ("string ", "the text ")] {
        if let Some(rest) = found.strip_prefix(prefix) {
            return format!("{words}{rest}");
        }
    }
    found.to_string()
}

fn backticked(text: &str) -> Vec<&str> {
    text.split('`').skip(1).step_by(2).collect()
}

fn list(words: &[&str]) -> String {
    words
        .iter()
        .map(|w| format!("`{w}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splits_path_and_location() {
        let (p, m) = split_yaml_message(
            "switch.q_gd: invalid type: sequence, expected a string at line 4 column 9",
        );
        assert_eq!(p, "switch.q_gd");
        assert_eq!(m, "invalid type: sequence, expected a string");
        let (p, m) = split_yaml_message(
            "did not find expected node content at line 2 column 24, while parsing a flow node",
        );
        assert_eq!(p, "");
        assert_eq!(
            m,
            "did not find expected node content, while parsing a flow node"
        );
    }

    #[test]
    fn refines_unknown_field() {
        let (f, m) = refine(
            "switch",
            "unknown field `q_gdd`, expected one of `q_g`, `q_gd`, `n`",
            &["q_g", "q_gdd"],
        );
        assert_eq!(f, "switch.q_gdd");
        assert_eq!(m, "unknown field; did you mean `q_gd`?");
    }

    #[test]
    fn rust_type_names_become_words() {
        let cases = [
            (
                "invalid type: string \"x\", expected u32",
                "expected a whole number such as 16, found the text \"x\"",
            ),
            (
                "invalid type: floating point `1.5`, expected u32",
                "expected a whole number such as 16, found the number 1.5",
            ),
            (
                "invalid value: integer `-3`, expected u32",
                "expected a whole number ≥ 0, found -3",
            ),
            (
                "invalid type: integer `-16`, expected u32",
                "expected a whole number ≥ 0, found -16",
            ),
            (
                "invalid value: integer `5000000000`, expected u32",
                "expected a whole number from 0 to 4294967295, found 5000000000",
            ),
            (
                "invalid type: string \"x\", expected f64",
                "expected a number such as 10, found the text \"x\"",
            ),
            (
                "invalid type: sequence, expected struct DesignFile",
                "expected a mapping with the top-level key `design:`, found a list",
            ),
            (
                "invalid type: unit value, expected a voltage such as \"12 V\"",
                "empty value; expected a voltage such as \"12 V\"",
            ),
        ];
        for (serde, ours) in cases {
            assert_eq!(refine("a", serde, &[]).1, ours, "for {serde:?}");
        }
    }

    #[test]
    fn bundled_switch_suggestion_ignores_the_folder() {
        assert_eq!(
            no_bundled("tarn-4", bundled::Kind::Switch),
            "no bundled switch named \"tarn-4\"; did you mean \"bundled:tarn-40\"?"
        );
        assert_eq!(
            no_bundled("switches/tarn-4", bundled::Kind::Switch),
            "no bundled switch named \"switches/tarn-4\"; did you mean \"bundled:switches/tarn-40\"?"
        );
    }
}
