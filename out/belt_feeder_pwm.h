/*
 * pwmplan 0.1.0 plan for belt-feeder (pwmplan-hash:546d1e2179b0892fa573224911eb597b73c6cda12f28ccfd395c429f7909b18e)
 *
 * Chosen setting
 *   design         belt-feeder
 *   board          Wren 24 V half-bridge (invented)
 *   switch         Tarn 40 V, 2.4 mΩ (invented)
 *   topology       half-bridge
 *   objective      least-loss at typical values
 *   frequency      20.005 kHz, edge-aligned
 *   timer          clock 88.00 MHz; divider 1 (register 0); period 4399 ticks (register 4398)
 *   resolution     4399 duty steps (12.1 bits)
 *   dead time      148 ns = 13 ticks (code 0x0D); needed 142 ns
 *   duty limits    compare 40 to 4342 (0.9 % to 98.7 %); the load needs 67.5 % to 94.4 %
 *   feasible band  20.005 kHz to 59.986 kHz
 *
 * Constraints (limit, value, margin to the limit, status)
 *   junction-rated         135 °C     56.8 °C     78.2 K  ok
 *   junction-high-bus      135 °C     56.9 °C     78.1 K  ok
 *   ripple                 875 mA      363 mA     512 mA  ok
 *   audible            20.000 kHz  20.005 kHz    4.55 Hz  binds
 *   resolution         10.00 bits  12.10 bits  2.10 bits  ok
 *   dead-time              148 ns      142 ns    5.62 ns  ok
 *   duty-range            98.70 %     94.43 %     4.27 %  ok
 *   frequency-band     16.000 kHz  20.005 kHz   4.00 kHz  ok
 *
 * Losses at the rated case (whole stage)
 *   conduction           33.5 mW
 *   switching            14.9 mW
 *   output capacitance   9.12 mW
 *   reverse recovery     17.3 mW
 *   dead-time diode      12.5 mW
 *   gate drive           32.5 mW
 *   motor ripple copper  2.95 mW
 *   total                123 mW
 *
 * Operating figures
 *   rated case              24.0 V supply, 55.0 °C ambient, 3.50 A load
 *   high-bus case           28.0 V supply, 55.0 °C ambient, 3.50 A load
 *   junction                56.8 °C at the rated case, 56.9 °C at the high-bus case (limit 135 °C)
 *   ripple, rated case      239 mA peak to peak at 20.005 kHz (continuous), 68.9 mA rms
 *   ripple, high-bus case   363 mA peak to peak at 20.005 kHz (continuous), 105 mA rms; the larger, checked against the ripple limit
 *   audibility, rated case  no significant line at or below 20.00 kHz; A-weighted in-band level none
 *
 * Worst case over part and operating spreads
 *   junction    58.2 °C (limit 135 °C); ok; hot: V_th max, supply 28.0 V
 *   total-loss  199 mW; ok; hot: V_th max, supply 28.0 V
 *   ripple      363 mA (limit 875 mA); ok; hot: V_th min, supply 28.0 V
 *   duty-range  94.45 % (limit 98.70 %); ok; hot: V_th min, supply 20.0 V
 *   dead-time   needs 142 ns against 148 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
 *   audible     ok; no significant audible line at any corner
 *   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
 *
 * Checked on the registers (independent simulation of the written values)
 *   pulses         shortest high-side pulse 307 ns at COMPARE_MIN, shortest low-side on-time 500 ns at COMPARE_MAX (minimum pulse 300 ns, bootstrap refresh 500 ns)
 *   rated case     at compare duty 78.745 %: mean current 3.500 A (plan 3.500 A), ripple 238.8 mA peak to peak (plan 238.8 mA)
 *   high-bus case  at compare duty 67.538 %: mean current 3.500 A (plan 3.500 A), ripple 362.9 mA peak to peak (plan 362.9 mA)
 *
 * Alternatives
 *   rounder-frequency  40.000 kHz (divider 1, 2200 ticks, edge): +85 mW total loss, +1.1 K junction, -181 mA ripple, -1.00 bits resolution
 *   highest-frequency  59.986 kHz (divider 1, 1467 ticks, edge): +171 mW total loss, +2.3 K junction, -242 mA ripple, -1.58 bits resolution
 *
 * Findings (`pwmplan explain CODE` says what a bracketed code means)
 *   warning  V_DSS 40.0 V is only 1.43x the highest bus 28.0 V; 1.5-2x is usual for ringing and back-EMF spikes. [vdss-margin-low]
 *   info     the C_rss curve gives a Miller charge of 13.5 nC over the gate-charge test swing from 20.0 V (half of V_DSS; q_g.at_v_ds not given) down to the on state; it is scaled by ×1.03 to Q_gd 14.0 nC (the curve sets the shape of C_gd, Q_gd its size) [c-rss-scaled-to-q-gd]
 *   info     the dead time costs about 70.9 mV of mean output voltage (0.30 % of the nominal supply) where it opposes the current; the compare duties above already make it up [dead-time-voltage-error]
 *
 * Assumptions
 *   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve; R_ds(on) as given at V_GS = 10.0 V, not moved to the 12.0 V drive (no second datasheet point)
 *   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance); the turn-off followed at the switch node, the switch's own C_ds and the partner's C_oss taking part of the load current while the node rises; the turn-on's voltage fall followed there too, the channel carrying the load current and what discharges its own C_ds and charges the partner's; bridge partner's recovery: no stored charge (Q_rr is no more than the output charge Q_oss(V_R) of the datasheet's Q_rr test (100 A/µs from 25.0 A at 20.0 V)), plus charging its output capacitance (Q_oss·V − E_oss); dead-time diode conduction for its share of each dead time, from the outgoing switch's hand-over (turn-off delay, node swing, half the current fall; or, after a soft turn-off, the gate down to the plateau and half-way to threshold) until the incoming switch has taken the current (half its current rise after its delay; or, at a soft turn-on, its gate from the Miller-kicked voltage up to threshold plus the diode's transit time) at V_sd(I): the datasheet V_sd at 25.0 A (assumed: the Q_rr test's forward current; the switch file gives no body_diode.v_sd_at), lowered by kT/q·ln(I_test/I) below it, no ohmic rise above it; stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop
 *   - motor current: exact periodic R-L-back-EMF solution of the terminal voltage the stage really applies: each dead time held by the body diode the current forces on (until the current reaches zero), the switches' drop at R_ds(on) at the junction limit, the freewheel diode at its forward voltage; the compare duties are solved with it
 *   - checked on the written registers by an independent register-level simulation (plan.json register_check): every output pulse at the compare limits, and at each case the mean current, ripple and lowest audible line
 *   - devices thermally independent, each with the board's junction-to-ambient path
 *   - rated load at the hottest ambient; ripple and switching loss checked again at the highest supply
 *   - audibility from the ripple current's spectrum: significant lines within 60 dB of the strongest and above 1 mA rms
 *
 * Cautions
 *   - Power stages can burn, shock and start motors unexpectedly: first power-up from a current-limited supply, motor mechanically safe, hand on the switch.
 *   - Figures come from datasheet typical values and first-order models: measure switching edges, dead time and case temperatures on the real board before relying on the margins.
 *   - Check every register value against the MCU reference manual; a wrong dead-time code can short a bridge leg.
 *   - Keep the current limit and over-temperature shutdown in hardware; this plan does not replace them.
 *   - Follow local electrical codes and licensed practice for mains-connected or high-energy equipment.
 *
 * Inputs
 *   bundled:belt-feeder       sha256 0a75bcad2ef15770c4e8a7b7072280ce2bb4d02a1819af6aaa6e072842040e9e
 *   bundled:wren-hb24         sha256 38d1a65b1e934eebd35e6be6a01ac800ee2ae0753edd1982503afa734ca03aa9
 *   bundled:switches/tarn-40  sha256 66aba222e61d260002fdcede0161454058188910c18dad97d78c8e4682537e11
 */
#ifndef BELT_FEEDER_PWM_H
#define BELT_FEEDER_PWM_H

#include <stdint.h>

/*
 * PWM mode and polarity these constants assume: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
 *
 * What duty 0 means on this half-bridge stage, and how to coast:
 *   Duty 0 (compare 0) means the low side is on for the whole period: the motor terminals are shorted through it, and a turning motor brakes (its back-EMF drives a braking current).
 *   To coast: disable the outputs (both switches off); duty 0 is not coasting.
 */

/* Timer input clock, before the divider. */
#define BELT_FEEDER_PWM_CLOCK_HZ 88000000UL
/* Divider (prescaler) ratio and the value the divider register takes. */
#define BELT_FEEDER_PWM_DIVIDER 1U
#define BELT_FEEDER_PWM_DIVIDER_REG 0U
/* Counter ticks per PWM period and the period register value (counter top). */
#define BELT_FEEDER_PWM_PERIOD_TICKS 4399U
#define BELT_FEEDER_PWM_PERIOD_REG 4398U
/* 1: up-down counting (centre-aligned); 0: up counting (edge-aligned). */
#define BELT_FEEDER_PWM_CENTRE_ALIGNED 0
/* PWM frequency in millihertz (20.005 kHz). */
#define BELT_FEEDER_PWM_FREQUENCY_MILLIHZ 20004546ULL
/* Compare value for 100 % on; compare values run 0..DUTY_STEPS. */
#define BELT_FEEDER_PWM_DUTY_STEPS 4399U
/* Dead-time register code and the ticks it gives (147.7 ns;
 * ticks of the counter's clock, 88.000 MHz). */
#define BELT_FEEDER_PWM_DEAD_TIME_CODE 0x0DU
#define BELT_FEEDER_PWM_DEAD_TIME_TICKS 13U
/* Allowed compare range (minimum pulses, dead time, bootstrap refresh). */
#define BELT_FEEDER_PWM_COMPARE_MIN 40U
#define BELT_FEEDER_PWM_COMPARE_MAX 4342U
/* Compare counts a leg's dead time takes from its output pulse (dead time x
 * frequency x DUTY_STEPS, rounded): add them for current out of the leg, take
 * them away for current into it (see belt_feeder_pwm_compare_compensated). */
#define BELT_FEEDER_PWM_DEAD_TIME_COMP_COUNTS 13U
/* The compare the init sequence loads while the outputs are disabled
 * (0: the low side on, braking a turning motor, once enabled). */
#define BELT_FEEDER_PWM_INIT_COMPARE 0U
/* 1: compare 0 with the outputs enabled turns the low side(s) on and shorts
 * the motor (braking); 0: it does not. Coasting is outputs disabled. */
#define BELT_FEEDER_PWM_DUTY_ZERO_BRAKES 1

/*
 * Init sequence (register names differ per MCU; values are above):
 *   1. Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.
 *   2. Divider register <- BELT_FEEDER_PWM_DIVIDER_REG (divider 1).
 *   3. Period register (counter top) <- BELT_FEEDER_PWM_PERIOD_REG (4399 ticks per period).
 *   4. Counting mode <- up (edge-aligned) (see BELT_FEEDER_PWM_CENTRE_ALIGNED).
 *   5. PWM mode and polarity: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
 *   6. Dead-time register <- BELT_FEEDER_PWM_DEAD_TIME_CODE (13 ticks, 147.7 ns); write it before the complementary outputs are ever enabled.
 *   7. Compare register(s) <- BELT_FEEDER_PWM_INIT_COMPARE (outputs still disabled), then values from belt_feeder_pwm_compare_from_q16() only.
 *   8. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
 *   9. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 turns the low sides on and brakes a turning motor).
 */

/*
 * Compare value for a duty given as a 16-bit fraction (65536 = 100 %),
 * rounded to the nearest count. 0 gives 0 (output off); any other request
 * gives at least COMPARE_MIN (no pulse shorter than the minimum) and at most
 * COMPARE_MAX. Integer only.
 */
static inline uint32_t belt_feeder_pwm_compare_from_q16(uint32_t duty_q16)
{
    uint64_t c;
    if (duty_q16 == 0U) {
        return 0U;
    }
    if (duty_q16 >= 65536U) {
        return BELT_FEEDER_PWM_COMPARE_MAX;
    }
    c = ((uint64_t)duty_q16 * (uint64_t)BELT_FEEDER_PWM_DUTY_STEPS + 32768U) >> 16;
    if (c < BELT_FEEDER_PWM_COMPARE_MIN) {
        return BELT_FEEDER_PWM_COMPARE_MIN;
    }
    if (c > BELT_FEEDER_PWM_COMPARE_MAX) {
        return BELT_FEEDER_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

/* The same for a duty in permille (1000 = 100 %); 0 is off. 32-bit
 * arithmetic: permille < 1000 here, so permille * 65536 + 500 < 2^32 (no
 * 64-bit division on a 32-bit target). */
static inline uint32_t belt_feeder_pwm_compare_from_permille(uint32_t permille)
{
    if (permille == 0U) {
        return 0U;
    }
    if (permille >= 1000U) {
        return belt_feeder_pwm_compare_from_q16(65536U);
    }
    return belt_feeder_pwm_compare_from_q16((uint32_t)((permille * 65536U + 500U) / 1000U));
}

/* The same for a duty fraction 0.0 .. 1.0 (the board has an FPU): 0 (or
 * less, or NaN) is off; any other request gives at least COMPARE_MIN, also
 * one below half a 16-bit step that rounds to 0. */
static inline uint32_t belt_feeder_pwm_compare_from_fraction(float duty)
{
    uint32_t q;
    if (!(duty > 0.0f)) {
        return 0U;
    }
    if (duty >= 1.0f) {
        return belt_feeder_pwm_compare_from_q16(65536U);
    }
    q = (uint32_t)(duty * 65536.0f + 0.5f);
    return belt_feeder_pwm_compare_from_q16(q == 0U ? 1U : q);
}

/* A leg's compare with its dead time made up for the sign of its current
 * (current_out: 1 when the current flows out of the leg, 0 into it), kept
 * within COMPARE_MIN..COMPARE_MAX; 0 stays 0 (off). Near zero current the
 * sign is uncertain: keep the last sign or leave the compare alone there. */
static inline uint32_t belt_feeder_pwm_compare_compensated(uint32_t compare, int current_out)
{
    uint64_t c = compare;
    if (compare == 0U) {
        return 0U;
    }
    if (current_out) {
        c += BELT_FEEDER_PWM_DEAD_TIME_COMP_COUNTS;
    } else {
        c = c > BELT_FEEDER_PWM_DEAD_TIME_COMP_COUNTS ? c - BELT_FEEDER_PWM_DEAD_TIME_COMP_COUNTS : 0U;
    }
    if (c < BELT_FEEDER_PWM_COMPARE_MIN) {
        return BELT_FEEDER_PWM_COMPARE_MIN;
    }
    if (c > BELT_FEEDER_PWM_COMPARE_MAX) {
        return BELT_FEEDER_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

#endif /* BELT_FEEDER_PWM_H */
