//! The plan's claims checked on the registers it writes, by the register-level verifier
//! ([`crate::model::verify`]), before anything is written.
//!
//! Owns: reading a [`Plan`] record as a firmware engineer would (divider, period, alignment,
//! dead time, compare limits, the compare at each operating case, the load and drops it
//! states), driving the verifier with exactly those values, and comparing what the verifier
//! measures with what the plan claims. It reads nothing but the plan record, so the check
//! is as independent of the model as the verifier itself.
//!
//! What is checked, with the tolerances of our own choice ([`TOLERANCES`]):
//! - every output pulse at `compare_min` and `compare_max` lasts at least the board's minimum
//!   pulse (and is never empty), and the low side stays on for the bootstrap refresh time;
//! - at each operating case, at the plan's compare duty (simulated on a finer timer, see
//!   [`SUB_TICKS`]), the mean current is the load current within 1 % of the rated current,
//!   the ripple peak to peak within 1 % of the plan's (or 1 mA);
//! - the lowest significant ripple line at or below the hearing limit is the same line.
//!
//! Three-phase bridges: the pulse checks (each leg is a complementary leg), the sampling
//! trigger, and for sinusoidal modulation the phase currents at the plan's modulation index
//! ([`three_phase_currents`], with its own looser tolerance); six-step currents are not
//! compared (stated in the result).
//!
//! **Invariant:** pure; a disagreement is data ([`RegisterCheck::disagreements`]), the caller
//! decides (the command line refuses to write the plan).

use crate::input::design::Design;
use crate::model::evaluate::Evaluator;
use crate::model::solve::{Candidate, Solution};
use crate::model::timer::Alignment;
use crate::model::verify::{self, Circuit, LegCompare, Stage, TimerRegisters, Verification};
use crate::output::plan::{
    self, CaseCheck, CaseOut, LoadOut, Plan, Pwm, RegisterCheck, SamplingPlan, ThreePhaseOut,
    TimerOut,
};

mod three_phase_currents;

/// Agreement required between the plan and the verifier (bounds of our own choice).
pub struct Tolerances {
    /// Mean current, as a fraction of the case's load current.
    pub mean_current_rel: f64,
    /// Mean current, absolute floor, A.
    pub mean_current_abs_a: f64,
    /// Ripple peak to peak, as a fraction of the plan's figure.
    pub ripple_rel: f64,
    /// Ripple peak to peak, absolute floor, A.
    pub ripple_abs_a: f64,
    /// Pulse times are compared with this much rounding slack, s.
    pub time_abs_s: f64,
}

/// The tolerances `plan` holds the model to.
pub const TOLERANCES: Tolerances = Tolerances {
    mean_current_rel: 0.01,
    mean_current_abs_a: 1e-4,
    ripple_rel: 0.01,
    ripple_abs_a: 1e-3,
    time_abs_s: 1e-12,
};

/// A line counts when within this many dB of the strongest and above the floor (the plan's
/// own definition of a significant line, stated in the README).
const SIGNIFICANT_REL_DB: f64 = 60.0;
const SIGNIFICANT_FLOOR_A_RMS: f64 = 1e-3;
/// Lines this close to the significance threshold are not compared: either verdict is right
/// within the two methods' rounding (a bound of our own choice).
const SIGNIFICANCE_GUARD_DB: f64 = 0.5;
/// Hearing limit when the design gives none (the plan's default, README).
const DEFAULT_HEARING_LIMIT_HZ: f64 = 20_000.0;

/// The parts of a plan the registers are checked against.
pub struct RegisterView<'a> {
    pub topology: &'a str,
    pub pwm: &'a Pwm,
    pub timer: &'a TimerOut,
    pub cases: &'a [CaseOut],
    pub load: &'a LoadOut,
    /// The hearing limit the audibility verdict used, Hz.
    pub hearing_limit_hz: f64,
    /// A three-phase bridge's own record (modulation, motor, sampling trigger).
    pub three_phase: Option<&'a ThreePhaseOut>,
}

impl<'a> RegisterView<'a> {
    /// A plan record as written (`plan.json`), as a firmware engineer reads it.
    pub fn of(plan: &'a Plan) -> Self {
        RegisterView {
            topology: &plan.topology,
            pwm: &plan.pwm,
            timer: &plan.timer,
            cases: &plan.cases,
            load: &plan.load,
            hearing_limit_hz: hearing_limit_of(plan),
            three_phase: plan.three_phase.as_ref(),
        }
    }
}

/// The check of a solution's chosen setting and of every alternative (each alternative's
/// disagreements named with its label), from the same records the plan writes.
pub fn check_solution(d: &Design, ev: &Evaluator, sol: &Solution) -> RegisterCheck {
    let topology = plan::topology_name(d);
    let check_one = |c: &Candidate| {
        let (pwm, timer) = (plan::pwm_out(ev, c, 0.0), plan::timer_out(ev, c));
        let (cases, load) = (plan::cases_out(c), plan::load_out(ev, c));
        let three_phase = plan::three_phase_out(d, ev, c);
        check(&RegisterView {
            topology: &topology,
            pwm: &pwm,
            timer: &timer,
            cases: &cases,
            load: &load,
            hearing_limit_hz: plan::hearing_limit_hz(ev),
            three_phase: three_phase.as_ref(),
        })
    };
    let Some(chosen) = &sol.chosen else {
        return RegisterCheck::default();
    };
    let mut out = check_one(chosen);
    for a in &sol.alternatives {
        let alt = check_one(&a.candidate);
        out.disagreements.extend(
            alt.disagreements
                .into_iter()
                .map(|m| format!("alternative {}: {m}", a.label)),
        );
    }
    out
}

/// Check a plan's claims on its registers. A plan without a timer setting (nothing chosen) has nothing
/// to check.
pub fn check(v: &RegisterView) -> RegisterCheck {
    let mut out = RegisterCheck::default();
    let Some(regs) = registers(v) else {
        out.not_checked
            .push("no realisable timer setting in the plan".into());
        return out;
    };
    check_pulses(v, &regs, &mut out);
    if v.topology == "three-phase" {
        match sinusoidal_sampling(v.three_phase) {
            Some(s) => check_sampling(&regs, s, &mut out),
            None => out
                .not_checked
                .push("the current-sampling window (six-step sampling)".into()),
        }
        match v.three_phase.filter(|t| t.modulation == "sinusoidal") {
            Some(t) => three_phase_currents::check(v, &regs, t, &mut out),
            None => out.not_checked.push(
                "six-step phase currents (the commutation is not modelled yet; see the README)"
                    .into(),
            ),
        }
        return out;
    }
    for case in v.cases {
        if !(0.0..=1.0).contains(&case.compare_duty) {
            // The plan already says this load is out of reach (its duty range
            // fails); there is no compare to check it on.
            out.not_checked.push(format!(
                "{} case: it needs a compare duty of {:.1} %, outside 0..100 %",
                case.name,
                100.0 * case.compare_duty
            ));
            continue;
        }
        match check_case(v, &regs, case) {
            Ok(c) => {
                compare_case(v, case, &c, &mut out.disagreements);
                out.cases.push(c);
            }
            Err(e) => out
                .disagreements
                .push(format!("{} case: the verifier refused it: {e}", case.name)),
        }
    }
    out
}

/// The registers as written.
fn registers(v: &RegisterView) -> Option<TimerRegisters> {
    let t = &v.timer;
    let clock_ok = v.timer.clock_hz.is_finite() && v.timer.clock_hz > 0.0;
    if t.period_ticks < 2 || t.divider == 0 || !clock_ok {
        return None;
    }
    Some(TimerRegisters {
        tick_s: t.divider as f64 / t.clock_hz,
        alignment: if v.pwm.alignment == "centre" {
            Alignment::Centre
        } else {
            Alignment::Edge
        },
        period_ticks: t.period_ticks,
        dead_time_s: if v.topology == "low-side" {
            0.0
        } else {
            t.dead_time_s
        },
    })
}

/// The stage the topology wires, with leg A at `compare`: bipolar drives leg B with the
/// inverse reference (same compare, polarity inverted); unipolar with the complementary
/// compare `duty_steps − compare` (the README's leg conventions).
fn stage(v: &RegisterView, regs: &TimerRegisters, compare: u64) -> Stage {
    let a = LegCompare::new(compare);
    match v.topology {
        "low-side" => Stage::LowSide(a),
        "h-bridge-bipolar" => Stage::HBridge {
            a,
            b: LegCompare::inverted(compare),
        },
        "h-bridge-unipolar" => Stage::HBridge {
            a,
            b: LegCompare::new(regs.duty_steps().saturating_sub(compare)),
        },
        _ => Stage::HalfBridge(a),
    }
}

/// Every output's pulses at the two compare limits.
fn check_pulses(v: &RegisterView, regs: &TimerRegisters, out: &mut RegisterCheck) {
    let p = &v.pwm;
    // The pulse checks are per leg: a leg of any bridge is a half-bridge leg.
    let leg = |c: u64| match v.topology {
        "low-side" => Stage::LowSide(LegCompare::new(c)),
        _ => Stage::HalfBridge(LegCompare::new(c)),
    };
    let shortest = |c: u64, high: bool| -> Result<f64, verify::VerifyError> {
        let timings = verify::output_timings(regs, &leg(c))?;
        let pick = |t: &verify::OutputTiming| match t.output {
            verify::Output::Switch => {
                if high {
                    t.shortest_on_s
                } else {
                    t.shortest_off_s
                }
            }
            verify::Output::High(_) if high => t.shortest_pulse_s(),
            verify::Output::Low(_) if !high => t.shortest_pulse_s(),
            _ => None,
        };
        Ok(timings
            .iter()
            .filter_map(pick)
            .fold(f64::INFINITY, f64::min))
    };
    match (
        shortest(p.compare_min, true),
        shortest(p.compare_max, false),
    ) {
        (Ok(hi), Ok(lo)) => {
            out.shortest_high_pulse_s = hi;
            out.shortest_low_pulse_s = lo;
        }
        (Err(e), _) | (_, Err(e)) => {
            out.disagreements
                .push(format!("compare limits: the verifier refused them: {e}"));
            return;
        }
    }
    let floor = p.min_pulse_s.max(0.0);
    let slack = TOLERANCES.time_abs_s;
    let mut need = |what: &str, got: f64, min: f64, strict: bool| {
        if got + slack < min || (strict && got <= 0.0) {
            out.disagreements.push(format!(
                "{what}: the registers give {} s, the plan promises at least {} s",
                fmt_g(got),
                fmt_g(min)
            ));
        }
    };
    need(
        "shortest high-side pulse at compare_min",
        out.shortest_high_pulse_s,
        floor,
        true,
    );
    need(
        "shortest low-side pulse at compare_max",
        out.shortest_low_pulse_s,
        floor,
        true,
    );
    if let Some(r) = p.refresh_s {
        need(
            "bootstrap refresh (low-side on-time) at compare_max",
            out.shortest_low_pulse_s,
            r,
            false,
        );
    }
}

fn circuit(v: &RegisterView, case: &CaseOut) -> Circuit {
    Circuit {
        r_ohm: v.load.r_ohm,
        l_h: v.load.l_h,
        back_emf_v: case.back_emf_v,
        v_bus_v: case.v_bus_v,
        r_ds_on_ohm: v.load.r_ds_on_ohm,
        v_sd_v: v.load.v_sd_v,
        v_f_v: v.load.freewheel_v_f_v.unwrap_or(0.0),
    }
}

/// Sub-ticks per tick of the finer timer the case claims are checked on (our own choice: one
/// compare step becomes 1/4096 of a count, far below any tolerance here).
const SUB_TICKS: u64 = 4096;

/// The sampling plan of a sinusoidal three-phase bridge (six-step samples otherwise).
fn sinusoidal_sampling(t: Option<&plan::ThreePhaseOut>) -> Option<&SamplingPlan> {
    t.filter(|t| t.modulation == "sinusoidal")
        .and_then(|t| t.sampling.as_ref())
}

/// At the trigger the plan writes, with a sampled leg at its highest allowed high-side
/// compare (and at the lowest compare), the leg's low side must have been on for the
/// settling time and stay on through the sample: the low-side shunt then carries the phase
/// current (defect 13 of the trial: the trigger sat where no low side conducted).
fn check_sampling(regs: &TimerRegisters, s: &SamplingPlan, out: &mut RegisterCheck) {
    let trigger = verify::SampleTrigger {
        counter: s.trigger_compare,
        counting_up: s.trigger_count == "up",
    };
    let periods = [
        [s.max_high_side_compare; 3],
        [0, s.max_high_side_compare / 2, 1],
    ];
    let samples = match verify::three_phase_samples(regs, &periods, trigger) {
        Ok(v) => v,
        Err(e) => {
            out.disagreements
                .push(format!("sampling: the verifier refused the trigger: {e}"));
            return;
        }
    };
    let slack = TOLERANCES.time_abs_s;
    let mut worst = (f64::INFINITY, f64::INFINITY);
    for (period, legs) in periods.iter().zip(&samples) {
        for (compare, leg) in period.iter().zip(legs) {
            let (since, until) = match (leg.state, leg.low_on_since_s, leg.low_on_until_s) {
                (verify::LegState::Low, Some(a), Some(b)) => (a, b),
                _ => (0.0, 0.0),
            };
            worst = (worst.0.min(since), worst.1.min(until));
            if since + slack < s.settle_time_s || until + slack < s.sample_time_s {
                out.disagreements.push(format!(
                    "sampling: at compare {compare} the trigger (compare {} counting {}) finds the low side on for {} s before and {} s after, the plan promises {} s settling and {} s sampling",
                    s.trigger_compare,
                    s.trigger_count,
                    fmt_g(since),
                    fmt_g(until),
                    fmt_g(s.settle_time_s),
                    fmt_g(s.sample_time_s)
                ));
            }
        }
    }
    out.sample_low_on_before_s = Some(worst.0);
    out.sample_low_on_after_s = Some(worst.1);
}

/// The verifier at the case's compare duty. The duty is a real number and the compare an
/// integer: the claims "this duty gives the load current, with this ripple and these lines"
/// are checked on a timer with [`SUB_TICKS`] finer ticks over the same period and dead time
/// (the compare quantised to 1/4096 of a count), so that quantisation does not mask the
/// physics; the compare limits are checked on the written registers ([`check_pulses`]).
fn check_case(
    v: &RegisterView,
    regs: &TimerRegisters,
    case: &CaseOut,
) -> Result<CaseCheck, verify::VerifyError> {
    let fine = TimerRegisters {
        tick_s: regs.tick_s / SUB_TICKS as f64,
        period_ticks: regs.period_ticks.saturating_mul(SUB_TICKS),
        ..*regs
    };
    let steps = fine.duty_steps();
    let compare = ((case.compare_duty * steps as f64).round().max(0.0) as u64).min(steps);
    let sim = verify::verify(&fine, &stage(v, &fine, compare), &circuit(v, case))?;
    let (line, near) = lowest_audible_line(&sim, v.hearing_limit_hz);
    Ok(CaseCheck {
        name: case.name.clone(),
        compare_duty: compare as f64 / steps as f64,
        mean_a: sim.mean_a,
        ripple_pp_a: sim.ripple_pp_a,
        continuous: sim.continuous,
        lowest_audible_line_hz: line,
        line_near_threshold: near,
    })
}

/// The hearing limit the plan judged against: the `audible` constraint's limit in hertz when
/// it has one, else the default.
fn hearing_limit_of(plan: &Plan) -> f64 {
    plan.constraints
        .iter()
        .find(|c| c.name == "audible" && c.unit == "Hz" && c.limit > 0.0)
        .map(|c| c.limit)
        .unwrap_or(DEFAULT_HEARING_LIMIT_HZ)
}

/// The lowest significant line at or below `limit_hz` (`None`: none), and whether some line
/// there lies within [`SIGNIFICANCE_GUARD_DB`] of the significance floor (then either verdict
/// is right within the two methods' rounding and the line is not compared).
fn lowest_audible_line(v: &Verification, limit_hz: f64) -> (Option<f64>, bool) {
    let lines = v.lines(limit_hz.max(v.frequency_hz * 64.0));
    let strongest = lines.iter().map(|l| l.rms_a).fold(0.0, f64::max);
    let floor = (strongest * 10f64.powf(-SIGNIFICANT_REL_DB / 20.0)).max(SIGNIFICANT_FLOOR_A_RMS);
    let guard = 10f64.powf(SIGNIFICANCE_GUARD_DB / 20.0);
    let audible = lines
        .iter()
        .filter(|l| l.frequency_hz <= limit_hz * (1.0 + 1e-12));
    let lowest = audible
        .clone()
        .find(|l| l.rms_a >= floor)
        .map(|l| l.frequency_hz);
    let ambiguous = audible
        .clone()
        .any(|l| l.rms_a > floor / guard && l.rms_a < floor * guard);
    (lowest, ambiguous)
}

/// The case's claims against the verifier's figures.
fn compare_case(v: &RegisterView, case: &CaseOut, c: &CaseCheck, out: &mut Vec<String>) {
    let t = &TOLERANCES;
    let rated = v
        .cases
        .first()
        .map(|r| r.load_current_a.abs())
        .unwrap_or(case.load_current_a.abs());
    if (c.mean_a - case.load_current_a).abs()
        > (t.mean_current_rel * rated).max(t.mean_current_abs_a)
    {
        out.push(format!(
            "{} case: at compare duty {:.6} the registers give a mean motor current of {} A, the plan {} A",
            case.name,
            case.compare_duty,
            fmt_g(c.mean_a),
            fmt_g(case.load_current_a)
        ));
    }
    let tol = (t.ripple_rel * case.ripple_peak_to_peak_a).max(t.ripple_abs_a);
    if (c.ripple_pp_a - case.ripple_peak_to_peak_a).abs() > tol {
        out.push(format!(
            "{} case: at compare duty {:.6} the registers give a ripple of {} A peak to peak, the plan {} A",
            case.name,
            case.compare_duty,
            fmt_g(c.ripple_pp_a),
            fmt_g(case.ripple_peak_to_peak_a)
        ));
    }
    let same = c.line_near_threshold
        || match (c.lowest_audible_line_hz, case.lowest_audible_line_hz) {
            (Some(a), Some(b)) => (a - b).abs() <= 1e-6 * b.abs().max(1.0),
            (None, None) => true,
            _ => false,
        };
    if !same {
        out.push(format!(
            "{} case: the lowest significant audible line is {} on the registers, {} in the plan",
            case.name,
            line_text(c.lowest_audible_line_hz),
            line_text(case.lowest_audible_line_hz)
        ));
    }
}

fn line_text(l: Option<f64>) -> String {
    l.map_or("none".into(), |f| format!("{} Hz", fmt_g(f)))
}

/// Six significant digits, for messages.
fn fmt_g(x: f64) -> String {
    format!("{x:.6e}")
}
