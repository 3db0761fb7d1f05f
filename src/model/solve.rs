//! The solver: search the timer's realisable settings for the best one under
//! every constraint, and explain the choice (what binds, the feasible band,
//! alternatives) or the conflict (which constraints, the nearest compromise).
//!
//! **Invariant:** pure; infeasibility is a result, not an error. The search
//! visits realisable settings only: a continuous optimum is never snapped.
//!
//! Search: the realisable settings of each allowed alignment are listed as
//! one per distinct frequency (the one with the most duty steps, see
//! [`crate::model::timer::TimerModel::distinct_products_in_band`]). When they are
//! few ([`Search::exhaustive_limit`]) every one is evaluated. Otherwise a
//! log-spaced grid of realisable settings is evaluated first and then every
//! realisable setting in the bracket around the best grid point; this finds
//! the same optimum as the exhaustive search whenever the objective is
//! unimodal in frequency across the bracket, which holds for these models
//! (terms that grow with f — switching, gate drive — against terms that fall
//! — ripple conduction and copper loss).

use rayon::prelude::*;
use std::cmp::Ordering;

use serde::Serialize;

use crate::model::evaluate::{CaseResult, Evaluator, OperatingCase, ThreePhaseModulation};
use crate::model::physics::current_loop::RATE_ABOVE;
use crate::model::physics::params::{HBridgeModulation, Topology};
use crate::model::physics::sampling::{self, BrushedSampling, SamplingTimer, SenseState};
use crate::model::physics::three_phase::dc_link::{self, DcLinkTiming};
use crate::model::physics::three_phase::{self, Chop, SamplingWindow, ThreePhaseError};
use crate::model::range::{RangePoint, RangeResult, junction_key};
use crate::model::timer::{self, Alignment, DeadTimeError, DutyLimits, PwmSetting};

/// What the solver optimises.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Objective {
    /// Least total loss at the rated case (switches, diodes, gate drive,
    /// ripple copper loss).
    LeastLoss,
    /// The highest frequency whose total loss stays within
    /// [`QUIET_LOSS_ALLOWANCE`] of the least: furthest from the audible
    /// range and with the least ripple for a small price in loss.
    Quietest,
    /// The coolest hottest junction at the rated case.
    CoolestJunction,
    /// Least loss averaged over the operating range's time profile (the
    /// rated case's loss without one).
    LeastAverageLoss,
    /// Least loss at the operating range's worst point at the nominal
    /// supply (the rated case's without a range).
    LeastWorstLoss,
}

/// How much more loss the `quietest` objective accepts (10 %; our choice).
pub const QUIET_LOSS_ALLOWANCE: f64 = 0.10;

/// Search parameters.
#[derive(Debug, Clone, Copy)]
pub struct Search {
    /// At most this many settings are evaluated one by one; above it the
    /// grid-then-bracket search runs.
    pub exhaustive_limit: usize,
    /// Points of the log grid.
    pub grid_points: usize,
    /// When the grid finds nothing feasible, every setting is evaluated if
    /// there are at most this many.
    pub infeasible_exhaustive_limit: usize,
}

/// How much more a setting costs to judge over an operating range than at
/// the rated point alone (measured on the demo with a range: about 14×;
/// rounded up, our choice).
pub const RANGE_COST_FACTOR: usize = 16;

/// How much more a six-step setting costs to judge than a sinusoidal one:
/// each case is simulated switch by switch through its commutations
/// (measured on random designs: about 4 ms a simulation, six a setting,
/// against well under a millisecond a setting before; rounded, our choice).
pub const SIX_STEP_COST_FACTOR: usize = 20;

impl Search {
    /// The same search with its one-by-one limits cut by
    /// [`RANGE_COST_FACTOR`], so that judging over a range takes about as
    /// long as the rated point did (the grid is kept).
    pub fn over_range(self) -> Search {
        self.cut_by(RANGE_COST_FACTOR)
    }

    /// The one-by-one limits cut by `factor` (the grid is kept).
    pub fn cut_by(self, factor: usize) -> Search {
        Search {
            exhaustive_limit: self.exhaustive_limit / factor,
            infeasible_exhaustive_limit: self.infeasible_exhaustive_limit / factor,
            ..self
        }
    }
}

impl Default for Search {
    fn default() -> Search {
        Search {
            exhaustive_limit: 1500,
            grid_points: 96,
            infeasible_exhaustive_limit: 50_000,
        }
    }
}

/// One constraint at one setting.
#[derive(Debug, Clone, Serialize)]
pub struct ConstraintCheck {
    /// Stable kebab-case name.
    pub name: &'static str,
    /// The limit in SI units (`unit`).
    pub limit: f64,
    /// The value at the setting; `None` when it has none (runaway, not encodable).
    pub value: Option<f64>,
    /// Distance to the limit on the safe side, in `unit` (negative: violated).
    pub margin: Option<f64>,
    pub unit: &'static str,
    pub pass: bool,
    /// Moving the setting towards a better objective would break this one.
    pub binding: bool,
    /// One line on what the value is.
    pub detail: Detail,
}

impl ConstraintCheck {
    /// Make the verdict follow the margin: a check whose margin is on the
    /// wrong side of its limit never passes (whatever produced its verdict,
    /// e.g. a dead time encoded as zero ticks), and a failing check whose
    /// margin says it holds loses that margin (the margin does not say why
    /// it fails). Afterwards `pass == margin_holds(margin, limit)` for
    /// every check with a margin.
    pub fn settle(&mut self) {
        if let Some(m) = self.margin {
            if !margin_holds(m, self.limit) {
                self.pass = false;
            } else if !self.pass {
                self.margin = None;
            }
        }
    }
}

/// Whether a margin (distance to the limit on the safe side) holds: not
/// below zero by more than rounding, [`EPS`] absolute or 1e-12 of the limit.
pub fn margin_holds(margin: f64, limit: f64) -> bool {
    margin >= -EPS.max(1e-12 * limit.abs())
}

/// One line on what a constraint's value is, worded only when shown: the
/// search builds thousands of checks and shows a few.
#[derive(Debug, Clone, PartialEq)]
pub enum Detail {
    Text(std::borrow::Cow<'static, str>),
    /// Hottest junction at a case's supply and ambient.
    Junction {
        v_bus_v: f64,
        t_ambient_c: f64,
    },
    /// Ripple at the named supply.
    Ripple {
        v_bus_v: f64,
    },
    Audible(crate::model::physics::acoustics::AcousticReason),
    DutySteps(u64),
    DutyRange {
        needed: (f64, f64),
        allowed: (f64, f64),
    },
    FrequencyBand {
        min_hz: f64,
        max_hz: f64,
    },
    /// Another detail, found at a corner of the spreads.
    AtCorner(Box<Detail>, String),
    /// Another detail, found at a speed of the operating range (rad/s)
    /// and compare duty.
    AtSpeed(Box<Detail>, f64, f64),
}

impl From<&'static str> for Detail {
    fn from(s: &'static str) -> Detail {
        Detail::Text(s.into())
    }
}

impl From<String> for Detail {
    fn from(s: String) -> Detail {
        Detail::Text(s.into())
    }
}

impl std::fmt::Display for Detail {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Detail::Text(t) => f.write_str(t),
            Detail::Junction {
                v_bus_v,
                t_ambient_c,
            } => write!(
                f,
                "hottest junction at {} and {} ambient",
                fmt_v(*v_bus_v),
                fmt_c(*t_ambient_c)
            ),
            Detail::Ripple { v_bus_v } => {
                write!(
                    f,
                    "motor current ripple peak to peak at {}",
                    fmt_v(*v_bus_v)
                )
            }
            Detail::Audible(r) => write!(f, "{r}"),
            Detail::DutySteps(n) => write!(f, "{n} duty steps"),
            Detail::DutyRange { needed, allowed } => write!(
                f,
                "channel duty {:.3}–{:.3} needed, {:.3}–{:.3} allowed",
                needed.0, needed.1, allowed.0, allowed.1
            ),
            Detail::FrequencyBand { min_hz, max_hz } => {
                write!(f, "allowed {} to {}", fmt_f(*min_hz), fmt_f(*max_hz))
            }
            Detail::AtCorner(d, label) => write!(f, "{d} (corner {label})"),
            Detail::AtSpeed(d, n, duty) => {
                write!(f, "{d}, at {} (duty {duty:.3})", fmt_rpm(*n))
            }
        }
    }
}

impl Serialize for Detail {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

impl DeadTimeChoice {
    /// The smallest dead time the timer encodes at or above `need_s`; when
    /// none is long enough (or the timer has no generator) the need itself,
    /// with no code and the longest encodable value in `max_s`.
    pub fn encode(timer: &crate::model::timer::TimerModel, need_s: f64) -> DeadTimeChoice {
        let unencoded = |max_s| DeadTimeChoice {
            need_s,
            code: None,
            ticks: None,
            seconds: need_s,
            max_s: Some(max_s),
        };
        match timer.encode_dead_time(need_s) {
            Ok(c) => DeadTimeChoice {
                need_s,
                code: Some(c.code),
                ticks: Some(c.ticks),
                seconds: c.seconds,
                max_s: None,
            },
            Err(DeadTimeError::OutOfRange { max_s }) => unencoded(max_s),
            Err(_) => unencoded(0.0),
        }
    }
}

/// The dead time chosen for a setting.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct DeadTimeChoice {
    pub need_s: f64,
    /// Encoded: code, ticks, realised seconds.
    pub code: Option<u32>,
    pub ticks: Option<u64>,
    pub seconds: f64,
    /// Largest encodable dead time, when the need is out of range.
    pub max_s: Option<f64>,
}

/// A fully evaluated setting.
#[derive(Debug, Clone, Serialize)]
pub struct Candidate {
    pub setting: Setting,
    pub dead_time: DeadTimeChoice,
    pub duty_limits: Option<DutyLimitsOut>,
    /// Channel duties the load needs at rated current: lowest and highest
    /// over the supply range.
    pub duty_needed: (f64, f64),
    pub rated: CaseResult,
    pub high_bus: CaseResult,
    /// The setting over the design's operating range, when it gives one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub range: Option<RangeResult>,
    pub checks: Vec<ConstraintCheck>,
    pub feasible: bool,
    /// Three-phase: the current-sampling window at this setting.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sampling: Option<SamplingOut>,
    /// Three-phase with one DC-link shunt: the reading chain in counts at this setting.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dc_link: Option<DcLinkOut>,
}

/// A single DC-link shunt's reading at a three-phase setting.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct DcLinkOut {
    pub timing: DcLinkTiming,
    /// The highest modulation index the load needs (the lowest supply).
    pub needed_modulation: f64,
}

/// The low-side shunt sampling window of a three-phase setting.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SamplingOut {
    /// Compare value matched on the up-count at which the ADC starts.
    pub trigger_compare: u64,
    /// Time from the trigger to the counter top.
    pub trigger_before_top_s: f64,
    /// Shortest low-side reference time that holds the window.
    pub min_low_side_on_s: f64,
    /// The same as low-side gate on-time (one dead time shorter).
    pub min_low_side_gate_on_s: f64,
    /// Largest high-side duty of a sampled leg.
    pub max_high_side_duty: f64,
}

/// Serialisable copy of [`PwmSetting`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Setting {
    pub divider: u64,
    pub divider_register: u64,
    pub period_ticks: u64,
    pub period_register: u64,
    pub alignment: &'static str,
    pub frequency_hz: f64,
    pub duty_steps: u64,
    pub resolution_bits: f64,
}

#[derive(Debug, Clone, Copy, Serialize)]
pub struct DutyLimitsOut {
    pub min_counts: u64,
    pub max_counts: u64,
    pub min_duty: f64,
    pub max_duty: f64,
    /// High-side output on-time at `min_counts`, after the dead time, s.
    pub shortest_high_pulse_s: f64,
    /// Low-side output on-time (a single switch: off-time) at `max_counts`, s.
    pub shortest_low_pulse_s: f64,
}

impl From<DutyLimits> for DutyLimitsOut {
    fn from(d: DutyLimits) -> DutyLimitsOut {
        DutyLimitsOut {
            min_counts: d.min_counts,
            max_counts: d.max_counts,
            min_duty: d.min_duty,
            max_duty: d.max_duty,
            shortest_high_pulse_s: d.shortest_high_pulse_s,
            shortest_low_pulse_s: d.shortest_low_pulse_s,
        }
    }
}

fn alignment_name(a: Alignment) -> &'static str {
    match a {
        Alignment::Edge => "edge",
        Alignment::Centre => "centre",
    }
}

impl From<&PwmSetting> for Setting {
    fn from(s: &PwmSetting) -> Setting {
        Setting {
            divider: s.divider,
            divider_register: s.divider_register,
            period_ticks: s.period_ticks,
            period_register: s.period_register,
            alignment: alignment_name(s.alignment),
            frequency_hz: s.frequency_hz,
            duty_steps: s.duty_steps,
            resolution_bits: s.resolution_bits,
        }
    }
}

/// An alternative to the chosen setting and what it trades.
#[derive(Debug, Clone, Serialize)]
pub struct Alternative {
    pub label: &'static str,
    pub candidate: Candidate,
    pub trade: String,
}

/// The solver's answer.
#[derive(Debug, Clone, Serialize)]
pub struct Solution {
    pub objective: Objective,
    pub feasible: bool,
    /// The chosen setting; when infeasible, the nearest compromise.
    pub chosen: Option<Candidate>,
    /// Lowest and highest feasible frequency found.
    pub feasible_band_hz: Option<(f64, f64)>,
    pub alternatives: Vec<Alternative>,
    /// When infeasible: the plain explanation, one sentence per line.
    pub conflict: Vec<String>,
    /// How many settings were evaluated, and how many exist in the band.
    pub evaluated: usize,
    pub realisable: usize,
}

/// A margin counts as binding-close when within this share of the limit.
const EPS: f64 = 1e-9;

impl Evaluator {
    /// Dead time for a frequency-independent need, encoded by the timer:
    /// the need over the part spreads when known (slowest turn-off against
    /// fastest turn-on, see [`crate::model::spread::worst_dead_time_need`]), else
    /// the rated and high-bus turn-off against turn-on at typical values.
    pub fn dead_time_choice(&self) -> DeadTimeChoice {
        let need = if let Some(worst) = self.dead_time_need_override_s {
            worst
        } else if self.needs_dead_time() {
            [self.rated, self.high_bus]
                .iter()
                .filter_map(|c| self.dead_time_need_s(c))
                .fold(0.0, f64::max)
        } else {
            0.0
        };
        DeadTimeChoice::encode(&self.timer, need)
    }

    /// Channel duty range the load needs, from the compare duties of the
    /// high-bus case (lowest) and of the low-bus case (highest), each with
    /// the dead time and the drops counted ([`Evaluator::compare_duty`]):
    /// an H-bridge's leg B runs the complement of leg A, so a unipolar
    /// bridge swings 1 − d..d; a sinusoidal three-phase leg swings
    /// 1 − d..d around one half.
    pub fn duty_needed(&self, d_high_bus: f64, d_low_bus: f64) -> (f64, f64) {
        if let Some(tp) = &self.three_phase
            && let ThreePhaseModulation::Sinusoidal { .. } = tp.modulation
        {
            return (1.0 - d_low_bus, d_low_bus);
        }
        match self.stage.topology {
            Topology::HBridge(HBridgeModulation::Unipolar) => (1.0 - d_low_bus, d_low_bus),
            _ => (d_high_bus, d_low_bus),
        }
    }

    /// [`Self::duty_needed`] with the range's lowest compare duty (highest
    /// supply) and highest (lowest supply) joined in.
    pub fn duty_needed_over_range(
        &self,
        d_high_bus: f64,
        d_low_bus: f64,
        range: Option<&RangeResult>,
    ) -> (f64, f64) {
        let Some(r) = range else {
            return self.duty_needed(d_high_bus, d_low_bus);
        };
        let low = r.duty_low.map_or(d_high_bus, |e| e.value.min(d_high_bus));
        let high = r.duty_high.map_or(d_low_bus, |e| e.value.max(d_low_bus));
        self.duty_needed(low, high)
    }

    /// The modulation at the lowest supply (1 when the load is out of
    /// reach), the highest over the range's corner speeds when `over_range`:
    /// a three-phase bridge's sampling window is judged there.
    fn highest_modulation(&self, f_hz: f64, over_range: bool) -> f64 {
        let at_rated = self.modulation_for_load(&self.low_bus, f_hz).unwrap_or(1.0);
        let Some(r) = self
            .range
            .as_ref()
            .filter(|_| over_range && self.three_phase.is_some())
        else {
            return at_rated;
        };
        r.corner_speeds().into_iter().fold(at_rated, |m, n| {
            let case = self.range_case(r, &self.low_bus, n);
            let here = self.at_speed(n, |e| e.modulation_for_load(&case, f_hz));
            m.max(here.unwrap_or(1.0))
        })
    }

    /// The alignments the search may use. A three-phase bridge samples its
    /// currents in the low-side on-time around the top of an up-down count,
    /// and unipolar switching needs the two legs' pulses placed
    /// symmetrically on an up-down count (on one shared up-counter both legs
    /// start together and the load sees one pulse per period, not two):
    /// centre-aligned only.
    pub fn alignments(&self) -> Vec<Alignment> {
        let centre_only = self.three_phase.is_some()
            || matches!(
                self.stage.topology,
                Topology::HBridge(HBridgeModulation::Unipolar)
            );
        self.timer
            .alignments
            .iter()
            .copied()
            .filter(|a| !centre_only || *a == Alignment::Centre)
            .collect()
    }

    /// The current-sampling window of a three-phase bridge at a
    /// centre-aligned setting (`three_phase::sampling_window` with the
    /// counter's top P = duty steps and one tick = divider / clock).
    pub fn sampling_window(
        &self,
        s: &PwmSetting,
        t_dead_s: f64,
    ) -> Option<Result<SamplingWindow, ThreePhaseError>> {
        let tp = self.three_phase.as_ref().filter(|tp| !tp.dc_link)?;
        let p = u32::try_from(s.duty_steps).unwrap_or(u32::MAX);
        Some(three_phase::sampling_window(
            p,
            s.divider as f64 / self.timer.clock_hz,
            tp.settle_s,
            tp.sample_s,
            t_dead_s,
        ))
    }

    /// A three-phase bridge's single DC-link shunt at a setting (`dc_link::dc_link_timing`
    /// with one tick = divider / clock); `None` with low-side shunts.
    pub fn dc_link_timing(&self, s: &PwmSetting, t_dead_s: f64) -> Option<DcLinkTiming> {
        let tp = self.three_phase.as_ref().filter(|tp| tp.dc_link)?;
        let tick = s.divider as f64 / self.timer.clock_hz;
        dc_link::dc_link_timing(tick, tp.settle_s, tp.sample_s, t_dead_s)
    }

    /// The `sampling-window` constraint of a single DC-link shunt: the half period must hold
    /// two vectors of the reading's need, bounded by `2·(t_s + t_dead + t_settle + 2·tick)`
    /// (the counts' rounding taken at its bound, so a finer timer never fails where a coarser
    /// one holds), and the shifted compares must fit the counter at the needed modulation and at
    /// none (`dc_link::fits_at`, at the emitted counts).
    fn dc_link_check(
        &self,
        s: &PwmSetting,
        t: &DcLinkTiming,
        dead_s: f64,
        m_needed: f64,
    ) -> ConstraintCheck {
        let tick = s.divider as f64 / self.timer.clock_hz;
        let tp = self.three_phase.as_ref();
        let need_s = tp.map_or(0.0, |tp| tp.settle_s + tp.sample_s) + dead_s;
        let limit = 2.0 * (need_s + 2.0 * tick);
        // The half period: P counts of the up count.
        let half = s.duty_steps as f64 * tick;
        let zs = tp.map_or(three_phase::ZeroSequence::None, |tp| {
            tp.modulation.zero_sequence()
        });
        let p = s.duty_steps;
        let fits = [0.0, m_needed]
            .iter()
            .all(|&m| dc_link::fits_at(m, zs, p, t));
        let why = format!(
            "one DC-link shunt is read in two active vectors each period, each at least {} ({} counts: dead time, settling, sampling), the compares shifted apart where they are shorter; the half period must hold two",
            fmt_t(t.min_vector_counts as f64 * tick),
            t.min_vector_counts
        );
        let mut k = lower(
            "sampling-window",
            limit,
            Some(half),
            "s",
            why.clone().into(),
        );
        if !fits {
            k.pass = false;
            k.detail = format!(
                "{why}, and at modulation {m_needed:.3} a middle compare comes within half a vector of a counter extreme, where the shift does not fit"
            )
            .into();
        }
        k
    }

    /// A brushed stage's current sampling at a setting
    /// (`sampling::brushed_sampling`): `None` without current sensing,
    /// `Some(None)` when no duty holds the window.
    pub fn brushed_sampling(
        &self,
        s: &PwmSetting,
        t_dead_s: f64,
    ) -> Option<Option<BrushedSampling>> {
        let bs = self.sensing?;
        let t = self.sampling_timer(s, t_dead_s)?;
        Some(if self.samples_each_half_period(s) {
            sampling::phase_shunt_both_extremes(bs.stage, &t)
        } else {
            sampling::brushed_sampling(bs.stage, bs.place, &t)
        })
    }

    /// Whether a brushed loop samples and updates every half period at this setting: the
    /// board can (`BrushedSensing::half_period_rate_hz`), the setting is centre-aligned and
    /// the asked rate is above its PWM rate (by more than the rate's rounding,
    /// `current_loop::RATE_ABOVE`).
    pub fn samples_each_half_period(&self, s: &PwmSetting) -> bool {
        let asked = self.sensing.and_then(|b| b.half_period_rate_hz);
        s.alignment == Alignment::Centre && asked.is_some_and(|r| r > s.frequency_hz * RATE_ABOVE)
    }

    /// The timer setting and sensing chain a brushed stage's sampling window
    /// is built on (`None` without current sensing).
    pub fn sampling_timer(&self, s: &PwmSetting, t_dead_s: f64) -> Option<SamplingTimer> {
        let bs = self.sensing?;
        Some(SamplingTimer {
            centre: s.alignment == Alignment::Centre,
            duty_steps: s.duty_steps,
            tick_s: s.divider as f64 / self.timer.clock_hz,
            dead_s: if self.needs_dead_time() {
                t_dead_s
            } else {
                0.0
            },
            settle_s: bs.settle_s,
            acquire_s: bs.acquire_s,
        })
    }

    /// What the output pulses must respect at dead time `t_dead_s` (see
    /// [`timer::duty_limits`]): the board's minimum pulse, and on a
    /// bootstrapped bridge the low side's refresh time, both after the dead
    /// time.
    pub fn pulse_rules(&self, t_dead_s: f64) -> timer::PulseRules {
        timer::PulseRules {
            complementary: self.needs_dead_time(),
            dead_time_s: t_dead_s,
            min_pulse_s: self.timer.compare.min_pulse_s,
            refresh_s: self.stage.bootstrap_refresh_s,
        }
    }

    /// Evaluate one realisable setting against every constraint.
    pub fn candidate(&self, s: &PwmSetting, dead: &DeadTimeChoice) -> Option<Candidate> {
        let f = s.frequency_hz;
        let rated = self.case(&self.rated, f, dead.seconds)?;
        let high_bus = self.case(&self.high_bus, f, dead.seconds)?;
        // A range of one speed adds nothing to the rated point: not judged.
        let range = self
            .range
            .as_ref()
            .filter(|r| !r.is_single_speed())
            .map(|r| self.judge_range(r, f, dead.seconds, [&rated, &high_bus]));
        let d_low_bus = self
            .compare_duty_for_load(&self.low_bus, f, dead.seconds)
            .unwrap_or(1.0);
        // Six-step at one speed: the simulated compare duty (dead time and
        // hot R_ds(on) made up) is the chopping duty, one simulation fewer.
        let six_step = self
            .three_phase
            .as_ref()
            .is_some_and(|tp| matches!(tp.modulation, ThreePhaseModulation::SixStep { .. }));
        let m_low_bus = if six_step && range.is_none() {
            d_low_bus
        } else {
            self.highest_modulation(f, range.is_some())
        };
        let duty_needed =
            self.duty_needed_over_range(high_bus.compare_duty, d_low_bus, range.as_ref());
        let limits = timer::duty_limits(s, &self.pulse_rules(dead.seconds)).ok();
        let mut checks = Vec::new();
        let l = &self.limits;

        checks.extend(junction_checks(
            l.t_j_max_c,
            &rated,
            &high_bus,
            range.as_ref(),
        ));
        if let Some(max) = l.ripple_pp_max_a {
            checks.push(self.ripple_check(max, &rated, &high_bus, range.as_ref()));
        }
        checks.push(self.audible_check(&rated, &high_bus, range.as_ref()));
        if let Some(bits) = l.min_resolution_bits {
            checks.push(lower(
                "resolution",
                bits,
                Some(s.resolution_bits),
                "bits",
                Detail::DutySteps(s.duty_steps),
            ));
        }
        if self.needs_dead_time() {
            checks.push(dead_time_check(dead));
        }
        if let Some(v_max) = l.v_ds_peak_max_v {
            let corners = range.iter().flat_map(RangeResult::cases);
            checks.push(turn_off_peak_check(v_max, &rated, &high_bus, corners));
        }
        let unreachable = range.as_ref().and_then(|r| r.unreachable);
        checks.push(self.duty_range_check(limits, duty_needed, unreachable));
        let sampling = self.sampling_window(s, dead.seconds);
        if let Some(w) = &sampling {
            checks.push(self.sampling_check(w, &high_bus, m_low_bus));
        }
        let dc_link = self.dc_link_timing(s, dead.seconds);
        if let Some(t) = &dc_link {
            checks.push(self.dc_link_check(s, t, dead.seconds, m_low_bus));
        }
        if let Some(w) = self.brushed_sampling(s, dead.seconds) {
            // Leg A's lowest compare duty (the needed range of a unipolar bridge spans both
            // legs' duties): the highest supply's, or the range's lowest.
            let leg_a_low = range
                .as_ref()
                .and_then(|r| r.duty_low)
                .map_or(high_bus.compare_duty, |e| {
                    e.value.min(high_bus.compare_duty)
                });
            checks.push(brushed_sampling_check(w.as_ref(), duty_needed, leg_a_low));
        }
        checks.push(self.frequency_band_check(f));
        for k in &mut checks {
            k.settle();
        }
        let feasible = checks.iter().all(|c| c.pass);
        Some(Candidate {
            setting: s.into(),
            dead_time: *dead,
            duty_limits: limits.map(Into::into),
            duty_needed,
            rated,
            high_bus,
            range,
            checks,
            feasible,
            sampling: sampling.and_then(|w| w.ok()).map(|w| SamplingOut {
                trigger_compare: u64::from(w.trigger_compare),
                trigger_before_top_s: w.trigger_before_top_s,
                min_low_side_on_s: w.min_low_side_on_s,
                min_low_side_gate_on_s: w.min_low_side_gate_on_s,
                max_high_side_duty: w.max_high_side_duty,
            }),
            dc_link: dc_link.map(|timing| DcLinkOut {
                timing,
                needed_modulation: m_low_bus,
            }),
        })
    }

    /// The `ripple` constraint: the largest peak-to-peak ripple of the
    /// rated and the high-bus case and of the operating range against the
    /// design's limit `max` (a range point named when it is the worst).
    fn ripple_check(
        &self,
        max: f64,
        rated: &CaseResult,
        high_bus: &CaseResult,
        range: Option<&RangeResult>,
    ) -> ConstraintCheck {
        let worst = rated
            .ripple
            .peak_to_peak_a
            .max(high_bus.ripple.peak_to_peak_a);
        let at_supply = Detail::Ripple {
            v_bus_v: self.high_bus.v_bus_v,
        };
        let (value, detail) = match range.and_then(|r| r.ripple) {
            Some(e) if e.value > worst => (
                e.value,
                Detail::AtSpeed(
                    Box::new(Detail::Ripple {
                        v_bus_v: e.at.v_bus_v,
                    }),
                    e.at.speed_rad_s,
                    e.at.compare_duty,
                ),
            ),
            _ => (worst, at_supply),
        };
        upper("ripple", max, Some(value), "A", detail)
    }

    /// The `audible` constraint under the design's audibility mode: the
    /// ripple frequency against the hearing limit, or the count of lines in
    /// avoided bands, or nothing to measure when sound is allowed; over the
    /// rated and high-bus cases and the operating range's samples.
    fn audible_check(
        &self,
        rated: &CaseResult,
        high_bus: &CaseResult,
        range: Option<&RangeResult>,
    ) -> ConstraintCheck {
        let in_range = range.and_then(|r| r.audible.as_ref());
        let range_pass = in_range.is_none_or(|a| a.1.pass);
        let audible_pass = rated.acoustic.pass && high_bus.acoustic.pass && range_pass;
        let range_lines = in_range.map_or(0, |a| a.1.lines_in_avoided_bands_hz.len());
        let (a_limit, a_value) = match &self.audible {
            crate::model::physics::acoustics::AudibleMode::Inaudible { hearing_limit_hz } => {
                (*hearing_limit_hz, Some(rated.ripple.frequency_hz))
            }
            crate::model::physics::acoustics::AudibleMode::AvoidBands { .. } => (
                0.0,
                Some(
                    rated
                        .acoustic
                        .lines_in_avoided_bands_hz
                        .len()
                        .max(high_bus.acoustic.lines_in_avoided_bands_hz.len())
                        .max(range_lines) as f64,
                ),
            ),
            crate::model::physics::acoustics::AudibleMode::Allowed => (0.0, None),
        };
        let mut audible = ConstraintCheck {
            name: "audible",
            limit: a_limit,
            value: a_value,
            margin: None,
            unit: "Hz",
            pass: audible_pass,
            binding: false,
            detail: match in_range {
                _ if !rated.acoustic.pass => Detail::Audible(rated.acoustic.reason.clone()),
                _ if !high_bus.acoustic.pass => Detail::Audible(high_bus.acoustic.reason.clone()),
                Some((p, a)) if !a.pass => Detail::AtSpeed(
                    Box::new(Detail::Audible(a.reason.clone())),
                    p.speed_rad_s,
                    p.compare_duty,
                ),
                _ => Detail::Audible(rated.acoustic.reason.clone()),
            },
        };
        match &self.audible {
            crate::model::physics::acoustics::AudibleMode::Inaudible { hearing_limit_hz } => {
                // The verdict counts significant lines only: a fundamental
                // below the limit whose lines are all too weak to hear passes,
                // and then the distance to the limit is no margin.
                audible.margin = a_value
                    .map(|v| v - hearing_limit_hz)
                    .filter(|m| margin_holds(*m, *hearing_limit_hz) == audible_pass);
            }
            crate::model::physics::acoustics::AudibleMode::AvoidBands { .. } => {
                audible.unit = "lines";
                audible.margin = a_value.map(|v| if v == 0.0 { 0.0 } else { -v });
            }
            crate::model::physics::acoustics::AudibleMode::Allowed => audible.unit = "",
        }
        audible
    }

    /// The `duty-range` constraint: the duties needed (`duty_needed`, low
    /// and high end) inside the range the timer's `limits` leave; fails
    /// outright on a range point the lowest supply cannot reach.
    fn duty_range_check(
        &self,
        limits: Option<DutyLimits>,
        duty_needed: (f64, f64),
        unreachable: Option<RangePoint>,
    ) -> ConstraintCheck {
        let (duty_pass, duty_margin, duty_detail) = match limits {
            _ if unreachable.is_some() => (
                false,
                None,
                unreachable.map_or_else(
                    || "unreachable".into(),
                    |p| {
                        format!(
                            "the load at {} and {} is out of reach at the lowest supply {}",
                            fmt_rpm(p.speed_rad_s),
                            crate::input::units::format_quantity(
                                p.current_a,
                                crate::input::units::Dimension::Current,
                                3
                            ),
                            fmt_v(p.v_bus_v)
                        )
                        .into()
                    },
                ),
            ),
            Some(lim) => {
                let hi_margin = lim.max_duty - duty_needed.1;
                // Every stage: the lowest duty (highest supply, lowest
                // speed) must clear the minimum pulse too, or the drive
                // cannot hold that point.
                let lo_margin = duty_needed.0 - lim.min_duty;
                let m = hi_margin.min(lo_margin);
                (
                    m >= -EPS,
                    Some(m),
                    Detail::DutyRange {
                        needed: duty_needed,
                        allowed: (lim.min_duty, lim.max_duty),
                    },
                )
            }
            None => (
                false,
                None,
                "no duty range left between the minimum pulses and the bootstrap refresh".into(),
            ),
        };
        ConstraintCheck {
            name: "duty-range",
            limit: limits.map(|l| l.max_duty).unwrap_or(0.0),
            value: Some(duty_needed.1),
            margin: duty_margin,
            unit: "",
            pass: duty_pass,
            binding: false,
            detail: duty_detail,
        }
    }

    /// The `frequency-band` constraint: the band the design allows (the
    /// solver searches only inside it; a sweep or a pinned frequency may
    /// step outside).
    fn frequency_band_check(&self, f: f64) -> ConstraintCheck {
        let l = &self.limits;
        let in_band = f >= l.f_min_hz * (1.0 - 1e-12) && f <= l.f_max_hz * (1.0 + 1e-12);
        let (band_limit, band_margin) = band_bound(f, l.f_min_hz, l.f_max_hz);
        ConstraintCheck {
            name: "frequency-band",
            limit: band_limit,
            value: Some(f),
            margin: Some(band_margin),
            unit: "Hz",
            pass: in_band,
            binding: false,
            detail: Detail::FrequencyBand {
                min_hz: l.f_min_hz,
                max_hz: l.f_max_hz,
            },
        }
    }

    /// The `sampling-window` constraint: the sampled leg's high-side duty
    /// at the highest modulation (low supply) must leave the low-side time
    /// the window needs; with six-step low-side chopping the chopping low
    /// side carries the current only while on, so its duty at the lowest
    /// modulation (high supply) must be at least that time.
    fn sampling_check(
        &self,
        w: &Result<SamplingWindow, ThreePhaseError>,
        high_bus: &CaseResult,
        m_low_bus: f64,
    ) -> ConstraintCheck {
        let low_side_chop = self.three_phase.as_ref().is_some_and(|tp| {
            tp.modulation
                == ThreePhaseModulation::SixStep {
                    chop: Chop::LowSide,
                }
        });
        let sampled = |m: f64| {
            self.three_phase
                .as_ref()
                .map(|tp| tp.modulation.sampled_leg_duty_max(m))
                .unwrap_or(m)
        };
        match w {
            Err(ThreePhaseError::NoSamplingWindow {
                min_low_side_on_s,
                period_s,
            }) => no_sampling_window(
                format!(
                    "settling, dead time and sampling need {} of low-side time, not less than the period {}",
                    fmt_t(*min_low_side_on_s),
                    fmt_t(*period_s)
                )
                .into(),
            ),
            Err(e) => no_sampling_window(format!("no sampling window: {e:?}").into()),
            Ok(win) if low_side_chop => {
                let need = 1.0 - win.max_high_side_duty;
                lower(
                    "sampling-window",
                    need,
                    Some(high_bus.modulation),
                    "",
                    format!(
                        "the chopping low side must stay on {} around the counter top (settle, dead time, sample); its duty at the highest supply must be at least {:.1} %",
                        fmt_t(win.min_low_side_on_s),
                        100.0 * need
                    )
                    .into(),
                )
            }
            Ok(win) => upper(
                "sampling-window",
                win.max_high_side_duty,
                Some(sampled(m_low_bus)),
                "",
                format!(
                    "the sampled leg's low side must stay on {} around the counter top (settle, dead time, sample), so its high-side duty at most {:.1} %",
                    fmt_t(win.min_low_side_on_s),
                    100.0 * win.max_high_side_duty
                )
                .into(),
            ),
        }
    }
}

/// A failed `sampling-window` constraint without a value: no duty holds the window.
fn no_sampling_window(detail: Detail) -> ConstraintCheck {
    ConstraintCheck {
        name: "sampling-window",
        limit: 0.0,
        value: None,
        margin: None,
        unit: "",
        pass: false,
        binding: false,
        detail,
    }
}

/// The `sampling-window` constraint of a brushed stage: the needed compare
/// duties `(low, high)` inside the duties at which the sensed state holds
/// settling, dead time and acquisition (`sampling::brushed_sampling`); a
/// unipolar bridge's active state bounds leg A's lowest compare duty
/// `leg_a_low` (its needed range spans both legs, whose zero state at the
/// top the symmetric window bounds on both).
fn brushed_sampling_check(
    w: Option<&BrushedSampling>,
    needed: (f64, f64),
    leg_a_low: f64,
) -> ConstraintCheck {
    let Some(w) = w else {
        return no_sampling_window(
            "settling, dead time and sampling do not fit in the sensed switching state at any duty"
                .into(),
        );
    };
    let state = match w.state {
        SenseState::On => "on-time",
        SenseState::Off => "off-time",
        SenseState::Active => "active state (leg A high, leg B low)",
    };
    let why = format!(
        "the shunt is read in the middle of the {state}, which must last {} (dead time, settle, sample)",
        fmt_t(w.min_state_s)
    );
    let low = if w.state == SenseState::Active {
        leg_a_low
    } else {
        needed.0
    };
    let at_least = |why: &str| {
        lower(
            "sampling-window",
            w.duty_min,
            Some(low),
            "",
            format!("{why}: compare duty at least {:.1} %", 100.0 * w.duty_min).into(),
        )
    };
    let at_most = |why: &str| {
        upper(
            "sampling-window",
            w.duty_max,
            Some(needed.1),
            "",
            format!("{why}: compare duty at most {:.1} %", 100.0 * w.duty_max).into(),
        )
    };
    if w.top_trigger.is_none() {
        return if w.duty_min > 0.0 {
            at_least(&why)
        } else {
            at_most(&why)
        };
    }
    // Read at both extremes: the on-time bounds the lowest duty, the off-time the highest;
    // the check states the side with the least margin.
    let both = format!(
        "the shunt is read every half period, in the middle of the on-time and of the off-time, each of which must last {} (dead time, settle, sample)",
        fmt_t(w.min_state_s)
    );
    let (lo, hi) = (at_least(&both), at_most(&both));
    let lo_m = lo.margin.unwrap_or(f64::NEG_INFINITY);
    if lo_m <= hi.margin.unwrap_or(f64::NEG_INFINITY) {
        lo
    } else {
        hi
    }
}

/// The junction-temperature constraints at the rated and the high-bus
/// case, each with the operating range's corners on its supply, against
/// the limit `t_j_max_c` (a runaway names itself; a range corner hotter
/// than the rated speed is named).
fn junction_checks(
    t_j_max_c: f64,
    rated: &CaseResult,
    high_bus: &CaseResult,
    range: Option<&RangeResult>,
) -> [ConstraintCheck; 2] {
    let worse = |base: &CaseResult, corners: Option<&[(f64, CaseResult)]>| match corners
        .and_then(RangeResult::hottest)
    {
        Some((n, h)) if junction_key(h) > junction_key(base) => (h.clone(), Some(*n)),
        _ => (base.clone(), None),
    };
    let nominal = worse(rated, range.map(|r| r.corners_nominal.as_slice()));
    let high = worse(high_bus, range.map(|r| r.corners_high_bus.as_slice()));
    [("junction-rated", nominal), ("junction-high-bus", high)].map(|(name, (r, speed))| {
        let detail = match (&r.runaway, r.junction_c) {
            (Some(why), _) => why.clone().into(),
            (None, Some(_)) => Detail::Junction {
                v_bus_v: r.case.v_bus_v,
                t_ambient_c: r.case.t_ambient_c,
            },
            (None, None) => "no junction temperature".into(),
        };
        let detail = match speed {
            Some(n) => Detail::AtSpeed(Box::new(detail), n, r.compare_duty),
            None => detail,
        };
        upper(name, t_j_max_c, r.junction_c, "°C", detail)
    })
}

/// The `turn-off-peak` constraint: the highest drain voltage at any hard
/// turn-off of the rated and high-bus cases and the range's `corners`
/// (the loop inductance's overshoot on the bus) stays at or below V_DSS
/// less the board's margin.
fn turn_off_peak_check<'a>(
    v_max_v: f64,
    rated: &'a CaseResult,
    high_bus: &'a CaseResult,
    corners: impl Iterator<Item = &'a (f64, CaseResult)>,
) -> ConstraintCheck {
    let peak = |r: &CaseResult| {
        r.devices
            .iter()
            .filter_map(|d| d.v_peak_off_v)
            .reduce(f64::max)
    };
    let (case, value) = match (peak(rated), peak(high_bus)) {
        (Some(a), Some(b)) if a > b => (rated, Some(a)),
        (_, Some(b)) => (high_bus, Some(b)),
        (a, None) => (rated, a),
    };
    let mut at_speed = None;
    let (mut case, mut value) = (case, value);
    for (n, k) in corners {
        if let Some(p) = peak(k)
            && value.is_none_or(|best| p > best)
        {
            (case, value, at_speed) = (k, Some(p), Some(*n));
        }
    }
    let detail = format!(
        "highest drain voltage at a hard turn-off ({} supply{}), loop inductance's overshoot included",
        crate::input::units::format_quantity(
            case.case.v_bus_v,
            crate::input::units::Dimension::Voltage,
            3
        ),
        at_speed.map_or(String::new(), |n| format!(", {}", fmt_rpm(n)))
    );
    upper("turn-off-peak", v_max_v, value, "V", detail.into())
}

/// The `dead-time` constraint: encoded, and at least as long as needed (a
/// code whose ticks round to nothing is no dead time).
fn dead_time_check(dead: &DeadTimeChoice) -> ConstraintCheck {
    let dt_ok = dead.code.is_some() && margin_holds(dead.seconds - dead.need_s, dead.need_s);
    ConstraintCheck {
        name: "dead-time",
        limit: dead.max_s.unwrap_or(dead.seconds),
        value: Some(dead.need_s),
        margin: dead
            .max_s
            .map(|m| m - dead.need_s)
            .or(Some(dead.seconds - dead.need_s)),
        unit: "s",
        pass: dt_ok,
        binding: false,
        detail: if dt_ok {
            "dead time needed; the timer encodes the next value up".into()
        } else if dead.code.is_some() {
            "the encoded dead time is shorter than needed".into()
        } else if dead.max_s == Some(0.0) {
            "the timer has no dead-time generator but the bridge needs one".into()
        } else {
            "the dead time needed exceeds what the generator encodes".into()
        },
    }
}

fn fmt_t(t: f64) -> String {
    crate::input::units::format_quantity(t, crate::input::units::Dimension::Time, 3)
}

/// A speed in rpm, to the nearest whole rpm.
fn fmt_rpm(n_rad_s: f64) -> String {
    format!("{:.0} rpm", n_rad_s * 30.0 / std::f64::consts::PI)
}

fn fmt_v(v: f64) -> String {
    crate::input::units::format_quantity(v, crate::input::units::Dimension::Voltage, 3)
}

fn fmt_c(t_c: f64) -> String {
    crate::input::units::format_quantity(t_c, crate::input::units::Dimension::Temperature, 3)
}

fn fmt_a(i_a: f64) -> String {
    crate::input::units::format_quantity(i_a, crate::input::units::Dimension::Current, 3)
}

/// A check that `value` stays at or below `limit`.
fn upper(
    name: &'static str,
    limit: f64,
    value: Option<f64>,
    unit: &'static str,
    detail: Detail,
) -> ConstraintCheck {
    bound(name, limit, value, value.map(|v| limit - v), unit, detail)
}

/// A check that `value` stays at or above `limit`.
fn lower(
    name: &'static str,
    limit: f64,
    value: Option<f64>,
    unit: &'static str,
    detail: Detail,
) -> ConstraintCheck {
    bound(name, limit, value, value.map(|v| v - limit), unit, detail)
}

/// A check that passes when its margin (distance on the safe side) is not
/// negative.
fn bound(
    name: &'static str,
    limit: f64,
    value: Option<f64>,
    margin: Option<f64>,
    unit: &'static str,
    detail: Detail,
) -> ConstraintCheck {
    ConstraintCheck {
        name,
        limit,
        value,
        margin,
        unit,
        pass: margin.is_some_and(|m| m >= -EPS),
        binding: false,
        detail,
    }
}

/// The bound of the band `[f_min, f_max]` a frequency is measured against
/// and its margin: the nearer bound (the one that binds when the band
/// binds, and the one crossed when outside), margin positive inside.
pub fn band_bound(f_hz: f64, f_min_hz: f64, f_max_hz: f64) -> (f64, f64) {
    let (below, above) = (f_hz - f_min_hz, f_max_hz - f_hz);
    if below <= above {
        (f_min_hz, below)
    } else {
        (f_max_hz, above)
    }
}

/// Significant decimal digits of a frequency in Hz (fewer is rounder).
pub fn roundness_digits(f_hz: f64) -> u32 {
    for digits in 1..=15u32 {
        let scale = 10f64.powi(digits as i32 - 1 - f_hz.abs().log10().floor() as i32);
        let r = (f_hz * scale).round() / scale;
        if ((r - f_hz) / f_hz).abs() < 1e-12 {
            return digits;
        }
    }
    16
}

/// Objective value at a candidate (smaller is better).
fn objective_value(obj: Objective, c: &Candidate) -> f64 {
    match obj {
        Objective::LeastLoss | Objective::Quietest => c.rated.losses.total,
        Objective::CoolestJunction => c.rated.junction_c.unwrap_or(f64::INFINITY),
        Objective::LeastAverageLoss => c
            .range
            .as_ref()
            .and_then(|r| r.profile.as_ref())
            .map_or(c.rated.losses.total, |p| p.mean_loss_w),
        Objective::LeastWorstLoss => c
            .range
            .as_ref()
            .and_then(|r| r.loss)
            .map_or(c.rated.losses.total, |e| e.value.max(c.rated.losses.total)),
    }
}

/// Total order used to choose: objective, then more resolution, then a
/// rounder frequency, then the lower frequency (a deterministic last word).
pub fn better(obj: Objective, a: &Candidate, b: &Candidate, loss_floor: Option<f64>) -> Ordering {
    let key = |c: &Candidate| match (obj, loss_floor) {
        (Objective::Quietest, Some(floor)) => {
            if c.rated.losses.total <= floor * (1.0 + QUIET_LOSS_ALLOWANCE) {
                -c.setting.frequency_hz
            } else {
                f64::INFINITY
            }
        }
        _ => objective_value(obj, c),
    };
    key(a)
        .total_cmp(&key(b))
        .then(
            b.setting
                .resolution_bits
                .total_cmp(&a.setting.resolution_bits),
        )
        .then(
            roundness_digits(a.setting.frequency_hz).cmp(&roundness_digits(b.setting.frequency_hz)),
        )
        .then(a.setting.frequency_hz.total_cmp(&b.setting.frequency_hz))
}

/// Every realisable setting in the band, one per distinct frequency and
/// alignment, sorted by frequency.
pub fn realisable(ev: &Evaluator) -> Vec<PwmSetting> {
    let l = &ev.limits;
    let mut all = Vec::new();
    for a in &ev.alignments() {
        if let Ok(it) = ev
            .timer
            .distinct_products_in_band(l.f_min_hz, l.f_max_hz, *a)
        {
            all.extend(it);
        }
    }
    all.sort_by(|a, b| {
        a.frequency_hz
            .total_cmp(&b.frequency_hz)
            .then(b.duty_steps.cmp(&a.duty_steps))
    });
    all
}

/// Solve with the default search.
pub fn solve(ev: &Evaluator, obj: Objective) -> Solution {
    solve_with(ev, obj, Search::default())
}

/// Solve; `search` sets the exhaustive limit and the grid.
pub fn solve_with(ev: &Evaluator, obj: Objective, search: Search) -> Solution {
    solve_judged(&Judge::typical(ev), obj, search)
}

/// Solve with every setting judged against the worst of `corners` (and
/// the typical values): `plan --worst-case`.
pub fn solve_worst_case(
    ev: &Evaluator,
    corners: &[(String, Evaluator)],
    obj: Objective,
) -> Solution {
    solve_judged(
        &Judge {
            ev,
            corners,
            dead: ev.dead_time_choice(),
        },
        obj,
        Search::default(),
    )
}

/// How a setting is judged: at typical values, or against every corner.
#[derive(Clone, Copy)]
pub struct Judge<'a> {
    pub ev: &'a Evaluator,
    /// Corner evaluators; empty for typical values.
    pub corners: &'a [(String, Evaluator)],
    pub dead: DeadTimeChoice,
}

impl<'a> Judge<'a> {
    /// Typical values with the dead time they need.
    pub fn typical(ev: &'a Evaluator) -> Judge<'a> {
        Judge {
            ev,
            corners: &[],
            dead: ev.dead_time_choice(),
        }
    }

    /// The candidate at `s`. Against corners: each constraint keeps its
    /// worst margin over the typical values and every corner (its detail
    /// names the corner), and the figures are those of the corner with the
    /// most loss, so the objective is the worst-case loss.
    pub fn candidate(&self, s: &PwmSetting) -> Option<Candidate> {
        let mut worst = self.ev.candidate(s, &self.dead)?;
        for (label, ev) in self.corners {
            let c = ev.candidate(s, &self.dead)?;
            for k in &mut worst.checks {
                let Some(o) = c.checks.iter().find(|o| o.name == k.name) else {
                    continue;
                };
                let worse = match (o.pass, k.pass) {
                    (false, true) => true,
                    (true, false) => false,
                    _ => {
                        o.margin.unwrap_or(f64::NEG_INFINITY)
                            < k.margin.unwrap_or(f64::NEG_INFINITY)
                    }
                };
                if worse {
                    *k = o.clone();
                    k.detail = Detail::AtCorner(Box::new(o.detail.clone()), label.clone());
                }
            }
            if c.rated.losses.total > worst.rated.losses.total {
                worst.rated = c.rated;
                worst.high_bus = c.high_bus;
                worst.duty_needed = c.duty_needed;
            }
        }
        worst.feasible = worst.checks.iter().all(|k| k.pass);
        Some(worst)
    }
}

fn solve_judged(judge: &Judge, obj: Objective, search: Search) -> Solution {
    // A range of one speed costs one more point, not a scan: no cut.
    let scanned = judge
        .ev
        .range
        .as_ref()
        .is_some_and(|r| !r.is_single_speed());
    let search = if scanned { search.over_range() } else { search };
    let six_step = judge
        .ev
        .three_phase
        .as_ref()
        .is_some_and(|tp| matches!(tp.modulation, ThreePhaseModulation::SixStep { .. }));
    let search = if six_step {
        search.cut_by(SIX_STEP_COST_FACTOR)
    } else {
        search
    };
    let ev = judge.ev;
    let all = realisable(ev);
    // A setting below the resolution limit fails whatever the physics says,
    // so the search runs over the others only; along that list every
    // remaining constraint varies smoothly with frequency. When none is
    // fine enough the whole list is searched, to explain the conflict.
    let fine_enough: Vec<PwmSetting> = all
        .iter()
        .filter(|s| {
            ev.limits
                .min_resolution_bits
                .is_none_or(|b| s.resolution_bits >= b - EPS)
        })
        .copied()
        .collect();
    if !fine_enough.is_empty() && fine_enough.len() < all.len() {
        let first = search_list(judge, obj, search, fine_enough);
        if first.feasible {
            return Solution {
                realisable: all.len(),
                ..first
            };
        }
        // Nothing fine enough is feasible: the nearest compromise may be a
        // coarser setting, so look at the whole list.
        let whole = search_list(judge, obj, search, all.clone());
        return Solution {
            realisable: all.len(),
            evaluated: whole.evaluated + first.evaluated,
            ..whole
        };
    }
    search_list(judge, obj, search, all)
}

/// Search one list of settings (sorted by frequency).
fn search_list(
    judge: &Judge,
    obj: Objective,
    search: Search,
    settings: Vec<PwmSetting>,
) -> Solution {
    let mut ev = Evaluations::new(judge, &settings);
    if settings.len() <= search.exhaustive_limit {
        let all: Vec<usize> = (0..settings.len()).collect();
        ev.all(&all);
        return finish(judge, obj, settings.len(), &settings, ev.cands, ev.count);
    }
    let n = settings.len();
    let grid: Vec<usize> = grid_indices(&settings, search.grid_points);
    ev.all(&grid);
    bracket_best_grid_point(&mut ev, obj, &grid);
    refine_feasibility_edges(&mut ev, &grid);
    // The grid found nothing feasible: feasibility may come in islands the
    // grid stepped over, so look at every setting (when that is affordable)
    // before calling the design infeasible.
    if !ev.cands.iter().flatten().map(|c| &**c).any(|c| c.feasible)
        && n <= search.infeasible_exhaustive_limit
    {
        let all: Vec<usize> = (0..n).collect();
        ev.all(&all);
    }
    if obj == Objective::Quietest {
        find_quiet_edge(&mut ev, &grid);
    }
    finish(judge, obj, settings.len(), &settings, ev.cands, ev.count)
}

/// The candidates of one list of settings as far as the search has
/// evaluated them, and how many settings that took.
struct Evaluations<'s, 'j> {
    judge: &'s Judge<'j>,
    settings: &'s [PwmSetting],
    /// Boxed: a candidate is over a kilobyte and most settings are never
    /// evaluated.
    cands: Vec<Option<Box<Candidate>>>,
    count: usize,
}

impl<'s, 'j> Evaluations<'s, 'j> {
    /// Nothing evaluated yet.
    fn new(judge: &'s Judge<'j>, settings: &'s [PwmSetting]) -> Self {
        Evaluations {
            judge,
            settings,
            cands: vec![None; settings.len()],
            count: 0,
        }
    }

    /// The candidate at index `i`, if evaluated and evaluable.
    fn at(&self, i: usize) -> Option<&Candidate> {
        self.cands[i].as_deref()
    }

    /// Evaluate the setting at index `i` unless it already is.
    fn one(&mut self, i: usize) {
        if self.cands[i].is_some() {
            return;
        }
        let (c, n) = candidate_at_frequency(self.judge, &self.settings[i]);
        self.cands[i] = c.map(Box::new);
        self.count += n;
    }

    /// Evaluate the settings at `indices` not yet evaluated. Independent
    /// settings are evaluated on every core; the results do not depend on
    /// the order, so the choice is the same on any machine.
    fn all(&mut self, indices: &[usize]) {
        let (judge, settings, cands) = (self.judge, self.settings, &self.cands);
        let fresh: Vec<(usize, Option<Box<Candidate>>, usize)> = indices
            .par_iter()
            .filter(|&&i| cands[i].is_none())
            .map(|&i| {
                let (c, n) = candidate_at_frequency(judge, &settings[i]);
                (i, c.map(Box::new), n)
            })
            .collect();
        for (i, c, n) in fresh {
            self.cands[i] = c;
            self.count += n;
        }
    }
}

/// Evaluate every setting between the grid neighbours of the best grid
/// point (feasible first, else least violation). The quietest objective
/// needs the exact least loss first: it brackets the least-loss point.
fn bracket_best_grid_point(ev: &mut Evaluations, obj: Objective, grid: &[usize]) {
    let n = ev.settings.len();
    let bracket_obj = if obj == Objective::Quietest {
        Objective::LeastLoss
    } else {
        obj
    };
    let best_grid = grid
        .iter()
        .copied()
        .filter(|&i| ev.at(i).is_some())
        .min_by(|&a, &b| rank(bracket_obj, ev.at(a), ev.at(b), None));
    if let Some(g) = best_grid {
        let pos = grid.iter().position(|&i| i == g).unwrap_or(0);
        let lo = if pos == 0 { 0 } else { grid[pos - 1] };
        let hi = if pos + 1 >= grid.len() {
            n - 1
        } else {
            grid[pos + 1]
        };
        let bracket: Vec<usize> = (lo..=hi).collect();
        ev.all(&bracket);
    }
}

/// Refine every feasibility edge between grid neighbours by bisection, so
/// the feasible band, and an optimum on its edge, are exact.
fn refine_feasibility_edges(ev: &mut Evaluations, grid: &[usize]) {
    for w in grid.windows(2) {
        let (a, b) = (w[0], w[1]);
        let fa = ev.at(a).map(|c| c.feasible);
        let fb = ev.at(b).map(|c| c.feasible);
        if fa != fb {
            let (mut lo, mut hi) = (a, b);
            while hi - lo > 1 {
                let mid = (lo + hi) / 2;
                ev.one(mid);
                if ev.at(mid).map(|c| c.feasible) == fa {
                    lo = mid
                } else {
                    hi = mid
                }
            }
        }
    }
}

/// For the quietest objective: above the least-loss point the loss rises
/// with frequency, so the settings within the allowance end at one edge;
/// find it by bisection between the last grid point inside and the next,
/// then evaluate its neighbours for the binding marks.
fn find_quiet_edge(ev: &mut Evaluations, grid: &[usize]) {
    let n = ev.settings.len();
    let floor = loss_floor(Objective::Quietest, ev.cands.iter().flatten().map(|c| &**c));
    let Some(floor) = floor else {
        return;
    };
    let inside = |c: Option<&Candidate>| {
        c.is_some_and(|c| {
            c.feasible && c.rated.losses.total <= floor * (1.0 + QUIET_LOSS_ALLOWANCE)
        })
    };
    let Some(pos) = grid.iter().rposition(|&i| inside(ev.at(i))) else {
        return;
    };
    let mut lo = grid[pos];
    let mut hi = grid.get(pos + 1).copied().unwrap_or(n - 1);
    if lo != hi {
        ev.one(hi);
        if inside(ev.at(hi)) {
            lo = hi;
        }
        let next_grid = hi;
        while hi - lo > 1 {
            let mid = (lo + hi) / 2;
            ev.one(mid);
            if inside(ev.at(mid)) {
                lo = mid
            } else {
                hi = mid
            }
        }
        // Coarse duty counts can make feasibility flicker from one
        // setting to the next, so the bisection may stop short: look at
        // the settings up to the next grid point (at most QUIET_EDGE_SCAN
        // of them, a bound of our own choice).
        let end = next_grid.min(lo + QUIET_EDGE_SCAN);
        for i in lo + 1..=end {
            ev.one(i);
            if inside(ev.at(i)) {
                lo = i;
            }
        }
    }
    // The neighbours, for the binding marks.
    for i in [lo.saturating_sub(1), (lo + 1).min(n - 1)] {
        ev.one(i);
    }
}

/// The candidate at a setting's frequency: the listed setting (the most
/// duty steps), or, when only the duty range fails, another divider of the
/// same frequency whose coarser counts round the duty limits favourably.
/// Returns the candidate and how many settings were evaluated.
fn candidate_at_frequency(judge: &Judge, s: &PwmSetting) -> (Option<Candidate>, usize) {
    let ev = judge.ev;
    let Some(c) = judge.candidate(s) else {
        return (None, 1);
    };
    let only_duty = !c.feasible
        && c.checks
            .iter()
            .filter(|k| !k.pass)
            .all(|k| k.name == "duty-range");
    if !only_duty {
        return (Some(c), 1);
    }
    let mut n = 1;
    for alt in same_frequency_settings(ev, s) {
        n += 1;
        if let Some(a) = judge.candidate(&alt)
            && a.feasible
        {
            return (Some(a), n);
        }
    }
    (Some(c), n)
}

/// Every other realisable setting with the same divider × period product
/// (so the same frequency), most duty steps first.
fn same_frequency_settings(ev: &Evaluator, s: &PwmSetting) -> Vec<PwmSetting> {
    let product = s.divider * s.period_ticks;
    let dividers: Vec<u64> = match &ev.timer.prescaler {
        crate::model::timer::Prescaler::Ratios { ratios } => ratios.clone(),
        crate::model::timer::Prescaler::Linear {
            min_divider,
            max_divider,
            ..
        } => {
            let mut d = Vec::new();
            let mut k = 1u64;
            while k * k <= product {
                if product.is_multiple_of(k) {
                    for x in [k, product / k] {
                        if (*min_divider..=*max_divider).contains(&x) {
                            d.push(x);
                        }
                    }
                }
                k += 1;
            }
            d
        }
    };
    let mut out: Vec<PwmSetting> = dividers
        .into_iter()
        .filter(|&d| d != s.divider && product.is_multiple_of(d))
        .filter_map(|d| ev.timer.setting(d, product / d, s.alignment).ok())
        .collect();
    out.sort_by(|a, b| {
        b.duty_steps
            .cmp(&a.duty_steps)
            .then(a.divider.cmp(&b.divider))
    });
    out.dedup_by_key(|x| x.divider);
    out
}

fn grid_indices(settings: &[PwmSetting], points: usize) -> Vec<usize> {
    let n = settings.len();
    if n == 0 {
        return Vec::new();
    }
    let f0 = settings[0].frequency_hz.ln();
    let f1 = settings[n - 1].frequency_hz.ln();
    let mut idx: Vec<usize> = (0..points.max(2))
        .map(|k| {
            let target = f0 + (f1 - f0) * k as f64 / (points.max(2) - 1) as f64;
            settings
                .partition_point(|s| s.frequency_hz.ln() < target)
                .min(n - 1)
        })
        .collect();
    idx.dedup();
    idx
}

/// Settings past the bisected quiet edge looked at one by one (our own bound).
const QUIET_EDGE_SCAN: usize = 64;

fn loss_floor<'a>(obj: Objective, cands: impl Iterator<Item = &'a Candidate>) -> Option<f64> {
    if obj != Objective::Quietest {
        return None;
    }
    cands
        .filter(|c| c.feasible)
        .map(|c| c.rated.losses.total)
        .min_by(f64::total_cmp)
}

/// Feasible before infeasible; among feasible by [`better`]; among
/// infeasible by total relative violation.
fn rank(
    obj: Objective,
    a: Option<&Candidate>,
    b: Option<&Candidate>,
    floor: Option<f64>,
) -> Ordering {
    match (a, b) {
        (Some(a), Some(b)) => match (a.feasible, b.feasible) {
            (true, true) => better(obj, a, b, floor),
            (true, false) => Ordering::Less,
            (false, true) => Ordering::Greater,
            (false, false) => violation(a)
                .total_cmp(&violation(b))
                .then(better(obj, a, b, floor)),
        },
        (Some(_), None) => Ordering::Less,
        (None, Some(_)) => Ordering::Greater,
        (None, None) => Ordering::Equal,
    }
}

/// Sum of relative violations (how far from feasible).
pub fn violation(c: &Candidate) -> f64 {
    c.checks
        .iter()
        .filter(|k| !k.pass)
        .map(|k| match (k.margin, k.limit.abs() > 0.0) {
            (Some(m), true) => (-m / k.limit.abs()).max(0.0),
            (Some(m), false) => (-m).clamp(0.0, 1.0),
            (None, _) => 10.0,
        })
        .sum()
}

fn finish(
    judge: &Judge,
    obj: Objective,
    realisable: usize,
    settings: &[PwmSetting],
    evaluated: Vec<Option<Box<Candidate>>>,
    count: usize,
) -> Solution {
    let ev = judge.ev;
    let floor = loss_floor(obj, evaluated.iter().flatten().map(|c| &**c));
    let idx: Vec<usize> = (0..settings.len())
        .filter(|&i| evaluated[i].is_some())
        .collect();
    let best = idx
        .iter()
        .copied()
        .min_by(|&a, &b| rank(obj, evaluated[a].as_deref(), evaluated[b].as_deref(), floor));
    let feasible_idx: Vec<usize> = idx
        .iter()
        .copied()
        .filter(|&i| evaluated[i].as_deref().is_some_and(|c| c.feasible))
        .collect();
    let band = match (feasible_idx.first(), feasible_idx.last()) {
        (Some(&a), Some(&b)) => Some((settings[a].frequency_hz, settings[b].frequency_hz)),
        _ => None,
    };
    let Some(b) = best else {
        return Solution {
            objective: obj,
            feasible: false,
            chosen: None,
            feasible_band_hz: None,
            alternatives: Vec::new(),
            conflict: vec![format!(
                "no realisable timer setting between {} and {} could be evaluated; widen the frequency band or check the timer clock",
                fmt_f(ev.limits.f_min_hz),
                fmt_f(ev.limits.f_max_hz)
            )],
            evaluated: count,
            realisable,
        };
    };
    let mut chosen = evaluated[b]
        .as_deref()
        .cloned()
        .expect("best index is evaluated");
    let feasible = chosen.feasible;
    if feasible {
        let ctx = BindCtx { judge, obj, floor };
        mark_binding(&ctx, &mut chosen, b, &evaluated, &idx);
    }
    let alternatives = if feasible {
        alternatives(judge, obj, &chosen, &evaluated, &feasible_idx, band)
    } else {
        Vec::new()
    };
    let conflict = if feasible {
        Vec::new()
    } else {
        explain_conflict(ev, &chosen, &evaluated, &idx)
    };
    Solution {
        objective: obj,
        feasible,
        chosen: Some(chosen),
        feasible_band_hz: band,
        alternatives,
        conflict,
        evaluated: count,
        realisable,
    }
}

/// A constraint binds when the nearest setting on a side where the
/// objective is better fails it. At the edge of the band the nearest
/// realisable setting just outside is evaluated too, so the band itself
/// can bind.
fn mark_binding(
    ctx: &BindCtx,
    chosen: &mut Candidate,
    b: usize,
    evaluated: &[Option<Box<Candidate>>],
    idx: &[usize],
) {
    let pos = idx.iter().position(|&i| i == b).unwrap_or(0);
    let mut neighbours: Vec<Candidate> = [
        pos.checked_sub(1).map(|p| idx[p]),
        idx.get(pos + 1).copied(),
    ]
    .into_iter()
    .flatten()
    .filter_map(|n| evaluated[n].as_deref().cloned())
    .collect();
    if pos == 0 {
        neighbours.extend(outside_neighbour(ctx, chosen, 1));
    }
    if pos + 1 >= idx.len() {
        neighbours.extend(outside_neighbour(ctx, chosen, -1));
    }
    let key = |c: &Candidate| match (ctx.obj, ctx.floor) {
        (Objective::Quietest, Some(_)) => -c.setting.frequency_hz,
        _ => objective_value(ctx.obj, c),
    };
    for nc in &neighbours {
        if key(nc) >= key(chosen) {
            continue;
        }
        for k in &mut chosen.checks {
            if nc.checks.iter().any(|o| o.name == k.name && !o.pass) {
                k.binding = true;
            }
        }
    }
}

struct BindCtx<'a> {
    judge: &'a Judge<'a>,
    obj: Objective,
    floor: Option<f64>,
}

/// The realisable setting next to `c` in frequency, on the lower side for
/// `step` = 1 (one more tick per period) or the upper side for −1.
fn outside_neighbour(ctx: &BindCtx, c: &Candidate, step: i64) -> Option<Candidate> {
    let n = (c.setting.divider * c.setting.period_ticks) as i64;
    let clock = ctx.judge.ev.timer.clock_hz;
    let align = match c.setting.alignment {
        "centre" => Alignment::Centre,
        _ => Alignment::Edge,
    };
    for k in 1..=16 {
        let m = n + step * k;
        if m <= 0 {
            return None;
        }
        let s = ctx
            .judge
            .ev
            .timer
            .nearest_setting(clock / m as f64, align)
            .ok()
            .flatten()?;
        if s.frequency_hz != c.setting.frequency_hz {
            return ctx.judge.candidate(&s);
        }
    }
    None
}

/// Most `nearest_setting` look-ups and evaluations the rounder-frequency
/// search spends (own choice: bounds the time on wide bands; the search
/// goes roundest first, so what it skips is the least round).
const ROUND_LOOKUPS: usize = 4000;
const ROUND_EVALUATIONS: usize = 48;

/// The round frequencies in `[lo, hi]` with exactly `digits` significant
/// decimal digits in Hz, nearest `f0` first: k·10^e for integers k.
fn round_frequencies(lo: f64, hi: f64, digits: u32, f0: f64, cap: usize) -> Vec<f64> {
    let mut out = Vec::new();
    if !(lo > 0.0 && hi >= lo && lo.is_finite() && hi.is_finite()) {
        return out;
    }
    let (e_lo, e_hi) = (lo.log10().floor() as i32, hi.log10().floor() as i32);
    for e in e_lo..=e_hi {
        let unit = 10f64.powi(e + 1 - digits as i32);
        let (k_lo, k_hi) = ((lo / unit).ceil() as i64, (hi / unit).floor() as i64);
        for k in k_lo..=k_hi {
            let f = k as f64 * unit;
            if f >= lo && f <= hi && roundness_digits(f) == digits {
                out.push(f);
            }
            if out.len() > cap {
                break;
            }
        }
    }
    out.sort_by(|a, b| {
        (a - f0)
            .abs()
            .total_cmp(&(b - f0).abs())
            .then(a.total_cmp(b))
    });
    out.dedup();
    out
}

/// The roundest realisable setting in the feasible band that passes every
/// check, or `None` when none is rounder than the chosen frequency.
///
/// Roundness (own choice): the fewest significant decimal digits of the
/// frequency in Hz ([`roundness_digits`]: 24 000 Hz has 2, 24 500 Hz 3,
/// 20 006.67 Hz 7); ties go to the frequency nearest the chosen one. The
/// search does not stop at the settings the solver happened to evaluate: for
/// each digit count from 1 up it lists the round frequencies in the band,
/// asks the timer for the setting nearest each (exactly realisable when its
/// frequency equals the round one), evaluates those, and offers the first
/// that passes.
fn roundest_in_band(judge: &Judge, chosen: &Candidate, band: (f64, f64)) -> Option<Candidate> {
    let f0 = chosen.setting.frequency_hz;
    let ev = judge.ev;
    let (mut lookups, mut evaluations) = (0usize, 0usize);
    for digits in 1..roundness_digits(f0) {
        for f in round_frequencies(band.0, band.1, digits, f0, ROUND_LOOKUPS) {
            for a in ev.alignments() {
                lookups += 1;
                if lookups > ROUND_LOOKUPS || evaluations >= ROUND_EVALUATIONS {
                    return None;
                }
                let Ok(Some(s)) = ev.timer.nearest_setting(f, a) else {
                    continue;
                };
                if (s.frequency_hz - f).abs() > 1e-12 * f
                    || roundness_digits(s.frequency_hz) != digits
                {
                    continue;
                }
                evaluations += 1;
                if let Some(c) = judge.candidate(&s).filter(|c| c.feasible) {
                    return Some(c);
                }
            }
        }
    }
    None
}

fn alternatives(
    judge: &Judge,
    obj: Objective,
    chosen: &Candidate,
    evaluated: &[Option<Box<Candidate>>],
    feasible_idx: &[usize],
    band: Option<(f64, f64)>,
) -> Vec<Alternative> {
    let cands: Vec<&Candidate> = feasible_idx
        .iter()
        .filter_map(|&i| evaluated[i].as_deref())
        .collect();
    let mut out = Vec::new();
    // A rounder frequency: the roundest realisable setting in the feasible
    // band that passes, nearest the chosen one (evaluated or not).
    let f0 = chosen.setting.frequency_hz;
    if let Some(r) = band.and_then(|b| roundest_in_band(judge, chosen, b)) {
        out.push(Alternative {
            label: "rounder-frequency",
            trade: trade(chosen, &r),
            candidate: r,
        });
    }
    // The top of the feasible band: furthest from the audible range, least ripple.
    let taken = |out: &Vec<Alternative>, c: &Candidate| {
        out.iter().any(|a| a.candidate.setting == c.setting)
    };
    if let Some(top) = cands
        .last()
        .filter(|c| c.setting.frequency_hz > f0 && obj != Objective::Quietest && !taken(&out, c))
    {
        out.push(Alternative {
            label: "highest-frequency",
            trade: trade(chosen, top),
            candidate: (*top).clone(),
        });
    }
    // The bottom of the band: least switching loss per edge count, most resolution.
    if let Some(bottom) = cands
        .first()
        .filter(|c| c.setting.frequency_hz < f0 && !taken(&out, c))
        && out.len() < 2
    {
        out.push(Alternative {
            label: "lowest-frequency",
            trade: trade(chosen, bottom),
            candidate: (*bottom).clone(),
        });
    }
    // Still one short (the band's edges are taken or chosen): the setting
    // nearest the band's geometric middle, furthest from both edges.
    if out.len() < 2
        && let (Some(lo), Some(hi)) = (cands.first(), cands.last())
    {
        let mid = (lo.setting.frequency_hz * hi.setting.frequency_hz).sqrt();
        if let Some(m) = cands
            .iter()
            .filter(|c| c.setting.frequency_hz != f0 && !taken(&out, c))
            .min_by(|a, b| {
                (a.setting.frequency_hz.ln() - mid.ln())
                    .abs()
                    .total_cmp(&(b.setting.frequency_hz.ln() - mid.ln()).abs())
            })
        {
            out.push(Alternative {
                label: "mid-band",
                trade: trade(chosen, m),
                candidate: (*m).clone(),
            });
        }
    }
    out.truncate(2);
    out
}

fn trade(base: &Candidate, alt: &Candidate) -> String {
    let dl = alt.rated.losses.total - base.rated.losses.total;
    let dt = match (alt.rated.junction_c, base.rated.junction_c) {
        (Some(a), Some(b)) => format!("{} K junction", signed(a - b, 1)),
        _ => "junction n/a".into(),
    };
    let dr = alt.high_bus.ripple.peak_to_peak_a - base.high_bus.ripple.peak_to_peak_a;
    let db = alt.setting.resolution_bits - base.setting.resolution_bits;
    format!(
        "{} mW total loss, {dt}, {} mA ripple, {} bits resolution",
        signed(dl * 1e3, 0),
        signed(dr * 1e3, 0),
        signed(db, 2)
    )
}

/// A difference with its sign and `decimals` places; one that rounds to
/// zero is written "±0" (never "-0.0").
fn signed(d: f64, decimals: usize) -> String {
    let text = format!("{:+.*}", decimals, d);
    if text[1..].chars().all(|c| c == '0' || c == '.') {
        "±0".into()
    } else {
        text
    }
}

/// Why no setting is feasible, and the nearest compromise.
fn explain_conflict(
    ev: &Evaluator,
    nearest: &Candidate,
    evaluated: &[Option<Box<Candidate>>],
    idx: &[usize],
) -> Vec<String> {
    let mut lines = Vec::new();
    // Where each constraint passes on its own.
    let names: Vec<&'static str> = nearest.checks.iter().map(|c| c.name).collect();
    let mut passes_somewhere = Vec::new();
    for name in &names {
        let ok: Vec<f64> = idx
            .iter()
            .filter_map(|&i| evaluated[i].as_deref())
            .filter(|c| c.checks.iter().any(|k| k.name == *name && k.pass))
            .map(|c| c.setting.frequency_hz)
            .collect();
        match (ok.first(), ok.last()) {
            (Some(a), Some(b)) => {
                passes_somewhere.push(format!("{name} holds from {} to {}", fmt_f(*a), fmt_f(*b)))
            }
            _ => lines.push(format!(
                "{name} fails at every frequency from {} to {}",
                fmt_f(ev.limits.f_min_hz),
                fmt_f(ev.limits.f_max_hz)
            )),
        }
    }
    if !passes_somewhere.is_empty() {
        lines.push(format!(
            "no frequency satisfies all at once: {}",
            passes_somewhere.join("; ")
        ));
    }
    let failing: Vec<&ConstraintCheck> = nearest.checks.iter().filter(|k| !k.pass).collect();
    let mut relax = Vec::new();
    for k in &failing {
        let advice = match k.name {
            "junction-rated" | "junction-high-bus" => match k.value {
                Some(v) => format!("raise the junction limit from {} to {}, or fit a switch with lower R_ds(on) and Q_gd, or a better heat path", fmt_c(k.limit), fmt_c(v.ceil())),
                None => "the stage runs away thermally: fit a switch with lower R_ds(on), a better heat path, or reduce the load".into(),
            },
            "ripple" => format!("allow {} ripple instead of {}, or add inductance in series with the motor", fmt_a(k.value.unwrap_or(0.0)), fmt_a(k.limit)),
            "audible" => "allow audible PWM (audible: allowed) or lower the hearing limit, or raise the frequency band".into(),
            "resolution" => format!("accept {:.1} bits instead of {:.1}, or clock the timer faster", k.value.unwrap_or(0.0), k.limit),
            "dead-time" => "slow the dead-time clock (clock_divider) or speed up the turn-off (lower r_gate_off)".into(),
            "turn-off-peak" => "slow the turn-off (raise r_gate_off), shorten the commutation loop (lower loop_inductance), or choose a switch with a higher V_DSS".into(),
            "duty-range" => "lower the minimum pulse, shorten the bootstrap refresh time, or run at a lower frequency".into(),
            "sampling-window" => "shorten the shunt amplifier's settling or the ADC sampling time, run at a lower frequency, or move the shunt (a three-phase bridge: use min-max zero sequence)".into(),
            _ => String::new(),
        };
        relax.push(format!("{}: {}", k.name, advice));
    }
    lines.push(format!(
        "nearest compromise: {} ({} divider, {} ticks) fails {}",
        fmt_f(nearest.setting.frequency_hz),
        nearest.setting.divider,
        nearest.setting.period_ticks,
        failing
            .iter()
            .map(|k| k.name)
            .collect::<Vec<_>>()
            .join(", ")
    ));
    lines.extend(relax);
    lines
}

fn fmt_f(f: f64) -> String {
    crate::input::units::format_quantity(f, crate::input::units::Dimension::Frequency, 4)
}

/// Evaluate the realisable setting nearest `f_hz` (for `plan --at`).
pub fn evaluate_at(ev: &Evaluator, f_hz: f64) -> Option<Candidate> {
    Judge::typical(ev).candidate(&nearest(ev, f_hz)?)
}

/// The realisable setting nearest `f_hz` over the allowed alignments (ties:
/// more duty steps).
fn nearest(ev: &Evaluator, f_hz: f64) -> Option<PwmSetting> {
    // The settings of a narrow band around the target, one per frequency
    // (the most duty steps), widened until the band holds some: cheaper
    // than visiting every divider, and the same nearest setting.
    let near = |a: Alignment| -> Option<PwmSetting> {
        // Products per band grow with clock/f: at a low frequency the band
        // holds too many to factor one by one (a bound of our own choice:
        // 4096 products), and the direct search visits fewer dividers.
        let products = ev.timer.clock_hz / f_hz.max(f64::MIN_POSITIVE);
        let mut width = 1e-3;
        while width < 1e3 && products * width <= 4096.0 {
            let (lo, hi) = (f_hz / (1.0 + width), f_hz * (1.0 + width));
            if let Ok(it) = ev.timer.distinct_products_in_band(lo, hi, a) {
                let best = it.min_by(|x, y| {
                    (x.frequency_hz - f_hz)
                        .abs()
                        .total_cmp(&(y.frequency_hz - f_hz).abs())
                        .then(y.duty_steps.cmp(&x.duty_steps))
                        .then(x.divider.cmp(&y.divider))
                });
                if best.is_some() {
                    return best;
                }
            }
            width *= 8.0;
        }
        ev.timer.nearest_setting(f_hz, a).ok().flatten()
    };
    ev.alignments()
        .iter()
        .filter_map(|a| near(*a))
        .min_by(|a, b| {
            (a.frequency_hz - f_hz)
                .abs()
                .total_cmp(&(b.frequency_hz - f_hz).abs())
                .then(b.duty_steps.cmp(&a.duty_steps))
        })
}

/// Unused-case guard: keeps the case type referenced for docs.
#[allow(dead_code)]
fn _case_type(_: &OperatingCase) {}

/// The solution with the frequency pinned (`plan --at`): the realisable
/// setting nearest `f_hz`, checked like any other; nothing else searched.
pub fn pinned(ev: &Evaluator, obj: Objective, f_hz: f64) -> Solution {
    pinned_judged(&Judge::typical(ev), obj, f_hz)
}

/// [`pinned`] with a given judge (worst case, or a given dead time).
pub fn pinned_judged(judge: &Judge, obj: Objective, f_hz: f64) -> Solution {
    let ev = judge.ev;
    let chosen = nearest(ev, f_hz).and_then(|s| judge.candidate(&s));
    let feasible = chosen.as_ref().is_some_and(|c| c.feasible);
    let conflict = match &chosen {
        Some(c) if !c.feasible => c
            .checks
            .iter()
            .filter(|k| !k.pass)
            .map(|k| format!("{} fails at the pinned frequency: {}", k.name, k.detail))
            .collect(),
        Some(_) => Vec::new(),
        None => vec![format!("no realisable timer setting near {}", fmt_f(f_hz))],
    };
    Solution {
        objective: obj,
        feasible,
        chosen,
        feasible_band_hz: None,
        alternatives: Vec::new(),
        conflict,
        evaluated: 1,
        realisable: 1,
    }
}

#[cfg(test)]
mod settle_tests {
    use super::*;

    fn check(margin: Option<f64>, pass: bool) -> ConstraintCheck {
        ConstraintCheck {
            name: "dead-time",
            limit: 123e-9,
            value: Some(123e-9),
            margin,
            unit: "s",
            pass,
            binding: false,
            detail: "x".into(),
        }
    }

    /// A verdict that says "pass" on a failing margin (the zero-tick dead
    /// time of issue 22) is overruled; a failing verdict with a holding
    /// margin drops the margin; afterwards verdict and margin agree.
    #[test]
    fn verdict_follows_margin() {
        let mut k = check(Some(-123e-9), true);
        k.settle();
        assert!(!k.pass);
        let mut k = check(Some(1e-9), false);
        k.settle();
        assert!(!k.pass && k.margin.is_none());
        let mut k = check(Some(0.0), true);
        k.settle();
        assert!(k.pass);
        for (m, p) in [
            (Some(-1.0), true),
            (Some(1.0), true),
            (None, false),
            (Some(-1.0), false),
        ] {
            let mut k = check(m, p);
            k.settle();
            if let Some(m) = k.margin {
                assert_eq!(k.pass, margin_holds(m, k.limit));
            }
        }
    }
}
