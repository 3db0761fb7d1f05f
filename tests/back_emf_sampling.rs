//! Sensorless six-step: the emitted back-EMF triggers on random designs, checked against the
//! timer as this file models it from the PWM mode the plan states, not through the model's
//! window arithmetic nor the product's register check.
//!
//! The timer (the emitted convention): an up-down counter 0 → P → 0, one tick = divider /
//! clock, the period 2P ticks with the counter bottom at t = 0; a count k is reached at k·tick
//! counting up and (2P − k)·tick counting down. A channel's high-side reference is on while the
//! counter is below its compare C, i.e. over [−C, C) ticks around the bottom, and every output
//! turns on a dead time after its reference edge. A chopping high side (high-side and
//! complementary chopping) is loaded with its on-time counts n; a chopping low side with
//! P − n, so it conducts over [P − n, P + n] ticks around the top. The state read in the
//! on-time is the chopping switch's gate on; in the off-time, the other part of the period,
//! begun a dead time after the chopping switch's turn-off (where the partner would turn on).
//!
//! For every plan: at the plan's compare limits and at the rated on-time, wherever the plan
//! claims a window, the trigger must find the state begun at least the settling time before
//! and lasting at least the acquisition after; and two counts below the claimed least
//! on-time (above the claimed most, for the off-time), the same check must fail, so the
//! claim is not loose by more than its rounding.

use std::path::Path;

use pwmplan::design::load_design;
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::plan::{self, Plan};
use pwmplan::register_check::{self, RegisterView};
use pwmplan::solve;

use crate::random_design;
use random_design::*;

/// The timer as the test reads it from a plan.
struct Timer {
    tick_s: f64,
    p: u64,
    dead_s: f64,
}

impl Timer {
    fn of(plan: &Plan) -> Timer {
        Timer {
            tick_s: plan.timer.divider as f64 / plan.timer.clock_hz,
            p: plan.timer.duty_steps,
            dead_s: plan.timer.dead_time_s,
        }
    }

    fn period_s(&self) -> f64 {
        2.0 * self.p as f64 * self.tick_s
    }

    /// When count `k` is matched in the direction given, s after the bottom.
    fn at(&self, k: u64, up: bool) -> f64 {
        if up {
            k as f64 * self.tick_s
        } else {
            (2 * self.p - k) as f64 * self.tick_s
        }
    }

    /// The chopping switch's on-state at on-time counts `n` as (start, end), s, in a frame
    /// where the state's middle is the chopping extreme: the bottom for a high side, the
    /// top for a low side. The off-state is the rest of the period, begun a dead time after
    /// the on-state ends.
    fn on_state(&self, n: u64) -> (f64, f64) {
        let half = n as f64 * self.tick_s;
        (-half + self.dead_s, half)
    }

    /// How long the state (`on`: the on-state, else the off-state) has held at `t` and holds
    /// after it, s; (0, 0) when `t` is outside it.
    fn held(&self, low_side: bool, n: u64, on: bool, t: f64) -> (f64, f64) {
        let period = self.period_s();
        // Into the frame centred on the chopping extreme.
        let centre = if low_side { 0.5 * period } else { 0.0 };
        let x = (t - centre + 0.5 * period).rem_euclid(period) - 0.5 * period;
        let (s0, s1) = self.on_state(n);
        if on {
            if s0 <= x && x <= s1 {
                (x - s0, s1 - x)
            } else {
                (0.0, 0.0)
            }
        } else {
            // From s1 + dead time to s0 − dead time + period (the next turn-on's reference
            // edge).
            let (o0, o1) = (s1 + self.dead_s, s0 - self.dead_s + period);
            let y = if x < s0 { x + period } else { x };
            if o0 <= y && y <= o1 {
                (y - o0, o1 - y)
            } else {
                (0.0, 0.0)
            }
        }
    }
}

/// A random sensorless six-step design's plan, `None` when refused or nothing was chosen.
fn random_plan(r: &mut Rng, dir: &Path, chop: &str) -> Option<Plan> {
    let (switch, v_dss) = switch_text(r);
    let modulation = format!("six-step: {{ chop: {chop}, rotor_position: back-emf }}");
    let board = board_text(r, "three-phase", &modulation, true);
    let mut design = design_text(r, v_dss, true, true);
    if r.chance(0.5) {
        design = design.replace(
            "    pole_pairs:",
            "    back_emf_shape: trapezoidal\n    pole_pairs:",
        );
    }
    std::fs::write(dir.join("switch.yaml"), &switch).ok()?;
    std::fs::write(dir.join("board.yaml"), &board).ok()?;
    std::fs::write(dir.join("design.yaml"), &design).ok()?;
    let d = load_design(Origin::Disk(dir.join("design.yaml"))).ok()?;
    let ev = Evaluator::new(&d);
    let sol = solve::solve(&ev, objective("least-loss"));
    plan::build(&d, &ev, &sol, None)
}

#[test]
fn emitted_back_emf_triggers_sit_in_the_state_they_claim() {
    let dir = tempfile::tempdir().expect("temp dir");
    let mut r = Rng(0x5EED_2026_0B3F);
    let chops = ["high-side", "low-side", "complementary"];
    // 15 by default (each six-step plan simulates its bridge switch by switch
    // at every setting the search judges): `PWMPLAN_RANDOM_DESIGNS=8000` runs 60.
    let n_designs = designs_to_run(15);
    let (mut planned, mut checked, mut without) = (0usize, 0usize, 0usize);
    let mut margin = (f64::INFINITY, f64::INFINITY);
    let mut failures = Vec::new();
    for i in 0..n_designs {
        let chop = chops[i % chops.len()];
        let Some(plan) = random_plan(&mut r, dir.path(), chop) else {
            continue;
        };
        planned += 1;
        let tp = plan.three_phase.as_ref().expect("a three-phase block");
        let Some(b) = tp.back_emf.as_ref() else {
            // No window (or a commutation that never ends): the plan must say so.
            without += 1;
            let said = plan
                .findings
                .iter()
                .any(|f| f.code == "back-emf-sampling" || f.code == "six-step-commutation");
            if !said {
                failures.push(format!(
                    "design {i} ({chop}): no back-EMF record and no finding"
                ));
            }
            continue;
        };
        let t = Timer::of(&plan);
        let low = chop == "low-side";
        let (c_lo, c_hi) = (plan.pwm.compare_min, plan.pwm.compare_max);
        let (n_lo, n_hi) = if low {
            (t.p - c_hi, t.p - c_lo)
        } else {
            (c_lo, c_hi)
        };
        let on_t = t.at(b.on_trigger_count, b.on_trigger_direction == "up");
        let off_t = t.at(b.off_trigger_count, b.off_trigger_direction == "up");
        let holds = |n: u64, on: bool| {
            let (before, after) = t.held(low, n, on, if on { on_t } else { off_t });
            (
                before + 1e-12 >= b.settle_time_s && after + 1e-12 >= b.sample_time_s,
                before - b.settle_time_s,
                after - b.sample_time_s,
            )
        };
        let mut claims = Vec::new();
        for n in [b.on_counts_min.max(n_lo), n_hi, b.rated_counts] {
            if n >= b.on_counts_min && (n_lo..=n_hi).contains(&n) {
                claims.push((n, true));
            }
        }
        for n in [n_lo, b.off_counts_max.min(n_hi), b.rated_counts] {
            if n <= b.off_counts_max && (n_lo..=n_hi).contains(&n) {
                claims.push((n, false));
            }
        }
        for (n, on) in claims {
            checked += 1;
            let (ok, m_before, m_after) = holds(n, on);
            margin = (margin.0.min(m_before), margin.1.min(m_after));
            if !ok {
                failures.push(format!(
                    "design {i} ({chop}): at {n} on-time counts the {} trigger misses its window: {m_before:.3e} s settling and {m_after:.3e} s acquisition to spare",
                    if on { "on-time" } else { "off-time" }
                ));
            }
        }
        // Not loose: two counts short of the claim the window does not hold.
        if b.on_counts_min >= 2 && holds(b.on_counts_min - 2, true).0 {
            failures.push(format!(
                "design {i} ({chop}): the on-time holds the window at {} counts, the plan claims {} are needed",
                b.on_counts_min - 2,
                b.on_counts_min
            ));
        }
        if b.off_counts_max + 2 <= t.p && holds(b.off_counts_max + 2, false).0 {
            failures.push(format!(
                "design {i} ({chop}): the off-time holds the window at {} counts, the plan claims at most {}",
                b.off_counts_max + 2,
                b.off_counts_max
            ));
        }
        // The blanking covers the commutation interval, in whole periods.
        for k in &b.blanking {
            if let (Some(s), Some(n)) = (k.commutation_s, k.periods)
                && (n as f64) < s * plan.pwm.frequency_hz - 1e-9
            {
                failures.push(format!(
                    "design {i} ({chop}): {n} blanking periods do not cover {s:.3e} s"
                ));
            }
        }
        // The product's own register check agrees and says what it measured.
        let check = register_check::check(&RegisterView::of(&plan));
        let disagree: Vec<_> = check
            .disagreements
            .iter()
            .filter(|m| m.starts_with("back-EMF"))
            .collect();
        if check.back_emf_before_s.is_none() || !disagree.is_empty() {
            failures.push(format!(
                "design {i} ({chop}): the register check measured {:?} and says {disagree:?}",
                check.back_emf_before_s
            ));
        }
    }
    eprintln!(
        "{planned} plans of {n_designs} designs, {checked} trigger claims checked, {without} without a window; least spare settling {:.3e} s, acquisition {:.3e} s",
        margin.0, margin.1
    );
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    assert!(
        checked >= n_designs,
        "only {checked} trigger claims checked over {planned} plans"
    );
}
