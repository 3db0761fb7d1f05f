//! The terminal report of `plan`, and the "what changed" summary between
//! two plans.

use crate::emit::Context;
use crate::plan::Plan;
use crate::units::{Dimension, format_quantity};

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

/// The explanation printed when no setting meets every constraint.
pub fn infeasible_text(plan: &Plan) -> String {
    let mut out = format!(
        "pwmplan: no timer setting for {} meets every constraint\n",
        plan.design
    );
    for line in &plan.conflict {
        out.push_str(&format!("  {line}\n"));
    }
    out.push_str("Nothing was written.\n");
    out
}

fn f(v: f64) -> String {
    format_quantity(v, Dimension::Frequency, 5)
}

/// What moved between an earlier plan and this one, and which inputs
/// changed (file by file, field by field). Empty when nothing moved.
pub fn what_changed(old: &Plan, new: &Plan) -> Vec<String> {
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
    if old.timer.divider != new.timer.divider {
        moved.push(format!(
            "divider {} -> {}",
            old.timer.divider, new.timer.divider
        ));
    }
    if old.timer.period_ticks != new.timer.period_ticks {
        moved.push(format!(
            "period {} -> {} ticks",
            old.timer.period_ticks, new.timer.period_ticks
        ));
    }
    if old.timer.dead_time_code != new.timer.dead_time_code
        || old.timer.dead_time_s != new.timer.dead_time_s
    {
        moved.push(format!(
            "dead time {} -> {} (code {} -> {})",
            format_quantity(old.timer.dead_time_s, Dimension::Time, 3),
            format_quantity(new.timer.dead_time_s, Dimension::Time, 3),
            old.timer
                .dead_time_code
                .map(|c| format!("0x{c:02X}"))
                .unwrap_or_else(|| "none".into()),
            new.timer
                .dead_time_code
                .map(|c| format!("0x{c:02X}"))
                .unwrap_or_else(|| "none".into())
        ));
    }
    if old.pwm.compare_min != new.pwm.compare_min || old.pwm.compare_max != new.pwm.compare_max {
        moved.push(format!(
            "compare limits {}..{} -> {}..{}",
            old.pwm.compare_min, old.pwm.compare_max, new.pwm.compare_min, new.pwm.compare_max
        ));
    }
    let dl = new.losses_w.total - old.losses_w.total;
    if dl.abs() >= 1e-4 {
        moved.push(format!(
            "total loss {} -> {} ({:+.0} mW)",
            format_quantity(old.losses_w.total, Dimension::Power, 3),
            format_quantity(new.losses_w.total, Dimension::Power, 3),
            dl * 1e3
        ));
    }
    if let (Some(a), Some(b)) = (old.thermal.junction_c, new.thermal.junction_c)
        && (a - b).abs() >= 0.05
    {
        moved.push(format!("junction {a:.1} °C -> {b:.1} °C ({:+.1} K)", b - a));
    }
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
    if why.is_empty() {
        out.push("  because: no input changed (model or tool change)".into());
    } else {
        out.extend(why.into_iter().map(|w| format!("  because: {w}")));
    }
    out
}
