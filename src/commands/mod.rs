//! The command line: arguments, dispatch, messages and exit statuses.
//!
//! **Invariant:** the only place that prints or writes output files; every
//! error reaches the user as one message and exit status 2 (bad input) or 1
//! (infeasible / out of date), never as a panic.

use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::{Duration, Instant};

use clap::{Parser, Subcommand};

use crate::input::bundled::{self, Kind};
use crate::input::design::{Design, load_design};
use crate::input::diagnostic::InputError;
use crate::input::load::{Origin, SourceFile};
use crate::input::spec::{BoardFile, DesignFile, ObjectiveSpec, SwitchFile};
use crate::input::units::{Dimension, parse_quantity};
use crate::model::evaluate::Evaluator;
use crate::model::solve::{self, Objective};
use crate::model::sweep;
use crate::output::emit::{self, EmitError, GeneratedFile, Templates};
use crate::output::plan::{self, Plan};
use crate::output::report;

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
    Plan {
        /// Design file (YAML). Omit to run the bundled demo.
        design: Option<PathBuf>,
        /// Pin the PWM frequency (e.g. "20 kHz"); it is still quantised to the
        /// timer and checked against every constraint.
        #[arg(long, value_name = "FREQ")]
        at: Option<String>,
        /// Print the plan as JSON instead of the text report.
        #[arg(long)]
        json: bool,
        /// Folder for the generated files.
        #[arg(long, default_value = "out", value_name = "DIR")]
        out: PathBuf,
        /// Templates folder overriding the bundled set.
        #[arg(long, value_name = "DIR")]
        templates: Option<PathBuf>,
        /// Overwrite generated files a person has edited; also write the
        /// outputs of an infeasible plan, marked infeasible (exit status
        /// stays 1).
        #[arg(long)]
        force: bool,
        /// Print only; write no files.
        #[arg(long)]
        no_write: bool,
        /// Choose the settings against the worst corner of the part and
        /// operating spreads instead of typical values.
        #[arg(long)]
        worst_case: bool,
    },
    /// Worst case over the part and operating spreads, and a seeded Monte
    /// Carlo of the chosen setting: percentiles and yield.
    Spread {
        /// Design file (YAML). Omit for the bundled demo.
        design: Option<PathBuf>,
        /// Number of Monte Carlo samples.
        #[arg(long, default_value_t = 10_000)]
        samples: u64,
        /// Seed of the random draws (same seed, same result on any machine).
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Print JSON instead of the text report.
        #[arg(long)]
        json: bool,
    },
    /// Exit 1 with a diff when the output folder is not what the inputs
    /// would generate now; 0 when it is current.
    Check {
        /// Design file (YAML). Omit for the bundled demo.
        design: Option<PathBuf>,
        #[arg(long, default_value = "out", value_name = "DIR")]
        out: PathBuf,
        #[arg(long, value_name = "DIR")]
        templates: Option<PathBuf>,
    },
    /// Loss, temperature, ripple and audibility against frequency, at the
    /// realisable setting nearest each frequency.
    Sweep {
        /// Design file (YAML). Omit for the bundled demo.
        design: Option<PathBuf>,
        /// Lowest frequency (default: half the design's lower bound).
        #[arg(long, value_name = "FREQ")]
        from: Option<String>,
        /// Highest frequency (default: twice the design's upper bound).
        #[arg(long, value_name = "FREQ")]
        to: Option<String>,
        /// Number of log-spaced frequencies.
        #[arg(long, default_value_t = 25)]
        points: usize,
        /// Print CSV instead of the table.
        #[arg(long, conflicts_with = "json")]
        csv: bool,
        /// Print JSON instead of the table.
        #[arg(long)]
        json: bool,
        /// Also write the loss-versus-frequency plot (SVG) to this file.
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
    },
    /// Solve the design with each switch and show them side by side.
    Compare {
        /// Design file (YAML). Omit for the bundled demo.
        design: Option<PathBuf>,
        /// A switch file, or bundled:NAME; give two or more.
        #[arg(long = "switch", value_name = "FILE", required = true)]
        switches: Vec<String>,
        /// Print JSON instead of the table.
        #[arg(long)]
        json: bool,
    },
    /// Write a commented starter design file for one of the bundled boards.
    New {
        /// Where to write it.
        #[arg(default_value = "drive.yaml")]
        path: PathBuf,
        /// The power stage: half-bridge (brushed DC, one direction),
        /// h-bridge (brushed DC, both directions), low-side (brushed DC, one
        /// switch and a freewheel diode) or three-phase (brushless).
        #[arg(long, value_enum, default_value_t = StarterTopology::HalfBridge)]
        topology: StarterTopology,
        /// Overwrite an existing file.
        #[arg(long)]
        force: bool,
    },
    /// List the bundled boards, switches and designs.
    Boards,
}

/// The starter designs of `pwmplan new`, one per topology.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum StarterTopology {
    HalfBridge,
    HBridge,
    LowSide,
    ThreePhase,
}

impl StarterTopology {
    /// The starter's text and the bundled board it uses.
    pub fn starter(self) -> (&'static str, &'static str) {
        match self {
            StarterTopology::HalfBridge => (STARTER_DESIGN, "wren-hb24"),
            StarterTopology::HBridge => (STARTER_H_BRIDGE, "heron-hb48"),
            StarterTopology::LowSide => (STARTER_LOW_SIDE, "kite-ls12"),
            StarterTopology::ThreePhase => (STARTER_THREE_PHASE, "osprey-3p48"),
        }
    }
}

/// Why a command failed, and so its exit status.
#[derive(Debug)]
pub enum Failure {
    /// Bad input: exit 2.
    Input(InputError),
    /// A usage or output problem the user must fix: exit 2.
    Usage(String),
    /// The register-level check contradicts the model: an internal error,
    /// exit 3, nothing written.
    Internal(String),
}

impl From<InputError> for Failure {
    fn from(e: InputError) -> Failure {
        Failure::Input(e)
    }
}

impl From<EmitError> for Failure {
    fn from(e: EmitError) -> Failure {
        Failure::Usage(e.to_string())
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

/// A solved design: everything the outputs are made from.
pub struct Solved {
    pub design: Design,
    pub evaluator: Evaluator,
    pub plan: Plan,
    /// The plan may be used (`plan.feasible`): the search met every
    /// constraint and no error finding blocks it.
    pub feasible: bool,
    /// The search found a setting that meets every constraint (it may
    /// still be blocked by an error finding).
    pub setting_found: bool,
}

/// Points of the sweep behind the plots.
const PLOT_POINTS: usize = 40;

/// The frequencies a review shows by default: from half the design's lower
/// bound to twice its upper bound, so the infeasible edges are visible.
fn review_range(ev: &Evaluator) -> (f64, f64) {
    (ev.limits.f_min_hz / 2.0, ev.limits.f_max_hz * 2.0)
}

/// Load, solve (or evaluate at a pinned frequency) and build the plan;
/// `worst_case` judges every setting against the worst corner.
pub fn solve_design(
    design: Option<&Path>,
    at: Option<f64>,
    worst_case: bool,
) -> Result<Solved, Failure> {
    let design = load(design)?;
    let ev = Evaluator::new(&design);
    if let Some(f) = at {
        // Refuse a pinned frequency the timer cannot come near before
        // searching for it (a search towards 1 mHz visits every divider).
        let (lo, hi) = ev
            .alignments()
            .iter()
            .map(|a| ev.timer.frequency_range(*a))
            .fold((f64::INFINITY, 0.0f64), |(l, h), (a, b)| {
                (l.min(a), h.max(b))
            });
        if !(f >= lo * (1.0 - 1e-9) && f <= hi * (1.0 + 1e-9)) {
            return Err(Failure::Usage(format!(
                "--at {}: outside what the timer can make ({} to {}); expected a frequency in that range",
                fmt_hz(f),
                fmt_hz(lo),
                fmt_hz(hi)
            )));
        }
    }
    let objective = objective_of(&design);
    let corners = if worst_case {
        crate::model::spread::corner_evaluators(&design, &ev)
    } else {
        Vec::new()
    };
    let judge = solve::Judge {
        ev: &ev,
        corners: &corners,
        dead: ev.dead_time_choice(),
    };
    let solution = match at {
        Some(f) => solve::pinned_judged(&judge, objective, f),
        None if worst_case => solve::solve_worst_case(&ev, &corners, objective),
        None => solve::solve(&ev, objective),
    };
    let plan = plan::build_on(&design, &ev, &solution, at, worst_case).ok_or_else(|| {
        let why = solution
            .conflict
            .first()
            .cloned()
            .unwrap_or_else(|| "no timer setting could be evaluated".into());
        // Nothing evaluated: point at the band the search covered (the
        // design's, else the board's timer clock that sets it).
        match (
            at,
            &design.spec.constraints.frequency,
            design.sources.get(1),
        ) {
            (Some(_), _, _) => Failure::Usage(format!("--at: {why}")),
            (None, None, Some(board)) => Failure::Input(board.error("board.timer.clock", why)),
            _ => Failure::Input(design.sources[0].error("design.constraints.frequency", why)),
        }
    })?;
    let mut plan = plan;
    plan.register_check = crate::model::register_check::check_solution(&design, &ev, &solution);
    if !plan.register_check.disagreements.is_empty() {
        return Err(Failure::Internal(format!(
            "the registers this plan would write do not do what its model says, so nothing was written; please report it with the input files:\n  {}",
            plan.register_check.disagreements.join("\n  ")
        )));
    }
    Ok(Solved {
        feasible: plan.feasible,
        setting_found: solution.feasible,
        design,
        evaluator: ev,
        plan,
    })
}

fn parse_frequency(text: &str, option: &str) -> Result<f64, Failure> {
    parse_quantity(text, Dimension::Frequency)
        .map_err(|e| Failure::Usage(format!("{option}: {e}")))
        .and_then(|f| {
            if f > 0.0 {
                Ok(f)
            } else {
                Err(Failure::Usage(format!(
                    "{option}: expected a positive frequency such as \"20 kHz\""
                )))
            }
        })
}

fn fmt_hz(f: f64) -> String {
    crate::input::units::format_quantity(f, Dimension::Frequency, 4)
}

fn objective_of(d: &Design) -> Objective {
    match d.spec.objective {
        ObjectiveSpec::LeastLoss => Objective::LeastLoss,
        ObjectiveSpec::Quietest => Objective::Quietest,
        ObjectiveSpec::CoolestJunction => Objective::CoolestJunction,
    }
}

/// The files `plan` writes for a solved design.
pub fn generate_files(s: &Solved, templates: Option<&Path>) -> Result<Vec<GeneratedFile>, Failure> {
    generate_with(s, &Templates::load(templates)?)
}

/// The files `plan` writes for a solved design, with templates already
/// compiled.
fn generate_with(s: &Solved, t: &Templates) -> Result<Vec<GeneratedFile>, Failure> {
    let o = &s.design.spec.outputs;
    let (from, to) = review_range(&s.evaluator);
    let rows = sweep::sweep(
        &s.evaluator,
        &sweep::log_space(from, to, PLOT_POINTS),
        Some(s.plan.pwm.frequency_hz),
    );
    Ok(emit::generate(
        &s.plan,
        &rows,
        s.design.board.timer.fpu,
        o.c,
        o.rust,
        t,
    )?)
}

/// Run one command, writing its report to `out` and notes to `err`;
/// returns the exit status.
pub fn run(args: Args, out: &mut dyn Write, err: &mut dyn Write) -> Result<u8, Failure> {
    match args.command {
        Command::Plan {
            design,
            at,
            json,
            out: dir,
            templates,
            force,
            no_write,
            worst_case,
        } => {
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
            let changes = previous_plan(&dir).map(|old| {
                report::what_changed(&old, &solved.plan, &constant_changes(&dir, &files))
            });
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
        Command::Check {
            design,
            out: dir,
            templates,
        } => {
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
                let lines =
                    report::what_changed(old, &solved.plan, &constant_changes(&dir, &files));
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
        Command::New {
            path,
            force,
            topology,
        } => {
            if path.exists() && !force {
                return Err(Failure::Usage(format!(
                    "{} exists; pass --force to overwrite it",
                    path.display()
                )));
            }
            let (text, board) = topology.starter();
            write_atomically(&path, text.as_bytes())?;
            write_text(
                out,
                &format!(
                    "wrote {}: a starter design on the bundled board {board}; edit the motor and constraints, then run `pwmplan plan {}`\n",
                    path.display(),
                    path.display()
                ),
            )?;
            Ok(0)
        }
        Command::Sweep {
            design,
            from,
            to,
            points,
            csv,
            json,
            svg,
        } => {
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
                let plot =
                    crate::output::svg::loss_plot_svg(&rows, chosen, solved.plan.feasible_band_hz);
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
                    colour: std::io::stdout().is_terminal()
                        && std::env::var_os("NO_COLOR").is_none(),
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
        Command::Compare {
            design,
            switches,
            json,
        } => {
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
        Command::Spread {
            design,
            samples,
            seed,
            json,
        } => {
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
            let c = solve::evaluate_at(ev, solved.plan.pwm.frequency_hz).ok_or_else(|| {
                Failure::Usage("the chosen setting could not be evaluated again".into())
            })?;
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
        Command::Boards => {
            write_text(out, &list_bundled()?)?;
            Ok(0)
        }
    }
}

/// The plan in `dir/plan.json`, if there is a readable one.
fn previous_plan(dir: &Path) -> Option<Plan> {
    let text = read_output(&dir.join("plan.json")).ok()??;
    serde_json::from_str(&text).ok()
}

/// An existing output file's text: `None` when there is none. Only a
/// regular file is read (a FIFO planted there would block the read, a link
/// would lead elsewhere), up to the input size cap.
fn read_output(path: &Path) -> Result<Option<String>, String> {
    match std::fs::symlink_metadata(path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        Err(e) => Err(e.to_string()),
        Ok(m) if m.file_type().is_symlink() => Err("it is a symbolic link".into()),
        Ok(m) if !m.is_file() => Err("it is not a regular file".into()),
        Ok(_) => crate::input::load::read_text(path, "a file pwmplan wrote")
            .map(Some)
            .map_err(|crate::input::load::ReadRefusal(why, _)| why),
    }
}

/// Name of the advisory lock file inside an output folder.
pub const LOCK_FILE: &str = ".pwmplan.lock";

/// An exclusive advisory lock on an output folder (`DIR/.pwmplan.lock`),
/// held while a run compares and writes, so two runs on one folder take
/// turns. The lock file is removed on release (a waiting run then finds
/// the file it locked gone and locks the new one), so the folder holds
/// only outputs between runs.
struct OutputLock {
    dir: PathBuf,
    /// The folder did not exist before this run.
    created_dir: bool,
    file: std::fs::File,
}

impl OutputLock {
    fn acquire(dir: &Path) -> Result<OutputLock, Failure> {
        let created_dir = !dir.exists();
        std::fs::create_dir_all(dir)
            .map_err(|e| Failure::Usage(format!("cannot create {}: {e}", dir.display())))?;
        let path = dir.join(LOCK_FILE);
        loop {
            let file = std::fs::OpenOptions::new()
                .read(true)
                .write(true)
                .create(true)
                .truncate(false)
                .open(&path)
                .map_err(|e| {
                    Failure::Usage(format!("cannot open the lock {}: {e}", path.display()))
                })?;
            file.lock()
                .map_err(|e| Failure::Usage(format!("cannot lock {}: {e}", path.display())))?;
            // A run that gave up may have removed the lock file while this
            // one waited: lock the file that is there now.
            if same_file(&file, &path) {
                return Ok(OutputLock {
                    dir: dir.to_path_buf(),
                    created_dir,
                    file,
                });
            }
        }
    }

    /// Release after a successful run.
    fn release(self) {
        let _ = std::fs::remove_file(self.dir.join(LOCK_FILE));
        let _ = self.file.unlock();
    }

    /// Release after a failed run: when this run made the folder, take the
    /// (then empty) folder away again.
    fn abandon(self) {
        let _ = std::fs::remove_file(self.dir.join(LOCK_FILE));
        if self.created_dir {
            let _ = std::fs::remove_dir(&self.dir);
        }
        let _ = self.file.unlock();
    }
}

#[cfg(unix)]
fn same_file(file: &std::fs::File, path: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    match (file.metadata(), std::fs::metadata(path)) {
        (Ok(a), Ok(b)) => a.dev() == b.dev() && a.ino() == b.ino(),
        _ => false,
    }
}

#[cfg(not(unix))]
fn same_file(_file: &std::fs::File, path: &Path) -> bool {
    path.exists()
}

/// Create a new temporary file beside `path` with a name no other run uses
/// (process id, a counter and the clock) and write `bytes` to it. The
/// create is exclusive (`create_new`): it never opens an existing file and
/// never follows a symbolic link planted at the name.
fn write_temp(path: &Path, bytes: &[u8]) -> std::io::Result<PathBuf> {
    use std::sync::atomic::{AtomicU64, Ordering};
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let mut last = None;
    for _ in 0..16 {
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.subsec_nanos());
        let tmp = dir.join(format!(
            ".{name}.{}-{}-{nanos:08x}{TEMP_SUFFIX}",
            std::process::id(),
            COUNTER.fetch_add(1, Ordering::Relaxed)
        ));
        match create_exclusive(&tmp, bytes) {
            Ok(()) => return Ok(tmp),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => last = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last.unwrap_or_else(|| std::io::Error::other("no free temporary name")))
}

/// Create `path` anew (failing with `AlreadyExists` when anything, a link
/// included, is there) and write `bytes` to it; on a write error the file
/// is removed again.
fn create_exclusive(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut f = std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(path)?;
    f.write_all(bytes)
        .and_then(|_| f.sync_all())
        .inspect_err(|_| {
            let _ = std::fs::remove_file(path);
        })
}

/// How every temporary file's name ends.
pub const TEMP_SUFFIX: &str = ".pwmplan-tmp";

/// Refuse to overwrite a file a person edited (or one pwmplan did not
/// write) unless forced; then write every changed file through a temporary
/// file and rename them only when all temporaries are written. A file whose
/// content is already what would be written is left alone (its time stamp
/// too, so a build does not recompile an unchanged header). Returns the
/// names written and the names left unchanged.
fn write_outputs(
    dir: &Path,
    files: &[GeneratedFile],
    force: bool,
) -> Result<(Vec<PathBuf>, Vec<PathBuf>), Failure> {
    let mut changed = Vec::new();
    let mut unchanged = Vec::new();
    for f in files {
        let path = dir.join(&f.name);
        match read_output(&path) {
            Ok(None) => changed.push((path, f)),
            Ok(Some(existing)) if existing == f.text => unchanged.push(path),
            Ok(Some(existing)) if !force => match emit::is_untouched(&existing) {
                Some(true) => changed.push((path, f)),
                Some(false) => {
                    return Err(Failure::Usage(format!(
                        "{} was edited after pwmplan wrote it; nothing was written. Keep your edits elsewhere, or pass --force to overwrite",
                        path.display()
                    )));
                }
                None => {
                    return Err(Failure::Usage(format!(
                        "{} exists and was not written by pwmplan; nothing was written. Move it, or pass --force to overwrite",
                        path.display()
                    )));
                }
            },
            Ok(Some(_)) => changed.push((path, f)),
            Err(e) if !force => {
                return Err(Failure::Usage(format!(
                    "{} exists but cannot be read as pwmplan output ({e}); nothing was written. Move it, or pass --force to overwrite",
                    path.display()
                )));
            }
            Err(_) => changed.push((path, f)),
        }
    }
    let mut temps: Vec<(PathBuf, PathBuf)> = Vec::new();
    let remove_all = |temps: &[(PathBuf, PathBuf)]| {
        for (t, _) in temps {
            let _ = std::fs::remove_file(t);
        }
    };
    for (path, f) in &changed {
        match write_temp(path, f.text.as_bytes()) {
            Ok(tmp) => temps.push((tmp, path.clone())),
            Err(e) => {
                remove_all(&temps);
                return Err(Failure::Usage(format!(
                    "cannot write {}: {e}; nothing was written",
                    path.display()
                )));
            }
        }
    }
    for (i, (tmp, path)) in temps.iter().enumerate() {
        if let Err(e) = std::fs::rename(tmp, path) {
            remove_all(&temps[i..]);
            return Err(Failure::Usage(format!(
                "cannot write {}: {e}",
                path.display()
            )));
        }
    }
    Ok((temps.into_iter().map(|(_, p)| p).collect(), unchanged))
}

/// Differences between the files on disk and those the inputs generate now,
/// as unified diffs and plain notes.
fn check_outputs(dir: &Path, files: &[GeneratedFile]) -> Vec<String> {
    let mut problems = Vec::new();
    for f in files {
        let path = dir.join(&f.name);
        match read_output(&path) {
            Ok(None) => problems.push(format!("{}: missing\n", path.display())),
            Err(e) => problems.push(format!("{}: cannot be read ({e})\n", path.display())),
            Ok(Some(existing)) if existing == f.text => {}
            Ok(Some(existing)) => {
                if emit::is_untouched(&existing) == Some(false) {
                    problems.push(format!(
                        "{}: edited by hand since pwmplan wrote it\n",
                        path.display()
                    ));
                }
                let diff = similar::TextDiff::from_lines(&existing, &f.text)
                    .unified_diff()
                    .context_radius(2)
                    .header(
                        &format!("{} (on disk)", path.display()),
                        &format!("{} (generated now)", path.display()),
                    )
                    .to_string();
                problems.push(diff);
            }
        }
    }
    problems
}

fn load(design: Option<&Path>) -> Result<Design, InputError> {
    let origin = match design {
        Some(p) => Origin::Disk(p.to_path_buf()),
        None => Origin::Bundled(bundled::DEMO_DESIGN.to_string()),
    };
    load_design(origin)
}

fn write_text(out: &mut dyn Write, text: &str) -> Result<(), Failure> {
    out.write_all(text.as_bytes())
        .map_err(|e| Failure::Usage(format!("cannot write the report: {e}")))
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
    let fail = |e: std::io::Error| Failure::Usage(format!("cannot write {}: {e}", path.display()));
    let tmp = write_temp(path, bytes).map_err(fail)?;
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        fail(e)
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

/// What `pwmplan new` writes: the half-bridge starter (the default), and
/// one per other topology.
const STARTER_DESIGN: &str = include_str!("../../templates/starter-design.yaml");
const STARTER_H_BRIDGE: &str = include_str!("../../templates/starter-h-bridge.yaml");
const STARTER_LOW_SIDE: &str = include_str!("../../templates/starter-low-side.yaml");
const STARTER_THREE_PHASE: &str = include_str!("../../templates/starter-three-phase.yaml");

/// The emitted constants (C `#define`s, or Rust `pub const`s when no
/// header is written) that differ between the files in `dir` and the
/// files generated now: `(name, old, new)`, `old`/`new` empty when the
/// constant is new or gone.
fn constant_changes(dir: &Path, files: &[GeneratedFile]) -> Vec<(String, String, String)> {
    let code = files
        .iter()
        .find(|f| f.name.extension().is_some_and(|e| e == "h"))
        .or_else(|| {
            files
                .iter()
                .find(|f| f.name.extension().is_some_and(|e| e == "rs"))
        });
    let Some(f) = code else {
        return Vec::new();
    };
    let Ok(old) = std::fs::read_to_string(dir.join(&f.name)) else {
        return Vec::new();
    };
    report::constant_changes(&old, &f.text)
}

// ----------------------------------------------------------------- progress

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

#[cfg(test)]
mod tests {
    use super::*;

    /// A link planted at the temporary name is not followed: the create
    /// fails and the link's target keeps its content.
    #[cfg(unix)]
    #[test]
    fn exclusive_create_does_not_follow_a_planted_link() {
        let dir = tempfile::tempdir().expect("temp dir");
        let victim = dir.path().join("victim");
        std::fs::write(&victim, "untouched").expect("write");
        let tmp = dir.path().join(".plan.json.1-0-0.pwmplan-tmp");
        std::os::unix::fs::symlink(&victim, &tmp).expect("link");
        let e = create_exclusive(&tmp, b"payload").expect_err("must not open");
        assert_eq!(e.kind(), std::io::ErrorKind::AlreadyExists);
        assert_eq!(std::fs::read_to_string(&victim).expect("read"), "untouched");
        // A fresh name is used instead.
        let made = write_temp(&dir.path().join("plan.json"), b"payload").expect("temp");
        assert_ne!(made, tmp);
        assert_eq!(std::fs::read(&made).expect("read"), b"payload");
    }

    /// Each temporary name is new, even within one process.
    #[test]
    fn temporary_names_differ() {
        let dir = tempfile::tempdir().expect("temp dir");
        let p = dir.path().join("x.h");
        let a = write_temp(&p, b"a").expect("a");
        let b = write_temp(&p, b"b").expect("b");
        assert_ne!(a, b);
        assert!(a.to_string_lossy().ends_with(TEMP_SUFFIX));
    }
}
