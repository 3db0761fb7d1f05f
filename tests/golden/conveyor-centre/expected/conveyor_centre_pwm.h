/*
 * pwmplan 0.1.0 plan for conveyor-centre (pwmplan-hash:3f2c65cb7fcad36f9e9357b01ffdb543c5bb8de3883a72b9911a3a5886a7770a)
 *
 * Chosen setting
 *   design         conveyor-centre
 *   board          Wren 24 V half-bridge, centre-aligned timer (invented)
 *   switch         Tarn 40 V, 2.4 mΩ (invented)
 *   topology       half-bridge
 *   objective      least-loss at typical values
 *   frequency      20.013 kHz, centre-aligned
 *   timer          clock 64.00 MHz; divider 1 (register 0); period 3198 ticks (register 1599)
 *   resolution     1599 duty steps (10.6 bits)
 *   dead time      156 ns = 10 ticks (code 0x0A); needed 150 ns
 *   duty limits    compare 10 to 1583 (0.6 % to 99.0 %); the load needs 67.2 % to 94.1 %
 *   feasible band  20.013 kHz to 31.250 kHz
 *
 * Constraints (limit, value, margin to the limit, status)
 *   junction-rated         135 °C     57.0 °C     78.0 K  ok
 *   junction-high-bus      135 °C     57.1 °C     77.9 K  ok
 *   ripple                 875 mA      363 mA     512 mA  ok
 *   audible            20.000 kHz  20.013 kHz    12.5 Hz  binds
 *   resolution         10.00 bits  10.64 bits  0.64 bits  ok
 *   dead-time              156 ns      150 ns    5.85 ns  ok
 *   duty-range            99.00 %     94.05 %     4.95 %  ok
 *   frequency-band     60.000 kHz  20.013 kHz   4.01 kHz  ok
 *
 * Losses at the rated case (whole stage)
 *   conduction           33.5 mW
 *   switching            20.2 mW
 *   output capacitance   9.13 mW
 *   reverse recovery     25.2 mW
 *   dead-time diode      18.6 mW
 *   gate drive           32.5 mW
 *   motor ripple copper  2.95 mW
 *   total                142 mW
 *
 * Operating figures
 *   rated case  24.0 V supply, 55.0 °C ambient, 3.50 A load
 *   junction    57.0 °C (limit 135 °C); 57.1 °C at the highest supply
 *   ripple      363 mA peak to peak at 20.013 kHz (continuous), 69.0 mA rms
 *   audibility  no significant line at or below 20.00 kHz; A-weighted in-band level none
 *
 * Worst case over part and operating spreads
 *   junction    58.1 °C (limit 135 °C); ok; hot: V_th min, supply 28.0 V
 *   total-loss  209 mW; ok; hot: V_th max, supply 28.0 V
 *   ripple      363 mA (limit 875 mA); ok; hot: V_th min, supply 28.0 V
 *   duty-range  94.05 % (limit 99.00 %); ok; hot: V_th min, supply 20.0 V
 *   dead-time   needs 150 ns against 156 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
 *   audible     ok; no significant audible line at any corner
 *   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
 *
 * Alternatives
 *   rounder-frequency  25.000 kHz (divider 1, 2560 ticks, centre): +25 mW total loss, +0.3 K junction, -72 mA ripple, -0.32 bits resolution
 *   highest-frequency  31.250 kHz (divider 1, 2048 ticks, centre): +58 mW total loss, +0.8 K junction, -131 mA ripple, -0.64 bits resolution
 *
 * Findings
 *   warning  V_DSS 40.0 V is only 1.43x the highest bus 28.0 V; 1.5-2x is usual for ringing and back-EMF spikes.
 *   info     the dead time costs 75.0 mV of mean output voltage (0.31 % of the nominal supply), opposing the current
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
 *   conveyor-centre.yaml   sha256 a3570c61c199a289d93fb96502a4b8d4dd03685b8a8dd455f5c4a53cf0e79222
 *   wren-hb24.yaml         sha256 32a1c1b866e4c85707be1d9a3a2674e898e2eceb947b28a87e8875609a518c51
 *   switches/tarn-40.yaml  sha256 ddaf7d2d8d9b62f26d8c2e1897217078e60643829b1b9152b17c9916735e7376
 */
#ifndef CONVEYOR_CENTRE_PWM_H
#define CONVEYOR_CENTRE_PWM_H

#include <stdint.h>

/* Timer input clock, before the prescaler. */
#define CONVEYOR_CENTRE_PWM_CLOCK_HZ 64000000UL
/* Prescaler ratio and the value its register takes. */
#define CONVEYOR_CENTRE_PWM_DIVIDER 1U
#define CONVEYOR_CENTRE_PWM_DIVIDER_REG 0U
/* Counter ticks per PWM period and the period (auto-reload) register value. */
#define CONVEYOR_CENTRE_PWM_PERIOD_TICKS 3198U
#define CONVEYOR_CENTRE_PWM_PERIOD_REG 1599U
/* 1: up-down counting (centre-aligned); 0: up counting (edge-aligned). */
#define CONVEYOR_CENTRE_PWM_CENTRE_ALIGNED 1
/* PWM frequency in millihertz (20.013 kHz). */
#define CONVEYOR_CENTRE_PWM_FREQUENCY_MILLIHZ 20012508ULL
/* Compare value for 100 % on; compare values run 0..DUTY_STEPS. */
#define CONVEYOR_CENTRE_PWM_DUTY_STEPS 1599U
/* Dead-time register code and the ticks it gives (156.2 ns). */
#define CONVEYOR_CENTRE_PWM_DEAD_TIME_CODE 0x0AU
#define CONVEYOR_CENTRE_PWM_DEAD_TIME_TICKS 10U
/* Allowed compare range (minimum pulses, dead time, bootstrap refresh). */
#define CONVEYOR_CENTRE_PWM_COMPARE_MIN 10U
#define CONVEYOR_CENTRE_PWM_COMPARE_MAX 1583U

/*
 * Init sequence (register names differ per MCU; values are above):
 *   1. Stop the timer and hold the bridge outputs in their safe (off) state.
 *   2. Prescaler register <- CONVEYOR_CENTRE_PWM_DIVIDER_REG (divider 1).
 *   3. Period (auto-reload) register <- CONVEYOR_CENTRE_PWM_PERIOD_REG (3198 ticks per period).
 *   4. Counting mode <- up-down (centre-aligned) (see CONVEYOR_CENTRE_PWM_CENTRE_ALIGNED).
 *   5. Dead-time register <- CONVEYOR_CENTRE_PWM_DEAD_TIME_CODE (10 ticks, 156.2 ns); write it before enabling complementary outputs.
 *   6. Compare register(s) <- 0, then values from conveyor_centre_pwm_compare_from_q16() only.
 *   7. Enable preload of period and compare registers so updates take effect at the period boundary.
 *   8. Start the counter, then enable the outputs.
 */

/*
 * Compare value for a duty given as a 16-bit fraction (65536 = 100 %),
 * rounded to the nearest count. 0 gives 0 (output off); any other request
 * gives at least COMPARE_MIN (no pulse shorter than the minimum) and at most
 * COMPARE_MAX. Integer only.
 */
static inline uint32_t conveyor_centre_pwm_compare_from_q16(uint32_t duty_q16)
{
    uint64_t c;
    if (duty_q16 == 0U) {
        return 0U;
    }
    if (duty_q16 >= 65536U) {
        return CONVEYOR_CENTRE_PWM_COMPARE_MAX;
    }
    c = ((uint64_t)duty_q16 * (uint64_t)CONVEYOR_CENTRE_PWM_DUTY_STEPS + 32768U) >> 16;
    if (c < CONVEYOR_CENTRE_PWM_COMPARE_MIN) {
        return CONVEYOR_CENTRE_PWM_COMPARE_MIN;
    }
    if (c > CONVEYOR_CENTRE_PWM_COMPARE_MAX) {
        return CONVEYOR_CENTRE_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

/* The same for a duty in permille (1000 = 100 %); 0 is off. */
static inline uint32_t conveyor_centre_pwm_compare_from_permille(uint32_t permille)
{
    if (permille == 0U) {
        return 0U;
    }
    if (permille >= 1000U) {
        return conveyor_centre_pwm_compare_from_q16(65536U);
    }
    return conveyor_centre_pwm_compare_from_q16((uint32_t)(((uint64_t)permille * 65536U + 500U) / 1000U));
}

/* The same for a duty fraction 0.0 .. 1.0 (the board has an FPU). */
static inline uint32_t conveyor_centre_pwm_compare_from_fraction(float duty)
{
    if (!(duty > 0.0f)) {
        return 0U;
    }
    if (duty >= 1.0f) {
        return conveyor_centre_pwm_compare_from_q16(65536U);
    }
    return conveyor_centre_pwm_compare_from_q16((uint32_t)(duty * 65536.0f + 0.5f));
}

#endif /* CONVEYOR_CENTRE_PWM_H */
