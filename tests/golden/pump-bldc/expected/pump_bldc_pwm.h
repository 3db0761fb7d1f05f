/*
 * pwmplan 0.1.0 plan for pump-bldc (pwmplan-hash:8e7ee779037292f7c8152d2c8c9130d4f2cfc6c7c02e0d4c2d9c1534580d7488)
 *
 * Chosen setting
 *   design            pump-bldc
 *   board             Osprey 48 V three-phase bridge (invented)
 *   switch            Corrie 100 V, 9.8 mΩ (invented)
 *   topology          three-phase
 *   objective         least-loss at typical values
 *   frequency         20.007 kHz, centre-aligned
 *   timer             clock 120.0 MHz; divider 1 (register 0); period 5998 ticks (register 2999)
 *   resolution        2999 duty steps (11.6 bits)
 *   dead time         125 ns = 15 ticks (code 0x0F); needed 124 ns
 *   duty limits       compare 12 to 2951 (0.4 % to 98.4 %); the load needs 24.0 % to 76.0 %
 *   three-phase       sinusoidal, zero sequence min-max; m 0.500, cos φ 0.965 at the rated case (10.0 A phase-current peak); electrical frequency 200.0 Hz; channels A, B, C share the period, the compare limits and the dead time
 *   current sampling  The ADC starts at compare 48 on the down-count, 400 ns before the counter bottom, so the 800 ns sample is centred on the bottom, the middle of the low-side on-time. The window needs the low side on for 2 × (trigger lead 400 ns + dead time 125 ns + settling 1.50 µs) = 4.05 µs of the 50.0 µs period, so a sampled leg's high-side duty is at most 91.9 % (compare 2756); the load needs 72.5 %.
 *   feasible band     20.007 kHz to 40.000 kHz
 *
 * Constraints (limit, value, margin to the limit, status)
 *   junction-rated         145 °C     49.0 °C     96.0 K  ok
 *   junction-high-bus      145 °C     49.1 °C     95.9 K  ok
 *   audible            20.000 kHz  20.007 kHz    6.67 Hz  binds
 *   resolution         10.00 bits  11.55 bits  1.55 bits  ok
 *   dead-time              125 ns      124 ns     550 ps  ok
 *   duty-range            98.40 %     76.00 %    22.40 %  ok
 *   sampling-window       91.90 %     72.52 %    19.38 %  ok
 *   frequency-band     40.000 kHz  20.007 kHz   4.01 kHz  ok
 *
 * Losses at the rated case (whole stage)
 *   conduction           1.68 W
 *   switching            348 mW
 *   output capacitance   79.2 mW
 *   reverse recovery     342 mW
 *   dead-time diode      86.0 mW
 *   gate drive           82.4 mW
 *   motor ripple copper  9.29 mW
 *   total                2.63 W
 *
 * Operating figures
 *   rated case  48.0 V supply, 45.0 °C ambient, 10.0 A load
 *   junction    49.0 °C (limit 145 °C); 49.1 °C at the highest supply
 *   ripple      800 mA peak to peak at 20.007 kHz (continuous), 161 mA rms
 *   audibility  no significant line at or below 20.00 kHz; A-weighted in-band level none
 *
 * Worst case over part and operating spreads
 *   junction    50.6 °C (limit 145 °C); ok; hot: V_th min, supply 54.0 V
 *   total-loss  3.70 W; ok; hot: V_th min, supply 54.0 V
 *   ripple      800 mA; ok; hot: V_th min, supply 54.0 V
 *   duty-range  76.00 % (limit 98.40 %); ok; hot: V_th min, supply 40.0 V
 *   dead-time   needs 124 ns against 125 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
 *   audible     ok; no significant audible line at any corner
 *   corners     4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
 *
 * Alternatives
 *   rounder-frequency  40.000 kHz (divider 1, 3000 ticks, centre): +942 mW total loss, +1.4 K junction, -400 mA ripple, -1.00 bits resolution
 *   mid-band           28.275 kHz (divider 1, 4244 ticks, centre): +388 mW total loss, +0.6 K junction, -234 mA ripple, -0.50 bits resolution
 *
 * Findings
 *   error  Stall current 225 A (V/R_winding) exceeds the I_D rating 60.0 A.
 *   error  At stall (225 A, 992 W at hot R_ds(on) 19.6 mΩ) the junction reaches 9270 °C after steady stall, above T_j,max 175 °C.
 *   info   the dead time costs 120 mV of mean output voltage (0.25 % of the nominal supply), opposing the current
 *
 * Assumptions
 *   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve
 *   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance)
 *   - sinusoidal: star-connected non-salient motor, phase voltage E + (R + jωL)·I; losses averaged over 720 angles of the electrical period; ripple in the small-ripple limit, carrier sidebands lumped on the carrier harmonics
 *   - six-step: 120° blocks, line current as the exact periodic R-L-back-EMF solution of the two conducting phases; commutation transients not modelled
 *   - the six switches thermally independent, each with the board's junction-to-ambient path; all high sides alike, all low sides alike
 *   - current sampling: low-side shunts, two of three phases sampled in the middle of the low-side on-time, the third from i_a + i_b + i_c = 0
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
 *   pump-bldc.yaml            sha256 692145daa621d654658dc4de2975bb91786890ae95f800116de79f25d862c479
 *   osprey-3p48.yaml          sha256 14f647e1699a5105fad7e0739a7973b32a25921717ffbecea3042e0d8178edd5
 *   switches/corrie-100.yaml  sha256 64d5aa741ae171d9ab9e2838c36eeb4ea13ba59b6fad75d2da182674b7f9c649
 */
#ifndef PUMP_BLDC_PWM_H
#define PUMP_BLDC_PWM_H

#include <stdint.h>

/* Timer input clock, before the divider. */
#define PUMP_BLDC_PWM_CLOCK_HZ 120000000UL
/* Divider ratio and the value the divider register takes. */
#define PUMP_BLDC_PWM_DIVIDER 1U
#define PUMP_BLDC_PWM_DIVIDER_REG 0U
/* Counter ticks per PWM period and the period register value (counter top). */
#define PUMP_BLDC_PWM_PERIOD_TICKS 5998U
#define PUMP_BLDC_PWM_PERIOD_REG 2999U
/* 1: up-down counting (centre-aligned); 0: up counting (edge-aligned). */
#define PUMP_BLDC_PWM_CENTRE_ALIGNED 1
/* PWM frequency in millihertz (20.007 kHz). */
#define PUMP_BLDC_PWM_FREQUENCY_MILLIHZ 20006669ULL
/* Compare value for 100 % on; compare values run 0..DUTY_STEPS. */
#define PUMP_BLDC_PWM_DUTY_STEPS 2999U
/* Dead-time register code and the ticks it gives (125.0 ns). */
#define PUMP_BLDC_PWM_DEAD_TIME_CODE 0x0FU
#define PUMP_BLDC_PWM_DEAD_TIME_TICKS 15U
/* Allowed compare range (minimum pulses, dead time, bootstrap refresh). */
#define PUMP_BLDC_PWM_COMPARE_MIN 12U
#define PUMP_BLDC_PWM_COMPARE_MAX 2951U
/* Three-phase bridge: channels A, B and C share the period, the compare
 * limits and the dead time above; the same compare functions serve all three. */
#define PUMP_BLDC_PWM_CHANNELS 3U
/* ADC trigger (a spare compare channel): the value matched on the DOWN-count, 400.0 ns
 * before the counter bottom, so the sample is centred on the bottom (the
 * middle of the low-side on-time, where the low-side shunts carry the phase
 * currents). */
#define PUMP_BLDC_PWM_ADC_TRIGGER_COMPARE 48U
/* Largest compare of a sampled leg that still leaves the sampling window
 * (settling, dead time, sample); above it that leg's current is not valid. */
#define PUMP_BLDC_PWM_SAMPLING_COMPARE_MAX 2756U

/*
 * Init sequence (register names differ per MCU; values are above):
 *   1. Stop the timer and hold the bridge outputs in their safe (off) state.
 *   2. Divider register <- PUMP_BLDC_PWM_DIVIDER_REG (divider 1).
 *   3. Period register (counter top) <- PUMP_BLDC_PWM_PERIOD_REG (5998 ticks per period).
 *   4. Counting mode <- up-down (centre-aligned) (see PUMP_BLDC_PWM_CENTRE_ALIGNED).
 *   5. Dead-time register <- PUMP_BLDC_PWM_DEAD_TIME_CODE (15 ticks, 125.0 ns); write it before enabling complementary outputs.
 *   6. Channels A, B and C: the same PWM mode, complementary outputs with the dead time; compare registers <- 0, then values from pump_bldc_pwm_compare_from_q16() only (one call per channel).
 *   7. ADC trigger: a spare compare channel <- PUMP_BLDC_PWM_ADC_TRIGGER_COMPARE, triggering on the down-count match only.
 *   8. Enable buffered (shadow) update of period and compare so new values take effect at the period boundary.
 *   9. Start the counter, then enable the outputs.
 */

/*
 * Compare value for a duty given as a 16-bit fraction (65536 = 100 %),
 * rounded to the nearest count. 0 gives 0 (output off); any other request
 * gives at least COMPARE_MIN (no pulse shorter than the minimum) and at most
 * COMPARE_MAX. Integer only.
 */
static inline uint32_t pump_bldc_pwm_compare_from_q16(uint32_t duty_q16)
{
    uint64_t c;
    if (duty_q16 == 0U) {
        return 0U;
    }
    if (duty_q16 >= 65536U) {
        return PUMP_BLDC_PWM_COMPARE_MAX;
    }
    c = ((uint64_t)duty_q16 * (uint64_t)PUMP_BLDC_PWM_DUTY_STEPS + 32768U) >> 16;
    if (c < PUMP_BLDC_PWM_COMPARE_MIN) {
        return PUMP_BLDC_PWM_COMPARE_MIN;
    }
    if (c > PUMP_BLDC_PWM_COMPARE_MAX) {
        return PUMP_BLDC_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

/* The same for a duty in permille (1000 = 100 %); 0 is off. */
static inline uint32_t pump_bldc_pwm_compare_from_permille(uint32_t permille)
{
    if (permille == 0U) {
        return 0U;
    }
    if (permille >= 1000U) {
        return pump_bldc_pwm_compare_from_q16(65536U);
    }
    return pump_bldc_pwm_compare_from_q16((uint32_t)(((uint64_t)permille * 65536U + 500U) / 1000U));
}

/* Compare values of channels A, B and C from three q16 duties (the same
 * conversion for each channel). */
static inline void pump_bldc_pwm_compare_abc_from_q16(const uint32_t duty_q16[3], uint32_t compare[3])
{
    unsigned int k;
    for (k = 0U; k < 3U; k++) {
        compare[k] = pump_bldc_pwm_compare_from_q16(duty_q16[k]);
    }
}

/* The same for a duty fraction 0.0 .. 1.0 (the board has an FPU). */
static inline uint32_t pump_bldc_pwm_compare_from_fraction(float duty)
{
    if (!(duty > 0.0f)) {
        return 0U;
    }
    if (duty >= 1.0f) {
        return pump_bldc_pwm_compare_from_q16(65536U);
    }
    return pump_bldc_pwm_compare_from_q16((uint32_t)(duty * 65536.0f + 0.5f));
}

#endif /* PUMP_BLDC_PWM_H */
