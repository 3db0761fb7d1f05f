//! Rendering the plan into files: the C header, the Rust module, the
//! rationale in Markdown, and `plan.json`, through handlebars templates in
//! strict mode fed by one typed context ([`Context`]).
//!
//! **Invariant:** templates compute nothing: numbers arrive formatted and
//! identifiers arrive cased (`heck`); a field a template names but the
//! context lacks is an error, not a blank. Output is deterministic: no
//! timestamps, fixed number formats, stable order. No I/O here except
//! reading an override template folder; files are returned as data.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use handlebars::Handlebars;
use heck::{ToShoutySnakeCase, ToSnakeCase};

use crate::input::units::{Dimension, format_quantity};
use crate::output::pieces;
use crate::output::plan::Plan;

// The context types and the sealing live in their own modules so `html` and
// `plan` need not import this one; their old paths stay.
pub use crate::output::context::{
    ConstraintRow, Context, LimitLiterals, Names, Row, StageLiterals, ThreePhaseLiterals,
    TimerLiterals,
};
pub use crate::output::seal::{MARKER_PLACEHOLDER, is_untouched, seal};

/// The bundled templates: (file name, text).
pub const BUNDLED_TEMPLATES: &[(&str, &str)] = &[
    (
        "c_header.h.hbs",
        include_str!("../../templates/c_header.h.hbs"),
    ),
    (
        "rust_module.rs.hbs",
        include_str!("../../templates/rust_module.rs.hbs"),
    ),
    (
        "rationale.md.hbs",
        include_str!("../../templates/rationale.md.hbs"),
    ),
];

/// One generated file: its name inside the output folder and its text.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GeneratedFile {
    pub name: PathBuf,
    pub text: String,
}

/// Why rendering failed.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum EmitError {
    /// A template in an override folder is missing or unreadable.
    Template { file: String, message: String },
    /// A template does not render (syntax, or a field the context lacks).
    Render { template: String, message: String },
}

impl std::fmt::Display for EmitError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            EmitError::Template { file, message } => write!(f, "{file}: {message}"),
            EmitError::Render { template, message } => write!(f, "template {template}: {message}"),
        }
    }
}

fn q(v: f64, d: Dimension, sig: usize) -> String {
    format_quantity(v, d, sig)
}

/// What one dead-time tick is: the dead-time generator counts its own clock, which may be
/// a division of the timer's, so a firmware engineer must not read the ticks as timer ticks.
fn dead_time_tick_text(ticks: Option<u64>, dead_time_s: f64, counter_hz: f64) -> String {
    let Some(n) = ticks.filter(|&n| n > 0 && dead_time_s > 0.0) else {
        return "no dead time inserted".into();
    };
    let tick_hz = n as f64 / dead_time_s;
    if (tick_hz / counter_hz - 1.0).abs() < 1e-6 {
        format!(
            "ticks of the counter's clock, {}",
            q(tick_hz, Dimension::Frequency, 5)
        )
    } else {
        format!(
            "ticks of the dead-time generator's clock, {}, not of the counter's {}",
            q(tick_hz, Dimension::Frequency, 5),
            q(counter_hz, Dimension::Frequency, 5)
        )
    }
}

fn watts(w: f64) -> String {
    q(w, Dimension::Power, 3)
}

fn opt_c(t: Option<f64>) -> String {
    t.map(|t| q(t, Dimension::Temperature, 3))
        .unwrap_or_else(|| "runaway".into())
}

/// Format a constraint's number in its unit.
fn constraint_number(v: f64, unit: &str) -> String {
    match unit {
        "°C" => q(v, Dimension::Temperature, 3),
        "K" => q(v, Dimension::TemperatureDifference, 3),
        "A" => q(v, Dimension::Current, 3),
        "V" => q(v, Dimension::Voltage, 3),
        "Hz" => q(v, Dimension::Frequency, 5),
        "Hz-margin" => q(v, Dimension::Frequency, 3),
        "s" => q(v, Dimension::Time, 3),
        "W" => q(v, Dimension::Power, 3),
        "bits" => format!("{v:.2} bits"),
        "lines" => format!("{v:.0} lines"),
        "" => format!("{:.2} %", 100.0 * v),
        _ => format!("{v}"),
    }
}

fn constraint_margin(m: f64, unit: &str) -> String {
    match unit {
        // A temperature difference is in kelvin.
        "°C" => q(m, Dimension::TemperatureDifference, 3),
        "Hz" => constraint_number(m, "Hz-margin"),
        other => constraint_number(m, other),
    }
}

/// Identifier names from the design name (`belt-feeder` → `BELT_FEEDER_PWM`).
pub fn names(design: &str) -> Names {
    let snake = format!("{}_pwm", design.to_snake_case());
    Names {
        c_macro: snake.to_shouty_snake_case(),
        c_function: snake.clone(),
        c_guard: format!("{}_H", snake.to_shouty_snake_case()),
        rust_module: snake.clone(),
        file_stem: snake,
    }
}

/// Build the template context of a plan.
pub fn context(plan: &Plan, fpu: bool) -> Context {
    let t = &plan.timer;
    let timer = timer_literals(plan);
    let has_dead_time = t.dead_time_ticks.is_some_and(|x| x > 0);
    let n = names(&plan.design);
    let tpl = three_phase_literals(plan);
    let summary = summary_rows(plan, &timer, &tpl, has_dead_time);
    let constraints = constraint_rows(plan);
    let losses = loss_rows(plan);
    let figures = operating_figures(plan);
    let alternatives = plan
        .alternatives
        .iter()
        .map(|a| Row {
            label: a.label.clone(),
            value: format!(
                "{} (divider {}, {} ticks, {}): {}",
                q(a.frequency_hz, Dimension::Frequency, 5),
                a.divider,
                a.period_ticks,
                a.alignment,
                a.trade
            ),
        })
        .collect();
    let findings = plan
        .findings
        .iter()
        .map(|f| Row {
            label: f.severity.clone(),
            // The code, for `pwmplan explain CODE`.
            value: format!("{} [{}]", f.message, f.code),
        })
        .collect();
    let inputs = plan
        .inputs
        .iter()
        .map(|i| Row {
            label: i.file.clone(),
            value: format!("sha256 {}", i.sha256),
        })
        .collect();
    let conventions = plan
        .conventions
        .iter()
        .map(|(k, v)| Row {
            label: k.clone(),
            value: v.clone(),
        })
        .collect();
    let worst_case = worst_case_rows(plan);
    let stage = stage_literals(plan);
    let limit = crate::output::limit::literals(plan.current_limit.as_ref());
    let armed = plan.current_limit.is_some().then_some(&limit);
    let c_init_steps = init_steps(
        &n,
        &timer,
        &stage,
        has_dead_time,
        plan.three_phase.is_some(),
        armed,
        Lang::C,
    );
    let rust_init_steps = init_steps(
        &n,
        &timer,
        &stage,
        has_dead_time,
        plan.three_phase.is_some(),
        armed,
        Lang::Rust,
    );
    let mut ctx = Context {
        tool: format!("pwmplan {}", env!("CARGO_PKG_VERSION")),
        marker: MARKER_PLACEHOLDER.into(),
        design: plan.design.clone(),
        names: n,
        timer,
        fpu,
        has_dead_time,
        three_phase: plan.three_phase.is_some(),
        three_phase_literals: tpl,
        current_limit: plan.current_limit.is_some(),
        limit,
        limit_rows: crate::output::limit::rows(plan.current_limit.as_ref(), plan.pwm.min_pulse_s),
        range_rows: crate::output::range_out::range_rows(plan.operating_range.as_ref()),
        sampling: plan.sampling.is_some(),
        sampling_literals: crate::output::loop_out::sampling_literals(plan.sampling.as_ref()),
        sampling_rows: crate::output::loop_out::sampling_rows(plan),
        current_loop: plan.current_loop.is_some(),
        loop_helper: plan.current_loop.is_some() && plan.three_phase.is_none(),
        loop_literals: crate::output::loop_out::loop_literals(plan),
        loop_rows: crate::output::loop_out::loop_rows(plan, fpu),
        rationale_lines: Vec::new(),
        init_steps: c_init_steps,
        rust_init_steps,
        stage,
        summary,
        constraints,
        losses,
        figures,
        alternatives,
        findings,
        worst_case,
        register_check: register_check_rows(plan),
        assumptions: plan.assumptions.clone(),
        cautions: plan.cautions.clone(),
        inputs,
        conventions,
    };
    ctx.rationale_lines = rationale_lines(&ctx);
    ctx
}

/// The timer's literals, ready for code.
fn timer_literals(plan: &Plan) -> TimerLiterals {
    let t = &plan.timer;
    let big = [t.duty_steps, t.period_ticks, t.period_register, t.divider]
        .iter()
        .any(|v| *v > u64::from(u32::MAX));
    let dt_code = t.dead_time_code.unwrap_or(0);
    TimerLiterals {
        clock_hz: format!("{}", t.clock_hz.round() as u64),
        c_clock_hz: format!("{}UL", t.clock_hz.round() as u64),
        divider: t.divider.to_string(),
        divider_register: t.divider_register.to_string(),
        period_ticks: t.period_ticks.to_string(),
        period_register: t.period_register.to_string(),
        duty_steps: t.duty_steps.to_string(),
        centre_aligned: plan.pwm.alignment == "centre",
        alignment: plan.pwm.alignment.clone(),
        dead_time_code: format!("0x{dt_code:02X}"),
        dead_time_ticks: t.dead_time_ticks.unwrap_or(0).to_string(),
        dead_time_ns: format!("{:.1}", t.dead_time_s * 1e9),
        dead_time_tick_text: dead_time_tick_text(
            t.dead_time_ticks,
            t.dead_time_s,
            t.clock_hz / t.divider as f64,
        ),
        compare_min: plan.pwm.compare_min.to_string(),
        compare_max: plan.pwm.compare_max.to_string(),
        dead_time_comp: format!("{}", plan.pwm.dead_time_comp_counts.round() as u64),
        frequency_millihz: format!("{}", (plan.pwm.frequency_hz * 1000.0).round() as u64),
        frequency_text: q(plan.pwm.frequency_hz, Dimension::Frequency, 5),
        c_count_type: if big { "uint64_t" } else { "uint32_t" }.into(),
        rust_count_type: if big { "u64" } else { "u32" }.into(),
    }
}

/// The summary rows: the verdict when infeasible, then the setting.
fn summary_rows(
    plan: &Plan,
    timer: &TimerLiterals,
    tpl: &ThreePhaseLiterals,
    has_dead_time: bool,
) -> Vec<Row> {
    let t = &plan.timer;
    let mut summary = Vec::new();
    if !plan.feasible {
        // Written only with `plan --force`: the reason leads every output.
        summary.push(Row {
            label: "VERDICT".into(),
            value: format!(
                "INFEASIBLE, do not use these settings: {}",
                plan.infeasible_reasons().join("; ")
            ),
        });
    }
    summary.extend([
        Row {
            label: "design".into(),
            value: plan.design.clone(),
        },
        Row {
            label: "board".into(),
            value: plan.board.clone(),
        },
        Row {
            label: "switch".into(),
            value: plan.switch.clone(),
        },
        Row {
            label: "topology".into(),
            value: plan.topology.clone(),
        },
        Row {
            label: "objective".into(),
            value: format!(
                "{} at {} values",
                plan.objective,
                if plan.basis == "worst-case" {
                    "worst-case"
                } else {
                    "typical"
                }
            ),
        },
        Row {
            label: "frequency".into(),
            value: format!("{}, {}-aligned", timer.frequency_text, plan.pwm.alignment),
        },
        Row {
            label: "timer".into(),
            value: format!(
                "clock {}; divider {} (register {}); period {} ticks (register {})",
                q(t.clock_hz, Dimension::Frequency, 4),
                t.divider,
                t.divider_register,
                t.period_ticks,
                t.period_register
            ),
        },
        Row {
            label: "resolution".into(),
            value: format!(
                "{} duty steps ({:.1} bits)",
                t.duty_steps, t.resolution_bits
            ),
        },
    ]);
    if has_dead_time || t.dead_time_need_s > 0.0 {
        summary.push(Row {
            label: "dead time".into(),
            value: format!(
                "{} = {} ticks (code {}); needed {}",
                q(t.dead_time_s, Dimension::Time, 3),
                timer.dead_time_ticks,
                timer.dead_time_code,
                q(t.dead_time_need_s, Dimension::Time, 3)
            ),
        });
    }
    summary.push(Row {
        label: "duty limits".into(),
        value: format!(
            "compare {} to {} ({:.1} % to {:.1} %); the load needs {:.1} % to {:.1} %",
            plan.pwm.compare_min,
            plan.pwm.compare_max,
            100.0 * plan.pwm.duty_min,
            100.0 * plan.pwm.duty_max,
            100.0 * plan.pwm.duty_needed[0],
            100.0 * plan.pwm.duty_needed[1]
        ),
    });
    if let Some(tp) = &plan.three_phase {
        summary.push(Row {
            label: "three-phase".into(),
            value: three_phase_summary(tp),
        });
        if !tpl.sampling_lines.is_empty() {
            summary.push(Row {
                label: "current sampling".into(),
                value: tpl.sampling_lines.join(" "),
            });
        }
    }
    if let Some([a, b]) = plan.feasible_band_hz {
        summary.push(Row {
            label: "feasible band".into(),
            value: format!(
                "{} to {}",
                q(a, Dimension::Frequency, 5),
                q(b, Dimension::Frequency, 5)
            ),
        });
    }
    summary
}

/// The constraint rows, numbers in their units.
fn constraint_rows(plan: &Plan) -> Vec<ConstraintRow> {
    plan.constraints
        .iter()
        .map(|c| ConstraintRow {
            name: c.name.clone(),
            limit: constraint_number(c.limit, &c.unit),
            value: c
                .value
                .map(|v| constraint_number(v, &c.unit))
                .unwrap_or_else(|| "none".into()),
            margin: c
                .margin
                .map(|m| constraint_margin(m, &c.unit))
                .unwrap_or_else(|| "none".into()),
            status: match (c.pass, c.binding) {
                (true, true) => "binds".into(),
                (true, false) => "ok".into(),
                (false, _) => "FAILS".into(),
            },
        })
        .collect()
}

/// Whether the plan drives a three-phase bridge in six-step.
fn six_step(plan: &Plan) -> bool {
    plan.three_phase
        .as_ref()
        .is_some_and(|t| t.modulation == "six-step")
}

/// The loss rows, one per term, then the total.
fn loss_rows(plan: &Plan) -> Vec<Row> {
    let l = &plan.losses_w;
    let mut losses = vec![
        Row {
            label: "conduction".into(),
            value: watts(l.conduction),
        },
        Row {
            label: "switching".into(),
            value: watts(l.switching),
        },
        Row {
            label: "output capacitance".into(),
            value: watts(l.output_capacitance),
        },
        Row {
            label: "reverse recovery".into(),
            value: watts(l.reverse_recovery),
        },
        Row {
            // Under six-step the body diodes also carry the off-time
            // freewheel and each commutation's.
            label: if six_step(plan) {
                "body diode"
            } else {
                "dead-time diode"
            }
            .into(),
            value: watts(l.dead_time_diode),
        },
        Row {
            label: "gate drive".into(),
            value: watts(l.gate_drive),
        },
    ];
    if plan.topology == "low-side" {
        losses.push(Row {
            label: "freewheel diode".into(),
            value: watts(l.freewheel_diode),
        });
    }
    losses.push(Row {
        label: "motor ripple copper".into(),
        value: watts(l.motor_ripple_copper),
    });
    losses.push(Row {
        label: "total".into(),
        value: watts(l.total),
    });
    losses
}

/// The operating figures, each labelled with the case it is from: the
/// cases themselves, the junction and the ripple of each case, and the
/// audibility of the rated case.
fn operating_figures(plan: &Plan) -> Vec<Row> {
    let mut rows: Vec<Row> = plan
        .cases
        .iter()
        .map(|c| Row {
            label: format!("{} case", c.name),
            value: format!(
                "{} supply, {} ambient, {} load",
                q(c.v_bus_v, Dimension::Voltage, 3),
                q(c.t_ambient_c, Dimension::Temperature, 3),
                q(c.load_current_a, Dimension::Current, 3)
            ),
        })
        .collect();
    rows.push(Row {
        label: "junction".into(),
        value: format!(
            "{} at the rated case, {} at the high-bus case (limit {})",
            opt_c(plan.thermal.junction_c),
            opt_c(plan.thermal.junction_high_bus_c),
            q(plan.thermal.limit_c, Dimension::Temperature, 3)
        ),
    });
    let mode = |continuous: bool| {
        if continuous {
            "continuous"
        } else {
            "discontinuous"
        }
    };
    for r in &plan.ripple.by_case {
        rows.push(Row {
            label: format!("ripple, {} case", r.case),
            value: format!(
                "{} peak to peak at {} ({}), {} rms{}",
                q(r.peak_to_peak_a, Dimension::Current, 3),
                q(r.frequency_hz, Dimension::Frequency, 5),
                mode(r.continuous),
                q(r.ac_rms_a, Dimension::Current, 3),
                if r.case == plan.ripple.peak_to_peak_case && plan.ripple.by_case.len() > 1 {
                    "; the larger, checked against the ripple limit"
                } else {
                    ""
                }
            ),
        });
    }
    rows.push(Row {
        label: format!("audibility, {} case", plan.acoustic.case),
        value: format!(
            "{}; A-weighted in-band level {}",
            plan.acoustic.verdict,
            plan.acoustic
                .a_weighted_db
                .map(|d| format!("{d:.1} dB(A) re 1 A"))
                .unwrap_or_else(|| "none".into())
        ),
    });
    rows
}

/// The register-level check's rows: the pulses at the compare limits and,
/// per case, the verifier's mean current and ripple at the case's duty.
fn register_check_rows(plan: &Plan) -> Vec<Row> {
    let r = &plan.register_check;
    let t = |s: f64| format_quantity(s, Dimension::Time, 3);
    let a = |i: f64| format_quantity(i, Dimension::Current, 4);
    // A board without a minimum pulse says so in words, not as "0.00 s".
    let min_pulse = if plan.pwm.min_pulse_s > 0.0 {
        format!("minimum pulse {}", t(plan.pwm.min_pulse_s))
    } else {
        "the board gives no minimum pulse".into()
    };
    let mut pulses = format!(
        "shortest high-side pulse {} at COMPARE_MIN, shortest low-side on-time {} at COMPARE_MAX ({min_pulse}",
        t(r.shortest_high_pulse_s),
        t(r.shortest_low_pulse_s),
    );
    if let Some(refresh) = plan.pwm.refresh_s {
        pulses.push_str(&format!(", bootstrap refresh {}", t(refresh)));
    }
    pulses.push(')');
    let mut rows = vec![Row {
        label: "pulses".into(),
        value: pulses,
    }];
    for c in &r.cases {
        let plan_case = plan.cases.iter().find(|k| k.name == c.name);
        let (load, ripple) = plan_case.map_or((f64::NAN, f64::NAN), |k| {
            (k.load_current_a, k.ripple_peak_to_peak_a)
        });
        rows.push(Row {
            label: format!("{} case", c.name),
            value: format!(
                "at compare duty {:.3} %: mean current {} (plan {}), ripple {} peak to peak (plan {})",
                100.0 * c.compare_duty,
                a(c.mean_a),
                a(load),
                a(c.ripple_pp_a),
                a(ripple)
            ),
        });
    }
    if let (Some(before), Some(after)) = (r.sample_low_on_before_s, r.sample_low_on_after_s) {
        rows.push(Row {
            label: "sampling".into(),
            value: format!(
                "at the written trigger, over the compares the plan allows, the sampled state has held {} before and holds {} after (settling and sampling need no more)",
                t(before),
                t(after)
            ),
        });
    }
    if let (Some(before), Some(after)) = (r.back_emf_before_s, r.back_emf_after_s) {
        rows.push(Row {
            label: "back-EMF sampling".into(),
            value: format!(
                "at the written back-EMF triggers, at the ends of the on-times each window claims and at the rated one, the chopping leg's state read has held {} before and holds {} after (settling and sampling need no more)",
                t(before),
                t(after)
            ),
        });
    }
    if let (Some(peak), Some(mean), Some(l)) = (
        r.limit_stall_peak_a,
        r.limit_stall_mean_a,
        plan.current_limit.as_ref(),
    ) {
        rows.push(Row {
            label: "current limit".into(),
            value: format!(
                "trip window {} to {} over the 32 tolerance corners; a stall chopped on the written threshold, blanking and filter peaks at {} (plan {}) with a mean of {} (plan's stall current {})",
                a(l.trip_low_a),
                a(l.trip_high_a),
                a(peak),
                a(l.peak_a),
                a(mean),
                a(l.stall_current_a)
            ),
        });
    }
    for n in &r.not_checked {
        rows.push(Row {
            label: "not checked".into(),
            value: n.clone(),
        });
    }
    rows
}

/// The worst-case rows: value, limit, where it occurs, verdict.
fn worst_case_rows(plan: &Plan) -> Vec<Row> {
    let w = &plan.worst_case;
    let mut rows: Vec<Row> = w
        .rows
        .iter()
        .map(|r| {
            let num = |v: f64| constraint_number(v, &r.unit);
            let value = match (r.value, r.limit) {
                (Some(v), Some(l)) if r.name == "dead-time" => {
                    format!("needs {} against {} chosen", num(v), num(l))
                }
                (Some(v), Some(l)) => format!("{} (limit {})", num(v), num(l)),
                (Some(v), None) => num(v),
                (None, _) if r.name == "audible" => String::new(),
                (None, _) => "no value".into(),
            };
            let verdict = if r.pass { "ok" } else { "FAILS" };
            let sep = if value.is_empty() { "" } else { "; " };
            Row {
                label: r.name.clone(),
                value: format!("{value}{sep}{verdict}; {}", r.corner),
            }
        })
        .collect();
    for u in &w.unreachable {
        rows.push(Row {
            label: "unreachable".into(),
            value: format!("FAILS; the rated current cannot be reached at {u}"),
        });
    }
    rows.push(Row {
        label: "corners".into(),
        value: format!("{} evaluated; {}", w.corners, w.pruning),
    });
    rows
}

/// The three-phase summary line: modulation, operating point, channels.
fn three_phase_summary(tp: &crate::output::plan::ThreePhaseOut) -> String {
    let how = match (&tp.zero_sequence, &tp.chop) {
        (Some(z), _) => format!("{}, zero sequence {z}", tp.modulation),
        (_, Some(c)) => format!("{}, {c} chopping", tp.modulation),
        _ => tp.modulation.clone(),
    };
    let point = match (
        tp.rated.modulation_index,
        tp.rated.power_factor,
        tp.rated.chop_duty,
    ) {
        (Some(m), Some(pf), _) => format!("m {m:.3}, cos φ {pf:.3}"),
        (_, _, Some(d)) => format!("chopping duty {:.1} %", 100.0 * d),
        _ => String::new(),
    };
    format!(
        "{how}; {point} at the rated case ({} {}, {} mean from the DC link); electrical frequency {}; channels {} share the period, the compare limits and the dead time",
        q(tp.rated.current_a, Dimension::Current, 3),
        tp.current_meaning,
        q(tp.rated.dc_link_mean_a, Dimension::Current, 3),
        q(tp.electrical_frequency_hz, Dimension::Frequency, 4),
        tp.channels.join(", ")
    )
}

/// The six-step commutation table as code literals and rationale lines.
fn six_step_literals(
    out: &mut ThreePhaseLiterals,
    table: &crate::output::plan::SixStepTable,
    chop: Option<&str>,
) {
    use crate::output::plan::SectorPhases;
    let index = |p: &str| match p {
        "A" => "0",
        "B" => "1",
        _ => "2",
    };
    let row = |forward: bool, pick: fn(&SectorPhases) -> &str| {
        table
            .sectors
            .iter()
            .map(|r| index(pick(if forward { &r.forward } else { &r.reverse })))
            .collect::<Vec<_>>()
            .join(", ")
    };
    out.six_step = true;
    out.six_step_positive_forward = row(true, |p| &p.positive);
    out.six_step_negative_forward = row(true, |p| &p.negative);
    out.six_step_floating_forward = row(true, |p| &p.floating);
    out.six_step_positive_reverse = row(false, |p| &p.positive);
    out.six_step_negative_reverse = row(false, |p| &p.negative);
    out.six_step_floating_reverse = row(false, |p| &p.floating);
    out.six_step_chop_low_side = chop == Some("low-side");
    out.six_step_complementary = chop == Some("complementary");
    let mut lines = vec![
        "Sector k (0 to 5) covers the electrical angle 30° + 60°·k to 90° + 60°·k of phase A's back-EMF (e_a = E·sin θ, or the trapezoid through zero at θ = 0; B and C lag by 120° and 240°). Forward runs A → B → C; reverse swaps the positive and negative phases.".to_string(),
        String::new(),
        "| sector | θ from | θ to | forward + | forward − | forward open | reverse + | reverse − | reverse open |".into(),
        "|---:|---:|---:|---|---|---|---|---|---|".into(),
    ];
    for r in &table.sectors {
        lines.push(format!(
            "| {} | {}° | {}° | {} | {} | {} | {} | {} | {} |",
            r.sector,
            r.from_deg,
            r.to_deg,
            r.forward.positive,
            r.forward.negative,
            r.forward.floating,
            r.reverse.positive,
            r.reverse.negative,
            r.reverse.floating
        ));
    }
    lines.push(String::new());
    lines.push(format!("In each sector {}.", table.chopping));
    out.six_step_lines = lines;
}

/// The three-phase literals of a plan (defaults for the other stages).
fn three_phase_literals(plan: &Plan) -> ThreePhaseLiterals {
    let Some(tp) = &plan.three_phase else {
        return ThreePhaseLiterals {
            adc_trigger_compare: "0".into(),
            trigger_ns: "0".into(),
            sampling_compare_max: "0".into(),
            ..ThreePhaseLiterals::default()
        };
    };
    let t = |x: f64| q(x, Dimension::Time, 3);
    let mut out = ThreePhaseLiterals {
        modulation: tp.modulation.clone(),
        sinusoidal: tp.modulation == "sinusoidal",
        adc_trigger_compare: "0".into(),
        trigger_ns: "0".into(),
        sampling_compare_max: "0".into(),
        sampling_lines: Vec::new(),
        dc_link: false,
        dc_link_min_vector: "0".into(),
        dc_link_lead: "0".into(),
        ..ThreePhaseLiterals::default()
    };
    if let Some(table) = &tp.six_step_table {
        six_step_literals(&mut out, table, tp.chop.as_deref());
    }
    if let Some(b) = &tp.back_emf {
        crate::output::back_emf_out::back_emf_literals(
            &mut out,
            b,
            tp.chop.as_deref().unwrap_or(""),
            plan.pwm.frequency_hz,
        );
    }
    if let Some(d) = &tp.dc_link {
        out.dc_link = true;
        out.dc_link_min_vector = d.min_vector_counts.to_string();
        out.dc_link_lead = d.lead_counts.to_string();
        out.sampling_lines = dc_link_lines(d, plan.timer.dead_time_s);
        return out;
    }
    match &tp.sampling {
        Some(s) => {
            let needed = s
                .needed_duty
                .map(|d| format!("{:.1} %", 100.0 * d))
                .unwrap_or_else(|| "no value".into());
            out.adc_trigger_compare = s.trigger_compare.to_string();
            out.trigger_ns = format!("{:.1}", s.trigger_before_top_s * 1e9);
            out.sampling_compare_max = s.max_high_side_compare.to_string();
            out.sampling_lines = vec![
                format!(
                    "PWM mode: {}. The ADC starts at compare {} matched on the UP-count, {} before the counter top, so the {} sample{} is centred on the top, the middle of the low-side on-time.",
                    s.pwm_mode,
                    s.trigger_compare,
                    t(s.trigger_before_top_s),
                    t(s.sample_time_s),
                    if s.conversion == "sequential" {
                        " (both currents, converted one after the other)"
                    } else {
                        ""
                    }
                ),
                if tp.chop.as_deref() == Some("low-side") {
                    format!(
                        "The window needs the low side on for 2 × (trigger lead {} + dead time {} + settling {}) = {} of the {} period, so the chopping low side's duty must be at least {:.1} %; the load needs {}.",
                        t(s.trigger_before_top_s),
                        t(plan.timer.dead_time_s),
                        t(s.settle_time_s),
                        t(s.min_low_side_on_s),
                        t(s.period_s),
                        100.0 * (1.0 - s.max_high_side_duty),
                        needed
                    )
                } else {
                    format!(
                        "The window needs the low side on for 2 × (trigger lead {} + dead time {} + settling {}) = {} of the {} period, so a sampled leg's high-side duty is at most {:.1} % (compare {}); the load needs {}.",
                        t(s.trigger_before_top_s),
                        t(plan.timer.dead_time_s),
                        t(s.settle_time_s),
                        t(s.min_low_side_on_s),
                        t(s.period_s),
                        100.0 * s.max_high_side_duty,
                        s.max_high_side_compare,
                        needed
                    )
                },
            ];
        }
        None => out.sampling_lines = vec![
            "No sampling window fits the period: settling, dead time and sampling are longer than the low-side time.".into(),
        ],
    }
    out
}

/// The DC-link shunt's sampling explained, one line each.
fn dc_link_lines(d: &crate::output::plan::DcLinkPlan, dead_s: f64) -> Vec<String> {
    let t = |x: f64| q(x, Dimension::Time, 3);
    vec![
        format!(
            "One shunt in the DC link, read twice per period on the UP-count: in the vector with one leg low (it carries minus that leg's current) and in the vector with one leg high (plus that leg's current); the third current is minus the sum of the two."
        ),
        format!(
            "Each reading needs its vector to last dead time {} + settling {} + sampling {}, {} counts ({}); the conversion starts {} counts before the vector ends, so the acquisition ends at the next edge.",
            t(dead_s),
            t(d.settle_time_s),
            t(d.sample_time_s),
            d.min_vector_counts,
            t(d.min_vector_s),
            d.lead_counts
        ),
        format!(
            "Where a vector is shorter, the helper shifts the compares apart on the up-count and gives the difference back on the down-count, so each leg's on-time per period is kept (compare shifting; the timer loads the compares at both extremes). It fits the counter up to modulation {:.3}; the load needs {:.3}.",
            d.max_modulation, d.needed_modulation
        ),
    ]
}

/// Which code the init sequence names its constants and helpers for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Lang {
    C,
    Rust,
}

/// The register init sequence, one numbered step per line, naming the C
/// macros and functions or the Rust constants and helpers.
///
/// **Invariant (issue 14, defect 12):** the sequence brings the stage up in
/// a safe state: the first step disables the outputs (every switch off: the
/// motor coasts), no step enables them, and the last step leaves them
/// disabled until the firmware deliberately enables them. Each step that
/// touches the outputs starts with `Outputs:` so tests can follow the state.
fn init_steps(
    n: &Names,
    t: &TimerLiterals,
    st: &StageLiterals,
    dead: bool,
    three_phase: bool,
    limit: Option<&LimitLiterals>,
    lang: Lang,
) -> Vec<String> {
    let k = |name: &str| match lang {
        Lang::C => format!("{}_{name}", n.c_macro),
        Lang::Rust => name.to_string(),
    };
    let convert = match lang {
        Lang::C => format!("{}_compare_from_q16()", n.c_function),
        Lang::Rust => "Duty::from_q16() through apply()".to_string(),
    };
    let mut s = vec![
        "Outputs: disabled. Stop the timer and hold every bridge output inactive (the timer's outputs disabled and the gate driver's enable inactive): every switch is off and the motor coasts.".to_string(),
        format!(
            "Divider register <- {} (divider {}).",
            k("DIVIDER_REG"),
            t.divider
        ),
        format!(
            "Period register (counter top) <- {} ({} ticks per period).",
            k("PERIOD_REG"),
            t.period_ticks
        ),
        format!(
            "Counting mode <- {} (see {}).",
            if t.centre_aligned {
                "up-down (centre-aligned)"
            } else {
                "up (edge-aligned)"
            },
            k("CENTRE_ALIGNED")
        ),
        format!("PWM mode and polarity: {}", st.pwm_mode),
    ];
    if dead {
        s.push(format!(
            "Dead-time register <- {} ({} ticks, {} ns); write it before the complementary outputs are ever enabled.",
            k("DEAD_TIME_CODE"),
            t.dead_time_ticks,
            t.dead_time_ns
        ));
    }
    if let Some(l) = limit {
        s.push(limit_init_step(l, &k));
    }
    if three_phase {
        s.push(format!(
            "Channels A, B and C: the same PWM mode, complementary outputs with the dead time; compare registers <- {} (outputs still disabled), then values from {convert} only (one per channel).",
            k("INIT_COMPARE")
        ));
        s.push(format!(
            "ADC trigger: a spare compare channel <- {}, triggering on the UP-count match only (just before the counter top, where the low sides conduct).",
            k("ADC_TRIGGER_COMPARE")
        ));
    } else {
        s.push(format!(
            "Compare register(s) <- {} (outputs still disabled), then values from {convert} only.",
            k("INIT_COMPARE")
        ));
    }
    s.push("Enable the buffered (shadow) update of the period and compare registers so new values take effect at the period boundary.".into());
    s.push(format!(
        "Outputs: disabled. Start the counter with the outputs still disabled: the stage coasts. Enabling the outputs is the firmware's own deliberate step, after writing the compare of the wanted duty ({}).",
        st.enable_note
    ));
    s.into_iter()
        .enumerate()
        .map(|(i, step)| format!("{}. {step}", i + 1))
        .collect()
}

/// The init step that sets and arms the fault input (before the outputs can
/// ever be enabled, so the first enabled pulse is already limited).
fn limit_init_step(l: &LimitLiterals, k: &dyn Fn(&str) -> String) -> String {
    let mut parts = Vec::new();
    if l.programmable {
        parts.push(format!(
            "threshold <- {} ({} mV)",
            k("LIMIT_THRESHOLD_CODE"),
            l.threshold_mv
        ));
    }
    if l.has_filter {
        parts.push(format!(
            "filter <- {} samples at {} Hz",
            k("LIMIT_FILTER_SAMPLES"),
            k("LIMIT_FILTER_CLOCK_HZ")
        ));
    }
    if l.has_blanking {
        parts.push(format!(
            "blanking after each turn-on <- {} ticks ({} ns)",
            k("LIMIT_BLANKING_TICKS"),
            l.blanking_ns
        ));
    }
    parts.push(format!(
        "response <- {} (see {})",
        l.response,
        k("LIMIT_CYCLE_BY_CYCLE")
    ));
    format!(
        "Fault input (over-current): {}; clear any pending fault and arm the input now, before the outputs are ever enabled, so the first pulse is already limited.",
        parts.join(", ")
    )
}

/// The stage literals of a plan.
fn stage_literals(plan: &Plan) -> StageLiterals {
    let mid = {
        let m = (plan.timer.duty_steps as f64 / 2.0).round() as u64;
        m.clamp(
            plan.pwm.compare_min,
            plan.pwm.compare_max.max(plan.pwm.compare_min),
        )
    };
    let complementary = plan.topology != "low-side";
    let pwm_mode = if complementary {
        "each channel's output (its high side) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on); its complementary output (the low side) is the inverse, with the dead time inserted before each rising edge of either."
    } else {
        "the output (the low-side switch) is active, level high, while the counter is below the compare value (compare 0: always off; compare = duty steps: always on)."
    }
    .to_string();
    // How the second leg of an H-bridge is wired to the same counter (the model and the
    // register check assume exactly this; README "Leg duties and carrier").
    let pwm_mode = match plan.topology.as_str() {
        "h-bridge-bipolar" => format!(
            "{pwm_mode} Leg A takes the compare; leg B takes the SAME compare with its output polarity inverted (its high side active while the counter is at or above the compare), so the diagonals alternate: +V_bus while leg A's high side is on, −V_bus otherwise."
        ),
        "h-bridge-unipolar" => format!(
            "{pwm_mode} Leg A takes the compare c; leg B takes DUTY_STEPS − c with the same polarity on the same up-down counter, so the load sees two pulses per period centred between the counter's bottom and top (ripple at twice the PWM frequency)."
        ),
        _ => pwm_mode,
    };
    let (init, brakes, lines): (u64, bool, Vec<&str>) = match plan.topology.as_str() {
        "low-side" => (
            0,
            false,
            vec![
                "Duty 0 (compare 0) means the switch is off: the motor coasts, its current decaying through the freewheel diode.",
                "To coast: compare 0, or disable the output.",
            ],
        ),
        "half-bridge" => (
            0,
            true,
            vec![
                "Duty 0 (compare 0) means the low side is on for the whole period: the motor terminals are shorted through it, and a turning motor brakes (its back-EMF drives a braking current).",
                "To coast: disable the outputs (both switches off); duty 0 is not coasting.",
            ],
        ),
        "h-bridge-bipolar" => (
            mid,
            false,
            vec![
                "Duty 0 (compare 0) means FULL REVERSE: the first leg's low side and the second leg's high side on for the whole period.",
                "50 % (the init compare) is zero volts on average; the legs still switch and ripple current flows.",
                "To coast: disable the outputs (all four switches off).",
            ],
        ),
        "h-bridge-unipolar" => (
            0,
            true,
            vec![
                "Duty 0 on both legs (compare 0) means both low sides are on: the motor is shorted through them and a turning motor brakes; equal compares on both legs give zero volts.",
                "To coast: disable the outputs (all four switches off); duty 0 is not coasting.",
            ],
        ),
        _ => (
            0,
            true,
            vec![
                "Duty 0 on all three channels (compare 0) means all three low sides are on: the windings are shorted and a turning motor brakes; equal compares on all channels give zero line-to-line volts.",
                "To coast: disable the outputs (all six switches off); duty 0 is not coasting.",
            ],
        ),
    };
    let enable_note = if plan.topology == "h-bridge-bipolar" {
        "enabling with compare 0 would drive full reverse; the init compare is 50 %, zero volts"
    } else if brakes {
        "enabling with compare 0 turns the low sides on and brakes a turning motor"
    } else {
        "enabling with compare 0 keeps the switch off"
    };
    let init_compare_meaning = match plan.topology.as_str() {
        "low-side" => "0: the switch stays off",
        "h-bridge-bipolar" => "50 %: zero volts on average; 0 would be full reverse",
        "half-bridge" => "0: the low side on, braking a turning motor, once enabled",
        _ => "0: the low sides on, braking a turning motor, once enabled",
    };
    StageLiterals {
        topology: plan.topology.clone(),
        init_compare_meaning: init_compare_meaning.into(),
        init_compare: init.to_string(),
        duty_zero_brakes: brakes,
        pwm_mode,
        duty_zero_lines: lines.into_iter().map(String::from).collect(),
        enable_note: enable_note.into(),
    }
}

/// The rationale block as plain lines (for C and Rust comment blocks).
fn rationale_lines(c: &Context) -> Vec<String> {
    let mut out = vec![
        format!("{} plan for {} ({})", c.tool, c.design, c.marker),
        String::new(),
    ];
    let width = |rows: &[Row]| {
        rows.iter()
            .map(|r| r.label.chars().count())
            .max()
            .unwrap_or(0)
    };
    let table = |out: &mut Vec<String>, title: &str, rows: &[Row]| {
        if rows.is_empty() {
            return;
        }
        out.push(title.to_string());
        let w = width(rows);
        for r in rows {
            out.push(format!("  {:<w$}  {}", r.label, r.value));
        }
        out.push(String::new());
    };
    table(&mut out, "Chosen setting", &c.summary);
    out.push("Constraints (limit, value, margin to the limit, status)".into());
    let nw = c
        .constraints
        .iter()
        .map(|k| k.name.len())
        .max()
        .unwrap_or(0);
    let lw = c
        .constraints
        .iter()
        .map(|k| k.limit.chars().count())
        .max()
        .unwrap_or(0);
    let vw = c
        .constraints
        .iter()
        .map(|k| k.value.chars().count())
        .max()
        .unwrap_or(0);
    let mw = c
        .constraints
        .iter()
        .map(|k| k.margin.chars().count())
        .max()
        .unwrap_or(0);
    for k in &c.constraints {
        out.push(format!(
            "  {:<nw$}  {:>lw$}  {:>vw$}  {:>mw$}  {}",
            k.name, k.limit, k.value, k.margin, k.status
        ));
    }
    out.push(String::new());
    table(
        &mut out,
        "Over the operating range (worst points)",
        &c.range_rows,
    );
    table(
        &mut out,
        "Losses at the rated case (whole stage)",
        &c.losses,
    );
    table(&mut out, "Operating figures", &c.figures);
    table(&mut out, "Current limit", &c.limit_rows);
    table(&mut out, "Current sampling", &c.sampling_rows);
    table(&mut out, "Current loop", &c.loop_rows);
    table(
        &mut out,
        "Worst case over part and operating spreads",
        &c.worst_case,
    );
    table(
        &mut out,
        "Checked on the registers (independent simulation of the written values)",
        &c.register_check,
    );
    table(&mut out, "Alternatives", &c.alternatives);
    table(
        &mut out,
        "Findings (`pwmplan explain CODE` says what a bracketed code means)",
        &c.findings,
    );
    out.push("Assumptions".into());
    out.extend(c.assumptions.iter().map(|a| format!("  - {a}")));
    out.push(String::new());
    out.push("Cautions".into());
    out.extend(c.cautions.iter().map(|a| format!("  - {a}")));
    out.push(String::new());
    table(&mut out, "Inputs", &c.inputs);
    while out.last().is_some_and(|l| l.is_empty()) {
        out.pop();
    }
    out
}

/// The template set: the bundled one, or a folder that overrides it.
///
/// Each template is compiled in top-level pieces ([`pieces`]), rendered
/// one after another into one text; `whole` keeps each template's text to
/// name a render error's line in the template as written.
#[derive(Clone)]
pub struct Templates(std::sync::Arc<CompiledTemplates>);

struct CompiledTemplates {
    hb: Handlebars<'static>,
    pieces: BTreeMap<String, Vec<Piece>>,
    whole: BTreeMap<String, String>,
}

/// One piece of a template as registered.
struct Piece {
    /// Its name in the registry (`name#i`, or the template's own name when
    /// it is whole).
    name: String,
    /// The flag it renders nothing without (`pieces::gate`).
    gate: Option<String>,
    /// Its text where it was left out of the registry (compiled when a
    /// render needs it); `None` when compiled.
    left_out: Option<String>,
}

/// Whether `value` is false as the `if` helper tests it (missing, null,
/// false, 0, an empty text or list; the Handlebars language's truthiness,
/// <https://handlebarsjs.com/guide/builtin-helpers.html>). A missing value
/// counts as not false here, so a piece is skipped only on a value present
/// and false.
fn known_false(value: Option<&serde_json::Value>) -> bool {
    use serde_json::Value;
    match value {
        Some(Value::Null) | Some(Value::Bool(false)) => true,
        Some(Value::Number(n)) => n.as_f64() == Some(0.0),
        Some(Value::String(t)) => t.is_empty(),
        Some(Value::Array(a)) => a.is_empty(),
        _ => false,
    }
}

/// A handlebars registry as pwmplan renders: strict, no escaping.
fn registry() -> Handlebars<'static> {
    let mut hb = Handlebars::new();
    hb.set_strict_mode(true);
    hb.register_escape_fn(handlebars::no_escape);
    hb
}

/// Register `text` as `name`'s pieces (named `name#0`, `name#1`, ...), or
/// whole where it does not cut into pieces that each compile; the pieces in
/// order. A piece gated by one of `false_flags` (`pieces::gate`) is left
/// out, kept as text: the caller expects those flags false, and a render
/// that finds one true compiles it then.
fn register_in_pieces(
    hb: &mut Handlebars<'static>,
    name: &str,
    text: &str,
    piece_bytes: usize,
    false_flags: &[&str],
) -> Result<Vec<Piece>, handlebars::TemplateError> {
    let parts = pieces::top_level_pieces(text, piece_bytes);
    if parts.len() > 1 {
        let out: Vec<Piece> = parts
            .iter()
            .enumerate()
            .map(|(i, p)| {
                let gate = pieces::gate(p).map(str::to_string);
                let skip = gate.as_deref().is_some_and(|g| false_flags.contains(&g));
                Piece {
                    name: format!("{name}#{i}"),
                    gate,
                    left_out: skip.then(|| p.clone()),
                }
            })
            .collect();
        let compiled = out
            .iter()
            .zip(&parts)
            .filter(|(piece, _)| piece.left_out.is_none())
            .all(|(piece, p)| hb.register_template_string(&piece.name, p).is_ok());
        if compiled {
            return Ok(out);
        }
        for piece in &out {
            hb.unregister_template(&piece.name);
        }
    }
    hb.register_template_string(name, text)?;
    Ok(vec![Piece {
        name: name.to_string(),
        gate: None,
        left_out: None,
    }])
}

impl Templates {
    /// The bundled templates, or those of `dir` when given (every bundled
    /// name must exist there). The bundled set is compiled once per process
    /// and shared.
    pub fn load(dir: Option<&Path>) -> Result<Templates, EmitError> {
        static BUNDLED: std::sync::OnceLock<Result<Templates, EmitError>> =
            std::sync::OnceLock::new();
        match dir {
            None => BUNDLED
                .get_or_init(|| Templates::load_in_pieces(None, pieces::PIECE_BYTES))
                .clone(),
            Some(_) => Templates::load_in_pieces(dir, pieces::PIECE_BYTES),
        }
    }

    /// The bundled templates without compiling the pieces that render
    /// nothing while the context's `false_flags` are false (the caller's
    /// expectation; a piece a render finds needed after all is compiled
    /// then): `plan` knows before it solves whether a design is
    /// three-phase. A folder's templates are compiled in full, every
    /// piece checked, as [`Templates::load`] does.
    pub fn load_expecting_false(
        dir: Option<&Path>,
        false_flags: &[&str],
    ) -> Result<Templates, EmitError> {
        match dir {
            None if !false_flags.is_empty() => {
                Templates::load_pieces_expecting_false(None, pieces::PIECE_BYTES, false_flags)
            }
            _ => Templates::load(dir),
        }
    }

    /// As [`Templates::load`], each template cut into pieces of about
    /// `piece_bytes` (`usize::MAX`: whole, as a test compares).
    #[doc(hidden)]
    pub fn load_in_pieces(dir: Option<&Path>, piece_bytes: usize) -> Result<Templates, EmitError> {
        Templates::load_pieces_expecting_false(dir, piece_bytes, &[])
    }

    /// [`Templates::load_in_pieces`] leaving out the pieces gated by
    /// `false_flags` (`register_in_pieces`).
    #[doc(hidden)]
    pub fn load_pieces_expecting_false(
        dir: Option<&Path>,
        piece_bytes: usize,
        false_flags: &[&str],
    ) -> Result<Templates, EmitError> {
        let mut hb = registry();
        let mut pieces = BTreeMap::new();
        let mut whole = BTreeMap::new();
        for (name, text) in BUNDLED_TEMPLATES {
            let text = match dir {
                None => text.to_string(),
                Some(d) => {
                    let p = d.join(name);
                    let refuse = |message: String| EmitError::Template {
                        file: p.display().to_string(),
                        message,
                    };
                    // A symbolic link may lead out of the folder: the file
                    // actually read must lie in it.
                    if let (Ok(target), Ok(folder)) =
                        (std::fs::canonicalize(&p), std::fs::canonicalize(d))
                        && !target.starts_with(&folder)
                    {
                        return Err(refuse(format!(
                            "leads through a symbolic link to {}, outside the templates folder; expected the template itself in {}",
                            target.display(),
                            d.display()
                        )));
                    }
                    let text = crate::input::load::read_text(&p, "a template file").map_err(
                        |crate::input::load::ReadRefusal(why, _)| {
                            refuse(if why == "no such file" {
                                format!(
                                    "missing; a template folder must hold all of {}",
                                    bundled_names()
                                )
                            } else {
                                why
                            })
                        },
                    )?;
                    if let Err((line, message)) = template_shape(&text) {
                        return Err(refuse(format!("line {line}: {message}")));
                    }
                    text
                }
            };
            let names = register_in_pieces(&mut hb, name, &text, piece_bytes, false_flags)
                .map_err(|e| EmitError::Template {
                    file: dir
                        .map(|d| d.join(name).display().to_string())
                        .unwrap_or_else(|| name.to_string()),
                    message: e.to_string(),
                })?;
            pieces.insert(name.to_string(), names);
            whole.insert(name.to_string(), text);
        }
        Ok(Templates(std::sync::Arc::new(CompiledTemplates {
            hb,
            pieces,
            whole,
        })))
    }

    /// Render `name`, stopping with an error once the text passes
    /// [`MAX_RENDERED_BYTES`].
    fn render(&self, name: &str, ctx: &Context) -> Result<String, EmitError> {
        let mut out = CappedWriter::default();
        let pieces = self.0.pieces.get(name).map_or(&[][..], Vec::as_slice);
        // The context is turned into the engine's data once, not once per
        // piece (that took longer than rendering the pieces).
        let rendered = handlebars::Context::wraps(ctx)
            .and_then(|data| {
                pieces
                    .iter()
                    .try_for_each(|p| self.render_piece(p, &data, &mut out))
            })
            .map_err(|e| self.error_in_whole(name, ctx).unwrap_or(e));
        match rendered {
            Ok(()) => String::from_utf8(out.bytes).map_err(|_| EmitError::Render {
                template: name.to_string(),
                message: "the rendered text is not UTF-8".into(),
            }),
            Err(_) if out.overflowed => Err(EmitError::Render {
                template: name.to_string(),
                message: format!(
                    "renders more than {MAX_RENDERED_BYTES} bytes (1 MiB), the largest file pwmplan writes; expected loops that each go over one list once"
                ),
            }),
            Err(e) => Err(EmitError::Render {
                template: name.to_string(),
                message: e.to_string(),
            }),
        }
    }
}

impl Templates {
    /// Render one piece: nothing where its gate is false, compiled now
    /// where it was left out.
    fn render_piece(
        &self,
        p: &Piece,
        data: &handlebars::Context,
        out: &mut CappedWriter,
    ) -> Result<(), handlebars::RenderError> {
        if p.gate
            .as_deref()
            .is_some_and(|g| known_false(data.data().get(g)))
        {
            return Ok(());
        }
        match &p.left_out {
            None => self.0.hb.render_with_context_to_write(&p.name, data, out),
            Some(text) => {
                let mut hb = registry();
                hb.register_template_string(&p.name, text)?;
                hb.render_with_context_to_write(&p.name, data, out)
            }
        }
    }

    /// The error rendering `name` whole gives, which names the line in the
    /// template as written (a piece's error counts lines from the piece).
    fn error_in_whole(&self, name: &str, ctx: &Context) -> Option<handlebars::RenderError> {
        let mut hb = registry();
        hb.register_template_string(name, self.0.whole.get(name)?)
            .ok()?;
        hb.render_to_write(name, ctx, &mut CappedWriter::default())
            .err()
    }

    /// Render `name` and seal it; the text must carry the marker exactly
    /// once, or the hand-edit guard could not recognise the file later.
    fn render_sealed(&self, name: &str, ctx: &Context) -> Result<String, EmitError> {
        let text = self.render(name, ctx)?;
        match text.matches(MARKER_PLACEHOLDER).count() {
            1 => Ok(seal(&text)),
            n => Err(EmitError::Render {
                template: name.to_string(),
                message: format!(
                    "writes the content-hash marker `{{{{marker}}}}` {n} times; expected it exactly once (the next `plan` reads it to tell its own files from edited ones)"
                ),
            }),
        }
    }
}

/// Largest rendered template: 1 MiB, a bound of our own choice (the
/// bundled templates render a few tens of kilobytes).
pub const MAX_RENDERED_BYTES: usize = 1 << 20;

/// Deepest nesting of blocks (`{{#if}}`, `{{#each}}`, ...) in a template:
/// 16, a bound of our own choice (the bundled templates nest 3 deep); the
/// template parser recurses once per level.
pub const MAX_BLOCK_DEPTH: usize = 16;

/// Deepest nesting of `{{#each}}` loops: 2, a bound of our own choice (the
/// context's lists are flat; a loop inside a loop inside a loop only
/// multiplies text).
pub const MAX_EACH_DEPTH: usize = 2;

/// A writer that keeps at most [`MAX_RENDERED_BYTES`] and then fails.
#[derive(Default)]
struct CappedWriter {
    bytes: Vec<u8>,
    overflowed: bool,
}

impl std::io::Write for CappedWriter {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        if self.bytes.len() + buf.len() > MAX_RENDERED_BYTES {
            self.overflowed = true;
            return Err(std::io::Error::other("rendered text too large"));
        }
        self.bytes.extend_from_slice(buf);
        Ok(buf.len())
    }
    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

/// A cheap linear scan of a template's text before the parser sees it:
/// no partials (`{{> name}}`, `{{#> name}}`, `{{#*inline}}`: a template
/// stands alone, so none can include itself), blocks nested at most
/// [`MAX_BLOCK_DEPTH`] deep, `{{#each}}` at most [`MAX_EACH_DEPTH`] deep.
/// The error is the 1-based line and what is wrong.
pub fn template_shape(text: &str) -> Result<(), (usize, String)> {
    let mut stack: Vec<bool> = Vec::new(); // one entry per open block: is it `each`
    let mut rest = text;
    let mut line = 1;
    while let Some(at) = rest.find("{{") {
        line += rest[..at].matches('\n').count();
        let tag = rest[at + 2..].trim_start_matches(['{', '~']).trim_start();
        if tag.starts_with('!') {
            // A comment: skip to its end.
            let end = rest[at..]
                .find(if tag.starts_with("!--") { "--}}" } else { "}}" })
                .map_or(rest.len(), |e| at + e);
            line += rest[at..end].matches('\n').count();
            rest = &rest[end..];
            continue;
        }
        if tag.starts_with('>') || tag.starts_with("#>") || tag.starts_with("#*") {
            return Err((
                line,
                "a partial or inline partial; expected each template to stand alone (pwmplan templates include no other template)".into(),
            ));
        }
        if let Some(block) = tag.strip_prefix('#').or_else(|| tag.strip_prefix('^')) {
            let is_each = block.trim_start().starts_with("each");
            stack.push(is_each);
            if stack.len() > MAX_BLOCK_DEPTH {
                return Err((
                    line,
                    format!(
                        "blocks nested more than {MAX_BLOCK_DEPTH} deep; expected at most {MAX_BLOCK_DEPTH}"
                    ),
                ));
            }
            if stack.iter().filter(|e| **e).count() > MAX_EACH_DEPTH {
                return Err((
                    line,
                    format!(
                        "`{{{{#each}}}}` loops nested more than {MAX_EACH_DEPTH} deep; expected at most {MAX_EACH_DEPTH}"
                    ),
                ));
            }
        } else if tag.starts_with('/') {
            stack.pop();
        }
        rest = &rest[at + 2..];
    }
    Ok(())
}

fn bundled_names() -> String {
    BUNDLED_TEMPLATES
        .iter()
        .map(|(n, _)| *n)
        .collect::<Vec<_>>()
        .join(", ")
}

/// Everything `plan` writes for a feasible plan.
pub fn generate(
    plan: &Plan,
    rows: &[crate::model::sweep::SweepRow],
    fpu: bool,
    c: bool,
    rust: bool,
    templates: &Templates,
) -> Result<Vec<GeneratedFile>, EmitError> {
    let ctx = context(plan, fpu);
    let mut files = templated_files(&ctx, c, rust, templates)?;
    files.extend(other_files(plan, rows, &ctx));
    Ok(files)
}

/// The C header, the Rust module (each when asked for) and the rationale.
fn templated_files(
    ctx: &Context,
    c: bool,
    rust: bool,
    templates: &Templates,
) -> Result<Vec<GeneratedFile>, EmitError> {
    let stem = &ctx.names.file_stem;
    let mut files = Vec::new();
    if c {
        files.push(GeneratedFile {
            name: format!("{stem}.h").into(),
            text: templates.render_sealed("c_header.h.hbs", ctx)?,
        });
    }
    if rust {
        files.push(GeneratedFile {
            name: format!("{stem}.rs").into(),
            text: templates.render_sealed("rust_module.rs.hbs", ctx)?,
        });
    }
    files.push(GeneratedFile {
        name: "rationale.md".into(),
        text: templates.render_sealed("rationale.md.hbs", ctx)?,
    });
    Ok(files)
}

/// `plan.json`, the two plots and the HTML report.
fn other_files(
    plan: &Plan,
    rows: &[crate::model::sweep::SweepRow],
    ctx: &Context,
) -> Vec<GeneratedFile> {
    let chosen = Some(plan.pwm.frequency_hz);
    let ripple_limit = plan
        .constraints
        .iter()
        .find(|k| k.name == "ripple")
        .map(|k| k.limit);
    let loss_svg = crate::output::svg::loss_plot_svg(rows, chosen, plan.feasible_band_hz);
    let thermal_svg = crate::output::svg::thermal_ripple_plot_svg(
        rows,
        plan.thermal.limit_c,
        ripple_limit,
        chosen,
    );
    let html = crate::output::html::report_html(plan, ctx, &loss_svg, &thermal_svg);
    vec![
        GeneratedFile {
            name: "plan.json".into(),
            text: seal(&plan_json(plan)),
        },
        GeneratedFile {
            name: "loss.svg".into(),
            text: svg_with_marker(&loss_svg),
        },
        GeneratedFile {
            name: "thermal.svg".into(),
            text: svg_with_marker(&thermal_svg),
        },
        GeneratedFile {
            name: "report.html".into(),
            text: seal(&html),
        },
    ]
}

/// A plot as a file: an XML comment with the sealed marker after the
/// opening tag's line.
fn svg_with_marker(svg: &str) -> String {
    let text = match svg.find('>') {
        Some(i) => format!(
            "{}\n<!-- {MARKER_PLACEHOLDER} -->{}",
            &svg[..=i],
            &svg[i + 1..]
        ),
        None => svg.to_string(),
    };
    seal(&text)
}

/// `plan.json`: pretty, keys in declaration order, a final newline.
pub fn plan_json(plan: &Plan) -> String {
    let mut s =
        serde_json::to_string_pretty(plan).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}

#[cfg(test)]
mod tests {
    /// The two long bundled templates really compile in pieces (not whole
    /// after a failed cut), each piece smaller than a third of the template.
    #[test]
    fn long_templates_compile_in_pieces() {
        let t = super::Templates::load(None).expect("bundled templates compile");
        for (name, text) in super::BUNDLED_TEMPLATES {
            let names: Vec<&str> = t.0.pieces[*name].iter().map(|p| p.name.as_str()).collect();
            if text.len() > 4 * super::pieces::PIECE_BYTES {
                assert!(names.len() >= 4, "{name}: {names:?}");
                for n in names {
                    let piece = t.0.hb.get_template(n).expect("registered");
                    assert!(piece.elements.len() < text.matches("{{").count() / 3, "{n}");
                }
            }
        }
    }

    /// The bundled templates are within the shape bounds; comments may
    /// mention anything.
    #[test]
    fn bundled_templates_pass_the_shape_scan() {
        for (name, text) in BUNDLED_TEMPLATES {
            assert_eq!(template_shape(text), Ok(()), "{name}");
        }
        assert_eq!(
            template_shape("{{!-- {{> x}} --}}\n{{! {{#each}} }}"),
            Ok(())
        );
        assert_eq!(template_shape("a\n\n{{~> x}}").map_err(|e| e.0), Err(3));
    }

    use super::*;

    #[test]
    fn seal_and_verify() {
        let text = format!("/* {MARKER_PLACEHOLDER} */\nint x;\n");
        let sealed = seal(&text);
        assert_eq!(is_untouched(&sealed), Some(true));
        let edited = sealed.replace("int x;", "int y;");
        assert_eq!(is_untouched(&edited), Some(false));
        assert_eq!(is_untouched("no marker here"), None);
    }

    #[test]
    fn names_are_cased() {
        let n = names("belt-feeder");
        assert_eq!(n.c_macro, "BELT_FEEDER_PWM");
        assert_eq!(n.c_function, "belt_feeder_pwm");
        assert_eq!(n.c_guard, "BELT_FEEDER_PWM_H");
    }
}
