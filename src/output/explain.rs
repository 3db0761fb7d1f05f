//! What each finding code means, for `pwmplan explain CODE`: a few sentences on what the plan
//! saw, why it matters and what to do, and where the rule comes from. Pure data.

/// One finding code explained.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Explanation {
    /// The code as findings carry it; a code ending in `*` stands for a family (the part after
    /// the prefix names the quantity).
    pub code: &'static str,
    pub text: &'static str,
    /// Where the rule or bound comes from (a published source, `common practice`, or `our own
    /// bound`).
    pub source: &'static str,
}

const fn e(code: &'static str, text: &'static str, source: &'static str) -> Explanation {
    Explanation { code, text, source }
}

const COMMON: &str = "common practice";
const OWN: &str = "our own bound or rule (README)";

/// Every finding code a plan can carry, in alphabetical order.
pub const EXPLANATIONS: &[Explanation] = &[
    e(
        "alternative-withheld",
        "An alternative setting was left out of the plan because the independent register-level simulation of its values disagreed with its figures (ripple, mean current, a pulse). The chosen setting passed the same check.",
        OWN,
    ),
    e(
        "back-emf-sampling",
        "Sensorless six-step reads the floating phase's back-EMF in the chopping switch's on-time (against half the bus) or in its off-time (against a rail); each read needs the dead time, the settling and the acquisition inside one state. A warning where some on-times hold neither window, or where the blanking after a commutation (the off-going phase clamped by a body diode) reaches the zero crossing 30° into the sector.",
        "Krishnan, Permanent Magnet Synchronous and Brushless DC Motor Drives, 2010, ch. 9 (from memory); the window's arithmetic is our own",
    ),
    e(
        "bootstrap-capacitor-small",
        "The bootstrap capacitor is below the capacitance that holds the high-side gate within 10 % droop over the longest on-time at this frequency and duty (gate charge plus the quiescent current over that time): the gate drive falls and R_ds(on) rises. Use the capacitance the finding names.",
        "common practice; the 10 % droop is our own bound",
    ),
    e(
        "bootstrap-hold-up",
        "A high side held on for a long time without a low-side pulse to recharge its bootstrap capacitor (six-step low-side chopping, standstill) loses gate voltage as (Q_g + I·t)/C. A warning above 10 % droop, an error when the gate would fall below the Miller plateau.",
        "common practice; the 10 % threshold is our own bound",
    ),
    e(
        "burst-junction",
        "During a current-limit burst (the limit chopping a stall or a short for the design's burst time) the junction rises above its limit on the board's transient thermal path (Foster network).",
        OWN,
    ),
    e(
        "c-rss-q-gd-disagree",
        "The Miller charge integrated from the switch file's C_rss curve disagrees strongly with its Q_gd; the switching times rest on them, so check the datasheet values.",
        OWN,
    ),
    e(
        "c-rss-scaled-to-q-gd",
        "Information: the C_rss curve sets the shape of the gate-drain capacitance against voltage and the datasheet Q_gd its size; the curve was scaled to match Q_gd.",
        OWN,
    ),
    e(
        "current-limit-blanking",
        "The turn-on spike (the partner's recovery, the output capacitances) would trip the over-current comparator at every turn-on unless blanking or the fault filter covers it; the board's blanking or filter cannot.",
        COMMON,
    ),
    e(
        "current-limit-hard-short",
        "A short at the motor terminals rises at the bus voltage over the commutation loop's inductance; within the limit's reaction time it reaches beyond what the switch may carry.",
        COMMON,
    ),
    e(
        "current-limit-place",
        "A shunt in the half-bridge's leg (its low side) carries the motor current only while the high side is off, so a cycle-by-cycle limit never sees the pulse it must cut.",
        COMMON,
    ),
    e(
        "current-limit-ratchet",
        "At a stall the blanking and reaction time leave an on-time the limit cannot cut; that on-time alone drives the current above the trip, so it ratchets up period by period.",
        COMMON,
    ),
    e(
        "current-limit-stall",
        "A stall held under the cycle-by-cycle limit carries more current than a hard limit (the switch's pulsed rating, the motor's maximum) allows.",
        COMMON,
    ),
    e(
        "current-limit-window",
        "The trip threshold's spread over the sensing chain's tolerances either reaches into normal operation (nuisance trips) or lets the current beyond a hard limit.",
        "common practice (tolerance stack-up); the corners are worked in the README",
    ),
    e(
        "current-loop",
        "No current-loop gains could be found for this motor and timing (the discrete loop has no crossover with the asked phase margin).",
        "Harnefors, Nee, \"Model-based current control of AC machines using the internal model control method\", IEEE Trans. Industry Applications 34(1), 1998",
    ),
    e(
        "current-loop-fixed-point",
        "The integer loop gains at the asked fraction bits miss their exact values by more than 1 %, or do not fit 32 bits.",
        "our own bound (1 %)",
    ),
    e(
        "current-loop-floor",
        "The loop's lowest compare (the compare limits within the sampling window) still drives more than a tenth of the rated current through a stalled motor: a zero reference cannot be followed; disable the outputs for small references.",
        "our own bound (a tenth of the rated current)",
    ),
    e(
        "current-loop-rate",
        "The asked loop rate is above what the loop can run at (the PWM rate, or twice it where it samples and updates at both counter extremes); the finding says what stands in the way.",
        COMMON,
    ),
    e(
        "current-loop-reversal",
        "The rated current reverses (a bridge) or stops (a single switch) within each PWM period, so the dead time's voltage or the freewheel's end follows the current and the loop's figures do not hold.",
        COMMON,
    ),
    e(
        "dead-time-distortion",
        "The dead time's voltage is large against the motor's impedance: it distorts the phase current strongly and the written modulation index can leave the current several per cent off; close the current loop in firmware or shorten the dead time.",
        COMMON,
    ),
    e(
        "dead-time-voltage-error",
        "Information: the mean output voltage the dead time costs where it opposes the current, and whether the compare duties make it up.",
        COMMON,
    ),
    e(
        "discontinuous-current",
        "Information: at the rated load the motor current falls to zero each period (the freewheel diode blocks); ripple and loss follow the discontinuous waveform.",
        COMMON,
    ),
    e(
        "drive-below-rdson-spec",
        "The gate drive is below the V_GS at which the datasheet specifies R_ds(on), so the on-resistance is not guaranteed there.",
        COMMON,
    ),
    e(
        "drive-below-ztc",
        "The gate drive is below the transfer curve's zero-temperature-coefficient point, where a hotter region of the die conducts more: current crowds into hot cells (a runaway risk in slow switching or linear operation).",
        "common practice (from memory)",
    ),
    e(
        "no-freewheel-path",
        "A single switch drives an inductive motor with no freewheel diode: at turn-off the current has nowhere to go and the drain avalanches.",
        COMMON,
    ),
    e(
        "no-full-on",
        "Information: on a single switch the compare limit keeps a minimum off-pulse each period, so 100 % duty is not used.",
        OWN,
    ),
    e(
        "six-step-commutation",
        "Under six-step, after each commutation the off-going phase keeps its current flowing through a body diode until the voltage across its inductance has driven it to zero. The plan simulates the bridge switch by switch, so the duty and the losses include that interval; a warning when it exceeds a quarter of the 60° sector (the torque dips for that long every sector, and a sensorless drive cannot see the floating phase's back-EMF until it ends), an error (the plan refused) when the current has not reached zero by the next commutation.",
        "Krishnan, Permanent Magnet Synchronous and Brushless DC Motor Drives, 2010, ch. 9 (from memory); both bounds are our own",
    ),
    e(
        "stall-needs-current-limit",
        "A stall at the highest supply draws more than the switch or motor may carry for the stall time, and the board has no current limit to stop it.",
        COMMON,
    ),
    e(
        "thermal-runaway",
        "The junction temperature has no steady state: the loss rises with temperature (R_ds(on)) faster than the thermal path removes it.",
        COMMON,
    ),
    e(
        "vdss-below-bus",
        "The switch's V_DSS is below the highest bus voltage: it will break down.",
        COMMON,
    ),
    e(
        "vdss-margin-low",
        "The switch's V_DSS is less than 1.5 times the highest bus voltage; ringing and back-EMF spikes usually need 1.5 to 2 times.",
        COMMON,
    ),
    e(
        "vgs-max-exceeded",
        "The gate drive exceeds the switch's V_GS absolute maximum.",
        COMMON,
    ),
    e(
        "weak-gate-driver",
        "The gate driver's peak current is small against the switch's gate charge: slow edges and high switching loss.",
        COMMON,
    ),
    e(
        "worst-case-*",
        "With `--worst-case` or the design's worst-case judgement: the named constraint (junction, ripple, duty-range, …, after the prefix) fails at a corner of the part and operating spreads; the message names the corner.",
        OWN,
    ),
    e(
        "worst-case-unreachable",
        "At a corner of the spreads the rated current cannot be reached with the duty the timer allows.",
        OWN,
    ),
];

/// The explanation of `code` (a family's, for a code under its prefix).
pub fn explain(code: &str) -> Option<&'static Explanation> {
    EXPLANATIONS.iter().find(|x| x.code == code).or_else(|| {
        EXPLANATIONS.iter().find(|x| {
            x.code
                .strip_suffix('*')
                .is_some_and(|prefix| code.starts_with(prefix) && code.len() > prefix.len())
        })
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_are_sorted_unique_and_explained() {
        for w in EXPLANATIONS.windows(2) {
            assert!(w[0].code < w[1].code, "{} / {}", w[0].code, w[1].code);
        }
        for x in EXPLANATIONS {
            assert!(!x.text.is_empty() && !x.source.is_empty(), "{}", x.code);
        }
        assert_eq!(
            explain("worst-case-ripple").map(|x| x.code),
            Some("worst-case-*")
        );
        assert_eq!(
            explain("worst-case-unreachable").map(|x| x.code),
            Some("worst-case-unreachable")
        );
        assert!(explain("worst-case-").is_none() && explain("nope").is_none());
    }
}
