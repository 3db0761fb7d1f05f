/*
 * pwmplan 0.1.0 plan for vent-fan (pwmplan-hash:ce210b9f1f78d4ba6de34b553a8c839f68eea31a405c8a3eabd07202df6781f1)
 *
 * Chosen setting
 *   design         vent-fan
 *   board          Kite 12 V low-side (invented)
 *   switch         Scree 60 V, 7.5 mΩ (invented)
 *   topology       low-side
 *   objective      least-loss at typical values
 *   frequency      13.605 kHz, edge-aligned
 *   timer          clock 44.00 MHz; divider 1 (register 0); period 3234 ticks (register 3233)
 *   resolution     3234 duty steps (11.7 bits)
 *   duty limits    compare 9 to 3225 (0.3 % to 99.7 %); the load needs 22.7 % to 99.1 %
 *   feasible band  13.605 kHz to 25.000 kHz
 *
 * Constraints (limit, value, margin to the limit, status)
 *   junction-rated         110 °C     50.7 °C     59.3 K  ok
 *   junction-high-bus      110 °C     51.3 °C     58.7 K  ok
 *   ripple                 600 mA      600 mA    76.9 µA  binds
 *   audible               0 lines     0 lines    0 lines  ok
 *   resolution          8.00 bits  11.66 bits  3.66 bits  ok
 *   duty-range            99.72 %     99.07 %     0.65 %  ok
 *   frequency-band     25.000 kHz  13.605 kHz   11.4 kHz  ok
 *
 * Over the operating range (worst points)
 *   range                                 1500 to 4200 rpm, load fan-law; 7 speeds scanned per supply, the ripple maximum refined between them
 *   largest ripple (peak to peak)         600 mA at 2694 rpm (494 mA, supply 13.2 V, duty 0.500)
 *   lowest compare duty                   0.2274 at 1500 rpm (153 mA, supply 13.2 V)
 *   highest compare duty                  0.9907 at 4200 rpm (1.20 A, supply 10.8 V)
 *   largest stage loss (nominal supply)   183 mW at 2694 rpm (494 mA, supply 12.0 V, duty 0.548)
 *   hottest junction                      51.3 °C at 2694 rpm (494 mA, supply 13.2 V, duty 0.500)
 *   hottest junction at the lowest speed  47.7 °C at 1500 rpm (153 mA, supply 13.2 V, duty 0.227)
 *   loudest audible                       line at 13.6 kHz, -20.3 dB(A) re 1 A at 2694 rpm (494 mA, supply 13.2 V, duty 0.500)
 *   at the rated speed only               the worst-case corners, `spread` and the current limit
 *
 * Losses at the rated case (whole stage)
 *   conduction           10.9 mW
 *   switching            10.3 mW
 *   output capacitance   476 µW
 *   reverse recovery     327 µW
 *   dead-time diode      0.00 W
 *   gate drive           3.27 mW
 *   freewheel diode      73.3 mW
 *   motor ripple copper  6.62 mW
 *   total                105 mW
 *
 * Operating figures
 *   rated case              12.0 V supply, 45.0 °C ambient, 1.20 A load
 *   high-bus case           13.2 V supply, 45.0 °C ambient, 1.20 A load
 *   range-ripple case       13.2 V supply, 45.0 °C ambient, 494 mA load
 *   range-lowest-duty case  13.2 V supply, 45.0 °C ambient, 153 mA load
 *   junction                48.3 °C at the rated case, 50.7 °C at the high-bus case (limit 110 °C)
 *   ripple, rated case      205 mA peak to peak at 13.605 kHz (continuous), 59.0 mA rms
 *   ripple, high-bus case   358 mA peak to peak at 13.605 kHz (continuous), 103 mA rms; the larger, checked against the ripple limit
 *   audibility, rated case  no significant line in the avoided bands; A-weighted in-band level -31.0 dB(A) re 1 A
 *
 * Worst case over part and operating spreads
 *   junction    50.7 °C (limit 110 °C); ok; hot: V_th min, supply 13.2 V
 *   total-loss  189 mW; ok; hot: V_th min, supply 13.2 V
 *   ripple      358 mA (limit 600 mA); ok; hot: V_th min, supply 13.2 V
 *   duty-range  99.11 % (limit 99.72 %); ok; hot: V_th min, supply 10.8 V
 *   audible     ok; no significant audible line at any corner
 *   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
 *
 * Checked on the registers (independent simulation of the written values)
 *   pulses                  shortest high-side pulse 205 ns at COMPARE_MIN, shortest low-side on-time 205 ns at COMPARE_MAX (minimum pulse 200 ns)
 *   rated case              at compare duty 89.584 %: mean current 1.200 A (plan 1.200 A), ripple 204.5 mA peak to peak (plan 204.5 mA)
 *   high-bus case           at compare duty 81.758 %: mean current 1.200 A (plan 1.200 A), ripple 358.0 mA peak to peak (plan 358.0 mA)
 *   range-ripple case       at compare duty 50.022 %: mean current 493.5 mA (plan 493.6 mA), ripple 599.9 mA peak to peak (plan 599.9 mA)
 *   range-lowest-duty case  at compare duty 22.735 %: mean current 153.1 mA (plan 153.1 mA), ripple 390.8 mA peak to peak (plan 390.8 mA)
 *
 * Alternatives
 *   rounder-frequency  20.000 kHz (divider 1, 2200 ticks, edge): +3 mW total loss, ±0 K junction, -114 mA ripple, -0.56 bits resolution
 *   highest-frequency  25.000 kHz (divider 1, 1760 ticks, edge): +7 mW total loss, ±0 K junction, -163 mA ripple, -0.88 bits resolution
 *
 * Findings (`pwmplan explain CODE` says what a bracketed code means)
 *   info  100 % duty is not used: the compare limit keeps a minimum off-pulse each period [no-full-on]
 *
 * Assumptions
 *   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve
 *   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance); the turn-off with the whole load current in the channel through the Miller swing (the switch file has no C_rss curve or no g_fs; conservative); the freewheel diode's recovery at its datasheet Q_rr; stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop
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
 *   vent-fan.yaml           sha256 166eab5c9a85a167fa70cc5bc6095185adc1e51cd08509c4cfe8a589b076d8b6
 *   kite-ls12.yaml          sha256 3ca38fa679aebc3e8d6075acecdf7dd95235f8df57892eba77a09e3472d18eff
 *   switches/scree-60.yaml  sha256 7b7642f66b17ceb6b73d0a5f9beb1c694ea88e020ee1381344c4eb705a99d449
 */
#ifndef VENT_FAN_PWM_H
#define VENT_FAN_PWM_H

#include <stdint.h>

/*
 * PWM mode and polarity these constants assume: the output (the low-side switch) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on).
 *
 * What duty 0 means on this low-side stage, and how to coast:
 *   Duty 0 (compare 0) means the switch is off: the motor coasts, its current decaying through the freewheel diode.
 *   To coast: compare 0, or disable the output.
 */

/* Timer input clock, before the divider. */
#define VENT_FAN_PWM_CLOCK_HZ 44000000UL
/* Divider (prescaler) ratio and the value the divider register takes. */
#define VENT_FAN_PWM_DIVIDER 1U
#define VENT_FAN_PWM_DIVIDER_REG 0U
/* Counter ticks per PWM period and the period register value (counter top). */
#define VENT_FAN_PWM_PERIOD_TICKS 3234U
#define VENT_FAN_PWM_PERIOD_REG 3233U
/* 1: up-down counting (centre-aligned); 0: up counting (edge-aligned). */
#define VENT_FAN_PWM_CENTRE_ALIGNED 0
/* PWM frequency in millihertz (13.605 kHz). */
#define VENT_FAN_PWM_FREQUENCY_MILLIHZ 13605442ULL
/* Compare value for 100 % on; compare values run 0..DUTY_STEPS. */
#define VENT_FAN_PWM_DUTY_STEPS 3234U
/* Dead-time register code and the ticks it gives (0.0 ns;
 * no dead time inserted). */
#define VENT_FAN_PWM_DEAD_TIME_CODE 0x00U
#define VENT_FAN_PWM_DEAD_TIME_TICKS 0U
/* Allowed compare range (minimum pulses, dead time, bootstrap refresh). */
#define VENT_FAN_PWM_COMPARE_MIN 9U
#define VENT_FAN_PWM_COMPARE_MAX 3225U
/* The compare the init sequence loads while the outputs are disabled
 * (0: the switch stays off). */
#define VENT_FAN_PWM_INIT_COMPARE 0U
/* 1: compare 0 with the outputs enabled turns the low side(s) on and shorts
 * the motor (braking); 0: it does not. Coasting is outputs disabled. */
#define VENT_FAN_PWM_DUTY_ZERO_BRAKES 0

/*
 * Init sequence (register names differ per MCU; values are above):
 *   1. Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.
 *   2. Divider register <- VENT_FAN_PWM_DIVIDER_REG (divider 1).
 *   3. Period register (counter top) <- VENT_FAN_PWM_PERIOD_REG (3234 ticks per period).
 *   4. Counting mode <- up (edge-aligned) (see VENT_FAN_PWM_CENTRE_ALIGNED).
 *   5. PWM mode and polarity: the output (the low-side switch) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on).
 *   6. Compare register(s) <- VENT_FAN_PWM_INIT_COMPARE (outputs still disabled), then values from vent_fan_pwm_compare_from_q16() only.
 *   7. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
 *   8. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 keeps the switch off).
 */

/*
 * Compare value for a duty given as a 16-bit fraction (65536 = 100 %),
 * rounded to the nearest count. 0 gives 0 (output off); any other request
 * gives at least COMPARE_MIN (no pulse shorter than the minimum) and at most
 * COMPARE_MAX. Integer only.
 */
static inline uint32_t vent_fan_pwm_compare_from_q16(uint32_t duty_q16)
{
    uint64_t c;
    if (duty_q16 == 0U) {
        return 0U;
    }
    if (duty_q16 >= 65536U) {
        return VENT_FAN_PWM_COMPARE_MAX;
    }
    c = ((uint64_t)duty_q16 * (uint64_t)VENT_FAN_PWM_DUTY_STEPS + 32768U) >> 16;
    if (c < VENT_FAN_PWM_COMPARE_MIN) {
        return VENT_FAN_PWM_COMPARE_MIN;
    }
    if (c > VENT_FAN_PWM_COMPARE_MAX) {
        return VENT_FAN_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

/* The same for a duty in permille (1000 = 100 %); 0 is off. 32-bit
 * arithmetic: permille < 1000 here, so permille * 65536 + 500 < 2^32 (no
 * 64-bit division on a 32-bit target). */
static inline uint32_t vent_fan_pwm_compare_from_permille(uint32_t permille)
{
    if (permille == 0U) {
        return 0U;
    }
    if (permille >= 1000U) {
        return vent_fan_pwm_compare_from_q16(65536U);
    }
    return vent_fan_pwm_compare_from_q16((uint32_t)((permille * 65536U + 500U) / 1000U));
}

#endif /* VENT_FAN_PWM_H */
