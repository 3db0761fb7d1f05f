//! The current limit's record turned into code literals and explanation
//! rows (the numbers come from `model::current_limit`; only formatted here).

use crate::input::units::{Dimension, format_quantity};
use crate::model::current_limit::CurrentLimitOut;
use crate::output::context::{LimitLiterals, Row};

fn q(v: f64, dim: Dimension) -> String {
    format_quantity(v, dim, 3)
}

fn ma(a: f64) -> String {
    format!("{}", (a * 1000.0).round().max(0.0) as u64)
}

/// The literals for the header and the module.
pub fn literals(l: Option<&CurrentLimitOut>) -> LimitLiterals {
    let Some(l) = l else {
        return LimitLiterals::default();
    };
    LimitLiterals {
        programmable: l.threshold_code.is_some(),
        threshold_code: l.threshold_code.unwrap_or(0).to_string(),
        threshold_mv: format!("{:.1}", l.threshold_v * 1000.0),
        trip_low_ma: ma(l.trip_low_a),
        trip_high_ma: ma(l.trip_high_a),
        has_filter: l.filter_samples.is_some(),
        filter_clock_hz: format!("{}", l.filter_clock_hz.unwrap_or(0.0).round() as u64),
        filter_samples: l.filter_samples.unwrap_or(0).to_string(),
        has_blanking: l.blanking_ticks.is_some(),
        blanking_ticks: l.blanking_ticks.unwrap_or(0).to_string(),
        blanking_ns: format!("{:.1}", l.blanking_s * 1e9),
        cycle_by_cycle: l.response == "cycle-by-cycle",
        response: l.response.clone(),
    }
}

/// The current limit explained, a row per choice with its margins.
pub fn rows(l: Option<&CurrentLimitOut>, min_pulse_s: f64) -> Vec<Row> {
    let Some(l) = l else {
        return Vec::new();
    };
    let a = |i: f64| q(i, Dimension::Current);
    let t = |s: f64| q(s, Dimension::Time);
    let row = |label: &str, value: String| Row {
        label: label.into(),
        value,
    };
    let threshold = match l.threshold_code {
        Some(k) => format!(
            "code {k} = {} at the comparator",
            q(l.threshold_v, Dimension::Voltage)
        ),
        None => format!(
            "fixed, {} at the comparator",
            q(l.threshold_v, Dimension::Voltage)
        ),
    };
    let tightest_peak = l.tightest_peak_limit();
    let mut out = vec![
        row("threshold", threshold),
        row(
            "trips",
            format!(
                "never below {}, always above {} (nominal {}; shunt in the {}; shunt, amplifier and comparator tolerances stacked worst-case)",
                a(l.trip_low_a),
                a(l.trip_high_a),
                a(l.trip_nominal_a),
                l.shunt_place.replace('-', " ")
            ),
        ),
        row(
            "operating peak",
            format!(
                "{} ({}); margin to the lowest trip {}",
                a(l.operating_peak_a),
                l.operating_basis,
                a(l.trip_low_a - l.operating_peak_a)
            ),
        ),
    ];
    if let Some(h) = tightest_peak {
        out.push(row(
            "peak",
            format!(
                "at most {} ({} over the highest trip: {} in the {} reaction{}); {} {} (margin {})",
                a(l.peak_a),
                a(l.peak_a - l.trip_high_a),
                a(l.overshoot_a),
                t(l.reaction_s),
                if l.response == "cycle-by-cycle" {
                    ", more where a chopped stall crosses the trip inside the uncut on-time"
                } else {
                    ""
                },
                h.name,
                a(h.current_a),
                a(h.current_a - l.peak_a)
            ),
        ));
    }
    out.extend(timing_rows(l, min_pulse_s));
    out.push(row("response", l.response.clone()));
    if let (Some(tj), Some(basis)) = (l.burst_junction_c, &l.burst_basis) {
        out.push(row(
            "burst",
            format!("junction {} ({basis})", q(tj, Dimension::Temperature)),
        ));
    }
    out.push(row(
        "stall",
        match l.stall_junction_c {
            Some(tj) => format!(
                "{} ({}); junction {} at hot R_ds(on) ({})",
                a(l.stall_current_a),
                l.stall_basis,
                q(tj, Dimension::Temperature),
                l.stall_thermal_basis
            ),
            None => l.stall_basis.clone(),
        },
    ));
    out
}

/// The reaction, blanking, filter and uncut on-time rows.
fn timing_rows(l: &CurrentLimitOut, min_pulse_s: f64) -> Vec<Row> {
    let t = |s: f64| q(s, Dimension::Time);
    let row = |label: &str, value: String| Row {
        label: label.into(),
        value,
    };
    let mut out = Vec::new();
    out.push(row(
        "reaction",
        format!(
            "{} = filter {} + comparator {} + driver {} + turn-off delay {} + voltage rise {}",
            t(l.reaction_s),
            t(l.reaction_parts.filter_s),
            t(l.reaction_parts.comparator_s),
            t(l.reaction_parts.driver_s),
            t(l.reaction_parts.turn_off_delay_s),
            t(l.reaction_parts.voltage_rise_s)
        ),
    ));
    let b = &l.blanking_parts;
    out.push(row(
        "blanking",
        format!(
            "{} ({}) against a turn-on transient of {} = driver {} + turn-on delay {} + current rise {} + recovery {} + ringing {} + amplifier settling {}",
            t(l.blanking_s),
            match l.blanking_ticks {
                Some(k) => format!("{k} blanking ticks"),
                None => "no blanking timer: the filter rejects it".into(),
            },
            t(l.blanking_need_s),
            t(b.driver_s),
            t(b.turn_on_delay_s),
            t(b.current_rise_s),
            t(b.recovery_s),
            if b.ringing_s > 0.0 { t(b.ringing_s) } else { "none (no loop inductance given)".into() },
            t(b.amplifier_settle_s)
        ),
    ));
    out.push(row(
        "filter",
        match (l.filter_samples, l.filter_clock_hz) {
            (Some(n), Some(f)) => format!(
                "{n} sample{} at {} (passes a fault held {}{})",
                if n == 1 { "" } else { "s" },
                q(f, Dimension::Frequency),
                t(f64::from(n) / f),
                if n > 1 {
                    format!(", rejects pulses under {}", t(f64::from(n - 1) / f))
                } else {
                    String::new()
                }
            ),
            _ => "none on this board".into(),
        },
    ));
    out.push(row(
        "uncut on-time",
        format!(
            "{} (blanking and reaction): the limit cannot cut a pulse before this; shorter pulses run their commanded length{}",
            t(l.shortest_controllable_pulse_s),
            if min_pulse_s > 0.0 {
                format!(" (the compare limits' shortest pulse is {})", t(min_pulse_s))
            } else {
                String::new()
            }
        ),
    ));
    out
}
