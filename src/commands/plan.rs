//! `pwmplan plan`: solve, report, and write the outputs under the folder lock.

use std::io::Write;
use std::path::PathBuf;

use crate::input::design::Design;
use crate::input::spec::TopologySpec;
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

/// The templates' flags a design's plan is sure to leave false, known
/// from the design before it is solved: the template pieces that render
/// nothing without them need not be compiled for it
/// (`Templates::load_expecting_false`; were a render to need one after all,
/// it would be compiled then).
fn flags_known_false(design: &Design) -> Vec<&'static str> {
    let mut flags = Vec::new();
    if design.board.stage.topology != TopologySpec::ThreePhase {
        flags.push("three_phase");
    }
    if design.spec.current_loop.is_none() {
        flags.extend(["current_loop", "loop_helper"]);
    }
    flags
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
    let design = load(design.as_deref())?;
    let false_flags = flags_known_false(&design);
    // Compiling the templates takes as long as a small solve: a job of the
    // worker pool meanwhile (the search shares the same workers, so the
    // cores are not oversubscribed; measured 1.2 ms faster than a thread of
    // its own on two cores).
    let (sender, receiver) = std::sync::mpsc::channel();
    let template_dir = templates;
    rayon::spawn(move || {
        // The receiver is gone when the solve failed: nothing to report to.
        let _ = sender.send(Templates::load_expecting_false(
            template_dir.as_deref(),
            &false_flags,
        ));
    });
    let solved = solve_loaded(design, at, worst_case);
    // The plots' sweep does not need the templates: made while they
    // compile.
    let rows = solved
        .as_ref()
        .ok()
        .filter(|s| s.feasible || (force && !no_write))
        .map(plot_rows)
        .unwrap_or_default();
    let compiled = receiver.recv().unwrap_or_else(|_| {
        Err(emit::EmitError::Template {
            file: "templates".into(),
            message: "compiling the templates failed unexpectedly".into(),
        })
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
    let files = generate_from_rows(&solved, &rows, &compiled?)?;
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
