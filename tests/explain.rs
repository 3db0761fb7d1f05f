//! Every finding code a plan can carry is explained by `pwmplan explain`: the codes written in
//! the source where findings are made (read here from the text, so a new finding without an
//! explanation fails), and the codes of every golden plan; no explanation is left for a code
//! the source no longer makes. The command prints a code's text and source, lists them all
//! without one, and refuses an unknown code with exit status 2.

use std::collections::BTreeSet;
use std::path::Path;
use std::process::Command;

use pwmplan::output::explain::{EXPLANATIONS, explain};

const BIN: &str = env!("CARGO_BIN_EXE_pwmplan");

/// The `.rs` files under `dir`.
fn sources(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let p = entry.unwrap().path();
        if p.is_dir() {
            sources(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// The whole string literals of `line` in kebab case (`"vdss-margin-low"`).
fn kebab_literals(line: &str) -> Vec<String> {
    line.split('"')
        .enumerate()
        .filter(|(k, _)| k % 2 == 1)
        .map(|(_, t)| t.to_string())
        .filter(|t| {
            t.contains('-')
                && !t.starts_with('-')
                && !t.ends_with('-')
                && t.chars()
                    .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-')
        })
        .collect()
}

/// The codes the source writes where it makes a finding: kebab-case literals on the line of a
/// finding constructor (`finding(`, `error(` of the current limit, a finding record's
/// `code:`) and the four lines after it.
fn source_codes() -> BTreeSet<String> {
    let mut files = Vec::new();
    sources(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("src"),
        &mut files,
    );
    let mut codes = BTreeSet::new();
    for f in files {
        let text = std::fs::read_to_string(&f).unwrap();
        // Only the code, not the unit tests at the end of a file.
        let body = text.split("#[cfg(test)]").next().unwrap_or("");
        let lines: Vec<&str> = body.lines().collect();
        for (k, line) in lines.iter().enumerate() {
            let maker = [
                "finding(",
                "Finding {",
                "FindingOut {",
                "error(",
                "code: \"",
            ]
            .iter()
            .any(|m| line.contains(m));
            if maker {
                for l in &lines[k..(k + 5).min(lines.len())] {
                    codes.extend(kebab_literals(l));
                }
            }
        }
    }
    codes
}

#[test]
fn every_code_the_source_makes_is_explained_and_no_other() {
    let codes = source_codes();
    assert!(codes.len() >= 30, "{codes:?}");
    let missing: Vec<&String> = codes.iter().filter(|c| explain(c).is_none()).collect();
    assert!(missing.is_empty(), "no explanation for {missing:?}");
    let stale: Vec<&str> = EXPLANATIONS
        .iter()
        .map(|x| x.code)
        .filter(|c| !c.ends_with('*') && !codes.contains(*c))
        .collect();
    assert!(stale.is_empty(), "explained but never made: {stale:?}");
}

#[test]
fn every_golden_plan_code_is_explained() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/golden");
    let mut seen = 0;
    for case in std::fs::read_dir(&root).unwrap() {
        let plan = case.unwrap().path().join("expected/plan.json");
        let json: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&plan).unwrap()).unwrap();
        for f in json["findings"].as_array().unwrap() {
            let code = f["code"].as_str().unwrap();
            assert!(explain(code).is_some(), "{}: {code}", plan.display());
            seen += 1;
        }
    }
    assert!(seen >= 10, "only {seen} findings in the golden plans");
}

#[test]
fn the_command_explains_lists_and_refuses() {
    let run = |args: &[&str]| Command::new(BIN).args(args).output().unwrap();
    let o = run(&["explain", "vdss-margin-low"]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success());
    assert!(
        text.contains("1.5 times") && text.contains("source: common practice"),
        "{text}"
    );
    let o = run(&["explain"]);
    let list = String::from_utf8_lossy(&o.stdout);
    assert_eq!(list.lines().count(), EXPLANATIONS.len());
    let o = run(&["explain", "no-such-code"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("`pwmplan explain` lists them"));
}
