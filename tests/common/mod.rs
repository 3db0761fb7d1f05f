//! Shared helpers of the emission tests (`golden`, `emitted_code`,
//! `check_cmd`): the golden cases, running the real binary on one, and
//! reading a folder of generated files.
//!
//! Each golden case is a self-contained folder `tests/golden/<case>/` holding
//! the design `<case>.yaml`, its board and `switches/<switch>.yaml`, so the
//! binary resolves every input inside the folder; `expected/` holds the seven
//! files `plan` writes. The binary always runs with the case folder as its
//! working directory and the design given as the bare file name, because the
//! generated files record the input paths as spelled on the command line.

// Each test file uses a different part of this module.
#![allow(dead_code)]

use std::collections::BTreeMap;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The binary under test.
pub const BIN: &str = env!("CARGO_BIN_EXE_pwmplan");

/// One golden case.
pub struct Case {
    /// Folder under `tests/golden/`; the design file is `<name>.yaml`.
    pub name: &'static str,
    /// Board file name inside the folder.
    pub board: &'static str,
    /// Switch file, relative to the folder.
    pub switch: &'static str,
    /// The bundled design under `boards/` the inputs are copied from (the
    /// board and switch come from `boards/` under the same names); `golden.rs`
    /// keeps the copies in step, applying a derived case's edits.
    pub source: &'static str,
}

/// Every golden case. `conveyor-centre` is `belt-feeder` on a copy of the
/// board whose timer offers only centre-aligned counting, so the
/// centre-aligned branches of the templates are generated and compiled too
/// (with a series shunt read at both counter extremes); `pump-dc-link` is
/// `pump-bldc` reading one DC-link shunt instead of low-side shunts.
pub const CASES: &[Case] = &[
    Case {
        name: "belt-feeder",
        board: "wren-hb24.yaml",
        switch: "switches/tarn-40.yaml",
        source: "belt-feeder",
    },
    Case {
        name: "vent-fan",
        board: "kite-ls12.yaml",
        switch: "switches/scree-60.yaml",
        source: "vent-fan",
    },
    Case {
        name: "winch",
        board: "heron-hb48.yaml",
        switch: "switches/corrie-100.yaml",
        source: "winch",
    },
    Case {
        name: "pump-bldc",
        board: "osprey-3p48.yaml",
        switch: "switches/corrie-100.yaml",
        source: "pump-bldc",
    },
    Case {
        name: "conveyor-centre",
        board: "wren-hb24.yaml",
        switch: "switches/tarn-40.yaml",
        source: "belt-feeder",
    },
    Case {
        name: "pump-dc-link",
        board: "osprey-3p48.yaml",
        switch: "switches/corrie-100.yaml",
        source: "pump-bldc",
    },
    Case {
        name: "pump-sensorless",
        board: "osprey-3p48.yaml",
        switch: "switches/corrie-100.yaml",
        source: "pump-bldc",
    },
];

/// The case of a name; panics on a typo in a test.
pub fn case(name: &str) -> &'static Case {
    CASES
        .iter()
        .find(|c| c.name == name)
        .unwrap_or_else(|| panic!("no golden case {name}"))
}

/// `tests/golden/`.
pub fn golden_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/golden")
}

/// `tests/golden/<case>/`.
pub fn case_dir(case: &Case) -> PathBuf {
    golden_root().join(case.name)
}

/// File name of a case's design.
pub fn design_file(case: &Case) -> String {
    format!("{}.yaml", case.name)
}

/// The input files of a case, relative to its folder.
pub fn input_files(case: &Case) -> Vec<String> {
    vec![
        design_file(case),
        case.board.to_string(),
        case.switch.to_string(),
    ]
}

/// Run the binary with `args` in `cwd`.
pub fn run(cwd: &Path, args: &[&str]) -> Output {
    Command::new(BIN)
        .current_dir(cwd)
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("cannot run {BIN}: {e}"))
}

/// Exit status, stdout and stderr of a run, for assertion messages.
pub fn describe(o: &Output) -> String {
    format!(
        "status {:?}\n--- stdout\n{}\n--- stderr\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// `plan <case>.yaml --out <out>` in the case folder; panics unless it
/// exits 0.
pub fn plan_case(case: &Case, out: &Path) {
    let out_arg = out.to_str().expect("temporary paths are UTF-8");
    let o = run(
        &case_dir(case),
        &["plan", &design_file(case), "--out", out_arg],
    );
    assert_eq!(
        o.status.code(),
        Some(0),
        "plan of golden case {} failed\n{}",
        case.name,
        describe(&o)
    );
}

/// Every regular file under `dir` (recursively), by path relative to `dir`
/// with `/` separators.
pub fn read_tree(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut files = BTreeMap::new();
    collect(dir, dir, &mut files);
    files
}

fn collect(root: &Path, dir: &Path, files: &mut BTreeMap<String, Vec<u8>>) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for entry in entries {
        let path = entry.expect("readable folder entry").path();
        if path.is_dir() {
            collect(root, &path, files);
        } else {
            let rel = path
                .strip_prefix(root)
                .expect("entry under its root")
                .components()
                .map(|c| c.as_os_str().to_string_lossy().into_owned())
                .collect::<Vec<_>>()
                .join("/");
            let bytes = fs::read(&path).unwrap_or_else(|e| panic!("read {}: {e}", path.display()));
            files.insert(rel, bytes);
        }
    }
}

/// Plan a case into a fresh temporary folder and return it with the files.
pub fn generate(case: &Case) -> (tempfile::TempDir, BTreeMap<String, Vec<u8>>) {
    let tmp = tempfile::tempdir().expect("temporary folder");
    let out = tmp.path().join("out");
    plan_case(case, &out);
    let files = read_tree(&out);
    (tmp, files)
}

/// Copy a case's inputs into `dir` (keeping `switches/`).
pub fn copy_inputs(case: &Case, dir: &Path) {
    for rel in input_files(case) {
        let to = dir.join(&rel);
        if let Some(parent) = to.parent() {
            fs::create_dir_all(parent).expect("create folder");
        }
        fs::copy(case_dir(case).join(&rel), &to)
            .unwrap_or_else(|e| panic!("copy {rel} of case {}: {e}", case.name));
    }
}

/// The file stem of the code files (`belt-feeder` -> `belt_feeder_pwm`).
pub fn stem(case: &Case) -> String {
    format!("{}_pwm", case.name.replace('-', "_"))
}
