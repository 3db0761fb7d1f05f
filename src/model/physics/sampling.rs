//! Where in the PWM period a brushed drive samples its motor current, and the duties at
//! which the sampling window fits.
//!
//! Owns: which switching state a shunt sees the motor current in (by topology and shunt
//! place), the counter position of the middle of that state, the ADC trigger there, the
//! sample's offset from the update event, and the compare-duty range over which settling,
//! the dead time and the acquisition fit inside the state. Pure: no I/O.
//!
//! # Why the middle of a state (Buso, Mattavelli, *Digital Control in Power Electronics*,
//! 2006, ch. 2, "regular sampling")
//!
//! Within one switching state the motor current is a straight ramp (the ripple's
//! triangle), so the value at the middle of any one state is the period's mean current.
//! A sample there reads the mean without filtering, and the switching edges, which disturb
//! the shunt signal, are as far away as they can be.
//!
//! # Timer convention (the emitted header's; common practice)
//!
//! Centre alignment: the counter runs 0 → P → 0 (P the duty steps), `T = 2P` ticks, the
//! high-side reference is on while the counter is below the compare `c`, so its on-time is
//! centred on the counter bottom and its off-time on the top. Edge alignment: the counter
//! runs 0 → P − 1, `T = P` ticks, the reference is on from 0 to `c`. The update event (the
//! compare written last takes effect) is at counter 0.
//!
//! # The window (own derivation, as for the three-phase low-side shunts)
//!
//! The conversion starts `t_c = lead·tick` before the middle (`lead = round(t_s/(2·tick))`,
//! centring the acquisition `t_s` on it). The state must have begun a dead time plus the
//! amplifier's settling before the conversion starts and last until it ends:
//! `L/2 ≥ t_c + t_d + t_settle` and `L/2 ≥ t_s − t_c`, `L` the state's length. So the
//! state must last `L_min = 2·max(t_c + t_d + t_settle, t_s − t_c)`: an on-time gives
//! `d ≥ L_min/T`, an off-time `d ≤ 1 − L_min/T`, and the unipolar bridge's active state
//! (leg A at `c`, leg B at `P − c`, active while the counter is between them, `(2d − 1)·T/2`
//! on each count) `d ≥ 1/2 + L_min/T` (forward; reverse mirrors it).

/// Where the shunt sits (see the board's `overcurrent.shunt.place`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ShuntPlace {
    /// One shunt in the supply return.
    SupplyReturn,
    /// In the low side of a leg (of leg B on an H-bridge).
    Leg,
    /// In series with the motor.
    Phase,
}

/// The brushed stage, as far as sampling is concerned.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BrushedStage {
    LowSide,
    HalfBridge,
    HBridgeBipolar,
    HBridgeUnipolar,
}

/// The switching state whose middle is sampled.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SenseState {
    /// The high-side reference's on-time (the switch's on-time on a low-side stage).
    On,
    /// The off-time (the low side conducting).
    Off,
    /// Unipolar H-bridge: leg A high, leg B low.
    Active,
}

/// Which state a shunt sees the motor current in, and the sign it reads it with (+1: the
/// motor current as the plan counts it, −1: reversed). A phase shunt sees the current in every
/// state: it is sampled at the counter top on an up-down count (the shorter delay) and in the
/// on-time on an up-count (the longer compute time).
pub fn sensed_state(stage: BrushedStage, place: ShuntPlace, centre: bool) -> (SenseState, f64) {
    use BrushedStage::*;
    use ShuntPlace::*;
    match (stage, place) {
        (_, Phase) if centre => (SenseState::Off, 1.0),
        (_, Phase) => (SenseState::On, 1.0),
        (LowSide, _) => (SenseState::On, 1.0),
        (HalfBridge, SupplyReturn) => (SenseState::On, 1.0),
        // The freewheeling current runs up through the low side, against the shunt's sense.
        (HalfBridge, Leg) => (SenseState::Off, -1.0),
        (HBridgeBipolar, _) => (SenseState::On, 1.0),
        (HBridgeUnipolar, SupplyReturn) => (SenseState::Active, 1.0),
        (HBridgeUnipolar, Leg) => (SenseState::Off, 1.0),
    }
}

/// How the firmware finds the trigger count.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TriggerRule {
    /// A fixed count, matched while counting up (`true`) or down.
    Fixed { count: u64, counting_up: bool },
    /// Up-count: `(compare + add) / 2 − lead` each period (the middle moves with the duty).
    HalfCompare { add: u64, lead: u64 },
}

/// The sampling plan of a brushed drive at one timer setting.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BrushedSampling {
    pub state: SenseState,
    /// Sign of the current as the shunt reads it.
    pub sign: f64,
    pub trigger: TriggerRule,
    /// Sampling at both counter extremes (a loop updating every half period): the second
    /// trigger, in the middle of the off-time around the top; `trigger` is then the bottom's,
    /// in the middle of the on-time.
    pub top_trigger: Option<TriggerRule>,
    /// Ticks the conversion starts before the state's middle.
    pub lead_ticks: u64,
    /// Ticks the state's middle lies after the reference's (half the dead time, or 0).
    pub shift_ticks: u64,
    /// The shortest state that holds the window, s.
    pub min_state_s: f64,
    /// Compares (and duties) at which the window fits (forward driving).
    pub compare_min: u64,
    pub compare_max: u64,
    pub duty_min: f64,
    pub duty_max: f64,
}

/// The timer setting and sensing chain the window is built on.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SamplingTimer {
    pub centre: bool,
    /// Duty steps P.
    pub duty_steps: u64,
    /// One counter tick, s.
    pub tick_s: f64,
    /// Dead time, s (0 on a stage without complementary outputs).
    pub dead_s: f64,
    /// Amplifier settling after the state begins, s.
    pub settle_s: f64,
    /// ADC acquisition, s.
    pub acquire_s: f64,
}

impl SamplingTimer {
    /// The PWM period, s.
    pub fn period_s(&self) -> f64 {
        let ticks = if self.centre { 2 } else { 1 } * self.duty_steps;
        ticks as f64 * self.tick_s
    }
}

/// Ticks the sensed state's middle lies after the reference's: half the dead time on a stage
/// with complementary outputs (with forward current the leg it flows out of turns high a dead
/// time late, its low-side diode holding it low meanwhile, and the leg it flows into turns
/// low a dead time late, its high-side diode holding it high: every state begins, or ends, a
/// dead time after its reference edge on the same side), none on a single switch.
fn dead_time_shift_ticks(stage: BrushedStage, t: &SamplingTimer) -> u64 {
    match stage {
        BrushedStage::LowSide => 0,
        _ => (0.5 * t.dead_s / t.tick_s).round() as u64,
    }
}

/// A fixed trigger `offset` ticks after (or, negative, before) a counter extreme: the bottom
/// (`top` false) or the top at `p`.
pub(crate) fn at_extreme(p: u64, top: bool, offset: i64) -> Option<TriggerRule> {
    let k = offset.unsigned_abs();
    Some(match (top, offset >= 0) {
        (false, true) => fixed(k, true),
        (false, false) => fixed(k, false),
        (true, true) => fixed(p.checked_sub(k)?, false),
        (true, false) => fixed(p.checked_sub(k)?, true),
    })
}

/// The sampling plan (module doc). `None` when no duty holds the window.
pub fn brushed_sampling(
    stage: BrushedStage,
    place: ShuntPlace,
    t: &SamplingTimer,
) -> Option<BrushedSampling> {
    let (state, sign) = sensed_state(stage, place, t.centre);
    let lead = (0.5 * t.acquire_s / t.tick_s).round() as u64;
    let shift = dead_time_shift_ticks(stage, t);
    // Shifted: the state as conducted is a dead time shorter than the reference's and the
    // window sits on its middle; unshifted: the settling counts from the switch's turn-on.
    // The lead is the acquisition's half rounded to a tick, so t_c and t_s − t_c are each at
    // most t_s/2 + tick/2: the bound taken, so the need does not fall as the tick grows (a
    // coarser timer never holds a window a finer one at the same frequency does not).
    let half = 0.5 * (t.acquire_s + t.tick_s);
    let min_state_s = if shift > 0 {
        2.0 * (half + t.settle_s) + t.dead_s
    } else {
        2.0 * (half + t.dead_s + t.settle_s)
    };
    // The state's half-length in ticks the window needs, and the first whole count past it
    // (strictly past: the state's edge may not fall inside the window; the margin also covers
    // the floating point's last digit and, shifted, the shift's rounding).
    let need = min_state_s / 2.0 / t.tick_s;
    let past = (need + 1e-6).floor() as u64 + 1 + u64::from(shift > 0);
    let p = t.duty_steps;
    let offset = shift as i64 - lead as i64;
    let (trigger, compare_min, compare_max) = match (state, t.centre) {
        (SenseState::On, true) => (at_extreme(p, false, offset)?, past, p),
        // Unipolar: both low sides are on around the top while the counter is above both
        // legs' compares, c and P − c, so the state shrinks at both ends of the range.
        (SenseState::Off, true) => (
            at_extreme(p, true, offset)?,
            if stage == BrushedStage::HBridgeUnipolar {
                past
            } else {
                0
            },
            p.checked_sub(past)?,
        ),
        // Active between P − c and c on each count, its middle ⌈P/2⌉ or ⌊P/2⌋ from the
        // edges: c ≥ ⌈P/2⌉ + need.
        (SenseState::Active, _) => (
            fixed((p / 2 + shift).checked_sub(lead)?, true),
            p.div_ceil(2) + past,
            p,
        ),
        // The middle ⌊(c + 2·shift)/2⌋ (or with P added) loses up to half a count to the
        // halving: the state needs 2·past counts.
        (SenseState::On, false) => (
            TriggerRule::HalfCompare {
                add: 2 * shift,
                lead,
            },
            2 * past,
            p,
        ),
        (SenseState::Off, false) => (
            TriggerRule::HalfCompare {
                add: p + 2 * shift,
                lead,
            },
            0,
            p.checked_sub(2 * past)?,
        ),
    };
    (compare_min < compare_max).then_some(BrushedSampling {
        state,
        sign,
        trigger,
        top_trigger: None,
        lead_ticks: lead,
        shift_ticks: shift,
        min_state_s,
        compare_min,
        compare_max,
        duty_min: compare_min as f64 / p as f64,
        duty_max: compare_max as f64 / p as f64,
    })
}

/// A shunt in series with the motor read at both extremes of an up-down count, so a loop can
/// update every half period (the stages whose two states are one on-time and one off-time:
/// not the unipolar bridge). The bottom's trigger in the middle of the on-time, the top's in
/// the middle of the off-time, each placed as in [`brushed_sampling`]; both states must hold
/// the window, so the compares are bounded at both ends. `None` on an up-count, a unipolar
/// bridge, or where no compare holds both windows.
pub fn phase_shunt_both_extremes(
    stage: BrushedStage,
    t: &SamplingTimer,
) -> Option<BrushedSampling> {
    if !t.centre || stage == BrushedStage::HBridgeUnipolar {
        return None;
    }
    // The top's plan: the off-time at the top, compares up to P − past.
    let top = brushed_sampling(stage, ShuntPlace::Phase, t)?;
    let p = t.duty_steps;
    let past = p - top.compare_max;
    let offset = top.shift_ticks as i64 - top.lead_ticks as i64;
    let bottom = at_extreme(p, false, offset)?;
    (past < top.compare_max).then_some(BrushedSampling {
        state: SenseState::On,
        trigger: bottom,
        top_trigger: Some(top.trigger),
        compare_min: past,
        duty_min: past as f64 / p as f64,
        ..top
    })
}

fn fixed(count: u64, counting_up: bool) -> TriggerRule {
    TriggerRule::Fixed { count, counting_up }
}

impl BrushedSampling {
    /// The trigger count at compare `c` (the fixed count, or the moving one).
    pub fn trigger_count(&self, compare: u64) -> u64 {
        match self.trigger {
            TriggerRule::Fixed { count, .. } => count,
            TriggerRule::HalfCompare { add, lead } => ((compare + add) / 2).saturating_sub(lead),
        }
    }

    /// The loop's sample offset τ at compare duty `d`, s: where, after the update event at
    /// counter 0, a sample of the period-mean (averaged) current would respond to the compare
    /// of its own period as this sample does. On an up-down count the middles of the on-time
    /// (the counter bottom, the update event itself: τ = 0) and of the off-time (the top:
    /// T/2, the period's on-time split evenly around it) read the averaged current there; the
    /// unipolar active state reads it at T/4 (the ripple runs at 2f). On an up-count the
    /// state's middle moves with the duty and the sample responds to its own period's compare
    /// by the on-state slope over the part of the on-time before it: `(V − v̄)·d·T/2`, i.e.
    /// `τ = (1 − d)·T/2` for the on-time, `(2 − d)·T/2` for the off-time, per volt of mean
    /// terminal voltage (own derivation, linear ramps: the slope is `(V − v̄)/L` on, `−v̄/L` off).
    pub fn offset_s(&self, t: &SamplingTimer, d: f64) -> f64 {
        let period = t.period_s();
        let d = d.clamp(0.0, 1.0);
        match (self.state, t.centre) {
            (SenseState::On, true) => 0.0,
            (SenseState::Off, true) => 0.5 * period,
            (SenseState::Active, _) => 0.25 * period,
            (SenseState::On, false) => 0.5 * (1.0 - d) * period,
            (SenseState::Off, false) => 0.5 * (2.0 - d) * period,
        }
    }

    /// The middle of the acquisition after the update event at counter 0 at compare duty `d`,
    /// s (where the sample physically is; the on-time's middle of an up-down count is the
    /// update event itself).
    pub fn instant_s(&self, t: &SamplingTimer, d: f64) -> f64 {
        let period = t.period_s();
        let shift = self.shift_ticks as f64 * t.tick_s;
        shift
            + match (self.state, t.centre) {
                (SenseState::On, false) => 0.5 * d * period,
                (SenseState::Off, false) => 0.5 * (1.0 + d) * period,
                _ => self.offset_s(t, d),
            }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // 72 MHz, P = 1800 (centre: 20 kHz), dead time 300 ns (21.6 ticks), settle 1 µs,
    // acquire 0.5 µs; lead = round(0.25 µs · 72 MHz) = 18 ticks = 0.25 µs (hand-worked):
    // the acquisition's half bounded by 0.25 µs + half a tick (1/144 µs) = 0.256944 µs:
    // - a complementary leg's states are centred half a dead time late, round(10.8) = 11
    //   ticks, and must last 2·(0.256944 + 1) + 0.3 = 2.813889 µs: half of it 101.3 ticks,
    //   so 103 counts on each side of the middle (strictly past, one more for the shift's
    //   rounding);
    // - a single switch: 2·(0.256944 + 0.3 + 1) = 3.113889 µs, 112.1 ticks, 113.
    const TIMER: SamplingTimer = SamplingTimer {
        centre: true,
        duty_steps: 1800,
        tick_s: 1.0 / 72e6,
        dead_s: 300e-9,
        settle_s: 1e-6,
        acquire_s: 0.5e-6,
    };

    #[test]
    fn a_half_bridge_leg_shunt_is_read_at_the_counter_top_reversed() {
        let s = brushed_sampling(BrushedStage::HalfBridge, ShuntPlace::Leg, &TIMER).unwrap();
        assert_eq!(s.state, SenseState::Off);
        assert_eq!(s.sign, -1.0);
        // The middle 11 ticks past the top, the conversion 18 before it: 7 before the top.
        assert_eq!(
            s.trigger,
            TriggerRule::Fixed {
                count: 1800 - 7,
                counting_up: true
            }
        );
        assert!((s.min_state_s - 2.813_888_9e-6).abs() < 1e-12);
        assert_eq!((s.compare_min, s.compare_max), (0, 1800 - 103));
        assert!((s.offset_s(&TIMER, 0.4) - 25e-6).abs() < 1e-15);
    }

    #[test]
    fn a_supply_return_shunt_is_read_at_the_counter_bottom() {
        let s = brushed_sampling(BrushedStage::LowSide, ShuntPlace::SupplyReturn, &TIMER).unwrap();
        assert_eq!(s.state, SenseState::On);
        assert_eq!(
            s.trigger,
            TriggerRule::Fixed {
                count: 18,
                counting_up: false
            }
        );
        assert_eq!((s.compare_min, s.compare_max), (113, 1800));
        assert_eq!(s.offset_s(&TIMER, 0.4), 0.0);
    }

    #[test]
    fn a_unipolar_supply_return_shunt_needs_a_least_modulation() {
        let s = brushed_sampling(
            BrushedStage::HBridgeUnipolar,
            ShuntPlace::SupplyReturn,
            &TIMER,
        )
        .unwrap();
        assert_eq!(s.state, SenseState::Active);
        // The active state's middle half a dead time past P/2.
        assert_eq!(
            s.trigger,
            TriggerRule::Fixed {
                count: 900 + 11 - 18,
                counting_up: true
            }
        );
        assert_eq!(s.compare_min, 900 + 103);
        assert!((s.offset_s(&TIMER, 0.4) - 12.5e-6).abs() < 1e-15);
    }

    #[test]
    fn a_unipolar_leg_shunt_is_read_in_the_zero_state_at_the_top() {
        let s = brushed_sampling(BrushedStage::HBridgeUnipolar, ShuntPlace::Leg, &TIMER).unwrap();
        assert_eq!(s.state, SenseState::Off);
        assert_eq!(
            s.trigger,
            TriggerRule::Fixed {
                count: 1800 - 7,
                counting_up: true
            }
        );
        assert_eq!((s.compare_min, s.compare_max), (103, 1800 - 103));
    }

    #[test]
    fn an_up_count_follows_the_compare() {
        let t = SamplingTimer {
            centre: false,
            ..TIMER
        };
        let on = brushed_sampling(BrushedStage::HBridgeBipolar, ShuntPlace::Leg, &t).unwrap();
        // (1000 + 2·11)/2 − 18; the halving may lose half a count, so 2·103 counts.
        assert_eq!(on.trigger_count(1000), 511 - 18);
        assert_eq!((on.compare_min, on.compare_max), (206, 1800));
        let off = brushed_sampling(BrushedStage::HalfBridge, ShuntPlace::Leg, &t).unwrap();
        assert_eq!(off.trigger_count(1000), 1411 - 18);
        assert_eq!((off.compare_min, off.compare_max), (0, 1800 - 206));
        assert!((off.instant_s(&t, 0.5) - (18.75e-6 + 11.0 / 72e6)).abs() < 1e-15);
        assert!((off.offset_s(&t, 0.5) - 18.75e-6).abs() < 1e-15);
    }

    /// Every topology and shunt place, on both counts, against the circuit worked by hand:
    /// where does the shunt carry the motor current, and in which sense?
    #[test]
    fn every_shunt_place_reads_the_state_it_carries_the_current_in() {
        use BrushedStage::*;
        use SenseState::*;
        use ShuntPlace::*;
        let table = [
            // A single switch: its source shunt carries the current only while it is on.
            (LowSide, SupplyReturn, [(On, 1.0), (On, 1.0)]),
            (LowSide, Leg, [(On, 1.0), (On, 1.0)]),
            // A half-bridge: the supply only while the high side is on; the low side's shunt
            // only while it freewheels, upwards.
            (HalfBridge, SupplyReturn, [(On, 1.0), (On, 1.0)]),
            (HalfBridge, Leg, [(Off, -1.0), (Off, -1.0)]),
            // Bipolar: the supply carries ±I always (read while A is high); leg B's low side
            // carries it while A is high.
            (HBridgeBipolar, SupplyReturn, [(On, 1.0), (On, 1.0)]),
            (HBridgeBipolar, Leg, [(On, 1.0), (On, 1.0)]),
            // Unipolar: the supply only in the active state; leg B's low side in the zero
            // state of both low sides, at the top.
            (
                HBridgeUnipolar,
                SupplyReturn,
                [(Active, 1.0), (Active, 1.0)],
            ),
            (HBridgeUnipolar, Leg, [(Off, 1.0), (Off, 1.0)]),
        ];
        for (stage, place, [centre, edge]) in table {
            assert_eq!(
                sensed_state(stage, place, true),
                centre,
                "{stage:?} {place:?}"
            );
            assert_eq!(
                sensed_state(stage, place, false),
                edge,
                "{stage:?} {place:?}"
            );
        }
        // A phase shunt always carries it: the top of an up-down count, the on-time's
        // middle of an up-count.
        for stage in [LowSide, HalfBridge, HBridgeBipolar, HBridgeUnipolar] {
            assert_eq!(sensed_state(stage, Phase, true), (Off, 1.0));
            assert_eq!(sensed_state(stage, Phase, false), (On, 1.0));
        }
    }

    #[test]
    fn no_window_when_the_states_are_too_short() {
        let t = SamplingTimer {
            duty_steps: 100,
            ..TIMER
        };
        // T = 200 ticks ≈ 2.8 µs < 3.5 µs.
        assert!(brushed_sampling(BrushedStage::HalfBridge, ShuntPlace::Leg, &t).is_none());
    }

    #[test]
    fn a_phase_shunt_read_at_both_extremes_is_bounded_at_both_ends() {
        // Hand-worked from the numbers above: the middles 11 ticks past each extreme, the
        // conversion 18 before: 7 ticks before the bottom (counting down) and 7 before the top
        // (counting up); 103 counts each side of either middle.
        let s = phase_shunt_both_extremes(BrushedStage::HalfBridge, &TIMER).unwrap();
        assert_eq!(s.state, SenseState::On);
        assert_eq!(s.trigger, fixed(7, false));
        assert_eq!(s.top_trigger, Some(fixed(1800 - 7, true)));
        assert_eq!((s.compare_min, s.compare_max), (103, 1800 - 103));
        assert_eq!(s.offset_s(&TIMER, 0.3), 0.0);
        // A single switch: no shift, 113 counts; the bottom's conversion 18 ticks before it.
        let s = phase_shunt_both_extremes(BrushedStage::LowSide, &TIMER).unwrap();
        assert_eq!(s.trigger, fixed(18, false));
        assert_eq!(s.top_trigger, Some(fixed(1800 - 18, true)));
        assert_eq!((s.compare_min, s.compare_max), (113, 1800 - 113));
        // Not on an up-count, not on a unipolar bridge.
        let edge = SamplingTimer {
            centre: false,
            ..TIMER
        };
        assert!(phase_shunt_both_extremes(BrushedStage::HalfBridge, &edge).is_none());
        assert!(phase_shunt_both_extremes(BrushedStage::HBridgeUnipolar, &TIMER).is_none());
    }
}
