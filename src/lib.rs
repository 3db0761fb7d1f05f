//! pwmplan: choose PWM frequency, timer prescaler and period, and dead time
//! for a DC motor drive from its power-stage physics, and emit the settings
//! as C and Rust with the reasons.
//!
//! The flow runs one way: [`load`] reads files → [`design`] validates →
//! the pure model ([`physics`], [`timer`]) → rendering → atomic writes in the
//! binary's [`cli`]. See DEVELOPERS.md for the map.

pub mod bundled;
pub mod cli;
pub mod design;
pub mod diagnostic;
pub mod emit;
pub mod html;
pub mod load;
pub mod locate;
pub mod model;
pub mod physics;
pub mod plan;
pub mod register_check;
pub mod report;
pub mod solve;
pub mod spec;
pub mod spread;
pub mod svg;
pub mod sweep;
pub mod timer;
pub mod units;
pub mod verify;
