//! `pwmplan sweep`: evaluate the realisable setting nearest each frequency.

use std::io::{IsTerminal, Write};
use std::path::PathBuf;

use crate::model::sweep;
use crate::output::report;

use super::failure::Failure;
use super::files::*;
use super::solved::*;

// The options of the command; its help text is the variant's doc in
// `args.rs`.
#[derive(Debug, clap::Args)]
pub struct SweepArgs {
    /// Design file (YAML). Omit for the bundled demo.
    pub design: Option<PathBuf>,
    /// Lowest frequency (default: half the design's lower bound).
    #[arg(long, value_name = "FREQ")]
    pub from: Option<String>,
    /// Highest frequency (default: twice the design's upper bound).
    #[arg(long, value_name = "FREQ")]
    pub to: Option<String>,
    /// Number of log-spaced frequencies.
    #[arg(long, default_value_t = 25)]
    pub points: usize,
    /// Print CSV instead of the table.
    #[arg(long, conflicts_with = "json")]
    pub csv: bool,
    /// Print JSON instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Also write the loss-versus-frequency plot (SVG) to this file.
    #[arg(long, value_name = "FILE")]
    pub svg: Option<PathBuf>,
}

/// Run the command; returns the exit status.
pub fn run(args: SweepArgs, out: &mut dyn Write) -> Result<u8, Failure> {
    let SweepArgs {
        design,
        from,
        to,
        points,
        csv,
        json,
        svg,
    } = args;
    if !(2..=10_000).contains(&points) {
        return Err(Failure::Usage(format!(
            "--points {points}: expected 2 to 10000"
        )));
    }
    let solved = solve_design(design.as_deref(), None, false)?;
    let ev = &solved.evaluator;
    let (lo, hi) = review_range(ev);
    let from = match from {
        Some(t) => parse_frequency(&t, "--from")?,
        None => lo,
    };
    let to = match to {
        Some(t) => parse_frequency(&t, "--to")?,
        None => hi,
    };
    if to <= from {
        return Err(Failure::Usage("--to must be above --from".into()));
    }
    let chosen = solved.feasible.then_some(solved.plan.pwm.frequency_hz);
    let blocked: String = solved
        .plan
        .blocked_by
        .iter()
        .map(|b| format!("The plan is infeasible: {b}\n"))
        .collect();
    let rows = sweep::sweep(ev, &sweep::log_space(from, to, points), chosen);
    if let Some(path) = &svg {
        let plot = crate::output::svg::loss_plot_svg(&rows, chosen, solved.plan.feasible_band_hz);
        write_atomically(path, plot.as_bytes())?;
    }
    if json {
        let mut text = serde_json::to_string_pretty(&rows)
            .map_err(|e| Failure::Usage(format!("cannot format the sweep: {e}")))?;
        text.push('\n');
        write_text(out, &text)?;
    } else if csv {
        write_text(out, &report::sweep_csv(&rows))?;
    } else {
        let style = report::Style {
            colour: std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none(),
        };
        write_text(
            out,
            &format!(
                "Sweep of {} from {} to {}\n",
                solved.plan.design,
                fmt_hz(from),
                fmt_hz(to)
            ),
        )?;
        if let Some([a, b]) = solved.plan.feasible_band_hz {
            write_text(
                out,
                &format!("Feasible band {} to {}\n\n", fmt_hz(a), fmt_hz(b)),
            )?;
        } else {
            write_text(out, "No feasible band\n\n")?;
        }
        if !blocked.is_empty() {
            write_text(out, &format!("{blocked}\n"))?;
        }
        write_text(out, &report::sweep_table(&rows, style))?;
    }
    Ok(0)
}
