//! MCU-timer arithmetic: which PWM settings a timer can realise, how a dead time is encoded,
//! and which duty range the output stage tolerates.
//!
//! This module owns the data-driven timer description ([`TimerModel`]), the search over every
//! realisable (prescaler divider, period) pair, dead-time encoding and duty/compare arithmetic.
//! It does no I/O and knows no physics beyond counting ticks.
//!
//! # Conventions
//!
//! - `divider` = the prescaler ratio (counter clock = `clock_hz / divider`).
//! - `period_ticks` = counter-clock ticks per PWM period, so
//!   `f = clock_hz / (divider · period_ticks)`.
//! - Edge-aligned: period register (counter top) = `period_ticks − 1`, duty steps =
//!   `period_ticks`, compare values `0..=period_ticks` (`period_ticks` = 100 % on).
//! - Centre-aligned (up-down): period register = `period_ticks / 2` (`period_ticks` must be even),
//!   duty steps = `period_ticks / 2`, compare `0..=period_ticks / 2`.
//! - Resolution bits = `log2(duty steps)` (a real number; the floor is also given).
//! - Counter width limits the period register to `≤ 2^counter_bits − 1`.
//! - Linear divider: divider register = `divider − register_offset` (usually `divider − 1`).
//!
//! In register terms, with divider register `R_d = divider − 1` and period register `R_p`:
//! f = f_clk/((R_d + 1)·(R_p + 1)) (edge) and f = f_clk/(2·(R_d + 1)·R_p) (centre), resolution
//! log2(R_p + 1) resp. log2(R_p) bits. These are counting arithmetic, common practice (no
//! published source).
//!
//! Internally a setting is handled as (divider `d`, duty steps `q`) with
//! `period_ticks = u·q`, where `u` = 1 (edge) or 2 (centre); the product
//! `n = divider · period_ticks = u·d·q` fixes the frequency.
//!
//! Assumptions (documented choices, not from a source):
//! - A usable PWM has at least [`MIN_DUTY_STEPS`] = 2 duty steps (one level between 0 % and
//!   100 %), so edge `period_ticks ≥ 2`, centre `period_ticks ≥ 4`.
//! - Band searches consider products `n ≤ 2^53` only (exact in `f64`; frequencies below
//!   `clock_hz / 2^53` are ignored).
//! - Rounding of a physical time to ticks or counts treats values within a relative 1e-9 of an
//!   integer as that integer, so that e.g. 500 ns × 100 MHz (= 50.000000000000007 in `f64`)
//!   needs 50 ticks, not 51.

use std::cmp::{Ordering, Reverse};
use std::collections::BTreeMap;
use std::fmt;

/// Fewest duty steps accepted for a PWM setting (assumption: one level between 0 % and 100 %).
pub const MIN_DUTY_STEPS: u64 = 2;

/// Largest product `divider · period_ticks` searched by the band functions (exact in `f64`).
pub const MAX_SEARCH_PRODUCT: u64 = 1 << 53;

/// Relative tolerance used when rounding a real number of ticks/counts to an integer.
const ROUND_REL_TOL: f64 = 1e-9;

// ---------------------------------------------------------------------------------------------
// Model
// ---------------------------------------------------------------------------------------------

/// A timer as described in a board file.
#[derive(Debug, Clone, PartialEq)]
pub struct TimerModel {
    /// Timer input clock (before the prescaler), Hz.
    pub clock_hz: f64,
    /// Counter width in bits, 8..=32.
    pub counter_bits: u32,
    pub prescaler: Prescaler,
    /// Counting modes the timer supports.
    pub alignments: Vec<Alignment>,
    pub dead_time: DeadTimeGenerator,
    pub compare: CompareLimits,
}

/// Prescaler description.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Prescaler {
    /// Every divider in `min_divider..=max_divider`; register value = `divider − register_offset`
    /// (the offset is usually 1).
    Linear {
        min_divider: u64,
        max_divider: u64,
        register_offset: u64,
    },
    /// A fixed list of ratios; register value = index in the list.
    Ratios { ratios: Vec<u64> },
}

/// Counting mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Alignment {
    /// Up-counting, edge-aligned PWM.
    Edge,
    /// Up-down counting, centre-aligned PWM.
    Centre,
}

/// Dead-time generator description. The dead-time tick is `clock_hz / clock_divider`
/// (the timer input clock, before the prescaler).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum DeadTimeGenerator {
    /// No hardware dead time.
    None,
    /// Code = tick count, `0..=max_ticks`.
    Linear { clock_divider: u64, max_ticks: u64 },
    /// Ranges of the code with different tick multipliers.
    Segmented {
        clock_divider: u64,
        segments: Vec<DeadTimeSegment>,
    },
}

/// For `code` in `first_code..first_code + count`: `ticks = (base + (code − first_code)) · step`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DeadTimeSegment {
    pub first_code: u32,
    pub count: u32,
    pub base: u64,
    pub step: u64,
}

/// Limits of the compare/output stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CompareLimits {
    /// Shortest on or off pulse the output stage tolerates, s (0 = none).
    pub min_pulse_s: f64,
}

// ---------------------------------------------------------------------------------------------
// Errors
// ---------------------------------------------------------------------------------------------

/// Why a dead-time generator description is invalid.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DeadTimeConfigError {
    ZeroClockDivider,
    /// Linear generator codes must fit a `u32`.
    MaxTicksTooLarge,
    NoSegments,
    EmptySegment {
        index: usize,
    },
    ZeroStep {
        index: usize,
    },
    /// `first_code + count − 1` exceeds `u32::MAX`.
    CodeOverflow {
        index: usize,
    },
    /// `(base + count − 1) · step` exceeds `u64::MAX`.
    TickOverflow {
        index: usize,
    },
    /// Two segments share a code.
    Overlap {
        first: usize,
        second: usize,
    },
}

/// Errors from the timer model and setting validation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TimerError {
    InvalidClock,
    InvalidCounterBits {
        bits: u32,
    },
    /// Linear prescaler with `min_divider` 0, `min > max`, or `register_offset > min_divider`.
    InvalidLinearPrescaler,
    EmptyRatioList,
    ZeroRatio {
        index: usize,
    },
    DuplicateRatio {
        ratio: u64,
    },
    NoAlignment,
    InvalidMinPulse,
    DeadTime(DeadTimeConfigError),
    AlignmentNotSupported {
        alignment: Alignment,
    },
    DividerNotAvailable {
        divider: u64,
    },
    /// `period_ticks` outside `min..=max` for the alignment.
    PeriodOutOfRange {
        period_ticks: u64,
        min: u64,
        max: u64,
    },
    OddCentrePeriod {
        period_ticks: u64,
    },
    /// Band limits must be finite, positive and `f_min ≤ f_max`; targets finite and positive.
    InvalidFrequency,
}

/// Dead-time encoding errors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DeadTimeError {
    /// The timer has no dead-time generator and a positive dead time was asked for.
    NotAvailable,
    /// The need exceeds the longest encodable dead time `max_s`.
    OutOfRange {
        max_s: f64,
    },
    /// Negative or non-finite need.
    InvalidNeed,
    InvalidModel(TimerError),
}

/// Duty-limit errors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DutyError {
    /// Negative/non-finite times, bootstrap duty outside 0..=1, or a setting with no steps or
    /// a non-positive frequency.
    InvalidInput,
    /// The shortest allowed on-pulse needs more counts than the largest allowed duty.
    Infeasible { min_counts: u64, max_counts: u64 },
}

impl fmt::Display for DeadTimeConfigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "invalid dead-time generator: {self:?}")
    }
}
impl fmt::Display for TimerError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "timer: {self:?}")
    }
}
impl fmt::Display for DeadTimeError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "dead time: {self:?}")
    }
}
impl fmt::Display for DutyError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "duty limits: {self:?}")
    }
}
impl std::error::Error for DeadTimeConfigError {}
impl std::error::Error for TimerError {}
impl std::error::Error for DeadTimeError {}
impl std::error::Error for DutyError {}

// ---------------------------------------------------------------------------------------------
// Results
// ---------------------------------------------------------------------------------------------

/// One realisable PWM setting (see the module conventions).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PwmSetting {
    pub divider: u64,
    pub divider_register: u64,
    pub period_ticks: u64,
    pub period_register: u64,
    pub alignment: Alignment,
    /// `clock_hz / (divider · period_ticks)`.
    pub frequency_hz: f64,
    /// Edge: `period_ticks`; centre: `period_ticks / 2`. Full-scale compare value.
    pub duty_steps: u64,
    /// `log2(duty_steps)`.
    pub resolution_bits: f64,
    /// `floor(log2(duty_steps))`.
    pub resolution_bits_floor: u32,
}

/// An encoded dead time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DeadTimeCode {
    pub code: u32,
    pub ticks: u64,
    pub seconds: f64,
}

/// Shortest and longest encodable dead time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DeadTimeRange {
    pub min: DeadTimeCode,
    pub max: DeadTimeCode,
}

/// Allowed compare range for a setting.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DutyLimits {
    /// Smallest compare value (on-pulse) allowed.
    pub min_counts: u64,
    /// Largest compare value allowed.
    pub max_counts: u64,
    /// `min_counts / duty_steps`.
    pub min_duty: f64,
    /// `max_counts / duty_steps`.
    pub max_duty: f64,
    /// Duration of one compare count, s: `1 / (f · duty_steps)`.
    pub count_s: f64,
    /// High-side output on-time at `min_counts`, after the dead time, s.
    pub shortest_high_pulse_s: f64,
    /// Low-side output on-time at `max_counts`, after the dead time, s (a single switch: its
    /// off-time).
    pub shortest_low_pulse_s: f64,
}

// ---------------------------------------------------------------------------------------------
// Validation
// ---------------------------------------------------------------------------------------------

impl DeadTimeGenerator {
    /// Checks the description (non-overlapping codes, no overflow, non-zero steps).
    pub fn validate(&self) -> Result<(), DeadTimeConfigError> {
        match self {
            DeadTimeGenerator::None => Ok(()),
            DeadTimeGenerator::Linear {
                clock_divider,
                max_ticks,
            } => {
                if *clock_divider == 0 {
                    Err(DeadTimeConfigError::ZeroClockDivider)
                } else if *max_ticks > u64::from(u32::MAX) {
                    Err(DeadTimeConfigError::MaxTicksTooLarge)
                } else {
                    Ok(())
                }
            }
            DeadTimeGenerator::Segmented {
                clock_divider,
                segments,
            } => {
                if *clock_divider == 0 {
                    return Err(DeadTimeConfigError::ZeroClockDivider);
                }
                validate_segments(segments)
            }
        }
    }

    /// Dead-time tick frequency for a timer input clock, Hz (`None` without a generator).
    fn tick_hz(&self, clock_hz: f64) -> Option<f64> {
        match self {
            DeadTimeGenerator::None => None,
            DeadTimeGenerator::Linear { clock_divider, .. }
            | DeadTimeGenerator::Segmented { clock_divider, .. } => {
                Some(clock_hz / *clock_divider as f64)
            }
        }
    }
}

fn validate_segments(segments: &[DeadTimeSegment]) -> Result<(), DeadTimeConfigError> {
    if segments.is_empty() {
        return Err(DeadTimeConfigError::NoSegments);
    }
    for (index, s) in segments.iter().enumerate() {
        if s.count == 0 {
            return Err(DeadTimeConfigError::EmptySegment { index });
        }
        if s.step == 0 {
            return Err(DeadTimeConfigError::ZeroStep { index });
        }
        if s.first_code.checked_add(s.count - 1).is_none() {
            return Err(DeadTimeConfigError::CodeOverflow { index });
        }
        let top = s.base.checked_add(u64::from(s.count - 1));
        if top.and_then(|t| t.checked_mul(s.step)).is_none() {
            return Err(DeadTimeConfigError::TickOverflow { index });
        }
    }
    // Overlap check on code ranges sorted by start; O(k log k).
    let mut order: Vec<usize> = (0..segments.len()).collect();
    order.sort_by_key(|&i| segments[i].first_code);
    for pair in order.windows(2) {
        let (a, b) = (&segments[pair[0]], &segments[pair[1]]);
        let a_last = u64::from(a.first_code) + u64::from(a.count) - 1;
        if u64::from(b.first_code) <= a_last {
            let (first, second) = (pair[0].min(pair[1]), pair[0].max(pair[1]));
            return Err(DeadTimeConfigError::Overlap { first, second });
        }
    }
    Ok(())
}

impl Prescaler {
    fn validate(&self) -> Result<(), TimerError> {
        match self {
            Prescaler::Linear {
                min_divider,
                max_divider,
                register_offset,
            } => {
                if *min_divider == 0 || min_divider > max_divider || register_offset > min_divider {
                    Err(TimerError::InvalidLinearPrescaler)
                } else {
                    Ok(())
                }
            }
            Prescaler::Ratios { ratios } => {
                if ratios.is_empty() {
                    return Err(TimerError::EmptyRatioList);
                }
                if let Some(index) = ratios.iter().position(|&r| r == 0) {
                    return Err(TimerError::ZeroRatio { index });
                }
                let mut sorted = ratios.clone();
                sorted.sort_unstable();
                match sorted.windows(2).find(|w| w[0] == w[1]) {
                    Some(w) => Err(TimerError::DuplicateRatio { ratio: w[0] }),
                    None => Ok(()),
                }
            }
        }
    }

    /// Register value for a divider, if the prescaler offers it.
    pub fn register_for(&self, divider: u64) -> Option<u64> {
        match self {
            Prescaler::Linear {
                min_divider,
                max_divider,
                register_offset,
            } => (*min_divider..=*max_divider)
                .contains(&divider)
                .then(|| divider - register_offset),
            Prescaler::Ratios { ratios } => {
                ratios.iter().position(|&r| r == divider).map(|i| i as u64)
            }
        }
    }

    /// Divider selected by a register value, if valid.
    pub fn divider_for_register(&self, register: u64) -> Option<u64> {
        match self {
            Prescaler::Linear {
                min_divider,
                max_divider,
                register_offset,
            } => register
                .checked_add(*register_offset)
                .filter(|d| (*min_divider..=*max_divider).contains(d)),
            Prescaler::Ratios { ratios } => usize::try_from(register)
                .ok()
                .and_then(|i| ratios.get(i))
                .copied(),
        }
    }

    /// The dividers as (divider, register) pairs sorted by divider (for smallest-first searches).
    fn sorted_set(&self) -> DividerSet {
        match self {
            Prescaler::Linear {
                min_divider,
                max_divider,
                register_offset,
            } => DividerSet::Linear {
                min: *min_divider,
                max: *max_divider,
                offset: *register_offset,
            },
            Prescaler::Ratios { ratios } => {
                let mut v: Vec<(u64, u64)> = ratios
                    .iter()
                    .enumerate()
                    .map(|(i, &r)| (r, i as u64))
                    .collect();
                v.sort_unstable();
                DividerSet::Sorted(v)
            }
        }
    }
}

/// Prescaler dividers prepared for searches.
enum DividerSet {
    Linear { min: u64, max: u64, offset: u64 },
    Sorted(Vec<(u64, u64)>),
}

impl DividerSet {
    /// Smallest and largest divider (validated prescaler: non-empty).
    fn bounds(&self) -> (u64, u64) {
        match self {
            DividerSet::Linear { min, max, .. } => (*min, *max),
            DividerSet::Sorted(v) => (v.first().map_or(1, |p| p.0), v.last().map_or(1, |p| p.0)),
        }
    }
}

impl TimerModel {
    /// Checks the whole description.
    pub fn validate(&self) -> Result<(), TimerError> {
        if !(self.clock_hz.is_finite() && self.clock_hz > 0.0) {
            return Err(TimerError::InvalidClock);
        }
        if !(8..=32).contains(&self.counter_bits) {
            return Err(TimerError::InvalidCounterBits {
                bits: self.counter_bits,
            });
        }
        self.prescaler.validate()?;
        if self.alignments.is_empty() {
            return Err(TimerError::NoAlignment);
        }
        let p = self.compare.min_pulse_s;
        if !(p.is_finite() && p >= 0.0) {
            return Err(TimerError::InvalidMinPulse);
        }
        self.dead_time.validate().map_err(TimerError::DeadTime)
    }

    fn check_alignment(&self, alignment: Alignment) -> Result<(), TimerError> {
        if self.alignments.contains(&alignment) {
            Ok(())
        } else {
            Err(TimerError::AlignmentNotSupported { alignment })
        }
    }

    /// Allowed duty-step range `(min, max)` for an alignment.
    /// Edge: period register `q − 1 ≤ 2^bits − 1` → `q ≤ 2^bits`;
    /// centre: period register `q ≤ 2^bits − 1` (common practice, module conventions).
    fn duty_step_range(&self, alignment: Alignment) -> (u64, u64) {
        let full = 1u64 << self.counter_bits;
        match alignment {
            Alignment::Edge => (MIN_DUTY_STEPS, full),
            Alignment::Centre => (MIN_DUTY_STEPS, full - 1),
        }
    }

    /// Lowest and highest PWM frequency the timer can realise with
    /// `alignment`: the largest divider at the most duty steps, and the
    /// smallest divider at [`MIN_DUTY_STEPS`] (`f = clock / (divider · u ·
    /// steps)`, module conventions).
    pub fn frequency_range(&self, alignment: Alignment) -> (f64, f64) {
        let (d_min, d_max) = self.prescaler.sorted_set().bounds();
        let (q_min, q_max) = self.duty_step_range(alignment);
        let u = match alignment {
            Alignment::Edge => 1.0,
            Alignment::Centre => 2.0,
        };
        let lowest = self.clock_hz / (d_max as f64 * u * q_max as f64);
        let highest = self.clock_hz / (d_min as f64 * u * q_min as f64);
        // The band searches stop at products of 2^53 (module assumptions).
        (
            lowest.max(self.clock_hz / MAX_SEARCH_PRODUCT as f64),
            highest,
        )
    }

    /// Period register value for a period in counter ticks.
    /// Edge: `period_ticks − 1`; centre: `period_ticks / 2` (module conventions).
    pub fn period_register(period_ticks: u64, alignment: Alignment) -> u64 {
        match alignment {
            Alignment::Edge => period_ticks.saturating_sub(1),
            Alignment::Centre => period_ticks / 2,
        }
    }

    /// Inverse of [`TimerModel::period_register`]: edge `register + 1`, centre `2 · register`.
    pub fn period_ticks_for_register(register: u64, alignment: Alignment) -> Option<u64> {
        match alignment {
            Alignment::Edge => register.checked_add(1),
            Alignment::Centre => register.checked_mul(2),
        }
    }

    /// Validated setting for `(divider, period_ticks, alignment)`.
    pub fn setting(
        &self,
        divider: u64,
        period_ticks: u64,
        alignment: Alignment,
    ) -> Result<PwmSetting, TimerError> {
        self.validate()?;
        self.check_alignment(alignment)?;
        let divider_register = self
            .prescaler
            .register_for(divider)
            .ok_or(TimerError::DividerNotAvailable { divider })?;
        let u = unit(alignment);
        if alignment == Alignment::Centre && !period_ticks.is_multiple_of(2) {
            return Err(TimerError::OddCentrePeriod { period_ticks });
        }
        let (q_min, q_max) = self.duty_step_range(alignment);
        let q = period_ticks / u;
        if !(q_min..=q_max).contains(&q) {
            return Err(TimerError::PeriodOutOfRange {
                period_ticks,
                min: q_min * u,
                max: q_max * u,
            });
        }
        Ok(self.make_setting(divider, divider_register, q, alignment))
    }

    /// Builds a setting from already-validated parts (`q` = duty steps).
    fn make_setting(
        &self,
        divider: u64,
        divider_register: u64,
        q: u64,
        al: Alignment,
    ) -> PwmSetting {
        let period_ticks = unit(al) * q;
        let product = u128::from(divider) * u128::from(period_ticks);
        PwmSetting {
            divider,
            divider_register,
            period_ticks,
            period_register: Self::period_register(period_ticks, al),
            alignment: al,
            frequency_hz: frequency_of(self.clock_hz, product),
            duty_steps: q,
            resolution_bits: (q as f64).log2(),
            resolution_bits_floor: q.ilog2(),
        }
    }

    // -----------------------------------------------------------------------------------------
    // Band searches
    // -----------------------------------------------------------------------------------------

    /// Range `(m_lo, m_hi)` of `m = n / u` (`n = divider · period_ticks`) whose frequency
    /// `clock_hz / n` lies in `[f_min_hz, f_max_hz]`; empty when `m_lo > m_hi`.
    /// Exact against the `f64` frequency: `clock_hz / n` is non-increasing in `n` for
    /// `n ≤ 2^53`, so the band is an interval found by bisection (O(53)).
    fn product_band(
        &self,
        f_min_hz: f64,
        f_max_hz: f64,
        alignment: Alignment,
    ) -> Result<(u64, u64), TimerError> {
        let ok = |f: f64| f.is_finite() && f > 0.0;
        if !(ok(f_min_hz) && ok(f_max_hz) && f_min_hz <= f_max_hz) {
            return Err(TimerError::InvalidFrequency);
        }
        let clock = self.clock_hz;
        let f = |n: u64| frequency_of(clock, u128::from(n));
        // Smallest n with f(n) ≤ f_max, and smallest n with f(n) < f_min.
        let n_lo = partition_point(1, MAX_SEARCH_PRODUCT + 1, |n| f(n) > f_max_hz);
        let n_past = partition_point(1, MAX_SEARCH_PRODUCT + 1, |n| f(n) >= f_min_hz);
        let n_hi = n_past - 1;
        let u = unit(alignment);
        Ok((n_lo.div_ceil(u), n_hi / u))
    }

    /// Every realisable setting with a frequency in `[f_min_hz, f_max_hz]`.
    ///
    /// Per divider the duty-step range is computed directly
    /// (`q ∈ [⌈m_lo/d⌉, ⌊m_hi/d⌋] ∩ [q_min, q_max]`), and only dividers in
    /// `[⌈m_lo/q_max⌉, ⌊m_hi/q_min⌋]` are visited: O(dividers visited + settings yielded).
    /// Order: prescaler order (ascending divider for linear, list order for ratios), then
    /// ascending period.
    pub fn settings_in_band(
        &self,
        f_min_hz: f64,
        f_max_hz: f64,
        alignment: Alignment,
    ) -> Result<impl Iterator<Item = PwmSetting> + '_, TimerError> {
        self.validate()?;
        self.check_alignment(alignment)?;
        let (m_lo, m_hi) = self.product_band(f_min_hz, f_max_hz, alignment)?;
        let (q_min, q_max) = self.duty_step_range(alignment);
        let d_first = m_lo.div_ceil(q_max);
        let d_last = m_hi / q_min;
        let dividers: Box<dyn Iterator<Item = (u64, u64)> + '_> = match &self.prescaler {
            Prescaler::Linear {
                min_divider,
                max_divider,
                register_offset,
            } => {
                let off = *register_offset;
                let range = d_first.max(*min_divider)..=d_last.min(*max_divider);
                Box::new(range.map(move |d| (d, d - off)))
            }
            Prescaler::Ratios { ratios } => Box::new(
                ratios
                    .iter()
                    .enumerate()
                    .map(|(i, &d)| (d, i as u64))
                    .filter(move |&(d, _)| (d_first..=d_last).contains(&d)),
            ),
        };
        Ok(dividers.flat_map(move |(d, reg)| {
            let q_lo = m_lo.div_ceil(d).max(q_min);
            let q_hi = (m_hi / d).min(q_max);
            (q_lo..=q_hi).map(move |q| self.make_setting(d, reg, q, alignment))
        }))
    }

    /// For each distinct realised frequency (distinct product `divider · period_ticks`) in the
    /// band, the setting with the most duty steps (smallest divider), ascending frequency.
    ///
    /// Reference implementation: groups [`TimerModel::settings_in_band`], so it costs
    /// O(settings in band · log) time and O(distinct products) memory. Prefer
    /// [`TimerModel::distinct_products_in_band`] for large spaces; both give the same result.
    pub fn best_per_frequency(
        &self,
        f_min_hz: f64,
        f_max_hz: f64,
        alignment: Alignment,
    ) -> Result<Vec<PwmSetting>, TimerError> {
        let mut best: BTreeMap<Reverse<u64>, PwmSetting> = BTreeMap::new();
        for s in self.settings_in_band(f_min_hz, f_max_hz, alignment)? {
            let key = Reverse(s.divider * s.period_ticks);
            best.entry(key)
                .and_modify(|b| {
                    if s.divider < b.divider {
                        *b = s;
                    }
                })
                .or_insert(s);
        }
        Ok(best.into_values().collect())
    }

    /// Each achievable product `n = divider · period_ticks` in the band once, with its best
    /// setting (smallest divider = most duty steps), ascending frequency (descending `n`).
    /// Lazy; no memory proportional to the band.
    ///
    /// Complexity, with `m = n / u` over the band range (N values):
    /// - linear prescaler: smallest divisor `d ∈ [max(d_min, ⌈m/q_max⌉), min(d_max, ⌊m/q_min⌋)]`
    ///   of `m`, found by scanning `d` upward to `√m` and then the co-divisor `q = m/d`
    ///   downward. When `d = d_min` already works (e.g. `d_min = 1` and `m ≤ q_max`) this is
    ///   O(1); for most `m` a few steps; worst case (primes) O(√m). Total O(N · s), `s` small
    ///   on average, ≤ 2√m.
    /// - ratio list: O(N · R) over the sorted ratios.
    pub fn distinct_products_in_band(
        &self,
        f_min_hz: f64,
        f_max_hz: f64,
        alignment: Alignment,
    ) -> Result<impl Iterator<Item = PwmSetting> + '_, TimerError> {
        self.validate()?;
        self.check_alignment(alignment)?;
        let (m_lo, m_hi) = self.product_band(f_min_hz, f_max_hz, alignment)?;
        let (q_min, q_max) = self.duty_step_range(alignment);
        let set = self.prescaler.sorted_set();
        // No product beyond (largest divider)·q_max or below (smallest divider)·q_min exists.
        let (d_min, d_max) = set.bounds();
        let m_hi = m_hi.min(d_max.saturating_mul(q_max));
        let m_lo = m_lo.max(d_min.saturating_mul(q_min));
        Ok((m_lo..=m_hi).rev().filter_map(move |m| {
            let (d, reg) = smallest_divider(&set, m, q_min, q_max)?;
            Some(self.make_setting(d, reg, m / d, alignment))
        }))
    }

    /// Realisable setting whose frequency is nearest `target_hz`; ties: more duty steps, then
    /// smaller divider. `Ok(None)` only if nothing is realisable.
    ///
    /// For each divider only the periods next to `target` can win (frequency is monotone in
    /// the period), and only dividers in `[⌊x/q_max⌋, ⌈x/q_min⌉]` (`x = clock/(u·target)`,
    /// clamped to the prescaler range) need visiting: O(dividers visited).
    pub fn nearest_setting(
        &self,
        target_hz: f64,
        alignment: Alignment,
    ) -> Result<Option<PwmSetting>, TimerError> {
        self.validate()?;
        self.check_alignment(alignment)?;
        if !(target_hz.is_finite() && target_hz > 0.0) {
            return Err(TimerError::InvalidFrequency);
        }
        let (q_min, q_max) = self.duty_step_range(alignment);
        let x = self.clock_hz / (unit(alignment) as f64 * target_hz);
        let mut best: Option<PwmSetting> = None;
        let mut consider = |d: u64, reg: u64| {
            // Saturating cast; q0 ± 1 guard against rounding of x/d near an integer.
            let q0 = (x / d as f64).floor() as u64;
            for q in [q0.saturating_sub(1), q0, q0.saturating_add(1)] {
                let s = self.make_setting(d, reg, q.clamp(q_min, q_max), alignment);
                if best.is_none_or(|b| nearer(&s, &b, target_hz) == Ordering::Less) {
                    best = Some(s);
                }
            }
        };
        match &self.prescaler {
            Prescaler::Linear {
                min_divider,
                max_divider,
                register_offset,
            } => {
                let clampd = |v: f64| (v as u64).clamp(*min_divider, *max_divider);
                let lo = clampd((x / q_max as f64).floor());
                let hi = clampd((x / q_min as f64).ceil());
                for d in lo..=hi {
                    consider(d, d - register_offset);
                }
            }
            Prescaler::Ratios { ratios } => {
                for (i, &d) in ratios.iter().enumerate() {
                    consider(d, i as u64);
                }
            }
        }
        Ok(best)
    }

    // -----------------------------------------------------------------------------------------
    // Dead time
    // -----------------------------------------------------------------------------------------

    /// Smallest encodable dead time not below `need_s` (among all codes; equal ticks → smaller
    /// code). Ticks needed = `⌈need_s · clock_hz / clock_divider⌉` (common practice: always
    /// round a dead time up to the encodable value, so the gap is never shorter than the need).
    pub fn encode_dead_time(&self, need_s: f64) -> Result<DeadTimeCode, DeadTimeError> {
        self.validate().map_err(DeadTimeError::InvalidModel)?;
        if !(need_s.is_finite() && need_s >= 0.0) {
            return Err(DeadTimeError::InvalidNeed);
        }
        let Some(tick_hz) = self.dead_time.tick_hz(self.clock_hz) else {
            return if need_s == 0.0 {
                Ok(DeadTimeCode {
                    code: 0,
                    ticks: 0,
                    seconds: 0.0,
                })
            } else {
                Err(DeadTimeError::NotAvailable)
            };
        };
        let need_ticks = ceil_tol(need_s * tick_hz);
        let found = if need_ticks > u64::MAX as f64 {
            None
        } else {
            smallest_code_at_least(&self.dead_time, need_ticks as u64)
        };
        match found {
            Some((code, ticks)) => Ok(dead_time_code(code, ticks, tick_hz)),
            None => {
                let max = self.dead_time_range()?.max;
                Err(DeadTimeError::OutOfRange { max_s: max.seconds })
            }
        }
    }

    /// Shortest and longest encodable dead time (both 0 without a generator).
    pub fn dead_time_range(&self) -> Result<DeadTimeRange, DeadTimeError> {
        self.validate().map_err(DeadTimeError::InvalidModel)?;
        let Some(tick_hz) = self.dead_time.tick_hz(self.clock_hz) else {
            let zero = DeadTimeCode {
                code: 0,
                ticks: 0,
                seconds: 0.0,
            };
            return Ok(DeadTimeRange {
                min: zero,
                max: zero,
            });
        };
        let (min, max) = match &self.dead_time {
            DeadTimeGenerator::Linear { max_ticks, .. } => {
                ((0, 0), (*max_ticks as u32, *max_ticks))
            }
            DeadTimeGenerator::Segmented { segments, .. } => segment_extremes(segments),
            DeadTimeGenerator::None => ((0, 0), (0, 0)),
        };
        Ok(DeadTimeRange {
            min: dead_time_code(min.0, min.1, tick_hz),
            max: dead_time_code(max.0, max.1, tick_hz),
        })
    }

    /// Ticks for a code, if the code exists (for inspection and tests).
    pub fn dead_time_ticks_for_code(&self, code: u32) -> Option<u64> {
        match &self.dead_time {
            DeadTimeGenerator::None => (code == 0).then_some(0),
            DeadTimeGenerator::Linear { max_ticks, .. } => {
                (u64::from(code) <= *max_ticks).then_some(u64::from(code))
            }
            DeadTimeGenerator::Segmented { segments, .. } => segments.iter().find_map(|s| {
                let k = code.checked_sub(s.first_code)?;
                (k < s.count).then(|| (s.base + u64::from(k)) * s.step)
            }),
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Duty
// ---------------------------------------------------------------------------------------------

/// What every output pulse must respect, for [`duty_limits`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PulseRules {
    /// Complementary outputs with dead-time insertion (a bridge leg): each output's turn-on
    /// edge is delayed by `dead_time_s`. `false` for a single switch (no partner, no dead time).
    pub complementary: bool,
    /// Inserted dead time, s (as encoded, not as needed).
    pub dead_time_s: f64,
    /// Shortest on-pulse any output may have, s (the board's `min_pulse`).
    pub min_pulse_s: f64,
    /// Shortest low-side on-time per period that refreshes a bootstrap capacitor, s.
    pub refresh_s: Option<f64>,
}

/// Allowed compare range for `setting`: the compares whose OUTPUT pulses respect `rules`.
///
/// One compare count lasts `count_s = 1/(f · duty_steps)`; the high-side reference is on for
/// `c·count_s`. With dead-time insertion each output's turn-on is delayed by the dead time, so
/// the high-side output is on for `c·count_s − t_dead` and the low-side output for
/// `(steps − c)·count_s − t_dead` (common practice for complementary outputs with dead-time
/// insertion). Every output pulse must last at least `min_pulse_s` and be non-empty (at least
/// one count beyond the dead time's whole counts), the low side at least the bootstrap
/// refresh, both after the dead time:
/// `min_counts = max(⌈(min_pulse + t_dead)/count_s⌉, ⌊t_dead/count_s⌋ + 1)`,
/// `max_counts = steps − max(⌈(max(min_pulse, t_refresh) + t_dead)/count_s⌉, ⌊t_dead/count_s⌋ + 1)`
/// (rounded inwards). A single switch (`complementary = false`) has no dead time; its off-pulse
/// obeys the same minimum. Compare 0 (off) and, where allowed, full scale are outside this
/// range on purpose: the helpers map an explicit 0 to off. Infeasible when `min_counts >
/// max_counts`.
pub fn duty_limits(setting: &PwmSetting, rules: &PulseRules) -> Result<DutyLimits, DutyError> {
    let time_ok = |t: f64| t.is_finite() && t >= 0.0;
    let f = setting.frequency_hz;
    let inputs_ok = time_ok(rules.dead_time_s)
        && time_ok(rules.min_pulse_s)
        && rules.refresh_s.is_none_or(time_ok);
    if !inputs_ok || !f.is_finite() || f <= 0.0 || setting.duty_steps == 0 {
        return Err(DutyError::InvalidInput);
    }
    let steps = setting.duty_steps;
    let count_s = 1.0 / (f * steps as f64);
    let t_dead = if rules.complementary {
        rules.dead_time_s
    } else {
        0.0
    };
    let low_pulse = rules.min_pulse_s.max(rules.refresh_s.unwrap_or(0.0));
    // f64 → u64 casts saturate, so an absurd time yields an infeasible result, not a wrap.
    // A pulse must also be non-empty: at least one count beyond the dead time's whole counts.
    let non_empty = floor_tol(t_dead / count_s) as u64 + 1;
    let counts_for = |t: f64| (ceil_tol((t + t_dead) / count_s) as u64).max(non_empty);
    let min_counts = counts_for(rules.min_pulse_s);
    let max_counts = steps.saturating_sub(counts_for(low_pulse));
    if min_counts > max_counts {
        return Err(DutyError::Infeasible {
            min_counts,
            max_counts,
        });
    }
    Ok(DutyLimits {
        min_counts,
        max_counts,
        min_duty: min_counts as f64 / steps as f64,
        max_duty: max_counts as f64 / steps as f64,
        count_s,
        shortest_high_pulse_s: min_counts as f64 * count_s - t_dead,
        shortest_low_pulse_s: (steps - max_counts) as f64 * count_s - t_dead,
    })
}

/// Compare value for a duty in 0..=1: `round(duty · duty_steps)` clamped to `0..=duty_steps`
/// (common practice). NaN maps to 0. Returns `u64`: the 100 % value of a 32-bit edge-aligned
/// timer is 2^32.
pub fn compare_for_duty(setting: &PwmSetting, duty: f64) -> u64 {
    if duty.is_nan() {
        return 0;
    }
    let steps = setting.duty_steps;
    let c = (duty * steps as f64).round();
    if c <= 0.0 {
        0
    } else if c >= steps as f64 {
        steps
    } else {
        c as u64
    }
}

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

/// Ticks of the counter per duty step: 1 (edge) or 2 (centre).
fn unit(alignment: Alignment) -> u64 {
    match alignment {
        Alignment::Edge => 1,
        Alignment::Centre => 2,
    }
}

/// `f = clock_hz / n` with `n = divider · period_ticks` (module conventions). `n ≥ 1`.
fn frequency_of(clock_hz: f64, n: u128) -> f64 {
    clock_hz / n.max(1) as f64
}

/// Ordering "a is nearer than b" for [`TimerModel::nearest_setting`]:
/// |f − target|, then more duty steps, then smaller divider.
fn nearer(a: &PwmSetting, b: &PwmSetting, target_hz: f64) -> Ordering {
    let ea = (a.frequency_hz - target_hz).abs();
    let eb = (b.frequency_hz - target_hz).abs();
    ea.total_cmp(&eb)
        .then(b.duty_steps.cmp(&a.duty_steps))
        .then(a.divider.cmp(&b.divider))
}

/// First `n` in `[lo, hi)` where `pred` is false, for `pred` true-then-false (bisection).
fn partition_point(mut lo: u64, mut hi: u64, pred: impl Fn(u64) -> bool) -> u64 {
    while lo < hi {
        let mid = lo + (hi - lo) / 2;
        if pred(mid) {
            lo = mid + 1;
        } else {
            hi = mid;
        }
    }
    lo
}

/// Smallest divider `d` of the set with `d | m` and `m/d ∈ [q_min, q_max]`, with its register.
fn smallest_divider(set: &DividerSet, m: u64, q_min: u64, q_max: u64) -> Option<(u64, u64)> {
    let d_need_lo = m.div_ceil(q_max);
    let d_need_hi = m / q_min;
    match set {
        DividerSet::Linear { min, max, offset } => {
            let d = smallest_divisor_in(m, d_need_lo.max(*min), d_need_hi.min(*max), q_min)?;
            Some((d, d - offset))
        }
        DividerSet::Sorted(v) => {
            let start = v.partition_point(|&(d, _)| d < d_need_lo);
            v[start..]
                .iter()
                .take_while(|&&(d, _)| d <= d_need_hi)
                .find(|&&(d, _)| m.is_multiple_of(d))
                .copied()
        }
    }
}

/// Smallest divisor of `m` in `[d_lo, d_hi]` (caller guarantees `m/d_lo ≤ q_max` and
/// `d_hi ≤ m/q_min`, `q_min ≥ 1`). Scans `d` up to `√m`, then co-divisors `q = m/d`
/// downward (largest `q` ↔ smallest `d`): O(min(d_hi, √m) − d_lo + √m) worst case.
fn smallest_divisor_in(m: u64, d_lo: u64, d_hi: u64, q_min: u64) -> Option<u64> {
    if d_lo > d_hi || d_lo == 0 {
        return None;
    }
    let root = m.isqrt();
    let mut d = d_lo;
    while d <= d_hi && d <= root {
        if m.is_multiple_of(d) {
            return Some(d);
        }
        d += 1;
    }
    let d2 = d_lo.max(root + 1);
    if d2 > d_hi {
        return None;
    }
    let q_bot = q_min.max(m.div_ceil(d_hi)).max(1);
    let mut q = m / d2;
    while q >= q_bot {
        if m.is_multiple_of(q) {
            return Some(m / q);
        }
        q -= 1;
    }
    None
}

/// Smallest `(code, ticks)` with `ticks ≥ need_ticks`; equal ticks → smaller code.
fn smallest_code_at_least(generator: &DeadTimeGenerator, need_ticks: u64) -> Option<(u32, u64)> {
    match generator {
        DeadTimeGenerator::None => (need_ticks == 0).then_some((0, 0)),
        DeadTimeGenerator::Linear { max_ticks, .. } => {
            (need_ticks <= *max_ticks).then_some((need_ticks as u32, need_ticks))
        }
        DeadTimeGenerator::Segmented { segments, .. } => segments
            .iter()
            .filter_map(|s| {
                // Within a segment ticks rise with the code: k = max(0, ⌈need/step⌉ − base).
                let k = need_ticks.div_ceil(s.step).saturating_sub(s.base);
                (k < u64::from(s.count)).then(|| (s.first_code + k as u32, (s.base + k) * s.step))
            })
            .min_by_key(|&(code, ticks)| (ticks, code)),
    }
}

/// `((min_code, min_ticks), (max_code, max_ticks))` over validated segments.
fn segment_extremes(segments: &[DeadTimeSegment]) -> ((u32, u64), (u32, u64)) {
    let firsts = segments.iter().map(|s| (s.first_code, s.base * s.step));
    let lasts = segments.iter().map(|s| {
        (
            s.first_code + (s.count - 1),
            (s.base + u64::from(s.count - 1)) * s.step,
        )
    });
    let min = firsts.min_by_key(|&(c, t)| (t, c)).unwrap_or((0, 0));
    let max = lasts
        .min_by_key(|&(c, t)| (Reverse(t), c))
        .unwrap_or((0, 0));
    (min, max)
}

fn dead_time_code(code: u32, ticks: u64, tick_hz: f64) -> DeadTimeCode {
    DeadTimeCode {
        code,
        ticks,
        seconds: ticks as f64 / tick_hz,
    }
}

/// `⌈x⌉`, but values within a relative [`ROUND_REL_TOL`] of an integer count as that integer.
fn ceil_tol(x: f64) -> f64 {
    let r = x.round();
    if (x - r).abs() <= ROUND_REL_TOL * x.abs().max(1.0) {
        r.max(0.0)
    } else {
        x.ceil().max(0.0)
    }
}

/// `⌊x⌋` with the same tolerance as [`ceil_tol`].
fn floor_tol(x: f64) -> f64 {
    let r = x.round();
    if (x - r).abs() <= ROUND_REL_TOL * x.abs().max(1.0) {
        r.max(0.0)
    } else {
        x.floor().max(0.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    // -----------------------------------------------------------------------------------------
    // Fixtures
    // -----------------------------------------------------------------------------------------

    /// An invented 8-bit segmented dead-time code (three segments, our own test table):
    /// 0x00–0x6F → code·t (0–111); 0x70–0xBF → (56 + k)·2t (112–270);
    /// 0xC0–0xFF → (28 + k)·10t (280–910), k = code − first code of the segment.
    fn test_segments() -> Vec<DeadTimeSegment> {
        let seg = |first_code, count, base, step| DeadTimeSegment {
            first_code,
            count,
            base,
            step,
        };
        vec![
            seg(0x00, 112, 0, 1),
            seg(0x70, 80, 56, 2),
            seg(0xC0, 64, 28, 10),
        ]
    }

    /// Independent decoder of the same table, written as closed forms per code range.
    fn test_decode(code: u32) -> u64 {
        let c = u64::from(code);
        match c {
            0x00..=0x6F => c,
            0x70..=0xBF => 2 * c - 112,
            _ => 10 * c - 1640,
        }
    }

    fn timer(
        clock_hz: f64,
        bits: u32,
        prescaler: Prescaler,
        dead: DeadTimeGenerator,
    ) -> TimerModel {
        TimerModel {
            clock_hz,
            counter_bits: bits,
            prescaler,
            alignments: vec![Alignment::Edge, Alignment::Centre],
            dead_time: dead,
            compare: CompareLimits { min_pulse_s: 0.0 },
        }
    }

    fn linear(min: u64, max: u64, offset: u64) -> Prescaler {
        Prescaler::Linear {
            min_divider: min,
            max_divider: max,
            register_offset: offset,
        }
    }

    fn segmented_timer(clock_hz: f64) -> TimerModel {
        let dead = DeadTimeGenerator::Segmented {
            clock_divider: 1,
            segments: test_segments(),
        };
        timer(clock_hz, 16, linear(1, 4096, 1), dead)
    }

    fn dividers_of(p: &Prescaler) -> Vec<u64> {
        match p {
            Prescaler::Linear {
                min_divider,
                max_divider,
                ..
            } => (*min_divider..=*max_divider).collect(),
            Prescaler::Ratios { ratios } => ratios.clone(),
        }
    }

    // -----------------------------------------------------------------------------------------
    // Dead time: the invented test table, values worked out by hand from its description
    // -----------------------------------------------------------------------------------------

    #[test]
    fn segment_table_matches_independent_decoder() {
        // Every 8-bit code: table decode == closed-form decode.
        let t = segmented_timer(100e6);
        for code in 0..=255u32 {
            assert_eq!(t.dead_time_ticks_for_code(code), Some(test_decode(code)));
        }
        assert_eq!(t.dead_time_ticks_for_code(256), None);
    }

    #[test]
    fn segmented_dead_time_100mhz() {
        // By hand: 500 ns = 50 t → 0x32 (first segment).
        let t = segmented_timer(100e6);
        let c = t.encode_dead_time(500e-9).unwrap();
        assert_eq!((c.code, c.ticks), (0x32, 50));
        // 2 µs = 200 t = (56 + 44)·2 t → 0x70 + 44 = 0x9C.
        let c = t.encode_dead_time(2e-6).unwrap();
        assert_eq!((c.code, c.ticks), (0x9C, 200));
        // 8 µs = 800 t = (28 + 52)·10 t → 0xC0 + 52 = 0xF4.
        let c = t.encode_dead_time(8e-6).unwrap();
        assert_eq!((c.code, c.ticks), (0xF4, 800));
    }

    #[test]
    fn segmented_dead_time_136mhz() {
        // By hand: 1.55 µs = 210.8 t → 211 t; second segment ⌈211/2⌉ − 56 = 50 → 0xA2, 212 t,
        // 1558.82 ns.
        let t = segmented_timer(136e6);
        let c = t.encode_dead_time(1.55e-6).unwrap();
        assert_eq!((c.code, c.ticks), (0xA2, 212));
        assert!((c.seconds - 1558.824e-9).abs() < 0.001e-9, "{}", c.seconds);
        // 2 µs = 272 t: past the second segment (≤ 270 t), so (28 + 0)·10 t → 0xC0, 280 t.
        let c = t.encode_dead_time(2e-6).unwrap();
        assert_eq!((c.code, c.ticks), (0xC0, 280));
        // 8 µs = 1088 t > 910 t (the longest code): out of range.
        match t.encode_dead_time(8e-6) {
            Err(DeadTimeError::OutOfRange { max_s }) => {
                assert!((max_s - 910.0 / 136e6).abs() < 1e-15)
            }
            other => panic!("{other:?}"),
        }
        let r = t.dead_time_range().unwrap();
        assert_eq!((r.max.code, r.max.ticks), (0xFF, 910)); // (28 + 63)·10
        assert_eq!((r.min.code, r.min.ticks), (0, 0));
    }

    #[test]
    fn dead_time_none_and_linear() {
        let mut t = timer(100e6, 16, linear(1, 8, 1), DeadTimeGenerator::None);
        let c = t.encode_dead_time(0.0).unwrap();
        assert_eq!((c.code, c.ticks, c.seconds), (0, 0, 0.0));
        assert_eq!(t.encode_dead_time(1e-9), Err(DeadTimeError::NotAvailable));
        assert_eq!(t.encode_dead_time(-1e-9), Err(DeadTimeError::InvalidNeed));
        // Linear, tick = 100 MHz / 2 = 20 ns: 1 µs → 50 ticks; 1.01 µs → 50.5 → 51 ticks.
        t.dead_time = DeadTimeGenerator::Linear {
            clock_divider: 2,
            max_ticks: 255,
        };
        assert_eq!(t.encode_dead_time(1e-6).unwrap().ticks, 50);
        assert_eq!(t.encode_dead_time(1.01e-6).unwrap().code, 51);
        assert!(matches!(
            t.encode_dead_time(5.2e-6),
            Err(DeadTimeError::OutOfRange { .. })
        ));
    }

    #[test]
    fn segment_validation_errors() {
        let seg = |first_code, count, base, step| DeadTimeSegment {
            first_code,
            count,
            base,
            step,
        };
        let check = |segments: Vec<DeadTimeSegment>| {
            DeadTimeGenerator::Segmented {
                clock_divider: 1,
                segments,
            }
            .validate()
        };
        assert_eq!(check(vec![]), Err(DeadTimeConfigError::NoSegments));
        assert_eq!(
            check(vec![seg(0, 10, 0, 1), seg(9, 5, 0, 2)]),
            Err(DeadTimeConfigError::Overlap {
                first: 0,
                second: 1
            })
        );
        assert_eq!(check(vec![seg(10, 5, 0, 2), seg(0, 10, 0, 1)]), Ok(()));
        assert_eq!(
            check(vec![seg(0, 0, 0, 1)]),
            Err(DeadTimeConfigError::EmptySegment { index: 0 })
        );
        assert_eq!(
            check(vec![seg(0, 1, 0, 0)]),
            Err(DeadTimeConfigError::ZeroStep { index: 0 })
        );
        assert_eq!(
            check(vec![seg(u32::MAX, 2, 0, 1)]),
            Err(DeadTimeConfigError::CodeOverflow { index: 0 })
        );
        assert_eq!(
            check(vec![seg(0, 2, u64::MAX, 1)]),
            Err(DeadTimeConfigError::TickOverflow { index: 0 })
        );
        let t = timer(
            1e6,
            8,
            linear(1, 1, 0),
            DeadTimeGenerator::Segmented {
                clock_divider: 0,
                segments: test_segments(),
            },
        );
        assert_eq!(
            t.encode_dead_time(0.0),
            Err(DeadTimeError::InvalidModel(TimerError::DeadTime(
                DeadTimeConfigError::ZeroClockDivider
            )))
        );
    }

    // -----------------------------------------------------------------------------------------
    // Settings: hand-computed cases against the register relations of the module doc
    // -----------------------------------------------------------------------------------------

    #[test]
    fn edge_and_centre_conventions_by_hand() {
        let t = timer(88e6, 16, linear(1, 65536, 1), DeadTimeGenerator::None);
        // Edge, divider register 0, period register 4399:
        // f = 88 MHz/((0+1)(4399+1)) = 20 kHz, log2(4400) = 12.10.
        let e = t.setting(1, 4400, Alignment::Edge).unwrap();
        assert_eq!(
            (e.period_register, e.duty_steps, e.divider_register),
            (4399, 4400, 0)
        );
        assert_eq!(e.frequency_hz, 20_000.0);
        assert!((e.resolution_bits - 12.103_287_808_412_022).abs() < 1e-12);
        assert_eq!(e.resolution_bits_floor, 12);
        // Centre, divider register 0, period register 2200:
        // f = 88 MHz/(2·1·2200) = 20 kHz, log2(2200) = 11.10.
        let c = t.setting(1, 4400, Alignment::Centre).unwrap();
        assert_eq!((c.period_register, c.duty_steps), (2200, 2200));
        assert_eq!(c.frequency_hz, 20_000.0);
        assert!((c.resolution_bits - 11.103_287_808_412_022).abs() < 1e-12);
        assert_eq!(c.resolution_bits_floor, 11);
        // Divider register 10 (divider 11), centre period register 250:
        // 88 MHz/(2·11·250) = 16 kHz, 250 steps.
        let c = t.setting(11, 500, Alignment::Centre).unwrap();
        assert_eq!(
            (c.divider_register, c.period_register, c.duty_steps),
            (10, 250, 250)
        );
        assert_eq!(c.frequency_hz, 16_000.0);
        assert_eq!(
            t.setting(1, 4401, Alignment::Centre),
            Err(TimerError::OddCentrePeriod { period_ticks: 4401 })
        );
    }

    #[test]
    fn counter_width_limits_by_hand() {
        let t = timer(1e6, 8, linear(1, 4, 1), DeadTimeGenerator::None);
        let edge = |p| t.setting(1, p, Alignment::Edge).map(|s| s.period_register);
        let centre = |p| {
            t.setting(1, p, Alignment::Centre)
                .map(|s| s.period_register)
        };
        // 8-bit: period register ≤ 255.
        assert_eq!(edge(256), Ok(255));
        assert!(matches!(
            edge(257),
            Err(TimerError::PeriodOutOfRange { .. })
        ));
        assert_eq!(centre(510), Ok(255));
        assert!(matches!(
            centre(512),
            Err(TimerError::PeriodOutOfRange { .. })
        ));
        // At least two duty steps (module assumption).
        assert_eq!(edge(2), Ok(1));
        assert!(edge(1).is_err());
        assert_eq!(centre(4), Ok(2));
        assert!(centre(2).is_err());
        assert_eq!(
            t.setting(5, 100, Alignment::Edge),
            Err(TimerError::DividerNotAvailable { divider: 5 })
        );
        let r = Prescaler::Ratios {
            ratios: vec![1, 2, 4, 8, 64],
        };
        assert_eq!(r.register_for(64), Some(4));
        assert_eq!(r.divider_for_register(4), Some(64));
        assert_eq!(r.divider_for_register(5), None);
        let mut bad = t.clone();
        bad.prescaler = Prescaler::Ratios {
            ratios: vec![2, 4, 2],
        };
        assert_eq!(bad.validate(), Err(TimerError::DuplicateRatio { ratio: 2 }));
        bad.alignments = vec![Alignment::Edge];
        bad.prescaler = linear(1, 4, 1);
        assert_eq!(
            bad.setting(1, 10, Alignment::Centre),
            Err(TimerError::AlignmentNotSupported {
                alignment: Alignment::Centre
            })
        );
    }

    #[test]
    fn nearest_prefers_resolution_on_ties() {
        let t = timer(88e6, 16, linear(1, 65536, 1), DeadTimeGenerator::None);
        // 20 kHz is exact for d = 1, 2, 4, 5, 8, ... (p = 4400/d): d = 1 has the most steps.
        let s = t.nearest_setting(20e3, Alignment::Edge).unwrap().unwrap();
        assert_eq!((s.divider, s.period_ticks), (1, 4400));
        // Above the fastest setting (88 MHz/2 = 44 MHz): the fastest setting.
        let s = t.nearest_setting(1e9, Alignment::Edge).unwrap().unwrap();
        assert_eq!((s.divider, s.period_ticks), (1, 2));
        // Below the slowest: 65536·65536 ticks.
        let s = t.nearest_setting(1e-6, Alignment::Edge).unwrap().unwrap();
        assert_eq!((s.divider, s.period_ticks), (65536, 65536));
    }

    /// An invented 136 MHz timer, 12-bit linear divider, 16-bit counter, 1–100 kHz (a large
    /// search space):
    /// the per-product search equals an independent sieve over all divider × period pairs.
    #[test]
    fn large_space_distinct_products_match_sieve() {
        let t = segmented_timer(136e6);
        let (n_lo, n_hi) = (1360u64, 136_000u64); // 136 MHz/100 kHz, 136 MHz/1 kHz (exact)
        let mut sieve = vec![0u64; (n_hi - n_lo + 1) as usize];
        for d in 1..=4096u64 {
            let q_lo = n_lo.div_ceil(d).max(2);
            let q_hi = (n_hi / d).min(65536);
            for q in q_lo..=q_hi {
                let slot = &mut sieve[(d * q - n_lo) as usize];
                if *slot == 0 {
                    *slot = d; // ascending d: first mark is the smallest divider
                }
            }
        }
        let got: Vec<PwmSetting> = t
            .distinct_products_in_band(1e3, 100e3, Alignment::Edge)
            .unwrap()
            .collect();
        let expected: Vec<(u64, u64)> = (n_lo..=n_hi)
            .rev()
            .filter_map(|n| {
                let d = sieve[(n - n_lo) as usize];
                (d != 0).then_some((n, d))
            })
            .collect();
        let got_pairs: Vec<(u64, u64)> = got
            .iter()
            .map(|s| (s.divider * s.period_ticks, s.divider))
            .collect();
        assert_eq!(got_pairs, expected);
        // 65537 is prime (a Fermat prime): no divider ≤ 4096 with period ≤ 65536 makes it.
        assert!(!got_pairs.iter().any(|&(n, _)| n == 65537));
        // Hand-checked ends: 1 kHz ⇒ n = 136000 = 4·34000 (2 and 3 fail: 68000, 45333.3).
        assert_eq!((got[0].divider, got[0].period_ticks), (4, 34000));
        assert_eq!(got[0].frequency_hz, 1000.0);
        let last = got[got.len() - 1];
        assert_eq!(
            (last.divider, last.period_ticks, last.frequency_hz),
            (1, 1360, 100e3)
        );
    }

    fn rules(complementary: bool, dead: f64, pulse: f64, refresh: Option<f64>) -> PulseRules {
        PulseRules {
            complementary,
            dead_time_s: dead,
            min_pulse_s: pulse,
            refresh_s: refresh,
        }
    }

    /// Compare limits keep every OUTPUT pulse (after the dead time) at least the minimum pulse
    /// and the low side on for the refresh time (by hand: 15.625 ns per count).
    #[test]
    fn duty_limits_by_hand() {
        let t = timer(88e6, 16, linear(1, 65536, 1), DeadTimeGenerator::None);
        let s = t.setting(1, 4400, Alignment::Edge).unwrap(); // 1/88 µs per count
        // Bridge: 0.5 µs pulse + 1 µs dead time = 132 counts each side; max = 4400 − 132.
        let l = duty_limits(&s, &rules(true, 1e-6, 0.5e-6, None)).unwrap();
        assert_eq!((l.min_counts, l.max_counts), (132, 4268));
        assert_eq!((l.min_duty, l.max_duty), (0.03, 0.97));
        assert!((l.shortest_high_pulse_s - 0.5e-6).abs() < 1e-15);
        assert!((l.shortest_low_pulse_s - 0.5e-6).abs() < 1e-15);
        // Bootstrap refresh 2.5 µs after the 1 µs dead time: 308 counts off → 4092.
        let l = duty_limits(&s, &rules(true, 1e-6, 0.5e-6, Some(2.5e-6))).unwrap();
        assert_eq!(l.max_counts, 4092);
        assert!((l.shortest_low_pulse_s - 2.5e-6).abs() < 1e-15);
        // No minimum pulse: a compare equal to the dead time (88) would be an empty pulse;
        // the limit is one count more.
        let l = duty_limits(&s, &rules(true, 1e-6, 0.0, None)).unwrap();
        assert_eq!((l.min_counts, l.max_counts), (89, 4311));
        // A single switch has no dead time: 1.01 µs = 88.88 counts → 89 on, off ≥ 89 → 4311.
        let l = duty_limits(&s, &rules(false, 1e-6, 1.01e-6, None)).unwrap();
        assert_eq!((l.min_counts, l.max_counts), (89, 4311));
        // 30 µs dead time of a 50 µs period: 2641 counts min, 1759 max → infeasible.
        assert_eq!(
            duty_limits(&s, &rules(true, 30e-6, 0.0, None)),
            Err(DutyError::Infeasible {
                min_counts: 2641,
                max_counts: 1759
            })
        );
        assert_eq!(
            duty_limits(&s, &rules(true, -1.0, 0.0, None)),
            Err(DutyError::InvalidInput)
        );
        assert_eq!(
            duty_limits(&s, &rules(true, 0.0, 0.0, Some(f64::NAN))),
            Err(DutyError::InvalidInput)
        );
    }

    /// Centre alignment: one count is two ticks; the dead time counts in seconds.
    #[test]
    fn duty_limits_centre_by_hand() {
        let t = timer(88e6, 16, linear(1, 65536, 1), DeadTimeGenerator::None);
        let s = t.setting(1, 4400, Alignment::Centre).unwrap(); // 2200 steps, 1/44 µs each
        // 400 ns pulse + 14 ticks (7 counts) of dead time = 17.6 + 7 = 24.6 counts → 25.
        let l = duty_limits(&s, &rules(true, 14.0 / 88e6, 400e-9, None)).unwrap();
        assert_eq!((l.min_counts, l.max_counts), (25, 2175));
        assert!(l.shortest_high_pulse_s >= 400e-9);
    }

    #[test]
    fn compare_for_duty_by_hand() {
        let t = timer(88e6, 16, linear(1, 65536, 1), DeadTimeGenerator::None);
        let e = t.setting(1, 4400, Alignment::Edge).unwrap();
        let c = t.setting(1, 4400, Alignment::Centre).unwrap();
        assert_eq!(compare_for_duty(&e, 0.5), 2200);
        assert_eq!(compare_for_duty(&c, 0.5), 1100);
        assert_eq!(compare_for_duty(&e, 1.0), 4400); // 100 % on (edge: period_ticks)
        assert_eq!(compare_for_duty(&e, 1.2), 4400);
        assert_eq!(compare_for_duty(&e, -0.1), 0);
        assert_eq!(compare_for_duty(&e, f64::NAN), 0);
        assert_eq!(compare_for_duty(&e, 0.1 / 4400.0), 0);
        assert_eq!(compare_for_duty(&e, 0.6 / 4400.0), 1);
    }

    #[test]
    fn smallest_divisor_by_hand() {
        // Divisors of 100: 1 2 4 5 10 20 25 50 100; of 420 = 20·21 (√420 = 20.5): 21 is next.
        assert_eq!(smallest_divisor_in(100, 11, 100, 1), Some(20));
        assert_eq!(smallest_divisor_in(100, 21, 100, 1), Some(25));
        assert_eq!(smallest_divisor_in(100, 11, 19, 1), None);
        assert_eq!(smallest_divisor_in(420, 21, 420, 1), Some(21));
        assert_eq!(smallest_divisor_in(97, 2, 96, 1), None); // 97 is prime
        assert_eq!(smallest_divisor_in(65_537, 2, 65_536, 2), None); // Fermat prime
    }

    // -----------------------------------------------------------------------------------------
    // Property tests against brute force
    // -----------------------------------------------------------------------------------------

    fn prescaler_strategy() -> impl Strategy<Value = Prescaler> {
        let lin = (1u64..=4, 0u64..=10, 0u64..=4).prop_map(|(min, span, off)| Prescaler::Linear {
            min_divider: min,
            max_divider: min + span,
            register_offset: off.min(min),
        });
        let ratios = prop::sample::subsequence((1u64..=40).collect::<Vec<_>>(), 1..=5)
            .prop_shuffle()
            .prop_map(|ratios| Prescaler::Ratios { ratios });
        prop_oneof![lin, ratios]
    }

    fn small_timer() -> impl Strategy<Value = TimerModel> {
        (1_000u32..=1_000_000, 8u32..=9, prescaler_strategy())
            .prop_map(|(clk, bits, p)| timer(f64::from(clk), bits, p, DeadTimeGenerator::None))
    }

    fn alignment() -> impl Strategy<Value = Alignment> {
        prop_oneof![Just(Alignment::Edge), Just(Alignment::Centre)]
    }

    /// All valid settings by brute force over every divider × every period.
    fn brute_settings(t: &TimerModel, al: Alignment) -> Vec<PwmSetting> {
        let p_cap = 1u64 << (t.counter_bits + 1);
        let mut v = Vec::new();
        for d in dividers_of(&t.prescaler) {
            for p in 1..=p_cap + 2 {
                if let Ok(s) = t.setting(d, p, al) {
                    v.push(s);
                }
            }
        }
        v
    }

    /// Largest product `divider · period_ticks` the timer can make with this alignment.
    fn max_product(t: &TimerModel, al: Alignment) -> f64 {
        let d_max = dividers_of(&t.prescaler).into_iter().max().unwrap_or(1);
        let (_, q_max) = t.duty_step_range(al);
        (d_max * q_max * unit(al)) as f64
    }

    /// A band between two products `x = (1.1 · max product)^r` (log-uniform, fractional, so
    /// band edges fall both on and between realisable products).
    fn band(t: &TimerModel, al: Alignment, r1: f64, r2: f64) -> (f64, f64) {
        let top = 1.1 * max_product(t, al);
        let (a, b) = (t.clock_hz / top.powf(r1), t.clock_hz / top.powf(r2));
        (a.min(b), a.max(b))
    }

    fn key(s: &PwmSetting) -> (u64, u64) {
        (s.divider, s.period_ticks)
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]

        #[test]
        fn enumeration_equals_brute_force(
            t in small_timer(), al in alignment(), r1 in 0.0f64..1.0, r2 in 0.0f64..1.0
        ) {
            let (f_min, f_max) = band(&t, al, r1, r2);
            let mut got: Vec<PwmSetting> = t.settings_in_band(f_min, f_max, al).unwrap().collect();
            for s in &got {
                // f = clock/(divider·period_ticks), evaluated independently; and in band.
                let f = t.clock_hz / s.divider as f64 / s.period_ticks as f64;
                prop_assert!((s.frequency_hz - f).abs() <= 1e-12 * f);
                prop_assert!(s.frequency_hz >= f_min && s.frequency_hz <= f_max);
                prop_assert_eq!(Ok(*s), t.setting(s.divider, s.period_ticks, al));
            }
            let mut want: Vec<PwmSetting> = brute_settings(&t, al)
                .into_iter()
                .filter(|s| s.frequency_hz >= f_min && s.frequency_hz <= f_max)
                .collect();
            got.sort_by_key(key);
            want.sort_by_key(key);
            prop_assert_eq!(got, want);
        }

        #[test]
        fn best_per_frequency_and_distinct_products_equal_brute_force(
            t in small_timer(), al in alignment(), r1 in 0.0f64..1.0, r2 in 0.0f64..1.0
        ) {
            let (f_min, f_max) = band(&t, al, r1, r2);
            let mut groups: BTreeMap<u64, PwmSetting> = BTreeMap::new();
            for s in brute_settings(&t, al) {
                if s.frequency_hz >= f_min && s.frequency_hz <= f_max {
                    let e = groups.entry(s.divider * s.period_ticks).or_insert(s);
                    if s.duty_steps > e.duty_steps {
                        *e = s;
                    }
                }
            }
            // Ascending frequency = descending product.
            let want: Vec<PwmSetting> = groups.into_values().rev().collect();
            let best = t.best_per_frequency(f_min, f_max, al).unwrap();
            let fast: Vec<PwmSetting> =
                t.distinct_products_in_band(f_min, f_max, al).unwrap().collect();
            prop_assert_eq!(&best, &want);
            prop_assert_eq!(&fast, &want);
            prop_assert!(best.windows(2).all(|w| w[0].frequency_hz < w[1].frequency_hz));
        }

        #[test]
        fn nearest_equals_brute_force(t in small_timer(), al in alignment(), r in -0.1f64..1.1) {
            let target = t.clock_hz / (1.1 * max_product(&t, al)).powf(r);
            let got = t.nearest_setting(target, al).unwrap();
            let want = brute_settings(&t, al).into_iter().min_by(|a, b| {
                let (ea, eb) = ((a.frequency_hz - target).abs(), (b.frequency_hz - target).abs());
                ea.partial_cmp(&eb)
                    .unwrap_or(Ordering::Equal)
                    .then(b.duty_steps.cmp(&a.duty_steps))
                    .then(a.divider.cmp(&b.divider))
            });
            prop_assert_eq!(got, want);
        }

        #[test]
        fn registers_round_trip(t in small_timer(), al in alignment(), r1 in 0.0f64..1.0, r2 in 0.0f64..1.0) {
            let (f_min, f_max) = band(&t, al, r1, r2);
            for s in t.settings_in_band(f_min, f_max, al).unwrap() {
                prop_assert_eq!(t.prescaler.divider_for_register(s.divider_register), Some(s.divider));
                prop_assert_eq!(
                    TimerModel::period_ticks_for_register(s.period_register, al),
                    Some(s.period_ticks)
                );
                prop_assert!(s.period_register < 1u64 << t.counter_bits);
            }
        }

        #[test]
        fn dead_time_is_smallest_cover(
            raw in prop::collection::vec((0u32..6, 1u32..12, 0u64..40, 1u64..9), 1..5),
            linear_max in prop::option::of(0u64..300),
            clock in 1_000_000u32..200_000_000,
            clock_divider in 1u64..5,
            k in 0u64..800,
            quarter in 0u64..4,
        ) {
            // Non-overlapping segments by construction: each starts after the previous one
            // plus a random gap.
            let mut next = 0u32;
            let segments: Vec<DeadTimeSegment> = raw.iter().map(|&(gap, count, base, step)| {
                let s = DeadTimeSegment { first_code: next + gap, count, base, step };
                next += gap + count;
                s
            }).collect();
            let generator = match linear_max {
                Some(max_ticks) => DeadTimeGenerator::Linear { clock_divider, max_ticks },
                None => DeadTimeGenerator::Segmented { clock_divider, segments: segments.clone() },
            };
            let t = timer(f64::from(clock), 16, linear(1, 1, 0), generator);
            let tick_hz = f64::from(clock) / clock_divider as f64;
            let need_s = (k as f64 + quarter as f64 / 4.0) / tick_hz;
            let need_ticks = k + u64::from(quarter > 0);
            // Brute force over every code.
            let codes: Vec<(u32, u64)> = match linear_max {
                Some(m) => (0..=m).map(|c| (c as u32, c)).collect(),
                None => segments.iter().flat_map(|s| (0..s.count).map(move |i| {
                    (s.first_code + i, (s.base + u64::from(i)) * s.step)
                })).collect(),
            };
            let want = codes.iter().filter(|c| c.1 >= need_ticks).min_by_key(|c| (c.1, c.0));
            let max_ticks = codes.iter().map(|c| c.1).max().unwrap_or(0);
            match (t.encode_dead_time(need_s), want) {
                (Ok(c), Some(&(code, ticks))) => {
                    prop_assert_eq!((c.code, c.ticks), (code, ticks));
                    prop_assert!(c.seconds >= need_s * (1.0 - 1e-12));
                    prop_assert_eq!(t.dead_time_ticks_for_code(c.code), Some(c.ticks));
                }
                (Err(DeadTimeError::OutOfRange { max_s }), None) => {
                    prop_assert!((max_s * tick_hz - max_ticks as f64).abs() < 1e-6);
                }
                (got, want) => prop_assert!(false, "got {:?}, want {:?}", got, want),
            }
        }

        #[test]
        fn segment_overlap_detection_matches_occupancy(
            raw in prop::collection::vec((0u32..40, 1u32..10), 1..5)
        ) {
            let segments: Vec<DeadTimeSegment> = raw.iter()
                .map(|&(first_code, count)| DeadTimeSegment { first_code, count, base: 0, step: 1 })
                .collect();
            let mut used = [0u32; 50];
            for s in &segments {
                for c in s.first_code..s.first_code + s.count {
                    used[c as usize] += 1;
                }
            }
            let overlap = used.iter().any(|&n| n > 1);
            let r = DeadTimeGenerator::Segmented { clock_divider: 1, segments }.validate();
            prop_assert_eq!(matches!(r, Err(DeadTimeConfigError::Overlap { .. })), overlap);
            prop_assert_eq!(r.is_ok(), !overlap);
        }

        #[test]
        fn duty_limits_respect_constraints(
            clock in 1_000_000u32..200_000_000,
            divider in 1u64..8,
            q in 2u64..5000,
            al in alignment(),
            complementary in any::<bool>(),
            dead_s in 0.0f64..20e-6,
            pulse_s in 0.0f64..20e-6,
            refresh in prop::option::of(0.0f64..20e-6),
        ) {
            let t = timer(f64::from(clock), 16, linear(1, 8, 1), DeadTimeGenerator::None);
            let s = t.setting(divider, q * unit(al), al).unwrap();
            let steps = s.duty_steps;
            let count_s = 1.0 / (s.frequency_hz * steps as f64);
            let dead = if complementary { dead_s } else { 0.0 };
            let tol = 1e-9;
            // Independent reference: a scan over every compare of the output pulses after the
            // dead time (high: c counts less the dead time; low: the rest less the dead time).
            // Non-empty: longer than nothing by more than rounding.
            let long = |t: f64, min: f64| {
                t >= min * (1.0 - tol) - 1e-18 && t > tol * count_s
            };
            let pulse = pulse_s;
            let on_ok = |c: u64| long(c as f64 * count_s - dead, pulse);
            let off_ok = |c: u64| {
                long((steps - c) as f64 * count_s - dead, pulse.max(refresh.unwrap_or(0.0)))
            };
            let min_c = (0..=steps).find(|&c| on_ok(c));
            let max_c = (0..=steps).rev().find(|&c| off_ok(c));
            let rules = PulseRules {
                complementary,
                dead_time_s: dead_s,
                min_pulse_s: pulse_s,
                refresh_s: refresh,
            };
            match (duty_limits(&s, &rules), min_c, max_c) {
                (Ok(l), Some(lo), Some(hi)) => {
                    prop_assert_eq!((l.min_counts, l.max_counts), (lo, hi));
                    prop_assert!(lo <= hi);
                    prop_assert!((l.count_s - count_s).abs() <= 1e-12 * count_s);
                    prop_assert!(l.shortest_high_pulse_s >= pulse * (1.0 - tol) - 1e-18);
                }
                (Err(DutyError::Infeasible { min_counts, max_counts }), lo, hi) => {
                    prop_assert!(min_counts > max_counts);
                    // Reference agrees that no count is both long enough on and allowed.
                    let consistent = match (lo, hi) {
                        (Some(a), Some(b)) => a > b,
                        _ => true,
                    };
                    prop_assert!(consistent);
                }
                (got, lo, hi) => prop_assert!(false, "got {:?}, ref {:?} {:?}", got, lo, hi),
            }
        }

        #[test]
        fn smallest_divisor_equals_brute_force(
            m in 1u64..20_000, d_lo in 1u64..300, span in 0u64..400, q_min in 1u64..4
        ) {
            // Preconditions of smallest_divisor_in: q_max = ⌊m/d_lo⌋ is implied, d_hi ≤ m/q_min.
            let d_hi = (d_lo + span).min(m / q_min);
            let want = (d_lo..=d_hi).find(|&d| m % d == 0 && m / d >= q_min);
            prop_assert_eq!(smallest_divisor_in(m, d_lo, d_hi, q_min), want);
        }

        #[test]
        fn compare_is_nearest_count(q in 2u64..100_000, duty in -0.5f64..1.5) {
            let t = timer(1e8, 32, linear(1, 1, 0), DeadTimeGenerator::None);
            let s = t.setting(1, q, Alignment::Edge).unwrap();
            let c = compare_for_duty(&s, duty);
            prop_assert!(c <= q);
            let clamped = duty.clamp(0.0, 1.0);
            prop_assert!((c as f64 / q as f64 - clamped).abs() <= 0.5 / q as f64 + 1e-12);
        }
    }
}
