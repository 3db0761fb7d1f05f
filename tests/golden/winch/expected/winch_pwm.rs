//! pwmplan 0.1.0 plan for winch (pwmplan-hash:714359a07466fbd773cdd8a0e40fa96d542d1c930b49da34f7be2953ebb7e9bb)
//!
//! Chosen setting
//!   design         winch
//!   board          Heron 48 V H-bridge (invented)
//!   switch         Corrie 100 V, 9.8 mΩ (invented)
//!   topology       h-bridge-unipolar
//!   objective      least-loss at typical values
//!   frequency      11.721 kHz, centre-aligned
//!   timer          clock 120.0 MHz; divider 1 (register 0); period 10238 ticks (register 5119)
//!   resolution     5119 duty steps (12.3 bits)
//!   dead time      125 ns = 15 ticks (code 0x0F); needed 118 ns
//!   duty limits    compare 32 to 5063 (0.6 % to 98.9 %); the load needs 3.9 % to 96.1 %
//!   feasible band  11.721 kHz to 14.399 kHz
//!
//! Constraints (limit, value, margin to the limit, status)
//!   junction-rated         145 °C     63.5 °C     81.5 K  ok
//!   junction-high-bus      145 °C     63.2 °C     81.8 K  ok
//!   ripple                 1.80 A      1.80 A     104 µA  binds
//!   audible            18.000 kHz  23.442 kHz   5.44 kHz  ok
//!   resolution         10.00 bits  12.32 bits  2.32 bits  ok
//!   dead-time              125 ns      118 ns    7.22 ns  ok
//!   duty-range            98.91 %     96.12 %     2.78 %  ok
//!   sampling-window        3.13 %      3.88 %     0.75 %  ok
//!   frequency-band     10.000 kHz  11.721 kHz   1.72 kHz  ok
//!
//! Over the operating range (worst points)
//!   range                                   300 to 3600 rpm, load constant-torque, holding 12.0 A at standstill; 7 speeds scanned per supply, the ripple maximum refined between them
//!   largest ripple (peak to peak)           1.80 A at 2572 rpm (12.0 A, supply 54.0 V, duty 0.752)
//!   lowest compare duty                     0.5254 at 0 rpm (12.0 A, supply 54.0 V)
//!   highest compare duty                    0.9612 at 3600 rpm (12.0 A, supply 40.0 V)
//!   largest stage loss (nominal supply)     4.28 W at 3600 rpm (12.0 A, supply 48.0 V, duty 0.885)
//!   hottest junction                        63.5 °C at 3600 rpm (12.0 A, supply 48.0 V, duty 0.885)
//!   hottest junction at the lowest speed    59.5 °C at 300 rpm (12.0 A, supply 54.0 V, duty 0.552)
//!   hottest junction holding at standstill  59.1 °C at 0 rpm (12.0 A, supply 54.0 V, duty 0.525)
//!   loudest audible                         no significant audible line at any speed scanned
//!   at the rated speed only                 the worst-case corners, `spread` and the current limit
//!
//! Losses at the rated case (whole stage)
//!   conduction           3.45 W
//!   switching            257 mW
//!   output capacitance   30.9 mW
//!   reverse recovery     428 mW
//!   dead-time diode      59.3 mW
//!   gate drive           32.2 mW
//!   motor ripple copper  19.7 mW
//!   total                4.28 W
//!
//! Operating figures
//!   rated case              48.0 V supply, 50.0 °C ambient, 12.0 A load
//!   high-bus case           54.0 V supply, 50.0 °C ambient, 12.0 A load
//!   range-ripple case       54.0 V supply, 50.0 °C ambient, 12.0 A load
//!   range-lowest-duty case  54.0 V supply, 50.0 °C ambient, 12.0 A load
//!   junction                63.5 °C at the rated case, 63.2 °C at the high-bus case (limit 145 °C)
//!   ripple, rated case      1.15 A peak to peak at 23.442 kHz (continuous), 331 mA rms
//!   ripple, high-bus case   1.56 A peak to peak at 23.442 kHz (continuous), 451 mA rms; the larger, checked against the ripple limit
//!   audibility, rated case  no significant line at or below 18.00 kHz; A-weighted in-band level none
//!
//! Current limit
//!   threshold       fixed, 1.25 V at the comparator
//!   trips           never below 23.2 A, always above 27.0 A (nominal 25.0 A; shunt in the leg; shunt, amplifier and comparator tolerances stacked worst-case)
//!   operating peak  20.8 A (the high-bus case's burst current plus half its ripple); margin to the lowest trip 2.37 A
//!   peak            at most 27.2 A (267 mA over the highest trip: 133 mA in the 791 ns reaction, more where a chopped stall crosses the trip inside the uncut on-time); the switch's I_DM at 100 µs 240 A (margin 213 A)
//!   reaction        791 ns = filter 533 ns + comparator 100 ns + driver 120 ns + turn-off delay 24.3 ns + voltage rise 13.2 ns
//!   blanking        467 ns (no blanking timer: the filter rejects it) against a turn-on transient of 393 ns = driver 120 ns + turn-on delay 12.3 ns + current rise 5.80 ns + recovery 55.0 ns + ringing none (no loop inductance given) + amplifier settling 200 ns
//!   filter          8 samples at 15.0 MHz (passes a fault held 533 ns, rejects pulses under 467 ns)
//!   uncut on-time   791 ns (blanking and reaction): the limit cannot cut a pulse before this; shorter pulses run their commanded length (the compare limits' shortest pulse is 400 ns)
//!   response        cycle-by-cycle
//!   burst           junction 84.9 °C (leg-b-low at 20.0 A for 3.00 s: steady state at the burst's 4.78 W, the board giving no thermal transient data)
//!   stall           27.0 A (cycle-by-cycle: a stall is chopped at the trip's highest edge); junction 154 °C at hot R_ds(on) (Computed in steady state: the board gives no thermal transient data, so the 500 ms stall time is not used (R_th(j-a) 7.30 K/W))
//!
//! Current sampling
//!   sampled at   the middle of the off-time (a ramp's middle is the period's mean current: regular sampling)
//!   ADC trigger  count 5096 matched while counting up, 30 ticks before the state's middle, which lies 7 ticks (half the dead time) after the reference's
//!   window       the sensed state must last 2.633 µs (dead time, settling, acquisition): compares 160..4959 (3.1 %..96.9 %)
//!   sign         the shunt reads the motor current as the plan counts it
//!
//! Current loop
//!   rate         11.72 kHz = PWM 11.72 kHz / update divider 1 (none asked: one update per PWM period)
//!   timing       the sample's middle 42.72 µs after the update event (at the rated compare); its compare takes effect at the next update event, so conversion and control code must fit in 42.35 µs; the loop sees the sample as the averaged current 42.66 µs after the update event
//!   reading      at the rated case the sample reads the PWM period's mean current minus 2.295 mA (the R–L's curvature; a straight ramp's middle is its mean); the integrator settles on the sample, so the mean is off by as much
//!   plant        R 204.1 mΩ (motor, and the channels, or on a single switch its channel and the freewheel diode by their shares of the period, at the rated junction temperature), L 320.0 µH; 96.00 V per unit of compare duty
//!   gains        K_p = α·L = 1.9824 V/A, K_i = α·R = 1264.5502 V/(A·s), α = 2π·986.0 Hz (internal model control, Harnefors and Nee 1998), set for a 60° phase margin with the delay
//!   loop         crossover 988.5 Hz, phase margin 60.0°, step overshoot 7.2 %, rise to 90 % in 256.0 µs (exact discrete model: sample, delay, PWM hold, R–L)
//!   fixed point  Q12: K_p 6977 (6976.590), K_i·T 380 (379.689) in compare counts per ADC code; 1.6113e-2 A per code, zero current at code 0
//!   bus          the gains hold at the nominal supply; scale the output by V_nominal/V_bus where the bus moves (feed-forward), and hold the integrator while the output is clamped (the helpers do)
//!
//! Worst case over part and operating spreads
//!   junction    68.8 °C (limit 145 °C); ok; hot: V_th min, supply 40.0 V
//!   total-loss  5.80 W; ok; hot: V_th min, supply 54.0 V
//!   ripple      1.56 A (limit 1.80 A); ok; hot: V_th min, supply 54.0 V
//!   duty-range  96.27 % (limit 98.91 %); ok; hot: V_th min, supply 40.0 V
//!   dead-time   needs 118 ns against 125 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
//!   audible     ok; no significant audible line at any corner
//!   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
//!
//! Checked on the registers (independent simulation of the written values)
//!   pulses                  shortest high-side pulse 408 ns at COMPARE_MIN, shortest low-side on-time 808 ns at COMPARE_MAX (minimum pulse 400 ns, bootstrap refresh 800 ns)
//!   rated case              at compare duty 88.462 %: mean current 12.00 A (plan 12.00 A), ripple 1.146 A peak to peak (plan 1.146 A)
//!   high-bus case           at compare duty 84.205 %: mean current 12.00 A (plan 12.00 A), ripple 1.564 A peak to peak (plan 1.564 A)
//!   range-ripple case       at compare duty 75.162 %: mean current 12.00 A (plan 12.00 A), ripple 1.800 A peak to peak (plan 1.800 A)
//!   range-lowest-duty case  at compare duty 52.538 %: mean current 12.00 A (plan 12.00 A), ripple 327.9 mA peak to peak (plan 327.9 mA)
//!   sampling                at the written trigger, over the compares the plan allows, the sampled state has held 1.02 µs before and holds 1.53 µs after (settling and sampling need no more)
//!   current limit           trip window 23.15 A to 26.95 A over the 32 tolerance corners; a stall chopped on the written threshold, blanking and filter peaks at 27.07 A (plan 27.22 A) with a mean of 26.49 A (plan's stall current 26.95 A)
//!
//! Alternatives
//!   rounder-frequency  12.000 kHz (divider 1, 10000 ticks, centre): +20 mW total loss, +0.1 K junction, -36 mA ripple, -0.03 bits resolution
//!   highest-frequency  14.399 kHz (divider 1, 8334 ticks, centre): +191 mW total loss, +0.6 K junction, -291 mA ripple, -0.30 bits resolution
//!
//! Findings (`pwmplan explain CODE` says what a bracketed code means)
//!   info  the dead time costs about 141 mV of mean output voltage (0.29 % of the nominal supply) where it opposes the current; the compare duties above already make it up [dead-time-voltage-error]
//!
//! Assumptions
//!   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve; R_ds(on) as given at V_GS = 10.0 V, not moved to the 12.0 V drive (no second datasheet point)
//!   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance); the turn-off with the whole load current in the channel through the Miller swing (the switch file has no C_rss curve or no g_fs; conservative); bridge partner's recovery: a charge-control body diode with transit time 31.3 ns fitted to Q_rr less the output charge Q_oss(V_R) and the junction's forward charge at the current zero crossing of the datasheet's Q_rr test (100 A/µs from 30.0 A at 50.0 V) (the junction voltage from V_sd(I)), recovering at each hard turn-on's current slope (2·I/t_ri; with a loop inductance the slope its followed current rise ends with), plus charging its output capacitance (Q_oss·V − E_oss); dead-time diode conduction for its share of each dead time, from the outgoing switch's hand-over (turn-off delay, node swing, half the current fall; or, after a soft turn-off, the gate down to the plateau and half-way to threshold) until the incoming switch has taken the current (half its current rise after its delay; or, at a soft turn-on, its gate from the Miller-kicked voltage up to threshold plus the diode's transit time) at V_sd(I): the datasheet V_sd at 30.0 A (assumed: the Q_rr test's forward current; the switch file gives no body_diode.v_sd_at), lowered by kT/q·ln(I_test/I) below it, no ohmic rise above it; stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop
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
//!   winch.yaml                sha256 a1ee5ff7e1b10960c1692686c884c89d3a4a8ce2b8700a9fb3009f7b6e2d0ad7
//!   heron-hb48.yaml           sha256 3b32658551b2c89a7906d64bcb0e7cc03a951a8d880c233ca899ae6de18c9566
//!   switches/corrie-100.yaml  sha256 b376b085f2d49cf222861c7579f007155166c8a38da60a84924774039d8e631a
//!
//! PWM mode and polarity these constants assume: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either. Leg A takes the compare c; leg B takes DUTY_STEPS − c with the same polarity on the same up-down counter, so the load sees two pulses per period centred between the counter's bottom and top (ripple at twice the PWM frequency).
//!
//! What duty 0 means on this h-bridge-unipolar stage, and how to coast:
//!   Duty 0 on both legs (compare 0) means both low sides are on: the motor is shorted through them and a turning motor brakes; equal compares on both legs give zero volts.
//!   To coast: disable the outputs (all four switches off); duty 0 is not coasting.
//!
//! Init sequence (register names differ per MCU; values are the constants below):
//!   1. Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.
//!   2. Divider register <- DIVIDER_REG (divider 1).
//!   3. Period register (counter top) <- PERIOD_REG (10238 ticks per period).
//!   4. Counting mode <- up-down (centre-aligned) (see CENTRE_ALIGNED).
//!   5. PWM mode and polarity: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either. Leg A takes the compare c; leg B takes DUTY_STEPS − c with the same polarity on the same up-down counter, so the load sees two pulses per period centred between the counter's bottom and top (ripple at twice the PWM frequency).
//!   6. Dead-time register <- DEAD_TIME_CODE (15 ticks, 125.0 ns); write it before the complementary outputs are ever enabled.
//!   7. Fault input (over-current): filter <- LIMIT_FILTER_SAMPLES samples at LIMIT_FILTER_CLOCK_HZ Hz, response <- cycle-by-cycle (see LIMIT_CYCLE_BY_CYCLE); clear any pending fault and arm the input now, before the outputs are ever enabled, so the first pulse is already limited.
//!   8. Compare register(s) <- INIT_COMPARE (outputs still disabled), then values from Duty::from_q16() through apply() only.
//!   9. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
//!   10. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 turns the low sides on and brakes a turning motor).
//!
//! `no_std`-compatible: uses `core` only, plus `embedded-hal` 1.0 for [`apply`].

/// Timer input clock, before the divider, Hz.
pub const CLOCK_HZ: u64 = 120000000;
/// Divider (prescaler) ratio.
pub const DIVIDER: u32 = 1;
/// Value of the divider register.
pub const DIVIDER_REG: u32 = 0;
/// Counter ticks per PWM period.
pub const PERIOD_TICKS: u32 = 10238;
/// Value of the period register (counter top).
pub const PERIOD_REG: u32 = 5119;
/// Up-down counting (centre-aligned) when true, up counting (edge-aligned) when false.
pub const CENTRE_ALIGNED: bool = true;
/// PWM frequency in millihertz (11.721 kHz).
pub const FREQUENCY_MILLIHZ: u64 = 11721039;
/// Compare value for 100 % on.
pub const DUTY_STEPS: u32 = 5119;
/// Dead-time register code (125.0 ns).
pub const DEAD_TIME_CODE: u32 = 0x0F;
/// Dead-time ticks the code gives (ticks of the counter's clock, 120.00 MHz).
pub const DEAD_TIME_TICKS: u32 = 15;
/// Smallest non-zero compare value allowed.
pub const COMPARE_MIN: u32 = 32;
/// Largest compare value allowed.
pub const COMPARE_MAX: u32 = 5063;
/// Compare counts a leg's dead time takes from its output pulse (dead time ×
/// frequency × `DUTY_STEPS`, rounded); see [`Duty::compensated`].
pub const DEAD_TIME_COMP_COUNTS: u32 = 7;
/// The compare the init sequence loads while the outputs are disabled
/// (0: the low sides on, braking a turning motor, once enabled).
pub const INIT_COMPARE: u32 = 0;
/// True when compare 0 with the outputs enabled turns the low side(s) on and
/// shorts the motor (braking). Coasting is outputs disabled.
pub const DUTY_ZERO_BRAKES: bool = true;
// Current limit (fault input): it trips never below 23151 mA and
// always above 26953 mA of motor current (see the rationale).
/// Fault filter clock, Hz: a fault passes after `LIMIT_FILTER_SAMPLES` consecutive samples.
pub const LIMIT_FILTER_CLOCK_HZ: u64 = 15000000;
/// Fault filter sample count.
pub const LIMIT_FILTER_SAMPLES: u32 = 8;
/// True: a fault turns the outputs off until the next period (cycle-by-cycle);
/// false: until firmware clears it (latched).
pub const LIMIT_CYCLE_BY_CYCLE: bool = true;
// Current sampling: the shunt is read in the middle of the off-time
// (a ramp's middle is the period's mean current).
/// ADC trigger: this count, matched while counting up (a spare compare channel).
pub const ADC_TRIGGER_COUNT: u32 = 5096;
/// True when the trigger count is matched while counting up.
pub const ADC_TRIGGER_COUNTING_UP: bool = true;
/// Smallest compare at which the sensed state holds settling, dead time and sampling.
pub const SAMPLING_COMPARE_MIN: u32 = 160;
/// Largest compare at which the sensed state holds settling, dead time and sampling.
pub const SAMPLING_COMPARE_MAX: u32 = 4959;
/// 1: the shunt reads the motor current; −1: reversed.
pub const SHUNT_SIGN: i64 = 1;
/// Current loop (11.72 kHz): one update every `LOOP_UPDATE_DIVIDER` PWM periods, or
/// `LOOP_UPDATES_PER_PERIOD` per period when that is above 1.
pub const LOOP_UPDATE_DIVIDER: u32 = 1;
/// Control updates per PWM period: 2 samples and updates at both counter extremes.
pub const LOOP_UPDATES_PER_PERIOD: u32 = 1;
/// The loop's update rate in millihertz.
pub const LOOP_RATE_MILLIHZ: u64 = 11721039;
/// Proportional gain, V/A.
pub const LOOP_KP_V_PER_A: f32 = 1.982372837162854e0;
/// Integral gain, V/(A·s).
pub const LOOP_KI_V_PER_A_S: f32 = 1.2645502184415761e3;
/// The update period, s.
pub const LOOP_PERIOD_S: f32 = 8.531666666666668e-5;
/// Compare counts per volt of loop output at the nominal supply.
pub const LOOP_COUNTS_PER_VOLT: f32 = 5.3322916666666664e1;
/// The compare of zero volts.
pub const LOOP_ZERO_COMPARE: i64 = 2560;
/// The loop output's clamp, low.
pub const LOOP_COMPARE_LO: i64 = 160;
/// The loop output's clamp, high.
pub const LOOP_COMPARE_HI: i64 = 4959;
/// Integer gains are in compare counts per ADC code times `2^LOOP_FRACTION_BITS`
/// (1.611328e-2 A per code).
pub const LOOP_FRACTION_BITS: u32 = 12;
/// Proportional gain, integer.
pub const LOOP_KP_Q: i64 = 6977;
/// Integral gain per update, integer.
pub const LOOP_KI_Q: i64 = 380;
/// The ADC code at zero current.
pub const ADC_ZERO_CODE: i64 = 0;

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

/// Current-loop state (integer): the integral in compare counts times
/// `2^LOOP_FRACTION_BITS`. Start it at zero with the outputs disabled.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct LoopState {
    integral: i64,
}

impl LoopState {
    /// One current-loop update, integer only: `ref_code` the wanted current in
    /// ADC codes from zero current, `adc_code` the converted sample. Returns the
    /// compare for the next update event, within `LOOP_COMPARE_LO..=LOOP_COMPARE_HI`;
    /// the integral holds while the output is clamped (anti-windup).
    pub fn step(&mut self, ref_code: i32, adc_code: i32) -> u32 {
        let one = 1i64 << LOOP_FRACTION_BITS;
        let lo = (LOOP_COMPARE_LO - LOOP_ZERO_COMPARE) * one;
        let hi = (LOOP_COMPARE_HI - LOOP_ZERO_COMPARE) * one;
        let e = i64::from(ref_code) - SHUNT_SIGN * (i64::from(adc_code) - ADC_ZERO_CODE);
        let mut integral = self.integral + LOOP_KI_Q * e;
        let mut u = LOOP_KP_Q * e + integral;
        if u > hi {
            u = hi;
            if e > 0 {
                integral = self.integral;
            }
        } else if u < lo {
            u = lo;
            if e < 0 {
                integral = self.integral;
            }
        }
        self.integral = integral;
        let half = (one >> 1) as u64;
        (((LOOP_ZERO_COMPARE * one + u) as u64 + half) >> LOOP_FRACTION_BITS) as u32
    }
}

/// Current-loop state (floating point): the integral in volts.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct LoopStateF {
    integral_v: f32,
}

impl LoopStateF {
    /// One current-loop update in SI units: `ref_a` and `measured_a` in amperes
    /// (the measured current with the shunt's sign and scale applied). Returns the
    /// compare for the next update event, within `LOOP_COMPARE_LO..=LOOP_COMPARE_HI`;
    /// the integral holds while the output is clamped (anti-windup).
    pub fn step(&mut self, ref_a: f32, measured_a: f32) -> u32 {
        let e = ref_a - measured_a;
        let mut integral = self.integral_v + LOOP_KI_V_PER_A_S * LOOP_PERIOD_S * e;
        let mut counts = LOOP_ZERO_COMPARE as f32 + (LOOP_KP_V_PER_A * e + integral) * LOOP_COUNTS_PER_VOLT;
        if counts > LOOP_COMPARE_HI as f32 {
            counts = LOOP_COMPARE_HI as f32;
            if e > 0.0 {
                integral = self.integral_v;
            }
        } else if !(counts >= LOOP_COMPARE_LO as f32) {
            counts = LOOP_COMPARE_LO as f32;
            if !(e >= 0.0) {
                integral = self.integral_v;
            }
        }
        self.integral_v = integral;
        (counts + 0.5) as u32
    }
}
