//! A brushed plan's current-sampling trigger checked on the registers it writes.
//!
//! Owns: reading the plan's trigger (a fixed count and direction, or the count that follows
//! the compare) as the timer matches it, and checking on the verifier's switch timeline that
//! the switching state the plan says it samples has lasted the settling time at the trigger
//! and lasts through the acquisition, at both ends of the compares the plan lets the loop
//! write. Pure: a disagreement is data.

use crate::model::current_loop::SamplingOut;
use crate::model::timer::Alignment;
use crate::model::verify::{self, LegState, Stage, SwitchInterval, TimerRegisters};
use crate::output::plan::RegisterCheck;

/// The trigger's time in the PWM period at compare `c`, s (the counter bottom or 0 at
/// `t = 0`; an up-down count reaches count `n` at `n·tick` counting up, `T − n·tick` down).
fn trigger_s(regs: &TimerRegisters, s: &SamplingOut, c: u64) -> f64 {
    let n = if s.trigger == "fixed" {
        s.trigger_count
    } else {
        ((c + s.trigger_add) / 2).saturating_sub(s.lead_ticks)
    };
    fixed_s(regs, n, s.counting_up)
}

/// Is `iv` the switching state the plan samples (`on-time`: leg A's high side, or the
/// single switch, conducting with leg B's low side; `off-time`: the opposite; `active`: leg A
/// high and leg B low)?
fn in_state(topology: &str, state: &str, iv: &SwitchInterval) -> bool {
    use LegState::*;
    match (topology, state) {
        ("low-side", "on-time") => iv.a == High,
        ("low-side", _) => iv.a == Dead,
        ("h-bridge-unipolar", "active") => iv.a == High && iv.b == Some(Low),
        ("h-bridge-unipolar", _) => iv.a == Low && iv.b == Some(Low),
        ("h-bridge-bipolar", "on-time") => iv.a == High && iv.b == Some(Low),
        ("h-bridge-bipolar", _) => iv.a == Low && iv.b == Some(High),
        (_, "on-time") => iv.a == High,
        _ => iv.a == Low,
    }
}

/// How long the state has held before `t` and holds after it, s, over the periodic timeline.
fn held_around(
    topology: &str,
    state: &str,
    tl: &[SwitchInterval],
    period: f64,
    t: f64,
) -> (f64, f64) {
    let t = t.rem_euclid(period);
    let Some(k) = tl.iter().position(|iv| iv.t0_s <= t && t < iv.t1_s) else {
        return (0.0, 0.0);
    };
    if !in_state(topology, state, &tl[k]) {
        return (0.0, 0.0);
    }
    let n = tl.len();
    let (mut before, mut after) = (t - tl[k].t0_s, tl[k].t1_s - t);
    for j in 1..n {
        let iv = &tl[(k + n - j) % n];
        if !in_state(topology, state, iv) {
            break;
        }
        before += iv.t1_s - iv.t0_s;
    }
    for j in 1..n {
        let iv = &tl[(k + j) % n];
        if !in_state(topology, state, iv) {
            break;
        }
        after += iv.t1_s - iv.t0_s;
    }
    (before, after)
}

/// A fixed count's time in the PWM period, s (see [`trigger_s`]).
fn fixed_s(regs: &TimerRegisters, count: u64, counting_up: bool) -> f64 {
    if regs.alignment == Alignment::Centre && !counting_up {
        regs.period_s() - count as f64 * regs.tick_s
    } else {
        count as f64 * regs.tick_s
    }
}

/// At the loop's lowest and highest compare (the plan's compare limits within the sampling
/// window), the sampled state holds `settle_time_s` before the trigger and `sample_time_s`
/// after it (and, sampled at both extremes, the off-time around the top's trigger); records
/// the shortest of each. Symmetric compares are the worst case of a loop updating each half
/// period too: the state around an extreme is bounded by the two compares beside it, each
/// within the same limits.
pub fn check(
    topology: &str,
    regs: &TimerRegisters,
    stage_at: impl Fn(u64) -> Stage,
    s: &SamplingOut,
    limits: (u64, u64),
    out: &mut RegisterCheck,
) {
    let lo = limits.0.max(s.compare_min);
    let hi = limits.1.min(s.compare_max);
    let slack = 1e-12;
    let mut worst = (f64::INFINITY, f64::INFINITY);
    for c in [lo, hi] {
        let timeline = match verify::verify(regs, &stage_at(c), &probe_circuit()) {
            Ok(v) => v.timeline,
            Err(e) => {
                out.disagreements
                    .push(format!("sampling: the verifier refused compare {c}: {e}"));
                continue;
            }
        };
        let mut triggers = vec![(s.state.as_str(), trigger_s(regs, s, c))];
        if let Some(top) = s.top_trigger_count {
            triggers.push(("off-time", fixed_s(regs, top, s.top_counting_up)));
        }
        for (state, t) in triggers {
            let (before, after) = held_around(topology, state, &timeline, regs.period_s(), t);
            worst = (worst.0.min(before), worst.1.min(after));
            if before + slack < s.settle_time_s || after + slack < s.sample_time_s {
                out.disagreements.push(format!(
                    "sampling: at compare {c} the trigger finds the {state} held {before:.4e} s before and {after:.4e} s after, the plan promises {:.4e} s settling and {:.4e} s sampling",
                    s.settle_time_s, s.sample_time_s
                ));
            }
        }
    }
    out.sample_low_on_before_s = Some(worst.0);
    out.sample_low_on_after_s = Some(worst.1);
}

/// The switch states do not depend on the load: any valid circuit gives the timeline.
fn probe_circuit() -> verify::Circuit {
    verify::Circuit {
        r_ohm: 1.0,
        l_h: 1e-3,
        back_emf_v: 0.0,
        v_bus_v: 1.0,
        r_ds_on_ohm: 0.0,
        v_sd_v: 0.0,
        v_f_v: 0.0,
    }
}
