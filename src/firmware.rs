//! The library's stable surface: plan a design from a firmware crate's
//! build script and generate its Rust module into `OUT_DIR`.
//!
//! A firmware crate's `build.rs`, with
//! `[build-dependencies] pwmplan = { version = "0.1", default-features = false }`:
//!
//! ```no_run
//! // Prints `cargo:rerun-if-changed=` for every input file read; a bad
//! // input or an infeasible plan fails the build with the diagnostic.
//! if let Err(e) = pwmplan::write_rust_module("hardware/drive.yaml", "drive_pwm.rs") {
//!     eprintln!("{e}");
//!     std::process::exit(1);
//! }
//! ```
//!
//! and in the crate:
//! `mod drive_pwm { include!(concat!(env!("OUT_DIR"), "/drive_pwm.rs")); }`.
//! `examples/firmware` is such a crate (no_std, embedded-hal 1.0).
//!
//! Everything else the crate exports (`input`, `model`, `output`,
//! `commands` and their aliases) serves the `pwmplan` command, the project's
//! tests and benches; it is hidden from the documentation and may change
//! between releases. This module is the only library code besides
//! `commands` that writes a file or prints (the build-script directives).

use std::fmt;
use std::io::Write;
use std::path::{Path, PathBuf};

use crate::commands::failure::Failure;
use crate::commands::files::write_atomically;
use crate::commands::solved::{Solved, generate_files, solve_design};
use crate::input::load::Origin;
use crate::output::emit::plan_json;
use crate::output::report;

/// Why a design could not be planned.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum PlanError {
    /// An input file is wrong: the message names the file, line, field and
    /// what was expected, with the line shown.
    Input(String),
    /// The design was read, but no setting meets every constraint or an
    /// error finding stops the plan: the message is the report's reason.
    Infeasible(String),
    /// A template or an output file could not be made or written.
    Output(String),
    /// The registers the plan would write contradict its model (a defect
    /// of pwmplan: please report it with the input files).
    Internal(String),
}

impl fmt::Display for PlanError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PlanError::Input(m) => write!(f, "error: {m}"),
            PlanError::Infeasible(m) => write!(f, "{}", m.trim_end()),
            PlanError::Output(m) => write!(f, "error: {m}"),
            PlanError::Internal(m) => write!(f, "internal error: {m}"),
        }
    }
}

impl std::error::Error for PlanError {}

impl From<Failure> for PlanError {
    fn from(f: Failure) -> PlanError {
        match f {
            Failure::Input(e) => PlanError::Input(e.to_string()),
            Failure::Usage(m) => PlanError::Output(m),
            Failure::Internal(m) => PlanError::Internal(m),
        }
    }
}

/// One generated file: its name (as `pwmplan plan` writes it under `out/`)
/// and its text.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OutputFile {
    pub name: String,
    pub text: String,
}

/// A feasible plan of one design and the files it makes.
pub struct PlannedDrive {
    solved: Solved,
    files: Vec<OutputFile>,
}

/// Plan the design file at `path` (its board and switch files are found
/// from it, as the command does): the same search, checks and outputs as
/// `pwmplan plan PATH`. An infeasible plan is an error carrying the reason.
pub fn plan_file(path: impl AsRef<Path>) -> Result<PlannedDrive, PlanError> {
    let solved = solve_design(Some(path.as_ref()), None, false)?;
    if !solved.feasible {
        return Err(PlanError::Infeasible(report::infeasible_text(&solved.plan)));
    }
    let files = generate_files(&solved, None)?
        .into_iter()
        .map(|g| OutputFile {
            name: g.name.display().to_string(),
            text: g.text,
        })
        .collect();
    Ok(PlannedDrive { solved, files })
}

impl PlannedDrive {
    /// The design's name.
    pub fn design_name(&self) -> &str {
        &self.solved.plan.design
    }

    /// The chosen PWM frequency after quantisation, in hertz.
    pub fn frequency_hz(&self) -> f64 {
        self.solved.plan.pwm.frequency_hz
    }

    /// The files on disk the plan was made from (design, board, switch);
    /// bundled files compiled into pwmplan are not listed.
    pub fn inputs(&self) -> Vec<PathBuf> {
        self.solved
            .design
            .sources
            .iter()
            .filter_map(|s| match &s.origin {
                Origin::Disk(p) => Some(p.clone()),
                Origin::Bundled(_) => None,
            })
            .collect()
    }

    /// Every file `pwmplan plan` would write, in its order.
    pub fn files(&self) -> &[OutputFile] {
        &self.files
    }

    /// The Rust module as `pwmplan plan` writes it (its own file, with an
    /// inner doc comment), if the design asks for Rust output.
    pub fn rust_module(&self) -> Option<&str> {
        self.file_ending(".rs")
    }

    /// The C header, if the design asks for C output.
    pub fn c_header(&self) -> Option<&str> {
        self.file_ending(".h")
    }

    /// The plan as JSON (`plan.json`).
    pub fn plan_json(&self) -> String {
        plan_json(&self.solved.plan)
    }

    /// The text report `pwmplan plan` prints.
    pub fn report(&self) -> String {
        let ctx =
            crate::output::emit::context(&self.solved.plan, self.solved.design.board.timer.fpu);
        report::plan_text(&ctx)
    }

    fn file_ending(&self, suffix: &str) -> Option<&str> {
        self.files
            .iter()
            .find(|f| f.name.ends_with(suffix))
            .map(|f| f.text.as_str())
    }
}

/// The Rust module made fit for `include!`: its leading inner doc comment
/// (`//!`, not allowed inside an included item list) becomes a plain comment;
/// every item is kept as written.
pub fn includable(module: &str) -> String {
    let mut out = String::with_capacity(module.len());
    for line in module.lines() {
        match line.strip_prefix("//!") {
            Some(rest) => {
                out.push_str("//");
                out.push_str(rest);
            }
            None => out.push_str(line),
        }
        out.push('\n');
    }
    out
}

/// For a build script: plan `design` (a path relative to the crate's
/// manifest folder when the build runs there, as cargo runs build scripts),
/// write the Rust module as `OUT_DIR/file_name` ready for `include!`, and
/// print `cargo:rerun-if-changed=` for the design and every input file the
/// plan read, so an edit to any of them regenerates the module. Returns the
/// written path. The design file's directive is printed first, so a build
/// that fails on a bad input reruns when it is fixed.
pub fn write_rust_module(design: impl AsRef<Path>, file_name: &str) -> Result<PathBuf, PlanError> {
    let design = design.as_ref();
    let mut stdout = std::io::stdout().lock();
    let directive = |p: &Path| format!("cargo:rerun-if-changed={}\n", p.display());
    let _ = stdout.write_all(directive(design).as_bytes());
    let planned = plan_file(design);
    if let Err(PlanError::Input(_)) = &planned {
        // The failing file may be the board or the switch: watch the
        // design's folder too, so fixing either reruns the script.
        if let Some(dir) = design.parent().filter(|d| !d.as_os_str().is_empty()) {
            let _ = stdout.write_all(directive(dir).as_bytes());
        }
    }
    let planned = planned?;
    for p in planned.inputs().iter().filter(|p| p.as_path() != design) {
        let _ = stdout.write_all(directive(p).as_bytes());
    }
    let module = planned.rust_module().ok_or_else(|| {
        PlanError::Output(format!(
            "{}: the design's outputs leave Rust out (outputs.rust: false); expected it on for a build script",
            design.display()
        ))
    })?;
    let out_dir = std::env::var_os("OUT_DIR").ok_or_else(|| {
        PlanError::Output("OUT_DIR is not set: call this from a build script".into())
    })?;
    let path = Path::new(&out_dir).join(file_name);
    write_atomically(&path, includable(module).as_bytes())?;
    Ok(path)
}
