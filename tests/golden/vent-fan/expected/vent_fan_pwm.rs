//! pwmplan 0.1.0 plan for vent-fan (pwmplan-hash:11b8116641940cc803e027f649a105ca95ea76c9b7d08fda652f2141ffcaef46)
//!
//! Chosen setting
//!   design         vent-fan
//!   board          Kite 12 V low-side (invented)
//!   switch         Scree 60 V, 7.5 mΩ (invented)
//!   topology       low-side
//!   objective      least-loss at typical values
//!   frequency      13.605 kHz, edge-aligned
//!   timer          clock 44.00 MHz; divider 1 (register 0); period 3234 ticks (register 3233)
//!   resolution     3234 duty steps (11.7 bits)
//!   duty limits    compare 9 to 3225 (0.3 % to 99.7 %); the load needs 22.7 % to 99.1 %
//!   feasible band  13.605 kHz to 25.000 kHz
//!
//! Constraints (limit, value, margin to the limit, status)
//!   junction-rated         110 °C     50.7 °C     59.3 K  ok
//!   junction-high-bus      110 °C     51.3 °C     58.7 K  ok
//!   ripple                 600 mA      600 mA    76.9 µA  binds
//!   audible               0 lines     0 lines    0 lines  ok
//!   resolution          8.00 bits  11.66 bits  3.66 bits  ok
//!   duty-range            99.72 %     99.07 %     0.65 %  ok
//!   frequency-band     25.000 kHz  13.605 kHz   11.4 kHz  ok
//!
//! Over the operating range (worst points)
//!   range                                 1500 to 4200 rpm, load fan-law; 7 speeds scanned per supply, the ripple maximum refined between them
//!   largest ripple (peak to peak)         600 mA at 2694 rpm (494 mA, supply 13.2 V, duty 0.500)
//!   lowest compare duty                   0.2274 at 1500 rpm (153 mA, supply 13.2 V)
//!   highest compare duty                  0.9907 at 4200 rpm (1.20 A, supply 10.8 V)
//!   largest stage loss (nominal supply)   183 mW at 2694 rpm (494 mA, supply 12.0 V, duty 0.548)
//!   hottest junction                      51.3 °C at 2694 rpm (494 mA, supply 13.2 V, duty 0.500)
//!   hottest junction at the lowest speed  47.7 °C at 1500 rpm (153 mA, supply 13.2 V, duty 0.227)
//!   loudest audible                       line at 13.6 kHz, -20.3 dB(A) re 1 A at 2694 rpm (494 mA, supply 13.2 V, duty 0.500)
//!   at the rated speed only               the worst-case corners, `spread` and the current limit
//!
//! Losses at the rated case (whole stage)
//!   conduction           10.9 mW
//!   switching            10.3 mW
//!   output capacitance   476 µW
//!   reverse recovery     327 µW
//!   dead-time diode      0.00 W
//!   gate drive           3.27 mW
//!   freewheel diode      73.3 mW
//!   motor ripple copper  6.62 mW
//!   total                105 mW
//!
//! Operating figures
//!   rated case              12.0 V supply, 45.0 °C ambient, 1.20 A load
//!   high-bus case           13.2 V supply, 45.0 °C ambient, 1.20 A load
//!   range-ripple case       13.2 V supply, 45.0 °C ambient, 494 mA load
//!   range-lowest-duty case  13.2 V supply, 45.0 °C ambient, 153 mA load
//!   junction                48.3 °C at the rated case, 50.7 °C at the high-bus case (limit 110 °C)
//!   ripple, rated case      205 mA peak to peak at 13.605 kHz (continuous), 59.0 mA rms
//!   ripple, high-bus case   358 mA peak to peak at 13.605 kHz (continuous), 103 mA rms; the larger, checked against the ripple limit
//!   audibility, rated case  no significant line in the avoided bands; A-weighted in-band level -31.0 dB(A) re 1 A
//!
//! Worst case over part and operating spreads
//!   junction    50.7 °C (limit 110 °C); ok; hot: V_th min, supply 13.2 V
//!   total-loss  189 mW; ok; hot: V_th min, supply 13.2 V
//!   ripple      358 mA (limit 600 mA); ok; hot: V_th min, supply 13.2 V
//!   duty-range  99.11 % (limit 99.72 %); ok; hot: V_th min, supply 10.8 V
//!   audible     ok; no significant audible line at any corner
//!   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
//!
//! Checked on the registers (independent simulation of the written values)
//!   pulses                  shortest high-side pulse 205 ns at COMPARE_MIN, shortest low-side on-time 205 ns at COMPARE_MAX (minimum pulse 200 ns)
//!   rated case              at compare duty 89.584 %: mean current 1.200 A (plan 1.200 A), ripple 204.5 mA peak to peak (plan 204.5 mA)
//!   high-bus case           at compare duty 81.758 %: mean current 1.200 A (plan 1.200 A), ripple 358.0 mA peak to peak (plan 358.0 mA)
//!   range-ripple case       at compare duty 50.022 %: mean current 493.5 mA (plan 493.6 mA), ripple 599.9 mA peak to peak (plan 599.9 mA)
//!   range-lowest-duty case  at compare duty 22.735 %: mean current 153.1 mA (plan 153.1 mA), ripple 390.8 mA peak to peak (plan 390.8 mA)
//!
//! Alternatives
//!   rounder-frequency  20.000 kHz (divider 1, 2200 ticks, edge): +3 mW total loss, ±0 K junction, -114 mA ripple, -0.56 bits resolution
//!   highest-frequency  25.000 kHz (divider 1, 1760 ticks, edge): +7 mW total loss, ±0 K junction, -163 mA ripple, -0.88 bits resolution
//!
//! Findings (`pwmplan explain CODE` says what a bracketed code means)
//!   info  100 % duty is not used: the compare limit keeps a minimum off-pulse each period [no-full-on]
//!
//! Assumptions
//!   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve
//!   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance); the turn-off with the whole load current in the channel through the Miller swing (the switch file has no C_rss curve or no g_fs; conservative); the freewheel diode's recovery at its datasheet Q_rr; stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop
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
//!   vent-fan.yaml           sha256 166eab5c9a85a167fa70cc5bc6095185adc1e51cd08509c4cfe8a589b076d8b6
//!   kite-ls12.yaml          sha256 3ca38fa679aebc3e8d6075acecdf7dd95235f8df57892eba77a09e3472d18eff
//!   switches/scree-60.yaml  sha256 7b7642f66b17ceb6b73d0a5f9beb1c694ea88e020ee1381344c4eb705a99d449
//!
//! PWM mode and polarity these constants assume: the output (the low-side switch) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on).
//!
//! What duty 0 means on this low-side stage, and how to coast:
//!   Duty 0 (compare 0) means the switch is off: the motor coasts, its current decaying through the freewheel diode.
//!   To coast: compare 0, or disable the output.
//!
//! Init sequence (register names differ per MCU; values are the constants below):
//!   1. Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.
//!   2. Divider register <- DIVIDER_REG (divider 1).
//!   3. Period register (counter top) <- PERIOD_REG (3234 ticks per period).
//!   4. Counting mode <- up (edge-aligned) (see CENTRE_ALIGNED).
//!   5. PWM mode and polarity: the output (the low-side switch) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on).
//!   6. Compare register(s) <- INIT_COMPARE (outputs still disabled), then values from Duty::from_q16() through apply() only.
//!   7. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
//!   8. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 keeps the switch off).
//!
//! `no_std`-compatible: uses `core` only, plus `embedded-hal` 1.0 for [`apply`].

/// Timer input clock, before the divider, Hz.
pub const CLOCK_HZ: u64 = 44000000;
/// Divider (prescaler) ratio.
pub const DIVIDER: u32 = 1;
/// Value of the divider register.
pub const DIVIDER_REG: u32 = 0;
/// Counter ticks per PWM period.
pub const PERIOD_TICKS: u32 = 3234;
/// Value of the period register (counter top).
pub const PERIOD_REG: u32 = 3233;
/// Up-down counting (centre-aligned) when true, up counting (edge-aligned) when false.
pub const CENTRE_ALIGNED: bool = false;
/// PWM frequency in millihertz (13.605 kHz).
pub const FREQUENCY_MILLIHZ: u64 = 13605442;
/// Compare value for 100 % on.
pub const DUTY_STEPS: u32 = 3234;
/// Dead-time register code (0.0 ns).
pub const DEAD_TIME_CODE: u32 = 0x00;
/// Dead-time ticks the code gives (no dead time inserted).
pub const DEAD_TIME_TICKS: u32 = 0;
/// Smallest non-zero compare value allowed.
pub const COMPARE_MIN: u32 = 9;
/// Largest compare value allowed.
pub const COMPARE_MAX: u32 = 3225;
/// The compare the init sequence loads while the outputs are disabled
/// (0: the switch stays off).
pub const INIT_COMPARE: u32 = 0;
/// True when compare 0 with the outputs enabled turns the low side(s) on and
/// shorts the motor (braking). Coasting is outputs disabled.
pub const DUTY_ZERO_BRAKES: bool = false;

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
