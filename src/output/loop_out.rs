//! The current sampling and current loop records turned into code literals and explanation
//! rows (the numbers come from `model::current_loop`; only formatted here).

use crate::input::units::{Dimension, format_quantity};
use crate::model::current_loop::SamplingOut;
use crate::output::context::{LoopLiterals, Row, SamplingLiterals};
use crate::output::plan::Plan;

fn q(v: f64, dim: Dimension) -> String {
    format_quantity(v, dim, 4)
}

/// The sampling literals (defaults without a sampling plan).
pub fn sampling_literals(s: Option<&SamplingOut>) -> SamplingLiterals {
    let Some(s) = s else {
        return SamplingLiterals::default();
    };
    SamplingLiterals {
        fixed: s.trigger == "fixed",
        trigger_count: s.trigger_count.to_string(),
        counting_up: s.counting_up,
        trigger_add: s.trigger_add.to_string(),
        trigger_lead: s.lead_ticks.to_string(),
        compare_min: s.compare_min.to_string(),
        compare_max: s.compare_max.to_string(),
        sign: if s.sign < 0.0 { "-1" } else { "1" }.into(),
        state: s.state.clone(),
        both_extremes: s.top_trigger_count.is_some(),
        top_trigger_count: s.top_trigger_count.unwrap_or(0).to_string(),
        top_counting_up: s.top_counting_up,
    }
}

/// The loop's compare clamp: the plan's compare limits, narrowed by a sampling window.
fn loop_clamp(plan: &Plan) -> (u64, u64) {
    let (mut lo, mut hi) = (plan.pwm.compare_min, plan.pwm.compare_max);
    if let Some(s) = &plan.sampling {
        lo = lo.max(s.compare_min);
        hi = hi.min(s.compare_max);
    }
    if let Some(t) = plan.three_phase.as_ref().and_then(|t| t.sampling.as_ref()) {
        hi = hi.min(t.max_high_side_compare);
    }
    (lo, hi)
}

/// The loop literals (defaults without a loop).
pub fn loop_literals(plan: &Plan) -> LoopLiterals {
    let Some(l) = &plan.current_loop else {
        return LoopLiterals::default();
    };
    let (lo, hi) = loop_clamp(plan);
    let zero = (l.zero_volt_duty * plan.timer.duty_steps as f64).round() as u64;
    let fp = l.fixed_point.as_ref();
    LoopLiterals {
        update_divider: l.update_divider.to_string(),
        updates_per_period: l.updates_per_pwm_period.to_string(),
        counts_extremes: l.update_extremes.is_some(),
        update_extremes: l.update_extremes.unwrap_or(0).to_string(),
        rate_millihz: format!("{}", (l.rate_hz * 1000.0).round() as u64),
        rate_text: q(l.rate_hz, Dimension::Frequency),
        zero_compare: zero.to_string(),
        compare_lo: lo.to_string(),
        compare_hi: hi.to_string(),
        kp_v_per_a: format!("{:e}", l.kp_v_per_a),
        ki_v_per_a_s: format!("{:e}", l.ki_v_per_a_s),
        period_s: format!("{:e}", 1.0 / l.rate_hz),
        counts_per_volt: format!("{:e}", l.counts_per_volt),
        fixed: fp.is_some(),
        fraction_bits: fp.map_or(0, |f| f.fraction_bits).to_string(),
        kp_q: fp.map_or(0, |f| f.kp).to_string(),
        ki_q: fp.map_or(0, |f| f.ki).to_string(),
        zero_code: fp.map_or(0, |f| f.zero_code).to_string(),
        amps_per_code: fp.map_or(String::new(), |f| format!("{:.6e}", f.amps_per_code)),
        round_half: fp
            .map_or(0, |f| {
                if f.fraction_bits > 0 {
                    1u64 << (f.fraction_bits - 1)
                } else {
                    0
                }
            })
            .to_string(),
    }
}

/// The sampling explained, a row per choice.
pub fn sampling_rows(plan: &Plan) -> Vec<Row> {
    let Some(s) = &plan.sampling else {
        return Vec::new();
    };
    let t = |v: f64| q(v, Dimension::Time);
    let row = |label: &str, value: String| Row {
        label: label.into(),
        value,
    };
    let state = match s.state.as_str() {
        _ if s.top_trigger_count.is_some() => {
            "both counter extremes, once per half period: the middle of the on-time at the bottom and of the off-time at the top (a shunt in series with the motor carries it in both; a ramp's middle is the period's mean current: regular sampling)"
        }
        "on-time" => {
            "the middle of the on-time (a ramp's middle is the period's mean current: regular sampling)"
        }
        "off-time" => {
            "the middle of the off-time (a ramp's middle is the period's mean current: regular sampling)"
        }
        _ => {
            "the middle of the active state, leg A high and leg B low (the supply-return shunt carries the motor current only then)"
        }
    };
    let shifted = if s.shift_ticks > 0 {
        format!(
            ", which lies {} ticks (half the dead time) after the reference's",
            s.shift_ticks
        )
    } else {
        String::new()
    };
    let dir = |up: bool| if up { "up" } else { "down" };
    let trigger = if let Some(top) = s.top_trigger_count {
        format!(
            "count {} matched while counting {} and count {} matched while counting {} (two compare channels), each {} ticks before its state's middle{shifted}",
            s.trigger_count,
            dir(s.counting_up),
            top,
            dir(s.top_counting_up),
            s.lead_ticks
        )
    } else if s.trigger == "fixed" {
        format!(
            "count {} matched while counting {}, {} ticks before the state's middle{shifted}",
            s.trigger_count,
            dir(s.counting_up),
            s.lead_ticks
        )
    } else {
        format!(
            "(compare + {})/2 − {} each period, counting up (the middle moves with the duty{shifted}); {} at the rated compare",
            s.trigger_add, s.lead_ticks, s.trigger_at_rated
        )
    };
    vec![
        row("sampled at", state.into()),
        row("ADC trigger", trigger),
        row(
            "window",
            format!(
                "the sensed state must last {} (dead time, settling, acquisition): compares {}..{} ({:.1} %..{:.1} %)",
                t(s.min_state_s),
                s.compare_min,
                s.compare_max,
                100.0 * s.duty_min,
                100.0 * s.duty_max
            ),
        ),
        row(
            "sign",
            if s.sign < 0.0 {
                "the shunt reads the motor current reversed (it flows up through the low side)"
                    .into()
            } else {
                "the shunt reads the motor current as the plan counts it".into()
            },
        ),
    ]
}

/// The current loop explained, a row per choice; `fpu`: the board has one (a float helper
/// is emitted).
pub fn loop_rows(plan: &Plan, fpu: bool) -> Vec<Row> {
    let Some(l) = &plan.current_loop else {
        return Vec::new();
    };
    let t = |v: f64| q(v, Dimension::Time);
    let hz = |v: f64| q(v, Dimension::Frequency);
    let row = |label: &str, value: String| Row {
        label: label.into(),
        value,
    };
    let asked = l
        .rate_asked_hz
        .map_or("none asked: one update per PWM period".to_string(), |a| {
            format!("{} asked", hz(a))
        });
    let rate = if l.updates_per_pwm_period > 1 {
        format!(
            "{} = PWM {} × {}: sampled and updated at both counter extremes ({asked})",
            hz(l.rate_hz),
            hz(l.pwm_rate_hz),
            l.updates_per_pwm_period
        )
    } else {
        format!(
            "{} = PWM {} / update divider {} ({asked})",
            hz(l.rate_hz),
            hz(l.pwm_rate_hz),
            l.update_divider
        )
    };
    let mut rows = vec![
        row("rate", rate),
        row(
            "timing",
            format!(
                "the sample's middle {} after the update event (at the rated compare); its compare takes effect at the next update event, so conversion and control code must fit in {}; the loop sees the sample as the averaged current {} after the update event",
                t(l.sample_instant_s),
                t(l.compute_budget_s),
                t(l.sample_offset_s)
            ),
        ),
        row(
            "reading",
            match l.sample_bias_a {
                Some(b) => format!(
                    "at the rated case the sample reads the PWM period's mean current {} (the R–L's curvature; a straight ramp's middle is its mean); the integrator settles on the sample, so the mean is off by as much",
                    if b.abs() < 5e-5 {
                        "to within 0.05 mA".to_string()
                    } else {
                        format!("{} {}", if b > 0.0 { "plus" } else { "minus" }, q(b.abs(), Dimension::Current))
                    }
                ),
                None => "the sample reads the averaged current at the counter top (the middle of the low-side on-time)".into(),
            },
        ),
        row(
            "plant",
            if plan.three_phase.is_some() {
                format!(
                    "per phase R {} (winding and one channel at the rated junction temperature), L {}; {} of phase voltage per unit of leg duty; the same gains serve the d and q loops of a round-rotor motor, the cross-coupling ω_e·L left to the firmware's decoupling (the three-phase loop is not closed on the register-level simulation; the brushed loops are)",
                    q(l.resistance_ohm, Dimension::Resistance),
                    q(l.inductance_h, Dimension::Inductance),
                    q(l.volts_per_duty, Dimension::Voltage)
                )
            } else {
                format!(
                    "R {} (motor, and the channels, or on a single switch its channel and the freewheel diode by their shares of the period, at the rated junction temperature), L {}; {} per unit of compare duty",
                    q(l.resistance_ohm, Dimension::Resistance),
                    q(l.inductance_h, Dimension::Inductance),
                    q(l.volts_per_duty, Dimension::Voltage)
                )
            },
        ),
        row(
            "gains",
            format!(
                "K_p = α·L = {:.4} V/A, K_i = α·R = {:.4} V/(A·s), α = 2π·{} (internal model control, Harnefors and Nee 1998), set for a {:.0}° phase margin with the delay",
                l.kp_v_per_a,
                l.ki_v_per_a_s,
                hz(l.bandwidth_hz),
                l.phase_margin_asked_deg
            ),
        ),
        row(
            "loop",
            format!(
                "crossover {}, phase margin {:.1}°, step overshoot {:.1} %, rise to 90 % in {} (exact discrete model: sample, delay, PWM hold, R–L)",
                hz(l.crossover_hz),
                l.phase_margin_deg,
                l.overshoot_pct,
                t(l.rise_time_s)
            ),
        ),
    ];
    if let Some(f) = &l.fixed_point {
        rows.push(row(
            "fixed point",
            format!(
                "Q{}: K_p {} ({:.3}), K_i·T {} ({:.3}) in compare counts per ADC code; {:.4e} A per code, zero current at code {}",
                f.fraction_bits, f.kp, f.kp_exact, f.ki, f.ki_exact, f.amps_per_code, f.zero_code
            ),
        ));
    }
    let helpers = plan.three_phase.is_none() && (fpu || l.fixed_point.is_some());
    rows.push(row(
        "bus",
        format!(
            "the gains hold at the nominal supply; scale the output by V_nominal/V_bus where the bus moves (feed-forward), and hold the integrator{} while the output is clamped{}",
            if plan.three_phase.is_some() { "s" } else { "" },
            if helpers { " (the helpers do)" } else { "" }
        ),
    ));
    rows
}
