//! Motor current ripple: the exact periodic steady state of an R–L–back-EMF motor under PWM.
//!
//! Owns: the motor load model (`MotorLoad`), the power-stage topologies seen by the load (`Drive`),
//! the exact piecewise-exponential steady-state waveform (`RippleWaveform`, built by `steady_state`),
//! the small-ripple (triangular) approximations, the ripple copper loss and the worst-case duty search.
//! It does not own switching, conduction or thermal losses of the semiconductors, nor acoustics
//! (see `acoustics`, which consumes `RippleWaveform`).
//!
//! Model: `L·di/dt = v(t) − R·i − E` with `v(t)` the terminal voltage imposed by the stage.
//! Switches are ideal (zero on-resistance, zero transition time, no dead time); the only
//! non-ideal element is the optional forward voltage `v_f_v` of the freewheel diode.
//! Each interval of constant `v` gives `i(t) = i_inf + (i_start − i_inf)·e^(−t/τ)`, τ = L/R,
//! i_inf = (v − E)/R (Rashid, *Power Electronics: Circuits, Devices and Applications*,
//! step-down converter with RL load, Example 5.2 (from memory for the example number)).
//!
//! Time origin: every waveform starts (t = 0) at the instant the *active* state begins
//! (switch on / +V pulse / active pulse of the unipolar bridge).
//!
//! Numerical note: segments are evaluated as `i_start + (i_inf − i_start)·(1 − e^(−t/τ))` with
//! `exp_m1` and series for the integrals, so the small-ripple limit (T ≪ τ) keeps its precision;
//! the results stay accurate to about `1e-16·(τ/T)²` relative, i.e. fine for τ/T up to ~1e4.

use std::fmt;

/// The motor seen from its terminals: winding resistance, inductance and back-EMF.
///
/// `back_emf_v` may be zero (stall), positive (motoring) or negative (the rotor turns against the
/// applied polarity, e.g. plugging / braking). Restrictions per drive are documented on `Drive`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MotorLoad {
    pub r_ohm: f64,
    pub l_h: f64,
    pub back_emf_v: f64,
}

/// Power-stage topology and modulation, as seen by the motor terminals. Ideal switches.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Drive {
    /// Single low-side switch plus freewheel diode across the motor. ON applies +V; OFF applies
    /// −`v_f_v` while the current is positive; the current cannot reverse, so conduction can be
    /// discontinuous. When the current is zero the terminal voltage is E (diode and switch block).
    /// Restrictions: requires E < V (regeneration through the switch body diode is not modelled:
    /// `RippleError::BackEmfNotBelowBus`). If E < −V_f the diode conducts even at zero current, so
    /// the current never stops and the waveform is continuous (handled by the same model).
    LowSideFreewheel { v_f_v: f64 },
    /// Synchronous half-bridge: ON applies +V, OFF applies 0 V; current may go negative, so
    /// conduction is always continuous. Any E.
    HalfBridgeSynchronous,
    /// Full bridge, bipolar PWM: ON (duty D) applies +V, OFF applies −V; mean (2D − 1)·V. Any E.
    HBridgeBipolar,
    /// Full bridge, unipolar PWM with a triangle (centre-aligned) carrier. Convention: `duty` is
    /// leg A's duty D_a, leg B runs D_b = 1 − D_a. The load sees pulses of +V (D > 0.5) or −V
    /// (D < 0.5) of relative width m = |2D − 1| at twice the switching frequency; mean (2D − 1)·V;
    /// the waveform's period is 1/(2f) (Mohan, Undeland, Robbins, *Power Electronics*, 3rd ed.,
    /// §7-7, from memory). Any E.
    HBridgeUnipolar,
}

/// Why a ripple computation was refused.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum RippleError {
    /// A parameter is non-finite or outside its domain.
    InvalidInput {
        name: &'static str,
        reason: &'static str,
    },
    /// `LowSideFreewheel` with back-EMF ≥ bus voltage: the switch cannot drive current into the
    /// motor and regeneration through the body diode is outside this model.
    BackEmfNotBelowBus,
}

impl fmt::Display for RippleError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            RippleError::InvalidInput { name, reason } => write!(f, "invalid {name}: {reason}"),
            RippleError::BackEmfNotBelowBus => write!(
                f,
                "back-EMF at or above the bus voltage: a low-side switch cannot drive the motor"
            ),
        }
    }
}

impl std::error::Error for RippleError {}

/// One interval of the periodic current, in local time `t ∈ [0, duration_s]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Segment {
    /// `i(t) = i_inf + (i_start − i_inf)·e^(−t/τ)` (first-order RL step response; Rashid,
    /// *Power Electronics*, RL-load chopper, from memory).
    Exponential {
        duration_s: f64,
        i_start_a: f64,
        i_inf_a: f64,
        tau_s: f64,
    },
    /// Zero current (discontinuous conduction; terminal voltage equals the back-EMF).
    Zero { duration_s: f64 },
}

/// `1 − e^(−x)` without cancellation for small x.
fn g1(x: f64) -> f64 {
    -(-x).exp_m1()
}

/// `h(x) = ∫₀ˣ (1 − e^(−u)) du = x − (1 − e^(−x))`; series below 0.5 to avoid cancellation
/// (closed form, Taylor series of e^(−x)).
fn h_int(x: f64) -> f64 {
    if x >= 0.5 {
        return x - g1(x);
    }
    // Σ_{n≥2} (−x)^n / n!
    let mut term = x * x / 2.0;
    let mut sum = 0.0;
    for n in 2..30 {
        sum += term;
        // The terms fall factorially: once one is below an ulp of the sum
        // the rest change nothing.
        if term.abs() <= 1e-17 * sum.abs() {
            break;
        }
        term *= -x / (n as f64 + 1.0);
    }
    sum
}

/// `q(x) = ∫₀ˣ (1 − e^(−u))² du = x − 2(1 − e^(−x)) + (1 − e^(−2x))/2`; series below 0.5:
/// Σ_{n≥2} (−1)^n (2^n − 2) x^(n+1) / ((n+1)·n!) (closed form, Taylor series).
fn q_int(x: f64) -> f64 {
    if x >= 0.5 {
        return x - 2.0 * g1(x) + 0.5 * g1(2.0 * x);
    }
    let mut p = 1.0; // (−x)^n / n!
    let mut r = 1.0; // (−2x)^n / n!
    let mut sum = 0.0;
    for n in 1..32 {
        let nf = n as f64;
        p *= -x / nf;
        r *= -2.0 * x / nf;
        if n >= 2 {
            let term = (r - 2.0 * p) * x / (nf + 1.0);
            sum += term;
            if term.abs() <= 1e-17 * sum.abs() {
                break;
            }
        }
    }
    sum
}

impl Segment {
    /// Length of the interval, s.
    pub fn duration_s(&self) -> f64 {
        match *self {
            Segment::Exponential { duration_s, .. } | Segment::Zero { duration_s } => duration_s,
        }
    }

    /// Current at the start of the interval, A.
    pub fn i_start_a(&self) -> f64 {
        match *self {
            Segment::Exponential { i_start_a, .. } => i_start_a,
            Segment::Zero { .. } => 0.0,
        }
    }

    /// Current at the end of the interval, A.
    pub fn i_end_a(&self) -> f64 {
        self.value_at(self.duration_s())
    }

    /// Current at local time `t_s` (clamped into the interval), A.
    /// Formula: `i_start + (i_inf − i_start)·(1 − e^(−t/τ))`, same as the exponential form.
    pub fn value_at(&self, t_s: f64) -> f64 {
        match *self {
            Segment::Exponential {
                duration_s,
                i_start_a,
                i_inf_a,
                tau_s,
            } => {
                let t = t_s.clamp(0.0, duration_s);
                i_start_a + (i_inf_a - i_start_a) * g1(t / tau_s)
            }
            Segment::Zero { .. } => 0.0,
        }
    }

    /// `∫ i dt` over the interval (A·s): `i_start·d + (i_inf − i_start)·τ·h(d/τ)` (closed form).
    fn integral_a_s(&self) -> f64 {
        self.integral_over_a_s(self.duration_s())
    }

    /// `∫ i dt` over the interval's first `t_s` (clamped into it), A·s: the closed form above
    /// with `t` for `d`.
    pub fn integral_over_a_s(&self, t_s: f64) -> f64 {
        match *self {
            Segment::Exponential {
                duration_s,
                i_start_a,
                i_inf_a,
                tau_s,
            } => {
                let t = t_s.clamp(0.0, duration_s);
                i_start_a * t + (i_inf_a - i_start_a) * tau_s * h_int(t / tau_s)
            }
            Segment::Zero { .. } => 0.0,
        }
    }

    /// `∫ (i − m)² dt` over the interval (A²·s), closed form with c = i_start − m, b = i_inf − i_start:
    /// `c²·d + 2·c·b·τ·h(d/τ) + b²·τ·q(d/τ)`.
    fn ac_square_integral(&self, mean_a: f64) -> f64 {
        match *self {
            Segment::Exponential {
                duration_s,
                i_start_a,
                i_inf_a,
                tau_s,
            } => {
                let c = i_start_a - mean_a;
                let b = i_inf_a - i_start_a;
                let x = duration_s / tau_s;
                c * c * duration_s + 2.0 * c * b * tau_s * h_int(x) + b * b * tau_s * q_int(x)
            }
            Segment::Zero { duration_s } => mean_a * mean_a * duration_s,
        }
    }
}

/// One period of the steady-state motor current, as piecewise exponential / zero segments,
/// with its figures of merit computed in closed form from the segments.
#[derive(Debug, Clone, PartialEq)]
pub struct RippleWaveform {
    period_s: f64,
    segments: Vec<Segment>,
    continuous: bool,
    i_max_a: f64,
    i_min_a: f64,
    i_avg_a: f64,
    i_rms_a: f64,
    ripple_rms_a: f64,
    i_at_switch_on_a: Option<f64>,
    i_at_switch_off_a: Option<f64>,
}

impl RippleWaveform {
    /// Builds the summaries from segments whose durations sum to `period_s` (> 0, checked by caller).
    fn from_segments(
        period_s: f64,
        segments: Vec<Segment>,
        continuous: bool,
        switch_on_off: Option<(f64, f64)>,
    ) -> Self {
        // Each segment is monotonic, so the extremes sit on segment boundaries.
        let mut i_max_a = f64::NEG_INFINITY;
        let mut i_min_a = f64::INFINITY;
        for s in &segments {
            for v in [s.i_start_a(), s.i_end_a()] {
                i_max_a = i_max_a.max(v);
                i_min_a = i_min_a.min(v);
            }
        }
        let i_avg_a = segments.iter().map(Segment::integral_a_s).sum::<f64>() / period_s;
        let ac_ms = (segments
            .iter()
            .map(|s| s.ac_square_integral(i_avg_a))
            .sum::<f64>()
            / period_s)
            .max(0.0);
        RippleWaveform {
            period_s,
            segments,
            continuous,
            i_max_a,
            i_min_a,
            i_avg_a,
            i_rms_a: (i_avg_a * i_avg_a + ac_ms).sqrt(),
            ripple_rms_a: ac_ms.sqrt(),
            i_at_switch_on_a: switch_on_off.map(|p| p.0),
            i_at_switch_off_a: switch_on_off.map(|p| p.1),
        }
    }

    /// Period of the current waveform, s: 1/f, or 1/(2f) for the unipolar H-bridge.
    pub fn period_s(&self) -> f64 {
        self.period_s
    }
    /// The segments of one period, starting at the active-state turn-on.
    pub fn segments(&self) -> &[Segment] {
        &self.segments
    }
    /// False when the current sits at zero for part of the period (freewheel drive only).
    pub fn continuous(&self) -> bool {
        self.continuous
    }
    /// Peak current, A.
    pub fn i_max_a(&self) -> f64 {
        self.i_max_a
    }
    /// Lowest current, A (negative possible for bridges).
    pub fn i_min_a(&self) -> f64 {
        self.i_min_a
    }
    /// Mean current, A: `(1/T)·Σ ∫ i dt` over the segments (closed form).
    pub fn i_avg_a(&self) -> f64 {
        self.i_avg_a
    }
    /// RMS current, A: `√(I_avg² + I_ac,rms²)` (closed form).
    pub fn i_rms_a(&self) -> f64 {
        self.i_rms_a
    }
    /// Peak-to-peak ripple `I_max − I_min`, A.
    pub fn ripple_pp_a(&self) -> f64 {
        self.i_max_a - self.i_min_a
    }
    /// RMS of the AC part `√((1/T)∫(i − I_avg)² dt)`, A (closed form).
    pub fn ripple_rms_a(&self) -> f64 {
        self.ripple_rms_a
    }
    /// Current when the active switch (or active pulse) turns on; `None` if it never switches
    /// (duty 0 or 1; unipolar D = 0 or 1).
    pub fn i_at_switch_on_a(&self) -> Option<f64> {
        self.i_at_switch_on_a
    }
    /// Current when the active switch (or active pulse) turns off; `None` as above.
    pub fn i_at_switch_off_a(&self) -> Option<f64> {
        self.i_at_switch_off_a
    }

    /// Current at time `t_s` (any real t; the waveform repeats with `period_s`), A.
    pub fn value_at(&self, t_s: f64) -> f64 {
        let mut t = t_s.rem_euclid(self.period_s);
        for s in &self.segments {
            let d = s.duration_s();
            if t <= d {
                return s.value_at(t);
            }
            t -= d;
        }
        // Rounding left t just past the last segment: it is the period end.
        self.segments.last().map_or(0.0, Segment::i_end_a)
    }

    /// `n` equally spaced samples over one period, at t_k = k·T/n, k = 0..n.
    pub fn sample(&self, n: usize) -> Vec<f64> {
        let dt = if n == 0 {
            0.0
        } else {
            self.period_s / n as f64
        };
        (0..n).map(|k| self.value_at(k as f64 * dt)).collect()
    }
}

fn check_finite(name: &'static str, x: f64) -> Result<(), RippleError> {
    if x.is_finite() {
        Ok(())
    } else {
        Err(RippleError::InvalidInput {
            name,
            reason: "must be finite",
        })
    }
}

fn check_positive(name: &'static str, x: f64) -> Result<(), RippleError> {
    check_finite(name, x)?;
    if x > 0.0 {
        Ok(())
    } else {
        Err(RippleError::InvalidInput {
            name,
            reason: "must be > 0",
        })
    }
}

fn check_duty(duty: f64) -> Result<(), RippleError> {
    check_finite("duty", duty)?;
    if (0.0..=1.0).contains(&duty) {
        Ok(())
    } else {
        Err(RippleError::InvalidInput {
            name: "duty",
            reason: "must be within 0..=1",
        })
    }
}

fn check_drive(drive: Drive) -> Result<(), RippleError> {
    if let Drive::LowSideFreewheel { v_f_v } = drive {
        check_finite("v_f_v", v_f_v)?;
        if v_f_v < 0.0 {
            return Err(RippleError::InvalidInput {
                name: "v_f_v",
                reason: "must be >= 0",
            });
        }
    }
    Ok(())
}

fn check_common(
    load: &MotorLoad,
    drive: Drive,
    v_bus_v: f64,
    f_sw_hz: f64,
) -> Result<(), RippleError> {
    check_positive("r_ohm", load.r_ohm)?;
    check_positive("l_h", load.l_h)?;
    check_finite("back_emf_v", load.back_emf_v)?;
    check_positive("v_bus_v", v_bus_v)?;
    check_positive("f_sw_hz", f_sw_hz)?;
    check_drive(drive)
}

/// Start current of the periodic steady state for a cyclic sequence of constant-voltage states
/// `(v_applied, duration)`, all with the same τ. Fixed point of the period map `i ↦ α·i + β`:
/// `i₀ = Σ_k a_k·(1 − e^(−x_k))·e^(−Σ_{j>k} x_j) / (1 − e^(−Σ x))`, a_k = (v_k − E)/R, x_k = t_k/τ
/// (closed form; generalises Rashid's I_min = (V/R)(e^(DT/τ) − 1)/(e^(T/τ) − 1) − E/R).
fn periodic_start_current(states: &[(f64, f64)], load: &MotorLoad) -> f64 {
    let tau = load.l_h / load.r_ohm;
    let x_total: f64 = states.iter().map(|s| s.1 / tau).sum();
    let mut num = 0.0;
    let mut x_after: f64 = x_total;
    for &(v, d) in states {
        let x = d / tau;
        x_after -= x;
        let a = (v - load.back_emf_v) / load.r_ohm;
        num += a * g1(x) * (-x_after.max(0.0)).exp();
    }
    num / g1(x_total)
}

/// Segments of a continuous (linear-circuit) periodic state sequence; zero-length states dropped.
fn linear_segments(states: &[(f64, f64)], load: &MotorLoad) -> Vec<Segment> {
    let tau = load.l_h / load.r_ohm;
    let kept: Vec<(f64, f64)> = states.iter().copied().filter(|s| s.1 > 0.0).collect();
    let mut i = periodic_start_current(&kept, load);
    let mut segs = Vec::with_capacity(kept.len());
    for (v, d) in kept {
        let seg = Segment::Exponential {
            duration_s: d,
            i_start_a: i,
            i_inf_a: (v - load.back_emf_v) / load.r_ohm,
            tau_s: tau,
        };
        i = seg.i_end_a();
        segs.push(seg);
    }
    segs
}

/// Switching currents `(on, off)` for a two-state sequence with an active first state of length
/// `t_active` out of `period`: None when the switch never changes state.
fn switch_currents(segs: &[Segment], t_active: f64, period: f64) -> Option<(f64, f64)> {
    if t_active <= 0.0 || t_active >= period {
        return None;
    }
    let on = segs.first().map_or(0.0, Segment::i_start_a);
    let off = segs.first().map_or(0.0, Segment::i_end_a);
    Some((on, off))
}

/// Exact periodic steady state of the motor current.
///
/// Continuous conduction: the closed-form fixed point of `periodic_start_current`, which for a
/// single switch with ideal diode reduces to Rashid's (Example 5.2, from memory)
/// `I_max = (V/R)(1 − e^(−DT/τ))/(1 − e^(−T/τ)) − E/R`, `I_min = (V/R)(e^(DT/τ) − 1)/(e^(T/τ) − 1) − E/R`.
///
/// Discontinuous conduction (freewheel drive, when the continuous solution would give I_min < 0):
/// from 0 A the current rises for DT to `I_p = ((V − E)/R)(1 − e^(−DT/τ))`, then decays through the
/// diode toward `a₂ = −(V_f + E)/R < 0`, reaching zero at
/// `t_x = τ·ln(1 + I_p/|a₂|)` (solving `0 = a₂ + (I_p − a₂)e^(−t_x/τ)`, closed form), then stays
/// at zero until T (terminal voltage E; the diode stays off because E > −V_f in this branch).
pub fn steady_state(
    load: &MotorLoad,
    drive: Drive,
    v_bus_v: f64,
    duty: f64,
    f_sw_hz: f64,
) -> Result<RippleWaveform, RippleError> {
    check_common(load, drive, v_bus_v, f_sw_hz)?;
    check_duty(duty)?;
    let t = 1.0 / f_sw_hz;
    let v = v_bus_v;
    match drive {
        Drive::LowSideFreewheel { v_f_v } => freewheel(load, v, v_f_v, duty, t),
        Drive::HalfBridgeSynchronous => Ok(two_level(load, v, 0.0, duty, t)),
        Drive::HBridgeBipolar => Ok(two_level(load, v, -v, duty, t)),
        Drive::HBridgeUnipolar => Ok(unipolar(load, v, duty, t)),
    }
}

/// Exact periodic current of a continuous piecewise-constant terminal voltage: `states` are
/// `(volts, seconds)` in time order over one waveform period (zero-length states allowed); the
/// switching currents reported are those at the starts of states `edges.0` (on) and `edges.1`
/// (off). The same closed-form fixed point as [`steady_state`]. The stage model uses it for
/// the waveform with the dead-time intervals and the conduction drops counted.
pub fn piecewise_steady_state(
    load: &MotorLoad,
    states: &[(f64, f64)],
    edges: (usize, usize),
) -> Result<RippleWaveform, RippleError> {
    check_positive("r_ohm", load.r_ohm)?;
    check_positive("l_h", load.l_h)?;
    check_finite("back_emf_v", load.back_emf_v)?;
    for &(v, d) in states {
        check_finite("state voltage", v)?;
        check_finite("state duration", d)?;
        if d < 0.0 {
            return Err(RippleError::InvalidInput {
                name: "state duration",
                reason: "must not be negative",
            });
        }
    }
    let period: f64 = states.iter().map(|s| s.1).sum();
    check_positive("period", period)?;
    let kept: Vec<(f64, f64)> = states.iter().copied().filter(|s| s.1 > 0.0).collect();
    let tau = load.l_h / load.r_ohm;
    let mut i = periodic_start_current(&kept, load);
    let mut at_start = Vec::with_capacity(states.len());
    for &(v, d) in states {
        at_start.push(i);
        let i_inf = (v - load.back_emf_v) / load.r_ohm;
        i = i_inf + (i - i_inf) * (-d / tau).exp();
    }
    let pick = |k: usize| at_start.get(k).copied();
    let sw = pick(edges.0).zip(pick(edges.1));
    Ok(RippleWaveform::from_segments(
        period,
        linear_segments(&kept, load),
        true,
        sw,
    ))
}

/// Continuous two-level drive: `v_hi` for D·T, `v_lo` for the rest.
fn two_level(load: &MotorLoad, v_hi: f64, v_lo: f64, duty: f64, t: f64) -> RippleWaveform {
    let t_on = duty * t;
    let segs = linear_segments(&[(v_hi, t_on), (v_lo, t - t_on)], load);
    let sw = switch_currents(&segs, t_on, t);
    RippleWaveform::from_segments(t, segs, true, sw)
}

/// Unipolar H-bridge: pulses of sign(2D − 1)·V of width m·T/2, m = |2D − 1|, period T/2
/// (Mohan, Undeland, Robbins, §7-7, from memory; derivation: with a triangle carrier the
/// +V intervals of leg A minus leg B are two equal pulses spaced T/2 apart).
fn unipolar(load: &MotorLoad, v: f64, duty: f64, t: f64) -> RippleWaveform {
    let half = 0.5 * t;
    let m = (2.0 * duty - 1.0).abs();
    let v_pulse = if duty >= 0.5 { v } else { -v };
    let t_on = m * half;
    let segs = linear_segments(&[(v_pulse, t_on), (0.0, half - t_on)], load);
    // The legs switch unless D is 0 or 1; at D = 0.5 the pulse is empty and the current constant.
    let sw = if duty > 0.0 && duty < 1.0 {
        let on = segs.first().map_or(0.0, Segment::i_start_a);
        let off = if t_on > 0.0 {
            segs.first().map_or(0.0, Segment::i_end_a)
        } else {
            on
        };
        Some((on, off))
    } else {
        None
    };
    RippleWaveform::from_segments(half, segs, true, sw)
}

/// Single low-side switch with freewheel diode (see `steady_state` for the formulas).
fn freewheel(
    load: &MotorLoad,
    v: f64,
    v_f_v: f64,
    duty: f64,
    t: f64,
) -> Result<RippleWaveform, RippleError> {
    let e = load.back_emf_v;
    if e >= v {
        return Err(RippleError::BackEmfNotBelowBus);
    }
    let t_on = duty * t;
    let a_off = (-v_f_v - e) / load.r_ohm;
    let states = [(v, t_on), (-v_f_v, t - t_on)];
    let kept: Vec<(f64, f64)> = states.iter().copied().filter(|s| s.1 > 0.0).collect();
    let i0 = periodic_start_current(&kept, load);
    // Discontinuous only if the decay target is below zero and the continuous fixed point is too.
    if !(a_off < 0.0 && i0 < 0.0) {
        let segs = linear_segments(&states, load);
        let sw = switch_currents(&segs, t_on, t);
        return Ok(RippleWaveform::from_segments(t, segs, true, sw));
    }
    let tau = load.l_h / load.r_ohm;
    let a_on = (v - e) / load.r_ohm;
    let i_peak = a_on * g1(t_on / tau);
    let t_x = (tau * (i_peak / -a_off).ln_1p()).min(t - t_on);
    let t_zero = (t - t_on - t_x).max(0.0);
    let mut segs = Vec::with_capacity(3);
    if t_on > 0.0 {
        segs.push(Segment::Exponential {
            duration_s: t_on,
            i_start_a: 0.0,
            i_inf_a: a_on,
            tau_s: tau,
        });
    }
    if t_x > 0.0 {
        segs.push(Segment::Exponential {
            duration_s: t_x,
            i_start_a: i_peak,
            i_inf_a: a_off,
            tau_s: tau,
        });
    }
    if t_zero > 0.0 {
        segs.push(Segment::Zero { duration_s: t_zero });
    }
    let sw = if t_on > 0.0 && t_on < t {
        Some((0.0, i_peak))
    } else {
        None
    };
    let mut w = RippleWaveform::from_segments(t, segs, false, sw);
    // The decay ends at zero up to rounding; the diode forbids negative current, so say 0 exactly.
    w.i_min_a = w.i_min_a.max(0.0);
    Ok(w)
}

/// Small-ripple (triangular) peak-to-peak ripple, single switch or synchronous half-bridge:
/// `ΔI = V·D(1 − D)/(L·f)` (Rashid, *Power Electronics*, buck/chopper ripple; Mohan, Undeland,
/// Robbins, *Power Electronics*, 3rd ed., from memory). Valid for T ≪ τ and continuous conduction.
/// None when `L·f ≤ 0` or the result is not finite (the three raw forms share this guard).
pub fn small_ripple_pp_single_a(v_bus_v: f64, l_h: f64, f_sw_hz: f64, duty: f64) -> Option<f64> {
    guarded_ratio(v_bus_v * duty * (1.0 - duty), l_h * f_sw_hz)
}

/// `num/den` when den > 0 and the quotient is finite.
fn guarded_ratio(num: f64, den: f64) -> Option<f64> {
    let q = num / den;
    (den > 0.0 && q.is_finite()).then_some(q)
}

/// Small-ripple bipolar H-bridge ripple: `ΔI = 2·V·D(1 − D)/(L·f)`
/// (Mohan, Undeland, Robbins, *Power Electronics*, 3rd ed., §7-7, from memory).
pub fn small_ripple_pp_bipolar_a(v_bus_v: f64, l_h: f64, f_sw_hz: f64, duty: f64) -> Option<f64> {
    guarded_ratio(2.0 * v_bus_v * duty * (1.0 - duty), l_h * f_sw_hz)
}

/// Small-ripple unipolar H-bridge ripple at 2f with m = |V_o|/V = |2D − 1|:
/// `ΔI = V·m(1 − m)/(2·L·f)` (Mohan, Undeland, Robbins, *Power Electronics*, 3rd ed., §7-7,
/// from memory).
pub fn small_ripple_pp_unipolar_a(v_bus_v: f64, l_h: f64, f_sw_hz: f64, duty: f64) -> Option<f64> {
    let m = (2.0 * duty - 1.0).abs();
    guarded_ratio(v_bus_v * m * (1.0 - m), 2.0 * l_h * f_sw_hz)
}

/// Small-ripple peak-to-peak ripple for any drive. For the freewheel drive the OFF voltage is
/// −V_f, so volt-second balance gives `ΔI = (V + V_f)·D(1 − D)/(L·f)` (derived from the textbook
/// form by the same balance; reduces to it for V_f = 0). Assumes continuous conduction.
pub fn small_ripple_pp_a(
    drive: Drive,
    v_bus_v: f64,
    l_h: f64,
    f_sw_hz: f64,
    duty: f64,
) -> Result<f64, RippleError> {
    check_positive("v_bus_v", v_bus_v)?;
    check_positive("l_h", l_h)?;
    check_positive("f_sw_hz", f_sw_hz)?;
    check_duty(duty)?;
    check_drive(drive)?;
    let pp = match drive {
        Drive::LowSideFreewheel { v_f_v } => {
            small_ripple_pp_single_a(v_bus_v + v_f_v, l_h, f_sw_hz, duty)
        }
        Drive::HalfBridgeSynchronous => small_ripple_pp_single_a(v_bus_v, l_h, f_sw_hz, duty),
        Drive::HBridgeBipolar => small_ripple_pp_bipolar_a(v_bus_v, l_h, f_sw_hz, duty),
        Drive::HBridgeUnipolar => small_ripple_pp_unipolar_a(v_bus_v, l_h, f_sw_hz, duty),
    };
    pp.ok_or(RippleError::InvalidInput {
        name: "l_h",
        reason: "L·f too small: ripple not finite",
    })
}

/// Worst-case small-ripple peak-to-peak over all duties: V/(4Lf) at D = 0.5 (single switch,
/// (V + V_f)/(4Lf) with a diode), V/(2Lf) bipolar at D = 0.5, V/(8Lf) unipolar at m = 0.5
/// (Mohan, Undeland, Robbins, §7-7, from memory).
pub fn small_ripple_worst_pp_a(
    drive: Drive,
    v_bus_v: f64,
    l_h: f64,
    f_sw_hz: f64,
) -> Result<f64, RippleError> {
    let d = match drive {
        Drive::HBridgeUnipolar => 0.75,
        _ => 0.5,
    };
    small_ripple_pp_a(drive, v_bus_v, l_h, f_sw_hz, d)
}

/// Extra winding copper loss due to ripple: `P = R·I_ac,rms²`, W. For a triangular (small-ripple)
/// current `I_ac,rms² = ΔI²/12`, so `P = R·ΔI²/12` (RMS of a triangle wave, closed form;
/// Erickson, Maksimović, *Fundamentals of Power Electronics*, 2nd ed., 2001, Appendix A; from
/// memory).
pub fn ripple_copper_loss_w(r_ohm: f64, ripple_rms_a: f64) -> f64 {
    r_ohm * ripple_rms_a * ripple_rms_a
}

/// RMS of a symmetric or asymmetric triangular ripple of peak-to-peak `pp`: `ΔI/√12` (closed form).
pub fn triangular_ripple_rms_a(ripple_pp_a: f64) -> f64 {
    ripple_pp_a / 12f64.sqrt()
}

/// Result of `worst_case_duty`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WorstCaseRipple {
    pub duty: f64,
    pub ripple_pp_a: f64,
}

/// The duty in `[duty_lo, duty_hi]` that maximises the exact peak-to-peak ripple.
///
/// Method: for two-level continuous drives the exact ripple
/// `ΔI = (ΔV/R)·(1 − e^(−DT/τ))(1 − e^(−(1−D)T/τ))/(1 − e^(−T/τ))` does not depend on E, is
/// symmetric in D ↔ 1 − D and log-concave, so it peaks at D = 0.5 (unipolar: at m = 0.5, i.e.
/// D = 0.25 or 0.75) (derived from the closed form). The freewheel drive adds the discontinuous
/// region, where ΔI = I_peak rises with D; the ripple is then still unimodal in D, so a
/// golden-section search on the exact model is used. Candidates (range ends and the closed-form
/// peaks clipped to the range) are always evaluated exactly and the best returned.
pub fn worst_case_duty(
    load: &MotorLoad,
    drive: Drive,
    v_bus_v: f64,
    f_sw_hz: f64,
    duty_lo: f64,
    duty_hi: f64,
) -> Result<WorstCaseRipple, RippleError> {
    check_duty(duty_lo)?;
    check_duty(duty_hi)?;
    if duty_lo > duty_hi {
        return Err(RippleError::InvalidInput {
            name: "duty_lo",
            reason: "must be <= duty_hi",
        });
    }
    let pp = |d: f64| steady_state(load, drive, v_bus_v, d, f_sw_hz).map(|w| w.ripple_pp_a());
    let mut candidates = vec![duty_lo, duty_hi];
    for c in [0.25_f64, 0.5, 0.75] {
        candidates.push(c.clamp(duty_lo, duty_hi));
    }
    if let Drive::LowSideFreewheel { .. } = drive {
        candidates.push(golden_max(&pp, duty_lo, duty_hi)?);
    }
    let mut best = WorstCaseRipple {
        duty: duty_lo,
        ripple_pp_a: pp(duty_lo)?,
    };
    for d in candidates {
        let r = pp(d)?;
        if r > best.ripple_pp_a {
            best = WorstCaseRipple {
                duty: d,
                ripple_pp_a: r,
            };
        }
    }
    Ok(best)
}

/// Golden-section search for the maximum of a unimodal function on [lo, hi].
fn golden_max<F>(f: &F, lo: f64, hi: f64) -> Result<f64, RippleError>
where
    F: Fn(f64) -> Result<f64, RippleError>,
{
    let inv_phi = (5f64.sqrt() - 1.0) / 2.0;
    let (mut a, mut b) = (lo, hi);
    let mut c = b - inv_phi * (b - a);
    let mut d = a + inv_phi * (b - a);
    let (mut fc, mut fd) = (f(c)?, f(d)?);
    for _ in 0..80 {
        if b - a < 1e-10 {
            break;
        }
        if fc >= fd {
            b = d;
            d = c;
            fd = fc;
            c = b - inv_phi * (b - a);
            fc = f(c)?;
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + inv_phi * (b - a);
            fd = f(d)?;
        }
    }
    Ok(0.5 * (a + b))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn load(r_ohm: f64, l_h: f64, back_emf_v: f64) -> MotorLoad {
        MotorLoad {
            r_ohm,
            l_h,
            back_emf_v,
        }
    }

    /// Rashid, *Power Electronics: Circuits, Devices and Applications*, Example 5.2 (example number
    /// from memory): 220 V, 5 Ω, 7.5 mH, E = 0, 1 kHz, D = 0.5 → I_max 25.63 A, I_min 18.37 A.
    #[test]
    fn rashid_example_rl_chopper() {
        let w = steady_state(
            &load(5.0, 7.5e-3, 0.0),
            Drive::LowSideFreewheel { v_f_v: 0.0 },
            220.0,
            0.5,
            1e3,
        )
        .expect("valid input");
        assert!((w.i_max_a() - 25.63).abs() < 0.05, "{}", w.i_max_a());
        assert!((w.i_min_a() - 18.37).abs() < 0.05, "{}", w.i_min_a());
        assert!(w.continuous());
        assert_eq!(w.i_at_switch_on_a(), Some(w.i_min_a()));
        assert_eq!(w.i_at_switch_off_a(), Some(w.i_max_a()));
        // Ideal-diode chopper: mean = (D·V − E)/R = 22 A (volt-second balance, closed form).
        assert!((w.i_avg_a() - 22.0).abs() < 1e-9);
    }

    /// Closed forms with back-EMF (Rashid, *Power Electronics: Circuits, Devices and
    /// Applications*, step-down converter with RL load; from memory):
    /// I_max = (V/R)(1 − e^(−DT/τ))/(1 − e^(−T/τ)) − E/R, I_min = (V/R)(e^(DT/τ) − 1)/(e^(T/τ) − 1) − E/R.
    #[test]
    fn textbook_closed_form_with_back_emf() {
        let (v, r, l, e, d, f) = (220.0_f64, 5.0, 7.5e-3, 40.0, 0.6, 1e3);
        let (tau, t) = (l / r, 1.0 / f);
        let i_max = v / r * (1.0 - (-d * t / tau).exp()) / (1.0 - (-t / tau).exp()) - e / r;
        let i_min = v / r * ((d * t / tau).exp() - 1.0) / ((t / tau).exp() - 1.0) - e / r;
        let w = steady_state(
            &load(r, l, e),
            Drive::LowSideFreewheel { v_f_v: 0.0 },
            v,
            d,
            f,
        )
        .expect("valid");
        assert!(close(w.i_max_a(), i_max, i_max, 1e-12));
        assert!(close(w.i_min_a(), i_min, i_min, 1e-12));
    }

    /// Independent model: the circuit rules written directly (terminal voltage from the switch
    /// states, diode clamp), integrated with classical RK4 from i = 0 until periodic steady state.
    struct Sim {
        i_max: f64,
        i_min: f64,
        i_avg: f64,
        /// Samples of the last switching period (length n_per).
        last: Vec<f64>,
    }

    fn simulate(
        ld: &MotorLoad,
        drive: Drive,
        v: f64,
        duty: f64,
        f: f64,
        n_per: usize,
        periods: usize,
    ) -> Sim {
        let t_sw = 1.0 / f;
        let h = t_sw / n_per as f64;
        // Terminal voltage as a function of the position in the switching period and of i.
        let volts = |phase: f64| -> f64 {
            match drive {
                Drive::LowSideFreewheel { v_f_v } => {
                    // OFF: diode voltage; at zero current the clamp below holds i = 0.
                    if phase < duty { v } else { -v_f_v }
                }
                Drive::HalfBridgeSynchronous => {
                    if phase < duty {
                        v
                    } else {
                        0.0
                    }
                }
                Drive::HBridgeBipolar => {
                    if phase < duty {
                        v
                    } else {
                        -v
                    }
                }
                Drive::HBridgeUnipolar => {
                    // Triangle carrier: each leg is high in a window centred on T/2.
                    let a_high = (phase - 0.5).abs() < duty / 2.0;
                    let b_high = (phase - 0.5).abs() < (1.0 - duty) / 2.0;
                    v * (f64::from(u8::from(a_high)) - f64::from(u8::from(b_high)))
                }
            }
        };
        let di = |vt: f64, i: f64| (vt - ld.r_ohm * i - ld.back_emf_v) / ld.l_h;
        let mut i = 0.0;
        let mut last = Vec::with_capacity(n_per);
        for p in 0..periods {
            for k in 0..n_per {
                // Voltage held over the step, read at its midpoint (edges lie on the grid).
                let phase = (k as f64 + 0.5) / n_per as f64;
                let vt = volts(phase);
                let k1 = di(vt, i);
                let k2 = di(vt, i + 0.5 * h * k1);
                let k3 = di(vt, i + 0.5 * h * k2);
                let k4 = di(vt, i + h * k3);
                i += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
                if matches!(drive, Drive::LowSideFreewheel { .. }) && phase >= duty && i < 0.0 {
                    // Diode clamp: the current cannot reverse in the freewheel drive.
                    i = 0.0;
                }
                if p == periods - 1 {
                    last.push(i);
                }
            }
        }
        // `last` holds values at the step ends; rotate so index 0 is t = 0 of the period.
        last.rotate_right(1);
        let i_max = last.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let i_min = last.iter().copied().fold(f64::INFINITY, f64::min);
        let i_avg = last.iter().sum::<f64>() / n_per as f64;
        Sim {
            i_max,
            i_min,
            i_avg,
            last,
        }
    }

    fn close(a: f64, b: f64, scale: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * scale.abs()
    }

    #[test]
    fn exact_matches_rk4_integration() {
        // (load, drive, V, D, f, expect continuous)
        let cases = [
            (
                load(1.0, 1e-3, 10.0),
                Drive::LowSideFreewheel { v_f_v: 0.7 },
                24.0,
                0.6,
                2e3,
                true,
            ),
            (
                load(2.0, 200e-6, 12.0),
                Drive::LowSideFreewheel { v_f_v: 0.7 },
                24.0,
                0.3,
                5e3,
                false,
            ),
            (
                load(1.0, 1e-3, -3.0),
                Drive::LowSideFreewheel { v_f_v: 0.7 },
                24.0,
                0.2,
                2e3,
                true,
            ),
            (
                load(0.5, 100e-6, 11.0),
                Drive::HalfBridgeSynchronous,
                24.0,
                0.5,
                10e3,
                true,
            ),
            (
                load(1.0, 500e-6, 5.0),
                Drive::HBridgeBipolar,
                24.0,
                0.65,
                4e3,
                true,
            ),
            (
                load(1.0, 500e-6, 5.0),
                Drive::HBridgeUnipolar,
                24.0,
                0.7,
                4e3,
                true,
            ),
            (
                load(1.0, 500e-6, -5.0),
                Drive::HBridgeUnipolar,
                24.0,
                0.3,
                4e3,
                true,
            ),
        ];
        for (ld, drive, v, d, f, cont) in cases {
            let w = steady_state(&ld, drive, v, d, f).expect("valid");
            assert_eq!(w.continuous(), cont, "{drive:?}");
            let periods = (30.0 * ld.l_h / ld.r_ohm * f).ceil() as usize + 5;
            let s = simulate(&ld, drive, v, d, f, 4000, periods);
            let pp = w.ripple_pp_a();
            let sim_pp = s.i_max - s.i_min;
            // 0.5 % relative to the value, or to the ripple where the value crosses zero.
            let tol = 0.005;
            assert!(
                close(w.i_max_a(), s.i_max, w.i_max_a().abs().max(pp), tol),
                "{drive:?} max {} vs {}",
                w.i_max_a(),
                s.i_max
            );
            assert!(
                close(w.i_min_a(), s.i_min, w.i_min_a().abs().max(pp), tol),
                "{drive:?} min {} vs {}",
                w.i_min_a(),
                s.i_min
            );
            assert!(
                close(w.i_avg_a(), s.i_avg, w.i_avg_a().abs().max(pp), tol),
                "{drive:?} avg {} vs {}",
                w.i_avg_a(),
                s.i_avg
            );
            assert!(close(pp, sim_pp, pp, tol), "{drive:?} pp {pp} vs {sim_pp}");
            // RMS of the AC part against the simulated samples (rectangle rule, periodic).
            let n = s.last.len() as f64;
            let ac = (s.last.iter().map(|x| (x - s.i_avg).powi(2)).sum::<f64>() / n).sqrt();
            assert!(
                close(w.ripple_rms_a(), ac, w.ripple_rms_a(), tol),
                "{drive:?} rms {} vs {ac}",
                w.ripple_rms_a()
            );
            // Sample-by-sample agreement of the time waveform.
            let t_sw = 1.0 / f;
            for (k, x) in s.last.iter().enumerate().step_by(97) {
                // The exact waveform starts at the active pulse; for the unipolar bridge that
                // pulse begins min(D, 1 − D)·T/2 after the carrier origin used by the simulation.
                let offset = match drive {
                    Drive::HBridgeUnipolar => d.min(1.0 - d) * t_sw / 2.0,
                    _ => 0.0,
                };
                let t = k as f64 * t_sw / n;
                assert!(
                    close(w.value_at(t - offset), *x, pp, tol),
                    "{drive:?} t={t}"
                );
            }
        }
    }

    /// Unipolar H-bridge: the simulated current over one switching period T has no line at f
    /// (its period is T/2), checked on the RK4 waveform, which does not assume it.
    #[test]
    fn unipolar_rk4_has_no_line_at_f() {
        let ld = load(1.0, 500e-6, 5.0);
        let f = 4e3;
        let s = simulate(&ld, Drive::HBridgeUnipolar, 24.0, 0.7, f, 4000, 40);
        let n = s.last.len() as f64;
        let dft = |h: f64| {
            let (mut re, mut im) = (0.0, 0.0);
            for (k, x) in s.last.iter().enumerate() {
                let ph = -2.0 * std::f64::consts::PI * h * k as f64 / n;
                re += x * ph.cos();
                im += x * ph.sin();
            }
            (re / n).hypot(im / n)
        };
        let at_f = dft(1.0);
        let at_2f = dft(2.0);
        assert!(at_2f > 0.05, "{at_2f}");
        assert!(at_f < 1e-3 * at_2f, "{at_f} vs {at_2f}");
    }

    #[test]
    fn discontinuous_waveform_has_zero_interval() {
        let ld = load(2.0, 200e-6, 12.0);
        let w = steady_state(&ld, Drive::LowSideFreewheel { v_f_v: 0.7 }, 24.0, 0.3, 5e3)
            .expect("valid");
        assert!(!w.continuous());
        assert_eq!(w.i_min_a(), 0.0);
        assert!(matches!(w.segments().last(), Some(Segment::Zero { .. })));
        // End of the decay segment is zero (the closed-form t_x solves it).
        assert!(w.segments()[1].i_end_a().abs() < 1e-12);
        let total: f64 = w.segments().iter().map(Segment::duration_s).sum();
        assert!((total - 200e-6).abs() < 1e-15);
    }

    #[test]
    fn small_ripple_matches_exact_when_period_much_shorter_than_tau() {
        // τ = 10 ms, T = 10 µs: T/τ = 1e-3; relative error O((T/τ)²).
        let ld = load(0.1, 1e-3, 3.0);
        let f = 100e3;
        let drives = [
            Drive::LowSideFreewheel { v_f_v: 0.0 },
            Drive::LowSideFreewheel { v_f_v: 0.8 },
            Drive::HalfBridgeSynchronous,
            Drive::HBridgeBipolar,
            Drive::HBridgeUnipolar,
        ];
        for drive in drives {
            for d in [0.2, 0.5, 0.8, 0.9] {
                let w = steady_state(&ld, drive, 24.0, d, f).expect("valid");
                let approx = small_ripple_pp_a(drive, 24.0, ld.l_h, f, d).expect("valid");
                assert!(
                    close(w.ripple_pp_a(), approx, approx, 1e-4),
                    "{drive:?} D={d}: {} vs {approx}",
                    w.ripple_pp_a()
                );
                // Triangular RMS and copper loss R·ΔI²/12 in the same limit.
                let loss = ripple_copper_loss_w(ld.r_ohm, w.ripple_rms_a());
                let tri = ld.r_ohm * approx * approx / 12.0;
                assert!(close(loss, tri, tri, 1e-3), "{drive:?} D={d}");
            }
        }
        // Worst cases V/(4Lf), V/(2Lf), V/(8Lf) (Mohan et al., from memory).
        let wc = |d| small_ripple_worst_pp_a(d, 24.0, 1e-3, 100e3).expect("valid");
        assert!(close(
            wc(Drive::HalfBridgeSynchronous),
            24.0 / 4e2,
            1.0,
            1e-12
        ));
        assert!(close(wc(Drive::HBridgeBipolar), 24.0 / 2e2, 1.0, 1e-12));
        assert!(close(wc(Drive::HBridgeUnipolar), 24.0 / 8e2, 1.0, 1e-12));
    }

    #[test]
    fn ripple_falls_as_frequency_rises() {
        let ld = load(1.5, 400e-6, 6.0);
        let drives = [
            Drive::LowSideFreewheel { v_f_v: 0.5 },
            Drive::HalfBridgeSynchronous,
            Drive::HBridgeBipolar,
            Drive::HBridgeUnipolar,
        ];
        for drive in drives {
            for d in [0.1, 0.35, 0.55, 0.8] {
                let mut prev = f64::INFINITY;
                let mut f = 200.0;
                while f < 200e3 {
                    let pp = steady_state(&ld, drive, 24.0, d, f)
                        .expect("valid")
                        .ripple_pp_a();
                    assert!(pp < prev, "{drive:?} D={d} f={f}");
                    prev = pp;
                    f *= 1.3;
                }
            }
        }
    }

    #[test]
    fn dc_limits_and_switch_currents() {
        let ld = load(2.0, 1e-3, 4.0);
        let w = steady_state(&ld, Drive::HalfBridgeSynchronous, 24.0, 1.0, 1e3).expect("valid");
        assert!(close(w.i_avg_a(), 10.0, 1.0, 1e-12));
        assert!(w.ripple_pp_a().abs() < 1e-12);
        assert_eq!(w.i_at_switch_on_a(), None);
        // Freewheel at D = 0 with E > −V_f: no current at all.
        let w = steady_state(&ld, Drive::LowSideFreewheel { v_f_v: 0.7 }, 24.0, 0.0, 1e3)
            .expect("valid");
        assert_eq!(
            (w.i_max_a(), w.i_avg_a(), w.continuous()),
            (0.0, 0.0, false)
        );
        // Unipolar at D = 0.5: zero volts on the load, constant −E/R, legs still switch.
        let w = steady_state(&ld, Drive::HBridgeUnipolar, 24.0, 0.5, 1e3).expect("valid");
        assert!(close(w.i_avg_a(), -2.0, 1.0, 1e-12));
        assert_eq!(w.i_at_switch_on_a(), Some(-2.0));
        assert!(close(w.period_s(), 0.5e-3, 1e-3, 1e-12));
    }

    #[test]
    fn rejects_bad_input() {
        let ld = load(1.0, 1e-3, 30.0);
        let fw = Drive::LowSideFreewheel { v_f_v: 0.7 };
        assert_eq!(
            steady_state(&ld, fw, 24.0, 0.5, 1e3),
            Err(RippleError::BackEmfNotBelowBus)
        );
        assert!(steady_state(&ld, Drive::HBridgeBipolar, 24.0, 0.5, 1e3).is_ok());
        assert!(steady_state(&ld, fw, 24.0, 1.1, 1e3).is_err());
        assert!(steady_state(&load(0.0, 1e-3, 0.0), fw, 24.0, 0.5, 1e3).is_err());
        assert!(steady_state(&load(1.0, f64::NAN, 0.0), fw, 24.0, 0.5, 1e3).is_err());
        assert!(steady_state(&load(1.0, 1e-3, 0.0), fw, 24.0, 0.5, 0.0).is_err());
    }

    #[test]
    fn worst_case_duty_matches_brute_force() {
        let cases = [
            (load(1.0, 1e-3, 5.0), Drive::HalfBridgeSynchronous, 0.1, 0.9),
            (load(1.0, 1e-3, 5.0), Drive::HBridgeBipolar, 0.6, 0.95),
            (load(1.0, 1e-3, 5.0), Drive::HBridgeUnipolar, 0.3, 1.0),
            (load(1.0, 1e-3, 5.0), Drive::HBridgeUnipolar, 0.0, 0.6),
            // Large E: discontinuous at D = 0.5, so the maximum moves to the boundary.
            (
                load(2.0, 200e-6, 18.0),
                Drive::LowSideFreewheel { v_f_v: 0.7 },
                0.0,
                1.0,
            ),
            (
                load(1.0, 1e-3, 5.0),
                Drive::LowSideFreewheel { v_f_v: 0.7 },
                0.0,
                1.0,
            ),
        ];
        for (ld, drive, lo, hi) in cases {
            let wc = worst_case_duty(&ld, drive, 24.0, 2e3, lo, hi).expect("valid");
            let mut brute: f64 = 0.0;
            for k in 0..=2000 {
                let d = lo + (hi - lo) * k as f64 / 2000.0;
                brute = brute.max(
                    steady_state(&ld, drive, 24.0, d, 2e3)
                        .expect("valid")
                        .ripple_pp_a(),
                );
            }
            assert!(
                wc.ripple_pp_a >= brute * (1.0 - 1e-9),
                "{drive:?} {wc:?} vs {brute}"
            );
            assert!((lo..=hi).contains(&wc.duty));
        }
    }

    #[test]
    fn series_helpers_match_direct_forms() {
        // h and q against their direct closed forms where no cancellation occurs, and the
        // leading Taylor terms where it does.
        for x in [0.49_f64, 0.3, 0.1] {
            let h_direct = x - (1.0 - (-x).exp());
            let q_direct = x - 2.0 * (1.0 - (-x).exp()) + 0.5 * (1.0 - (-2.0 * x).exp());
            assert!(close(h_int(x), h_direct, h_direct, 1e-12));
            assert!(close(q_int(x), q_direct, q_direct, 1e-10));
        }
        let x = 1e-6;
        assert!(close(h_int(x), x * x / 2.0, x * x / 2.0, 1e-5));
        assert!(close(q_int(x), x * x * x / 3.0, x * x * x / 3.0, 1e-5));
    }
}
