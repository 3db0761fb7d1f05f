//! The trade-off review commands against the library and against `plan --at`:
//! sweep rows agree with a pinned plan at the same frequency, CSV and JSON
//! round-trip to the library's values, and a part change is explained.

use std::path::Path;
use std::process::Command;

use pwmplan::design::load_design;
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::sweep::{self, SweepRow};

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_pwmplan"))
}

fn run(args: &[&str], dir: &Path) -> (i32, String, String) {
    let out = bin()
        .args(args)
        .current_dir(dir)
        .output()
        .expect("pwmplan runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn repo() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// A copy of the bundled boards in a fresh folder.
fn boards_copy() -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("temp dir");
    for sub in ["", "switches"] {
        let from = repo().join("boards").join(sub);
        std::fs::create_dir_all(dir.path().join(sub)).expect("mkdir");
        for e in std::fs::read_dir(&from).expect("boards") {
            let p = e.expect("entry").path();
            if p.extension().is_some_and(|x| x == "yaml") {
                std::fs::copy(&p, dir.path().join(sub).join(p.file_name().expect("name")))
                    .expect("copy");
            }
        }
    }
    dir
}

#[test]
fn sweep_rows_agree_with_plan_at_the_same_frequency() {
    let (code, json, err) = run(
        &[
            "sweep",
            "boards/winch.yaml",
            "--from",
            "12 kHz",
            "--to",
            "36 kHz",
            "--points",
            "5",
            "--json",
        ],
        repo(),
    );
    assert_eq!(code, 0, "{err}");
    let rows: Vec<SweepRow> = serde_json::from_str(&json).expect("sweep JSON parses");
    assert!(rows.len() >= 5);
    for r in &rows {
        let at = format!("{} Hz", r.frequency_hz);
        let (code, plan_json, err) = run(
            &[
                "plan",
                "boards/winch.yaml",
                "--at",
                &at,
                "--json",
                "--no-write",
            ],
            repo(),
        );
        assert!(code == 0 || code == 1, "{err}");
        let plan: serde_json::Value = serde_json::from_str(&plan_json).expect("plan JSON parses");
        assert_eq!(plan["pwm"]["frequency_hz"].as_f64(), Some(r.frequency_hz));
        assert_eq!(plan["timer"]["divider"].as_u64(), Some(r.divider));
        assert_eq!(plan["timer"]["period_ticks"].as_u64(), Some(r.period_ticks));
        assert_eq!(plan["losses_w"]["total"].as_f64(), Some(r.losses_w.total));
        assert_eq!(
            plan["losses_w"]["switching"].as_f64(),
            Some(r.losses_w.switching)
        );
        assert_eq!(
            plan["losses_w"]["conduction"].as_f64(),
            Some(r.losses_w.conduction)
        );
        assert_eq!(plan["thermal"]["junction_c"].as_f64(), r.junction_c);
        assert_eq!(
            plan["ripple"]["peak_to_peak_a"].as_f64(),
            Some(r.ripple_pp_a)
        );
        assert_eq!(plan["feasible"].as_bool(), Some(r.feasible));
    }
}

fn library_rows(design: &str, from: f64, to: f64, points: usize) -> Vec<SweepRow> {
    let d = load_design(Origin::Disk(repo().join(design))).expect("bundled design loads");
    let ev = Evaluator::new(&d);
    let sol = pwmplan::solve::solve(&ev, pwmplan::solve::Objective::LeastLoss);
    let chosen = sol
        .chosen
        .as_ref()
        .filter(|c| c.feasible)
        .map(|c| c.setting.frequency_hz);
    sweep::sweep(&ev, &sweep::log_space(from, to, points), chosen)
}

#[test]
fn sweep_json_round_trips_to_library_values() {
    let (code, json, err) = run(
        &[
            "sweep",
            "boards/vent-fan.yaml",
            "--from",
            "2 kHz",
            "--to",
            "30 kHz",
            "--points",
            "9",
            "--json",
        ],
        repo(),
    );
    assert_eq!(code, 0, "{err}");
    let parsed: Vec<SweepRow> = serde_json::from_str(&json).expect("parses");
    let lib = library_rows("boards/vent-fan.yaml", 2e3, 30e3, 9);
    assert_eq!(parsed, lib);
}

#[test]
fn sweep_csv_round_trips_to_library_values() {
    let (code, csv, err) = run(
        &[
            "sweep",
            "boards/belt-feeder.yaml",
            "--from",
            "10 kHz",
            "--to",
            "80 kHz",
            "--points",
            "7",
            "--csv",
        ],
        repo(),
    );
    assert_eq!(code, 0, "{err}");
    let lib = library_rows("boards/belt-feeder.yaml", 10e3, 80e3, 7);
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    let col = |name: &str| {
        header
            .iter()
            .position(|h| *h == name)
            .unwrap_or_else(|| panic!("column {name}"))
    };
    let body: Vec<Vec<String>> = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    assert_eq!(body.len(), lib.len());
    for (cells, r) in body.iter().zip(&lib) {
        let num = |name: &str| cells[col(name)].parse::<f64>().expect("number");
        let opt = |name: &str| {
            let c = &cells[col(name)];
            if c.is_empty() {
                None
            } else {
                Some(c.parse::<f64>().expect("number"))
            }
        };
        assert_eq!(num("frequency_hz"), r.frequency_hz);
        assert_eq!(num("divider") as u64, r.divider);
        assert_eq!(num("period_ticks") as u64, r.period_ticks);
        assert_eq!(num("resolution_bits"), r.resolution_bits);
        assert_eq!(num("conduction_w"), r.losses_w.conduction);
        assert_eq!(num("switching_w"), r.losses_w.switching);
        assert_eq!(num("output_capacitance_w"), r.losses_w.output_capacitance);
        assert_eq!(num("reverse_recovery_w"), r.losses_w.reverse_recovery);
        assert_eq!(num("dead_time_diode_w"), r.losses_w.dead_time_diode);
        assert_eq!(num("gate_drive_w"), r.losses_w.gate_drive);
        assert_eq!(num("motor_ripple_copper_w"), r.losses_w.motor_ripple_copper);
        assert_eq!(num("total_w"), r.losses_w.total);
        assert_eq!(opt("junction_c"), r.junction_c);
        assert_eq!(num("ripple_pp_a"), r.ripple_pp_a);
        assert_eq!(opt("lowest_audible_line_hz"), r.lowest_audible_line_hz);
        assert_eq!(cells[col("feasible")], r.feasible.to_string());
        assert_eq!(cells[col("chosen")], r.chosen.to_string());
    }
    // The chosen setting is among the rows and marked once.
    assert_eq!(lib.iter().filter(|r| r.chosen).count(), 1);
}

#[test]
fn sweep_table_fits_80_columns_and_marks_the_choice() {
    let (code, text, err) = run(&["sweep", "--points", "12"], repo());
    assert_eq!(code, 0, "{err}");
    for line in text.lines() {
        assert!(
            line.chars().count() <= 80,
            "wider than 80 columns: {line:?}"
        );
    }
    assert_eq!(
        text.lines()
            .filter(|l| l.starts_with("*") && !l.contains("chosen setting"))
            .count(),
        2,
        "chosen row in both tables:\n{text}"
    );
    assert!(!text.contains('\u{1b}'), "no colour when not on a terminal");
}

#[test]
fn a_switch_change_is_explained() {
    let dir = boards_copy();
    let (code, _, err) = run(&["plan", "belt-feeder.yaml"], dir.path());
    assert_eq!(code, 0, "{err}");
    let switch = dir.path().join("switches/tarn-40.yaml");
    let text = std::fs::read_to_string(&switch).expect("switch file");
    let changed = text
        .replace(
            "q_gd: { typ: \"14 nC\", max: \"21 nC\" }",
            "q_gd: { typ: \"30 nC\", max: \"40 nC\" }",
        )
        .replace(
            "r_ds_on: { typ: \"2.4 mohm\"",
            "r_ds_on: { typ: \"3.0 mohm\"",
        );
    assert_ne!(
        text, changed,
        "the fixture still has the fields this test edits"
    );
    std::fs::write(&switch, changed).expect("write");
    let (code, out, err) = run(&["plan", "belt-feeder.yaml"], dir.path());
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("What changed since the previous plan:"),
        "{out}"
    );
    assert!(
        out.contains("because: switches/tarn-40.yaml changed:"),
        "{out}"
    );
    assert!(out.contains("switch.q_gd.typ 14 nC -> 30 nC"), "{out}");
    assert!(
        out.contains("switch.r_ds_on.typ 2.4 mohm -> 3.0 mohm"),
        "{out}"
    );
    assert!(out.contains("moved: figure losses_w.total"), "{out}");
    // A slower switch needs a different dead time: the changed header
    // constants are listed by their names.
    assert!(
        out.contains("moved: constant BELT_FEEDER_PWM_DEAD_TIME_TICKS "),
        "{out}"
    );
    assert!(
        out.contains("moved: constant BELT_FEEDER_PWM_DEAD_TIME_CODE "),
        "{out}"
    );
    // The board and design did not change and are not blamed.
    assert!(!out.contains("because: belt-feeder.yaml"), "{out}");
}

/// Lowering a brushless motor's inductance moves the ripple (by about the
/// ratio of the inductances, 0.25/0.10: the small-ripple limit scales as 1/L),
/// the modulation index and the power factor (the phase voltage
/// E + (R + jωL)·I turns with ωL): all are listed, with the threshold
/// stated and the input field named (issue 14, defect 15).
#[test]
fn an_inductance_change_lists_every_moved_figure() {
    let dir = boards_copy();
    let (code, _, err) = run(&["plan", "pump-bldc.yaml"], dir.path());
    assert_eq!(code, 0, "{err}");
    let design = dir.path().join("pump-bldc.yaml");
    let text = std::fs::read_to_string(&design).expect("design");
    let changed = text.replace("inductance: \"0.25 mH\"", "inductance: \"0.10 mH\"");
    assert_ne!(text, changed, "the fixture still has the inductance");
    std::fs::write(&design, changed).expect("write");
    let (code, out, err) = run(&["plan", "pump-bldc.yaml"], dir.path());
    assert_eq!(code, 0, "{err}");
    for figure in [
        "moved: figure ripple.peak_to_peak_a ",
        "moved: figure losses_w.total ",
        "moved: figure three_phase.rated.modulation_index ",
        "moved: figure three_phase.rated.power_factor ",
        "moved: figure cases[rated].ripple_peak_to_peak_a ",
    ] {
        assert!(out.contains(figure), "{figure:?} missing\n{out}");
    }
    let ripple = out
        .lines()
        .find(|l| l.contains("moved: figure ripple.peak_to_peak_a "))
        .expect("ripple line");
    let ratio: f64 = ripple
        .rsplit("(x")
        .next()
        .and_then(|r| r.trim_end_matches(')').parse().ok())
        .unwrap_or_else(|| panic!("no ratio in {ripple}"));
    assert!((2.0..3.0).contains(&ratio), "{ripple}");
    assert!(
        out.contains("listed when they moved by more than 1 %, temperatures by more than 1 K"),
        "{out}"
    );
    assert!(
        out.contains("because: pump-bldc.yaml changed: design.motor.inductance 0.25 mH -> 0.10 mH"),
        "{out}"
    );
}

#[test]
fn compare_marks_the_best_and_refuses_a_bad_switch() {
    let (code, text, err) = run(
        &[
            "compare",
            "--switch",
            "bundled:tarn-40",
            "--switch",
            "boards/switches/scree-60.yaml",
        ],
        repo(),
    );
    assert_eq!(code, 0, "{err}");
    assert!(text.contains("tarn-40"));
    assert!(text.contains("scree-60"));
    let total = text
        .lines()
        .find(|l| l.starts_with("total loss"))
        .expect("total row");
    assert_eq!(total.matches('<').count(), 1, "{total}");
    let (code, _, err) = run(
        &[
            "compare",
            "--switch",
            "bundled:nonesuch",
            "--switch",
            "bundled:tarn-40",
        ],
        repo(),
    );
    assert_eq!(code, 2);
    assert!(
        err.contains("no bundled switch named \"nonesuch\""),
        "{err}"
    );
}
