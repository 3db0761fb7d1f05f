//! pwmplan 0.1.0 plan for belt-feeder (pwmplan-hash:d950483b7827582ca70a48ac24ab8d105c8d5147d2ba659fffae82323a56bb4d)
//!
//! Chosen setting
//!   design         belt-feeder
//!   board          Wren 24 V half-bridge (invented)
//!   switch         Tarn 40 V, 2.4 mΩ (invented)
//!   topology       half-bridge
//!   objective      least-loss at typical values
//!   frequency      20.005 kHz, edge-aligned
//!   timer          clock 88.00 MHz; divider 1 (register 0); period 4399 ticks (register 4398)
//!   resolution     4399 duty steps (12.1 bits)
//!   dead time      148 ns = 13 ticks (code 0x0D); needed 142 ns
//!   duty limits    compare 40 to 4342 (0.9 % to 98.7 %); the load needs 67.5 % to 94.4 %
//!   feasible band  20.005 kHz to 59.986 kHz
//!
//! Constraints (limit, value, margin to the limit, status)
//!   junction-rated         135 °C     56.8 °C     78.2 K  ok
//!   junction-high-bus      135 °C     56.9 °C     78.1 K  ok
//!   ripple                 875 mA      363 mA     512 mA  ok
//!   audible            20.000 kHz  20.005 kHz    4.55 Hz  binds
//!   resolution         10.00 bits  12.10 bits  2.10 bits  ok
//!   dead-time              148 ns      142 ns    5.62 ns  ok
//!   duty-range            98.70 %     94.43 %     4.27 %  ok
//!   frequency-band     16.000 kHz  20.005 kHz   4.00 kHz  ok
//!
//! Losses at the rated case (whole stage)
//!   conduction           33.5 mW
//!   switching            14.9 mW
//!   output capacitance   9.12 mW
//!   reverse recovery     17.3 mW
//!   dead-time diode      12.5 mW
//!   gate drive           32.5 mW
//!   motor ripple copper  2.95 mW
//!   total                123 mW
//!
//! Operating figures
//!   rated case              24.0 V supply, 55.0 °C ambient, 3.50 A load
//!   high-bus case           28.0 V supply, 55.0 °C ambient, 3.50 A load
//!   junction                56.8 °C at the rated case, 56.9 °C at the high-bus case (limit 135 °C)
//!   ripple, rated case      239 mA peak to peak at 20.005 kHz (continuous), 68.9 mA rms
//!   ripple, high-bus case   363 mA peak to peak at 20.005 kHz (continuous), 105 mA rms; the larger, checked against the ripple limit
//!   audibility, rated case  no significant line at or below 20.00 kHz; A-weighted in-band level none
//!
//! Worst case over part and operating spreads
//!   junction    58.2 °C (limit 135 °C); ok; hot: V_th max, supply 28.0 V
//!   total-loss  199 mW; ok; hot: V_th max, supply 28.0 V
//!   ripple      363 mA (limit 875 mA); ok; hot: V_th min, supply 28.0 V
//!   duty-range  94.45 % (limit 98.70 %); ok; hot: V_th min, supply 20.0 V
//!   dead-time   needs 142 ns against 148 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
//!   audible     ok; no significant audible line at any corner
//!   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
//!
//! Checked on the registers (independent simulation of the written values)
//!   pulses         shortest high-side pulse 307 ns at COMPARE_MIN, shortest low-side on-time 500 ns at COMPARE_MAX (minimum pulse 300 ns, bootstrap refresh 500 ns)
//!   rated case     at compare duty 78.745 %: mean current 3.500 A (plan 3.500 A), ripple 238.8 mA peak to peak (plan 238.8 mA)
//!   high-bus case  at compare duty 67.538 %: mean current 3.500 A (plan 3.500 A), ripple 362.9 mA peak to peak (plan 362.9 mA)
//!
//! Alternatives
//!   rounder-frequency  40.000 kHz (divider 1, 2200 ticks, edge): +85 mW total loss, +1.1 K junction, -181 mA ripple, -1.00 bits resolution
//!   highest-frequency  59.986 kHz (divider 1, 1467 ticks, edge): +171 mW total loss, +2.3 K junction, -242 mA ripple, -1.58 bits resolution
//!
//! Findings (`pwmplan explain CODE` says what a bracketed code means)
//!   warning  V_DSS 40.0 V is only 1.43x the highest bus 28.0 V; 1.5-2x is usual for ringing and back-EMF spikes. [vdss-margin-low]
//!   info     the C_rss curve gives a Miller charge of 13.5 nC over the gate-charge test swing from 20.0 V (half of V_DSS; q_g.at_v_ds not given) down to the on state; it is scaled by ×1.03 to Q_gd 14.0 nC (the curve sets the shape of C_gd, Q_gd its size) [c-rss-scaled-to-q-gd]
//!   info     the dead time costs about 70.9 mV of mean output voltage (0.30 % of the nominal supply) where it opposes the current; the compare duties above already make it up [dead-time-voltage-error]
//!
//! Assumptions
//!   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve; R_ds(on) as given at V_GS = 10.0 V, not moved to the 12.0 V drive (no second datasheet point)
//!   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance); the turn-off followed at the switch node, the switch's own C_ds and the partner's C_oss taking part of the load current while the node rises; the turn-on's voltage fall followed there too, the channel carrying the load current and what discharges its own C_ds and charges the partner's; bridge partner's recovery: no stored charge (Q_rr is no more than the output charge Q_oss(V_R) of the datasheet's Q_rr test (100 A/µs from 25.0 A at 20.0 V)), plus charging its output capacitance (Q_oss·V − E_oss); dead-time diode conduction for its share of each dead time, from the outgoing switch's hand-over (turn-off delay, node swing, half the current fall; or, after a soft turn-off, the gate down to the plateau and half-way to threshold) until the incoming switch has taken the current (half its current rise after its delay; or, at a soft turn-on, its gate from the Miller-kicked voltage up to threshold plus the diode's transit time) at V_sd(I): the datasheet V_sd at 25.0 A (assumed: the Q_rr test's forward current; the switch file gives no body_diode.v_sd_at), lowered by kT/q·ln(I_test/I) below it, no ohmic rise above it; stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop
//!   - motor current: exact periodic R-L-back-EMF solution of the terminal voltage the stage really applies: each dead time held by the body diode the current forces on (until the current reaches zero), the switches' drop at R_ds(on) at the junction limit, the freewheel diode at its forward voltage; the compare duties are solved with it
//!   - checked on the written registers by an independent register-level simulation (plan.json register_check): every output pulse at the compare limits, and at each case the mean current, ripple and lowest audible line
//!   - devices thermally independent, each with the board's junction-to-ambient path
//!   - rated load at the hottest ambient; ripple and switching loss checked again at the highest supply
//!   - audibility from the ripple current's spectrum: significant lines within 60 dB of the strongest and above 1 mA rms
//!
//! Cautions
//!   - Power stages can burn, shock and start motors unexpectedly: first power-up from a current-limited supply, motor mechanically safe, hand on the switch.
//!   - Figures come from datasheet typical values and first-order models: measure switching edges, dead time and case temperatures on the real board before relying on the margins.
//!   - Check every register value against the MCU reference manual; a wrong dead-time code can short a bridge leg.
//!   - Keep the current limit and over-temperature shutdown in hardware; this plan does not replace them.
//!   - Follow local electrical codes and licensed practice for mains-connected or high-energy equipment.
//!
//! Inputs
//!   bundled:belt-feeder       sha256 0a75bcad2ef15770c4e8a7b7072280ce2bb4d02a1819af6aaa6e072842040e9e
//!   bundled:wren-hb24         sha256 38d1a65b1e934eebd35e6be6a01ac800ee2ae0753edd1982503afa734ca03aa9
//!   bundled:switches/tarn-40  sha256 66aba222e61d260002fdcede0161454058188910c18dad97d78c8e4682537e11
//!
//! PWM mode and polarity these constants assume: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
//!
//! What duty 0 means on this half-bridge stage, and how to coast:
//!   Duty 0 (compare 0) means the low side is on for the whole period: the motor terminals are shorted through it, and a turning motor brakes (its back-EMF drives a braking current).
//!   To coast: disable the outputs (both switches off); duty 0 is not coasting.
//!
//! Init sequence (register names differ per MCU; values are the constants below):
//!   1. Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.
//!   2. Divider register <- DIVIDER_REG (divider 1).
//!   3. Period register (counter top) <- PERIOD_REG (4399 ticks per period).
//!   4. Counting mode <- up (edge-aligned) (see CENTRE_ALIGNED).
//!   5. PWM mode and polarity: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
//!   6. Dead-time register <- DEAD_TIME_CODE (13 ticks, 147.7 ns); write it before the complementary outputs are ever enabled.
//!   7. Compare register(s) <- INIT_COMPARE (outputs still disabled), then values from Duty::from_q16() through apply() only.
//!   8. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
//!   9. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 turns the low sides on and brakes a turning motor).
//!
//! `no_std`-compatible: uses `core` only, plus `embedded-hal` 1.0 for [`apply`].

/// Timer input clock, before the divider, Hz.
pub const CLOCK_HZ: u64 = 88000000;
/// Divider (prescaler) ratio.
pub const DIVIDER: u32 = 1;
/// Value of the divider register.
pub const DIVIDER_REG: u32 = 0;
/// Counter ticks per PWM period.
pub const PERIOD_TICKS: u32 = 4399;
/// Value of the period register (counter top).
pub const PERIOD_REG: u32 = 4398;
/// Up-down counting (centre-aligned) when true, up counting (edge-aligned) when false.
pub const CENTRE_ALIGNED: bool = false;
/// PWM frequency in millihertz (20.005 kHz).
pub const FREQUENCY_MILLIHZ: u64 = 20004546;
/// Compare value for 100 % on.
pub const DUTY_STEPS: u32 = 4399;
/// Dead-time register code (147.7 ns).
pub const DEAD_TIME_CODE: u32 = 0x0D;
/// Dead-time ticks the code gives (ticks of the counter's clock, 88.000 MHz).
pub const DEAD_TIME_TICKS: u32 = 13;
/// Smallest non-zero compare value allowed.
pub const COMPARE_MIN: u32 = 40;
/// Largest compare value allowed.
pub const COMPARE_MAX: u32 = 4342;
/// Compare counts a leg's dead time takes from its output pulse (dead time ×
/// frequency × `DUTY_STEPS`, rounded); see [`Duty::compensated`].
pub const DEAD_TIME_COMP_COUNTS: u32 = 13;
/// The compare the init sequence loads while the outputs are disabled
/// (0: the low side on, braking a turning motor, once enabled).
pub const INIT_COMPARE: u32 = 0;
/// True when compare 0 with the outputs enabled turns the low side(s) on and
/// shorts the motor (braking). Coasting is outputs disabled.
pub const DUTY_ZERO_BRAKES: bool = true;

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
