//! pwmplan 0.1.0 plan for conveyor-centre (pwmplan-hash:af0cfd531e8a98f432769e607aab29a5cd2f1f5873657ce068afef6f862df3e2)
//!
//! Chosen setting
//!   design         conveyor-centre
//!   board          Wren 24 V half-bridge, centre-aligned timer (invented)
//!   switch         Tarn 40 V, 2.4 mΩ (invented)
//!   topology       half-bridge
//!   objective      least-loss at typical values
//!   frequency      20.009 kHz, centre-aligned
//!   timer          clock 88.00 MHz; divider 1 (register 0); period 4398 ticks (register 2199)
//!   resolution     2199 duty steps (11.1 bits)
//!   dead time      148 ns = 13 ticks (code 0x0D); needed 142 ns
//!   duty limits    compare 20 to 2170 (0.9 % to 98.7 %); the load needs 67.5 % to 94.4 %
//!   feasible band  20.009 kHz to 31.541 kHz
//!
//! Constraints (limit, value, margin to the limit, status)
//!   junction-rated         135 °C     56.8 °C     78.2 K  ok
//!   junction-high-bus      135 °C     56.9 °C     78.1 K  ok
//!   ripple                 875 mA      363 mA     512 mA  ok
//!   audible            20.000 kHz  20.009 kHz    9.10 Hz  binds
//!   resolution         10.00 bits  11.10 bits  1.10 bits  ok
//!   dead-time              148 ns      142 ns    5.62 ns  ok
//!   duty-range            98.68 %     94.44 %     4.25 %  ok
//!   sampling-window       96.59 %     94.44 %     2.15 %  ok
//!   frequency-band     16.000 kHz  20.009 kHz   4.01 kHz  ok
//!
//! Losses at the rated case (whole stage)
//!   conduction           33.5 mW
//!   switching            14.9 mW
//!   output capacitance   9.12 mW
//!   reverse recovery     17.3 mW
//!   dead-time diode      12.5 mW
//!   gate drive           32.5 mW
//!   motor ripple copper  2.94 mW
//!   total                123 mW
//!
//! Operating figures
//!   rated case              24.0 V supply, 55.0 °C ambient, 3.50 A load
//!   high-bus case           28.0 V supply, 55.0 °C ambient, 3.50 A load
//!   junction                56.8 °C at the rated case, 56.9 °C at the high-bus case (limit 135 °C)
//!   ripple, rated case      239 mA peak to peak at 20.009 kHz (continuous), 68.9 mA rms
//!   ripple, high-bus case   363 mA peak to peak at 20.009 kHz (continuous), 105 mA rms; the larger, checked against the ripple limit
//!   audibility, rated case  no significant line at or below 20.00 kHz; A-weighted in-band level none
//!
//! Current limit
//!   threshold       fixed, 2.90 V at the comparator
//!   trips           never below 5.55 A, always above 6.99 A (nominal 6.25 A; shunt in the phase; shunt, amplifier and comparator tolerances stacked worst-case)
//!   operating peak  3.68 A (the high-bus case's load current plus half its ripple); margin to the lowest trip 1.87 A
//!   peak            at most 7.03 A (32.4 mA over the highest trip: 8.73 mA in the 265 ns reaction, more where a chopped stall crosses the trip inside the uncut on-time); the switch's I_D (the file gives no I_DM) 100 A (margin 93.0 A)
//!   reaction        265 ns = filter 0.00 s + comparator 120 ns + driver 90.0 ns + turn-off delay 33.7 ns + voltage rise 21.4 ns
//!   blanking        455 ns (40 blanking ticks) against a turn-on transient of 447 ns = driver 90.0 ns + turn-on delay 16.3 ns + current rise 2.83 ns + recovery 38.0 ns + ringing none (no loop inductance given) + amplifier settling 300 ns
//!   filter          none on this board
//!   uncut on-time   720 ns (blanking and reaction): the limit cannot cut a pulse before this; shorter pulses run their commanded length (the compare limits' shortest pulse is 300 ns)
//!   response        cycle-by-cycle
//!   stall           6.99 A (cycle-by-cycle: a stall is chopped at the trip's highest edge); junction 55.4 °C at hot R_ds(on) (Computed over the 250 ms stall through the board's transient thermal impedance Z_th = 1.797 K/W)
//!
//! Current sampling
//!   sampled at   both counter extremes, once per half period: the middle of the on-time at the bottom and of the off-time at the top (a shunt in series with the motor carries it in both; a ramp's middle is the period's mean current: regular sampling)
//!   ADC trigger  count 7 matched while counting down and count 2192 matched while counting up (two compare channels), each 13 ticks before its state's middle, which lies 6 ticks (half the dead time) after the reference's
//!   window       the sensed state must last 1.659 µs (dead time, settling, acquisition): compares 75..2124 (3.4 %..96.6 %)
//!   sign         the shunt reads the motor current as the plan counts it
//!
//! Current loop
//!   rate         40.02 kHz = PWM 20.01 kHz × 2: sampled and updated at both counter extremes (30.00 kHz asked)
//!   timing       the sample's middle 68.18 ns after the update event (at the rated compare); its compare takes effect at the next update event, so conversion and control code must fit in 24.77 µs; the loop sees the sample as the averaged current 0.000 s after the update event
//!   reading      at the rated case the sample reads the PWM period's mean current minus 103.5 µA (the R–L's curvature; a straight ramp's middle is its mean); the integrator settles on the sample, so the mean is off by as much
//!   plant        R 622.7 mΩ (motor, and the channels, or on a single switch its channel and the freewheel diode by their shares of the period, at the rated junction temperature), L 850.0 µH; 24.00 V per unit of compare duty
//!   gains        K_p = α·L = 11.7173 V/A, K_i = α·R = 8584.4201 V/(A·s), α = 2π·2.194 kHz (internal model control, Harnefors and Nee 1998), set for a 60° phase margin with the delay
//!   loop         crossover 2.225 kHz, phase margin 60.0°, step overshoot 5.5 %, rise to 90 % in 99.95 µs (exact discrete model: sample, delay, PWM hold, R–L)
//!   fixed point  Q12: K_p 17714 (17714.294), K_i·T 324 (324.303) in compare counts per ADC code; 4.0283e-3 A per code, zero current at code 2048
//!   bus          the gains hold at the nominal supply; scale the output by V_nominal/V_bus where the bus moves (feed-forward), and hold the integrator while the output is clamped (the helpers do)
//!
//! Worst case over part and operating spreads
//!   junction    58.2 °C (limit 135 °C); ok; hot: V_th max, supply 28.0 V
//!   total-loss  199 mW; ok; hot: V_th max, supply 28.0 V
//!   ripple      363 mA (limit 875 mA); ok; hot: V_th min, supply 28.0 V
//!   duty-range  94.45 % (limit 98.68 %); ok; hot: V_th min, supply 20.0 V
//!   dead-time   needs 142 ns against 148 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
//!   audible     ok; no significant audible line at any corner
//!   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
//!
//! Checked on the registers (independent simulation of the written values)
//!   pulses         shortest high-side pulse 307 ns at COMPARE_MIN, shortest low-side on-time 511 ns at COMPARE_MAX (minimum pulse 300 ns, bootstrap refresh 500 ns)
//!   rated case     at compare duty 78.745 %: mean current 3.500 A (plan 3.500 A), ripple 238.8 mA peak to peak (plan 238.8 mA)
//!   high-bus case  at compare duty 67.538 %: mean current 3.500 A (plan 3.500 A), ripple 362.8 mA peak to peak (plan 362.8 mA)
//!   sampling       at the written trigger, over the compares the plan allows, the sampled state has held 625 ns before and holds 932 ns after (settling and sampling need no more)
//!   current limit  trip window 5.547 A to 6.993 A over the 32 tolerance corners; a stall chopped on the written threshold, blanking and filter peaks at 7.001 A (plan 7.026 A) with a mean of 6.894 A (plan's stall current 6.993 A)
//!
//! Alternatives
//!   rounder-frequency  22.000 kHz (divider 1, 4000 ticks, centre): +8 mW total loss, +0.1 K junction, -33 mA ripple, -0.14 bits resolution
//!   highest-frequency  31.541 kHz (divider 1, 2790 ticks, centre): +48 mW total loss, +0.7 K junction, -133 mA ripple, -0.66 bits resolution
//!
//! Findings (`pwmplan explain CODE` says what a bracketed code means)
//!   warning  V_DSS 40.0 V is only 1.43x the highest bus 28.0 V; 1.5-2x is usual for ringing and back-EMF spikes. [vdss-margin-low]
//!   warning  The loop's lowest compare (75 counts: the compare limits within the sampling window) puts 0.82 V on the motor, 1.31 A at standstill (38 % of the rated current): a zero reference cannot be followed there. Disable the outputs (coast) for small references, or sample once per PWM period at the counter top (a loop rate no higher than the PWM rate), where small duties leave the off-time long. [current-loop-floor]
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
//!   conveyor-centre.yaml   sha256 694a1fcf73fd02c3a87a538f83ab79de2f8396e4e7450ffe9a5d7df2efcff4da
//!   wren-hb24.yaml         sha256 c8414dcebeb30707ca54fbc27e49cd28ecb6e6ec5d42a538b127d02b4196cb08
//!   switches/tarn-40.yaml  sha256 66aba222e61d260002fdcede0161454058188910c18dad97d78c8e4682537e11
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
//!   3. Period register (counter top) <- PERIOD_REG (4398 ticks per period).
//!   4. Counting mode <- up-down (centre-aligned) (see CENTRE_ALIGNED).
//!   5. PWM mode and polarity: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
//!   6. Dead-time register <- DEAD_TIME_CODE (13 ticks, 147.7 ns); write it before the complementary outputs are ever enabled.
//!   7. Fault input (over-current): blanking after each turn-on <- LIMIT_BLANKING_TICKS ticks (454.5 ns), response <- cycle-by-cycle (see LIMIT_CYCLE_BY_CYCLE); clear any pending fault and arm the input now, before the outputs are ever enabled, so the first pulse is already limited.
//!   8. Compare register(s) <- INIT_COMPARE (outputs still disabled), then values from Duty::from_q16() through apply() only.
//!   9. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
//!   10. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 turns the low sides on and brakes a turning motor).
//!
//! `no_std`-compatible: uses `core` only, plus `embedded-hal` 1.0 for [`apply`].

/// Timer input clock, before the divider, Hz.
pub const CLOCK_HZ: u64 = 88000000;
/// Divider (prescaler) ratio.
pub const DIVIDER: u32 = 1;
/// Value of the divider register.
pub const DIVIDER_REG: u32 = 0;
/// Counter ticks per PWM period.
pub const PERIOD_TICKS: u32 = 4398;
/// Value of the period register (counter top).
pub const PERIOD_REG: u32 = 2199;
/// Up-down counting (centre-aligned) when true, up counting (edge-aligned) when false.
pub const CENTRE_ALIGNED: bool = true;
/// PWM frequency in millihertz (20.009 kHz).
pub const FREQUENCY_MILLIHZ: u64 = 20009095;
/// Compare value for 100 % on.
pub const DUTY_STEPS: u32 = 2199;
/// Dead-time register code (147.7 ns).
pub const DEAD_TIME_CODE: u32 = 0x0D;
/// Dead-time ticks the code gives (ticks of the counter's clock, 88.000 MHz).
pub const DEAD_TIME_TICKS: u32 = 13;
/// Smallest non-zero compare value allowed.
pub const COMPARE_MIN: u32 = 20;
/// Largest compare value allowed.
pub const COMPARE_MAX: u32 = 2170;
/// Compare counts a leg's dead time takes from its output pulse (dead time ×
/// frequency × `DUTY_STEPS`, rounded); see [`Duty::compensated`].
pub const DEAD_TIME_COMP_COUNTS: u32 = 6;
/// The compare the init sequence loads while the outputs are disabled
/// (0: the low side on, braking a turning motor, once enabled).
pub const INIT_COMPARE: u32 = 0;
/// True when compare 0 with the outputs enabled turns the low side(s) on and
/// shorts the motor (braking). Coasting is outputs disabled.
pub const DUTY_ZERO_BRAKES: bool = true;
// Current limit (fault input): it trips never below 5547 mA and
// always above 6993 mA of motor current (see the rationale).
/// Fault input ignored for this many blanking ticks after each turn-on (454.5 ns).
pub const LIMIT_BLANKING_TICKS: u32 = 40;
/// True: a fault turns the outputs off until the next period (cycle-by-cycle);
/// false: until firmware clears it (latched).
pub const LIMIT_CYCLE_BY_CYCLE: bool = true;
// Current sampling: the shunt is read in the middle of the on-time
// (a ramp's middle is the period's mean current).
/// ADC trigger: this count, matched while counting down (a spare compare channel).
pub const ADC_TRIGGER_COUNT: u32 = 7;
/// True when the trigger count is matched while counting up.
pub const ADC_TRIGGER_COUNTING_UP: bool = false;
/// Sampled at both counter extremes, once per half period: [`ADC_TRIGGER_COUNT`] is the
/// bottom's (the middle of the on-time); the top's (the middle of the off-time) is this
/// count, matched while counting up (a second spare compare channel).
pub const ADC_TRIGGER_TOP_COUNT: u32 = 2192;
/// True when the top's trigger count is matched while counting up.
pub const ADC_TRIGGER_TOP_COUNTING_UP: bool = true;
/// Smallest compare at which the sensed state holds settling, dead time and sampling.
pub const SAMPLING_COMPARE_MIN: u32 = 75;
/// Largest compare at which the sensed state holds settling, dead time and sampling.
pub const SAMPLING_COMPARE_MAX: u32 = 2124;
/// 1: the shunt reads the motor current; −1: reversed.
pub const SHUNT_SIGN: i64 = 1;
/// Current loop (40.02 kHz): one update every `LOOP_UPDATE_DIVIDER` PWM periods, or
/// `LOOP_UPDATES_PER_PERIOD` per period when that is above 1.
pub const LOOP_UPDATE_DIVIDER: u32 = 1;
/// Control updates per PWM period: 2 samples and updates at both counter extremes.
pub const LOOP_UPDATES_PER_PERIOD: u32 = 2;
/// This timer's update divider counts counter extremes (top and bottom): one update every
/// `LOOP_UPDATE_EXTREMES` extremes.
pub const LOOP_UPDATE_EXTREMES: u32 = 1;
/// The loop's update rate in millihertz.
pub const LOOP_RATE_MILLIHZ: u64 = 40018190;
/// Proportional gain, V/A.
pub const LOOP_KP_V_PER_A: f32 = 1.1717256119850177e1;
/// Integral gain, V/(A·s).
pub const LOOP_KI_V_PER_A_S: f32 = 8.584420082505103e3;
/// The update period, s.
pub const LOOP_PERIOD_S: f32 = 2.4988636363636365e-5;
/// Compare counts per volt of loop output at the nominal supply.
pub const LOOP_COUNTS_PER_VOLT: f32 = 9.1625e1;
/// The compare of zero volts.
pub const LOOP_ZERO_COMPARE: i64 = 0;
/// The loop output's clamp, low.
pub const LOOP_COMPARE_LO: i64 = 75;
/// The loop output's clamp, high.
pub const LOOP_COMPARE_HI: i64 = 2124;
/// Integer gains are in compare counts per ADC code times `2^LOOP_FRACTION_BITS`
/// (4.028320e-3 A per code).
pub const LOOP_FRACTION_BITS: u32 = 12;
/// Proportional gain, integer.
pub const LOOP_KP_Q: i64 = 17714;
/// Integral gain per update, integer.
pub const LOOP_KI_Q: i64 = 324;
/// The ADC code at zero current.
pub const ADC_ZERO_CODE: i64 = 2048;

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
