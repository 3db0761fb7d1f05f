//! What the register checks share ([`crate::model::register_check`] and
//! [`crate::model::register_six_step`]): the agreement they hold the plan to, the finer timer
//! the case claims are checked on, and the measures of a recorded three-phase current (each
//! PWM period's mean, the carrier groups of its spectrum, the lowest significant one).
//!
//! **Invariant:** pure; no I/O.

use crate::model::evaluate::ThreePhaseCase;
use crate::output::plan::{CaseCheck, CaseOut, RegisterCheck, ThreePhaseOut};
use std::f64::consts::PI;

/// A three-phase plan's cases each with its own record, matched by name in the plan's case
/// list: the rated and highest-supply cases and the operating range's points. A name missing
/// from the list is reported under `not_checked`.
pub fn three_phase_cases<'a>(
    t: &'a ThreePhaseOut,
    cases: &'a [CaseOut],
    out: &mut RegisterCheck,
) -> Vec<(&'a ThreePhaseCase, &'a CaseOut)> {
    let named = [("rated", &t.rated), ("high-bus", &t.high_bus)]
        .into_iter()
        .chain(t.range_cases.iter().map(|r| (r.name.as_str(), &r.case)));
    let mut found = Vec::new();
    for (name, tpc) in named {
        match cases.iter().find(|c| c.name == name) {
            Some(case) => found.push((tpc, case)),
            None => out
                .not_checked
                .push(format!("{name} case: not in the plan's case list")),
        }
    }
    found
}

/// Agreement required between the plan and the verifier (bounds of our own choice).
pub struct Tolerances {
    /// Mean current, as a fraction of the case's load current.
    pub mean_current_rel: f64,
    /// Mean current, absolute floor, A.
    pub mean_current_abs_a: f64,
    /// Ripple peak to peak, as a fraction of the plan's figure.
    pub ripple_rel: f64,
    /// Ripple peak to peak, absolute floor, A.
    pub ripple_abs_a: f64,
    /// Pulse times are compared with this much rounding slack, s.
    pub time_abs_s: f64,
}

/// The tolerances `plan` holds the model to.
pub const TOLERANCES: Tolerances = Tolerances {
    mean_current_rel: 0.01,
    mean_current_abs_a: 1e-4,
    ripple_rel: 0.01,
    ripple_abs_a: 1e-3,
    time_abs_s: 1e-12,
};

/// A line counts when within this many dB of the strongest and above the floor (the plan's
/// own definition of a significant line, stated in the README).
pub const SIGNIFICANT_REL_DB: f64 = 60.0;
pub const SIGNIFICANT_FLOOR_A_RMS: f64 = 1e-3;
/// Lines this close to the significance threshold are not compared: either verdict is right
/// within the two methods' rounding (a bound of our own choice).
pub const SIGNIFICANCE_GUARD_DB: f64 = 0.5;
/// Hearing limit when the design gives none (the plan's default, README).
pub const DEFAULT_HEARING_LIMIT_HZ: f64 = 20_000.0;

/// Sub-ticks per tick of the finer timer the case claims are checked on (our own choice: one
/// compare step becomes 1/4096 of a count, far below any tolerance here).
pub const SUB_TICKS: u64 = 4096;

/// The RMS of phase A's current in each carrier group m = 1..=`groups`: the lines
/// m·f_sw + b·f_e, |b| ≤ [`SIDEBANDS`] and |b·f_e| < f_sw/2, the sidebands the plan lumps
/// on m·f_sw (`phase_ripple::sinusoidal_ripple`). The record holds `n` PWM periods over
/// `cycles` electrical periods and is periodic (the verifier's steady state), so its lines
/// lie at multiples of 1/T, T the record: m·f_sw at bin m·n and its sidebands at
/// m·n + b·cycles (a waveform of the carrier's and the fundamental's phases has lines only
/// at their integer combinations; Holmes, Lipo, *Pulse Width Modulation for Power
/// Converters*, 2003, ch. 3, from memory). Each coefficient is the Fourier integral of the
/// current taken piecewise linear between the recorded leg-state changes (closed form per
/// piece, [`add_piece`]); the pieces are far shorter than τ = L/R, so the exponential arcs
/// are nearly straight.
pub fn carrier_groups_rms_a(
    boundaries: &[(f64, [f64; 3])],
    n: u64,
    cycles: u64,
    groups: u64,
) -> Vec<f64> {
    let (Some(first), Some(last)) = (boundaries.first(), boundaries.last()) else {
        return Vec::new();
    };
    let record_s = last.0 - first.0;
    if record_s.is_nan() || record_s <= 0.0 || n == 0 || cycles == 0 {
        return Vec::new();
    }
    let reach = ((n.saturating_sub(1) / 2) / cycles).min(SIDEBANDS);
    (1..=groups)
        .map(|m| {
            let lowest_bin = m * n - reach * cycles;
            let bins: Vec<f64> = (0..=2 * reach)
                .map(|i| (lowest_bin + i * cycles) as f64)
                .collect();
            let power: f64 = bin_coefficients(boundaries, record_s, &bins, cycles as f64)
                .iter()
                .map(|(re, im)| 2.0 * (re * re + im * im))
                .sum();
            power.sqrt()
        })
        .collect()
}

/// Sidebands counted each side of a carrier harmonic, in multiples of the electrical
/// frequency (our own bound: the modulation's sidebands fall off as Bessel functions of
/// the modulation index within a few multiples, Holmes, Lipo 2003, ch. 3, from memory, and
/// the dead time's distortion adds the odd harmonics of the fundamental. Measured on the
/// 150 random three-phase designs of `tests/register_verifier.rs` against every sideband
/// up to half the carrier: at most 0.15 % of a group's power lies beyond, in groups of
/// 1 mA rms or more).
const SIDEBANDS: u64 = 64;

/// The complex Fourier coefficients (1/T)∫i(t)e^(−j2πkt/T)dt of phase A's current over
/// the record for the evenly spaced `bins` (`spacing` apart, in bins): e^(−jω_k·t) at each
/// recorded time from the lowest bin's by repeated rotation (one sine and cosine pair per
/// time and spacing, not per bin).
fn bin_coefficients(
    boundaries: &[(f64, [f64; 3])],
    record_s: f64,
    bins: &[f64],
    spacing: f64,
) -> Vec<(f64, f64)> {
    let t0 = boundaries[0].0;
    let omega = |k: f64| 2.0 * PI * k / record_s;
    let phasors = |t: f64| -> Vec<(f64, f64)> {
        let (s, c) = (omega(bins[0]) * t).sin_cos();
        let (ss, cs) = (omega(spacing) * t).sin_cos();
        let (mut re, mut im) = (c, -s);
        bins.iter()
            .map(|_| {
                let here = (re, im);
                // Multiply by e^(−j·ω_spacing·t) = cs − j·ss.
                (re, im) = (re * cs + im * ss, im * cs - re * ss);
                here
            })
            .collect()
    };
    let mut sums = vec![(0.0, 0.0); bins.len()];
    let mut before = (0.0, boundaries[0].1[0], phasors(0.0));
    for b in &boundaries[1..] {
        let (t, i) = (b.0 - t0, b.1[0]);
        let now = phasors(t);
        if t > before.0 {
            let slope = (i - before.1) / (t - before.0);
            for (k, sum) in sums.iter_mut().enumerate() {
                add_piece(
                    sum,
                    omega(bins[k]),
                    (before.1, before.2[k]),
                    (i, now[k]),
                    slope,
                );
            }
        }
        before = (t, i, now);
    }
    sums.iter()
        .map(|(re, im)| (re / record_s, im / record_s))
        .collect()
}

/// One straight piece of the current, from `a` to `b` (each its current and e^(−jωt)),
/// added to the integral ∫i(t)e^(−jωt)dt: j(i_b·e_b − i_a·e_a)/ω + s·(e_b − e_a)/ω²
/// (integration by parts of (i_a + s·τ)·e^(−jωt)).
fn add_piece(
    sum: &mut (f64, f64),
    w: f64,
    (i_a, e_a): (f64, (f64, f64)),
    (i_b, e_b): (f64, (f64, f64)),
    slope: f64,
) {
    let (x, y) = (i_b * e_b.0 - i_a * e_a.0, i_b * e_b.1 - i_a * e_a.1);
    // j·(x + jy) = −y + jx.
    sum.0 += -y / w + slope * (e_b.0 - e_a.0) / (w * w);
    sum.1 += x / w + slope * (e_b.1 - e_a.1) / (w * w);
}

/// The lowest significant carrier group (its frequency m·f_sw) and whether one lies within
/// `guard_db` ([`SIGNIFICANCE_GUARD_DB`] for a like-for-like record) of the significance floor: the floor is the plan's, relative
/// to the strongest group at or below the hearing limit ([`SIGNIFICANT_REL_DB`], not below
/// [`SIGNIFICANT_FLOOR_A_RMS`]), as `acoustics::significant_lines` takes it over the
/// three-phase plan's lines.
pub fn lowest_significant_group(rms_a: &[f64], f_sw_hz: f64, guard_db: f64) -> (Option<f64>, bool) {
    let strongest = rms_a.iter().copied().fold(0.0, f64::max);
    let floor = (strongest * 10f64.powf(-SIGNIFICANT_REL_DB / 20.0)).max(SIGNIFICANT_FLOOR_A_RMS);
    let guard = 10f64.powf(guard_db / 20.0);
    let lowest = rms_a
        .iter()
        .position(|&a| a > 0.0 && a >= floor)
        .map(|i| (i + 1) as f64 * f_sw_hz);
    let near = rms_a
        .iter()
        .any(|&a| a > floor / guard && a < floor * guard);
    (lowest, near)
}

/// Each PWM period's mean of the three phase currents, A: the trapezoid rule over the
/// currents at the leg-state changes (the current between two changes is an exponential
/// arc with τ = L/R far longer than the interval, so nearly straight; a window is counted in
/// the period holding its middle).
pub fn period_means_a(
    boundaries: &[(f64, [f64; 3])],
    period_s: f64,
    periods: usize,
) -> Vec<[f64; 3]> {
    let mut means = vec![[0.0; 3]; periods];
    for w in boundaries.windows(2) {
        let ((t0, i0), (t1, i1)) = (w[0], w[1]);
        let k = (0.5 * (t0 + t1) / period_s).floor();
        if k >= 0.0 && (k as usize) < periods {
            for p in 0..3 {
                means[k as usize][p] += 0.5 * (i0[p] + i1[p]) * (t1 - t0) / period_s;
            }
        }
    }
    means
}

/// Whether the registers' lowest significant audible line is the plan's (or either verdict
/// is right within the significance guard).
pub fn same_line(c: &CaseCheck, case: &CaseOut) -> bool {
    c.line_near_threshold
        || match (c.lowest_audible_line_hz, case.lowest_audible_line_hz) {
            (Some(a), Some(b)) => (a - b).abs() <= 1e-6 * b.abs().max(1.0),
            (None, None) => true,
            _ => false,
        }
}

/// What disagrees when the registers' lowest significant audible line is not the plan's.
pub fn line_disagreement(c: &CaseCheck, case: &CaseOut, what: &str) -> Option<String> {
    let text = |l: Option<f64>| l.map_or("none".to_string(), |f| format!("{f:.6e} Hz"));
    (!same_line(c, case)).then(|| {
        format!(
            "{} case: the lowest significant audible {what} is {} on the registers, {} in the plan",
            case.name,
            text(c.lowest_audible_line_hz),
            text(case.lowest_audible_line_hz)
        )
    })
}
