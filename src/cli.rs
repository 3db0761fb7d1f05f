//! The command line: arguments, dispatch, messages and exit statuses.
//!
//! **Invariant:** the only place that prints or writes output files; every
//! error reaches the user as one message and exit status 2 (bad input) or 1
//! (infeasible / out of date), never as a panic.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::{Parser, Subcommand};

use crate::bundled::{self, Kind};
use crate::design::{Design, load_design};
use crate::diagnostic::InputError;
use crate::load::{Origin, SourceFile};
use crate::spec::{BoardFile, DesignFile, SwitchFile};
use crate::summary;

#[derive(Debug, Parser)]
#[command(
    name = "pwmplan",
    version,
    about = "Choose PWM frequency, timer prescaler/period and dead time for a DC motor drive, and emit them as C and Rust with the reasons."
)]
pub struct Args {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Plan the PWM settings of a design (the bundled demo when no file is given).
    Plan {
        /// Design file (YAML). Omit to run the bundled demo.
        design: Option<PathBuf>,
        /// Folder for the generated files.
        #[arg(long, default_value = "out")]
        out: PathBuf,
    },
    /// Write a commented starter design file.
    New {
        /// Where to write it.
        #[arg(default_value = "drive.yaml")]
        path: PathBuf,
        /// Overwrite an existing file.
        #[arg(long)]
        force: bool,
    },
    /// List the bundled boards, switches and designs.
    Boards,
}

/// Why a command failed, and so its exit status.
#[derive(Debug)]
pub enum Failure {
    /// Bad input: exit 2.
    Input(InputError),
    /// A usage or output problem the user must fix: exit 2.
    Usage(String),
}

impl From<InputError> for Failure {
    fn from(e: InputError) -> Failure {
        Failure::Input(e)
    }
}

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
    match run(args, &mut stdout) {
        Ok(code) => ExitCode::from(code),
        Err(Failure::Input(e)) => {
            eprintln!("error: {e}");
            ExitCode::from(2)
        }
        Err(Failure::Usage(m)) => {
            eprintln!("error: {m}");
            ExitCode::from(2)
        }
    }
}

/// Run one command, writing its report to `out`; returns the exit status.
pub fn run(args: Args, out: &mut dyn Write) -> Result<u8, Failure> {
    match args.command {
        Command::Plan { design, out: _ } => {
            let design = load(design.as_deref())?;
            let text = summary::design_summary(&design);
            write_stdout(out, &text)?;
            Ok(0)
        }
        Command::New { path, force } => {
            if path.exists() && !force {
                return Err(Failure::Usage(format!(
                    "{} exists; pass --force to overwrite it",
                    path.display()
                )));
            }
            write_atomically(&path, STARTER_DESIGN.as_bytes())?;
            write_stdout(
                out,
                &format!(
                    "wrote {}: a starter design on the bundled board wren-hb24; edit the motor and constraints, then run `pwmplan plan {}`\n",
                    path.display(),
                    path.display()
                ),
            )?;
            Ok(0)
        }
        Command::Boards => {
            write_stdout(out, &list_bundled()?)?;
            Ok(0)
        }
    }
}

fn load(design: Option<&Path>) -> Result<Design, InputError> {
    let origin = match design {
        Some(p) => Origin::Disk(p.to_path_buf()),
        None => Origin::Bundled(bundled::DEMO_DESIGN.to_string()),
    };
    load_design(origin)
}

fn write_stdout(out: &mut dyn Write, text: &str) -> Result<(), Failure> {
    out.write_all(text.as_bytes())
        .map_err(|e| Failure::Usage(format!("cannot write to standard output: {e}")))
}

/// Write `bytes` to `path` through a temporary file in the same folder and a
/// rename, so a reader never sees half a file.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), Failure> {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    std::fs::create_dir_all(dir)
        .map_err(|e| Failure::Usage(format!("cannot create {}: {e}", dir.display())))?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.pwmplan-tmp"));
    std::fs::write(&tmp, bytes)
        .and_then(|_| std::fs::rename(&tmp, path))
        .map_err(|e| {
            let _ = std::fs::remove_file(&tmp);
            Failure::Usage(format!("cannot write {}: {e}", path.display()))
        })
}

/// The bundled files, each with the name written inside it.
fn list_bundled() -> Result<String, Failure> {
    let mut s = String::new();
    for (kind, title) in [
        (Kind::Board, "Boards (use as `board: bundled:NAME`)"),
        (
            Kind::Switch,
            "Switches (use as `switch: bundled:NAME` or `--switch bundled:NAME`)",
        ),
        (
            Kind::Design,
            "Designs (run with `pwmplan plan boards/NAME.yaml`)",
        ),
    ] {
        s.push_str(title);
        s.push('\n');
        for (short, path, _) in bundled::all(kind) {
            let src = SourceFile::read(Origin::Bundled(path.to_string()))?;
            let name = match kind {
                Kind::Board => src.parse::<BoardFile>()?.board.name,
                Kind::Switch => src.parse::<SwitchFile>()?.switch.name,
                Kind::Design => src.parse::<DesignFile>()?.design.name,
            };
            let short = short.trim_start_matches("switches/").to_string();
            s.push_str(&format!("  {short:<14} {name}\n"));
        }
    }
    Ok(s)
}

/// What `pwmplan new` writes.
const STARTER_DESIGN: &str = include_str!("../templates/starter-design.yaml");
