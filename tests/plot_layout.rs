//! The plots lay themselves out: each one, rendered at its own size in a
//! headless browser 900 px wide, is no wider than 900 px, and no `<text>`
//! runs outside the picture or over another text. The plots are those
//! `plan` writes for the bundled designs (one with many loss components and
//! a range band, all with failing spans) and two made to crowd the layout:
//! every loss component, many narrow failing spans naming many constraints,
//! the chosen setting at the right end, runaway gaps.
//!
//! One browser launch measures every plot: a page embeds them all and, on
//! load, writes each text's `getBoundingClientRect()` and its picture's as
//! JSON into the page, which `--dump-dom` prints.

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use pwmplan::cli::solved::{generate_files, solve_design};
use pwmplan::svg::{loss_plot_svg, thermal_ripple_plot_svg};
use pwmplan::sweep::{self, SweepRow};
use serde_json::Value;

/// The browser window's width: the column the plots must fit.
const WIDTH: f64 = 900.0;
/// Rounding allowed in a measured edge, in pixels.
const SLACK: f64 = 0.5;
/// How far two texts may overlap (in both directions) before it counts:
/// a glyph box's descent grazing the next line's ascent is not an overlap.
const OVERLAP: f64 = 1.0;

struct Plot {
    name: String,
    svg: String,
}

/// The loss and thermal plots `plan` writes for a bundled design.
fn product_plots(design: &str) -> Vec<Plot> {
    let path = format!("boards/{design}.yaml");
    let solved = solve_design(Some(Path::new(&path)), None, false).expect("the design plans");
    let files = generate_files(&solved, None).expect("the files render");
    files
        .into_iter()
        .filter(|f| f.name.extension().is_some_and(|e| e == "svg"))
        .map(|f| Plot {
            name: format!("{design}/{}", f.name.display()),
            svg: f.text,
        })
        .collect()
}

/// Rows that crowd the layout: the winch's sweep with every loss
/// component present (two of them tiny), every fourth row failing eight
/// constraints and the others passing (ten narrow spans), and two runaway
/// gaps.
fn crowded_rows() -> Vec<SweepRow> {
    let solved = solve_design(Some(Path::new("boards/winch.yaml")), None, false).expect("plans");
    let mut rows = sweep::sweep(
        &solved.evaluator,
        &sweep::log_space(4e3, 80e3, 40),
        Some(solved.plan.pwm.frequency_hz),
    );
    let names = [
        "sampling-window",
        "duty-range",
        "frequency-band",
        "resolution",
        "ripple",
        "audible",
        "junction",
        "dead-time",
    ];
    for (i, r) in rows.iter_mut().enumerate() {
        let l = &mut r.losses_w;
        l.freewheel_diode = 0.02 * l.conduction;
        l.gate_drive *= 1e-3;
        l.motor_ripple_copper *= 1e-2;
        l.total = l.conduction
            + l.switching
            + l.output_capacitance
            + l.reverse_recovery
            + l.dead_time_diode
            + l.gate_drive
            + l.freewheel_diode
            + l.motor_ripple_copper;
        r.feasible = i % 4 != 1;
        r.failing = if r.feasible {
            Vec::new()
        } else {
            names.iter().map(|s| s.to_string()).collect()
        };
        if i == 20 || i == 30 {
            r.junction_c = None;
            r.junction_high_bus_c = None;
        }
    }
    rows
}

fn crowded_plots() -> Vec<Plot> {
    let rows = crowded_rows();
    let top = rows.last().expect("rows").frequency_hz;
    let band = Some([rows[3].frequency_hz, rows[36].frequency_hz]);
    vec![
        Plot {
            name: "crowded/loss.svg".into(),
            svg: loss_plot_svg(&rows, Some(top), band),
        },
        Plot {
            name: "crowded/thermal.svg".into(),
            svg: thermal_ripple_plot_svg(&rows, 125.0, Some(1.5), Some(top)),
        },
        Plot {
            name: "empty/loss.svg".into(),
            svg: loss_plot_svg(&[], None, None),
        },
        Plot {
            name: "empty/thermal.svg".into(),
            svg: thermal_ripple_plot_svg(&[], 125.0, None, None),
        },
    ]
}

/// Every plot measured: the bundled designs' and the crowded ones.
fn all_plots() -> Vec<Plot> {
    let mut plots: Vec<Plot> = ["belt-feeder", "winch", "vent-fan", "pump-bldc"]
        .iter()
        .flat_map(|d| product_plots(d))
        .collect();
    plots.extend(crowded_plots());
    plots
}

/// The measuring script: each picture's box and each of its texts' boxes,
/// as JSON in `<pre id="layout">`, once the fonts are ready.
const SCRIPT: &str = r#"
function box(e) { const r = e.getBoundingClientRect(); return [r.left, r.top, r.right, r.bottom]; }
function measure() {
  const out = [];
  for (const div of document.querySelectorAll('div.plot')) {
    const svg = div.querySelector('svg');
    const texts = [];
    for (const t of svg.querySelectorAll('text')) {
      texts.push({ s: t.textContent, b: box(t) });
    }
    out.push({ name: div.dataset.name, svg: box(svg), texts: texts });
  }
  document.getElementById('layout').textContent = JSON.stringify(out);
}
window.addEventListener('load', () => document.fonts.ready.then(measure));
"#;

fn page(plots: &[Plot]) -> String {
    let mut html = String::from(
        "<!DOCTYPE html>\n<html><head><meta charset=\"utf-8\"/>\
         <style>body { margin: 0; } div.plot svg { display: block; }</style></head><body>\n",
    );
    for p in plots {
        html.push_str(&format!("<div class=\"plot\" data-name=\"{}\">\n", p.name));
        // The standalone file's marker comment is harmless inline.
        html.push_str(&p.svg);
        html.push_str("</div>\n");
    }
    html.push_str("<pre id=\"layout\"></pre>\n<script>");
    html.push_str(SCRIPT);
    html.push_str("</script>\n</body></html>\n");
    html
}

/// Run with a deadline; a browser that hangs must not hang the suite.
fn run_with_deadline(cmd: &mut Command, limit: Duration) -> Option<std::process::ExitStatus> {
    let mut child = cmd.spawn().ok()?;
    let start = Instant::now();
    loop {
        if let Ok(Some(st)) = child.try_wait() {
            return Some(st);
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            return None;
        }
        std::thread::sleep(Duration::from_millis(100));
    }
}

/// The page rendered at 900 px wide; the DOM after the script ran.
fn rendered_dom(browser: &Path, html: &str) -> String {
    let dir = tempfile::tempdir().expect("temp dir");
    let page_path = dir.path().join("plots.html");
    std::fs::write(&page_path, html).expect("write page");
    let dom_path = dir.path().join("dom.html");
    let dom = std::fs::File::create(&dom_path).expect("dom file");
    let mut cmd = Command::new(browser);
    cmd.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--hide-scrollbars",
        "--window-size=900,3000",
        "--virtual-time-budget=5000",
        "--dump-dom",
    ])
    .arg(format!(
        "--user-data-dir={}",
        dir.path().join("profile").display()
    ))
    .arg(format!("file://{}", page_path.display()))
    .stdout(Stdio::from(dom))
    .stderr(Stdio::null());
    let status = run_with_deadline(&mut cmd, Duration::from_secs(120));
    assert!(status.is_some(), "chromium did not finish within 120 s");
    std::fs::read_to_string(&dom_path).expect("the dumped DOM")
}

/// The measurements the script wrote, out of the dumped DOM.
fn measurements(dom: &str) -> Vec<Value> {
    let start = dom
        .find("<pre id=\"layout\">")
        .expect("the page has its measurement block")
        + "<pre id=\"layout\">".len();
    let end = start + dom[start..].find("</pre>").expect("the block ends");
    let json = dom[start..end]
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&nbsp;", "\u{a0}")
        .replace("&amp;", "&");
    assert!(!json.is_empty(), "the measuring script did not run");
    let v: Value = serde_json::from_str(&json).expect("the measurements parse");
    v.as_array().expect("one entry per plot").clone()
}

type Rect = [f64; 4];

fn rect(v: &Value) -> Rect {
    let a = v.as_array().expect("a box");
    let f = |i: usize| a[i].as_f64().expect("a number");
    [f(0), f(1), f(2), f(3)]
}

/// How far `inner` runs outside `outer`, the largest of its four sides.
fn outside(inner: Rect, outer: Rect) -> f64 {
    [
        outer[0] - inner[0],
        outer[1] - inner[1],
        inner[2] - outer[2],
        inner[3] - outer[3],
    ]
    .into_iter()
    .fold(0.0, f64::max)
}

/// The overlap of two boxes: the smaller of its width and height.
fn overlap(a: Rect, b: Rect) -> f64 {
    let w = a[2].min(b[2]) - a[0].max(b[0]);
    let h = a[3].min(b[3]) - a[1].max(b[1]);
    w.min(h)
}

/// One plot's faults: too wide, a text outside, texts over each other.
/// Returns them and the number of texts checked.
fn faults(plot: &Value) -> (Vec<String>, usize) {
    let name = plot["name"].as_str().expect("name");
    let svg = rect(&plot["svg"]);
    let mut found = Vec::new();
    if svg[2] - svg[0] > WIDTH + SLACK {
        found.push(format!("{name}: {:.1} px wide", svg[2] - svg[0]));
    }
    let texts: Vec<(String, Rect)> = plot["texts"]
        .as_array()
        .expect("texts")
        .iter()
        .map(|t| (t["s"].as_str().expect("s").to_string(), rect(&t["b"])))
        .filter(|(s, _)| !s.trim().is_empty())
        .collect();
    for (s, b) in &texts {
        let out = outside(*b, svg).max(b[2] - WIDTH);
        if out > SLACK {
            found.push(format!("{name}: \"{s}\" runs {out:.1} px outside"));
        }
    }
    for (i, (s, a)) in texts.iter().enumerate() {
        for (t, b) in &texts[i + 1..] {
            let o = overlap(*a, *b);
            if o > OVERLAP {
                found.push(format!("{name}: \"{s}\" and \"{t}\" overlap by {o:.1} px"));
            }
        }
    }
    (found, texts.len())
}

#[test]
fn plots_fit_900_px_and_their_texts_stay_inside_and_apart() {
    let browser = Path::new("/usr/bin/chromium");
    if !browser.exists() {
        if std::env::var("CI").is_ok_and(|v| v == "true") {
            panic!("chromium not installed (apt-get install chromium fonts-dejavu-core)");
        }
        eprintln!("skip: /usr/bin/chromium not installed; the plots' layout was not measured");
        return;
    }
    let plots = all_plots();
    let html = page(&plots);
    // For a person to look at: keep the page of every plot measured.
    if let Ok(keep) = std::env::var("PWMPLAN_KEEP_PLOTS") {
        let _ = std::fs::write(&keep, &html);
    }
    let dom = rendered_dom(browser, &html);
    let measured = measurements(&dom);
    assert_eq!(measured.len(), plots.len(), "every plot measured");
    let (mut all, mut count) = (Vec::new(), 0);
    for m in &measured {
        let (f, n) = faults(m);
        assert!(n > 0 || m["name"].as_str().is_some_and(|s| s.starts_with("empty")));
        all.extend(f);
        count += n;
    }
    eprintln!("{count} texts in {} plots measured", measured.len());
    assert!(all.is_empty(), "{} faults:\n{}", all.len(), all.join("\n"));
    // The bundled designs alone have over 250 texts: a page that failed to
    // render its plots must not pass for a tidy one.
    assert!(count > 250, "only {count} texts measured");
}
