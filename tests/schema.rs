//! The JSON Schema of the input files (`boards/schema/*.schema.json`, from
//! `pwmplan schema --out boards/schema`) checked with an independent
//! validator, another language's (Python's `jsonschema`, Debian's
//! `python3-jsonschema`, draft 7; one process validates a whole batch). A
//! missing validator fails under `CI=true` and is otherwise skipped with a
//! message:
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

    fn name(self) -> &'static str {
        match self {
            Kind::Switch => "switch",
            Kind::Board => "board",
            Kind::Design => "design",
        }
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
            Kind::Switch => f.parse_switch().map(|_| ()),
            Kind::Board => f.parse_board().map(|_| ()),
            Kind::Design => f.parse_design().map(|_| ()),
        };
        r.map_err(|e| e.to_string())
    }
}

/// The validator's script: reads `[[kind, document], ...]` as JSON on
/// standard input, prints one line per document, `ok` or the first error.
const VALIDATE_PY: &str = r#"
import json, sys
from jsonschema import Draft7Validator
folder = sys.argv[1]
validators = {}
for kind in ("switch", "board", "design"):
    with open(f"{folder}/{kind}.schema.json", encoding="utf-8") as f:
        schema = json.load(f)
    Draft7Validator.check_schema(schema)
    validators[kind] = Draft7Validator(schema)
for kind, doc in json.load(sys.stdin):
    error = next(iter(validators[kind].iter_errors(doc)), None)
    print("ok" if error is None else "error: " + error.message.replace("\n", " ")[:200])
"#;

fn ci() -> bool {
    std::env::var("CI").is_ok_and(|v| v == "true")
}

/// The validator's verdict on each document, in order (`Ok` valid, `Err`
/// the first error); `None` when Python's `jsonschema` is not installed
/// (a failure under `CI=true`).
fn verdicts(docs: &[(Kind, Json)]) -> Option<Vec<Result<(), String>>> {
    use std::io::Write;
    use std::process::Stdio;
    let folder = root().join("boards/schema");
    let child = Command::new("python3")
        .arg("-c")
        .arg(VALIDATE_PY)
        .arg(&folder)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn();
    let Ok(mut child) = child else {
        assert!(
            !ci(),
            "python3 is not installed, and CI=true requires it (see .ci/run)"
        );
        eprintln!("skipped: python3 not installed; the schema was not validated");
        return None;
    };
    let input: Vec<Json> = docs
        .iter()
        .map(|(k, d)| Json::Array(vec![Json::String(k.name().into()), d.clone()]))
        .collect();
    let text = serde_json::to_string(&input).expect("JSON");
    let mut stdin = child.stdin.take().expect("stdin");
    let writer = std::thread::spawn(move || stdin.write_all(text.as_bytes()));
    let out = child.wait_with_output().expect("run python3");
    let _ = writer.join();
    let stderr = String::from_utf8_lossy(&out.stderr);
    if !out.status.success() && stderr.contains("No module named 'jsonschema'") {
        assert!(
            !ci(),
            "python3-jsonschema is not installed, and CI=true requires it (see .ci/run)"
        );
        eprintln!("skipped: Python's jsonschema not installed; the schema was not validated");
        return None;
    }
    assert!(out.status.success(), "the validator failed: {stderr}");
    let lines: Vec<Result<(), String>> = String::from_utf8_lossy(&out.stdout)
        .lines()
        .map(|l| {
            if l == "ok" {
                Ok(())
            } else {
                Err(l.to_string())
            }
        })
        .collect();
    assert_eq!(lines.len(), docs.len(), "a verdict per document");
    Some(lines)
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
    let docs: Vec<(Kind, Json)> = files.iter().map(|(_, k, d)| (*k, to_json(d))).collect();
    let Some(said) = verdicts(&docs) else {
        return;
    };
    for ((path, kind, _), verdict) in files.iter().zip(said) {
        assert!(
            verdict.is_ok(),
            "{} does not validate against {}: {verdict:?}",
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
    let mut cases = Vec::new();
    let mut docs = Vec::new();
    for (path, kind, doc) in &files {
        for (what, m) in mutants(doc) {
            let text = serde_yaml::to_string(&m).expect("YAML out");
            cases.push((path.clone(), what, kind.parses(&text)));
            docs.push((*kind, to_json(&m)));
        }
    }
    let Some(said) = verdicts(&docs) else {
        return;
    };
    let checked = cases.len();
    let refused = cases.iter().filter(|c| c.2.is_err()).count();
    let disagreements: Vec<String> = cases
        .iter()
        .zip(&said)
        .filter(|((_, _, parser), schema)| parser.is_ok() != schema.is_ok())
        .map(|((path, what, parser), schema)| {
            format!(
                "{} {what}: parser {}, schema {}",
                path.display(),
                match parser {
                    Ok(()) => "accepts".to_string(),
                    Err(e) => format!("refuses ({})", e.lines().next().unwrap_or("")),
                },
                match schema {
                    Ok(()) => "accepts".to_string(),
                    Err(e) => format!("refuses ({e})"),
                }
            )
        })
        .collect();
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

/// Unit spellings with and without prefixes, signs, exponents and spaces
/// are taken by the parser and the schema's pattern alike, and a wrong case,
/// another dimension's unit or a bare number is refused by both (the
/// mutants above cover every field's dimension).
#[test]
fn unit_spellings_match_the_pattern() {
    // v_dss (a voltage) and q_oss (a charge) as probes in the switch schema.
    let base: Yaml = serde_yaml::from_str(
        &std::fs::read_to_string(root().join("boards/switches/tarn-40.yaml")).expect("read"),
    )
    .expect("yaml");
    let mut probes = Vec::new();
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
            assert_eq!(
                Kind::Switch.parses(&yaml).is_ok(),
                want,
                "parser on {field}: {text:?}"
            );
            probes.push((field, text, want, to_json(&m)));
        }
    }
    let docs: Vec<(Kind, Json)> = probes.iter().map(|p| (Kind::Switch, p.3.clone())).collect();
    let Some(said) = verdicts(&docs) else {
        return;
    };
    for ((field, text, want, _), verdict) in probes.iter().zip(said) {
        assert_eq!(
            verdict.is_ok(),
            *want,
            "schema on {field}: {text:?}: {verdict:?}"
        );
    }
}
