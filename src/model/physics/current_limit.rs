//! The current limit's physics: the sensing chain's trip window with its
//! tolerances stacked, the fault input's filter, the time from the trip to
//! the switch's turn-off and the current's overshoot in it, the blanking the
//! turn-on transient needs, and the stall a cycle-by-cycle limit really
//! holds, followed period by period (it ratchets past the trip when the
//! shortest on-time adds more current than the off-time removes).
//!
//! Owns: these formulas, in SI units. Never: choosing codes or ticks (that is
//! `model::current_limit`), reading input, printing.

/// The sensing chain from the motor current to the comparator's input:
/// V = I·R_shunt·G + V_offset, each with a ± tolerance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SenseChain {
    pub r_shunt_ohm: f64,
    /// ± relative tolerance of the shunt.
    pub r_tolerance: f64,
    /// Voltage gain (1 without an amplifier).
    pub gain: f64,
    /// ± relative tolerance of the gain.
    pub gain_tolerance: f64,
    /// Output at zero current.
    pub offset_v: f64,
    /// ± tolerance of the offset.
    pub offset_tolerance_v: f64,
}

/// The comparator's threshold at one setting, with its tolerances.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Threshold {
    /// Nominal threshold.
    pub v_nominal_v: f64,
    /// ± relative tolerance (reference and DAC).
    pub tolerance: f64,
    /// ± input offset.
    pub offset_v: f64,
}

/// The motor currents at which a threshold trips, at the chain's extremes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TripWindow {
    /// Lowest current that can trip (it never trips below it).
    pub low_a: f64,
    /// Nominal trip current.
    pub nominal_a: f64,
    /// Highest current that may still not trip (it always trips above it).
    pub high_a: f64,
}

/// The trip current I = (V_th − V_off)/(R·G): the chain output equals the
/// threshold (a comparator's definition, common practice). Each term enters
/// monotonically, so the extremes are at the tolerance corners (worst-case
/// tolerance analysis, common practice): the lowest trip at the lowest
/// threshold, the highest offset, the highest R and G; the highest trip at the
/// opposite corner. `low_a` may be zero or negative: the chain then trips at no
/// current at all (the offset alone reaches the threshold).
pub fn trip_window(chain: &SenseChain, th: &Threshold) -> TripWindow {
    let at = |v_th: f64, v_off: f64, r: f64, g: f64| (v_th - v_off) / (r * g);
    let th_lo = th.v_nominal_v * (1.0 - th.tolerance) - th.offset_v;
    let th_hi = th.v_nominal_v * (1.0 + th.tolerance) + th.offset_v;
    let off_hi = chain.offset_v + chain.offset_tolerance_v;
    let off_lo = chain.offset_v - chain.offset_tolerance_v;
    let r_hi = chain.r_shunt_ohm * (1.0 + chain.r_tolerance);
    let r_lo = chain.r_shunt_ohm * (1.0 - chain.r_tolerance);
    let g_hi = chain.gain * (1.0 + chain.gain_tolerance);
    let g_lo = chain.gain * (1.0 - chain.gain_tolerance);
    let high_num = th_hi - off_lo;
    TripWindow {
        low_a: at(th_lo, off_hi, r_hi, g_hi),
        nominal_a: at(
            th.v_nominal_v,
            chain.offset_v,
            chain.r_shunt_ohm,
            chain.gain,
        ),
        // A positive numerator is largest over the smallest R·G.
        high_a: if high_num > 0.0 {
            at(th_hi, off_lo, r_lo, g_lo)
        } else {
            at(th_hi, off_lo, r_hi, g_hi)
        },
    }
}

/// A digital filter that passes a fault after `samples` consecutive samples
/// at `clock_hz`: an input held for at least N/f is always passed, and one
/// shorter than (N − 1)/f is always rejected (a pulse of width w covers
/// ⌊w·f⌋ or ⌊w·f⌋ + 1 sample instants, common practice).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Filter {
    pub clock_hz: f64,
    pub samples: u32,
}

impl Filter {
    /// Longest delay from a lasting fault to the filter's output, N/f.
    pub fn delay_s(&self) -> f64 {
        f64::from(self.samples) / self.clock_hz
    }

    /// Pulses shorter than this are always rejected, (N − 1)/f.
    pub fn rejects_below_s(&self) -> f64 {
        f64::from(self.samples.saturating_sub(1)) / self.clock_hz
    }
}

/// The time from the current crossing the trip level to the current
/// starting to fall: filter + comparator + gate-driver propagation + the
/// switch's turn-off delay and voltage rise (the current keeps flowing in the
/// switch until the drain has risen to the bus, common practice for a
/// clamped inductive turn-off).
pub fn reaction_time_s(
    filter_s: f64,
    comparator_s: f64,
    driver_s: f64,
    t_d_off_s: f64,
    t_rv_s: f64,
) -> f64 {
    filter_s + comparator_s + driver_s + t_d_off_s + t_rv_s
}

/// The current's rise past the trip level during the reaction time at a
/// stall: L·di/dt = V_bus − E − R·I with E = 0, bounded above by neglecting
/// the R·I drop, ΔI = V_bus·t/L (common practice).
pub fn overshoot_a(v_bus_v: f64, l_h: f64, t_react_s: f64) -> f64 {
    v_bus_v * t_react_s / l_h
}

/// The turn-on transient the blanking must cover, counted from the timer's
/// output edge: driver propagation, turn-on delay, current rise, the
/// partner's recovery (its t_rr), the loop's ringing (two periods of
/// 2π·√(L_loop·C_oss), an allowance of our own choice: the ring's damping
/// is not known) and the amplifier's settling (a sum, common practice).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TurnOnTransient {
    pub driver_s: f64,
    pub t_d_on_s: f64,
    pub t_ri_s: f64,
    pub t_rr_s: f64,
    pub ring_s: f64,
    pub settle_s: f64,
}

impl TurnOnTransient {
    /// The blanking needed, the sum of the parts.
    pub fn total_s(&self) -> f64 {
        self.driver_s + self.t_d_on_s + self.t_ri_s + self.t_rr_s + self.ring_s + self.settle_s
    }
}

/// Two periods of the loop's ring, 2·2π·√(L·C) (own allowance; the
/// resonance of the loop inductance with the output capacitance, common
/// practice). 0 without a loop inductance.
pub fn ring_allowance_s(l_loop_h: f64, c_oss_f: f64) -> f64 {
    if l_loop_h > 0.0 && c_oss_f > 0.0 {
        2.0 * 2.0 * std::f64::consts::PI * (l_loop_h * c_oss_f).sqrt()
    } else {
        0.0
    }
}

/// What the off-state of a chopped stall applies against the current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Freewheel {
    /// The motor shorted through the switches (synchronous freewheel): 0 V.
    Shorted,
    /// Through a diode: its forward voltage.
    Diode { v_f_v: f64 },
    /// The bus reversed across the motor (bipolar switching).
    Reversed,
}

/// A stall chopped cycle by cycle, period after period until it repeats:
/// the switch turns on at each period start (the firmware commanding full
/// duty, the worst case); the current I(t) = V/R + (I_0 − V/R)·e^(−t/τ),
/// τ = L/R, crosses the trip at t_c (closed form); the fault is seen at
/// max(t_c + t_comparator, t_blank) and the current falls from t_post after
/// that (filter, driver, turn-off delay, voltage rise); in the off-state
/// L·di/dt = −V_off − R·i, held at zero by a diode path (first-order R-L
/// solutions, common practice; the event sequence is the limiter's
/// definition). Returns the settled period's peak, valley and mean.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StallCycle {
    pub peak_a: f64,
    pub valley_a: f64,
    pub mean_a: f64,
}

/// The chopped stall's circuit and timings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChoppedStall {
    pub v_bus_v: f64,
    pub r_ohm: f64,
    pub l_h: f64,
    pub period_s: f64,
    pub freewheel: Freewheel,
    pub i_trip_a: f64,
    /// Blanking from the period start, s.
    pub t_blank_s: f64,
    /// Comparator delay, s.
    pub t_comparator_s: f64,
    /// From the fault being seen to the current falling, s.
    pub t_post_s: f64,
}

/// See [`StallCycle`].
pub fn stall_cycle(c: &ChoppedStall) -> StallCycle {
    let tau = c.l_h / c.r_ohm;
    let i_on = c.v_bus_v / c.r_ohm;
    let v_off = match c.freewheel {
        Freewheel::Shorted => 0.0,
        Freewheel::Diode { v_f_v } => v_f_v,
        Freewheel::Reversed => c.v_bus_v,
    };
    let i_off = -v_off / c.r_ohm;
    let at = |i0: f64, i_inf: f64, t: f64| i_inf + (i0 - i_inf) * (-t / tau).exp();
    // ∫ of the exponential over [0, t].
    let area =
        |i0: f64, i_inf: f64, t: f64| i_inf * t + (i0 - i_inf) * tau * (1.0 - (-t / tau).exp());
    let one_period = |i0: f64| {
        let t_c = if i0 >= c.i_trip_a {
            0.0
        } else if i_on > c.i_trip_a {
            -tau * ((i_on - c.i_trip_a) / (i_on - i0)).ln()
        } else {
            f64::INFINITY
        };
        let t_off = ((t_c + c.t_comparator_s).max(c.t_blank_s) + c.t_post_s).min(c.period_s);
        let peak = at(i0, i_on, t_off);
        let mut q = area(i0, i_on, t_off);
        let t_rest = c.period_s - t_off;
        // Off-state; a diode path stops the current at zero.
        let t_zero = if v_off > 0.0 && peak > 0.0 {
            tau * ((peak - i_off) / (-i_off)).ln()
        } else {
            f64::INFINITY
        };
        let end = if t_zero < t_rest {
            q += area(peak, i_off, t_zero);
            0.0
        } else {
            q += area(peak, i_off, t_rest);
            at(peak, i_off, t_rest)
        };
        (end, peak, q / c.period_s)
    };
    let mut i0 = 0.0;
    // Each period moves the start current at least e^(−T/τ) closer to the
    // fixed point: enough periods for e^(−25) of the way, capped (own bound).
    let periods = ((tau / c.period_s) * 25.0).ceil().clamp(200.0, 2e6) as usize;
    for _ in 0..periods {
        let (end, peak, _) = one_period(i0);
        let settled = (end - i0).abs() <= 1e-12 * peak.abs().max(1e-9);
        i0 = end;
        if settled {
            break;
        }
    }
    let (_, peak, mean) = one_period(i0);
    StallCycle {
        peak_a: peak,
        valley_a: i0,
        mean_a: mean,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The mean stall current a cycle-by-cycle limit settles at when every
    /// period still turns the switch on for at least `t_on_min_s` (the blanking
    /// and reaction time). In continuous conduction the volt-second balance over
    /// a period, V·D − V_off·(1 − D) = R·I with D = t_on_min/T (inductor
    /// volt-second balance, common practice; Mohan, Undeland, Robbins, *Power
    /// Electronics*, 2003, ch. 7, from memory), with V_off 0, V_f or V by the
    /// freewheel path. Where the off-state voltage empties the winding within the
    /// period (discontinuous conduction) the triangle's mean instead,
    /// I_pk·(t_on + t_fall)/(2T) with I_pk = V·t_on/L and t_fall = L·I_pk/V_off
    /// (R neglected over the short pulse; the same source). The larger of the two,
    /// bounded to 0..V/R. The closed form [`stall_cycle`] must meet where every
    /// period is cut at the uncut on-time (the reference of the tests below).
    fn ratchet_current_a(
        v_bus_v: f64,
        r_ohm: f64,
        l_h: f64,
        t_on_min_s: f64,
        period_s: f64,
        freewheel: Freewheel,
    ) -> f64 {
        let d = (t_on_min_s / period_s).clamp(0.0, 1.0);
        let v_off = match freewheel {
            Freewheel::Shorted => 0.0,
            Freewheel::Diode { v_f_v } => v_f_v,
            Freewheel::Reversed => v_bus_v,
        };
        let continuous = (v_bus_v * d - v_off * (1.0 - d)) / r_ohm;
        let triangle = if v_off > 0.0 {
            let t_on = d * period_s;
            let i_pk = v_bus_v * t_on / l_h;
            let t_fall = l_h * i_pk / v_off;
            if t_on + t_fall <= period_s {
                i_pk * (t_on + t_fall) / (2.0 * period_s)
            } else {
                0.0
            }
        } else {
            0.0
        };
        continuous.max(triangle).clamp(0.0, v_bus_v / r_ohm)
    }

    fn chain() -> SenseChain {
        SenseChain {
            r_shunt_ohm: 0.005,
            r_tolerance: 0.01,
            gain: 20.0,
            gain_tolerance: 0.02,
            offset_v: 0.1,
            offset_tolerance_v: 0.01,
        }
    }

    /// The window against a brute-force enumeration of all 2^5 tolerance
    /// corners of the five terms (an independent method: every corner's
    /// trip current by the defining equation).
    #[test]
    fn trip_window_is_the_extreme_of_every_corner() {
        for (v_th, c) in [
            (1.0, chain()),
            (0.12, chain()),
            (
                0.3,
                SenseChain {
                    gain: 1.0,
                    gain_tolerance: 0.0,
                    offset_v: 0.0,
                    offset_tolerance_v: 0.0,
                    ..chain()
                },
            ),
        ] {
            let th = Threshold {
                v_nominal_v: v_th,
                tolerance: 0.03,
                offset_v: 0.005,
            };
            let w = trip_window(&c, &th);
            let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
            for k in 0..32u32 {
                let s = |bit: u32| if k & (1 << bit) != 0 { 1.0 } else { -1.0 };
                let v = th.v_nominal_v * (1.0 + s(0) * th.tolerance) + s(1) * th.offset_v;
                let off = c.offset_v + s(2) * c.offset_tolerance_v;
                let r = c.r_shunt_ohm * (1.0 + s(3) * c.r_tolerance);
                let g = c.gain * (1.0 + s(4) * c.gain_tolerance);
                // The current at which the chain's output meets the threshold.
                let i = (v - off) / (r * g);
                lo = lo.min(i);
                hi = hi.max(i);
            }
            assert!(
                (w.low_a - lo).abs() <= 1e-12 * lo.abs().max(1.0),
                "{w:?} {lo}"
            );
            assert!(
                (w.high_a - hi).abs() <= 1e-12 * hi.abs().max(1.0),
                "{w:?} {hi}"
            );
            assert!(w.low_a <= w.nominal_a && w.nominal_a <= w.high_a);
        }
    }

    /// A filter of N samples at f: a pulse of (N − 1)/f − ε never collects N
    /// samples, one of N/f always does, whatever its phase against the clock
    /// (counted by brute force over 1 000 phases).
    #[test]
    fn filter_passes_and_rejects_by_sample_count() {
        let f = Filter {
            clock_hz: 10e6,
            samples: 4,
        };
        let count = |width_s: f64, phase: f64| {
            // Sample instants k/f; the pulse spans [phase/f, phase/f + width].
            let t0 = phase / f.clock_hz;
            (0..100)
                .map(|k| f64::from(k) / f.clock_hz)
                .filter(|t| *t >= t0 && *t <= t0 + width_s)
                .count()
        };
        for p in 0..1000 {
            let phase = 0.5 + f64::from(p) / 1000.0;
            assert!(count(f.rejects_below_s() * (1.0 - 1e-9), phase) < 4);
            assert!(count(f.delay_s(), phase) >= 4);
        }
        assert!((f.delay_s() - 400e-9).abs() < 1e-15);
        assert!((f.rejects_below_s() - 300e-9).abs() < 1e-15);
    }

    /// The ratchet's volt-second balance against a period-by-period
    /// integration of L·di/dt = v − R·i (exact exponentials) to steady state.
    #[test]
    fn ratchet_matches_a_period_by_period_integration() {
        let (v, r, l, t_on, period) = (24.0, 0.5, 200e-6, 2e-6, 50e-6);
        for fw in [
            Freewheel::Shorted,
            Freewheel::Diode { v_f_v: 0.8 },
            Freewheel::Reversed,
        ] {
            let v_off = match fw {
                Freewheel::Shorted => 0.0,
                Freewheel::Diode { v_f_v } => -v_f_v,
                Freewheel::Reversed => -v,
            };
            let step = |i: f64, u: f64, t: f64| {
                let i_inf = u / r;
                let next = i_inf + (i - i_inf) * (-r * t / l).exp();
                next.max(0.0)
            };
            let mut i = 0.0;
            let mut mean = 0.0;
            for _ in 0..2_000 {
                // Mean over the period by fine sub-steps.
                let n = 200;
                let mut acc = 0.0;
                for k in 0..n {
                    let dt = period / f64::from(n);
                    let t = f64::from(k) * dt;
                    let u = if t < t_on { v } else { v_off };
                    i = step(i, u, dt);
                    acc += i;
                }
                mean = acc / f64::from(n);
            }
            let balance = ratchet_current_a(v, r, l, t_on, period, fw);
            assert!(
                (mean - balance).abs() <= 0.02 * balance,
                "{fw:?}: integrated {mean} against {balance}"
            );
        }
    }

    #[test]
    fn reaction_overshoot_and_ring() {
        let t = reaction_time_s(100e-9, 50e-9, 80e-9, 60e-9, 20e-9);
        assert!((t - 310e-9).abs() < 1e-18);
        // 48 V across 100 µH for 310 ns: 0.1488 A.
        assert!((overshoot_a(48.0, 100e-6, t) - 0.1488).abs() < 1e-9);
        // 10 nH with 1 nF rings at 2π·√(1e-17) = 19.87 ns; two periods 39.7 ns.
        assert!((ring_allowance_s(10e-9, 1e-9) - 39.738e-9).abs() < 0.01e-9);
        assert_eq!(ring_allowance_s(0.0, 1e-9), 0.0);
    }

    /// Where the on-time the limit cannot cut drives more than the off-time
    /// removes, the chopped cycle settles at the volt-second balance; where it
    /// does not, the cycle stays under the trip plus the rise in the reaction.
    #[test]
    fn stall_cycle_meets_the_balance_and_the_trip() {
        let base = ChoppedStall {
            v_bus_v: 24.0,
            r_ohm: 0.5,
            l_h: 200e-6,
            period_s: 50e-6,
            freewheel: Freewheel::Shorted,
            i_trip_a: 0.5,
            t_blank_s: 1.5e-6,
            t_comparator_s: 0.1e-6,
            t_post_s: 0.4e-6,
        };
        // Trip far below the ratchet: every period is cut at blanking + post.
        let low = stall_cycle(&base);
        let balance = ratchet_current_a(24.0, 0.5, 200e-6, 1.9e-6, 50e-6, Freewheel::Shorted);
        assert!(
            (low.mean_a - balance).abs() <= 0.01 * balance,
            "{low:?} {balance}"
        );
        // Trip well above it: the cycle rides on the trip.
        let high = stall_cycle(&ChoppedStall {
            i_trip_a: 10.0,
            ..base
        });
        let rise = 24.0 / 200e-6 * 0.5e-6;
        assert!(high.peak_a <= 10.0 + rise + 1e-9, "{high:?}");
        assert!(high.peak_a >= 10.0, "{high:?}");
        assert!(
            high.mean_a < high.peak_a && high.valley_a < 10.0,
            "{high:?}"
        );
    }
}
