//! Register-level check of the current limit: what the written threshold
//! code, blanking ticks and fault-filter setting do to a stalled motor.
//!
//! Owns: decoding the written threshold code into volts, the trip current at
//! every one of the 32 tolerance corners of the sensing chain (each by the
//! defining equation: the chain's output equals the threshold), and a stall
//! chopped cycle by cycle with the fault filter's samples on their own clock
//! grid (the n-th consecutive sample instant after the masked comparator
//! output rises, in absolute time, so its phase drifts from period to
//! period as on the real timer), followed period by period until it
//! settles, then measured over further periods.
//!
//! Deliberately independent of the model it checks: it calls nothing in
//! `physics` or `model`; it reads only the values it is given (the plan
//! record's). It does no I/O and prints nothing.

/// The sensing chain and the written threshold.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SensedThreshold {
    pub r_shunt_ohm: f64,
    pub r_tolerance: f64,
    pub gain: f64,
    pub gain_tolerance: f64,
    pub offset_v: f64,
    pub offset_tolerance_v: f64,
    /// The comparator's nominal threshold as written, V.
    pub threshold_v: f64,
    pub threshold_tolerance: f64,
    pub comparator_offset_v: f64,
}

/// A programmable threshold's code in volts: code/2^bits × full scale (the
/// board file's stated coding).
pub fn threshold_of_code_v(code: u32, bits: u32, full_scale_v: f64) -> f64 {
    f64::from(code) * full_scale_v / (1u64 << bits) as f64
}

/// The trip current at each of the 32 corners (threshold tolerance,
/// comparator offset, amplifier offset, shunt, gain each at ±): the current
/// at which R·G·I + V_off reaches the threshold.
pub fn corner_trips_a(s: &SensedThreshold) -> Vec<f64> {
    (0..32u32)
        .map(|k| {
            let sign = |bit: u32| if k & (1 << bit) != 0 { 1.0 } else { -1.0 };
            let v_th = s.threshold_v * (1.0 + sign(0) * s.threshold_tolerance)
                + sign(1) * s.comparator_offset_v;
            let v_off = s.offset_v + sign(2) * s.offset_tolerance_v;
            let r = s.r_shunt_ohm * (1.0 + sign(3) * s.r_tolerance);
            let g = s.gain * (1.0 + sign(4) * s.gain_tolerance);
            (v_th - v_off) / (r * g)
        })
        .collect()
}

/// The chopped stall as the registers and the circuit make it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LimitedStall {
    pub v_bus_v: f64,
    pub r_ohm: f64,
    pub l_h: f64,
    pub period_s: f64,
    /// Voltage the off-state applies against the current (0 shorted, V_f
    /// through a diode, V_bus reversed), V.
    pub v_off_v: f64,
    /// The off-state path blocks at zero current (a diode in it).
    pub blocks_at_zero: bool,
    pub i_trip_a: f64,
    /// Blanking as written: ticks × tick, s (0 without a blanking timer).
    pub blanking_s: f64,
    /// Comparator delay, s.
    pub comparator_s: f64,
    /// The fault filter as written: sample clock and count.
    pub filter: Option<(f64, u32)>,
    /// Driver propagation + turn-off delay + voltage rise, s.
    pub after_filter_s: f64,
}

/// What the chopped stall settles at.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StallRun {
    /// Highest current over the measured periods.
    pub peak_a: f64,
    /// Mean current over the measured periods.
    pub mean_a: f64,
}

/// Follow the stall from zero current, period by period, with exact
/// exponentials between events (L·di/dt = v − R·i, common practice): at
/// least 40 time constants, then 2 000 periods measured (own choice).
pub fn run_stall(s: &LimitedStall) -> StallRun {
    let tau = s.l_h / s.r_ohm;
    let i_on = s.v_bus_v / s.r_ohm;
    let i_off = -s.v_off_v / s.r_ohm;
    let settle = ((40.0 * tau / s.period_s).ceil() as u64).clamp(100, 4_000_000);
    let measured = 2_000u64;
    let mut i = 0.0;
    let (mut peak, mut charge) = (f64::NEG_INFINITY, 0.0);
    for n in 0..settle + measured {
        let start_s = n as f64 * s.period_s;
        let (end, top, q) = period(s, tau, i_on, i_off, i, start_s);
        if n >= settle {
            peak = peak.max(top);
            charge += q;
        }
        i = end;
    }
    StallRun {
        peak_a: peak,
        mean_a: charge / (measured as f64 * s.period_s),
    }
}

/// One period from current `i0` starting at absolute time `start_s`: the
/// end current, the highest current and the charge.
fn period(
    s: &LimitedStall,
    tau: f64,
    i_on: f64,
    i_off: f64,
    i0: f64,
    start_s: f64,
) -> (f64, f64, f64) {
    let decay = |t: f64| (-t / tau).exp();
    let at = |i0: f64, inf: f64, t: f64| inf + (i0 - inf) * decay(t);
    let integral = |i0: f64, inf: f64, t: f64| inf * t + (i0 - inf) * tau * (1.0 - decay(t));
    let crossing = if i0 >= s.i_trip_a {
        Some(0.0)
    } else if i_on > s.i_trip_a {
        Some(tau * ((i_on - i0) / (i_on - s.i_trip_a)).ln())
    } else {
        None
    };
    let off_at = crossing.map_or(s.period_s, |t_c| {
        let seen = (t_c + s.comparator_s).max(s.blanking_s);
        let passed = match s.filter {
            Some((clock, samples)) => {
                // The first sample instant of the grid at or after `seen`,
                // then samples − 1 more.
                let first = ((start_s + seen) * clock - 1e-9).ceil() / clock - start_s;
                first + f64::from(samples - 1) / clock
            }
            None => seen,
        };
        (passed + s.after_filter_s).min(s.period_s)
    });
    let top = at(i0, i_on, off_at);
    let mut q = integral(i0, i_on, off_at);
    let rest = s.period_s - off_at;
    let to_zero = if s.blocks_at_zero && top > 0.0 && i_off < 0.0 {
        tau * ((top - i_off) / -i_off).ln()
    } else {
        f64::INFINITY
    };
    let end = if to_zero < rest {
        q += integral(top, i_off, to_zero);
        0.0
    } else {
        q += integral(top, i_off, rest);
        at(top, i_off, rest)
    };
    (end, top.max(i0), q)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A brute-force reference: explicit steps of 5 ns with the limiter as a
    /// state machine (comparator output delayed, masked by the blanking,
    /// counted by the filter on its own sample grid, the switch opening after
    /// the last delay), every event on the step grid.
    fn stepped(s: &LimitedStall, periods: u64, measured: u64) -> (f64, f64) {
        let dt = 5e-9;
        let steps = (s.period_s / dt).round() as u64;
        let (mut i, mut peak, mut q) = (0.0_f64, f64::NEG_INFINITY, 0.0);
        for n in 0..periods + measured {
            let (mut crossed_at, mut count, mut off_at) = (None::<f64>, 0u32, f64::INFINITY);
            for k in 0..steps {
                let t = k as f64 * dt;
                let on = t < off_at;
                if on && crossed_at.is_none() && i >= s.i_trip_a {
                    crossed_at = Some(t);
                }
                if let Some(tc) = crossed_at
                    && off_at.is_infinite()
                {
                    let seen = t + 1e-12 >= (tc + s.comparator_s).max(s.blanking_s);
                    match s.filter {
                        Some((clock, samples)) => {
                            let abs = n as f64 * s.period_s + t;
                            let on_grid = ((abs * clock).round() - abs * clock).abs() < 1e-6;
                            if seen && on_grid {
                                count += 1;
                                if count == samples {
                                    off_at = t + s.after_filter_s;
                                }
                            }
                        }
                        None if seen => off_at = t + s.after_filter_s,
                        None => {}
                    }
                }
                let v = if t < off_at { s.v_bus_v } else { -s.v_off_v };
                let next = i + dt * (v - s.r_ohm * i) / s.l_h;
                i = if s.blocks_at_zero && t >= off_at && next < 0.0 {
                    0.0
                } else {
                    next
                };
                if n >= periods {
                    peak = peak.max(i);
                    q += i * dt;
                }
            }
        }
        (peak, q / (measured as f64 * s.period_s))
    }

    fn stall(filter: Option<(f64, u32)>, blanking_s: f64, v_off_v: f64) -> LimitedStall {
        LimitedStall {
            v_bus_v: 24.0,
            r_ohm: 2.0,
            l_h: 200e-6,
            period_s: 20e-6,
            v_off_v,
            blocks_at_zero: v_off_v > 0.0,
            i_trip_a: 5.0,
            blanking_s,
            comparator_s: 100e-9,
            filter,
            after_filter_s: 200e-9,
        }
    }

    /// The exact event solution against the stepped reference, with and
    /// without blanking and filter, shorted, diode and reversed off-states:
    /// the mean within 1 %, and the peak within what the 5 ns step resolves
    /// where the chopping repeats period by period. A reversed off-state
    /// empties the winding fast and its crossings wander through the period;
    /// one that lands within the reaction of the period's end starts the
    /// next period above the trip, so its highest peak depends on the periods
    /// followed: there both peaks are held to the bound instead, the trip plus
    /// the rise over the blanking and two reactions.
    #[test]
    fn the_chopped_stall_matches_a_stepped_simulation() {
        for (s, repeats) in [
            (stall(None, 0.0, 0.0), true),
            (stall(Some((20e6, 4)), 500e-9, 0.0), true),
            (stall(Some((20e6, 2)), 0.0, 0.7), true),
            (stall(None, 0.0, 24.0), false),
        ] {
            let run = run_stall(&s);
            let (peak, mean) = stepped(&s, 100, 2_000);
            let step_rise: f64 = 24.0 / 200e-6 * 5e-9;
            assert!(
                (run.mean_a - mean).abs() <= 0.01 * mean,
                "{s:?}: {run:?} against {mean}"
            );
            if repeats {
                assert!(
                    (run.peak_a - peak).abs() <= 3.0 * step_rise,
                    "{s:?}: {run:?} against {peak}"
                );
            } else {
                let bound = s.i_trip_a
                    + 24.0 / 200e-6 * (s.blanking_s + 2.0 * (s.comparator_s + s.after_filter_s));
                for p in [run.peak_a, peak] {
                    assert!(p >= s.i_trip_a && p <= bound, "{s:?}: {p} outside {bound}");
                }
            }
        }
    }

    #[test]
    fn codes_and_corners() {
        assert!((threshold_of_code_v(13, 6, 3.3) - 0.6703125).abs() < 1e-12);
        let s = SensedThreshold {
            r_shunt_ohm: 0.002,
            r_tolerance: 0.0,
            gain: 20.0,
            gain_tolerance: 0.0,
            offset_v: 0.2,
            offset_tolerance_v: 0.0,
            threshold_v: 0.6703125,
            threshold_tolerance: 0.0,
            comparator_offset_v: 0.0,
        };
        for i in corner_trips_a(&s) {
            assert!((i - 11.7578125).abs() < 1e-9);
        }
    }
}
