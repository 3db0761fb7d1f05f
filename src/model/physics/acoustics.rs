//! Audible noise of the motor current ripple: Fourier lines, A-weighting, hearing threshold and
//! the audibility verdict per user mode.
//!
//! Owns: the closed-form spectrum of a `RippleWaveform` (no FFT: each exponential segment is
//! integrated against e^(−jωt) analytically, so the cost is O(lines × segments)), the IEC 61672-1
//! A-weighting, the threshold-of-hearing table, the "significant line" rule and the verdict.
//! It does not own the waveform itself (see `ripple`) nor any current-to-sound transfer: what is
//! heard is driven by the current spectrum (magnetostriction, winding forces), but the sound
//! pressure per ampere is motor-specific and not modelled, so levels are relative, in dB re 1 A.

use super::ripple::{RippleWaveform, Segment};
use std::f64::consts::{PI, SQRT_2};
use std::fmt;

/// Upper limit of hearing used when the user gives none, Hz (common practice; falls with age).
pub const DEFAULT_HEARING_LIMIT_HZ: f64 = 20_000.0;
/// Default cap on the number of harmonics computed per spectrum (performance guard).
pub const DEFAULT_MAX_LINES: usize = 4096;

/// A complex number, used for Fourier coefficients.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Phasor {
    pub re: f64,
    pub im: f64,
}

impl Phasor {
    const ZERO: Phasor = Phasor { re: 0.0, im: 0.0 };

    /// Modulus |z|.
    pub fn abs(&self) -> f64 {
        self.re.hypot(self.im)
    }
    fn add(self, o: Phasor) -> Phasor {
        Phasor {
            re: self.re + o.re,
            im: self.im + o.im,
        }
    }
    fn mul(self, o: Phasor) -> Phasor {
        Phasor {
            re: self.re * o.re - self.im * o.im,
            im: self.re * o.im + self.im * o.re,
        }
    }
    fn scale(self, k: f64) -> Phasor {
        Phasor {
            re: self.re * k,
            im: self.im * k,
        }
    }
    /// Division; callers guarantee a non-zero divisor (it always has a non-zero imaginary part ω).
    fn div(self, o: Phasor) -> Phasor {
        let den = o.re * o.re + o.im * o.im;
        Phasor {
            re: (self.re * o.re + self.im * o.im) / den,
            im: (self.im * o.re - self.re * o.im) / den,
        }
    }
    /// e^(−σ)·e^(−jθ).
    fn decay_rot(sigma: f64, theta: f64) -> Phasor {
        let m = (-sigma).exp();
        let (s, c) = theta.sin_cos();
        Phasor {
            re: m * c,
            im: -m * s,
        }
    }
}

/// `∫₀ᵈ e^(−p·s) ds = (1 − e^(−p·d))/p` with p = σ' + jω (σ' = 1/τ or 0), closed form.
fn exp_integral(inv_tau: f64, omega: f64, d: f64) -> Phasor {
    let p = Phasor {
        re: inv_tau,
        im: omega,
    };
    let one_minus =
        Phasor { re: 1.0, im: 0.0 }.add(Phasor::decay_rot(inv_tau * d, omega * d).scale(-1.0));
    one_minus.div(p)
}

/// Complex Fourier coefficient `c_n = (1/T)∫₀ᵀ i(t)·e^(−j n ω₀ t) dt`, ω₀ = 2π/T, T = `period_s`.
///
/// Per exponential segment starting at t_s with `i(s) = a + (i₀ − a)e^(−s/τ)`:
/// `e^(−jωt_s)·[a·(1 − e^(−jωd))/(jω) + (i₀ − a)·(1 − e^(−(1/τ + jω)d))/(1/τ + jω)]`
/// (closed form; Kreyszig, *Advanced Engineering Mathematics*, Fourier series chapter, for the
/// complex coefficient definition, from memory). Zero segments contribute nothing. `n = 0` gives
/// the mean.
pub fn fourier_coefficient(w: &RippleWaveform, n: u32) -> Phasor {
    let t_period = w.period_s();
    if n == 0 {
        return Phasor {
            re: w.i_avg_a(),
            im: 0.0,
        };
    }
    let omega = 2.0 * PI * f64::from(n) / t_period;
    let mut acc = Phasor::ZERO;
    let mut t_start = 0.0;
    for seg in w.segments() {
        if let Segment::Exponential {
            duration_s,
            i_start_a,
            i_inf_a,
            tau_s,
        } = *seg
        {
            let steady = exp_integral(0.0, omega, duration_s).scale(i_inf_a);
            let transient = exp_integral(1.0 / tau_s, omega, duration_s).scale(i_start_a - i_inf_a);
            let shift = Phasor::decay_rot(0.0, omega * t_start);
            acc = acc.add(shift.mul(steady.add(transient)));
        }
        t_start += seg.duration_s();
    }
    acc.scale(1.0 / t_period)
}

/// One spectral line of the current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Line {
    /// Harmonic number of the waveform's fundamental 1/`period_s`.
    pub harmonic: u32,
    pub f_hz: f64,
    /// Peak amplitude of the sinusoid at `f_hz`: 2·|c_n|, A.
    pub amplitude_a: f64,
}

impl Line {
    /// RMS value of the line, `amplitude/√2`, A.
    pub fn amplitude_rms_a(&self) -> f64 {
        self.amplitude_a / SQRT_2
    }
    /// Line level in dB re 1 A rms: `20·log10(a_rms / 1 A)`; None for a zero line.
    pub fn level_db_re_1a(&self) -> Option<f64> {
        let a = self.amplitude_rms_a();
        (a > 0.0).then(|| 20.0 * a.log10())
    }
}

/// Lines n = 1, 2, … of the waveform's fundamental (1/`period_s`: f, or 2f for the unipolar
/// bridge) up to `max_hz` inclusive (may be +∞) and at most `max_lines` of them.
/// Amplitudes 2|c_n| (peak). Cost O(lines × segments).
pub fn spectrum(w: &RippleWaveform, max_hz: f64, max_lines: usize) -> Vec<Line> {
    let f0 = 1.0 / w.period_s();
    // NaN or below the fundamental: no line. +∞ is allowed (then only `max_lines` caps).
    if max_hz.is_nan() || max_hz < f0 {
        return Vec::new();
    }
    // Small tolerance so a line sitting exactly on max_hz is kept despite rounding.
    let n_max = ((max_hz / f0) * (1.0 + 1e-12))
        .floor()
        .min(max_lines as f64)
        .min(f64::from(u32::MAX));
    let n_max = n_max as u32;
    (1..=n_max)
        .map(|n| Line {
            harmonic: n,
            f_hz: f64::from(n) * f0,
            amplitude_a: 2.0 * fourier_coefficient(w, n).abs(),
        })
        .collect()
}

/// A-weighting in dB, IEC 61672-1:2013 Annex E:
/// `R_A(f) = f4²·f⁴ / [(f² + f1²)·√(f² + f2²)·√(f² + f3²)·(f² + f4²)]`,
/// `A(f) = 20·log10 R_A(f) + 2.000 dB`, f1 = 20.598997, f2 = 107.65265, f3 = 737.86223,
/// f4 = 12194.217 Hz. None for f ≤ 0 or non-finite f (the weighting is −∞ at DC).
pub fn a_weighting_db(f_hz: f64) -> Option<f64> {
    if !(f_hz.is_finite() && f_hz > 0.0) {
        return None;
    }
    const F1: f64 = 20.598997;
    const F2: f64 = 107.65265;
    const F3: f64 = 737.86223;
    const F4: f64 = 12194.217;
    let f2 = f_hz * f_hz;
    let num = F4 * F4 * f2 * f2;
    let den = (f2 + F1 * F1) * ((f2 + F2 * F2) * (f2 + F3 * F3)).sqrt() * (f2 + F4 * F4);
    let r_a = num / den;
    (r_a > 0.0).then(|| 20.0 * r_a.log10() + 2.0)
}

/// Threshold of hearing (free field, binaural, otologically normal young adults), dB SPL.
/// 20 Hz–12.5 kHz: ISO 226:2003, threshold of hearing (8, 10 and 12.5 kHz: 12.6, 13.9,
/// 12.3 dB; the values below 8 kHz from memory); 14, 16, 18 kHz: ISO 389-7:2005, free-field
/// reference threshold (18.4, 40.2, 73.2 dB).
const HEARING_THRESHOLD_TABLE: [(f64, f64); 32] = [
    (20.0, 78.5),
    (25.0, 68.7),
    (31.5, 59.5),
    (40.0, 51.1),
    (50.0, 44.0),
    (63.0, 37.5),
    (80.0, 31.5),
    (100.0, 26.5),
    (125.0, 22.1),
    (160.0, 17.9),
    (200.0, 14.4),
    (250.0, 11.4),
    (315.0, 8.6),
    (400.0, 6.2),
    (500.0, 4.4),
    (630.0, 3.0),
    (800.0, 2.2),
    (1000.0, 2.4),
    (1250.0, 3.5),
    (1600.0, 1.7),
    (2000.0, -1.3),
    (2500.0, -4.2),
    (3150.0, -6.0),
    (4000.0, -5.4),
    (5000.0, -1.5),
    (6300.0, 6.0),
    (8000.0, 12.6),
    (10000.0, 13.9),
    (12500.0, 12.3),
    (14000.0, 18.4),
    (16000.0, 40.2),
    (18000.0, 73.2),
];

/// Threshold of hearing at `f_hz`, dB SPL, interpolated linearly in log-frequency between the
/// table points (`HEARING_THRESHOLD_TABLE`: ISO 226:2003 / ISO 389-7:2005, see there for which
/// values are from memory). None outside 20 Hz–18 kHz (no extrapolation). Informative only: the
/// verdict cannot use it without a motor-specific current-to-SPL transfer.
pub fn hearing_threshold_db_spl(f_hz: f64) -> Option<f64> {
    let t = &HEARING_THRESHOLD_TABLE;
    let (f_lo, _) = t[0];
    let (f_hi, _) = t[t.len() - 1];
    if !(f_hz.is_finite() && (f_lo..=f_hi).contains(&f_hz)) {
        return None;
    }
    t.windows(2).find_map(|p| {
        let ((fa, la), (fb, lb)) = (p[0], p[1]);
        (f_hz >= fa && f_hz <= fb).then(|| {
            let u = (f_hz / fa).ln() / (fb / fa).ln();
            la + u * (lb - la)
        })
    })
}

/// Which lines count. A line is *significant* when its rms amplitude is at least
/// `abs_floor_a_rms` AND within `rel_to_strongest_db` of the strongest computed line.
/// Defaults 1 mA rms and 60 dB: engineering choice, no published source; tune per motor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Significance {
    pub rel_to_strongest_db: f64,
    pub abs_floor_a_rms: f64,
    /// Cap on harmonics computed (performance); see `AcousticVerdict::truncated`.
    pub max_lines: usize,
}

impl Default for Significance {
    fn default() -> Self {
        Significance {
            rel_to_strongest_db: 60.0,
            abs_floor_a_rms: 1e-3,
            max_lines: DEFAULT_MAX_LINES,
        }
    }
}

/// The significant lines among `lines` (see `Significance`).
pub fn significant_lines(lines: &[Line], sig: &Significance) -> Vec<Line> {
    let strongest = lines.iter().map(Line::amplitude_rms_a).fold(0.0, f64::max);
    let rel_floor = strongest * 10f64.powf(-sig.rel_to_strongest_db / 20.0);
    let floor = rel_floor.max(sig.abs_floor_a_rms);
    lines
        .iter()
        .copied()
        .filter(|l| l.amplitude_rms_a() > 0.0 && l.amplitude_rms_a() >= floor)
        .collect()
}

/// A-weighted in-band level, dB(A) re 1 A:
/// `10·log10(Σ_{f ≤ limit} a_rms²·10^(A(f)/10))` (energetic sum of weighted lines; IEC 61672-1
/// weighting, summation common practice). None when no line with non-zero amplitude is in band.
pub fn a_weighted_level_db(lines: &[Line], hearing_limit_hz: f64) -> Option<f64> {
    let sum: f64 = lines
        .iter()
        .filter(|l| l.f_hz <= hearing_limit_hz)
        .filter_map(|l| {
            a_weighting_db(l.f_hz).map(|a| l.amplitude_rms_a().powi(2) * 10f64.powf(a / 10.0))
        })
        .sum();
    (sum > 0.0 && sum.is_finite()).then(|| 10.0 * sum.log10())
}

/// What the user asks of the noise.
#[derive(Debug, Clone, PartialEq)]
pub enum AudibleMode {
    /// No significant line at or below `hearing_limit_hz`.
    Inaudible { hearing_limit_hz: f64 },
    /// Anything goes (figures still reported against `DEFAULT_HEARING_LIMIT_HZ`).
    Allowed,
    /// No significant line inside any closed band `[lo, hi]` Hz.
    AvoidBands {
        bands: Vec<(f64, f64)>,
        hearing_limit_hz: f64,
    },
}

/// Outcome of `assess`.
#[derive(Debug, Clone, PartialEq)]
pub struct AcousticVerdict {
    /// Lowest significant line at or below the hearing limit, Hz.
    pub lowest_audible_line_hz: Option<f64>,
    /// `a_weighted_level_db` over the significant in-band lines; None when there are none.
    pub a_weighted_db: Option<f64>,
    /// Frequencies of significant lines inside avoided bands, Hz.
    pub lines_in_avoided_bands: Vec<f64>,
    /// True when `max_lines` stopped the spectrum before the highest frequency of interest.
    pub truncated: bool,
    pub pass: bool,
    pub reason: AcousticReason,
}

/// Why the verdict is what it is; worded on display only, so an
/// assessment inside a search or a Monte Carlo loop formats nothing.
#[derive(Debug, Clone, PartialEq)]
pub enum AcousticReason {
    Allowed,
    NoLineAtOrBelow { limit_hz: f64 },
    LineAtOrBelow { line_hz: f64, limit_hz: f64 },
    NoLineInAvoidedBands,
    LineInAvoidedBand { line_hz: f64 },
    Truncated { max_lines: usize, top_hz: f64 },
}

impl fmt::Display for AcousticReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            AcousticReason::Allowed => write!(f, "audible noise allowed"),
            AcousticReason::NoLineAtOrBelow { limit_hz } => {
                write!(f, "no significant line at or below {}", hz(limit_hz))
            }
            AcousticReason::LineAtOrBelow { line_hz, limit_hz } => write!(
                f,
                "significant line at {} is at or below the hearing limit {}",
                hz(line_hz),
                hz(limit_hz)
            ),
            AcousticReason::NoLineInAvoidedBands => {
                write!(f, "no significant line in the avoided bands")
            }
            AcousticReason::LineInAvoidedBand { line_hz } => write!(
                f,
                "significant line at {} lies in an avoided band",
                hz(line_hz)
            ),
            AcousticReason::Truncated { max_lines, top_hz } => write!(
                f,
                "spectrum truncated at {max_lines} lines before {top_hz:.0} Hz; raise max_lines"
            ),
        }
    }
}

impl serde::Serialize for AcousticReason {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

/// Why an assessment was refused.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AcousticError {
    InvalidInput {
        name: &'static str,
        reason: &'static str,
    },
}

impl fmt::Display for AcousticError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            AcousticError::InvalidInput { name, reason } => write!(f, "invalid {name}: {reason}"),
        }
    }
}

impl std::error::Error for AcousticError {}

fn invalid(name: &'static str, reason: &'static str) -> AcousticError {
    AcousticError::InvalidInput { name, reason }
}

fn check_limit(hearing_limit_hz: f64) -> Result<(), AcousticError> {
    if hearing_limit_hz.is_finite() && hearing_limit_hz > 0.0 {
        Ok(())
    } else {
        Err(invalid("hearing_limit_hz", "must be finite and > 0"))
    }
}

/// Hearing limit and highest frequency of interest for a mode, validated.
fn mode_limits(mode: &AudibleMode) -> Result<(f64, f64), AcousticError> {
    match mode {
        AudibleMode::Inaudible { hearing_limit_hz } => {
            check_limit(*hearing_limit_hz)?;
            Ok((*hearing_limit_hz, *hearing_limit_hz))
        }
        AudibleMode::Allowed => Ok((DEFAULT_HEARING_LIMIT_HZ, DEFAULT_HEARING_LIMIT_HZ)),
        AudibleMode::AvoidBands {
            bands,
            hearing_limit_hz,
        } => {
            check_limit(*hearing_limit_hz)?;
            let mut top = *hearing_limit_hz;
            for &(lo, hi) in bands {
                if !(lo.is_finite() && hi.is_finite() && lo >= 0.0 && lo <= hi) {
                    return Err(invalid("bands", "each band needs finite 0 <= lo <= hi"));
                }
                top = top.max(hi);
            }
            Ok((*hearing_limit_hz, top))
        }
    }
}

fn check_significance(sig: &Significance) -> Result<(), AcousticError> {
    if !(sig.rel_to_strongest_db.is_finite() && sig.rel_to_strongest_db >= 0.0) {
        return Err(invalid("rel_to_strongest_db", "must be finite and >= 0"));
    }
    if !(sig.abs_floor_a_rms.is_finite() && sig.abs_floor_a_rms >= 0.0) {
        return Err(invalid("abs_floor_a_rms", "must be finite and >= 0"));
    }
    if sig.max_lines == 0 {
        return Err(invalid("max_lines", "must be >= 1"));
    }
    Ok(())
}

/// Spectrum of the waveform up to the mode's highest frequency, then `assess_lines`.
pub fn assess(
    w: &RippleWaveform,
    mode: &AudibleMode,
    sig: &Significance,
) -> Result<AcousticVerdict, AcousticError> {
    let (_, top_hz) = mode_limits(mode)?;
    check_significance(sig)?;
    let lines = spectrum(w, top_hz, sig.max_lines);
    let truncated =
        lines.len() >= sig.max_lines && (sig.max_lines as f64 + 1.0) / w.period_s() <= top_hz;
    let mut v = assess_lines(&lines, mode, sig)?;
    if truncated {
        v.truncated = true;
        if let AudibleMode::AvoidBands { .. } = mode {
            // Unseen lines may fall in a band: refuse to pass rather than guess.
            v.pass = false;
            v.reason = AcousticReason::Truncated {
                max_lines: sig.max_lines,
                top_hz,
            };
        }
    }
    Ok(v)
}

/// A frequency as people read it ("20.0 kHz").
fn hz(f: f64) -> String {
    crate::input::units::format_quantity(f, crate::input::units::Dimension::Frequency, 4)
}

/// Verdict from a given set of lines (the lowest line is taken from the lines, never assumed).
pub fn assess_lines(
    lines: &[Line],
    mode: &AudibleMode,
    sig: &Significance,
) -> Result<AcousticVerdict, AcousticError> {
    let (limit_hz, _) = mode_limits(mode)?;
    check_significance(sig)?;
    let sig_lines = significant_lines(lines, sig);
    let in_band: Vec<Line> = sig_lines
        .iter()
        .copied()
        .filter(|l| l.f_hz <= limit_hz)
        .collect();
    let lowest = in_band.iter().map(|l| l.f_hz).reduce(f64::min);
    let a_weighted_db = a_weighted_level_db(&in_band, limit_hz);
    let bands: &[(f64, f64)] = match mode {
        AudibleMode::AvoidBands { bands, .. } => bands,
        _ => &[],
    };
    let lines_in_avoided_bands: Vec<f64> = sig_lines
        .iter()
        .map(|l| l.f_hz)
        .filter(|f| bands.iter().any(|&(lo, hi)| (lo..=hi).contains(f)))
        .collect();
    let (pass, reason) = match (mode, lowest) {
        (AudibleMode::Allowed, _) => (true, AcousticReason::Allowed),
        (AudibleMode::Inaudible { .. }, None) => {
            (true, AcousticReason::NoLineAtOrBelow { limit_hz })
        }
        (AudibleMode::Inaudible { .. }, Some(f)) => (
            false,
            AcousticReason::LineAtOrBelow {
                line_hz: f,
                limit_hz,
            },
        ),
        (AudibleMode::AvoidBands { .. }, _) => match lines_in_avoided_bands.first() {
            None => (true, AcousticReason::NoLineInAvoidedBands),
            Some(&f) => (false, AcousticReason::LineInAvoidedBand { line_hz: f }),
        },
    };
    Ok(AcousticVerdict {
        lowest_audible_line_hz: lowest,
        a_weighted_db,
        lines_in_avoided_bands,
        truncated: false,
        pass,
        reason,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::ripple::{Drive, MotorLoad, steady_state};

    fn load(r_ohm: f64, l_h: f64, back_emf_v: f64) -> MotorLoad {
        MotorLoad {
            r_ohm,
            l_h,
            back_emf_v,
        }
    }

    /// IEC 61672-1:2013 Table 3, A-weighting at the exact frequencies 1000·10^(n/10), table values
    /// rounded to 0.1 dB so the formula must land within ±0.05 dB. `true` = a Table 3 value the
    /// check was first written against; `false` = recalled from the table (from memory) and
    /// consistent with the Annex E formula. 160 Hz (−13.4) is left out: the formula gives
    /// −13.350, exactly on the rounding edge.
    #[test]
    fn a_weighting_matches_iec_61672_table_3() {
        let table: [(i32, f64, bool); 26] = [
            (-13, -30.2, true),
            (-12, -26.2, false),
            (-11, -22.5, false),
            (-10, -19.1, true),
            (-9, -16.1, false),
            (-7, -10.9, false),
            (-6, -8.6, false),
            (-5, -6.6, false),
            (-4, -4.8, false),
            (-3, -3.2, false),
            (-2, -1.9, false),
            (-1, -0.8, false),
            (0, 0.0, true),
            (1, 0.6, false),
            (2, 1.0, false),
            (3, 1.2, true),
            (4, 1.3, false),
            (5, 1.2, false),
            (6, 1.0, true),
            (7, 0.5, false),
            (8, -0.1, false),
            (9, -1.1, true),
            (10, -2.5, true),
            (11, -4.3, true),
            (12, -6.6, true),
            (13, -9.3, true),
        ];
        for (n, expected_db, _first_set) in table {
            let f = 1000.0 * 10f64.powf(f64::from(n) / 10.0);
            let a = a_weighting_db(f).expect("f > 0");
            assert!(
                (a - expected_db).abs() <= 0.05 + 1e-9,
                "f={f:.2} A={a:.3} table {expected_db}"
            );
        }
        assert_eq!(a_weighting_db(0.0), None);
        assert_eq!(a_weighting_db(-5.0), None);
    }

    /// ISO 226:2003 (8–12.5 kHz) / ISO 389-7:2005 (14–18 kHz) values at the table points, and
    /// log-frequency interpolation (closed form: midpoint in log f gives the mean of the two levels).
    #[test]
    fn hearing_threshold_table_and_interpolation() {
        for (f, l) in [
            (8e3, 12.6),
            (10e3, 13.9),
            (12.5e3, 12.3),
            (14e3, 18.4),
            (16e3, 40.2),
            (18e3, 73.2),
        ] {
            let t = hearing_threshold_db_spl(f).expect("in range");
            assert!((t - l).abs() < 1e-9, "{f}");
        }
        let mid = (16e3f64 * 18e3).sqrt();
        let t = hearing_threshold_db_spl(mid).expect("in range");
        assert!((t - 0.5 * (40.2 + 73.2)).abs() < 1e-9);
        assert_eq!(hearing_threshold_db_spl(19e3), None);
        assert_eq!(hearing_threshold_db_spl(10.0), None);
    }

    /// Parseval: Σ_{n≥1} 2|c_n|² equals the AC mean square obtained by numerically integrating the
    /// sampled time waveform (rectangle rule on a periodic function, 200 000 points).
    #[test]
    fn parseval_matches_time_domain_mean_square() {
        let cases = [
            (
                load(1.0, 1e-3, 10.0),
                Drive::LowSideFreewheel { v_f_v: 0.7 },
                0.6,
                2e3,
            ),
            (
                load(2.0, 200e-6, 12.0),
                Drive::LowSideFreewheel { v_f_v: 0.7 },
                0.3,
                5e3,
            ),
            (
                load(0.5, 100e-6, 11.0),
                Drive::HalfBridgeSynchronous,
                0.5,
                10e3,
            ),
            (load(1.0, 500e-6, 5.0), Drive::HBridgeBipolar, 0.65, 4e3),
            (load(1.0, 500e-6, 5.0), Drive::HBridgeUnipolar, 0.7, 4e3),
        ];
        for (ld, drive, d, f) in cases {
            let w = steady_state(&ld, drive, 24.0, d, f).expect("valid");
            let n = 200_000;
            let s = w.sample(n);
            let mean = s.iter().sum::<f64>() / n as f64;
            let ms = s.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
            let lines = spectrum(&w, f64::INFINITY, 2000);
            assert_eq!(lines.len(), 2000);
            let parseval: f64 = lines.iter().map(|l| l.amplitude_a.powi(2) / 2.0).sum();
            assert!(
                (parseval - ms).abs() <= 0.005 * ms,
                "{drive:?}: {parseval} vs {ms}"
            );
            // And the closed-form AC rms of the ripple module agrees too.
            assert!((w.ripple_rms_a().powi(2) - ms).abs() <= 0.005 * ms);
        }
    }

    /// One coefficient (magnitude and phase) against direct numerical integration of the waveform.
    #[test]
    fn coefficient_matches_numerical_integral() {
        let w = steady_state(
            &load(2.0, 200e-6, 12.0),
            Drive::LowSideFreewheel { v_f_v: 0.7 },
            24.0,
            0.3,
            5e3,
        )
        .expect("valid");
        let n_s = 100_000;
        let s = w.sample(n_s);
        for h in [1u32, 2, 5] {
            let (mut re, mut im) = (0.0, 0.0);
            for (k, x) in s.iter().enumerate() {
                let ph = -2.0 * PI * f64::from(h) * k as f64 / n_s as f64;
                re += x * ph.cos();
                im += x * ph.sin();
            }
            let c = fourier_coefficient(&w, h);
            let num = Phasor {
                re: re / n_s as f64,
                im: im / n_s as f64,
            };
            let err = Phasor {
                re: c.re - num.re,
                im: c.im - num.im,
            }
            .abs();
            assert!(err <= 1e-3 * c.abs(), "h={h}: {c:?} vs {num:?}");
        }
    }

    /// Symmetric triangle wave of peak A: odd harmonics only, amplitude (8A/π²)/n²
    /// (Kreyszig, *Advanced Engineering Mathematics*, Fourier series chapter, from memory).
    /// Synchronous half-bridge at D = 0.5 with τ/T = 1000 is a triangle to O(T/τ).
    #[test]
    fn small_ripple_spectrum_is_triangle_series() {
        let ld = load(0.1, 10e-3, 0.0); // τ = 100 ms
        let f = 10e3; // T = 0.1 ms
        let w = steady_state(&ld, Drive::HalfBridgeSynchronous, 24.0, 0.5, f).expect("valid");
        let peak = w.ripple_pp_a() / 2.0;
        let lines = spectrum(&w, 80e3, 100);
        assert_eq!(lines.len(), 8);
        for l in &lines {
            let n = f64::from(l.harmonic);
            if l.harmonic % 2 == 1 {
                let expected = 8.0 * peak / (PI * PI) / (n * n);
                assert!((l.amplitude_a - expected).abs() <= 0.01 * expected, "n={n}");
            } else {
                assert!(l.amplitude_a < 1e-3 * lines[0].amplitude_a, "even n={n}");
            }
        }
    }

    /// Unipolar bridge: the waveform's lines sit at 2f and multiples; the numerical Fourier
    /// integral of the waveform over 1/f at f itself vanishes, and at 2f matches line 1.
    #[test]
    fn unipolar_lines_at_twice_switching_frequency() {
        let f = 4e3;
        let w = steady_state(
            &load(1.0, 500e-6, 5.0),
            Drive::HBridgeUnipolar,
            24.0,
            0.7,
            f,
        )
        .expect("valid");
        let lines = spectrum(&w, 20e3, 100);
        assert_eq!(lines.len(), 2);
        for l in &lines {
            assert!((l.f_hz / (2.0 * f) - f64::from(l.harmonic)).abs() < 1e-9);
        }
        let n_s = 40_000;
        let dft = |fh: f64| {
            let (mut re, mut im) = (0.0, 0.0);
            for k in 0..n_s {
                let t = k as f64 / (f * n_s as f64);
                let x = w.value_at(t);
                re += x * (2.0 * PI * fh * t).cos();
                im -= x * (2.0 * PI * fh * t).sin();
            }
            2.0 * (re / n_s as f64).hypot(im / n_s as f64)
        };
        assert!(dft(f) < 1e-6 * lines[0].amplitude_a);
        assert!((dft(2.0 * f) - lines[0].amplitude_a).abs() < 1e-3 * lines[0].amplitude_a);
        // The verdict takes the lowest line from the spectrum: at 12 kHz unipolar the first line is
        // 24 kHz (inaudible), bipolar at 12 kHz is audible at 12 kHz.
        let mode = AudibleMode::Inaudible {
            hearing_limit_hz: 20e3,
        };
        let sig = Significance::default();
        let ld = load(1.0, 500e-6, 5.0);
        let uni = steady_state(&ld, Drive::HBridgeUnipolar, 24.0, 0.7, 12e3).expect("valid");
        let v = assess(&uni, &mode, &sig).expect("valid");
        assert!(
            v.pass && v.lowest_audible_line_hz.is_none() && v.a_weighted_db.is_none(),
            "{v:?}"
        );
        let bip = steady_state(&ld, Drive::HBridgeBipolar, 24.0, 0.7, 12e3).expect("valid");
        let v = assess(&bip, &mode, &sig).expect("valid");
        assert!(!v.pass);
        assert_eq!(v.lowest_audible_line_hz, Some(12e3));
    }

    /// A-weighted level of known lines (closed form): 1 A peak at 1 kHz (A = 0 dB) is
    /// 20·log10(1/√2) = −3.0103 dB; adding 1 A peak at 100 Hz adds 0.5·10^(A(100)/10).
    #[test]
    fn a_weighted_level_closed_form() {
        let l1k = Line {
            harmonic: 10,
            f_hz: 1000.0,
            amplitude_a: 1.0,
        };
        let l100 = Line {
            harmonic: 1,
            f_hz: 100.0,
            amplitude_a: 1.0,
        };
        let l30k = Line {
            harmonic: 300,
            f_hz: 30e3,
            amplitude_a: 1.0,
        };
        let a = a_weighted_level_db(&[l1k], 20e3).expect("in band");
        assert!((a + 3.0103).abs() < 1e-3);
        let a100 = a_weighting_db(100.0).expect("f > 0");
        let a1k = a_weighting_db(1000.0).expect("f > 0");
        assert!(a1k.abs() < 1e-3, "normalised to 0 dB at 1 kHz");
        let expected =
            10.0 * (0.5 * 10f64.powf(a1k / 10.0) + 0.5 * 10f64.powf(a100 / 10.0)).log10();
        let a = a_weighted_level_db(&[l100, l1k, l30k], 20e3).expect("in band");
        assert!((a - expected).abs() < 1e-9);
        assert_eq!(a_weighted_level_db(&[l30k], 20e3), None);
        assert!((l1k.level_db_re_1a().expect("non-zero") + 3.0103).abs() < 1e-3);
    }

    #[test]
    fn significance_rules() {
        let mk = |f_hz: f64, a_rms: f64| Line {
            harmonic: 1,
            f_hz,
            amplitude_a: a_rms * SQRT_2,
        };
        let lines = [
            mk(25e3, 1.0),
            mk(5e3, 0.5e-3),
            mk(10e3, 2e-3),
            mk(15e3, 1e-3 * 0.99),
        ];
        let sig = Significance::default();
        // 5 kHz: below the 1 mA floor; 15 kHz: 60.09 dB below the strongest → not significant.
        let s = significant_lines(&lines, &sig);
        let fs: Vec<f64> = s.iter().map(|l| l.f_hz).collect();
        assert_eq!(fs, vec![25e3, 10e3]);
        let v = assess_lines(
            &lines,
            &AudibleMode::Inaudible {
                hearing_limit_hz: 20e3,
            },
            &sig,
        )
        .expect("valid");
        assert_eq!(v.lowest_audible_line_hz, Some(10e3));
        assert!(!v.pass);
    }

    #[test]
    fn avoid_bands_and_allowed() {
        let ld = load(1.0, 500e-6, 5.0);
        let w = steady_state(&ld, Drive::HBridgeBipolar, 24.0, 0.65, 4e3).expect("valid");
        let sig = Significance::default();
        let hit = AudibleMode::AvoidBands {
            bands: vec![(3.5e3, 4.5e3)],
            hearing_limit_hz: 20e3,
        };
        let v = assess(&w, &hit, &sig).expect("valid");
        assert!(!v.pass);
        assert_eq!(v.lines_in_avoided_bands, vec![4e3]);
        let miss = AudibleMode::AvoidBands {
            bands: vec![(5e3, 6e3)],
            hearing_limit_hz: 20e3,
        };
        let v = assess(&w, &miss, &sig).expect("valid");
        assert!(v.pass, "{v:?}");
        assert_eq!(v.lowest_audible_line_hz, Some(4e3));
        assert!(v.a_weighted_db.is_some_and(f64::is_finite));
        let v = assess(&w, &AudibleMode::Allowed, &sig).expect("valid");
        assert!(v.pass);
        let bad = AudibleMode::AvoidBands {
            bands: vec![(6e3, 5e3)],
            hearing_limit_hz: 20e3,
        };
        assert!(assess(&w, &bad, &sig).is_err());
        // Truncation: 10 lines of 4 kHz stop at 40 kHz, short of a band at 50 kHz → no pass.
        let far = AudibleMode::AvoidBands {
            bands: vec![(50e3, 51e3)],
            hearing_limit_hz: 20e3,
        };
        let few = Significance {
            max_lines: 10,
            ..sig
        };
        let v = assess(&w, &far, &few).expect("valid");
        assert!(v.truncated && !v.pass);
    }
}
