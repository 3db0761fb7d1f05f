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
        moved.push(format!(
            "junction {} -> {} ({:+.1} K)",
            format_quantity(a, Dimension::Temperature, 4),
            format_quantity(b, Dimension::Temperature, 4),
            b - a
        ));
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
pub fn sweep_table(rows: &[crate::sweep::SweepRow], style: Style) -> String {
    let mark = |r: &crate::sweep::SweepRow| {
        if r.chosen {
            '*'
        } else if r.feasible {
            '+'
        } else {
            ' '
        }
    };
    let paint_row = |r: &crate::sweep::SweepRow, line: String| {
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
pub fn sweep_csv(rows: &[crate::sweep::SweepRow]) -> String {
    let mut out = String::from(
        "requested_hz,frequency_hz,alignment,divider,period_ticks,resolution_bits,conduction_w,switching_w,output_capacitance_w,reverse_recovery_w,dead_time_diode_w,gate_drive_w,freewheel_diode_w,motor_ripple_copper_w,total_w,junction_c,junction_high_bus_c,ripple_pp_a,lowest_audible_line_hz,a_weighted_db,feasible,chosen,failing\n",
    );
    let opt = |v: Option<f64>| v.map(|v| format!("{v}")).unwrap_or_default();
    for r in rows {
        let l = &r.losses_w;
        out.push_str(&format!(
            "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n",
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
            r.failing.join(";")
        ));
    }
    out
}

/// Switches side by side: one column per switch, the best value of each
/// row marked with `<`.
pub fn compare_table(entries: &[(String, Option<Plan>)]) -> String {
    let names: Vec<String> = entries.iter().map(|(n, _)| n.clone()).collect();
    let w = 16usize;
    let mut out = format!("{:<22}", "");
    for n in &names {
        let short: String = n.chars().take(w - 1).collect();
        out.push_str(&format!("{short:>w$}"));
    }
    out.push('\n');
    type Getter = fn(&Plan) -> Option<f64>;
    type Shower = fn(f64) -> String;
    /// Label, value, lower is better, display.
    type CompareRow = (&'static str, Getter, bool, Shower);
    let rows: &[CompareRow] = &[
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
                out.push_str(&format!(
                    "{name}: infeasible: {}\n",
                    p.conflict.first().cloned().unwrap_or_default()
                ));
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
