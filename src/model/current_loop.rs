//! The current sampling and the current loop of a chosen setting: where the ADC samples,
//! how many PWM periods pass between control updates, and the PI gains with the loop's
//! phase margin and step overshoot.
//!
//! Owns: the brushed sampling record (`physics::sampling` at the chosen setting), the update
//! divider and the actual loop rate, the loop's timing (sample offset from the update event,
//! delay, compute budget), the PWM's voltage per compare count, the gains from
//! `physics::current_loop` in SI units and as integers in compare counts per ADC code, and the
//! findings where the design's asks cannot be met. Pure: no I/O.

use serde::{Deserialize, Serialize};

use crate::input::design::Design;
use crate::model::evaluate::Evaluator;
use crate::model::physics::current_loop::{self as cl, DiscretePlant, LoopTiming, RlPlant};
use crate::model::physics::losses;
use crate::model::physics::params::{HBridgeModulation, Topology};
use crate::model::physics::ratings::Severity;
use crate::model::physics::sampled_plant::{self, Carrier, SampleAt, SwitchedPeriod};
use crate::model::physics::sampling::{BrushedSampling, SenseState, TriggerRule};
use crate::model::solve::Candidate;
use crate::model::spread::pwm_setting;

/// Phase margin when the design asks for none, degrees (common practice: 60° gives a
/// well-damped step with a few per cent of overshoot).
pub const DEFAULT_PHASE_MARGIN_DEG: f64 = 60.0;

/// Largest error accepted on an integer gain against its exact value before a finding
/// says so (own bound).
const FIXED_POINT_ERROR: f64 = 0.01;

/// Step-response samples kept in the plan (for its plot).
const STEP_SAMPLES_KEPT: usize = 60;

/// A brushed stage's sampling as the plan states it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SamplingOut {
    /// `on-time`, `off-time` or `active` (unipolar: leg A high, leg B low).
    pub state: String,
    /// +1: the shunt reads the motor current; −1: reversed.
    pub sign: f64,
    /// `fixed` (a count matched `counting_up` or down) or `half-compare`
    /// (`(compare + add)/2 − lead`, up-count, each period).
    pub trigger: String,
    pub trigger_count: u64,
    pub counting_up: bool,
    /// Sampling at both counter extremes (`state` is then the bottom's on-time): the top's
    /// trigger, a fixed count in the middle of the off-time, and its direction.
    pub top_trigger_count: Option<u64>,
    pub top_counting_up: bool,
    pub trigger_add: u64,
    pub lead_ticks: u64,
    /// The trigger count at the rated case's compare.
    pub trigger_at_rated: u64,
    /// Ticks the state's middle lies after the reference's (half the dead time, or 0).
    pub shift_ticks: u64,
    /// The board's amplifier settling and ADC acquisition, s.
    pub settle_time_s: f64,
    pub sample_time_s: f64,
    /// Shortest sensed state that holds dead time, settling and acquisition, s.
    pub min_state_s: f64,
    /// Compare duties (and counts) at which the window fits.
    pub duty_min: f64,
    pub duty_max: f64,
    pub compare_min: u64,
    pub compare_max: u64,
}

/// Integer gains: compare counts per ADC code, scaled by 2^fraction_bits.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FixedPointOut {
    pub fraction_bits: u32,
    /// Motor current per ADC code, A.
    pub amps_per_code: f64,
    /// The ADC code at zero current.
    pub zero_code: i64,
    /// `K_p` in counts per code × 2^q, and its exact value.
    pub kp: i64,
    pub kp_exact: f64,
    /// `K_i·T` (per update) in counts per code × 2^q, and its exact value.
    pub ki: i64,
    pub ki_exact: f64,
}

/// The current loop as the plan states it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurrentLoopOut {
    pub pwm_rate_hz: f64,
    pub rate_asked_hz: Option<f64>,
    /// PWM periods per control update.
    pub update_divider: u64,
    /// Control updates per PWM period: 2 where the loop samples and updates at both counter
    /// extremes (the divider is then 1), else 1.
    pub updates_per_pwm_period: u64,
    /// Counter extremes per update, on a timer whose update event comes at each extreme (its
    /// divider counts extremes), else `None`.
    pub update_extremes: Option<u64>,
    pub rate_hz: f64,
    /// The loop's sample offset τ (`sampling::BrushedSampling::offset_s`), s.
    pub sample_offset_s: f64,
    /// From the update event to the acquisition's middle at the rated compare, s.
    pub sample_instant_s: f64,
    /// A brushed stage's sample less the mean current of its PWM period at the rated case,
    /// A (the R–L's curvature; 0 for straight ramps).
    pub sample_bias_a: Option<f64>,
    /// Sample to the new compare's taking effect plus half the held period, s.
    pub delay_s: f64,
    /// From the end of acquisition to the next update event, s: the conversion and the
    /// control code must fit in it.
    pub compute_budget_s: f64,
    pub resistance_ohm: f64,
    pub inductance_h: f64,
    /// Load voltage per unit of compare duty, V, and the duty of zero volts.
    pub volts_per_duty: f64,
    pub zero_volt_duty: f64,
    /// Compare counts per volt of controller output.
    pub counts_per_volt: f64,
    pub kp_v_per_a: f64,
    pub ki_v_per_a_s: f64,
    pub bandwidth_hz: f64,
    pub crossover_hz: f64,
    pub phase_margin_deg: f64,
    pub phase_margin_asked_deg: f64,
    pub overshoot_pct: f64,
    pub rise_time_s: f64,
    pub fixed_point: Option<FixedPointOut>,
    /// The sampled current's response to a unit step, one value per update.
    pub step_response: Vec<f64>,
}

/// A finding of this module.
#[derive(Debug, Clone, PartialEq)]
pub struct LoopFinding {
    pub severity: Severity,
    pub code: &'static str,
    pub message: String,
}

/// The brushed sampling of a candidate, as stated in the plan (`None` without sensing or
/// without a window; the `sampling-window` constraint has said so).
pub fn sampling_out(ev: &Evaluator, c: &Candidate) -> Option<SamplingOut> {
    let s = pwm_setting(&c.setting);
    let w = ev.brushed_sampling(&s, c.dead_time.seconds)??;
    let p = s.duty_steps;
    let rated_compare = (c.rated.compare_duty * p as f64).round() as u64;
    let (trigger, count, up, add) = match w.trigger {
        TriggerRule::Fixed { count, counting_up } => ("fixed", count, counting_up, 0),
        TriggerRule::HalfCompare { add, .. } => ("half-compare", 0, true, add),
    };
    let (top_count, top_up) = match w.top_trigger {
        Some(TriggerRule::Fixed { count, counting_up }) => (Some(count), counting_up),
        _ => (None, false),
    };
    Some(SamplingOut {
        state: state_name(w.state).into(),
        sign: w.sign,
        trigger: trigger.into(),
        trigger_count: count,
        counting_up: up,
        top_trigger_count: top_count,
        top_counting_up: top_up,
        trigger_add: add,
        lead_ticks: w.lead_ticks,
        shift_ticks: w.shift_ticks,
        settle_time_s: ev.sensing.map_or(0.0, |b| b.settle_s),
        sample_time_s: ev.sensing.map_or(0.0, |b| b.acquire_s),
        trigger_at_rated: w.trigger_count(rated_compare),
        min_state_s: w.min_state_s,
        duty_min: w.duty_min,
        duty_max: w.duty_max,
        compare_min: w.compare_min,
        compare_max: w.compare_max,
    })
}

/// The plan's name of a sensed state.
pub fn state_name(s: SenseState) -> &'static str {
    match s {
        SenseState::On => "on-time",
        SenseState::Off => "off-time",
        SenseState::Active => "active",
    }
}

/// Load voltage per unit compare duty and the duty of zero volts: `V_bus` from 0 on a
/// leg or a three-phase leg (against the bus midpoint, from ½); `V_bus + V_f` on a single
/// switch, whose off-state puts the freewheel diode's `−V_f` on the motor (zero volts at
/// `V_f/(V_bus + V_f)`); `2·V_bus` from ½ on an H-bridge (bipolar: `(2d − 1)·V`; unipolar:
/// legs at `d` and `1 − d`). Common practice (the period-mean terminal voltage).
fn pwm_gain(ev: &Evaluator, v_bus_v: f64) -> (f64, f64) {
    if ev.three_phase.is_some() {
        return (v_bus_v, 0.5);
    }
    match ev.stage.topology {
        Topology::LowSide => {
            let v_f = ev.stage.diode.as_ref().map_or(0.0, |d| d.v_f_v);
            (v_bus_v + v_f, v_f / (v_bus_v + v_f))
        }
        Topology::HalfBridge => (v_bus_v, 0.0),
        Topology::HBridge(HBridgeModulation::Bipolar | HBridgeModulation::Unipolar) => {
            (2.0 * v_bus_v, 0.5)
        }
    }
}

/// The loop's resistance: the motor (a phase of a three-phase motor) plus what the current
/// flows through on average: the channels in its path (two on an H-bridge, one otherwise) at
/// the rated case's junction temperature (the limit when it has none); a single switch only
/// for its duty, the freewheel diode's slope resistance for the rest.
fn loop_resistance_ohm(ev: &Evaluator, c: &Candidate) -> f64 {
    let t_j = c.rated.junction_c.unwrap_or(ev.limits.t_j_max_c);
    let r_ds = losses::r_ds_on_ohm(&ev.stage.switch, t_j);
    let path = match ev.stage.topology {
        Topology::HBridge(_) if ev.three_phase.is_none() => 2.0 * r_ds,
        Topology::LowSide => {
            let d = c.rated.compare_duty.clamp(0.0, 1.0);
            let r_d = ev.stage.diode.as_ref().map_or(0.0, |f| f.r_d_ohm);
            d * r_ds + (1.0 - d) * r_d
        }
        _ => r_ds,
    };
    ev.motor_r_ohm + path
}

/// The update divider for the asked rate: the nearest whole number of PWM periods within
/// the board's divider (1 without one).
fn update_divider(pwm_hz: f64, asked_hz: Option<f64>, max: u64) -> u64 {
    let Some(asked) = asked_hz else { return 1 };
    ((pwm_hz / asked).round() as u64).clamp(1, max.max(1))
}

/// The sample's offset from the update event, and the acquisition's middle, s: a brushed
/// stage's from its sampling plan at the rated compare (`BrushedSampling::offset_s`,
/// `instant_s`); a three-phase bridge samples around the counter top, half a PWM period after
/// the update event at the bottom.
fn sample_timing(ev: &Evaluator, c: &Candidate, w: Option<&BrushedSampling>) -> Option<(f64, f64)> {
    let s = pwm_setting(&c.setting);
    let period = 1.0 / s.frequency_hz;
    if ev.three_phase.is_some() {
        return Some((0.5 * period, 0.5 * period));
    }
    let t = ev.sampling_timer(&s, c.dead_time.seconds)?;
    let w = w?;
    let d = c.rated.compare_duty;
    Some((w.offset_s(&t, d), w.instant_s(&t, d)))
}

/// A brushed stage's exact sampled plant (`sampled_plant::switched_plant`) and the sample's
/// bias against the period's mean (`sampled_plant::sample_bias_a`) at the rated compare and
/// current: the carrier and load-voltage levels of its topology (a single switch
/// puts the freewheel diode's `−V_f` on the motor while off; a bipolar bridge `−V`), the
/// sample where the sampling plan puts it.
fn switched(
    ev: &Evaluator,
    c: &Candidate,
    w: &BrushedSampling,
    n: u64,
    plant: &RlPlant,
    half: bool,
) -> Option<(DiscretePlant, f64)> {
    let s = pwm_setting(&c.setting);
    let centre = s.alignment == crate::model::timer::Alignment::Centre;
    let v = ev.rated.v_bus_v;
    let (carrier, v_off) = match ev.stage.topology {
        Topology::LowSide => (
            Carrier::Edge,
            -ev.stage.diode.as_ref().map_or(0.0, |d| d.v_f_v),
        ),
        Topology::HalfBridge => (Carrier::Edge, 0.0),
        Topology::HBridge(HBridgeModulation::Bipolar) => (Carrier::Edge, -v),
        Topology::HBridge(HBridgeModulation::Unipolar) => (Carrier::CentreUnipolar, 0.0),
    };
    let carrier = match carrier {
        Carrier::Edge if centre => Carrier::Centre,
        other => other,
    };
    let sample = match (w.state, centre) {
        (SenseState::On, true) => SampleAt::Share(0.0),
        (SenseState::Off, true) => SampleAt::Share(0.5),
        (SenseState::Active, _) => SampleAt::Share(0.25),
        (SenseState::On, false) => SampleAt::OnMiddle,
        (SenseState::Off, false) => SampleAt::OffMiddle,
    };
    let dead_s = if w.shift_ticks > 0 {
        c.dead_time.seconds
    } else {
        0.0
    };
    let period = SwitchedPeriod {
        dead_s,
        pwm_period_s: 1.0 / s.frequency_hz,
        periods_per_update: u32::try_from(n).unwrap_or(u32::MAX),
        carrier,
        v_on_v: v,
        v_off_v: v_off,
        sample,
    };
    let (d, i) = (c.rated.compare_duty, c.rated.case.load_current_a);
    if half {
        return Some((
            sampled_plant::half_period_plant(plant, &period, d, i)?,
            sampled_plant::half_period_bias_a(plant, &period, d, i),
        ));
    }
    Some((
        sampled_plant::switched_plant(plant, &period, d, i)?,
        sampled_plant::sample_bias_a(plant, &period, d, i),
    ))
}

/// A warning when the asked rate is above what the loop runs at: the PWM rate (twice it where
/// the loop updates every half period), saying why the board cannot update faster.
fn rate_finding(
    d: &Design,
    ev: &Evaluator,
    asked: Option<f64>,
    pwm_hz: f64,
    half: bool,
) -> Option<LoopFinding> {
    let most = if half { 2.0 * pwm_hz } else { pwm_hz };
    let a = asked.filter(|&a| a > most * cl::RATE_ABOVE)?;
    let each_extreme = d
        .board
        .timer
        .update_divider
        .as_ref()
        .is_some_and(|u| u.each_extreme);
    // The board could sample at both extremes; only the setting's alignment stands in the way.
    let could = ev.sensing.is_some_and(|b| b.half_period_rate_hz.is_some());
    let why = match (half, each_extreme, could) {
        (true, _, _) => "it samples and updates at both counter extremes, twice per PWM period",
        (false, true, true) => {
            "it updates once per PWM period: the chosen setting is edge-aligned, and sampling at both counter extremes needs an up-down count (list only `centre` in `timer.alignments` to have one)"
        }
        (false, true, false) => {
            "it updates once per PWM period: sampling at both counter extremes needs a centre-aligned setting and a shunt in series with the motor (`place: phase`) on a stage other than a unipolar bridge"
        }
        (false, false, _) => {
            "it updates once per PWM period (the compares take effect at one update event per period)"
        }
    };
    Some(LoopFinding {
        severity: Severity::Warning,
        code: "current-loop-rate",
        message: format!(
            "The current loop was asked to run at {a:.0} Hz, above the {most:.0} Hz it can: {why}."
        ),
    })
}

/// The plan's current loop (`None` when the design asks for none or the stage samples no
/// current), with its findings.
pub fn plan(
    d: &Design,
    ev: &Evaluator,
    c: &Candidate,
) -> (Option<CurrentLoopOut>, Vec<LoopFinding>) {
    let mut findings = Vec::new();
    let Some(spec) = d.spec.current_loop.as_ref() else {
        return (None, findings);
    };
    let s = pwm_setting(&c.setting);
    let w = ev.brushed_sampling(&s, c.dead_time.seconds).flatten();
    let Some((offset, instant)) = sample_timing(ev, c, w.as_ref()) else {
        return (None, findings);
    };
    let pwm_hz = s.frequency_hz;
    let asked = spec.rate.as_ref().map(|r| r.si);
    let max_div = d
        .board
        .timer
        .update_divider
        .as_ref()
        .map_or(1, |u| u64::from(u.max));
    let half = w.as_ref().is_some_and(|w| w.top_trigger.is_some());
    let per_period: u64 = if half { 2 } else { 1 };
    let n = update_divider(pwm_hz, asked, max_div);
    findings.extend(rate_finding(d, ev, asked, pwm_hz, half));
    let timing = LoopTiming {
        period_s: n as f64 / (pwm_hz * per_period as f64),
        sample_offset_s: offset,
    };
    let plant = RlPlant {
        r_ohm: loop_resistance_ohm(ev, c),
        l_h: ev.motor_l_h,
    };
    let asked_pm = spec.phase_margin_deg.unwrap_or(DEFAULT_PHASE_MARGIN_DEG);
    let (discrete, bias) = match &w {
        Some(w) => match switched(ev, c, w, n, &plant, half) {
            Some((dp, bias)) => (Some(dp), Some(bias)),
            None => (None, None),
        },
        None => (Some(DiscretePlant::held(&plant, &timing)), None),
    };
    let design = discrete.and_then(|dp| cl::design_loop(&plant, &dp, timing.delay_s(), asked_pm));
    let Some(design) = design else {
        findings.push(LoopFinding {
            severity: Severity::Warning,
            code: "current-loop",
            message: "No current-loop gains could be found for this motor and timing.".into(),
        });
        return (None, findings);
    };
    findings.extend(reversal_finding(ev, c));
    let (volts_per_duty, zero_volt_duty) = pwm_gain(ev, ev.rated.v_bus_v);
    findings.extend(floor_finding(
        c,
        w.as_ref(),
        (volts_per_duty, zero_volt_duty),
        plant.r_ohm,
    ));
    let counts_per_volt = s.duty_steps as f64 / volts_per_duty;
    let fixed = spec
        .fixed_point
        .as_ref()
        .and_then(|fp| fixed_point(d, &design.gains, &timing, counts_per_volt, fp.fraction_bits));
    if let Some(f) = &fixed {
        findings.extend(fixed_point_finding(f));
    }
    let acquire = ev.sensing.map_or_else(
        || ev.three_phase.as_ref().map_or(0.0, |t| t.sample_s),
        |b| b.acquire_s,
    );
    let step = discrete.map_or_else(Vec::new, |dp| {
        cl::step_response(&dp, &design.gains, STEP_SAMPLES_KEPT)
    });
    let out = CurrentLoopOut {
        pwm_rate_hz: pwm_hz,
        rate_asked_hz: asked,
        update_divider: n,
        updates_per_pwm_period: per_period,
        update_extremes: d
            .board
            .timer
            .update_divider
            .as_ref()
            .filter(|u| u.each_extreme && s.alignment == crate::model::timer::Alignment::Centre)
            .map(|_| 2 * n / per_period),
        rate_hz: pwm_hz * per_period as f64 / n as f64,
        sample_offset_s: offset,
        sample_instant_s: instant,
        sample_bias_a: bias,
        delay_s: design.delay_s,
        compute_budget_s: timing.period_s - instant - 0.5 * acquire,
        resistance_ohm: plant.r_ohm,
        inductance_h: plant.l_h,
        volts_per_duty,
        zero_volt_duty,
        counts_per_volt,
        kp_v_per_a: design.gains.kp_v_per_a,
        ki_v_per_a_s: design.gains.ki_v_per_a_s,
        bandwidth_hz: design.bandwidth_rad_s / std::f64::consts::TAU,
        crossover_hz: design.crossover_rad_s / std::f64::consts::TAU,
        phase_margin_deg: design.phase_margin_deg,
        phase_margin_asked_deg: asked_pm,
        overshoot_pct: 100.0 * design.overshoot,
        rise_time_s: design.rise_samples as f64 * timing.period_s,
        fixed_point: fixed,
        step_response: step,
    };
    (Some(out), findings)
}

/// A warning when the rated current does not stay one-signed and continuous through each PWM
/// period (ripple peak to peak above twice the mean): on a bridge it reverses and the dead
/// time's voltage follows it; on a single switch it falls to zero and stays there
/// (discontinuous conduction). Either way the plant is no longer the R–L the loop figures
/// assume (the register-level simulation of the tests sees the step overshoot collapse there).
fn reversal_finding(ev: &Evaluator, c: &Candidate) -> Option<LoopFinding> {
    let i = c.rated.case.load_current_a.abs();
    let pp = c.rated.ripple.peak_to_peak_a;
    let what = if ev.needs_dead_time() {
        "the current reverses within each PWM period and the dead time's voltage follows it"
    } else {
        "the current falls to zero within each PWM period (discontinuous conduction)"
    };
    (ev.three_phase.is_none() && pp > 2.0 * i).then(|| LoopFinding {
        severity: Severity::Warning,
        code: "current-loop-reversal",
        message: format!(
            "At the rated case the ripple ({pp:.3} A peak to peak) exceeds twice the current ({i:.3} A): {what}, so the loop's margin and overshoot differ from the figures stated; raise the PWM frequency or the inductance."
        ),
    })
}

/// Share of the rated current a standstill may carry at the loop's lowest compare before a
/// finding says so (own bound).
const FLOOR_SHARE: f64 = 0.1;

/// A warning when the loop's lowest compare (the compare limits within the sampling window)
/// still drives a stalled motor with more than [`FLOOR_SHARE`] of the rated current: a loop
/// asked for zero current cannot give it, the outputs must then be disabled instead.
fn floor_finding(
    c: &Candidate,
    w: Option<&BrushedSampling>,
    (volts_per_duty, zero_volt_duty): (f64, f64),
    r_ohm: f64,
) -> Option<LoopFinding> {
    let s = pwm_setting(&c.setting);
    let steps = s.duty_steps as f64;
    let lo = c
        .duty_limits
        .map_or(0, |l| l.min_counts)
        .max(w?.compare_min) as f64;
    let v = (lo / steps - zero_volt_duty) * volts_per_duty;
    let i = v / r_ohm;
    let rated = c.rated.case.load_current_a.abs();
    let instead = if w?.top_trigger.is_some() {
        "sample once per PWM period at the counter top (a loop rate no higher than the PWM rate), where small duties leave the off-time long"
    } else {
        "read the current where the window allows small duties (a leg or phase shunt)"
    };
    (i > FLOOR_SHARE * rated).then(|| LoopFinding {
        severity: Severity::Warning,
        code: "current-loop-floor",
        message: format!(
            "The loop's lowest compare ({lo:.0} counts: the compare limits within the sampling window) puts {v:.2} V on the motor, {i:.2} A at standstill ({:.0} % of the rated current): a zero reference cannot be followed there. Disable the outputs (coast) for small references, or {instead}.",
            100.0 * i / rated
        ),
    })
}

/// The integer gains: `K·(A per code)·(counts per V)·2^q`, the integral per update
/// (`K_i·T`). The ADC code is `2^bits·V/V_fs` (common practice), the amplifier's output
/// `gain·R_shunt·I + offset`.
fn fixed_point(
    d: &Design,
    g: &cl::PiGains,
    t: &LoopTiming,
    counts_per_volt: f64,
    q: u32,
) -> Option<FixedPointOut> {
    let adc = d.board.current_sensing.as_ref()?.adc.as_ref()?;
    let oc = d.board.overcurrent.as_ref()?;
    let (gain, offset_v) = oc
        .amplifier
        .as_ref()
        .map_or((1.0, 0.0), |a| (a.gain, a.offset.si));
    let codes = f64::from(1u32 << adc.bits);
    let volts_per_amp = gain * oc.shunt.resistance.si;
    let amps_per_code = adc.full_scale.si / codes / volts_per_amp;
    let scale = amps_per_code * counts_per_volt * f64::from(1u32 << q);
    let kp_exact = g.kp_v_per_a * scale;
    let ki_exact = g.ki_v_per_a_s * t.period_s * scale;
    Some(FixedPointOut {
        fraction_bits: q,
        amps_per_code,
        zero_code: (offset_v / adc.full_scale.si * codes).round() as i64,
        kp: kp_exact.round() as i64,
        kp_exact,
        ki: ki_exact.round() as i64,
        ki_exact,
    })
}

/// A warning when an integer gain misses its exact value by more than
/// [`FIXED_POINT_ERROR`] or does not fit a 32-bit signed word.
fn fixed_point_finding(f: &FixedPointOut) -> Option<LoopFinding> {
    let err = |k: i64, exact: f64| ((k as f64 - exact) / exact).abs();
    let worst = err(f.kp, f.kp_exact).max(err(f.ki, f.ki_exact));
    let too_big = f.kp > i64::from(i32::MAX) || f.ki > i64::from(i32::MAX);
    (worst > FIXED_POINT_ERROR || too_big).then(|| LoopFinding {
        severity: Severity::Warning,
        code: "current-loop-fixed-point",
        message: if too_big {
            format!(
                "An integer gain does not fit 32 bits at {} fraction bits (K_p {}, K_i {}); use fewer fraction bits.",
                f.fraction_bits, f.kp, f.ki
            )
        } else {
            format!(
                "At {} fraction bits the integer gains are {:.1} % off their exact values (K_p {} for {:.2}, K_i {} for {:.2}); use more fraction bits.",
                f.fraction_bits,
                100.0 * worst,
                f.kp,
                f.kp_exact,
                f.ki,
                f.ki_exact
            )
        },
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_divider_rounds_to_the_asked_rate_within_the_board() {
        assert_eq!(update_divider(20_000.0, None, 16), 1);
        assert_eq!(update_divider(20_000.0, Some(10_000.0), 16), 2);
        assert_eq!(update_divider(20_000.0, Some(7_000.0), 16), 3);
        assert_eq!(update_divider(20_000.0, Some(100.0), 16), 16);
        assert_eq!(update_divider(20_000.0, Some(10_000.0), 1), 1);
        assert_eq!(update_divider(20_000.0, Some(50_000.0), 16), 1);
    }
}
