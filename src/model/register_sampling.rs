//! A brushed plan's current-sampling trigger checked on the registers it writes.
//!
//! Owns: reading the plan's trigger (a fixed count and direction, or the count that follows
//! the compare) as the timer matches it, and checking on the verifier's switch timeline that
//! the switching state the plan says it samples has lasted the settling time at the trigger
//! and lasts through the acquisition, at both ends of the compares the plan lets the loop
//! write. Pure: a disagreement is data.

use crate::model::current_loop::SamplingOut;
use crate::model::timer::Alignment;
use crate::model::verify::{self, LegCompare, LegState, Stage, SwitchInterval, TimerRegisters};
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

/// Angles per electrical period the DC-link readings are checked at (own choice: two degrees;
/// the sort of the compares changes only at sector boundaries, which the grid includes).
const DC_LINK_ANGLES: usize = 180;

/// The legs a DC-link shunt reading sees at `t_s`: each leg's state, `None` while a leg is in
/// its dead time (the vector not yet settled).
fn high_legs(regs: &TimerRegisters, legs: &[LegCompare; 3], t_s: f64) -> Option<[bool; 3]> {
    let mut high = [false; 3];
    for (h, leg) in high.iter_mut().zip(legs) {
        *h = match verify::leg_state_at(regs, *leg, t_s).ok()? {
            LegState::High => true,
            LegState::Low => false,
            LegState::Dead => return None,
        };
    }
    Some(high)
}

/// What the shunt reads with these legs high: `(leg, sign)` when it is one phase current
/// (one leg high: `+i`; two: `−i` of the low one), `None` on a zero vector.
fn dc_link_reads(high: [bool; 3]) -> Option<(usize, i8)> {
    match high.iter().filter(|&&h| h).count() {
        1 => high.iter().position(|&h| h).map(|k| (k, 1)),
        2 => high.iter().position(|&h| !h).map(|k| (k, -1)),
        _ => None,
    }
}

/// The DC-link shunt's two readings of every angle (at the needed modulation and at none,
/// compares within the plan's limits) on the verifier's switch timeline: the shifted compares
/// fit, each reading's vector has settled the settling time before its trigger and holds
/// through the acquisition (no leg in its dead time, no leg switching), and it puts the phase
/// current the plan says through the shunt; records the shortest margins.
pub fn check_dc_link(
    regs: &TimerRegisters,
    d: &crate::output::plan::DcLinkPlan,
    zero_sequence: crate::model::physics::three_phase::ZeroSequence,
    limits: (u64, u64),
    out: &mut RegisterCheck,
) {
    use crate::model::physics::three_phase::{dc_link, leg_duties};
    let p = regs.duty_steps();
    let timing = dc_link::DcLinkTiming {
        lead_counts: d.lead_counts,
        min_vector_counts: d.min_vector_counts,
    };
    let tick = regs.tick_s;
    let mut worst = (f64::INFINITY, f64::INFINITY);
    for m in [0.0, d.needed_modulation] {
        for k in 0..DC_LINK_ANGLES {
            let theta = std::f64::consts::TAU * k as f64 / DC_LINK_ANGLES as f64;
            let c = leg_duties(m, zero_sequence, theta)
                .map(|x| ((x * p as f64).round() as u64).clamp(limits.0, limits.1));
            let Some(s) = dc_link::shift_compares(c, p, &timing) else {
                out.disagreements.push(format!(
                    "DC-link sampling: at modulation {m:.3}, {:.0}°, compares {c:?} do not shift to fit the counter",
                    theta.to_degrees()
                ));
                continue;
            };
            let legs = [0, 1, 2].map(|x| LegCompare::new(s.up[x]).halves(s.down[x]));
            for r in 0..2 {
                let t = s.triggers[r] as f64 * tick;
                // A thousandth of a tick inside: the window may touch its vector's edges.
                let eps = 1e-3 * tick;
                let (start, end) = (t - d.settle_time_s + eps, t + d.sample_time_s - eps);
                let steps = ((end - start) / (0.25 * tick)).ceil().max(4.0) as usize;
                let seen: Vec<_> = (0..=steps)
                    .map(|j| {
                        high_legs(regs, &legs, start + (end - start) * j as f64 / steps as f64)
                    })
                    .collect();
                let first = seen[0];
                let held = seen.iter().all(|x| x.is_some() && *x == first);
                let reads = first.and_then(dc_link_reads);
                if !held || reads != Some((s.legs[r], s.signs[r])) {
                    out.disagreements.push(format!(
                        "DC-link sampling: at modulation {m:.3}, {:.0}°, reading {} (trigger {}) finds the vector unsettled or reading {reads:?}, the plan says leg {} with sign {}",
                        theta.to_degrees(),
                        r + 1,
                        s.triggers[r],
                        s.legs[r],
                        s.signs[r]
                    ));
                }
                // The margins: the vector's start and end around the window.
                let start_edge = if r == 0 {
                    s.up[s.legs[0]]
                } else {
                    s.triggers[0] + d.lead_counts
                };
                let before = t - start_edge as f64 * tick - regs.dead_time_s;
                let after = (s.triggers[r] + d.lead_counts) as f64 * tick - t;
                worst = (worst.0.min(before), worst.1.min(after));
            }
        }
    }
    out.sample_low_on_before_s = Some(worst.0);
    out.sample_low_on_after_s = Some(worst.1);
}

/// Sensorless six-step: the back-EMF triggers on the verifier's switch timeline of the
/// chopping leg, at the ends of the on-times each window claims within the plan's compare
/// limits and at the rated on-time: the state read (the chopping switch's on-time, or its
/// off-time) has held the settling time before the trigger and holds through the
/// acquisition. The verifier's states start a dead time after their reference edge, as the
/// plan's window takes them. Records the shortest of each.
pub fn check_back_emf(
    regs: &TimerRegisters,
    b: &crate::output::back_emf_out::BackEmfPlan,
    chop_low_side: bool,
    limits: (u64, u64),
    out: &mut RegisterCheck,
) {
    let p = regs.duty_steps();
    // On-time counts n against the chopping channel's compare.
    let (n_lo, n_hi) = if chop_low_side {
        (p.saturating_sub(limits.1), p.saturating_sub(limits.0))
    } else {
        limits
    };
    let compare = |n: u64| if chop_low_side { p - n } else { n };
    // The verifier's leg: `on-time` is the high side conducting, `off-time` the low side.
    let (on_state, off_state) = if chop_low_side {
        ("off-time", "on-time")
    } else {
        ("on-time", "off-time")
    };
    let on_t = fixed_s(regs, b.on_trigger_count, b.on_trigger_direction == "up");
    let off_t = fixed_s(regs, b.off_trigger_count, b.off_trigger_direction == "up");
    let mut checks = Vec::new();
    let rated = b.rated_counts;
    for n in [b.on_counts_min.max(n_lo), n_hi, rated] {
        if n >= b.on_counts_min && (n_lo..=n_hi).contains(&n) {
            checks.push((n, on_state, on_t, "on-time"));
        }
    }
    for n in [n_lo, b.off_counts_max.min(n_hi), rated] {
        if n <= b.off_counts_max && (n_lo..=n_hi).contains(&n) {
            checks.push((n, off_state, off_t, "off-time"));
        }
    }
    let slack = 1e-12;
    let mut worst = (f64::INFINITY, f64::INFINITY);
    for (n, state, t, window) in checks {
        let c = compare(n);
        let stage = Stage::HalfBridge(LegCompare::new(c));
        let timeline = match verify::verify(regs, &stage, &probe_circuit()) {
            Ok(v) => v.timeline,
            Err(e) => {
                out.disagreements.push(format!(
                    "back-EMF sampling: the verifier refused compare {c}: {e}"
                ));
                continue;
            }
        };
        let (before, after) = held_around("half-bridge", state, &timeline, regs.period_s(), t);
        worst = (worst.0.min(before), worst.1.min(after));
        if before + slack < b.settle_time_s || after + slack < b.sample_time_s {
            out.disagreements.push(format!(
                "back-EMF sampling: at {n} on-time counts (compare {c}) the {window} trigger finds the state held {before:.4e} s before and {after:.4e} s after, the plan promises {:.4e} s settling and {:.4e} s sampling",
                b.settle_time_s, b.sample_time_s
            ));
        }
    }
    if worst.0.is_finite() {
        out.back_emf_before_s = Some(worst.0);
        out.back_emf_after_s = Some(worst.1);
    }
}
