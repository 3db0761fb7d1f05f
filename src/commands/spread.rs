//! `pwmplan spread`: the worst case and the Monte Carlo of the chosen setting.

use std::io::Write;
use std::path::PathBuf;
use std::time::{Duration, Instant};

use crate::model::solve;
use crate::output::report;

use super::failure::Failure;
use super::files::*;
use super::solved::*;

// The options of the command; its help text is the variant's doc in
// `args.rs`.
#[derive(Debug, clap::Args)]
pub struct SpreadArgs {
    /// Design file (YAML). Omit for the bundled demo.
    pub design: Option<PathBuf>,
    /// Number of Monte Carlo samples.
    #[arg(long, default_value_t = 10_000)]
    pub samples: u64,
    /// Seed of the random draws (same seed, same result on any machine).
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Print JSON instead of the text report.
    #[arg(long)]
    pub json: bool,
}

/// Run the command; returns the exit status.
pub fn run(args: SpreadArgs, out: &mut dyn Write, err: &mut dyn Write) -> Result<u8, Failure> {
    let SpreadArgs {
        design,
        samples,
        seed,
        json,
    } = args;
    if !(1..=10_000_000).contains(&samples) {
        return Err(Failure::Usage(format!(
            "--samples {samples}: expected 1 to 10000000"
        )));
    }
    let solved = solve_design(design.as_deref(), None, false)?;
    // A plan blocked only by findings (a worst-case failure, a
    // rating) still has a setting worth spreading; exit 1 after.
    if !solved.setting_found {
        write_text(out, &report::infeasible_text(&solved.plan))?;
        return Ok(1);
    }
    let ev = &solved.evaluator;
    let d = &solved.design;
    let c = solve::evaluate_at(ev, solved.plan.pwm.frequency_hz)
        .ok_or_else(|| Failure::Usage("the chosen setting could not be evaluated again".into()))?;
    let mut bar = ProgressDisplay::new();
    let mc = crate::model::spread::monte_carlo_with_progress(
        d,
        ev,
        &c.setting,
        &c.dead_time,
        samples,
        seed,
        &mut |a, b| bar.update(a, b),
    );
    bar.finish();
    let wc = crate::model::spread::worst_case(d, ev, &c.setting, &c.dead_time);
    if json {
        let mut text = serde_json::to_string_pretty(
            &serde_json::json!({ "worst_case": wc, "monte_carlo": mc }),
        )
        .map_err(|e| Failure::Usage(format!("cannot format the spread: {e}")))?;
        text.push('\n');
        write_text(out, &text)?;
    } else {
        write_text(out, &crate::model::spread::text_report(&mc, &wc))?;
    }
    if !solved.feasible {
        let mut note = report::infeasible_text(&solved.plan);
        if json {
            write_text(err, &note)?;
        } else {
            note.insert(0, '\n');
            write_text(out, &note)?;
        }
        return Ok(1);
    }
    Ok(0)
}

/// A progress bar on standard error for a long Monte Carlo, for the
/// command line: shown only when standard error is a terminal and the run
/// has taken more than half a second. The engine calls it through the callback of
/// [`spread::monte_carlo_with_progress`].
pub struct ProgressDisplay {
    start: Instant,
    terminal: bool,
    bar: Option<indicatif::ProgressBar>,
}

/// How long a run goes before its bar appears.
const SHOW_AFTER: Duration = Duration::from_millis(500);

impl Default for ProgressDisplay {
    fn default() -> Self {
        Self::new()
    }
}

impl ProgressDisplay {
    pub fn new() -> ProgressDisplay {
        use std::io::IsTerminal;
        ProgressDisplay {
            start: Instant::now(),
            terminal: std::io::stderr().is_terminal(),
            bar: None,
        }
    }

    /// Report `done` of `total` samples.
    pub fn update(&mut self, done: u64, total: u64) {
        if self.bar.is_none() && self.terminal && self.start.elapsed() > SHOW_AFTER {
            let bar = indicatif::ProgressBar::new(total);
            if let Ok(style) = indicatif::ProgressStyle::with_template(
                "{bar:40} {pos}/{len} samples, {per_sec}, {eta} left",
            ) {
                bar.set_style(style);
            }
            self.bar = Some(bar);
        }
        if let Some(b) = &self.bar {
            b.set_position(done);
        }
    }

    /// Remove the bar.
    pub fn finish(self) {
        if let Some(b) = self.bar {
            b.finish_and_clear();
        }
    }
}
