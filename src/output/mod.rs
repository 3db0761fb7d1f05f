//! Output: a solution turned into records and files, as data.
//!
//! Owns the [`plan`] record, the template context ([`context`]) and
//! rendering ([`emit`]), sealing files with their hash ([`seal`]),
//! the operating range's worst points ([`range_out`]), the current sampling
//! and loop ([`loop_out`]), the terminal report ([`report`]), the plots ([`svg`], laid out by [`legend`]) and the report page
//! ([`html`]). Every function returns text or bytes; the commands write them.
//!
//! Must never: compute physics or search settings (numbers arrive from the
//! model and are only formatted here), read input files, or write a file.

pub mod back_emf_out;
pub mod context;
pub mod emit;
pub mod explain;
pub mod html;
pub mod legend;
pub mod limit;
pub mod loop_out;
pub mod pieces;
pub mod plan;
pub mod range_out;
pub mod report;
pub mod seal;
pub mod svg;
