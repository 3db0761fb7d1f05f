//! Sensorless six-step: where in the PWM period to read the floating phase's back-EMF, what
//! to compare it with, how long to wait after a commutation, and the delay from a zero
//! crossing to the next commutation.
//!
//! Owns: the sampling window of the floating phase in the chopping switch's on-time and
//! off-time of a centre-aligned timer (the trigger counts, the least on-time and the most
//! on-time that hold each), the zero-crossing thresholds of both states, the blanking after a
//! commutation in whole PWM periods, the up-count variant's trigger. Pure: no I/O.
//!
//! # The floating terminal (star circuit; Krishnan, *Permanent Magnet Synchronous and
//! Brushless DC Motor Drives*, 2010, ch. 9, from memory; common practice)
//!
//! With phases p and n conducting (`i_p = −i_n`, `i_f = 0`), adding the two phases'
//! equations `v_k − v_N = R·i_k + L·di_k/dt + e_k` gives the neutral
//! `v_N = (v_p + v_n − e_p − e_n)/2`, and the floating terminal reads `v_f = v_N + e_f`.
//! Where the floating phase's back-EMF crosses zero, the other two are equal and opposite (a
//! trapezoidal motor: both on their flat tops; a balanced one: `e_p + e_n = −e_f = 0`), so
//! at the zero crossing `v_f = (v_p + v_n)/2`: the threshold is the mean of the two driven
//! terminals. The two channels' drops `R_ds·I` move `v_p` down and `v_n` up by the same
//! amount and leave the mean unchanged (own step).
//!
//! - The chopping switch's on-time: `v_p = V`, `v_n = 0`, threshold `V/2` (half the bus).
//! - The off-time of high-side chopping: the positive phase freewheels in its low side's body
//!   diode, `v_p = −V_F`, `v_n = 0`: threshold `−V_F/2` against the negative rail (the
//!   back-EMF less half a diode drop compared with zero). Complementary chopping: the low
//!   side's channel, threshold 0. Low-side chopping, the mirror image: the negative phase
//!   freewheels in its high side's diode, `v_n = V + V_F`, `v_p = V`: threshold `V + V_F/2`
//!   against the positive rail. The off-time clamp holds while the line current flows
//!   (continuous conduction).
//!
//! # The window (own derivation, on the timer convention of [`crate::model::physics::sampling`])
//!
//! Centre alignment: the counter runs 0 → P → 0, one tick `τ`; the high-side reference is on
//! while the counter is below the compare, so a chopping high side's on-time is centred on
//! the counter bottom (the chopping low side's, at compare `P − n`, on the top); a state of
//! `n` counts each side of its extreme spans `[−n·τ + t_d, n·τ]` (the dead time delays every
//! turn-on). The acquisition `t_s` starts `a` ticks after the extreme and must begin the
//! settling `t_settle` after the state's late edge and end before it ends:
//! `a·τ ≥ −n·τ + t_d + t_settle` and `a·τ + t_s ≤ n·τ`. With `q = (t_d + t_settle)/τ` and
//! `s = t_s/τ`, the least state is reached with `a = round((q − s)/2)`, where
//! `n ≥ max(a + s, q − a)` (≈ `(t_d + t_settle + t_s)/2τ`): the on-time holds the dead time,
//! the settling and the acquisition back to back, the least a sample after the settling
//! can have. One fixed count serves every longer state too (it lies further from both
//! edges), so the firmware writes it once. The off-time is the same state around the other
//! extreme (taken with the same dead time, the conservative side for a diode freewheel).
//! `n_min` is the first whole count strictly past the need (as the current-sampling windows
//! count it).

use super::inputs::Chop;
use crate::model::physics::sampling::{SamplingTimer, TriggerRule, at_extreme};

/// Electrical angle from the floating phase's back-EMF zero crossing to the next
/// commutation: the zero crossing lies in the middle of the phase's 60° floating sector of
/// 120° block commutation (the sector table of [`super::sectors`]), so the commutation is 30°
/// later (common practice; Krishnan 2010, ch. 9, from memory). An angle, not a time: the
/// firmware times it from the last sector's length at the present speed.
pub const ZERO_CROSSING_TO_COMMUTATION_DEG: f64 = 30.0;

/// Where the floating phase is sampled in a centre-aligned PWM period.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BemfWindow {
    /// Ticks the acquisition starts after the state's middle (negative: before).
    pub offset_ticks: i64,
    /// Counts each side of its extreme the state must last (`n_min`).
    pub min_half_counts: u64,
    /// The conversion's start in the chopping switch's on-time and in its off-time.
    pub on_trigger: TriggerRule,
    pub off_trigger: TriggerRule,
    /// Chopping on-time in counts (the compare of a chopping high side, `P` less the compare
    /// of a chopping low side) from which the on-time holds the window, and up to which the
    /// off-time does.
    pub on_counts_min: u64,
    pub off_counts_max: u64,
    /// The same as chopping duties.
    pub on_duty_min: f64,
    pub off_duty_max: f64,
    /// The least state (reference time, s) holding the window: `2·n_min·τ`.
    pub min_state_s: f64,
}

impl BemfWindow {
    /// Whether every chopping on-time from 0 to `P` counts holds one of the two windows.
    pub fn covers_every_duty(&self) -> bool {
        self.on_counts_min <= self.off_counts_max + 1
    }
}

/// The sampling window of the floating phase (module doc). `None` on an up-count (see
/// [`edge_on_time_trigger`]), or where the state could not hold it even at 100 %.
pub fn bemf_window(chop: Chop, t: &SamplingTimer) -> Option<BemfWindow> {
    if !t.centre || t.tick_s <= 0.0 || t.duty_steps == 0 {
        return None;
    }
    let p = t.duty_steps;
    let q = (t.dead_s + t.settle_s) / t.tick_s;
    let s = t.acquire_s / t.tick_s;
    let a = (0.5 * (q - s)).round();
    let need = (a + s).max(q - a);
    let n_min = (need + 1e-6).floor() as u64 + 1;
    if n_min > p {
        return None;
    }
    // The chopping switch's on-time is centred on the bottom (a high side) or the top (a low
    // side); the off-time on the other extreme.
    let on_top = chop == Chop::LowSide;
    let a = a as i64;
    Some(BemfWindow {
        offset_ticks: a,
        min_half_counts: n_min,
        on_trigger: at_extreme(p, on_top, a)?,
        off_trigger: at_extreme(p, !on_top, a)?,
        on_counts_min: n_min,
        off_counts_max: p - n_min,
        on_duty_min: n_min as f64 / p as f64,
        off_duty_max: (p - n_min) as f64 / p as f64,
        min_state_s: 2.0 * n_min as f64 * t.tick_s,
    })
}

/// Up-count (edge alignment), a chopping high side on from counter 0 (a dead time late) to
/// its compare `C`: the latest acquisition ends at the compare match, so the conversion
/// starts `lead = ⌈t_s/τ⌉` counts before it (a trigger that follows the compare, matched at
/// `C − lead`), and the on-time must hold the dead time and the settling before it:
/// `C ≥ lead + ⌈(t_d + t_settle)/τ⌉` (own derivation, as the centre-aligned window). A
/// chopping low side (on from `C` to the end of the period) mirrors it at the fixed count
/// `P − lead`. Returns `(lead, least on-time in counts)`. Three-phase plans are centre-aligned,
/// so the plan does not use this yet.
pub fn edge_on_time_trigger(t: &SamplingTimer) -> Option<(u64, u64)> {
    if t.centre || t.tick_s <= 0.0 {
        return None;
    }
    let lead = (t.acquire_s / t.tick_s - 1e-9).ceil().max(0.0) as u64;
    let before = ((t.dead_s + t.settle_s) / t.tick_s - 1e-9).ceil().max(0.0) as u64;
    let least = lead + before;
    (least <= t.duty_steps).then_some((lead, least))
}

/// The zero-crossing thresholds (module doc): in the on-time, the floating terminal against
/// half the bus; in the off-time, against a rail plus an offset.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BemfThresholds {
    /// On-time threshold, V (`V/2`).
    pub on_v: f64,
    /// The off-time threshold's rail: the positive one (the bus) or the negative (0 V).
    pub off_positive_rail: bool,
    /// The off-time threshold from that rail, V (`−V_F/2`, 0 or `+V_F/2`).
    pub off_offset_v: f64,
}

/// Thresholds at bus `v_bus_v` with the freewheeling body diode's forward drop `v_f_v`.
pub fn bemf_thresholds(chop: Chop, v_bus_v: f64, v_f_v: f64) -> BemfThresholds {
    let (off_positive_rail, off_offset_v) = match chop {
        Chop::HighSide => (false, -0.5 * v_f_v),
        Chop::Complementary => (false, 0.0),
        Chop::LowSide => (true, 0.5 * v_f_v),
    };
    BemfThresholds {
        on_v: 0.5 * v_bus_v,
        off_positive_rail,
        off_offset_v,
    }
}

/// Blanking after a commutation in whole PWM periods, rounded up: the off-going phase, the
/// next floating one, is clamped to a rail by a body diode for `t_commutation_s`
/// ([`super::six_step_commutation_s`]) and shows no back-EMF; zero-crossing detection starts
/// after it. `None` when the interval does not end.
pub fn blanking_periods(t_commutation_s: f64, f_sw_hz: f64) -> Option<u64> {
    (t_commutation_s.is_finite() && t_commutation_s >= 0.0 && f_sw_hz > 0.0)
        .then(|| (t_commutation_s * f_sw_hz - 1e-9).ceil().max(0.0) as u64)
}

#[cfg(test)]
mod tests {
    use super::*;

    // 72 MHz, P = 1800 (centre: 20 kHz), τ = 13.889 ns; dead time 300 ns, settle 1 µs,
    // acquire 0.5 µs. By hand: q = 1.3 µs/τ = 93.6 ticks, s = 0.5 µs/τ = 36 ticks;
    // a = round((93.6 − 36)/2) = round(28.8) = 29 ticks after the extreme;
    // need = max(29 + 36, 93.6 − 29) = max(65, 64.6) = 65 ticks; strictly past: n_min = 66
    // counts each side, so the on-time (2·66·τ = 1.8333 µs) holds t_d + t_settle + t_s =
    // 1.8 µs with a count to spare; duty ≥ 66/1800 = 3.667 %.
    const TIMER: SamplingTimer = SamplingTimer {
        centre: true,
        duty_steps: 1800,
        tick_s: 1.0 / 72e6,
        dead_s: 300e-9,
        settle_s: 1e-6,
        acquire_s: 0.5e-6,
    };

    #[test]
    fn a_high_side_chop_is_read_after_the_bottom_by_hand() {
        let w = bemf_window(Chop::HighSide, &TIMER).unwrap();
        assert_eq!(w.offset_ticks, 29);
        assert_eq!(w.min_half_counts, 66);
        // 29 ticks after the bottom is count 29 on the up-count; after the top, 1800 − 29
        // counting down.
        assert_eq!(
            w.on_trigger,
            TriggerRule::Fixed {
                count: 29,
                counting_up: true
            }
        );
        assert_eq!(
            w.off_trigger,
            TriggerRule::Fixed {
                count: 1771,
                counting_up: false
            }
        );
        assert_eq!((w.on_counts_min, w.off_counts_max), (66, 1734));
        assert!((w.on_duty_min - 66.0 / 1800.0).abs() < 1e-15);
        assert!((w.min_state_s - 132.0 / 72e6).abs() < 1e-18);
        assert!(w.covers_every_duty());
        // At the least on-time the acquisition [29τ, 65τ] lies inside [−66τ + 1.3 µs, 66τ]
        // = [27.6τ, 66τ].
        let start = 29.0 / 72e6;
        assert!(start >= -66.0 / 72e6 + 1.3e-6);
        assert!(start + 0.5e-6 <= 66.0 / 72e6);
    }

    #[test]
    fn a_low_side_chop_is_the_mirror_image() {
        let w = bemf_window(Chop::LowSide, &TIMER).unwrap();
        // The low side's on-time around the top: 29 ticks after it, counting down.
        assert_eq!(
            w.on_trigger,
            TriggerRule::Fixed {
                count: 1771,
                counting_up: false
            }
        );
        assert_eq!(
            w.off_trigger,
            TriggerRule::Fixed {
                count: 29,
                counting_up: true
            }
        );
    }

    #[test]
    fn a_long_acquisition_starts_before_the_extreme() {
        // Acquire 3 µs (216 ticks): a = round((93.6 − 216)/2) = round(−61.2) = −61, need =
        // max(−61 + 216, 93.6 + 61) = 155 ticks, n_min = 156; the on trigger 61 counts before
        // the bottom, counting down.
        let t = SamplingTimer {
            acquire_s: 3e-6,
            ..TIMER
        };
        let w = bemf_window(Chop::HighSide, &t).unwrap();
        assert_eq!((w.offset_ticks, w.min_half_counts), (-61, 156));
        assert_eq!(
            w.on_trigger,
            TriggerRule::Fixed {
                count: 61,
                counting_up: false
            }
        );
    }

    #[test]
    fn a_short_period_leaves_a_gap_or_no_window() {
        // P = 100: n_min = 66 > 100 − 66 + 1: duties between 35 and 65 counts hold neither.
        let t = SamplingTimer {
            duty_steps: 100,
            ..TIMER
        };
        let w = bemf_window(Chop::HighSide, &t).unwrap();
        assert!(!w.covers_every_duty());
        let t = SamplingTimer {
            duty_steps: 60,
            ..TIMER
        };
        assert!(bemf_window(Chop::HighSide, &t).is_none());
        let edge = SamplingTimer {
            centre: false,
            ..TIMER
        };
        assert!(bemf_window(Chop::HighSide, &edge).is_none());
    }

    #[test]
    fn the_up_count_trigger_follows_the_compare() {
        // Up-count: lead = ⌈36⌉ = 36, before = ⌈93.6⌉ = 94, least compare 130.
        let edge = SamplingTimer {
            centre: false,
            ..TIMER
        };
        assert_eq!(edge_on_time_trigger(&edge), Some((36, 130)));
        assert_eq!(edge_on_time_trigger(&TIMER), None);
    }

    /// By hand at 24 V with a 0.8 V diode (module doc): on-time 12 V; off-time −0.4 V from
    /// the negative rail (high-side chop), 0 (complementary), +0.4 V from the bus (low side).
    #[test]
    fn thresholds_by_hand() {
        let h = bemf_thresholds(Chop::HighSide, 24.0, 0.8);
        assert_eq!(
            (h.on_v, h.off_positive_rail, h.off_offset_v),
            (12.0, false, -0.4)
        );
        let c = bemf_thresholds(Chop::Complementary, 24.0, 0.8);
        assert_eq!((c.off_positive_rail, c.off_offset_v), (false, 0.0));
        let l = bemf_thresholds(Chop::LowSide, 24.0, 0.8);
        assert_eq!(
            (l.on_v, l.off_positive_rail, l.off_offset_v),
            (12.0, true, 0.4)
        );
    }

    /// The star circuit's threshold against a direct solution: three phases with trapezoidal
    /// back-EMFs (p at +E, n at −E, the floating one at 0), the terminals driven, the neutral
    /// from Kirchhoff's current law with i_f = 0 and the two conducting phases' currents
    /// equal and opposite at any di/dt: solved as a 2×2 linear system here, not by the
    /// formula of the module doc.
    #[test]
    fn the_floating_terminal_at_the_zero_crossing_is_the_threshold() {
        let (r, e) = (0.2_f64, 7.0_f64);
        for (v_p, v_n) in [(24.0_f64, 0.0_f64), (-0.8, 0.0), (24.0, 24.8), (0.0, 0.0)] {
            for i in [0.5, 3.0] {
                // Unknowns: v_N and u = L·di_p/dt. Phase p: v_p − v_N = R·i + u + e;
                // phase n: v_n − v_N = −R·i − u − e.
                // Rows: [−1, −1 | R·i + e − v_p], [−1, +1 | −R·i − e − v_n].
                let (a11, a12, b1) = (-1.0_f64, -1.0_f64, r * i + e - v_p);
                let (a21, a22, b2) = (-1.0_f64, 1.0_f64, -r * i - e - v_n);
                let det = a11 * a22 - a12 * a21;
                let v_neutral = (b1 * a22 - a12 * b2) / det;
                // The floating phase's back-EMF is zero at its crossing.
                let v_floating = v_neutral;
                assert!((v_floating - 0.5 * (v_p + v_n)).abs() < 1e-12);
            }
        }
    }

    #[test]
    fn blanking_rounds_up_to_whole_periods() {
        // 56.67 µs at 20 kHz (50 µs periods): 1.13 periods → 2.
        assert_eq!(blanking_periods(56.67e-6, 20e3), Some(2));
        assert_eq!(blanking_periods(50e-6, 20e3), Some(1));
        assert_eq!(blanking_periods(f64::INFINITY, 20e3), None);
    }
}
