//! Regressions of the user trial that found the written registers contradicting the
//! rationale: a 36 V brushed hub motor on a unipolar H-bridge, a 72 MHz 16-bit timer with a
//! two-segment dead-time code, 400 ns minimum pulse, 1 µs bootstrap refresh, a switch with a
//! C_rss curve and a slow gate drive (the fixture in `tests/fixtures/hub36/`, invented parts).
//!
//! Every figure here is checked against the register-level verifier (`pwmplan::verify`, an
//! event-based simulation of the written values), never against the model itself.

use crate::common;
use crate::random_design;

use std::path::{Path, PathBuf};

use common::{describe, run};
use pwmplan::plan::{CaseOut, Plan};
use pwmplan::verify::{self, Circuit, LegCompare, Stage, TimerRegisters};

fn fixture() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/hub36")
}

/// `plan --json --no-write` of the fixture (with `extra` arguments).
fn plan_json(dir: &Path, extra: &[&str]) -> Plan {
    let mut args = vec!["plan", "design.yaml", "--json", "--no-write"];
    args.extend_from_slice(extra);
    let o = run(dir, &args);
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
    serde_json::from_slice(&o.stdout).expect("plan.json parses")
}

/// The load and drops the plan states, at one of its cases.
fn circuit(p: &Plan, case: &CaseOut) -> Circuit {
    Circuit {
        r_ohm: p.load.r_ohm,
        l_h: p.load.l_h,
        back_emf_v: case.back_emf_v,
        v_bus_v: case.v_bus_v,
        r_ds_on_ohm: p.load.r_ds_on_ohm,
        v_sd_v: p.load.v_sd_v,
        v_f_v: 0.0,
    }
}

/// The unipolar wiring the header states: leg B at DUTY_STEPS − compare.
fn unipolar(regs: &TimerRegisters, compare: u64) -> Stage {
    Stage::HBridge {
        a: LegCompare::new(compare),
        b: LegCompare::new(regs.duty_steps() - compare),
    }
}

/// Defect 1: the plan is centre-aligned, and on the written registers the ripple has no line
/// at f (two output pulses per period), as the plan's audibility verdict assumes.
#[test]
fn unipolar_plan_is_centre_aligned_with_no_line_at_f() {
    let p = plan_json(&fixture(), &[]);
    assert_eq!(p.pwm.alignment, "centre");
    let regs = random_design::written_registers(&p);
    let rated = &p.cases[0];
    let c = circuit(&p, rated);
    let v = verify::verify(&regs, &unipolar(&regs, rated.compare), &c).expect("verifies");
    let (f1, f2) = (v.harmonic_rms_a(1), v.harmonic_rms_a(2));
    assert!(f1 < 1e-6 * f2, "line at f {f1} A against 2f {f2} A");
    assert!(p.register_check.disagreements.is_empty());
}

/// Defect 2: at the compare limits every output pulse, after the dead time, lasts the
/// minimum pulse, and the low side stays on for the refresh time, on the registers.
#[test]
fn compare_limits_hold_the_pulses_after_the_dead_time() {
    let p = plan_json(&fixture(), &[]);
    let regs = random_design::written_registers(&p);
    let leg = |c: u64| Stage::HalfBridge(LegCompare::new(c));
    let at_min = verify::output_timings(&regs, &leg(p.pwm.compare_min)).expect("timings");
    let at_max = verify::output_timings(&regs, &leg(p.pwm.compare_max)).expect("timings");
    let high = verify::shortest_pulse_s(&at_min[..1]).expect("high side switches");
    let low_on = verify::low_side_on_s(&at_max).expect("low side switches");
    assert!(high >= 400e-9 - 1e-12, "high-side pulse {high} s");
    assert!(low_on >= 1e-6 - 1e-12, "low-side on-time {low_on} s");
    // The limit is not padded beyond one count: one count less would break a promise.
    let one_less = verify::output_timings(&regs, &leg(p.pwm.compare_min - 1)).expect("timings");
    let shorter = verify::shortest_pulse_s(&one_less[..1]).expect("switches");
    assert!(
        shorter < 400e-9,
        "compare_min is the smallest that holds: {shorter} s"
    );
}

/// Defect 3: the duty the plan gives for the rated load makes up the dead time (here a slow
/// gate drive and a long dead time): on the registers the mean current at that duty is the
/// rated current within 1 %, while the duty without the correction falls well short.
#[test]
fn needed_duty_makes_up_the_dead_time() {
    let p = plan_json(&fixture(), &["--at", "24 kHz"]);
    let regs = random_design::written_registers(&p);
    let rated = &p.cases[0];
    let c = circuit(&p, rated);
    let steps = regs.duty_steps() as f64;
    let mean_at = |duty: f64| {
        let compare = (duty * steps).round() as u64;
        verify::verify(&regs, &unipolar(&regs, compare), &c)
            .expect("verifies")
            .mean_a
    };
    // Ideal unipolar leg duty for the modulation: (1 + m)/2, no dead time, no drops.
    let ideal = mean_at(0.5 * (1.0 + rated.modulation));
    let planned = mean_at(rated.compare_duty);
    // One count of quantisation moves the current by |ΔI| per count; allow it.
    let per_count = (mean_at(rated.compare_duty + 1.0 / steps) - planned).abs();
    assert!(
        (planned - rated.load_current_a).abs() <= 0.01 * rated.load_current_a + per_count,
        "planned duty gives {planned} A for {} A",
        rated.load_current_a
    );
    assert!(
        ideal < 0.8 * rated.load_current_a,
        "without the dead-time correction the current would be {ideal} A"
    );
    assert!(p.register_check.disagreements.is_empty());
}

/// A slow hub motor whose impedance (62 mΩ, 10 Hz electrical) is tiny against the dead time's
/// voltage (`tests/fixtures/stiff-hub/`, invented parts): the dead time's harmonics distort
/// the phase current so strongly that the harmonic balance does not settle, and the plan
/// follows the averaged bridge in time instead. The register-level simulation of the written
/// compares must then drive the plan's phase-current peak within 1 % in both cases, with no
/// `dead-time-distortion` warning and nothing left unchecked about the phase currents.
#[test]
fn strong_dead_time_distortion_is_followed_in_time() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/stiff-hub");
    let p = plan_json(&dir, &[]);
    assert!(
        !p.findings.iter().any(|f| f.code == "dead-time-distortion"),
        "{:?}",
        p.findings
    );
    let t = p.three_phase.as_ref().expect("three-phase block");
    assert_eq!(p.register_check.cases.len(), 2, "{:?}", p.register_check);
    for c in &p.register_check.cases {
        let planned = if c.name == "rated" {
            t.rated.current_a
        } else {
            t.high_bus.current_a
        };
        assert!(
            (c.mean_a / planned - 1.0).abs() < 0.01,
            "{}: registers drive {} A, the plan says {planned} A",
            c.name,
            c.mean_a
        );
    }
    assert!(p.register_check.disagreements.is_empty());
}

/// A three-phase design whose highest-frequency alternative lies where the phase-ripple
/// model is outside its accuracy (`tests/fixtures/wide-ripple-bldc/`, a random design of
/// the register verifier, invented parts; ripple 1.4 times the current). The plan is still
/// written, and every alternative it offers is one whose registers do what its figures say:
/// an alternative left out is named by an `alternative-withheld` warning with the
/// disagreement, never silently dropped and never a reason to write nothing.
#[test]
fn unverified_alternative_is_withheld_not_fatal() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/wide-ripple-bldc");
    let p = plan_json(&dir, &[]);
    assert!(p.feasible);
    assert!(p.register_check.disagreements.is_empty());
    let withheld: Vec<&str> = p
        .findings
        .iter()
        .filter(|f| f.code == "alternative-withheld")
        .map(|f| f.message.as_str())
        .collect();
    for label in ["highest-frequency", "lowest-frequency", "rounder-frequency"] {
        let offered = p.alternatives.iter().any(|a| a.label == label);
        let named = withheld
            .iter()
            .any(|m| m.contains(&format!("the {label} alternative")));
        assert!(!(offered && named), "{label}: offered and withheld");
    }
    for m in &withheld {
        assert!(m.contains("the registers give"), "{m}");
        assert_eq!(
            p.findings
                .iter()
                .find(|f| f.message == *m)
                .map(|f| f.severity.as_str()),
            Some("warning")
        );
    }
    // Today the model misses the highest-frequency alternative's ripple by about 6 %.
    println!("withheld: {withheld:?}");
}

/// Few PWM periods per electrical period (`tests/fixtures/slow-pwm-bldc/`, a random design of
/// the register verifier, invented parts: 22 at 4 kHz, ripple half the current, a 0.3 µs
/// dead time). Within one period the fundamental turns 16°, so the current at a leg's edges,
/// about a quarter period either side of the centre, is not the period's mean; which side
/// of the dead time an edge falls on (the ripple's narrow active pulses shift by it) follows
/// the current where it has turned to. Before the ripple model took that into account the
/// plan was 1.01 % below the registers at 4 kHz and 0.57 % at 8 kHz; now within 0.07 % and 0.24 %
/// (held to 0.4 %, our own bound).
#[test]
fn ripple_follows_the_fundamental_within_a_slow_period() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/slow-pwm-bldc");
    for at in ["4 kHz", "8 kHz"] {
        let p = plan_json(&dir, &["--at", at]);
        assert!(p.register_check.disagreements.is_empty());
        assert_eq!(p.register_check.cases.len(), 2, "{at}: both cases checked");
        for c in &p.register_check.cases {
            let case = p.cases.iter().find(|k| k.name == c.name).expect("case");
            let rel = c.ripple_pp_a / case.ripple_peak_to_peak_a - 1.0;
            assert!(
                rel.abs() <= 0.004,
                "{at} {}: the registers give {} A peak to peak, the plan {} A ({:+.2} %)",
                c.name,
                c.ripple_pp_a,
                case.ripple_peak_to_peak_a,
                100.0 * rel
            );
        }
    }
}

/// DEAD_TIME_TICKS counts the dead-time generator's clock, which this board divides by two
/// from the 120 MHz timer clock: 19 ticks of 60 MHz are the header's 316.7 ns (19/60 MHz, by
/// hand), and both emitted files say which clock, so the ticks are not read as timer ticks.
/// The board gives no minimum pulse, and the register check's row says so in words.
#[test]
fn dead_time_ticks_name_their_clock() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/slow-pwm-bldc");
    let out = tempfile::tempdir().expect("temporary folder");
    let out_arg = out.path().to_string_lossy().to_string();
    let o = run(&dir, &["plan", "design.yaml", "--out", &out_arg]);
    assert_eq!(o.status.code(), Some(0), "{}", describe(&o));
    let header = std::fs::read_to_string(out.path().join("slow_pwm_bldc_pwm.h")).expect("header");
    let module = std::fs::read_to_string(out.path().join("slow_pwm_bldc_pwm.rs")).expect("module");
    assert!(
        header.contains("#define SLOW_PWM_BLDC_PWM_DEAD_TIME_TICKS 19U"),
        "{header}"
    );
    assert!(header.contains("(316.7 ns;\n * ticks of the dead-time generator's clock, 60.000 MHz, not of the counter's 120.00 MHz)"), "{header}");
    assert!(
        module.contains(
            "ticks of the dead-time generator's clock, 60.000 MHz, not of the counter's 120.00 MHz"
        ),
        "{module}"
    );
    assert!(
        header.contains(
            "at COMPARE_MAX (the board gives no minimum pulse, bootstrap refresh 970 ns)"
        ),
        "{header}"
    );
}
