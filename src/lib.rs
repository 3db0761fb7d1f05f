//! pwmplan: choose PWM frequency, timer prescaler and period, and dead time
//! for a DC motor drive from its power-stage physics, and emit the settings
//! as C and Rust with the reasons.
//!
//! The flow runs one way, a folder per stage: [`input`] reads and checks the
//! files → [`model`] (pure physics, timer, search, verifier) → [`output`]
//! (records and files as data) → [`commands`] (the only code that prints or
//! writes). See DEVELOPERS.md for the map.
//!
//! **The stable library surface is [`firmware`]** (re-exported here:
//! [`plan_file`], [`write_rust_module`], [`PlannedDrive`], [`PlanError`],
//! [`OutputFile`]): what a firmware crate's build script calls. The stage
//! modules are public for the command, the project's tests and benches
//! only; they are hidden from the documentation and may change.

#[doc(hidden)]
pub mod commands;
pub mod firmware;
#[doc(hidden)]
pub mod input;
#[doc(hidden)]
pub mod model;
#[doc(hidden)]
pub mod output;

pub use firmware::{OutputFile, PlanError, PlannedDrive, includable, plan_file, write_rust_module};

// The modules were once side by side at the top; these keep the old paths
// (`pwmplan::design::...`) working for tests, benches and examples. Code
// inside the crate uses the stage paths.
#[doc(hidden)]
pub use commands as cli;
#[doc(hidden)]
pub use input::{bundled, design, diagnostic, load, locate, spec, units};
#[doc(hidden)]
pub use model::{
    physics, register_basis, register_check, register_six_step, solve, spread, sweep, timer, verify,
};
#[doc(hidden)]
pub use output::{emit, html, plan, report, svg};
