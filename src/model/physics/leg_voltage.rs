//! Mean load voltage of a bridge as its compare value really drives it, and the compare duty
//! that gives a wanted mean voltage.
//!
//! Owns: the average effect of dead-time insertion and of the conduction drops on the load
//! voltage. During each dead time the leg that switches has both switches off and the body
//! diode in the direction of the current clamps its output, so the load stays at its old level
//! where the current opposes the transition and jumps to the new one where the current helps
//! it: the classic dead-time distortion (Murai, Watanabe, Iwasaki, *Waveform distortion and
//! correction circuit for PWM inverters with switching lag-times*, IEEE Trans. Industry
//! Applications 23(5), 1987; from memory). Either way the diode's voltage drives the current
//! toward zero; a small current reaches zero inside the dead time and then stays there (both
//! diodes block, the load terminal sits at its back-EMF) until the incoming switch turns on.
//! This module counts that too, with the current's slope taken as constant over the dead
//! time (R·i ≪ the driving voltage: own derivation from the switch states).

/// The load-voltage levels of a stage, V, and its dead-time geometry.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StageLevels {
    /// Load voltage in the high state with ideal switches (V_bus; H-bridge +V_bus).
    pub high_v: f64,
    /// Load voltage in the low state with ideal switches (0; bipolar H-bridge −V_bus).
    pub low_v: f64,
    /// Diode drop added to the clamped level during a dead time: V_SD per switching leg in the
    /// load path (one for a half-bridge and a unipolar H-bridge, two for a bipolar one).
    pub diode_v: f64,
    /// Switches conducting in the load path (one leg: 1; H-bridge: 2).
    pub switches_in_path: f64,
    /// Switches still conducting in the load path during a dead time (the leg that does not
    /// switch: 1 for a unipolar H-bridge, else 0).
    pub switches_in_clamp: f64,
    /// Dead-time intervals per period at the start of the high state (and as many at its end):
    /// 1, or 2 for unipolar switching (two pulses per period).
    pub edges_per_period: f64,
}

/// The stage's operating conditions around the dead times.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DeadTimeConditions {
    /// Inserted dead time (as encoded), s.
    pub t_dead_s: f64,
    pub f_sw_hz: f64,
    /// Load inductance, H, and back-EMF, V (the load terminal voltage at zero current).
    pub l_h: f64,
    pub back_emf_v: f64,
    /// On-resistance of each conducting switch, Ω.
    pub r_ds_on_ohm: f64,
}

/// Load current (positive in the high state's direction) at the start of the high state, at
/// its end, and its mean.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EdgeCurrents {
    pub at_start_a: f64,
    pub at_end_a: f64,
    pub mean_a: f64,
}

/// The load voltage a dead time at an edge holds, and for how long, s: the old level when
/// the current opposes the transition and the new one when it helps (each beyond the supply
/// rail by the diode drop: positive current is clamped low, negative high; less the drop of a
/// switch of the other leg still conducting), held until the
/// current reaches zero, t_0 = L·|i|/|v_clamp − E| (constant slope), at most the dead time;
/// the load then sits at E.
pub fn clamp(levels: &StageLevels, c: &DeadTimeConditions, i_a: f64) -> (f64, f64) {
    let rail = if i_a > 0.0 {
        levels.low_v - levels.diode_v
    } else {
        levels.high_v + levels.diode_v
    };
    let v = rail - levels.switches_in_clamp * i_a * c.r_ds_on_ohm;
    let drive = (v - c.back_emf_v).abs();
    let t = if drive > 0.0 {
        (c.l_h * i_a.abs() / drive).min(c.t_dead_s)
    } else {
        c.t_dead_s
    };
    (v, t)
}

/// Load-voltage change over one dead time at an edge, V·s, against the ideal (the new level
/// from the edge on): the clamp ([`clamp`]), then E.
fn edge_volt_seconds(levels: &StageLevels, c: &DeadTimeConditions, i_a: f64, rising: bool) -> f64 {
    let (v_clamp, t_clamp) = clamp(levels, c, i_a);
    let ideal = if rising { levels.high_v } else { levels.low_v };
    v_clamp * t_clamp + c.back_emf_v * (c.t_dead_s - t_clamp) - ideal * c.t_dead_s
}

/// The load voltage over one waveform period (`1/(edges_per_period·f)`) as `(volts, seconds)`
/// states in time order, for a high-state reference fraction `high`: the start edge's clamp
/// and zero-current rest, the high state less the drops, the end edge's clamp and rest, the
/// low state less the drops. The start edge is state 0, the end edge state 3. `None` when a
/// state would be shorter than nothing (a reference interval shorter than the dead time).
pub fn period_states(
    high: f64,
    levels: &StageLevels,
    c: &DeadTimeConditions,
    i: &EdgeCurrents,
) -> Option<[(f64, f64); 6]> {
    let period = 1.0 / (levels.edges_per_period * c.f_sw_hz);
    let drop = levels.switches_in_path * i.mean_a * c.r_ds_on_ohm;
    let (t_d, e) = (c.t_dead_s, c.back_emf_v);
    let (v_s, t_s) = clamp(levels, c, i.at_start_a);
    let (v_e, t_e) = clamp(levels, c, i.at_end_a);
    let (t_high, t_low) = (high * period - t_d, (1.0 - high) * period - t_d);
    (t_high >= 0.0 && t_low >= 0.0).then_some([
        (v_s, t_s),
        (e, t_d - t_s),
        (levels.high_v - drop, t_high),
        (v_e, t_e),
        (e, t_d - t_e),
        (levels.low_v - drop, t_low),
    ])
}

/// Mean load voltage minus the ideal `d·high + (1 − d)·low`: the dead-time edges
/// ([`edge_volt_seconds`] times f per edge) and the conducting switches' drop while they
/// conduct, `n·I·R_ds(on)·(1 − 2·k·t_d·f)` with k edge pairs per period (the mean of
/// [`period_states`]).
pub fn offset_v(levels: &StageLevels, c: &DeadTimeConditions, i: &EdgeCurrents) -> f64 {
    let per_edge = edge_volt_seconds(levels, c, i.at_start_a, true)
        + edge_volt_seconds(levels, c, i.at_end_a, false);
    let x = c.t_dead_s * c.f_sw_hz;
    let k = levels.edges_per_period;
    k * c.f_sw_hz * per_edge
        - levels.switches_in_path * i.mean_a * c.r_ds_on_ohm * (1.0 - 2.0 * k * x)
}

/// Mean load voltage at high-state reference fraction `d`.
pub fn mean_voltage_v(
    d: f64,
    levels: &StageLevels,
    c: &DeadTimeConditions,
    i: &EdgeCurrents,
) -> f64 {
    d * levels.high_v + (1.0 - d) * levels.low_v + offset_v(levels, c, i)
}

/// The high-state reference fraction that gives a mean load voltage `v_load_v` (the inverse
/// of [`mean_voltage_v`], linear in `d`).
pub fn fraction_for_voltage(
    v_load_v: f64,
    levels: &StageLevels,
    c: &DeadTimeConditions,
    i: &EdgeCurrents,
) -> f64 {
    (v_load_v - levels.low_v - offset_v(levels, c, i)) / (levels.high_v - levels.low_v)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn half_bridge(v_sd: f64) -> StageLevels {
        StageLevels {
            high_v: 24.0,
            low_v: 0.0,
            diode_v: v_sd,
            switches_in_path: 1.0,
            switches_in_clamp: 0.0,
            edges_per_period: 1.0,
        }
    }

    fn conditions(t_dead_s: f64, r: f64) -> DeadTimeConditions {
        DeadTimeConditions {
            t_dead_s,
            f_sw_hz: 20e3,
            l_h: 1e-3,
            back_emf_v: 10.0,
            r_ds_on_ohm: r,
        }
    }

    /// With ideal diodes and switches and a current too large to reach zero in the dead time
    /// the loss is t_d·f·V per leg, opposing the current (the textbook figure: Mohan, Undeland,
    /// Robbins, *Power Electronics*, 3rd ed., 2003, §8-7; from memory): 500 ns at 20 kHz on
    /// 24 V is 0.24 V.
    #[test]
    fn textbook_dead_time_error() {
        let out = EdgeCurrents {
            at_start_a: 3.0,
            at_end_a: 4.0,
            mean_a: 3.5,
        };
        let into = EdgeCurrents {
            at_start_a: -4.0,
            at_end_a: -3.0,
            mean_a: -3.5,
        };
        let (l, c) = (half_bridge(0.0), conditions(500e-9, 0.0));
        assert!((offset_v(&l, &c, &out) + 0.24).abs() < 1e-12);
        assert!((offset_v(&l, &c, &into) - 0.24).abs() < 1e-12);
        // A current that changes sign within the period (from −3 A to +3 A while high): both
        // dead times clamp to the level the reference goes to: no error on average.
        let both = EdgeCurrents {
            at_start_a: -3.0,
            at_end_a: 3.0,
            mean_a: 0.0,
        };
        assert!(offset_v(&l, &c, &both).abs() < 1e-12);
    }

    /// By hand with drops: 10 A, 1 V diode, 10 mΩ switch, x = t_d·f = 0.01:
    /// 0.01·(−25 − 1) − 10·0.01·0.98 = −0.358 V; the inverse returns the fraction.
    #[test]
    fn drops_by_hand_and_inverse() {
        let (l, c) = (half_bridge(1.0), conditions(500e-9, 0.01));
        let i = EdgeCurrents {
            at_start_a: 9.0,
            at_end_a: 11.0,
            mean_a: 10.0,
        };
        assert!((offset_v(&l, &c, &i) + 0.358).abs() < 1e-12);
        let v = mean_voltage_v(0.6, &l, &c, &i);
        assert!((fraction_for_voltage(v, &l, &c, &i) - 0.6).abs() < 1e-12);
    }

    /// The states' mean is the closed form of [`mean_voltage_v`] (unipolar geometry).
    #[test]
    fn states_average_to_the_mean() {
        let l = StageLevels {
            high_v: 24.0,
            low_v: 0.0,
            diode_v: 0.8,
            switches_in_path: 2.0,
            switches_in_clamp: 1.0,
            edges_per_period: 2.0,
        };
        let c = conditions(2e-6, 0.02);
        for (s, e) in [(3.0, 5.0), (-0.01, 2.0), (0.004, -0.3), (-2.0, -1.0)] {
            let i = EdgeCurrents {
                at_start_a: s,
                at_end_a: e,
                mean_a: 0.5 * (s + e),
            };
            let states = period_states(0.4, &l, &c, &i).unwrap();
            let t: f64 = states.iter().map(|x| x.1).sum();
            let mean = states.iter().map(|x| x.0 * x.1).sum::<f64>() / t;
            assert!((t - 1.0 / 40e3).abs() < 1e-18);
            assert!(
                (mean - mean_voltage_v(0.4, &l, &c, &i)).abs() < 1e-12,
                "{s} {e}"
            );
        }
    }

    /// A small current reaches zero inside the dead time: 0.1 A into 1 mH under
    /// |−1 V − 10 V| = 11 V takes 9.09 µs > 500 ns, so it does not; under a 10 µs dead time it
    /// does, after 9.09 µs, and the load then sits at E = 10 V for the rest (by hand).
    #[test]
    fn small_current_stops_inside_the_dead_time() {
        let l = half_bridge(1.0);
        let (short, long) = (conditions(500e-9, 0.0), conditions(10e-6, 0.0));
        let v_s = edge_volt_seconds(&l, &short, 0.1, true);
        assert!((v_s - (-1.0 - 24.0) * 500e-9).abs() < 1e-15);
        let t0 = 1e-3 * 0.1 / 11.0;
        let v_l = edge_volt_seconds(&l, &long, 0.1, true);
        let hand = -t0 + 10.0 * (10e-6 - t0) - 24.0 * 10e-6;
        assert!((v_l - hand).abs() < 1e-15);
    }
}
