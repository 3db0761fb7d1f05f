//! The HTML report of a plan: one self-contained page (inline CSS, inline
//! SVG plots) with the chosen settings, the cautions, the constraints, the
//! worst case over the spreads, the plots, the losses, the operating figures, the alternatives, the
//! findings, the assumptions, the inputs with their hashes and the
//! conventions.
//!
//! **Invariant:** pure and deterministic; no timestamps; no external
//! references of any kind (no links to other files, no scripts, no web
//! fonts, no `url(…)`). The markup is also well-formed XML (void elements
//! self-closed, no named entities), so it can be checked with an XML
//! parser. The content-hash placeholder appears once, in a comment, for
//! [`crate::output::seal::seal`].

use std::fmt::Write as _;

use crate::input::units::{Dimension, format_quantity};
use crate::model::evaluate::LossFigures;
use crate::output::context::{Context, Row};
use crate::output::plan::Plan;
use crate::output::seal::MARKER_PLACEHOLDER;
use crate::output::svg::{SVG_NAMESPACE_ATTR, escape, loss_colour};

const STYLE: &str = r#"
:root { --ink: #1d1d1f; --muted: #5a5a60; --rule: #d6d6db; --band: #f5f5f7;
  --bind: #fff4cc; --bind-edge: #c99a00; --fail: #fde2e1; --fail-ink: #9b1c1c;
  --ok-ink: #1e6b35; --warn: #fff8e6; --warn-edge: #d98c00; }
* { box-sizing: border-box; }
html { font-family: "DejaVu Sans", "Liberation Sans", Arial, Helvetica, sans-serif;
  font-size: 14px; line-height: 1.45; color: var(--ink); background: #ffffff; }
body { margin: 0 auto; padding: 28px 32px 40px; max-width: 1080px; }
header { border-bottom: 3px solid var(--ink); padding-bottom: 10px; margin-bottom: 18px; }
h1 { font-size: 24px; margin: 0 0 4px; }
h2 { font-size: 17px; margin: 26px 0 8px; padding-bottom: 3px; border-bottom: 1px solid var(--rule); }
.sub { color: var(--muted); margin: 0; }
.status { display: inline-block; font-weight: bold; padding: 1px 8px; border-radius: 3px;
  font-size: 12px; vertical-align: middle; margin-left: 8px; }
.status.feasible { background: #e3f4e8; color: var(--ok-ink); border: 1px solid #9fd3ae; }
.status.infeasible { background: var(--fail); color: var(--fail-ink); border: 1px solid #e9a3a0; }
.headline { display: flex; flex-wrap: wrap; gap: 10px; margin: 14px 0 6px; }
.headline div { background: var(--band); border: 1px solid var(--rule); border-radius: 4px;
  padding: 8px 14px; min-width: 150px; }
.headline .k { display: block; font-size: 11px; text-transform: uppercase; letter-spacing: 0.04em; color: var(--muted); }
.headline .v { display: block; font-size: 18px; font-weight: bold; }
table { border-collapse: collapse; width: 100%; margin: 4px 0 8px; }
th, td { text-align: left; vertical-align: top; padding: 4px 10px 4px 6px; border-bottom: 1px solid var(--rule); }
th { font-size: 12px; color: var(--muted); font-weight: bold; border-bottom: 2px solid var(--ink); }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.kv th { width: 190px; color: var(--ink); border-bottom: 1px solid var(--rule); font-size: 14px; }
tr.binding td { background: var(--bind); }
tr.binding td:first-child { box-shadow: inset 4px 0 0 var(--bind-edge); font-weight: bold; }
tr.failing td { background: var(--fail); color: var(--fail-ink); }
tr.failing td:first-child { box-shadow: inset 4px 0 0 var(--fail-ink); font-weight: bold; }
table.alternatives td:first-child { white-space: nowrap; }
tr.total td { font-weight: bold; border-top: 2px solid var(--ink); }
.badge { display: inline-block; font-size: 11px; font-weight: bold; padding: 0 6px; border-radius: 3px;
  text-transform: uppercase; letter-spacing: 0.03em; }
.badge.binds { background: var(--bind-edge); color: #ffffff; }
.badge.ok { background: #e3f4e8; color: var(--ok-ink); }
.badge.fails, .badge.error { background: var(--fail-ink); color: #ffffff; }
.badge.warning { background: var(--warn-edge); color: #ffffff; }
.badge.info { background: #e1e8f5; color: #284a86; }
.detail { color: var(--muted); font-size: 12px; }
.bar { display: inline-block; height: 10px; background: #0072b2; vertical-align: middle; }
.cautions { border: 2px solid var(--warn-edge); background: var(--warn); border-radius: 4px;
  padding: 8px 18px 10px; margin: 18px 0; }
.cautions h2 { border: none; margin: 4px 0 4px; color: #7a4b00; }
.cautions li { margin: 3px 0; }
.conflict { border: 2px solid var(--fail-ink); background: var(--fail); border-radius: 4px; padding: 8px 18px; }
figure { margin: 10px 0 18px; page-break-inside: avoid; break-inside: avoid; }
figure svg { display: block; width: 100%; height: auto; max-width: 900px; border: 1px solid var(--rule); }
figcaption { color: var(--muted); font-size: 12px; margin-top: 4px; }
code, .mono { font-family: "DejaVu Sans Mono", "Liberation Mono", Consolas, monospace; font-size: 12px; }
.hash { word-break: break-all; }
ul { margin: 4px 0; padding-left: 22px; }
footer { margin-top: 30px; padding-top: 8px; border-top: 1px solid var(--rule); color: var(--muted); font-size: 12px; }
@media print {
  html { font-size: 11px; }
  body { padding: 0; max-width: none; }
  h2 { break-after: avoid; page-break-after: avoid; }
  table, .cautions, tr { break-inside: avoid; page-break-inside: avoid; }
  tr.binding td, tr.failing td, .cautions, .badge, .bar, .headline div { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"#;

/// The inline SVG: the namespace attribute and any XML declaration
/// dropped (the HTML parser puts `<svg>` in the SVG namespace itself).
fn inline_svg(svg: &str) -> String {
    let body = match svg.find("<svg") {
        Some(at) => &svg[at..],
        None => svg,
    };
    body.replacen(SVG_NAMESPACE_ATTR, "", 1)
        .trim_end()
        .to_string()
}

fn h2(out: &mut String, id: &str, title: &str) {
    let _ = writeln!(out, r#"<h2 id="{id}">{}</h2>"#, escape(title));
}

/// A two-column label/value table.
fn kv_table(out: &mut String, rows: &[Row]) {
    out.push_str("<table class=\"kv\"><tbody>\n");
    for r in rows {
        let _ = writeln!(
            out,
            "<tr><th scope=\"row\">{}</th><td>{}</td></tr>",
            escape(&r.label),
            escape(&r.value)
        );
    }
    out.push_str("</tbody></table>\n");
}

fn list(out: &mut String, items: &[String]) {
    out.push_str("<ul>\n");
    for i in items {
        let _ = writeln!(out, "<li>{}</li>", escape(i));
    }
    out.push_str("</ul>\n");
}

fn header(out: &mut String, plan: &Plan, ctx: &Context) {
    let (class, word) = if plan.feasible {
        ("feasible", "all constraints met".to_string())
    } else if let Some(first) = plan.blocked_by.first() {
        let more = match plan.blocked_by.len() - 1 {
            0 => String::new(),
            n => format!(" and {n} more"),
        };
        ("infeasible", format!("infeasible: {}{more}", first.code))
    } else {
        (
            "infeasible",
            "no setting meets every constraint".to_string(),
        )
    };
    let _ = writeln!(
        out,
        "<header>\n<h1>PWM plan: {} <span class=\"status {class}\">{}</span></h1>",
        escape(&plan.design),
        escape(&word)
    );
    let _ = writeln!(
        out,
        "<p class=\"sub\">{} &#8212; {}; {}; objective {}</p>\n</header>",
        escape(&ctx.tool),
        escape(&plan.board),
        escape(&plan.switch),
        escape(&plan.objective)
    );
}

/// The four numbers a reader wants first, then the full settings table.
fn settings(out: &mut String, plan: &Plan, ctx: &Context) {
    let dead = if plan.timer.dead_time_s > 0.0 {
        format!("{} ns", ctx.timer.dead_time_ns)
    } else {
        "none".into()
    };
    let cards = [
        ("PWM frequency", ctx.timer.frequency_text.clone()),
        ("alignment", plan.pwm.alignment.clone()),
        (
            "divider / period",
            format!("{} / {} ticks", plan.timer.divider, plan.timer.period_ticks),
        ),
        ("dead time", dead),
        (
            "total loss",
            format_quantity(plan.losses_w.total, Dimension::Power, 3),
        ),
    ];
    out.push_str("<div class=\"headline\">\n");
    for (k, v) in cards {
        let _ = writeln!(
            out,
            "<div><span class=\"k\">{}</span><span class=\"v\">{}</span></div>",
            escape(k),
            escape(&v)
        );
    }
    out.push_str("</div>\n");
    if !plan.blocked_by.is_empty() {
        out.push_str("<div class=\"conflict\"><p><strong>Infeasible: do not use these settings.</strong> Error findings stop the plan:</p>\n");
        let reasons: Vec<String> = plan.blocked_by.iter().map(|b| b.to_string()).collect();
        list(out, &reasons);
        out.push_str("</div>\n");
    }
    if !plan.feasible && !plan.search.constraints_met && !plan.conflict.is_empty() {
        out.push_str("<div class=\"conflict\"><p><strong>No timer setting meets every constraint.</strong> The figures below are the nearest compromise.</p>\n");
        list(out, &plan.conflict);
        out.push_str("</div>\n");
    }
    h2(out, "settings", "Chosen settings");
    kv_table(out, &ctx.summary);
}

fn cautions(out: &mut String, ctx: &Context) {
    out.push_str("<section class=\"cautions\" id=\"cautions\">\n<h2>Cautions</h2>\n");
    list(out, &ctx.cautions);
    out.push_str("</section>\n");
}

/// The constraint table; the detail text comes from the plan (same order
/// as the context's rows, checked by name).
fn constraints(out: &mut String, plan: &Plan, ctx: &Context) {
    h2(out, "constraints", "Constraints at the chosen setting");
    out.push_str("<table class=\"constraints\"><thead><tr><th>constraint</th><th class=\"num\">limit</th><th class=\"num\">value</th><th class=\"num\">margin</th><th>status</th><th>detail</th></tr></thead><tbody>\n");
    for (i, k) in ctx.constraints.iter().enumerate() {
        let detail = plan
            .constraints
            .get(i)
            .filter(|c| c.name == k.name)
            .map(|c| c.detail.as_str())
            .unwrap_or("");
        let (row_class, badge) = match k.status.as_str() {
            "binds" => (" class=\"binding\"", "binds"),
            "FAILS" => (" class=\"failing\"", "fails"),
            _ => ("", "ok"),
        };
        let _ = writeln!(
            out,
            "<tr{row_class}><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td><span class=\"badge {badge}\">{}</span></td><td class=\"detail\">{}</td></tr>",
            escape(&k.name),
            escape(&k.limit),
            escape(&k.value),
            escape(&k.margin),
            escape(&k.status),
            escape(detail)
        );
    }
    out.push_str("</tbody></table>\n<p class=\"detail\">Margin: distance from the value to the limit. A constraint that <em>binds</em> is the one that stops the solver from moving further toward its objective.</p>\n");
}

/// The chosen setting at the worst corners of the part and operating
/// spreads: each constraint's worst value, where it occurs and its verdict.
fn worst_case(out: &mut String, plan: &Plan, ctx: &Context) {
    h2(
        out,
        "worst-case",
        "Worst case over part and operating spreads",
    );
    let w = &plan.worst_case;
    let verdict = if w.pass {
        "Every constraint holds at every corner.".to_string()
    } else {
        let failing: Vec<&str> = w
            .rows
            .iter()
            .filter(|r| !r.pass)
            .map(|r| r.name.as_str())
            .collect();
        format!(
            "Fails at a worst corner: {}.",
            if failing.is_empty() {
                "the rated current is out of reach".to_string()
            } else {
                failing.join(", ")
            }
        )
    };
    let _ = writeln!(out, "<p>{}</p>", escape(&verdict));
    out.push_str("<table class=\"worst-case\"><thead><tr><th>constraint</th><th>worst value; verdict; corner</th></tr></thead><tbody>\n");
    for r in &ctx.worst_case {
        let failing = w.rows.iter().any(|x| x.name == r.label && !x.pass);
        let _ = writeln!(
            out,
            "<tr{}><td>{}</td><td>{}</td></tr>",
            if failing { " class=\"failing\"" } else { "" },
            escape(&r.label),
            escape(&r.value)
        );
    }
    out.push_str("</tbody></table>\n");
}

fn plots(out: &mut String, loss_svg: &str, thermal_svg: &str) {
    h2(out, "plots", "Against frequency");
    let _ = writeln!(
        out,
        "<figure>\n{}\n<figcaption>Loss of the whole stage at the rated case, by component, stacked. Washed-out spans fail a constraint (hover for which); the dotted lines bound the solver's feasible band.</figcaption>\n</figure>",
        inline_svg(loss_svg)
    );
    let _ = writeln!(
        out,
        "<figure>\n{}\n<figcaption>Hottest junction at the rated and the highest supply, and the worst motor-current ripple, with their limits dashed.</figcaption>\n</figure>",
        inline_svg(thermal_svg)
    );
}

/// The numeric value behind a loss row of the context, by its label.
fn loss_value(l: &LossFigures, label: &str) -> Option<f64> {
    Some(match label {
        "conduction" => l.conduction,
        "switching" => l.switching,
        "output capacitance" => l.output_capacitance,
        "reverse recovery" => l.reverse_recovery,
        "dead-time diode" | "body diode" => l.dead_time_diode,
        "gate drive" => l.gate_drive,
        "freewheel diode" => l.freewheel_diode,
        "motor ripple copper" => l.motor_ripple_copper,
        "total" => l.total,
        _ => return None,
    })
}

fn losses(out: &mut String, plan: &Plan, ctx: &Context) {
    h2(
        out,
        "losses",
        "Loss breakdown at the rated case (whole stage)",
    );
    let total = plan.losses_w.total;
    out.push_str("<table class=\"losses\"><thead><tr><th>component</th><th class=\"num\">loss</th><th class=\"num\">share</th><th style=\"width:40%\"></th></tr></thead><tbody>\n");
    for r in &ctx.losses {
        let is_total = r.label == "total";
        let share = loss_value(&plan.losses_w, &r.label)
            .filter(|_| total > 0.0)
            .map(|v| 100.0 * v / total);
        let share_text = share.map(|s| format!("{s:.1} %")).unwrap_or_default();
        let bar = match share {
            Some(s) if !is_total => format!(
                "<span class=\"bar\" style=\"width:{:.1}%; background:{}\"></span>",
                s.clamp(0.0, 100.0),
                loss_colour(&r.label).unwrap_or("#0072b2")
            ),
            _ => String::new(),
        };
        let _ = writeln!(
            out,
            "<tr{}><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{bar}</td></tr>",
            if is_total { " class=\"total\"" } else { "" },
            escape(&r.label),
            escape(&r.value),
            escape(&share_text)
        );
    }
    out.push_str("</tbody></table>\n");
}

/// Where each judged quantity is worst over the design's operating range.
fn operating_range(out: &mut String, ctx: &Context) {
    if ctx.range_rows.is_empty() {
        return;
    }
    h2(
        out,
        "operating-range",
        "Over the operating range (worst points)",
    );
    kv_table(out, &ctx.range_rows);
}

fn figures(out: &mut String, ctx: &Context) {
    h2(out, "figures", "Operating figures");
    kv_table(out, &ctx.figures);
}

/// The current limit: the trip window against the operating peak and the
/// hard limits, drawn on one current axis, then the explanation rows.
fn current_limit(out: &mut String, plan: &Plan, ctx: &Context) {
    let Some(l) = &plan.current_limit else {
        return;
    };
    h2(out, "current-limit", "Current limit");
    let top = l
        .hard_limits
        .iter()
        .map(|h| h.current_a)
        .chain([l.peak_a, l.stall_current_a])
        .fold(l.trip_high_a, f64::max)
        * 1.1;
    let x = |i: f64| 20.0 + 600.0 * (i / top).clamp(0.0, 1.0);
    let mut svg = String::from(
        "<svg class=\"window\" viewBox=\"0 0 640 120\" role=\"img\" aria-label=\"trip window against the operating peak and the hard limits\">\n",
    );
    let _ = writeln!(
        svg,
        "<line x1=\"20\" y1=\"60\" x2=\"620\" y2=\"60\" stroke=\"#555\"/>\n<rect x=\"20\" y=\"50\" width=\"{:.1}\" height=\"20\" fill=\"#8c8\"><title>normal operation up to {:.2} A</title></rect>\n<rect x=\"{:.1}\" y=\"45\" width=\"{:.1}\" height=\"30\" fill=\"#fc6\"><title>trips between {:.2} A and {:.2} A</title></rect>\n<line x1=\"{:.1}\" y1=\"40\" x2=\"{:.1}\" y2=\"80\" stroke=\"#c60\" stroke-dasharray=\"3 2\"><title>peak with overshoot {:.2} A</title></line>",
        x(l.operating_peak_a) - 20.0,
        l.operating_peak_a,
        x(l.trip_low_a),
        (x(l.trip_high_a) - x(l.trip_low_a)).max(1.0),
        l.trip_low_a,
        l.trip_high_a,
        x(l.peak_a),
        x(l.peak_a),
        l.peak_a
    );
    for (k, h) in l.hard_limits.iter().enumerate() {
        let y = if k % 2 == 0 { 30.0 } else { 100.0 };
        let _ = writeln!(
            svg,
            "<line x1=\"{0:.1}\" y1=\"35\" x2=\"{0:.1}\" y2=\"85\" stroke=\"#c00\"/><text x=\"{0:.1}\" y=\"{y}\" font-size=\"10\" text-anchor=\"middle\">{1} {2:.1} A</text>",
            x(h.current_a),
            escape(&h.applies_to),
            h.current_a
        );
    }
    let _ = writeln!(
        svg,
        "<text x=\"20\" y=\"115\" font-size=\"10\">0 A</text><text x=\"620\" y=\"115\" font-size=\"10\" text-anchor=\"end\">{top:.1} A</text>\n</svg>"
    );
    out.push_str(&svg);
    out.push_str("<p>Green: normal operation up to its peak; amber: where the limit may trip (its lowest to its highest edge over the sensing tolerances); dashed: the highest current with the overshoot in the reaction time; red: the hard limits (peak or stall).</p>\n");
    kv_table(out, &ctx.limit_rows);
}

/// The current sampling and loop: the explanation rows and the step response of the
/// sampled current, one point per control update, with the reference.
fn current_loop(out: &mut String, plan: &Plan, ctx: &Context) {
    if !ctx.sampling_rows.is_empty() {
        h2(out, "current-sampling", "Current sampling");
        kv_table(out, &ctx.sampling_rows);
    }
    let Some(l) = &plan.current_loop else {
        return;
    };
    h2(out, "current-loop", "Current loop");
    let ys = &l.step_response;
    let top = ys.iter().copied().fold(1.0, f64::max) * 1.1;
    let n = ys.len().max(2) as f64 - 1.0;
    let x = |k: f64| 50.0 + 560.0 * k / n;
    let y = |v: f64| 170.0 - 150.0 * (v / top).clamp(0.0, 1.0);
    let points: Vec<String> = ys
        .iter()
        .enumerate()
        .map(|(k, v)| format!("{:.1},{:.1}", x(k as f64), y(*v)))
        .collect();
    let period_s = 1.0 / l.rate_hz;
    let end_time = format_quantity(n * period_s, Dimension::Time, 3);
    let _ = writeln!(
        out,
        "<svg class=\"step\" viewBox=\"0 0 640 200\" role=\"img\" aria-label=\"step response of the sampled current\">\n\
         <line x1=\"50\" y1=\"170\" x2=\"610\" y2=\"170\" stroke=\"#555\"/><line x1=\"50\" y1=\"20\" x2=\"50\" y2=\"170\" stroke=\"#555\"/>\n\
         <line x1=\"50\" y1=\"{r:.1}\" x2=\"610\" y2=\"{r:.1}\" stroke=\"#888\" stroke-dasharray=\"4 3\"><title>reference</title></line>\n\
         <polyline fill=\"none\" stroke=\"#36c\" stroke-width=\"1.5\" points=\"{pts}\"><title>sampled current, {os:.1} % overshoot</title></polyline>\n\
         <text x=\"45\" y=\"{r:.1}\" font-size=\"10\" text-anchor=\"end\">1</text><text x=\"45\" y=\"174\" font-size=\"10\" text-anchor=\"end\">0</text>\n\
         <text x=\"50\" y=\"188\" font-size=\"10\">0</text><text x=\"610\" y=\"188\" font-size=\"10\" text-anchor=\"end\">{end}</text>\n</svg>",
        r = y(1.0),
        pts = points.join(" "),
        os = l.overshoot_pct,
        end = escape(&end_time),
    );
    out.push_str("<p>The sampled current after a unit step of the reference, one point per control update (the loop's exact discrete model: sample, computation delay, PWM hold, R–L); dashed: the reference.</p>\n");
    kv_table(out, &ctx.loop_rows);
}

fn opt_c(t: Option<f64>) -> String {
    t.map(|t| format_quantity(t, Dimension::Temperature, 3))
        .unwrap_or_else(|| "runaway".into())
}

fn alternatives(out: &mut String, plan: &Plan) {
    h2(out, "alternatives", "Alternatives");
    if plan.alternatives.is_empty() {
        out.push_str("<p>None offered.</p>\n");
        return;
    }
    out.push_str("<table class=\"alternatives\"><thead><tr><th>alternative</th><th class=\"num\">frequency</th><th class=\"num\">divider</th><th class=\"num\">period</th><th>alignment</th><th class=\"num\">total loss</th><th class=\"num\">junction</th><th class=\"num\">ripple</th><th>trade against the chosen setting</th></tr></thead><tbody>\n");
    for a in &plan.alternatives {
        let _ = writeln!(
            out,
            "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{} ticks</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"detail\">{}</td></tr>",
            escape(&a.label),
            escape(&format_quantity(a.frequency_hz, Dimension::Frequency, 5)),
            a.divider,
            a.period_ticks,
            escape(&a.alignment),
            escape(&format_quantity(a.total_loss_w, Dimension::Power, 3)),
            escape(&opt_c(a.junction_c)),
            escape(&format_quantity(a.ripple_a, Dimension::Current, 3)),
            escape(&a.trade)
        );
    }
    out.push_str("</tbody></table>\n");
}

fn findings(out: &mut String, ctx: &Context) {
    h2(out, "findings", "Findings");
    if ctx.findings.is_empty() {
        out.push_str("<p>None.</p>\n");
        return;
    }
    out.push_str(
        "<p><code>pwmplan explain CODE</code> says what a bracketed code means and where its rule comes from.</p>\n<table class=\"findings\"><tbody>\n",
    );
    for f in &ctx.findings {
        let sev = match f.label.as_str() {
            "error" | "warning" | "info" => f.label.as_str(),
            _ => "info",
        };
        let _ = writeln!(
            out,
            "<tr><td style=\"width:90px\"><span class=\"badge {sev}\">{}</span></td><td>{}</td></tr>",
            escape(&f.label),
            escape(&f.value)
        );
    }
    out.push_str("</tbody></table>\n");
}

fn assumptions(out: &mut String, ctx: &Context) {
    h2(out, "assumptions", "Assumptions");
    list(out, &ctx.assumptions);
}

fn inputs(out: &mut String, plan: &Plan) {
    h2(out, "inputs", "Inputs");
    out.push_str(
        "<table class=\"inputs\"><thead><tr><th>file</th><th>SHA-256</th></tr></thead><tbody>\n",
    );
    for i in &plan.inputs {
        let _ = writeln!(
            out,
            "<tr><td class=\"mono\">{}</td><td class=\"mono hash\">{}</td></tr>",
            escape(&i.file),
            escape(&i.sha256)
        );
    }
    out.push_str("</tbody></table>\n");
}

fn conventions(out: &mut String, ctx: &Context) {
    h2(out, "conventions", "Timer conventions");
    out.push_str("<table class=\"kv conventions\"><tbody>\n");
    for r in &ctx.conventions {
        let _ = writeln!(
            out,
            "<tr><th scope=\"row\" class=\"mono\">{}</th><td class=\"detail\">{}</td></tr>",
            escape(&r.label),
            escape(&r.value)
        );
    }
    out.push_str("</tbody></table>\n");
}

/// The report page. `loss_svg` and `thermal_svg` are the outputs of
/// [`crate::output::svg::loss_plot_svg`] and [`crate::output::svg::thermal_ripple_plot_svg`];
/// the page carries [`MARKER_PLACEHOLDER`] once, in a comment, for sealing.
pub fn report_html(plan: &Plan, ctx: &Context, loss_svg: &str, thermal_svg: &str) -> String {
    let mut out = String::new();
    out.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n");
    out.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n");
    let _ = writeln!(
        out,
        "<title>PWM plan: {}</title>\n<style>{STYLE}</style>\n</head>\n<body>",
        escape(&plan.design)
    );
    let _ = writeln!(out, "<!-- {MARKER_PLACEHOLDER} -->");
    header(&mut out, plan, ctx);
    settings(&mut out, plan, ctx);
    cautions(&mut out, ctx);
    constraints(&mut out, plan, ctx);
    operating_range(&mut out, ctx);
    worst_case(&mut out, plan, ctx);
    plots(&mut out, loss_svg, thermal_svg);
    losses(&mut out, plan, ctx);
    figures(&mut out, ctx);
    current_limit(&mut out, plan, ctx);
    current_loop(&mut out, plan, ctx);
    alternatives(&mut out, plan);
    findings(&mut out, ctx);
    assumptions(&mut out, ctx);
    inputs(&mut out, plan);
    conventions(&mut out, ctx);
    let _ = writeln!(
        out,
        "<footer>Generated by {} from the inputs listed above. The content hash in this file's source marks it as unedited.</footer>\n</body>\n</html>",
        escape(&ctx.tool)
    );
    out
}
