//! Tolerance and worst-case analysis of one PWM setting: the spreads of the
//! parts and of the operating conditions, the extreme corners they make,
//! and a seeded, parallel Monte Carlo with percentiles and a yield.
//!
//! Owns: the spread parameters and their limits ([`spreads`]), the corners
//! pruned by monotonicity ([`corners`], [`corner_evaluators`]), the
//! worst case at a setting ([`worst_case`]) with the dead-time sufficiency
//! of the slowest turn-off against the fastest turn-on, the Monte Carlo
//! ([`monte_carlo`]), the Wilson score interval of the yield, and the text
//! rendering of both ([`text_report`]).
//!
//! **Invariant:** the engine is pure (no I/O). The one exception is
//! a progress callback the command line turns into a bar; the engine does
//! no I/O.
//!
//! Model of a sample: every switch of the stage takes the same drawn
//! values (the stage model has one switch model); the corner analysis
//! covers the difference between the device turning off and the one
//! turning on for the dead time. The load is the rated current at the
//! sample's supply and ambient.

use rayon::prelude::*;
use serde::Serialize;

use crate::input::design::Design;
use crate::input::spec::{Dim, DistributionSpec, Spread};
use crate::input::units::{Dimension, format_quantity};
use crate::model::evaluate::{CaseResult, Evaluator, OperatingCase};
use crate::model::physics::deadtime::{self, PairDevice};
use crate::model::physics::losses::r_ds_on_drive_factor;
use crate::model::physics::params::EdgeModel;
use crate::model::solve::{DeadTimeChoice, Setting};
use crate::model::timer::{self, Alignment, DutyLimits, PwmSetting};

// ---------------------------------------------------------------- parameters

/// One spread parameter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Param {
    /// On-resistance at 25 °C junction, typ..max.
    RdsOn,
    /// Total gate charge, typ..max.
    Qg,
    /// Gate-source charge (min if given)..max.
    Qgs,
    /// Gate-drain (Miller) charge (min if given)..max.
    Qgd,
    /// Gate threshold voltage, min..max.
    Vth,
    /// Internal gate resistance (min if given)..max.
    RgInt,
    /// Body-diode reverse-recovery charge (min if given)..max.
    Qrr,
    /// Motor winding resistance, ± tolerance.
    MotorResistance,
    /// Motor winding inductance, ± tolerance.
    MotorInductance,
    /// Gate-driver source (turn-on) output resistance, ± tolerance.
    DriverSource,
    /// Gate-driver sink (turn-off) output resistance, ± tolerance.
    DriverSink,
    /// Gate-drive voltage, ± tolerance.
    DriverSupply,
    /// Bus voltage, design supply min..max.
    Supply,
    /// Ambient temperature, design ambient min..max.
    Ambient,
}

/// Number of spread parameters.
pub const PARAM_COUNT: usize = 14;

/// Every parameter, in the order of [`Values`].
pub const PARAMS: [Param; PARAM_COUNT] = [
    Param::RdsOn,
    Param::Qg,
    Param::Qgs,
    Param::Qgd,
    Param::Vth,
    Param::RgInt,
    Param::Qrr,
    Param::MotorResistance,
    Param::MotorInductance,
    Param::DriverSource,
    Param::DriverSink,
    Param::DriverSupply,
    Param::Supply,
    Param::Ambient,
];

/// One value per parameter, indexed by `Param as usize`.
pub type Values = [f64; PARAM_COUNT];

impl Param {
    /// Short label for reports.
    pub fn label(self) -> &'static str {
        match self {
            Param::RdsOn => "R_ds(on) at 25 °C",
            Param::Qg => "Q_g",
            Param::Qgs => "Q_gs",
            Param::Qgd => "Q_gd",
            Param::Vth => "V_th",
            Param::RgInt => "R_g,int",
            Param::Qrr => "Q_rr",
            Param::MotorResistance => "motor R",
            Param::MotorInductance => "motor L",
            Param::DriverSource => "driver source R",
            Param::DriverSink => "driver sink R",
            Param::DriverSupply => "gate drive V",
            Param::Supply => "supply",
            Param::Ambient => "ambient",
        }
    }

    /// Dimension of the value (for formatting).
    pub fn dimension(self) -> Dimension {
        match self {
            Param::RdsOn
            | Param::RgInt
            | Param::MotorResistance
            | Param::DriverSource
            | Param::DriverSink => Dimension::Resistance,
            Param::Qg | Param::Qgs | Param::Qgd | Param::Qrr => Dimension::Charge,
            Param::Vth | Param::DriverSupply | Param::Supply => Dimension::Voltage,
            Param::MotorInductance => Dimension::Inductance,
            Param::Ambient => Dimension::Temperature,
        }
    }
}

/// How the Monte Carlo draws a parameter between its limits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Distribution {
    /// Uniform between the limits.
    Uniform,
    /// Normal about the typical value (a two-piece normal with its mode at
    /// typ), each limit at 3σ of its side, truncated there.
    Normal,
}

/// The limits of one parameter.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ParamRange {
    pub param: Param,
    pub low: f64,
    pub typ: f64,
    pub high: f64,
    /// Where the limits come from ("typ..max", "±10 %", ...), or why there
    /// is no spread.
    pub source: String,
    /// Drawn uniformly whatever the distribution (supply and ambient).
    pub always_uniform: bool,
}

impl ParamRange {
    /// Whether the parameter spreads at all.
    pub fn spreads(&self) -> bool {
        self.high > self.low
    }
}

/// Every parameter's limits for one design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Spreads {
    pub distribution: Distribution,
    /// In the order of [`PARAMS`].
    pub ranges: Vec<ParamRange>,
}

impl Spreads {
    /// The range of one parameter.
    pub fn range(&self, p: Param) -> &ParamRange {
        &self.ranges[p as usize]
    }

    /// Every parameter at its typical value.
    pub fn typical(&self) -> Values {
        let mut v = [0.0; PARAM_COUNT];
        for r in &self.ranges {
            v[r.param as usize] = r.typ;
        }
        v
    }
}

/// A datasheet spread: low = min (typ when none), high = max (typ when
/// none); a missing limit means no spread on that side.
fn datasheet_range(p: Param, typ: f64, min: Option<f64>, max: Option<f64>) -> ParamRange {
    let source = match (min, max) {
        (Some(_), Some(_)) => "min..max".to_string(),
        (None, Some(_)) => "typ..max".to_string(),
        (Some(_), None) => "min..typ (no max: none above typ)".to_string(),
        (None, None) => "no spread: no min or max in the switch file".to_string(),
    };
    ParamRange {
        param: p,
        low: min.unwrap_or(typ).min(typ),
        typ,
        high: max.unwrap_or(typ).max(typ),
        source,
        always_uniform: false,
    }
}

fn spread_range<D: Dim>(p: Param, typ: f64, s: &Spread<D>) -> ParamRange {
    datasheet_range(p, typ, s.min.map(|q| q.si), s.max.map(|q| q.si))
}

/// ± `share` around `typ`; no spread when the share is missing.
fn tolerance_range(p: Param, typ: f64, share: Option<f64>, key: &str) -> ParamRange {
    let (low, high, source) = match share {
        Some(t) => (
            typ * (1.0 - t),
            typ * (1.0 + t),
            format!("±{}", format_quantity(t, Dimension::Ratio, 3)),
        ),
        None => (typ, typ, format!("no spread: no tolerances.{key}")),
    };
    ParamRange {
        param: p,
        low,
        typ,
        high,
        source,
        always_uniform: false,
    }
}

/// The limits of every parameter: the switch's datasheet limits, the
/// design's `tolerances` section, the supply range and the ambient range.
/// Typical values are the evaluator's (so a zero spread reproduces the
/// typical evaluation exactly); the typical ambient is the hottest, as in
/// the evaluator's operating cases.
pub fn spreads(d: &Design, ev: &Evaluator) -> Spreads {
    let sw = &d.switch;
    let m = &ev.stage.switch;
    let drive = &ev.stage.drive;
    let tol = d.spec.tolerances.clone().unwrap_or_default();
    let share = |q: Option<crate::input::spec::Q<crate::input::spec::Ratio>>| q.map(|q| q.si);
    let s = &d.spec;
    let ranges = vec![
        // At the datasheet's V_GS; `apply` moves it to each point's drive.
        datasheet_range(
            Param::RdsOn,
            sw.r_ds_on.typ.si,
            None,
            sw.r_ds_on.max.map(|q| q.si),
        ),
        datasheet_range(Param::Qg, m.q_g_c, None, sw.q_g.max.map(|q| q.si)),
        spread_range(Param::Qgs, m.q_gs_c, &sw.q_gs),
        spread_range(Param::Qgd, m.q_gd_c, &sw.q_gd),
        spread_range(Param::Vth, m.v_th_v, &sw.v_th),
        spread_range(Param::RgInt, m.r_g_int_ohm, &sw.r_g_int),
        spread_range(Param::Qrr, m.q_rr_c, &sw.body_diode.q_rr),
        tolerance_range(
            Param::MotorResistance,
            ev.motor_r_ohm,
            share(tol.motor_resistance),
            "motor_resistance",
        ),
        tolerance_range(
            Param::MotorInductance,
            ev.motor_l_h,
            share(tol.motor_inductance),
            "motor_inductance",
        ),
        tolerance_range(
            Param::DriverSource,
            drive.r_source_ohm,
            share(tol.driver_resistance),
            "driver_resistance",
        ),
        tolerance_range(
            Param::DriverSink,
            drive.r_sink_ohm,
            share(tol.driver_resistance),
            "driver_resistance",
        ),
        tolerance_range(
            Param::DriverSupply,
            drive.v_drive_v,
            share(tol.driver_supply),
            "driver_supply",
        ),
        ParamRange {
            param: Param::Supply,
            low: s.supply.min.si.min(ev.rated.v_bus_v),
            typ: ev.rated.v_bus_v,
            high: s.supply.max.si.max(ev.rated.v_bus_v),
            source: "design range".into(),
            always_uniform: true,
        },
        ParamRange {
            param: Param::Ambient,
            low: s.ambient.min.si.min(ev.rated.t_ambient_c),
            typ: ev.rated.t_ambient_c,
            high: s.ambient.max.si.max(ev.rated.t_ambient_c),
            source: "range, typ hottest".into(),
            always_uniform: true,
        },
    ];
    Spreads {
        distribution: match tol.distribution {
            DistributionSpec::Uniform => Distribution::Uniform,
            DistributionSpec::Normal => Distribution::Normal,
        },
        ranges,
    }
}

// ------------------------------------------------------- applying a point

/// `value / typ`, exactly 1 when equal (so a zero spread changes nothing).
fn scale(value: f64, typ: f64) -> f64 {
    if value == typ || typ == 0.0 {
        1.0
    } else {
        value / typ
    }
}

/// Write the point `x` into `out`, starting from the typical `base` (every
/// varied field is rewritten, so `out` may be reused between points).
///
/// Mappings beyond "field = value" (own choices, no published source):
/// - Q_gd: with a C_rss curve the Miller charge comes from the curve, so
///   the curve is scaled by Q_gd/Q_gd,typ (the Miller charge is the
///   integral of C_gd over the swing). The typical curve is already scaled
///   to Q_gd,typ over the gate-charge test swing (`model::switch_model`),
///   so a corner's curve integrates to the corner's Q_gd.
/// - Q_gs: Q_g(th), when given, scales with Q_gs (both are charge on the
///   same input capacitance), so Q_gs2 = Q_gs − Q_g(th) stays positive.
/// - Q_g: C_iss scales with Q_g/Q_g,typ (a part whose gate takes more charge
///   to the same voltage has the larger input capacitance), so the RC delays
///   t_d(on) = R·C_iss·ln(…) and the turn-off delay without a datasheet
///   plateau see the gate-charge spread; the scalar C_rss scales with Q_gd
///   like the curve.
/// - V_th: a datasheet plateau moves with the threshold, since
///   V_plt = V_th + I/g_fs (the gate-charge note, see
///   [`crate::model::physics::switching`]).
pub fn apply(base: &Evaluator, x: &Values, out: &mut Evaluator) {
    let (b, s) = (&base.stage.switch, &mut out.stage.switch);
    let v = |p: Param| x[p as usize];
    s.q_g_c = v(Param::Qg);
    s.c_iss_f = b.c_iss_f * scale(v(Param::Qg), b.q_g_c);
    let k_gs = scale(v(Param::Qgs), b.q_gs_c);
    s.q_gs_c = v(Param::Qgs);
    s.q_g_th_c = b.q_g_th_c.map(|q| q * k_gs);
    let k_gd = scale(v(Param::Qgd), b.q_gd_c);
    s.q_gd_c = v(Param::Qgd);
    s.c_rss_f = b.c_rss_f * k_gd;
    for (o, t) in s.c_rss_curve.iter_mut().zip(&b.c_rss_curve) {
        o.1 = t.1 * k_gd;
    }
    s.v_th_v = v(Param::Vth);
    s.v_plateau_v = b.v_plateau_v.map(|p| p + (v(Param::Vth) - b.v_th_v));
    s.r_g_int_ohm = v(Param::RgInt);
    // R_ds(on) at the point's drive and threshold (the datasheet-V_GS value
    // times `losses::r_ds_on_drive_factor`; 1 without a second point).
    s.r_ds_on_25_ohm = v(Param::RdsOn) * r_ds_on_drive_factor(s, v(Param::DriverSupply));
    s.q_rr_c = v(Param::Qrr);
    out.motor_r_ohm = v(Param::MotorResistance);
    out.motor_l_h = v(Param::MotorInductance);
    let d = &mut out.stage.drive;
    d.r_source_ohm = v(Param::DriverSource);
    d.r_sink_ohm = v(Param::DriverSink);
    d.v_drive_v = v(Param::DriverSupply);
    // Each point has its own switch, asked for at a few currents only: the
    // edges are followed at those currents rather than at four grid nodes
    // around each.
    out.stage.edges = EdgeModel::AtEachCurrent;
}

/// Rated load at the point's supply and ambient.
pub fn case_at(base: &Evaluator, x: &Values, name: &'static str) -> OperatingCase {
    OperatingCase {
        name,
        v_bus_v: x[Param::Supply as usize],
        t_ambient_c: x[Param::Ambient as usize],
        load_current_a: base.rated.load_current_a,
        back_emf_v: base.rated.back_emf_v,
    }
}

/// An evaluator at the point `x`, its three cases at the point's ambient
/// (the rated case at the point's supply).
pub fn evaluator_at(base: &Evaluator, x: &Values) -> Evaluator {
    let mut e = base.clone();
    apply(base, x, &mut e);
    let amb = x[Param::Ambient as usize];
    e.rated = case_at(base, x, "rated");
    e.high_bus.t_ambient_c = amb;
    e.low_bus.t_ambient_c = amb;
    e
}

// ------------------------------------------------------------------ random

/// Increment of SplitMix64 (the golden-ratio constant).
const GAMMA: u64 = 0x9E37_79B9_7F4A_7C15;

/// Output `n` (from 0) of the SplitMix64 stream seeded with `seed`:
/// mix(seed + (n + 1)·γ), with the mixing function of Steele, Lea and
/// Flood, *Fast Splittable Pseudorandom Number Generators*, OOPSLA 2014,
/// constants as in Vigna's reference `splitmix64.c`. Counter-based: any
/// output is computed on its own, so samples drawn on any thread in any
/// order get the same numbers.
pub fn splitmix64_at(seed: u64, n: u64) -> u64 {
    let mut z = seed.wrapping_add(n.wrapping_add(1).wrapping_mul(GAMMA));
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// Stream outputs reserved per sample (one per parameter, room to grow).
const STRIDE: u64 = 16;

/// Uniform in the open interval (0, 1) from the top 53 bits (common
/// practice).
fn unit_open(bits: u64) -> f64 {
    ((bits >> 11) as f64 + 0.5) * (1.0 / (1u64 << 53) as f64)
}

/// Φ(−3), the standard normal probability below −3σ.
const PHI_MINUS_3: f64 = 1.349_898_031_630_094_5e-3;

/// Inverse of the standard normal distribution function, by Acklam's
/// rational approximation (P. J. Acklam, *An algorithm for computing the
/// inverse normal cumulative distribution function*, 2003; relative error
/// below 1.15e-9). `p` in (0, 1).
pub fn inverse_normal(p: f64) -> f64 {
    const A: [f64; 6] = [
        -3.969_683_028_665_376e1,
        2.209_460_984_245_205e2,
        -2.759_285_104_469_687e2,
        1.383_577_518_672_69e2,
        -3.066_479_806_614_716e1,
        2.506_628_277_459_239,
    ];
    const B: [f64; 5] = [
        -5.447_609_879_822_406e1,
        1.615_858_368_580_409e2,
        -1.556_989_798_598_866e2,
        6.680_131_188_771_972e1,
        -1.328_068_155_288_572e1,
    ];
    const C: [f64; 6] = [
        -7.784_894_002_430_293e-3,
        -3.223_964_580_411_365e-1,
        -2.400_758_277_161_838,
        -2.549_732_539_343_734,
        4.374_664_141_464_968,
        2.938_163_982_698_783,
    ];
    const D: [f64; 4] = [
        7.784_695_709_041_462e-3,
        3.224_671_290_700_398e-1,
        2.445_134_137_142_996,
        3.754_408_661_907_416,
    ];
    const P_LOW: f64 = 0.02425;
    let tail = |q: f64| {
        (((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5])
            / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1.0)
    };
    if p <= 0.0 {
        f64::NEG_INFINITY
    } else if p >= 1.0 {
        f64::INFINITY
    } else if p < P_LOW {
        tail((-2.0 * p.ln()).sqrt())
    } else if p <= 1.0 - P_LOW {
        let q = p - 0.5;
        let r = q * q;
        (((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q
            / (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1.0)
    } else {
        -tail((-2.0 * (1.0 - p).ln()).sqrt())
    }
}

/// One parameter's value from a uniform `u` in (0, 1).
///
/// Uniform: low + u·(high − low). Normal: a two-piece normal with its mode
/// at typ and σ on each side a third of the distance from typ to that
/// side's limit, truncated at the limits (±3σ), so the typical value is the
/// most likely one whether or not it sits midway between the limits (the
/// two-piece normal: S. John, *The three-parameter two-piece normal family
/// of distributions and its fitting*, Communications in Statistics — Theory
/// and Methods 11(8), 1982; from memory). Each side carries the mass
/// σ_side/(σ_low + σ_high), which keeps the density continuous at typ; a
/// datasheet giving only typ and max thus draws a half-normal above typ.
/// Drawn by inversion, side by side: t = Φ⁻¹(½ + w·(Φ(3) − ½)) is a
/// standard half-normal truncated at 3 (the inverse-transform method,
/// common practice). A range without spread gives typ exactly.
fn draw(r: &ParamRange, dist: Distribution, u: f64) -> f64 {
    if r.high <= r.low {
        return r.typ;
    }
    let x = match (dist, r.always_uniform) {
        (Distribution::Uniform, _) | (_, true) => r.low + u * (r.high - r.low),
        (Distribution::Normal, false) => two_piece_normal(r.low, r.typ, r.high, u),
    };
    x.clamp(r.low, r.high)
}

/// The two-piece normal of [`draw`] at the uniform `u`.
fn two_piece_normal(low: f64, typ: f64, high: f64, u: f64) -> f64 {
    let typ = typ.clamp(low, high);
    let (s_lo, s_hi) = ((typ - low) / 3.0, (high - typ) / 3.0);
    let p_lo = s_lo / (s_lo + s_hi);
    let half_normal = |w: f64| inverse_normal(0.5 + w * (0.5 - PHI_MINUS_3)).clamp(0.0, 3.0);
    if u < p_lo {
        typ - s_lo * half_normal(1.0 - u / p_lo)
    } else {
        typ + s_hi * half_normal((u - p_lo) / (1.0 - p_lo))
    }
}

/// The point of sample `index`: parameter k uses output
/// `index·16 + k` of the SplitMix64 stream of `seed`.
pub fn sample_values(s: &Spreads, seed: u64, index: u64) -> Values {
    let mut v = [0.0; PARAM_COUNT];
    for (k, r) in s.ranges.iter().enumerate() {
        let bits = splitmix64_at(seed, index.wrapping_mul(STRIDE).wrapping_add(k as u64));
        v[r.param as usize] = draw(r, s.distribution, unit_open(bits));
    }
    v
}

// ------------------------------------------------------------ constraints

/// The constraints each sample is checked against, in the order of the
/// bits of [`Outcome::failed`]. Names match the solver's checks where they
/// are the same (`junction` covers `junction-rated` and `junction-high-bus`,
/// one case per sample); `operating-point` fails when the rated current
/// cannot be reached or the switch cannot be modelled at the sample.
pub const CONSTRAINTS: [&str; 9] = [
    "operating-point",
    "junction",
    "ripple",
    "audible",
    "dead-time",
    "duty-range",
    "resolution",
    "frequency-band",
    "sampling-window",
];

const OPERATING_POINT: u16 = 1 << 0;
const JUNCTION: u16 = 1 << 1;
const RIPPLE: u16 = 1 << 2;
const AUDIBLE: u16 = 1 << 3;
const DEAD_TIME: u16 = 1 << 4;
const DUTY_RANGE: u16 = 1 << 5;
const RESOLUTION: u16 = 1 << 6;
const FREQUENCY_BAND: u16 = 1 << 7;
const SAMPLING_WINDOW: u16 = 1 << 8;

/// Margin counted as passing, as the solver does (1e-9 in the limit's unit).
const EPS: f64 = 1e-9;

/// The timer setting behind a solver [`Setting`].
pub fn pwm_setting(s: &Setting) -> PwmSetting {
    PwmSetting {
        divider: s.divider,
        divider_register: s.divider_register,
        period_ticks: s.period_ticks,
        period_register: s.period_register,
        alignment: if s.alignment == "centre" {
            Alignment::Centre
        } else {
            Alignment::Edge
        },
        frequency_hz: s.frequency_hz,
        duty_steps: s.duty_steps,
        resolution_bits: s.resolution_bits,
        resolution_bits_floor: s.resolution_bits.max(0.0).floor() as u32,
    }
}

/// Channel duties `(low, high)` the load needs at compare duty `d` (as the
/// solver maps them, [`Evaluator::duty_needed`]).
fn duty_needed(ev: &Evaluator, d: f64) -> (f64, f64) {
    ev.duty_needed(d, d)
}

/// Whether the needed duties fit the timer's limits (the solver's rule:
/// both ends).
fn duty_fits(needed: (f64, f64), lim: Option<&DutyLimits>) -> bool {
    let Some(l) = lim else { return false };
    let low_ok = needed.0 >= l.min_duty - EPS;
    needed.1 <= l.max_duty + EPS && low_ok
}

/// What holds for every sample at one setting.
struct Context<'a> {
    base: &'a Evaluator,
    spreads: Spreads,
    f_hz: f64,
    dead: DeadTimeChoice,
    duty: Option<DutyLimits>,
    /// A three-phase bridge's current-sampling window at this setting (none on the other
    /// stages, or when no duty holds it: then a fixed failure).
    sampling: Option<SamplingLimit>,
    /// Failures that depend on the setting only.
    fixed_failures: u16,
}

/// What a three-phase sample's sampling window holds it to: the figure
/// [`SamplingLimit::of`] reads off an evaluated case must not exceed `limit`.
#[derive(Debug, Clone, Copy)]
enum SamplingLimit {
    /// Low-side shunts: the sampled leg's highest high-side duty at most the window's.
    SampledLeg { limit: f64 },
    /// Six-step low-side chopping: the chopping low side's off share (1 − duty) at most
    /// the window's high-side duty, so its on-time holds the window.
    ChoppingLowSide { limit: f64 },
    /// One DC-link shunt: the modulation index at most the highest at which the shifted
    /// compares fit at every angle (`dc_link::max_modulation`).
    DcLink { limit: f64 },
}

impl SamplingLimit {
    fn limit(self) -> f64 {
        match self {
            SamplingLimit::SampledLeg { limit }
            | SamplingLimit::ChoppingLowSide { limit }
            | SamplingLimit::DcLink { limit } => limit,
        }
    }

    /// The case's figure against the limit (`None` when the case has no three-phase
    /// figures).
    fn of(self, r: &CaseResult) -> Option<f64> {
        let tp = r.three_phase.as_ref()?;
        match self {
            SamplingLimit::SampledLeg { .. } => Some(tp.sampled_leg_duty_max),
            SamplingLimit::ChoppingLowSide { .. } => tp.chop_duty.map(|d| 1.0 - d),
            SamplingLimit::DcLink { .. } => tp.modulation_index,
        }
    }
}

/// The sampling window of a three-phase setting, as the solver's `sampling-window` check
/// takes it (`Err` when no duty holds it).
fn sampling_limit(
    ev: &Evaluator,
    pwm: &PwmSetting,
    dead_s: f64,
) -> Option<Result<SamplingLimit, ()>> {
    use crate::model::evaluate::ThreePhaseModulation as M;
    use crate::model::physics::three_phase::{Chop, dc_link};
    let tp = ev.three_phase.as_ref()?;
    if let Some(t) = ev.dc_link_timing(pwm, dead_s) {
        let zs = tp.modulation.zero_sequence();
        return Some(
            dc_link::max_modulation(zs.linear_limit(), zs, pwm.duty_steps, &t)
                .map(|limit| SamplingLimit::DcLink { limit })
                .ok_or(()),
        );
    }
    let win = ev.sampling_window(pwm, dead_s)?;
    Some(win.map_err(|_| ()).map(|w| match tp.modulation {
        M::SixStep {
            chop: Chop::LowSide,
        } => SamplingLimit::ChoppingLowSide {
            limit: w.max_high_side_duty,
        },
        _ => SamplingLimit::SampledLeg {
            limit: w.max_high_side_duty,
        },
    }))
}

impl<'a> Context<'a> {
    fn new(d: &Design, ev: &'a Evaluator, setting: &Setting, dead: &DeadTimeChoice) -> Self {
        let pwm = pwm_setting(setting);
        let f = setting.frequency_hz;
        let duty = timer::duty_limits(&pwm, &ev.pulse_rules(dead.seconds)).ok();
        let l = &ev.limits;
        let mut fixed = 0;
        if l.min_resolution_bits
            .is_some_and(|b| setting.resolution_bits < b - EPS)
        {
            fixed |= RESOLUTION;
        }
        if f < l.f_min_hz * (1.0 - 1e-12) || f > l.f_max_hz * (1.0 + 1e-12) {
            fixed |= FREQUENCY_BAND;
        }
        if ev.needs_dead_time() && dead.code.is_none() {
            fixed |= DEAD_TIME;
        }
        let sampling = match sampling_limit(ev, &pwm, dead.seconds) {
            Some(Ok(limit)) => Some(limit),
            Some(Err(())) => {
                fixed |= SAMPLING_WINDOW;
                None
            }
            None => None,
        };
        Context {
            base: ev,
            spreads: spreads(d, ev),
            f_hz: f,
            dead: *dead,
            duty,
            sampling,
            fixed_failures: fixed,
        }
    }

    /// Evaluate the point `x` with `scratch` as working evaluator.
    fn outcome(&self, scratch: &mut Evaluator, x: &Values) -> Outcome {
        apply(self.base, x, scratch);
        let case = case_at(self.base, x, "sample");
        let mut failed = self.fixed_failures;
        let need = if self.base.needs_dead_time() {
            let need = scratch.dead_time_need_s(&case);
            if need.is_none_or(|n| n > self.dead.seconds + EPS) {
                failed |= DEAD_TIME;
            }
            need
        } else {
            Some(0.0)
        };
        let Some(r) = scratch.case(&case, self.f_hz, self.dead.seconds) else {
            return Outcome {
                t_j_c: None,
                loss_w: None,
                ripple_pp_a: None,
                dead_time_need_s: need,
                failed: failed | OPERATING_POINT,
            };
        };
        failed |= self.case_failures(&r);
        Outcome {
            t_j_c: r.junction_c,
            loss_w: Some(r.losses.total),
            ripple_pp_a: Some(r.ripple.peak_to_peak_a),
            dead_time_need_s: need,
            failed,
        }
    }

    /// Failures read off one evaluated case.
    fn case_failures(&self, r: &CaseResult) -> u16 {
        let l = &self.base.limits;
        let mut failed = 0;
        if r.junction_c.is_none_or(|t| t > l.t_j_max_c + EPS) {
            failed |= JUNCTION;
        }
        if l.ripple_pp_max_a
            .is_some_and(|m| r.ripple.peak_to_peak_a > m + EPS)
        {
            failed |= RIPPLE;
        }
        if !r.acoustic.pass {
            failed |= AUDIBLE;
        }
        let ev = self.base;
        if !duty_fits(duty_needed(ev, r.compare_duty), self.duty.as_ref()) {
            failed |= DUTY_RANGE;
        }
        if let Some(limit) = self.sampling
            && limit.of(r).is_some_and(|v| v > limit.limit() + EPS)
        {
            failed |= SAMPLING_WINDOW;
        }
        failed
    }
}

// -------------------------------------------------------------- Monte Carlo

/// The result of one sample.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Outcome {
    /// Hottest junction; `None` on thermal runaway or without an operating
    /// point.
    pub t_j_c: Option<f64>,
    /// Total loss (switches, diodes, gate drive, ripple copper loss).
    pub loss_w: Option<f64>,
    /// Motor-current ripple, peak to peak.
    pub ripple_pp_a: Option<f64>,
    /// Dead time this sample needs (same part turning off and on).
    pub dead_time_need_s: Option<f64>,
    /// Bit k set: constraint [`CONSTRAINTS`]`[k]` fails.
    pub failed: u16,
}

impl Outcome {
    /// Whether every constraint holds.
    pub fn pass(&self) -> bool {
        self.failed == 0
    }

    /// Names of the failing constraints.
    pub fn failing(&self) -> Vec<&'static str> {
        CONSTRAINTS
            .iter()
            .enumerate()
            .filter(|(k, _)| self.failed & (1 << k) != 0)
            .map(|(_, n)| *n)
            .collect()
    }
}

/// One sample: its index, drawn point and outcome.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sample {
    pub index: u64,
    pub values: Values,
    pub outcome: Outcome,
}

/// Percentiles by the nearest-rank rule: the p-th percentile of n sorted
/// values is the ⌈p·n/100⌉-th (Hyndman and Fan, *Sample Quantiles in
/// Statistical Packages*, The American Statistician 50, 1996, definition 1).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Percentiles {
    pub p50: f64,
    pub p95: f64,
    pub p99: f64,
    pub max: f64,
    /// Values counted (samples that have one).
    pub count: u64,
}

/// Nearest-rank percentiles of `v`; `None` when empty.
pub fn percentiles(mut v: Vec<f64>) -> Option<Percentiles> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    let at = |pct: usize| v[(pct * n).div_ceil(100).clamp(1, n) - 1];
    Some(Percentiles {
        p50: at(50),
        p95: at(95),
        p99: at(99),
        max: v[n - 1],
        count: n as u64,
    })
}

/// z of a two-sided 95 % interval, Φ⁻¹(0.975).
pub const Z_95: f64 = 1.959_963_984_540_054;

/// Wilson score interval of a proportion with `k` successes in `n` trials
/// (E. B. Wilson, *Probable Inference, the Law of Succession, and
/// Statistical Inference*, JASA 22, 1927, pp. 209–212):
/// centre = (p̂ + z²/2n)/(1 + z²/n),
/// half-width = z/(1 + z²/n)·√(p̂(1 − p̂)/n + z²/4n²).
/// `None` for n = 0.
pub fn wilson_interval(k: u64, n: u64, z: f64) -> Option<(f64, f64)> {
    if n == 0 || k > n {
        return None;
    }
    let nf = n as f64;
    let p = k as f64 / nf;
    let z2 = z * z;
    let den = 1.0 + z2 / nf;
    let centre = (p + z2 / (2.0 * nf)) / den;
    let half = z / den * (p * (1.0 - p) / nf + z2 / (4.0 * nf * nf)).sqrt();
    Some(((centre - half).max(0.0), (centre + half).min(1.0)))
}

/// Share of samples meeting every constraint, with its Wilson interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct YieldEstimate {
    pub passed: u64,
    pub samples: u64,
    /// passed / samples.
    pub point: f64,
    pub low: f64,
    pub high: f64,
    /// Confidence of the interval (0.95).
    pub confidence: f64,
}

/// How many samples fail one constraint.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FailureCount {
    pub constraint: &'static str,
    pub count: u64,
    pub share: f64,
}

/// The Monte Carlo summary at one setting.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MonteCarlo {
    pub samples: u64,
    pub seed: u64,
    pub frequency_hz: f64,
    pub dead_time_s: f64,
    pub spreads: Spreads,
    /// Hottest junction over samples that have one.
    pub junction_c: Option<Percentiles>,
    pub total_loss_w: Option<Percentiles>,
    pub ripple_pp_a: Option<Percentiles>,
    pub junction_limit_c: f64,
    pub ripple_limit_a: Option<f64>,
    /// Samples with no junction temperature (runaway or no operating point).
    pub without_junction: u64,
    #[serde(rename = "yield")]
    pub yield_estimate: YieldEstimate,
    /// Failing constraints, most frequent first; a sample may fail several.
    pub failures: Vec<FailureCount>,
}

/// Samples evaluated per progress report.
const CHUNK: u64 = 2048;

/// Evaluate samples `range` in parallel (order kept).
fn run(ctx: &Context, seed: u64, range: std::ops::Range<u64>, keep: bool) -> Vec<Sample> {
    let (start, end) = (range.start as usize, range.end as usize);
    (start..end)
        .into_par_iter()
        .map_init(
            || ctx.base.clone(),
            |scratch, i| {
                let values = sample_values(&ctx.spreads, seed, i as u64);
                let outcome = ctx.outcome(scratch, &values);
                Sample {
                    index: i as u64,
                    values: if keep { values } else { [0.0; PARAM_COUNT] },
                    outcome,
                }
            },
        )
        .collect()
}

/// Every sample with its drawn point (for inspection and tests; the
/// summary [`monte_carlo`] keeps only the outcomes).
pub fn monte_carlo_samples(
    d: &Design,
    ev: &Evaluator,
    setting: &Setting,
    dead: &DeadTimeChoice,
    samples: u64,
    seed: u64,
) -> Vec<Sample> {
    let ctx = Context::new(d, ev, setting, dead);
    run(&ctx, seed, 0..samples, true)
}

/// Monte Carlo at a setting: `samples` points drawn from the spreads with
/// `seed`, each evaluated at the rated load at its own supply and ambient.
/// Reproducible: the same seed gives the same result on any number of
/// threads (each sample's numbers depend only on the seed and its index,
/// and results are gathered in index order).
pub fn monte_carlo(
    d: &Design,
    ev: &Evaluator,
    setting: &Setting,
    dead: &DeadTimeChoice,
    samples: u64,
    seed: u64,
) -> MonteCarlo {
    monte_carlo_with_progress(d, ev, setting, dead, samples, seed, &mut |_, _| {})
}

/// [`monte_carlo`], calling `progress(done, total)` on the calling thread
/// after each chunk of samples.
pub fn monte_carlo_with_progress(
    d: &Design,
    ev: &Evaluator,
    setting: &Setting,
    dead: &DeadTimeChoice,
    samples: u64,
    seed: u64,
    progress: &mut dyn FnMut(u64, u64),
) -> MonteCarlo {
    let ctx = Context::new(d, ev, setting, dead);
    let mut outcomes = Vec::with_capacity(samples.min(1 << 24) as usize);
    let mut done = 0;
    while done < samples {
        let end = (done + CHUNK).min(samples);
        outcomes.extend(
            run(&ctx, seed, done..end, false)
                .into_iter()
                .map(|s| s.outcome),
        );
        done = end;
        progress(done, samples);
    }
    summarise(&ctx, &outcomes, seed)
}

fn summarise(ctx: &Context, out: &[Outcome], seed: u64) -> MonteCarlo {
    let n = out.len() as u64;
    let pick = |f: fn(&Outcome) -> Option<f64>| percentiles(out.iter().filter_map(f).collect());
    let passed = out.iter().filter(|o| o.pass()).count() as u64;
    let (low, high) = wilson_interval(passed, n, Z_95).unwrap_or((0.0, 1.0));
    let mut failures: Vec<FailureCount> = CONSTRAINTS
        .iter()
        .enumerate()
        .map(|(k, name)| {
            let count = out.iter().filter(|o| o.failed & (1 << k) != 0).count() as u64;
            FailureCount {
                constraint: name,
                count,
                share: if n > 0 { count as f64 / n as f64 } else { 0.0 },
            }
        })
        .filter(|f| f.count > 0)
        .collect();
    failures.sort_by_key(|f| std::cmp::Reverse(f.count));
    MonteCarlo {
        samples: n,
        seed,
        frequency_hz: ctx.f_hz,
        dead_time_s: ctx.dead.seconds,
        spreads: ctx.spreads.clone(),
        junction_c: pick(|o| o.t_j_c),
        total_loss_w: pick(|o| o.loss_w),
        ripple_pp_a: pick(|o| o.ripple_pp_a),
        junction_limit_c: ctx.base.limits.t_j_max_c,
        ripple_limit_a: ctx.base.limits.ripple_pp_max_a,
        without_junction: out.iter().filter(|o| o.t_j_c.is_none()).count() as u64,
        yield_estimate: YieldEstimate {
            passed,
            samples: n,
            point: if n > 0 { passed as f64 / n as f64 } else { 0.0 },
            low,
            high,
            confidence: 0.95,
        },
        failures,
    }
}

// ------------------------------------------------------------------ corners

/// What a corner is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CornerKind {
    /// Most loss, hottest junction, most ripple.
    Hot,
    /// The slowest turn-off (dead time).
    SlowTurnOff,
    /// The fastest turn-on (dead time).
    FastTurnOn,
}

/// One extreme combination of the spreads.
#[derive(Debug, Clone)]
pub struct Corner {
    pub label: String,
    pub kind: CornerKind,
    pub values: Values,
    /// The design at this corner; its rated case at the corner's supply and
    /// every case at the corner's ambient.
    pub ev: Evaluator,
}

/// Parameters that only raise loss and junction temperature in the model,
/// so the hot corner takes their maxima:
/// - R_ds(on): conduction loss I²·R (and R rises again with T_j);
/// - Q_g: gate-drive loss Q_g·V·f;
/// - Q_gd: switching times t = Q/I_g, so E = ½·V·I·t grows
///   (Graovac, Pürschel, Kiep 2006);
/// - R_g,int and the driver's source and sink resistances: smaller gate
///   currents I_g = V/R, longer edges;
/// - Q_rr: recovery loss Q_rr·V·f;
/// - ambient: T_j = T_a + R_th·P, and P rises with T_j through R_ds(on).
pub const HOT_AT_MAX: [Param; 8] = [
    Param::RdsOn,
    Param::Qg,
    Param::Qgd,
    Param::RgInt,
    Param::Qrr,
    Param::DriverSource,
    Param::DriverSink,
    Param::Ambient,
];

/// Parameters taken at both ends, since the model is not monotonic in
/// them:
/// - V_th: the plateau moves with it; turn-on slows as (V_drv − V_plt)
///   shrinks while turn-off speeds up as V_plt grows;
/// - gate-drive voltage: faster turn-on but more gate charge and loss;
/// - supply: switching loss and ripple rise with it (ripple ∝ V·D(1 − D)
///   rises with V at a fixed load), but the duty, and so the conduction
///   split between the switches, falls;
/// - motor R and L: they move the duty and the ripple, and a large ripple
///   can turn a hard turn-on soft;
/// - Q_gs: the current rise at turn-on slows with it (t_ri = Q_gs2/I_g),
///   but with Q_g fixed at its test voltage a larger Q_gs flattens the
///   gate-charge curve above the plateau, so a drive above that test
///   voltage moves less gate charge (`switching::total_gate_charge_c`):
///   switching loss rises, gate-drive loss falls.
///
/// An interior maximum in one of them is outside the corner method; the
/// Monte Carlo samples the inside.
pub const HOT_BOTH_ENDS: [Param; 6] = [
    Param::Vth,
    Param::Qgs,
    Param::DriverSupply,
    Param::Supply,
    Param::MotorResistance,
    Param::MotorInductance,
];

/// Ends of a parameter: both when it spreads, else typ.
fn ends(r: &ParamRange) -> Vec<(f64, &'static str)> {
    if r.spreads() {
        vec![(r.low, "min"), (r.high, "max")]
    } else {
        vec![(r.typ, "typ")]
    }
}

/// Hot points: maxima of [`HOT_AT_MAX`], every combination of the ends of
/// `both` (those that spread).
fn hot_points(s: &Spreads, both: &[Param]) -> Vec<(String, Values)> {
    let mut base = s.typical();
    for p in HOT_AT_MAX {
        base[p as usize] = s.range(p).high;
    }
    let mut points = vec![(Vec::<String>::new(), base)];
    for &p in both {
        let r = s.range(p);
        if !r.spreads() {
            continue;
        }
        points = points
            .into_iter()
            .flat_map(|(label, v)| {
                ends(r).into_iter().map(move |(x, end)| {
                    let mut v2 = v;
                    v2[p as usize] = x;
                    let mut l2 = label.clone();
                    l2.push(if p == Param::Supply {
                        format!("supply {}", q(x, Dimension::Voltage))
                    } else {
                        format!("{} {end}", p.label())
                    });
                    (l2, v2)
                })
            })
            .collect();
    }
    points
        .into_iter()
        .map(|(l, v)| {
            let label = if l.is_empty() {
                "hot".to_string()
            } else {
                format!("hot: {}", l.join(", "))
            };
            (label, v)
        })
        .collect()
}

/// The slowest turn-off: t_off = t_d(off) + t_rv + t_fi with
/// t_d(off) = R_off·C_iss·ln(V_drv/V_plt) (from memory, as in
/// [`crate::model::physics::switching`]), t_rv = Q_gd·R_off/V_plt and
/// t_fi = Q_gs2·R_off/V_plt (gate-charge model: Graovac, Pürschel, Kiep,
/// 2006; L. Balogh, 2002; sources in [`crate::model::physics::switching`]). Every
/// term grows with R_off = R_sink + R_g,ext,off + R_g,int and falls as the
/// plateau rises, and V_plt = V_th + I/g_fs (the gate-charge note, 2016), so
/// the slowest turn-off takes max R_sink, max R_g,int, max Q_gd, max Q_gs,
/// min V_th and max V_drv (t_d(off) grows with V_drv). R_ds(on) stays typ:
/// it enters only through the on-state drop of the two-point C_gd.
fn slow_turn_off(s: &Spreads) -> Values {
    let mut v = s.typical();
    // Q_g scales C_iss (see `apply`), so a larger Q_g also lengthens the
    // RC turn-off delay.
    for p in [
        Param::DriverSink,
        Param::RgInt,
        Param::Qg,
        Param::Qgd,
        Param::Qgs,
        Param::DriverSupply,
    ] {
        v[p as usize] = s.range(p).high;
    }
    v[Param::Vth as usize] = s.range(Param::Vth).low;
    v
}

/// The fastest turn-on: conduction starts after
/// t_d(on) = R_on·C_iss·ln(V_drv/(V_drv − V_th)) (L. Balogh, 2002), which
/// falls with a smaller R_on = R_source + R_g,ext,on + R_g,int, a lower
/// V_th and a higher V_drv. So the fastest turn-on takes min R_source,
/// min R_g,int, min V_th and max V_drv; the gate charges do not enter.
/// (Low V_th is the worst for both devices: it delays turn-off and hastens
/// turn-on.)
fn fast_turn_on(s: &Spreads) -> Values {
    let mut v = s.typical();
    for p in [Param::DriverSource, Param::RgInt, Param::Vth, Param::Qg] {
        v[p as usize] = s.range(p).low;
    }
    v[Param::DriverSupply as usize] = s.range(Param::DriverSupply).high;
    v
}

/// The corners that matter, pruned by monotonicity: the hot corners (the
/// maxima of [`HOT_AT_MAX`] with every combination of the ends of
/// [`HOT_BOTH_ENDS`] that spread), then the slowest-turn-off and the
/// fastest-turn-on device for the dead time.
pub fn corners(d: &Design, ev: &Evaluator) -> Vec<Corner> {
    let s = spreads(d, ev);
    let mut out: Vec<Corner> = hot_points(&s, &HOT_BOTH_ENDS)
        .into_iter()
        .map(|(label, values)| Corner {
            ev: evaluator_at(ev, &values),
            label,
            kind: CornerKind::Hot,
            values,
        })
        .collect();
    for (label, kind, values) in [
        (
            "slow turn-off: R_sink, R_g,int, Q_gd, Q_gs max, V_th min, V_drv max",
            CornerKind::SlowTurnOff,
            slow_turn_off(&s),
        ),
        (
            "fast turn-on: R_source, R_g,int, V_th min, V_drv max",
            CornerKind::FastTurnOn,
            fast_turn_on(&s),
        ),
    ] {
        out.push(Corner {
            label: label.to_string(),
            kind,
            ev: evaluator_at(ev, &values),
            values,
        });
    }
    out
}

/// One evaluator per hot corner for the solver (`plan --worst-case`): the
/// supply is not a corner dimension here but is carried by the cases, the
/// rated case moved to the lowest supply (named `low-bus`) and the high-bus
/// case at the highest, so that `Evaluator::candidate`'s two junction
/// checks cover both supply ends; every case at the hottest ambient. Pair
/// them with [`worst_case_dead_time`], since `candidate` takes the dead
/// time as given.
pub fn corner_evaluators(d: &Design, ev: &Evaluator) -> Vec<(String, Evaluator)> {
    let s = spreads(d, ev);
    let both: Vec<Param> = HOT_BOTH_ENDS
        .into_iter()
        .filter(|p| *p != Param::Supply)
        .collect();
    let supply = s.range(Param::Supply);
    hot_points(&s, &both)
        .into_iter()
        .map(|(label, values)| {
            let mut e = evaluator_at(ev, &values);
            let mut lo = values;
            lo[Param::Supply as usize] = supply.low;
            let mut hi = values;
            hi[Param::Supply as usize] = supply.high;
            e.rated = case_at(ev, &lo, "low-bus");
            e.low_bus = case_at(ev, &lo, "low-bus");
            e.high_bus = case_at(ev, &hi, "high-bus");
            (label, e)
        })
        .collect()
}

/// Dead time the stage needs with `off` turning off against `on` turning
/// on at `v_bus_v` and the rated current ([`deadtime::pair_need_s`]).
fn pair_need_s<'a>(
    base: &Evaluator,
    off: &'a Evaluator,
    on: &'a Evaluator,
    v_bus_v: f64,
) -> Option<f64> {
    let device = |e: &'a Evaluator| PairDevice {
        switch: &e.stage.switch,
        drive: &e.stage.drive,
        t_j_max_c: e.limits.t_j_max_c,
    };
    let i = base.rated.load_current_a.abs().max(1e-3);
    deadtime::pair_need_s(&device(off), &device(on), i, v_bus_v, base.dead_time_margin)
}

/// Worst dead-time need: the slowest turn-off against the fastest turn-on
/// at the lowest, nominal and highest supply. Returns (need, supply), or
/// `None` when a transition cannot be computed. Zero when the stage has no
/// complementary switches.
pub fn worst_dead_time_need(d: &Design, ev: &Evaluator) -> Option<(f64, f64)> {
    if !ev.needs_dead_time() {
        return Some((0.0, ev.rated.v_bus_v));
    }
    let s = spreads(d, ev);
    let off = evaluator_at(ev, &slow_turn_off(&s));
    let on = evaluator_at(ev, &fast_turn_on(&s));
    let sup = s.range(Param::Supply);
    deadtime::worst_need_over_supply(sup.low, sup.typ, sup.high, |v| {
        pair_need_s(ev, &off, &on, v)
    })
}

// The evaluator's constructor lives here, not in `evaluate`: the dead time
// it fixes is sized over the part spreads, and `evaluate` must not import
// this module (which builds on it).
impl Evaluator {
    /// Derive the evaluator of a design: typical part values, with the
    /// dead time sized for the worst pair of devices.
    pub fn new(d: &Design) -> Evaluator {
        let mut ev = Evaluator::with_switch(d, &d.switch);
        ev.dead_time_need_override_s = worst_dead_time_need(d, &ev).map(|(need, _)| need);
        ev
    }
}

/// The dead time to give `Evaluator::candidate` for a worst-case plan: the
/// worst need encoded by the timer the way the solver encodes the typical
/// need (the next encodable value up).
pub fn worst_case_dead_time(d: &Design, ev: &Evaluator) -> Option<DeadTimeChoice> {
    let (need, _) = worst_dead_time_need(d, ev)?;
    Some(DeadTimeChoice::encode(&ev.timer, need))
}

// --------------------------------------------------------------- worst case

/// The worst value of one quantity over the corners.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstValue {
    /// `None`: no value at the worst corner (runaway, no operating point).
    pub value: Option<f64>,
    pub limit: Option<f64>,
    pub unit: &'static str,
    /// The corner and supply where it occurs.
    pub corner: String,
    pub pass: bool,
}

/// Dead-time sufficiency at the worst pair of devices.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstDeadTime {
    /// False for a single low-side switch (no complementary device).
    pub applicable: bool,
    /// The dead time the timer was given.
    pub chosen_s: f64,
    /// The need the timer's dead time was encoded from (`DeadTimeChoice::need_s`):
    /// the worst-case need over the spreads when `worst_dead_time_need` has
    /// one (`Evaluator::dead_time_need_override_s`), else the need at typical values.
    pub encoded_need_s: f64,
    /// Whether `encoded_need_s` is the worst-case need (else typical).
    pub encoded_from_worst_case: bool,
    /// The need at typical values (rated and high-bus cases), for comparison.
    pub typical_need_s: f64,
    /// The need of the slowest turn-off against the fastest turn-on.
    pub worst_need_s: Option<f64>,
    /// Supply at which the worst need occurs.
    pub v_bus_v: f64,
    pub slow_turn_off: String,
    pub fast_turn_on: String,
    /// Multiplicative margin on the need (the evaluator's, 1.2 by default).
    pub margin: f64,
    pub pass: bool,
}

/// Whether audibility holds at every corner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstAudible {
    pub pass: bool,
    /// The first corner where it fails.
    pub corner: Option<String>,
    pub reason: String,
}

/// The worst case at one setting.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstCase {
    pub frequency_hz: f64,
    /// Hot corners evaluated (each at its own supply).
    pub corners: usize,
    /// How the corners were pruned.
    pub pruning: String,
    /// Hottest junction.
    pub junction: WorstValue,
    pub total_loss: WorstValue,
    pub ripple: WorstValue,
    pub audible: WorstAudible,
    /// Highest channel duty needed against the timer's limit.
    pub duty_range: WorstValue,
    pub dead_time: WorstDeadTime,
    /// Three-phase: the figure the current-sampling window bounds (the sampled leg's
    /// high-side duty; six-step low-side chopping, the chopping low side's off share; one
    /// DC-link shunt, the modulation index) against the window's limit at this setting.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sampling: Option<WorstValue>,
    /// Corners where the rated current cannot be reached.
    pub unreachable: Vec<String>,
    /// Every constraint holds at every corner (the setting-only checks,
    /// resolution and frequency band, are the solver's).
    pub pass: bool,
}

/// Keep the larger of `acc` and `(value, corner)`; a `None` value (no
/// junction temperature) counts as the largest.
fn keep_max(acc: &mut Option<(Option<f64>, String)>, value: Option<f64>, corner: &str) {
    let worse = match (acc.as_ref(), value) {
        (None, _) => true,
        (Some((None, _)), _) => false,
        (Some((Some(_), _)), None) => true,
        (Some((Some(a), _)), Some(v)) => v > *a,
    };
    if worse {
        *acc = Some((value, corner.to_string()));
    }
}

fn worst_value(
    acc: Option<(Option<f64>, String)>,
    limit: Option<f64>,
    unit: &'static str,
) -> WorstValue {
    let (value, corner) = acc.unwrap_or((None, "no corner evaluated".into()));
    let pass = match (value, limit) {
        (Some(v), Some(l)) => v <= l + EPS,
        (Some(_), None) => true,
        (None, _) => false,
    };
    WorstValue {
        value,
        limit,
        unit,
        corner,
        pass,
    }
}

/// The worst case at a setting: every hot corner evaluated at the rated
/// load at its supply and the hottest ambient, keeping the hottest
/// junction, the most loss, the most ripple, any audible line and the
/// highest duty; and the dead time the solver chose (`dead.seconds`)
/// against the need of the slowest turn-off and the fastest turn-on.
pub fn worst_case(
    d: &Design,
    ev: &Evaluator,
    setting: &Setting,
    dead: &DeadTimeChoice,
) -> WorstCase {
    let ctx = Context::new(d, ev, setting, dead);
    let f = setting.frequency_hz;
    let all = corners(d, ev);
    let hot: Vec<&Corner> = all.iter().filter(|c| c.kind == CornerKind::Hot).collect();
    let (mut tj, mut loss, mut ripple, mut duty) = (None, None, None, None);
    let mut audible = WorstAudible {
        pass: true,
        corner: None,
        reason: "no significant audible line at any corner".into(),
    };
    let mut unreachable = Vec::new();
    let mut sampled = None;
    for c in &hot {
        let name = c.label.clone();
        let Some(r) = c.ev.case(&c.ev.rated, f, dead.seconds) else {
            unreachable.push(name);
            continue;
        };
        keep_max(&mut tj, r.junction_c, &name);
        keep_max(&mut loss, Some(r.losses.total), &name);
        keep_max(&mut ripple, Some(r.ripple.peak_to_peak_a), &name);
        let needed = duty_needed(ev, r.compare_duty);
        let duty_value = if duty_fits(needed, ctx.duty.as_ref()) {
            needed.1
        } else {
            // A failing bottom edge must show as a failure, not hide
            // behind a smaller top duty.
            f64::INFINITY
        };
        keep_max(&mut duty, Some(duty_value), &name);
        if let Some(limit) = ctx.sampling {
            keep_max(&mut sampled, limit.of(&r), &name);
        }
        if !r.acoustic.pass && audible.pass {
            audible = WorstAudible {
                pass: false,
                corner: Some(name.clone()),
                reason: r.acoustic.reason.to_string(),
            };
        }
    }
    let l = &ev.limits;
    let mut duty_range = worst_value(duty, ctx.duty.map(|x| x.max_duty), "");
    if duty_range.value == Some(f64::INFINITY) {
        duty_range.value = None;
        duty_range.pass = false;
    }
    if ctx.duty.is_none() {
        duty_range.pass = false;
    }
    let dead_time = worst_dead(d, ev, dead);
    let junction = worst_value(tj, Some(l.t_j_max_c), "°C");
    let total_loss = worst_value(loss, None, "W");
    let ripple = worst_value(ripple, l.ripple_pp_max_a, "A");
    let sampling = sampling_worst(&ctx, sampled);
    let pass = sampling.as_ref().is_none_or(|w| w.pass)
        && junction.pass
        && ripple.pass
        && audible.pass
        && duty_range.pass
        && dead_time.pass
        && unreachable.is_empty();
    WorstCase {
        frequency_hz: f,
        corners: hot.len(),
        pruning: pruning_note(&ctx.spreads),
        junction,
        total_loss,
        ripple,
        audible,
        duty_range,
        dead_time,
        sampling,
        unreachable,
        pass,
    }
}

/// The worst case's sampling-window row: the worst corner's figure against the window's
/// limit; a setting where no duty holds the window fails with no value.
fn sampling_worst(ctx: &Context, worst: Option<(Option<f64>, String)>) -> Option<WorstValue> {
    if ctx.fixed_failures & SAMPLING_WINDOW != 0 {
        return Some(WorstValue {
            value: None,
            limit: None,
            unit: "",
            corner: "no duty holds the sampling window at this setting".into(),
            pass: false,
        });
    }
    Some(worst_value(worst, Some(ctx.sampling?.limit()), ""))
}

fn worst_dead(d: &Design, ev: &Evaluator, dead: &DeadTimeChoice) -> WorstDeadTime {
    let applicable = ev.needs_dead_time();
    let worst = worst_dead_time_need(d, ev);
    let pass =
        !applicable || (dead.code.is_some() && worst.is_some_and(|(n, _)| n <= dead.seconds + EPS));
    WorstDeadTime {
        applicable,
        chosen_s: dead.seconds,
        encoded_need_s: dead.need_s,
        encoded_from_worst_case: ev.dead_time_need_override_s.is_some(),
        typical_need_s: if applicable {
            [ev.rated, ev.high_bus]
                .iter()
                .filter_map(|c| ev.dead_time_need_s(c))
                .fold(0.0, f64::max)
        } else {
            0.0
        },
        worst_need_s: worst.map(|w| w.0),
        v_bus_v: worst.map(|w| w.1).unwrap_or(ev.rated.v_bus_v),
        slow_turn_off: "R_sink, R_g,int, Q_gd, Q_gs max; V_th min; V_drv max".into(),
        fast_turn_on: "R_source, R_g,int min; V_th min; V_drv max".into(),
        margin: ev.dead_time_margin,
        pass,
    }
}

/// One sentence on the pruning, naming only the parameters that spread.
fn pruning_note(s: &Spreads) -> String {
    let names = |ps: &[Param]| {
        ps.iter()
            .filter(|p| s.range(**p).spreads())
            .map(|p| p.label())
            .collect::<Vec<_>>()
    };
    let max = names(&HOT_AT_MAX);
    let both = names(&HOT_BOTH_ENDS);
    let list = |v: &[&str]| {
        if v.is_empty() {
            "none".to_string()
        } else {
            v.join(", ")
        }
    };
    format!(
        "loss and T_j rise monotonically with {}, so the hot corners take their maxima; both ends of {} (not monotonic in the model)",
        list(&max),
        list(&both)
    )
}

// ---------------------------------------------------------------- rendering

const WIDTH: usize = 80;

/// Wrap `text` to `WIDTH` columns, every line after the first indented by
/// `indent` spaces.
fn wrap(text: &str, first: &str, indent: usize) -> String {
    let mut out = String::new();
    let mut line = first.to_string();
    for word in text.split_whitespace() {
        let len = line.chars().count();
        let fresh = len == first.chars().count() && !first.is_empty() || len == indent;
        if len + 1 + word.chars().count() > WIDTH && !fresh {
            out.push_str(line.trim_end());
            out.push('\n');
            line = " ".repeat(indent);
        }
        if !line.is_empty() && !line.ends_with(' ') {
            line.push(' ');
        }
        line.push_str(word);
    }
    out.push_str(line.trim_end());
    out.push('\n');
    out
}

fn q(v: f64, dim: Dimension) -> String {
    format_quantity(v, dim, 3)
}

fn opt_q(v: Option<f64>, dim: Dimension, none: &str) -> String {
    v.map(|v| q(v, dim)).unwrap_or_else(|| none.to_string())
}

fn verdict(pass: bool) -> &'static str {
    if pass { "ok" } else { "FAILS" }
}

fn pct(x: f64) -> String {
    format!("{:.2} %", 100.0 * x)
}

/// The spread and worst-case text of `plan`'s `spread` command, 80
/// columns wide.
pub fn text_report(mc: &MonteCarlo, wc: &WorstCase) -> String {
    let mut o = String::new();
    o.push_str(&format!(
        "Tolerances at {}, dead time {}\n\n",
        format_quantity(mc.frequency_hz, Dimension::Frequency, 4),
        q(mc.dead_time_s, Dimension::Time)
    ));
    spreads_text(&mut o, &mc.spreads);
    worst_text(&mut o, wc);
    monte_carlo_text(&mut o, mc, wc);
    o.lines().map(|l| format!("{}\n", l.trim_end())).collect()
}

fn spreads_text(o: &mut String, s: &Spreads) {
    let dist = match s.distribution {
        Distribution::Uniform => "uniform between the limits",
        Distribution::Normal => "normal about typ, each limit at 3σ of its side",
    };
    o.push_str(&wrap(
        &format!("Spreads ({dist}; supply and ambient uniform over their ranges)"),
        "",
        2,
    ));
    o.push_str(&format!(
        "  {:<18}{:>11}{:>11}{:>11}  {}\n",
        "parameter", "low", "typ", "high", "from"
    ));
    // Parameters without spread, grouped by reason.
    let mut none: Vec<(&str, Vec<&str>)> = Vec::new();
    for r in &s.ranges {
        let dim = r.param.dimension();
        if !r.spreads() {
            let why = r.source.trim_start_matches("no spread: ");
            match none.iter_mut().find(|(w, _)| *w == why) {
                Some((_, labels)) => labels.push(r.param.label()),
                None => none.push((why, vec![r.param.label()])),
            }
            continue;
        }
        o.push_str(&format!(
            "  {:<18}{:>11}{:>11}{:>11}  {}\n",
            r.param.label(),
            q(r.low, dim),
            q(r.typ, dim),
            q(r.high, dim),
            r.source
        ));
    }
    if !none.is_empty() {
        o.push_str("  No spread (a limit is missing):\n");
        for (why, labels) in &none {
            o.push_str(&wrap(&format!("{}: {why}", labels.join(", ")), "    ", 6));
        }
    }
    o.push('\n');
}

fn worst_line(o: &mut String, name: &str, w: &WorstValue, dim: Dimension, none: &str) {
    let limit = w
        .limit
        .map(|l| format!("limit {}", q(l, dim)))
        .unwrap_or_default();
    o.push_str(&format!(
        "  {:<18}{:>11}  {:<18}{}\n",
        name,
        opt_q(w.value, dim, none),
        limit,
        if w.limit.is_some() || w.value.is_none() {
            verdict(w.pass)
        } else {
            ""
        }
    ));
    o.push_str(&wrap(&w.corner, "    at", 7));
}

fn worst_text(o: &mut String, wc: &WorstCase) {
    o.push_str(&format!(
        "Worst case over {} corner{}\n",
        wc.corners,
        if wc.corners == 1 { "" } else { "s" }
    ));
    o.push_str(&wrap(&format!("Pruning: {}.", wc.pruning), "  ", 4));
    worst_line(
        o,
        "hottest junction",
        &wc.junction,
        Dimension::Temperature,
        "runaway",
    );
    worst_line(o, "total loss", &wc.total_loss, Dimension::Power, "n/a");
    worst_line(o, "ripple p-p", &wc.ripple, Dimension::Current, "n/a");
    let duty = WorstValue {
        value: wc.duty_range.value.map(|v| v * 100.0),
        limit: wc.duty_range.limit.map(|v| v * 100.0),
        ..wc.duty_range.clone()
    };
    o.push_str(&format!(
        "  {:<18}{:>11}  {:<18}{}\n",
        "channel duty",
        duty.value
            .map(|v| format!("{v:.1} %"))
            .unwrap_or_else(|| "outside".into()),
        duty.limit
            .map(|v| format!("limit {v:.1} %"))
            .unwrap_or_default(),
        verdict(duty.pass)
    ));
    if let Some(w) = &wc.sampling {
        let pct = |v: f64| format!("{:.1} %", 100.0 * v);
        o.push_str(&format!(
            "  {:<18}{:>11}  {:<18}{}\n",
            "sampling window",
            w.value.map(pct).unwrap_or_else(|| "none".into()),
            w.limit
                .map(|l| format!("limit {}", pct(l)))
                .unwrap_or_default(),
            verdict(w.pass)
        ));
        o.push_str(&wrap(&w.corner, "    at", 7));
    }
    o.push_str(&format!(
        "  {:<18}{:>11}  {:<18}{}\n",
        "audible",
        "",
        "",
        verdict(wc.audible.pass)
    ));
    if let Some(c) = &wc.audible.corner {
        o.push_str(&wrap(&format!("{} at {c}", wc.audible.reason), "    ", 4));
    }
    let dt = &wc.dead_time;
    if dt.applicable {
        o.push_str(&format!(
            "  {:<18}{:>11}  {:<18}{}\n",
            "dead time needed",
            opt_q(dt.worst_need_s, Dimension::Time, "n/a"),
            format!("chosen {}", q(dt.chosen_s, Dimension::Time)),
            verdict(dt.pass)
        ));
        o.push_str(&wrap(
            &format!(
                "slowest turn-off ({}) against the fastest turn-on ({}) at {}, with a ×{} safety margin; the chosen dead time is encoded from the {} need {} (typical need {})",
                dt.slow_turn_off,
                dt.fast_turn_on,
                q(dt.v_bus_v, Dimension::Voltage),
                dt.margin,
                if dt.encoded_from_worst_case {
                    "worst-case"
                } else {
                    "typical"
                },
                q(dt.encoded_need_s, Dimension::Time),
                q(dt.typical_need_s, Dimension::Time)
            ),
            "    ",
            4,
        ));
    } else {
        o.push_str("  dead time          not applicable (single low-side switch)\n");
    }
    for u in &wc.unreachable {
        o.push_str(&wrap(
            &format!("the rated current cannot be reached at {u}"),
            "  FAILS:",
            4,
        ));
    }
    o.push('\n');
}

fn monte_carlo_text(o: &mut String, mc: &MonteCarlo, wc: &WorstCase) {
    o.push_str(&format!(
        "Monte Carlo: {} samples, seed {}\n",
        mc.samples, mc.seed
    ));
    o.push_str(&format!(
        "  {:<18}{:>11}{:>11}{:>11}{:>11}{:>11}\n",
        "", "p50", "p95", "p99", "max", "limit"
    ));
    let rows = [
        (
            "hottest junction",
            mc.junction_c,
            Dimension::Temperature,
            Some(mc.junction_limit_c),
        ),
        ("total loss", mc.total_loss_w, Dimension::Power, None),
        (
            "ripple p-p",
            mc.ripple_pp_a,
            Dimension::Current,
            mc.ripple_limit_a,
        ),
    ];
    for (name, p, dim, limit) in rows {
        let Some(p) = p else {
            o.push_str(&format!("  {name:<18}{:>11}\n", "n/a"));
            continue;
        };
        o.push_str(&format!(
            "  {:<18}{:>11}{:>11}{:>11}{:>11}{:>11}\n",
            name,
            q(p.p50, dim),
            q(p.p95, dim),
            q(p.p99, dim),
            q(p.max, dim),
            limit.map(|l| q(l, dim)).unwrap_or_default()
        ));
    }
    if mc.without_junction > 0 {
        o.push_str(&format!(
            "  {} samples have no junction temperature (runaway or no operating point)\n",
            mc.without_junction
        ));
    }
    // The corners should bound the samples; say so when they do not (an
    // interior maximum or a broken monotonicity assumption).
    if let (Some(p), Some(w)) = (mc.junction_c, wc.junction.value)
        && p.max > w + 1e-6
    {
        o.push_str(&wrap(
            "note: a sample runs hotter than the hottest corner; the corner pruning missed an interior maximum",
            "  ",
            4,
        ));
    }
    let y = &mc.yield_estimate;
    o.push_str(&format!(
        "  yield {} (95 % Wilson interval {} to {})\n",
        pct(y.point),
        pct(y.low),
        pct(y.high)
    ));
    o.push_str(&format!(
        "        {} of {} samples meet every constraint\n",
        y.passed, y.samples
    ));
    if !mc.failures.is_empty() {
        o.push_str("  failing constraints (a sample may fail several):\n");
        for f in &mc.failures {
            o.push_str(&format!(
                "    {:<18}{:>10} samples  {:>8}\n",
                f.constraint,
                f.count,
                pct(f.share)
            ));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// With typ midway the two-piece normal is the symmetric truncated
    /// normal: x(u) = mid + z·(high − low)/6, z = Φ⁻¹(Φ(−3) + u·(1 − 2Φ(−3))).
    #[test]
    fn symmetric_limits_give_the_truncated_normal() {
        for &u in &[0.001, 0.1, 0.3, 0.5, 0.77, 0.999] {
            let z = inverse_normal(PHI_MINUS_3 + u * (1.0 - 2.0 * PHI_MINUS_3)).clamp(-3.0, 3.0);
            let want = 10.0 + z * 6.0 / 6.0;
            let got = two_piece_normal(7.0, 10.0, 13.0, u);
            assert!((got - want).abs() < 1e-9, "u {u}: {got} vs {want}");
        }
    }

    /// Only typ and max given (low = typ): the draw is a half-normal above
    /// typ, its most populated bin the one at typ and its median at
    /// typ + 0.674σ (the half-normal's median, Φ⁻¹(¾)σ, truncation
    /// negligible), not the midpoint (typ + max)/2 of the old draw; monotone
    /// in u and reaching both limits.
    #[test]
    fn typ_and_max_only_draws_about_typ() {
        let (typ, max) = (10.0, 13.0);
        let n = 20_000;
        let xs: Vec<f64> = (0..n)
            .map(|k| two_piece_normal(typ, typ, max, (k as f64 + 0.5) / n as f64))
            .collect();
        assert!(xs.windows(2).all(|w| w[1] >= w[0]));
        assert!(xs[0] - typ < 1e-3 && max - xs[n - 1] < 0.02);
        let mut bins = [0usize; 10];
        for x in &xs {
            bins[(((x - typ) / (max - typ)) * 10.0).min(9.0) as usize] += 1;
        }
        assert!(bins.windows(2).all(|w| w[0] >= w[1]), "{bins:?}");
        let median = xs[n / 2];
        assert!(
            (median - (typ + 0.6745 * 1.0)).abs() < 0.01,
            "median {median}"
        );
    }
}
