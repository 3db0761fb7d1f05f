//! pwmplan 0.1.0 plan for pump-dc-link (pwmplan-hash:b3491520e48579bd92e906d712731f82696a3104cdd89cd5ad06ff9602798ac2)
//!
//! Chosen setting
//!   design            pump-dc-link
//!   board             Osprey 48 V three-phase bridge, one DC-link shunt (invented)
//!   switch            Corrie 100 V, 9.8 mΩ (invented)
//!   topology          three-phase
//!   objective         least-loss at typical values
//!   frequency         20.007 kHz, centre-aligned
//!   timer             clock 120.0 MHz; divider 1 (register 0); period 5998 ticks (register 2999)
//!   resolution        2999 duty steps (11.6 bits)
//!   dead time         125 ns = 15 ticks (code 0x0F); needed 119 ns
//!   duty limits       compare 20 to 2943 (0.7 % to 98.1 %); the load needs 23.4 % to 76.6 %
//!   three-phase       sinusoidal, zero sequence min-max; m 0.514, cos φ 0.967 at the rated case (10.0 A phase-current peak, 3.73 A mean from the DC link); electrical frequency 200.0 Hz; channels A, B, C share the period, the compare limits and the dead time
//!   current sampling  One shunt in the DC link, read twice per period on the UP-count: in the vector with one leg low (it carries minus that leg's current) and in the vector with one leg high (plus that leg's current); the third current is minus the sum of the two. Each reading needs its vector to last dead time 125 ns + settling 1.50 µs + sampling 800 ns, 291 counts (2.43 µs); the conversion starts 96 counts before the vector ends, so the acquisition ends at the next edge. Where a vector is shorter, the helper shifts the compares apart on the up-count and gives the difference back on the down-count, so each leg's on-time per period is kept (compare shifting; the timer loads the compares at both extremes). It fits the counter up to modulation 1.155; the load needs 0.609.
//!   feasible band     20.007 kHz to 40.000 kHz
//!
//! Constraints (limit, value, margin to the limit, status)
//!   junction-rated         145 °C     49.4 °C     95.6 K  ok
//!   junction-high-bus      145 °C     49.7 °C     95.3 K  ok
//!   audible            20.000 kHz  20.007 kHz    6.67 Hz  binds
//!   resolution         10.00 bits  11.55 bits  1.55 bits  ok
//!   dead-time              125 ns      119 ns    6.02 ns  ok
//!   duty-range            98.13 %     76.65 %    21.48 %  ok
//!   sampling-window       4.88 µs     25.0 µs    20.1 µs  ok
//!   frequency-band     16.000 kHz  20.007 kHz   4.01 kHz  ok
//!
//! Losses at the rated case (whole stage)
//!   conduction           1.68 W
//!   switching            340 mW
//!   output capacitance   79.2 mW
//!   reverse recovery     666 mW
//!   dead-time diode      78.3 mW
//!   gate drive           82.4 mW
//!   motor ripple copper  9.43 mW
//!   total                2.93 W
//!
//! Operating figures
//!   rated case              48.0 V supply, 45.0 °C ambient, 10.0 A load
//!   high-bus case           54.0 V supply, 45.0 °C ambient, 10.0 A load
//!   junction                49.4 °C at the rated case, 49.7 °C at the high-bus case (limit 145 °C)
//!   ripple, rated case      754 mA peak to peak at 20.007 kHz (continuous), 162 mA rms
//!   ripple, high-bus case   805 mA peak to peak at 20.007 kHz (continuous), 171 mA rms; the larger, checked against the ripple limit
//!   audibility, rated case  no significant line at or below 20.00 kHz; A-weighted in-band level none
//!
//! Current limit
//!   threshold       code 13 = 670 mV at the comparator
//!   trips           never below 10.9 A, always above 12.7 A (nominal 11.8 A; shunt in the supply return; shunt, amplifier and comparator tolerances stacked worst-case)
//!   operating peak  10.4 A (the high-bus case's load current plus half its ripple); margin to the lowest trip 476 mA
//!   peak            at most 12.8 A (102 mA over the highest trip: 24.7 mA in the 228 ns reaction, more where a chopped stall crosses the trip inside the uncut on-time); the switch's I_DM at 100 µs 240 A (margin 227 A)
//!   reaction        228 ns = filter 8.33 ns + comparator 60.0 ns + driver 120 ns + turn-off delay 26.0 ns + voltage rise 14.1 ns
//!   blanking        492 ns (59 blanking ticks) against a turn-on transient of 491 ns = driver 120 ns + turn-on delay 12.3 ns + current rise 3.94 ns + recovery 55.0 ns + ringing none (no loop inductance given) + amplifier settling 300 ns
//!   filter          1 sample at 120 MHz (passes a fault held 8.33 ns)
//!   uncut on-time   720 ns (blanking and reaction): the limit cannot cut a pulse before this; shorter pulses run their commanded length (the compare limits' shortest pulse is 200 ns)
//!   response        cycle-by-cycle
//!   stall           12.7 A (cycle-by-cycle: a stall is chopped at the trip's highest edge); junction 74.3 °C at hot R_ds(on) (Computed in steady state: the design gives no stall time (R_th(j-a) 9.30 K/W))
//!
//! Worst case over part and operating spreads
//!   junction         51.3 °C (limit 145 °C); ok; hot: V_th min, supply 54.0 V
//!   total-loss       4.12 W; ok; hot: V_th min, supply 54.0 V
//!   ripple           807 mA; ok; hot: V_th min, supply 54.0 V
//!   duty-range       76.75 % (limit 98.13 %); ok; hot: V_th min, supply 40.0 V
//!   dead-time        needs 119 ns against 125 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
//!   sampling-window  61.78 % (limit 115.47 %); ok; hot: V_th min, supply 40.0 V
//!   audible          ok; no significant audible line at any corner
//!   corners          4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
//!
//! Checked on the registers (independent simulation of the written values)
//!   pulses         shortest high-side pulse 208 ns at COMPARE_MIN, shortest low-side on-time 808 ns at COMPARE_MAX (minimum pulse 200 ns, bootstrap refresh 800 ns)
//!   rated case     at compare duty 72.252 %: mean current 9.998 A (plan 10.00 A), ripple 754.5 mA peak to peak (plan 754.0 mA)
//!   high-bus case  at compare duty 69.809 %: mean current 9.998 A (plan 10.00 A), ripple 805.9 mA peak to peak (plan 805.4 mA)
//!   sampling       at the written trigger, over the compares the plan allows, the sampled state has held 1.50 µs before and holds 800 ns after (settling and sampling need no more)
//!   current limit  trip window 10.88 A to 12.67 A over the 32 tolerance corners; a stall chopped on the written threshold, blanking and filter peaks at 12.69 A (plan 12.77 A) with a mean of 12.55 A (plan's stall current 12.67 A)
//!   not checked    three-phase phase currents are held here to 5 % (peak) and 5 % (ripple), not the 1 % of single-phase plans: on 150 random designs the chosen settings' peaks agree within 0.62 % and their ripples within 0.86 %, an alternative setting was seen 2 % off on the peak, and the averaged model holds the fundamental still within a PWM period, which loses accuracy below about 20 PWM periods per electrical period
//!
//! Alternatives
//!   rounder-frequency  30.000 kHz (divider 1, 4000 ticks, centre): +621 mW total loss, +0.9 K junction, -268 mA ripple, -0.58 bits resolution
//!   highest-frequency  40.000 kHz (divider 1, 3000 ticks, centre): +1246 mW total loss, +1.8 K junction, -403 mA ripple, -1.00 bits resolution
//!
//! Findings (`pwmplan explain CODE` says what a bracketed code means)
//!   info  the dead time costs about 120 mV of mean output voltage (0.25 % of the nominal supply) where it opposes the current; the compare duties above already make it up [dead-time-voltage-error]
//!
//! Assumptions
//!   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve; R_ds(on) as given at V_GS = 10.0 V, not moved to the 12.0 V drive (no second datasheet point)
//!   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance); the turn-off with the whole load current in the channel through the Miller swing (the switch file has no C_rss curve or no g_fs; conservative); at each hard turn-on (each of the 720 angles under sinusoidal modulation, each chopped edge under six-step), bridge partner's recovery: a charge-control body diode with transit time 31.3 ns fitted to Q_rr less the output charge Q_oss(V_R) and the junction's forward charge at the current zero crossing of the datasheet's Q_rr test (100 A/µs from 30.0 A at 50.0 V) (the junction voltage from V_sd(I)), recovering at each hard turn-on's current slope (2·I/t_ri; with a loop inductance the slope its followed current rise ends with), plus charging its output capacitance (Q_oss·V − E_oss); under sinusoidal modulation, at each of the 720 angles, dead-time diode conduction for its share of each dead time, from the outgoing switch's hand-over (turn-off delay, node swing, half the current fall; or, after a soft turn-off, the gate down to the plateau and half-way to threshold) until the incoming switch has taken the current (half its current rise after its delay; or, at a soft turn-on, its gate from the Miller-kicked voltage up to threshold plus the diode's transit time) at V_sd(I): the datasheet V_sd at 30.0 A (assumed: the Q_rr test's forward current; the switch file gives no body_diode.v_sd_at), lowered by kT/q·ln(I_test/I) below it, no ohmic rise above it; under six-step, body-diode conduction (the off-time freewheel, the dead times, each commutation's freewheel, the floating phase's) at V_SD(I) for as long as the simulated circuit puts the current in a diode, its gate edges taken as instant (the diode's share of a dead time is not shortened by the switches' delays there); stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop
//!   - sinusoidal: star-connected non-salient motor, phase voltage E + (R + jωL)·I plus what the legs lose, made up edge by edge (each dead time clamped by the diode in the direction of the current at that edge, that current moved by the other legs' late edges, the 5th to 25th current harmonics it drives followed, or where those do not settle the period-averaged bridge followed in time), and raised by x/sin x, x = π·f_e/f, for one compare written per PWM period; losses averaged over 720 angles of the electrical period; ripple in the small-ripple limit, carrier sidebands lumped on the carrier harmonics
//!   - six-step: 120° blocks simulated switch by switch to their periodic steady state (ideal switches with R_ds(on), body diodes at their forward voltage, dead times, the star motor's three currents with the back-EMF shape), so each commutation's diode freewheel and the floating phase's diode conduction are in the duty and the losses; commutation at a PWM period boundary; the PWM ripple and its audibility from the two conducting phases' exact R-L-back-EMF solution at that duty
//!   - the six switches thermally independent, each with the board's junction-to-ambient path; all high sides alike, all low sides alike
//!   - current sampling: one shunt in the DC link, read twice per period in the two active vectors of the up-count (minus the current of the leg that is low, then the current of the leg that is high), the compares shifted apart where a vector is shorter than a reading needs and given back on the down-count (each leg's on-time per period kept; the pulse around the counter bottom moves by the change of shift between periods), the third current from i_a + i_b + i_c = 0
//!   - rated load at the hottest ambient; ripple and switching loss checked again at the highest supply
//!
//! Cautions
//!   - Power stages can burn, shock and start motors unexpectedly: first power-up from a current-limited supply, motor mechanically safe, hand on the switch.
//!   - Figures come from datasheet typical values and first-order models: measure switching edges, dead time and case temperatures on the real board before relying on the margins.
//!   - Check every register value against the MCU reference manual; a wrong dead-time code can short a bridge leg.
//!   - Keep the current limit and over-temperature shutdown in hardware; this plan does not replace them.
//!   - Follow local electrical codes and licensed practice for mains-connected or high-energy equipment.
//!
//! Inputs
//!   pump-dc-link.yaml         sha256 0b3825962cf2c8a974a02b27c98247cd1b55b3f9d2e86354729ace8c1905f7f7
//!   osprey-3p48.yaml          sha256 ba97dc8c5bdca01a59aa77bc51f0c4e1755cc90ce192e26846bee8fa79ac9c4d
//!   switches/corrie-100.yaml  sha256 b376b085f2d49cf222861c7579f007155166c8a38da60a84924774039d8e631a
//!
//! PWM mode and polarity these constants assume: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
//!
//! What duty 0 means on this three-phase stage, and how to coast:
//!   Duty 0 on all three channels (compare 0) means all three low sides are on: the windings are shorted and a turning motor brakes; equal compares on all channels give zero line-to-line volts.
//!   To coast: disable the outputs (all six switches off); duty 0 is not coasting.
//!
//! Init sequence (register names differ per MCU; values are the constants below):
//!   1. Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.
//!   2. Divider register <- DIVIDER_REG (divider 1).
//!   3. Period register (counter top) <- PERIOD_REG (5998 ticks per period).
//!   4. Counting mode <- up-down (centre-aligned) (see CENTRE_ALIGNED).
//!   5. PWM mode and polarity: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
//!   6. Dead-time register <- DEAD_TIME_CODE (15 ticks, 125.0 ns); write it before the complementary outputs are ever enabled.
//!   7. Fault input (over-current): threshold <- LIMIT_THRESHOLD_CODE (670.3 mV), filter <- LIMIT_FILTER_SAMPLES samples at LIMIT_FILTER_CLOCK_HZ Hz, blanking after each turn-on <- LIMIT_BLANKING_TICKS ticks (491.7 ns), response <- cycle-by-cycle (see LIMIT_CYCLE_BY_CYCLE); clear any pending fault and arm the input now, before the outputs are ever enabled, so the first pulse is already limited.
//!   8. Channels A, B and C: the same PWM mode, complementary outputs with the dead time; compare registers <- INIT_COMPARE (outputs still disabled), then values from Duty::from_q16() through apply() only (one per channel).
//!   9. ADC trigger: a spare compare channel <- ADC_TRIGGER_COMPARE, triggering on the UP-count match only (just before the counter top, where the low sides conduct).
//!   10. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
//!   11. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 turns the low sides on and brakes a turning motor).
//!
//! `no_std`-compatible: uses `core` only, plus `embedded-hal` 1.0 for [`apply`].

/// Timer input clock, before the divider, Hz.
pub const CLOCK_HZ: u64 = 120000000;
/// Divider (prescaler) ratio.
pub const DIVIDER: u32 = 1;
/// Value of the divider register.
pub const DIVIDER_REG: u32 = 0;
/// Counter ticks per PWM period.
pub const PERIOD_TICKS: u32 = 5998;
/// Value of the period register (counter top).
pub const PERIOD_REG: u32 = 2999;
/// Up-down counting (centre-aligned) when true, up counting (edge-aligned) when false.
pub const CENTRE_ALIGNED: bool = true;
/// PWM frequency in millihertz (20.007 kHz).
pub const FREQUENCY_MILLIHZ: u64 = 20006669;
/// Compare value for 100 % on.
pub const DUTY_STEPS: u32 = 2999;
/// Dead-time register code (125.0 ns).
pub const DEAD_TIME_CODE: u32 = 0x0F;
/// Dead-time ticks the code gives (ticks of the counter's clock, 120.00 MHz).
pub const DEAD_TIME_TICKS: u32 = 15;
/// Smallest non-zero compare value allowed.
pub const COMPARE_MIN: u32 = 20;
/// Largest compare value allowed.
pub const COMPARE_MAX: u32 = 2943;
/// Compare counts a leg's dead time takes from its output pulse (dead time ×
/// frequency × `DUTY_STEPS`, rounded); see [`Duty::compensated`].
pub const DEAD_TIME_COMP_COUNTS: u32 = 7;
/// The compare the init sequence loads while the outputs are disabled
/// (0: the low sides on, braking a turning motor, once enabled).
pub const INIT_COMPARE: u32 = 0;
/// True when compare 0 with the outputs enabled turns the low side(s) on and
/// shorts the motor (braking). Coasting is outputs disabled.
pub const DUTY_ZERO_BRAKES: bool = true;
/// Three-phase bridge: channels A, B and C share the period, the compare
/// limits and the dead time; the same [`Duty`] conversion serves all three.
pub const CHANNELS: usize = 3;
/// One shunt in the DC link, read twice per period on the UP-count (see
/// [`dc_link_compares`]): each reading's vector must last this many counts (dead
/// time, settling, sampling).
pub const DC_LINK_MIN_VECTOR_COUNTS: u64 = 291;
/// Counts a reading's conversion starts before its vector ends.
pub const DC_LINK_TRIGGER_LEAD: u64 = 96;
// Current limit (fault input): it trips never below 10879 mA and
// always above 12670 mA of motor current (see the rationale).
/// Comparator threshold code (670.3 mV).
pub const LIMIT_THRESHOLD_CODE: u32 = 13;
/// Fault filter clock, Hz: a fault passes after `LIMIT_FILTER_SAMPLES` consecutive samples.
pub const LIMIT_FILTER_CLOCK_HZ: u64 = 120000000;
/// Fault filter sample count.
pub const LIMIT_FILTER_SAMPLES: u32 = 1;
/// Fault input ignored for this many blanking ticks after each turn-on (491.7 ns).
pub const LIMIT_BLANKING_TICKS: u32 = 59;
/// True: a fault turns the outputs off until the next period (cycle-by-cycle);
/// false: until firmware clears it (latched).
pub const LIMIT_CYCLE_BY_CYCLE: bool = true;

/// A duty as a compare value, always within the allowed range: 0 (off) or
/// `COMPARE_MIN..=COMPARE_MAX`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Duty(u32);

impl Duty {
    /// Output off.
    pub const OFF: Duty = Duty(0);
    /// The largest duty allowed.
    pub const MAX: Duty = Duty(COMPARE_MAX);

    /// From a compare value: 0 stays 0, anything else is clamped to the
    /// allowed range.
    pub const fn from_counts(counts: u64) -> Duty {
        if counts == 0 {
            Duty(0)
        } else if counts < COMPARE_MIN as u64 {
            Duty(COMPARE_MIN)
        } else if counts > COMPARE_MAX as u64 {
            Duty(COMPARE_MAX)
        } else {
            Duty(counts as u32)
        }
    }

    /// From a 16-bit fraction (65536 = 100 %), rounded to the nearest count;
    /// 0 is off and any other request gives at least `COMPARE_MIN`.
    pub const fn from_q16(duty_q16: u32) -> Duty {
        if duty_q16 == 0 {
            return Duty::OFF;
        }
        if duty_q16 >= 65536 {
            return Duty::MAX;
        }
        let counts = (duty_q16 as u64 * DUTY_STEPS as u64 + 32768) >> 16;
        Duty::from_counts(if counts == 0 { 1 } else { counts })
    }

    /// From permille (1000 = 100 %); 0 is off.
    pub const fn from_permille(permille: u32) -> Duty {
        if permille == 0 {
            return Duty::OFF;
        }
        if permille >= 1000 {
            return Duty::MAX;
        }
        // permille < 1000 here, so the product fits 32 bits.
        Duty::from_q16((permille * 65536 + 500) / 1000)
    }

    /// The compare value.
    pub const fn counts(self) -> u32 {
        self.0
    }

    /// This duty with the leg's dead time made up for the sign of its current
    /// (`current_out`: the current flows out of the leg): `DEAD_TIME_COMP_COUNTS`
    /// added, or taken away for current into it, within the allowed range; off
    /// stays off. Near zero current the sign is uncertain: keep the last sign or
    /// leave the duty alone there.
    pub const fn compensated(self, current_out: bool) -> Duty {
        if self.0 == 0 {
            return Duty::OFF;
        }
        let c = self.0 as u64;
        let k = DEAD_TIME_COMP_COUNTS as u64;
        let moved = if current_out { c + k } else if c > k { c - k } else { 1 };
        Duty::from_counts(moved)
    }
}

/// Set `duty` on a channel through embedded-hal's `SetDutyCycle`, scaling
/// the compare value to the driver's `max_duty_cycle()` (a `u16`, which may
/// be smaller than `DUTY_STEPS`). The scaled value stays within the allowed
/// range: the minimum is rounded up and the maximum down. A driver too coarse
/// to hold both apart keeps the maximum (the off-time the stage needs).
pub fn apply<P: embedded_hal::pwm::SetDutyCycle>(pwm: &mut P, duty: Duty) -> Result<(), P::Error> {
    let max = u64::from(pwm.max_duty_cycle());
    let steps = DUTY_STEPS as u64;
    if duty.counts() == 0 || max == 0 {
        return pwm.set_duty_cycle(0);
    }
    let lowest = (COMPARE_MIN as u64 * max).div_ceil(steps);
    let highest = COMPARE_MAX as u64 * max / steps;
    let nearest = (duty.counts() as u64 * max + steps / 2) / steps;
    let value = if nearest < lowest { lowest } else { nearest };
    let value = if value > highest { highest } else { value };
    pwm.set_duty_cycle(value as u16)
}

/// The duties of channels A, B and C from three 16-bit fractions, each as
/// [`Duty::from_q16`].
pub const fn duties_abc(duty_q16: [u32; 3]) -> [Duty; 3] {
    [
        Duty::from_q16(duty_q16[0]),
        Duty::from_q16(duty_q16[1]),
        Duty::from_q16(duty_q16[2]),
    ]
}

/// One PWM period of a DC-link shunt read twice (see [`dc_link_compares`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DcLinkPeriod {
    /// Compares to load for the UP-count and for the DOWN-count, legs A, B, C.
    pub up: [u32; 3],
    pub down: [u32; 3],
    /// The two ADC trigger counts, matched counting up.
    pub triggers: [u32; 2],
    /// Reading `k` is `signs[k]` times the current out of leg `legs[k]` (0, 1, 2 for A,
    /// B, C); the third current is minus the sum of the two.
    pub legs: [usize; 2],
    pub signs: [i8; 2],
}

/// One DC-link shunt, read twice per period: the middle leg's up compare held
/// within `DC_LINK_MIN_VECTOR_COUNTS` of neither extreme and the others pushed at
/// least that far from it; each leg's down compare is `2·compare − up`, so its
/// on-time per period is kept (the timer must load the compares at both extremes).
/// `None` where that does not fit the counter (a middle compare within half a
/// vector of an extreme): load the compares unshifted and skip this period's
/// readings.
pub const fn dc_link_compares(duties: [Duty; 3]) -> Option<DcLinkPeriod> {
    let p = DUTY_STEPS as u64;
    let n = DC_LINK_MIN_VECTOR_COUNTS;
    let c = [duties[0].0 as u64, duties[1].0 as u64, duties[2].0 as u64];
    // Highest compare first; a stable sort keeps ties in leg order.
    let mut o = [0usize, 1, 2];
    let mut i = 0;
    while i < 2 {
        let mut k = 0;
        while k + 1 < 3 - i {
            if c[o[k + 1]] > c[o[k]] {
                let t = o[k];
                o[k] = o[k + 1];
                o[k + 1] = t;
            }
            k += 1;
        }
        i += 1;
    }
    if 2 * n > p || c[0] > p || c[1] > p || c[2] > p {
        return None;
    }
    let mut u = c;
    u[o[1]] = if u[o[1]] < n { n } else if u[o[1]] > p - n { p - n } else { u[o[1]] };
    if u[o[0]] < u[o[1]] + n {
        u[o[0]] = u[o[1]] + n;
    }
    if u[o[2]] > u[o[1]] - n {
        u[o[2]] = u[o[1]] - n;
    }
    let mut d = [0u64; 3];
    let mut k = 0;
    while k < 3 {
        if 2 * c[k] < u[k] || 2 * c[k] - u[k] > p {
            return None;
        }
        d[k] = 2 * c[k] - u[k];
        k += 1;
    }
    Some(DcLinkPeriod {
        up: [u[0] as u32, u[1] as u32, u[2] as u32],
        down: [d[0] as u32, d[1] as u32, d[2] as u32],
        triggers: [
            (u[o[1]] - DC_LINK_TRIGGER_LEAD) as u32,
            (u[o[0]] - DC_LINK_TRIGGER_LEAD) as u32,
        ],
        legs: [o[2], o[0]],
        signs: [-1, 1],
    })
}

/// Set channels A, B and C (each as [`apply`]); stops at the first error.
pub fn apply_abc<A, B, C>(a: &mut A, b: &mut B, c: &mut C, duties: [Duty; 3]) -> Result<(), A::Error>
where
    A: embedded_hal::pwm::SetDutyCycle,
    B: embedded_hal::pwm::SetDutyCycle<Error = A::Error>,
    C: embedded_hal::pwm::SetDutyCycle<Error = A::Error>,
{
    apply(a, duties[0])?;
    apply(b, duties[1])?;
    apply(c, duties[2])
}
