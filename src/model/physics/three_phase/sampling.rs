//! The low-side shunt current-sampling window of a centre-aligned timer.

use super::inputs::*;

// ---------------------------------------------------------------------------------------------
// Current-sampling window
// ---------------------------------------------------------------------------------------------

/// Low-side shunt sampling window of a centre-aligned timer.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SamplingWindow {
    /// Counter value, matched on the UP-count, at which to start the conversion so the
    /// sampling window is centred on the counter top: P − round(t_s/(2·t_tick)).
    pub trigger_compare: u32,
    /// Time from the trigger to the counter top, (P − trigger_compare)·t_tick.
    pub trigger_before_top_s: f64,
    /// Shortest low-side (complementary reference) time (1 − d)·T that still fits settling,
    /// dead time and sampling.
    pub min_low_side_on_s: f64,
    /// The same as the low-side gate's actual on-time (one dead time shorter).
    pub min_low_side_gate_on_s: f64,
    /// Largest high-side duty that keeps the window valid, 1 − `min_low_side_on_s`/T.
    pub max_high_side_duty: f64,
}

/// Sampling window for low-side shunt current sensing with a centre-aligned (up-down) counter.
///
/// Timer model and output convention (the emitted code's; common practice): the counter
/// counts 0 → P → 0 (P = `period_ticks`, the duty steps), so T = 2·P·t_tick; a channel's
/// high-side reference is active while the counter is below its compare value C_x (compare 0:
/// always off, P: always on), so it is high for d·T centred on the counter BOTTOM and the low
/// side conducts around the counter TOP; the complementary outputs get the dead time t_d as a
/// delay of each rising edge. So, with the top at t = 0, the low side is on over
/// [−(1 − d)T/2 + t_d, +(1 − d)T/2] (its gate on-time is (1 − d)T − t_d).
///
/// The conversion starts at the up-count match of C = P − c, t_c = c·t_tick before the top,
/// and samples for t_s: window [−t_c, t_s − t_c], centred on the top when t_c = t_s/2. It must
/// start after the low side has turned on and the shunt amplifier has settled, and end before
/// the low side turns off:
///   (1 − d)T/2 ≥ t_c + t_d + t_settle   and   (1 − d)T/2 ≥ t_s − t_c,
/// so the shortest low-side reference time is
///   t_ls,min = 2·max(t_c + t_d + t_settle, t_s − t_c)  (= 2·(t_settle + t_d) + t_s when
///   t_c = t_s/2), its gate on-time t_ls,min − t_d, and d_max = 1 − t_ls,min/T (own derivation).
///
/// Errors: invalid inputs; c > P; `NoSamplingWindow` when t_ls,min ≥ T.
pub fn sampling_window(
    period_ticks: u32,
    clock_per_tick_s: f64,
    t_settle_s: f64,
    t_sample_s: f64,
    t_dead_s: f64,
) -> Result<SamplingWindow> {
    check("period_ticks", f64::from(period_ticks), period_ticks > 0)?;
    check("clock_per_tick_s", clock_per_tick_s, clock_per_tick_s > 0.0)?;
    check("t_settle_s", t_settle_s, t_settle_s >= 0.0)?;
    check("t_sample_s", t_sample_s, t_sample_s >= 0.0)?;
    check("t_dead_s", t_dead_s, t_dead_s >= 0.0)?;
    let period_s = 2.0 * f64::from(period_ticks) * clock_per_tick_s;
    let c = (0.5 * t_sample_s / clock_per_tick_s).round();
    check("trigger_lead_ticks", c, c <= f64::from(period_ticks))?;
    let t_c = c * clock_per_tick_s;
    let half = (t_c + t_dead_s + t_settle_s).max(t_sample_s - t_c);
    let min_ls = 2.0 * half;
    if min_ls >= period_s {
        return Err(ThreePhaseError::NoSamplingWindow {
            min_low_side_on_s: min_ls,
            period_s,
        });
    }
    Ok(SamplingWindow {
        trigger_compare: period_ticks - c as u32,
        trigger_before_top_s: t_c,
        min_low_side_on_s: min_ls,
        min_low_side_gate_on_s: min_ls - t_dead_s,
        max_high_side_duty: 1.0 - min_ls / period_s,
    })
}
