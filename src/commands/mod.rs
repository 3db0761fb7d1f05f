//! The command line: arguments, dispatch, messages and exit statuses.
//!
//! **Invariant:** the only place that prints or writes output files; every
//! error reaches the user as one message and exit status 2 (bad input) or 1
//! (infeasible / out of date), never as a panic.
//!
//! A file per command (`plan`, `check`, `sweep`, `compare`, `spread`, `new`,
//! `boards`, `explain`, `schema`; `completions` and `manual` in `shell`); the shared parts: arguments ([`args`]), failures
//! ([`failure`]), solving a design ([`solved`]) and the output folder's
//! writes and lock ([`files`]). This file only dispatches.

#[cfg(feature = "cli")]
pub mod args;
#[cfg(feature = "cli")]
pub mod boards;
#[cfg(feature = "cli")]
pub mod check;
#[cfg(feature = "cli")]
pub mod compare;
#[cfg(feature = "cli")]
pub mod explain;
pub mod failure;
// Without the command line the build API uses only the atomic write.
#[cfg_attr(not(feature = "cli"), allow(dead_code))]
pub mod files;
#[cfg(feature = "cli")]
pub mod new;
#[cfg(feature = "cli")]
pub mod plan;
#[cfg(feature = "cli")]
pub mod schema;
#[cfg(feature = "cli")]
pub mod shell;
#[cfg_attr(not(feature = "cli"), allow(dead_code))]
pub mod solved;
#[cfg(feature = "cli")]
pub mod spread;
#[cfg(feature = "cli")]
pub mod sweep;

#[cfg(feature = "cli")]
mod entry;

#[cfg(feature = "cli")]
pub use args::{Args, Command};
#[cfg(feature = "cli")]
pub use entry::{main, run};
pub use failure::Failure;
pub use files::{LOCK_FILE, TEMP_SUFFIX, write_atomically};
#[cfg(feature = "cli")]
pub use new::StarterTopology;
pub use solved::{Solved, generate_files, solve_design};
#[cfg(feature = "cli")]
pub use spread::ProgressDisplay;
