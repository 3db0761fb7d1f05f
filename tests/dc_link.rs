//! One DC-link shunt on a three-phase bridge, checked on the registers a plan writes by an
//! independent simulation: over random sinusoidal designs, the compares of many angles (and
//! of arbitrary triples within the compare limits) go through the plan's shifting rule (the
//! rule the emitted helpers compute: `tests/emitted_code.rs` holds them to it), each leg's
//! up- and down-count compares are loaded into the register-level verifier
//! (`pwmplan::verify`, dead time inserted), and from the simulated switch states, with
//! random phase currents, this test works out what the shunt carries: the sum of the currents
//! of the legs whose high side conducts (a leg in its dead time conducting through the diode
//! its current forces on). It checks that
//! - over each reading's window (the settling before the trigger, the acquisition after) no
//!   leg switches and none is in its dead time, and the shunt carries the phase current the
//!   helper names with the sign it names;
//! - each leg's on-time per period is kept (`up + down = 2·compare`), every compare within
//!   the counter;
//! - at every angle of the modulation the plan needs, the shift fits (the plan promises it);
//!   where the rule gives up on an arbitrary triple, a brute force finds no shift that keeps the
//!   legs' order.

use std::path::Path;

use pwmplan::design::load_design;
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::physics::three_phase::dc_link::{self, DcLinkTiming};
use pwmplan::physics::three_phase::{ZeroSequence, leg_duties};
use pwmplan::plan::{self, Plan};
use pwmplan::register_check;
use pwmplan::solve;
use pwmplan::verify::{self, Circuit, LegCompare, LegState, Stage, SwitchInterval};

use crate::random_design;
use random_design::*;

/// A random sinusoidal three-phase design read through one DC-link shunt; `None` when it is
/// not feasible.
fn random_plan(r: &mut Rng, dir: &Path) -> Result<Option<Plan>, String> {
    let modulation = *r.pick(&[
        "sinusoidal: { zero_sequence: none }",
        "sinusoidal: { zero_sequence: min-max }",
    ]);
    let (switch, v_dss) = switch_text(r);
    let board = board_text(r, "three-phase", modulation, true)
        .replacen(" us\" }\n", " us\", place: supply-return }\n", 1)
        .replacen(
            "    fpu:",
            "    update_divider: { max: 1, each_extreme: true }\n    fpu:",
            1,
        );
    let design = design_text(r, v_dss, true, false);
    for (name, text) in [
        ("switch.yaml", &switch),
        ("board.yaml", &board),
        ("design.yaml", &design),
    ] {
        std::fs::write(dir.join(name), text).map_err(|e| e.to_string())?;
    }
    let d = load_design(Origin::Disk(dir.join("design.yaml")))
        .map_err(|e| format!("{e}\n--- board\n{board}\n--- design\n{design}"))?;
    let ev = Evaluator::new(&d);
    let obj = objective(
        design
            .lines()
            .last()
            .unwrap_or("")
            .trim_start_matches("  objective: "),
    );
    let sol = solve::solve(&ev, obj);
    let Some(p) = plan::build(&d, &ev, &sol, None).filter(|p| p.feasible) else {
        return Ok(None);
    };
    // The product's own check of the written registers agrees with the plan.
    let check = register_check::check(&register_check::RegisterView::of(&p));
    if !check.disagreements.is_empty() {
        return Err(format!(
            "the register check disagrees: {:?}\n{board}\n{design}",
            check.disagreements
        ));
    }
    Ok(Some(p))
}

/// One leg's simulated switch timeline over a period (any load: the states do not depend on
/// it).
fn leg_timeline(
    regs: &verify::TimerRegisters,
    up: u64,
    down: u64,
) -> Result<Vec<SwitchInterval>, String> {
    let probe = Circuit {
        r_ohm: 1.0,
        l_h: 1e-3,
        back_emf_v: 0.0,
        v_bus_v: 10.0,
        r_ds_on_ohm: 0.0,
        v_sd_v: 0.0,
        v_f_v: 0.0,
    };
    let stage = Stage::HalfBridge(LegCompare::new(up).halves(down));
    verify::verify(regs, &stage, &probe)
        .map(|v| v.timeline)
        .map_err(|e| format!("{e:?}"))
}

fn state_at(timeline: &[SwitchInterval], t: f64) -> LegState {
    timeline
        .iter()
        .find(|iv| iv.t0_s <= t && t < iv.t1_s)
        .or(timeline.last())
        .map_or(LegState::Dead, |iv| iv.a)
}

/// What the DC-link shunt carries with the legs in these states and these phase currents
/// (out of the legs): a leg conducts to the positive rail when its high side is on, or in its
/// dead time when its current flows into it (through the high-side diode).
fn shunt_current(states: [LegState; 3], i: [f64; 3]) -> f64 {
    (0..3)
        .filter(|&k| match states[k] {
            LegState::High => true,
            LegState::Dead => i[k] < 0.0,
            LegState::Low => false,
        })
        .map(|k| i[k])
        .sum()
}

/// One period's compares checked on the simulated registers; `Ok(false)` when the rule gave
/// up (allowed only where the middle compare is within half a vector of an extreme).
fn check_period(
    p: &Plan,
    t: &DcLinkTiming,
    c: [u64; 3],
    currents: [f64; 3],
) -> Result<bool, String> {
    let regs = written_registers(p);
    let steps = regs.duty_steps();
    let Some(s) = dc_link::shift_compares(c, steps, t) else {
        return if order_keeping_shift_exists(c, steps, t.min_vector_counts) {
            Err(format!(
                "compares {c:?}: the rule gave up where a shift keeping the legs' order exists"
            ))
        } else {
            Ok(false)
        };
    };
    for k in 0..3 {
        if s.up[k] + s.down[k] != 2 * c[k] || s.up[k] > steps || s.down[k] > steps {
            return Err(format!(
                "compares {c:?}: leg {k} up {} down {}",
                s.up[k], s.down[k]
            ));
        }
    }
    let lines: Vec<Vec<SwitchInterval>> = (0..3)
        .map(|k| leg_timeline(&regs, s.up[k], s.down[k]))
        .collect::<Result<_, _>>()?;
    let cs = p
        .three_phase
        .as_ref()
        .and_then(|tp| tp.dc_link.as_ref())
        .ok_or("no dc_link")?;
    let tick = regs.tick_s;
    for r in 0..2 {
        let trig = s.triggers[r] as f64 * tick;
        // From the settling's start to the acquisition's end, a thousandth of a tick inside
        // (the window may touch its vector's edges), sampled every quarter tick.
        let (a, b) = (
            trig - cs.settle_time_s + 1e-3 * tick,
            trig + cs.sample_time_s - 1e-3 * tick,
        );
        let n = (((b - a) / (0.25 * tick)).ceil() as usize).max(4);
        let mut first = None;
        for j in 0..=n {
            let time = a + (b - a) * j as f64 / n as f64;
            let states = [0, 1, 2].map(|k| state_at(&lines[k], time));
            if states.contains(&LegState::Dead) || first.is_some_and(|f| f != states) {
                return Err(format!(
                    "compares {c:?} → up {:?} down {:?}: reading {r} (trigger {}) sees legs {states:?} at {:.4} µs",
                    s.up,
                    s.down,
                    s.triggers[r],
                    time * 1e6
                ));
            }
            first.get_or_insert(states);
        }
        let states = first.ok_or("empty window")?;
        let carried = shunt_current(states, currents);
        let named = f64::from(s.signs[r]) * currents[s.legs[r]];
        if (carried - named).abs() > 1e-9 {
            return Err(format!(
                "compares {c:?}: reading {r} carries {carried} A, the helper names {named} A (legs {states:?})"
            ));
        }
    }
    Ok(true)
}

/// Brute force over every up-count compare of the middle leg: is there an up-count triple in
/// the legs' order, `n` apart, with every leg's up and down count (`2c − u`) within `0..=p`?
fn order_keeping_shift_exists(c: [u64; 3], p: u64, n: u64) -> bool {
    let mut order = [0usize, 1, 2];
    order.sort_by(|&a, &b| c[b].cmp(&c[a]).then(a.cmp(&b)));
    let [hi, mid, lo] = order;
    // The up counts leg k may take: both counts within the counter.
    let range = |k: usize| ((2 * c[k]).saturating_sub(p), (2 * c[k]).min(p));
    let ((hi_a, hi_b), (mid_a, mid_b), (lo_a, lo_b)) = (range(hi), range(mid), range(lo));
    (mid_a..=mid_b).any(|u| {
        u + n <= hi_b && hi_a.max(u + n) <= hi_b && u >= n && lo_a + n <= u && lo_a <= lo_b
    })
}

/// Random phase currents summing to zero.
fn currents(r: &mut Rng) -> [f64; 3] {
    let (a, b) = (r.range(-10.0, 10.0), r.range(-10.0, 10.0));
    [a, b, -a - b]
}

#[test]
fn dc_link_readings_hold_on_the_written_registers() {
    let mut r = Rng(0xDC11_2026_1204);
    let tmp = tempfile::tempdir().unwrap();
    let (mut plans, mut periods, mut gave_up, mut draws) = (0, 0, 0, 0);
    let mut failures = Vec::new();
    while plans < 24 && draws < 400 {
        draws += 1;
        let p = match random_plan(&mut r, tmp.path()) {
            Ok(Some(p)) => p,
            Ok(None) => continue,
            Err(e) => {
                failures.push(e);
                continue;
            }
        };
        plans += 1;
        let tp = p.three_phase.as_ref().expect("three-phase");
        let dl = tp.dc_link.as_ref().expect("a DC-link plan");
        let t = DcLinkTiming {
            lead_counts: dl.lead_counts,
            min_vector_counts: dl.min_vector_counts,
        };
        let zs = if tp.zero_sequence.as_deref() == Some("min-max") {
            ZeroSequence::MinMax
        } else {
            ZeroSequence::None
        };
        let steps = p.timer.duty_steps as f64;
        let (lo, hi) = (p.pwm.compare_min, p.pwm.compare_max);
        // The modulation the plan needs, at random angles: the shift must fit every one.
        for _ in 0..150 {
            let m = r.range(0.0, dl.needed_modulation);
            let theta = r.range(0.0, std::f64::consts::TAU);
            let c = leg_duties(m, zs, theta).map(|d| ((d * steps).round() as u64).clamp(lo, hi));
            let i = currents(&mut r);
            match check_period(&p, &t, c, i) {
                Ok(true) => periods += 1,
                Ok(false) => failures.push(format!(
                    "{}: at modulation {m:.3} (needed {:.3}) the shift did not fit {c:?}",
                    p.design, dl.needed_modulation
                )),
                Err(e) => failures.push(format!("{}: {e}", p.design)),
            }
        }
        // Arbitrary triples within the compare limits.
        for _ in 0..150 {
            let c = [0, 1, 2]
                .map(|_| lo + (r.unit() * (hi - lo + 1) as f64) as u64)
                .map(|x| x.min(hi));
            let i = currents(&mut r);
            match check_period(&p, &t, c, i) {
                Ok(true) => periods += 1,
                Ok(false) => gave_up += 1,
                Err(e) => failures.push(format!("{}: {e}", p.design)),
            }
        }
    }
    eprintln!(
        "{plans} DC-link plans of {draws} draws, {periods} periods checked, {gave_up} arbitrary triples left unshifted near an extreme"
    );
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    assert!(
        plans >= 20,
        "only {plans} feasible DC-link plans of {draws}"
    );
}
