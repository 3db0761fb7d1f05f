//! The period-averaged phase currents of a sinusoidal three-phase bridge followed in time,
//! with each leg's dead-time error edge by edge: the account that holds where the harmonic
//! balance of `dead_time` does not settle (a low motor impedance against a large dead time,
//! where the current clamps near zero around its crossings).
//!
//! Owns: the periodic steady state of `L·di_x/dt = v_x − e_x − R·i_x + w_x` (ideal phase
//! voltage, back-EMF, leg error less its common mode) stepped at fixed electrical angles, its
//! fundamental, and the 2×2 Newton steps it and `command` take. Does not own the leg error (`dead_time`) nor the
//! command that makes it up (`command`).

use std::f64::consts::PI;

use super::dead_time::{
    EdgeShifts, LegConditions, edge_shifts, error_at_edges_v, error_slope_at_edges,
    floating_level_v,
};
use super::inputs::ZeroSequence;
use super::sinusoidal::leg_duties;

/// Steps per electrical period (our own choice, a multiple of 3 so that legs B and C reuse
/// leg A's table; checked against four times as many in the tests).
pub const AVERAGED_STEPS: usize = 720;
/// Newton steps of the periodic solve at most (our own bound).
const SHOOTING_STEPS: usize = 30;
/// Settled when one electrical period moves the starting currents by less than this fraction
/// of the current scale (our own bound, a thousand times finer than the 1 % the plan is held
/// to; the map has kinks where an edge current crosses zero, so far finer would stall).
const SHOOTING_TOLERANCE: f64 = 1e-5;

/// The motor and command an averaged bridge is followed for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AveragedDrive {
    /// Written modulation index (the duties the legs get).
    pub modulation_index: f64,
    pub zero_sequence: ZeroSequence,
    /// What the legs' fundamental delivers per unit of the written one (`command::hold_gain`).
    pub hold_gain: f64,
    /// Phase resistance, Ω.
    pub r_phase_ohm: f64,
    pub omega_e_rad_s: f64,
    /// Back-EMF peak per phase, V.
    pub emf_peak_v: f64,
    /// Angle by which leg A's reference `sin θ` leads phase A's back-EMF, rad.
    pub voltage_lead_rad: f64,
}

/// Leg A over the steps: what depends on the command only.
struct LegTable {
    duty: Vec<f64>,
    /// Leg A's edge excursions and what late edges add to them.
    edges: Vec<EdgeShifts>,
    float_v: Vec<f64>,
    /// Ideal phase-A voltage `hold·V·(d_a − Σd/3)` (the held fundamental and the duties'
    /// clamping at 0 and 1) less the back-EMF, V.
    drive_v: Vec<f64>,
}

impl LegTable {
    fn new(drive: &AveragedDrive, c: &LegConditions, n: usize) -> Self {
        let d: Vec<[f64; 3]> = (0..n)
            .map(|k| {
                let theta = 2.0 * PI * (k as f64 + 0.5) / n as f64;
                leg_duties(drive.modulation_index, drive.zero_sequence, theta)
            })
            .collect();
        LegTable {
            duty: d.iter().map(|d| d[0]).collect(),
            edges: d.iter().map(|&d| edge_shifts(d, 0, c)).collect(),
            float_v: d
                .iter()
                .map(|&d| floating_level_v(d, 0, c.v_bus_v))
                .collect(),
            drive_v: d
                .iter()
                .enumerate()
                .map(|(k, d)| {
                    let theta = 2.0 * PI * (k as f64 + 0.5) / n as f64;
                    let emf = drive.emf_peak_v * (theta - drive.voltage_lead_rad).sin();
                    drive.hold_gain * c.v_bus_v * (d[0] - (d[0] + d[1] + d[2]) / 3.0) - emf
                })
                .collect(),
        }
    }

    /// Leg `x`'s row at step `k`: leg B at θ is leg A at θ − 2π/3 (balanced legs).
    fn row(&self, k: usize, x: usize) -> usize {
        let n = self.duty.len();
        (k + n - x * n / 3) % n
    }

    /// Leg `x`'s error at step `k` with the phase currents `i_a`, and its slope in its own
    /// current (the edges' excursions found once for both).
    fn error_and_slope(&self, k: usize, x: usize, i_a: [f64; 3], c: &LegConditions) -> (f64, f64) {
        let j = self.row(k, x);
        let edges = self.edges[j].for_currents(i_a, x, c);
        let (duty, v_float, i) = (self.duty[j], self.float_v[j], i_a[x]);
        (
            error_at_edges_v(duty, edges, v_float, i, c),
            error_slope_at_edges(duty, edges, v_float, i, c),
        )
    }
}

/// One electrical period of the averaged bridge.
struct Run {
    /// Currents at the period's end.
    end: [f64; 3],
    /// Phase A's mean current per step (when kept).
    current_a: Vec<f64>,
}

struct Stepper<'a> {
    table: LegTable,
    c: &'a LegConditions,
    /// `e^(−R·h/L)` and `(1 − e^(−R·h/L))/R` (h/L without resistance).
    decay: f64,
    gain: f64,
    /// Current scale for differences, A.
    scale_a: f64,
}

impl Stepper<'_> {
    /// One step from `i` (sum zero): the exact response of `L·di/dt = u − R·i` to a `u`
    /// held over the step (common practice), with the leg errors at the step's mean current
    /// `(i + j)/2` linearised about its prediction `i + Δ/2` (Δ the last step's change) and
    /// solved with the end currents `j` (implicit, so a steep error around zero current
    /// clamps instead of ringing; own method).
    fn step(&self, k: usize, i: [f64; 3], last: [f64; 3]) -> [f64; 3] {
        let base = [0, 1, 2].map(|x| self.table.drive_v[self.table.row(k, x)]);
        let p = [0, 1, 2].map(|x| i[x] + 0.5 * last[x]);
        let both = [0, 1, 2].map(|x| self.table.error_and_slope(k, x, p, self.c));
        let (e0, slope) = (both.map(|b| b.0), both.map(|b| b.1));
        // error_x ≈ a_x + b_x·j_x with the mean (i + j)/2.
        let a = [0, 1, 2].map(|x| e0[x] - slope[x] * p[x] + 0.5 * slope[x] * i[x]);
        let b = slope.map(|s| 0.5 * s);
        let a_common = (a[0] + a[1] + a[2]) / 3.0;
        let rhs = [0, 1, 2].map(|x| self.decay * i[x] + self.gain * (base[x] + a[x] - a_common));
        let mut m = [[0.0; 3]; 3];
        for (x, row) in m.iter_mut().enumerate() {
            for (y, v) in row.iter_mut().enumerate() {
                let own = if x == y { 1.0 - self.gain * b[x] } else { 0.0 };
                *v = own + self.gain * b[y] / 3.0;
            }
        }
        solve3(m, rhs)
    }

    fn run(&self, start: [f64; 2], keep: bool) -> Run {
        let n = self.table.duty.len();
        let mut i = [start[0], start[1], -start[0] - start[1]];
        let mut current_a = Vec::new();
        let mut last = [0.0; 3];
        for k in 0..n {
            let j = self.step(k, i, last);
            last = [0, 1, 2].map(|x| j[x] - i[x]);
            if keep {
                current_a.push(0.5 * (i[0] + j[0]));
            }
            i = j;
        }
        Run { end: i, current_a }
    }

    /// `run(x) − x`, the periodicity residual.
    fn residual(&self, x: [f64; 2]) -> [f64; 2] {
        let e = self.run(x, false).end;
        [e[0] - x[0], e[1] - x[1]]
    }
}

/// Cramer's rule (the matrix is near the identity).
fn solve3(m: [[f64; 3]; 3], r: [f64; 3]) -> [f64; 3] {
    let det = |a: [[f64; 3]; 3]| {
        a[0][0] * (a[1][1] * a[2][2] - a[1][2] * a[2][1])
            - a[0][1] * (a[1][0] * a[2][2] - a[1][2] * a[2][0])
            + a[0][2] * (a[1][0] * a[2][1] - a[1][1] * a[2][0])
    };
    let d = det(m);
    [0, 1, 2].map(|col| {
        let mut a = m;
        for (row, v) in a.iter_mut().zip(r) {
            row[col] = v;
        }
        det(a) / d
    })
}

/// Columns `∂f/∂x_d` of `f` at `x` by forward differences of `h[d]`, given `f(x)`.
pub fn difference_jacobian(
    mut f: impl FnMut([f64; 2]) -> [f64; 2],
    x: [f64; 2],
    fx: [f64; 2],
    h: [f64; 2],
) -> Jacobian2 {
    [0, 1].map(|d| {
        let mut y = x;
        y[d] += h[d];
        let g = f(y);
        [(g[0] - fx[0]) / h[d], (g[1] - fx[1]) / h[d]]
    })
}

/// The Newton step `−J⁻¹·f` for a 2×2 Jacobian of columns `j`; `None` when it is singular.
pub fn newton_step(j: Jacobian2, f: [f64; 2]) -> Option<[f64; 2]> {
    let det = j[0][0] * j[1][1] - j[1][0] * j[0][1];
    (det != 0.0 && det.is_finite()).then(|| {
        [
            -(f[0] * j[1][1] - j[1][0] * f[1]) / det,
            -(j[0][0] * f[1] - f[0] * j[0][1]) / det,
        ]
    })
}

fn norm(x: [f64; 2]) -> f64 {
    x[0].abs().max(x[1].abs())
}

/// A periodicity residual's Jacobian (columns), to start a nearby solve with.
pub type Jacobian2 = [[f64; 2]; 2];

/// Newton steps on the periodicity residual (difference Jacobian, or `jacobian` from a nearby
/// solve while its steps at least halve the residual; step halved while the residual grows);
/// plain periods first when no Jacobian is given. The starting currents, whether they
/// settled, and the Jacobian last used.
fn periodic_start(
    s: &Stepper,
    guess: [f64; 2],
    jacobian: Option<Jacobian2>,
) -> ([f64; 2], bool, Option<Jacobian2>) {
    let settled = |f: [f64; 2]| norm(f) <= SHOOTING_TOLERANCE * s.scale_a;
    let mut x = guess;
    let mut f = s.residual(x);
    let mut jac = jacobian;
    if jac.is_none() {
        // Plain periods while they contract fast (a motor whose L/R is short against the
        // electrical period forgets its start within one).
        for _ in 0..4 {
            if settled(f) {
                return (x, true, jac);
            }
            let y = [x[0] + f[0], x[1] + f[1]];
            let g = s.residual(y);
            if norm(g) > 0.1 * norm(f) {
                break;
            }
            (x, f) = (y, g);
        }
    }
    for _ in 0..SHOOTING_STEPS {
        if settled(f) {
            return (x, true, jac);
        }
        let fresh = jac.is_none();
        let eps = 1e-6 * s.scale_a;
        let j = jac.unwrap_or_else(|| difference_jacobian(|y| s.residual(y), x, f, [eps, eps]));
        jac = Some(j);
        let Some(dx) = newton_step(j, f) else {
            return (x, false, None);
        };
        let mut t = 1.0;
        loop {
            let y = [x[0] + t * dx[0], x[1] + t * dx[1]];
            let g = s.residual(y);
            if norm(g) < norm(f) {
                if !fresh && norm(g) > 0.5 * norm(f) {
                    jac = None;
                }
                (x, f) = (y, g);
                break;
            }
            if !fresh {
                // A borrowed Jacobian that does not help: make a fresh one.
                jac = None;
                break;
            }
            if t < 1e-2 {
                // No step helps: the kinks' floor.
                return (x, settled(f), jac);
            }
            t *= 0.5;
        }
    }
    (x, settled(f), jac)
}

/// `(sin, cos)` coefficients of the fundamental of values at the step midpoints (discrete
/// Fourier transform; definition).
fn fundamental(values: &[f64]) -> (f64, f64) {
    let n = values.len() as f64;
    values
        .iter()
        .enumerate()
        .fold((0.0, 0.0), |(a, b), (k, v)| {
            let (s, c) = (2.0 * PI * (k as f64 + 0.5) / n).sin_cos();
            (a + 2.0 * v * s / n, b + 2.0 * v * c / n)
        })
}

/// An averaged bridge's periodic current, and where a nearby solve can start.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AveragedSolve {
    /// Whether the periodic solve settled.
    pub settled: bool,
    /// Phase A's current fundamental as `(sin, cos)` coefficients against leg A's reference
    /// `sin θ`, A.
    pub current_sin_cos_a: (f64, f64),
    /// Where a nearby solve can start.
    pub warm: Warm,
}

/// The periodic solve's starting currents (phases A and B at θ = 0) and the Jacobian it last
/// used.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Warm {
    pub start: [f64; 2],
    pub jacobian: Option<Jacobian2>,
}

/// Phase A's current fundamental in the periodic steady state of the averaged bridge at
/// `drive`, stepped [`AVERAGED_STEPS`] times per electrical period, starting the periodic
/// solve from `warm` or else from the current `peak·sin(θ − lag)` of `guess`.
pub fn averaged_current(
    drive: &AveragedDrive,
    c: &LegConditions,
    l_phase_h: f64,
    guess: (f64, f64),
    warm: Option<Warm>,
) -> AveragedSolve {
    averaged_current_over(AVERAGED_STEPS, drive, c, l_phase_h, guess, warm)
}

fn averaged_current_over(
    steps: usize,
    drive: &AveragedDrive,
    c: &LegConditions,
    l_phase_h: f64,
    guess: (f64, f64),
    warm: Option<Warm>,
) -> AveragedSolve {
    let h_s = 2.0 * PI / (drive.omega_e_rad_s.abs() * steps as f64);
    let x = drive.r_phase_ohm * h_s / l_phase_h;
    let decay = (-x).exp();
    let gain = if x > 0.0 {
        -(-x).exp_m1() / drive.r_phase_ohm
    } else {
        h_s / l_phase_h
    };
    let s = Stepper {
        table: LegTable::new(drive, c, steps),
        c,
        decay,
        gain,
        scale_a: guess.0.abs().max(1e-3),
    };
    let (peak, lag) = guess;
    let start = warm.map_or(
        [peak * (-lag).sin(), peak * (-lag - 2.0 * PI / 3.0).sin()],
        |w| w.start,
    );
    let (start, settled, jacobian) = periodic_start(&s, start, warm.and_then(|w| w.jacobian));
    let run = s.run(start, true);
    AveragedSolve {
        settled,
        current_sin_cos_a: fundamental(&run.current_a),
        warm: Warm { start, jacobian },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn legs(t_dead_s: f64, l_phase_h: f64) -> LegConditions {
        LegConditions::for_tests(t_dead_s, l_phase_h)
    }

    /// 720 steps per electrical period against four times as many, on a low-impedance motor
    /// where the current clamps around its zero crossings.
    #[test]
    fn steps_are_enough() {
        let l = 3e-4;
        let c = legs(800e-9, l);
        for (m, lead, w, e) in [(0.16, 0.03, 120.0, 0.9), (0.4, 0.2, 2000.0, 8.0)] {
            let drive = AveragedDrive {
                modulation_index: m,
                zero_sequence: ZeroSequence::MinMax,
                hold_gain: 1.0,
                r_phase_ohm: 0.1,
                omega_e_rad_s: w,
                emf_peak_v: e,
                voltage_lead_rad: lead,
            };
            let coarse = averaged_current_over(720, &drive, &c, l, (1.0, 0.0), None);
            let fine = averaged_current_over(2880, &drive, &c, l, (1.0, 0.0), None);
            assert!(coarse.settled && fine.settled);
            let (a, b) = (coarse.current_sin_cos_a, fine.current_sin_cos_a);
            let size = b.0.hypot(b.1);
            assert!(size > 0.1, "{b:?}");
            assert!((a.0 - b.0).hypot(a.1 - b.1) < 2e-3 * size, "{a:?} vs {b:?}");
        }
    }

    /// Without dead time, switch drop or hold, the averaged bridge is the phasor circuit:
    /// `I = (V − E)/(R + jωL)` (common practice).
    #[test]
    fn ideal_legs_give_the_phasor_current() {
        let l = 1e-3;
        let mut c = legs(0.0, l);
        c.r_switch_ohm = 0.0;
        c.v_sd_v = 0.0;
        let (r, w, e, m, lead) = (0.5, 1500.0, 12.0, 0.7, 0.4);
        let drive = AveragedDrive {
            modulation_index: m,
            zero_sequence: ZeroSequence::None,
            hold_gain: 1.0,
            r_phase_ohm: r,
            omega_e_rad_s: w,
            emf_peak_v: e,
            voltage_lead_rad: lead,
        };
        let got = averaged_current(&drive, &c, l, (5.0, 0.0), None);
        // Against leg A's reference: V = m·V_bus/2, E = e·e^(−j·lead).
        let v = (m * c.v_bus_v / 2.0, 0.0);
        let emf = (e * lead.cos(), -e * lead.sin());
        let (nr, ni) = (v.0 - emf.0, v.1 - emf.1);
        let (zr, zi) = (r, w * l);
        let den = zr * zr + zi * zi;
        let want = ((nr * zr + ni * zi) / den, (ni * zr - nr * zi) / den);
        let (a, b) = got.current_sin_cos_a;
        let size = want.0.hypot(want.1);
        assert!(
            (a - want.0).hypot(b - want.1) < 1e-3 * size,
            "{:?} vs {want:?}",
            (a, b)
        );
    }
}
