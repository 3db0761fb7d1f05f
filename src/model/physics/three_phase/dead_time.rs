//! The dead time of a sinusoidal three-phase bridge edge by edge: the voltage a leg really
//! puts out over a PWM period, from the phase current at each of its two edges.
//!
//! Owns: the phase-current excursion from its period mean to a leg's own edges (the small
//! ripple of a centre-aligned pattern), the leg's mean-voltage error over a period from its
//! two dead times and its switch drop, and the fundamental of that error over an electrical
//! period as an impedance in series with the motor (what a leg command must make up).
//! It does not own the leg duties (`sinusoidal::leg_duties`), the pattern of phase voltages
//! (`pattern`) nor the motor's phasor equation (`sinusoidal`).
//!
//! Why edge by edge: a first-order make-up takes the dead-time loss as a square wave of height
//! `t_d·f·(V + 2·V_SD)` in phase with the current (Mohan, Undeland, Robbins, *Power
//! Electronics*, 3rd ed., 2003, ch. 8, the dead-time effect; from memory). Near the current's
//! zero crossings the ripple gives the two edges of a period currents of opposite sign (the
//! losses of the two edges then cancel), and a small edge current reaches zero inside the dead
//! time, after which the leg floats (Murai, Watanabe, Iwasaki, *Waveform distortion and
//! correction circuit for PWM inverters with switching lag-times*, IEEE Trans. Industry
//! Applications 23(5), 1987; from memory). Where the back-EMF takes nearly all the voltage the
//! motor current is a small difference of large voltages, and the square-wave figure then puts
//! the current several per cent off: hence this finer account.

use std::f64::consts::PI;

use super::inputs::*;
use super::pattern::phase_voltage_pattern;
use super::sinusoidal::leg_duties;

/// What a leg's dead times and switches do to its output, for one operating case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LegConditions {
    pub v_bus_v: f64,
    pub f_sw_hz: f64,
    /// Inserted dead time (as encoded), s.
    pub t_dead_s: f64,
    /// On-resistance of a conducting switch, Ω.
    pub r_switch_ohm: f64,
    /// Body-diode forward drop, V.
    pub v_sd_v: f64,
    /// Motor phase inductance, H.
    pub l_phase_h: f64,
}

#[cfg(test)]
impl LegConditions {
    /// A 48 V, 20 kHz bridge with 10 mΩ switches and 0.8 V diodes (invented, for the tests).
    pub(crate) fn for_tests(t_dead_s: f64, l_phase_h: f64) -> Self {
        LegConditions {
            v_bus_v: 48.0,
            f_sw_hz: 20e3,
            t_dead_s,
            r_switch_ohm: 0.01,
            v_sd_v: 0.8,
            l_phase_h,
        }
    }
}

/// Phase A's current `peak·sin(θ − lag)` against leg A's reference `sin θ`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PhaseCurrent {
    pub peak_a: f64,
    /// Angle by which the phase current lags the leg reference, rad.
    pub lag_rad: f64,
}

/// Electrical angles over which the leg error's fundamental is integrated (midpoint rule;
/// the error is continuous in θ with kinks where an edge current crosses zero, so the rule
/// converges as 1/n²: our own choice, checked against 4× as many in the tests).
pub const EDGE_ANGLES: usize = 360;

/// Change of phase `x`'s current from the period's centre (the counter top) to leg `x`'s own
/// falling edge, A, for centre-aligned leg duties `d` (the rising edge sees the negative:
/// the pattern is even about the centre, so the small ripple is odd about it).
///
/// ∫ from T/2 to (1 + d_x)·T/2 of (v_xn − v̄_xn)/L dt over the piecewise-constant phase voltage
/// of [`phase_voltage_pattern`] (small-ripple limit: back-EMF and fundamental constant over a
/// period; common practice).
pub fn excursion_to_falling_edge_a(d: [f64; 3], x: usize, c: &LegConditions) -> f64 {
    let t_s = 1.0 / c.f_sw_hz;
    let rotated = [d[x], d[(x + 1) % 3], d[(x + 2) % 3]];
    let pattern = phase_voltage_pattern(rotated, c.v_bus_v, t_s);
    let v_mean = pattern.iter().map(|p| p.1 * p.2).sum::<f64>() / t_s;
    let (from, to) = (0.5 * t_s, 0.5 * (1.0 + d[x]) * t_s);
    pattern
        .iter()
        .map(|&(t0, h, v)| {
            let overlap = (t0 + h).min(to) - t0.max(from);
            overlap.max(0.0) * (v - v_mean)
        })
        .sum::<f64>()
        / c.l_phase_h
}

/// A phase current's change from its period mean to its own leg's two edges, A: the current
/// at the rising edge is `i − rise_a`, at the falling edge `i + fall_a`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EdgeExcursions {
    pub rise_a: f64,
    pub fall_a: f64,
}

/// What a leg's edge excursions are made of, for one leg and angle: the excursion of the
/// reference pattern, and what each edge the dead time makes late adds to the rise and fall
/// excursions (the leg's own rising and falling edges, the next leg's, the one after's).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EdgeShifts {
    /// [`excursion_to_falling_edge_a`], A.
    pub reference_a: f64,
    /// `(rise, fall)` added per late edge, A: own rise, own fall, next leg's rise and fall,
    /// the one after's rise and fall.
    pub late_a: [(f64, f64); 6],
    /// [`EdgeShifts::for_currents`] with both other legs' weights 0, and what a weight of 1
    /// adds for the next leg and the one after (kept: it is asked for at every step).
    own_late: EdgeExcursions,
    per_weight_a: [(f64, f64); 2],
}

impl EdgeShifts {
    /// The excursions with the edges `late` made late.
    pub fn with(&self, late: [bool; 6]) -> EdgeExcursions {
        let mut e = EdgeExcursions {
            rise_a: self.reference_a,
            fall_a: self.reference_a,
        };
        for (&(rise, fall), _) in self.late_a.iter().zip(late).filter(|p| p.1) {
            e.rise_a += rise;
            e.fall_a += fall;
        }
        e
    }

    /// Leg `x`'s excursions with phase currents `i` (out of the legs), as its own edges' dead
    /// times see them. Each other leg turns on late by the share [`late_weight`] of its current
    /// and off late by the rest. The leg's own edges are taken late for their own currents
    /// (the rising edge's current with the rising edge late, the falling edge's with the
    /// falling edge late). A late own edge moves its own edge current by about `V/3·t_d/L`
    /// towards the sign that makes it late, so near zero current, which is where it matters,
    /// both states agree with themselves; the late one is taken (our own choice, which the
    /// register check holds on random designs: `tests/register_verifier.rs`).
    pub fn for_currents(&self, i: [f64; 3], x: usize, c: &LegConditions) -> EdgeExcursions {
        let wn = late_weight(i[(x + 1) % 3], c);
        let wa = late_weight(i[(x + 2) % 3], c);
        let [(rn, f_n), (ra, fa)] = self.per_weight_a;
        EdgeExcursions {
            rise_a: self.own_late.rise_a + wn * rn + wa * ra,
            fall_a: self.own_late.fall_a + wn * f_n + wa * fa,
        }
    }
}

/// The share of a dead time by which a leg whose period-mean current is `i_a` (out of the leg)
/// turns on late; it turns off late by the rest: 1 for a current that holds its low-side
/// diode all the dead time, 0 for one that holds the high-side diode, ½ at zero current (the
/// leg floats between the rails), and linear between, the clamp lasting
/// `3/2·L·|i|/(V/2)` at the mid-rail float level ([`edge_volt_seconds`]; our own
/// approximation: it keeps the excursions continuous in the currents, which the harmonic
/// balance needs).
pub fn late_weight(i_a: f64, c: &LegConditions) -> f64 {
    let full_a = 0.5 * c.v_bus_v * c.t_dead_s / (1.5 * c.l_phase_h);
    if full_a > 0.0 && full_a.is_finite() {
        (0.5 + 0.5 * i_a / full_a).clamp(0.0, 1.0)
    } else if i_a > 0.0 {
        1.0
    } else if i_a < 0.0 {
        0.0
    } else {
        0.5
    }
}

/// [`EdgeShifts`] of leg `x` at centre-aligned duties `d`. A late edge holds the leg's old
/// level `t_d` longer (the body diode in the current's direction; Murai, Watanabe, Iwasaki
/// 1987, from memory): a rectangle of `±V` on that leg, which puts `±2V/3` on its own phase
/// and `∓V/3` on the others (balanced star, isolated neutral), and the phase current's
/// excursions are linear in the pattern, so each late edge adds its own share exactly. With
/// `g(t) = ∫₀ᵗ (u − ū)/L` for a rectangle `u` over `[a, a + τ)`: `g = u/L·(clamp(t − a, 0, τ)
/// − τ·t/T)`, its mean `ḡ = u·τ/L·((T − a − τ/2)/T − 1/2)`, and the shares `ḡ − g(on)` (rise)
/// and `g(off) − ḡ` (fall) at the leg's reference edges (own derivation). Near a phase's zero
/// crossing its edges see currents of opposite sign, and there the late edges move its ripple
/// by about `V/3·t_d/L`, which sets where the dead-time loss turns on.
pub fn edge_shifts(d: [f64; 3], x: usize, c: &LegConditions) -> EdgeShifts {
    let t_s = 1.0 / c.f_sw_hz;
    let tau = (c.t_dead_s * c.f_sw_hz).max(0.0);
    let rotated = [d[x], d[(x + 1) % 3], d[(x + 2) % 3]];
    let (on_x, off_x) = (0.5 * (1.0 - d[x]), 0.5 * (1.0 + d[x]));
    let share = |y: usize, start: f64, level: f64| {
        if rotated[y] <= 0.0 || rotated[y] >= 1.0 {
            return (0.0, 0.0);
        }
        // The leg's level change, times its weight on phase x.
        let u = level * c.v_bus_v * if y == 0 { 2.0 / 3.0 } else { -1.0 / 3.0 };
        let width = tau.min(1.0 - start).max(0.0);
        let g = |t: f64| u * t_s / c.l_phase_h * ((t - start).clamp(0.0, width) - width * t);
        let g_mean = u * t_s / c.l_phase_h * width * ((1.0 - start - 0.5 * width) - 0.5);
        (g_mean - g(on_x), g(off_x) - g_mean)
    };
    let mut late_a = [(0.0, 0.0); 6];
    for y in 0..3 {
        let (on, off) = (0.5 * (1.0 - rotated[y]), 0.5 * (1.0 + rotated[y]));
        late_a[2 * y] = share(y, on, -1.0);
        late_a[2 * y + 1] = share(y, off, 1.0);
    }
    let reference_a = excursion_to_falling_edge_a(d, x, c);
    // Weight w on a leg's rising edge and 1 − w on its falling one.
    let own_late = EdgeExcursions {
        rise_a: reference_a + late_a[0].0 + late_a[3].0 + late_a[5].0,
        fall_a: reference_a + late_a[1].1 + late_a[3].1 + late_a[5].1,
    };
    let per_weight_a = [1, 2].map(|y| {
        let (rise, fall) = (late_a[2 * y], late_a[2 * y + 1]);
        (rise.0 - fall.0, rise.1 - fall.1)
    });
    EdgeShifts {
        reference_a,
        late_a,
        own_late,
        per_weight_a,
    }
}

/// The voltage at which leg `x` floats once its current has reached zero inside a dead time,
/// V: the level that holds the phase current still, `(v_y + v_z)/2 + 3/2·(e_x + R·i_x)` (from
/// `L·di_x/dt = (2v_x − v_y − v_z)/3 − e_x − R·i_x` in a star with an isolated neutral and
/// balanced back-EMFs; own derivation), with `e_x + R·i_x` taken as the period's mean phase
/// voltage `(d_x − Σd/3)·V` and the other legs in the state they hold at leg `x`'s edges (on
/// when their duty is the larger: centre-aligned pulses nest). Clamped to the rails.
pub fn floating_level_v(d: [f64; 3], x: usize, v_bus_v: f64) -> f64 {
    let others: f64 = (0..3)
        .filter(|&y| y != x)
        .map(|y| {
            let on = match d[y].total_cmp(&d[x]) {
                std::cmp::Ordering::Greater => 1.0,
                std::cmp::Ordering::Equal => 0.5,
                std::cmp::Ordering::Less => 0.0,
            };
            on - d[y]
        })
        .sum();
    (v_bus_v * (d[x] + 0.5 * others)).clamp(0.0, v_bus_v)
}

/// Volt-seconds one dead time adds to the leg's output against the ideal (the new level from
/// the reference edge on), V·s. The body diode in the current's direction clamps the leg to
/// `−V_SD` (current out of the leg) or `V + V_SD` (into it) until the current reaches zero,
/// after `t₀ = 3/2·L·|i|/|v_clamp − v_float|` (the phase current's slope with the leg at the
/// clamp, `2/3·(v_clamp − v_float)/L`, taken constant; own derivation), at most the dead time;
/// then the leg floats at `v_float` ([`floating_level_v`]).
pub fn edge_volt_seconds(i_a: f64, rising: bool, v_float_v: f64, c: &LegConditions) -> f64 {
    let ideal = if rising { c.v_bus_v } else { 0.0 };
    let clamp_v = if i_a > 0.0 {
        -c.v_sd_v
    } else {
        c.v_bus_v + c.v_sd_v
    };
    let drive = (clamp_v - v_float_v).abs();
    let t_clamp = if i_a == 0.0 {
        0.0
    } else if drive > 0.0 {
        (1.5 * c.l_phase_h * i_a.abs() / drive).min(c.t_dead_s)
    } else {
        c.t_dead_s
    };
    (clamp_v - ideal) * t_clamp + (v_float_v - ideal) * (c.t_dead_s - t_clamp)
}

/// Mean over one PWM period of leg `x`'s output less the ideal `d_x·V`, V, with the period's
/// mean phase currents `i_a` (out of the legs): the two dead times ([`edge_volt_seconds`] at
/// the currents of the rising and falling edges, [`EdgeShifts::for_currents`]) times f, and the
/// conducting switch's drop `−R·i` outside the two dead times (common practice).
pub fn leg_error_v(d: [f64; 3], x: usize, i_a: [f64; 3], c: &LegConditions) -> f64 {
    let edges = edge_shifts(d, x, c).for_currents(i_a, x, c);
    let v_float = floating_level_v(d, x, c.v_bus_v);
    error_at_edges_v(d[x], edges, v_float, i_a[x], c)
}

/// [`leg_error_v`] from the leg's duty, its edge excursion δ and floating level.
pub fn error_at_edges_v(
    duty: f64,
    edges: EdgeExcursions,
    v_float_v: f64,
    i_a: f64,
    c: &LegConditions,
) -> f64 {
    if duty <= 0.0 || duty >= 1.0 {
        // No edge: one switch conducts all period.
        return -c.r_switch_ohm * i_a;
    }
    let volt_seconds = edge_volt_seconds(i_a - edges.rise_a, true, v_float_v, c)
        + edge_volt_seconds(i_a + edges.fall_a, false, v_float_v, c);
    let conducting = 1.0 - 2.0 * c.t_dead_s * c.f_sw_hz;
    c.f_sw_hz * volt_seconds - c.r_switch_ohm * i_a * conducting
}

/// d[`error_at_edges_v`]/di, Ω: each edge whose current reaches zero inside the dead time
/// adds `−f·3/2·L` (its clamp time `3/2·L·|i|/|v_clamp − v_float|` grows with |i| while the
/// clamp level's distance from the float level is the same drive; derivative of
/// [`edge_volt_seconds`]), an edge clamped all the dead time adds nothing; the conducting
/// switch adds `−R` over the time outside the dead times.
pub fn error_slope_at_edges(
    duty: f64,
    edges: EdgeExcursions,
    v_float_v: f64,
    i_a: f64,
    c: &LegConditions,
) -> f64 {
    if duty <= 0.0 || duty >= 1.0 {
        return -c.r_switch_ohm;
    }
    let edge = |i: f64| {
        let clamp_v = if i > 0.0 {
            -c.v_sd_v
        } else {
            c.v_bus_v + c.v_sd_v
        };
        let drive = (clamp_v - v_float_v).abs();
        if drive > 0.0 && 1.5 * c.l_phase_h * i.abs() < drive * c.t_dead_s {
            -1.5 * c.l_phase_h
        } else {
            0.0
        }
    };
    let conducting = 1.0 - 2.0 * c.t_dead_s * c.f_sw_hz;
    c.f_sw_hz * (edge(i_a - edges.rise_a) + edge(i_a + edges.fall_a)) - c.r_switch_ohm * conducting
}

/// The highest current harmonic the dead time's distortion is followed to (our own bound:
/// the harmonic currents fall as 1/h² above the motor's corner, and the 5th to the 13th carry
/// nearly all of the shift they give the current's zero crossings).
const MAX_HARMONIC: usize = 25;
/// Damped fixed-point steps for the distorted current (our own bound; see the tests).
const HARMONIC_STEPS: usize = 40;
/// The smallest relaxation factor of those steps (our own bound).
const MIN_DAMPING: f64 = 1.0 / 64.0;
/// The distorted current is settled when a step moves no sample by more than this fraction
/// of the peak (our own bound, a hundred times finer than the 1 % the plan is held to).
const HARMONIC_TOLERANCE: f64 = 1e-4;

/// Per-angle quantities of leg A that depend only on the duties (the command).
struct LegPattern {
    duties: Vec<[f64; 3]>,
    /// Leg A's edge excursions and what late edges add to them.
    edges: Vec<EdgeShifts>,
    float_v: Vec<f64>,
    /// `(sin, cos)` of `π·j/n` for j in 0..2n: harmonic h at midpoint k is entry
    /// `h·(2k + 1) mod 2n` (a table instead of a call per term).
    trig: Vec<(f64, f64)>,
}

impl LegPattern {
    fn new(
        modulation_index: f64,
        zero_sequence: ZeroSequence,
        c: &LegConditions,
        angles: usize,
    ) -> Self {
        let n = angles as f64;
        let duties: Vec<[f64; 3]> = (0..angles)
            .map(|k| {
                leg_duties(
                    modulation_index,
                    zero_sequence,
                    2.0 * PI * (k as f64 + 0.5) / n,
                )
            })
            .collect();
        let edges = duties.iter().map(|&d| edge_shifts(d, 0, c)).collect();
        let float_v = duties
            .iter()
            .map(|&d| floating_level_v(d, 0, c.v_bus_v))
            .collect();
        let trig = (0..2 * angles)
            .map(|j| (PI * j as f64 / n).sin_cos())
            .collect();
        LegPattern {
            duties,
            edges,
            float_v,
            trig,
        }
    }

    /// `(sin, cos)` of `h·θ_k`, θ_k the k-th midpoint.
    fn sin_cos(&self, h: usize, k: usize) -> (f64, f64) {
        self.trig[(h * (2 * k + 1)) % self.trig.len()]
    }

    /// Harmonic `h` of values at the midpoints as `(sin, cos)` coefficients (discrete
    /// Fourier transform; definition).
    fn harmonic(&self, values: &[f64], h: usize) -> (f64, f64) {
        let n = values.len() as f64;
        let (mut a, mut b) = (0.0, 0.0);
        for (k, &v) in values.iter().enumerate() {
            let (s, co) = self.sin_cos(h, k);
            a += v * s;
            b += v * co;
        }
        (2.0 * a / n, 2.0 * b / n)
    }

    /// [`leg_error_v`] at angle index `k` with phase A's current over the angles `current_a`
    /// (phases B and C are phase A a third of a period late and early: balanced legs).
    fn error_v(&self, k: usize, current_a: &[f64], c: &LegConditions) -> f64 {
        let n = current_a.len();
        let i = [
            current_a[k],
            current_a[(k + 2 * n / 3) % n],
            current_a[(k + n / 3) % n],
        ];
        let edges = self.edges[k].for_currents(i, 0, c);
        error_at_edges_v(self.duties[k][0], edges, self.float_v[k], i[0], c)
    }

    /// Angles per electrical period.
    fn angles(&self) -> usize {
        self.duties.len()
    }
}

/// The phase current over an electrical period that the dead time's own distortion leaves:
/// the fundamental `I·sin(θ − lag)` (the command makes it up) plus, for each non-triplen odd
/// harmonic h ≤ [`MAX_HARMONIC`], the leg error's harmonic driven through the motor's
/// `R + j·h·X` (triplens cancel in a star with an isolated neutral; Mohan, Undeland, Robbins
/// 2003, ch. 8, from memory). The leg error depends on the current's sign at the edges, so the
/// two are solved together by damped fixed-point iteration (harmonic balance; own method).
/// `false` with the undistorted current when the iteration does not settle.
fn distorted_current_a(
    pattern: &LegPattern,
    i_peak_a: f64,
    current_lag_rad: f64,
    motor_ohm: (f64, f64),
    c: &LegConditions,
    warm_harmonics_a: &[f64],
) -> (Vec<f64>, bool) {
    let n = pattern.angles() as f64;
    let fundamental: Vec<f64> = (0..pattern.angles())
        .map(|k| i_peak_a * (2.0 * PI * (k as f64 + 0.5) / n - current_lag_rad).sin())
        .collect();
    let mut current = fundamental.clone();
    if warm_harmonics_a.len() == current.len() {
        for (cur, h) in current.iter_mut().zip(warm_harmonics_a) {
            *cur += h;
        }
    }
    let (r, x) = motor_ohm;
    if !(r > 0.0 || x > 0.0) {
        return (fundamental, true);
    }
    let (mut damping, mut last_residual) = (0.5_f64, f64::INFINITY);
    for _ in 0..HARMONIC_STEPS {
        let error: Vec<f64> = (0..pattern.angles())
            .map(|k| pattern.error_v(k, &current, c))
            .collect();
        let mut next = fundamental.clone();
        for h in (5..=MAX_HARMONIC).step_by(2).filter(|h| h % 3 != 0) {
            let (ea, eb) = pattern.harmonic(&error, h);
            // I_h = E_h / (R + j·h·X), phasors with sin ↔ 1 and cos ↔ j.
            let (zr, zx) = (r, h as f64 * x);
            let den = zr * zr + zx * zx;
            let (ia, ib) = ((ea * zr + eb * zx) / den, (eb * zr - ea * zx) / den);
            for (k, v) in next.iter_mut().enumerate() {
                let (s, co) = pattern.sin_cos(h, k);
                *v += ia * s + ib * co;
            }
        }
        // The residual of the map; the step shrinks whenever it grows (the map's gain is
        // high where a low motor impedance meets a large dead time).
        let residual = current
            .iter()
            .zip(&next)
            .map(|(c, x)| (x - c).abs())
            .fold(0.0, f64::max);
        if residual <= HARMONIC_TOLERANCE * i_peak_a {
            return (current, true);
        }
        if residual > last_residual {
            if damping <= MIN_DAMPING {
                // Growing even at the smallest step: it will not settle (the averaged
                // bridge takes over; more steps would only cost time).
                return (fundamental, false);
            }
            damping = (0.5 * damping).max(MIN_DAMPING);
        }
        last_residual = residual;
        for (cur, nx) in current.iter_mut().zip(&next) {
            *cur += damping * (nx - *cur);
        }
    }
    // Not settled: the undistorted current (the first-order account).
    (fundamental, false)
}

/// What a bridge's legs take off a phase, as an impedance in series with it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ErrorImpedance {
    /// In phase with the current, Ω.
    pub r_ohm: f64,
    /// Leading the current by 90°, Ω.
    pub x_ohm: f64,
    /// Whether the account of the current's distortion by the dead time settled; when the
    /// harmonic balance does not, it used the undistorted current (see
    /// [`distorted_current_a`]) and the command follows the averaged bridge instead
    /// (`averaged`, `command`).
    pub harmonics_settled: bool,
}

/// The fundamental of leg A's error over an electrical period as an impedance seen by the
/// phase current, `(r_ohm, x_ohm)`: the error's fundamental is `−(r + j·x)·I` in phasor terms
/// (`r` in phase with the current, `x` leading it by 90°), so a command that adds `(r + j·x)·I`
/// makes it up. Leg A at angle θ: duties [`leg_duties`] at `m`, the current of
/// [`distorted_current_a`] (fundamental `I·sin(θ − lag)`; `motor_ohm` is the motor's
/// `(R, ω_e·L)`; (0, 0) leaves the current undistorted). Discrete Fourier transform over [`EDGE_ANGLES`] midpoints (definition).
/// (0, 0) without current.
pub fn error_impedance_ohm(
    modulation_index: f64,
    zero_sequence: ZeroSequence,
    i_peak_a: f64,
    current_lag_rad: f64,
    motor_ohm: (f64, f64),
    c: &LegConditions,
) -> ErrorImpedance {
    let current = PhaseCurrent {
        peak_a: i_peak_a,
        lag_rad: current_lag_rad,
    };
    let mut cold = Vec::new();
    error_impedance_warm_ohm(
        modulation_index,
        zero_sequence,
        current,
        motor_ohm,
        c,
        &mut cold,
    )
}

/// [`error_impedance_ohm`] with the harmonic balance started from `warm_harmonics_a` (the
/// current's harmonic part at each of the [`EDGE_ANGLES`] midpoints, from a nearby command;
/// empty: from the undistorted current), which it leaves holding this solve's (empty when
/// it did not settle). The answer is the same fixed point within the balance's tolerance;
/// a command solve's next step starts near the last one's currents (own economy).
pub fn error_impedance_warm_ohm(
    modulation_index: f64,
    zero_sequence: ZeroSequence,
    current: PhaseCurrent,
    motor_ohm: (f64, f64),
    c: &LegConditions,
    warm_harmonics_a: &mut Vec<f64>,
) -> ErrorImpedance {
    error_impedance_over(
        EDGE_ANGLES,
        modulation_index,
        zero_sequence,
        current,
        motor_ohm,
        c,
        warm_harmonics_a,
    )
}

/// [`error_impedance_ohm`] over `angles` midpoints.
fn error_impedance_over(
    angles: usize,
    modulation_index: f64,
    zero_sequence: ZeroSequence,
    current: PhaseCurrent,
    motor_ohm: (f64, f64),
    c: &LegConditions,
    warm_harmonics_a: &mut Vec<f64>,
) -> ErrorImpedance {
    let PhaseCurrent { peak_a, lag_rad } = current;
    if peak_a <= 0.0 {
        return ErrorImpedance {
            r_ohm: 0.0,
            x_ohm: 0.0,
            harmonics_settled: true,
        };
    }
    let pattern = LegPattern::new(modulation_index, zero_sequence, c, angles);
    let (current, harmonics_settled) =
        distorted_current_a(&pattern, peak_a, lag_rad, motor_ohm, c, warm_harmonics_a);
    warm_harmonics_a.clear();
    if harmonics_settled {
        let n = angles as f64;
        warm_harmonics_a.extend(
            current
                .iter()
                .enumerate()
                .map(|(k, i)| i - peak_a * (2.0 * PI * (k as f64 + 0.5) / n - lag_rad).sin()),
        );
    }
    let error: Vec<f64> = (0..angles)
        .map(|k| pattern.error_v(k, &current, c))
        .collect();
    let (a, b) = pattern.harmonic(&error, 1);
    // Rotate into the current's frame: sin(θ − lag) ↔ 1.
    let (sl, cl) = lag_rad.sin_cos();
    let in_phase = a * cl - b * sl;
    let quadrature = a * sl + b * cl;
    ErrorImpedance {
        r_ohm: -in_phase / peak_a,
        x_ohm: -quadrature / peak_a,
        harmonics_settled,
    }
}

/// Leg A's rising and falling edges as the dead time leaves them, as fractions of the period
/// from its start: the reference edges `(1 ∓ d)/2` with the turn-on of the incoming switch
/// delayed by `t_d·f`, so the rising edge moves late when the current at it flows out of the
/// leg and the falling edge moves late when it flows in (the diode in the current's direction
/// holds the old level; Murai et al. 1987, from memory). Edge currents as in [`leg_error_v`],
/// plus the low-frequency current's own move from the period's centre to the edge:
/// `i_drift_a` is its change over one PWM period (the fundamental turns 2π·f_e/f in a
/// period, so the edges d·T/2 either side of the centre see ∓`i_drift_a`·d/2; first order in
/// f_e/f, our own account).
pub fn effective_edges(
    d: [f64; 3],
    x: usize,
    i_mean_a: f64,
    i_drift_a: f64,
    c: &LegConditions,
) -> (f64, f64) {
    let (rise, fall) = (0.5 * (1.0 - d[x]), 0.5 * (1.0 + d[x]));
    if d[x] <= 0.0 || d[x] >= 1.0 {
        return (rise, fall);
    }
    let delta = excursion_to_falling_edge_a(d, x, c);
    let drift = 0.5 * d[x] * i_drift_a;
    let shift = c.t_dead_s * c.f_sw_hz;
    let rise_late = shift * late_weight(i_mean_a - drift - delta, c);
    let fall_late = shift * (1.0 - late_weight(i_mean_a + drift + delta, c));
    (rise + rise_late, fall + fall_late)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn legs(t_dead_s: f64, l_phase_h: f64) -> LegConditions {
        LegConditions::for_tests(t_dead_s, l_phase_h)
    }

    /// A large current clamps for the whole dead time: the rising edge loses `(V + V_SD)·t_d`
    /// when the current flows out of the leg, the falling edge `V_SD·t_d` (Mohan, Undeland,
    /// Robbins 2003, ch. 8, the dead-time effect; from memory); a zero current floats.
    #[test]
    fn edge_volt_seconds_at_the_limits() {
        let c = legs(500e-9, 1e-3);
        let v = edge_volt_seconds(50.0, true, 24.0, &c);
        assert!((v + (48.0 + 0.8) * 500e-9).abs() < 1e-15, "{v}");
        let v = edge_volt_seconds(50.0, false, 24.0, &c);
        assert!((v + 0.8 * 500e-9).abs() < 1e-15, "{v}");
        let v = edge_volt_seconds(-50.0, false, 24.0, &c);
        assert!((v - (48.0 + 0.8) * 500e-9).abs() < 1e-15, "{v}");
        let v = edge_volt_seconds(0.0, true, 20.0, &c);
        assert!((v - (20.0 - 48.0) * 500e-9).abs() < 1e-15, "{v}");
    }

    /// The slope against a central difference of the error away from its kinks.
    #[test]
    fn error_slope_matches_a_difference() {
        let c = legs(500e-9, 2e-4);
        for (duty, delta, v_float, i) in [
            (0.4, 0.3, 20.0, 0.05),
            (0.6, 0.2, 30.0, -0.02),
            (0.5, 0.1, 24.0, 3.0),
            (0.7, 0.5, 10.0, 0.45),
        ] {
            let h = 1e-6;
            let edges = EdgeExcursions {
                rise_a: delta,
                fall_a: 0.8 * delta,
            };
            let diff = (error_at_edges_v(duty, edges, v_float, i + h, &c)
                - error_at_edges_v(duty, edges, v_float, i - h, &c))
                / (2.0 * h);
            let slope = error_slope_at_edges(duty, edges, v_float, i, &c);
            assert!(
                (slope - diff).abs() < 1e-6 * (1.0 + diff.abs()),
                "{slope} vs {diff}"
            );
        }
    }

    /// The excursion to a leg's falling edge against a brute-force integration of the three
    /// legs' states on a grid of 200 000 instants (an independent account of the pattern).
    #[test]
    fn excursion_matches_a_brute_force_integration() {
        let c = legs(0.0, 1e-3);
        let t_s = 1.0 / c.f_sw_hz;
        for d in [[0.7, 0.2, 0.45], [0.3, 0.9, 0.6], [0.55, 0.5, 0.1]] {
            for x in 0..3 {
                let steps = 200_000;
                let dt = t_s / steps as f64;
                let v_at = |t: f64| {
                    let s = d.map(|dx| {
                        if t >= 0.5 * (1.0 - dx) * t_s && t < 0.5 * (1.0 + dx) * t_s {
                            1.0
                        } else {
                            0.0
                        }
                    });
                    c.v_bus_v * (s[x] - (s[0] + s[1] + s[2]) / 3.0)
                };
                let times: Vec<f64> = (0..steps).map(|k| (k as f64 + 0.5) * dt).collect();
                let mean = times.iter().map(|&t| v_at(t)).sum::<f64>() / steps as f64;
                let (from, to) = (0.5 * t_s, 0.5 * (1.0 + d[x]) * t_s);
                let brute: f64 = times
                    .iter()
                    .filter(|&&t| t >= from && t < to)
                    .map(|&t| (v_at(t) - mean) * dt)
                    .sum::<f64>()
                    / c.l_phase_h;
                let model = excursion_to_falling_edge_a(d, x, &c);
                assert!(
                    (model - brute).abs() < 1e-4 * (brute.abs() + 1e-3),
                    "{d:?} leg {x}: {model} vs {brute}"
                );
            }
        }
    }

    /// The excursions with late edges against a brute-force integration of the three legs'
    /// states, each late edge moved by the dead time, on a grid of 200 000 instants: the
    /// current's change from its period mean to the leg's reference edges (an independent
    /// account of the shifted pattern).
    #[test]
    fn late_edges_match_a_brute_force_integration() {
        let c = legs(1.5e-6, 1e-3);
        let t_s = 1.0 / c.f_sw_hz;
        let tau = c.t_dead_s / t_s;
        for (d, late) in [
            ([0.7, 0.2, 0.45], [false, false, true, false, false, true]),
            ([0.3, 0.9, 0.6], [true, false, false, true, true, false]),
            ([0.55, 0.5, 0.1], [false, true, true, false, false, true]),
            ([0.5, 0.3, 0.7], [true, true, true, true, true, true]),
        ] {
            for x in 0..3 {
                let rotated = [d[x], d[(x + 1) % 3], d[(x + 2) % 3]];
                let state = |y: usize, t: f64| {
                    let (mut on, mut off) = (0.5 * (1.0 - rotated[y]), 0.5 * (1.0 + rotated[y]));
                    if late[2 * y] {
                        on += tau;
                    }
                    if late[2 * y + 1] {
                        off += tau;
                    }
                    if t >= on && t < off { 1.0 } else { 0.0 }
                };
                let steps = 200_000;
                let v: Vec<f64> = (0..steps)
                    .map(|k| {
                        let t = (k as f64 + 0.5) / steps as f64;
                        let s = [0, 1, 2].map(|y| state(y, t));
                        c.v_bus_v * (s[0] - (s[0] + s[1] + s[2]) / 3.0)
                    })
                    .collect();
                let mean_v = v.iter().sum::<f64>() / steps as f64;
                let dt = t_s / steps as f64;
                let mut i = vec![0.0; steps + 1];
                for k in 0..steps {
                    i[k + 1] = i[k] + (v[k] - mean_v) * dt / c.l_phase_h;
                }
                let mean_i = i[..steps].iter().sum::<f64>() / steps as f64;
                let at = |f: f64| i[(f * steps as f64).round() as usize];
                let rise = mean_i - at(0.5 * (1.0 - rotated[0]));
                let fall = at(0.5 * (1.0 + rotated[0])) - mean_i;
                let model = edge_shifts(d, x, &c).with(late);
                let tol = 2e-4 * (rise.abs() + fall.abs() + 1e-3);
                assert!(
                    (model.rise_a - rise).abs() < tol && (model.fall_a - fall).abs() < tol,
                    "{d:?} leg {x} late {late:?}: {model:?} vs rise {rise} fall {fall}"
                );
            }
        }
    }

    /// With a current far larger than the ripple, the error's fundamental is the square wave's
    /// `(4/π)·t_d·f·(V + 2·V_SD)` in phase with the current plus the switch drop (Mohan et
    /// al. 2003, ch. 8; Fourier series of a square wave), to the dead band the ripple leaves.
    #[test]
    fn large_current_gives_the_square_wave() {
        let c = legs(400e-9, 5e-3);
        let i = 40.0;
        let z = error_impedance_ohm(0.8, ZeroSequence::MinMax, i, 0.3, (0.0, 0.0), &c);
        let (r, x) = (z.r_ohm, z.x_ohm);
        let dead = c.t_dead_s * c.f_sw_hz;
        let square = c.r_switch_ohm * (1.0 - 2.0 * dead)
            + 4.0 / PI * dead * (c.v_bus_v + 2.0 * c.v_sd_v) / i;
        assert!(((r - square) / square).abs() < 2e-3, "{r} vs {square}");
        assert!(x.abs() < 3e-3 * square, "{x}");
    }

    /// 360 angles against four times as many, with the distorted current followed: within
    /// 0.3 % of the error impedance (our own bound; the largest gap, 0.23 %, is the quadrature
    /// part of the 10 A case, whose dead band at the zero crossing is under 2° wide).
    #[test]
    fn angles_are_enough() {
        let c = legs(600e-9, 2e-4);
        for (m, i, lag, motor) in [
            (0.3, 2.0, 0.1, (1.0, 0.05)),
            (0.9, 0.5, -0.4, (1.0, 0.3)),
            (0.5, 10.0, 0.6, (0.05, 0.2)),
        ] {
            let current = PhaseCurrent {
                peak_a: i,
                lag_rad: lag,
            };
            let coarse = error_impedance_over(
                360,
                m,
                ZeroSequence::None,
                current,
                motor,
                &c,
                &mut Vec::new(),
            );
            let fine = error_impedance_over(
                1440,
                m,
                ZeroSequence::None,
                current,
                motor,
                &c,
                &mut Vec::new(),
            );
            assert!(
                coarse.harmonics_settled && fine.harmonics_settled,
                "{m} {i} {motor:?} {coarse:?} {fine:?}"
            );
            let size = fine.r_ohm.hypot(fine.x_ohm);
            let apart = (coarse.r_ohm - fine.r_ohm).hypot(coarse.x_ohm - fine.x_ohm);
            assert!(apart < 3e-3 * size, "{m} {i}: {coarse:?} vs {fine:?}");
        }
    }
}
