//! Input: from text to a checked [`design::Design`].
//!
//! Owns the file formats ([`spec`], with [`units`] for quantities), reading
//! files from disk or the [`bundled`] set ([`load`]), field positions in YAML
//! ([`locate`]), the error display ([`diagnostic`]) and every cross-field
//! check ([`design`]). This is the only stage that reads input files.
//!
//! Must never: compute physics beyond what a check needs, choose a setting,
//! render an output or write a file. It depends on nothing above it except
//! the motor parameter types the three-phase checks build.

pub mod bundled;
pub mod design;
pub mod diagnostic;
pub mod load;
pub mod locate;
pub mod spec;
pub mod units;
