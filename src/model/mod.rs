//! Model: the pure engineering of a checked design.
//!
//! Owns the power-stage physics ([`physics`]), the timer's arithmetic
//! ([`timer`]), the evaluator that turns a `Design` into operating cases and
//! evaluates one case at one setting ([`evaluate`]), a setting over the
//! design's operating range ([`range`]), the search ([`solve`]),
//! part spreads and the Monte Carlo ([`spread`]), the frequency sweep
//! ([`sweep`]), the register-level verifier ([`verify`]) and the comparison
//! of its figures with a plan's claims ([`register_check`]).
//!
//! Must never: read a file, write a file or print. The search and the
//! Monte Carlo format no words (details are data, formatted when shown).

pub mod current_limit;
pub mod current_loop;
pub mod evaluate;
pub mod physics;
pub mod range;
pub mod register_basis;
pub mod register_check;
pub mod register_sampling;
pub mod register_six_step;
pub mod solve;
pub mod spread;
pub mod sweep;
pub mod timer;
pub mod verify;
pub mod verify_limit;

// The evaluator was the top-level `model` module; its public names stay
// reachable as `pwmplan::model::...`.
pub use evaluate::*;
