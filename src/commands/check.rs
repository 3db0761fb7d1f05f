//! `pwmplan check`: regenerate and compare with the output folder.

use std::io::Write;
use std::path::PathBuf;

use crate::output::report;

use super::failure::Failure;
use super::files::*;
use super::solved::*;

// The options of the command; its help text is the variant's doc in
// `args.rs`.
#[derive(Debug, clap::Args)]
pub struct CheckArgs {
    /// Design file (YAML). Omit for the bundled demo.
    pub design: Option<PathBuf>,
    #[arg(long, default_value = "out", value_name = "DIR")]
    pub out: PathBuf,
    #[arg(long, value_name = "DIR")]
    pub templates: Option<PathBuf>,
}

/// Run the command; returns the exit status.
pub fn run(args: CheckArgs, out: &mut dyn Write) -> Result<u8, Failure> {
    let CheckArgs {
        design,
        out: dir,
        templates,
    } = args;
    // Regenerate the way the folder was made: the same pinned
    // frequency and basis.
    let previous = previous_plan(&dir);
    let pinned = previous.as_ref().and_then(|p| p.search.pinned_frequency_hz);
    let worst = previous.as_ref().is_some_and(|p| p.basis == "worst-case");
    let solved = solve_design(design.as_deref(), pinned, worst)?;
    if !solved.feasible {
        write_text(out, &report::infeasible_text(&solved.plan))?;
        return Ok(1);
    }
    let files = generate_files(&solved, templates.as_deref())?;
    let problems = check_outputs(&dir, &files);
    if let Some(old) = &previous
        && !problems.is_empty()
    {
        let lines = report::what_changed(old, &solved.plan, &constant_changes(&dir, &files));
        for l in lines {
            write_text(out, &format!("{l}\n"))?;
        }
    }
    if problems.is_empty() {
        write_text(
            out,
            &format!("{} is current ({} files)\n", dir.display(), files.len()),
        )?;
        Ok(0)
    } else {
        write_text(out, &problems.join(""))?;
        write_text(
            out,
            &format!(
                "{} is out of date; run `pwmplan plan` to regenerate it\n",
                dir.display()
            ),
        )?;
        Ok(1)
    }
}
