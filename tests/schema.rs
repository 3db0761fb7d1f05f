//! The JSON Schema of the input files (`boards/schema/*.schema.json`, from
//! `pwmplan schema --out boards/schema`) checked with an independent
//! validator (the `jsonschema` crate, draft 7):
//!
//! - the committed files are what the command generates now;
//! - every bundled file, the example firmware's and the test fixtures'
//!   valid files validate against their kind's schema;
//! - the schema agrees with the parser on mutants of each of those files:
//!   a field removed, an unknown field added, a quantity made a bare number
//!   or given another dimension's unit, an enum spelling or an integer
//!   replaced by a word, a value replaced by a list. Both sides judge the
//!   file's shape only (the parser's `SourceFile::parse`, before the
//!   cross-field checks of `input::design`, which a schema cannot express):
//!   where the parser refuses, the schema must refuse, and where the parser
//!   accepts, the schema must accept (so an editor never flags a file the
//!   tool takes).

use std::path::{Path, PathBuf};
use std::process::Command;

use pwmplan::load::{Origin, SourceFile};
use pwmplan::spec::{BoardFile, DesignFile, SwitchFile};
use serde_json::Value as Json;
use serde_yaml::Value as Yaml;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    Switch,
    Board,
    Design,
}

impl Kind {
    fn of(doc: &Yaml) -> Option<Kind> {
        let map = doc.as_mapping()?;
        [
            ("switch", Kind::Switch),
            ("board", Kind::Board),
            ("design", Kind::Design),
        ]
        .into_iter()
        .find(|(k, _)| map.contains_key(*k))
        .map(|(_, kind)| kind)
    }

    fn schema_file(self) -> &'static str {
        match self {
            Kind::Switch => "switch.schema.json",
            Kind::Board => "board.schema.json",
            Kind::Design => "design.schema.json",
        }
    }

    /// The parser's verdict on the file's shape.
    fn parses(self, text: &str) -> Result<(), String> {
        let f = SourceFile::from_text(Origin::Disk("mutant.yaml".into()), text.to_string());
        let r = match self {
            Kind::Switch => f.parse::<SwitchFile>().map(|_| ()),
            Kind::Board => f.parse::<BoardFile>().map(|_| ()),
            Kind::Design => f.parse::<DesignFile>().map(|_| ()),
        };
        r.map_err(|e| e.to_string())
    }
}

fn validator(kind: Kind) -> jsonschema::Validator {
    let path = root().join("boards/schema").join(kind.schema_file());
    let text = std::fs::read_to_string(&path).expect("the committed schema");
    let schema: Json = serde_json::from_str(&text).expect("the schema is JSON");
    jsonschema::validator_for(&schema).expect("the schema compiles")
}

/// Every valid input file the project holds, with its kind.
fn valid_files() -> Vec<(PathBuf, Kind, Yaml)> {
    let mut paths = Vec::new();
    for dir in [
        "boards",
        "boards/switches",
        "examples/firmware/hardware",
        "examples/firmware/hardware/switches",
    ] {
        let mut found: Vec<PathBuf> = std::fs::read_dir(root().join(dir))
            .expect("read folder")
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
            .collect();
        found.sort();
        paths.extend(found);
    }
    let fixtures = root().join("tests/fixtures");
    for entry in walk(&fixtures) {
        if entry.extension().is_some_and(|x| x == "yaml") {
            paths.push(entry);
        }
    }
    paths
        .into_iter()
        .filter_map(|p| {
            let text = std::fs::read_to_string(&p).ok()?;
            let doc: Yaml = serde_yaml::from_str(&text).ok()?;
            let kind = Kind::of(&doc)?;
            // Fixtures include refused files on purpose: only those the
            // parser takes are "valid files" here.
            kind.parses(&text).ok()?;
            Some((p, kind, doc))
        })
        .collect()
}

fn walk(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    if let Ok(entries) = std::fs::read_dir(dir) {
        let mut entries: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
        entries.sort();
        for p in entries {
            if p.is_dir() {
                out.extend(walk(&p));
            } else {
                out.push(p);
            }
        }
    }
    out
}

fn to_json(doc: &Yaml) -> Json {
    serde_json::to_value(doc).expect("YAML to JSON")
}

#[test]
fn committed_schema_is_what_the_command_generates() {
    let dir = tempfile::tempdir().expect("temp dir");
    let st = Command::new(env!("CARGO_BIN_EXE_pwmplan"))
        .args(["schema", "--out"])
        .arg(dir.path())
        .status()
        .expect("run pwmplan schema");
    assert!(st.success());
    for kind in [Kind::Switch, Kind::Board, Kind::Design] {
        let name = kind.schema_file();
        let now = std::fs::read_to_string(dir.path().join(name)).expect("generated");
        let committed =
            std::fs::read_to_string(root().join("boards/schema").join(name)).expect("committed");
        assert!(
            now == committed,
            "boards/schema/{name} is stale: run `pwmplan schema --out boards/schema`"
        );
        // One kind to standard output: the same text.
        let arg = format!("{kind:?}").to_lowercase();
        let o = Command::new(env!("CARGO_BIN_EXE_pwmplan"))
            .args(["schema", &arg])
            .output()
            .expect("run");
        assert_eq!(String::from_utf8_lossy(&o.stdout), now);
    }
}

#[test]
fn every_valid_file_validates() {
    let files = valid_files();
    assert!(files.len() >= 14, "found {} valid files", files.len());
    for (path, kind, doc) in &files {
        let v = validator(*kind);
        let errors: Vec<String> = v
            .iter_errors(&to_json(doc))
            .map(|e| e.to_string())
            .collect();
        assert!(
            errors.is_empty(),
            "{} does not validate against {}: {errors:?}",
            path.display(),
            kind.schema_file()
        );
    }
}

/// A place in the YAML tree: keys and list indexes from the top.
#[derive(Debug, Clone)]
enum Step {
    Key(String),
    Index(usize),
}

fn node_mut<'a>(doc: &'a mut Yaml, path: &[Step]) -> Option<&'a mut Yaml> {
    let mut at = doc;
    for s in path {
        at = match s {
            Step::Key(k) => at.as_mapping_mut()?.get_mut(k.as_str())?,
            Step::Index(i) => at.as_sequence_mut()?.get_mut(*i)?,
        };
    }
    Some(at)
}

/// Every node's path, parents before children.
fn paths(doc: &Yaml, at: Vec<Step>, out: &mut Vec<Vec<Step>>) {
    out.push(at.clone());
    match doc {
        Yaml::Mapping(m) => {
            for (k, v) in m {
                if let Some(k) = k.as_str() {
                    let mut p = at.clone();
                    p.push(Step::Key(k.to_string()));
                    paths(v, p, out);
                }
            }
        }
        Yaml::Sequence(s) => {
            for (i, v) in s.iter().enumerate() {
                let mut p = at.clone();
                p.push(Step::Index(i));
                paths(v, p, out);
            }
        }
        _ => {}
    }
}

/// A string that ends in a unit: the number part, if any.
fn number_part(text: &str) -> Option<&str> {
    let t = text.trim();
    let end = t
        .char_indices()
        .take_while(|(_, c)| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'))
        .last()
        .map(|(i, c)| i + c.len_utf8())?;
    let number = &t[..end];
    (number.parse::<f64>().is_ok() && end < t.len()).then_some(number)
}

/// The mutants of one file: (what was done, the mutated document).
fn mutants(doc: &Yaml) -> Vec<(String, Yaml)> {
    let mut all = Vec::new();
    paths(doc, Vec::new(), &mut all);
    let mut out = Vec::new();
    for p in &all {
        let mut edit = |what: &str, f: &dyn Fn(&mut Yaml)| {
            let mut m = doc.clone();
            if let Some(n) = node_mut(&mut m, p) {
                f(n);
                out.push((format!("{what} at {p:?}"), m));
            }
        };
        let Some(node) = doc_node(doc, p) else {
            continue;
        };
        match node {
            Yaml::Mapping(map) => {
                for k in map.keys().filter_map(Yaml::as_str) {
                    let k = k.to_string();
                    edit(&format!("remove `{k}`"), &|n| {
                        if let Some(m) = n.as_mapping_mut() {
                            m.remove(k.as_str());
                        }
                    });
                }
                edit("add an unknown field", &|n| {
                    if let Some(m) = n.as_mapping_mut() {
                        m.insert("unheard_of".into(), "1 V".into());
                    }
                });
            }
            Yaml::String(s) => {
                edit("a bare number", &|n| *n = Yaml::Number(12.into()));
                edit("a list", &|n| *n = Yaml::Sequence(vec![n.clone()]));
                if let Some(num) = number_part(s) {
                    for unit in ["V", "A", "ohm", "Hz", "%", "K", "°C", "nC", "mH", "Vx"] {
                        let text = format!("{num} {unit}");
                        edit(&format!("\"{text}\""), &|n| *n = Yaml::String(text.clone()));
                    }
                } else {
                    edit("an unknown word", &|n| *n = "unheard-of".into());
                }
            }
            Yaml::Number(_) => {
                edit("a word", &|n| *n = "many".into());
                edit("a negative number", &|n| *n = Yaml::Number((-3).into()));
                edit("a fraction", &|n| *n = Yaml::Number(2.5.into()));
            }
            Yaml::Bool(_) => edit("a word", &|n| *n = "maybe".into()),
            _ => {}
        }
    }
    out
}

fn doc_node<'a>(doc: &'a Yaml, path: &[Step]) -> Option<&'a Yaml> {
    let mut at = doc;
    for s in path {
        at = match s {
            Step::Key(k) => at.as_mapping()?.get(k.as_str())?,
            Step::Index(i) => at.as_sequence()?.get(*i)?,
        };
    }
    Some(at)
}

#[test]
fn schema_and_parser_agree_on_mutants() {
    let files = valid_files();
    let mut checked = 0usize;
    let mut refused = 0usize;
    let mut disagreements = Vec::new();
    for (path, kind, doc) in &files {
        let v = validator(*kind);
        for (what, m) in mutants(doc) {
            let text = serde_yaml::to_string(&m).expect("YAML out");
            let parser = kind.parses(&text);
            let schema = v.is_valid(&to_json(&m));
            checked += 1;
            refused += usize::from(parser.is_err());
            if parser.is_ok() != schema {
                disagreements.push(format!(
                    "{} {what}: parser {}, schema {}",
                    path.display(),
                    match &parser {
                        Ok(()) => "accepts".to_string(),
                        Err(e) => format!("refuses ({})", e.lines().next().unwrap_or("")),
                    },
                    if schema { "accepts" } else { "refuses" }
                ));
            }
        }
    }
    eprintln!(
        "{checked} mutants of {} files; the parser refused {refused}",
        files.len()
    );
    assert!(
        checked > 1000 && refused > 500,
        "{checked} mutants, {refused} refused"
    );
    assert!(
        disagreements.is_empty(),
        "{} of {checked} mutants judged differently:\n{}",
        disagreements.len(),
        disagreements
            .iter()
            .take(40)
            .cloned()
            .collect::<Vec<_>>()
            .join("\n")
    );
}

/// Every unit spelling the parser takes, with each prefix it allows, is
/// taken by the schema's pattern for that dimension, and a neighbouring
/// dimension's unit is refused by both.
#[test]
fn every_unit_spelling_matches_the_pattern() {
    let v = validator(Kind::Switch);
    // v_dss (a voltage) and q_oss (a charge) as probes in the switch schema.
    let base: Yaml = serde_yaml::from_str(
        &std::fs::read_to_string(root().join("boards/switches/tarn-40.yaml")).expect("read"),
    )
    .expect("yaml");
    for (field, good, bad) in [
        (
            "v_dss",
            &[
                "40 V", "40V", "0.04 kV", "-1 V", "4e1 V", ".5 V", "40. V", " 40 V ",
            ][..],
            &["40", "40 A", "40 v", "40 VV", "V", "4,0 V"][..],
        ),
        (
            "q_oss",
            &["12 nC", "12 µC", "12 μC", "12 uC", "1.2e-8 C"][..],
            &["12 nF", "12 kC", "12 nc"][..],
        ),
    ] {
        for (text, want) in good
            .iter()
            .map(|t| (t, true))
            .chain(bad.iter().map(|t| (t, false)))
        {
            let mut m = base.clone();
            let sw = node_mut(&mut m, &[Step::Key("switch".into())])
                .and_then(Yaml::as_mapping_mut)
                .expect("switch map");
            sw.insert(field.into(), Yaml::String(text.to_string()));
            let yaml = serde_yaml::to_string(&m).expect("out");
            let parser = Kind::Switch.parses(&yaml).is_ok();
            let schema = v.is_valid(&to_json(&m));
            assert_eq!(parser, want, "parser on {field}: {text:?}");
            assert_eq!(schema, want, "schema on {field}: {text:?}");
        }
    }
}
