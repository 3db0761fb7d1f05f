/*
 * pwmplan 0.1.0 plan for winch (pwmplan-hash:0facd3e64514a73ada5dc61895eaef1f5383c11f9566e6bd5f39aa03b75a1a1e)
 *
 * Chosen setting
 *   design         winch
 *   board          Heron 48 V H-bridge (invented)
 *   switch         Corrie 100 V, 9.8 mΩ (invented)
 *   topology       h-bridge-unipolar
 *   objective      least-loss at typical values
 *   frequency      10.311 kHz, edge-aligned
 *   timer          clock 120.0 MHz; divider 1 (register 0); period 11638 ticks (register 11637)
 *   resolution     11638 duty steps (13.5 bits)
 *   dead time      125 ns = 15 ticks (code 0x0F); needed 123 ns
 *   duty limits    compare 48 to 11542 (0.4 % to 99.2 %); the load needs 4.5 % to 95.5 %
 *   feasible band  10.311 kHz to 40.000 kHz
 *
 * Constraints (limit, value, margin to the limit, status)
 *   junction-rated         145 °C     62.4 °C     82.6 K  ok
 *   junction-high-bus      145 °C     62.0 °C     83.0 K  ok
 *   ripple                 1.80 A      1.80 A     135 µA  binds
 *   audible            18.000 kHz  20.622 kHz   2.62 kHz  ok
 *   resolution         10.00 bits  13.51 bits  3.51 bits  ok
 *   dead-time              125 ns      123 ns    1.98 ns  ok
 *   duty-range            99.18 %     95.45 %     3.73 %  ok
 *   frequency-band     40.000 kHz  10.311 kHz     311 Hz  ok
 *
 * Losses at the rated case (whole stage)
 *   conduction           3.44 W
 *   switching            232 mW
 *   output capacitance   27.2 mW
 *   reverse recovery     118 mW
 *   dead-time diode      55.7 mW
 *   gate drive           28.3 mW
 *   motor ripple copper  26.8 mW
 *   total                3.92 W
 *
 * Operating figures
 *   rated case  48.0 V supply, 50.0 °C ambient, 12.0 A load
 *   junction    62.4 °C (limit 145 °C); 62.0 °C at the highest supply
 *   ripple      1.80 A peak to peak at 20.622 kHz (continuous), 386 mA rms
 *   audibility  no significant line at or below 18.00 kHz; A-weighted in-band level none
 *
 * Worst case over part and operating spreads
 *   junction    67.5 °C (limit 145 °C); ok; hot: V_th min, supply 40.0 V
 *   total-loss  5.26 W; ok; hot: V_th min, supply 54.0 V
 *   ripple      1.80 A (limit 1.80 A); ok; hot: V_th min, supply 54.0 V
 *   duty-range  95.45 % (limit 99.18 %); ok; hot: V_th min, supply 40.0 V
 *   dead-time   needs 123 ns against 125 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
 *   audible     ok; no significant audible line at any corner
 *   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
 *
 * Alternatives
 *   rounder-frequency  40.000 kHz (divider 1, 3000 ticks, edge): +1364 mW total loss, +4.0 K junction, -1336 mA ripple, -1.96 bits resolution
 *   mid-band           20.443 kHz (divider 1, 5870 ticks, edge): +452 mW total loss, +1.3 K junction, -892 mA ripple, -0.99 bits resolution
 *
 * Findings
 *   error  Stall current 300 A (V/R_winding) exceeds the I_D rating 60.0 A.
 *   error  At stall (300 A, 1.76 kW at hot R_ds(on) 19.6 mΩ) the junction reaches 12900 °C after 500 ms stall, above T_j,max 175 °C.
 *   info   the dead time costs 124 mV of mean output voltage (0.26 % of the nominal supply), opposing the current
 *
 * Assumptions
 *   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve
 *   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance)
 *   - motor current: exact periodic R-L-back-EMF solution with ideal switches; the freewheel diode holds its forward voltage
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
 *   winch.yaml                sha256 2b3d70d4d072ff5150be9bc676a51b3036898fedef5960e5ef3e803fe0bc568f
 *   heron-hb48.yaml           sha256 87f09d0aaf1fc46f7f982774f76fd78ee38dd8256493bbc4d9c8476ff8e95e96
 *   switches/corrie-100.yaml  sha256 64d5aa741ae171d9ab9e2838c36eeb4ea13ba59b6fad75d2da182674b7f9c649
 */
#ifndef WINCH_PWM_H
#define WINCH_PWM_H

#include <stdint.h>

/* Timer input clock, before the divider. */
#define WINCH_PWM_CLOCK_HZ 120000000UL
/* Divider ratio and the value the divider register takes. */
#define WINCH_PWM_DIVIDER 1U
#define WINCH_PWM_DIVIDER_REG 0U
/* Counter ticks per PWM period and the period register value (counter top). */
#define WINCH_PWM_PERIOD_TICKS 11638U
#define WINCH_PWM_PERIOD_REG 11637U
/* 1: up-down counting (centre-aligned); 0: up counting (edge-aligned). */
#define WINCH_PWM_CENTRE_ALIGNED 0
/* PWM frequency in millihertz (10.311 kHz). */
#define WINCH_PWM_FREQUENCY_MILLIHZ 10311050ULL
/* Compare value for 100 % on; compare values run 0..DUTY_STEPS. */
#define WINCH_PWM_DUTY_STEPS 11638U
/* Dead-time register code and the ticks it gives (125.0 ns). */
#define WINCH_PWM_DEAD_TIME_CODE 0x0FU
#define WINCH_PWM_DEAD_TIME_TICKS 15U
/* Allowed compare range (minimum pulses, dead time, bootstrap refresh). */
#define WINCH_PWM_COMPARE_MIN 48U
#define WINCH_PWM_COMPARE_MAX 11542U

/*
 * Init sequence (register names differ per MCU; values are above):
 *   1. Stop the timer and hold the bridge outputs in their safe (off) state.
 *   2. Divider register <- WINCH_PWM_DIVIDER_REG (divider 1).
 *   3. Period register (counter top) <- WINCH_PWM_PERIOD_REG (11638 ticks per period).
 *   4. Counting mode <- up (edge-aligned) (see WINCH_PWM_CENTRE_ALIGNED).
 *   5. Dead-time register <- WINCH_PWM_DEAD_TIME_CODE (15 ticks, 125.0 ns); write it before enabling complementary outputs.
 *   6. Compare register(s) <- 0, then values from winch_pwm_compare_from_q16() only.
 *   7. Enable buffered (shadow) update of period and compare so new values take effect at the period boundary.
 *   8. Start the counter, then enable the outputs.
 */

/*
 * Compare value for a duty given as a 16-bit fraction (65536 = 100 %),
 * rounded to the nearest count. 0 gives 0 (output off); any other request
 * gives at least COMPARE_MIN (no pulse shorter than the minimum) and at most
 * COMPARE_MAX. Integer only.
 */
static inline uint32_t winch_pwm_compare_from_q16(uint32_t duty_q16)
{
    uint64_t c;
    if (duty_q16 == 0U) {
        return 0U;
    }
    if (duty_q16 >= 65536U) {
        return WINCH_PWM_COMPARE_MAX;
    }
    c = ((uint64_t)duty_q16 * (uint64_t)WINCH_PWM_DUTY_STEPS + 32768U) >> 16;
    if (c < WINCH_PWM_COMPARE_MIN) {
        return WINCH_PWM_COMPARE_MIN;
    }
    if (c > WINCH_PWM_COMPARE_MAX) {
        return WINCH_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

/* The same for a duty in permille (1000 = 100 %); 0 is off. */
static inline uint32_t winch_pwm_compare_from_permille(uint32_t permille)
{
    if (permille == 0U) {
        return 0U;
    }
    if (permille >= 1000U) {
        return winch_pwm_compare_from_q16(65536U);
    }
    return winch_pwm_compare_from_q16((uint32_t)(((uint64_t)permille * 65536U + 500U) / 1000U));
}

/* The same for a duty fraction 0.0 .. 1.0 (the board has an FPU). */
static inline uint32_t winch_pwm_compare_from_fraction(float duty)
{
    if (!(duty > 0.0f)) {
        return 0U;
    }
    if (duty >= 1.0f) {
        return winch_pwm_compare_from_q16(65536U);
    }
    return winch_pwm_compare_from_q16((uint32_t)(duty * 65536.0f + 0.5f));
}

#endif /* WINCH_PWM_H */
