//! The dead-time compensation a plan writes (`…_DEAD_TIME_COMP_COUNTS`, the helpers'
//! `compare_compensated` / `Duty::compensated`), checked on the register-level verifier: at
//! the rated compare of random designs of every stage with complementary outputs, with
//! forward current through lossless switches and diodes, the compare moved by the written
//! counts puts the reference's voltage on the motor again, within half a count of the
//! carrier (the rounding of the written counts), and the counts match the loss the verifier
//! measures without them within 3 %.

use std::path::Path;

use pwmplan::design::load_design;
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::model::verify::{self, Circuit};
use pwmplan::plan::{self, Plan};
use pwmplan::solve;

use crate::random_design;
use random_design::*;

fn random_plan(r: &mut Rng, dir: &Path, kind: usize) -> Option<Plan> {
    let (topology, modulation) = TOPOLOGIES[kind];
    let (switch, v_dss) = switch_text(r);
    let board = board_text(r, topology, modulation, false);
    let design = design_text(r, v_dss, false, false);
    std::fs::write(dir.join("switch.yaml"), &switch).unwrap();
    std::fs::write(dir.join("board.yaml"), &board).unwrap();
    std::fs::write(dir.join("design.yaml"), &design).unwrap();
    let d = load_design(Origin::Disk(dir.join("design.yaml"))).ok()?;
    let ev = Evaluator::new(&d);
    let sol = solve::solve(&ev, objective("least-loss"));
    plan::build(&d, &ev, &sol, None).filter(|p| p.feasible)
}

/// `(error of the compensated voltage in counts, measured loss / written counts − 1)`, or
/// `None` where the rated current is not forward and continuous (the compensation's sign
/// would not hold through the period).
fn check(p: &Plan) -> Option<(f64, f64)> {
    let rated = p.cases.iter().find(|c| c.name == "rated")?;
    let regs = written_registers(p);
    let circuit = Circuit {
        r_ohm: p.load.r_ohm,
        l_h: p.load.l_h,
        back_emf_v: rated.back_emf_v,
        v_bus_v: rated.v_bus_v,
        r_ds_on_ohm: 0.0,
        v_sd_v: 0.0,
        v_f_v: 0.0,
    };
    let steps = p.timer.duty_steps;
    let comp = p.pwm.dead_time_comp_counts;
    let c = rated.compare;
    let moved = c + comp.round() as u64;
    if moved >= steps || c == 0 {
        return None;
    }
    let plain = verify::verify(&regs, &written_stage(&p.topology, steps, c), &circuit).ok()?;
    let fixed = verify::verify(&regs, &written_stage(&p.topology, steps, moved), &circuit).ok()?;
    if !plain.continuous || !fixed.continuous || plain.min_a <= 0.0 || fixed.min_a <= 0.0 {
        return None;
    }
    // Volts per compare count on the motor: the reference duty's voltage over its counts.
    let per_count = if p.topology.starts_with("h-bridge") {
        2.0
    } else {
        1.0
    } * rated.v_bus_v
        / steps as f64;
    // The compensated compare's voltage against the plain compare's reference voltage.
    let error_counts = (fixed.voltage.mean_v - plain.voltage.ideal_v) / per_count;
    let loss_counts = -plain.voltage.dead_time_v / per_count;
    Some((error_counts, loss_counts / comp - 1.0))
}

#[test]
fn the_written_counts_make_up_the_dead_time() {
    let mut r = Rng(0xDEAD_2026_1204);
    let tmp = tempfile::tempdir().unwrap();
    let (mut compared, mut worst_error, mut worst_size) = (0, 0.0_f64, 0.0_f64);
    let mut failures = Vec::new();
    for k in 0..240 {
        // Half-bridge, bipolar and unipolar H-bridges (the single switch has no dead time).
        let kind = 1 + k % 3;
        let Some(p) = random_plan(&mut r, tmp.path(), kind) else {
            continue;
        };
        assert!(p.pwm.dead_time_comp_counts > 0.0, "{}", p.topology);
        let Some((error, size)) = check(&p) else {
            continue;
        };
        compared += 1;
        worst_error = worst_error.max(error.abs());
        worst_size = worst_size.max(size.abs());
        if error.abs() > 0.5 + 1e-6 || size.abs() > 0.03 {
            failures.push(format!(
                "{} {} at {:.0} Hz: compensated voltage {error:.3} counts off, the loss {:.1} % beside the written {:.3} counts",
                p.topology,
                p.pwm.alignment,
                p.pwm.frequency_hz,
                100.0 * size,
                p.pwm.dead_time_comp_counts
            ));
        }
    }
    eprintln!(
        "{compared} plans: compensated voltage within {worst_error:.3} counts, the written counts within {:.2} % of the measured loss",
        100.0 * worst_size
    );
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    assert!(compared >= 60, "only {compared} plans compared");
}
