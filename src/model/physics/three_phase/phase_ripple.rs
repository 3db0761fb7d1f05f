//! The small-ripple phase-current ripple of a centre-aligned three-phase
//! PWM and its carrier-harmonic lines.

use std::f64::consts::PI;

use super::dead_time::{LegConditions, PhaseCurrent, effective_edges};
use super::inputs::*;
use super::pattern::{phase_voltage_between, phase_voltage_pattern};
use super::sinusoidal::*;
use crate::model::physics::acoustics::Line;

// ---------------------------------------------------------------------------------------------
// Sinusoidal phase-current ripple
// ---------------------------------------------------------------------------------------------

/// Phase-current ripple of sinusoidal / space-vector PWM.
#[derive(Debug, Clone, PartialEq)]
pub struct PhaseRipple {
    /// Largest peak-to-peak ripple over every angle, A (refined between the coarse angles,
    /// `refined_largest_ripple`).
    pub pp_max_a: f64,
    /// Electrical angle θ where it occurs, rad.
    pub pp_max_angle_rad: f64,
    /// RMS ripple over the angles, √(mean of the per-period mean squares), A.
    pub rms_a: f64,
    /// Lines at n·f_sw, amplitude √(mean over angles of the per-period line amplitude²)
    /// (sidebands lumped on their carrier harmonic, see `sinusoidal_ripple`).
    pub lines: Vec<Line>,
}

/// Small-ripple ripple of one period: (peak-to-peak, mean square of the mean-removed ripple).
/// i(t) = (1/L)∫_0^t (v − v̄) dt, piecewise linear; each piece from a to b over h contributes
/// h·(a² + ab + b²)/3 to ∫i² and h·(a + b)/2 to ∫i (closed forms).
pub(super) fn period_ripple(pattern: &[(f64, f64, f64)], l_h: f64, t_s: f64) -> (f64, f64) {
    let v_mean = pattern.iter().map(|p| p.1 * p.2).sum::<f64>() / t_s;
    let (mut i, mut hi, mut lo, mut s1, mut s2) = (0.0_f64, 0.0_f64, 0.0_f64, 0.0, 0.0);
    for &(_, h, v) in pattern {
        let next = i + (v - v_mean) * h / l_h;
        s1 += h * (i + next) / 2.0;
        s2 += h * (i * i + i * next + next * next) / 3.0;
        i = next;
        hi = hi.max(i);
        lo = lo.min(i);
    }
    let mean = s1 / t_s;
    (hi - lo, (s2 / t_s - mean * mean).max(0.0))
}

/// |c_n| of the phase voltage over one period: c_n = (1/T)·Σ_k v_k·(e^(−jnω₀t_k) −
/// e^(−jnω₀t_{k+1}))/(jnω₀), ω₀ = 2π/T (complex Fourier coefficient of a piecewise-constant
/// signal, closed form).
pub(super) fn voltage_coefficient_abs(pattern: &[(f64, f64, f64)], n: u32, t_s: f64) -> f64 {
    let w = 2.0 * PI * f64::from(n) / t_s;
    let (mut re, mut im) = (0.0, 0.0);
    for &(t0, h, v) in pattern {
        let (s0, c0) = (w * t0).sin_cos();
        let (s1, c1) = (w * (t0 + h)).sin_cos();
        // (e^(−jx0) − e^(−jx1)) = (c0 − c1) − j(s0 − s1); divided by j: −(s0 − s1) − j(c0 − c1).
        re += v * -(s0 - s1);
        im += v * -(c0 - c1);
    }
    re.hypot(im) / (w * t_s)
}

/// Phase-current ripple of a centre-aligned three-phase PWM in the small-ripple limit (τ = L/R
/// ≫ T, back-EMF and fundamental constant over one period; dead time ignored).
///
/// For each of `n_angles` electrical angles θ_j = 2πj/n: the three leg duties (`leg_duties`),
/// their centre-aligned pulses, the phase-A-to-neutral voltage per sub-interval
/// (`phase_voltage_pattern`), its period mean removed and di/dt = (v − v̄)/L integrated over one
/// period (exact within the period for this model). Reported: the largest p-p over the angles,
/// the RMS over the angles, and the lines at n·f_sw, n ≤ `max_lines`, n·f_sw ≤ `max_hz`, with
/// current line amplitude 2|c_n(v)|/(n·ω₀·L) per angle and the powers averaged over the angles.
///
/// Approximation (stated): over a fundamental period the true spectrum has sidebands at
/// n·f_sw ± k·f_1 around each carrier harmonic (Holmes, Lipo, *Pulse Width Modulation for Power
/// Converters*, 2003, ch. 3, from memory); their total power in the group equals the angle
/// average of the per-period line power, so each group is lumped on n·f_sw. For audibility this
/// misplaces lines by k·f_1 (a few hundred Hz); near a hearing limit, add margin.
pub fn sinusoidal_ripple(
    stage: &ThreePhaseStage<'_>,
    l_phase_h: f64,
    modulation_index: f64,
    zero_sequence: ZeroSequence,
    n_angles: usize,
    max_hz: f64,
    max_lines: usize,
) -> Result<PhaseRipple> {
    sinusoidal_ripple_at(
        stage,
        l_phase_h,
        &RippleCommand {
            modulation_index,
            zero_sequence,
            current: None,
            electrical_hz: 0.0,
        },
        n_angles,
        max_hz,
        max_lines,
    )
}

/// The leg command a ripple is computed for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RippleCommand {
    pub modulation_index: f64,
    pub zero_sequence: ZeroSequence,
    /// The phase current the legs carry. With it, each leg's pulse is the one the dead time
    /// really leaves ([`effective_edges`]: an edge moves late by `t_d` where the current at
    /// it keeps the old level); without it, the commanded one.
    pub current: Option<PhaseCurrent>,
    /// The electrical frequency, Hz: with `current`, the edges see the current's fundamental
    /// where it has turned to by then within the period ([`effective_edges`]); 0 holds it
    /// at the period's centre value.
    pub electrical_hz: f64,
}

/// [`sinusoidal_ripple`] of a [`RippleCommand`].
pub fn sinusoidal_ripple_at(
    stage: &ThreePhaseStage<'_>,
    l_phase_h: f64,
    command: &RippleCommand,
    n_angles: usize,
    max_hz: f64,
    max_lines: usize,
) -> Result<PhaseRipple> {
    let RippleCommand {
        modulation_index,
        zero_sequence,
        current,
        electrical_hz,
    } = *command;
    stage.validate()?;
    check("l_phase_h", l_phase_h, l_phase_h > 0.0)?;
    SinusoidalPoint {
        modulation_index,
        power_factor: 1.0,
        zero_sequence,
        i_peak_a: 0.0,
    }
    .validate()?;
    check("n_angles", n_angles as f64, n_angles >= 1)?;
    check("max_hz", max_hz, !max_hz.is_nan() && max_hz >= 0.0)?;
    let t_s = 1.0 / stage.f_sw_hz;
    let n_lines = ((max_hz / stage.f_sw_hz) * (1.0 + 1e-12))
        .floor()
        .min(max_lines as f64)
        .min(f64::from(u32::MAX)) as u32;
    let mut power = vec![0.0; n_lines as usize];
    let (mut pp_at, mut ms_sum) = (Vec::with_capacity(n_angles), 0.0);
    let step_rad = 2.0 * PI / n_angles as f64;
    let pattern_at = |theta: f64| {
        let d = leg_duties(modulation_index, zero_sequence, theta);
        match current {
            None => phase_voltage_pattern(d, stage.v_bus_v, t_s),
            Some(c) => dead_time_pattern(stage, l_phase_h, d, c, electrical_hz, theta),
        }
    };
    for j in 0..n_angles {
        let theta = step_rad * j as f64;
        let pattern = pattern_at(theta);
        let (pp, ms) = period_ripple(&pattern, l_phase_h, t_s);
        pp_at.push(pp);
        ms_sum += ms;
        for (k, p) in power.iter_mut().enumerate() {
            let n = k as u32 + 1;
            let w = 2.0 * PI * f64::from(n) / t_s;
            let amp = 2.0 * voltage_coefficient_abs(&pattern, n, t_s) / (w * l_phase_h);
            *p += amp * amp;
        }
    }
    let (pp_max, at) = refined_largest_ripple(&pp_at, step_rad, |theta| {
        period_ripple(&pattern_at(theta), l_phase_h, t_s).0
    });
    let na = n_angles as f64;
    let lines = power
        .iter()
        .enumerate()
        .map(|(k, p)| Line {
            harmonic: k as u32 + 1,
            f_hz: (k as f64 + 1.0) * stage.f_sw_hz,
            amplitude_a: (p / na).sqrt(),
        })
        .collect();
    Ok(PhaseRipple {
        pp_max_a: pp_max,
        pp_max_angle_rad: at,
        rms_a: (ms_sum / na).sqrt(),
        lines,
    })
}

/// The phase voltage of one period at angle `theta` with each leg's pulse of the commanded
/// duties `d` as the dead time leaves it for the phase currents of `c`, turning at
/// `electrical_hz` within the period ([`effective_edges`]).
fn dead_time_pattern(
    stage: &ThreePhaseStage<'_>,
    l_phase_h: f64,
    d: [f64; 3],
    c: PhaseCurrent,
    electrical_hz: f64,
    theta: f64,
) -> Vec<(f64, f64, f64)> {
    let legs = LegConditions {
        v_bus_v: stage.v_bus_v,
        f_sw_hz: stage.f_sw_hz,
        t_dead_s: stage.t_dead_s,
        r_switch_ohm: 0.0,
        v_sd_v: 0.0,
        l_phase_h,
    };
    let turn_per_period_rad = 2.0 * PI * electrical_hz / stage.f_sw_hz;
    let edges = [0, 1, 2].map(|x| {
        let (sin, cos) = (theta - 2.0 * PI * x as f64 / 3.0 - c.lag_rad).sin_cos();
        let drift = c.peak_a * cos * turn_per_period_rad;
        effective_edges(d, x, c.peak_a * sin, drift, &legs)
    });
    phase_voltage_between(
        edges.map(|e| e.0),
        edges.map(|e| e.1),
        stage.v_bus_v,
        1.0 / stage.f_sw_hz,
    )
}

/// Steps each coarse angle's neighbourhood is refined in (own choice, held by
/// `largest_ripple_refined_to_a_dense_scan`).
const RIPPLE_REFINE_STEPS: usize = 16;
/// Coarse local maxima within this fraction of the coarse largest ripple are refined (own
/// choice: the ripple changes by a few per cent between coarse angles at most where the
/// dead time moves an edge; a jump up where an edge changes side leaves a coarse local
/// maximum just after it).
const RIPPLE_REFINE_BAND: f64 = 0.05;

/// The largest ripple over every angle and where it is, from the ripple `pp_at` at the
/// coarse angles `step_rad` apart: each coarse local maximum within [`RIPPLE_REFINE_BAND`]
/// of the coarse largest has the step either side of it scanned in [`RIPPLE_REFINE_STEPS`] steps
/// by `pp_of` (the largest swing can lie between coarse angles: where the dead time moves an
/// edge, or at a kink of the min-max zero sequence; an asynchronous PWM meets every angle).
fn refined_largest_ripple(pp_at: &[f64], step_rad: f64, pp_of: impl Fn(f64) -> f64) -> (f64, f64) {
    let (mut coarse, mut at) = (0.0_f64, 0.0);
    for (j, &pp) in pp_at.iter().enumerate() {
        if pp > coarse {
            (coarse, at) = (pp, step_rad * j as f64);
        }
    }
    let scan = |centre: f64, step: f64, best: &mut (f64, f64)| {
        let sub = step / RIPPLE_REFINE_STEPS as f64;
        for k in 1..2 * RIPPLE_REFINE_STEPS {
            let theta = centre + sub * (k as f64 - RIPPLE_REFINE_STEPS as f64);
            let pp = pp_of(theta);
            if pp > best.0 {
                *best = (pp, theta.rem_euclid(2.0 * PI));
            }
        }
    };
    let mut found = (coarse, at);
    let n = pp_at.len();
    for (j, &pp) in pp_at.iter().enumerate() {
        let local_max = pp >= pp_at[(j + n - 1) % n] && pp >= pp_at[(j + 1) % n];
        if local_max && pp >= coarse * (1.0 - RIPPLE_REFINE_BAND) {
            scan(step_rad * j as f64, step_rad, &mut found);
        }
    }
    // The largest swing may sit at a jump (a dead-time edge changing side with its
    // current's sign): zoom in on it.
    let mut step = step_rad / RIPPLE_REFINE_STEPS as f64;
    for _ in 0..RIPPLE_ZOOMS {
        let centre = found.1;
        scan(centre, step, &mut found);
        step /= RIPPLE_REFINE_STEPS as f64;
    }
    found
}

/// Zooms around the refined largest ripple, each `RIPPLE_REFINE_STEPS` finer (own choice:
/// after the first scan's 0.3° steps at the default 72 angles, three reach below 0.001°).
const RIPPLE_ZOOMS: usize = 3;
