//! The sensorless six-step record of a plan (`three_phase.back_emf` in `plan.json`): where
//! in the PWM period the floating phase's back-EMF is read, against what, the blanking after
//! each commutation and the delay to the next. The numbers come from
//! `model::physics::three_phase::back_emf_sensing` and the simulated commutation; this file
//! only gathers them at the chosen setting.
//!
//! **Invariant:** built from the design and the solution only; no I/O.

use serde::{Deserialize, Serialize};

use crate::input::design::Design;
use crate::input::spec::{ModulationSpec, RotorPositionSpec};
use crate::model::evaluate::{Evaluator, ThreePhaseModulation};
use crate::model::physics::sampling::{SamplingTimer, TriggerRule};
use crate::model::physics::three_phase::Chop;
use crate::model::physics::three_phase::back_emf_sensing::{self as bemf, BemfWindow};
use crate::model::solve::Candidate;

/// What the on-time counts mean for the chopping phase's channel, per chop.
const COUNTS_HIGH_SIDE: &str =
    "the chopping high side's compare (its on-time, counts each side of the counter bottom)";
const COUNTS_LOW_SIDE: &str = "DUTY_STEPS less the chopping phase's compare (the chopping low side's on-time, counts each side of the counter top)";

/// Sensorless six-step: the floating phase's back-EMF sampling.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct BackEmfPlan {
    /// What the on-time counts below are for the chopping phase's channel.
    pub counts_meaning: String,
    pub settle_time_s: f64,
    pub sample_time_s: f64,
    pub dead_time_s: f64,
    /// The conversion starts this long after the middle of the state it reads (negative:
    /// before), s.
    pub trigger_after_middle_s: f64,
    /// In the chopping switch's on-time: the trigger count, its count direction (`up` or
    /// `down`), and the least on-time in counts (and as a duty) that holds the window.
    pub on_trigger_count: u64,
    pub on_trigger_direction: String,
    pub on_counts_min: u64,
    pub on_duty_min: f64,
    /// In its off-time: the same, and the most on-time that leaves the off-time the window.
    pub off_trigger_count: u64,
    pub off_trigger_direction: String,
    pub off_counts_max: u64,
    pub off_duty_max: f64,
    /// Whether one of the two windows holds at every on-time from 0 to `DUTY_STEPS` counts.
    pub covers_every_duty: bool,
    /// On-time threshold: half the bus, at the nominal supply, V.
    pub on_threshold_v: f64,
    /// Off-time threshold: the rail (`negative` or `positive`) and the offset from it, V
    /// (half the freewheeling body diode's drop `diode_forward_v`, or 0 with a synchronous
    /// freewheel).
    pub off_threshold_rail: String,
    pub off_threshold_offset_v: f64,
    pub diode_forward_v: f64,
    /// The rated case's on-time in counts and the window it is read in (`on-time`,
    /// `off-time`, or `none`).
    pub rated_counts: u64,
    pub rated_window: String,
    /// Whether the line current is continuous at the rated and high-bus cases (the off-time
    /// clamp needs the current flowing).
    pub continuous_conduction: bool,
    /// The blanking after a commutation at each evaluated case.
    pub blanking: Vec<BlankingOut>,
    /// The most PWM periods of `blanking` (`null` when a commutation never ends).
    pub blanking_periods: Option<u64>,
    /// From a zero crossing to the next commutation, electrical degrees.
    pub zero_crossing_to_commutation_deg: f64,
}

/// The blanking after a commutation at one case.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct BlankingOut {
    pub case: String,
    /// The off-going phase's diode freewheel, s (`null`: it does not end).
    pub commutation_s: Option<f64>,
    /// In whole PWM periods, rounded up.
    pub periods: Option<u64>,
    /// The blanking (whole periods) as an electrical angle at the case's speed, degrees.
    pub electrical_deg: Option<f64>,
}

/// Whether the design asks for sensorless six-step.
pub fn sensorless(d: &Design) -> bool {
    matches!(
        d.board.stage.modulation,
        Some(ModulationSpec::SixStep {
            rotor_position: RotorPositionSpec::BackEmf,
            ..
        })
    )
}

/// The sampling timer of the floating phase at the candidate's setting: the board's current
/// sensing's settling (the switching edge's, read on the same converter) and one acquisition.
fn bemf_timer(d: &Design, ev: &Evaluator, c: &Candidate) -> Option<SamplingTimer> {
    let cs = d.board.current_sensing.as_ref()?;
    Some(SamplingTimer {
        centre: c.setting.alignment == "centre",
        duty_steps: c.setting.duty_steps,
        tick_s: c.setting.divider as f64 / ev.timer.clock_hz,
        dead_s: c.dead_time.seconds,
        settle_s: cs.settle_time.si,
        acquire_s: cs.sample_time.si,
    })
}

/// A fixed trigger's count and direction.
fn trigger_parts(t: TriggerRule) -> (u64, String) {
    match t {
        TriggerRule::Fixed { count, counting_up } => {
            (count, if counting_up { "up" } else { "down" }.into())
        }
        TriggerRule::HalfCompare { .. } => (0, "follows the compare".into()),
    }
}

/// The back-EMF window at the candidate's setting: `Some(None)` when the design is
/// sensorless six-step but no state holds the window; `None` when it is not asked for.
pub fn window(d: &Design, ev: &Evaluator, c: &Candidate) -> Option<Option<BemfWindow>> {
    let tp = ev.three_phase.as_ref()?;
    let ThreePhaseModulation::SixStep { chop } = tp.modulation else {
        return None;
    };
    if !sensorless(d) {
        return None;
    }
    Some(bemf_timer(d, ev, c).and_then(|t| bemf::bemf_window(chop, &t)))
}

/// The blanking after a commutation at the rated and high-bus cases: the off-going phase's
/// diode freewheel as the switch-by-switch simulation found it
/// (`model::evaluate::CommutationFigure`; `None` where it does not end).
fn blanking(ev: &Evaluator, c: &Candidate) -> Vec<BlankingOut> {
    let Some(tp) = ev.three_phase.as_ref() else {
        return Vec::new();
    };
    let f = c.setting.frequency_hz;
    [(&ev.rated, &c.rated), (&ev.high_bus, &c.high_bus)]
        .into_iter()
        .filter_map(|(case, r)| {
            let figure = r.three_phase.as_ref()?.commutation?;
            let t = figure.settles.then_some(figure.freewheel_s);
            let periods = t.and_then(|t| bemf::blanking_periods(t, f));
            Some(BlankingOut {
                case: case.name.into(),
                commutation_s: t,
                periods,
                electrical_deg: periods.map(|n| (n as f64 / f * tp.omega_e_rad_s).to_degrees()),
            })
        })
        .collect()
}

/// The record (module doc); `None` unless sensorless six-step with a window that fits.
pub fn back_emf_plan(d: &Design, ev: &Evaluator, c: &Candidate) -> Option<BackEmfPlan> {
    let w = window(d, ev, c)??;
    let tp = ev.three_phase.as_ref()?;
    let ThreePhaseModulation::SixStep { chop } = tp.modulation else {
        return None;
    };
    let t = bemf_timer(d, ev, c)?;
    let v_f = ev.stage.switch.v_sd_v;
    let th = bemf::bemf_thresholds(chop, ev.rated.v_bus_v, v_f);
    let (on_count, on_dir) = trigger_parts(w.on_trigger);
    let (off_count, off_dir) = trigger_parts(w.off_trigger);
    let rated_counts = c
        .rated
        .three_phase
        .as_ref()
        .and_then(|x| x.chop_duty)
        .map_or(0, |duty| {
            crate::model::timer::compare_for_duty(
                &crate::model::spread::pwm_setting(&c.setting),
                duty,
            )
        });
    let rated_window = if rated_counts >= w.on_counts_min {
        "on-time"
    } else if rated_counts <= w.off_counts_max {
        "off-time"
    } else {
        "none"
    };
    let blanking = blanking(ev, c);
    let most = blanking
        .iter()
        .map(|b| b.periods)
        .try_fold(0u64, |acc, p| p.map(|p| acc.max(p)));
    Some(BackEmfPlan {
        counts_meaning: match chop {
            Chop::LowSide => COUNTS_LOW_SIDE,
            _ => COUNTS_HIGH_SIDE,
        }
        .into(),
        settle_time_s: t.settle_s,
        sample_time_s: t.acquire_s,
        dead_time_s: t.dead_s,
        trigger_after_middle_s: w.offset_ticks as f64 * t.tick_s,
        on_trigger_count: on_count,
        on_trigger_direction: on_dir,
        on_counts_min: w.on_counts_min,
        on_duty_min: w.on_duty_min,
        off_trigger_count: off_count,
        off_trigger_direction: off_dir,
        off_counts_max: w.off_counts_max,
        off_duty_max: w.off_duty_max,
        covers_every_duty: w.covers_every_duty(),
        on_threshold_v: th.on_v,
        off_threshold_rail: if th.off_positive_rail {
            "positive"
        } else {
            "negative"
        }
        .into(),
        off_threshold_offset_v: th.off_offset_v,
        diode_forward_v: v_f,
        rated_counts,
        rated_window: rated_window.into(),
        continuous_conduction: c.rated.ripple.continuous && c.high_bus.ripple.continuous,
        blanking,
        blanking_periods: most,
        zero_crossing_to_commutation_deg: bemf::ZERO_CROSSING_TO_COMMUTATION_DEG,
    })
}

/// The record as code literals and rationale lines (`ThreePhaseLiterals::bemf*`); `chop` is
/// the plan's `high-side`, `low-side` or `complementary`, `frequency_hz` the PWM's.
pub fn back_emf_literals(
    out: &mut crate::output::context::ThreePhaseLiterals,
    p: &BackEmfPlan,
    chop: &str,
    frequency_hz: f64,
) {
    let Some(blanking) = p.blanking_periods else {
        out.bemf_lines = vec![
            "Sensorless six-step: the off-going phase's current never reaches zero after a commutation at some case (see the six-step-commutation finding), so no blanking and no back-EMF sampling are emitted.".into(),
        ];
        return;
    };
    let mv = (1e3 * p.off_threshold_offset_v).round() as i64;
    out.bemf = true;
    out.bemf_on_trigger_count = p.on_trigger_count.to_string();
    out.bemf_on_trigger_up = p.on_trigger_direction == "up";
    out.bemf_on_counts_min = p.on_counts_min.to_string();
    out.bemf_off_trigger_count = p.off_trigger_count.to_string();
    out.bemf_off_trigger_up = p.off_trigger_direction == "up";
    out.bemf_off_counts_max = p.off_counts_max.to_string();
    out.bemf_off_threshold_mv = mv.to_string();
    out.bemf_off_threshold_mv_c = format!("({mv})");
    out.bemf_off_at_bus = p.off_threshold_rail == "positive";
    out.bemf_blanking_periods = blanking.to_string();
    out.bemf_delay_deg = format!("{:.0}", p.zero_crossing_to_commutation_deg);
    out.bemf_lines = back_emf_lines(p, chop, frequency_hz);
}

/// The rationale's section on sensorless sampling, one line each.
fn back_emf_lines(p: &BackEmfPlan, chop: &str, frequency_hz: f64) -> Vec<String> {
    use crate::input::units::{Dimension, format_quantity};
    let t = |x: f64| format_quantity(x, Dimension::Time, 3);
    let v = |x: f64| format_quantity(x, Dimension::Voltage, 3);
    let (on_extreme, off_extreme) = if chop == "low-side" {
        ("top", "bottom")
    } else {
        ("bottom", "top")
    };
    let off_against = match chop {
        "low-side" => format!(
            "the negative phase freewheels in its high side's body diode, so the floating terminal is the bus plus half a diode drop plus the back-EMF: compare it with the bus plus {}",
            v(p.off_threshold_offset_v)
        ),
        "complementary" => "the positive phase freewheels in its low side's channel, so the floating terminal is the back-EMF itself: compare it with zero".into(),
        _ => format!(
            "the positive phase freewheels in its low side's body diode, so the floating terminal is the back-EMF less half a diode drop: compare it with {} from the negative rail",
            v(p.off_threshold_offset_v)
        ),
    };
    let mut lines = vec![
        "Sensorless (`rotor_position: back-emf`): the firmware finds the rotor from the floating phase's back-EMF crossing zero. With phases p and n conducting, the star circuit puts the neutral at (v_p + v_n − e_p − e_n)/2 and the floating terminal at the neutral plus its back-EMF; where that back-EMF crosses zero the other two are equal and opposite, so the floating terminal then equals (v_p + v_n)/2 (Krishnan, *Permanent Magnet Synchronous and Brushless DC Motor Drives*, 2010, ch. 9, from memory; common practice). The channels' drops move v_p and v_n by the same amount and leave the mean.".into(),
        String::new(),
        format!(
            "- **In the chopping switch's on-time** (v_p = V, v_n = 0): compare the floating terminal with half the bus ({} at the nominal supply; measure the bus through the same divider). The on-time is centred on the counter {on_extreme}; the conversion starts {} after it (count {}, matched counting {}), so it begins the dead time {} and the settling {} after the late turn-on edge and its {} acquisition ends before the turn-off, at every on-time n of at least {} counts (`…_BEMF_ON_COUNTS_MIN`, duty {:.2} %; n is {}).",
            v(p.on_threshold_v),
            t(p.trigger_after_middle_s),
            p.on_trigger_count,
            p.on_trigger_direction,
            t(p.dead_time_s),
            t(p.settle_time_s),
            t(p.sample_time_s),
            p.on_counts_min,
            100.0 * p.on_duty_min,
            p.counts_meaning,
        ),
        format!(
            "- **Below that, in its off-time** (centred on the counter {off_extreme}; count {}, matched counting {}; it holds the window up to n = {} counts, `…_BEMF_OFF_COUNTS_MAX`, duty {:.2} %): {}. The clamp holds while the line current flows{}.",
            p.off_trigger_count,
            p.off_trigger_direction,
            p.off_counts_max,
            100.0 * p.off_duty_max,
            off_against,
            if p.continuous_conduction {
                " (continuous at the rated and high-bus cases)"
            } else {
                "; it does not at the rated or high-bus case (discontinuous current), so read the off-time only where the current is continuous"
            }
        ),
        format!(
            "- At the rated case the on-time is {} counts: read in the {}.",
            p.rated_counts, p.rated_window
        ),
        String::new(),
    ];
    let per = t(1.0 / frequency_hz);
    for b in &p.blanking {
        lines.push(match (b.commutation_s, b.periods, b.electrical_deg) {
            (Some(s), Some(n), Some(deg)) => format!(
                "- Blanking at the {} case: the off-going phase, the next floating one, stays clamped to a rail by a body diode for {} after a commutation (as the switch-by-switch simulation of the bridge found it): {n} PWM period{} of {per} ({deg:.1}° electrical at this speed).",
                b.case,
                t(s),
                if n == 1 { "" } else { "s" }
            ),
            _ => format!(
                "- Blanking at the {} case: the off-going current never reaches zero.",
                b.case
            ),
        });
    }
    lines.push(format!(
        "- Ignore zero crossings for `…_BEMF_BLANKING_PERIODS` = {} PWM periods after each commutation (the most of the cases above). Then commute {}° electrical after the crossing: the zero crossing lies in the middle of the floating phase's 60° sector (common practice for 120° block commutation; Krishnan 2010, ch. 9, from memory); time it from the last sector's length, since it depends on the speed.",
        p.blanking_periods.unwrap_or(0),
        p.zero_crossing_to_commutation_deg
    ));
    lines
}
