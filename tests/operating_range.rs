//! The operating range, checked against methods that cannot share its shortcuts.
//!
//! 1. [`collapsed_range_reproduces_the_rated_plan`]: a design whose range is the
//!    single rated speed (constant torque) plans exactly as the same design
//!    without a range, on the bundled designs and on random designs of every
//!    topology (the written plan compared field by field, the design's own
//!    name and the input list aside).
//! 2. [`range_ripple_matches_a_dense_scan`]: for random designs of every
//!    topology with random speed spans and load lines (constant torque, fan
//!    law, a table that may rise and fall; a quarter holding at standstill),
//!    the worst ripple the plan reports
//!    for its chosen setting equals the maximum of a dense, uniform scan of the
//!    whole span at both supplies the plan judges (brute force, 400 speeds,
//!    160 on a three-phase bridge, plus every knot), within 0.5 %. On a
//!    three-phase bridge the range is judged directly at a random setting
//!    rather than solved (a solve over a range costs seconds there).
//! 3. [`standstill_junction_is_a_dc_leg`]: a sinusoidal bridge holding at
//!    standstill against a half-bridge leg carrying the same DC current.
//!
//! The random designs are invented (`random_design`); `PWMPLAN_RANDOM_DESIGNS=N`
//! scales how many run.

use crate::random_design;
use random_design::*;

use std::path::Path;

use pwmplan::design::{Design, load_design};
use pwmplan::load::Origin;
use pwmplan::model::range::RangeExtreme;
use pwmplan::model::{Evaluator, OperatingCase};
use pwmplan::physics::load_line::OperatingRange;
use pwmplan::plan;
use pwmplan::solve::{self, Objective};
use pwmplan::spec::ObjectiveSpec;
use rayon::prelude::*;

/// The bundled designs (every bundled topology).
const BUNDLED: [&str; 4] = [
    "belt-feeder.yaml",
    "vent-fan.yaml",
    "winch.yaml",
    "pump-bldc.yaml",
];

/// The design's objective.
fn objective_of(d: &Design) -> Objective {
    match d.spec.objective {
        ObjectiveSpec::LeastLoss => Objective::LeastLoss,
        ObjectiveSpec::Quietest => Objective::Quietest,
        ObjectiveSpec::CoolestJunction => Objective::CoolestJunction,
        ObjectiveSpec::LeastAverageLoss => Objective::LeastAverageLoss,
        ObjectiveSpec::LeastWorstLoss => Objective::LeastWorstLoss,
    }
}

/// The design's rated speed as written (`operating_speed: "…"`).
fn rated_speed_text(design: &str) -> String {
    design
        .split("operating_speed: \"")
        .nth(1)
        .and_then(|t| t.split('"').next())
        .unwrap_or_else(|| panic!("no operating_speed in\n{design}"))
        .to_string()
}

/// `design` with `operating_range` added under `design:`.
fn with_range(design: &str, range_yaml: &str) -> String {
    let mut out = design.trim_end().to_string();
    out.push_str("\n  operating_range: ");
    out.push_str(range_yaml);
    out.push('\n');
    out
}

/// The plan of the design file `path`, as JSON, without the fields that name
/// the input files (which differ by construction); `None` when nothing was
/// chosen.
fn plan_json(path: &Path) -> Result<Option<serde_json::Value>, String> {
    let d = load_design(Origin::Disk(path.to_path_buf())).map_err(|e| e.to_string())?;
    let ev = Evaluator::new(&d);
    let sol = solve::solve(&ev, objective_of(&d));
    let Some(p) = plan::build(&d, &ev, &sol, None) else {
        return Ok(None);
    };
    let mut v = serde_json::to_value(&p).map_err(|e| e.to_string())?;
    if let Some(m) = v.as_object_mut() {
        m.remove("inputs");
        m.remove("generated");
        m.remove("operating_range");
    }
    Ok(Some(v))
}

/// Plan `design` and the same design with its range collapsed to the rated
/// speed, both in `dir`; a difference is returned as text.
fn compare_collapsed(dir: &Path, design: &str) -> Result<bool, String> {
    let n = rated_speed_text(design);
    let collapsed = with_range(
        design,
        &format!("{{ speed: {{ min: \"{n}\", max: \"{n}\" }} }}"),
    );
    std::fs::write(dir.join("plain.yaml"), design).map_err(|e| e.to_string())?;
    std::fs::write(dir.join("collapsed.yaml"), &collapsed).map_err(|e| e.to_string())?;
    let plain = plan_json(&dir.join("plain.yaml"))?;
    let ranged = plan_json(&dir.join("collapsed.yaml"))?;
    match (plain, ranged) {
        (None, None) => Ok(false),
        (Some(a), Some(b)) if a == b => Ok(true),
        (a, b) => Err(format!(
            "collapsed range plans differently:\n--- without range\n{}\n--- collapsed\n{}\n--- design\n{collapsed}",
            serde_json::to_string_pretty(&a).unwrap_or_default(),
            serde_json::to_string_pretty(&b).unwrap_or_default()
        )),
    }
}

#[test]
fn collapsed_range_reproduces_the_rated_plan() {
    let boards = Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
    let tmp = tempfile::tempdir().expect("temporary folder");
    // The bundled boards and switches beside the designs, so references resolve.
    for entry in std::fs::read_dir(&boards).expect("boards folder").flatten() {
        let p = entry.path();
        if p.is_file() {
            std::fs::copy(&p, tmp.path().join(entry.file_name())).expect("copy board");
        }
    }
    std::fs::create_dir_all(tmp.path().join("switches")).expect("switches folder");
    for entry in std::fs::read_dir(boards.join("switches"))
        .expect("switches")
        .flatten()
    {
        std::fs::copy(
            entry.path(),
            tmp.path().join("switches").join(entry.file_name()),
        )
        .expect("copy switch");
    }
    for name in BUNDLED {
        let text = std::fs::read_to_string(boards.join(name)).expect("bundled design");
        let text = without_range(&text);
        assert!(
            compare_collapsed(tmp.path(), &text).unwrap_or_else(|e| panic!("{name}: {e}")),
            "{name}: nothing chosen"
        );
    }
    let mut r = Rng(0x5eed_0018);
    let mut compared = 0;
    for i in 0..designs_to_run(2 * TOPOLOGIES.len()) {
        let dir = tempfile::tempdir().expect("temporary folder");
        let (design, _) = write_random(&mut r, dir.path(), i % TOPOLOGIES.len());
        match compare_collapsed(dir.path(), &design) {
            Ok(true) => compared += 1,
            Ok(false) => {}
            Err(e) if e.contains("collapsed range plans differently") => panic!("design {i}: {e}"),
            Err(_) => {} // refused as input: not this test's subject
        }
    }
    assert!(
        compared >= TOPOLOGIES.len(),
        "only {compared} random designs planned"
    );
}

/// A bundled design's text without any `operating_range` block (the plain
/// rated-point design).
fn without_range(text: &str) -> String {
    let mut out = String::new();
    let mut skipping = false;
    for line in text.lines() {
        if line.starts_with("  operating_range:") {
            skipping = true;
            continue;
        }
        if skipping && (line.starts_with("    ") || line.trim().is_empty()) {
            continue;
        }
        skipping = false;
        out.push_str(line);
        out.push('\n');
    }
    out
}

/// Writes a random design of topology `kind` into `dir` (switch, board,
/// design text returned with its switch's V_DSS).
fn write_random(r: &mut Rng, dir: &Path, kind: usize) -> (String, f64) {
    let (topology, modulation) = TOPOLOGIES[kind];
    let three_phase = topology == "three-phase";
    let (switch, v_dss) = switch_text(r);
    let board = board_text(r, topology, modulation, three_phase);
    let design = design_text(r, v_dss, three_phase, modulation.starts_with("six"));
    std::fs::write(dir.join("switch.yaml"), switch).expect("write switch");
    std::fs::write(dir.join("board.yaml"), board).expect("write board");
    (design, v_dss)
}

/// A random range around the rated speed `n_rpm`: the span from 10–80 % of
/// rated up to rated or a little above, and a load line of each kind.
fn random_range(r: &mut Rng, n_rpm: f64, above: bool) -> String {
    let lo = n_rpm * r.range(0.1, 0.8);
    let hi = if above {
        n_rpm * r.range(1.0, 1.25)
    } else {
        n_rpm
    };
    let load = match r.next_u64() % 3 {
        0 => "constant-torque".to_string(),
        1 => "fan-law".to_string(),
        _ => {
            // 2–5 points spanning the range; currents that may rise and fall.
            let k = 2 + (r.next_u64() % 4) as usize;
            let points: Vec<String> = (0..k)
                .map(|j| {
                    let n = lo + (hi - lo) * j as f64 / (k - 1) as f64;
                    format!(
                        "{{ speed: \"{n:.3} rpm\", current: \"{:.3} A\" }}",
                        r.range(0.3, 1.0)
                    )
                })
                .collect();
            format!("{{ table: [{}] }}", points.join(", "))
        }
    };
    // Holding at standstill on a quarter of the designs.
    let hold = if r.chance(0.25) {
        format!(
            ", standstill: {{ current: \"{:.3} A\" }}",
            r.range(0.2, 1.0)
        )
    } else {
        String::new()
    };
    format!("{{ speed: {{ min: \"{lo:.3} rpm\", max: \"{hi:.3} rpm\" }}, load: {load}{hold} }}")
}

/// The worst ripple over the range as a plan judges it, with the setting's
/// frequency and dead time: the chosen setting of the solved plan on a
/// single-phase stage; on a three-phase bridge (whose solve over a range
/// costs seconds) the range judged directly at a random frequency of the
/// band and a random dead time.
fn judged_ripple(
    r: &mut Rng,
    d: &Design,
    ev: &Evaluator,
    range: &OperatingRange,
    text: &str,
) -> Option<(RangeExtreme, f64, f64)> {
    if ev.three_phase.is_none() {
        let sol = solve::solve(ev, objective_of(d));
        let c = sol.chosen.as_ref()?;
        let Some(result) = c.range.as_ref() else {
            panic!("a range was given but not judged\n{text}");
        };
        return Some((result.ripple?, c.setting.frequency_hz, c.dead_time.seconds));
    }
    let (lo, hi) = (ev.limits.f_min_hz, ev.limits.f_max_hz);
    let f = r.log(lo, hi);
    let dead = r.range(100e-9, 1.5e-6);
    let rated = ev.case(&ev.rated, f, dead)?;
    let high_bus = ev.case(&ev.high_bus, f, dead)?;
    let result = ev.judge_range(range, f, dead, [&rated, &high_bus]);
    Some((result.ripple?, f, dead))
}

/// Speeds of the dense scan across `[lo, hi]` (a three-phase case costs
/// about a hundred single-phase ones: fewer there).
const SCAN_POINTS: usize = 400;
const SCAN_POINTS_THREE_PHASE: usize = 160;

#[test]
fn range_ripple_matches_a_dense_scan() {
    let mut r = Rng(0x0018_5ca9);
    let (mut checked, mut worst_gap) = (0usize, 0.0f64);
    let mut per_kind = [0usize; TOPOLOGIES.len()];
    for i in 0..designs_to_run(12 * TOPOLOGIES.len()) {
        let kind = i % TOPOLOGIES.len();
        let dir = tempfile::tempdir().expect("temporary folder");
        let (design, _) = write_random(&mut r, dir.path(), kind);
        let n_rpm: f64 = rated_speed_text(&design)
            .trim_end_matches(" rpm")
            .parse()
            .expect("rated speed in rpm");
        let path = dir.path().join("design.yaml");
        // A span above rated when the supply reaches it, else up to rated.
        let mut loaded = None;
        for above in [true, false] {
            let text = with_range(&design, &random_range(&mut r, n_rpm, above));
            std::fs::write(&path, &text).expect("write design");
            if let Ok(d) = load_design(Origin::Disk(path.clone())) {
                loaded = Some((d, text));
                break;
            }
        }
        let Some((d, text)) = loaded else { continue };
        let ev = Evaluator::new(&d);
        let Some(range) = ev.range.as_ref() else {
            panic!("design {i}: a range was given but not kept\n{text}");
        };
        let Some((found, f, dead)) = judged_ripple(&mut r, &d, &ev, range, &text) else {
            continue;
        };
        let (lo, hi) = (range.speed_min_rad_s, range.speed_max_rad_s);
        let points = if ev.three_phase.is_some() {
            SCAN_POINTS_THREE_PHASE
        } else {
            SCAN_POINTS
        };
        let mut speeds: Vec<f64> = (0..=points)
            .map(|k| lo + (hi - lo) * k as f64 / points as f64)
            .collect();
        speeds.extend(range.load.knots_within(lo, hi));
        if range.hold_current_a.is_some() {
            speeds.push(0.0);
        }
        // Both supplies at every speed, on the worker pool (the scan is the test's cost).
        let points: Vec<(OperatingCase, f64)> = [ev.rated, ev.high_bus]
            .iter()
            .flat_map(|base| speeds.iter().map(move |&n| (*base, n)))
            .collect();
        let scan_max = points
            .par_iter()
            .filter_map(|(base, n)| {
                let case = ev.range_case(range, base, *n);
                ev.at_speed(*n, |e| e.ripple_sample(&case, f, dead))
                    .map(|s| s.ripple_pp_a)
            })
            .reduce(|| 0.0f64, f64::max);
        let gap = (found.value - scan_max).abs() / scan_max;
        assert!(
            found.value >= scan_max * (1.0 - 0.005) && found.value <= scan_max * (1.0 + 0.005),
            "design {i} ({}): worst ripple {} A reported at {:.1} rpm, dense scan maximum {} A ({:.2} % apart)\n{text}",
            TOPOLOGIES[kind].0,
            found.value,
            found.at.speed_rad_s * 60.0 / (2.0 * std::f64::consts::PI),
            scan_max,
            100.0 * gap
        );
        worst_gap = worst_gap.max(gap);
        checked += 1;
        per_kind[kind] += 1;
    }
    eprintln!(
        "range ripple: {checked} designs checked, per topology {per_kind:?}, largest gap {:.4} %",
        100.0 * worst_gap
    );
    assert!(
        per_kind.iter().all(|&k| k >= 2),
        "too few designs per topology: {per_kind:?}"
    );
}

/// The bundled folder, and a temporary one holding the pump board's switch.
fn folder_with_the_pumps_switch() -> (std::path::PathBuf, tempfile::TempDir) {
    let boards = Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
    let tmp = tempfile::tempdir().expect("temporary folder");
    std::fs::create_dir_all(tmp.path().join("switches")).expect("switches folder");
    std::fs::copy(
        boards.join("switches/corrie-100.yaml"),
        tmp.path().join("switches/corrie-100.yaml"),
    )
    .expect("copy switch");
    (boards, tmp)
}

/// A sinusoidal bridge holding at standstill carries the peak current as DC
/// in one leg: its hottest junction must be that of a half-bridge leg (the
/// single-phase model, a separate code path: the exact PWM-period waveform
/// and its edges, not the per-angle average) carrying the same DC current
/// at the same duty, on the same switch, drive and thermal path. The
/// running average over the electrical period (what the plan reported
/// before) is well below it.
#[test]
fn standstill_junction_is_a_dc_leg() {
    let (boards, tmp) = folder_with_the_pumps_switch();
    let three = std::fs::read_to_string(boards.join("osprey-3p48.yaml")).expect("board");
    // zero_sequence none: the leg duty at the current's peak is the highest
    // leg duty the case reports, 0.5·(1 + m), at standstill (φ = 0).
    let three = three.replace("zero_sequence: min-max", "zero_sequence: none");
    std::fs::write(tmp.path().join("three.yaml"), &three).expect("write board");
    let half: String = three
        .lines()
        .filter(|l| {
            !l.contains("modulation:")
                && !l.contains("sinusoidal:")
                && !l.contains("current_sensing")
        })
        .map(|l| l.replace("topology: three-phase", "topology: half-bridge") + "\n")
        .collect();
    std::fs::write(tmp.path().join("half.yaml"), &half).expect("write board");
    let design = std::fs::read_to_string(boards.join("pump-bldc.yaml")).expect("design");
    std::fs::write(
        tmp.path().join("three-d.yaml"),
        design.replace("osprey-3p48.yaml", "three.yaml"),
    )
    .expect("write design");
    let brushed = "design:\n  name: leg\n  board: half.yaml\n  supply: { nominal: \"48 V\", min: \"40 V\", max: \"54 V\" }\n  motor:\n    kind: brushed-dc\n    resistance: \"0.12 ohm\"\n    inductance: \"0.25 mH\"\n    back_emf_constant: \"6 V/krpm\"\n    rated_current: \"10 A\"\n    operating_speed: \"3000 rpm\"\n  ambient: { min: \"-10 °C\", max: \"45 °C\" }\n  constraints:\n    audible: allowed\n    junction: { margin: \"20 K\" }\n  objective: least-loss\n";
    std::fs::write(tmp.path().join("half-d.yaml"), brushed).expect("write design");
    let load = |f: &str| {
        let d =
            load_design(Origin::Disk(tmp.path().join(f))).unwrap_or_else(|e| panic!("{f}: {e}"));
        Evaluator::new(&d)
    };
    let (tp, hb) = (load("three-d.yaml"), load("half-d.yaml"));
    let (f, dead) = (20e3, 500e-9);
    let mut hold = tp.rated;
    hold.back_emf_v = 0.0;
    let standstill = tp
        .at_speed(0.0, |e| e.case(&hold, f, dead))
        .expect("the bridge holds at standstill");
    let running = tp.case(&tp.rated, f, dead).expect("the rated case");
    let duty = standstill.compare_duty;
    // The half-bridge's back-EMF that gives the same duty at 10 A (bisection).
    let mut leg = hb.rated;
    let (mut lo, mut hi) = (0.0, leg.v_bus_v);
    for _ in 0..60 {
        leg.back_emf_v = 0.5 * (lo + hi);
        let d = hb.case(&leg, f, dead).expect("the leg case").compare_duty;
        if d < duty {
            lo = leg.back_emf_v
        } else {
            hi = leg.back_emf_v
        }
    }
    let dc_leg = hb.case(&leg, f, dead).expect("the leg case");
    let rise =
        |c: &pwmplan::model::CaseResult| c.junction_c.expect("a junction") - c.case.t_ambient_c;
    let (r3, r1) = (rise(&standstill), rise(&dc_leg));
    eprintln!(
        "standstill: three-phase rise {r3:.3} K at duty {duty:.4}, half-bridge DC leg {r1:.3} K at duty {:.4}; running at rated speed {:.3} K",
        dc_leg.compare_duty,
        rise(&running)
    );
    assert!(
        (r3 - r1).abs() <= 0.05 * r1,
        "standstill rise {r3} K against the DC leg's {r1} K"
    );
    assert!(
        r3 > 1.5 * rise(&running),
        "standstill {r3} K not above running {} K",
        rise(&running)
    );
}

/// `least-average-loss` chooses the feasible setting whose loss, averaged
/// over the time profile, is least: checked against every realisable
/// setting of the band (brute force), with the average recomputed here from
/// whole cases at the profile's speeds (Σ share·loss), not from the plan's
/// figures.
#[test]
fn least_average_loss_matches_a_brute_force() {
    let boards = Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
    let tmp = tempfile::tempdir().expect("temporary folder");
    std::fs::create_dir_all(tmp.path().join("switches")).expect("switches folder");
    for f in ["wren-hb24.yaml", "switches/tarn-40.yaml"] {
        std::fs::copy(boards.join(f), tmp.path().join(f)).expect("copy board");
    }
    let design = std::fs::read_to_string(boards.join("belt-feeder.yaml"))
        .expect("design")
        .replace("objective: least-loss", "objective: least-average-loss")
        .replace(
            "frequency: { min: \"16 kHz\", max: \"60 kHz\" }",
            "frequency: { min: \"19 kHz\", max: \"24 kHz\" }",
        );
    let design = with_range(
        &design,
        "{ speed: { min: \"800 rpm\", max: \"3200 rpm\" }, load: { table: [{ speed: \"800 rpm\", current: \"1.5 A\" }, { speed: \"3200 rpm\", current: \"3.5 A\" }] }, profile: [{ speed: \"800 rpm\", share: \"25 %\" }, { speed: \"1700 rpm\", share: \"45 %\" }, { speed: \"3200 rpm\", share: \"30 %\" }] }",
    );
    let path = tmp.path().join("design.yaml");
    std::fs::write(&path, &design).expect("write design");
    let d = load_design(Origin::Disk(path)).unwrap_or_else(|e| panic!("{e}"));
    let ev = Evaluator::new(&d);
    let range = ev.range.clone().expect("a range");
    let dead = ev.dead_time_choice();
    let average = |f_hz: f64| -> f64 {
        range
            .profile
            .iter()
            .map(|&(n, share)| {
                let case = ev.range_case(&range, &ev.rated, n);
                let c = ev
                    .at_speed(n, |e| e.case(&case, f_hz, dead.seconds))
                    .expect("a profile case");
                share * c.losses.total
            })
            .sum()
    };
    let mut best: Option<(f64, f64)> = None;
    for &a in &ev.alignments() {
        let settings = ev
            .timer
            .settings_in_band(ev.limits.f_min_hz, ev.limits.f_max_hz, a)
            .expect("valid band");
        for s in settings {
            let Some(c) = ev.candidate(&s, &dead).filter(|c| c.feasible) else {
                continue;
            };
            let p = average(c.setting.frequency_hz);
            if best.is_none_or(|b| p < b.0) {
                best = Some((p, c.setting.frequency_hz));
            }
        }
    }
    let (least, f_best) = best.expect("a feasible setting");
    let sol = solve::solve(&ev, Objective::LeastAverageLoss);
    let chosen = sol.chosen.as_ref().expect("a chosen setting");
    let got = average(chosen.setting.frequency_hz);
    eprintln!(
        "least average loss {least:.6} W at {f_best:.1} Hz; chosen {got:.6} W at {:.1} Hz",
        chosen.setting.frequency_hz
    );
    assert!(
        got <= least * (1.0 + 1e-9),
        "chosen {got} W, brute force {least} W"
    );
    let reported = chosen
        .range
        .as_ref()
        .and_then(|r| r.profile.as_ref())
        .expect("profile figures");
    assert!(
        (reported.mean_loss_w - got).abs() <= 1e-9 * got,
        "reported {} W",
        reported.mean_loss_w
    );
}

/// Six-step low-side chopping holds a high side on for two sectors (a third
/// of the electrical period) with no refresh: at the range's slowest speed
/// the bootstrap droops I·t/C plus the gate charge (charge balance by hand:
/// 200 µA for 1/(3·20 Hz) from 1 µF is 3.33 V); a warning above 10 % of the
/// drive, an error when the gate would fall below the plateau or the drive
/// holds at standstill, and nothing with complementary chopping.
#[test]
fn six_step_bootstrap_hold_up() {
    let (boards, tmp) = folder_with_the_pumps_switch();
    let board = std::fs::read_to_string(boards.join("osprey-3p48.yaml")).expect("board");
    let design = std::fs::read_to_string(boards.join("pump-bldc.yaml")).expect("design");
    let finding = |chop: &str, range: &str| {
        let b = board.replace(
            "sinusoidal: { zero_sequence: min-max }",
            &format!("six-step: {{ chop: {chop} }}"),
        );
        std::fs::write(tmp.path().join("osprey-3p48.yaml"), b).expect("write board");
        let path = tmp.path().join("design.yaml");
        // The hold-up depends on the slowest speed, not on the PWM frequency:
        // a narrow band keeps the search (a six-step simulation per setting
        // and range speed) short.
        let narrow = design.replace(
            "frequency: { min: \"16 kHz\", max: \"40 kHz\" }",
            "frequency: { min: \"19 kHz\", max: \"21 kHz\" }",
        );
        assert_ne!(narrow, design, "the band to narrow");
        std::fs::write(&path, with_range(&narrow, range)).expect("write design");
        let d = load_design(Origin::Disk(path)).unwrap_or_else(|e| panic!("{e}"));
        let ev = Evaluator::new(&d);
        let sol = solve::solve(&ev, objective_of(&d));
        let p = plan::build(&d, &ev, &sol, None).expect("a plan");
        let f = p
            .findings
            .into_iter()
            .find(|f| f.code == "bootstrap-hold-up");
        (f, p.feasible)
    };
    // 300 rpm, 4 pole pairs: 20 Hz, a high side held 16.7 ms.
    let (f, _) = finding(
        "low-side",
        "{ speed: { min: \"300 rpm\", max: \"3000 rpm\" } }",
    );
    let f = f.expect("a hold-up finding at 300 rpm");
    assert_eq!(f.severity, "warning", "{}", f.message);
    assert!(f.message.contains("16.7 ms"), "{}", f.message);
    let droop: f64 = f
        .message
        .split("droops ")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse().ok())
        .expect("the droop in volts");
    let by_hand = 200e-6 / (3.0 * 20.0) / 1e-6;
    assert!(
        droop >= by_hand - 0.01 && droop <= by_hand + 0.2,
        "droop {droop} V against I·t/C {by_hand} V plus the gate charge"
    );
    // 30 rpm: 167 ms, 33 V: the gate cannot stay above its plateau.
    let (f, feasible) = finding(
        "low-side",
        "{ speed: { min: \"30 rpm\", max: \"3000 rpm\" } }",
    );
    assert_eq!(f.expect("a hold-up finding at 30 rpm").severity, "error");
    assert!(!feasible, "an error finding stops the plan");
    let (f, _) = finding(
        "low-side",
        "{ speed: { min: \"1500 rpm\", max: \"3000 rpm\" }, standstill: { current: \"5 A\" } }",
    );
    assert_eq!(
        f.expect("a hold-up finding at standstill").severity,
        "error"
    );
    let (f, _) = finding(
        "complementary",
        "{ speed: { min: \"30 rpm\", max: \"3000 rpm\" } }",
    );
    assert!(
        f.is_none(),
        "complementary chopping refreshes every period: {f:?}"
    );
}

/// The sweep over a range: at the chosen frequency its range ripple is the
/// value the plan's ripple constraint judged; on every row the range's
/// worst ripple is at least the rated point's, and the range's loss band
/// holds the rated loss (the winch's rated speed is the range's top);
/// without a range, no band.
#[test]
fn sweep_shows_the_range() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("boards/winch.yaml");
    let d = load_design(Origin::Disk(path)).unwrap_or_else(|e| panic!("{e}"));
    let ev = Evaluator::new(&d);
    let sol = solve::solve(&ev, objective_of(&d));
    let c = sol.chosen.as_ref().expect("a chosen setting");
    let f = c.setting.frequency_hz;
    let freqs: Vec<f64> = (0..12).map(|k| 8e3 * 1.15f64.powi(k)).collect();
    let rows = pwmplan::sweep::sweep(&ev, &freqs, Some(f));
    let at = rows.iter().find(|r| r.chosen).expect("the chosen row");
    let ripple = c
        .checks
        .iter()
        .find(|k| k.name == "ripple")
        .and_then(|k| k.value);
    let range = at.range.expect("a range on the chosen row");
    assert_eq!(
        range.ripple_pp_max_a, ripple,
        "the sweep's range ripple against the plan's"
    );
    for r in &rows {
        let x = r.range.expect("a range on every row");
        let worst = x.ripple_pp_max_a.expect("a ripple");
        assert!(
            worst >= r.ripple_pp_a * (1.0 - 1e-12),
            "{} Hz: {worst} < {}",
            r.frequency_hz,
            r.ripple_pp_a
        );
        let t = r.losses_w.total;
        assert!(
            x.loss_min_w <= t * (1.0 + 1e-12) && t <= x.loss_max_w * (1.0 + 1e-12),
            "{} Hz: {t} W outside [{}, {}]",
            r.frequency_hz,
            x.loss_min_w,
            x.loss_max_w
        );
    }
    let mut single = ev.clone();
    single.range = None;
    let plain = pwmplan::sweep::sweep(&single, &freqs, None);
    assert!(plain.iter().all(|r| r.range.is_none()));
}

/// The register-level verifier simulates the range's points on the written
/// registers of a sinusoidal three-phase bridge too: the pump over a
/// fan-law range from 1200 rpm, where the lowest compare duty is (1.6 A at
/// 80 Hz electrical), agrees with the plan (no disagreement, the case
/// checked).
#[test]
fn three_phase_range_points_are_checked_on_the_registers() {
    let (boards, tmp) = folder_with_the_pumps_switch();
    std::fs::copy(
        boards.join("osprey-3p48.yaml"),
        tmp.path().join("osprey-3p48.yaml"),
    )
    .expect("copy board");
    let design = std::fs::read_to_string(boards.join("pump-bldc.yaml")).expect("design");
    let path = tmp.path().join("design.yaml");
    let range = "{ speed: { min: \"1200 rpm\", max: \"3000 rpm\" }, load: fan-law }";
    std::fs::write(&path, with_range(&design, range)).expect("write design");
    let d = load_design(Origin::Disk(path)).unwrap_or_else(|e| panic!("{e}"));
    let ev = Evaluator::new(&d);
    let sol = solve::solve(&ev, objective_of(&d));
    let plan = pwmplan::plan::build(&d, &ev, &sol, None).expect("a plan");
    let check = pwmplan::register_check::check(&pwmplan::register_check::RegisterView::of(&plan));
    assert!(check.disagreements.is_empty(), "{:?}", check.disagreements);
    let case = check
        .cases
        .iter()
        .find(|c| c.name == "range-lowest-duty")
        .unwrap_or_else(|| panic!("the range point was not simulated: {:?}", check.not_checked));
    assert!((case.mean_a - 1.6).abs() < 0.05 * 1.6, "{} A", case.mean_a);
}
