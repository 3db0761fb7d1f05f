//! The two review plots as SVG text: loss components stacked against PWM
//! frequency, and junction temperature and motor-current ripple against
//! PWM frequency, both from sweep rows.
//!
//! **Invariant:** pure and deterministic: hand-written SVG (no font files,
//! no plotting library), coordinates at two decimals, no map iteration, no
//! external references (no `url(…)`, no links). Every series is one element
//! whose `class` names it (`series conduction`, `limit ripple-limit`,
//! `chosen`), and every tick carries its value in `data-value`, so tests can
//! read the plot back. Text is escaped for XML.
//!
//! Both pictures are `PLOT_W` (900 px) wide, so they fit a 900 px column
//! at their own size; the legend and the failing spans' key go under the
//! plot, laid out from estimated text widths ([`crate::output::legend`]),
//! and the height grows to hold them (`tests/plot_layout.rs` measures the
//! texts in a browser).

use std::fmt::Write as _;

use crate::input::units::{Dimension, format_quantity};
use crate::model::evaluate::LossFigures;
use crate::model::sweep::SweepRow;
pub use crate::output::legend::escape;
use crate::output::legend::{
    CHOSEN, INK, Swatch, legend, n, span_key, span_letter, text, text_width,
};

/// The SVG namespace, needed by a standalone `.svg` file; the HTML report
/// strips it (inline SVG in HTML5 is in that namespace already).
pub const SVG_NAMESPACE_ATTR: &str = r#" xmlns="http://www.w3.org/2000/svg""#;

const FONT: &str = "DejaVu Sans, Liberation Sans, Arial, Helvetica, sans-serif";
const GRID: &str = "#d9d9d9";
const GRID_MINOR: &str = "#eeeeee";
const LIMIT: &str = "#b2182b";

/// One loss component: key (CSS class), legend label, colour, and value.
struct Component {
    key: &'static str,
    label: &'static str,
    colour: &'static str,
    get: fn(&LossFigures) -> f64,
}

/// Stacking order, bottom first: the frequency-independent terms under the
/// frequency-proportional ones. Colours from the Okabe–Ito palette (common
/// practice for colour-blind-safe plots), plus two muted tones.
const COMPONENTS: &[Component] = &[
    Component {
        key: "conduction",
        label: "conduction",
        colour: "#0072b2",
        get: |l| l.conduction,
    },
    Component {
        key: "freewheel-diode",
        label: "freewheel diode",
        colour: "#999933",
        get: |l| l.freewheel_diode,
    },
    Component {
        key: "motor-ripple-copper",
        label: "motor ripple copper",
        colour: "#8c6d31",
        get: |l| l.motor_ripple_copper,
    },
    Component {
        key: "switching",
        label: "switching",
        colour: "#e69f00",
        get: |l| l.switching,
    },
    Component {
        key: "output-capacitance",
        label: "output capacitance",
        colour: "#56b4e9",
        get: |l| l.output_capacitance,
    },
    Component {
        key: "reverse-recovery",
        label: "reverse recovery",
        colour: "#cc79a7",
        get: |l| l.reverse_recovery,
    },
    Component {
        key: "dead-time-diode",
        label: "dead-time diode",
        colour: "#009e73",
        get: |l| l.dead_time_diode,
    },
    Component {
        key: "gate-drive",
        label: "gate drive",
        colour: "#d55e00",
        get: |l| l.gate_drive,
    },
];

/// The CSS class keys of the loss components with a nonzero value in some
/// row, bottom of the stack first (what [`loss_plot_svg`] draws).
pub fn nonzero_components(rows: &[SweepRow]) -> Vec<&'static str> {
    COMPONENTS
        .iter()
        .filter(|c| rows.iter().any(|r| (c.get)(&r.losses_w) > 0.0))
        .map(|c| c.key)
        .collect()
}

/// The plot colour of a loss component by its label (`"gate drive"`),
/// so tables can match the plot.
pub fn loss_colour(label: &str) -> Option<&'static str> {
    COMPONENTS
        .iter()
        .find(|c| c.label == label)
        .map(|c| c.colour)
}

/// A number with up to three decimals and no trailing zeros.
fn trim(v: f64) -> String {
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.into() }
}

/// A tick label in hertz with its prefix: 20 kHz, 1.5 MHz.
fn hz_label(v: f64) -> String {
    if v >= 1e6 {
        format!("{} MHz", trim(v / 1e6))
    } else if v >= 1e3 {
        format!("{} kHz", trim(v / 1e3))
    } else {
        format!("{} Hz", trim(v))
    }
}

/// Logarithmic frequency axis mapped onto `[px0, px1]`.
struct LogAxis {
    lo: f64,
    hi: f64,
    px0: f64,
    px1: f64,
}

impl LogAxis {
    /// Spans the given positive frequencies; a single value gets ±20 %.
    fn spanning(values: &[f64], px0: f64, px1: f64) -> Option<LogAxis> {
        let pos = values.iter().copied().filter(|v| v.is_finite() && *v > 0.0);
        let lo = pos.clone().fold(f64::INFINITY, f64::min);
        let hi = pos.fold(f64::NEG_INFINITY, f64::max);
        if !lo.is_finite() || !hi.is_finite() {
            return None;
        }
        let (lo, hi) = if hi / lo < 1.0001 {
            (lo / 1.2, hi * 1.2)
        } else {
            (lo, hi)
        };
        Some(LogAxis { lo, hi, px0, px1 })
    }

    fn x(&self, f: f64) -> f64 {
        let t = (f.max(self.lo * 1e-3).ln() - self.lo.ln()) / (self.hi.ln() - self.lo.ln());
        self.px0 + t * (self.px1 - self.px0)
    }

    fn contains(&self, f: f64) -> bool {
        f >= self.lo * (1.0 - 1e-9) && f <= self.hi * (1.0 + 1e-9)
    }

    /// Major ticks at 1-2-5 per decade (only 1 when the axis spans more
    /// than four decades) and minor ones at the other integers.
    fn ticks(&self) -> (Vec<f64>, Vec<f64>) {
        let (mut major, mut minor) = (Vec::new(), Vec::new());
        let k0 = self.lo.log10().floor() as i32;
        let k1 = self.hi.log10().ceil() as i32;
        let wide = k1 - k0 > 4;
        for k in k0..=k1 {
            for m in 1..=9 {
                let v = f64::from(m) * 10f64.powi(k);
                if !self.contains(v) {
                    continue;
                }
                let is_major = if wide { m == 1 } else { matches!(m, 1 | 2 | 5) };
                if is_major {
                    major.push(v);
                } else {
                    minor.push(v);
                }
            }
        }
        // Fewer than two labels cannot show the scale: label the ends too.
        if major.len() < 2 {
            major.insert(0, self.lo);
            major.push(self.hi);
            major.sort_by(f64::total_cmp);
            major.dedup();
        }
        (major, minor)
    }
}

/// Linear value axis mapped onto `[bottom, top]` pixels (top < bottom).
struct LinAxis {
    lo: f64,
    hi: f64,
    step: f64,
    bottom: f64,
    top: f64,
}

/// A 1-2-5 step giving about `target` intervals over `span`.
fn nice_step(span: f64, target: f64) -> f64 {
    let raw = (span / target).max(f64::MIN_POSITIVE);
    let mag = 10f64.powf(raw.log10().floor());
    let norm = raw / mag;
    let m = if norm <= 1.0 {
        1.0
    } else if norm <= 2.0 {
        2.0
    } else if norm <= 5.0 {
        5.0
    } else {
        10.0
    };
    m * mag
}

impl LinAxis {
    /// A range on 1-2-5 steps holding every finite value; `zero` pins the
    /// lower end at zero (for losses and ripple).
    fn spanning(values: &[f64], zero: bool, bottom: f64, top: f64) -> LinAxis {
        let fin = values.iter().copied().filter(|v| v.is_finite());
        let mut lo = fin.clone().fold(f64::INFINITY, f64::min);
        let mut hi = fin.fold(f64::NEG_INFINITY, f64::max);
        if !lo.is_finite() {
            (lo, hi) = (0.0, 1.0);
        }
        if zero {
            lo = lo.min(0.0);
        }
        if hi - lo <= hi.abs().max(lo.abs()) * 1e-9 {
            let pad = if hi == 0.0 { 1.0 } else { hi.abs() * 0.1 };
            (lo, hi) = (lo - pad, hi + pad);
            if zero {
                lo = lo.max(0.0);
            }
        }
        let step = nice_step(hi - lo, 5.0);
        // Tolerance inward, so a value on a step is not pushed a step out.
        let lo = (lo / step + 1e-9).floor() * step;
        let hi = (hi / step - 1e-9).ceil() * step;
        LinAxis {
            lo,
            hi,
            step,
            bottom,
            top,
        }
    }

    fn y(&self, v: f64) -> f64 {
        self.bottom - (v - self.lo) / (self.hi - self.lo) * (self.bottom - self.top)
    }

    fn ticks(&self) -> Vec<f64> {
        let count = ((self.hi - self.lo) / self.step).round() as i64;
        (0..=count)
            .map(|i| {
                let v = self.lo + i as f64 * self.step;
                // Snap float noise (0.30000000000000004) to the step grid.
                (v / self.step).round() * self.step
            })
            .collect()
    }

    /// Decimals that show the step exactly, after scaling by `factor`.
    fn decimals(&self, factor: f64) -> usize {
        let s = self.step * factor;
        if s >= 1.0 {
            0
        } else {
            (-s.log10().floor()) as usize
        }
    }
}

/// The plot rectangle.
#[derive(Clone, Copy)]
struct Frame {
    left: f64,
    right: f64,
    top: f64,
    bottom: f64,
}

fn svg_open(out: &mut String, width: f64, height: f64, title: &str) {
    let _ = writeln!(
        out,
        r#"<svg{SVG_NAMESPACE_ATTR} width="{w}" height="{h}" viewBox="0 0 {w} {h}" font-family="{FONT}" font-size="12" role="img">"#,
        w = n(width),
        h = n(height)
    );
    let _ = writeln!(out, "<title>{}</title>", escape(title));
    let _ = writeln!(
        out,
        r##"<rect class="background" x="0" y="0" width="{}" height="{}" fill="#ffffff"/>"##,
        n(width),
        n(height)
    );
}

fn line(out: &mut String, class: &str, (x1, y1): (f64, f64), (x2, y2): (f64, f64), style: &str) {
    let _ = writeln!(
        out,
        r#"<line class="{class}" x1="{}" y1="{}" x2="{}" y2="{}" {style}/>"#,
        n(x1),
        n(y1),
        n(x2),
        n(y2)
    );
}

/// Frequency grid and tick labels under the frame (labels only when
/// `labels`, for the lower of two stacked panels).
fn x_grid(out: &mut String, ax: &LogAxis, fr: Frame, labels: bool) {
    let (major, minor) = ax.ticks();
    for v in &minor {
        let x = ax.x(*v);
        line(
            out,
            "grid minor",
            (x, fr.top),
            (x, fr.bottom),
            &format!(r#"stroke="{GRID_MINOR}" stroke-width="1""#),
        );
    }
    for v in &major {
        let x = ax.x(*v);
        line(
            out,
            "grid major",
            (x, fr.top),
            (x, fr.bottom),
            &format!(r#"stroke="{GRID}" stroke-width="1""#),
        );
        if labels {
            let _ = writeln!(
                out,
                r#"<text class="tick x-tick" data-value="{}" x="{}" y="{}" text-anchor="middle" fill="{INK}">{}</text>"#,
                v,
                n(x),
                n(fr.bottom + 18.0),
                escape(&hz_label(*v))
            );
        }
    }
}

/// Value grid with tick labels (class `tick_class`) left of the frame, and
/// the axis title rotated along it.
fn y_grid(out: &mut String, ax: &LinAxis, fr: Frame, factor: f64, title: &str, tick_class: &str) {
    let d = ax.decimals(factor);
    for v in ax.ticks() {
        let y = ax.y(v);
        line(
            out,
            "grid major",
            (fr.left, y),
            (fr.right, y),
            &format!(r#"stroke="{GRID}" stroke-width="1""#),
        );
        let _ = writeln!(
            out,
            r#"<text class="tick {tick_class}" data-value="{}" x="{}" y="{}" text-anchor="end" fill="{INK}">{:.d$}</text>"#,
            v,
            n(fr.left - 6.0),
            n(y + 4.0),
            v * factor
        );
    }
    let cy = (fr.top + fr.bottom) / 2.0;
    let _ = writeln!(
        out,
        r#"<text class="axis-title" x="{}" y="{}" text-anchor="middle" fill="{INK}" transform="rotate(-90 {} {})">{}</text>"#,
        n(fr.left - 52.0),
        n(cy),
        n(fr.left - 52.0),
        n(cy),
        escape(title)
    );
}

fn frame_border(out: &mut String, fr: Frame) {
    let _ = writeln!(
        out,
        r#"<rect class="frame" x="{}" y="{}" width="{}" height="{}" fill="none" stroke="{INK}" stroke-width="1"/>"#,
        n(fr.left),
        n(fr.top),
        n(fr.right - fr.left),
        n(fr.bottom - fr.top)
    );
}

fn x_title(out: &mut String, fr: Frame) {
    text(
        out,
        (fr.left + fr.right) / 2.0,
        fr.bottom + 40.0,
        "middle",
        r#" class="axis-title""#,
        "PWM frequency (Hz, logarithmic)",
    );
}

/// Rows in ascending frequency.
fn sorted(rows: &[SweepRow]) -> Vec<&SweepRow> {
    let mut v: Vec<&SweepRow> = rows.iter().collect();
    v.sort_by(|a, b| a.frequency_hz.total_cmp(&b.frequency_hz));
    v
}

/// Where feasibility changes between two neighbouring rows: at the
/// solver's band edge when one lies between them (it is exact), else at
/// the feasible row, so the shading covers all not shown feasible.
fn boundary(a: &SweepRow, b: &SweepRow, band: Option<[f64; 2]>) -> f64 {
    let (fa, fb) = (a.frequency_hz, b.frequency_hz);
    let at_feasible = if a.feasible { fa } else { fb };
    band.into_iter()
        .flatten()
        .find(|e| *e >= fa && *e <= fb)
        .unwrap_or(at_feasible)
}

/// Runs of infeasible rows as frequency spans, edges as [`boundary`]
/// places them, the axis end where the run reaches it. Each with the names
/// of the constraints that fail in it.
fn infeasible_runs(rows: &[&SweepRow], ax: &LogAxis, band: Option<[f64; 2]>) -> Vec<Run> {
    let mut runs = Vec::new();
    let mut i = 0;
    while i < rows.len() {
        if rows[i].feasible {
            i += 1;
            continue;
        }
        let start = i;
        let mut names: Vec<String> = Vec::new();
        while i < rows.len() && !rows[i].feasible {
            for f in &rows[i].failing {
                if !names.contains(f) {
                    names.push(f.clone());
                }
            }
            i += 1;
        }
        let lo = if start == 0 {
            ax.lo
        } else {
            boundary(rows[start - 1], rows[start], band)
        };
        let hi = if i >= rows.len() {
            ax.hi
        } else {
            boundary(rows[i - 1], rows[i], band)
        };
        runs.push((lo, hi, names));
    }
    runs
}

/// A failing span: its ends on the axis and the constraints failing in it.
type Run = (f64, f64, Vec<String>);

/// Wash out the failing spans (`class` names the wash), each with the
/// constraints that fail there as its tooltip.
fn shade_infeasible(out: &mut String, runs: &[Run], ax: &LogAxis, fr: Frame, class: &str) {
    for (lo, hi, names) in runs {
        let (x0, x1) = (ax.x(*lo), ax.x(*hi));
        let why = if names.is_empty() {
            "infeasible".to_string()
        } else {
            format!("fails: {}", names.join(", "))
        };
        let _ = writeln!(
            out,
            r##"<rect class="{class}" x="{}" y="{}" width="{}" height="{}" fill="#ffffff" fill-opacity="0.62"><title>{}</title></rect>"##,
            n(x0),
            n(fr.top),
            n((x1 - x0).max(0.0)),
            n(fr.bottom - fr.top),
            escape(&why)
        );
        let _ = writeln!(
            out,
            r##"<rect class="{class}-strip" x="{}" y="{}" width="{}" height="4" fill="#9e9e9e"/>"##,
            n(x0),
            n(fr.top),
            n((x1 - x0).max(0.0))
        );
    }
}

/// The letter of the `i`-th failing span: A to Z, then a to z, then `*`.
fn span_mark(i: usize) -> char {
    let i = u8::try_from(i).unwrap_or(u8::MAX);
    match i {
        0..=25 => char::from(b'A' + i),
        26..=51 => char::from(b'a' + (i - 26)),
        _ => '*',
    }
}

/// The span's place and what fails there, for the key:
/// `below 14.1 kHz: fails ripple, audible`.
fn span_words(run: &Run, ax: &LogAxis) -> String {
    let (lo, hi, names) = run;
    let f = |v: f64| format_quantity(v, Dimension::Frequency, 3);
    let place = match (*lo <= ax.lo, *hi >= ax.hi) {
        (true, true) => "everywhere swept".to_string(),
        (true, false) => format!("below {}", f(*hi)),
        (false, true) => format!("above {}", f(*lo)),
        (false, false) => format!("{} to {}", f(*lo), f(*hi)),
    };
    if names.is_empty() {
        format!("{place}: infeasible")
    } else {
        format!("{place}: fails {}", names.join(", "))
    }
}

/// Least distance between two span letters' centres.
const LETTER_PITCH: f64 = 12.0;

/// Each failing span's letter above the frame, over the span (pushed
/// apart where spans are narrower than a letter, and kept over the
/// frame); returns the key's entries: each letter with its words.
fn span_letters(out: &mut String, runs: &[Run], ax: &LogAxis, fr: Frame) -> Vec<(char, String)> {
    let (lo, hi) = (fr.left + 6.0, fr.right - 6.0);
    let mut xs: Vec<f64> = Vec::with_capacity(runs.len());
    for (a, b, _) in runs {
        let centre = ((ax.x(*a) + ax.x(*b)) / 2.0).clamp(lo, hi);
        let prev = xs.last().map_or(f64::NEG_INFINITY, |p| p + LETTER_PITCH);
        xs.push(centre.max(prev));
    }
    // Back from the right end, so a crowd pushed past it comes back inside.
    let mut next = hi + LETTER_PITCH;
    for x in xs.iter_mut().rev() {
        *x = x.min(next - LETTER_PITCH);
        next = *x;
    }
    let _ = writeln!(out, r#"<g class="span-letters">"#);
    let keys = runs
        .iter()
        .zip(&xs)
        .enumerate()
        .map(|(i, (run, x))| {
            span_letter(out, *x, fr.top - 6.0, span_mark(i));
            (span_mark(i), span_words(run, ax))
        })
        .collect();
    let _ = writeln!(out, "</g>");
    keys
}

/// A vertical marker at the chosen frequency, with its label (on a white
/// plate, so lines under it stay readable) at height `label_y`.
fn chosen_line(out: &mut String, ax: &LogAxis, fr: Frame, f: f64, label_y: Option<f64>) {
    let x = ax.x(f);
    line(
        out,
        "chosen chosen-line",
        (x, fr.top),
        (x, fr.bottom),
        &format!(r#"stroke="{CHOSEN}" stroke-width="1.2" stroke-dasharray="2 3""#),
    );
    let Some(y) = label_y else {
        return;
    };
    let label = format!("chosen {}", format_quantity(f, Dimension::Frequency, 5));
    let w = text_width(&label, 12.0, true) + 8.0;
    let (x0, tx, anchor) = if fr.right - x > w + 8.0 {
        (x + 2.0, x + 6.0, "start")
    } else {
        (x - 2.0 - w, x - 6.0, "end")
    };
    let _ = writeln!(
        out,
        r##"<rect class="chosen-plate" x="{}" y="{}" width="{}" height="17" fill="#ffffff" fill-opacity="0.88"/>"##,
        n(x0),
        n(y - 13.0),
        n(w)
    );
    text(
        out,
        tx,
        y,
        anchor,
        r#" class="chosen-label" font-weight="bold""#,
        &label,
    );
}

/// Label height in the junction panel: near the top, but clear of the
/// limit line and of the limit's label (baselines 18 px apart: a line of
/// 12 px type is about 14 px tall).
fn clear_of(limit_y: f64, fr: Frame) -> f64 {
    let y = fr.top + 30.0;
    let label_y = limit_label_y(limit_y, fr);
    if (limit_y - (y - 5.0)).abs() < 14.0 || (label_y - y).abs() < 18.0 {
        label_y.max(limit_y) + 22.0
    } else {
        y
    }
}

/// A limit label's baseline: above its line at `y`, or below it when the
/// frame's top is too close.
fn limit_label_y(y: f64, fr: Frame) -> f64 {
    if y - fr.top < 22.0 { y + 15.0 } else { y - 6.0 }
}

fn chosen_dot(out: &mut String, class: &str, x: f64, y: f64, value: f64) {
    let _ = writeln!(
        out,
        r##"<circle class="chosen {class}" data-value="{value}" cx="{}" cy="{}" r="5" fill="#ffffff" stroke="{CHOSEN}" stroke-width="2"/>"##,
        n(x),
        n(y)
    );
}

/// Value at `f` by linear interpolation in log frequency between rows
/// (rows where `get` is `None` break the curve: no value there).
fn interpolate(rows: &[&SweepRow], f: f64, get: impl Fn(&SweepRow) -> Option<f64>) -> Option<f64> {
    if let Some(r) = rows.iter().find(|r| r.frequency_hz == f) {
        return get(r);
    }
    let w = rows
        .windows(2)
        .find(|w| w[0].frequency_hz < f && f < w[1].frequency_hz)?;
    let (a, b) = (get(w[0])?, get(w[1])?);
    let span = (w[1].frequency_hz / w[0].frequency_hz).ln();
    if span <= 0.0 {
        return Some(a);
    }
    let t = (f / w[0].frequency_hz).ln() / span;
    Some(a + t * (b - a))
}

/// A message in place of a plot when there is nothing to draw.
fn empty_plot(title: &str, width: f64, height: f64) -> String {
    let mut out = String::new();
    svg_open(&mut out, width, height, title);
    text(
        &mut out,
        width / 2.0,
        height / 2.0,
        "middle",
        r#" class="no-data""#,
        "no realisable setting in the swept range",
    );
    out.push_str("</svg>\n");
    out
}

/// Scale factor and unit for values up to `max`: milli below 1.
fn scaled_unit(max: f64, unit: &str) -> (f64, String) {
    if max.abs() < 1.0 {
        (1e3, format!("m{unit}"))
    } else {
        (1.0, unit.to_string())
    }
}

/// Width of both plots: at their own size they fit a 900 px column.
const PLOT_W: f64 = 900.0;
const EMPTY_H: f64 = 470.0;
/// A loss band thinner than this over most of the sweep cannot be seen in
/// the stack: it is drawn again, at its own scale, in a panel below.
const THIN_PX: f64 = 2.0;

/// The frame of a panel from `top` to `bottom`: room on the left for the
/// value ticks and the axis title, the full width otherwise (the legend
/// goes below).
fn panel_frame(top: f64, bottom: f64) -> Frame {
    Frame {
        left: 78.0,
        right: PLOT_W - 24.0,
        top,
        bottom,
    }
}

fn plot_title(out: &mut String, fr: Frame, title: &str) {
    text(
        out,
        fr.left,
        24.0,
        "start",
        r#" class="plot-title" font-size="15" font-weight="bold""#,
        title,
    );
}

/// The picture: `body` with the legend and the failing spans' key laid out
/// under `axis_fr` (the panel carrying the frequency axis and its title),
/// the height grown to hold them.
fn finish(
    title: &str,
    body: String,
    axis_fr: Frame,
    entries: &[(Swatch, String)],
    keys: &[(char, String)],
) -> String {
    let (x, width) = (axis_fr.left, PLOT_W - axis_fr.left - 16.0);
    let mut below = String::new();
    let mut y = axis_fr.bottom + 70.0;
    y += legend(&mut below, x, y, width, entries);
    y += span_key(&mut below, x, y + 4.0, width, keys);
    let mut out = String::new();
    svg_open(&mut out, PLOT_W, y - 6.0, title);
    out.push_str(&body);
    out.push_str(&below);
    out.push_str("</svg>\n");
    out
}

/// Loss components of the whole stage at the rated case, stacked against
/// PWM frequency on a logarithmic axis: one filled polygon per nonzero
/// component (`class="series <component>"`), the total as a line, the
/// infeasible spans washed out and lettered above the frame (the key under
/// the legend says what fails in each), the solver's feasible band edges
/// dotted, the chosen setting marked. Components too thin to see in the
/// stack are drawn again as lines at their own scale in a lower panel
/// (`class="panel thin-bands"`), and the legend says so.
pub fn loss_plot_svg(
    rows: &[SweepRow],
    chosen_hz: Option<f64>,
    band_hz: Option<[f64; 2]>,
) -> String {
    let title = "Power loss of the stage against PWM frequency (rated case)";
    let rows = sorted(rows);
    let fr = panel_frame(56.0, 412.0);
    let mut fs: Vec<f64> = rows.iter().map(|r| r.frequency_hz).collect();
    fs.extend(chosen_hz);
    let Some(ax) = LogAxis::spanning(&fs, fr.left, fr.right).filter(|_| !rows.is_empty()) else {
        return empty_plot(title, PLOT_W, EMPTY_H);
    };
    let comps: Vec<&Component> = COMPONENTS
        .iter()
        .filter(|c| rows.iter().any(|r| (c.get)(&r.losses_w) > 0.0))
        .collect();
    let max = stack_max(&rows, &comps);
    let ay = LinAxis::spanning(&[0.0, max], true, fr.bottom, fr.top);
    let thin = thin_components(&rows, &comps, &ay);
    let runs = infeasible_runs(&rows, &ax, band_hz);
    let chosen = chosen_hz.filter(|f| ax.contains(*f));
    let p = SharedAxis {
        rows,
        ax,
        runs,
        chosen,
    };

    let mut body = String::new();
    plot_title(&mut body, fr, title);
    let drawn = stack_panel(&mut body, &p, fr, &comps, &ay, band_hz, thin.is_empty());
    let axis_fr = if thin.is_empty() {
        fr
    } else {
        thin_panel(&mut body, &p, fr, &thin)
    };
    x_title(&mut body, axis_fr);
    let keys = span_letters(&mut body, &p.runs, &p.ax, fr);
    let entries = loss_legend_entries(&comps, &thin, drawn);
    finish(title, body, axis_fr, &entries, &keys)
}

/// What the loss panel drew, for its legend.
#[derive(Clone, Copy)]
struct StackDrawn {
    chosen: bool,
    band: bool,
    range: bool,
}

/// The stacked loss panel in `fr` on value axis `ay`: grids (frequency
/// labels when `x_labels`), the stack, the total, the range band, the
/// washed failing spans, the band edges and the chosen setting.
fn stack_panel(
    out: &mut String,
    p: &SharedAxis,
    fr: Frame,
    comps: &[&Component],
    ay: &LinAxis,
    band_hz: Option<[f64; 2]>,
    x_labels: bool,
) -> StackDrawn {
    let (rows, ax) = (&p.rows, &p.ax);
    let (factor, unit) = scaled_unit(ay.hi, "W");
    x_grid(out, ax, fr, x_labels);
    y_grid(
        out,
        ay,
        fr,
        factor,
        &format!("Power loss ({unit})"),
        "y-tick",
    );
    stacked_areas(out, rows, comps, ax, ay);
    total_line(out, rows, ax, ay);
    let range = range_band(out, rows, ax, ay);
    shade_infeasible(out, &p.runs, ax, fr, "infeasible");
    let band = !band_edges(out, band_hz, ax, fr).is_empty();
    let mut chosen = false;
    if let Some(f) = p.chosen {
        chosen_line(out, ax, fr, f, Some(fr.top + 30.0));
        if let Some(v) = interpolate(rows, f, |r| Some(r.losses_w.total)) {
            chosen_dot(out, "chosen-total", ax.x(f), ay.y(v), v);
            chosen = true;
        }
    }
    frame_border(out, fr);
    StackDrawn {
        chosen,
        band,
        range,
    }
}

/// The components whose band in the stack (axis `ay`) is thinner than
/// [`THIN_PX`] at most of the rows.
fn thin_components<'c>(
    rows: &[&SweepRow],
    comps: &[&'c Component],
    ay: &LinAxis,
) -> Vec<&'c Component> {
    let px_per_unit = (ay.bottom - ay.top) / (ay.hi - ay.lo);
    comps
        .iter()
        .filter(|c| {
            let thin = rows
                .iter()
                .filter(|r| (c.get)(&r.losses_w) * px_per_unit < THIN_PX)
                .count();
            2 * thin > rows.len()
        })
        .copied()
        .collect()
}

/// The panel under the stack: each thin component as a line on a value
/// axis of its own (nothing enlarged: the axis says the scale), with the
/// frequency ticks, the washed spans and the chosen frequency. Returns its
/// frame.
fn thin_panel(out: &mut String, p: &SharedAxis, above: Frame, thin: &[&Component]) -> Frame {
    let fr = panel_frame(above.bottom + 18.0, above.bottom + 128.0);
    let values: Vec<f64> = p
        .rows
        .iter()
        .flat_map(|r| thin.iter().map(|c| (c.get)(&r.losses_w)))
        .collect();
    let ad = LinAxis::spanning(&values, true, fr.bottom, fr.top);
    let (factor, unit) = scaled_unit(ad.hi, "W");
    let _ = writeln!(out, r#"<g class="panel thin-bands">"#);
    x_grid(out, &p.ax, fr, true);
    y_grid(
        out,
        &ad,
        fr,
        factor,
        &format!("Thin bands ({unit})"),
        "thin-y-tick",
    );
    for c in thin {
        let segs = segments(&p.rows, &p.ax, &ad, |r| Some((c.get)(&r.losses_w)));
        let d: Vec<String> = segs.iter().map(|s| path_data(s)).collect();
        let _ = writeln!(
            out,
            r#"<path class="thin-band {k}" d="{}" fill="none" stroke="{}" stroke-width="2" stroke-linejoin="round"/>"#,
            d.join(" "),
            c.colour,
            k = c.key
        );
    }
    shade_infeasible(out, &p.runs, &p.ax, fr, "infeasible-thin");
    if let Some(f) = p.chosen {
        let x = p.ax.x(f);
        line(
            out,
            "chosen thin-chosen-line",
            (x, fr.top),
            (x, fr.bottom),
            &format!(r#"stroke="{CHOSEN}" stroke-width="1.2" stroke-dasharray="2 3""#),
        );
    }
    frame_border(out, fr);
    let _ = writeln!(out, "</g>");
    fr
}

/// The height the loss axis must reach: the larger of the stacked
/// components and the total, over all rows.
fn stack_max(rows: &[&SweepRow], comps: &[&Component]) -> f64 {
    let tops: Vec<f64> = rows
        .iter()
        .map(|r| {
            let stacked: f64 = comps.iter().map(|c| (c.get)(&r.losses_w).max(0.0)).sum();
            let over_range = r.range.map_or(0.0, |x| x.loss_max_w);
            stacked.max(r.losses_w.total).max(over_range)
        })
        .collect();
    tops.iter().copied().fold(0.0, f64::max)
}

/// The band between the least and the largest loss over the operating
/// range (rows judged over one), outlined; whether one was drawn.
fn range_band(out: &mut String, rows: &[&SweepRow], ax: &LogAxis, ay: &LinAxis) -> bool {
    let spans: Vec<(f64, f64, f64)> = rows
        .iter()
        .filter_map(|r| {
            r.range
                .map(|x| (r.frequency_hz, x.loss_min_w, x.loss_max_w))
        })
        .filter(|(_, lo, hi)| lo.is_finite() && hi.is_finite())
        .collect();
    if spans.len() < 2 {
        return false;
    }
    let upper = spans
        .iter()
        .map(|(f, _, hi)| format!("{},{}", n(ax.x(*f)), n(ay.y(*hi))));
    let lower = spans
        .iter()
        .rev()
        .map(|(f, lo, _)| format!("{},{}", n(ax.x(*f)), n(ay.y(*lo))));
    let points: Vec<String> = upper.chain(lower).collect();
    let _ = writeln!(
        out,
        r#"<polygon class="loss-range" points="{}" fill="{INK}" fill-opacity="0.12" stroke="{INK}" stroke-width="0.8" stroke-dasharray="2 2"/>"#,
        points.join(" ")
    );
    true
}

/// The total loss as one line over the stacked areas.
fn total_line(out: &mut String, rows: &[&SweepRow], ax: &LogAxis, ay: &LinAxis) {
    let total: Vec<String> = rows
        .iter()
        .map(|r| format!("{},{}", n(ax.x(r.frequency_hz)), n(ay.y(r.losses_w.total))))
        .collect();
    let _ = writeln!(
        out,
        r#"<polyline id="loss-total" class="series total" points="{}" fill="none" stroke="{INK}" stroke-width="1.6"/>"#,
        total.join(" ")
    );
}

/// The stacked loss areas: each component's polygon runs along its top
/// left to right and back along its base (the top of the ones below).
fn stacked_areas(
    out: &mut String,
    rows: &[&SweepRow],
    comps: &[&Component],
    ax: &LogAxis,
    ay: &LinAxis,
) {
    let mut base = vec![0.0; rows.len()];
    for c in comps {
        let top: Vec<f64> = rows
            .iter()
            .zip(&base)
            .map(|(r, b)| b + (c.get)(&r.losses_w).max(0.0))
            .collect();
        let mut pts: Vec<String> = rows
            .iter()
            .zip(&top)
            .map(|(r, v)| format!("{},{}", n(ax.x(r.frequency_hz)), n(ay.y(*v))))
            .collect();
        pts.extend(
            rows.iter()
                .zip(&base)
                .rev()
                .map(|(r, v)| format!("{},{}", n(ax.x(r.frequency_hz)), n(ay.y(*v)))),
        );
        let _ = writeln!(
            out,
            r##"<polygon id="loss-{k}" class="series {k}" points="{}" fill="{}" fill-opacity="0.9" stroke="#ffffff" stroke-width="0.6"/>"##,
            pts.join(" "),
            c.colour,
            k = c.key
        );
        base = top;
    }
}

/// The solver's feasible band edges inside the axis, drawn dotted; returns
/// the edges drawn.
fn band_edges(out: &mut String, band_hz: Option<[f64; 2]>, ax: &LogAxis, fr: Frame) -> Vec<f64> {
    let band: Vec<f64> = band_hz
        .map(|b| b.to_vec())
        .unwrap_or_default()
        .into_iter()
        .filter(|f| ax.contains(*f))
        .collect();
    for f in &band {
        let x = ax.x(*f);
        line(
            out,
            "band-edge",
            (x, fr.top),
            (x, fr.bottom),
            r##"stroke="#4d4d4d" stroke-width="1" stroke-dasharray="1 3""##,
        );
    }
    band
}

/// The loss plot's legend: the total, the range band when drawn, the
/// components top first (a thin one says where it is drawn to be seen),
/// the chosen dot and the band edges when drawn. The failing spans have
/// their own key.
fn loss_legend_entries(
    comps: &[&Component],
    thin: &[&Component],
    drawn: StackDrawn,
) -> Vec<(Swatch<'static>, String)> {
    let mut entries: Vec<(Swatch, String)> = vec![(
        Swatch::Line {
            colour: INK,
            dash: None,
        },
        "total".into(),
    )];
    if drawn.range {
        let outline = Swatch::Line {
            colour: INK,
            dash: Some("2 2"),
        };
        entries.push((outline, "range: least to most".into()));
    }
    entries.extend(comps.iter().rev().map(|c| {
        let label = if thin.iter().any(|t| t.key == c.key) {
            format!("{} (lower panel)", c.label)
        } else {
            c.label.to_string()
        };
        (Swatch::Fill(c.colour), label)
    }));
    if drawn.chosen {
        entries.push((Swatch::Dot, "chosen setting".into()));
    }
    if drawn.band {
        entries.push((
            Swatch::Line {
                colour: "#4d4d4d",
                dash: Some("1 3"),
            },
            "feasible band edge".into(),
        ));
    }
    entries
}

/// Polyline segments through the rows where `get` has a value (a `None`,
/// e.g. thermal runaway, breaks the curve).
fn segments(
    rows: &[&SweepRow],
    ax: &LogAxis,
    ay: &LinAxis,
    get: impl Fn(&SweepRow) -> Option<f64>,
) -> Vec<String> {
    let mut segs = Vec::new();
    let mut cur: Vec<String> = Vec::new();
    for r in rows {
        match get(r).filter(|v| v.is_finite()) {
            Some(v) => cur.push(format!("{},{}", n(ax.x(r.frequency_hz)), n(ay.y(v)))),
            None => {
                if !cur.is_empty() {
                    segs.push(cur.join(" "));
                    cur.clear();
                }
            }
        }
    }
    if !cur.is_empty() {
        segs.push(cur.join(" "));
    }
    segs
}

/// A polyline's points (`x,y x,y …`) as one path sub-path.
fn path_data(points: &str) -> String {
    let mut pts = points.split(' ');
    let first = pts.next().unwrap_or("0,0");
    let rest: Vec<&str> = pts.collect();
    if rest.is_empty() {
        format!("M{first}")
    } else {
        format!("M{first} L{}", rest.join(" "))
    }
}

fn series(out: &mut String, id: &str, colour: &str, dash: Option<&str>, segs: &[String]) {
    let dash = dash
        .map(|d| format!(r#" stroke-dasharray="{d}""#))
        .unwrap_or_default();
    // One element per series: a path with one sub-path per segment.
    let d: Vec<String> = segs.iter().map(|s| path_data(s)).collect();
    let _ = writeln!(
        out,
        r#"<path id="thermal-{id}" class="series {id}" d="{}" fill="none" stroke="{colour}" stroke-width="2"{dash} stroke-linejoin="round"/>"#,
        d.join(" ")
    );
}

fn limit_line(out: &mut String, class: &str, ay: &LinAxis, fr: Frame, value: f64, label: &str) {
    let y = ay.y(value);
    let _ = writeln!(
        out,
        r#"<line class="limit {class}" data-value="{value}" x1="{}" y1="{}" x2="{}" y2="{}" stroke="{LIMIT}" stroke-width="1.8" stroke-dasharray="7 4"/>"#,
        n(fr.left),
        n(y),
        n(fr.right),
        n(y)
    );
    let ty = limit_label_y(y, fr);
    text(
        out,
        fr.right - 6.0,
        ty,
        "end",
        &format!(r#" class="limit-label" fill="{LIMIT}""#),
        label,
    );
}

const THERMAL_EMPTY_H: f64 = 640.0;
const RATED: &str = "#0072b2";
const HIGH_BUS: &str = "#d55e00";
const RIPPLE: &str = "#009e73";

/// Junction temperature (rated case and highest supply) and motor-current
/// ripple against PWM frequency, in two stacked panels sharing the
/// logarithmic frequency axis; the junction limit and the ripple limit as
/// dashed lines (`class="limit junction-limit"`, `"limit ripple-limit"`),
/// infeasible spans washed out and lettered above the upper panel (the key
/// under the legend says what fails in each), the chosen setting marked in
/// both; one legend under both panels.
pub fn thermal_ripple_plot_svg(
    rows: &[SweepRow],
    t_j_limit_c: f64,
    ripple_limit_a: Option<f64>,
    chosen_hz: Option<f64>,
) -> String {
    let title = "Junction temperature and motor-current ripple against PWM frequency";
    let rows = sorted(rows);
    let top_fr = panel_frame(56.0, 312.0);
    let low_fr = panel_frame(342.0, 582.0);
    let mut fs: Vec<f64> = rows.iter().map(|r| r.frequency_hz).collect();
    fs.extend(chosen_hz);
    let Some(ax) = LogAxis::spanning(&fs, top_fr.left, top_fr.right).filter(|_| !rows.is_empty())
    else {
        return empty_plot(title, PLOT_W, THERMAL_EMPTY_H);
    };
    let mut temps: Vec<f64> = rows
        .iter()
        .flat_map(|r| [r.junction_c, r.junction_high_bus_c])
        .flatten()
        .collect();
    temps.push(t_j_limit_c);
    let at = LinAxis::spanning(&temps, false, top_fr.bottom, top_fr.top);
    let mut ripples: Vec<f64> = rows.iter().map(|r| r.ripple_pp_a).collect();
    ripples.extend(
        rows.iter()
            .filter_map(|r| r.range.and_then(|x| x.ripple_pp_max_a)),
    );
    ripples.extend(ripple_limit_a);
    let ar = LinAxis::spanning(&ripples, true, low_fr.bottom, low_fr.top);
    let runs = infeasible_runs(&rows, &ax, None);
    let chosen = chosen_hz.filter(|f| ax.contains(*f));
    let shared = SharedAxis {
        rows,
        ax,
        runs,
        chosen,
    };

    let mut body = String::new();
    plot_title(&mut body, top_fr, title);
    let dots = junction_panel(&mut body, &shared, top_fr, &at, t_j_limit_c);
    let (dot, range_drawn) = ripple_panel(&mut body, &shared, low_fr, &ar, ripple_limit_a);
    let keys = span_letters(&mut body, &shared.runs, &shared.ax, top_fr);
    let runaway = shared
        .rows
        .iter()
        .any(|r| r.junction_c.is_none() || r.junction_high_bus_c.is_none());
    let entries =
        thermal_legend_entries(ripple_limit_a.is_some(), dots || dot, range_drawn, runaway);
    finish(title, body, low_fr, &entries, &keys)
}

/// What the two panels of the thermal and ripple plot share: the sorted
/// rows, the frequency axis, the infeasible runs and the chosen frequency
/// (when on the axis).
struct SharedAxis<'r> {
    rows: Vec<&'r SweepRow>,
    ax: LogAxis,
    runs: Vec<(f64, f64, Vec<String>)>,
    chosen: Option<f64>,
}

/// The upper panel: junction temperatures at the rated and the highest
/// supply on axis `at`, the junction limit, the chosen setting; whether
/// the chosen dots were drawn.
fn junction_panel(
    out: &mut String,
    p: &SharedAxis,
    top_fr: Frame,
    at: &LinAxis,
    t_j_limit_c: f64,
) -> bool {
    let (rows, ax) = (&p.rows, &p.ax);
    let _ = writeln!(out, r#"<g class="panel junction">"#);
    x_grid(out, ax, top_fr, false);
    y_grid(out, at, top_fr, 1.0, "Junction temperature (°C)", "y-tick");
    let rated = segments(rows, ax, at, |r| r.junction_c);
    let high = segments(rows, ax, at, |r| r.junction_high_bus_c);
    series(out, "junction-rated", RATED, None, &rated);
    series(out, "junction-high-bus", HIGH_BUS, None, &high);
    shade_infeasible(out, &p.runs, ax, top_fr, "infeasible");
    limit_line(
        out,
        "junction-limit",
        at,
        top_fr,
        t_j_limit_c,
        &format!(
            "junction limit {}",
            format_quantity(t_j_limit_c, Dimension::Temperature, 3)
        ),
    );
    let mut dots = false;
    if let Some(f) = p.chosen {
        chosen_line(
            out,
            ax,
            top_fr,
            f,
            Some(clear_of(at.y(t_j_limit_c), top_fr)),
        );
        for (class, get) in [
            (
                "chosen-junction-rated",
                (|r: &SweepRow| r.junction_c) as fn(&SweepRow) -> Option<f64>,
            ),
            ("chosen-junction-high-bus", |r: &SweepRow| {
                r.junction_high_bus_c
            }),
        ] {
            if let Some(v) = interpolate(rows, f, get) {
                chosen_dot(out, class, ax.x(f), at.y(v), v);
                dots = true;
            }
        }
    }
    frame_border(out, top_fr);
    let _ = writeln!(out, "</g>");
    dots
}

/// The lower panel: the worst ripple of both supplies on axis `ar`, the
/// ripple limit when there is one, the chosen setting; whether the chosen
/// dot and the range's worst were drawn.
fn ripple_panel(
    out: &mut String,
    p: &SharedAxis,
    low_fr: Frame,
    ar: &LinAxis,
    ripple_limit_a: Option<f64>,
) -> (bool, bool) {
    let (rows, ax) = (&p.rows, &p.ax);
    let (rf, ru) = scaled_unit(ar.hi, "A");
    let _ = writeln!(out, r#"<g class="panel ripple">"#);
    x_grid(out, ax, low_fr, true);
    y_grid(
        out,
        ar,
        low_fr,
        rf,
        &format!("Ripple, peak to peak ({ru})"),
        "y-tick",
    );
    let rip = segments(rows, ax, ar, |r| Some(r.ripple_pp_a));
    series(out, "ripple", RIPPLE, None, &rip);
    let over_range = segments(rows, ax, ar, |r| r.range.and_then(|x| x.ripple_pp_max_a));
    let range_drawn = !over_range.is_empty();
    if range_drawn {
        series(out, "ripple-range", RIPPLE, Some("3 3"), &over_range);
    }
    shade_infeasible(out, &p.runs, ax, low_fr, "infeasible");
    if let Some(lim) = ripple_limit_a {
        limit_line(
            out,
            "ripple-limit",
            ar,
            low_fr,
            lim,
            &format!(
                "ripple limit {}",
                format_quantity(lim, Dimension::Current, 3)
            ),
        );
    }
    let mut dot = false;
    if let Some(f) = p.chosen {
        chosen_line(out, ax, low_fr, f, None);
        if let Some(v) = interpolate(rows, f, |r| Some(r.ripple_pp_a)) {
            chosen_dot(out, "chosen-ripple", ax.x(f), ar.y(v), v);
            dot = true;
        }
    }
    frame_border(out, low_fr);
    x_title(out, low_fr);
    let _ = writeln!(out, "</g>");
    (dot, range_drawn)
}

/// The legend under both panels, each entry naming its panel: the
/// junctions and their limit, the ripple (over the range when drawn) and
/// its limit, then the chosen dots and the runaway gaps when drawn. The
/// failing spans have their own key.
fn thermal_legend_entries(
    limit_drawn: bool,
    dot: bool,
    range_drawn: bool,
    runaway: bool,
) -> Vec<(Swatch<'static>, String)> {
    let line = |colour, dash| Swatch::Line { colour, dash };
    let mut entries = vec![
        (line(RATED, None), "junction, rated supply".to_string()),
        (line(HIGH_BUS, None), "junction, highest supply".to_string()),
        (line(LIMIT, Some("7 4")), "junction limit".to_string()),
        (
            line(RIPPLE, None),
            "ripple, worst of both supplies".to_string(),
        ),
    ];
    if range_drawn {
        entries.push((
            line(RIPPLE, Some("3 3")),
            "ripple, worst over the range".into(),
        ));
    }
    if limit_drawn {
        entries.push((line(LIMIT, Some("7 4")), "ripple limit".into()));
    }
    if dot {
        entries.push((Swatch::Dot, "chosen setting".into()));
    }
    if runaway {
        entries.push((Swatch::Wash(None), "gap: thermal runaway".into()));
    }
    entries
}

#[cfg(test)]
mod tests {
    use super::*;

    /// 1-2-5 steps by hand: span 0.78 over 5 → 0.156 → 0.2.
    #[test]
    fn nice_steps_are_one_two_five() {
        assert_eq!(nice_step(0.78, 5.0), 0.2);
        assert_eq!(nice_step(85.0, 5.0), 20.0);
        assert_eq!(nice_step(4.0, 5.0), 1.0);
        assert!((nice_step(0.04, 5.0) - 0.01).abs() < 1e-15);
    }

    /// Decade 10 kHz–100 kHz: majors 10k, 20k, 50k, 100k.
    #[test]
    fn log_ticks_one_decade() {
        let ax = LogAxis::spanning(&[10e3, 100e3], 0.0, 100.0).expect("axis");
        let (major, minor) = ax.ticks();
        assert_eq!(major, vec![10e3, 20e3, 50e3, 100e3]);
        assert_eq!(minor.len(), 6);
        assert_eq!(n(ax.x(10e3)), "0.00");
        assert_eq!(n(ax.x(100e3)), "100.00");
    }

    #[test]
    fn escapes_markup() {
        assert_eq!(escape("R<5 & Ω°\"'"), "R&lt;5 &amp; Ω°&quot;&#39;");
        assert_eq!(n(-0.001), "0.00");
        assert_eq!(hz_label(20e3), "20 kHz");
        assert_eq!(hz_label(1.5e6), "1.5 MHz");
    }
}
