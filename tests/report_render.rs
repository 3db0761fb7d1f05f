//! The plots and the HTML report of the bundled demo, rendered without the
//! CLI: the SVGs are well-formed and read back to the plan's own numbers
//! (marker positions inverted through the tick labels), the page is
//! well-formed, self-contained and carries the real input hashes, and, with
//! a headless browser present, it renders to a non-trivial image.

use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use pwmplan::emit::{self, Context, MARKER_PLACEHOLDER};
use pwmplan::html::report_html;
use pwmplan::model::LossFigures;
use pwmplan::plan::Plan;
use pwmplan::svg::{loss_plot_svg, thermal_ripple_plot_svg};
use pwmplan::sweep::SweepRow;
use roxmltree::{Document, Node};
use sha2::{Digest, Sha256};

struct Fixture {
    plan: Plan,
    ctx: Context,
    rows: Vec<SweepRow>,
}

fn demo() -> Fixture {
    let d = pwmplan::design::load_design(pwmplan::load::Origin::Disk(
        "boards/belt-feeder.yaml".into(),
    ))
    .expect("the demo design loads");
    let ev = pwmplan::model::Evaluator::new(&d);
    let sol = pwmplan::solve::solve(&ev, pwmplan::solve::Objective::LeastLoss);
    let plan = pwmplan::plan::build(&d, &ev, &sol, None).expect("the demo has a plan");
    let ctx = emit::context(&plan, false);
    let rows = pwmplan::sweep::sweep(
        &ev,
        &pwmplan::sweep::log_space(10e3, 100e3, 40),
        Some(plan.pwm.frequency_hz),
    );
    Fixture { plan, ctx, rows }
}

fn ripple_limit(plan: &Plan) -> Option<f64> {
    plan.constraints
        .iter()
        .find(|c| c.name == "ripple")
        .map(|c| c.limit)
}

fn plots(f: &Fixture) -> (String, String) {
    (
        loss_plot_svg(
            &f.rows,
            Some(f.plan.pwm.frequency_hz),
            f.plan.feasible_band_hz,
        ),
        thermal_ripple_plot_svg(
            &f.rows,
            f.plan.thermal.limit_c,
            ripple_limit(&f.plan),
            Some(f.plan.pwm.frequency_hz),
        ),
    )
}

fn has_class(n: &Node, class: &str) -> bool {
    n.attribute("class")
        .is_some_and(|c| c.split_whitespace().any(|w| w == class))
}

fn find_all<'a, 'i>(root: Node<'a, 'i>, class: &str) -> Vec<Node<'a, 'i>> {
    root.descendants()
        .filter(|n| n.is_element() && has_class(n, class))
        .collect()
}

fn num(n: &Node, attr: &str) -> f64 {
    n.attribute(attr)
        .and_then(|v| v.parse().ok())
        .unwrap_or_else(|| panic!("attribute {attr} of <{}>", n.tag_name().name()))
}

/// The pixel→value map of a linear axis, from its first and last tick
/// labels (label baseline is 4 px below the tick).
fn y_inverse(root: Node, panel: Node) -> impl Fn(f64) -> f64 {
    let _ = root;
    let ticks = find_all(panel, "y-tick");
    assert!(ticks.len() >= 3, "a value axis has at least 3 ticks");
    let (a, b) = (ticks[0], ticks[ticks.len() - 1]);
    let (ya, va) = (num(&a, "y") - 4.0, num(&a, "data-value"));
    let (yb, vb) = (num(&b, "y") - 4.0, num(&b, "data-value"));
    move |y| va + (y - ya) * (vb - va) / (yb - ya)
}

/// The pixel→frequency map of the log axis, from two of its tick labels.
fn x_inverse(panel: Node) -> impl Fn(f64) -> f64 {
    let ticks = find_all(panel, "x-tick");
    assert!(ticks.len() >= 2, "the frequency axis has at least 2 ticks");
    let (a, b) = (ticks[0], ticks[ticks.len() - 1]);
    let (xa, fa) = (num(&a, "x"), num(&a, "data-value").ln());
    let (xb, fb) = (num(&b, "x"), num(&b, "data-value").ln());
    move |x| (fa + (x - xa) * (fb - fa) / (xb - xa)).exp()
}

fn close(got: f64, want: f64, rel: f64) -> bool {
    ((got - want) / want).abs() <= rel
}

/// Every loss component field, with the class the plot gives it. Listed
/// here from `LossFigures` itself, not from the plotting code.
type Field = (&'static str, fn(&LossFigures) -> f64);
const FIELDS: &[Field] = &[
    ("conduction", |l| l.conduction),
    ("switching", |l| l.switching),
    ("output-capacitance", |l| l.output_capacitance),
    ("reverse-recovery", |l| l.reverse_recovery),
    ("dead-time-diode", |l| l.dead_time_diode),
    ("gate-drive", |l| l.gate_drive),
    ("freewheel-diode", |l| l.freewheel_diode),
    ("motor-ripple-copper", |l| l.motor_ripple_copper),
];

/// Runs of consecutive infeasible rows (counted independently of the plot).
fn infeasible_runs(rows: &[SweepRow]) -> usize {
    let mut runs = 0;
    let mut prev = true;
    for r in rows {
        if !r.feasible && prev {
            runs += 1;
        }
        prev = r.feasible;
    }
    runs
}

#[test]
fn loss_plot_has_a_series_per_nonzero_component_and_reads_back_the_plan() {
    let f = demo();
    let (svg, _) = plots(&f);
    let doc = Document::parse(&svg).expect("the loss plot is well-formed XML");
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");

    let mut want: Vec<&str> = FIELDS
        .iter()
        .filter(|(_, get)| f.rows.iter().any(|r| get(&r.losses_w) > 0.0))
        .map(|(k, _)| *k)
        .collect();
    want.push("total");
    want.sort();
    let mut got: Vec<&str> = find_all(root, "series")
        .iter()
        .filter_map(|n| n.attribute("class"))
        .filter_map(|c| c.split_whitespace().nth(1))
        .collect();
    got.sort();
    assert_eq!(
        got, want,
        "one series per nonzero component, plus the total"
    );
    // The demo is a half-bridge: the freewheel-diode term is zero and absent.
    assert!(!got.contains(&"freewheel-diode"));

    // The chosen marker sits at the plan's frequency and total loss.
    let dot = find_all(root, "chosen-total");
    assert_eq!(dot.len(), 1, "one chosen marker on the total");
    let fx = x_inverse(root)(num(&dot[0], "cx"));
    let wy = y_inverse(root, root)(num(&dot[0], "cy"));
    assert!(
        close(fx, f.plan.pwm.frequency_hz, 1e-3),
        "chosen at {fx} Hz"
    );
    assert!(close(wy, f.plan.losses_w.total, 5e-3), "chosen at {wy} W");
    assert_eq!(find_all(root, "chosen-line").len(), 1);

    // Stacking: the topmost polygon's upper edge is the total line, since
    // the model's total is the sum of its components.
    let top_series = find_all(root, "series")
        .into_iter()
        .rfind(|n| n.tag_name().name() == "polygon")
        .expect("a polygon");
    let pts = |s: &str| -> Vec<(f64, f64)> {
        s.split_whitespace()
            .map(|p| {
                let (x, y) = p.split_once(',').expect("x,y");
                (x.parse().expect("x"), y.parse().expect("y"))
            })
            .collect()
    };
    let poly = pts(top_series.attribute("points").expect("points"));
    let total = pts(find_all(root, "total")[0]
        .attribute("points")
        .expect("points"));
    assert_eq!(poly.len(), 2 * total.len());
    for (p, t) in poly.iter().zip(&total) {
        assert!(
            (p.0 - t.0).abs() < 0.011 && (p.1 - t.1).abs() < 0.05,
            "{p:?} vs {t:?}"
        );
    }

    // Infeasible spans: as many shaded regions as runs of failing rows.
    let runs = infeasible_runs(&f.rows);
    assert!(runs >= 1, "the demo sweep has failing rows");
    assert_eq!(find_all(root, "infeasible").len(), runs);
    // Solver band edges inside the swept range are drawn.
    let band = f.plan.feasible_band_hz.expect("a feasible band");
    let edges = find_all(root, "band-edge");
    assert_eq!(edges.len(), 2);
    let fx = x_inverse(root);
    assert!(close(fx(num(&edges[0], "x1")), band[0], 1e-3));
    assert!(close(fx(num(&edges[1], "x1")), band[1], 1e-3));
    // The shading meets the band: a run below it ends at its lower edge,
    // a run above it starts at its upper edge.
    for r in find_all(root, "infeasible") {
        let (x0, x1) = (num(&r, "x"), num(&r, "x") + num(&r, "width"));
        let (f0, f1) = (fx(x0), fx(x1));
        if f1 <= band[0] * 1.001 {
            assert!(close(f1, band[0], 1e-3), "shading ends at {f1} Hz");
        } else {
            assert!(close(f0, band[1], 1e-3), "shading starts at {f0} Hz");
        }
    }

    // Axis titles carry units; ticks at 1-2-5: 10, 20, 50, 100 kHz.
    assert!(svg.contains("Power loss (mW)"));
    let xt: Vec<f64> = find_all(root, "x-tick")
        .iter()
        .map(|n| num(n, "data-value"))
        .collect();
    assert_eq!(xt, vec![10e3, 20e3, 50e3, 100e3]);
    assert!(!svg.contains("url("), "no references, even internal ones");
}

#[test]
fn thermal_ripple_plot_draws_both_junctions_ripple_limits_and_the_chosen_point() {
    let f = demo();
    let (_, svg) = plots(&f);
    let doc = Document::parse(&svg).expect("the thermal plot is well-formed XML");
    let root = doc.root_element();
    for class in ["junction-rated", "junction-high-bus", "ripple"] {
        let s: Vec<Node> = find_all(root, "series")
            .into_iter()
            .filter(|n| has_class(n, class))
            .collect();
        assert_eq!(s.len(), 1, "series {class}");
        assert_eq!(s[0].tag_name().name(), "path");
    }
    let panel = |c: &str| {
        root.descendants()
            .find(|n| has_class(n, "panel") && has_class(n, c))
            .expect("panel")
    };
    let (pj, pr) = (panel("junction"), panel("ripple"));
    let tj = y_inverse(root, pj);
    let ta = y_inverse(root, pr);

    // Limits: dashed, and at the plan's limits once read back.
    let jl = find_all(pj, "junction-limit");
    assert_eq!(jl.len(), 1);
    assert!(jl[0].attribute("stroke-dasharray").is_some());
    assert!(close(tj(num(&jl[0], "y1")), f.plan.thermal.limit_c, 2e-3));
    let rl = find_all(pr, "ripple-limit");
    assert_eq!(rl.len(), 1);
    assert!(rl[0].attribute("stroke-dasharray").is_some());
    let lim = ripple_limit(&f.plan).expect("the demo limits ripple");
    assert!(close(ta(num(&rl[0], "y1")), lim, 2e-3));

    // Chosen markers at the plan's junction temperatures and ripple.
    let dot = |p: Node, c: &str| num(&find_all(p, c)[0], "cy");
    let tjr = f.plan.thermal.junction_c.expect("no runaway");
    let tjh = f.plan.thermal.junction_high_bus_c.expect("no runaway");
    assert!(close(tj(dot(pj, "chosen-junction-rated")), tjr, 2e-3));
    assert!(close(tj(dot(pj, "chosen-junction-high-bus")), tjh, 2e-3));
    assert!(close(
        ta(dot(pr, "chosen-ripple")),
        f.plan.ripple.peak_to_peak_a,
        5e-3
    ));
    assert_eq!(find_all(root, "chosen-line").len(), 2, "one per panel");
    let x = x_inverse(pr)(num(&find_all(pr, "chosen-ripple")[0], "cx"));
    assert!(close(x, f.plan.pwm.frequency_hz, 1e-3));
    assert!(svg.contains("Junction temperature (°C)"));
}

#[test]
fn plots_with_no_rows_are_still_well_formed() {
    let a = loss_plot_svg(&[], Some(20e3), None);
    let b = thermal_ripple_plot_svg(&[], 150.0, None, None);
    for s in [a, b] {
        let doc = Document::parse(&s).expect("well-formed");
        assert!(find_all(doc.root_element(), "series").is_empty());
        assert!(s.contains("no realisable setting"));
    }
}

/// Parse the page as XML; its `<!DOCTYPE html>` is a DTD to roxmltree.
fn parse_page(html: &str) -> Result<Document<'_>, roxmltree::Error> {
    let opt = roxmltree::ParsingOptions {
        allow_dtd: true,
        ..Default::default()
    };
    Document::parse_with_options(html, opt)
}

fn page(f: &Fixture) -> String {
    let (l, t) = plots(f);
    report_html(&f.plan, &f.ctx, &l, &t)
}

/// References that would make the page depend on anything outside it.
fn assert_self_contained(html: &str) {
    let low = html.to_lowercase();
    for bad in [
        "http://",
        "https://",
        "<link",
        "@import",
        "url(",
        "<script",
        "src=",
        "href=",
        "<iframe",
        "<object",
        "<embed",
        "@font-face",
    ] {
        assert!(!low.contains(bad), "the page holds {bad:?}");
    }
}

#[test]
fn report_is_well_formed_self_contained_and_complete() {
    let f = demo();
    let html = page(&f);
    assert!(html.starts_with("<!DOCTYPE html>"));
    let doc = parse_page(&html).expect("the page is well-formed XML");
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "html");
    assert_self_contained(&html);

    // The marker once, inside a comment.
    assert_eq!(html.matches(MARKER_PLACEHOLDER).count(), 1);
    assert!(
        doc.descendants()
            .any(|n| n.is_comment() && n.text().is_some_and(|t| t.contains(MARKER_PLACEHOLDER)))
    );
    let sealed = emit::seal(&html);
    assert_eq!(emit::is_untouched(&sealed), Some(true));

    for id in [
        "settings",
        "cautions",
        "constraints",
        "plots",
        "losses",
        "figures",
        "alternatives",
        "findings",
        "assumptions",
        "inputs",
    ] {
        assert!(
            doc.descendants().any(|n| n.attribute("id") == Some(id)),
            "section {id}"
        );
    }
    assert_eq!(
        doc.descendants()
            .filter(|n| n.tag_name().name() == "svg")
            .count(),
        2
    );

    // The highlighted rows are exactly the plan's binding constraints.
    let cell = |n: &Node| {
        n.children()
            .find(|c| c.tag_name().name() == "td")
            .and_then(|c| c.text())
            .unwrap_or("")
            .to_string()
    };
    let highlighted: Vec<String> = find_all(root, "binding").iter().map(cell).collect();
    let binding: Vec<String> = f
        .plan
        .constraints
        .iter()
        .filter(|c| c.binding && c.pass)
        .map(|c| c.name.clone())
        .collect();
    assert!(!binding.is_empty(), "the demo has a binding constraint");
    assert_eq!(highlighted, binding);

    // Each input's hash is the SHA-256 of the file on disk.
    for file in [
        "boards/belt-feeder.yaml",
        "boards/wren-hb24.yaml",
        "boards/switches/tarn-40.yaml",
    ] {
        let bytes = std::fs::read(file).expect("input file");
        let hex: String = Sha256::digest(&bytes)
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect();
        assert!(html.contains(&hex), "hash of {file}");
    }
    for i in &f.plan.inputs {
        assert!(html.contains(&pwmplan::svg::escape(&i.file)), "{}", i.file);
    }
    // Every caution is on the page.
    for c in &f.plan.cautions {
        assert!(html.contains(&pwmplan::svg::escape(c)), "caution {c}");
    }
    assert_eq!(html, page(&f), "deterministic");
}

#[test]
fn report_escapes_names_and_messages() {
    let mut f = demo();
    f.plan.design = "Q&A <rig> 5 mΩ at 25 °C".into();
    f.plan.board = "board \"A\" & 'B'".into();
    f.plan.findings[0].message = "R_ds(on) < 5 mΩ & V > 3 V".into();
    f.ctx = emit::context(&f.plan, false);
    let html = page(&f);
    let doc = parse_page(&html).expect("well-formed despite markup in names");
    let texts: String = doc
        .descendants()
        .filter(|n| n.is_text())
        .filter_map(|n| n.text())
        .collect();
    assert!(texts.contains("PWM plan: Q&A <rig> 5 mΩ at 25 °C"));
    assert!(texts.contains("board \"A\" & 'B'"));
    assert!(texts.contains("R_ds(on) < 5 mΩ & V > 3 V"));
    assert!(!doc.descendants().any(|n| n.tag_name().name() == "rig"));
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

/// Width and height from a PNG's IHDR chunk.
fn png_size(bytes: &[u8]) -> Option<(u32, u32)> {
    if bytes.len() < 24 || &bytes[..8] != b"\x89PNG\r\n\x1a\n" || &bytes[12..16] != b"IHDR" {
        return None;
    }
    let be = |s: &[u8]| u32::from_be_bytes([s[0], s[1], s[2], s[3]]);
    Some((be(&bytes[16..20]), be(&bytes[20..24])))
}

#[test]
fn report_renders_in_a_headless_browser() {
    let browser = Path::new("/usr/bin/chromium");
    if !browser.exists() {
        if std::env::var("CI").is_ok_and(|v| v == "true") {
            panic!("chromium not installed (apt-get install chromium fonts-dejavu-core)");
        }
        eprintln!("skip: /usr/bin/chromium not installed; the page was not rendered");
        return;
    }
    let f = demo();
    let dir = tempfile::tempdir().expect("temp dir");
    let page_path = dir.path().join("report.html");
    std::fs::write(&page_path, page(&f)).expect("write page");
    let png = dir.path().join("report.png");
    let profile = dir.path().join("profile");
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
    ])
    .arg(format!("--user-data-dir={}", profile.display()))
    .arg(format!("--screenshot={}", png.display()))
    .arg("--window-size=1280,2000")
    .arg(format!("file://{}", page_path.display()))
    .stdout(std::process::Stdio::null())
    .stderr(std::process::Stdio::null());
    let status = run_with_deadline(&mut cmd, Duration::from_secs(120));
    assert!(status.is_some(), "chromium did not finish within 120 s");
    let bytes = std::fs::read(&png).expect("chromium wrote the screenshot");
    assert_eq!(png_size(&bytes), Some((1280, 2000)), "a 1280×2000 PNG");
    // A blank page of that size compresses to a few kB; text, tables and
    // two plots take far more.
    assert!(
        bytes.len() > 60_000,
        "screenshot only {} bytes",
        bytes.len()
    );
    // For a person to look at: keep the page and its image.
    if let Ok(keep) = std::env::var("PWMPLAN_KEEP_SCREENSHOT") {
        let _ = std::fs::copy(&png, &keep);
        let _ = std::fs::copy(&page_path, format!("{keep}.html"));
    }
}
