/*
 * pwmplan 0.1.0 plan for pump-sensorless (pwmplan-hash:41b8f04a973095e64934580d79700688021f0b396898d534f756df6b32a36359)
 *
 * Chosen setting
 *   design            pump-sensorless
 *   board             Osprey 48 V three-phase bridge, sensorless six-step (invented)
 *   switch            Corrie 100 V, 9.8 mΩ (invented)
 *   topology          three-phase
 *   objective         least-loss at typical values
 *   frequency         20.007 kHz, centre-aligned
 *   timer             clock 120.0 MHz; divider 1 (register 0); period 5998 ticks (register 2999)
 *   resolution        2999 duty steps (11.6 bits)
 *   dead time         125 ns = 15 ticks (code 0x0F); needed 119 ns
 *   duty limits       compare 20 to 2943 (0.7 % to 98.1 %); the load needs 46.0 % to 62.1 %
 *   three-phase       six-step, high-side chopping; chopping duty 51.7 % at the rated case (10.0 A line current (the mean in the two conducting phases), 4.54 A mean from the DC link); electrical frequency 200.0 Hz; channels A, B, C share the period, the compare limits and the dead time
 *   current sampling  PWM mode: centre-aligned (up-down) counter; each channel's high side is active while the counter is below its compare (compare 0 off, duty_steps fully on), so its pulse is centred on the counter bottom and the low side conducts around the counter top; the complementary low-side output is the inverse with the dead time. The ADC starts at compare 2951 matched on the UP-count, 400 ns before the counter top, so the 800 ns sample is centred on the top, the middle of the low-side on-time. The window needs the low side on for 2 × (trigger lead 400 ns + dead time 125 ns + settling 1.50 µs) = 4.05 µs of the 50.0 µs period, so a sampled leg's high-side duty is at most 91.9 % (compare 2756); the load needs 62.1 %.
 *   feasible band     20.007 kHz to 40.000 kHz
 *
 * Constraints (limit, value, margin to the limit, status)
 *   junction-rated         145 °C     63.8 °C     81.2 K  ok
 *   junction-high-bus      145 °C     65.3 °C     79.7 K  ok
 *   audible            20.000 kHz  20.007 kHz    6.67 Hz  ok
 *   resolution         10.00 bits  11.55 bits  1.55 bits  ok
 *   dead-time              125 ns      119 ns    6.02 ns  ok
 *   duty-range            98.13 %     62.09 %    36.04 %  ok
 *   sampling-window       91.90 %     62.09 %    29.81 %  ok
 *   frequency-band     16.000 kHz  20.007 kHz   4.01 kHz  ok
 *
 * Losses at the rated case (whole stage)
 *   conduction           1.84 W
 *   switching            176 mW
 *   output capacitance   26.3 mW
 *   reverse recovery     291 mW
 *   body diode           5.10 W
 *   gate drive           14.1 mW
 *   motor ripple copper  29.8 mW
 *   total                7.47 W
 *
 * Operating figures
 *   rated case              48.0 V supply, 45.0 °C ambient, 10.0 A load
 *   high-bus case           54.0 V supply, 45.0 °C ambient, 10.0 A load
 *   junction                63.8 °C at the rated case, 65.3 °C at the high-bus case (limit 145 °C)
 *   ripple, rated case      1.22 A peak to peak at 20.007 kHz (continuous), 352 mA rms
 *   ripple, high-bus case   1.36 A peak to peak at 20.007 kHz (continuous), 393 mA rms; the larger, checked against the ripple limit
 *   audibility, rated case  no significant line at or below 20.00 kHz; A-weighted in-band level none
 *
 * Current limit
 *   threshold       code 13 = 670 mV at the comparator
 *   trips           never below 10.9 A, always above 12.7 A (nominal 11.8 A; shunt in the supply return; shunt, amplifier and comparator tolerances stacked worst-case)
 *   operating peak  10.7 A (the high-bus case's load current plus half its ripple); margin to the lowest trip 198 mA
 *   peak            at most 12.8 A (102 mA over the highest trip: 24.7 mA in the 228 ns reaction, more where a chopped stall crosses the trip inside the uncut on-time); the switch's I_DM at 100 µs 240 A (margin 227 A)
 *   reaction        228 ns = filter 8.33 ns + comparator 60.0 ns + driver 120 ns + turn-off delay 26.0 ns + voltage rise 14.1 ns
 *   blanking        492 ns (59 blanking ticks) against a turn-on transient of 491 ns = driver 120 ns + turn-on delay 12.3 ns + current rise 3.99 ns + recovery 55.0 ns + ringing none (no loop inductance given) + amplifier settling 300 ns
 *   filter          1 sample at 120 MHz (passes a fault held 8.33 ns)
 *   uncut on-time   720 ns (blanking and reaction): the limit cannot cut a pulse before this; shorter pulses run their commanded length (the compare limits' shortest pulse is 200 ns)
 *   response        cycle-by-cycle
 *   stall           12.7 A (cycle-by-cycle: a stall is chopped at the trip's highest edge); junction 74.3 °C at hot R_ds(on) (Computed in steady state: the design gives no stall time (R_th(j-a) 9.30 K/W))
 *
 * Worst case over part and operating spreads
 *   junction         66.5 °C (limit 145 °C); ok; hot: V_th min, supply 54.0 V
 *   total-loss       8.66 W; ok; hot: V_th min, supply 54.0 V
 *   ripple           1.36 A; ok; hot: V_th min, supply 54.0 V
 *   duty-range       62.00 % (limit 98.13 %); ok; hot: V_th min, supply 40.0 V
 *   dead-time        needs 119 ns against 125 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
 *   sampling-window  62.00 % (limit 91.90 %); ok; hot: V_th min, supply 40.0 V
 *   audible          ok; no significant audible line at any corner
 *   corners          4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
 *
 * Checked on the registers (independent simulation of the written values)
 *   pulses             shortest high-side pulse 208 ns at COMPARE_MIN, shortest low-side on-time 808 ns at COMPARE_MAX (minimum pulse 200 ns, bootstrap refresh 800 ns)
 *   rated case         at compare duty 51.712 %: mean current 9.999 A (plan 10.00 A), ripple 1.218 A peak to peak (plan 1.221 A)
 *   high-bus case      at compare duty 46.049 %: mean current 9.999 A (plan 10.00 A), ripple 1.360 A peak to peak (plan 1.362 A)
 *   back-EMF sampling  at the written back-EMF triggers, at the ends of the on-times each window claims and at the rated one, the chopping leg's state read has held 1.52 µs before and holds 808 ns after (settling and sampling need no more)
 *   current limit      trip window 10.88 A to 12.67 A over the 32 tolerance corners; a stall chopped on the written threshold, blanking and filter peaks at 12.69 A (plan 12.77 A) with a mean of 12.51 A (plan's stall current 12.67 A)
 *   not checked        the current-sampling window (six-step sampling, or no window at this setting)
 *   not checked        six-step ripple in the PWM periods of a commutation freewheel (three phases share the chopped leg's swing there, so the held phase's is smaller than the two-phase figure the plan gives; the periods of two-phase conduction are compared)
 *
 * Alternatives
 *   rounder-frequency  30.000 kHz (divider 1, 4000 ticks, centre): +249 mW total loss, +0.1 K junction, -453 mA ripple, -0.58 bits resolution
 *   highest-frequency  40.000 kHz (divider 1, 3000 ticks, centre): +509 mW total loss, +0.2 K junction, -680 mA ripple, -1.00 bits resolution
 *
 * Findings (`pwmplan explain CODE` says what a bracketed code means)
 *   warning  six-step: after each commutation the off-going phase keeps conducting through a body diode for 225 µs at the rated case, 27 % of the 833 µs sector (simulated switch by switch; the losses and the duty include it): the torque dips for that long every sector, and a sensorless drive cannot see the floating phase's back-EMF until it ends [six-step-commutation]
 *   info     the dead time costs about 120 mV of mean output voltage (0.25 % of the nominal supply) where it opposes the current; the compare duties above already make it up [dead-time-voltage-error]
 *
 * Assumptions
 *   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve; R_ds(on) as given at V_GS = 10.0 V, not moved to the 12.0 V drive (no second datasheet point)
 *   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance); the turn-off with the whole load current in the channel through the Miller swing (the switch file has no C_rss curve or no g_fs; conservative); at each hard turn-on (each of the 720 angles under sinusoidal modulation, each chopped edge under six-step), bridge partner's recovery: a charge-control body diode with transit time 31.3 ns fitted to Q_rr less the output charge Q_oss(V_R) and the junction's forward charge at the current zero crossing of the datasheet's Q_rr test (100 A/µs from 30.0 A at 50.0 V) (the junction voltage from V_sd(I)), recovering at each hard turn-on's current slope (2·I/t_ri; with a loop inductance the slope its followed current rise ends with), plus charging its output capacitance (Q_oss·V − E_oss); under sinusoidal modulation, at each of the 720 angles, dead-time diode conduction for its share of each dead time, from the outgoing switch's hand-over (turn-off delay, node swing, half the current fall; or, after a soft turn-off, the gate down to the plateau and half-way to threshold) until the incoming switch has taken the current (half its current rise after its delay; or, at a soft turn-on, its gate from the Miller-kicked voltage up to threshold plus the diode's transit time) at V_sd(I): the datasheet V_sd at 30.0 A (assumed: the Q_rr test's forward current; the switch file gives no body_diode.v_sd_at), lowered by kT/q·ln(I_test/I) below it, no ohmic rise above it; under six-step, body-diode conduction (the off-time freewheel, the dead times, each commutation's freewheel, the floating phase's) at V_SD(I) for as long as the simulated circuit puts the current in a diode, its gate edges taken as instant (the diode's share of a dead time is not shortened by the switches' delays there); stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop
 *   - sinusoidal: star-connected non-salient motor, phase voltage E + (R + jωL)·I plus what the legs lose, made up edge by edge (each dead time clamped by the diode in the direction of the current at that edge, that current moved by the other legs' late edges, the 5th to 25th current harmonics it drives followed, or where those do not settle the period-averaged bridge followed in time), and raised by x/sin x, x = π·f_e/f, for one compare written per PWM period; losses averaged over 720 angles of the electrical period; ripple in the small-ripple limit, carrier sidebands lumped on the carrier harmonics
 *   - six-step: 120° blocks simulated switch by switch to their periodic steady state (ideal switches with R_ds(on), body diodes at their forward voltage, dead times, the star motor's three currents with the back-EMF shape), so each commutation's diode freewheel and the floating phase's diode conduction are in the duty and the losses; commutation at a PWM period boundary; the PWM ripple and its audibility from the two conducting phases' exact R-L-back-EMF solution at that duty
 *   - the six switches thermally independent, each with the board's junction-to-ambient path; all high sides alike, all low sides alike
 *   - current sampling: low-side shunts, two of three phases sampled in the middle of the low-side on-time (around the counter top: high side on while the counter is below the compare), the third from i_a + i_b + i_c = 0
 *   - rated load at the hottest ambient; ripple and switching loss checked again at the highest supply
 *
 * Cautions
 *   - Power stages can burn, shock and start motors unexpectedly: first power-up from a current-limited supply, motor mechanically safe, hand on the switch.
 *   - Figures come from datasheet typical values and first-order models: measure switching edges, dead time and case temperatures on the real board before relying on the margins.
 *   - Check every register value against the MCU reference manual; a wrong dead-time code can short a bridge leg.
 *   - Keep the current limit and over-temperature shutdown in hardware; this plan does not replace them.
 *   - Follow local electrical codes and licensed practice for mains-connected or high-energy equipment.
 *
 * Inputs
 *   pump-sensorless.yaml      sha256 5a31ea60c0504730c5fa9d1487b4ccd33fc896512bddd771ce99dd3937658ac8
 *   osprey-3p48.yaml          sha256 67ffe70c43ddaf3963fe30e69a0173c00a3926ba89caa939b3b635e94e21832a
 *   switches/corrie-100.yaml  sha256 b376b085f2d49cf222861c7579f007155166c8a38da60a84924774039d8e631a
 */
#ifndef PUMP_SENSORLESS_PWM_H
#define PUMP_SENSORLESS_PWM_H

#include <stdint.h>

/*
 * PWM mode and polarity these constants assume: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
 *
 * What duty 0 means on this three-phase stage, and how to coast:
 *   Duty 0 on all three channels (compare 0) means all three low sides are on: the windings are shorted and a turning motor brakes; equal compares on all channels give zero line-to-line volts.
 *   To coast: disable the outputs (all six switches off); duty 0 is not coasting.
 */

/* Timer input clock, before the divider. */
#define PUMP_SENSORLESS_PWM_CLOCK_HZ 120000000UL
/* Divider (prescaler) ratio and the value the divider register takes. */
#define PUMP_SENSORLESS_PWM_DIVIDER 1U
#define PUMP_SENSORLESS_PWM_DIVIDER_REG 0U
/* Counter ticks per PWM period and the period register value (counter top). */
#define PUMP_SENSORLESS_PWM_PERIOD_TICKS 5998U
#define PUMP_SENSORLESS_PWM_PERIOD_REG 2999U
/* 1: up-down counting (centre-aligned); 0: up counting (edge-aligned). */
#define PUMP_SENSORLESS_PWM_CENTRE_ALIGNED 1
/* PWM frequency in millihertz (20.007 kHz). */
#define PUMP_SENSORLESS_PWM_FREQUENCY_MILLIHZ 20006669ULL
/* Compare value for 100 % on; compare values run 0..DUTY_STEPS. */
#define PUMP_SENSORLESS_PWM_DUTY_STEPS 2999U
/* Dead-time register code and the ticks it gives (125.0 ns;
 * ticks of the counter's clock, 120.00 MHz). */
#define PUMP_SENSORLESS_PWM_DEAD_TIME_CODE 0x0FU
#define PUMP_SENSORLESS_PWM_DEAD_TIME_TICKS 15U
/* Allowed compare range (minimum pulses, dead time, bootstrap refresh). */
#define PUMP_SENSORLESS_PWM_COMPARE_MIN 20U
#define PUMP_SENSORLESS_PWM_COMPARE_MAX 2943U
/* Compare counts a leg's dead time takes from its output pulse (dead time x
 * frequency x DUTY_STEPS, rounded): add them for current out of the leg, take
 * them away for current into it (see pump_sensorless_pwm_compare_compensated). */
#define PUMP_SENSORLESS_PWM_DEAD_TIME_COMP_COUNTS 7U
/* The compare the init sequence loads while the outputs are disabled
 * (0: the low sides on, braking a turning motor, once enabled). */
#define PUMP_SENSORLESS_PWM_INIT_COMPARE 0U
/* 1: compare 0 with the outputs enabled turns the low side(s) on and shorts
 * the motor (braking); 0: it does not. Coasting is outputs disabled. */
#define PUMP_SENSORLESS_PWM_DUTY_ZERO_BRAKES 1
/* Three-phase bridge: channels A, B and C share the period, the compare
 * limits and the dead time above; the same compare functions serve all three. */
#define PUMP_SENSORLESS_PWM_CHANNELS 3U
/* Six-step commutation. Sector k (0 to 5) covers the electrical angle
 * 30 + 60*k to 90 + 60*k degrees of phase A's back-EMF (e_a = E*sin(theta);
 * B and C lag by 120 and 240 degrees); index [0] forward (A -> B -> C), [1]
 * reverse. Per sector the phase driven to the positive rail, to the negative
 * rail, and the floating one (both switches off): 0 = A, 1 = B, 2 = C.
 * The positive phase's high side switches at the PWM duty; the negative phase's low side is held on.
 * Channel settings per sector: the positive phase's compare the chopping
 * counts with only its high output enabled, the negative phase's compare 0
 * with only its low output enabled, the floating phase's compare 0 with both
 * outputs disabled. Change sectors in the middle of the chopping switch's
 * off-time, at the counter top, so that no pulse is split, with the
 * outputs of the off-going phase disabled first. */
#define PUMP_SENSORLESS_PWM_SIX_STEP_SECTORS 6U
#define PUMP_SENSORLESS_PWM_SIX_STEP_CHOP_LOW_SIDE 0
#define PUMP_SENSORLESS_PWM_SIX_STEP_COMPLEMENTARY 0
static const unsigned char pump_sensorless_pwm_six_step_positive[2][6] = {
    { 0, 0, 1, 1, 2, 2 },
    { 1, 2, 2, 0, 0, 1 }
};
static const unsigned char pump_sensorless_pwm_six_step_negative[2][6] = {
    { 1, 2, 2, 0, 0, 1 },
    { 0, 0, 1, 1, 2, 2 }
};
static const unsigned char pump_sensorless_pwm_six_step_floating[2][6] = {
    { 2, 1, 0, 2, 1, 0 },
    { 2, 1, 0, 2, 1, 0 }
};
/* Sensorless six-step: the floating phase's back-EMF (see the rationale).
 * On-time counts n: the chopping high side's compare (its on-time, counts each
 * side of the counter bottom).
 * n >= BEMF_ON_COUNTS_MIN: start the conversion at BEMF_ON_ADC_TRIGGER_COUNT
 * (matched counting up if BEMF_ON_ADC_TRIGGER_UP, else down), inside the chopping
 * switch's on-time after the dead time and the settling, and compare the
 * floating terminal with half the bus.
 * n <= BEMF_OFF_COUNTS_MAX: start it at BEMF_OFF_ADC_TRIGGER_COUNT instead, in
 * the off-time, and compare the floating terminal with the negative rail plus
 * BEMF_OFF_THRESHOLD_MV (signed, millivolts at the terminal). */
#define PUMP_SENSORLESS_PWM_BEMF_ON_ADC_TRIGGER_COUNT 50U
#define PUMP_SENSORLESS_PWM_BEMF_ON_ADC_TRIGGER_UP 1
#define PUMP_SENSORLESS_PWM_BEMF_ON_COUNTS_MIN 147U
#define PUMP_SENSORLESS_PWM_BEMF_OFF_ADC_TRIGGER_COUNT 2949U
#define PUMP_SENSORLESS_PWM_BEMF_OFF_ADC_TRIGGER_UP 0
#define PUMP_SENSORLESS_PWM_BEMF_OFF_COUNTS_MAX 2852U
#define PUMP_SENSORLESS_PWM_BEMF_OFF_THRESHOLD_MV (-450)
/* 1: the off-time threshold is measured from the bus; 0: from the negative rail. */
#define PUMP_SENSORLESS_PWM_BEMF_OFF_THRESHOLD_AT_BUS 0
/* PWM periods to ignore zero crossings after each commutation (the off-going
 * phase is clamped by a body diode meanwhile). */
#define PUMP_SENSORLESS_PWM_BEMF_BLANKING_PERIODS 5U
/* Electrical degrees from a zero crossing to the next commutation. */
#define PUMP_SENSORLESS_PWM_BEMF_COMMUTATION_DELAY_DEG 30U
/* ADC trigger (a spare compare channel): the compare value matched on the UP-count, 400.0 ns
 * before the counter top, so the sample is centred on the top. Under the PWM
 * mode above (high side on while the counter is below the compare) each high-
 * side pulse is centred on the counter bottom, so the top is the middle of
 * the low-side on-time, where the low-side shunts carry the phase currents. */
#define PUMP_SENSORLESS_PWM_ADC_TRIGGER_COMPARE 2951U
/* Largest compare of a sampled leg that still leaves the sampling window
 * (settling, dead time, sample); above it that leg's current is not valid. */
#define PUMP_SENSORLESS_PWM_SAMPLING_COMPARE_MAX 2756U
/* Current limit (fault input): it trips never below 10879 mA and
 * always above 12670 mA of motor current (see the rationale). */
/* Comparator threshold code (670.3 mV). */
#define PUMP_SENSORLESS_PWM_LIMIT_THRESHOLD_CODE 13U
/* Fault filter: a fault passes after this many consecutive samples at this clock. */
#define PUMP_SENSORLESS_PWM_LIMIT_FILTER_CLOCK_HZ 120000000UL
#define PUMP_SENSORLESS_PWM_LIMIT_FILTER_SAMPLES 1U
/* Fault input ignored for this many blanking ticks after each turn-on (491.7 ns). */
#define PUMP_SENSORLESS_PWM_LIMIT_BLANKING_TICKS 59U
/* 1: a fault turns the outputs off until the next period (cycle-by-cycle);
 * 0: until firmware clears it (latched). */
#define PUMP_SENSORLESS_PWM_LIMIT_CYCLE_BY_CYCLE 1

/*
 * Init sequence (register names differ per MCU; values are above):
 *   1. Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.
 *   2. Divider register <- PUMP_SENSORLESS_PWM_DIVIDER_REG (divider 1).
 *   3. Period register (counter top) <- PUMP_SENSORLESS_PWM_PERIOD_REG (5998 ticks per period).
 *   4. Counting mode <- up-down (centre-aligned) (see PUMP_SENSORLESS_PWM_CENTRE_ALIGNED).
 *   5. PWM mode and polarity: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
 *   6. Dead-time register <- PUMP_SENSORLESS_PWM_DEAD_TIME_CODE (15 ticks, 125.0 ns); write it before the complementary outputs are ever enabled.
 *   7. Fault input (over-current): threshold <- PUMP_SENSORLESS_PWM_LIMIT_THRESHOLD_CODE (670.3 mV), filter <- PUMP_SENSORLESS_PWM_LIMIT_FILTER_SAMPLES samples at PUMP_SENSORLESS_PWM_LIMIT_FILTER_CLOCK_HZ Hz, blanking after each turn-on <- PUMP_SENSORLESS_PWM_LIMIT_BLANKING_TICKS ticks (491.7 ns), response <- cycle-by-cycle (see PUMP_SENSORLESS_PWM_LIMIT_CYCLE_BY_CYCLE); clear any pending fault and arm the input now, before the outputs are ever enabled, so the first pulse is already limited.
 *   8. Channels A, B and C: the same PWM mode, complementary outputs with the dead time; compare registers <- PUMP_SENSORLESS_PWM_INIT_COMPARE (outputs still disabled), then values from pump_sensorless_pwm_compare_from_q16() only (one per channel).
 *   9. ADC trigger: a spare compare channel <- PUMP_SENSORLESS_PWM_ADC_TRIGGER_COMPARE, triggering on the UP-count match only (just before the counter top, where the low sides conduct).
 *   10. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
 *   11. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 turns the low sides on and brakes a turning motor).
 */

/*
 * Compare value for a duty given as a 16-bit fraction (65536 = 100 %),
 * rounded to the nearest count. 0 gives 0 (output off); any other request
 * gives at least COMPARE_MIN (no pulse shorter than the minimum) and at most
 * COMPARE_MAX. Integer only.
 */
static inline uint32_t pump_sensorless_pwm_compare_from_q16(uint32_t duty_q16)
{
    uint64_t c;
    if (duty_q16 == 0U) {
        return 0U;
    }
    if (duty_q16 >= 65536U) {
        return PUMP_SENSORLESS_PWM_COMPARE_MAX;
    }
    c = ((uint64_t)duty_q16 * (uint64_t)PUMP_SENSORLESS_PWM_DUTY_STEPS + 32768U) >> 16;
    if (c < PUMP_SENSORLESS_PWM_COMPARE_MIN) {
        return PUMP_SENSORLESS_PWM_COMPARE_MIN;
    }
    if (c > PUMP_SENSORLESS_PWM_COMPARE_MAX) {
        return PUMP_SENSORLESS_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

/* The same for a duty in permille (1000 = 100 %); 0 is off. 32-bit
 * arithmetic: permille < 1000 here, so permille * 65536 + 500 < 2^32 (no
 * 64-bit division on a 32-bit target). */
static inline uint32_t pump_sensorless_pwm_compare_from_permille(uint32_t permille)
{
    if (permille == 0U) {
        return 0U;
    }
    if (permille >= 1000U) {
        return pump_sensorless_pwm_compare_from_q16(65536U);
    }
    return pump_sensorless_pwm_compare_from_q16((uint32_t)((permille * 65536U + 500U) / 1000U));
}

/* Compare values of channels A, B and C from three q16 duties (the same
 * conversion for each channel). */
static inline void pump_sensorless_pwm_compare_abc_from_q16(const uint32_t duty_q16[3], uint32_t compare[3])
{
    unsigned int k;
    for (k = 0U; k < 3U; k++) {
        compare[k] = pump_sensorless_pwm_compare_from_q16(duty_q16[k]);
    }
}

/* The same for a duty fraction 0.0 .. 1.0 (the board has an FPU): 0 (or
 * less, or NaN) is off; any other request gives at least COMPARE_MIN, also
 * one below half a 16-bit step that rounds to 0. */
static inline uint32_t pump_sensorless_pwm_compare_from_fraction(float duty)
{
    uint32_t q;
    if (!(duty > 0.0f)) {
        return 0U;
    }
    if (duty >= 1.0f) {
        return pump_sensorless_pwm_compare_from_q16(65536U);
    }
    q = (uint32_t)(duty * 65536.0f + 0.5f);
    return pump_sensorless_pwm_compare_from_q16(q == 0U ? 1U : q);
}

/* A leg's compare with its dead time made up for the sign of its current
 * (current_out: 1 when the current flows out of the leg, 0 into it), kept
 * within COMPARE_MIN..COMPARE_MAX; 0 stays 0 (off). Near zero current the
 * sign is uncertain: keep the last sign or leave the compare alone there. */
static inline uint32_t pump_sensorless_pwm_compare_compensated(uint32_t compare, int current_out)
{
    uint64_t c = compare;
    if (compare == 0U) {
        return 0U;
    }
    if (current_out) {
        c += PUMP_SENSORLESS_PWM_DEAD_TIME_COMP_COUNTS;
    } else {
        c = c > PUMP_SENSORLESS_PWM_DEAD_TIME_COMP_COUNTS ? c - PUMP_SENSORLESS_PWM_DEAD_TIME_COMP_COUNTS : 0U;
    }
    if (c < PUMP_SENSORLESS_PWM_COMPARE_MIN) {
        return PUMP_SENSORLESS_PWM_COMPARE_MIN;
    }
    if (c > PUMP_SENSORLESS_PWM_COMPARE_MAX) {
        return PUMP_SENSORLESS_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

#endif /* PUMP_SENSORLESS_PWM_H */
