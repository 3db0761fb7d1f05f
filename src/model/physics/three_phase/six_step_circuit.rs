//! Six-step bridge simulated switch by switch over two sectors: the gate
//! schedule with its dead times, the three phase currents of the star motor
//! with the body diodes that carry them when both switches of a leg are off,
//! and what each switch conducts and switches. This is what the flat-sector
//! model of [`super::six_step`] leaves out: the off-going phase's current
//! freewheeling through a body diode after each commutation, the on-coming
//! phase's rise, and the floating phase's diode conduction that its
//! back-EMF drives in the off-times.
//!
//! Circuit (star, balanced, no saliency): `v_k − v_n = R_k·i_k + L·di_k/dt +
//! e_k` for every connected phase, `Σ i_k = 0`, so `v_n` is the mean of
//! `v_k − R_k·i_k − e_k` over them (Krishnan, *Permanent Magnet Synchronous
//! and Brushless DC Motor Drives*, 2010, ch. 9, from memory). A leg's
//! terminal is the rail of the switch that is on (its R_ds(on) in `R_k`),
//! otherwise the rail of the body diode the current flows in (`−V_sd` below
//! the negative rail, `V_sd` above the positive), otherwise open (zero
//! current, the terminal at `v_n + e_k`) until that voltage passes a diode's
//! threshold (common practice for an ideal-switch bridge). Within a piece
//! of constant topology the back-EMFs are taken at its middle and the phase
//! resistances at their mean (the difference as a voltage at the piece's
//! start), so each current is an exact exponential toward its own final
//! value with one time constant `L/R` (our own simplification; the pieces
//! are at most a sixth of a PWM period and R_ds(on) is small beside R).

use super::inputs::*;
use super::sectors::{SECTORS, SectorDrive, sector_table};
use super::six_step::trapezoid;

/// Switch positions: `2·phase + side` (side 0 high, 1 low).
pub(super) const DEVICES: usize = 6;

/// What a switch is doing in a sector (the role it plays there).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Duty {
    /// Switched at the chopping duty.
    Chopping,
    /// The chopping switch's leg partner (diode or synchronous freewheel).
    Freewheeling,
    /// Held on for the sector.
    Conducting,
    /// The floating phase's switches and the held switch's idle partner.
    Idle,
}

/// One gate edge of the schedule.
#[derive(Debug, Clone, Copy)]
pub(super) struct GateEdge {
    pub t_s: f64,
    pub device: usize,
    pub on: bool,
}

/// The circuit and its drive: everything a window's run needs.
#[derive(Debug, Clone, Copy)]
pub struct SixStepCircuit<'a> {
    /// The bridge (bus, PWM frequency, dead time, switch).
    pub stage: ThreePhaseStage<'a>,
    /// The motor.
    pub motor: MotorParams,
    /// Electrical angular speed, rad/s.
    pub omega_e_rad_s: f64,
    /// Chopping scheme.
    pub chop: Chop,
    /// R_ds(on) of the high-side and the low-side switches, Ω.
    pub r_ds_ohm: [f64; 2],
}

impl SixStepCircuit<'_> {
    /// PWM periods per sector: f/(6·f_e) rounded, at least one. Commutation
    /// happens at a PWM period boundary, where timers load a new output
    /// pattern (common practice), so the simulated electrical period holds a
    /// whole number of PWM periods: `6·n·T` (f_e quantised by at most half a
    /// period per sector).
    pub fn periods_per_sector(&self) -> usize {
        let f_e = self.omega_e_rad_s / (2.0 * std::f64::consts::PI);
        let n = if f_e > 0.0 {
            (self.stage.f_sw_hz / (6.0 * f_e)).round()
        } else {
            1.0
        };
        n.clamp(1.0, 1e7) as usize
    }

    /// PWM period T, s.
    pub fn period_s(&self) -> f64 {
        1.0 / self.stage.f_sw_hz
    }

    /// The simulated electrical period 6·n·T, s.
    pub fn electrical_period_s(&self) -> f64 {
        (SECTORS * self.periods_per_sector()) as f64 * self.period_s()
    }

    /// The window: two sectors, n·2 periods.
    pub fn window_s(&self) -> f64 {
        self.electrical_period_s() / 3.0
    }

    /// The EMF peak and the simulated electrical period, `(V, s)`: what
    /// [`Self::emfs_with`] needs, fixed for a window.
    pub(super) fn emf_clock(&self) -> (f64, f64) {
        (
            self.motor.phase_emf_peak_v(self.omega_e_rad_s),
            self.electrical_period_s(),
        )
    }

    /// The three back-EMFs at time `t_s` (θ = 30° at t = 0, the start of
    /// sector 0; the angle convention of [`super::sectors`]), from
    /// [`Self::emf_clock`]'s figures.
    pub(super) fn emfs_with(&self, (e_pk, period_s): (f64, f64), t_s: f64) -> [f64; 3] {
        let theta = std::f64::consts::FRAC_PI_6 + 2.0 * std::f64::consts::PI * t_s / period_s;
        match self.motor.back_emf_shape {
            // sin(θ − 2πk/3) from one sine and cosine (angle difference).
            BackEmfShape::Sinusoidal => {
                let (sin, cos) = theta.sin_cos();
                let half_root3 = 0.5 * 3f64.sqrt();
                [
                    e_pk * sin,
                    e_pk * (-0.5 * sin - half_root3 * cos),
                    e_pk * (-0.5 * sin + half_root3 * cos),
                ]
            }
            BackEmfShape::Trapezoidal => std::array::from_fn(|k| {
                e_pk * trapezoid(theta - 2.0 * std::f64::consts::PI * k as f64 / 3.0)
            }),
        }
    }

    /// The sector of PWM period `k` (negative: before the window), 0..6.
    pub(super) fn sector_of_period(&self, k: i64) -> usize {
        sector_of_period_in(k, self.periods_per_sector() as i64)
    }

    /// The sector at time `t_s` of the window.
    pub(super) fn sector_at(&self, t_s: f64) -> usize {
        sector_at_in(t_s, self.period_s(), self.periods_per_sector() as i64)
    }

    /// Role of `device` in sector `s`.
    pub(super) fn role(&self, s: usize, device: usize) -> Duty {
        let d: SectorDrive = sector_table(true)[s];
        let (phase, high) = (device / 2, device.is_multiple_of(2));
        let chop_high = self.chop.chopping_side() == Side::High;
        let (chop_phase, held_phase) = if chop_high {
            (d.positive, d.negative)
        } else {
            (d.negative, d.positive)
        };
        if phase == chop_phase {
            if high == chop_high {
                Duty::Chopping
            } else {
                Duty::Freewheeling
            }
        } else if phase == held_phase && high != chop_high {
            Duty::Conducting
        } else {
            Duty::Idle
        }
    }

    /// Ideal (no dead time) on-intervals of `device` in PWM period `k`,
    /// in window time: the chopping pulse `D·T` centred on the period's
    /// middle (the centre-aligned convention of the module docs), the
    /// complementary partner outside it, the held switch all period.
    fn ideal_on(&self, k: i64, device: usize, duty: f64) -> [(f64, f64); 2] {
        let t = self.period_s();
        let t0 = k as f64 * t;
        let (a, b) = (t0 + 0.5 * (1.0 - duty) * t, t0 + 0.5 * (1.0 + duty) * t);
        let none = (t0, t0);
        match self.role(self.sector_of_period(k), device) {
            Duty::Chopping => [(a, b), none],
            Duty::Freewheeling if self.chop == Chop::Complementary => [(t0, a), (b, t0 + t)],
            Duty::Conducting => [(t0, t0 + t), none],
            _ => [none, none],
        }
    }

    /// The gate schedule of the window at chopping duty `duty`: the state
    /// just before t = 0 and the edges in [0, window), each turn-on delayed
    /// by the dead time and a pulse shorter than it dropped (what a timer's
    /// dead-time insertion does; common practice).
    pub(super) fn schedule(&self, duty: f64) -> ([bool; DEVICES], Vec<GateEdge>) {
        let periods = 2 * self.periods_per_sector() as i64;
        let (td, end) = (self.stage.t_dead_s, self.window_s());
        let mut start = [false; DEVICES];
        let mut edges = Vec::with_capacity(8 * periods.max(0) as usize + 16);
        let mut merged: Vec<(f64, f64)> = Vec::with_capacity(2 * periods.max(0) as usize + 8);
        for (device, on_at_start) in start.iter_mut().enumerate() {
            merged.clear();
            for k in -2..periods {
                for (a, b) in self.ideal_on(k, device, duty) {
                    if b <= a {
                        continue;
                    }
                    match merged.last_mut() {
                        Some(last) if (a - last.1).abs() <= 1e-12 * end => last.1 = b,
                        _ => merged.push((a, b)),
                    }
                }
            }
            for &(a, b) in &merged {
                let a = a + td;
                if b <= a {
                    continue;
                }
                if a < 0.0 && b > 0.0 {
                    *on_at_start = true;
                }
                if a >= 0.0 && a < end {
                    edges.push(GateEdge {
                        t_s: a,
                        device,
                        on: true,
                    });
                }
                if b >= 0.0 && b < end {
                    edges.push(GateEdge {
                        t_s: b,
                        device,
                        on: false,
                    });
                }
            }
        }
        edges.sort_by(|x, y| x.t_s.total_cmp(&y.t_s).then(x.on.cmp(&y.on)));
        (start, edges)
    }
}

/// How a phase's terminal is held in a piece.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Terminal {
    /// A channel is on: the device (`2·phase + side`) and the rail voltage.
    Channel { device: usize, rail_v: f64 },
    /// Both off, current in a body diode: the device and its clamp voltage.
    Diode { device: usize, clamp_v: f64 },
    /// Both off, no current.
    Open,
}

/// One piece's solution: per phase the start current, the final value and
/// the common time constant.
#[derive(Debug, Clone, Copy)]
pub(super) struct Piece {
    pub terminals: [Terminal; 3],
    pub i0_a: [f64; 3],
    pub i_inf_a: [f64; 3],
    pub tau_s: f64,
}

impl Piece {
    /// Current of phase `k` after `t_s`.
    pub fn current_a(&self, k: usize, t_s: f64) -> f64 {
        let (i0, inf) = (self.i0_a[k], self.i_inf_a[k]);
        inf + (i0 - inf) * (-t_s / self.tau_s).exp()
    }

    /// When phase `k`'s current crosses zero within `(0, d_s)`, if it does.
    pub fn zero_crossing_s(&self, k: usize, d_s: f64) -> Option<f64> {
        let (i0, inf) = (self.i0_a[k], self.i_inf_a[k]);
        if i0 == 0.0 || inf == 0.0 || i0.signum() == inf.signum() {
            return None;
        }
        let t = self.tau_s * ((i0 - inf) / (-inf)).ln();
        (t > 0.0 && t < d_s).then_some(t)
    }

    /// `(∫ i, ∫ i²)` of phase `k` over `[0, d_s]`: with β = i₀ − i_∞ and
    /// g(x) = 1 − e^(−x), `∫ i = i_∞·d + β·τ·g(d/τ)` and `∫ i² = i_∞²·d +
    /// 2·i_∞·β·τ·g(d/τ) + β²·τ·g(2d/τ)/2` (closed form of the exponential).
    pub fn moments(&self, k: usize, d_s: f64) -> (f64, f64) {
        let (inf, tau) = (self.i_inf_a[k], self.tau_s);
        let beta = self.i0_a[k] - inf;
        let g = |x: f64| -(-x).exp_m1();
        let (g1, g2) = (g(d_s / tau), g(2.0 * d_s / tau));
        (
            inf * d_s + beta * tau * g1,
            inf * inf * d_s + 2.0 * inf * beta * tau * g1 + 0.5 * beta * beta * tau * g2,
        )
    }
}

/// The sector (0..6) of PWM period `k` with `n` periods a sector.
pub(super) fn sector_of_period_in(k: i64, n: i64) -> usize {
    k.div_euclid(n).rem_euclid(SECTORS as i64) as usize
}

/// The sector at window time `t_s` with PWM period `period_s` and `n`
/// periods a sector.
pub(super) fn sector_at_in(t_s: f64, period_s: f64, n: i64) -> usize {
    sector_of_period_in((t_s / period_s).floor() as i64, n)
}

/// The terminals and the piece solution for gates `gates`, currents `i`
/// and back-EMFs `e`: open phases join through a diode when their open
/// voltage passes its threshold (and the current the join starts flows the
/// diode's way).
pub(super) fn solve_piece(
    c: &SixStepCircuit<'_>,
    gates: &[bool; DEVICES],
    i: [f64; 3],
    e: [f64; 3],
) -> Piece {
    let (v, v_sd) = (c.stage.v_bus_v, c.stage.sw.v_sd_v);
    let mut terminals: [Terminal; 3] = std::array::from_fn(|k| {
        if gates[2 * k] {
            Terminal::Channel {
                device: 2 * k,
                rail_v: v,
            }
        } else if gates[2 * k + 1] {
            Terminal::Channel {
                device: 2 * k + 1,
                rail_v: 0.0,
            }
        } else if i[k] > 0.0 {
            Terminal::Diode {
                device: 2 * k + 1,
                clamp_v: -v_sd,
            }
        } else if i[k] < 0.0 {
            Terminal::Diode {
                device: 2 * k,
                clamp_v: v + v_sd,
            }
        } else {
            Terminal::Open
        }
    });
    let mut piece = piece_for(c, &terminals, i, e);
    for _ in 0..3 {
        let Some(joined) = join_open_phase(c, &terminals, i, e) else {
            break;
        };
        terminals = joined.0;
        piece = joined.1;
    }
    piece
}

/// An open phase whose open-circuit voltage `v_n + e_k` passes a diode's
/// threshold, joined through that diode, if the current it then takes
/// flows the diode's way.
fn join_open_phase(
    c: &SixStepCircuit<'_>,
    terminals: &[Terminal; 3],
    i: [f64; 3],
    e: [f64; 3],
) -> Option<([Terminal; 3], Piece)> {
    let (v, v_sd) = (c.stage.v_bus_v, c.stage.sw.v_sd_v);
    let v_n = open_neutral_v(c, terminals, i, e)?;
    for k in 0..3 {
        if terminals[k] != Terminal::Open {
            continue;
        }
        let v_open = v_n + e[k];
        let (device, clamp_v, sign) = if v_open > v + v_sd {
            (2 * k, v + v_sd, -1.0)
        } else if v_open < -v_sd {
            (2 * k + 1, -v_sd, 1.0)
        } else {
            continue;
        };
        let mut t = *terminals;
        t[k] = Terminal::Diode { device, clamp_v };
        let p = piece_for(c, &t, i, e);
        if p.i_inf_a[k] * sign > 0.0 {
            return Some((t, p));
        }
    }
    None
}

/// The star point's voltage seen by the open phases: the mean of
/// `v_k − R_k·i_k − e_k` over the connected ones (one connected phase: no
/// current flows, so its `v_k − e_k`); with none connected, the mean of
/// `−e_k`, the three open terminals then at `e_k − mean(e)` (common practice).
fn open_neutral_v(
    c: &SixStepCircuit<'_>,
    terminals: &[Terminal; 3],
    i: [f64; 3],
    e: [f64; 3],
) -> Option<f64> {
    let mut sum = 0.0;
    let mut n = 0.0;
    for k in 0..3 {
        if let Some((v, r)) = terminal_source(c, terminals[k]) {
            sum += v - r * i[k] - e[k];
            n += 1.0;
        }
    }
    if n > 0.0 {
        Some(sum / n)
    } else {
        Some(-(e[0] + e[1] + e[2]) / 3.0)
    }
}

/// A connected terminal's source voltage and its series resistance (motor
/// phase and, for a channel, R_ds(on)).
fn terminal_source(c: &SixStepCircuit<'_>, t: Terminal) -> Option<(f64, f64)> {
    let r = c.motor.r_phase_ohm;
    match t {
        Terminal::Channel { device, rail_v } => Some((rail_v, r + c.r_ds_ohm[device % 2])),
        Terminal::Diode { clamp_v, .. } => Some((clamp_v, r)),
        Terminal::Open => None,
    }
}

/// The piece for fixed terminals: connected phases relax with `τ = L/R̄`
/// toward `(u_k − mean(u))/R̄`, `u_k = v_k − e_k − (R_k − R̄)·i_k`; fewer
/// than two connected phases carry no current.
fn piece_for(c: &SixStepCircuit<'_>, terminals: &[Terminal; 3], i: [f64; 3], e: [f64; 3]) -> Piece {
    let src: [Option<(f64, f64)>; 3] = std::array::from_fn(|k| terminal_source(c, terminals[k]));
    let n = src.iter().flatten().count();
    let l = c.motor.l_phase_h;
    if n < 2 {
        return Piece {
            terminals: *terminals,
            i0_a: [0.0; 3],
            i_inf_a: [0.0; 3],
            tau_s: l / c.motor.r_phase_ohm.max(1e-9),
        };
    }
    let r_mean = src.iter().flatten().map(|s| s.1).sum::<f64>() / n as f64;
    let u: [f64; 3] =
        std::array::from_fn(|k| src[k].map_or(0.0, |(v, r)| v - e[k] - (r - r_mean) * i[k]));
    let u_mean = (0..3)
        .filter(|&k| src[k].is_some())
        .map(|k| u[k])
        .sum::<f64>()
        / n as f64;
    let r_eff = r_mean.max(1e-9);
    Piece {
        terminals: *terminals,
        i0_a: std::array::from_fn(|k| if src[k].is_some() { i[k] } else { 0.0 }),
        i_inf_a: std::array::from_fn(|k| {
            if src[k].is_some() {
                (u[k] - u_mean) / r_eff
            } else {
                0.0
            }
        }),
        tau_s: l / r_eff,
    }
}
