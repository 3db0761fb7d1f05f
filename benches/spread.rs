//! Monte Carlo throughput on the demo (boards/belt-feeder.yaml) at its
//! solved setting: 100 000 samples on 2 threads, wall time and samples per
//! second (target: under 0.3 s). Run with `cargo bench --bench spread`;
//! `-- --report` also prints the text report.

use std::time::Instant;

use pwmplan::design::load_design;
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::solve::{self, Objective};
use pwmplan::spread;

const SAMPLES: u64 = 100_000;
const THREADS: usize = 2;

fn main() {
    let path = format!("{}/boards/belt-feeder.yaml", env!("CARGO_MANIFEST_DIR"));
    let Ok(d) = load_design(Origin::Disk(path.into())) else {
        eprintln!("the demo design does not load");
        std::process::exit(1);
    };
    let ev = Evaluator::new(&d);
    let Some(c) = solve::solve(&ev, Objective::LeastLoss).chosen else {
        eprintln!("the demo does not solve");
        std::process::exit(1);
    };
    let Ok(pool) = rayon::ThreadPoolBuilder::new().num_threads(THREADS).build() else {
        eprintln!("no thread pool");
        std::process::exit(1);
    };
    let mut best = f64::INFINITY;
    let mut mc = None;
    for _ in 0..3 {
        let start = Instant::now();
        let r = pool.install(|| spread::monte_carlo(&d, &ev, &c.setting, &c.dead_time, SAMPLES, 1));
        best = best.min(start.elapsed().as_secs_f64());
        mc = Some(r);
    }
    // The physics floor: one typical case evaluation, on one thread.
    let n = 2000;
    let start = Instant::now();
    for i in 0..n {
        let mut case = ev.rated;
        case.v_bus_v = 20.0 + 8.0 * i as f64 / n as f64;
        let _ = ev.case(&case, c.setting.frequency_hz, c.dead_time.seconds);
    }
    let case_us = start.elapsed().as_secs_f64() / n as f64 * 1e6;
    let start = Instant::now();
    let one = rayon::ThreadPoolBuilder::new().num_threads(1).build();
    if let Ok(one) = one {
        one.install(|| spread::monte_carlo(&d, &ev, &c.setting, &c.dead_time, n, 1));
    }
    let sample_us = start.elapsed().as_secs_f64() / n as f64 * 1e6;
    println!(
        "one thread: {case_us:.1} µs per Evaluator::case, {sample_us:.1} µs per Monte Carlo sample"
    );
    let start = Instant::now();
    let wc = spread::worst_case(&d, &ev, &c.setting, &c.dead_time);
    let wc_s = start.elapsed().as_secs_f64();
    println!(
        "monte carlo: {SAMPLES} samples on {THREADS} threads in {best:.3} s (best of 3), {:.0} samples/s, {:.1} µs per sample per thread",
        SAMPLES as f64 / best,
        best * THREADS as f64 / SAMPLES as f64 * 1e6
    );
    println!("worst case: {} corners in {:.2} ms", wc.corners, wc_s * 1e3);
    if std::env::args().any(|a| a == "--report")
        && let Some(mc) = mc
    {
        print!("{}", spread::text_report(&mc, &wc));
    }
}
