//! Bad-input integration tests for `pwmplan plan`.
//!
//! Each case copies the bundled files under `boards/` into a fresh temporary
//! folder, applies one small edit to one file (replace a line, add a key,
//! remove a key, or overwrite the whole file), runs the real binary there and
//! checks the promise made to the user for bad input: exit status exactly 2
//! (a panic gives 101), nothing on standard output, no `out/` folder, and the
//! whole standard-error text equal to the pinned message: `error:
//! FILE:LINE:COL: FIELD.PATH: message`, then the source line and a caret.
//!
//! The pinned texts were read as a firmware engineer would read them (does it
//! name the file, the place, the field and what was expected?) before being
//! fixed here. A last test keeps the bundled designs themselves valid, so a
//! case never fails only because its starting point broke.

use std::fs;
use std::path::Path;
use std::process::{Command, Output};

use tempfile::TempDir;

/// One edit applied to a copy of the bundled files.
enum Edit {
    /// Replace the first occurrence of `from` with `to` in `file`.
    Replace {
        file: &'static str,
        from: &'static str,
        to: &'static str,
    },
    /// Overwrite `file` with `bytes`.
    Write {
        file: &'static str,
        bytes: &'static [u8],
    },
}

/// Replace `from` with `to` in `file` (a path under `boards/`). The case fails
/// if `from` is not in the file, so a fixture change cannot silently turn a
/// case into a run of the unchanged, valid files.
fn case(file: &'static str, from: &'static str, to: &'static str) -> Edit {
    Edit::Replace { file, from, to }
}

/// Overwrite `file` (a path under `boards/`) with `bytes`.
fn write(file: &'static str, bytes: &'static [u8]) -> Edit {
    Edit::Write { file, bytes }
}

/// Copy the folder `from` into `to`, recursively.
fn copy_tree(from: &Path, to: &Path) {
    fs::create_dir_all(to).expect("create the copy's folder");
    for entry in fs::read_dir(from).expect("read the bundled folder") {
        let entry = entry.expect("folder entry");
        let target = to.join(entry.file_name());
        if entry.file_type().expect("entry type").is_dir() {
            copy_tree(&entry.path(), &target);
        } else {
            fs::copy(entry.path(), &target).expect("copy a bundled file");
        }
    }
}

/// A temporary folder holding a copy of `boards/`.
fn fixture() -> TempDir {
    let dir = tempfile::tempdir().expect("create a temporary folder");
    let boards = Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
    copy_tree(&boards, dir.path());
    dir
}

fn apply(dir: &Path, edit: &Edit) {
    match edit {
        Edit::Replace { file, from, to } => {
            let path = dir.join(file);
            let text = fs::read_to_string(&path).expect("read the file to edit");
            assert!(
                text.contains(from),
                "the case's text {from:?} is not in {file}; the fixture changed, update the case"
            );
            fs::write(&path, text.replacen(from, to, 1)).expect("write the edited file");
        }
        Edit::Write { file, bytes } => {
            fs::write(dir.join(file), bytes).expect("overwrite the file");
        }
    }
}

/// Run `pwmplan plan DESIGN` with `dir` as the working folder.
fn plan(dir: &Path, design: &str) -> Output {
    Command::new(env!("CARGO_BIN_EXE_pwmplan"))
        .arg("plan")
        .arg(design)
        .current_dir(dir)
        .output()
        .expect("run pwmplan")
}

/// Apply `edits` to a fresh copy of `boards/`, run `plan DESIGN`, and check
/// the bad-input promise with the whole of standard error equal to
/// `expected` (a leading newline, there only for layout, is dropped).
fn bad_input(design: &str, edits: &[Edit], expected: &str) {
    let dir = fixture();
    for edit in edits {
        apply(dir.path(), edit);
    }
    refused(dir.path(), design, expected);
}

/// Run `plan DESIGN` in `dir` and check the bad-input promise with the
/// whole of standard error equal to `expected`.
fn refused(dir: &Path, design: &str, expected: &str) {
    let out = plan(dir, design);
    let stderr = String::from_utf8_lossy(&out.stderr);
    let expected = expected.strip_prefix('\n').unwrap_or(expected);
    assert_eq!(
        out.status.code(),
        Some(2),
        "expected exit status 2 (bad input); stderr:\n{stderr}"
    );
    assert_eq!(
        String::from_utf8_lossy(&out.stdout),
        "",
        "nothing may reach standard output on bad input"
    );
    assert!(
        !dir.join("out").exists(),
        "no out/ folder may be written on bad input"
    );
    assert_eq!(stderr, expected);
}

/// Every bundled design plans cleanly, so each case below starts from valid
/// files and fails only through its own edit.
#[test]
fn bundled_designs_are_valid() {
    let dir = fixture();
    let mut designs = Vec::new();
    for entry in fs::read_dir(dir.path()).expect("read the copy of boards/") {
        let path = entry.expect("folder entry").path();
        if path.extension().is_some_and(|x| x == "yaml") {
            let text = fs::read_to_string(&path).expect("read a bundled file");
            if text.lines().any(|l| l.trim_end() == "design:") {
                designs.push(path.file_name().expect("file name").to_owned());
            }
        }
    }
    designs.sort();
    assert_eq!(
        designs,
        [
            "belt-feeder.yaml",
            "pump-bldc.yaml",
            "vent-fan.yaml",
            "winch.yaml"
        ],
        "the bundled designs; update this list when one is added"
    );
    for design in &designs {
        let name = design.to_string_lossy();
        let out = plan(dir.path(), &name);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{name} should plan; stderr:\n{}",
            String::from_utf8_lossy(&out.stderr)
        );
        assert!(!out.stdout.is_empty(), "{name} printed no summary");
    }
}

// ------------------------------------------------------------------ cases

/// A `[` left open: the caret goes where the `]` is missing, and the message
/// names where the sequence began (the line holds several `[`).
#[test]
fn yaml_unclosed_flow_sequence() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"["175 °C", 1.78]]"#,
            r#"["175 °C", 1.78]"#,
        )],
        r#"
error: switches/tarn-40.yaml:9:99: switch.r_ds_on_vs_temperature.points: unclosed `[` (opened at line 9, column 13); add the missing `]`
 9 |     points: [["-40 °C", 0.75], ["25 °C", 1.0], ["75 °C", 1.22], ["125 °C", 1.48], ["175 °C", 1.78]
   |                                                                                                   ^
"#,
    );
}

/// A `{` left open in the design.
#[test]
fn yaml_unclosed_flow_mapping() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"ambient: { min: "-10 °C", max: "55 °C" }"#,
            r#"ambient: { min: "-10 °C", max: "55 °C""#,
        )],
        r#"
error: belt-feeder.yaml:13:41: design.ambient: unclosed `{` (opened at line 13, column 12); add the missing `}`
 13 |   ambient: { min: "-10 °C", max: "55 °C"
    |                                         ^
"#,
    );
}

/// A key indented deeper than its siblings: the valid indentations are named.
#[test]
fn yaml_key_indented_too_deep() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "    counter_bits: 16",
            "      counter_bits: 16",
        )],
        r#"
error: wren-hb24.yaml:6:7: board.timer.clock.counter_bits: bad indentation: `counter_bits` is indented 6 spaces, which lines up with no key above it; indent it 4 (a key of `timer`), 2 (a key of `board`) or 0 (a top-level key)
 6 |       counter_bits: 16
   |       ^
"#,
    );
}

/// A design key indented by one space only (under-indented).
#[test]
fn yaml_key_indented_between_levels() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "  objective: least-loss",
            " objective: least-loss",
        )],
        r#"
error: belt-feeder.yaml:21:2: design.objective: bad indentation: `objective` is indented 1 space, which lines up with no key above it; indent it 4 (a key of `constraints`), 2 (a key of `design`) or 0 (a top-level key)
 21 |  objective: least-loss
    |  ^
"#,
    );
}

/// YAML forbids tabs in indentation.
#[test]
fn yaml_tab_in_indentation() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"    resistance: "0.62 ohm""#,
            "\tresistance: \"0.62 ohm\"",
        )],
        "error: belt-feeder.yaml:8:1: design.motor.resistance: a tab in the indentation; YAML indents with spaces only\n 8 | \tresistance: \"0.62 ohm\"\n   | ^\n",
    );
}

/// A list where one resistance goes.
#[test]
fn list_where_a_quantity_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"resistance: "0.62 ohm""#,
            r#"resistance: ["0.62 ohm"]"#,
        )],
        r#"
error: belt-feeder.yaml:8:17: design.motor.resistance: expected a resistance such as "8 mΩ", found a list
 8 |     resistance: ["0.62 ohm"]
   |                 ^
"#,
    );
}

/// A typ/max map on a field that takes one value.
#[test]
fn map_where_a_quantity_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"nominal: "24 V""#,
            r#"nominal: { typ: "24 V" }"#,
        )],
        r#"
error: belt-feeder.yaml:5:22: design.supply.nominal: expected a voltage such as "12 V", found a mapping
 5 |   supply: { nominal: { typ: "24 V" }, min: "20 V", max: "28 V" }
   |                      ^
"#,
    );
}

/// `motor.inductance` removed from the design.
#[test]
fn design_missing_field() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "    inductance: \"0.85 mH\"\n",
            "",
        )],
        r#"
error: belt-feeder.yaml:7:5: design.motor.inductance: missing; this field is required
 7 |     kind: brushed-dc
   |     ^
"#,
    );
}

/// `timer.counter_bits` removed from the board.
#[test]
fn board_missing_field() {
    bad_input(
        "belt-feeder.yaml",
        &[case("wren-hb24.yaml", "    counter_bits: 16\n", "")],
        r#"
error: wren-hb24.yaml:5:5: board.timer.counter_bits: missing; this field is required
 5 |     clock: "88 MHz"             # timer input clock, before the prescaler
   |     ^
"#,
    );
}

/// `v_dss` removed from the switch.
#[test]
fn switch_missing_field() {
    bad_input(
        "belt-feeder.yaml",
        &[case("switches/tarn-40.yaml", "  v_dss: \"40 V\"\n", "")],
        r#"
error: switches/tarn-40.yaml:4:3: switch.v_dss: missing; this field is required
 4 |   name: "Tarn 40 V, 2.4 mΩ (invented)"
   |   ^
"#,
    );
}

/// A misspelt motor key.
#[test]
fn design_unknown_key_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"inductance: "0.85 mH""#,
            r#"inductanse: "0.85 mH""#,
        )],
        r#"
error: belt-feeder.yaml:9:5: design.motor.inductanse: unknown field; did you mean `inductance`?
 9 |     inductanse: "0.85 mH"
   |     ^
"#,
    );
}

/// A misspelt timer key.
#[test]
fn board_unknown_key_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "counter_bits: 16",
            "counter_bit: 16",
        )],
        r#"
error: wren-hb24.yaml:6:5: board.timer.counter_bit: unknown field; did you mean `counter_bits`?
 6 |     counter_bit: 16
   |     ^
"#,
    );
}

/// A misspelt switch key.
#[test]
fn switch_unknown_key_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            "  body_diode:",
            "  body_diod:",
        )],
        r#"
error: switches/tarn-40.yaml:25:3: switch.body_diod: unknown field; did you mean `body_diode`?
 25 |   body_diod: { v_sd: "0.85 V", q_rr: { typ: "42 nC", max: "68 nC" }, t_rr: "38 ns", q_rr_test: { i_f: "25 A", di_dt: "…
    |   ^
"#,
    );
}

/// `halfbridge` for `half-bridge`.
#[test]
fn unknown_topology_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "topology: half-bridge",
            "topology: halfbridge",
        )],
        r#"
error: wren-hb24.yaml:21:15: board.stage.topology: unknown value `halfbridge`; did you mean `half-bridge`?
 21 |     topology: halfbridge
    |               ^
"#,
    );
}

/// `lowest-loss` for `least-loss`.
#[test]
fn unknown_objective_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "objective: least-loss",
            "objective: lowest-loss",
        )],
        r#"
error: belt-feeder.yaml:21:14: design.objective: unknown value `lowest-loss`; did you mean `least-loss`?
 21 |   objective: lowest-loss
    |              ^
"#,
    );
}

/// A word near no choice: all choices are listed.
#[test]
fn unknown_objective_lists_choices() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "objective: least-loss",
            "objective: cheapest",
        )],
        r#"
error: belt-feeder.yaml:21:14: design.objective: unknown value `cheapest`; expected one of `least-loss`, `quietest`, `coolest-junction`, `least-average-loss`, `least-worst-loss`
 21 |   objective: cheapest
    |              ^
"#,
    );
}

/// US spelling of `centre`.
#[test]
fn unknown_alignment_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "alignments: [edge, centre]",
            "alignments: [edge, center]",
        )],
        r#"
error: wren-hb24.yaml:9:24: board.timer.alignments[1]: unknown value `center`; did you mean `centre`?
 9 |     alignments: [edge, center]
   |                        ^
"#,
    );
}

/// A gate drive voltage without its unit.
#[test]
fn bare_number_for_a_voltage() {
    bad_input(
        "belt-feeder.yaml",
        &[case("wren-hb24.yaml", r#"supply: "12 V""#, "supply: 12")],
        r#"
error: wren-hb24.yaml:24:13: board.gate_driver.supply: expected a voltage such as "12 V", found a bare number 12 (write the unit)
 24 |     supply: 12
    |             ^
"#,
    );
}

/// A quoted number is still a bare number.
#[test]
fn bare_number_in_quotes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"nominal: "24 V""#,
            r#"nominal: "12""#,
        )],
        r#"
error: belt-feeder.yaml:5:22: design.supply.nominal: expected a voltage such as "12 V", found a bare number 12 (write the unit)
 5 |   supply: { nominal: "12", min: "20 V", max: "28 V" }
   |                      ^
"#,
    );
}

/// "12 A" for the supply voltage.
#[test]
fn current_where_a_voltage_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"nominal: "24 V""#,
            r#"nominal: "12 A""#,
        )],
        r#"
error: belt-feeder.yaml:5:22: design.supply.nominal: "12 A" is a current, expected a voltage such as "12 V"
 5 |   supply: { nominal: "12 A", min: "20 V", max: "28 V" }
   |                      ^
"#,
    );
}

/// A junction margin is a difference (K), not a temperature.
#[test]
fn temperature_where_a_difference_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"margin: "40 K""#,
            r#"margin: "40 °C""#,
        )],
        r#"
error: belt-feeder.yaml:17:25: design.constraints.junction.margin: "40 °C" is a temperature, expected a temperature difference such as "10 K"
 17 |     junction: { margin: "40 °C" }
    |                         ^
"#,
    );
}

/// "55 C" is coulombs; the message suggests °C.
#[test]
fn charge_unit_where_celsius_meant() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"max: "55 °C" }"#,
            r#"max: "55 C" }"#,
        )],
        r#"
error: belt-feeder.yaml:13:34: design.ambient.max: "55 C" is a charge, expected a temperature such as "25 °C"; did you mean "°C"?
 13 |   ambient: { min: "-10 °C", max: "55 C" }
    |                                  ^
"#,
    );
}

/// A made-up unit.
#[test]
fn unknown_unit_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"q_gs: "17 nC""#,
            r#"q_gs: "17 nQ""#,
        )],
        r#"
error: switches/tarn-40.yaml:14:9: switch.q_gs: unknown unit "nQ" (expected a charge such as "63 nC"); did you mean "nC"?
 14 |   q_gs: "17 nQ"
    |         ^
"#,
    );
}

/// `mhz` could be millihertz or megahertz.
#[test]
fn unit_in_wrong_case_suggests_both() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            r#"clock: "88 MHz""#,
            r#"clock: "88 mhz""#,
        )],
        r#"
error: wren-hb24.yaml:5:12: board.timer.clock: unknown unit "mhz" (expected a frequency such as "20 kHz"); did you mean "mHz" or "MHz"?
 5 |     clock: "88 mhz"             # timer input clock, before the prescaler
   |            ^
"#,
    );
}

/// A decimal comma.
#[test]
fn decimal_comma() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"nominal: "24 V""#,
            r#"nominal: "1,5 V""#,
        )],
        r#"
error: belt-feeder.yaml:5:22: design.supply.nominal: expected a number followed by a unit, found "1,5 V" (write decimals with a point, not a comma)
 5 |   supply: { nominal: "1,5 V", min: "20 V", max: "28 V" }
   |                      ^
"#,
    );
}

/// A negative winding resistance.
#[test]
fn negative_resistance() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"resistance: "0.62 ohm""#,
            r#"resistance: "-0.62 ohm""#,
        )],
        r#"
error: belt-feeder.yaml:8:17: design.motor.resistance: -620 mΩ is out of range; expected above 1.00 µΩ and at most 1.00 kΩ
 8 |     resistance: "-0.62 ohm"
   |                 ^
"#,
    );
}

/// A zero winding inductance.
#[test]
fn zero_inductance() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"inductance: "0.85 mH""#,
            r#"inductance: "0 mH""#,
        )],
        r#"
error: belt-feeder.yaml:9:17: design.motor.inductance: 0.00 H is out of range; expected above 1.00 nH and at most 10.0 H
 9 |     inductance: "0 mH"
   |                 ^
"#,
    );
}

/// A negative junction margin.
#[test]
fn negative_junction_margin() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"margin: "40 K""#,
            r#"margin: "-5 K""#,
        )],
        r#"
error: belt-feeder.yaml:17:25: design.constraints.junction.margin: -5.00 K is out of range; expected 0 to 200 K
 17 |     junction: { margin: "-5 K" }
    |                         ^
"#,
    );
}

/// NaN written as a number.
#[test]
fn nan_text() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"v_dss: "40 V""#,
            r#"v_dss: "NaN V""#,
        )],
        r#"
error: switches/tarn-40.yaml:5:10: switch.v_dss: not a finite number (NaN and infinity are not accepted)
 5 |   v_dss: "NaN V"
   |          ^
"#,
    );
}

/// Infinity written as a number.
#[test]
fn inf_text() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            r#"clock: "88 MHz""#,
            r#"clock: "inf MHz""#,
        )],
        r#"
error: wren-hb24.yaml:5:12: board.timer.clock: not a finite number (NaN and infinity are not accepted)
 5 |     clock: "inf MHz"             # timer input clock, before the prescaler
   |            ^
"#,
    );
}

/// A number too large for a double is infinite too.
#[test]
fn overflowing_number() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"nominal: "24 V""#,
            r#"nominal: "1e400 V""#,
        )],
        r#"
error: belt-feeder.yaml:5:22: design.supply.nominal: not a finite number (NaN and infinity are not accepted)
 5 |   supply: { nominal: "1e400 V", min: "20 V", max: "28 V" }
   |                      ^
"#,
    );
}

/// A 5 kV gate drive.
#[test]
fn absurd_gate_drive() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            r#"supply: "12 V""#,
            r#"supply: "5 kV""#,
        )],
        r#"
error: wren-hb24.yaml:24:13: board.gate_driver.supply: 5.00 kV is out of range; expected above 0.00 V and at most 50.0 V
 24 |     supply: "5 kV"
    |             ^
"#,
    );
}

/// A 64-bit timer counter.
#[test]
fn counter_bits_out_of_range() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "counter_bits: 16",
            "counter_bits: 64",
        )],
        r#"
error: wren-hb24.yaml:6:19: board.timer.counter_bits: 64 is out of range; expected 8 to 32
 6 |     counter_bits: 64
   |                   ^
"#,
    );
}

/// A ripple limit above 200 % of the rated current.
#[test]
fn ripple_percent_out_of_range() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"max_ripple: "25 %""#,
            r#"max_ripple: "250 %""#,
        )],
        r#"
error: belt-feeder.yaml:16:17: design.constraints.max_ripple: 250 % is out of range; expected above 0.100 % and at most 200 %
 16 |     max_ripple: "250 %"          # of the rated current, peak to peak
    |                 ^
"#,
    );
}

/// Miller charge larger than the total gate charge.
#[test]
fn q_gd_above_q_g() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"q_gd: { typ: "14 nC", max: "21 nC" }"#,
            r#"q_gd: { typ: "60 nC", max: "80 nC" }"#,
        )],
        r#"
error: switches/tarn-40.yaml:15:11: switch.q_gd: 60.0 nC is larger than q_g (58.0 nC); expected q_gd < q_g
 15 |   q_gd: { typ: "60 nC", max: "80 nC" }
    |           ^
"#,
    );
}

/// Each below Q_g, their sum above it.
#[test]
fn q_gs_plus_q_gd_above_q_g() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"q_gd: { typ: "14 nC", max: "21 nC" }"#,
            r#"q_gd: { typ: "45 nC", max: "50 nC" }"#,
        )],
        r#"
error: switches/tarn-40.yaml:15:11: switch.q_gd: q_gs + q_gd (62.0 nC) exceeds q_g (58.0 nC); expected q_gs + q_gd ≤ q_g
 15 |   q_gd: { typ: "45 nC", max: "50 nC" }
    |           ^
"#,
    );
}

/// A threshold above the gate rating.
#[test]
fn v_th_not_below_v_gs_max() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"v_gs_max: "20 V""#,
            r#"v_gs_max: "2.5 V""#,
        )],
        r#"
error: switches/tarn-40.yaml:10:30: switch.v_th.typ: 3.00 V is not below v_gs_max (2.50 V); expected V_th < V_GS max
 10 |   v_th: { min: "2.0 V", typ: "3.0 V", max: "4.0 V" }
    |                              ^
"#,
    );
}

/// A 3 V gate drive on a 3 V threshold.
#[test]
fn drive_not_above_v_th() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            r#"supply: "12 V""#,
            r#"supply: "3 V""#,
        )],
        r#"
error: wren-hb24.yaml:24:13: board.gate_driver.supply: 3.00 V does not exceed the switch's V_th typ 3.00 V; expected a drive voltage above the threshold
 24 |     supply: "3 V"
    |             ^
"#,
    );
}

/// A 24 V gate drive on a 20 V gate.
#[test]
fn drive_above_v_gs_max() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            r#"supply: "12 V""#,
            r#"supply: "24 V""#,
        )],
        r#"
error: wren-hb24.yaml:24:13: board.gate_driver.supply: 24.0 V exceeds the switch's V_GS max 20.0 V; expected a drive voltage within the gate rating
 24 |     supply: "24 V"
    |             ^
"#,
    );
}

/// Ambient equal to the switch's T_j max.
#[test]
fn ambient_max_at_t_j_max() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"max: "55 °C" }"#,
            r#"max: "175 °C" }"#,
        )],
        r#"
error: belt-feeder.yaml:13:34: design.ambient.max: 175 °C is not below the switch's T_j max 175 °C; expected an ambient the switch can work in
 13 |   ambient: { min: "-10 °C", max: "175 °C" }
    |                                  ^
"#,
    );
}

/// Supply max under nominal.
#[test]
fn supply_max_below_nominal() {
    bad_input(
        "belt-feeder.yaml",
        &[case("belt-feeder.yaml", r#"max: "28 V""#, r#"max: "22 V""#)],
        r#"
error: belt-feeder.yaml:5:48: design.supply.max: 22.0 V is below nominal 24.0 V; expected min ≤ nominal ≤ max
 5 |   supply: { nominal: "24 V", min: "20 V", max: "22 V" }
   |                                                ^
"#,
    );
}

/// Supply min over nominal.
#[test]
fn supply_min_above_nominal() {
    bad_input(
        "belt-feeder.yaml",
        &[case("belt-feeder.yaml", r#"min: "20 V""#, r#"min: "25 V""#)],
        r#"
error: belt-feeder.yaml:5:35: design.supply.min: 25.0 V is above nominal 24.0 V; expected min ≤ nominal ≤ max
 5 |   supply: { nominal: "24 V", min: "25 V", max: "28 V" }
   |                                   ^
"#,
    );
}

/// 5.2 V/krpm at 3800 rpm plus 3.5 A through 0.62 ohm needs 21.9 V; the supply dips to 20 V.
#[test]
fn back_emf_plus_ir_above_lowest_supply() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"operating_speed: "3200 rpm""#,
            r#"operating_speed: "3800 rpm""#,
        )],
        r#"
error: belt-feeder.yaml:12:22: design.motor.operating_speed: the motor needs 21.9 V (back-EMF 19.8 V + I·R 2.17 V) at this speed and current, more than the lowest supply 20.0 V; expected a speed the supply can reach
 12 |     operating_speed: "3800 rpm"
    |                      ^
"#,
    );
}

/// The same check when k_e comes from rated voltage and no-load speed.
#[test]
fn back_emf_from_no_load_speed_above_lowest_supply() {
    bad_input(
        "vent-fan.yaml",
        &[case(
            "vent-fan.yaml",
            r#"operating_speed: "4200 rpm""#,
            r#"operating_speed: "6000 rpm""#,
        )],
        r#"
error: vent-fan.yaml:13:22: design.motor.operating_speed: the motor needs 14.3 V (back-EMF 12.0 V + I·R 2.28 V) at this speed and current, more than the lowest supply 10.8 V; expected a speed the supply can reach
 13 |     operating_speed: "6000 rpm"
    |                      ^
"#,
    );
}

/// An empty frequency band.
#[test]
fn frequency_max_equal_to_min() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"max: "60 kHz" }"#,
            r#"max: "16 kHz" }"#,
        )],
        r#"
error: belt-feeder.yaml:19:38: design.constraints.frequency.max: 16.0 kHz is not above min 16.0 kHz; expected min < max
 19 |     frequency: { min: "16 kHz", max: "16 kHz" }
    |                                      ^
"#,
    );
}

/// 17 bits asked of a 16-bit counter.
#[test]
fn resolution_above_counter_width() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "min_resolution_bits: 10",
            "min_resolution_bits: 17",
        )],
        r#"
error: belt-feeder.yaml:18:26: design.constraints.min_resolution_bits: 17 bits exceeds the timer's 16-bit counter; expected at most 16
 18 |     min_resolution_bits: 17
    |                          ^
"#,
    );
}

/// The board file named does not exist.
#[test]
fn board_reference_not_found() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "board: wren-hb24.yaml",
            "board: wren-hb42.yaml",
        )],
        r#"
error: belt-feeder.yaml:4:10: design.board: wren-hb42.yaml: no such file
 4 |   board: wren-hb42.yaml
   |          ^
"#,
    );
}

/// A board path leaving the design's folder.
#[test]
fn board_reference_climbs_up() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "board: wren-hb24.yaml",
            "board: ../wren-hb24.yaml",
        )],
        r#"
error: belt-feeder.yaml:4:10: design.board: "../wren-hb24.yaml" climbs out of this file's folder with ".."; keep the board beside or below it (or use "bundled:NAME")
 4 |   board: ../wren-hb24.yaml
   |          ^
"#,
    );
}

/// An absolute board path.
#[test]
fn board_reference_absolute() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "board: wren-hb24.yaml",
            "board: /etc/wren-hb24.yaml",
        )],
        r#"
error: belt-feeder.yaml:4:10: design.board: "/etc/wren-hb24.yaml" is an absolute path; expected a path relative to this file (or "bundled:NAME")
 4 |   board: /etc/wren-hb24.yaml
   |          ^
"#,
    );
}

/// An empty board reference.
#[test]
fn board_reference_empty() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "board: wren-hb24.yaml",
            r#"board: """#,
        )],
        r#"
error: belt-feeder.yaml:4:10: design.board: expected a board file path or "bundled:NAME"
 4 |   board: ""
   |          ^
"#,
    );
}

/// A misspelt bundled board name.
#[test]
fn bundled_board_unknown_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "board: wren-hb24.yaml",
            "board: bundled:wren-hb42",
        )],
        r#"
error: belt-feeder.yaml:4:10: design.board: no bundled board named "wren-hb42"; did you mean "bundled:wren-hb24"?
 4 |   board: bundled:wren-hb42
   |          ^
"#,
    );
}

/// A bundled board name near none: all are listed.
#[test]
fn bundled_board_unknown_lists_choices() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "board: wren-hb24.yaml",
            "board: bundled:osprey",
        )],
        r#"
error: belt-feeder.yaml:4:10: design.board: no bundled board named "osprey"; expected one of: bundled:wren-hb24, bundled:kite-ls12, bundled:heron-hb48, bundled:osprey-3p48
 4 |   board: bundled:osprey
   |          ^
"#,
    );
}

/// The switch file named by the board does not exist.
#[test]
fn switch_file_missing() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "switch: switches/tarn-40.yaml",
            "switch: switches/tarn-41.yaml",
        )],
        r#"
error: wren-hb24.yaml:22:13: board.stage.switch: switches/tarn-41.yaml: no such file
 22 |     switch: switches/tarn-41.yaml
    |             ^
"#,
    );
}

/// The design names a switch file as its board: the reference is at fault.
#[test]
fn board_reference_is_a_switch_file() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "board: wren-hb24.yaml",
            "board: switches/tarn-40.yaml",
        )],
        r#"
error: belt-feeder.yaml:4:10: design.board: switches/tarn-40.yaml is a switch file; expected a board file (top-level key `board:`)
 4 |   board: switches/tarn-40.yaml
   |          ^
"#,
    );
}

/// The board names another board file as its switch: the reference is at fault.
#[test]
fn switch_reference_is_a_board_file() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "switch: switches/tarn-40.yaml",
            "switch: kite-ls12.yaml",
        )],
        r#"
error: wren-hb24.yaml:22:13: board.stage.switch: kite-ls12.yaml is a board file; expected a switch file (top-level key `switch:`)
 22 |     switch: kite-ls12.yaml
    |             ^
"#,
    );
}

/// An h-bridge with its modulation removed.
#[test]
fn h_bridge_without_modulation() {
    bad_input(
        "winch.yaml",
        &[case("heron-hb48.yaml", "    modulation: unipolar\n", "")],
        r#"
error: heron-hb48.yaml:15:5: board.stage.modulation: missing; an h-bridge needs `bipolar` or `unipolar`
 15 |     topology: h-bridge
    |     ^
"#,
    );
}

/// A modulation on a single-switch stage.
#[test]
fn modulation_on_low_side() {
    bad_input(
        "vent-fan.yaml",
        &[case(
            "kite-ls12.yaml",
            "    topology: low-side",
            "    topology: low-side\n    modulation: bipolar",
        )],
        r#"
error: kite-ls12.yaml:15:17: board.stage.modulation: only an h-bridge or a three-phase bridge has a modulation; remove it
 15 |     modulation: bipolar
    |                 ^
"#,
    );
}

/// A high-side supply on a low-side stage.
#[test]
fn low_side_with_high_side_supply() {
    bad_input(
        "vent-fan.yaml",
        &[case(
            "kite-ls12.yaml",
            r#"    delay_mismatch: "0 ns""#,
            "    delay_mismatch: \"0 ns\"\n    high_side: isolated",
        )],
        r#"
error: kite-ls12.yaml:25:16: board.gate_driver.high_side: a low-side stage has no high-side switch; remove it
 25 |     high_side: isolated
    |                ^
"#,
    );
}

/// A half-bridge with its bootstrap removed.
#[test]
fn bridge_without_high_side_supply() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "    high_side:\n      bootstrap: { capacitor: \"1 uF\", refresh_time: \"500 ns\", load_current: \"150 uA\" }\n",
            "",
        )],
        r#"
error: wren-hb24.yaml:24:5: board.gate_driver.high_side: missing; a bridge needs `bootstrap: {...}` or `isolated`
 24 |     supply: "12 V"
    |     ^
"#,
    );
}

/// A half-bridge board turned three-phase without a modulation.
#[test]
fn three_phase_without_modulation() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "topology: half-bridge",
            "topology: three-phase",
        )],
        r#"
error: wren-hb24.yaml:21:5: board.stage.modulation: missing; a three-phase bridge needs `sinusoidal: { zero_sequence: ... }` or `six-step: { chop: ... }`
 21 |     topology: three-phase
    |     ^
"#,
    );
}

// ------------------------------------------------------- three-phase cases

/// Sinusoidal modulation on a timer without centre-aligned counting.
#[test]
fn three_phase_needs_centre_alignment() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            "alignments: [edge, centre]",
            "alignments: [edge]",
        )],
        r#"
error: osprey-3p48.yaml:9:17: board.timer.alignments: a three-phase bridge samples its phase currents in the middle of the low-side on-time, at the bottom of an up-down count; add `centre`
 9 |     alignments: [edge]
   |                 ^
"#,
    );
}

/// A three-phase board without its current-sensing block.
#[test]
fn three_phase_needs_current_sensing() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            "  current_sensing: { settle_time: \"1.5 us\", sample_time: \"0.8 us\" }\n",
            "",
        )],
        r#"
error: osprey-3p48.yaml:3:3: board.current_sensing: missing; a three-phase bridge needs `current_sensing: { settle_time: ..., sample_time: ... }` (low-side shunts, sampled in the middle of the low-side on-time)
 3 |   name: "Osprey 48 V three-phase bridge (invented)"
   |   ^
"#,
    );
}

/// An h-bridge modulation on a three-phase board.
#[test]
fn three_phase_with_h_bridge_modulation() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            "    modulation:\n      sinusoidal: { zero_sequence: min-max }\n",
            "    modulation: unipolar\n",
        )],
        r#"
error: osprey-3p48.yaml:16:17: board.stage.modulation: `bipolar` and `unipolar` belong to an h-bridge; a three-phase bridge needs `sinusoidal: { zero_sequence: ... }` or `six-step: { chop: ... }`
 16 |     modulation: unipolar
    |                 ^
"#,
    );
}

/// A six-step modulation on an h-bridge board.
#[test]
fn h_bridge_with_six_step_modulation() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "modulation: unipolar",
            "modulation: { six-step: { chop: high-side } }",
        )],
        r#"
error: heron-hb48.yaml:16:19: board.stage.modulation: `sinusoidal` and `six-step` belong to a three-phase bridge; an h-bridge needs `bipolar` or `unipolar`
 16 |     modulation: { six-step: { chop: high-side } }
    |                   ^
"#,
    );
}

/// A chop scheme the tool does not know.
#[test]
fn six_step_unknown_chop() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            "sinusoidal: { zero_sequence: min-max }",
            "six-step: { chop: middle }",
        )],
        r#"
error: osprey-3p48.yaml:17:25: board.stage.modulation.six-step.chop: unknown value `middle`; expected one of `high-side`, `low-side`, `complementary`
 17 |       six-step: { chop: middle }
    |                         ^
"#,
    );
}

/// A rotor-position method the tool does not know (sensorless six-step is `back-emf`).
#[test]
fn six_step_unknown_rotor_position() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            "sinusoidal: { zero_sequence: min-max }",
            "six-step: { chop: high-side, rotor_position: sensorless }",
        )],
        r#"
error: osprey-3p48.yaml:17:52: board.stage.modulation.six-step.rotor_position: unknown value `sensorless`; expected one of `position-sensors`, `back-emf`
 17 |       six-step: { chop: high-side, rotor_position: sensorless }
    |                                                    ^
"#,
    );
}

/// A rotor position given as a number instead of a name.
#[test]
fn six_step_rotor_position_not_a_name() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            "sinusoidal: { zero_sequence: min-max }",
            "six-step: { chop: low-side, rotor_position: [back-emf] }",
        )],
        r#"
error: osprey-3p48.yaml:17:51: board.stage.modulation.six-step.rotor_position: expected one of the listed words, found a list
 17 |       six-step: { chop: low-side, rotor_position: [back-emf] }
    |                                                   ^
"#,
    );
}

/// A brushless motor without its pole pairs.
#[test]
fn brushless_needs_pole_pairs() {
    bad_input(
        "pump-bldc.yaml",
        &[case("pump-bldc.yaml", "    pole_pairs: 4\n", "")],
        r#"
error: pump-bldc.yaml:7:5: design.motor.pole_pairs: missing; a brushless motor needs its pole pairs (half the magnet poles, e.g. 4 for an 8-pole rotor)
 7 |     kind: brushless
   |     ^
"#,
    );
}

/// A brushless motor on an h-bridge board.
#[test]
fn brushless_motor_on_h_bridge() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "pump-bldc.yaml",
            "board: osprey-3p48.yaml",
            "board: heron-hb48.yaml",
        )],
        r#"
error: pump-bldc.yaml:7:11: design.motor.kind: a brushless motor needs a `three-phase` board; this board's stage is not one
 7 |     kind: brushless
   |           ^
"#,
    );
}

/// A brushed motor on a three-phase board.
#[test]
fn brushed_motor_on_three_phase() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            "board: heron-hb48.yaml",
            "board: osprey-3p48.yaml",
        )],
        r#"
error: winch.yaml:7:11: design.motor.kind: a three-phase board drives a `brushless` motor; expected `kind: brushless`
 7 |     kind: brushed-dc
   |           ^
"#,
    );
}

/// A speed whose phase voltage needs more than the linear range of min-max
/// at the lowest supply: 6 V/krpm line-to-line at 7000 rpm is 24.2 V phase
/// peak, m ≈ 1.25 > 2/√3 at 40 V.
#[test]
fn brushless_overmodulation_at_low_supply() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "pump-bldc.yaml",
            "operating_speed: \"3000 rpm\"",
            "operating_speed: \"7000 rpm\"",
        )],
        r#"
error: pump-bldc.yaml:14:22: design.motor.operating_speed: at the lowest supply 40.0 V the motor needs modulation index 1.324 (phase voltage peak 26.5 V), above the linear limit 1.155 of zero_sequence `min-max`; lower the speed or the current, or raise the supply
 14 |     operating_speed: "7000 rpm"
    |                      ^
"#,
    );
}

/// A current advance with six-step modulation.
#[test]
fn current_advance_with_six_step() {
    bad_input(
        "pump-bldc.yaml",
        &[
            case(
                "osprey-3p48.yaml",
                "sinusoidal: { zero_sequence: min-max }",
                "six-step: { chop: complementary }",
            ),
            case(
                "pump-bldc.yaml",
                "    pole_pairs: 4\n",
                "    pole_pairs: 4\n    current_advance_deg: 10\n",
            ),
        ],
        r#"
error: pump-bldc.yaml:12:26: design.motor.current_advance_deg: only sinusoidal modulation takes a current advance; remove it
 12 |     current_advance_deg: 10
    |                          ^
"#,
    );
}

/// Segment 2 starts inside segment 1 (0x80 + 64 = 0xC0).
#[test]
fn dead_time_segments_overlap() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "{ first_code: 0xA0, count: 64",
            "{ first_code: 0x90, count: 64",
        )],
        r#"
error: wren-hb24.yaml:16:27: board.timer.dead_time.segmented.segments[2].first_code: codes overlap segment 1; expected each code in one segment only
 16 |           - { first_code: 0x90, count: 64, base: 56, step: 4 }
    |                           ^
"#,
    );
}

/// A linear prescaler range upside down.
#[test]
fn prescaler_max_below_min() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "linear: { min: 1, max: 1024 }",
            "linear: { min: 8, max: 4 }",
        )],
        r#"
error: wren-hb24.yaml:8:30: board.timer.prescaler.linear.max: 4 is below min 8; expected max ≥ min
 8 |       linear: { min: 8, max: 4 }      # register = divider - 1
   |                              ^
"#,
    );
}

/// A divider of zero.
#[test]
fn prescaler_min_zero() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "linear: { min: 1, max: 1024 }",
            "linear: { min: 0, max: 1024 }",
        )],
        r#"
error: wren-hb24.yaml:8:22: board.timer.prescaler.linear.min: expected a divider of at least 1
 8 |       linear: { min: 0, max: 1024 }      # register = divider - 1
   |                      ^
"#,
    );
}

/// Two thermal paths given at once.
#[test]
fn both_r_th_ja_and_r_th_sa() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            r#"    r_th_sa: "24 K/W""#,
            "    r_th_sa: \"24 K/W\"\n    r_th_ja: \"40 K/W\"",
        )],
        r#"
error: wren-hb24.yaml:35:14: board.thermal.r_th_sa: give either r_th_ja, or r_th_cs with r_th_sa, not both
 35 |     r_th_sa: "24 K/W"
    |              ^
"#,
    );
}

/// `plan` on a board file: the top-level key is not `design`.
#[test]
fn board_file_given_to_plan() {
    bad_input(
        "wren-hb24.yaml",
        &[],
        r#"
error: wren-hb24.yaml:2:1: board: this is a board file; expected a design file (top-level key `design:`)
 2 | board:
   | ^
"#,
    );
}

/// `plan` on a file that does not exist.
#[test]
fn design_file_missing() {
    bad_input(
        "no-such-design.yaml",
        &[],
        r#"
error: no-such-design.yaml: no such file
"#,
    );
}

/// An empty design file.
#[test]
fn design_file_empty() {
    bad_input(
        "belt-feeder.yaml",
        &[write("belt-feeder.yaml", b"")],
        r#"
error: belt-feeder.yaml:1:1: design: the file is empty; expected a top-level `design:` key
"#,
    );
}

/// An empty board file, referenced from the design.
#[test]
fn board_file_empty() {
    bad_input(
        "belt-feeder.yaml",
        &[write("wren-hb24.yaml", b"")],
        r#"
error: wren-hb24.yaml:1:1: board: the file is empty; expected a top-level `board:` key
"#,
    );
}

/// A design file in Latin-1.
#[test]
fn design_file_not_utf8() {
    bad_input(
        "belt-feeder.yaml",
        &[write("belt-feeder.yaml", b"design:\n  name: caf\xe9\n")],
        r#"
error: belt-feeder.yaml:2:12: design.name: not UTF-8 text (a byte here is not UTF-8); expected a YAML file
 2 |   name: caf�
   |            ^
"#,
    );
}

/// A switch file that is not text, referenced from the board.
#[test]
fn switch_file_not_utf8() {
    bad_input(
        "vent-fan.yaml",
        &[write("switches/scree-60.yaml", b"\xff\xfe")],
        r#"
error: switches/scree-60.yaml:1:1: (top level): not UTF-8 text (a byte here is not UTF-8); expected a YAML file
 1 | ��
   | ^
"#,
    );
}

// ------------------------------------------- syntax before fields, and wording

/// A key one space short of its siblings: reported as indentation, not as
/// the `motor.inductance` the deserialiser misses before reaching it.
#[test]
fn yaml_key_indented_one_short() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "    inductance:",
            "   inductance:",
        )],
        r#"
error: belt-feeder.yaml:9:4: design.motor.inductance: bad indentation: `inductance` is indented 3 spaces, which lines up with no key above it; indent it 4 (a key of `motor`), 2 (a key of `design`) or 0 (a top-level key)
 9 |    inductance: "0.85 mH"
   |    ^
"#,
    );
}

/// A quote left open: the rest of the file would read as one string (or as
/// an unknown unit); the opening quote is named.
#[test]
fn yaml_unclosed_quote() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            r#"clock: "88 MHz""#,
            r#"clock: "88 MHz"#,
        )],
        r#"
error: wren-hb24.yaml:5:12: board.timer.clock: unclosed quoted string; close it with `"`
 5 |     clock: "88 MHz             # timer input clock, before the prescaler
   |            ^
"#,
    );
}

/// A single quote left open on the file's third line; the stream ends inside it.
#[test]
fn yaml_unclosed_single_quote() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "name: belt-feeder",
            "name: 'belt-feeder",
        )],
        r#"
error: belt-feeder.yaml:3:9: design.name: unclosed quoted string; close it with `'`
 3 |   name: 'belt-feeder
   |         ^
"#,
    );
}

/// The last `]` of the file missing: the parser stops past the last line
/// (line 37 of 36); the last line is shown with the caret at its end.
#[test]
fn yaml_unclosed_bracket_on_last_line() {
    bad_input(
        "belt-feeder.yaml",
        &[case("wren-hb24.yaml", r#""60 s"]]"#, r#""60 s"]"#)],
        r#"
error: wren-hb24.yaml:36:96: board.thermal.foster: unclosed `[` (opened at line 36, column 13); add the missing `]`
 36 |     foster: [["0.15 K/W", "0.4 ms"], ["0.75 K/W", "8 ms"], ["7 K/W", "2 s"], ["18 K/W", "60 s"]
    |                                                                                                ^
"#,
    );
}

/// A key without its colon.
#[test]
fn yaml_key_without_colon() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "board: wren-hb24.yaml",
            "board wren-hb24.yaml",
        )],
        r#"
error: belt-feeder.yaml:4:3: design.name: expected `key: value`; `board wren-hb24.yaml` has no `:`
 4 |   board wren-hb24.yaml
   |   ^
"#,
    );
}

/// A design file holding only comments.
#[test]
fn design_file_only_comments() {
    bad_input(
        "belt-feeder.yaml",
        &[write(
            "belt-feeder.yaml",
            b"# pwmplan design: to be written\n\n# design:\n",
        )],
        r#"
error: belt-feeder.yaml:1:1: design: the file has no content; expected a top-level `design:` key
 1 | # pwmplan design: to be written
   | ^
"#,
    );
}

/// A board file holding only comments: the message names the board key.
#[test]
fn board_file_only_comments() {
    bad_input(
        "belt-feeder.yaml",
        &[write("wren-hb24.yaml", b"# board: to be written\n")],
        r#"
error: wren-hb24.yaml:1:1: board: the file has no content; expected a top-level `board:` key
 1 | # board: to be written
   | ^
"#,
    );
}

/// A key written twice: the second is pointed at, the first is named.
#[test]
fn duplicate_key() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "    back_emf_constant:",
            "    inductance: \"0.9 mH\"\n    back_emf_constant:",
        )],
        r#"
error: belt-feeder.yaml:10:5: design.motor.inductance: duplicate key `inductance` (first at line 9)
 10 |     inductance: "0.9 mH"
    |     ^
"#,
    );
}

/// "an inductance", not "a inductance".
#[test]
fn list_where_an_inductance_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"inductance: "0.85 mH""#,
            r#"inductance: ["0.85 mH"]"#,
        )],
        r#"
error: belt-feeder.yaml:9:17: design.motor.inductance: expected an inductance such as "4.7 mH", found a list
 9 |     inductance: ["0.85 mH"]
   |                 ^
"#,
    );
}

/// `~` is YAML's null.
#[test]
fn null_where_a_quantity_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"inductance: "0.85 mH""#,
            "inductance: ~",
        )],
        r#"
error: belt-feeder.yaml:9:17: design.motor.inductance: empty value; expected an inductance such as "4.7 mH"
 9 |     inductance: ~
   |                 ^
"#,
    );
}

/// A key with nothing after its colon.
#[test]
fn empty_value_where_a_quantity_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case("wren-hb24.yaml", r#"supply: "12 V""#, "supply:")],
        r#"
error: wren-hb24.yaml:24:12: board.gate_driver.supply: empty value; expected a voltage such as "12 V"
 24 |     supply:
    |            ^
"#,
    );
}

/// A misspelt bundled switch, written without its folder.
#[test]
fn bundled_switch_unknown_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "switch: switches/tarn-40.yaml",
            "switch: bundled:tarn-4",
        )],
        r#"
error: wren-hb24.yaml:22:13: board.stage.switch: no bundled switch named "tarn-4"; did you mean "bundled:tarn-40"?
 22 |     switch: bundled:tarn-4
    |             ^
"#,
    );
}

/// Two letters swapped: `q_gd`, not `q_g` (also one edit away, and present).
#[test]
fn switch_unknown_key_transposed() {
    bad_input(
        "belt-feeder.yaml",
        &[case("switches/tarn-40.yaml", "  q_gd: {", "  q_dg: {")],
        r#"
error: switches/tarn-40.yaml:15:3: switch.q_dg: unknown field; did you mean `q_gd`?
 15 |   q_dg: { typ: "14 nC", max: "21 nC" }
    |   ^
"#,
    );
}

/// A word for a whole number: no Rust type name in the message.
#[test]
fn text_where_a_whole_number_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "counter_bits: 16",
            "counter_bits: sixteen",
        )],
        r#"
error: wren-hb24.yaml:6:19: board.timer.counter_bits: expected a whole number such as 16, found the text "sixteen"
 6 |     counter_bits: sixteen
   |                   ^
"#,
    );
}

/// A negative counter width.
#[test]
fn negative_whole_number() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "counter_bits: 16",
            "counter_bits: -16",
        )],
        r#"
error: wren-hb24.yaml:6:19: board.timer.counter_bits: expected a whole number ≥ 0, found -16
 6 |     counter_bits: -16
   |                   ^
"#,
    );
}

/// A word where a plain number goes.
#[test]
fn text_where_a_number_goes() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "min_resolution_bits: 10",
            "min_resolution_bits: ten",
        )],
        r#"
error: belt-feeder.yaml:18:26: design.constraints.min_resolution_bits: expected a number such as 10, found the text "ten"
 18 |     min_resolution_bits: ten
    |                          ^
"#,
    );
}

/// A design file that is a list.
#[test]
fn design_file_is_a_list() {
    bad_input(
        "belt-feeder.yaml",
        &[write("belt-feeder.yaml", b"- design\n")],
        r#"
error: belt-feeder.yaml:1:1: (top level): expected a mapping with the top-level key `design:`, found a list
 1 | - design
   | ^
"#,
    );
}

/// `plan` on a switch file.
#[test]
fn switch_file_given_to_plan() {
    bad_input(
        "switches/tarn-40.yaml",
        &[],
        r#"
error: switches/tarn-40.yaml:3:1: switch: this is a switch file; expected a design file (top-level key `design:`)
 3 | switch:
   | ^
"#,
    );
}

/// A bare number in quotes for a field that takes a current or a percentage:
/// both forms are named.
#[test]
fn bare_number_for_current_or_ratio() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"max_ripple: "25 %""#,
            r#"max_ripple: "25""#,
        )],
        r#"
error: belt-feeder.yaml:16:17: design.constraints.max_ripple: expected a current such as "0.5 A" or a ratio such as "15 %", found a bare number 25 (write the unit)
 16 |     max_ripple: "25"          # of the rated current, peak to peak
    |                 ^
"#,
    );
}

/// The same, unquoted.
#[test]
fn bare_number_for_current_or_ratio_unquoted() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"max_ripple: "25 %""#,
            "max_ripple: 25",
        )],
        r#"
error: belt-feeder.yaml:16:17: design.constraints.max_ripple: expected a current such as "0.5 A" or a ratio such as "15 %", found a bare number 25 (write the unit)
 16 |     max_ripple: 25          # of the rated current, peak to peak
    |                 ^
"#,
    );
}

/// A tolerance above the 50 % the section accepts.
#[test]
fn tolerance_out_of_range() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "  objective: least-loss",
            "  tolerances: { motor_resistance: \"60 %\" }\n  objective: least-loss",
        )],
        r#"
error: belt-feeder.yaml:21:35: design.tolerances.motor_resistance: 60.0 % is out of range; expected 0 to 50.0 %
 21 |   tolerances: { motor_resistance: "60 %" }
    |                                   ^
"#,
    );
}

/// The winding resistance at the top of its tolerance needs more voltage
/// than the lowest supply gives.
#[test]
fn tolerance_motor_resistance_beyond_the_supply() {
    bad_input(
        "belt-feeder.yaml",
        &[
            case("belt-feeder.yaml", r#"min: "20 V""#, r#"min: "19.2 V""#),
            case(
                "belt-feeder.yaml",
                "  objective: least-loss",
                "  tolerances: { motor_resistance: \"30 %\" }\n  objective: least-loss",
            ),
        ],
        r#"
error: belt-feeder.yaml:21:35: design.tolerances.motor_resistance: at +30.0 % the winding resistance is 806 mΩ and the motor needs 19.5 V (back-EMF 16.6 V + I·R 2.82 V), more than the lowest supply 19.2 V; expected a tolerance the supply can still drive
 21 |   tolerances: { motor_resistance: "30 %" }
    |                                   ^
"#,
    );
}

/// The gate drive at the bottom of its tolerance does not clear the
/// switch's highest Miller plateau.
#[test]
fn tolerance_driver_supply_below_the_plateau() {
    bad_input(
        "belt-feeder.yaml",
        &[
            case("wren-hb24.yaml", r#"supply: "12 V""#, r#"supply: "8 V""#),
            case(
                "belt-feeder.yaml",
                "  objective: least-loss",
                "  tolerances: { driver_supply: \"40 %\" }\n  objective: least-loss",
            ),
        ],
        r#"
error: belt-feeder.yaml:21:32: design.tolerances.driver_supply: at −40.0 % the gate drive is 4.80 V, not above the switch's highest Miller plateau 5.40 V (V_th at its max, rated current); expected a drive that turns the switch fully on at every corner
 21 |   tolerances: { driver_supply: "40 %" }
    |                                ^
"#,
    );
}

/// The gate drive at the top of its tolerance exceeds the switch's V_GS max.
#[test]
fn tolerance_driver_supply_above_v_gs_max() {
    bad_input(
        "belt-feeder.yaml",
        &[
            case("wren-hb24.yaml", r#"supply: "12 V""#, r#"supply: "18 V""#),
            case(
                "belt-feeder.yaml",
                "  objective: least-loss",
                "  tolerances: { driver_supply: \"20 %\" }\n  objective: least-loss",
            ),
        ],
        r#"
error: belt-feeder.yaml:21:32: design.tolerances.driver_supply: at +20.0 % the gate drive is 21.6 V, above the switch's V_GS max 20.0 V; expected a drive within the gate rating at every corner
 21 |   tolerances: { driver_supply: "20 %" }
    |                                ^
"#,
    );
}

// ------------------------------------------- hostile and absurd input (#22)

/// A dead-time clock divider so large that one tick lasts minutes: every
/// need would round to zero ticks (shoot-through on a bridge).
#[test]
fn dead_time_divider_rounds_every_need_to_zero() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "clock_divider: 1",
            "clock_divider: 15000000000",
        )],
        r#"
error: wren-hb24.yaml:12:24: board.timer.dead_time.segmented.clock_divider: 15000000000 makes one dead-time tick 170 s at the timer clock 88.0 MHz; expected a tick of at most 10.0 µs (clock_divider at most 880)
 12 |         clock_divider: 15000000000
    |                        ^
"#,
    );
}

/// Just above the tick bound: a precise refusal, not a vague one later.
#[test]
fn dead_time_divider_above_the_tick_bound() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "clock_divider: 1",
            "clock_divider: 900",
        )],
        r#"
error: wren-hb24.yaml:12:24: board.timer.dead_time.segmented.clock_divider: 900 makes one dead-time tick 10.2 µs at the timer clock 88.0 MHz; expected a tick of at most 10.0 µs (clock_divider at most 880)
 12 |         clock_divider: 900
    |                        ^
"#,
    );
}

/// A segment whose tick count overflows 64 bits.
#[test]
fn dead_time_segment_ticks_overflow() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "base: 40, step: 12",
            "base: 9223372036854775808, step: 12",
        )],
        r#"
error: wren-hb24.yaml:17:50: board.timer.dead_time.segmented.segments[3].base: (base + count − 1) · step overflows a tick count; expected a longest dead time of at most 1 ms
 17 |           - { first_code: 0xE0, count: 32, base: 9223372036854775808, step: 12 }
    |                                                  ^
"#,
    );
}

/// A linear generator whose longest code is far beyond any dead time.
#[test]
fn dead_time_linear_longest_beyond_bound() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "max_ticks: 1023",
            "max_ticks: 99999999999",
        )],
        r#"
error: heron-hb48.yaml:11:46: board.timer.dead_time.linear.max_ticks: the longest code counts 99999999999 ticks, 833 s; expected a longest dead time of at most 1.00 ms
 11 |       linear: { clock_divider: 1, max_ticks: 99999999999, code_bits: 10 }
    |                                              ^
"#,
    );
}

/// The smallest positive double as a winding resistance.
#[test]
fn motor_resistance_absurdly_small() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#""0.62 ohm""#,
            r#""4.9e-324 ohm""#,
        )],
        r#"
error: belt-feeder.yaml:8:17: design.motor.resistance: 4.94e-324 Ω is out of range; expected above 1.00 µΩ and at most 1.00 kΩ
 8 |     resistance: "4.9e-324 ohm"
   |                 ^
"#,
    );
}

/// A motor at standstill has no operating point to plan.
#[test]
fn operating_speed_zero() {
    bad_input(
        "belt-feeder.yaml",
        &[case("belt-feeder.yaml", r#""3200 rpm""#, r#""0 rpm""#)],
        r#"
error: belt-feeder.yaml:12:22: design.motor.operating_speed: 0.00 rpm is out of range; expected above 0.00 rpm and at most 955000 rpm
 12 |     operating_speed: "0 rpm"
    |                      ^
"#,
    );
}

/// Q_g quoted at a gate voltage the gate cannot take.
#[test]
fn gate_charge_at_v_gs_above_v_gs_max() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"max: "76 nC", at_v_gs: "10 V""#,
            r#"max: "76 nC", at_v_gs: "25 V""#,
        )],
        r#"
error: switches/tarn-40.yaml:13:47: switch.q_g.at_v_gs: 25.0 V is above v_gs_max (20.0 V); expected the gate voltage of the datasheet's gate-charge figure, within the gate rating
 13 |   q_g: { typ: "58 nC", max: "76 nC", at_v_gs: "25 V", at_i_d: "50 A" }
    |                                               ^
"#,
    );
}

/// One point is no C_rss curve.
#[test]
fn c_rss_curve_of_one_point() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"[["1 V", "1.6 nF"], ["5 V", "420 pF"], ["20 V", "62 pF"], ["32 V", "48 pF"]]"#,
            r#"[["1 V", "1.6 nF"]]"#,
        )],
        r#"
error: switches/tarn-40.yaml:22:18: switch.capacitance.c_rss_curve: one point is no curve; expected at least two [v_ds, c_rss] points, or no c_rss_curve
 22 |     c_rss_curve: [["1 V", "1.6 nF"]]
    |                  ^
"#,
    );
}

/// C_rss falls with drain voltage; a rising point is a typo.
#[test]
fn c_rss_curve_rising() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"["32 V", "48 pF"]"#,
            r#"["32 V", "480 pF"]"#,
        )],
        r#"
error: switches/tarn-40.yaml:22:85: switch.capacitance.c_rss_curve[3][1]: 480 pF is above the previous point's 62.0 pF; expected C_rss to fall (or stay) as the drain voltage rises
 22 |     c_rss_curve: [["1 V", "1.6 nF"], ["5 V", "420 pF"], ["20 V", "62 pF"], ["32 V", "480 pF"]]
    |                                                                                     ^
"#,
    );
}

/// Output charge and output energy both given: which one counts?
#[test]
fn q_oss_and_e_oss_both() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"q_oss: "38 nC""#,
            "q_oss: \"38 nC\"\n  e_oss: { value: \"1 uJ\", at_v_ds: \"20 V\" }",
        )],
        r#"
error: switches/tarn-40.yaml:24:12: switch.e_oss: give either q_oss or e_oss for the output-capacitance loss, not both
 24 |   e_oss: { value: "1 uJ", at_v_ds: "20 V" }
    |            ^
"#,
    );
}

/// A test voltage for the output charge without the charge itself, and one
/// above V_DSS: each named with what is expected.
#[test]
fn q_oss_test_voltage_without_charge_or_above_rating() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"q_oss: "38 nC""#,
            r#"q_oss_at_v_ds: "20 V""#,
        )],
        r#"
error: switches/tarn-40.yaml:23:18: switch.q_oss_at_v_ds: a test voltage without q_oss; give q_oss beside it, or remove it
 23 |   q_oss_at_v_ds: "20 V"
    |                  ^
"#,
    );
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"q_oss: "38 nC""#,
            "q_oss: \"38 nC\"\n  q_oss_at_v_ds: \"60 V\"",
        )],
        r#"
error: switches/tarn-40.yaml:24:18: switch.q_oss_at_v_ds: 60.0 V is out of range; expected above 0.00 V and at most 40.0 V
 24 |   q_oss_at_v_ds: "60 V"
    |                  ^
"#,
    );
}

/// The Q_rr test conditions: a slope written as a current, and a reverse
/// voltage above V_DSS; each named with what is expected.
#[test]
fn q_rr_test_conditions_wrong_unit_or_above_rating() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"di_dt: "100 A/µs""#,
            r#"di_dt: "100 A""#,
        )],
        r#"
error: switches/tarn-40.yaml:25:119: switch.body_diode.q_rr_test.di_dt: "100 A" is a current, expected a rate of change of current such as "100 A/µs"
 25 | …"68 nC" }, t_rr: "38 ns", q_rr_test: { i_f: "25 A", di_dt: "100 A", v_r: "20 V" } }
    |                                                             ^
"#,
    );
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"v_r: "20 V""#,
            r#"v_r: "45 V""#,
        )],
        r#"
error: switches/tarn-40.yaml:25:136: switch.body_diode.q_rr_test.v_r: 45.0 V is out of range; expected above 0.00 V and at most 40.0 V
 25 | …"38 ns", q_rr_test: { i_f: "25 A", di_dt: "100 A/µs", v_r: "45 V" } }
    |                                                             ^
"#,
    );
}

/// A second R_ds(on) point that is lower at the lower gate voltage: refused,
/// named, with what is expected.
#[test]
fn second_on_resistance_point_backwards() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"at_v_gs: "10 V" }"#,
            r#"at_v_gs: "10 V", second_point: { typ: "1 mohm", at_v_gs: "4.5 V" } }"#,
        )],
        r#"
error: switches/tarn-40.yaml:7:86: switch.r_ds_on.second_point.typ: expected the higher R_ds(on) at the lower gate voltage
 7 |   r_ds_on: { typ: "2.4 mohm", max: "3.1 mohm", at_v_gs: "10 V", second_point: { typ: "1 mohm", at_v_gs: "4.5 V" } }
   |                                                                                      ^
"#,
    );
}

/// A low-side stage without its freewheel diode: named, not "nothing
/// could be evaluated".
#[test]
fn low_side_without_freewheel_diode() {
    bad_input(
        "vent-fan.yaml",
        &[case(
            "kite-ls12.yaml",
            "    freewheel_diode:",
            "    #freewheel_diode:",
        )],
        r#"
error: kite-ls12.yaml:14:5: board.stage.freewheel_diode: missing; a low-side stage needs the diode the motor current freewheels through while the switch is off (`freewheel_diode: { v_f: ..., q_rr: ..., t_rr: ..., i_f: ..., v_rrm: ... }`)
 14 |     topology: low-side
    |     ^
"#,
    );
}

/// A gate drive above the threshold but below the Miller plateau.
#[test]
fn gate_drive_below_the_plateau() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            r#"supply: "12 V""#,
            r#"supply: "4.2 V""#,
        )],
        r#"
error: wren-hb24.yaml:24:13: board.gate_driver.supply: 4.20 V does not exceed the switch's Miller plateau 4.40 V at the design's rated current 3.50 A; expected a drive voltage above the plateau, so the switch turns fully on
 24 |     supply: "4.2 V"
    |             ^
"#,
    );
}

/// A name too long for a file name is refused before anything is written.
#[test]
fn design_name_too_long() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "name: belt-feeder",
            "name: belt-feeder-with-a-name-far-longer-than-any-file-system-would-like-to-hold-as-a-file-name",
        )],
        r#"
error: belt-feeder.yaml:3:9: design.name: 89 characters; expected at most 64 (the name becomes the generated files' names)
 3 |   name: belt-feeder-with-a-name-far-longer-than-any-file-system-would-like-to-hold-as-a-file-name
   |         ^
"#,
    );
}

/// A board reached through a symbolic link that leads out of the design's
/// folder: the no-`..` rule holds for links too.
#[cfg(unix)]
#[test]
fn board_through_a_link_out_of_the_folder() {
    let dir = fixture();
    let elsewhere = tempfile::tempdir().expect("a second folder");
    let outside = elsewhere.path().join("wren-hb24.yaml");
    fs::rename(dir.path().join("wren-hb24.yaml"), &outside).expect("move the board out");
    std::os::unix::fs::symlink(&outside, dir.path().join("wren-hb24.yaml")).expect("link");
    let target = fs::canonicalize(&outside).expect("canonical path");
    refused(
        dir.path(),
        "belt-feeder.yaml",
        &format!(
            r#"error: belt-feeder.yaml:4:10: design.board: "wren-hb24.yaml" leads through a symbolic link to {}, outside this file's folder; keep the board beside or below it (or use "bundled:NAME")
 4 |   board: wren-hb24.yaml
   |          ^
"#,
            target.display()
        ),
    );
}

/// The same for a switch reached from the board through a linked folder.
#[cfg(unix)]
#[test]
fn switch_through_a_linked_folder() {
    let dir = fixture();
    let elsewhere = tempfile::tempdir().expect("a second folder");
    let outside = elsewhere.path().join("switches");
    fs::rename(dir.path().join("switches"), &outside).expect("move the switches out");
    std::os::unix::fs::symlink(&outside, dir.path().join("switches")).expect("link");
    let target = fs::canonicalize(outside.join("tarn-40.yaml")).expect("canonical path");
    refused(
        dir.path(),
        "belt-feeder.yaml",
        &format!(
            r#"error: wren-hb24.yaml:22:13: board.stage.switch: "switches/tarn-40.yaml" leads through a symbolic link to {}, outside this file's folder; keep the switch beside or below it (or use "bundled:NAME")
 22 |     switch: switches/tarn-40.yaml
    |             ^
"#,
            target.display()
        ),
    );
}

/// A FIFO as the design file is refused without opening it (opening would
/// block until a writer came).
#[cfg(unix)]
#[test]
fn design_is_a_fifo() {
    let dir = fixture();
    let fifo = dir.path().join("pipe.yaml");
    let status = Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .expect("run mkfifo");
    assert!(status.success());
    refused(
        dir.path(),
        "pipe.yaml",
        "error: pipe.yaml: is not a regular file (a pipe, socket or device); expected a YAML file\n",
    );
}

/// A device that never ends is not read.
#[cfg(unix)]
#[test]
fn design_is_a_device() {
    let dir = fixture();
    refused(
        dir.path(),
        "/dev/zero",
        "error: /dev/zero: is not a regular file (a pipe, socket or device); expected a YAML file\n",
    );
}

/// A folder as the design file.
#[test]
fn design_is_a_folder() {
    let dir = fixture();
    refused(
        dir.path(),
        "switches",
        "error: switches: is a folder; expected a YAML file\n",
    );
}

/// A file over the size cap is refused before it is parsed.
#[test]
fn design_over_the_size_cap() {
    let dir = fixture();
    let text = fs::read_to_string(dir.path().join("belt-feeder.yaml")).expect("read");
    let padding = "# padding\n".repeat(110_000);
    fs::write(dir.path().join("big.yaml"), format!("{text}{padding}")).expect("write");
    refused(
        dir.path(),
        "big.yaml",
        "error: big.yaml: is larger than 1048576 bytes (1 MiB), the largest input pwmplan reads\n",
    );
}

// ------------------------------------------------ hostile templates (#22)

/// A copy of the bundled templates in `dir/tpl` with `extra` appended to
/// the C header template (or the whole of it replaced when `replace`).
fn templates_with(dir: &Path, extra: &str, replace: bool) {
    let tpl = dir.join("tpl");
    fs::create_dir_all(&tpl).expect("templates folder");
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("templates");
    for name in ["c_header.h.hbs", "rust_module.rs.hbs", "rationale.md.hbs"] {
        fs::copy(src.join(name), tpl.join(name)).expect("copy a template");
    }
    let header = tpl.join("c_header.h.hbs");
    let text = if replace {
        extra.to_string()
    } else {
        format!("{}{extra}", fs::read_to_string(&header).expect("read"))
    };
    fs::write(&header, text).expect("write the template");
}

/// Run `plan --templates tpl` on the demo and check exit 2, empty stdout,
/// no `out/`, and the whole of standard error.
fn template_refused(dir: &Path, expected: &str) {
    let out = Command::new(env!("CARGO_BIN_EXE_pwmplan"))
        .args(["plan", "--templates", "tpl"])
        .current_dir(dir)
        .output()
        .expect("run pwmplan");
    assert_eq!(
        out.status.code(),
        Some(2),
        "stderr:\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(String::from_utf8_lossy(&out.stdout), "");
    assert!(!dir.join("out").exists());
    assert_eq!(String::from_utf8_lossy(&out.stderr), expected);
}

fn header_lines() -> usize {
    fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("templates/c_header.h.hbs"))
        .expect("read")
        .lines()
        .count()
}

/// A template that includes itself would recurse until the stack overflows.
#[test]
fn template_including_itself() {
    let dir = tempfile::tempdir().expect("temp dir");
    templates_with(dir.path(), "{{> c_header.h.hbs}}\n", false);
    template_refused(
        dir.path(),
        &format!(
            "error: tpl/c_header.h.hbs: line {}: a partial or inline partial; expected each template to stand alone (pwmplan templates include no other template)\n",
            header_lines() + 1
        ),
    );
}

/// 5000 nested blocks would overflow the parser's stack.
#[test]
fn template_nested_5000_deep() {
    let dir = tempfile::tempdir().expect("temp dir");
    let deep = format!(
        "{}{}\n",
        "{{#if tool}}".repeat(5000),
        "{{/if}}".repeat(5000)
    );
    templates_with(dir.path(), &deep, false);
    template_refused(
        dir.path(),
        &format!(
            "error: tpl/c_header.h.hbs: line {}: blocks nested more than 16 deep; expected at most 16\n",
            header_lines() + 1
        ),
    );
}

/// Loops inside loops inside loops multiply the output without bound.
#[test]
fn template_loops_nested_three_deep() {
    let dir = tempfile::tempdir().expect("temp dir");
    templates_with(
        dir.path(),
        "{{#each rationale_lines}}\n{{#each ../rationale_lines}}\n{{#each ../../rationale_lines}}{{this}}{{/each}}{{/each}}{{/each}}\n",
        false,
    );
    template_refused(
        dir.path(),
        &format!(
            "error: tpl/c_header.h.hbs: line {}: `{{{{#each}}}}` loops nested more than 2 deep; expected at most 2\n",
            header_lines() + 3
        ),
    );
}

/// Within the nesting bounds, a template can still render too much: the
/// rendering stops at the output cap.
#[test]
fn template_output_over_the_cap() {
    let dir = tempfile::tempdir().expect("temp dir");
    let body = format!(
        "{{{{#each rationale_lines}}}}{{{{#each ../rationale_lines}}}}{}{{{{/each}}}}{{{{/each}}}}\n",
        "{{this}}".repeat(40)
    );
    templates_with(dir.path(), &body.repeat(20), false);
    template_refused(
        dir.path(),
        "error: template c_header.h.hbs: renders more than 1048576 bytes (1 MiB), the largest file pwmplan writes; expected loops that each go over one list once\n",
    );
}

/// A replacement template without the content-hash marker: the next run
/// could not tell its own file from an edited one.
#[test]
fn template_without_the_marker() {
    let dir = tempfile::tempdir().expect("temp dir");
    templates_with(dir.path(), "int x;\n", true);
    template_refused(
        dir.path(),
        "error: template c_header.h.hbs: writes the content-hash marker `{{marker}}` 0 times; expected it exactly once (the next `plan` reads it to tell its own files from edited ones)\n",
    );
}

/// A template that is a link to a file outside the templates folder.
#[cfg(unix)]
#[test]
fn template_linked_out_of_the_folder() {
    let dir = tempfile::tempdir().expect("temp dir");
    templates_with(dir.path(), "", false);
    let elsewhere = tempfile::tempdir().expect("second temp dir");
    let secret = elsewhere.path().join("secret.txt");
    fs::write(&secret, "not a template\n").expect("write");
    let link = dir.path().join("tpl/rust_module.rs.hbs");
    fs::remove_file(&link).expect("remove");
    std::os::unix::fs::symlink(&secret, &link).expect("link");
    template_refused(
        dir.path(),
        &format!(
            "error: tpl/rust_module.rs.hbs: leads through a symbolic link to {}, outside the templates folder; expected the template itself in tpl\n",
            fs::canonicalize(&secret).expect("canonical").display()
        ),
    );
}

/// A template that is a device is not read.
#[cfg(unix)]
#[test]
fn template_is_a_device() {
    let dir = tempfile::tempdir().expect("temp dir");
    templates_with(dir.path(), "", false);
    let t = dir.path().join("tpl/rationale.md.hbs");
    fs::remove_file(&t).expect("remove");
    // A device inside the folder (a link to it is refused as outside).
    let status = Command::new("mkfifo").arg(&t).status().expect("mkfifo");
    assert!(status.success());
    template_refused(
        dir.path(),
        "error: tpl/rationale.md.hbs: is not a regular file (a pipe, socket or device); expected a template file\n",
    );
}

// ------------------------------------------- hangs and vague messages (#22)

/// 100 000 unclosed `[`: refused by a linear pre-scan at the 65th level.
#[test]
fn flow_nesting_too_deep() {
    let deep: &'static str =
        Box::leak(format!("ambient: {}", "[".repeat(100_000)).into_boxed_str());
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"ambient: { min: "-10 °C", max: "55 °C" }"#,
            deep,
        )],
        r#"
error: belt-feeder.yaml:13:76: design.ambient: `[` nested more than 64 deep; expected at most 64 levels of `[` and `{`
 13 |   ambient: [[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[…
    |                                                                            ^
"#,
    );
}

/// A NUL byte is named as such, at its place.
#[test]
fn nul_byte_named() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            "kind: brushed-dc",
            "kind: brushed\0-dc",
        )],
        r#"
error: belt-feeder.yaml:7:18: design.motor.kind: a NUL byte (character 0) in the text; expected YAML text without control characters
 7 |     kind: brushed�-dc
   |                  ^
"#,
    );
}

/// An alias to an anchor that does not exist is named as such (not as bad
/// indentation).
#[test]
fn alias_to_a_missing_anchor() {
    bad_input(
        "belt-feeder.yaml",
        &[case("belt-feeder.yaml", "kind: brushed-dc", "kind: *nope")],
        r#"
error: belt-feeder.yaml:7:11: design.motor.kind: the alias `*nope` names no anchor: no `&nope` is defined above it; expected a value, or an anchor defined before its alias
 7 |     kind: *nope
   |           ^
"#,
    );
}

/// A very long line is echoed cut to a readable width around the column,
/// with an ellipsis at each cut.
#[test]
fn long_line_echoed_cut() {
    let long: &'static str = Box::leak(
        format!(
            "operating_speed:{}\"0 rpm\" # {}",
            " ".repeat(200),
            "x".repeat(10_000)
        )
        .into_boxed_str(),
    );
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"operating_speed: "3200 rpm""#,
            long,
        )],
        r#"
error: belt-feeder.yaml:12:221: design.motor.operating_speed: 0.00 rpm is out of range; expected above 0.00 rpm and at most 955000 rpm
 12 | …                                                           "0 rpm" # xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx…
    |                                                             ^
"#,
    );
}

/// A list longer than any design needs.
#[test]
fn too_many_avoided_bands() {
    let bands: &'static str = Box::leak(
        format!(
            "avoid: [{}]",
            (0..17)
                .map(|i| format!("[\"{} kHz\", \"{}.5 kHz\"]", i + 1, i + 1))
                .collect::<Vec<_>>()
                .join(", ")
        )
        .into_boxed_str(),
    );
    bad_input(
        "vent-fan.yaml",
        &[case(
            "vent-fan.yaml",
            "avoid: [[\"2.2 kHz\", \"2.8 kHz\"]]",
            bands,
        )],
        r#"
error: vent-fan.yaml:17:14: design.constraints.audible.avoid: 17 bands; expected at most 16
 17 |       avoid: [["1 kHz", "1.5 kHz"], ["2 kHz", "2.5 kHz"], ["3 kHz", "3.5 kHz"], ["4 kHz", "4.5 kHz"], ["5 kHz", "5.5 k…
    |              ^
"#,
    );
}

/// A prescaler list far longer than a timer has.
#[test]
fn too_many_prescaler_ratios() {
    let ratios: &'static str = Box::leak(
        format!(
            "ratios: [{}]",
            (1..=65)
                .map(|i| i.to_string())
                .collect::<Vec<_>>()
                .join(", ")
        )
        .into_boxed_str(),
    );
    bad_input(
        "vent-fan.yaml",
        &[case(
            "kite-ls12.yaml",
            "ratios: [1, 2, 3, 4, 6, 8, 12, 16]",
            ratios,
        )],
        r#"
error: kite-ls12.yaml:8:15: board.timer.prescaler.ratios: 65 ratios; expected at most 64
 8 |       ratios: [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19, 20, 21, 22, 23, 24, 25, 26, 27, 28, …
   |               ^
"#,
    );
}

/// `--at` outside what the timer can realise is refused before searching.
#[test]
fn pinned_frequency_outside_the_timer() {
    let dir = fixture();
    let out = Command::new(env!("CARGO_BIN_EXE_pwmplan"))
        .args(["plan", "belt-feeder.yaml", "--at", "1 mHz"])
        .current_dir(dir.path())
        .output()
        .expect("run pwmplan");
    assert_eq!(out.status.code(), Some(2));
    assert!(!dir.path().join("out").exists());
    assert_eq!(
        String::from_utf8_lossy(&out.stderr),
        "error: --at 1.000 mHz: outside what the timer can make (655.7 mHz to 44.00 MHz); expected a frequency in that range\n"
    );
}

/// Q_g quoted at a gate voltage below the plateau is no total gate charge
/// (1e-30 V made every setting's switching absurd and slow to search).
#[test]
fn gate_charge_at_v_gs_below_the_plateau() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"max: "76 nC", at_v_gs: "10 V""#,
            r#"max: "76 nC", at_v_gs: "1e-30 V""#,
        )],
        r#"
error: switches/tarn-40.yaml:13:47: switch.q_g.at_v_gs: 1.00e-30 V is not above the plateau 4.40 V; expected the drive voltage of the datasheet's total gate charge, above the Miller plateau
 13 |   q_g: { typ: "58 nC", max: "76 nC", at_v_gs: "1e-30 V", at_i_d: "50 A" }
    |                                               ^
"#,
    );
}

/// A ripple limit no PWM can meet (1e-30 A) is refused at its field rather
/// than searched for a long time.
#[test]
fn ripple_limit_absurdly_small() {
    bad_input(
        "vent-fan.yaml",
        &[case(
            "vent-fan.yaml",
            r#"max_ripple: "0.6 A""#,
            r#"max_ripple: "1e-30 A""#,
        )],
        r#"
error: vent-fan.yaml:18:17: design.constraints.max_ripple: 1.00e-30 A is out of range; expected above 1.20 mA and at most 2.00 kA
 18 |     max_ripple: "1e-30 A"
    |                 ^
"#,
    );
}

/// Issue 14, defect 11: the board declares an 8-bit dead-time register and
/// the last segment's codes run to 0x100, past it.
#[test]
fn dead_time_segment_past_the_register_width() {
    bad_input(
        "belt-feeder.yaml",
        &[
            case(
                "wren-hb24.yaml",
                "clock_divider: 1\n        segments:",
                "clock_divider: 1\n        code_bits: 8\n        segments:",
            ),
            case(
                "wren-hb24.yaml",
                "{ first_code: 0xE0, count: 32,",
                "{ first_code: 0xE0, count: 33,",
            ),
        ],
        r#"
error: wren-hb24.yaml:18:40: board.timer.dead_time.segmented.segments[3].count: codes 0xE0 to 0x100 run past the 8-bit dead-time register (codes 0x0 to 0xFF); expected first_code + count ≤ 0x100
 18 |           - { first_code: 0xE0, count: 33, base: 40, step: 12 }
    |                                        ^
"#,
    );
}

/// Issue 14, defect 11: a linear dead-time code of up to 1023 ticks on a
/// board that declares a 9-bit register.
#[test]
fn dead_time_linear_range_past_the_register_width() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "max_ticks: 1023, code_bits: 10 }",
            "max_ticks: 1023, code_bits: 9 }",
        )],
        r#"
error: heron-hb48.yaml:11:46: board.timer.dead_time.linear.max_ticks: code 1023 does not fit the 9-bit dead-time register (codes 0 to 511); expected max_ticks ≤ 511
 11 |       linear: { clock_divider: 1, max_ticks: 1023, code_bits: 9 }
    |                                              ^
"#,
    );
}

/// Issue 14, defect 6: the gate-charge test's drain voltage above V_DSS.
#[test]
fn gate_charge_test_voltage_above_v_dss() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            "at_v_gs: \"10 V\", at_i_d: \"50 A\" }\n  q_gs",
            "at_v_gs: \"10 V\", at_i_d: \"50 A\", at_v_ds: \"60 V\" }\n  q_gs",
        )],
        r#"
error: switches/tarn-40.yaml:13:80: switch.q_g.at_v_ds: 60.0 V is out of range; expected above 0.00 V and at most 40.0 V
 13 |   q_g: { typ: "58 nC", max: "76 nC", at_v_gs: "10 V", at_i_d: "50 A", at_v_ds: "60 V" }
    |                                                                                ^
"#,
    );
}

/// `constraints.worst_case` takes `block` or `warn` (issue 14, defect 14).
#[test]
fn unknown_worst_case_policy_lists_choices() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"    frequency: { min: "16 kHz", max: "60 kHz" }"#,
            "    frequency: { min: \"16 kHz\", max: \"60 kHz\" }\n    worst_case: stop",
        )],
        r#"
error: belt-feeder.yaml:20:17: design.constraints.worst_case: unknown value `stop`; expected one of `block`, `warn`
 20 |     worst_case: stop
    |                 ^
"#,
    );
}

/// A near miss of a policy gets a suggestion.
#[test]
fn misspelt_worst_case_policy_suggests() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"    frequency: { min: "16 kHz", max: "60 kHz" }"#,
            "    frequency: { min: \"16 kHz\", max: \"60 kHz\" }\n    worst_case: blok",
        )],
        r#"
error: belt-feeder.yaml:20:17: design.constraints.worst_case: unknown value `blok`; did you mean `block`?
 20 |     worst_case: blok
    |                 ^
"#,
    );
}

/// A back-EMF constant in V rms/krpm is refused with the peak to write:
/// √2 × 6 = 8.49 V/krpm line-to-line, √6 × 6 = 14.7 V/krpm from a
/// line-to-neutral figure (issue 14, defect 16).
#[test]
fn rms_back_emf_constant_names_the_peak() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "pump-bldc.yaml",
            r#"back_emf_constant: "6 V/krpm""#,
            r#"back_emf_constant: "6 V rms/krpm""#,
        )],
        r#"
error: pump-bldc.yaml:10:24: design.motor.back_emf_constant: "6 V rms/krpm" is an rms back-EMF constant; pwmplan expects the line-to-line PEAK back-EMF per speed (for a sinusoidal back-EMF the peak is √2 × the rms): write "8.49 V/krpm" if the rms figure is line-to-line, or "14.7 V/krpm" (√2·√3 = √6 ×) if it is line-to-neutral
 10 |     back_emf_constant: "6 V rms/krpm"
    |                        ^
"#,
    );
}

/// Unipolar switching on a timer without an up-down count: one shared up-counter would give
/// one output pulse per period (ripple and sound at f), which the plan's model does not
/// describe, so it is refused (issue: registers contradicting the rationale, defect 1).
#[test]
fn unipolar_without_centre_alignment() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "alignments: [edge, centre]",
            "alignments: [edge]",
        )],
        r#"
error: heron-hb48.yaml:9:17: board.timer.alignments: unipolar switching places the two legs' pulses symmetrically on an up-down (centre-aligned) count, which doubles the ripple frequency; add `centre`, or use `modulation: bipolar`
 9 |     alignments: [edge]
   |                 ^
"#,
    );
}

/// The body diode's forward-voltage curve: one point is no curve; the
/// voltage must not fall as the current rises.
#[test]
fn forward_voltage_curve_one_point_or_falling() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"v_sd: "0.85 V","#,
            r#"v_sd: "0.85 V", v_sd_curve: [["2 A", "0.7 V"]],"#,
        )],
        r#"
error: switches/tarn-40.yaml:25:45: switch.body_diode.v_sd_curve: one point is no curve; expected at least two [i_s, v_sd] points, or no v_sd_curve
 25 |   body_diode: { v_sd: "0.85 V", v_sd_curve: [["2 A", "0.7 V"]], q_rr: { typ: "42 nC", max: "68 nC" }, t_rr: "38 ns", q…
    |                                             ^
"#,
    );
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"v_sd: "0.85 V","#,
            r#"v_sd: "0.85 V", v_sd_at: "25 A", v_sd_curve: [["2 A", "0.7 V"], ["20 A", "0.65 V"]],"#,
        )],
        r#"
error: switches/tarn-40.yaml:25:90: switch.body_diode.v_sd_curve[1][1]: 650 mV is below the previous point's 700 mV; expected V_SD to rise (or stay) with the current
 25 |   body_diode: { v_sd: "0.85 V", v_sd_at: "25 A", v_sd_curve: [["2 A", "0.7 V"], ["20 A", "0.65 V"]], q_rr: { typ: "42 …
    |                                                                                          ^
"#,
    );
}

/// The commutation-loop inductance: a µH is wiring, not a loop.
#[test]
fn loop_inductance_out_of_range() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    switch: switches/corrie-100.yaml",
            "    switch: switches/corrie-100.yaml\n    loop_inductance: \"5 uH\"",
        )],
        r#"
error: heron-hb48.yaml:18:22: board.stage.loop_inductance: 5.00 µH is out of range; expected above 0.00 H and at most 1.00 µH
 18 |     loop_inductance: "5 uH"
    |                      ^
"#,
    );
}

/// The common-source inductance: a negative inductance is no source lead.
#[test]
fn common_source_inductance_negative() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    switch: switches/corrie-100.yaml",
            "    switch: switches/corrie-100.yaml\n    common_source_inductance: \"-2 nH\"",
        )],
        r#"
error: heron-hb48.yaml:18:31: board.stage.common_source_inductance: -2.00 nH is out of range; expected 0 to 100 nH
 18 |     common_source_inductance: "-2 nH"
    |                               ^
"#,
    );
}

/// The common-source inductance is part of the commutation loop, so it
/// cannot exceed the loop's whole inductance.
#[test]
fn common_source_inductance_above_the_loop() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    switch: switches/corrie-100.yaml",
            "    switch: switches/corrie-100.yaml\n    loop_inductance: \"4 nH\"\n    common_source_inductance: \"6 nH\"",
        )],
        r#"
error: heron-hb48.yaml:19:31: board.stage.common_source_inductance: 6.00 nH is more than the whole commutation loop's 4.00 nH; expected a part of `loop_inductance` (the source lead is inside the loop)
 19 |     common_source_inductance: "6 nH"
    |                               ^
"#,
    );
}

/// The gate-charge test current: a negative current is no test point.
#[test]
fn gate_charge_test_current_negative() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "switches/tarn-40.yaml",
            r#"at_i_d: "50 A""#,
            r#"at_i_d: "-50 A""#,
        )],
        r#"
error: switches/tarn-40.yaml:13:63: switch.q_g.at_i_d: -50.0 A is out of range; expected above 0.00 A and at most 10.0 kA
 13 |   q_g: { typ: "58 nC", max: "76 nC", at_v_gs: "10 V", at_i_d: "-50 A" }
    |                                                               ^
"#,
    );
}

/// The shunt: a zero resistance senses nothing.
#[test]
fn overcurrent_shunt_resistance_zero() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"resistance: "2 mohm""#,
            r#"resistance: "0 ohm""#,
        )],
        r#"
error: osprey-3p48.yaml:34:26: board.overcurrent.shunt.resistance: 0.00 Ω is out of range; expected above 0.00 Ω and at most 10.0 Ω
 34 |     shunt: { resistance: "0 ohm", tolerance: "1 %", power: "3 W", place: supply-return }
    |                          ^
"#,
    );
}

/// The shunt's tolerance: beyond 50 % is a unit slip.
#[test]
fn overcurrent_shunt_tolerance_too_wide() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"tolerance: "1 %", power"#,
            r#"tolerance: "60 %", power"#,
        )],
        r#"
error: osprey-3p48.yaml:34:47: board.overcurrent.shunt.tolerance: 60.0 % is out of range; expected 0 to 50.0 %
 34 |     shunt: { resistance: "2 mohm", tolerance: "60 %", power: "3 W", place: supply-return }
    |                                               ^
"#,
    );
}

/// The shunt's power rating must be positive.
#[test]
fn overcurrent_shunt_power_negative() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"power: "3 W""#,
            r#"power: "-3 W""#,
        )],
        r#"
error: osprey-3p48.yaml:34:61: board.overcurrent.shunt.power: -3.00 W is out of range; expected above 0.00 W and at most 1.00 kW
 34 |     shunt: { resistance: "2 mohm", tolerance: "1 %", power: "-3 W", place: supply-return }
    |                                                             ^
"#,
    );
}

/// The shunt's place is one of three words.
#[test]
fn overcurrent_shunt_place_unknown() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"place: supply-return"#,
            r#"place: supply"#,
        )],
        r#"
error: osprey-3p48.yaml:34:75: board.overcurrent.shunt.place: unknown value `supply`; expected one of `supply-return`, `leg`, `phase`
 34 |     shunt: { resistance: "2 mohm", tolerance: "1 %", power: "3 W", place: supply }
    |                                                                           ^
"#,
    );
}

/// The amplifier's gain: zero amplifies nothing.
#[test]
fn overcurrent_amplifier_gain_zero() {
    bad_input(
        "pump-bldc.yaml",
        &[case("osprey-3p48.yaml", r#"gain: 20,"#, r#"gain: 0,"#)],
        r#"
error: osprey-3p48.yaml:35:24: board.overcurrent.amplifier.gain: 0 is out of range; expected a voltage gain above 0 and at most 1000 (a plain number)
 35 |     amplifier: { gain: 0, gain_tolerance: "1 %", offset: "0.2 V", offset_tolerance: "8 mV", settle_time: "300 ns" }
    |                        ^
"#,
    );
}

/// The amplifier's gain is a plain number.
#[test]
fn overcurrent_amplifier_gain_with_unit() {
    bad_input(
        "pump-bldc.yaml",
        &[case("osprey-3p48.yaml", r#"gain: 20,"#, r#"gain: "20 V","#)],
        r#"
error: osprey-3p48.yaml:35:24: board.overcurrent.amplifier.gain: expected a number such as 10, found the text "20 V"
 35 |     amplifier: { gain: "20 V", gain_tolerance: "1 %", offset: "0.2 V", offset_tolerance: "8 mV", settle_time: "300 ns" }
    |                        ^
"#,
    );
}

/// The amplifier gain's tolerance: beyond 50 % is a unit slip.
#[test]
fn overcurrent_amplifier_gain_tolerance_too_wide() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"gain_tolerance: "1 %""#,
            r#"gain_tolerance: "70 %""#,
        )],
        r#"
error: osprey-3p48.yaml:35:44: board.overcurrent.amplifier.gain_tolerance: 70.0 % is out of range; expected 0 to 50.0 %
 35 |     amplifier: { gain: 20, gain_tolerance: "70 %", offset: "0.2 V", offset_tolerance: "8 mV", settle_time: "300 ns" }
    |                                            ^
"#,
    );
}

/// The amplifier's offset: beyond ±100 V is a unit slip.
#[test]
fn overcurrent_amplifier_offset_out_of_range() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"offset: "0.2 V""#,
            r#"offset: "200 V""#,
        )],
        r#"
error: osprey-3p48.yaml:35:59: board.overcurrent.amplifier.offset: 200 V is out of range; expected −100 V to 100 V
 35 |     amplifier: { gain: 20, gain_tolerance: "1 %", offset: "200 V", offset_tolerance: "8 mV", settle_time: "300 ns" }
    |                                                           ^
"#,
    );
}

/// The amplifier offset's tolerance: above 1 V is a unit slip.
#[test]
fn overcurrent_amplifier_offset_tolerance_too_wide() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"offset_tolerance: "8 mV""#,
            r#"offset_tolerance: "2 V""#,
        )],
        r#"
error: osprey-3p48.yaml:35:86: board.overcurrent.amplifier.offset_tolerance: 2.00 V is out of range; expected 0 to 1.00 V
 35 |     amplifier: { gain: 20, gain_tolerance: "1 %", offset: "0.2 V", offset_tolerance: "2 V", settle_time: "300 ns" }
    |                                                                                      ^
"#,
    );
}

/// The amplifier's settling time cannot be negative.
#[test]
fn overcurrent_amplifier_settle_time_negative() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"settle_time: "300 ns""#,
            r#"settle_time: "-300 ns""#,
        )],
        r#"
error: osprey-3p48.yaml:35:107: board.overcurrent.amplifier.settle_time: -300 ns is out of range; expected 0 to 1.00 ms
 35 |     amplifier: { gain: 20, gain_tolerance: "1 %", offset: "0.2 V", offset_tolerance: "8 mV", settle_time: "-300 ns" }
    |                                                                                                           ^
"#,
    );
}

/// A programmable threshold's full scale must be positive.
#[test]
fn overcurrent_threshold_full_scale_zero() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"full_scale: "3.3 V""#,
            r#"full_scale: "0 V""#,
        )],
        r#"
error: osprey-3p48.yaml:37:48: board.overcurrent.comparator.threshold.programmable.full_scale: 0.00 V is out of range; expected above 0.00 V and at most 100 V
 37 |       threshold: { programmable: { full_scale: "0 V", code_bits: 6 } }
    |                                                ^
"#,
    );
}

/// A programmable threshold's code width: at most 16 bits.
#[test]
fn overcurrent_threshold_code_bits_too_many() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"code_bits: 6"#,
            r#"code_bits: 20"#,
        )],
        r#"
error: osprey-3p48.yaml:37:68: board.overcurrent.comparator.threshold.programmable.code_bits: 20 bits is out of range; expected 1 to 16
 37 |       threshold: { programmable: { full_scale: "3.3 V", code_bits: 20 } }
    |                                                                    ^
"#,
    );
}

/// A threshold is programmable or fixed.
#[test]
fn overcurrent_threshold_unknown_kind() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"threshold: { programmable:"#,
            r#"threshold: { adjustable:"#,
        )],
        r#"
error: osprey-3p48.yaml:37:20: board.overcurrent.comparator.threshold: unknown value `adjustable`; expected one of `programmable`, `fixed`
 37 |       threshold: { adjustable: { full_scale: "3.3 V", code_bits: 6 } }
    |                    ^
"#,
    );
}

/// A fixed threshold: above 100 V is a unit slip.
#[test]
fn overcurrent_fixed_threshold_too_high() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            r#"fixed: "1.25 V""#,
            r#"fixed: "150 V""#,
        )],
        r#"
error: heron-hb48.yaml:35:27: board.overcurrent.comparator.threshold.fixed: 150 V is out of range; expected above 0.00 V and at most 100 V
 35 |       threshold: { fixed: "150 V" }
    |                           ^
"#,
    );
}

/// The comparator's tolerance: beyond 50 % is a unit slip.
#[test]
fn overcurrent_comparator_tolerance_too_wide() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"tolerance: "2 %""#,
            r#"tolerance: "80 %""#,
        )],
        r#"
error: osprey-3p48.yaml:38:18: board.overcurrent.comparator.tolerance: 80.0 % is out of range; expected 0 to 50.0 %
 38 |       tolerance: "80 %"
    |                  ^
"#,
    );
}

/// The comparator's offset is a ± magnitude: not negative.
#[test]
fn overcurrent_comparator_offset_negative() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"offset: "5 mV""#,
            r#"offset: "-5 mV""#,
        )],
        r#"
error: osprey-3p48.yaml:39:15: board.overcurrent.comparator.offset: -5.00 mV is out of range; expected 0 to 1.00 V
 39 |       offset: "-5 mV"
    |               ^
"#,
    );
}

/// The comparator's delay: above 1 ms is a unit slip.
#[test]
fn overcurrent_comparator_delay_too_long() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"delay: "60 ns""#,
            r#"delay: "2 ms""#,
        )],
        r#"
error: osprey-3p48.yaml:40:14: board.overcurrent.comparator.delay: 2.00 ms is out of range; expected 0 to 1.00 ms
 40 |       delay: "2 ms"
    |              ^
"#,
    );
}

/// A fault filter needs at least one clock.
#[test]
fn overcurrent_filter_without_clocks() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"clocks: ["120 MHz", "30 MHz"]"#,
            r#"clocks: []"#,
        )],
        r#"
error: osprey-3p48.yaml:41:23: board.overcurrent.filter.clocks: expected at least one option
 41 |     filter: { clocks: [], samples: [1, 2, 4, 8] }
    |                       ^
"#,
    );
}

/// A fault filter's clock must be positive.
#[test]
fn overcurrent_filter_clock_zero() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#""120 MHz", "30 MHz"]"#,
            r#""120 MHz", "0 Hz"]"#,
        )],
        r#"
error: osprey-3p48.yaml:41:35: board.overcurrent.filter.clocks[1]: 0.00 Hz is out of range; expected above 0.00 Hz and at most 10.0 GHz
 41 |     filter: { clocks: ["120 MHz", "0 Hz"], samples: [1, 2, 4, 8] }
    |                                   ^
"#,
    );
}

/// A fault filter passes after at least one sample.
#[test]
fn overcurrent_filter_samples_zero() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"samples: [1, 2, 4, 8]"#,
            r#"samples: [1, 2, 0, 8]"#,
        )],
        r#"
error: osprey-3p48.yaml:41:62: board.overcurrent.filter.samples[2]: 0 is out of range; expected 1 to 1024 samples
 41 |     filter: { clocks: ["120 MHz", "30 MHz"], samples: [1, 2, 0, 8] }
    |                                                              ^
"#,
    );
}

/// The blanking clock's divider is at least 1.
#[test]
fn overcurrent_blanking_divider_zero() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"blanking: { clock_divider: 1,"#,
            r#"blanking: { clock_divider: 0,"#,
        )],
        r#"
error: osprey-3p48.yaml:42:32: board.overcurrent.blanking.clock_divider: 0 is out of range; expected 1 to 65536
 42 |     blanking: { clock_divider: 0, max_ticks: 255 }
    |                                ^
"#,
    );
}

/// A blanking timer counts at least one tick.
#[test]
fn overcurrent_blanking_max_ticks_zero() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"max_ticks: 255 }"#,
            r#"max_ticks: 0 }"#,
        )],
        r#"
error: osprey-3p48.yaml:42:46: board.overcurrent.blanking.max_ticks: 0 is out of range; expected 1 to 1048576
 42 |     blanking: { clock_divider: 1, max_ticks: 0 }
    |                                              ^
"#,
    );
}

/// The fault input offers at least one response.
#[test]
fn overcurrent_responses_empty() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"responses: [cycle-by-cycle, latched]"#,
            r#"responses: []"#,
        )],
        r#"
error: osprey-3p48.yaml:43:16: board.overcurrent.responses: expected at least one of `cycle-by-cycle`, `latched`
 43 |     responses: []
    |                ^
"#,
    );
}

/// A response listed twice.
#[test]
fn overcurrent_responses_repeated() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            r#"responses: [cycle-by-cycle, latched]"#,
            r#"responses: [latched, latched]"#,
        )],
        r#"
error: osprey-3p48.yaml:43:16: board.overcurrent.responses: a response is listed twice; expected each of `cycle-by-cycle`, `latched` at most once
 43 |     responses: [latched, latched]
    |                ^
"#,
    );
}

/// The pulsed rating I_DM below the continuous I_D.
#[test]
fn switch_pulsed_current_below_continuous() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "switches/corrie-100.yaml",
            r#"value: "240 A""#,
            r#"value: "40 A""#,
        )],
        r#"
error: switches/corrie-100.yaml:29:18: switch.i_dm.value: 40.0 A is below I_D 60.0 A; expected the pulsed rating at or above the continuous one
 29 |   i_dm: { value: "40 A", pulse_width: "100 us" }
    |                  ^
"#,
    );
}

/// I_DM's pulse width must be positive.
#[test]
fn switch_pulsed_current_width_zero() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "switches/corrie-100.yaml",
            r#"pulse_width: "100 us""#,
            r#"pulse_width: "0 s""#,
        )],
        r#"
error: switches/corrie-100.yaml:29:40: switch.i_dm.pulse_width: 0.00 s is out of range; expected above 0.00 s and at most 10.0 s
 29 |   i_dm: { value: "240 A", pulse_width: "0 s" }
    |                                        ^
"#,
    );
}

/// The motor's short-time limit below its rated current.
#[test]
fn motor_max_current_below_rated() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"rated_current: "12 A""#,
            r#"rated_current: "12 A"
    max_current: "10 A""#,
        )],
        r#"
error: winch.yaml:12:18: design.motor.max_current: 10.0 A is not above the rated current 12.0 A; expected the motor's short-time limit above its rated load
 12 |     max_current: "10 A"
    |                  ^
"#,
    );
}

/// A design's current limit on a board without an over-current path.
#[test]
fn current_limit_without_board_overcurrent() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "belt-feeder.yaml",
            r#"objective: least-loss"#,
            r#"objective: least-loss
  current_limit: { trip: "20 A" }"#,
        )],
        r#"
error: belt-feeder.yaml:22:20: design.current_limit: the board has no `overcurrent` section (shunt, comparator, responses); describe it there, or remove `current_limit`
 22 |   current_limit: { trip: "20 A" }
    |                    ^
"#,
    );
}

/// A burst current must be positive.
#[test]
fn current_limit_burst_current_negative() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"current: "20 A""#,
            r#"current: "-20 A""#,
        )],
        r#"
error: winch.yaml:23:23: design.current_limit.burst.current: -20.0 A is out of range; expected above 0.00 A and at most 100 kA
 23 |     burst: { current: "-20 A", duration: "3 s" }
    |                       ^
"#,
    );
}

/// A burst lasts some time.
#[test]
fn current_limit_burst_duration_zero() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"duration: "3 s""#,
            r#"duration: "0 s""#,
        )],
        r#"
error: winch.yaml:23:41: design.current_limit.burst.duration: 0.00 s is out of range; expected above 0.00 s and at most 3600 s
 23 |     burst: { current: "20 A", duration: "0 s" }
    |                                         ^
"#,
    );
}

/// A fixed trip current must be positive.
#[test]
fn current_limit_trip_zero() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"duration: "3 s" }"#,
            r#"duration: "3 s" }
    trip: "0 A""#,
        )],
        r#"
error: winch.yaml:24:11: design.current_limit.trip: 0.00 A is out of range; expected above 0.00 A and at most 100 kA
 24 |     trip: "0 A"
    |           ^
"#,
    );
}

/// A response the board's fault input does not offer.
#[test]
fn current_limit_response_not_offered() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"duration: "3 s" }"#,
            r#"duration: "3 s" }
    response: latched"#,
        )],
        r#"
error: winch.yaml:24:15: design.current_limit.response: the board's fault input does not offer `latched`; expected one of its `overcurrent.responses`
 24 |     response: latched
    |               ^
"#,
    );
}

// The operating range (issue 18), on the winch design's range.

/// A span upside down.
#[test]
fn operating_range_max_below_min() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"min: "300 rpm", max: "3600 rpm""#,
            r#"min: "3000 rpm", max: "2000 rpm""#,
        )],
        r#"
error: winch.yaml:25:36: design.operating_range.speed.max: 2000 rpm is below min 3000 rpm; expected min ≤ max
 25 |     speed: { min: "3000 rpm", max: "2000 rpm" }
    |                                    ^
"#,
    );
}

/// 9.5 V/krpm at 4200 rpm plus 12 A through 0.18 ohm needs 42.1 V; the supply dips to 40 V.
#[test]
fn operating_range_max_beyond_the_supply() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"max: "3600 rpm""#,
            r#"max: "4200 rpm""#,
        )],
        r#"
error: winch.yaml:25:35: design.operating_range.speed.max: the motor needs 42.1 V (back-EMF 39.9 V + I·R 2.16 V) at 4200 rpm and 12.0 A, more than the lowest supply 40.0 V; expected a speed the supply can reach
 25 |     speed: { min: "300 rpm", max: "4200 rpm" }
    |                                   ^
"#,
    );
}

/// A load line that is not one of ours.
#[test]
fn operating_range_unknown_load_line() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"load: constant-torque"#,
            r#"load: linear"#,
        )],
        r#"
error: winch.yaml:26:11: design.operating_range.load: unknown value `linear`; expected one of `constant-torque`, `fan-law`, `table`
 26 |     load: linear
    |           ^
"#,
    );
}

/// One point is not a line.
#[test]
fn operating_range_table_of_one_point() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"load: constant-torque"#,
            r#"load: { table: [{ speed: "300 rpm", current: "12 A" }] }"#,
        )],
        r#"
error: winch.yaml:26:20: design.operating_range.load.table: 1 point; expected at least 2 (speed, current) points
 26 |     load: { table: [{ speed: "300 rpm", current: "12 A" }] }
    |                    ^
"#,
    );
}

/// Points out of order.
#[test]
fn operating_range_table_speeds_falling() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"load: constant-torque"#,
            r#"load: { table: [{ speed: "3600 rpm", current: "12 A" }, { speed: "300 rpm", current: "10 A" }] }"#,
        )],
        r#"
error: winch.yaml:26:70: design.operating_range.load.table[1].speed: 300 rpm is not above the previous point's 3600 rpm; expected speeds rising
 26 |     load: { table: [{ speed: "3600 rpm", current: "12 A" }, { speed: "300 rpm", current: "10 A" }] }
    |                                                                      ^
"#,
    );
}

/// A table that stops inside the range.
#[test]
fn operating_range_table_short_of_the_span() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"load: constant-torque"#,
            r#"load: { table: [{ speed: "300 rpm", current: "12 A" }, { speed: "2000 rpm", current: "10 A" }] }"#,
        )],
        r#"
error: winch.yaml:26:20: design.operating_range.load.table: spans 300 rpm to 2000 rpm; expected it to cover the speed range 300 rpm to 3600 rpm
 26 |     load: { table: [{ speed: "300 rpm", current: "12 A" }, { speed: "2000 rpm", current: "10 A" }] }
    |                    ^
"#,
    );
}

/// A bare number.
#[test]
fn operating_range_speed_without_unit() {
    bad_input(
        "winch.yaml",
        &[case("winch.yaml", r#"min: "300 rpm""#, r#"min: 300"#)],
        r#"
error: winch.yaml:25:19: design.operating_range.speed.min: expected an angular speed such as "3000 rpm", found a bare number 300 (write the unit)
 25 |     speed: { min: 300, max: "3600 rpm" }
    |                   ^
"#,
    );
}

/// 40 A through 0.18 ohm at 3600 rpm needs 41.4 V.
#[test]
fn operating_range_table_current_beyond_the_supply() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"load: constant-torque"#,
            r#"load: { table: [{ speed: "300 rpm", current: "12 A" }, { speed: "3600 rpm", current: "40 A" }] }"#,
        )],
        r#"
error: winch.yaml:25:35: design.operating_range.speed.max: the motor needs 41.4 V (back-EMF 34.2 V + I·R 7.20 V) at 3600 rpm and 40.0 A, more than the lowest supply 40.0 V; expected a speed the supply can reach
 25 |     speed: { min: "300 rpm", max: "3600 rpm" }
    |                                   ^
"#,
    );
}

/// 300 A held at standstill through 0.18 ohm needs 54 V; the supply dips to 40 V.
#[test]
fn operating_range_standstill_current_beyond_the_supply() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            r#"standstill: { current: "12 A" }"#,
            r#"standstill: { current: "300 A" }"#,
        )],
        r#"
error: winch.yaml:27:28: design.operating_range.standstill.current: the motor needs 54.0 V (back-EMF 0.00 V + I·R 54.0 V) holding 300 A at standstill, more than the lowest supply 40.0 V; expected a held current the supply can reach
 27 |     standstill: { current: "300 A" }   # holding the load with the motor stopped
    |                            ^
"#,
    );
}

/// Shares that do not add up to the whole time.
#[test]
fn operating_range_profile_shares_short_of_whole() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            "standstill: { current: \"12 A\" }",
            "standstill: { current: \"12 A\" }\n    profile: [{ speed: \"300 rpm\", share: \"40 %\" }, { speed: \"3600 rpm\", share: \"40 %\" }]",
        )],
        r#"
error: winch.yaml:28:14: design.operating_range.profile: the shares add up to 80.0 %; expected 100 %
 28 |     profile: [{ speed: "300 rpm", share: "40 %" }, { speed: "3600 rpm", share: "40 %" }]   # holding the load with the…
    |              ^
"#,
    );
}

/// A profile speed outside the range.
#[test]
fn operating_range_profile_speed_outside() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            "standstill: { current: \"12 A\" }",
            "standstill: { current: \"12 A\" }\n    profile: [{ speed: \"4000 rpm\", share: \"100 %\" }]",
        )],
        r#"
error: winch.yaml:28:24: design.operating_range.profile[0].speed: 4000 rpm is outside the range 300 rpm to 3600 rpm; expected a speed of the range or 0 (standstill)
 28 |     profile: [{ speed: "4000 rpm", share: "100 %" }]   # holding the load with the motor stopped
    |                        ^
"#,
    );
}

/// Averaging over a profile the design does not give.
#[test]
fn objective_least_average_loss_without_profile() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            "objective: least-loss",
            "objective: least-average-loss",
        )],
        r#"
error: winch.yaml:21:14: design.objective: least-average-loss averages over operating_range.profile, which the design does not give; add a profile or choose least-loss
 21 |   objective: least-average-loss
    |              ^
"#,
    );
}

// ------------------------------------------------------------------ current sampling and loop

/// A phase margin the loop tuning does not offer.
#[test]
fn current_loop_phase_margin_out_of_range() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            "    phase_margin_deg: 60",
            "    phase_margin_deg: 95",
        )],
        r#"
error: winch.yaml:29:23: design.current_loop.phase_margin_deg: 95 is out of range; expected 30 to 80 (degrees)
 29 |     phase_margin_deg: 95
    |                       ^
"#,
    );
}

/// A loop rate of zero.
#[test]
fn current_loop_rate_zero() {
    bad_input(
        "winch.yaml",
        &[case(
            "winch.yaml",
            "    phase_margin_deg: 60",
            "    rate: \"0 Hz\"",
        )],
        r#"
error: winch.yaml:29:11: design.current_loop.rate: 0.00 Hz is out of range; expected above 0.00 Hz and at most 1.00 MHz
 29 |     rate: "0 Hz"
    |           ^
"#,
    );
}

/// More fraction bits than a 32-bit gain can hold.
#[test]
fn current_loop_fraction_bits_out_of_range() {
    bad_input(
        "winch.yaml",
        &[case("winch.yaml", "fraction_bits: 12", "fraction_bits: 31")],
        r#"
error: winch.yaml:30:35: design.current_loop.fixed_point.fraction_bits: 31 is out of range; expected 0 to 30
 30 |     fixed_point: { fraction_bits: 31 }
    |                                   ^
"#,
    );
}

/// Integer gains without the ADC that scales the current.
#[test]
fn current_loop_fixed_point_needs_the_adc() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    adc: { bits: 12, full_scale: \"3.3 V\" }\n",
            "",
        )],
        r#"
error: winch.yaml:30:20: design.current_loop.fixed_point: integer gains scale the current by the ADC and the shunt chain; the board needs `current_sensing.adc` and `overcurrent` (its shunt and amplifier)
 30 |     fixed_point: { fraction_bits: 12 }
    |                    ^
"#,
    );
}

/// A current loop on a board that samples no current.
#[test]
fn current_loop_needs_current_sensing() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "  current_sensing:             # the ADC reads the leg shunt's amplifier (the overcurrent block's)\n    settle_time: \"1 us\"\n    sample_time: \"0.5 us\"\n    adc: { bits: 12, full_scale: \"3.3 V\" }\n",
            "",
        )],
        r#"
error: winch.yaml:29:5: design.current_loop: the board "Heron 48 V H-bridge (invented)" has no `current_sensing`; the loop needs the sampled current (add `current_sensing: { settle_time: ..., sample_time: ..., place: ... }` to the board)
 29 |     phase_margin_deg: 60
    |     ^
"#,
    );
}

/// An ADC wider than any the sensing chain is checked for.
#[test]
fn current_sensing_adc_bits_out_of_range() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    adc: { bits: 12, full_scale: \"3.3 V\" }",
            "    adc: { bits: 30, full_scale: \"3.3 V\" }",
        )],
        r#"
error: heron-hb48.yaml:44:18: board.current_sensing.adc.bits: 30 is out of range; expected 6 to 24
 44 |     adc: { bits: 30, full_scale: "3.3 V" }
    |                  ^
"#,
    );
}

/// One shunt given two places.
#[test]
fn current_sensing_place_differs_from_the_overcurrent_shunt() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    sample_time: \"0.5 us\"",
            "    sample_time: \"0.5 us\"\n    place: phase",
        )],
        r#"
error: heron-hb48.yaml:44:12: board.current_sensing.place: differs from `overcurrent.shunt.place`; one shunt serves both, expected the same place or none here
 44 |     place: phase
    |            ^
"#,
    );
}

/// A brushed board's sensing with no shunt place anywhere.
#[test]
fn current_sensing_place_missing() {
    bad_input(
        "belt-feeder.yaml",
        &[case(
            "wren-hb24.yaml",
            "  thermal:",
            "  current_sensing: { settle_time: \"1 us\", sample_time: \"0.5 us\" }\n  thermal:",
        )],
        r#"
error: wren-hb24.yaml:33:22: board.current_sensing.place: missing; expected where the shunt sits: `supply-return`, `leg` or `phase` (or the board's `overcurrent.shunt.place`)
 33 |   current_sensing: { settle_time: "1 us", sample_time: "0.5 us" }
    |                      ^
"#,
    );
}

/// A three-phase bridge's sensing placed off its legs.
#[test]
fn three_phase_sensing_place_not_leg() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            "sample_time: \"0.8 us\" }",
            "sample_time: \"0.8 us\", place: phase }",
        )],
        r#"
error: osprey-3p48.yaml:32:75: board.current_sensing.place: a three-phase bridge's current sensing reads low-side shunts in its legs or one shunt in the DC link; expected `leg`, `supply-return` or no place
 32 |   current_sensing: { settle_time: "1.5 us", sample_time: "0.8 us", place: phase }
    |                                                                           ^
"#,
    );
}

/// An update divider of zero.
#[test]
fn update_divider_zero() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    fpu: true\n",
            "    fpu: true\n    update_divider: { max: 0 }\n",
        )],
        r#"
error: heron-hb48.yaml:14:28: board.timer.update_divider.max: 0 is out of range; expected 1 to 65536
 14 |     update_divider: { max: 0 }
    |                            ^
"#,
    );
}

#[test]
fn update_divider_each_extreme_not_a_flag() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    fpu: true\n",
            "    fpu: true\n    update_divider: { max: 4, each_extreme: twice }\n",
        )],
        r#"
error: heron-hb48.yaml:14:45: board.timer.update_divider.each_extreme: expected `true` or `false`, found the text "twice"
 14 |     update_divider: { max: 4, each_extreme: twice }
    |                                             ^
"#,
    );
}

/// A conversion order on a stage that reads one current.
#[test]
fn current_sensing_conversion_on_a_brushed_board() {
    bad_input(
        "winch.yaml",
        &[case(
            "heron-hb48.yaml",
            "    sample_time: \"0.5 us\"",
            "    sample_time: \"0.5 us\"\n    conversion: sequential",
        )],
        r#"
error: heron-hb48.yaml:44:17: board.current_sensing.conversion: a brushed stage reads one current; only a three-phase bridge converts two (remove it)
 44 |     conversion: sequential
    |                 ^
"#,
    );
}

/// One DC-link shunt needs compares loaded at both counter extremes.
#[test]
fn dc_link_without_each_extreme() {
    bad_input(
        "pump-bldc.yaml",
        &[case(
            "osprey-3p48.yaml",
            "sample_time: \"0.8 us\" }",
            "sample_time: \"0.8 us\", place: supply-return }",
        )],
        r#"
error: osprey-3p48.yaml:32:75: board.current_sensing.place: a single DC-link shunt needs the compares shifted apart on the up count and given back on the down count, so the timer must load them at both counter extremes; add `update_divider: { max: 1, each_extreme: true }` to the timer (or read low-side shunts: `leg`)
 32 |   current_sensing: { settle_time: "1.5 us", sample_time: "0.8 us", place: supply-return }
    |                                                                           ^
"#,
    );
}

/// One DC-link shunt is read by one channel: no conversion order.
#[test]
fn dc_link_with_a_conversion_order() {
    bad_input(
        "pump-bldc.yaml",
        &[
            case(
                "osprey-3p48.yaml",
                "sample_time: \"0.8 us\" }",
                "sample_time: \"0.8 us\", place: supply-return, conversion: sequential }",
            ),
            case(
                "osprey-3p48.yaml",
                "    fpu: true\n",
                "    fpu: true\n    update_divider: { max: 1, each_extreme: true }\n",
            ),
        ],
        r#"
error: osprey-3p48.yaml:33:102: board.current_sensing.conversion: a single DC-link shunt is read by one channel at two instants; remove it
 33 |   current_sensing: { settle_time: "1.5 us", sample_time: "0.8 us", place: supply-return, conversion: sequential }
    |                                                                                                      ^
"#,
    );
}

/// One DC-link shunt is planned for sinusoidal modulation only.
#[test]
fn dc_link_with_six_step() {
    bad_input(
        "pump-bldc.yaml",
        &[
            case(
                "osprey-3p48.yaml",
                "sample_time: \"0.8 us\" }",
                "sample_time: \"0.8 us\", place: supply-return }",
            ),
            case(
                "osprey-3p48.yaml",
                "    fpu: true\n",
                "    fpu: true\n    update_divider: { max: 1, each_extreme: true }\n",
            ),
            case(
                "osprey-3p48.yaml",
                "sinusoidal: { zero_sequence: min-max }",
                "six-step: { chop: complementary }",
            ),
        ],
        r#"
error: osprey-3p48.yaml:33:75: board.current_sensing.place: a single DC-link shunt is planned for sinusoidal modulation only (its two readings in the active vectors); six-step: expected `leg`
 33 |   current_sensing: { settle_time: "1.5 us", sample_time: "0.8 us", place: supply-return }
    |                                                                           ^
"#,
    );
}
