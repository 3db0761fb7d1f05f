//! The loss-versus-frequency review: the realisable setting nearest each
//! requested frequency, evaluated like the solver does, one row each.
//!
//! **Invariant:** pure; the rows are the same numbers `plan --at` gives at
//! the same frequency (both go through [`crate::model::solve::evaluate_at`]).

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::model::evaluate::{Evaluator, LossFigures};
use crate::model::range::{RangeResult, junction_key};
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
    /// Over the design's operating range (absent without one).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub range: Option<SweepRange>,
}

/// A sweep row's figures over the operating range.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SweepRange {
    /// The largest ripple peak to peak anywhere in the range.
    pub ripple_pp_max_a: Option<f64>,
    /// The least and largest stage loss over the judged speeds at the
    /// nominal supply.
    pub loss_min_w: f64,
    pub loss_max_w: f64,
    /// The hottest junction over the judged speeds; `None` on runaway.
    pub junction_max_c: Option<f64>,
}

/// The range figures of a candidate judged over more than one speed.
fn range_of(c: &Candidate) -> Option<SweepRange> {
    let r = c.range.as_ref()?;
    let losses = r.corners_nominal.iter().map(|(_, k)| k.losses.total);
    let loss_min_w = losses.clone().fold(f64::INFINITY, f64::min);
    let loss_max_w = losses.fold(f64::NEG_INFINITY, f64::max);
    let hottest = RangeResult::hottest(r.cases()).map(|(_, k)| junction_key(k));
    Some(SweepRange {
        ripple_pp_max_a: r.ripple.map(|e| e.value),
        loss_min_w,
        loss_max_w,
        junction_max_c: hottest.filter(|t| t.is_finite()),
    })
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
        range: range_of(c),
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
