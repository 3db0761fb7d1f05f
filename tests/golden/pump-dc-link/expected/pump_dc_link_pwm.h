/*
 * pwmplan 0.1.0 plan for pump-dc-link (pwmplan-hash:8a8322259252be67829e9b61c7a0c1f5e6f5a59fa587d6e72eb6861871cc003c)
 *
 * Chosen setting
 *   design            pump-dc-link
 *   board             Osprey 48 V three-phase bridge, one DC-link shunt (invented)
 *   switch            Corrie 100 V, 9.8 mΩ (invented)
 *   topology          three-phase
 *   objective         least-loss at typical values
 *   frequency         20.007 kHz, centre-aligned
 *   timer             clock 120.0 MHz; divider 1 (register 0); period 5998 ticks (register 2999)
 *   resolution        2999 duty steps (11.6 bits)
 *   dead time         125 ns = 15 ticks (code 0x0F); needed 119 ns
 *   duty limits       compare 20 to 2943 (0.7 % to 98.1 %); the load needs 23.4 % to 76.6 %
 *   three-phase       sinusoidal, zero sequence min-max; m 0.514, cos φ 0.967 at the rated case (10.0 A phase-current peak, 3.73 A mean from the DC link); electrical frequency 200.0 Hz; channels A, B, C share the period, the compare limits and the dead time
 *   current sampling  One shunt in the DC link, read twice per period on the UP-count: in the vector with one leg low (it carries minus that leg's current) and in the vector with one leg high (plus that leg's current); the third current is minus the sum of the two. Each reading needs its vector to last dead time 125 ns + settling 1.50 µs + sampling 800 ns, 291 counts (2.43 µs); the conversion starts 96 counts before the vector ends, so the acquisition ends at the next edge. Where a vector is shorter, the helper shifts the compares apart on the up-count and gives the difference back on the down-count, so each leg's on-time per period is kept (compare shifting; the timer loads the compares at both extremes). It fits the counter up to modulation 1.155; the load needs 0.609.
 *   feasible band     20.007 kHz to 40.000 kHz
 *
 * Constraints (limit, value, margin to the limit, status)
 *   junction-rated         145 °C     49.4 °C     95.6 K  ok
 *   junction-high-bus      145 °C     49.7 °C     95.3 K  ok
 *   audible            20.000 kHz  20.007 kHz    6.67 Hz  binds
 *   resolution         10.00 bits  11.55 bits  1.55 bits  ok
 *   dead-time              125 ns      119 ns    6.02 ns  ok
 *   duty-range            98.13 %     76.65 %    21.48 %  ok
 *   sampling-window       4.88 µs     25.0 µs    20.1 µs  ok
 *   frequency-band     16.000 kHz  20.007 kHz   4.01 kHz  ok
 *
 * Losses at the rated case (whole stage)
 *   conduction           1.68 W
 *   switching            340 mW
 *   output capacitance   79.2 mW
 *   reverse recovery     666 mW
 *   dead-time diode      78.3 mW
 *   gate drive           82.4 mW
 *   motor ripple copper  9.43 mW
 *   total                2.93 W
 *
 * Operating figures
 *   rated case              48.0 V supply, 45.0 °C ambient, 10.0 A load
 *   high-bus case           54.0 V supply, 45.0 °C ambient, 10.0 A load
 *   junction                49.4 °C at the rated case, 49.7 °C at the high-bus case (limit 145 °C)
 *   ripple, rated case      754 mA peak to peak at 20.007 kHz (continuous), 162 mA rms
 *   ripple, high-bus case   805 mA peak to peak at 20.007 kHz (continuous), 171 mA rms; the larger, checked against the ripple limit
 *   audibility, rated case  no significant line at or below 20.00 kHz; A-weighted in-band level none
 *
 * Current limit
 *   threshold       code 13 = 670 mV at the comparator
 *   trips           never below 10.9 A, always above 12.7 A (nominal 11.8 A; shunt in the supply return; shunt, amplifier and comparator tolerances stacked worst-case)
 *   operating peak  10.4 A (the high-bus case's load current plus half its ripple); margin to the lowest trip 476 mA
 *   peak            at most 12.8 A (102 mA over the highest trip: 24.7 mA in the 228 ns reaction, more where a chopped stall crosses the trip inside the uncut on-time); the switch's I_DM at 100 µs 240 A (margin 227 A)
 *   reaction        228 ns = filter 8.33 ns + comparator 60.0 ns + driver 120 ns + turn-off delay 26.0 ns + voltage rise 14.1 ns
 *   blanking        492 ns (59 blanking ticks) against a turn-on transient of 491 ns = driver 120 ns + turn-on delay 12.3 ns + current rise 3.94 ns + recovery 55.0 ns + ringing none (no loop inductance given) + amplifier settling 300 ns
 *   filter          1 sample at 120 MHz (passes a fault held 8.33 ns)
 *   uncut on-time   720 ns (blanking and reaction): the limit cannot cut a pulse before this; shorter pulses run their commanded length (the compare limits' shortest pulse is 200 ns)
 *   response        cycle-by-cycle
 *   stall           12.7 A (cycle-by-cycle: a stall is chopped at the trip's highest edge); junction 74.3 °C at hot R_ds(on) (Computed in steady state: the design gives no stall time (R_th(j-a) 9.30 K/W))
 *
 * Worst case over part and operating spreads
 *   junction         51.3 °C (limit 145 °C); ok; hot: V_th min, supply 54.0 V
 *   total-loss       4.12 W; ok; hot: V_th min, supply 54.0 V
 *   ripple           807 mA; ok; hot: V_th min, supply 54.0 V
 *   duty-range       76.75 % (limit 98.13 %); ok; hot: V_th min, supply 40.0 V
 *   dead-time        needs 119 ns against 125 ns chosen; ok; R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max against R_source, R_g,int min; V_th min; V_drv max
 *   sampling-window  61.78 % (limit 115.47 %); ok; hot: V_th min, supply 40.0 V
 *   audible          ok; no significant audible line at any corner
 *   corners          4 evaluated; loss and T_j rise monotonically with R_ds(on) at 25 °C, Q_g, Q_gd, R_g,int, Q_rr, ambient, so the hot corners take their maxima; both ends of V_th, supply (not monotonic in the model)
 *
 * Checked on the registers (independent simulation of the written values)
 *   pulses         shortest high-side pulse 208 ns at COMPARE_MIN, shortest low-side on-time 808 ns at COMPARE_MAX (minimum pulse 200 ns, bootstrap refresh 800 ns)
 *   rated case     at compare duty 72.252 %: mean current 9.998 A (plan 10.00 A), ripple 754.5 mA peak to peak (plan 754.0 mA)
 *   high-bus case  at compare duty 69.809 %: mean current 9.998 A (plan 10.00 A), ripple 805.9 mA peak to peak (plan 805.4 mA)
 *   sampling       at the written trigger, over the compares the plan allows, the sampled state has held 1.50 µs before and holds 800 ns after (settling and sampling need no more)
 *   current limit  trip window 10.88 A to 12.67 A over the 32 tolerance corners; a stall chopped on the written threshold, blanking and filter peaks at 12.69 A (plan 12.77 A) with a mean of 12.55 A (plan's stall current 12.67 A)
 *   not checked    three-phase phase currents are held here to 5 % (peak) and 5 % (ripple), not the 1 % of single-phase plans: on 150 random designs the chosen settings' peaks agree within 0.62 % and their ripples within 0.86 %, an alternative setting was seen 2 % off on the peak, and the averaged model holds the fundamental still within a PWM period, which loses accuracy below about 20 PWM periods per electrical period
 *
 * Alternatives
 *   rounder-frequency  30.000 kHz (divider 1, 4000 ticks, centre): +621 mW total loss, +0.9 K junction, -268 mA ripple, -0.58 bits resolution
 *   highest-frequency  40.000 kHz (divider 1, 3000 ticks, centre): +1246 mW total loss, +1.8 K junction, -403 mA ripple, -1.00 bits resolution
 *
 * Findings (`pwmplan explain CODE` says what a bracketed code means)
 *   info  the dead time costs about 120 mV of mean output voltage (0.25 % of the nominal supply) where it opposes the current; the compare duties above already make it up [dead-time-voltage-error]
 *
 * Assumptions
 *   - switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve; R_ds(on) as given at V_GS = 10.0 V, not moved to the 12.0 V drive (no second datasheet point)
 *   - switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance); the turn-off with the whole load current in the channel through the Miller swing (the switch file has no C_rss curve or no g_fs; conservative); at each hard turn-on (each of the 720 angles under sinusoidal modulation, each chopped edge under six-step), bridge partner's recovery: a charge-control body diode with transit time 31.3 ns fitted to Q_rr less the output charge Q_oss(V_R) and the junction's forward charge at the current zero crossing of the datasheet's Q_rr test (100 A/µs from 30.0 A at 50.0 V) (the junction voltage from V_sd(I)), recovering at each hard turn-on's current slope (2·I/t_ri; with a loop inductance the slope its followed current rise ends with), plus charging its output capacitance (Q_oss·V − E_oss); under sinusoidal modulation, at each of the 720 angles, dead-time diode conduction for its share of each dead time, from the outgoing switch's hand-over (turn-off delay, node swing, half the current fall; or, after a soft turn-off, the gate down to the plateau and half-way to threshold) until the incoming switch has taken the current (half its current rise after its delay; or, at a soft turn-on, its gate from the Miller-kicked voltage up to threshold plus the diode's transit time) at V_sd(I): the datasheet V_sd at 30.0 A (assumed: the Q_rr test's forward current; the switch file gives no body_diode.v_sd_at), lowered by kT/q·ln(I_test/I) below it, no ohmic rise above it; under six-step, body-diode conduction (the off-time freewheel, the dead times, each commutation's freewheel, the floating phase's) at V_SD(I) for as long as the simulated circuit puts the current in a diode, its gate edges taken as instant (the diode's share of a dead time is not shortened by the switches' delays there); stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop
 *   - sinusoidal: star-connected non-salient motor, phase voltage E + (R + jωL)·I plus what the legs lose, made up edge by edge (each dead time clamped by the diode in the direction of the current at that edge, that current moved by the other legs' late edges, the 5th to 25th current harmonics it drives followed, or where those do not settle the period-averaged bridge followed in time), and raised by x/sin x, x = π·f_e/f, for one compare written per PWM period; losses averaged over 720 angles of the electrical period; ripple in the small-ripple limit, carrier sidebands lumped on the carrier harmonics
 *   - six-step: 120° blocks simulated switch by switch to their periodic steady state (ideal switches with R_ds(on), body diodes at their forward voltage, dead times, the star motor's three currents with the back-EMF shape), so each commutation's diode freewheel and the floating phase's diode conduction are in the duty and the losses; commutation at a PWM period boundary; the PWM ripple and its audibility from the two conducting phases' exact R-L-back-EMF solution at that duty
 *   - the six switches thermally independent, each with the board's junction-to-ambient path; all high sides alike, all low sides alike
 *   - current sampling: one shunt in the DC link, read twice per period in the two active vectors of the up-count (minus the current of the leg that is low, then the current of the leg that is high), the compares shifted apart where a vector is shorter than a reading needs and given back on the down-count (each leg's on-time per period kept; the pulse around the counter bottom moves by the change of shift between periods), the third current from i_a + i_b + i_c = 0
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
 *   pump-dc-link.yaml         sha256 0b3825962cf2c8a974a02b27c98247cd1b55b3f9d2e86354729ace8c1905f7f7
 *   osprey-3p48.yaml          sha256 ba97dc8c5bdca01a59aa77bc51f0c4e1755cc90ce192e26846bee8fa79ac9c4d
 *   switches/corrie-100.yaml  sha256 b376b085f2d49cf222861c7579f007155166c8a38da60a84924774039d8e631a
 */
#ifndef PUMP_DC_LINK_PWM_H
#define PUMP_DC_LINK_PWM_H

#include <stdint.h>

/*
 * PWM mode and polarity these constants assume: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
 *
 * What duty 0 means on this three-phase stage, and how to coast:
 *   Duty 0 on all three channels (compare 0) means all three low sides are on: the windings are shorted and a turning motor brakes; equal compares on all channels give zero line-to-line volts.
 *   To coast: disable the outputs (all six switches off); duty 0 is not coasting.
 */

/* Timer input clock, before the divider. */
#define PUMP_DC_LINK_PWM_CLOCK_HZ 120000000UL
/* Divider (prescaler) ratio and the value the divider register takes. */
#define PUMP_DC_LINK_PWM_DIVIDER 1U
#define PUMP_DC_LINK_PWM_DIVIDER_REG 0U
/* Counter ticks per PWM period and the period register value (counter top). */
#define PUMP_DC_LINK_PWM_PERIOD_TICKS 5998U
#define PUMP_DC_LINK_PWM_PERIOD_REG 2999U
/* 1: up-down counting (centre-aligned); 0: up counting (edge-aligned). */
#define PUMP_DC_LINK_PWM_CENTRE_ALIGNED 1
/* PWM frequency in millihertz (20.007 kHz). */
#define PUMP_DC_LINK_PWM_FREQUENCY_MILLIHZ 20006669ULL
/* Compare value for 100 % on; compare values run 0..DUTY_STEPS. */
#define PUMP_DC_LINK_PWM_DUTY_STEPS 2999U
/* Dead-time register code and the ticks it gives (125.0 ns;
 * ticks of the counter's clock, 120.00 MHz). */
#define PUMP_DC_LINK_PWM_DEAD_TIME_CODE 0x0FU
#define PUMP_DC_LINK_PWM_DEAD_TIME_TICKS 15U
/* Allowed compare range (minimum pulses, dead time, bootstrap refresh). */
#define PUMP_DC_LINK_PWM_COMPARE_MIN 20U
#define PUMP_DC_LINK_PWM_COMPARE_MAX 2943U
/* Compare counts a leg's dead time takes from its output pulse (dead time x
 * frequency x DUTY_STEPS, rounded): add them for current out of the leg, take
 * them away for current into it (see pump_dc_link_pwm_compare_compensated). */
#define PUMP_DC_LINK_PWM_DEAD_TIME_COMP_COUNTS 7U
/* The compare the init sequence loads while the outputs are disabled
 * (0: the low sides on, braking a turning motor, once enabled). */
#define PUMP_DC_LINK_PWM_INIT_COMPARE 0U
/* 1: compare 0 with the outputs enabled turns the low side(s) on and shorts
 * the motor (braking); 0: it does not. Coasting is outputs disabled. */
#define PUMP_DC_LINK_PWM_DUTY_ZERO_BRAKES 1
/* Three-phase bridge: channels A, B and C share the period, the compare
 * limits and the dead time above; the same compare functions serve all three. */
#define PUMP_DC_LINK_PWM_CHANNELS 3U
/* One shunt in the DC link, read twice per period on the UP-count (see
 * pump_dc_link_pwm_dc_link_compares): each reading's vector must last this many
 * counts (dead time, settling, sampling), and its conversion starts this many
 * counts before the vector ends. */
#define PUMP_DC_LINK_PWM_DC_LINK_MIN_VECTOR_COUNTS 291U
#define PUMP_DC_LINK_PWM_DC_LINK_TRIGGER_LEAD 96U
/* Current limit (fault input): it trips never below 10879 mA and
 * always above 12670 mA of motor current (see the rationale). */
/* Comparator threshold code (670.3 mV). */
#define PUMP_DC_LINK_PWM_LIMIT_THRESHOLD_CODE 13U
/* Fault filter: a fault passes after this many consecutive samples at this clock. */
#define PUMP_DC_LINK_PWM_LIMIT_FILTER_CLOCK_HZ 120000000UL
#define PUMP_DC_LINK_PWM_LIMIT_FILTER_SAMPLES 1U
/* Fault input ignored for this many blanking ticks after each turn-on (491.7 ns). */
#define PUMP_DC_LINK_PWM_LIMIT_BLANKING_TICKS 59U
/* 1: a fault turns the outputs off until the next period (cycle-by-cycle);
 * 0: until firmware clears it (latched). */
#define PUMP_DC_LINK_PWM_LIMIT_CYCLE_BY_CYCLE 1

/*
 * Init sequence (register names differ per MCU; values are above):
 *   1. Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.
 *   2. Divider register <- PUMP_DC_LINK_PWM_DIVIDER_REG (divider 1).
 *   3. Period register (counter top) <- PUMP_DC_LINK_PWM_PERIOD_REG (5998 ticks per period).
 *   4. Counting mode <- up-down (centre-aligned) (see PUMP_DC_LINK_PWM_CENTRE_ALIGNED).
 *   5. PWM mode and polarity: each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either.
 *   6. Dead-time register <- PUMP_DC_LINK_PWM_DEAD_TIME_CODE (15 ticks, 125.0 ns); write it before the complementary outputs are ever enabled.
 *   7. Fault input (over-current): threshold <- PUMP_DC_LINK_PWM_LIMIT_THRESHOLD_CODE (670.3 mV), filter <- PUMP_DC_LINK_PWM_LIMIT_FILTER_SAMPLES samples at PUMP_DC_LINK_PWM_LIMIT_FILTER_CLOCK_HZ Hz, blanking after each turn-on <- PUMP_DC_LINK_PWM_LIMIT_BLANKING_TICKS ticks (491.7 ns), response <- cycle-by-cycle (see PUMP_DC_LINK_PWM_LIMIT_CYCLE_BY_CYCLE); clear any pending fault and arm the input now, before the outputs are ever enabled, so the first pulse is already limited.
 *   8. Channels A, B and C: the same PWM mode, complementary outputs with the dead time; compare registers <- PUMP_DC_LINK_PWM_INIT_COMPARE (outputs still disabled), then values from pump_dc_link_pwm_compare_from_q16() only (one per channel).
 *   9. ADC trigger: a spare compare channel <- PUMP_DC_LINK_PWM_ADC_TRIGGER_COMPARE, triggering on the UP-count match only (just before the counter top, where the low sides conduct).
 *   10. Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.
 *   11. Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty (enabling with compare 0 turns the low sides on and brakes a turning motor).
 */

/*
 * Compare value for a duty given as a 16-bit fraction (65536 = 100 %),
 * rounded to the nearest count. 0 gives 0 (output off); any other request
 * gives at least COMPARE_MIN (no pulse shorter than the minimum) and at most
 * COMPARE_MAX. Integer only.
 */
static inline uint32_t pump_dc_link_pwm_compare_from_q16(uint32_t duty_q16)
{
    uint64_t c;
    if (duty_q16 == 0U) {
        return 0U;
    }
    if (duty_q16 >= 65536U) {
        return PUMP_DC_LINK_PWM_COMPARE_MAX;
    }
    c = ((uint64_t)duty_q16 * (uint64_t)PUMP_DC_LINK_PWM_DUTY_STEPS + 32768U) >> 16;
    if (c < PUMP_DC_LINK_PWM_COMPARE_MIN) {
        return PUMP_DC_LINK_PWM_COMPARE_MIN;
    }
    if (c > PUMP_DC_LINK_PWM_COMPARE_MAX) {
        return PUMP_DC_LINK_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

/* The same for a duty in permille (1000 = 100 %); 0 is off. 32-bit
 * arithmetic: permille < 1000 here, so permille * 65536 + 500 < 2^32 (no
 * 64-bit division on a 32-bit target). */
static inline uint32_t pump_dc_link_pwm_compare_from_permille(uint32_t permille)
{
    if (permille == 0U) {
        return 0U;
    }
    if (permille >= 1000U) {
        return pump_dc_link_pwm_compare_from_q16(65536U);
    }
    return pump_dc_link_pwm_compare_from_q16((uint32_t)((permille * 65536U + 500U) / 1000U));
}

/* Compare values of channels A, B and C from three q16 duties (the same
 * conversion for each channel). */
static inline void pump_dc_link_pwm_compare_abc_from_q16(const uint32_t duty_q16[3], uint32_t compare[3])
{
    unsigned int k;
    for (k = 0U; k < 3U; k++) {
        compare[k] = pump_dc_link_pwm_compare_from_q16(duty_q16[k]);
    }
}

/* One DC-link shunt, read twice per period: from this period's three compares,
 * the compares to load for the UP-count (up) and the DOWN-count (down), the two
 * ADC trigger counts (matched counting up) and what each reading is: reading k
 * is sign[k] times the current out of leg leg[k] (0, 1, 2 for A, B, C); the
 * third current is minus the sum of the two. The middle leg's up compare is
 * held within DC_LINK_MIN_VECTOR_COUNTS of neither extreme and the others
 * pushed at least that far from it; each leg's down compare is 2 x compare -
 * up, so its on-time per period is kept (the timer must load the compares at
 * both extremes). Returns 0 where that does not fit the counter (a middle
 * compare within half a vector of an extreme): up and down are then the
 * compares unshifted and this period has no reading. */
static inline int pump_dc_link_pwm_dc_link_compares(const uint32_t compare[3], uint32_t up[3], uint32_t down[3], uint32_t trigger[2], unsigned int leg[2], int sign[2])
{
    const uint64_t p = PUMP_DC_LINK_PWM_DUTY_STEPS;
    const uint64_t n = PUMP_DC_LINK_PWM_DC_LINK_MIN_VECTOR_COUNTS;
    unsigned int o[3] = { 0U, 1U, 2U };
    unsigned int i, k, t;
    uint64_t u[3], d[3];
    for (k = 0U; k < 3U; k++) {
        up[k] = compare[k];
        down[k] = compare[k];
    }
    /* Highest compare first; a stable sort keeps ties in leg order. */
    for (i = 0U; i < 2U; i++) {
        for (k = 0U; k + 1U < 3U - i; k++) {
            if (compare[o[k + 1U]] > compare[o[k]]) {
                t = o[k];
                o[k] = o[k + 1U];
                o[k + 1U] = t;
            }
        }
    }
    if (2U * n > p) {
        return 0;
    }
    for (k = 0U; k < 3U; k++) {
        if ((uint64_t)compare[k] > p) {
            return 0;
        }
        u[k] = compare[k];
    }
    u[o[1]] = u[o[1]] < n ? n : (u[o[1]] > p - n ? p - n : u[o[1]]);
    if (u[o[0]] < u[o[1]] + n) {
        u[o[0]] = u[o[1]] + n;
    }
    if (u[o[2]] > u[o[1]] - n) {
        u[o[2]] = u[o[1]] - n;
    }
    for (k = 0U; k < 3U; k++) {
        if (2U * (uint64_t)compare[k] < u[k] || 2U * (uint64_t)compare[k] - u[k] > p) {
            return 0;
        }
        d[k] = 2U * (uint64_t)compare[k] - u[k];
    }
    for (k = 0U; k < 3U; k++) {
        up[k] = (uint32_t)u[k];
        down[k] = (uint32_t)d[k];
    }
    trigger[0] = (uint32_t)(u[o[1]] - PUMP_DC_LINK_PWM_DC_LINK_TRIGGER_LEAD);
    trigger[1] = (uint32_t)(u[o[0]] - PUMP_DC_LINK_PWM_DC_LINK_TRIGGER_LEAD);
    leg[0] = o[2];
    leg[1] = o[0];
    sign[0] = -1;
    sign[1] = 1;
    return 1;
}

/* The same for a duty fraction 0.0 .. 1.0 (the board has an FPU): 0 (or
 * less, or NaN) is off; any other request gives at least COMPARE_MIN, also
 * one below half a 16-bit step that rounds to 0. */
static inline uint32_t pump_dc_link_pwm_compare_from_fraction(float duty)
{
    uint32_t q;
    if (!(duty > 0.0f)) {
        return 0U;
    }
    if (duty >= 1.0f) {
        return pump_dc_link_pwm_compare_from_q16(65536U);
    }
    q = (uint32_t)(duty * 65536.0f + 0.5f);
    return pump_dc_link_pwm_compare_from_q16(q == 0U ? 1U : q);
}

/* A leg's compare with its dead time made up for the sign of its current
 * (current_out: 1 when the current flows out of the leg, 0 into it), kept
 * within COMPARE_MIN..COMPARE_MAX; 0 stays 0 (off). Near zero current the
 * sign is uncertain: keep the last sign or leave the compare alone there. */
static inline uint32_t pump_dc_link_pwm_compare_compensated(uint32_t compare, int current_out)
{
    uint64_t c = compare;
    if (compare == 0U) {
        return 0U;
    }
    if (current_out) {
        c += PUMP_DC_LINK_PWM_DEAD_TIME_COMP_COUNTS;
    } else {
        c = c > PUMP_DC_LINK_PWM_DEAD_TIME_COMP_COUNTS ? c - PUMP_DC_LINK_PWM_DEAD_TIME_COMP_COUNTS : 0U;
    }
    if (c < PUMP_DC_LINK_PWM_COMPARE_MIN) {
        return PUMP_DC_LINK_PWM_COMPARE_MIN;
    }
    if (c > PUMP_DC_LINK_PWM_COMPARE_MAX) {
        return PUMP_DC_LINK_PWM_COMPARE_MAX;
    }
    return (uint32_t)c;
}

#endif /* PUMP_DC_LINK_PWM_H */
