//! The power-stage and motor physics, pure: no I/O, no printing.
//!
//! Owns, a model per file: the gate-charge switching transitions
//! ([`switching`]), the loss terms of each device ([`losses`]), junction
//! temperature with runaway detection and transient impedance ([`thermal`]),
//! dead-time need ([`deadtime`]), the mean leg voltage under dead time and
//! drops ([`leg_voltage`]), bootstrap sizing ([`bootstrap`]), rating
//! findings ([`ratings`]), the load line over the speed range
//! ([`load_line`]), the motor current waveform under PWM ([`ripple`])
//! and its audible spectrum ([`acoustics`]). Inputs are the plain SI structs
//! of [`params`]; load currents arrive precomputed from [`ripple`].
//!
//! Units are SI throughout (V, A, s, Hz, F, C, J, W, Ω, K/W); temperatures
//! are °C. Every formula carries its published source beside it;
//! `(from memory)` marks a formula recalled rather than read in the source,
//! `common practice` a trade figure without a published source.

pub mod acoustics;
pub mod bootstrap;
pub mod capacitance;
pub mod commutation;
pub mod current_limit;
pub mod current_loop;
pub mod dead_time_diode;
pub mod deadtime;
pub mod edge_interpolation;
pub mod forward;
pub mod leg_voltage;
pub mod load_line;
pub mod losses;
pub mod params;
pub mod ratings;
pub mod recovery;
pub mod ripple;
pub mod sampled_plant;
pub mod sampling;
pub mod switching;
pub mod thermal;
pub mod three_phase;
