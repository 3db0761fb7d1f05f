//! The command line's arguments (clap); one option struct per command in
//! its own file.

use clap::{Parser, Subcommand};

use super::{check, compare, explain, new, plan, schema, shell, spread, sweep};

#[derive(Debug, Parser)]
#[command(
    name = "pwmplan",
    version,
    about = "Choose PWM frequency, timer prescaler/period and dead time for a brushed DC or brushless (three-phase) motor drive, and emit them as C and Rust with the reasons."
)]
pub struct Args {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Choose the PWM settings of a design and write them to the output folder
    /// (the bundled demo when no file is given).
    Plan(plan::PlanArgs),
    /// Worst case over the part and operating spreads, and a seeded Monte
    /// Carlo of the chosen setting: percentiles and yield.
    Spread(spread::SpreadArgs),
    /// Exit 1 with a diff when the output folder is not what the inputs
    /// would generate now; 0 when it is current.
    Check(check::CheckArgs),
    /// Loss, temperature, ripple and audibility against frequency, at the
    /// realisable setting nearest each frequency.
    Sweep(sweep::SweepArgs),
    /// Solve the design with each switch and show them side by side.
    Compare(compare::CompareArgs),
    /// Write a commented starter design file for one of the bundled boards.
    New(new::NewArgs),
    /// List the bundled boards, switches and designs.
    Boards,
    /// What a finding code means and where its rule comes from (without a
    /// code, the list of codes).
    Explain(explain::ExplainArgs),
    /// The JSON Schema of the input files, for YAML editors: one kind's to
    /// standard output, or all three into a folder with --out.
    Schema(schema::SchemaArgs),
    /// Write the shell completion script (bash, zsh, fish, elvish,
    /// powershell) to standard output.
    Completions(shell::CompletionsArgs),
    /// Write the manual page (roff, section 1) to standard output: pwmplan's,
    /// or with a command's name that command's.
    Manual(shell::ManualArgs),
}
