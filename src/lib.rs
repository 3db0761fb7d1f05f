//! pwmplan: choose PWM frequency, timer prescaler and period, and dead time
//! for a DC motor drive from its power-stage physics, and emit the settings
//! as C and Rust with the reasons.
//!
//! The flow runs one way, a folder per stage: [`input`] reads and checks the
//! files → [`model`] (pure physics, timer, search, verifier) → [`output`]
//! (records and files as data) → [`commands`] (the only code that prints or
//! writes). See DEVELOPERS.md for the map.

pub mod commands;
pub mod input;
pub mod model;
pub mod output;

// The modules were once side by side at the top; these keep the old paths
// (`pwmplan::design::...`) working for tests, benches and examples. Code
// inside the crate uses the stage paths.
pub use commands as cli;
pub use input::{bundled, design, diagnostic, load, locate, spec, units};
pub use model::{physics, register_check, solve, spread, sweep, timer, verify};
pub use output::{emit, html, plan, report, svg};
