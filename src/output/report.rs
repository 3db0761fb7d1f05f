//! The terminal report of `plan`, and the "what changed" summary between
//! two plans.

use crate::input::units::{Dimension, format_quantity};
use crate::output::context::Context;
use crate::output::plan::Plan;

/// The report `plan` prints: the rationale block without the input hashes.
pub fn plan_text(ctx: &Context) -> String {
    let mut out = String::new();
    for line in &ctx.rationale_lines {
        if line.starts_with(&ctx.tool) {
            out.push_str(&format!("{} plan for {}\n", ctx.tool, ctx.design));
            continue;
        }
        out.push_str(line);
        out.push('\n');
    }
    out
}

/// The explanation printed when a plan is infeasible: the findings that
/// block it (each named by its code) and, when no setting meets every
/// constraint, the search's conflict.
pub fn infeasible_text(plan: &Plan) -> String {
    let mut out = String::new();
    if !plan.blocked_by.is_empty() {
        let setting = if plan.search.constraints_met {
            format!(
                "the setting found ({}, {}-aligned) meets every constraint, but ",
                f(plan.pwm.frequency_hz),
                plan.pwm.alignment
            )
        } else {
            String::new()
        };
        out.push_str(&format!(
            "pwmplan: the plan for {} is infeasible: {setting}{} stop{} it\n",
            plan.design,
            if plan.blocked_by.len() == 1 {
                "an error finding".to_string()
            } else {
                format!("{} error findings", plan.blocked_by.len())
            },
            if plan.blocked_by.len() == 1 { "s" } else { "" }
        ));
        for b in &plan.blocked_by {
            out.push_str(&format!("  {b}\n"));
        }
    }
    if !plan.search.constraints_met || plan.blocked_by.is_empty() {
        out.push_str(&format!(
            "pwmplan: no timer setting for {} meets every constraint\n",
            plan.design
        ));
        for line in &plan.conflict {
            out.push_str(&format!("  {line}\n"));
        }
    }
    out
}

/// Relative move above which a figure is listed in "what changed" (own
/// choice).
pub const FIGURE_THRESHOLD_REL: f64 = 0.01;
/// Temperatures (°C) are listed when they move by more than this (own
/// choice: a relative change of a Celsius value means nothing).
pub const TEMPERATURE_THRESHOLD_K: f64 = 1.0;

/// The constants of an emitted code file: C `#define NAME VALUE` lines and
/// Rust `pub const NAME: TYPE = VALUE;` lines (the include guard, which has
/// no value, is left out), in file order.
pub fn emitted_constants(text: &str) -> Vec<(String, String)> {
    let mut out = Vec::new();
    for line in text.lines() {
        let t = line.trim();
        if let Some(rest) = t.strip_prefix("#define ") {
            let mut parts = rest.splitn(2, char::is_whitespace);
            let name = parts.next().unwrap_or("").trim();
            let value = parts.next().unwrap_or("").trim();
            if !name.is_empty() && !value.is_empty() && !name.contains('(') {
                out.push((name.to_string(), value.to_string()));
            }
        } else if let Some(rest) = line.strip_prefix("pub const ") {
            // Top-level only (the line starts the item); `const fn` is not a
            // constant.
            if rest.starts_with("fn ") {
                continue;
            }
            if let (Some(colon), Some(eq)) = (rest.find(':'), rest.find(" = ")) {
                let name = rest[..colon].trim();
                let value = rest[eq + 3..].trim().trim_end_matches(';').trim();
                out.push((name.to_string(), value.to_string()));
            }
        }
    }
    out
}

/// Constants that differ between an old and a new code file: `(name, old,
/// new)`, with an empty `old` for a new constant and an empty `new` for one
/// that is gone.
pub fn constant_changes(old_text: &str, new_text: &str) -> Vec<(String, String, String)> {
    let old = emitted_constants(old_text);
    let new = emitted_constants(new_text);
    let mut out = Vec::new();
    for (name, v) in &new {
        match old.iter().find(|(n, _)| n == name) {
            Some((_, ov)) if ov != v => out.push((name.clone(), ov.clone(), v.clone())),
            None => out.push((name.clone(), String::new(), v.clone())),
            _ => {}
        }
    }
    for (name, ov) in &old {
        if !new.iter().any(|(n, _)| n == name) {
            out.push((name.clone(), ov.clone(), String::new()));
        }
    }
    out
}

/// The plan.json sections whose numbers are figures (the emitted constants
/// are compared in the code files; the alternatives and the search
/// counters are not figures of the chosen setting).
const FIGURE_SECTIONS: &[&str] = &[
    "pwm",
    "timer",
    "losses_w",
    "thermal",
    "ripple",
    "acoustic",
    "cases",
    "three_phase",
    "feasible_band_hz",
    "constraints",
    "worst_case",
    "devices",
    "current_limit",
    "operating_range",
];

/// plan.json keys that only restate an emitted constant.
const CONSTANT_KEYS: &[&str] = &[
    "pwm.frequency_hz",
    "pwm.compare_min",
    "pwm.compare_max",
    "timer.clock_hz",
    "timer.counter_bits",
    "timer.divider",
    "timer.divider_register",
    "timer.period_ticks",
    "timer.period_register",
    "timer.duty_steps",
    "timer.dead_time_ticks",
    "timer.dead_time_code",
    "three_phase.sampling.trigger_compare",
    "three_phase.sampling.max_high_side_compare",
    "three_phase.dc_link.lead_counts",
    "three_phase.dc_link.min_vector_counts",
    "current_limit.threshold_code",
    "current_limit.filter_samples",
    "current_limit.blanking_ticks",
];

/// Every number of the figure sections of a plan by its plan.json path
/// (list items by their `name` or `role`), with its unit where the key or
/// the row says it; `None` for a null (runaway, no band).
fn plan_figures(plan: &Plan) -> Vec<(String, Option<f64>, String)> {
    fn unit_of(key: &str, row_unit: Option<&str>) -> String {
        if let Some(u) = row_unit {
            return u.to_string();
        }
        let last = key.rsplit('.').next().unwrap_or(key);
        let last = last.split('[').next().unwrap_or(last);
        for (suffix, unit) in [
            ("_k_per_w", "K/W"),
            ("_hz", "Hz"),
            ("_a", "A"),
            ("_w", "W"),
            ("_c", "°C"),
            ("_v", "V"),
            ("_s", "s"),
            ("_j", "J"),
            ("_db", "dB"),
        ] {
            if last.ends_with(suffix) {
                return unit.to_string();
            }
        }
        if key.starts_with("losses_w") || key.contains(".losses_w.") {
            return "W".into();
        }
        String::new()
    }
    fn walk(
        path: &str,
        v: &serde_json::Value,
        row_unit: Option<&str>,
        out: &mut Vec<(String, Option<f64>, String)>,
    ) {
        use serde_json::Value;
        match v {
            Value::Object(m) => {
                let unit = m.get("unit").and_then(|u| u.as_str()).or(row_unit);
                for (k, x) in m {
                    walk(&format!("{path}.{k}"), x, unit, out);
                }
            }
            Value::Array(items) => {
                for (i, x) in items.iter().enumerate() {
                    let key = x
                        .get("name")
                        .or_else(|| x.get("role"))
                        .and_then(|n| n.as_str())
                        .map(str::to_string)
                        .unwrap_or_else(|| i.to_string());
                    walk(&format!("{path}[{key}]"), x, row_unit, out);
                }
            }
            Value::Number(n) if !CONSTANT_KEYS.contains(&path) => {
                out.push((path.to_string(), n.as_f64(), unit_of(path, row_unit)));
            }
            Value::Null => out.push((path.to_string(), None, unit_of(path, row_unit))),
            _ => {}
        }
    }
    let mut out = Vec::new();
    let Ok(serde_json::Value::Object(top)) = serde_json::to_value(plan) else {
        return out;
    };
    for section in FIGURE_SECTIONS {
        match top.get(*section) {
            Some(serde_json::Value::Null) => {
                // A missing band or three-phase block: its numbers are
                // compared as absent.
                out.push((section.to_string(), None, unit_of(section, None)));
            }
            Some(v) => walk(section, v, None, &mut out),
            None => {}
        }
    }
    out
}

/// A figure in its unit (four significant digits).
fn figure_text(v: Option<f64>, unit: &str) -> String {
    let Some(v) = v else {
        return "none".into();
    };
    let dim = match unit {
        "A" => Some(Dimension::Current),
        "W" => Some(Dimension::Power),
        "°C" => Some(Dimension::Temperature),
        "K" => Some(Dimension::TemperatureDifference),
        "Hz" => Some(Dimension::Frequency),
        "V" => Some(Dimension::Voltage),
        "s" => Some(Dimension::Time),
        "J" => Some(Dimension::Energy),
        _ => None,
    };
    match dim {
        Some(d) => format_quantity(v, d, 4),
        None if unit.is_empty() => format!("{}", significant(v, 4)),
        None => format!("{} {unit}", significant(v, 4)),
    }
}

/// `v` rounded to `digits` significant digits.
fn significant(v: f64, digits: i32) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let scale = 10f64.powi(digits - 1 - v.abs().log10().floor() as i32);
    (v * scale).round() / scale
}

/// The figures that moved beyond the thresholds, one line each.
fn moved_figures(old: &Plan, new: &Plan) -> Vec<String> {
    let before = plan_figures(old);
    let after = plan_figures(new);
    let mut out = Vec::new();
    for (key, b, unit) in &after {
        let a = before.iter().find(|(k, _, _)| k == key).map(|(_, v, _)| *v);
        let line = match (a, b) {
            // New in this plan (a new key or a new row).
            (None, Some(_)) => Some(format!("{key} {} (new)", figure_text(*b, unit))),
            (None, None) | (Some(None), None) => None,
            (Some(a), b) if a.is_none() || b.is_none() => Some(format!(
                "{key} {} -> {}",
                figure_text(a, unit),
                figure_text(*b, unit)
            )),
            (Some(Some(a)), Some(b)) => {
                let (a, b) = (a, *b);
                let change = if unit == "°C" {
                    ((b - a).abs() > TEMPERATURE_THRESHOLD_K).then(|| format!("{:+.1} K", b - a))
                } else if a == 0.0 {
                    (b.abs() > 1e-12).then(|| "from zero".to_string())
                } else {
                    let rel = (b - a) / a.abs();
                    (rel.abs() > FIGURE_THRESHOLD_REL).then(|| {
                        let ratio = b / a;
                        if ratio >= 2.0 || (ratio > 0.0 && ratio <= 0.5) {
                            format!("x{ratio:.2}")
                        } else {
                            format!("{:+.1} %", 100.0 * rel)
                        }
                    })
                };
                change.map(|c| {
                    format!(
                        "{key} {} -> {} ({c})",
                        figure_text(Some(a), unit),
                        figure_text(Some(b), unit)
                    )
                })
            }
            _ => None,
        };
        out.extend(line);
    }
    for (key, a, unit) in &before {
        if a.is_some() && !after.iter().any(|(k, _, _)| k == key) {
            out.push(format!("{key} {} -> gone", figure_text(*a, unit)));
        }
    }
    out
}

fn f(v: f64) -> String {
    format_quantity(v, Dimension::Frequency, 5)
}

/// What moved between an earlier plan and this one: the setting, every
/// emitted constant that changed (`constants`, from
/// [`constant_changes`] on the old and new code file), every figure of the
/// plan that moved by more than [`FIGURE_THRESHOLD_REL`] (temperatures by
/// more than [`TEMPERATURE_THRESHOLD_K`]), the binding constraints and the
/// verdict; and which inputs changed (file by file, field by field). Empty
/// when nothing moved.
pub fn what_changed(old: &Plan, new: &Plan, constants: &[(String, String, String)]) -> Vec<String> {
    let mut moved = Vec::new();
    if old.pwm.frequency_hz != new.pwm.frequency_hz || old.pwm.alignment != new.pwm.alignment {
        moved.push(format!(
            "frequency {} {} -> {} {}",
            f(old.pwm.frequency_hz),
            old.pwm.alignment,
            f(new.pwm.frequency_hz),
            new.pwm.alignment
        ));
    }
    for (name, a, b) in constants {
        moved.push(match (a.is_empty(), b.is_empty()) {
            (true, _) => format!("constant {name} = {b} (new)"),
            (_, true) => format!("constant {name} (was {a}) is no longer emitted"),
            _ => format!("constant {name} {a} -> {b}"),
        });
    }
    let figures = moved_figures(old, new);
    let figures_moved = !figures.is_empty();
    moved.extend(figures.into_iter().map(|m| format!("figure {m}")));
    let binds = |p: &Plan| -> Vec<String> {
        p.constraints
            .iter()
            .filter(|c| c.binding)
            .map(|c| c.name.clone())
            .collect()
    };
    let (ob, nb) = (binds(old), binds(new));
    if ob != nb {
        let show = |v: &[String]| {
            if v.is_empty() {
                "none".to_string()
            } else {
                v.join(", ")
            }
        };
        moved.push(format!("binding constraint {} -> {}", show(&ob), show(&nb)));
    }
    if old.feasible != new.feasible {
        moved.push(format!("feasible {} -> {}", old.feasible, new.feasible));
    }
    if old.blocked_by != new.blocked_by {
        let show = |p: &Plan| {
            if p.blocked_by.is_empty() {
                "nothing".to_string()
            } else {
                p.blocked_by
                    .iter()
                    .map(|b| b.code.clone())
                    .collect::<Vec<_>>()
                    .join(", ")
            }
        };
        moved.push(format!("blocked by {} -> {}", show(old), show(new)));
    }
    let mut why = Vec::new();
    for n in &new.inputs {
        match old.inputs.iter().find(|o| o.file == n.file) {
            None => why.push(format!("{} is a new input", n.file)),
            Some(o) if o.sha256 != n.sha256 => {
                let mut fields = Vec::new();
                for (k, v) in &n.fields {
                    match o.fields.get(k) {
                        Some(ov) if ov != v => fields.push(format!("{k} {ov} -> {v}")),
                        None => fields.push(format!("{k} added ({v})")),
                        _ => {}
                    }
                }
                for k in o.fields.keys().filter(|k| !n.fields.contains_key(*k)) {
                    fields.push(format!("{k} removed"));
                }
                if fields.is_empty() {
                    why.push(format!("{} changed (comments or layout only)", n.file));
                } else {
                    why.push(format!("{} changed: {}", n.file, fields.join("; ")));
                }
            }
            _ => {}
        }
    }
    for o in &old.inputs {
        if !new.inputs.iter().any(|n| n.file == o.file) {
            why.push(format!("{} is no longer an input", o.file));
        }
    }
    if old.search.pinned_frequency_hz != new.search.pinned_frequency_hz {
        why.push(match new.search.pinned_frequency_hz {
            Some(p) => format!("the frequency is now pinned at {}", f(p)),
            None => "the frequency is no longer pinned".into(),
        });
    }
    if old.generated.split(' ').nth(1) != new.generated.split(' ').nth(1) {
        why.push("pwmplan's version changed".into());
    }
    if moved.is_empty() && why.is_empty() {
        return Vec::new();
    }
    let mut out = vec!["What changed since the previous plan:".to_string()];
    if moved.is_empty() {
        out.push("  settings: nothing moved".into());
    } else {
        out.extend(moved.into_iter().map(|m| format!("  moved: {m}")));
    }
    if figures_moved {
        out.push(format!(
            "  (figures are plan.json keys, listed when they moved by more than {:.0} %, temperatures by more than {:.0} K: pwmplan's own thresholds; every emitted constant that changed is listed)",
            100.0 * FIGURE_THRESHOLD_REL,
            TEMPERATURE_THRESHOLD_K
        ));
    }
    if why.is_empty() {
        out.push("  because: no input changed (model or tool change)".into());
    } else {
        out.extend(why.into_iter().map(|w| format!("  because: {w}")));
    }
    out
}

/// Terminal styling: colour only when writing to a terminal and `NO_COLOR`
/// is unset.
#[derive(Debug, Clone, Copy)]
pub struct Style {
    pub colour: bool,
}

impl Style {
    fn paint(&self, code: &str, text: &str) -> String {
        if self.colour {
            format!("\x1b[{code}m{text}\x1b[0m")
        } else {
            text.to_string()
        }
    }
}

fn mw(w: f64) -> String {
    format!("{:.1}", w * 1e3)
}

/// The sweep as two tables that each fit 80 columns: settings with the
/// constraint figures, then the loss split. Row marks: `*` the chosen
/// setting, `+` feasible, blank infeasible.
pub fn sweep_table(rows: &[crate::model::sweep::SweepRow], style: Style) -> String {
    let mark = |r: &crate::model::sweep::SweepRow| {
        if r.chosen {
            '*'
        } else if r.feasible {
            '+'
        } else {
            ' '
        }
    };
    let paint_row = |r: &crate::model::sweep::SweepRow, line: String| {
        if r.chosen {
            style.paint("1;32", &line)
        } else if !r.feasible {
            style.paint("2", &line)
        } else {
            line
        }
    };
    let mut out = String::new();
    out.push_str("   freq  mode   div  ticks  bits   Tj  Tj hi ripple lowest  fails\n");
    out.push_str("    kHz                           °C    °C      A    kHz\n");
    for r in rows {
        let tj = |t: Option<f64>| t.map(|t| format!("{t:.0}")).unwrap_or_else(|| "run".into());
        let lowest = r
            .lowest_audible_line_hz
            .map(|f| format!("{:.2}", f / 1e3))
            .unwrap_or_else(|| "none".into());
        let mut fails = r
            .failing
            .iter()
            .map(|n| short_constraint(n))
            .collect::<Vec<_>>()
            .join(",");
        if fails.chars().count() > 22 {
            fails = format!("{}…", fails.chars().take(21).collect::<String>());
        }
        let line = format!(
            "{}{:>7.3}  {:<4} {:>5} {:>6} {:>5.1} {:>4} {:>6} {:>6.3} {:>6}  {}",
            mark(r),
            r.frequency_hz / 1e3,
            if r.alignment == "centre" {
                "cntr"
            } else {
                "edge"
            },
            r.divider,
            r.period_ticks,
            r.resolution_bits,
            tj(r.junction_c),
            tj(r.junction_high_bus_c),
            r.ripple_pp_a,
            lowest,
            fails
        );
        out.push_str(&paint_row(r, line.trim_end().to_string()));
        out.push('\n');
    }
    out.push_str("\nLosses at the rated case, mW: cond conduction, sw switching, coss output\ncapacitance, rr reverse recovery, dt dead-time diode, gate gate drive,\ndiode freewheel diode, cu motor ripple copper\n");
    out.push_str("   freq    cond     sw   coss     rr     dt   gate  diode     cu   total\n");
    for r in rows {
        let l = &r.losses_w;
        let line = format!(
            "{}{:>7.3} {:>7} {:>6} {:>6} {:>6} {:>6} {:>6} {:>6} {:>6} {:>7}",
            mark(r),
            r.frequency_hz / 1e3,
            mw(l.conduction),
            mw(l.switching),
            mw(l.output_capacitance),
            mw(l.reverse_recovery),
            mw(l.dead_time_diode),
            mw(l.gate_drive),
            mw(l.freewheel_diode),
            mw(l.motor_ripple_copper),
            mw(l.total)
        );
        out.push_str(&paint_row(r, line));
        out.push('\n');
    }
    out.push_str("\n* chosen setting   + feasible (meets every constraint)   mode: edge/cntr aligned\nfails: tj/tj-hi junction at rated/highest supply, bits resolution, dead dead\ntime, duty duty range, band outside the design's frequency band\n");
    out
}

/// Short names of constraints for the narrow sweep table.
fn short_constraint(name: &str) -> &str {
    match name {
        "junction-rated" => "tj",
        "junction-high-bus" => "tj-hi",
        "ripple" => "ripple",
        "audible" => "audible",
        "resolution" => "bits",
        "dead-time" => "dead",
        "duty-range" => "duty",
        "frequency-band" => "band",
        other => other,
    }
}

/// The sweep as CSV: one header line, SI units in the column names.
pub fn sweep_csv(rows: &[crate::model::sweep::SweepRow]) -> String {
    let mut out = String::from(
        "requested_hz,frequency_hz,alignment,divider,period_ticks,resolution_bits,conduction_w,switching_w,output_capacitance_w,reverse_recovery_w,dead_time_diode_w,gate_drive_w,freewheel_diode_w,motor_ripple_copper_w,total_w,junction_c,junction_high_bus_c,ripple_pp_a,lowest_audible_line_hz,a_weighted_db,feasible,chosen,failing,range_ripple_pp_max_a,range_loss_min_w,range_loss_max_w,range_junction_max_c\n",
    );
    let opt = |v: Option<f64>| v.map(|v| format!("{v}")).unwrap_or_default();
    for r in rows {
        let l = &r.losses_w;
        out.push_str(&format!(
            "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n",
            r.requested_hz,
            r.frequency_hz,
            r.alignment,
            r.divider,
            r.period_ticks,
            r.resolution_bits,
            l.conduction,
            l.switching,
            l.output_capacitance,
            l.reverse_recovery,
            l.dead_time_diode,
            l.gate_drive,
            l.freewheel_diode,
            l.motor_ripple_copper,
            l.total,
            opt(r.junction_c),
            opt(r.junction_high_bus_c),
            r.ripple_pp_a,
            opt(r.lowest_audible_line_hz),
            opt(r.a_weighted_db),
            r.feasible,
            r.chosen,
            r.failing.join(";"),
            opt(r.range.and_then(|x| x.ripple_pp_max_a)),
            opt(r.range.map(|x| x.loss_min_w)),
            opt(r.range.map(|x| x.loss_max_w)),
            opt(r.range.and_then(|x| x.junction_max_c)),
        ));
    }
    out
}

/// Switches side by side: one column per switch, the best value of each
/// row marked with `<`.
type Getter = fn(&Plan) -> Option<f64>;
type Shower = fn(f64) -> String;
/// Label, value, lower is better, display.
type CompareRow = (&'static str, Getter, bool, Shower);
/// The rows of `compare`, in order (a table, kept out of the function).
const COMPARE_ROWS: &[CompareRow] = &[
    (
        "frequency",
        |p| Some(p.pwm.frequency_hz),
        false,
        |v| format!("{:.3} kHz", v / 1e3),
    ),
    (
        "divider x ticks",
        |p| Some((p.timer.divider * p.timer.period_ticks) as f64),
        false,
        |v| format!("{v:.0}"),
    ),
    (
        "dead time",
        |p| Some(p.timer.dead_time_s),
        true,
        |v| format!("{:.1} ns", v * 1e9),
    ),
    (
        "total loss",
        |p| Some(p.losses_w.total),
        true,
        |v| format!("{:.1} mW", v * 1e3),
    ),
    (
        "  conduction",
        |p| Some(p.losses_w.conduction),
        true,
        |v| format!("{:.1} mW", v * 1e3),
    ),
    (
        "  switching",
        |p| Some(p.losses_w.switching),
        true,
        |v| format!("{:.1} mW", v * 1e3),
    ),
    (
        "  output capacitance",
        |p| Some(p.losses_w.output_capacitance),
        true,
        |v| format!("{:.1} mW", v * 1e3),
    ),
    (
        "  reverse recovery",
        |p| Some(p.losses_w.reverse_recovery),
        true,
        |v| format!("{:.1} mW", v * 1e3),
    ),
    (
        "  dead-time diode",
        |p| Some(p.losses_w.dead_time_diode),
        true,
        |v| format!("{:.1} mW", v * 1e3),
    ),
    (
        "  gate drive",
        |p| Some(p.losses_w.gate_drive),
        true,
        |v| format!("{:.1} mW", v * 1e3),
    ),
    (
        "junction",
        |p| p.thermal.junction_c,
        true,
        |v| format!("{v:.1} °C"),
    ),
    (
        "junction margin",
        |p| p.thermal.junction_c.map(|t| p.thermal.limit_c - t),
        false,
        |v| format!("{v:.1} K"),
    ),
    (
        "ripple p-p",
        |p| Some(p.ripple.peak_to_peak_a),
        true,
        |v| format!("{v:.3} A"),
    ),
    (
        "resolution",
        |p| Some(p.timer.resolution_bits),
        false,
        |v| format!("{v:.1} bits"),
    ),
    (
        "findings",
        |p| Some(p.findings.iter().filter(|f| f.severity != "info").count() as f64),
        true,
        |v| format!("{v:.0}"),
    ),
];

pub fn compare_table(entries: &[(String, Option<Plan>)]) -> String {
    let names: Vec<String> = entries.iter().map(|(n, _)| n.clone()).collect();
    let w = 16usize;
    let mut out = format!("{:<22}", "");
    for n in &names {
        let short: String = n.chars().take(w - 1).collect();
        out.push_str(&format!("{short:>w$}"));
    }
    out.push('\n');
    let rows = COMPARE_ROWS;
    for (label, get, lower_is_better, show) in rows {
        let vals: Vec<Option<f64>> = entries
            .iter()
            .map(|(_, p)| p.as_ref().filter(|p| p.feasible).and_then(get))
            .collect();
        // Neutral rows (the setting itself) and rows where every value is
        // the same get no mark.
        let neutral = matches!(*label, "frequency" | "divider x ticks");
        let all_same = vals
            .iter()
            .flatten()
            .all(|v| Some(*v) == vals.iter().flatten().next().copied());
        let best = if neutral || all_same {
            None
        } else {
            vals.iter().flatten().copied().reduce(|a, b| {
                if (*lower_is_better && b < a) || (!*lower_is_better && b > a) {
                    b
                } else {
                    a
                }
            })
        };
        out.push_str(&format!("{label:<22}"));
        for v in &vals {
            let cell = match v {
                Some(x) => {
                    let m = if Some(*x) == best && vals.iter().flatten().count() > 1 {
                        "<"
                    } else {
                        " "
                    };
                    format!("{}{m}", show(*x))
                }
                None => "infeasible ".to_string(),
            };
            out.push_str(&format!("{cell:>w$}"));
        }
        out.push('\n');
    }
    out.push_str("\n< best in the row (feasible plans only)\n");
    for (name, p) in entries {
        match p {
            Some(p) if !p.feasible => {
                let reasons = p.infeasible_reasons();
                out.push_str(&format!(
                    "{name}: infeasible: {}\n",
                    reasons.first().cloned().unwrap_or_default()
                ));
                for r in reasons.iter().skip(1) {
                    out.push_str(&format!("{name}:   also {r}\n"));
                }
            }
            Some(p) => {
                for f in p.findings.iter().filter(|f| f.severity != "info") {
                    out.push_str(&format!("{name}: {} {}\n", f.severity, f.message));
                }
            }
            None => out.push_str(&format!("{name}: no setting could be evaluated\n")),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// C `#define`s with a value and top-level Rust `pub const`s are
    /// constants; the include guard, function-like macros, `const fn` and
    /// items inside an `impl` are not.
    #[test]
    fn constants_of_code_files() {
        let c = "#ifndef X_H\n#define X_H\n#define X_PERIOD_TICKS 1500U\n#define X_F(a) ((a) * 2)\n#define X_DEAD_TIME_CODE 0x0AU\n";
        assert_eq!(
            emitted_constants(c),
            [
                ("X_PERIOD_TICKS".to_string(), "1500U".to_string()),
                ("X_DEAD_TIME_CODE".to_string(), "0x0AU".to_string())
            ]
        );
        let rs = "pub const PERIOD_TICKS: u32 = 1500;\npub const fn f() -> u32 { 1 }\nimpl Duty {\n    pub const OFF: Duty = Duty(0);\n}\n";
        assert_eq!(
            emitted_constants(rs),
            [("PERIOD_TICKS".to_string(), "1500".to_string())]
        );
        let new = "#define X_PERIOD_TICKS 1400U\n#define X_NEW 1U\n";
        assert_eq!(
            constant_changes(c, new),
            [
                ("X_PERIOD_TICKS".into(), "1500U".into(), "1400U".into()),
                ("X_NEW".into(), String::new(), "1U".into()),
                ("X_DEAD_TIME_CODE".into(), "0x0AU".into(), String::new()),
            ]
        );
    }

    /// A figure is listed when it moves by more than 1 % (a temperature by
    /// more than 1 K), and not below.
    #[test]
    fn figures_beyond_the_threshold_are_listed() {
        let old: Plan = serde_json::from_str(include_str!(
            "../../tests/golden/belt-feeder/expected/plan.json"
        ))
        .expect("the golden plan parses");
        let mut new = old.clone();
        new.ripple.peak_to_peak_a *= 1.005;
        new.losses_w.total *= 1.02;
        new.thermal.junction_c = old.thermal.junction_c.map(|t| t + 0.5);
        new.thermal.junction_high_bus_c = old.thermal.junction_high_bus_c.map(|t| t + 1.5);
        let lines = what_changed(&old, &new, &[]);
        let text = lines.join("\n");
        assert!(text.contains("moved: figure losses_w.total "), "{text}");
        assert!(text.contains("(+2.0 %)"), "{text}");
        assert!(!text.contains("ripple.peak_to_peak_a"), "{text}");
        assert!(!text.contains("thermal.junction_c "), "{text}");
        assert!(
            text.contains("moved: figure thermal.junction_high_bus_c "),
            "{text}"
        );
        assert!(text.contains("(+1.5 K)"), "{text}");
        assert!(
            text.contains("more than 1 %, temperatures by more than 1 K"),
            "{text}"
        );
        assert!(what_changed(&old, &old, &[]).is_empty());
    }
}
