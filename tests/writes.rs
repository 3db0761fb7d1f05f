//! Writes under hostile conditions (issue 22): a link planted at a
//! temporary name or at an output, a FIFO where an output belongs, two runs
//! on one folder at once, and a refused run leaving the folder as it was.
//! Each runs the real binary on the bundled demo in a fresh folder.

use std::collections::BTreeMap;
use std::fs;
use std::path::Path;
use std::process::{Command, Output};

const BIN: &str = env!("CARGO_BIN_EXE_pwmplan");

fn run(dir: &Path, args: &[&str]) -> Output {
    Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run pwmplan")
}

/// Every entry of `dir` (names and contents; links as "-> target").
fn listing(dir: &Path) -> BTreeMap<String, String> {
    let mut m = BTreeMap::new();
    let Ok(entries) = fs::read_dir(dir) else {
        return m;
    };
    for e in entries {
        let e = e.expect("entry");
        let p = e.path();
        let name = e.file_name().to_string_lossy().to_string();
        let meta = fs::symlink_metadata(&p).expect("metadata");
        let what = if meta.file_type().is_symlink() {
            format!("-> {}", fs::read_link(&p).expect("link").display())
        } else if meta.is_file() {
            String::from_utf8_lossy(&fs::read(&p).expect("read")).to_string()
        } else {
            "(other)".to_string()
        };
        m.insert(name, what);
    }
    m
}

fn temporaries(dir: &Path) -> Vec<String> {
    listing(dir)
        .into_keys()
        .filter(|n| n.ends_with(".pwmplan-tmp"))
        .collect()
}

/// A link planted at the temporary name an older version used, and links
/// at every likely name: the run writes its own new files, never through a
/// link, and `out/plan.json` ends a regular file.
#[cfg(unix)]
#[test]
fn planted_links_at_temporary_names_are_not_followed() {
    let dir = tempfile::tempdir().expect("temp dir");
    let victim_dir = tempfile::tempdir().expect("second temp dir");
    let victim = victim_dir.path().join("victim.txt");
    fs::write(&victim, "untouched\n").expect("write victim");
    let out = dir.path().join("out");
    fs::create_dir(&out).expect("out");
    for name in [
        ".plan.json.pwmplan-tmp",
        ".rationale.md.pwmplan-tmp",
        ".belt_feeder_pwm.h.pwmplan-tmp",
    ] {
        std::os::unix::fs::symlink(&victim, out.join(name)).expect("plant link");
    }
    let o = run(dir.path(), &["plan"]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert_eq!(fs::read_to_string(&victim).expect("victim"), "untouched\n");
    let meta = fs::symlink_metadata(out.join("plan.json")).expect("plan.json");
    assert!(meta.is_file() && !meta.file_type().is_symlink());
    // The planted links are the user's: left alone; no temporaries of ours.
    let left: Vec<String> = listing(&out)
        .into_iter()
        .filter(|(n, _)| n.ends_with(".pwmplan-tmp"))
        .map(|(_, v)| v)
        .collect();
    assert_eq!(left.len(), 3);
    assert!(left.iter().all(|v| v.starts_with("-> ")));
}

/// A link planted at an output file is not written through: the run
/// refuses (it is no pwmplan file) and the link's target is untouched.
#[cfg(unix)]
#[test]
fn link_at_an_output_is_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    let victim_dir = tempfile::tempdir().expect("second temp dir");
    let victim = victim_dir.path().join("victim.txt");
    fs::write(&victim, "untouched\n").expect("write victim");
    let out = dir.path().join("out");
    fs::create_dir(&out).expect("out");
    std::os::unix::fs::symlink(&victim, out.join("plan.json")).expect("plant link");
    let before = listing(&out);
    let o = run(dir.path(), &["plan"]);
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(
        String::from_utf8_lossy(&o.stderr),
        "error: out/plan.json exists but cannot be read as pwmplan output (it is a symbolic link); nothing was written. Move it, or pass --force to overwrite\n"
    );
    assert_eq!(listing(&out), before);
    assert_eq!(fs::read_to_string(&victim).expect("victim"), "untouched\n");
}

/// A FIFO where `out/plan.json` belongs: refused at once, never opened.
#[cfg(unix)]
#[test]
fn fifo_at_an_output_does_not_block() {
    let dir = tempfile::tempdir().expect("temp dir");
    let out = dir.path().join("out");
    fs::create_dir(&out).expect("out");
    let status = Command::new("mkfifo")
        .arg(out.join("plan.json"))
        .status()
        .expect("mkfifo");
    assert!(status.success());
    let o = run(dir.path(), &["plan"]);
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(
        String::from_utf8_lossy(&o.stderr),
        "error: out/plan.json exists but cannot be read as pwmplan output (it is not a regular file); nothing was written. Move it, or pass --force to overwrite\n"
    );
    assert!(temporaries(&out).is_empty());
}

/// A refused run (an output edited by hand) leaves the folder exactly as
/// it was: no temporaries, no partial set.
#[test]
fn a_refused_run_leaves_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let o = run(dir.path(), &["plan"]);
    assert_eq!(o.status.code(), Some(0));
    let out = dir.path().join("out");
    let header = out.join("belt_feeder_pwm.h");
    let mut text = fs::read_to_string(&header).expect("header");
    text.push_str("// my edit\n");
    fs::write(&header, text).expect("edit");
    fs::remove_file(out.join("report.html")).expect("remove one output");
    let before = listing(&out);
    let o = run(dir.path(), &["plan", "--at", "25 kHz"]);
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(listing(&out), before);
}

/// Two runs on one folder at once take turns: both succeed, the set is
/// whole and current, and no temporary file is left.
#[test]
fn two_concurrent_runs_serialise() {
    let dir = tempfile::tempdir().expect("temp dir");
    for round in 0..4 {
        let at = if round % 2 == 0 { "25 kHz" } else { "30 kHz" };
        let spawn = |freq: &str| {
            Command::new(BIN)
                .args(["plan", "--at", freq])
                .current_dir(dir.path())
                .stdout(std::process::Stdio::null())
                .stderr(std::process::Stdio::piped())
                .spawn()
                .expect("spawn")
        };
        let a = spawn(at);
        let b = spawn(at);
        for child in [a, b] {
            let o = child.wait_with_output().expect("wait");
            assert_eq!(
                o.status.code(),
                Some(0),
                "round {round}: {}",
                String::from_utf8_lossy(&o.stderr)
            );
        }
        let out = dir.path().join("out");
        assert!(temporaries(&out).is_empty(), "round {round}");
        let c = run(dir.path(), &["check"]);
        assert_eq!(
            c.status.code(),
            Some(0),
            "round {round}: {}",
            String::from_utf8_lossy(&c.stdout)
        );
    }
}

/// A design whose name would be too long for a file name is refused
/// before any folder is made.
#[test]
fn long_name_refused_before_writing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let text =
        fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("boards/belt-feeder.yaml"))
            .expect("read");
    let long = format!("b{}", "x".repeat(240));
    fs::write(
        dir.path().join("d.yaml"),
        text.replace("name: belt-feeder", &format!("name: {long}"))
            .replace("board: wren-hb24.yaml", "board: bundled:wren-hb24"),
    )
    .expect("write");
    let o = run(dir.path(), &["plan", "d.yaml"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(!dir.path().join("out").exists());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.starts_with("error: d.yaml:3:9: design.name: 241 characters; expected at most 64"),
        "{err}"
    );
}
