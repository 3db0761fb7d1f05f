//! The process entry: parse the arguments, dispatch to a command, map the
//! outcome to a message and an exit status.

use std::io::Write;
use std::process::ExitCode;

use clap::{CommandFactory, Parser};

use super::args::{Args, Command};
use super::failure::Failure;
use super::{boards, check, compare, explain, new, plan, schema, shell, spread, sweep};

/// Parse the process arguments, run, print, and return the exit status.
pub fn main() -> ExitCode {
    let args = match Args::try_parse() {
        Ok(a) => a,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let mut stdout = std::io::stdout().lock();
    let mut stderr = std::io::stderr().lock();
    match run(args, &mut stdout, &mut stderr) {
        Ok(code) => ExitCode::from(code),
        Err(Failure::Input(e)) => {
            let _ = writeln!(stderr, "error: {e}");
            ExitCode::from(2)
        }
        Err(Failure::Usage(m)) => {
            let _ = writeln!(stderr, "error: {m}");
            ExitCode::from(2)
        }
        Err(Failure::Internal(m)) => {
            let _ = writeln!(stderr, "internal error: {m}");
            ExitCode::from(3)
        }
    }
}

/// Run one command, writing its report to `out` and notes to `err`;
/// returns the exit status.
pub fn run(args: Args, out: &mut dyn Write, err: &mut dyn Write) -> Result<u8, Failure> {
    match args.command {
        Command::Plan(a) => plan::run(a, out, err),
        Command::Check(a) => check::run(a, out),
        Command::New(a) => new::run(a, out),
        Command::Sweep(a) => sweep::run(a, out),
        Command::Compare(a) => compare::run(a, out),
        Command::Spread(a) => spread::run(a, out, err),
        Command::Boards => boards::run(out),
        Command::Explain(a) => explain::run(a, out),
        Command::Schema(a) => schema::run(a, out),
        Command::Completions(a) => shell::completions(a, Args::command(), out),
        Command::Manual(a) => shell::manual(a, Args::command(), out),
    }
}
