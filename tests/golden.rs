//! Golden tests of `pwmplan plan`: for every case under `tests/golden/`, the
//! real binary plans the case's own copy of its design, board and switch into
//! a temporary folder, and every file it writes must equal the file of the
//! same name in the case's `expected/` byte for byte (no file missing, no
//! file extra). A mismatch prints a unified diff per file.
//!
//! The expected files were read once by hand when pinned (register values
//! against the conventions in `plan.json`, a compiling header and module, see
//! `emitted_code.rs`); afterwards they guard against unintended change.
//!
//! To accept an intended change, run
//! `UPDATE_GOLDEN=1 cargo test --release --test suite golden::`: it rewrites every
//! `expected/` folder and refreshes the copied inputs from `boards/`; review
//! the change with `git diff tests/golden` before handing it in.

use crate::common;

use std::collections::BTreeMap;
use std::fs;
use std::path::Path;

use common::{CASES, Case, case, case_dir, generate, input_files, read_tree};

/// Whether this run rewrites the golden files instead of comparing.
fn updating() -> bool {
    std::env::var("UPDATE_GOLDEN").is_ok_and(|v| v == "1")
}

/// The text edits that turn a case's bundled sources into its inputs: (file
/// in the case folder, from, to). Empty for a verbatim copy.
fn edits(case: &Case) -> &'static [(&'static str, &'static str, &'static str)] {
    match case.name {
        "conveyor-centre" => &[
            (
                "conveyor-centre.yaml",
                "# pwmplan design: an invented belt feeder on the Wren 24 V half-bridge (the bundled demo).",
                "# pwmplan design: an invented conveyor on the Wren 24 V half-bridge with a centre-aligned-only timer (golden case).",
            ),
            (
                "conveyor-centre.yaml",
                "name: belt-feeder",
                "name: conveyor-centre",
            ),
            (
                "wren-hb24.yaml",
                "name: \"Wren 24 V half-bridge (invented)\"",
                "name: \"Wren 24 V half-bridge, centre-aligned timer (invented)\"",
            ),
            (
                "wren-hb24.yaml",
                "alignments: [edge, centre]",
                "alignments: [centre]",
            ),
            (
                "wren-hb24.yaml",
                "    fpu: true\n",
                "    fpu: true\n    update_divider: { max: 8, each_extreme: true }   # the compares load at the top and the bottom\n",
            ),
            (
                "wren-hb24.yaml",
                "[\"18 K/W\", \"60 s\"]]\n",
                "[\"18 K/W\", \"60 s\"]]\n  overcurrent:\n    shunt: { resistance: \"10 mohm\", tolerance: \"1 %\", power: \"1 W\", place: phase }   # in series with the motor\n    amplifier: { gain: 20, gain_tolerance: \"2 %\", offset: \"1.65 V\", offset_tolerance: \"10 mV\", settle_time: \"300 ns\" }\n    comparator:\n      threshold: { fixed: \"2.9 V\" }\n      tolerance: \"3 %\"\n      offset: \"10 mV\"\n      delay: \"120 ns\"\n    blanking: { clock_divider: 1, max_ticks: 255 }\n    responses: [cycle-by-cycle]\n  current_sensing: { settle_time: \"0.6 us\", sample_time: \"0.3 us\", adc: { bits: 12, full_scale: \"3.3 V\" } }\n",
            ),
            (
                "conveyor-centre.yaml",
                "  objective: least-loss\n",
                "  objective: least-loss\n  current_loop: { rate: \"30 kHz\", fixed_point: { fraction_bits: 12 } }   # sampled and updated at both counter extremes\n",
            ),
        ],
        "pump-dc-link" => &[
            (
                "pump-dc-link.yaml",
                "# pwmplan design: an invented circulation pump with a brushless motor on the Osprey 48 V three-phase bridge.",
                "# pwmplan design: the circulation pump with one DC-link shunt on the Osprey 48 V three-phase bridge (golden case).",
            ),
            ("pump-dc-link.yaml", "name: pump-bldc", "name: pump-dc-link"),
            (
                "osprey-3p48.yaml",
                "name: \"Osprey 48 V three-phase bridge (invented)\"",
                "name: \"Osprey 48 V three-phase bridge, one DC-link shunt (invented)\"",
            ),
            (
                "osprey-3p48.yaml",
                "    fpu: true\n",
                "    fpu: true\n    update_divider: { max: 1, each_extreme: true }   # the compares load at the top and the bottom\n",
            ),
            (
                "osprey-3p48.yaml",
                "sample_time: \"0.8 us\" }",
                "sample_time: \"0.8 us\", place: supply-return }   # the over-current shunt, read twice per period",
            ),
        ],
        "pump-sensorless" => &[
            (
                "pump-sensorless.yaml",
                "# pwmplan design: an invented circulation pump with a brushless motor on the Osprey 48 V three-phase bridge.",
                "# pwmplan design: the circulation pump with a trapezoidal motor, sensorless six-step on the Osprey 48 V three-phase bridge (golden case).",
            ),
            (
                "pump-sensorless.yaml",
                "name: pump-bldc",
                "name: pump-sensorless",
            ),
            (
                "pump-sensorless.yaml",
                "back_emf_shape: sinusoidal",
                "back_emf_shape: trapezoidal",
            ),
            (
                "osprey-3p48.yaml",
                "name: \"Osprey 48 V three-phase bridge (invented)\"",
                "name: \"Osprey 48 V three-phase bridge, sensorless six-step (invented)\"",
            ),
            (
                "osprey-3p48.yaml",
                "sinusoidal: { zero_sequence: min-max }",
                "six-step: { chop: high-side, rotor_position: back-emf }   # the floating phase's back-EMF",
            ),
        ],
        _ => &[],
    }
}

/// What a case's input file should hold: the bundled file it comes from,
/// with the case's edits applied (each must apply exactly once).
fn expected_input(case: &Case, rel: &str) -> String {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
    let source = if rel == common::design_file(case) {
        root.join(format!("{}.yaml", case.source))
    } else {
        root.join(rel)
    };
    let mut text = fs::read_to_string(&source)
        .unwrap_or_else(|e| panic!("read bundled {}: {e}", source.display()));
    for (file, from, to) in edits(case) {
        if *file == rel {
            assert_eq!(
                text.matches(from).count(),
                1,
                "case {}: edit {from:?} must match exactly once in {}",
                case.name,
                source.display()
            );
            text = text.replacen(from, to, 1);
        }
    }
    text
}

/// A unified diff of two files, or a note when either is not UTF-8.
fn diff(name: &str, expected: &[u8], actual: &[u8]) -> String {
    labelled_diff(
        &format!("expected/{name}"),
        &format!("generated/{name}"),
        expected,
        actual,
    )
}

fn labelled_diff(old: &str, new: &str, expected: &[u8], actual: &[u8]) -> String {
    match (std::str::from_utf8(expected), std::str::from_utf8(actual)) {
        (Ok(e), Ok(a)) => similar::TextDiff::from_lines(e, a)
            .unified_diff()
            .context_radius(3)
            .header(old, new)
            .to_string(),
        _ => format!("{new}: bytes differ and are not both UTF-8\n"),
    }
}

/// Differences between the expected and generated file sets, as one
/// readable message; empty when equal.
fn compare(expected: &BTreeMap<String, Vec<u8>>, actual: &BTreeMap<String, Vec<u8>>) -> String {
    let mut msg = String::new();
    for (name, want) in expected {
        match actual.get(name) {
            None => msg.push_str(&format!("{name}: expected but not generated\n")),
            Some(got) if got != want => msg.push_str(&diff(name, want, got)),
            Some(_) => {}
        }
    }
    for name in actual.keys().filter(|n| !expected.contains_key(*n)) {
        msg.push_str(&format!("{name}: generated but not in expected/\n"));
    }
    msg
}

/// Rewrite a case's inputs from `boards/` (UPDATE_GOLDEN=1 only).
fn refresh_inputs(case: &Case) {
    for rel in input_files(case) {
        let want = expected_input(case, &rel);
        let path = case_dir(case).join(&rel);
        if fs::read_to_string(&path).ok().as_deref() != Some(want.as_str()) {
            if let Some(parent) = path.parent() {
                fs::create_dir_all(parent).expect("create folder");
            }
            fs::write(&path, &want).unwrap_or_else(|e| panic!("write {}: {e}", path.display()));
        }
    }
}

/// Replace `expected/` by the generated files.
fn rewrite_expected(dir: &Path, files: &BTreeMap<String, Vec<u8>>) {
    if dir.exists() {
        fs::remove_dir_all(dir).unwrap_or_else(|e| panic!("remove {}: {e}", dir.display()));
    }
    fs::create_dir_all(dir).unwrap_or_else(|e| panic!("create {}: {e}", dir.display()));
    for (name, bytes) in files {
        fs::write(dir.join(name), bytes).unwrap_or_else(|e| panic!("write {name}: {e}"));
    }
}

/// The golden comparison of one case.
fn check_case(name: &str) {
    let case = case(name);
    if updating() {
        refresh_inputs(case);
    }
    let (_tmp, generated) = generate(case);
    let expected_dir = case_dir(case).join("expected");
    if updating() {
        rewrite_expected(&expected_dir, &generated);
        eprintln!("updated {}", expected_dir.display());
        return;
    }
    let expected = read_tree(&expected_dir);
    assert!(
        !expected.is_empty(),
        "{} is empty; create it with UPDATE_GOLDEN=1 cargo test --release --test suite golden::",
        expected_dir.display()
    );
    let msg = compare(&expected, &generated);
    assert!(
        msg.is_empty(),
        "golden case {name}: generated files differ from {}\n{msg}\n\
         If the change is intended: UPDATE_GOLDEN=1 cargo test --release --test suite golden::, then review git diff tests/golden",
        expected_dir.display()
    );
}

#[test]
fn golden_belt_feeder() {
    check_case("belt-feeder");
}

#[test]
fn golden_vent_fan() {
    check_case("vent-fan");
}

#[test]
fn golden_winch() {
    check_case("winch");
}

#[test]
fn golden_pump_bldc() {
    check_case("pump-bldc");
}

#[test]
fn golden_conveyor_centre() {
    check_case("conveyor-centre");
}

#[test]
fn golden_pump_dc_link() {
    check_case("pump-dc-link");
}

#[test]
fn golden_pump_sensorless() {
    check_case("pump-sensorless");
}

/// Every folder under `tests/golden/` is a listed case (so a new folder is
/// not silently skipped) and every listed case has one.
#[test]
fn every_golden_folder_is_a_case() {
    let mut folders: Vec<String> = fs::read_dir(common::golden_root())
        .expect("tests/golden exists")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .collect();
    folders.sort();
    let mut listed: Vec<String> = CASES.iter().map(|c| c.name.to_string()).collect();
    listed.sort();
    assert_eq!(
        folders, listed,
        "tests/golden folders and common::CASES differ"
    );
}

/// The expected files are the seven `plan` promises, with names from the
/// design name, and each carries a hash marker.
#[test]
fn expected_folders_hold_the_seven_files() {
    if updating() {
        return;
    }
    for case in CASES {
        let expected = read_tree(&case_dir(case).join("expected"));
        let stem = common::stem(case);
        let want = [
            format!("{stem}.h"),
            format!("{stem}.rs"),
            "loss.svg".to_string(),
            "plan.json".to_string(),
            "rationale.md".to_string(),
            "report.html".to_string(),
            "thermal.svg".to_string(),
        ];
        let mut want: Vec<String> = want.to_vec();
        want.sort();
        let got: Vec<String> = expected.keys().cloned().collect();
        assert_eq!(got, want, "files of {}/expected", case.name);
        for (name, bytes) in &expected {
            let text = String::from_utf8_lossy(bytes);
            let marker = text
                .find("pwmplan-hash:")
                .map(|at| &text[at + "pwmplan-hash:".len()..])
                .unwrap_or_else(|| panic!("{}/expected/{name}: no pwmplan-hash marker", case.name));
            let hex: String = marker.chars().take(64).collect();
            assert!(
                hex.len() == 64
                    && hex.chars().all(|c| c.is_ascii_hexdigit())
                    && hex != "0".repeat(64),
                "{}/expected/{name}: marker is not a sealed SHA-256: {hex}",
                case.name
            );
        }
    }
}

/// Two runs on the same inputs give the same bytes (no timestamps, no
/// hash-map order, no temporary paths in the output).
#[test]
fn plan_is_deterministic() {
    for case in CASES {
        let (_a, first) = generate(case);
        let (_b, second) = generate(case);
        let msg = compare(&first, &second);
        assert!(msg.is_empty(), "case {}: two runs differ\n{msg}", case.name);
    }
}

/// The case inputs are the bundled files (with a derived case's listed
/// edits), so the goldens follow the shipped designs. UPDATE_GOLDEN=1
/// refreshes them.
#[test]
fn case_inputs_follow_the_bundled_files() {
    if updating() {
        // Each golden test refreshes its own case's inputs first.
        return;
    }
    let mut stale = Vec::new();
    for case in CASES {
        for rel in input_files(case) {
            let want = expected_input(case, &rel);
            let path = case_dir(case).join(&rel);
            let got = fs::read_to_string(&path).unwrap_or_default();
            if got != want {
                stale.push(labelled_diff(
                    &format!("boards/ (edited for {})", case.name),
                    &format!("tests/golden/{}/{rel}", case.name),
                    want.as_bytes(),
                    got.as_bytes(),
                ));
            }
        }
    }
    assert!(
        stale.is_empty(),
        "golden inputs differ from boards/ (refresh with UPDATE_GOLDEN=1 cargo test --release --test suite golden::):\n{}",
        stale.join("\n")
    );
}

/// Compiling the templates in pieces (`output::pieces`, to keep compiling
/// cheap) renders every file of every golden case exactly as the templates
/// compiled whole do, as pieces cut at every allowed line, and with the
/// three-phase pieces left out of the compile.
#[test]
fn templates_in_pieces_render_as_whole() {
    use pwmplan::cli::solved::{generate_with, solve_design};
    use pwmplan::emit::Templates;
    let whole = Templates::load_in_pieces(None, usize::MAX).expect("bundled templates compile");
    let finest = Templates::load_in_pieces(None, 1).expect("bundled templates compile");
    let usual = Templates::load(None).expect("bundled templates compile");
    // The three-phase pieces left out, as `plan` compiles for a design that
    // is not three-phase; the three-phase cases then compile them when
    // rendering.
    let without_three_phase =
        Templates::load_expecting_false(None, &["three_phase"]).expect("bundled templates compile");
    for case in CASES {
        let dir = case_dir(case);
        let design = dir.join(common::design_file(case));
        let solved = solve_design(Some(&design), None, false).expect("the case plans");
        let texts = |t: &Templates| {
            generate_with(&solved, t)
                .expect("the files render")
                .into_iter()
                .map(|f| (f.name, f.text))
                .collect::<Vec<_>>()
        };
        let reference = texts(&whole);
        assert_eq!(texts(&usual), reference, "{}", case.name);
        assert_eq!(texts(&finest), reference, "{}", case.name);
        assert_eq!(texts(&without_three_phase), reference, "{}", case.name);
    }
}
