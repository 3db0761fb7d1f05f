//! The bundled three-phase design plans end to end: `plan.json` carries the
//! three-phase block, the ADC trigger lies inside the PWM period, the six
//! device rows add up (with the gate drive outside the switches and the
//! ripple copper loss) to the stage total, and the sampling constraint is
//! checked against the window it reports.

use std::fs;
use std::path::Path;
use std::process::Command;

fn copy_tree(from: &Path, to: &Path) {
    fs::create_dir_all(to).expect("create folder");
    for e in fs::read_dir(from).expect("read folder") {
        let e = e.expect("entry");
        let target = to.join(e.file_name());
        if e.file_type().expect("type").is_dir() {
            copy_tree(&e.path(), &target);
        } else {
            fs::copy(e.path(), &target).expect("copy");
        }
    }
}

/// A temporary copy of `boards/`.
fn boards_copy() -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("temporary folder");
    copy_tree(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("boards"),
        dir.path(),
    );
    dir
}

/// `pwmplan` with `args` in `dir`, exiting with `status`; its JSON output.
fn run_json(dir: &Path, args: &[&str], status: i32) -> serde_json::Value {
    let o = Command::new(env!("CARGO_BIN_EXE_pwmplan"))
        .current_dir(dir)
        .args(args)
        .output()
        .expect("run pwmplan");
    assert_eq!(
        o.status.code(),
        Some(status),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).expect("plan JSON")
}

/// Plan `design` from a copy of `boards/` (after `edit` of the board) and
/// return its `plan.json`.
fn plan(design: &str, edit: Option<(&str, &str)>) -> serde_json::Value {
    let dir = boards_copy();
    if let Some((from, to)) = edit {
        let p = dir.path().join("osprey-3p48.yaml");
        let text = fs::read_to_string(&p).expect("board");
        assert!(text.contains(from), "{from} not in the board");
        fs::write(&p, text.replacen(from, to, 1)).expect("write board");
    }
    let o = Command::new(env!("CARGO_BIN_EXE_pwmplan"))
        .current_dir(dir.path())
        .args(["plan", design, "--out", "out"])
        .output()
        .expect("run pwmplan");
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let text = fs::read_to_string(dir.path().join("out/plan.json")).expect("plan.json");
    serde_json::from_str(&text).expect("plan.json parses")
}

fn f(v: &serde_json::Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

fn check(p: &serde_json::Value, modulation: &str) {
    assert_eq!(p["topology"], "three-phase");
    assert_eq!(p["pwm"]["alignment"], "centre");
    let tp = &p["three_phase"];
    assert_eq!(tp["modulation"], modulation);
    assert_eq!(tp["channels"], serde_json::json!(["A", "B", "C"]));
    // 6 V/krpm line-to-line peak, 4 pole pairs, sinusoidal shape:
    // k_e = 6/(1000·2π/60)/(√3·4) V·s/rad (the file's convention converted).
    if modulation == "sinusoidal" {
        let want = 6.0 / (1000.0 * 2.0 * std::f64::consts::PI / 60.0) / (3f64.sqrt() * 4.0);
        assert!((f(&tp["k_e_v_s_per_rad"]) - want).abs() < 1e-12 * want);
    }
    // 3000 rpm × 4 pole pairs = 200 Hz electrical.
    assert!((f(&tp["electrical_frequency_hz"]) - 200.0).abs() < 1e-9);

    // Trigger: a counter value within the up-down period matched on the
    // up-count, c·t_tick before the top (P), with c = round(t_sample / (2·t_tick)).
    let s = &tp["sampling"];
    let steps = p["timer"]["duty_steps"].as_u64().expect("duty steps");
    let trigger = s["trigger_compare"].as_u64().expect("trigger");
    assert_eq!(s["trigger_count"], "up");
    assert!(trigger > 0 && trigger <= p["timer"]["period_register"].as_u64().expect("reg"));
    let tick = p["timer"]["divider"].as_f64().expect("divider") / f(&p["timer"]["clock_hz"]);
    assert_eq!(
        trigger,
        steps - (0.5 * f(&s["sample_time_s"]) / tick).round() as u64
    );
    let period = f(&s["period_s"]);
    assert!((period - 2.0 * steps as f64 * tick).abs() < 1e-15);
    assert!(f(&s["trigger_before_top_s"]) < 0.5 * period);
    assert!((f(&s["trigger_before_top_s"]) - (steps - trigger) as f64 * tick).abs() < 1e-15);
    // t_ls,min = 2·(t_c + t_dead + t_settle) here (the start of the window binds).
    let t_ls = 2.0
        * (f(&s["trigger_before_top_s"]) + f(&p["timer"]["dead_time_s"]) + f(&s["settle_time_s"]));
    assert!((f(&s["min_low_side_on_s"]) - t_ls).abs() < 1e-15);
    assert!((f(&s["max_high_side_duty"]) - (1.0 - t_ls / period)).abs() < 1e-12);
    let k = p["constraints"]
        .as_array()
        .expect("constraints")
        .iter()
        .find(|k| k["name"] == "sampling-window")
        .expect("sampling-window constraint");
    assert_eq!(k["pass"], true);
    assert!(f(&k["value"]) <= f(&s["max_high_side_duty"]));

    // Six device rows, high sides alike and low sides alike, adding up.
    let devs = p["devices"].as_array().expect("devices");
    let roles: Vec<&str> = devs
        .iter()
        .map(|d| d["role"].as_str().expect("role"))
        .collect();
    assert_eq!(
        roles,
        [
            "phase-a-high",
            "phase-a-low",
            "phase-b-high",
            "phase-b-low",
            "phase-c-high",
            "phase-c-low"
        ]
    );
    let sum: f64 = devs.iter().map(|d| f(&d["total_w"])).sum();
    assert!((sum - f(&tp["rated"]["devices_total_w"])).abs() < 1e-9);
    let l = &p["losses_w"];
    let total = sum + f(&tp["rated"]["gate_outside_devices_w"]) + f(&l["motor_ripple_copper"]);
    assert!(
        (total - f(&l["total"])).abs() < 1e-9,
        "{total} vs {}",
        l["total"]
    );
    let lines: f64 = [
        "conduction",
        "switching",
        "output_capacitance",
        "reverse_recovery",
        "dead_time_diode",
        "gate_drive",
        "freewheel_diode",
        "motor_ripple_copper",
    ]
    .iter()
    .map(|k| f(&l[*k]))
    .sum();
    assert!((lines - f(&l["total"])).abs() < 1e-9);
    // Each device's junction: ambient + R_th·P (one thermal path per switch).
    let r_th = f(&p["thermal"]["r_th_ja_k_per_w"]);
    for d in devs {
        let t = f(&d["junction_c"]);
        let want = f(&p["thermal"]["ambient_c"]) + r_th * f(&d["total_w"]);
        // Within the junction solve's convergence (it iterates on the closed form
        // corrected to the exact sum, which differ by the dead times' share).
        assert!((t - want).abs() < 1e-5, "{}: {t} vs {want}", d["role"]);
    }
}

#[test]
fn bundled_sinusoidal_design_plans() {
    let p = plan("pump-bldc.yaml", None);
    check(&p, "sinusoidal");
    let r = &p["three_phase"]["rated"];
    // Needed duties: the legs swing 1 − d_max..d_max with d_max = ½(1 + (√3/2)·m)
    // at the lowest supply (min-max).
    let [lo, hi] = [
        f(&p["pwm"]["duty_needed"][0]),
        f(&p["pwm"]["duty_needed"][1]),
    ];
    assert!((lo + hi - 1.0).abs() < 1e-12);
    assert!(f(&r["modulation_index"]) < 2.0 / 3f64.sqrt());
}

#[test]
fn six_step_variant_plans() {
    for chop in ["high-side", "complementary"] {
        let p = plan(
            "pump-bldc.yaml",
            Some((
                "sinusoidal: { zero_sequence: min-max }",
                if chop == "high-side" {
                    "six-step: { chop: high-side }"
                } else {
                    "six-step: { chop: complementary }"
                },
            )),
        );
        check(&p, "six-step");
        assert_eq!(p["three_phase"]["chop"], chop);
        // The line current's mean is the rated DC-link current.
        assert!((f(&p["ripple"]["mean_a"]) - 10.0).abs() < 1e-6);
    }
}

/// Two currents converted one after the other on one converter: the window holds both
/// acquisitions, so the trigger leads the counter top by twice as much and the register
/// check holds the sampled legs' low sides on through both (`plan` writes only when it
/// does).
#[test]
fn sequential_conversion_doubles_the_window() {
    let at_once = plan("pump-bldc.yaml", None);
    let one_by_one = plan(
        "pump-bldc.yaml",
        Some((
            "sample_time: \"0.8 us\" }",
            "sample_time: \"0.8 us\", conversion: sequential }",
        )),
    );
    let s1 = &at_once["three_phase"]["sampling"];
    let s2 = &one_by_one["three_phase"]["sampling"];
    assert_eq!(s1["conversion"], "simultaneous");
    assert_eq!(s2["conversion"], "sequential");
    assert!((f(&s2["sample_time_s"]) - 1.6e-6).abs() < 1e-12);
    // The trigger leads the top by half the acquisition: 0.4 µs, then 0.8 µs (at the
    // plan's tick, to a tick).
    let tick = f(&one_by_one["timer"]["divider"]) / f(&one_by_one["timer"]["clock_hz"]);
    assert!((f(&s1["trigger_before_top_s"]) - 0.4e-6).abs() <= tick);
    assert!((f(&s2["trigger_before_top_s"]) - 0.8e-6).abs() <= tick);
    // The register check measured the low sides on from the trigger through both
    // conversions.
    let after = f(&one_by_one["register_check"]["sample_low_on_after_s"]);
    assert!(after + 1e-12 >= 1.6e-6, "{after}");
    // The window is longer, so the sampled leg's highest duty is lower.
    assert!(f(&s2["max_high_side_duty"]) < f(&s1["max_high_side_duty"]));
}

/// The worst case holds the sampling window too (issue 21, item 3): with the
/// shunt amplifier's settling lengthened until the window's limit falls between
/// the typical parts' sampled duty and the worst corner's (at the lowest supply
/// and the lowest threshold), the plan's own `sampling-window` constraint passes
/// and the worst case fails it at that corner, which blocks the plan; the row
/// carries the corner's figure against the same limit.
#[test]
fn worst_case_holds_the_sampling_window() {
    let dir = boards_copy();
    let board = dir.path().join("osprey-3p48.yaml");
    let text = fs::read_to_string(&board).expect("board");
    let from = "settle_time: \"1.5 us\", sample_time";
    assert!(text.contains(from), "the bundled board's settling");
    fs::write(
        &board,
        text.replacen(from, "settle_time: \"6.2 us\", sample_time", 1),
    )
    .expect("write board");
    let p = run_json(
        dir.path(),
        &[
            "plan",
            "pump-bldc.yaml",
            "--at",
            "20 kHz",
            "--json",
            "--no-write",
        ],
        1,
    );
    let nominal = p["constraints"]
        .as_array()
        .expect("constraints")
        .iter()
        .find(|k| k["name"] == "sampling-window")
        .expect("the sampling-window constraint");
    assert_eq!(
        nominal["pass"], true,
        "typical parts hold the window: {nominal}"
    );
    let row = p["worst_case"]["rows"]
        .as_array()
        .expect("worst-case rows")
        .iter()
        .find(|r| r["name"] == "sampling-window")
        .expect("a worst-case sampling-window row");
    assert_eq!(row["pass"], false, "{row}");
    assert!(f(&row["value"]) > f(&row["limit"]), "{row}");
    assert!(
        (f(&row["limit"]) - f(&nominal["limit"])).abs() < 1e-9,
        "one limit: {row} {nominal}"
    );
    assert!(
        f(&row["value"]) > f(&nominal["value"]),
        "the corner is worse than typical"
    );
    assert!(
        row["corner"]
            .as_str()
            .is_some_and(|c| c.contains("supply 40.0 V")),
        "{row}"
    );
    let blocked: Vec<&str> = p["blocked_by"]
        .as_array()
        .expect("blocked_by")
        .iter()
        .filter_map(|b| b["code"].as_str())
        .collect();
    assert!(
        blocked.contains(&"worst-case-sampling-window"),
        "{blocked:?}"
    );
}

/// A design that avoids a band above the hearing limit: the plan judges its
/// lines' significance up to that band, so the register check does not compare
/// the lowest line (it says so: not compared) and still plans; with the lines
/// allowed, the same design's cases are compared (the carrier groups measured
/// on the registers, `register_check::carrier_groups_rms_a`).
#[test]
fn avoided_bands_above_the_hearing_limit_are_not_compared() {
    let dir = boards_copy();
    let design = fs::read_to_string(dir.path().join("pump-bldc.yaml")).expect("design");
    for (audible, compared) in [
        (r#"audible: { avoid: [["24 kHz", "40 kHz"]] }"#, false),
        ("audible: allowed", true),
    ] {
        let text = design.replacen("audible: inaudible", audible, 1);
        fs::write(dir.path().join("edited.yaml"), text).expect("write design");
        let p = run_json(
            dir.path(),
            &["plan", "edited.yaml", "--json", "--no-write"],
            0,
        );
        let cases = p["register_check"]["cases"].as_array().expect("cases");
        assert!(!cases.is_empty(), "{audible}: no case checked");
        for c in cases {
            assert_eq!(c["line_near_threshold"], !compared, "{audible}: {c}");
        }
    }
}
