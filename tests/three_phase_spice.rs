//! pwmplan's three-phase bridge model against the committed ngspice
//! reference `tests/spice/three_phase_reference.csv` (issue 21, item 1; the
//! circuit, the windows and the figures in `tests/spice/README.md`). The
//! comparisons always run (no ngspice needed); the rerun test proves the
//! table is current when ngspice is installed (with `CI=true` a missing
//! ngspice is a failure).
use crate::spice_harness as harness;
#[path = "spice/three_phase.rs"]
mod three_phase;

use std::path::Path;
use three_phase::{TpComparison, errors_of, worst_abs};

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn read(rel: &str) -> String {
    let p = root().join(harness::SPICE_DIR).join(rel);
    std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

fn rows() -> Vec<(three_phase::TpCase, three_phase::TpMeasured)> {
    three_phase::read_tp(&read("three_phase_reference.csv")).expect("three_phase_reference.csv")
}

fn comparisons() -> Vec<TpComparison> {
    let rows = rows();
    assert_eq!(rows.len(), three_phase::TP_CASES.len(), "a case per row");
    three_phase::tp_comparisons(root(), &rows).expect("predictions")
}

fn print_all(cmp: &[TpComparison]) {
    for x in cmp {
        for (name, sim, pred) in three_phase::figures(x) {
            println!(
                "{} {name}: ngspice {sim:.4} pwmplan {pred:.4} ({:+.2} %)",
                x.0.id,
                100.0 * (pred / sim - 1.0)
            );
        }
    }
}

/// Issue 21's acceptance on the sinusoidal cases (none and min-max, 12–100 V,
/// 16–40 kHz, 5–20 A, m 0.5–1.1, cos φ 0.64–1 and −0.87): total bridge loss
/// within a median 5 % and worst 12 %, conduction within 3 %, the
/// phase-current ripple within 3 % (the issue's bounds; measured: total
/// median 1.1 %, worst 5.1 % (T07, 100 V at 40 kHz, its edges +8.5 %);
/// conduction worst 0.6 % (2.97 % before the channels gave the diode its
/// share of the dead times); ripple worst 2.7 %, T03, 2.3 % before the plan
/// refined its largest swing between its 72 angles: the 40 synchronous PWM
/// periods of the ngspice run sample the swing 9° apart). The rms is the fundamental
/// fed in plus the model's ripple, so it is checked tighter (0.5 %).
#[test]
fn sinusoidal_bridge_within_the_issue_bounds() {
    let cmp = comparisons();
    print_all(&cmp);
    let total = errors_of(&cmp, "total", false);
    assert_eq!(total.len(), 8);
    assert!(
        harness::median_abs(&total) <= 0.05,
        "total median {total:?}"
    );
    assert!(worst_abs(&total) <= 0.12, "total worst {total:?}");
    let cond = errors_of(&cmp, "conduction", false);
    assert!(worst_abs(&cond) <= 0.03, "conduction {cond:?}");
    let ripple = errors_of(&cmp, "ripple", false);
    assert!(worst_abs(&ripple) <= 0.03, "ripple {ripple:?}");
    let rms = errors_of(&cmp, "rms", false);
    assert!(worst_abs(&rms) <= 0.005, "rms {rms:?}");
}

/// Issue 21's six-step acceptance on the switch-by-switch model (each
/// commutation's diode freewheel and the floating phase's diode conduction
/// simulated): the long-commutation case T3L within 15 % on the high-side
/// loss, and over every six-step case (each chop, 12–100 V, 16–40 kHz,
/// 150–800 Hz, one in discontinuous conduction; T3A–T3G added after the
/// model was compared on the first four) the total within the sinusoidal
/// bounds (median 5 %, worst 12 %), the conduction within 3 % and the duty
/// the simulated current needs within 3 % (own bound; the flat-sector model
/// it replaces was 16–39 % low there). Measured: see
/// `tests/spice/three_phase_errors.md`.
#[test]
fn six_step_within_the_issue_bounds() {
    let cmp = comparisons();
    print_all(&cmp);
    let t3l = cmp.iter().find(|x| x.0.id == "T3L").expect("T3L");
    let (_, s, p) = three_phase::figures(t3l)
        .into_iter()
        .find(|g| g.0 == "high-side")
        .expect("figure");
    assert!((p / s - 1.0).abs() <= 0.15, "T3L high side {s} W vs {p} W");
    let total = errors_of(&cmp, "total", true);
    assert!(total.len() >= 10, "six-step cases {}", total.len());
    assert!(
        harness::median_abs(&total) <= 0.05,
        "six-step totals {total:?}"
    );
    assert!(worst_abs(&total) <= 0.12, "six-step totals {total:?}");
    let cond = errors_of(&cmp, "conduction", true);
    assert!(worst_abs(&cond) <= 0.03, "six-step conduction {cond:?}");
    let duty = errors_of(&cmp, "duty", true);
    assert!(worst_abs(&duty) <= 0.03, "six-step duty {duty:?}");
}

/// The harness commutates six-step at PWM period boundaries: each case's
/// electrical period holds a whole number of periods per sector (else the
/// block pattern drifts against the back-EMF).
#[test]
fn six_step_cases_hold_whole_sectors() {
    for c in three_phase::TP_CASES
        .iter()
        .filter(|c| matches!(c.scheme, three_phase::Scheme::SixStep { .. }))
    {
        let ratio = c.f_sw_hz / c.f_e_hz;
        assert!(
            (ratio - ratio.round()).abs() < 1e-9 && c.per_electrical() % 6 == 0,
            "{}: {ratio} PWM periods per electrical period",
            c.id
        );
    }
}

/// The committed comparison tables are those of the current model.
#[test]
fn error_tables_are_current() {
    let cmp = comparisons();
    let hint = "run `cargo run --release --example spice_reference -- three-phase --errors-only`";
    assert!(
        read("three_phase_errors.csv") == three_phase::tp_errors_csv(&cmp),
        "tests/spice/three_phase_errors.csv is stale: {hint}"
    );
    assert!(
        read("three_phase_errors.md") == three_phase::tp_errors_md(&cmp),
        "tests/spice/three_phase_errors.md is stale: {hint}"
    );
}

fn close(a: f64, b: f64, rel: f64, what: &str) {
    assert!(
        (a - b).abs() <= rel * b.abs().max(1e-30),
        "{what}: rerun {a:e}, table {b:e}"
    );
}

/// Reruns the shortest case (T06, about 6 s) with ngspice and checks it
/// reproduces its committed row.
#[test]
fn three_phase_reference_reproduces_with_ngspice() {
    if !harness::ngspice_available() {
        if std::env::var("CI").as_deref() == Ok("true") {
            panic!(
                "ngspice not installed: the three-phase reference cannot be rerun (apt-get install -y ngspice)"
            );
        }
        println!(
            "ngspice not installed: skipped the three-phase rerun (the comparisons still ran)"
        );
        return;
    }
    let rows = rows();
    let (case, table) = rows.iter().find(|(c, _)| c.id == "T06").expect("T06");
    let m = three_phase::simulate_bridge(case).expect("ngspice run");
    close(m.total_w(), table.total_w(), 1e-3, "T06 total");
    let cond = three_phase::TpMeasured::sum;
    close(cond(&m.cond_w), cond(&table.cond_w), 1e-3, "T06 conduction");
    close(m.i_pk_a, table.i_pk_a, 1e-3, "T06 current");
    close(m.pp_max_a, table.pp_max_a, 1e-3, "T06 ripple");
}
