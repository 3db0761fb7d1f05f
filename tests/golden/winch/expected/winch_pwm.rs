//! pwmplan 0.1.0 plan for winch (pwmplan-hash:032f4a888c2ea3114c07fe8186427b87f25d3b8658c5d7fecdd876ce676dee28)
//!
//! Chosen setting
//!   design         winch
//!   board          Heron 48 V H-bridge (invented)
//!   switch         Corrie 100 V, 9.8 mΩ (invented)
//!   topology       h-bridge-unipolar
//!   objective      least-loss at typical values
//!   frequency      10.311 kHz, edge-aligned
//!   timer          clock 120.0 MHz; divider 1 (register 0); period 11638 ticks (register 11637)
//!   resolution     11638 duty steps (13.5 bits)
//!   dead time      125 ns = 15 ticks (code 0x0F); needed 123 ns
//!   duty limits    compare 48 to 11542 (0.4 % to 99.2 %); the load needs 4.5 % to 95.5 %
//!   feasible band  10.311 kHz to 40.000 kHz
//!
//! Constraints (limit, value, margin to the limit, status)
//!   junction-rated         145 °C     62.4 °C     82.6 K  ok
//!   junction-high-bus      145 °C     62.0 °C     83.0 K  ok
//!   ripple                 1.80 A      1.80 A     135 µA  binds
//!   audible            18.000 kHz  20.622 kHz   2.62 kHz  ok
//!   resolution         10.00 bits  13.51 bits  3.51 bits  ok
//!   dead-time              125 ns      123 ns    1.98 ns  ok
//!   duty-range            99.18 %     95.45 %     3.73 %  ok
//!   frequency-band     40.000 kHz  10.311 kHz     311 Hz  ok
//!
//! Losses at the rated case (whole stage)
//!   conduction           3.44 W
//!   switching            232 mW
//!   output capacitance   27.2 mW
//!   reverse recovery     118 mW
//!   dead-time diode      55.7 mW
//!   gate drive           28.3 mW
//!   motor ripple copper  26.8 mW
//!   total                3.92 W
//!
//! Operating figures
//!   rated case  48.0 V supply, 50.0 °C ambient, 12.0 A load
//!   junction    62.4 °C (limit 145 °C); 62.0 °C at the highest supply
//!   ripple      1.80 A peak to peak at 20.622 kHz (continuous), 386 mA rms
//!   audibility  no significant line at or below 18.00 kHz; A-weighted in-band level none
//!
//! Worst case over part and operating spreads
//!   junction    67.5 °C (limit 145 °C); ok; hot: V_th min, supply 40.0 V
//!   total-loss  5.26 W; ok; hot: V_th min, supply 54.0 V
//!   ripple      1.80 A (limit 1.80 A); ok; hot: V_th min, supply 54.0 V
//!   duty-range  95.45 % (limit 99.18 %); ok; hot: V_th min, supply 40.0 V
//!   dead-time   needs 123 ns against 125 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
//!   audible     ok; no significant audible line at any corner
//!   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
//!
//! Alternatives
//!   rounder-frequency  40.000 kHz (divider 1, 3000 ticks, edge): +1364 mW total loss, +4.0 K junction, -1336 mA ripple, -1.96 bits resolution
//!   mid-band           20.443 kHz (divider 1, 5870 ticks, edge): +452 mW total loss, +1.3 K junction, -892 mA ripple, -0.99 bits resolution
//!
//! Findings
//!   error  Stall current 300 A (V/R_winding) exceeds the I_D rating 60.0 A.
//!   error  At stall (300 A, 1.76 kW at hot R_ds(on) 19.6 mΩ) the junction reaches 12900 °C after 500 ms stall, above T_j,max 175 °C.
//!   info   the dead time costs 124 mV of mean output voltage (0.26 % of the nominal supply), opposing the current
//!
//! Assumptions
//!   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve
//!   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance)
//!   - motor current: exact periodic R-L-back-EMF solution with ideal switches; the freewheel diode holds its forward voltage
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
//!   winch.yaml                sha256 2b3d70d4d072ff5150be9bc676a51b3036898fedef5960e5ef3e803fe0bc568f
//!   heron-hb48.yaml           sha256 87f09d0aaf1fc46f7f982774f76fd78ee38dd8256493bbc4d9c8476ff8e95e96
//!   switches/corrie-100.yaml  sha256 64d5aa741ae171d9ab9e2838c36eeb4ea13ba59b6fad75d2da182674b7f9c649
//!
//! Init sequence (register names differ per MCU; values are the constants below):
//!   1. Stop the timer and hold the bridge outputs in their safe (off) state.
//!   2. Divider register <- WINCH_PWM_DIVIDER_REG (divider 1).
//!   3. Period register (counter top) <- WINCH_PWM_PERIOD_REG (11638 ticks per period).
//!   4. Counting mode <- up (edge-aligned) (see WINCH_PWM_CENTRE_ALIGNED).
//!   5. Dead-time register <- WINCH_PWM_DEAD_TIME_CODE (15 ticks, 125.0 ns); write it before enabling complementary outputs.
//!   6. Compare register(s) <- 0, then values from winch_pwm_compare_from_q16() only.
//!   7. Enable buffered (shadow) update of period and compare so new values take effect at the period boundary.
//!   8. Start the counter, then enable the outputs.
//!
//! `no_std`-compatible: uses `core` only, plus `embedded-hal` 1.0 for [`apply`].

/// Timer input clock, before the divider, Hz.
pub const CLOCK_HZ: u64 = 120000000;
/// Divider ratio.
pub const DIVIDER: u32 = 1;
/// Value of the divider register.
pub const DIVIDER_REG: u32 = 0;
/// Counter ticks per PWM period.
pub const PERIOD_TICKS: u32 = 11638;
/// Value of the period register (counter top).
pub const PERIOD_REG: u32 = 11637;
/// Up-down counting (centre-aligned) when true, up counting (edge-aligned) when false.
pub const CENTRE_ALIGNED: bool = false;
/// PWM frequency in millihertz (10.311 kHz).
pub const FREQUENCY_MILLIHZ: u64 = 10311050;
/// Compare value for 100 % on.
pub const DUTY_STEPS: u32 = 11638;
/// Dead-time register code (125.0 ns).
pub const DEAD_TIME_CODE: u32 = 0x0F;
/// Dead-time ticks the code gives.
pub const DEAD_TIME_TICKS: u32 = 15;
/// Smallest non-zero compare value allowed.
pub const COMPARE_MIN: u32 = 48;
/// Largest compare value allowed.
pub const COMPARE_MAX: u32 = 11542;

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
        Duty::from_q16(((permille as u64 * 65536 + 500) / 1000) as u32)
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
