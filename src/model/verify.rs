//! Register-level verifier: what the written timer registers really do to the motor current.
//!
//! Owns: turning the emitted register values (counter tick, alignment, period, compare values,
//! output polarity, dead time) into each output's switching instants exactly as a timer with
//! complementary outputs and dead-time insertion produces them; driving a series
//! R–L–back-EMF load through those switch states (channel conduction, body-diode or freewheel
//! diode clamping in the direction of the current, discontinuous conduction); solving the
//! periodic steady state; and measuring it (ripple, mean, rms, Fourier lines, the mean terminal
//! voltage and its split, every output pulse, the switch-state timeline).
//!
//! It is deliberately independent of the models it checks: it calls nothing in
//! `physics::ripple`, `physics::acoustics` or `model`, and shares only [`Alignment`] with
//! `timer`. Its method is its own: an event list built from integer tick counts, an exact
//! exponential per event interval, and a fixed point of the exact period map. It does no I/O
//! and prints nothing.
//!
//! # Register conventions (those of `timer`'s module doc and the emitted header)
//!
//! - One counter tick lasts `tick_s` (= divider / clock_hz); a PWM period is `period_ticks`
//!   ticks, `T = period_ticks · tick_s`.
//! - Edge alignment: the counter runs `0..period_ticks`, duty steps = `period_ticks`; the
//!   reference is high while the counter is below the compare value: `t ∈ [0, c·tick)`.
//! - Centre alignment: the counter runs up and down `0 → period_ticks/2 → 0`, duty steps =
//!   `period_ticks / 2`; seen as a triangle with its bottom at `t = 0` the reference is high
//!   for `|t| < c·tick`, i.e. `2c` ticks centred on the counter bottom (duty `c / duty steps`).
//! - Compare 0 = reference always low; compare = duty steps = reference always high.
//!   `inverted` swaps the reference (high while the counter is at or above the compare value).
//! - Dead-time insertion (common practice): each complementary output turns on `dead_time_s`
//!   after its reference edge (high side after the rise, low side after the fall) and turns off
//!   with the edge; a reference pulse no longer than the dead time gives no output pulse. A
//!   reference with no edge (always high or always low) gives a constant output.
//! - Time origin of every result: `t = 0` at counter 0 (edge) or the counter bottom (centre);
//!   all times lie in `[0, T)`.
//!
//! # Circuit (common practice)
//!
//! `L·di/dt = v_m − R·i − E`, `v_m` the motor terminal voltage, `i > 0` out of leg A (half
//! bridge, H-bridge) or from the supply through the motor into the switch (low side).
//! - A conducting switch is a resistance `r_ds_on_ohm` in either direction (its body diode in
//!   parallel is ignored: assumption, synchronous rectification).
//! - A bridge leg with both switches off is clamped by the body diode the current forces into
//!   conduction: current out of the leg → low-side diode, `v_leg = −v_sd_v`; into the leg →
//!   high-side diode, `v_leg = v_bus_v + v_sd_v`. A low-side switch that is off: current `> 0`
//!   → freewheel diode, `v_m = −v_f_v`; current `< 0` → the switch's body diode,
//!   `v_m = v_bus_v + v_sd_v`.
//! - When the current reaches zero while a path depends on a diode, it stays zero (the terminal
//!   voltage is then `E`) until the switch states change and drive it again (discontinuous
//!   conduction).
//!
//! Between events the current is `i(t) = i_∞ + (i_0 − i_∞)·e^(−t/τ)` with `τ = L/(R + r)`,
//! `i_∞ = (a − E)/(R + r)`, where the terminal voltage is `v_m = a − r·i` in that state (the
//! first-order linear ODE's solution: common practice); a diode's zero crossing inside an
//! interval is found in closed form, `t_0 = τ·ln((i_0 − i_∞)/(−i_∞))` (own derivation).
//!
//! # Steady state
//!
//! The period map `P(i_0)` (current after one period from `i_0`) is monotone and piecewise
//! affine with slope `e^(−Σ dt/τ) < 1` (or 0 after a clamp at zero). Its fixed point is found by
//! Newton steps on `P(i) − i`, which are exact on an affine piece, safeguarded by a bracket
//! `[−B, B]` with `B` the largest `|i_∞|` of any state (own derivation); the residual is
//! reported ([`Verification::residual_a`]).
//!
//! # Measurements
//!
//! Mean and rms integrate each exponential piece exactly; minimum and maximum lie at piece ends
//! (each piece is monotone). The Fourier lines are the exact integrals of each piece against
//! `e^(−jωt)` (no sampling, no DFT; own derivation), reported as rms values per harmonic of the
//! PWM frequency. The mean terminal voltage is split into the references' ideal value, the
//! dead-time loss, the switch and diode drops and the zero-current intervals
//! ([`VoltageSplit`]).
//!
//! # Three-phase bridges
//!
//! [`three_phase_samples`] gives each leg's state and low-side conduction window at the
//! current-sampling trigger, per PWM period (timing only). [`verify_three_phase`] also solves
//! the phase currents of a star R–L–EMF motor with a floating neutral over one electrical
//! period (compares supplied per PWM period) and reports them, and the low-side shunt
//! currents, at the trigger. Convention: PWM period `n` runs from counter bottom to counter
//! bottom and shows compare `n`'s waveform (a compare update takes effect at the bottom); a
//! high-side turn-on delayed past the bottom (dead time longer than the compare interval) is
//! taken with the new period's compare (assumption). [`verify_three_phase_drives`] also
//! enables each leg's outputs per PWM period, as six-step drives a bridge (a chopped output,
//! a held one, a floating leg), and the back-EMF may be trapezoidal ([`EmfShape`]).

use crate::model::timer::Alignment;
use std::cell::RefCell;
use std::fmt;
use std::rc::Rc;

/// Fixed-point iterations before the solver gives up (bisection alone needs ~110 on `f64`).
const MAX_FIXED_POINT_ITERATIONS: usize = 200;

/// Relative step below which the fixed point counts as found (relative to the current bound).
const FIXED_POINT_REL_STEP: f64 = 1e-15;

/// Breakpoints closer than this fraction of the period are merged (they stem from the same
/// instant computed along different floating-point paths).
const MERGE_REL: f64 = 1e-12;

// ---------------------------------------------------------------------------------------------
// Inputs
// ---------------------------------------------------------------------------------------------

/// The timer registers as written, in seconds and ticks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimerRegisters {
    /// One counter tick, s (= prescaler divider / timer clock).
    pub tick_s: f64,
    pub alignment: Alignment,
    /// Counter ticks per PWM period (edge: counter `0..period_ticks`; centre: up-down
    /// `0 → period_ticks/2 → 0`, so `period_ticks` must be even).
    pub period_ticks: u64,
    /// Inserted dead time, s (dead-time ticks × dead-time tick). Ignored by [`Stage::LowSide`].
    pub dead_time_s: f64,
}

impl TimerRegisters {
    /// Full-scale compare value: `period_ticks` (edge) or `period_ticks / 2` (centre).
    pub fn duty_steps(&self) -> u64 {
        match self.alignment {
            Alignment::Edge => self.period_ticks,
            Alignment::Centre => self.period_ticks / 2,
        }
    }

    /// PWM period `T = period_ticks · tick_s`, s.
    pub fn period_s(&self) -> f64 {
        self.period_ticks as f64 * self.tick_s
    }

    /// PWM frequency `1 / T`, Hz.
    pub fn frequency_hz(&self) -> f64 {
        1.0 / self.period_s()
    }

    fn validate(&self) -> Result<(), VerifyError> {
        if !(self.tick_s.is_finite() && self.tick_s > 0.0) {
            return Err(VerifyError::Tick);
        }
        let odd_centre =
            self.alignment == Alignment::Centre && !self.period_ticks.is_multiple_of(2);
        if self.period_ticks < 2 || odd_centre {
            return Err(VerifyError::PeriodTicks(self.period_ticks));
        }
        if !(self.dead_time_s.is_finite() && self.dead_time_s >= 0.0) {
            return Err(VerifyError::DeadTime);
        }
        Ok(())
    }
}

/// One leg's compare register and output polarity.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LegCompare {
    /// Compare value, `0..=duty_steps`.
    pub compare: u64,
    /// `false`: reference high while the counter is below `compare` (the emitted convention);
    /// `true`: the reference is inverted (high while the counter is at or above `compare`).
    pub inverted: bool,
    /// On an up-down count whose compares are loaded at both extremes: the compare in effect
    /// while counting down (`compare` is then the up count's); `None`: the same as `compare`.
    pub down: Option<u64>,
}

impl LegCompare {
    /// Normal polarity (reference high below the compare value).
    pub fn new(compare: u64) -> Self {
        LegCompare {
            compare,
            inverted: false,
            down: None,
        }
    }

    /// This compare while counting up and `down` while counting down (centre alignment).
    pub fn halves(self, down: u64) -> Self {
        LegCompare {
            down: Some(down),
            ..self
        }
    }

    /// Inverted polarity (reference high at or above the compare value).
    pub fn inverted(compare: u64) -> Self {
        LegCompare {
            compare,
            inverted: true,
            down: None,
        }
    }
}

/// The output stage and the compare values that drive it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    /// One switch to ground, the motor from the supply to its drain, a freewheel diode across
    /// the motor. The switch follows the reference; no dead time.
    LowSide(LegCompare),
    /// One complementary leg; the motor from the leg output to ground.
    HalfBridge(LegCompare),
    /// Two complementary legs on the same counter; the motor from leg A to leg B. Bipolar: e.g.
    /// `b = LegCompare::inverted(a.compare)`; unipolar: two normal legs with their own compares.
    HBridge { a: LegCompare, b: LegCompare },
}

impl Stage {
    fn legs(&self) -> (LegCompare, Option<LegCompare>) {
        match *self {
            Stage::LowSide(a) | Stage::HalfBridge(a) => (a, None),
            Stage::HBridge { a, b } => (a, Some(b)),
        }
    }

    fn complementary(&self) -> bool {
        !matches!(self, Stage::LowSide(_))
    }
}

/// The load and the switches, SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Circuit {
    /// Motor winding resistance, Ω (> 0).
    pub r_ohm: f64,
    /// Motor inductance, H (> 0).
    pub l_h: f64,
    /// Back-EMF, V, opposing positive current (any sign).
    pub back_emf_v: f64,
    /// Supply voltage, V (≥ 0).
    pub v_bus_v: f64,
    /// On-resistance of each conducting switch, Ω (≥ 0).
    pub r_ds_on_ohm: f64,
    /// Body-diode forward voltage, V (≥ 0): bridge legs in the dead time, and a low-side switch
    /// carrying reverse current while off.
    pub v_sd_v: f64,
    /// Freewheel-diode forward voltage, V (≥ 0), low-side stage only.
    pub v_f_v: f64,
}

impl Circuit {
    fn validate(&self) -> Result<(), VerifyError> {
        let positive = |x: f64| x.is_finite() && x > 0.0;
        let non_negative = |x: f64| x.is_finite() && x >= 0.0;
        let ok = positive(self.r_ohm)
            && positive(self.l_h)
            && self.back_emf_v.is_finite()
            && non_negative(self.v_bus_v)
            && non_negative(self.r_ds_on_ohm)
            && non_negative(self.v_sd_v)
            && non_negative(self.v_f_v);
        if ok {
            Ok(())
        } else {
            Err(VerifyError::Circuit)
        }
    }
}

/// Why a verification was refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum VerifyError {
    /// `tick_s` is not a positive finite number.
    Tick,
    /// `period_ticks` < 2, or odd on a centre-aligned counter.
    PeriodTicks(u64),
    /// `dead_time_s` is negative or not finite.
    DeadTime,
    /// A compare value above the duty steps.
    Compare { compare: u64, duty_steps: u64 },
    /// R or L not positive, or a voltage/resistance negative or not finite.
    Circuit,
    /// The steady-state solver did not converge (should not happen; reported, never hidden).
    NoSteadyState,
    /// A sampling trigger's counter value beyond the counter's range.
    Trigger(u64),
    /// More diode events in one interval than the three-phase solver handles (should not
    /// happen; reported, never hidden).
    TooManyEvents,
}

impl fmt::Display for VerifyError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            VerifyError::Tick => write!(f, "the counter tick must be a positive time"),
            VerifyError::PeriodTicks(p) => write!(
                f,
                "period of {p} ticks: needs at least 2 ticks, and an even count when centre-aligned"
            ),
            VerifyError::DeadTime => write!(f, "the dead time must be zero or positive"),
            VerifyError::Compare {
                compare,
                duty_steps,
            } => write!(
                f,
                "compare value {compare} above the {duty_steps} duty steps"
            ),
            VerifyError::Circuit => write!(
                f,
                "R and L must be positive; voltages and on-resistance zero or positive"
            ),
            VerifyError::NoSteadyState => write!(f, "the periodic steady state was not found"),
            VerifyError::Trigger(c) => {
                write!(f, "trigger counter value {c} beyond the counter's range")
            }
            VerifyError::TooManyEvents => {
                write!(f, "too many diode events in one switching interval")
            }
        }
    }
}

impl std::error::Error for VerifyError {}

// ---------------------------------------------------------------------------------------------
// Outputs and their pulses
// ---------------------------------------------------------------------------------------------

/// Leg name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum LegName {
    A,
    B,
}

/// One switch's gate output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Output {
    /// The single switch of [`Stage::LowSide`].
    Switch,
    /// The high-side output of a bridge leg.
    High(LegName),
    /// The low-side output of a bridge leg.
    Low(LegName),
}

/// State of a leg during a timeline interval.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum LegState {
    /// High-side switch on (for [`Stage::LowSide`]: the switch is on).
    High,
    /// Low-side switch on.
    Low,
    /// Both switches off (dead time; for [`Stage::LowSide`]: the switch is off).
    Dead,
}

/// One output's pulses over a period.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputTiming {
    pub output: Output,
    /// Total ON time per period, s (0 = never on, the period = always on).
    pub on_s: f64,
    /// Number of ON pulses per period (0 when the output never switches).
    pub pulses: u32,
    /// Shortest ON pulse, s (`None` when the output never switches).
    pub shortest_on_s: Option<f64>,
    /// Shortest OFF interval, s (`None` when the output never switches).
    pub shortest_off_s: Option<f64>,
    /// The reference asked for an ON pulse on this output that the dead time swallowed
    /// (a zero-width output pulse).
    pub swallowed: bool,
}

impl OutputTiming {
    /// Shortest pulse of either level, s: 0 when a pulse was swallowed, `None` when the output
    /// never switches (nothing to check against a minimum pulse).
    pub fn shortest_pulse_s(&self) -> Option<f64> {
        if self.swallowed {
            return Some(0.0);
        }
        match (self.shortest_on_s, self.shortest_off_s) {
            (Some(on), Some(off)) => Some(on.min(off)),
            (a, b) => a.or(b),
        }
    }
}

/// A cyclic ON interval `[start, start + len)` modulo the period.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Arc {
    start_s: f64,
    len_s: f64,
}

impl Arc {
    fn contains(&self, t_s: f64, period_s: f64) -> bool {
        if self.len_s >= period_s {
            return true;
        }
        self.len_s > 0.0 && (t_s - self.start_s).rem_euclid(period_s) < self.len_s
    }

    /// Rising and falling instants in `[0, T)`, when the arc switches at all.
    fn edges(&self, period_s: f64) -> Option<(f64, f64)> {
        (self.len_s > 0.0 && self.len_s < period_s).then(|| {
            (
                self.start_s,
                (self.start_s + self.len_s).rem_euclid(period_s),
            )
        })
    }

    fn complement(&self, period_s: f64) -> Arc {
        Arc {
            start_s: (self.start_s + self.len_s).rem_euclid(period_s),
            len_s: period_s - self.len_s,
        }
    }

    /// Dead-time insertion on this arc's turn-on edge (common practice).
    fn delayed_on(&self, dead_s: f64, period_s: f64) -> Arc {
        if self.len_s >= period_s {
            *self
        } else if self.len_s <= dead_s {
            Arc {
                start_s: self.start_s,
                len_s: 0.0,
            }
        } else {
            Arc {
                start_s: (self.start_s + dead_s).rem_euclid(period_s),
                len_s: self.len_s - dead_s,
            }
        }
    }
}

/// A leg's reference and outputs.
#[derive(Debug, Clone, Copy)]
struct LegArcs {
    reference: Arc,
    high: Arc,
    /// `None` for the low-side stage's single switch.
    low: Option<Arc>,
}

impl LegArcs {
    fn state_at(&self, t_s: f64, period_s: f64) -> LegState {
        if self.high.contains(t_s, period_s) {
            LegState::High
        } else if self.low.is_some_and(|l| l.contains(t_s, period_s)) {
            LegState::Low
        } else {
            LegState::Dead
        }
    }
}

/// A complementary leg's switch state at `t_s` into the period (dead time inserted as in
/// [`verify`]): for checks that need no load, such as which legs a DC-link shunt sees.
pub fn leg_state_at(
    regs: &TimerRegisters,
    leg: LegCompare,
    t_s: f64,
) -> Result<LegState, VerifyError> {
    regs.validate()?;
    let arcs = leg_arcs(regs, leg, true)?;
    Ok(arcs.state_at(t_s.rem_euclid(regs.period_s()), regs.period_s()))
}

/// The reference of one leg, from integer ticks (see the module doc's conventions).
fn reference_arc(regs: &TimerRegisters, leg: LegCompare) -> Result<Arc, VerifyError> {
    let steps = regs.duty_steps();
    let down = leg.down.unwrap_or(leg.compare);
    if let Some(&compare) = [leg.compare, down].iter().find(|&&c| c > steps) {
        return Err(VerifyError::Compare {
            compare,
            duty_steps: steps,
        });
    }
    let p = regs.period_ticks;
    // Centre: high from the down count's compare (at `p − down`) through the bottom to the up
    // count's (at `compare`); one arc over the period, wrapping at the bottom.
    let (start, len) = match regs.alignment {
        Alignment::Edge => (0, leg.compare),
        Alignment::Centre => ((p - down) % p, leg.compare + down),
    };
    let (start, len) = if leg.inverted {
        ((start + len) % p, p - len)
    } else {
        (start, len)
    };
    Ok(Arc {
        start_s: start as f64 * regs.tick_s,
        len_s: len as f64 * regs.tick_s,
    })
}

fn leg_arcs(
    regs: &TimerRegisters,
    leg: LegCompare,
    complementary: bool,
) -> Result<LegArcs, VerifyError> {
    let t = regs.period_s();
    let reference = reference_arc(regs, leg)?;
    if !complementary {
        return Ok(LegArcs {
            reference,
            high: reference,
            low: None,
        });
    }
    Ok(LegArcs {
        reference,
        high: reference.delayed_on(regs.dead_time_s, t),
        low: Some(reference.complement(t).delayed_on(regs.dead_time_s, t)),
    })
}

fn stage_arcs(
    regs: &TimerRegisters,
    stage: &Stage,
) -> Result<(LegArcs, Option<LegArcs>), VerifyError> {
    regs.validate()?;
    let (a, b) = stage.legs();
    let c = stage.complementary();
    let a = leg_arcs(regs, a, c)?;
    let b = b.map(|b| leg_arcs(regs, b, c)).transpose()?;
    Ok((a, b))
}

fn timing(output: Output, reference: Arc, out: Arc, period_s: f64) -> OutputTiming {
    let switches = out.edges(period_s).is_some();
    OutputTiming {
        output,
        on_s: out.len_s,
        pulses: u32::from(switches),
        shortest_on_s: switches.then_some(out.len_s),
        shortest_off_s: switches.then_some(period_s - out.len_s),
        swallowed: reference.len_s > 0.0 && reference.len_s < period_s && out.len_s <= 0.0,
    }
}

fn leg_timings(name: LegName, leg: &LegArcs, period_s: f64, out: &mut Vec<OutputTiming>) {
    match leg.low {
        None => out.push(timing(Output::Switch, leg.reference, leg.high, period_s)),
        Some(low) => {
            let ref_low = leg.reference.complement(period_s);
            out.push(timing(
                Output::High(name),
                leg.reference,
                leg.high,
                period_s,
            ));
            out.push(timing(Output::Low(name), ref_low, low, period_s));
        }
    }
}

/// Every output's pulses for these registers and compare values (no load needed): the check of
/// compare limits. Each output's pulse is its reference interval minus the dead time, none when
/// the reference is not longer than the dead time (common practice). Order: the low-side
/// stage's switch; else high A, low A (, high B, low B).
pub fn output_timings(
    regs: &TimerRegisters,
    stage: &Stage,
) -> Result<Vec<OutputTiming>, VerifyError> {
    let (a, b) = stage_arcs(regs, stage)?;
    let t = regs.period_s();
    let mut out = Vec::with_capacity(4);
    leg_timings(LegName::A, &a, t, &mut out);
    if let Some(b) = b {
        leg_timings(LegName::B, &b, t, &mut out);
    }
    Ok(out)
}

/// The shortest pulse of any output, s (0 when a pulse was swallowed by the dead time; `None`
/// when no output switches): to compare with the output stage's minimum pulse.
pub fn shortest_pulse_s(timings: &[OutputTiming]) -> Option<f64> {
    timings
        .iter()
        .filter_map(OutputTiming::shortest_pulse_s)
        .reduce(f64::min)
}

/// The shortest low-side ON time per period of any bridge leg, s (the bootstrap refresh time;
/// one pulse per output and period, so the ON time is one contiguous pulse): the period when
/// always on, 0 when never on; `None` for the low-side stage (no low-side output).
pub fn low_side_on_s(timings: &[OutputTiming]) -> Option<f64> {
    timings
        .iter()
        .filter(|t| matches!(t.output, Output::Low(_)))
        .map(|t| t.on_s)
        .reduce(f64::min)
}

// ---------------------------------------------------------------------------------------------
// Timeline and terminal voltage per state
// ---------------------------------------------------------------------------------------------

/// One interval of constant switch states.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SwitchInterval {
    pub t0_s: f64,
    pub t1_s: f64,
    /// Leg A (or the low-side switch: `High` = on, `Dead` = off).
    pub a: LegState,
    /// Leg B of an H-bridge.
    pub b: Option<LegState>,
    /// Leg A's reference (before dead-time insertion) is high.
    pub reference_a: bool,
    pub reference_b: Option<bool>,
}

/// The terminal voltage `v_m = a − r·i` of one switch state for one current direction.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Terminal {
    a_v: f64,
    r_ohm: f64,
    /// `a_v` with lossless switches and diodes (R_ds(on), V_sd, V_f = 0).
    a_lossless_v: f64,
}

impl Terminal {
    fn minus(self, other: Terminal) -> Terminal {
        Terminal {
            a_v: self.a_v - other.a_v,
            r_ohm: self.r_ohm + other.r_ohm,
            a_lossless_v: self.a_lossless_v - other.a_lossless_v,
        }
    }
}

/// Bridge-leg output voltage for a current `i_out` out of the leg of the given sign.
fn leg_terminal(state: LegState, out_positive: bool, c: &Circuit) -> Terminal {
    match (state, out_positive) {
        (LegState::High, _) => Terminal {
            a_v: c.v_bus_v,
            r_ohm: c.r_ds_on_ohm,
            a_lossless_v: c.v_bus_v,
        },
        (LegState::Low, _) => Terminal {
            a_v: 0.0,
            r_ohm: c.r_ds_on_ohm,
            a_lossless_v: 0.0,
        },
        (LegState::Dead, true) => Terminal {
            a_v: -c.v_sd_v,
            r_ohm: 0.0,
            a_lossless_v: 0.0,
        },
        (LegState::Dead, false) => Terminal {
            a_v: c.v_bus_v + c.v_sd_v,
            r_ohm: 0.0,
            a_lossless_v: c.v_bus_v,
        },
    }
}

/// Low-side stage motor voltage (switch on = `High`, off = `Dead`).
fn low_side_terminal(state: LegState, positive: bool, c: &Circuit) -> Terminal {
    match (state, positive) {
        (LegState::High, _) => Terminal {
            a_v: c.v_bus_v,
            r_ohm: c.r_ds_on_ohm,
            a_lossless_v: c.v_bus_v,
        },
        (_, true) => Terminal {
            a_v: -c.v_f_v,
            r_ohm: 0.0,
            a_lossless_v: 0.0,
        },
        (_, false) => Terminal {
            a_v: c.v_bus_v + c.v_sd_v,
            r_ohm: 0.0,
            a_lossless_v: c.v_bus_v,
        },
    }
}

/// Motor terminal voltage for a motor current of the given sign.
fn motor_terminal(
    stage: &Stage,
    a: LegState,
    b: Option<LegState>,
    positive: bool,
    c: &Circuit,
) -> Terminal {
    match (stage, b) {
        (Stage::LowSide(_), _) => low_side_terminal(a, positive, c),
        (_, None) => leg_terminal(a, positive, c),
        (_, Some(b)) => leg_terminal(a, positive, c).minus(leg_terminal(b, !positive, c)),
    }
}

/// One direction's dynamics in a switch state.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Branch {
    terminal: Terminal,
    i_inf_a: f64,
    tau_s: f64,
}

impl Branch {
    fn new(terminal: Terminal, c: &Circuit) -> Branch {
        let r = c.r_ohm + terminal.r_ohm;
        Branch {
            terminal,
            i_inf_a: (terminal.a_v - c.back_emf_v) / r,
            tau_s: c.l_h / r,
        }
    }

    /// Current after `dt` from `i0` (the exact exponential, common practice).
    fn advance(&self, i0: f64, dt: f64) -> f64 {
        i0 + (self.i_inf_a - i0) * -(-dt / self.tau_s).exp_m1()
    }
}

/// An interval of constant switch states with its two branches.
#[derive(Debug, Clone, Copy)]
struct Segment {
    interval: SwitchInterval,
    pos: Branch,
    neg: Branch,
    /// A path depends on a diode: the current cannot cross zero.
    floating: bool,
    /// Terminal voltage the references alone would give with ideal switches, V.
    v_reference_v: f64,
}

fn build_segments(
    regs: &TimerRegisters,
    stage: &Stage,
    c: &Circuit,
) -> Result<Vec<Segment>, VerifyError> {
    let (la, lb) = stage_arcs(regs, stage)?;
    let t = regs.period_s();
    let mut cuts = vec![0.0, t];
    for leg in std::iter::once(&la).chain(lb.as_ref()) {
        for arc in [Some(leg.high), leg.low].into_iter().flatten() {
            if let Some((r, f)) = arc.edges(t) {
                cuts.extend([r, f]);
            }
        }
    }
    cuts.sort_by(f64::total_cmp);
    cuts.dedup_by(|b, a| *b - *a <= MERGE_REL * t);
    if let Some(last) = cuts.last_mut() {
        *last = t;
    }
    let segments = cuts
        .windows(2)
        .map(|w| segment(stage, c, &la, lb.as_ref(), w[0], w[1], t))
        .collect();
    Ok(segments)
}

fn segment(
    stage: &Stage,
    c: &Circuit,
    la: &LegArcs,
    lb: Option<&LegArcs>,
    t0: f64,
    t1: f64,
    period_s: f64,
) -> Segment {
    let mid = 0.5 * (t0 + t1);
    let a = la.state_at(mid, period_s);
    let b = lb.map(|l| l.state_at(mid, period_s));
    let reference_a = la.reference.contains(mid, period_s);
    let reference_b = lb.map(|l| l.reference.contains(mid, period_s));
    let v_reference_v = c.v_bus_v
        * (f64::from(u8::from(reference_a)) - f64::from(u8::from(reference_b.unwrap_or(false))));
    let floating = a == LegState::Dead || b == Some(LegState::Dead);
    Segment {
        interval: SwitchInterval {
            t0_s: t0,
            t1_s: t1,
            a,
            b,
            reference_a,
            reference_b,
        },
        pos: Branch::new(motor_terminal(stage, a, b, true, c), c),
        neg: Branch::new(motor_terminal(stage, a, b, false, c), c),
        floating,
        v_reference_v,
    }
}

// ---------------------------------------------------------------------------------------------
// Current pieces and the period map
// ---------------------------------------------------------------------------------------------

/// How the current flows during a piece.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Conduction {
    /// Only switch channels (and the motor) carry the current; it may cross zero.
    Channels,
    /// A diode carries the current (dead time, freewheeling); it stops at zero.
    Diode,
    /// No current: every path is blocked (discontinuous conduction).
    Zero,
}

/// A piece of the steady-state current: `i(t) = i_inf + (i0 − i_inf)·e^(−(t − t0)/τ)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CurrentPiece {
    pub t0_s: f64,
    pub t1_s: f64,
    pub i0_a: f64,
    pub i1_a: f64,
    /// Asymptote, A (0 for a `Zero` piece).
    pub i_inf_a: f64,
    /// Time constant, s (infinite for a `Zero` piece).
    pub tau_s: f64,
    pub conduction: Conduction,
    /// Index into [`Verification::timeline`].
    pub interval: usize,
}

impl CurrentPiece {
    fn zero(t0: f64, t1: f64, interval: usize) -> CurrentPiece {
        CurrentPiece {
            t0_s: t0,
            t1_s: t1,
            i0_a: 0.0,
            i1_a: 0.0,
            i_inf_a: 0.0,
            tau_s: f64::INFINITY,
            conduction: Conduction::Zero,
            interval,
        }
    }

    /// The current is identically zero: every path blocked, or a channel path with nothing
    /// to drive it (zero start, zero asymptote).
    pub fn is_zero(&self) -> bool {
        self.conduction == Conduction::Zero || (self.i0_a == 0.0 && self.i_inf_a == 0.0)
    }

    /// Current at `t_s` inside the piece, A.
    pub fn current_at(&self, t_s: f64) -> f64 {
        if self.conduction == Conduction::Zero {
            return 0.0;
        }
        let dt = t_s - self.t0_s;
        self.i0_a + (self.i_inf_a - self.i0_a) * -(-dt / self.tau_s).exp_m1()
    }

    /// `(1 − e^(−dt/τ))·τ`, the integral of the decaying part's shape.
    fn decay_integral(&self, k: f64) -> f64 {
        let dt = self.t1_s - self.t0_s;
        -(-k * dt / self.tau_s).exp_m1() * self.tau_s / k
    }

    /// `∫ i dt` over the piece (exact).
    fn integral(&self) -> f64 {
        if self.conduction == Conduction::Zero {
            return 0.0;
        }
        let dt = self.t1_s - self.t0_s;
        self.i_inf_a * dt + (self.i0_a - self.i_inf_a) * self.decay_integral(1.0)
    }

    /// `∫ i² dt` over the piece (exact; own derivation).
    fn square_integral(&self) -> f64 {
        if self.conduction == Conduction::Zero {
            return 0.0;
        }
        let dt = self.t1_s - self.t0_s;
        let (c, a) = (self.i_inf_a, self.i0_a - self.i_inf_a);
        (c * c * dt + 2.0 * c * a * self.decay_integral(1.0) + a * a * self.decay_integral(2.0))
            .max(0.0)
    }
}

/// Result of one period from a start current.
#[derive(Debug, Clone, Copy)]
struct PeriodEnd {
    i_end_a: f64,
    /// `ln(dP/di)` while no clamp at zero happened.
    ln_slope: f64,
    /// The current was held at zero somewhere (`dP/di = 0`).
    clamped: bool,
}

/// The piecewise solver over one period.
struct Solver<'a> {
    segments: &'a [Segment],
}

impl Solver<'_> {
    fn run_period(&self, i0: f64, mut pieces: Option<&mut Vec<CurrentPiece>>) -> PeriodEnd {
        let mut end = PeriodEnd {
            i_end_a: i0,
            ln_slope: 0.0,
            clamped: false,
        };
        for (k, seg) in self.segments.iter().enumerate() {
            run_segment(seg, k, &mut end, pieces.as_deref_mut());
        }
        end
    }

    /// Largest `|i_∞|` of any state: the current of the steady state lies within ±this.
    fn current_bound(&self) -> f64 {
        self.segments
            .iter()
            .flat_map(|s| [s.pos.i_inf_a.abs(), s.neg.i_inf_a.abs()])
            .fold(0.0, f64::max)
    }

    /// Fixed point of the period map (see the module doc). Returns `(i_start, residual)`.
    fn steady_state(&self) -> Result<(f64, f64), VerifyError> {
        let bound = self.current_bound();
        if bound == 0.0 {
            return Ok((0.0, 0.0));
        }
        let (mut lo, mut hi) = (-bound, bound);
        let mut i = hi;
        for _ in 0..MAX_FIXED_POINT_ITERATIONS {
            let end = self.run_period(i, None);
            let g = end.i_end_a - i;
            if g == 0.0 {
                return Ok((i, 0.0));
            }
            if g > 0.0 {
                lo = i;
            } else {
                hi = i;
            }
            let newton = if end.clamped {
                end.i_end_a
            } else {
                i + g / -end.ln_slope.exp_m1()
            };
            let next = if newton > lo && newton < hi {
                newton
            } else {
                0.5 * (lo + hi)
            };
            if (next - i).abs() <= FIXED_POINT_REL_STEP * bound
                || hi - lo <= FIXED_POINT_REL_STEP * bound
            {
                let residual = self.run_period(next, None).i_end_a - next;
                return Ok((next, residual));
            }
            i = next;
        }
        Err(VerifyError::NoSteadyState)
    }
}

fn push(pieces: &mut Option<&mut Vec<CurrentPiece>>, piece: CurrentPiece) {
    if let Some(p) = pieces.as_deref_mut()
        && piece.t1_s > piece.t0_s
    {
        p.push(piece);
    }
}

fn conducting(
    branch: &Branch,
    t0: f64,
    t1: f64,
    i0: f64,
    conduction: Conduction,
    interval: usize,
) -> CurrentPiece {
    CurrentPiece {
        t0_s: t0,
        t1_s: t1,
        i0_a: i0,
        i1_a: branch.advance(i0, t1 - t0),
        i_inf_a: branch.i_inf_a,
        tau_s: branch.tau_s,
        conduction,
        interval,
    }
}

/// Advances `end` through one segment, splitting at a diode's zero crossing.
fn run_segment(
    seg: &Segment,
    index: usize,
    end: &mut PeriodEnd,
    mut pieces: Option<&mut Vec<CurrentPiece>>,
) {
    let (mut t, t1) = (seg.interval.t0_s, seg.interval.t1_s);
    let mut i = end.i_end_a;
    if !seg.floating {
        let p = conducting(&seg.pos, t, t1, i, Conduction::Channels, index);
        end.ln_slope -= (t1 - t) / seg.pos.tau_s;
        end.i_end_a = p.i1_a;
        push(&mut pieces, p);
        return;
    }
    loop {
        let branch = if i > 0.0 || (i == 0.0 && seg.pos.i_inf_a > 0.0) {
            &seg.pos
        } else if i < 0.0 || seg.neg.i_inf_a < 0.0 {
            &seg.neg
        } else {
            // Zero current, both directions blocked: it stays zero.
            end.clamped = true;
            end.i_end_a = 0.0;
            push(&mut pieces, CurrentPiece::zero(t, t1, index));
            return;
        };
        let crossing = zero_crossing_s(branch, i).filter(|&dt| t + dt < t1);
        let Some(dt) = crossing else {
            let p = conducting(branch, t, t1, i, Conduction::Diode, index);
            end.ln_slope -= (t1 - t) / branch.tau_s;
            end.i_end_a = p.i1_a;
            push(&mut pieces, p);
            return;
        };
        let mut p = conducting(branch, t, t + dt, i, Conduction::Diode, index);
        p.i1_a = 0.0;
        push(&mut pieces, p);
        end.clamped = true;
        t += dt;
        i = 0.0;
    }
}

/// Time for a current `i0 ≠ 0` heading across zero towards `i_∞` to reach zero:
/// `τ·ln((i0 − i_∞)/(−i_∞))` (own derivation); `None` when it does not cross.
fn zero_crossing_s(branch: &Branch, i0: f64) -> Option<f64> {
    let i_inf = branch.i_inf_a;
    if i0 == 0.0 || i_inf == 0.0 || i0.signum() == i_inf.signum() {
        return None;
    }
    Some(branch.tau_s * (i0 / -i_inf).ln_1p())
}

// ---------------------------------------------------------------------------------------------
// Measurement
// ---------------------------------------------------------------------------------------------

/// The mean motor terminal voltage and its split (each term a mean over the period, V):
/// `mean_v = ideal_v + dead_time_v + drops_v + dcm_v` exactly.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VoltageSplit {
    /// Mean terminal voltage `v_m`, V. In the steady state it equals `R·mean_a + E`.
    pub mean_v: f64,
    /// What the references alone give with ideal switches: `m·V_bus` (m the reference duty,
    /// or the difference of the two legs' reference duties).
    pub ideal_v: f64,
    /// Dead-time loss: the diode-clamped legs (with ideal diodes) against the references while
    /// current flows; about `−t_dead·f·V_bus` per leg edge pair for a positive current.
    pub dead_time_v: f64,
    /// Switch and diode drops: `−i·R_ds(on)` per conducting switch, `−V_sd`, `−V_f`.
    pub drops_v: f64,
    /// Zero-current intervals: the terminal sits at `E` instead of the reference voltage.
    pub dcm_v: f64,
}

/// One Fourier line of the motor current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Line {
    /// Multiple of the PWM frequency.
    pub harmonic: u32,
    pub frequency_hz: f64,
    /// Rms amplitude of the line, A.
    pub rms_a: f64,
}

/// The verified steady state of one single-phase stage.
#[derive(Debug, Clone, PartialEq)]
pub struct Verification {
    pub period_s: f64,
    pub frequency_hz: f64,
    /// Switch states over one period, in time order, covering `[0, T)`.
    pub timeline: Vec<SwitchInterval>,
    /// The steady-state current over one period, in time order, covering `[0, T)`.
    pub pieces: Vec<CurrentPiece>,
    /// `P(i0) − i0` at the solution, A (the fixed point's residual).
    pub residual_a: f64,
    pub mean_a: f64,
    pub rms_a: f64,
    pub min_a: f64,
    pub max_a: f64,
    /// `max_a − min_a`.
    pub ripple_pp_a: f64,
    /// The current never rests at zero for a non-zero time (no piece
    /// [`CurrentPiece::is_zero`]).
    pub continuous: bool,
    pub voltage: VoltageSplit,
    /// Every output's pulses (order as [`output_timings`]).
    pub outputs: Vec<OutputTiming>,
}

/// Verifies one single-phase stage: the steady-state motor current the registers produce.
/// Event-based; cost grows with the number of switching edges only (a few µs).
pub fn verify(
    regs: &TimerRegisters,
    stage: &Stage,
    circuit: &Circuit,
) -> Result<Verification, VerifyError> {
    circuit.validate()?;
    let segments = build_segments(regs, stage, circuit)?;
    let solver = Solver {
        segments: &segments,
    };
    let (i0, residual_a) = solver.steady_state()?;
    let mut pieces = Vec::with_capacity(segments.len() + 4);
    solver.run_period(i0, Some(&mut pieces));
    let period_s = regs.period_s();
    let (mean_a, rms_a) = mean_and_rms(&pieces, period_s);
    let (min_a, max_a) = pieces
        .iter()
        .flat_map(|p| [p.i0_a, p.i1_a])
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), i| {
            (lo.min(i), hi.max(i))
        });
    Ok(Verification {
        period_s,
        frequency_hz: regs.frequency_hz(),
        timeline: segments.iter().map(|s| s.interval).collect(),
        continuous: !pieces.iter().any(CurrentPiece::is_zero),
        voltage: voltage_split(&segments, &pieces, circuit, period_s),
        pieces,
        residual_a,
        mean_a,
        rms_a,
        min_a,
        max_a,
        ripple_pp_a: max_a - min_a,
        outputs: output_timings(regs, stage)?,
    })
}

/// One PWM period of the written registers from the current `i0_a` at its start (not the
/// steady state): the current's pieces over `[0, T)`, the last ending at `T`. A transient
/// simulation drives this period by period with the compares firmware writes.
pub fn run_period(
    regs: &TimerRegisters,
    stage: &Stage,
    circuit: &Circuit,
    i0_a: f64,
) -> Result<Vec<CurrentPiece>, VerifyError> {
    circuit.validate()?;
    let segments = build_segments(regs, stage, circuit)?;
    let mut pieces = Vec::with_capacity(segments.len() + 4);
    Solver {
        segments: &segments,
    }
    .run_period(i0_a, Some(&mut pieces));
    Ok(pieces)
}

fn mean_and_rms(pieces: &[CurrentPiece], period_s: f64) -> (f64, f64) {
    let mean = pieces.iter().map(CurrentPiece::integral).sum::<f64>() / period_s;
    let square = pieces
        .iter()
        .map(CurrentPiece::square_integral)
        .sum::<f64>()
        / period_s;
    (mean, square.sqrt())
}

/// The terminal-voltage split (definitions on [`VoltageSplit`]; own derivation).
fn voltage_split(
    segments: &[Segment],
    pieces: &[CurrentPiece],
    c: &Circuit,
    period_s: f64,
) -> VoltageSplit {
    let mut s = VoltageSplit {
        mean_v: 0.0,
        ideal_v: 0.0,
        dead_time_v: 0.0,
        drops_v: 0.0,
        dcm_v: 0.0,
    };
    for seg in segments {
        s.ideal_v += seg.v_reference_v * (seg.interval.t1_s - seg.interval.t0_s);
    }
    for p in pieces {
        let seg = &segments[p.interval];
        let dt = p.t1_s - p.t0_s;
        if p.conduction == Conduction::Zero {
            s.dcm_v += (c.back_emf_v - seg.v_reference_v) * dt;
            continue;
        }
        let branch = if p.i0_a + p.i1_a >= 0.0 {
            &seg.pos
        } else {
            &seg.neg
        };
        let term = branch.terminal;
        let actual = term.a_v * dt - term.r_ohm * p.integral();
        let lossless = term.a_lossless_v * dt;
        s.dead_time_v += lossless - seg.v_reference_v * dt;
        s.drops_v += actual - lossless;
    }
    for x in [
        &mut s.ideal_v,
        &mut s.dead_time_v,
        &mut s.drops_v,
        &mut s.dcm_v,
    ] {
        *x /= period_s;
    }
    s.mean_v = s.ideal_v + s.dead_time_v + s.drops_v + s.dcm_v;
    s
}

/// A complex number, just enough for the Fourier integrals.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Complex {
    re: f64,
    im: f64,
}

impl Complex {
    fn new(re: f64, im: f64) -> Complex {
        Complex { re, im }
    }

    /// `e^(−jθ)`.
    fn unit(theta: f64) -> Complex {
        Complex::new(theta.cos(), -theta.sin())
    }

    fn mul(self, o: Complex) -> Complex {
        Complex::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }

    fn div(self, o: Complex) -> Complex {
        let d = o.re * o.re + o.im * o.im;
        Complex::new(
            (self.re * o.re + self.im * o.im) / d,
            (self.im * o.re - self.re * o.im) / d,
        )
    }

    fn add(self, o: Complex) -> Complex {
        Complex::new(self.re + o.re, self.im + o.im)
    }

    fn sub(self, o: Complex) -> Complex {
        Complex::new(self.re - o.re, self.im - o.im)
    }

    fn scale(self, k: f64) -> Complex {
        Complex::new(self.re * k, self.im * k)
    }
}

/// `∫_{t0}^{t1} i(t)·e^(−jωt) dt` over one piece, exactly: the constant part gives
/// `i_∞·(e^(−jωt0) − e^(−jωt1))/(jω)`, the decaying part
/// `(i0 − i_∞)·e^(−jωt0)·(1 − e^(−(1/τ + jω)·dt))/(1/τ + jω)` (own derivation).
fn piece_fourier(p: &CurrentPiece, omega: f64) -> Complex {
    if p.conduction == Conduction::Zero {
        return Complex::new(0.0, 0.0);
    }
    let dt = p.t1_s - p.t0_s;
    let e0 = Complex::unit(omega * p.t0_s);
    let e1 = Complex::unit(omega * p.t1_s);
    let constant = e0.sub(e1).div(Complex::new(0.0, omega)).scale(p.i_inf_a);
    let s = Complex::new(1.0 / p.tau_s, omega);
    let decay = (-dt / p.tau_s).exp();
    let tail = Complex::new(1.0, 0.0).sub(Complex::unit(omega * dt).scale(decay));
    let shaped = e0.mul(tail).div(s).scale(p.i0_a - p.i_inf_a);
    constant.add(shaped)
}

impl Verification {
    /// The current at time `t_s` (taken modulo the period), A.
    pub fn current_at(&self, t_s: f64) -> f64 {
        let t = t_s.rem_euclid(self.period_s);
        let k = self.pieces.partition_point(|p| p.t1_s <= t);
        self.pieces
            .get(k.min(self.pieces.len() - 1))
            .map_or(0.0, |p| p.current_at(t))
    }

    /// Rms amplitude of harmonic `k ≥ 1` of the PWM frequency, A: `√2·|c_k|` with
    /// `c_k = (1/T)·∫_0^T i(t)·e^(−j2πkt/T) dt`, integrated exactly piece by piece
    /// (own derivation; no sampling).
    pub fn harmonic_rms_a(&self, k: u32) -> f64 {
        let omega = 2.0 * std::f64::consts::PI * f64::from(k) / self.period_s;
        let c = self.pieces.iter().fold(Complex::new(0.0, 0.0), |acc, p| {
            acc.add(piece_fourier(p, omega))
        });
        std::f64::consts::SQRT_2 * c.re.hypot(c.im) / self.period_s
    }

    /// Every Fourier line of the current at multiples `k·f ≤ f_max_hz`, `k ≥ 1`.
    pub fn lines(&self, f_max_hz: f64) -> Vec<Line> {
        let count = (f_max_hz / self.frequency_hz)
            .floor()
            .clamp(0.0, f64::from(u32::MAX)) as u32;
        (1..=count)
            .map(|k| Line {
                harmonic: k,
                frequency_hz: f64::from(k) * self.frequency_hz,
                rms_a: self.harmonic_rms_a(k),
            })
            .collect()
    }

    /// The timing of one output, if the stage has it.
    pub fn output(&self, output: Output) -> Option<&OutputTiming> {
        self.outputs.iter().find(|o| o.output == output)
    }

    /// Total time per period the current rests at zero, s.
    pub fn zero_current_s(&self) -> f64 {
        self.pieces
            .iter()
            .filter(|p| p.is_zero())
            .map(|p| p.t1_s - p.t0_s)
            .sum()
    }
}

// ---------------------------------------------------------------------------------------------
// Three-phase: leg states at the sampling instant
// ---------------------------------------------------------------------------------------------

/// A current-sampling trigger: a counter value and the counting direction (the direction
/// matters on a centre-aligned counter only).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SampleTrigger {
    /// Counter value, `0..period_ticks` (edge) or `0..=period_ticks / 2` (centre).
    pub counter: u64,
    /// Centre alignment: the match while counting up (`true`) or down (`false`).
    pub counting_up: bool,
}

impl SampleTrigger {
    /// The trigger instant in `[0, T)`, s, `t = 0` at counter 0 (edge) or the bottom (centre):
    /// `counter·tick` (edge, or centre counting up), `T − counter·tick` (centre counting down).
    pub fn time_s(&self, regs: &TimerRegisters) -> f64 {
        let up = self.counter as f64 * regs.tick_s;
        match (regs.alignment, self.counting_up) {
            (Alignment::Centre, false) => (regs.period_s() - up).rem_euclid(regs.period_s()),
            _ => up,
        }
    }

    fn validate(&self, regs: &TimerRegisters) -> Result<(), VerifyError> {
        let top = match regs.alignment {
            Alignment::Edge => regs.period_ticks - 1,
            Alignment::Centre => regs.period_ticks / 2,
        };
        if self.counter > top {
            return Err(VerifyError::Trigger(self.counter));
        }
        Ok(())
    }
}

/// One leg at the sampling instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LegSample {
    /// The leg's switch state at the instant (an output turning on exactly then counts as on).
    pub state: LegState,
    /// The leg's reference (before dead-time insertion) is high.
    pub reference: bool,
    /// When the low-side output is on: time since it turned on, s (the whole period when it
    /// is always on, measured from the period start).
    pub low_on_since_s: Option<f64>,
    /// When the low-side output is on: time until it turns off, s (to the period end when it
    /// is always on).
    pub low_on_until_s: Option<f64>,
}

/// Each leg's state at the sampling instant of every PWM period, for a three-phase bridge on
/// one counter (`compares[n]` = the three legs' compare values in period `n`, normal
/// polarity). A low-side shunt sees its phase current only while its leg is `Low` (or `Dead`
/// with the current out of the leg through the low-side diode); the since/until margins say how
/// far the instant is from the low-side edges (the settling and sampling window).
pub fn three_phase_samples(
    regs: &TimerRegisters,
    compares: &[[u64; 3]],
    trigger: SampleTrigger,
) -> Result<Vec<[LegSample; 3]>, VerifyError> {
    regs.validate()?;
    trigger.validate(regs)?;
    let t = trigger.time_s(regs);
    let mut out = Vec::with_capacity(compares.len());
    for period in compares {
        let mut legs = [None; 3];
        for (slot, &compare) in legs.iter_mut().zip(period) {
            let arcs = leg_arcs(regs, LegCompare::new(compare), true)?;
            *slot = Some(leg_sample(&arcs, t, regs.period_s()));
        }
        out.push(legs.map(|l| l.expect("every leg sampled")));
    }
    Ok(out)
}

fn leg_sample(arcs: &LegArcs, t_s: f64, period_s: f64) -> LegSample {
    let low = arcs.low.filter(|l| l.contains(t_s, period_s));
    let since = low.map(|l| {
        if l.len_s >= period_s {
            t_s
        } else {
            (t_s - l.start_s).rem_euclid(period_s)
        }
    });
    LegSample {
        state: arcs.state_at(t_s, period_s),
        reference: arcs.reference.contains(t_s, period_s),
        low_on_since_s: since,
        low_on_until_s: low.zip(since).map(|(l, s)| l.len_s.min(period_s) - s),
    }
}

// ---------------------------------------------------------------------------------------------
// Three-phase: phase currents
// ---------------------------------------------------------------------------------------------

/// A star-connected three-phase motor (neutral floating), per phase, with a back-EMF
/// `e_k(t) = emf_peak_v·s(ω·t + emf_angle_rad − k·2π/3)`, `s` the shape ([`EmfShape`]),
/// `k` = 0, 1, 2 for legs a, b, c, `ω = 2π/(N·T)` with `N` PWM periods per electrical period.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThreePhaseLoad {
    /// Phase resistance, Ω (> 0).
    pub r_ohm: f64,
    /// Phase inductance, H (> 0).
    pub l_h: f64,
    /// Phase back-EMF peak, V.
    pub emf_peak_v: f64,
    /// Angle of phase a's back-EMF at `t = 0`, rad.
    pub emf_angle_rad: f64,
    pub emf_shape: EmfShape,
}

/// The shape `s(θ)` of each phase's back-EMF, of unit peak.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EmfShape {
    /// `sin θ`.
    Sinusoidal,
    /// The 120°-flat trapezoid rising through zero at θ = 0, linear over ±30° (common
    /// practice for block-commutated motors), taken as its Fourier series up to
    /// [`TRAPEZOID_HARMONICS`] without the multiples of three, which a star winding with a
    /// floating neutral cancels in every line quantity ([`emf_harmonics`]).
    Trapezoidal,
}

/// Highest harmonic of the trapezoidal back-EMF kept (our own bound: the coefficients fall
/// as 1/h², the 97th is 2.6·10⁻⁴ of the peak).
pub const TRAPEZOID_HARMONICS: u32 = 97;

/// `(h, b_h)` with `s(θ) = Σ b_h·sin(h·θ)`. The trapezoid is odd and half-wave symmetric, so
/// only odd `h`, `b_h = (4/π)∫₀^{π/2} s(θ)·sin(hθ) dθ = 4·sin(hα)/(π·α·h²)` with the ramp
/// `α = π/6` (Fourier sine series, own evaluation of the integral); the multiples of three
/// are left out (see [`EmfShape::Trapezoidal`]).
pub fn emf_harmonics(shape: EmfShape) -> &'static [(u32, f64)] {
    static TRAPEZOID: std::sync::OnceLock<Vec<(u32, f64)>> = std::sync::OnceLock::new();
    match shape {
        EmfShape::Sinusoidal => &[(1, 1.0)],
        EmfShape::Trapezoidal => TRAPEZOID.get_or_init(|| {
            let alpha = std::f64::consts::PI / 6.0;
            (1..=TRAPEZOID_HARMONICS)
                .filter(|h| h % 2 == 1 && h % 3 != 0)
                .map(|h| {
                    let hf = f64::from(h);
                    let b = 4.0 * (hf * alpha).sin() / (std::f64::consts::PI * alpha * hf * hf);
                    (h, b)
                })
                .collect()
        }),
    }
}

/// The bridge's supply and switches, SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BridgeSwitches {
    pub v_bus_v: f64,
    /// On-resistance of each conducting high-side switch, Ω.
    pub r_ds_on_ohm: f64,
    /// On-resistance of each conducting low-side switch, Ω (the high side's when the two
    /// sides run at one junction temperature).
    pub r_ds_on_low_ohm: f64,
    /// Body-diode forward voltage, V.
    pub v_sd_v: f64,
}

/// The bridge at the sampling instant of one PWM period.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThreePhaseSample {
    /// The instant, s from the start of the electrical period.
    pub time_s: f64,
    pub legs: [LegSample; 3],
    /// Phase currents out of the legs into the motor, A.
    pub phase_a: [f64; 3],
    /// The part of each phase current carried by the low side (switch or body diode), out of
    /// the leg, A: what a low-side shunt measures (its voltage is −R_shunt times this).
    pub low_side_a: [f64; 3],
}

/// The periodic steady state of a three-phase bridge over one electrical period.
#[derive(Debug, Clone, PartialEq)]
pub struct ThreePhaseVerification {
    pub electrical_hz: f64,
    /// One sample per PWM period at the trigger instant.
    pub samples: Vec<ThreePhaseSample>,
    /// The phase currents at every instant a leg changes state (and at the triggers), in time
    /// order over the electrical period, `(time_s, currents_a)`: between two such instants
    /// each current is one exponential segment, so the extremes of a PWM period lie here
    /// (to within the back-EMF's change over one segment). Segments longer than a sixteenth
    /// of the shortest time constant or of 1/ω_e are recorded in steps of that length, so
    /// the record taken straight between its instants holds the arcs' integrals.
    pub boundaries: Vec<(f64, [f64; 3])>,
    /// Largest phase-current change over one electrical period from the solution, A.
    pub residual_a: f64,
    /// All three currents stopped together somewhere in the period (two phases blocked at
    /// once: deep discontinuous conduction).
    pub currents_stopped: bool,
}

/// What a recording run of the three-phase solver collects.
#[derive(Default)]
struct Record {
    samples: Vec<ThreePhaseSample>,
    boundaries: Vec<(f64, [f64; 3])>,
}

/// Event-search grid points per interval for a floating leg (see [`verify_three_phase`]).
const EVENT_GRID: usize = 16;

/// Events handled within one interval before giving up.
const MAX_EVENTS_PER_INTERVAL: usize = 24;

type V2 = [f64; 2];
type M2 = [[f64; 2]; 2];

fn m2_mul_v(m: &M2, v: V2) -> V2 {
    [
        m[0][0] * v[0] + m[0][1] * v[1],
        m[1][0] * v[0] + m[1][1] * v[1],
    ]
}

fn m2_inv(m: &M2) -> M2 {
    let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
    [
        [m[1][1] / det, -m[0][1] / det],
        [-m[1][0] / det, m[0][0] / det],
    ]
}

fn m2_mul(a: &M2, b: &M2) -> M2 {
    let mut out = [[0.0; 2]; 2];
    for (r, row) in out.iter_mut().enumerate() {
        for (c, x) in row.iter_mut().enumerate() {
            *x = a[r][0] * b[0][c] + a[r][1] * b[1][c];
        }
    }
    out
}

/// `(jω·I − A)⁻¹·c` for a real 2×2 `A` and a complex vector `c` (Cramer's rule).
fn complex_solve(a: &M2, omega: f64, c: [Complex; 2]) -> [Complex; 2] {
    let m = |r: usize, k: usize| {
        let diag = if r == k { omega } else { 0.0 };
        Complex::new(-a[r][k], diag)
    };
    let det = m(0, 0).mul(m(1, 1)).sub(m(0, 1).mul(m(1, 0)));
    [
        c[0].mul(m(1, 1)).sub(m(0, 1).mul(c[1])).div(det),
        m(0, 0).mul(c[1]).sub(c[0].mul(m(1, 0))).div(det),
    ]
}

/// `e^(A·τ)` of a 2×2 matrix with real eigenvalues `s ± δ` (Sylvester's formula; own
/// derivation of the small-δ limit).
fn m2_exp(a: &M2, tau: f64) -> M2 {
    let s = 0.5 * (a[0][0] + a[1][1]);
    let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
    let delta = (s * s - det).max(0.0).sqrt();
    let (e1, e2) = (((s + delta) * tau).exp(), ((s - delta) * tau).exp());
    let mean = 0.5 * (e1 + e2);
    let slope = if delta * tau < 1e-5 {
        tau * (s * tau).exp() * (1.0 + (delta * tau).powi(2) / 6.0)
    } else {
        (e1 - e2) / (2.0 * delta)
    };
    [
        [mean + slope * (a[0][0] - s), slope * a[0][1]],
        [slope * a[1][0], mean + slope * (a[1][1] - s)],
    ]
}

/// Which phases conduct: all three, or two with phase `k` blocked (its leg floating, its
/// current zero).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Mode {
    Full,
    Open(usize),
}

/// The coupled phases in one mode over one interval: `M·z' = Bᵀ(a − e(t)) − K·z` with the
/// phase currents `i = B·z`, `M = L·BᵀB`, `K = Bᵀ·diag(R + r_k)·B` (loop equations through the
/// floating neutral: `Bᵀ·1 = 0` removes its voltage; own derivation). The exact solution is
/// `z(t) = z_p(t) + e^(A(t−t0))·(z(t0) − z_p(t0))`, `A = −M⁻¹K`, with the particular
/// solution `z_p(t) = K⁻¹Bᵀa + Σ_h Im(w_h·e^(jhωt))`, `(jhωI − A)·w_h =
/// −E·b_h·e^(jhφ)·M⁻¹Bᵀu_h`, `u_{h,k} = e^(−j2πhk/3)`, one term per harmonic `(h, b_h)` of the
/// back-EMF's shape ([`emf_harmonics`]; linear ODE with sinusoidal forcing, superposed:
/// common practice).
#[derive(Debug, Clone)]
struct Coupled {
    basis: [[f64; 2]; 3],
    a: M2,
    z_const: V2,
    /// Per harmonic, in rising order: `h` and `w_h`.
    w: Vec<(u32, [Complex; 2])>,
    omega: f64,
    /// Per phase `(a_k, r_k)`: the leg voltage `a_k − r_k·i_k`.
    legs: [(f64, f64); 3],
    mode: Mode,
}

fn mode_basis(mode: Mode) -> [[f64; 2]; 3] {
    match mode {
        Mode::Full => [[1.0, 0.0], [0.0, 1.0], [-1.0, -1.0]],
        Mode::Open(k) => {
            let (j, l) = others(k);
            let mut b = [[0.0; 2]; 3];
            b[j][0] = 1.0;
            b[l][0] = -1.0;
            b
        }
    }
}

fn others(k: usize) -> (usize, usize) {
    match k {
        0 => (1, 2),
        1 => (0, 2),
        _ => (0, 1),
    }
}

impl Coupled {
    fn new(mode: Mode, legs: [(f64, f64); 3], load: &ThreePhaseLoad, omega: f64) -> Coupled {
        let b = mode_basis(mode);
        let mut m = [[0.0; 2]; 2];
        let mut k = [[0.0; 2]; 2];
        let mut bta = [0.0; 2];
        for (p, row) in b.iter().enumerate() {
            let g = load.r_ohm + legs[p].1;
            for r in 0..2 {
                bta[r] += row[r] * legs[p].0;
                for c in 0..2 {
                    m[r][c] += load.l_h * row[r] * row[c];
                    k[r][c] += g * row[r] * row[c];
                }
            }
        }
        if let Mode::Open(_) = mode {
            // The unused second coordinate: same dynamics, no forcing, stays at zero.
            m[1][1] = m[0][0];
            k[1][1] = k[0][0];
        }
        let m_inv = m2_inv(&m);
        let mk = m2_mul(&m_inv, &k);
        let a = [[-mk[0][0], -mk[0][1]], [-mk[1][0], -mk[1][1]]];
        // u_{h,k} = e^(−j2πhk/3) repeats with h mod 3.
        let btu_of = |h: u32| {
            let mut btu = [Complex::new(0.0, 0.0); 2];
            for (p, row) in b.iter().enumerate() {
                let u =
                    Complex::unit(2.0 * std::f64::consts::PI * f64::from(h % 3) * p as f64 / 3.0);
                for r in 0..2 {
                    btu[r] = btu[r].add(u.scale(row[r]));
                }
            }
            btu
        };
        let btu_by_residue = [btu_of(0), btu_of(1), btu_of(2)];
        let mut angle_powers = HarmonicPowers::new(Complex::unit(-load.emf_angle_rad));
        let w = emf_harmonics(load.emf_shape)
            .iter()
            .map(|&(h, b_h)| {
                let hf = f64::from(h);
                let btu = btu_by_residue[(h % 3) as usize];
                let emf =
                    Complex::new(0.0, 0.0).sub(angle_powers.at(h).scale(load.emf_peak_v * b_h));
                let c = [0, 1].map(|r| {
                    m_inv[r][0..2]
                        .iter()
                        .zip(btu)
                        .fold(Complex::new(0.0, 0.0), |acc, (&x, u)| acc.add(u.scale(x)))
                        .mul(emf)
                });
                (h, complex_solve(&a, hf * omega, c))
            })
            .collect();
        Coupled {
            basis: b,
            a,
            z_const: m2_mul_v(&m2_inv(&k), bta),
            w,
            omega,
            legs,
            mode,
        }
    }

    fn particular(&self, t: f64) -> V2 {
        let mut z = self.z_const;
        let mut powers = HarmonicPowers::new(Complex::unit(-self.omega * t));
        for (h, w) in &self.w {
            let e = powers.at(*h);
            for r in 0..2 {
                z[r] += w[r].mul(e).im;
            }
        }
        z
    }

    /// The free part of the solution from `z0` at `t0`: `z(t0) − z_p(t0)`, which
    /// [`Coupled::z_from`] carries to any later instant.
    fn free_part(&self, z0: V2, t0: f64) -> V2 {
        let p0 = self.particular(t0);
        [z0[0] - p0[0], z0[1] - p0[1]]
    }

    fn z_from(&self, free: V2, t0: f64, t: f64) -> V2 {
        let d = m2_mul_v(&m2_exp(&self.a, t - t0), free);
        let p = self.particular(t);
        [p[0] + d[0], p[1] + d[1]]
    }

    fn currents(&self, z: V2) -> [f64; 3] {
        self.basis.map(|row| row[0] * z[0] + row[1] * z[1])
    }

    /// Voltage of the floating leg `k` in `Open(k)`: the neutral plus its EMF,
    /// `v_n = Σ_conducting (v_j − e_j)/2` (own derivation).
    fn floating_leg_v(&self, k: usize, i: [f64; 3], t: f64, load: &ThreePhaseLoad) -> f64 {
        let (j, l) = others(k);
        let e = phase_emfs(load, self.omega, t);
        let v = |p: usize| self.legs[p].0 - self.legs[p].1 * i[p] - e[p];
        0.5 * (v(j) + v(l)) + e[k]
    }
}

/// The three phases' back-EMFs at `t` (without the multiples of three, which cancel in every
/// line quantity): phase k's harmonic h is phase a's turned by 2πhk/3, so one run of
/// harmonic phasors serves all three.
fn phase_emfs(load: &ThreePhaseLoad, omega: f64, t: f64) -> [f64; 3] {
    let angle = omega * t + load.emf_angle_rad;
    let turn = |h: u32, k: usize| {
        Complex::unit(-2.0 * std::f64::consts::PI * f64::from(h % 3) * k as f64 / 3.0)
    };
    let turns = [1, 2].map(|r| [0, 1, 2].map(|k| turn(r, k)));
    // sin(h·x) = −Im(e^(−jx)^h).
    let mut powers = HarmonicPowers::new(Complex::unit(angle));
    let mut e = [0.0; 3];
    for &(h, b_h) in emf_harmonics(load.emf_shape) {
        let z = powers.at(h);
        let residue = if h % 3 == 2 { 1 } else { 0 };
        for (k, ek) in e.iter_mut().enumerate() {
            *ek -= b_h * z.mul(turns[residue][k]).im;
        }
    }
    e.map(|x| x * load.emf_peak_v)
}

/// `z^h` for rising `h` by repeated multiplication from the last power (one sine and cosine
/// per instant instead of one per harmonic; |z| = 1, so the rounding stays near 1e-15 per
/// step).
struct HarmonicPowers {
    base: Complex,
    last_h: u32,
    last: Complex,
}

impl HarmonicPowers {
    fn new(base: Complex) -> Self {
        HarmonicPowers {
            base,
            last_h: 0,
            last: Complex::new(1.0, 0.0),
        }
    }

    /// `base^h`, `h` not below the last one asked for.
    fn at(&mut self, h: u32) -> Complex {
        let mut step = Complex::new(1.0, 0.0);
        let mut p = self.base;
        let mut n = h.saturating_sub(self.last_h);
        while n > 0 {
            if n & 1 == 1 {
                step = step.mul(p);
            }
            p = p.mul(p);
            n >>= 1;
        }
        self.last = self.last.mul(step);
        self.last_h = h;
        self.last
    }
}

fn z_of(mode: Mode, i: [f64; 3]) -> V2 {
    match mode {
        Mode::Full => [i[0], i[1]],
        Mode::Open(k) => [i[others(k).0], 0.0],
    }
}

/// One PWM period's intervals of constant leg states, with the trigger as a cut.
#[derive(Debug, Clone, Copy)]
struct Interval3 {
    t0_s: f64,
    t1_s: f64,
    legs: [LegState; 3],
    /// The interval starts at the trigger instant.
    sample: Option<[LegSample; 3]>,
}

/// One leg's drive over a PWM period: its compare and polarity, and which of its two outputs
/// are enabled. A disabled output stays off whatever the compare; six-step floats a leg with
/// both disabled and chops one output with the other disabled.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LegDrive {
    pub compare: LegCompare,
    pub high_enabled: bool,
    pub low_enabled: bool,
}

impl LegDrive {
    /// Both outputs enabled: a complementary leg at normal polarity.
    pub fn complementary(compare: u64) -> Self {
        LegDrive {
            compare: LegCompare::new(compare),
            high_enabled: true,
            low_enabled: true,
        }
    }
}

/// The leg's arcs with its disabled outputs removed.
fn drive_arcs(regs: &TimerRegisters, d: LegDrive) -> Result<LegArcs, VerifyError> {
    let mut arcs = leg_arcs(regs, d.compare, true)?;
    if !d.high_enabled {
        arcs.high = Arc {
            start_s: 0.0,
            len_s: 0.0,
        };
    }
    if !d.low_enabled {
        arcs.low = None;
    }
    Ok(arcs)
}

/// How long a reference arc has held its level at the end of the period, and until when it
/// holds it from the start, s: `(high_for, high_until, low_for, low_until)` (a period-long
/// level counts as the whole period).
fn level_run(reference: Arc, period_s: f64) -> (f64, f64, f64, f64) {
    let end = period_s * (1.0 - 1e-12);
    let (high_at_end, high_at_start) = (
        reference.contains(end, period_s),
        reference.contains(0.0, period_s),
    );
    let full = reference.len_s >= period_s;
    let stop = (reference.start_s + reference.len_s).rem_euclid(period_s);
    let high_for = if full {
        period_s
    } else if high_at_end {
        period_s - reference.start_s
    } else {
        0.0
    };
    let high_until = if full {
        period_s
    } else if high_at_start {
        stop
    } else {
        0.0
    };
    let low = reference.complement(period_s);
    let low_stop = (low.start_s + low.len_s).rem_euclid(period_s);
    let empty = reference.len_s <= 0.0;
    let low_for = if empty {
        period_s
    } else if !high_at_end {
        period_s - low.start_s
    } else {
        0.0
    };
    let low_until = if empty {
        period_s
    } else if !high_at_start {
        low_stop
    } else {
        0.0
    };
    (high_for, high_until, low_for, low_until)
}

/// A leg's state at `t_s` within the first dead time of a centre-aligned period, where the
/// dead-time generator still looks back across the counter bottom into the previous period
/// (its reference arc `previous`): an output is on when its reference level has held since
/// the dead time before `t_s`, counting the time it held at the end of the previous period
/// (dead-time insertion on the continuous reference, common practice). The reference runs
/// whether or not an output is enabled (dead-time generators sit ahead of the output
/// enables: common practice).
fn entry_state(
    d: LegDrive,
    now: Arc,
    previous: Arc,
    dead_s: f64,
    t_s: f64,
    period_s: f64,
) -> LegState {
    let (_, high_until, _, low_until) = level_run(now, period_s);
    let (high_for, _, low_for, _) = level_run(previous, period_s);
    if d.high_enabled && t_s < high_until && high_for + t_s >= dead_s {
        LegState::High
    } else if d.low_enabled && t_s < low_until && low_for + t_s >= dead_s {
        LegState::Low
    } else {
        LegState::Dead
    }
}

fn period_intervals(
    regs: &TimerRegisters,
    drives: [LegDrive; 3],
    previous: [LegDrive; 3],
    trigger_s: f64,
    offset_s: f64,
) -> Result<Vec<Interval3>, VerifyError> {
    let t = regs.period_s();
    let mut arcs = Vec::with_capacity(3);
    for d in drives {
        arcs.push(drive_arcs(regs, d)?);
    }
    let mut before = Vec::with_capacity(3);
    for p in previous {
        before.push(reference_arc(regs, p.compare)?);
    }
    let mut cuts = vec![0.0, t, trigger_s];
    for leg in &arcs {
        for arc in [Some(leg.high), leg.low].into_iter().flatten() {
            if let Some((r, f)) = arc.edges(t) {
                cuts.extend([r, f]);
            }
        }
    }
    // Centre alignment: the first dead time of the period depends on the previous compare.
    let dead = regs.dead_time_s;
    let entry = regs.alignment == Alignment::Centre && dead > 0.0 && dead < t;
    if entry {
        cuts.push(dead);
        for b in &before {
            let (high_for, _, low_for, _) = level_run(*b, t);
            cuts.extend(
                [dead - high_for, dead - low_for]
                    .into_iter()
                    .filter(|&x| x > 0.0 && x < dead),
            );
        }
    }
    cuts.sort_by(f64::total_cmp);
    cuts.dedup_by(|b, a| *b - *a <= MERGE_REL * t);
    if let Some(last) = cuts.last_mut() {
        *last = t;
    }
    let sample_at = cuts
        .iter()
        .position(|&c| (c - trigger_s).abs() <= MERGE_REL * t);
    Ok(cuts
        .windows(2)
        .enumerate()
        .map(|(n, w)| {
            let mid = 0.5 * (w[0] + w[1]);
            let state = |k: usize| {
                if entry && mid < dead {
                    entry_state(drives[k], arcs[k].reference, before[k], dead, mid, t)
                } else {
                    arcs[k].state_at(mid, t)
                }
            };
            Interval3 {
                t0_s: offset_s + w[0],
                t1_s: offset_s + w[1],
                legs: [0, 1, 2].map(state),
                sample: (Some(n) == sample_at)
                    .then(|| [0, 1, 2].map(|k| leg_sample(&arcs[k], trigger_s, t))),
            }
        })
        .collect())
}

/// The three-phase solver over one electrical period.
struct Sim3<'a> {
    intervals: &'a [Interval3],
    load: &'a ThreePhaseLoad,
    /// The switches as a `Circuit` for [`leg_terminal`] (only `v_bus_v`, `r_ds_on_ohm`,
    /// `v_sd_v` are read).
    switches: Circuit,
    /// On-resistance of a conducting low side, Ω (`switches` holds the high side's).
    r_low_ohm: f64,
    omega: f64,
    /// The largest current any state drives toward, A (`(V + V_sd + E)/R`).
    current_scale_a: f64,
    /// Set when every current stopped at once somewhere in a run.
    stopped: std::cell::Cell<bool>,
    /// Longest step between recorded instants, s: a sixteenth of the shortest time constant
    /// `L/(R + r)` or of `1/ω_e`, whichever is shorter (our own bound: a straight line
    /// through an exponential or sinusoidal arc of that length misses its integral by about
    /// (1/16)²/12 of the arc's curvature, 3·10⁻⁴).
    record_step_s: f64,
    /// The coupled solutions built so far ([`Sim3::coupled`]).
    coupled_seen: RefCell<Vec<(CoupledKey, Rc<Coupled>)>>,
}

/// What a coupled solution depends on besides the run's motor and speed.
type CoupledKey = (Mode, [LegState; 3], [bool; 3]);

/// Coupled solutions kept per run (our own bound; a six-step period meets about ten).
const COUPLED_KEPT: usize = 64;

/// The event functions of one mode: currents through floating legs keep their sign; a blocked
/// phase's floating leg stays between the diode thresholds. All positive while nothing happens.
struct Watch {
    /// `(phase, +1 or −1)` for each conducting phase whose leg floats.
    signs: Vec<(usize, f64)>,
    open: Option<usize>,
}

impl Sim3<'_> {
    /// Runs the intervals from `i0`; with `record`, the samples at the trigger and the currents
    /// at every interval boundary.
    fn run(&self, i0: [f64; 3], mut record: Option<&mut Record>) -> Result<[f64; 3], VerifyError> {
        let mut i = i0;
        for iv in self.intervals {
            let Some(r) = record.as_deref_mut() else {
                i = self.advance(iv, i, None)?;
                continue;
            };
            if let Some(legs) = iv.sample {
                r.samples.push(three_phase_sample(legs, i, iv.t0_s));
            }
            r.boundaries.push((iv.t0_s, i));
            // Long intervals are recorded in steps of at most `record_step_s`, so that the
            // record, taken straight between its instants, follows the exponential arcs.
            let parts = ((iv.t1_s - iv.t0_s) / self.record_step_s)
                .ceil()
                .clamp(1.0, 1e6) as usize;
            let mut t0 = iv.t0_s;
            for p in 1..=parts {
                let t1 = if p == parts {
                    iv.t1_s
                } else {
                    iv.t0_s + (iv.t1_s - iv.t0_s) * p as f64 / parts as f64
                };
                let part = Interval3 {
                    t0_s: t0,
                    t1_s: t1,
                    sample: None,
                    ..*iv
                };
                i = self.advance(&part, i, Some(&mut r.boundaries))?;
                if p < parts {
                    r.boundaries.push((t1, i));
                }
                t0 = t1;
            }
        }
        if let (Some(r), Some(last)) = (record, self.intervals.last()) {
            r.boundaries.push((last.t1_s, i));
        }
        Ok(i)
    }

    /// The coupled solution of a mode, leg states and current directions; the few that recur
    /// all period long are built once per run and kept.
    fn coupled(&self, mode: Mode, legs: [LegState; 3], positive: [bool; 3]) -> Rc<Coupled> {
        let key = (mode, legs, positive);
        if let Some((_, c)) = self.coupled_seen.borrow().iter().find(|(k, _)| *k == key) {
            return Rc::clone(c);
        }
        let c = Rc::new(self.build_coupled(mode, legs, positive));
        let mut seen = self.coupled_seen.borrow_mut();
        if seen.len() >= COUPLED_KEPT {
            seen.remove(0);
        }
        seen.push((key, Rc::clone(&c)));
        c
    }

    fn build_coupled(&self, mode: Mode, legs: [LegState; 3], positive: [bool; 3]) -> Coupled {
        let terms = [0, 1, 2].map(|p| {
            let t = leg_terminal(legs[p], positive[p], &self.switches);
            let r = if legs[p] == LegState::Low {
                self.r_low_ohm
            } else {
                t.r_ohm
            };
            (t.a_v, r)
        });
        Coupled::new(mode, terms, self.load, self.omega)
    }

    /// The mode at `t` from the currents: a floating leg with zero current stays blocked while
    /// its voltage lies between the diode thresholds, else its diode conducts.
    fn choose(
        &self,
        legs: [LegState; 3],
        i: [f64; 3],
        t: f64,
    ) -> Result<Option<(Rc<Coupled>, Watch)>, VerifyError> {
        let mut positive = i.map(|x| x > 0.0);
        let zero: Vec<usize> = (0..3)
            .filter(|&p| legs[p] == LegState::Dead && i[p] == 0.0)
            .collect();
        let mut mode = Mode::Full;
        match zero.as_slice() {
            [] => {}
            [k] => {
                let open = self.coupled(Mode::Open(*k), legs, positive);
                let v = open.floating_leg_v(*k, i, t, self.load);
                if v < -self.switches.v_sd_v {
                    positive[*k] = true;
                } else if v > self.switches.v_bus_v + self.switches.v_sd_v {
                    positive[*k] = false;
                } else {
                    mode = Mode::Open(*k);
                }
            }
            _ => {
                self.stopped.set(true);
                // Every current is zero (two are, and they sum to zero): the first floating
                // leg whose open voltage passes a diode threshold conducts with the driven
                // leg, the other stays blocked; none: the bridge idles.
                let Some(v) = self.idle_voltages(legs, t) else {
                    return Ok(None);
                };
                let Some(&(k, _)) = v.iter().find(|&&(_, x)| self.idle_margin(x) <= 0.0) else {
                    return Ok(None);
                };
                positive[k] = v.iter().any(|&(p, x)| p == k && x < 0.0);
                mode = Mode::Open(v.iter().map(|&(p, _)| p).find(|&p| p != k).unwrap_or(k));
            }
        }
        let coupled = self.coupled(mode, legs, positive);
        let open = match mode {
            Mode::Open(k) => Some(k),
            Mode::Full => None,
        };
        let signs = (0..3)
            .filter(|&p| legs[p] == LegState::Dead && Some(p) != open)
            .map(|p| (p, if positive[p] { 1.0 } else { -1.0 }))
            .collect();
        Ok(Some((coupled, Watch { signs, open })))
    }

    /// With every current zero and one leg driven, the open voltage of each floating leg
    /// `(leg, v)`: no current flows, so the neutral sits at the driven leg's voltage less its
    /// back-EMF and each floating terminal at the neutral plus its own (Kirchhoff's laws;
    /// own derivation). `None` with no leg driven (the bridge then stays idle: a line-to-line
    /// back-EMF above the bus plus two diode drops, which would rectify into the bus, is not
    /// simulated; assumption).
    fn idle_voltages(&self, legs: [LegState; 3], t: f64) -> Option<[(usize, f64); 2]> {
        let driven: Vec<usize> = (0..3).filter(|&p| legs[p] != LegState::Dead).collect();
        let [j] = driven.as_slice() else {
            return None;
        };
        let a_v = leg_terminal(legs[*j], true, &self.switches).a_v;
        let e = phase_emfs(self.load, self.omega, t);
        let v_n = a_v - e[*j];
        let (k1, k2) = others(*j);
        let open = |k: usize| (k, v_n + e[k]);
        Some([open(k1), open(k2)])
    }

    /// Whether no event can lie between `a` and `b` (currents and time at the ends of a
    /// piece in one mode): each watched quantity, with ends `f_a`, `f_b` and a bound `k` on
    /// its rate of change, stays above `(f_a + f_b − k·Δt)/2` over the piece (the least a
    /// function with |f′| ≤ k can reach between two values; own derivation), so when that
    /// is positive the grid search is skipped.
    fn quiet(&self, c: &Coupled, watch: &Watch, a: ([f64; 3], f64), b: ([f64; 3], f64)) -> bool {
        let dt = b.1 - a.1;
        let i_max =
            a.0.iter()
                .chain(&b.0)
                .fold(self.current_scale_a, |m, x| m.max(x.abs()));
        let sw = &self.switches;
        let r_max = sw.r_ds_on_ohm.max(self.r_low_ohm);
        // |L·di/dt| ≤ the largest leg-to-leg voltage, back-EMFs and resistive drops (a
        // generous bound: each term at its extreme at once).
        let rate_i = (2.0 * (sw.v_bus_v + 2.0 * sw.v_sd_v)
            + 3.0 * self.emf_peak_bound_v()
            + 3.0 * (self.load.r_ohm + r_max) * i_max)
            / self.load.l_h;
        let rate_v = r_max * rate_i + 2.0 * self.emf_rate_v_per_s();
        let stays = |fa: f64, fb: f64, k: f64| 0.5 * (fa + fb - k * dt) > 0.0;
        let currents = watch
            .signs
            .iter()
            .all(|&(p, sign)| stays(a.0[p] * sign, b.0[p] * sign, rate_i));
        currents
            && watch.open.is_none_or(|k| {
                let m = |(i, t): ([f64; 3], f64)| {
                    self.idle_margin(c.floating_leg_v(k, i, t, self.load))
                };
                stays(m(a), m(b), rate_v)
            })
    }

    /// A bound on any phase's back-EMF, V (the trapezoid's truncated series overshoots its
    /// peak by under 1 %; 5 % allowed).
    fn emf_peak_bound_v(&self) -> f64 {
        let shape = match self.load.emf_shape {
            EmfShape::Sinusoidal => 1.0,
            EmfShape::Trapezoidal => 1.05,
        };
        shape * self.load.emf_peak_v.abs()
    }

    /// A bound on any phase back-EMF's rate of change, V/s: E·ω for the sine; the
    /// trapezoid's ramp is E per 30°, E·ω·6/π, and its truncated series overshoots that
    /// slope (Gibbs; 2.5 allowed against 1.91).
    fn emf_rate_v_per_s(&self) -> f64 {
        let slope = match self.load.emf_shape {
            EmfShape::Sinusoidal => 1.0,
            EmfShape::Trapezoidal => 2.5,
        };
        slope * self.load.emf_peak_v.abs() * self.omega
    }

    /// How far an open terminal voltage lies inside the diode thresholds (≤ 0: a diode
    /// conducts).
    fn idle_margin(&self, v: f64) -> f64 {
        (v + self.switches.v_sd_v).min(self.switches.v_bus_v + self.switches.v_sd_v - v)
    }

    fn event_min(&self, c: &Coupled, watch: &Watch, i: [f64; 3], t: f64) -> f64 {
        let mut f = watch
            .signs
            .iter()
            .map(|&(p, s)| i[p] * s)
            .fold(f64::INFINITY, f64::min);
        if let Some(k) = watch.open {
            let v = c.floating_leg_v(k, i, t, self.load);
            f = f
                .min(v + self.switches.v_sd_v)
                .min(self.switches.v_bus_v + self.switches.v_sd_v - v);
        }
        f
    }

    /// Advances the currents through one interval, event by event.
    /// With `events`, each diode event's instant and currents are recorded there (a kink of
    /// the currents inside the interval).
    fn advance(
        &self,
        iv: &Interval3,
        i0: [f64; 3],
        mut events: Option<&mut Vec<(f64, [f64; 3])>>,
    ) -> Result<[f64; 3], VerifyError> {
        let (mut t, t1) = (iv.t0_s, iv.t1_s);
        let mut i = i0;
        for _ in 0..MAX_EVENTS_PER_INTERVAL {
            let Some((c, watch)) = self.choose(iv.legs, i, t)? else {
                // Idle until a floating leg's open voltage reaches a diode threshold.
                let margin = |tt: f64| {
                    self.idle_voltages(iv.legs, tt).map_or(f64::INFINITY, |v| {
                        v.iter()
                            .map(|&(_, x)| self.idle_margin(x))
                            .fold(f64::INFINITY, f64::min)
                    })
                };
                // The open voltages move with the back-EMFs only (no current flows).
                let rate = 2.0 * self.emf_rate_v_per_s();
                if 0.5 * (margin(t) + margin(t1) - rate * (t1 - t)) > 0.0 {
                    return Ok([0.0; 3]);
                }
                match first_event(t, t1, margin) {
                    Some(te) => {
                        t = te;
                        if let Some(e) = events.as_deref_mut() {
                            e.push((te, [0.0; 3]));
                        }
                        continue;
                    }
                    None => return Ok([0.0; 3]),
                }
            };
            let free = c.free_part(z_of(c.mode, i), t);
            let at = |tt: f64| c.currents(c.z_from(free, t, tt));
            if watch.signs.is_empty() && watch.open.is_none() {
                return Ok(at(t1));
            }
            let end = at(t1);
            if self.quiet(&c, &watch, (i, t), (end, t1)) {
                return Ok(end);
            }
            let f = |tt: f64| self.event_min(&c, &watch, at(tt), tt);
            let Some(te) = first_event(t, t1, f) else {
                return Ok(at(t1));
            };
            i = at(te);
            for &(p, s) in &watch.signs {
                if i[p] * s <= 0.0 {
                    // With a phase already blocked, the last two currents stop together.
                    i = match c.mode {
                        Mode::Open(_) => [0.0; 3],
                        Mode::Full => zero_phase(i, p),
                    };
                }
            }
            if let Some(e) = events.as_deref_mut() {
                e.push((te, i));
            }
            t = te;
        }
        Err(VerifyError::TooManyEvents)
    }
}

/// The first instant in `(t0, t1]` where `f` drops to zero or below: a grid of
/// [`EVENT_GRID`] points, then bisection (the instant just past the event is returned).
fn first_event(t0: f64, t1: f64, f: impl Fn(f64) -> f64) -> Option<f64> {
    let mut prev = t0;
    for g in 1..=EVENT_GRID {
        let t = t0 + (t1 - t0) * g as f64 / EVENT_GRID as f64;
        if f(t) <= 0.0 {
            let (mut lo, mut hi) = (prev, t);
            for _ in 0..64 {
                let mid = 0.5 * (lo + hi);
                if mid <= lo || mid >= hi {
                    break;
                }
                if f(mid) > 0.0 {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            return Some(hi);
        }
        prev = t;
    }
    None
}

/// Sets phase `p`'s current to zero, keeping the sum of the three at zero.
fn zero_phase(mut i: [f64; 3], p: usize) -> [f64; 3] {
    let (q, r) = others(p);
    i[p] = 0.0;
    let d = 0.5 * (i[q] + i[r]);
    i[q] -= d;
    i[r] -= d;
    i
}

fn three_phase_sample(legs: [LegSample; 3], i: [f64; 3], t: f64) -> ThreePhaseSample {
    let low = [0, 1, 2].map(|k| match legs[k].state {
        LegState::Low => i[k],
        LegState::Dead if i[k] > 0.0 => i[k],
        _ => 0.0,
    });
    ThreePhaseSample {
        time_s: t,
        legs,
        phase_a: i,
        low_side_a: low,
    }
}

/// Verifies a three-phase bridge (three legs on one counter, normal polarity) driving a star
/// R–L–EMF motor over one electrical period of `compares.len()` PWM periods: the periodic
/// steady state of the phase currents, sampled at `trigger` in every PWM period.
///
/// Method (own): intervals of constant leg states per PWM period; in each, the exact solution
/// of the coupled phases ([`Coupled`]: two independent currents, one when a phase is blocked);
/// within intervals where a leg floats, diode events (a current reaching zero, a blocked
/// phase's leg reaching a diode threshold) are located on a grid of [`EVENT_GRID`] points and
/// bisected, so two events closer than 1/16 of such an interval would be missed (assumption:
/// floating intervals are dead times, short against τ). The fixed point over the electrical
/// period is found by Newton steps with a difference Jacobian, falling back to plain
/// iteration (the map is a contraction). When two phases are blocked at once every current
/// is zero: the bridge idles until a floating leg's open voltage reaches a diode threshold
/// ([`Sim3::idle_voltages`]).
pub fn verify_three_phase(
    regs: &TimerRegisters,
    compares: &[[u64; 3]],
    trigger: SampleTrigger,
    load: &ThreePhaseLoad,
    switches: &BridgeSwitches,
) -> Result<ThreePhaseVerification, VerifyError> {
    verify_three_phase_cycles(regs, compares, trigger, load, switches, 1)
}

/// [`verify_three_phase`] over `cycles` electrical periods in `compares.len()` PWM periods
/// (so that a PWM frequency that is not a whole multiple of the electrical one can be kept
/// within a small fraction: the compare sequence repeats after the `cycles` periods).
pub fn verify_three_phase_cycles(
    regs: &TimerRegisters,
    compares: &[[u64; 3]],
    trigger: SampleTrigger,
    load: &ThreePhaseLoad,
    switches: &BridgeSwitches,
    cycles: u32,
) -> Result<ThreePhaseVerification, VerifyError> {
    let drives: Vec<[LegDrive; 3]> = compares
        .iter()
        .map(|c| c.map(LegDrive::complementary))
        .collect();
    verify_three_phase_drives(regs, &drives, trigger, load, switches, cycles)
}

/// [`verify_three_phase_cycles`] with each leg's outputs enabled or not per PWM period
/// ([`LegDrive`]): six-step's chopped, held and floating legs.
pub fn verify_three_phase_drives(
    regs: &TimerRegisters,
    drives: &[[LegDrive; 3]],
    trigger: SampleTrigger,
    load: &ThreePhaseLoad,
    switches: &BridgeSwitches,
    cycles: u32,
) -> Result<ThreePhaseVerification, VerifyError> {
    regs.validate()?;
    trigger.validate(regs)?;
    let circuit = Circuit {
        r_ohm: load.r_ohm,
        l_h: load.l_h,
        back_emf_v: load.emf_peak_v,
        v_bus_v: switches.v_bus_v,
        r_ds_on_ohm: switches.r_ds_on_ohm,
        v_sd_v: switches.v_sd_v,
        v_f_v: 0.0,
    };
    circuit.validate()?;
    let r_low_ok = switches.r_ds_on_low_ohm.is_finite() && switches.r_ds_on_low_ohm >= 0.0;
    if drives.is_empty() || !load.emf_angle_rad.is_finite() || cycles == 0 || !r_low_ok {
        return Err(VerifyError::Circuit);
    }
    let period_s = regs.period_s();
    let trigger_s = trigger.time_s(regs);
    let mut intervals = Vec::new();
    for (n, &d) in drives.iter().enumerate() {
        let previous = drives[(n + drives.len() - 1) % drives.len()];
        intervals.extend(period_intervals(
            regs,
            d,
            previous,
            trigger_s,
            n as f64 * period_s,
        )?);
    }
    let electrical_s = drives.len() as f64 * period_s;
    let sim = Sim3 {
        intervals: &intervals,
        load,
        switches: circuit,
        r_low_ohm: switches.r_ds_on_low_ohm,
        omega: 2.0 * std::f64::consts::PI * f64::from(cycles) / electrical_s,
        current_scale_a: (switches.v_bus_v + switches.v_sd_v + 1.05 * load.emf_peak_v.abs())
            / load.r_ohm,
        stopped: std::cell::Cell::new(false),
        record_step_s: (load.l_h
            / (load.r_ohm + switches.r_ds_on_ohm.max(switches.r_ds_on_low_ohm)))
        .min(electrical_s / (2.0 * std::f64::consts::PI * f64::from(cycles)))
            / 16.0,
        coupled_seen: RefCell::new(Vec::new()),
    };
    let scale = (switches.v_bus_v + switches.v_sd_v + load.emf_peak_v.abs()) / load.r_ohm;
    let start = three_phase_fixed_point(&sim, scale)?;
    sim.stopped.set(false);
    let mut record = Record::default();
    let end = sim.run(start, Some(&mut record))?;
    let residual_a = (0..3)
        .map(|k| (end[k] - start[k]).abs())
        .fold(0.0, f64::max);
    Ok(ThreePhaseVerification {
        electrical_hz: f64::from(cycles) / electrical_s,
        samples: record.samples,
        boundaries: record.boundaries,
        residual_a,
        currents_stopped: sim.stopped.get(),
    })
}

fn phase_currents(x: V2) -> [f64; 3] {
    [x[0], x[1], -x[0] - x[1]]
}

/// Newton steps on `Z(x) − x` (difference Jacobian), plain iteration when a step does not
/// reduce the residual.
fn three_phase_fixed_point(sim: &Sim3, scale: f64) -> Result<[f64; 3], VerifyError> {
    let map = |x: V2| -> Result<V2, VerifyError> {
        let e = sim.run(phase_currents(x), None)?;
        Ok([e[0], e[1]])
    };
    let norm = |a: V2, b: V2| (a[0] - b[0]).abs().max((a[1] - b[1]).abs());
    let tol = 1e-11 * scale;
    let mut x = [0.0, 0.0];
    // The map at `x` when the last step already ran it (a Newton step kept).
    let mut known: Option<V2> = None;
    for _ in 0..MAX_FIXED_POINT_ITERATIONS {
        let zx = match known.take() {
            Some(z) => z,
            None => map(x)?,
        };
        let r = norm(zx, x);
        if r <= tol {
            return Ok(phase_currents(x));
        }
        let h = 1e-7 * scale;
        let z0 = map([x[0] + h, x[1]])?;
        let z1 = map([x[0], x[1] + h])?;
        let j = [
            [(z0[0] - zx[0]) / h, (z1[0] - zx[0]) / h],
            [(z0[1] - zx[1]) / h, (z1[1] - zx[1]) / h],
        ];
        let i_minus_j = m2_inv(&[[1.0 - j[0][0], -j[0][1]], [-j[1][0], 1.0 - j[1][1]]]);
        let step = m2_mul_v(&i_minus_j, [zx[0] - x[0], zx[1] - x[1]]);
        let newton = [x[0] + step[0], x[1] + step[1]];
        let z_newton = if newton.iter().all(|v| v.is_finite()) {
            Some(map(newton)?)
        } else {
            None
        };
        match z_newton {
            Some(z) if norm(z, newton) < r => (x, known) = (newton, Some(z)),
            _ => x = zx,
        }
    }
    Err(VerifyError::NoSteadyState)
}

#[cfg(test)]
mod tests {
    use super::*;

    const TICK_S: f64 = 10e-9;

    fn regs(alignment: Alignment, period_ticks: u64, dead_ticks: u64) -> TimerRegisters {
        TimerRegisters {
            tick_s: TICK_S,
            alignment,
            period_ticks,
            dead_time_s: dead_ticks as f64 * TICK_S,
        }
    }

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1e-9)
    }

    /// (shortest on, shortest off, swallowed) of an output, in ticks.
    fn pulses(t: &OutputTiming) -> (Option<f64>, Option<f64>, bool) {
        let ticks = |x: Option<f64>| x.map(|s| (s / TICK_S * 1e6).round() / 1e6);
        (ticks(t.shortest_on_s), ticks(t.shortest_off_s), t.swallowed)
    }

    fn half_bridge(r: &TimerRegisters, compare: u64) -> Vec<OutputTiming> {
        output_timings(r, &Stage::HalfBridge(LegCompare::new(compare))).unwrap()
    }

    /// Hand-computed: centre, 200 ticks (P = 100), dead time 5 ticks, 30 counting up and 50
    /// counting down: the reference high from 150 (the down count passing 50) through the
    /// bottom to 30, 80 ticks; the high side on from 155, 75 ticks; the low side on from 35 to
    /// 150, 115 ticks. A compare past P counting down is refused.
    #[test]
    fn compares_loaded_at_each_extreme_by_hand() {
        let r = regs(Alignment::Centre, 200, 5);
        let leg = LegCompare::new(30).halves(50);
        let t = output_timings(&r, &Stage::HalfBridge(leg)).unwrap();
        assert_eq!(pulses(&t[0]), (Some(75.0), Some(125.0), false));
        assert_eq!(pulses(&t[1]), (Some(115.0), Some(85.0), false));
        let (a, _) = stage_arcs(&r, &Stage::HalfBridge(leg)).unwrap();
        let at = |ticks: f64| a.state_at(ticks * TICK_S, r.period_s());
        assert_eq!(at(160.0), LegState::High);
        assert_eq!(at(10.0), LegState::High);
        assert_eq!(at(32.0), LegState::Dead);
        assert_eq!(at(100.0), LegState::Low);
        assert_eq!(at(152.0), LegState::Dead);
        assert!(output_timings(&r, &Stage::HalfBridge(LegCompare::new(30).halves(101))).is_err());
    }

    /// Hand-computed: edge, 100 ticks, dead time 5 ticks, compare 30: reference high 30 ticks,
    /// high side on 30 − 5 = 25, off 75; low side on 70 − 5 = 65, off 35.
    #[test]
    fn edge_pulses_by_hand() {
        let r = regs(Alignment::Edge, 100, 5);
        let t = half_bridge(&r, 30);
        assert_eq!(t[0].output, Output::High(LegName::A));
        assert_eq!(pulses(&t[0]), (Some(25.0), Some(75.0), false));
        assert_eq!(t[1].output, Output::Low(LegName::A));
        assert_eq!(pulses(&t[1]), (Some(65.0), Some(35.0), false));
        assert!(close(t[0].shortest_pulse_s().unwrap(), 25.0 * TICK_S));
        assert!(close(shortest_pulse_s(&t).unwrap(), 25.0 * TICK_S));
        assert!(close(low_side_on_s(&t).unwrap(), 65.0 * TICK_S));
        // Compare 5 = the dead time: the high-side pulse is swallowed (zero width); the low
        // side is off for the 5 reference ticks plus the 5 dead ticks.
        let t = half_bridge(&r, 5);
        assert_eq!(pulses(&t[0]), (None, None, true));
        assert_eq!(t[0].shortest_pulse_s(), Some(0.0));
        assert_eq!(pulses(&t[1]), (Some(90.0), Some(10.0), false));
        assert_eq!(shortest_pulse_s(&t), Some(0.0));
        // Compare 6: one tick survives.
        assert_eq!(
            pulses(&half_bridge(&r, 6)[0]),
            (Some(1.0), Some(99.0), false)
        );
        // Compare 96: the low-side reference lasts 4 ticks < dead time: swallowed.
        let t = half_bridge(&r, 96);
        assert_eq!(pulses(&t[0]), (Some(91.0), Some(9.0), false));
        assert_eq!(pulses(&t[1]), (None, None, true));
        // Compare 0 and full scale: constant outputs, nothing swallowed.
        let t = half_bridge(&r, 0);
        assert_eq!((t[0].on_s, t[0].pulses, t[0].swallowed), (0.0, 0, false));
        assert!(close(t[1].on_s, 100.0 * TICK_S) && t[1].shortest_pulse_s().is_none());
        let t = half_bridge(&r, 100);
        assert!(close(t[0].on_s, 100.0 * TICK_S) && t[1].on_s == 0.0);
        assert_eq!((shortest_pulse_s(&t), low_side_on_s(&t)), (None, Some(0.0)));
        let low_side = output_timings(&r, &Stage::LowSide(LegCompare::new(30))).unwrap();
        assert_eq!(low_side.len(), 1);
        assert_eq!(pulses(&low_side[0]), (Some(30.0), Some(70.0), false));
        assert_eq!(low_side_on_s(&low_side), None);
    }

    /// Hand-computed: centre, 100 ticks (50 steps), dead time 5 ticks, compare 10: reference
    /// high 2·10 = 20 ticks around the bottom; high side on 15, low side on 80 − 5 = 75.
    #[test]
    fn centre_pulses_by_hand() {
        let r = regs(Alignment::Centre, 100, 5);
        assert_eq!(r.duty_steps(), 50);
        let t = half_bridge(&r, 10);
        assert_eq!(pulses(&t[0]), (Some(15.0), Some(85.0), false));
        assert_eq!(pulses(&t[1]), (Some(75.0), Some(25.0), false));
        // Compare 2: 4 reference ticks < 5 dead ticks.
        let t = half_bridge(&r, 2);
        assert_eq!(pulses(&t[0]), (None, None, true));
        assert_eq!(pulses(&t[1]), (Some(91.0), Some(9.0), false));
        // Compare 48 (low-side reference 4 ticks) swallows the low side.
        assert!(half_bridge(&r, 48)[1].swallowed);
        // Inverted polarity: the high side follows the counter at or above the compare.
        let inv = output_timings(&r, &Stage::HalfBridge(LegCompare::inverted(10))).unwrap();
        assert_eq!(pulses(&inv[0]), (Some(75.0), Some(25.0), false));
    }

    /// The high-side pulse on a centre-aligned counter is centred on the counter bottom
    /// (t = 0): on from t = −c + dead to +c.
    #[test]
    fn centre_pulse_sits_on_the_counter_bottom() {
        let r = regs(Alignment::Centre, 100, 5);
        let c = Circuit {
            r_ohm: 1.0,
            l_h: 1e-3,
            back_emf_v: 0.0,
            v_bus_v: 10.0,
            r_ds_on_ohm: 0.0,
            v_sd_v: 0.0,
            v_f_v: 0.0,
        };
        let v = verify(&r, &Stage::HalfBridge(LegCompare::new(10)), &c).unwrap();
        let high: Vec<_> = v
            .timeline
            .iter()
            .filter(|s| s.a == LegState::High)
            .collect();
        assert_eq!(high.len(), 2);
        assert!(close(high[0].t0_s, 0.0) && close(high[0].t1_s, 10.0 * TICK_S));
        assert!(close(high[1].t0_s, 95.0 * TICK_S) && close(high[1].t1_s, 100.0 * TICK_S));
    }

    fn dead_time_case(back_emf_v: f64) -> (Verification, Circuit, f64) {
        let r = TimerRegisters {
            tick_s: 1.0 / 64e6,
            alignment: Alignment::Edge,
            period_ticks: 3200,
            dead_time_s: 1e-6,
        };
        let c = Circuit {
            r_ohm: 0.5,
            l_h: 2e-3,
            back_emf_v,
            v_bus_v: 48.0,
            r_ds_on_ohm: 0.0,
            v_sd_v: 0.9,
            v_f_v: 0.0,
        };
        let v = verify(&r, &Stage::HalfBridge(LegCompare::new(1600)), &c).unwrap();
        (v, c, r.dead_time_s * r.frequency_hz())
    }

    /// Dead-time voltage error (common practice): with a current of one sign the leg sits on
    /// the diode of that sign during both dead times, so the mean voltage moves by
    /// `−sign(i)·t_dead·f·V_bus` against the reference, and by `−sign(i)·2·t_dead·f·V_sd` more
    /// through the diode drops.
    #[test]
    fn dead_time_voltage_error_for_a_current_of_one_sign() {
        for (emf, sign) in [(10.0, 1.0), (38.0, -1.0)] {
            let (v, c, td_f) = dead_time_case(emf);
            assert!(v.min_a * sign > 0.0 && v.max_a * sign > 0.0, "one sign");
            assert!(close(v.voltage.ideal_v, 24.0));
            assert!(close(v.voltage.dead_time_v, -sign * td_f * c.v_bus_v));
            assert!(close(v.voltage.drops_v, -sign * 2.0 * td_f * c.v_sd_v));
            assert_eq!(v.voltage.dcm_v, 0.0);
            let expected = 24.0 - sign * td_f * (c.v_bus_v + 2.0 * c.v_sd_v);
            assert!(close(v.voltage.mean_v, expected));
            assert!((v.mean_a - (expected - emf) / c.r_ohm).abs() < 1e-9);
        }
    }

    /// Discontinuous conduction: a low-side stage with a back-EMF near the bus; the current
    /// stops during the off time and the timeline shows the switch off there.
    #[test]
    fn low_side_with_high_back_emf_is_discontinuous() {
        let r = regs(Alignment::Edge, 5000, 0);
        let c = Circuit {
            r_ohm: 1.0,
            l_h: 100e-6,
            back_emf_v: 22.0,
            v_bus_v: 24.0,
            r_ds_on_ohm: 0.05,
            v_sd_v: 0.8,
            v_f_v: 0.6,
        };
        let v = verify(&r, &Stage::LowSide(LegCompare::new(1500)), &c).unwrap();
        assert!(!v.continuous);
        assert_eq!(v.min_a, 0.0);
        let zero: Vec<_> = v
            .pieces
            .iter()
            .filter(|p| p.conduction == Conduction::Zero)
            .collect();
        assert_eq!(zero.len(), 1);
        let z = zero[0];
        assert!(z.t1_s > z.t0_s && close(z.t1_s, v.period_s));
        assert_eq!(v.timeline[z.interval].a, LegState::Dead);
        assert_eq!(v.current_at(0.5 * (z.t0_s + z.t1_s)), 0.0);
        // By hand: on for 15 µs from zero, then the diode until zero.
        let tau = c.l_h / (c.r_ohm + c.r_ds_on_ohm);
        let i_on =
            (c.v_bus_v - c.back_emf_v) / (c.r_ohm + c.r_ds_on_ohm) * -(-15e-6 / tau).exp_m1();
        assert!(close(v.max_a, i_on));
        let i_inf = (-c.v_f_v - c.back_emf_v) / c.r_ohm;
        let t_zero = c.l_h / c.r_ohm * ((i_on - i_inf) / -i_inf).ln();
        assert!(close(z.t0_s, 15e-6 + t_zero));
        // Terminal balance and the split: the zero interval sits at E.
        assert!((v.voltage.mean_v - (c.r_ohm * v.mean_a + c.back_emf_v)).abs() < 1e-9);
        assert!(close(
            v.voltage.dcm_v,
            c.back_emf_v * (z.t1_s - z.t0_s) / v.period_s
        ));
    }

    /// By hand: centre, 100 ticks, dead time 2 ticks, compares 10, 25, 40 (reference high for
    /// |t| < c ticks around the bottom; low side on from c + 2 to 100 − c). At the counter top
    /// (t = 50) every low side conducts; on the down-count at counter 1 (t = 99) every high side
    /// does, so no low-side shunt carries current (defect 13 of issue 14).
    #[test]
    fn three_phase_leg_states_at_the_trigger_by_hand() {
        let r = regs(Alignment::Centre, 100, 2);
        let periods = [[10, 25, 40], [0, 50, 49]];
        let top = SampleTrigger {
            counter: 50,
            counting_up: true,
        };
        let s = three_phase_samples(&r, &periods, top).unwrap();
        assert_eq!(s.len(), 2);
        for (leg, c) in s[0].iter().zip([10.0, 25.0, 40.0]) {
            assert_eq!((leg.state, leg.reference), (LegState::Low, false));
            assert!(close(
                leg.low_on_since_s.unwrap(),
                (50.0 - c - 2.0) * TICK_S
            ));
            assert!(close(leg.low_on_until_s.unwrap(), (50.0 - c) * TICK_S));
        }
        // Compare 0: low side always on; 50: never on (high always); 49: the low-side
        // reference lasts 2 ticks = the dead time, swallowed: the leg is dead at the top.
        assert_eq!(s[1][0].state, LegState::Low);
        assert!(close(s[1][0].low_on_since_s.unwrap(), 50.0 * TICK_S));
        assert!(close(s[1][0].low_on_until_s.unwrap(), 50.0 * TICK_S));
        assert_eq!(
            (s[1][1].state, s[1][1].low_on_since_s),
            (LegState::High, None)
        );
        assert_eq!((s[1][2].state, s[1][2].reference), (LegState::Dead, false));
        let down = SampleTrigger {
            counter: 1,
            counting_up: false,
        };
        assert!(close(down.time_s(&r), 99.0 * TICK_S));
        let s = three_phase_samples(&r, &periods[..1], down).unwrap();
        assert!(
            s[0].iter()
                .all(|l| l.state == LegState::High && l.low_on_since_s.is_none())
        );
        let beyond = SampleTrigger {
            counter: 51,
            counting_up: true,
        };
        assert_eq!(
            three_phase_samples(&r, &periods, beyond),
            Err(VerifyError::Trigger(51))
        );
    }

    #[test]
    fn bad_inputs_are_refused() {
        let c = Circuit {
            r_ohm: 1.0,
            l_h: 1e-3,
            back_emf_v: 0.0,
            v_bus_v: 10.0,
            r_ds_on_ohm: 0.0,
            v_sd_v: 0.0,
            v_f_v: 0.0,
        };
        let stage = Stage::HalfBridge(LegCompare::new(51));
        assert_eq!(
            verify(&regs(Alignment::Centre, 100, 0), &stage, &c),
            Err(VerifyError::Compare {
                compare: 51,
                duty_steps: 50
            })
        );
        let odd = regs(Alignment::Centre, 101, 0);
        assert_eq!(verify(&odd, &stage, &c), Err(VerifyError::PeriodTicks(101)));
        let no_l = Circuit { l_h: 0.0, ..c };
        assert_eq!(
            verify(&regs(Alignment::Edge, 100, 0), &stage, &no_l),
            Err(VerifyError::Circuit)
        );
    }
}
