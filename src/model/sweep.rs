//! The loss-versus-frequency review: the realisable setting nearest each
//! requested frequency, evaluated like the solver does, one row each.
//!
//! **Invariant:** pure; the rows are the same numbers `plan --at` gives at
//! the same frequency (both go through [`crate::model::solve::evaluate_at`]).

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::model::evaluate::{Evaluator, LossFigures};
use crate::model::solve::{self, Candidate};

/// One row of the sweep.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SweepRow {
    /// The frequency asked for.
    pub requested_hz: f64,
    /// The realised frequency of the nearest setting.
    pub frequency_hz: f64,
    pub alignment: String,
    pub divider: u64,
    pub period_ticks: u64,
    pub resolution_bits: f64,
    /// Whole stage at the rated case, W.
    pub losses_w: LossFigures,
    /// Hottest junction at the rated case; `None` on runaway.
    pub junction_c: Option<f64>,
    /// Hottest junction at the highest supply.
    pub junction_high_bus_c: Option<f64>,
    /// Worst ripple peak to peak of the rated and high-bus cases.
    pub ripple_pp_a: f64,
    pub lowest_audible_line_hz: Option<f64>,
    pub a_weighted_db: Option<f64>,
    /// Names of the constraints that fail here.
    pub failing: Vec<String>,
    pub feasible: bool,
    /// This row's setting is the one the solver chose.
    pub chosen: bool,
}

/// Log-spaced frequencies from `from` to `to`, `points` of them (≥ 2).
pub fn log_space(from_hz: f64, to_hz: f64, points: usize) -> Vec<f64> {
    let n = points.max(2);
    let (a, b) = (from_hz.ln(), to_hz.ln());
    (0..n)
        .map(|k| match k {
            // The ends exactly as asked (exp(ln x) can miss x by an ulp).
            0 => from_hz,
            k if k == n - 1 => to_hz,
            k => (a + (b - a) * k as f64 / (n - 1) as f64).exp(),
        })
        .collect()
}

/// A row from an evaluated candidate.
pub fn row(requested_hz: f64, c: &Candidate, chosen_hz: Option<f64>) -> SweepRow {
    SweepRow {
        requested_hz,
        frequency_hz: c.setting.frequency_hz,
        alignment: c.setting.alignment.to_string(),
        divider: c.setting.divider,
        period_ticks: c.setting.period_ticks,
        resolution_bits: c.setting.resolution_bits,
        losses_w: c.rated.losses.clone(),
        junction_c: c.rated.junction_c,
        junction_high_bus_c: c.high_bus.junction_c,
        ripple_pp_a: c
            .rated
            .ripple
            .peak_to_peak_a
            .max(c.high_bus.ripple.peak_to_peak_a),
        lowest_audible_line_hz: c.rated.acoustic.lowest_audible_line_hz,
        a_weighted_db: c.rated.acoustic.a_weighted_db,
        failing: c
            .checks
            .iter()
            .filter(|k| !k.pass)
            .map(|k| k.name.to_string())
            .collect(),
        feasible: c.feasible,
        chosen: chosen_hz == Some(c.setting.frequency_hz),
    }
}

/// Evaluate the realisable setting nearest each frequency. Frequencies
/// that map to the same setting give one row (the first asked).
pub fn sweep(ev: &Evaluator, frequencies_hz: &[f64], chosen_hz: Option<f64>) -> Vec<SweepRow> {
    let mut rows: Vec<SweepRow> = Vec::new();
    // The chosen setting gets its own row, in frequency order.
    let mut asked: Vec<f64> = frequencies_hz.to_vec();
    if let Some(c) = chosen_hz {
        asked.push(c);
        asked.sort_by(f64::total_cmp);
    }
    // Each frequency is independent: evaluate them on every core.
    let evaluated: Vec<Option<SweepRow>> = asked
        .par_iter()
        .map(|&f| solve::evaluate_at(ev, f).map(|c| row(f, &c, chosen_hz)))
        .collect();
    for r in evaluated.into_iter().flatten() {
        if rows
            .last()
            .is_none_or(|p| p.frequency_hz != r.frequency_hz || p.alignment != r.alignment)
        {
            rows.push(r);
        }
    }
    rows
}
