//! Reading the input files: from disk or from the bundled set compiled into
//! the binary, with references between them resolved and every syntax, type
//! and unit error turned into an [`InputError`] that names the place.
//!
//! **Invariant:** this is the only module that reads files.

use std::path::{Component, Path, PathBuf};

use serde::de::DeserializeOwned;

use crate::bundled;
use crate::diagnostic::{InputError, did_you_mean};
use crate::locate::{Locator, Position};

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
                .ok_or_else(|| {
                    let names = bundled::names(kind);
                    match did_you_mean(name, &names) {
                        Some(s) => format!(
                            "no bundled {} named \"{name}\"; did you mean \"bundled:{s}\"?",
                            kind.noun()
                        ),
                        None => format!(
                            "no bundled {} named \"{name}\"; expected one of: {}",
                            kind.noun(),
                            names
                                .iter()
                                .map(|n| format!("bundled:{n}"))
                                .collect::<Vec<_>>()
                                .join(", ")
                        ),
                    }
                });
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
                Ok(Origin::Disk(dir.join(rel)))
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

/// One input file, read, with the positions of its fields.
#[derive(Debug, Clone)]
pub struct SourceFile {
    pub origin: Origin,
    pub text: String,
    pub locator: Locator,
}

impl SourceFile {
    pub fn read(origin: Origin) -> Result<SourceFile, InputError> {
        let text = match &origin {
            Origin::Disk(p) => std::fs::read_to_string(p).map_err(|e| {
                let why = match e.kind() {
                    std::io::ErrorKind::NotFound => "no such file".to_string(),
                    std::io::ErrorKind::InvalidData => {
                        "not UTF-8 text; expected a YAML file".to_string()
                    }
                    _ => format!("cannot read it: {e}"),
                };
                InputError::file(origin.display(), why)
            })?,
            Origin::Bundled(p) => bundled::text(p)
                .ok_or_else(|| InputError::file(origin.display(), "no such bundled file"))?
                .to_string(),
        };
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
        InputError::at(
            self.origin.display(),
            &self.text,
            self.locator.value(field),
            field,
            message,
        )
    }

    /// Deserialise the whole file into `T`, mapping every failure to an
    /// [`InputError`] at the place the deserialiser stopped.
    pub fn parse<T: DeserializeOwned>(&self) -> Result<T, InputError> {
        if self.text.trim().is_empty() {
            return Err(InputError::file(
                self.origin.display(),
                "the file is empty; expected YAML",
            ));
        }
        // Enums are written as one-key maps (`linear: { min: 1, max: 8 }`)
        // rather than YAML tags.
        let de = serde_yaml::Deserializer::from_str(&self.text);
        serde_yaml::with::singleton_map_recursive::deserialize(de).map_err(|e| self.convert(&e))
    }

    fn convert(&self, e: &serde_yaml::Error) -> InputError {
        let position = e.location().map(|l| Position {
            line: l.line(),
            column: l.column(),
        });
        let (path, message) = split_yaml_message(&e.to_string());
        let (field, message) = refine(&path, &message);
        InputError::at(self.origin.display(), &self.text, position, field, message)
    }
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
/// key appended, and unknown keys and variants get a suggestion.
fn refine(path: &str, message: &str) -> (String, String) {
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
        let hint = match did_you_mean(key, &choices) {
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
    (path.to_string(), message.to_string())
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
        );
        assert_eq!(f, "switch.q_gdd");
        assert_eq!(m, "unknown field; did you mean `q_gd`?");
    }
}
