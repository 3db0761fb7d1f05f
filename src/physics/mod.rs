//! The power-stage and motor physics, pure: no I/O, no printing.
//!
//! Owns: the motor current waveform under PWM ([`ripple`]) and its audible
//! spectrum ([`acoustics`]); the switching, loss, thermal, dead-time,
//! bootstrap and rating models follow in their own files.
//!
//! Units are SI throughout (V, A, s, Hz, F, C, J, W, Ω, K/W); temperatures
//! are °C. Every formula carries its published source beside it;
//! `(from memory)` marks a formula recalled rather than read in the source,
//! `common practice` a trade figure without a published source.

pub mod acoustics;
pub mod ripple;
