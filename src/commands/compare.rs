//! `pwmplan compare`: solve the design with each switch, side by side.

use std::io::Write;
use std::path::PathBuf;

use crate::model::evaluate::Evaluator;
use crate::model::solve;
use crate::output::plan;
use crate::output::report;

use super::failure::Failure;
use super::files::*;
use super::solved::*;

// The options of the command; its help text is the variant's doc in
// `args.rs`.
#[derive(Debug, clap::Args)]
pub struct CompareArgs {
    /// Design file (YAML). Omit for the bundled demo.
    pub design: Option<PathBuf>,
    /// A switch file, or bundled:NAME; give two or more.
    #[arg(long = "switch", value_name = "FILE", required = true)]
    pub switches: Vec<String>,
    /// Print JSON instead of the table.
    #[arg(long)]
    pub json: bool,
}

/// Run the command; returns the exit status.
pub fn run(args: CompareArgs, out: &mut dyn Write) -> Result<u8, Failure> {
    let CompareArgs {
        design,
        switches,
        json,
    } = args;
    let base = load(design.as_deref())?;
    let mut entries = Vec::new();
    for arg in &switches {
        let origin = crate::input::design::switch_origin(arg)?;
        let (spec, src) = crate::input::design::load_switch(origin)?;
        let d = crate::input::design::with_switch(&base, spec, src)?;
        let ev = Evaluator::new(&d);
        let sol = solve::solve(&ev, objective_of(&d));
        // Column label: the file's stem (names are long).
        let label = arg
            .trim_start_matches("bundled:")
            .rsplit('/')
            .next()
            .unwrap_or(arg)
            .trim_end_matches(".yaml")
            .to_string();
        entries.push((label, plan::build(&d, &ev, &sol, None)));
    }
    if json {
        let list: Vec<_> = entries
            .iter()
            .map(|(n, p)| serde_json::json!({ "switch": n, "plan": p }))
            .collect();
        let mut text = serde_json::to_string_pretty(&list)
            .map_err(|e| Failure::Usage(format!("cannot format the comparison: {e}")))?;
        text.push('\n');
        write_text(out, &text)?;
    } else {
        write_text(out, &format!("Switches compared on {}\n", base.spec.name))?;
        for (arg, (label, p)) in switches.iter().zip(&entries) {
            let name = p.as_ref().map(|p| p.switch.clone()).unwrap_or_default();
            write_text(out, &format!("  {label}: {name} ({arg})\n"))?;
        }
        write_text(out, "\n")?;
        write_text(out, &report::compare_table(&entries))?;
    }
    Ok(0)
}
