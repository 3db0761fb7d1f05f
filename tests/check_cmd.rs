//! `pwmplan check` and the overwrite guard of `pwmplan plan`, through the
//! real binary on a copy of the `belt-feeder` golden case in a temporary
//! folder (working directory = that folder, outputs in `out/`).
//!
//! Promises checked: `check` exits 0 and says "current" on a fresh plan;
//! exits 1 with a unified diff when an input moved a value, naming a
//! hand-edited file as such and a deleted one as missing, and never writes;
//! `plan` refuses (exit 2, nothing changed) to overwrite a hand-edited or
//! foreign file unless `--force`; a bad `--templates` folder is exit 2 with a
//! message naming the problem, and nothing is written.

use crate::common;

use std::collections::BTreeMap;
use std::fs;
use std::path::Path;
use std::process::Output;

use common::{copy_inputs, describe, read_tree, run};
use tempfile::TempDir;

const CASE: &str = "belt-feeder";
const DESIGN: &str = "belt-feeder.yaml";
const HEADER: &str = "belt_feeder_pwm.h";
const OUTPUTS: [&str; 7] = [
    "belt_feeder_pwm.h",
    "belt_feeder_pwm.rs",
    "loss.svg",
    "plan.json",
    "rationale.md",
    "report.html",
    "thermal.svg",
];

/// A folder with the case's inputs, planned into `out/`.
fn planned() -> TempDir {
    let dir = tempfile::tempdir().expect("temporary folder");
    copy_inputs(common::case(CASE), dir.path());
    let o = run(dir.path(), &["plan", DESIGN, "--out", "out"]);
    assert_eq!(o.status.code(), Some(0), "first plan\n{}", describe(&o));
    dir
}

fn check(dir: &Path) -> Output {
    run(dir, &["check", DESIGN, "--out", "out"])
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn out_files(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    read_tree(&dir.join("out"))
}

/// The header's COMPARE_MAX line as planned, and a hand edit of it.
fn compare_max_edit(dir: &Path) -> (String, String) {
    let text = fs::read_to_string(dir.join(format!("out/{HEADER}"))).expect("read header");
    let value: u64 = text
        .lines()
        .find_map(|l| l.strip_prefix("#define BELT_FEEDER_PWM_COMPARE_MAX "))
        .and_then(|v| v.trim_end_matches('U').parse().ok())
        .expect("COMPARE_MAX in the header");
    (
        format!("COMPARE_MAX {value}U"),
        format!("COMPARE_MAX {}U", value + 32),
    )
}

/// Replace the one occurrence of `from` in `dir/rel`.
fn edit(dir: &Path, rel: &str, from: &str, to: &str) {
    let path = dir.join(rel);
    let text = fs::read_to_string(&path).expect("read file to edit");
    assert_eq!(text.matches(from).count(), 1, "{rel}: {from:?} once");
    fs::write(&path, text.replacen(from, to, 1)).expect("write edit");
}

/// The peak-to-peak ripple in mA of the high-bus case on the diff line of
/// the C header's "Operating figures" block starting with `sign`.
fn ripple_ma(diff: &str, sign: char) -> f64 {
    let line = diff
        .lines()
        .find(|l| {
            l.starts_with(sign)
                && l.contains(" *   ripple, high-bus case ")
                && l.contains("peak to peak")
        })
        .unwrap_or_else(|| panic!("no {sign} ripple line in the diff:\n{diff}"));
    let words: Vec<&str> = line.split_whitespace().collect();
    let at = words
        .iter()
        .position(|w| *w == "mA")
        .unwrap_or_else(|| panic!("no mA in {line:?}"));
    words[at - 1]
        .parse()
        .unwrap_or_else(|e| panic!("{line:?}: {e}"))
}

#[test]
fn fresh_plan_is_current() {
    let dir = planned();
    let names: Vec<String> = out_files(dir.path()).into_keys().collect();
    assert_eq!(
        names, OUTPUTS,
        "exactly the seven files, no temporaries left"
    );
    let o = check(dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
    assert!(
        stdout(&o).contains("is current"),
        "check says current\n{}",
        describe(&o)
    );
}

/// Lower the motor inductance: the ripple moves, `check` shows it as a diff
/// and writes nothing. The ripple of a chopper-fed R-L load with L/R much
/// longer than the period is ΔI = V·D·(1−D)/(L·f) (Rashid, Power
/// Electronics, chopper with R-L-E load; from memory), so at the unchanged
/// frequency and duty it scales as 1/L: 0.85 mH → 0.40 mH multiplies it by
/// 2.125 (τ = 0.40 mH / 0.62 Ω = 645 µs against a 50 µs period, so the
/// exponential correction is well under 1 %).
#[test]
fn changed_input_shows_the_moved_value() {
    let dir = planned();
    let before = out_files(dir.path());
    edit(
        dir.path(),
        DESIGN,
        "inductance: \"0.85 mH\"",
        "inductance: \"0.40 mH\"",
    );
    let o = check(dir.path());
    assert_eq!(o.status.code(), Some(1), "{}", describe(&o));
    let diff = stdout(&o);
    assert!(
        diff.contains(&format!("--- out/{HEADER} (on disk)")),
        "{diff}"
    );
    assert!(
        diff.contains(&format!("+++ out/{HEADER} (generated now)")),
        "{diff}"
    );
    assert!(diff.contains("@@ "), "a unified diff hunk\n{diff}");
    assert!(
        diff.lines()
            .any(|l| l.starts_with('-') && l.contains("\"design.motor.inductance\": \"0.85 mH\"")),
        "old inductance in the diff\n{diff}"
    );
    assert!(
        diff.lines()
            .any(|l| l.starts_with('+') && l.contains("\"design.motor.inductance\": \"0.40 mH\"")),
        "new inductance in the diff\n{diff}"
    );
    let (old, new) = (ripple_ma(&diff, '-'), ripple_ma(&diff, '+'));
    let ratio = new / old;
    assert!(
        (ratio - 0.85 / 0.40).abs() < 0.02 * (0.85 / 0.40),
        "ripple {old} mA -> {new} mA: ratio {ratio}, expected 2.125 within 2 %"
    );
    assert!(
        !diff.contains("edited by hand"),
        "a changed input is not a hand edit\n{diff}"
    );
    assert!(diff.contains("is out of date"), "{diff}");
    // The summary names the moved figures and the input that changed.
    assert!(
        diff.contains("What changed since the previous plan:"),
        "{diff}"
    );
    assert!(
        diff.contains("moved: figure ripple.peak_to_peak_a "),
        "{diff}"
    );
    assert!(
        diff.contains("design.motor.inductance 0.85 mH -> 0.40 mH"),
        "{diff}"
    );
    assert_eq!(out_files(dir.path()), before, "check writes nothing");
}

#[test]
fn hand_edited_output_is_named() {
    let dir = planned();
    let (planned_line, edited_line) = compare_max_edit(dir.path());
    edit(
        dir.path(),
        &format!("out/{HEADER}"),
        &planned_line,
        &edited_line,
    );
    let before = out_files(dir.path());
    let o = check(dir.path());
    assert_eq!(o.status.code(), Some(1), "{}", describe(&o));
    let text = stdout(&o);
    assert!(
        text.contains(&format!("out/{HEADER}: edited by hand")),
        "names the edited file\n{text}"
    );
    assert!(
        text.contains(&format!("-#define BELT_FEEDER_PWM_{edited_line}")),
        "{text}"
    );
    assert!(
        text.contains(&format!("+#define BELT_FEEDER_PWM_{planned_line}")),
        "{text}"
    );
    assert_eq!(
        text.matches("edited by hand").count(),
        1,
        "only the edited file is named\n{text}"
    );
    assert_eq!(out_files(dir.path()), before, "check writes nothing");
}

#[test]
fn deleted_output_is_missing() {
    let dir = planned();
    fs::remove_file(dir.path().join("out/rationale.md")).expect("delete");
    let o = check(dir.path());
    assert_eq!(o.status.code(), Some(1), "{}", describe(&o));
    assert!(
        stdout(&o).contains("out/rationale.md: missing"),
        "{}",
        describe(&o)
    );
    assert!(
        !dir.path().join("out/rationale.md").exists(),
        "check does not restore it"
    );
}

#[test]
fn check_of_an_empty_folder_lists_every_file_missing() {
    let dir = tempfile::tempdir().expect("temporary folder");
    copy_inputs(common::case(CASE), dir.path());
    let o = check(dir.path());
    assert_eq!(o.status.code(), Some(1), "{}", describe(&o));
    for name in OUTPUTS {
        assert!(
            stdout(&o).contains(&format!("out/{name}: missing")),
            "{name}\n{}",
            describe(&o)
        );
    }
    assert!(!dir.path().join("out").exists(), "check creates nothing");
}

/// A hand edit blocks `plan` (even though another input changed, so every
/// file would be rewritten) until `--force`, which regenerates the file.
#[test]
fn plan_refuses_to_overwrite_a_hand_edit_unless_forced() {
    let dir = planned();
    let (planned_line, edited_line) = compare_max_edit(dir.path());
    edit(
        dir.path(),
        &format!("out/{HEADER}"),
        &planned_line,
        &edited_line,
    );
    edit(
        dir.path(),
        DESIGN,
        "inductance: \"0.85 mH\"",
        "inductance: \"0.40 mH\"",
    );
    let before = out_files(dir.path());
    let o = run(dir.path(), &["plan", DESIGN, "--out", "out"]);
    assert_eq!(o.status.code(), Some(2), "{}", describe(&o));
    let err = stderr(&o);
    assert!(
        err.contains(&format!("out/{HEADER}")),
        "names the file\n{err}"
    );
    assert!(err.contains("--force"), "says how to proceed\n{err}");
    assert_eq!(out_files(dir.path()), before, "no file changed");

    let o = run(dir.path(), &["plan", DESIGN, "--out", "out", "--force"]);
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
    // What the same inputs generate in a clean folder.
    let o = run(dir.path(), &["plan", DESIGN, "--out", "fresh"]);
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
    let fresh = read_tree(&dir.path().join("fresh"));
    let after = out_files(dir.path());
    assert_eq!(after, fresh, "--force regenerates every file");
    assert_ne!(after[HEADER], before[HEADER]);
    let o = check(dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
}

#[test]
fn plan_refuses_to_overwrite_a_foreign_file() {
    let dir = tempfile::tempdir().expect("temporary folder");
    copy_inputs(common::case(CASE), dir.path());
    fs::create_dir_all(dir.path().join("out")).expect("mkdir");
    fs::write(dir.path().join("out/rationale.md"), "my own notes\n").expect("write");
    let o = run(dir.path(), &["plan", DESIGN, "--out", "out"]);
    assert_eq!(o.status.code(), Some(2), "{}", describe(&o));
    assert!(
        stderr(&o).contains("out/rationale.md") && stderr(&o).contains("not written by pwmplan"),
        "{}",
        describe(&o)
    );
    let names: Vec<String> = out_files(dir.path()).into_keys().collect();
    assert_eq!(names, ["rationale.md"], "nothing else written");
}

/// A second `plan` with the same inputs leaves every file alone (time
/// stamps included, so a build does not recompile the header) and says so;
/// after an input change only the files whose content moved are written.
#[test]
fn replanning_leaves_unchanged_files_alone() {
    let dir = planned();
    let mtimes = |d: &Path| -> BTreeMap<String, std::time::SystemTime> {
        OUTPUTS
            .iter()
            .map(|n| {
                let m = fs::metadata(d.join("out").join(n)).expect("output exists");
                (n.to_string(), m.modified().expect("modification time"))
            })
            .collect()
    };
    let before = mtimes(dir.path());
    std::thread::sleep(std::time::Duration::from_millis(20));
    let o = run(dir.path(), &["plan", DESIGN, "--out", "out"]);
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
    let text = stdout(&o);
    assert!(text.contains("already current, left alone: out/"), "{text}");
    assert!(!text.contains("wrote "), "{text}");
    assert_eq!(mtimes(dir.path()), before, "no file rewritten");

    // An input change rewrites what moved.
    edit(
        dir.path(),
        DESIGN,
        "inductance: \"0.85 mH\"",
        "inductance: \"0.40 mH\"",
    );
    let o = run(dir.path(), &["plan", DESIGN, "--out", "out"]);
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
    let text = stdout(&o);
    assert!(
        text.contains("wrote ") && text.contains("out/plan.json"),
        "{text}"
    );
    let after = mtimes(dir.path());
    assert_ne!(after["plan.json"], before["plan.json"]);
    let o = check(dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
}

/// An output path holding something that is not text (so not pwmplan's)
/// is refused like a foreign file.
#[test]
fn plan_refuses_to_overwrite_a_binary_file() {
    let dir = tempfile::tempdir().expect("temporary folder");
    copy_inputs(common::case(CASE), dir.path());
    fs::create_dir_all(dir.path().join("out")).expect("mkdir");
    fs::write(dir.path().join("out/plan.json"), [0xff_u8, 0xfe, 0x00]).expect("write");
    let o = run(dir.path(), &["plan", DESIGN, "--out", "out"]);
    assert_eq!(o.status.code(), Some(2), "{}", describe(&o));
    assert!(
        stderr(&o).contains("out/plan.json") && stderr(&o).contains("--force"),
        "{}",
        describe(&o)
    );
    let names: Vec<String> = out_files(dir.path()).into_keys().collect();
    assert_eq!(names, ["plan.json"], "nothing else written");
}

/// A copy of the bundled templates in `dir/tpl`.
fn template_copy(dir: &Path) -> std::path::PathBuf {
    let tpl = dir.join("tpl");
    fs::create_dir_all(&tpl).expect("mkdir tpl");
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("templates");
    for name in ["c_header.h.hbs", "rust_module.rs.hbs", "rationale.md.hbs"] {
        fs::copy(src.join(name), tpl.join(name)).expect("copy template");
    }
    tpl
}

/// The control for the bad-template cases: an unchanged copy of the bundled
/// templates gives the same bytes as the bundled set.
#[test]
fn template_folder_copy_of_bundled_gives_the_same_files() {
    let dir = planned();
    template_copy(dir.path());
    let o = run(
        dir.path(),
        &["plan", DESIGN, "--out", "via-tpl", "--templates", "tpl"],
    );
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
    assert_eq!(
        read_tree(&dir.path().join("via-tpl")),
        out_files(dir.path())
    );
    let o = run(
        dir.path(),
        &["check", DESIGN, "--out", "out", "--templates", "tpl"],
    );
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
}

/// `plan` and `check` with a broken template folder: exit 2, `needles` in
/// the message, nothing written to a new or an existing output folder.
fn bad_templates(break_it: impl Fn(&Path), needles: &[&str]) {
    let dir = planned();
    let tpl = template_copy(dir.path());
    break_it(&tpl);
    let before = out_files(dir.path());
    for args in [
        &["plan", DESIGN, "--out", "new", "--templates", "tpl"][..],
        &[
            "plan",
            DESIGN,
            "--out",
            "out",
            "--templates",
            "tpl",
            "--force",
        ][..],
        &["check", DESIGN, "--out", "out", "--templates", "tpl"][..],
    ] {
        let o = run(dir.path(), args);
        assert_eq!(o.status.code(), Some(2), "{args:?}\n{}", describe(&o));
        let err = stderr(&o);
        assert!(err.starts_with("error: "), "{args:?}\n{err}");
        for n in needles {
            assert!(err.contains(n), "{args:?}: message names {n:?}\n{err}");
        }
    }
    assert!(!dir.path().join("new").exists(), "no new output folder");
    assert_eq!(out_files(dir.path()), before, "existing outputs unchanged");
}

#[test]
fn missing_template_is_exit_2() {
    bad_templates(
        |tpl| fs::remove_file(tpl.join("rust_module.rs.hbs")).expect("remove"),
        &["tpl/rust_module.rs.hbs", "missing"],
    );
}

#[test]
fn template_field_the_context_lacks_is_exit_2() {
    bad_templates(
        |tpl| {
            let p = tpl.join("rationale.md.hbs");
            let mut t = fs::read_to_string(&p).expect("read");
            t.push_str("{{nonexistent}}\n");
            fs::write(&p, t).expect("write");
        },
        &["rationale.md.hbs", "nonexistent"],
    );
}

#[test]
fn template_syntax_error_is_exit_2() {
    bad_templates(
        |tpl| {
            let p = tpl.join("c_header.h.hbs");
            let mut t = fs::read_to_string(&p).expect("read");
            t.push_str("{{#if fpu}}\n");
            fs::write(&p, t).expect("write");
        },
        &["c_header.h.hbs"],
    );
}

/// The generated files record the input paths as spelled on the command
/// line, so the same design named `./belt-feeder.yaml` is "out of date".
#[test]
fn check_does_not_depend_on_how_the_path_is_spelled() {
    let dir = planned();
    let o = run(dir.path(), &["check", "./belt-feeder.yaml", "--out", "out"]);
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
}
