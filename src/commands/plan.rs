//! `pwmplan plan`: solve, report, and write the outputs under the folder lock.

use std::io::Write;
use std::path::PathBuf;

use crate::output::emit::{self, Templates};
use crate::output::report;

use super::failure::Failure;
use super::files::*;
use super::solved::*;

// The options of the command; its help text is the variant's doc in
// `args.rs`.
#[derive(Debug, clap::Args)]
pub struct PlanArgs {
    /// Design file (YAML). Omit to run the bundled demo.
    pub design: Option<PathBuf>,
    /// Pin the PWM frequency (e.g. "20 kHz"); it is still quantised to the
    /// timer and checked against every constraint.
    #[arg(long, value_name = "FREQ")]
    pub at: Option<String>,
    /// Print the plan as JSON instead of the text report.
    #[arg(long)]
    pub json: bool,
    /// Folder for the generated files.
    #[arg(long, default_value = "out", value_name = "DIR")]
    pub out: PathBuf,
    /// Templates folder overriding the bundled set.
    #[arg(long, value_name = "DIR")]
    pub templates: Option<PathBuf>,
    /// Overwrite generated files a person has edited; also write the
    /// outputs of an infeasible plan, marked infeasible (exit status
    /// stays 1).
    #[arg(long)]
    pub force: bool,
    /// Print only; write no files.
    #[arg(long)]
    pub no_write: bool,
    /// Choose the settings against the worst corner of the part and
    /// operating spreads instead of typical values.
    #[arg(long)]
    pub worst_case: bool,
}

/// Run the command; returns the exit status.
pub fn run(args: PlanArgs, out: &mut dyn Write, err: &mut dyn Write) -> Result<u8, Failure> {
    let PlanArgs {
        design,
        at,
        json,
        out: dir,
        templates,
        force,
        no_write,
        worst_case,
    } = args;
    let at = at
        .as_deref()
        .map(|t| parse_frequency(t, "--at"))
        .transpose()?;
    // Compiling the templates takes as long as a small solve: do it
    // on another thread meanwhile.
    let (solved, compiled) = std::thread::scope(|scope| {
        let compiling = scope.spawn(|| Templates::load(templates.as_deref()));
        let solved = solve_design(design.as_deref(), at, worst_case);
        let compiled = compiling.join().unwrap_or_else(|_| {
            Err(emit::EmitError::Template {
                file: "templates".into(),
                message: "compiling the templates failed unexpectedly".into(),
            })
        });
        (solved, compiled)
    });
    let solved = solved?;
    // An infeasible plan exits 1 and writes nothing, unless forced.
    let status = if solved.feasible { 0 } else { 1 };
    if !solved.feasible && (!force || no_write) {
        if json {
            write_text(out, &emit::plan_json(&solved.plan))?;
        } else {
            write_text(out, &report::infeasible_text(&solved.plan))?;
            write_text(
                out,
                "Nothing was written (`--force` writes the outputs, marked infeasible).\n",
            )?;
        }
        return Ok(1);
    }
    let files = generate_with(&solved, &compiled?)?;
    let ctx = emit::context(&solved.plan, solved.design.board.timer.fpu);
    if json {
        write_text(out, &emit::plan_json(&solved.plan))?;
    } else if solved.feasible {
        write_text(out, &report::plan_text(&ctx))?;
    } else {
        write_text(out, &report::infeasible_text(&solved.plan))?;
        write_text(out, "\nWritten anyway (--force), marked infeasible:\n\n")?;
        write_text(out, &report::plan_text(&ctx))?;
    }
    if no_write {
        return Ok(status);
    }
    // One run at a time per output folder: the comparison with what
    // is there and the writes happen under the folder's lock.
    let lock = OutputLock::acquire(&dir)?;
    let changes = previous_plan(&dir)
        .map(|old| report::what_changed(&old, &solved.plan, &constant_changes(&dir, &files)));
    let (written, unchanged) = match write_outputs(&dir, &files, force) {
        Ok(w) => w,
        Err(e) => {
            lock.abandon();
            return Err(e);
        }
    };
    lock.release();
    let mut note = String::new();
    if let Some(lines) = changes {
        for l in lines {
            note.push_str(&l);
            note.push('\n');
        }
    }
    let names = |paths: &[PathBuf]| {
        paths
            .iter()
            .map(|p| p.display().to_string())
            .collect::<Vec<_>>()
            .join(", ")
    };
    if !written.is_empty() {
        note.push_str(&format!("wrote {}\n", names(&written)));
    }
    if !unchanged.is_empty() {
        note.push_str(&format!(
            "already current, left alone: {}\n",
            names(&unchanged)
        ));
    }
    // With --json the report on stdout stays pure JSON.
    if json {
        write_text(err, &note)?;
    } else {
        write_text(out, &format!("\n{note}"))?;
    }
    Ok(status)
}
