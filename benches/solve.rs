//! Solver timing on the demo (boards/belt-feeder.yaml), median of 20 runs:
//! (a) `solve` as bundled (88 MHz, 16-bit counter, 10-bit linear divider);
//! (b) the demo on an invented larger timer: 136 MHz, 20-bit counter, 12-bit
//!     linear divider (1..=4096), edge and centre aligned;
//! (c) the whole `pwmplan plan --json` process on the demo, spawned 20 times
//!     into one temporary folder (after the first run the files are current
//!     and left alone);
//! (d) the same, each run into a new empty folder (all seven files written);
//! (e) `solve` on the winch (boards/winch.yaml, unipolar H-bridge) with its
//!     operating range (300 to 3600 rpm, constant torque), and (f) the same
//!     design with the range removed: what judging a range costs;
//! (g) `solve` on the pump (boards/pump-bldc.yaml) with its board switched to
//!     six-step low-side chopping and a 300 to 3000 rpm range (each setting's
//!     cases simulated switch by switch; median of 3), and (h) the same at
//!     its rated point.
//! Run with `cargo bench --bench solve`.

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use pwmplan::design::load_design;
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::solve::{self, Objective, Solution};
use pwmplan::timer::{Alignment, Prescaler, TimerModel};

const RUNS: usize = 20;

/// The bundled pump in a temporary folder, its board switched to six-step
/// low-side chopping and a 300 to 3000 rpm range added: the folder (kept
/// while it is used) and the design's path.
fn six_step_pump() -> Result<(tempfile::TempDir, std::path::PathBuf), String> {
    let boards = Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
    let dir = tempfile::tempdir().map_err(|e| e.to_string())?;
    let read = |name: &str| std::fs::read_to_string(boards.join(name)).map_err(|e| e.to_string());
    let write = |name: &str, text: String| {
        std::fs::write(dir.path().join(name), text).map_err(|e| e.to_string())
    };
    std::fs::create_dir_all(dir.path().join("switches")).map_err(|e| e.to_string())?;
    write(
        "switches/corrie-100.yaml",
        read("switches/corrie-100.yaml")?,
    )?;
    let board = read("osprey-3p48.yaml")?.replace(
        "sinusoidal: { zero_sequence: min-max }",
        "six-step: { chop: low-side }",
    );
    write("osprey-3p48.yaml", board)?;
    let mut design = read("pump-bldc.yaml")?.trim_end().to_string();
    design.push_str("\n  operating_range: { speed: { min: \"300 rpm\", max: \"3000 rpm\" } }\n");
    write("pump-bldc.yaml", design)?;
    let path = dir.path().join("pump-bldc.yaml");
    Ok((dir, path))
}

/// Median of `RUNS` timings of `f` after an untimed warm-up, with the last result.
fn median_of<T>(f: impl FnMut() -> T) -> (Duration, T) {
    median_of_n(RUNS, f)
}

/// Median of `n` timings of `f` after an untimed warm-up, with the last result.
fn median_of_n<T>(n: usize, mut f: impl FnMut() -> T) -> (Duration, T) {
    let mut times = Vec::with_capacity(n);
    let mut last = f(); // warm-up, not timed
    for _ in 0..n {
        let start = Instant::now();
        last = f();
        times.push(start.elapsed());
    }
    times.sort();
    (times[n / 2], last)
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1e3
}

fn row(label: &str, d: Duration, sol: Option<&Solution>) {
    let detail = match sol {
        Some(s) => {
            let f = s
                .chosen
                .as_ref()
                .map(|c| format!("{:.1} Hz", c.setting.frequency_hz))
                .unwrap_or_else(|| "none".into());
            format!(
                "{} of {} settings evaluated, chose {f}",
                s.evaluated, s.realisable
            )
        }
        None => String::new(),
    };
    println!("{label:<44} {:>10.2}   {detail}", ms(d));
}

/// The demo's timer swapped for an invented 136 MHz one with a 20-bit
/// counter and a 12-bit divider (dead-time generator and minimum pulse kept).
fn fast_timer(t: &TimerModel) -> TimerModel {
    TimerModel {
        clock_hz: 136e6,
        counter_bits: 20,
        prescaler: Prescaler::Linear {
            min_divider: 1,
            max_divider: 4_096,
            register_offset: 1,
        },
        alignments: vec![Alignment::Edge, Alignment::Centre],
        dead_time: t.dead_time.clone(),
        compare: t.compare,
    }
}

/// Median wall time of `pwmplan plan --json` (the demo), or why not:
/// `fresh` writes into a new empty folder each run (all seven files
/// written), otherwise into the same folder (files already current, left
/// alone).
fn plan_process(exe: &Path, fresh: bool) -> Result<Duration, String> {
    if !exe.exists() {
        return Err(format!(
            "{} is missing; build it with `cargo build --release`",
            exe.display()
        ));
    }
    let dir = tempfile::tempdir().map_err(|e| format!("no temporary folder: {e}"))?;
    let mut n = 0;
    let mut run = || {
        n += 1;
        let out = if fresh {
            format!("out-{n}")
        } else {
            "out".into()
        };
        Command::new(exe)
            .args(["plan", "--json", "--out", &out])
            .current_dir(dir.path())
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .status()
    };
    match run() {
        Ok(s) if s.success() => {}
        Ok(s) => return Err(format!("`pwmplan plan --json` exited with {s}")),
        Err(e) => return Err(format!("cannot run {}: {e}", exe.display())),
    }
    let (d, last) = median_of(run);
    match last {
        Ok(s) if s.success() => Ok(d),
        _ => Err("`pwmplan plan --json` failed during the timed runs".into()),
    }
}

fn main() {
    let path = format!("{}/boards/belt-feeder.yaml", env!("CARGO_MANIFEST_DIR"));
    let design = match load_design(Origin::Disk(path.into())) {
        Ok(d) => d,
        Err(e) => {
            eprintln!("the demo design does not load: {e}");
            std::process::exit(1);
        }
    };
    let ev = Evaluator::new(&design);
    let mut fast = ev.clone();
    fast.timer = fast_timer(&ev.timer);

    println!("solve benchmark, median of {RUNS} runs");
    println!("{:<44} {:>10}", "case", "ms");
    let (d, sol) = median_of(|| solve::solve(&ev, Objective::LeastLoss));
    row("(a) solve, demo", d, Some(&sol));
    let (d, sol) = median_of(|| solve::solve(&fast, Objective::LeastLoss));
    row("(b) solve, demo, 136 MHz/20-bit/12-bit div", d, Some(&sol));
    let winch = format!("{}/boards/winch.yaml", env!("CARGO_MANIFEST_DIR"));
    match load_design(Origin::Disk(winch.into())) {
        Ok(w) => {
            let ranged = Evaluator::new(&w);
            let mut single = ranged.clone();
            single.range = None;
            let (d, sol) = median_of(|| solve::solve(&ranged, Objective::LeastLoss));
            row("(e) solve, winch over its range", d, Some(&sol));
            let (d, sol) = median_of(|| solve::solve(&single, Objective::LeastLoss));
            row("(f) solve, winch at its rated point", d, Some(&sol));
        }
        Err(e) => println!("(e), (f): the winch design does not load: {e}"),
    }
    match six_step_pump() {
        Ok((dir, path)) => match load_design(Origin::Disk(path)) {
            Ok(p) => {
                let ranged = Evaluator::new(&p);
                let mut single = ranged.clone();
                single.range = None;
                let (d, sol) = median_of_n(3, || solve::solve(&ranged, Objective::LeastLoss));
                row("(g) solve, six-step pump over 300-3000 rpm", d, Some(&sol));
                let (d, sol) = median_of_n(5, || solve::solve(&single, Objective::LeastLoss));
                row("(h) solve, six-step pump at its rated point", d, Some(&sol));
                drop(dir);
            }
            Err(e) => println!("(g), (h): the six-step pump does not load: {e}"),
        },
        Err(e) => println!("(g), (h): not timed: {e}"),
    }
    // Built by cargo for benchmarks with the bench (release) profile:
    // target/release/pwmplan.
    let exe = Path::new(env!("CARGO_BIN_EXE_pwmplan"));
    for (label, fresh) in [
        ("(c) pwmplan plan --json, whole process", false),
        ("(d) the same into an empty folder each run", true),
    ] {
        match plan_process(exe, fresh) {
            Ok(d) => row(label, d, None),
            Err(why) => println!("{label}: not timed: {why}"),
        }
    }
    println!("    ({})", exe.display());
}
