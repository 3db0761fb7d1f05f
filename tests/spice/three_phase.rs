//! A full three-phase bridge against ngspice (issue 21, item 1).
//!
//! Six switches of one invented VDMOS device (`harness::devices()`), each
//! driven by an ideal Thévenin driver (source 1 Ω + R_on, sink 0.5 Ω + R_off,
//! blended over 1 ns by its logic command, as the double-pulse and leg
//! circuits), the high sides floating on their switch nodes; a DC bus source;
//! a star-connected motor, each phase R–L–back-EMF to a common neutral. The
//! gate commands are piecewise-linear sources whose edge times are computed
//! here, exactly:
//!
//! - **sinusoidal**: centre-aligned sine-triangle PWM, the counter at its
//!   bottom at each period boundary; leg x's high side on for d_x·T centred
//!   on the top, d_x = ½(1 + m·sin(θ − 2πx/3) + z), θ taken at the period's
//!   centre (symmetric regular sampling, our own choice), z = 0 or min-max
//!   z = −(max + min)/2 of the three m·sin terms (common practice); the low
//!   side complementary; every turn-on command delayed by the dead time
//!   (a timer's complementary outputs, common practice);
//! - **six-step**: 60° sectors aligned with the trapezoidal back-EMF's flat
//!   tops (ideal commutation, common practice), a whole number of PWM periods
//!   per sector; per sector the positive phase P and negative phase N
//!   conduct, the third floats (both its switches off). `HighSide`: P's high
//!   side chops at D (centred on the top), N's low side on; `LowSide`: N's low
//!   side chops, P's high side on; `Complementary`: as `HighSide` with P's low
//!   side complementary. Dead time on every turn-on command. The back-EMF is
//!   trapezoidal (120° flat tops, linear between: the shape pwmplan's
//!   `BackEmfShape::Trapezoidal` assumes).
//!
//! The run starts from the ideal bridge's steady-state phase currents (the
//! inductors' initial conditions: the sinusoidal phasor solution, or ±I in
//! the first sector's pair for six-step), settles for half an electrical
//! period (sinusoidal) or two (six-step, whose initial currents are rough),
//! and measures the next
//! electrical period. Windows and figures: `tests/spice/README.md`.
#![allow(dead_code)]

use std::f64::consts::PI;
use std::fmt::Write as _;

use super::harness::{
    R_DRV_SINK_OHM, R_DRV_SOURCE_OHM, Table, device, header, load_switch_model, median_abs,
    run_ngspice_within,
};
use pwmplan::physics::losses;
use pwmplan::physics::params::GateDrive;
use pwmplan::physics::three_phase::{
    self as tp, BackEmfShape, Chop, LossLines, MotorParams, PhaseCurrent, RippleCommand,
    SinusoidalPoint, ThreePhaseStage, ZeroSequence,
};

/// How the bridge is modulated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Scheme {
    /// Sine-triangle PWM at modulation index m.
    Sine { zs: ZeroSequence, m: f64 },
    /// Six-step at chopping duty D.
    SixStep { chop: Chop, duty: f64 },
}

/// One three-phase case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TpCase {
    pub id: &'static str,
    pub device: &'static str,
    pub v_bus_v: f64,
    pub f_sw_hz: f64,
    /// Electrical (fundamental) frequency; f_sw/f_e is a whole number (six-step:
    /// a multiple of 6).
    pub f_e_hz: f64,
    pub t_dead_s: f64,
    pub v_drive_v: f64,
    pub r_on_ohm: f64,
    pub r_off_ohm: f64,
    pub r_phase_ohm: f64,
    pub l_phase_h: f64,
    pub scheme: Scheme,
    /// Sinusoidal: the phase-current peak the back-EMF is set for (ideal
    /// bridge); six-step: the line current the inductors start at.
    pub i_a: f64,
    /// Sinusoidal: the load angle, the current's lag behind the leg
    /// reference sin θ, degrees. Six-step: unused.
    pub phi_deg: f64,
    /// Six-step: the phase back-EMF's flat top, V. Sinusoidal: unused (the
    /// back-EMF phasor follows from m, I and φ).
    pub e_v: f64,
}

#[allow(clippy::too_many_arguments)]
const fn sine(
    id: &'static str,
    device: &'static str,
    v_bus_v: f64,
    f_sw_khz: f64,
    zs: ZeroSequence,
    m: f64,
    i_a: f64,
    phi_deg: f64,
    (r_phase_ohm, l_phase_uh): (f64, f64),
    t_dead_ns: f64,
    (r_on_ohm, r_off_ohm): (f64, f64),
) -> TpCase {
    TpCase {
        id,
        device,
        v_bus_v,
        f_sw_hz: f_sw_khz * 1e3,
        f_e_hz: 500.0,
        t_dead_s: t_dead_ns * 1e-9,
        v_drive_v: 10.0,
        r_on_ohm,
        r_off_ohm,
        r_phase_ohm,
        l_phase_h: l_phase_uh * 1e-6,
        scheme: Scheme::Sine { zs, m },
        i_a,
        phi_deg,
        e_v: 0.0,
    }
}

#[allow(clippy::too_many_arguments)]
const fn six(
    id: &'static str,
    device: &'static str,
    v_bus_v: f64,
    f_e_hz: f64,
    chop: Chop,
    duty: f64,
    (i_a, e_v): (f64, f64),
    (r_phase_ohm, l_phase_uh): (f64, f64),
) -> TpCase {
    TpCase {
        id,
        device,
        v_bus_v,
        f_sw_hz: 24e3,
        f_e_hz,
        t_dead_s: 200e-9,
        v_drive_v: 10.0,
        r_on_ohm: 4.7,
        r_off_ohm: 2.2,
        r_phase_ohm,
        l_phase_h: l_phase_uh * 1e-6,
        scheme: Scheme::SixStep { chop, duty },
        i_a,
        phi_deg: 0.0,
        e_v,
    }
}

/// A six-step case at its own carrier and dead time.
const fn at_pwm(c: TpCase, f_sw_khz: f64, t_dead_ns: f64) -> TpCase {
    TpCase {
        f_sw_hz: f_sw_khz * 1e3,
        t_dead_s: t_dead_ns * 1e-9,
        ..c
    }
}

const NONE: ZeroSequence = ZeroSequence::None;
const MINMAX: ZeroSequence = ZeroSequence::MinMax;

/// The cases: 12–100 V, 16–40 kHz, m 0.5–1.1, cos φ 0.64–1 and one
/// generating (T08, φ = 150°), 5–20 A peak, both zero sequences, all five
/// devices; T07 and T08 were added after the first six were compared, as a
/// check on new ground; six-step with each chop at 400 Hz, and T3L with a line
/// time constant 2L/2R of 2.5 ms and L·I/V of about a quarter of its 833 µs sector
/// (a long commutation).
pub const TP_CASES: &[TpCase] = &[
    sine(
        "T01",
        "hause-60",
        48.0,
        20.0,
        NONE,
        0.8,
        15.0,
        20.0,
        (0.1, 150.0),
        300.0,
        (4.7, 2.2),
    ),
    sine(
        "T02",
        "hause-60",
        48.0,
        20.0,
        MINMAX,
        1.1,
        15.0,
        10.0,
        (0.1, 150.0),
        300.0,
        (4.7, 2.2),
    ),
    sine(
        "T03",
        "brack-40",
        24.0,
        20.0,
        NONE,
        0.6,
        20.0,
        35.0,
        (0.05, 80.0),
        200.0,
        (2.2, 2.2),
    ),
    sine(
        "T04",
        "rigg-100",
        72.0,
        16.0,
        MINMAX,
        0.9,
        8.0,
        0.0,
        (0.3, 400.0),
        400.0,
        (10.0, 4.7),
    ),
    sine(
        "T05",
        "hause-60",
        36.0,
        24.0,
        MINMAX,
        0.5,
        10.0,
        50.0,
        (0.15, 200.0),
        250.0,
        (4.7, 2.2),
    ),
    sine(
        "T06",
        "brack-40",
        24.0,
        16.0,
        NONE,
        0.95,
        6.0,
        5.0,
        (0.1, 120.0),
        200.0,
        (10.0, 4.7),
    ),
    sine(
        "T07",
        "crag-150",
        100.0,
        40.0,
        NONE,
        0.7,
        5.0,
        30.0,
        (0.5, 500.0),
        300.0,
        (10.0, 4.7),
    ),
    sine(
        "T08",
        "fell-30",
        12.0,
        20.0,
        MINMAX,
        0.8,
        10.0,
        150.0,
        (0.05, 50.0),
        150.0,
        (4.7, 2.2),
    ),
    six(
        "T3H",
        "hause-60",
        24.0,
        400.0,
        Chop::HighSide,
        0.7,
        (10.0, 6.0),
        (0.1, 100.0),
    ),
    six(
        "T3S",
        "hause-60",
        24.0,
        400.0,
        Chop::LowSide,
        0.7,
        (10.0, 6.0),
        (0.1, 100.0),
    ),
    six(
        "T3C",
        "hause-60",
        24.0,
        400.0,
        Chop::Complementary,
        0.7,
        (10.0, 6.0),
        (0.1, 100.0),
    ),
    six(
        "T3L",
        "hause-60",
        24.0,
        200.0,
        Chop::HighSide,
        0.7,
        (6.0, 3.0),
        (0.4, 1000.0),
    ),
    // Added after the switch-by-switch six-step model was compared on the
    // four above, as a check on new ground: every device, 12–100 V,
    // 16–40 kHz, 150–800 Hz, each chop, duties 0.3–0.9, one light load in
    // discontinuous conduction (T3F). Each carrier holds a whole number of
    // PWM periods per sector (the harness commutates at period boundaries).
    at_pwm(
        six(
            "T3A",
            "brack-40",
            36.0,
            300.0,
            Chop::HighSide,
            0.45,
            (11.0, 5.0),
            (0.25, 150.0),
        ),
        19.8,
        300.0,
    ),
    at_pwm(
        six(
            "T3B",
            "rigg-100",
            72.0,
            250.0,
            Chop::LowSide,
            0.85,
            (11.0, 25.0),
            (0.5, 400.0),
        ),
        16.5,
        400.0,
    ),
    at_pwm(
        six(
            "T3D",
            "crag-150",
            100.0,
            500.0,
            Chop::Complementary,
            0.6,
            (5.0, 25.0),
            (1.0, 500.0),
        ),
        33.0,
        250.0,
    ),
    at_pwm(
        six(
            "T3E",
            "fell-30",
            12.0,
            800.0,
            Chop::Complementary,
            0.9,
            (9.0, 4.5),
            (0.1, 40.0),
        ),
        38.4,
        150.0,
    ),
    at_pwm(
        six(
            "T3F",
            "hause-60",
            48.0,
            150.0,
            Chop::HighSide,
            0.3,
            (0.5, 6.5),
            (1.0, 200.0),
        ),
        19.8,
        200.0,
    ),
    at_pwm(
        six(
            "T3G",
            "brack-40",
            24.0,
            600.0,
            Chop::LowSide,
            0.9,
            (16.0, 9.5),
            (0.08, 40.0),
        ),
        25.2,
        200.0,
    ),
];

impl TpCase {
    /// PWM period T.
    pub fn period_s(&self) -> f64 {
        1.0 / self.f_sw_hz
    }

    /// PWM periods per electrical period.
    pub fn per_electrical(&self) -> usize {
        (self.f_sw_hz / self.f_e_hz).round() as usize
    }

    /// PWM periods before the measured electrical period.
    pub fn settle_periods(&self) -> usize {
        match self.scheme {
            Scheme::Sine { .. } => self.per_electrical() / 2,
            Scheme::SixStep { .. } => 2 * self.per_electrical(),
        }
    }

    /// The measured window [t0, t0 + 1/f_e].
    pub fn window_s(&self) -> (f64, f64) {
        let t = self.period_s();
        let a = self.settle_periods() as f64 * t;
        (a, a + self.per_electrical() as f64 * t)
    }

    pub fn omega_e(&self) -> f64 {
        2.0 * PI * self.f_e_hz
    }

    /// Electrical angle at t = 0: 0 (sinusoidal), 30° (six-step, the first
    /// sector's start).
    pub fn theta0(&self) -> f64 {
        match self.scheme {
            Scheme::Sine { .. } => 0.0,
            Scheme::SixStep { .. } => PI / 6.0,
        }
    }

    /// Sinusoidal: the back-EMF phasor (peak, angle against sin θ) that
    /// makes I∠−φ flow from an ideal bridge, E = V − (R + jωL)·I with
    /// V = m·V_bus/2 (phasor algebra, common practice).
    pub fn emf_phasor(&self) -> (f64, f64) {
        let Scheme::Sine { m, .. } = self.scheme else {
            return (self.e_v, 0.0);
        };
        let phi = self.phi_deg.to_radians();
        let (ir, ii) = (self.i_a * phi.cos(), -self.i_a * phi.sin());
        let (r, x) = (self.r_phase_ohm, self.omega_e() * self.l_phase_h);
        let er = 0.5 * m * self.v_bus_v - (r * ir - x * ii);
        let ei = -(r * ii + x * ir);
        (er.hypot(ei), ei.atan2(er))
    }

    /// Initial phase currents (see the module doc).
    pub fn initial_currents(&self) -> [f64; 3] {
        match self.scheme {
            Scheme::Sine { .. } => {
                let phi = self.phi_deg.to_radians();
                [0, 1, 2]
                    .map(|x| self.i_a * (self.theta0() - phi - 2.0 * PI * f64::from(x) / 3.0).sin())
            }
            Scheme::SixStep { .. } => [self.i_a, -self.i_a, 0.0],
        }
    }
}

// ------------------------------------------------------------ gate commands

/// Leg duties at angle θ (own implementation of the module doc's rule).
pub fn duties(m: f64, zs: ZeroSequence, theta: f64) -> [f64; 3] {
    let refs = [0.0, 1.0, 2.0].map(|x: f64| m * (theta - 2.0 * PI * x / 3.0).sin());
    let z = match zs {
        ZeroSequence::None => 0.0,
        ZeroSequence::MinMax => {
            let (lo, hi) = refs
                .iter()
                .fold((f64::MAX, f64::MIN), |(a, b), &r| (a.min(r), b.max(r)));
            -0.5 * (lo + hi)
        }
    };
    refs.map(|r| (0.5 * (1.0 + r + z)).clamp(0.0, 1.0))
}

/// Six-step sectors from θ = 30°: (positive phase, negative phase).
pub const SECTORS: [(usize, usize); 6] = [(0, 1), (0, 2), (1, 2), (1, 0), (2, 0), (2, 1)];

/// Device index: 2·leg + 0 (high side) or 1 (low side).
pub const DEVICE_NAMES: [&str; 6] = ["ha", "la", "hb", "lb", "hc", "lc"];

/// Ideal on-intervals of the six gates in one PWM period k, appended.
fn period_commands(c: &TpCase, k: usize, out: &mut [Vec<(f64, f64)>; 6]) {
    let t = c.period_s();
    let t0 = k as f64 * t;
    let centred = |d: f64| (t0 + 0.5 * (1.0 - d) * t, t0 + 0.5 * (1.0 + d) * t);
    let whole = (t0, t0 + t);
    match c.scheme {
        Scheme::Sine { zs, m } => {
            let theta = c.theta0() + c.omega_e() * (t0 + 0.5 * t);
            for (x, d) in duties(m, zs, theta).into_iter().enumerate() {
                let (a, b) = centred(d);
                out[2 * x].push((a, b));
                out[2 * x + 1].push((t0, a));
                out[2 * x + 1].push((b, t0 + t));
            }
        }
        Scheme::SixStep { chop, duty } => {
            let sector = (k / (c.per_electrical() / 6)) % 6;
            let (p, n) = SECTORS[sector];
            let (a, b) = centred(duty);
            match chop {
                Chop::HighSide => {
                    out[2 * p].push((a, b));
                    out[2 * n + 1].push(whole);
                }
                Chop::LowSide => {
                    out[2 * p].push(whole);
                    out[2 * n + 1].push((a, b));
                }
                Chop::Complementary => {
                    out[2 * p].push((a, b));
                    out[2 * p + 1].push((t0, a));
                    out[2 * p + 1].push((b, t0 + t));
                    out[2 * n + 1].push(whole);
                }
            }
        }
    }
}

/// The gates' on-intervals over the whole run: ideal commands, touching
/// intervals merged, every turn-on delayed by the dead time (except at
/// t = 0), intervals shorter than the dead time dropped.
pub fn commands(c: &TpCase) -> [Vec<(f64, f64)>; 6] {
    let mut ideal: [Vec<(f64, f64)>; 6] = Default::default();
    let n = c.settle_periods() + c.per_electrical() + 1;
    for k in 0..n {
        period_commands(c, k, &mut ideal);
    }
    ideal.map(|v| {
        let mut merged: Vec<(f64, f64)> = Vec::new();
        for (a, b) in v.into_iter().filter(|(a, b)| b > a) {
            match merged.last_mut() {
                Some(last) if (a - last.1).abs() < 1e-12 => last.1 = b,
                _ => merged.push((a, b)),
            }
        }
        merged
            .into_iter()
            .filter_map(|(a, b)| {
                let a = if a <= 0.0 { a } else { a + c.t_dead_s };
                (b > a).then_some((a, b))
            })
            .collect()
    })
}

/// A 0/1 PWL source from on-intervals, each edge a 1 ns ramp centred on its
/// time.
fn pwl(iv: &[(f64, f64)]) -> String {
    let start = iv.first().is_some_and(|x| x.0 <= 0.0);
    let mut s = format!("PWL(0 {}", u8::from(start));
    for &(a, b) in iv {
        if a > 0.0 {
            let _ = write!(s, " {:.10e} 0 {:.10e} 1", a - 0.5e-9, a + 0.5e-9);
        }
        let _ = write!(s, " {:.10e} 1 {:.10e} 0", b - 0.5e-9, b + 0.5e-9);
    }
    s.push(')');
    s
}

/// The back-EMF source of phase x.
fn emf_source(c: &TpCase, x: usize) -> String {
    let shift = 2.0 * PI * x as f64 / 3.0;
    match c.scheme {
        Scheme::Sine { .. } => {
            let (e, ang) = c.emf_phasor();
            // SIN(VO VA FREQ TD THETA PHASE): VA·sin(ωt + PHASE°).
            let ph = (c.theta0() + ang - shift).to_degrees();
            format!("SIN(0 {e:.6e} {} 0 0 {ph:.6})", c.f_e_hz)
        }
        Scheme::SixStep { .. } => {
            // Trapezoid: 0 at θ = 0, +E over 30°..150°, −E over 210°..330°.
            let (_, end) = c.window_s();
            let mut s = String::from("PWL(");
            let shape = |th: f64| {
                let u = (th.to_degrees()).rem_euclid(360.0);
                let e = c.e_v;
                match u {
                    u if u < 30.0 => e * u / 30.0,
                    u if u < 150.0 => e,
                    u if u < 210.0 => e * (180.0 - u) / 30.0,
                    u if u < 330.0 => -e,
                    u => e * (u - 360.0) / 30.0,
                }
            };
            // Knots every 30° of the phase's own angle, from before t = 0.
            let th_at = |t: f64| c.theta0() + c.omega_e() * t - shift;
            let first = (th_at(0.0).to_degrees() / 30.0).floor() as i64;
            let _ = write!(s, "0 {:.6e}", shape(th_at(0.0)));
            for k in first + 1.. {
                let th = (k as f64 * 30.0).to_radians();
                let t = (th - th_at(0.0)) / c.omega_e();
                if t > end + c.period_s() {
                    break;
                }
                let _ = write!(s, " {t:.9e} {:.6e}", shape(th));
            }
            s.push(')');
            s
        }
    }
}

/// Largest step (resolves the edges; our own choice, checked against a
/// quarter of it on T01 in the README).
pub const TP_T_MAX_S: f64 = 20e-9;

/// The bridge netlist.
pub fn netlist_bridge(c: &TpCase) -> Result<String, String> {
    let dev = device(c.device).ok_or("unknown device")?;
    let cmd = commands(c);
    let i0 = c.initial_currents();
    let (_, end) = c.window_s();
    let r_on = R_DRV_SOURCE_OHM + c.r_on_ohm;
    let r_off = R_DRV_SINK_OHM + c.r_off_ohm;
    let mut n = header(&format!("three-phase bridge {}", c.id), &dev);
    let _ = writeln!(
        n,
        ".options reltol=1e-4 abstol=1e-6 vntol=1e-5 method=gear\nVBUS bus 0 {}\nRN n 0 1G",
        c.v_bus_v
    );
    for (x, leg) in ["a", "b", "c"].iter().enumerate() {
        let _ = write!(
            n,
            "VH{leg} bus dh{leg} 0\nMH{leg} dh{leg} gh{leg} sw{leg} {m}\n\
             VL{leg} sw{leg} dl{leg} 0\nML{leg} dl{leg} gl{leg} 0 {m}\n\
             VCH{leg} ch{leg} 0 {ph}\nVCL{leg} cl{leg} 0 {pl}\n\
             BDH{leg} sw{leg} gh{leg} I = v(ch{leg})*({vd}-v(gh{leg},sw{leg}))/{r_on} - (1-v(ch{leg}))*v(gh{leg},sw{leg})/{r_off}\n\
             BDL{leg} 0 gl{leg} I = v(cl{leg})*({vd}-v(gl{leg}))/{r_on} - (1-v(cl{leg}))*v(gl{leg})/{r_off}\n\
             VI{leg} sw{leg} p{leg} 0\nR{leg} p{leg} q{leg} {r}\nL{leg} q{leg} e{leg} {l:e} IC={i:.6e}\n\
             VE{leg} e{leg} n {emf}\n",
            m = dev.stem,
            ph = pwl(&cmd[2 * x]),
            pl = pwl(&cmd[2 * x + 1]),
            vd = c.v_drive_v,
            r = c.r_phase_ohm,
            l = c.l_phase_h,
            i = i0[x],
            emf = emf_source(c, x),
        );
    }
    let _ = write!(
        n,
        ".control\nset wr_singlescale\nset wr_vecnames\noption numdgt=9\n\
         tran 1n {end:.9e} 0 {TP_T_MAX_S:e} uic\n\
         wrdata out.txt v(swa) v(swb) v(swc) v(gha) v(ghb) v(ghc) v(gla) v(glb) v(glc) \
         i(vha) i(vla) i(vhb) i(vlb) i(vhc) i(vlc) i(via) i(vib) i(vic) i(vbus)\n\
         quit\n.endc\n.end\n"
    );
    Ok(n)
}

// ------------------------------------------------------------ measurement

/// What ngspice shows over the measured electrical period. Device arrays in
/// `DEVICE_NAMES` order; powers are energies over the period times f_e.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct TpMeasured {
    /// Channel conduction: gate command on, outside the edge windows.
    pub cond_w: [f64; 6],
    /// Turn-on edges: from each on-command until V_GS reaches 90 % of V_drive
    /// (window: our own choice, the Miller plateau is over by then).
    pub on_w: [f64; 6],
    /// Turn-off edges: from each off-command until V_GS falls to 10 % of V_drive
    /// (our own choice: below every device's threshold).
    pub off_w: [f64; 6],
    /// Body diode (and off-state): gate command off, outside the edge windows.
    pub diode_w: [f64; 6],
    /// Phase-current fundamental peak (mean of the three phases).
    pub i_pk_a: f64,
    /// Its lag behind the leg reference sin θ (mean of the three phases), degrees.
    pub lag_deg: f64,
    /// Phase-current rms (mean of the three phases).
    pub rms_a: f64,
    /// PWM ripple: the largest per-period peak-to-peak of the current less
    /// its harmonics 0…13 of f_e (mean of the three phases' largest; the
    /// definition is our own choice, see the README).
    pub pp_max_a: f64,
    /// The same in the PWM period centred nearest each crest of the
    /// fundamental (mean of the six crests).
    pub pp_crest_a: f64,
    /// Six-step: mean over the period of the current of each sector's held
    /// phase (the one not chopping: N for high-side and complementary chops,
    /// P for low-side), A. Sinusoidal: 0.
    pub i_line_a: f64,
    /// Mean current drawn from the bus, A.
    pub i_bus_a: f64,
}

impl TpMeasured {
    pub fn total_w(&self) -> f64 {
        (0..6)
            .map(|d| self.cond_w[d] + self.on_w[d] + self.off_w[d] + self.diode_w[d])
            .sum()
    }

    pub fn sum(a: &[f64; 6]) -> f64 {
        a.iter().sum()
    }

    /// Mean per high-side device of every line.
    pub fn high_side_w(&self) -> f64 {
        [0, 2, 4]
            .iter()
            .map(|&d| self.cond_w[d] + self.on_w[d] + self.off_w[d] + self.diode_w[d])
            .sum::<f64>()
            / 3.0
    }
}

/// Running trapezoidal integral of `f` over `t`.
fn cumulative(t: &[f64], f: &[f64]) -> Vec<f64> {
    let mut c = vec![0.0; t.len()];
    for k in 1..t.len() {
        c[k] = c[k - 1] + 0.5 * (f[k] + f[k - 1]) * (t[k] - t[k - 1]);
    }
    c
}

/// ∫ over [a, b] from a running integral (ends interpolated).
fn between(t: &[f64], c: &[f64], a: f64, b: f64) -> f64 {
    let at = |x: f64| {
        let k = t.partition_point(|&s| s < x).clamp(1, t.len() - 1);
        let f = ((x - t[k - 1]) / (t[k] - t[k - 1])).clamp(0.0, 1.0);
        c[k - 1] + f * (c[k] - c[k - 1])
    };
    at(b) - at(a)
}

/// First time ≥ `from` (before `until`) where `y` crosses `level`
/// (rising or falling); `until` when it does not.
fn first_cross(t: &[f64], y: &[f64], from: f64, until: f64, level: f64, rising: bool) -> f64 {
    let k0 = t.partition_point(|&s| s < from).max(1);
    for k in k0..t.len() {
        if t[k] > until {
            break;
        }
        let hit = if rising { y[k] >= level } else { y[k] <= level };
        if hit {
            let (a, b) = (y[k - 1], y[k]);
            let f = if b != a {
                ((level - a) / (b - a)).clamp(0.0, 1.0)
            } else {
                1.0
            };
            return (t[k - 1] + f * (t[k] - t[k - 1])).max(from);
        }
    }
    until
}

/// One device's lines over the window [w0, w1], W.
fn device_lines(
    c: &TpCase,
    t: &[f64],
    (p, vgs): (&[f64], &[f64]),
    on: &[(f64, f64)],
    (w0, w1): (f64, f64),
) -> [f64; 4] {
    let cum = cumulative(t, p);
    let e = |a: f64, b: f64| {
        let (a, b) = (a.max(w0), b.min(w1));
        if b > a { between(t, &cum, a, b) } else { 0.0 }
    };
    let (hi, lo) = (0.9 * c.v_drive_v, 0.1 * c.v_drive_v);
    let (mut cond, mut e_on, mut e_off, mut diode) = (0.0, 0.0, 0.0, 0.0);
    let mut off_from = f64::MIN;
    for (k, &(a, b)) in on.iter().enumerate() {
        let next = on.get(k + 1).map_or(f64::MAX, |x| x.0);
        // Turn-on window, then the channel, then the turn-off window.
        let a_end = if a > 0.0 {
            first_cross(t, vgs, a, b, hi, true)
        } else {
            a
        };
        let b_end = first_cross(t, vgs, b, next, lo, false);
        diode += e(off_from, a);
        e_on += e(a, a_end);
        cond += e(a_end, b);
        e_off += e(b, b_end);
        off_from = b_end;
    }
    diode += e(off_from, f64::MAX);
    let f_e = c.f_e_hz;
    [cond * f_e, e_on * f_e, e_off * f_e, diode * f_e]
}

/// Harmonics 0…`n_max` of f_e of `y` over [w0, w1] (Fourier series
/// projections by the trapezoidal rule, common practice): (a_n, b_n) with y ≈ Σ a_n·sin(nθ') + b_n·cos(nθ'),
/// θ' = ω_e·(t − w0) (a_0 = 0, b_0 the mean).
fn harmonics(
    c: &TpCase,
    t: &[f64],
    y: &[f64],
    (w0, w1): (f64, f64),
    n_max: usize,
) -> Vec<(f64, f64)> {
    let (k0, k1) = (
        t.partition_point(|&s| s < w0),
        t.partition_point(|&s| s <= w1),
    );
    let (tt, yy) = (&t[k0..k1], &y[k0..k1]);
    let span = w1 - w0;
    (0..=n_max)
        .map(|n| {
            let w = c.omega_e() * n as f64;
            let s: Vec<f64> = tt
                .iter()
                .zip(yy)
                .map(|(&x, &v)| v * (w * (x - w0)).sin())
                .collect();
            let co: Vec<f64> = tt
                .iter()
                .zip(yy)
                .map(|(&x, &v)| v * (w * (x - w0)).cos())
                .collect();
            let (cs, cc) = (cumulative(tt, &s), cumulative(tt, &co));
            let scale = if n == 0 { 1.0 } else { 2.0 } / span;
            (scale * cs[cs.len() - 1], scale * cc[cc.len() - 1])
        })
        .collect()
}

/// One phase's figures: (fundamental peak, lag behind its reference in
/// degrees, rms, largest per-period p-p, mean p-p at the two crests).
fn phase_figures(c: &TpCase, t: &[f64], i: &[f64], x: usize, win: (f64, f64)) -> [f64; 5] {
    let (w0, w1) = win;
    let h = harmonics(c, t, i, win, 13);
    // Reference of phase x at t: sin(θ0 + ω_e·t − 2πx/3) = sin(θ' + ψ).
    let psi = c.theta0() + c.omega_e() * w0 - 2.0 * PI * x as f64 / 3.0;
    let (a1, b1) = h[1];
    let (peak, ang) = (a1.hypot(b1), b1.atan2(a1));
    let lag = (psi - ang).rem_euclid(2.0 * PI);
    let lag = if lag > PI { lag - 2.0 * PI } else { lag };
    let resid: Vec<f64> = t
        .iter()
        .zip(i)
        .map(|(&s, &v)| {
            let th = c.omega_e() * (s - w0);
            v - h
                .iter()
                .enumerate()
                .map(|(n, (a, b))| a * (n as f64 * th).sin() + b * (n as f64 * th).cos())
                .sum::<f64>()
        })
        .collect();
    let tp_ = c.period_s();
    let pp = |k: usize| {
        let (a, b) = (w0 + k as f64 * tp_, w0 + (k + 1) as f64 * tp_);
        let (k0, k1) = (
            t.partition_point(|&s| s < a),
            t.partition_point(|&s| s <= b),
        );
        let (lo, hi) = resid[k0..k1]
            .iter()
            .fold((f64::MAX, f64::MIN), |(l, h), &v| (l.min(v), h.max(v)));
        hi - lo
    };
    let n = c.per_electrical();
    let pp_max = (0..n).map(pp).fold(0.0_f64, f64::max);
    // Crests: θ' + ψ − lag = π/2 and 3π/2.
    let crest = |target: f64| {
        let th = (target - psi + lag).rem_euclid(2.0 * PI);
        let k = (th / (2.0 * PI) * n as f64 - 0.5)
            .round()
            .rem_euclid(n as f64) as usize;
        pp(k)
    };
    let sq: Vec<f64> = i.iter().map(|v| v * v).collect();
    let rms = (between(t, &cumulative(t, &sq), w0, w1) / (w1 - w0)).sqrt();
    [
        peak,
        lag.to_degrees(),
        rms,
        pp_max,
        0.5 * (crest(0.5 * PI) + crest(1.5 * PI)),
    ]
}

/// Six-step: the mean of each sector's held phase current (see `TpMeasured::i_line_a`).
fn held_phase_mean(c: &TpCase, t: &[f64], i: [&[f64]; 3], (w0, w1): (f64, f64)) -> f64 {
    let Scheme::SixStep { chop, .. } = c.scheme else {
        return 0.0;
    };
    let per_sector = c.per_electrical() / 6;
    let sector_len = per_sector as f64 * c.period_s();
    let cums = i.map(|y| cumulative(t, y));
    let mut sum = 0.0;
    let first = c.settle_periods() / per_sector;
    for s in 0..6 {
        let (p, n) = SECTORS[(first + s) % 6];
        let a = w0 + s as f64 * sector_len;
        sum += match chop {
            Chop::LowSide => between(t, &cums[p], a, a + sector_len),
            _ => -between(t, &cums[n], a, a + sector_len),
        };
    }
    sum / (w1 - w0)
}

/// Measure a bridge waveform.
pub fn measure_bridge(c: &TpCase, tab: &Table) -> Result<TpMeasured, String> {
    let t = tab.col("time")?;
    let win = c.window_s();
    let cmd = commands(c);
    let mut m = TpMeasured::default();
    for (x, leg) in ["a", "b", "c"].iter().enumerate() {
        let sw = tab.col(&format!("v(sw{leg})"))?;
        let gh = tab.col(&format!("v(gh{leg})"))?;
        let gl = tab.col(&format!("v(gl{leg})"))?;
        let ih = tab.col(&format!("i(vh{leg})"))?;
        let il = tab.col(&format!("i(vl{leg})"))?;
        let p_h: Vec<f64> = sw
            .iter()
            .zip(ih)
            .map(|(s, i)| (c.v_bus_v - s) * i)
            .collect();
        let p_l: Vec<f64> = sw.iter().zip(il).map(|(s, i)| s * i).collect();
        let vgs_h: Vec<f64> = gh.iter().zip(sw).map(|(g, s)| g - s).collect();
        for (d, p, vgs) in [(2 * x, &p_h, &vgs_h[..]), (2 * x + 1, &p_l, gl)] {
            let [a, b, e, f] = device_lines(c, t, (p, vgs), &cmd[d], win);
            (m.cond_w[d], m.on_w[d], m.off_w[d], m.diode_w[d]) = (a, b, e, f);
        }
    }
    let ia = tab.col("i(via)")?;
    let ib = tab.col("i(vib)")?;
    let ic = tab.col("i(vic)")?;
    let figs: Vec<[f64; 5]> = [ia, ib, ic]
        .iter()
        .enumerate()
        .map(|(x, i)| phase_figures(c, t, i, x, win))
        .collect();
    let mean = |k: usize| figs.iter().map(|f| f[k]).sum::<f64>() / 3.0;
    (m.i_pk_a, m.lag_deg, m.rms_a, m.pp_max_a, m.pp_crest_a) =
        (mean(0), mean(1), mean(2), mean(3), mean(4));
    m.i_line_a = held_phase_mean(c, t, [ia, ib, ic], win);
    let bus: Vec<f64> = tab.col("i(vbus)")?.iter().map(|v| -v).collect();
    m.i_bus_a = between(t, &cumulative(t, &bus), win.0, win.1) / (win.1 - win.0);
    Ok(m)
}

/// Time limit of one bridge run, s.
pub const TP_TIMEOUT_S: u64 = 600;

/// Simulate and measure a bridge case.
pub fn simulate_bridge(c: &TpCase) -> Result<TpMeasured, String> {
    let (tab, _) = run_ngspice_within(&netlist_bridge(c)?, c.id, TP_TIMEOUT_S)?;
    measure_bridge(c, &tab)
}

// ------------------------------------------------------------ prediction

/// pwmplan's figures for a case, bridge sums (six devices) unless stated;
/// the gate's internal line is left out (the simulation measures the
/// drain–source power only).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct TpPredicted {
    pub total_w: f64,
    pub cond_w: f64,
    /// Switching, recovery, output-capacitance and commutation lines.
    pub edges_w: f64,
    pub diode_w: f64,
    pub pp_max_a: f64,
    pub rms_a: f64,
    /// Per high-side device.
    pub high_side_w: f64,
    /// Six-step: the duty pwmplan needs for the simulated held-phase current.
    pub duty: f64,
}

fn bridge_lines(hi: &LossLines, lo: &LossLines, p: &mut TpPredicted) {
    let s = |f: &dyn Fn(&LossLines) -> f64| 3.0 * (f(hi) + f(lo));
    p.cond_w = s(&|l| l.conduction_w());
    p.edges_w =
        s(&|l| l.switching_w + l.reverse_recovery_w + l.output_capacitance_w + l.commutation_w);
    p.diode_w = s(&|l| l.body_diode_w);
    p.total_w = s(&|l| l.total_w() - l.gate_internal_w);
    p.high_side_w = hi.total_w() - hi.gate_internal_w;
}

/// The case's gate drive as pwmplan takes it.
pub fn tp_drive(c: &TpCase) -> GateDrive {
    GateDrive {
        v_drive_v: c.v_drive_v,
        r_source_ohm: R_DRV_SOURCE_OHM,
        r_sink_ohm: R_DRV_SINK_OHM,
        r_ext_on_ohm: c.r_on_ohm,
        r_ext_off_ohm: c.r_off_ohm,
        prop_delay_s: 0.0,
        mismatch_s: 0.0,
        loop_inductance_h: 0.0,
        common_source_inductance_h: 0.0,
    }
}

/// pwmplan's prediction at the simulated operating point, at 25 °C (the
/// simulation's junction): sinusoidal through `sinusoidal_losses` (its
/// sample average with the non-linear transitions, as a plan reports) at
/// the case's m and zero sequence, the simulated current peak and cos φ of
/// its lag, and `sinusoidal_ripple_at` with that current; six-step through
/// `six_step_duty` for the simulated held-phase current (the path's two
/// R_ds(on) in the loop, as `evaluate` does), `six_step_ripple` and
/// `six_step_losses` at that duty.
pub fn predict_bridge(
    root: &std::path::Path,
    c: &TpCase,
    m: &TpMeasured,
) -> Result<TpPredicted, String> {
    let sw = load_switch_model(root, c.device)?;
    let drive = tp_drive(c);
    let stage = ThreePhaseStage {
        sw: &sw,
        drive: &drive,
        v_bus_v: c.v_bus_v,
        f_sw_hz: c.f_sw_hz,
        t_dead_s: c.t_dead_s,
    };
    let err = |e: tp::ThreePhaseError| format!("{}: {e:?}", c.id);
    let mut p = TpPredicted::default();
    match c.scheme {
        Scheme::Sine { zs, m: mi } => {
            let lag = m.lag_deg.to_radians();
            let point = SinusoidalPoint {
                modulation_index: mi,
                power_factor: lag.cos(),
                zero_sequence: zs,
                i_peak_a: m.i_pk_a,
            };
            let r = tp::sinusoidal_losses(&stage, &point, 25.0).map_err(err)?;
            bridge_lines(&r.exact.high_side, &r.exact.low_side, &mut p);
            let command = RippleCommand {
                modulation_index: mi,
                zero_sequence: zs,
                current: Some(PhaseCurrent {
                    peak_a: m.i_pk_a,
                    lag_rad: lag,
                }),
                electrical_hz: c.omega_e() / (2.0 * std::f64::consts::PI),
            };
            let rp = tp::sinusoidal_ripple_at(
                &stage,
                c.l_phase_h,
                &command,
                tp::DEFAULT_RIPPLE_ANGLES,
                0.0,
                0,
            )
            .map_err(err)?;
            p.pp_max_a = rp.pp_max_a;
            p.rms_a = (0.5 * m.i_pk_a * m.i_pk_a + rp.rms_a * rp.rms_a).sqrt();
        }
        Scheme::SixStep { chop, .. } => {
            let motor = MotorParams {
                r_phase_ohm: c.r_phase_ohm,
                l_phase_h: c.l_phase_h,
                ke_v_s_per_rad: c.e_v / c.omega_e(),
                pole_pairs: 1,
                back_emf_shape: BackEmfShape::Trapezoidal,
            };
            let r_ds = losses::r_ds_on_ohm(&sw, 25.0);
            let w_e = c.omega_e();
            let circuit = tp::SixStepCircuit {
                stage,
                motor,
                omega_e_rad_s: w_e,
                chop,
                r_ds_ohm: [r_ds, r_ds],
            };
            let guess = tp::six_step_duty_guess(&circuit, m.i_line_a);
            let sim = tp::six_step_simulated(&circuit, m.i_line_a, guess).map_err(err)?;
            let d = sim.duty;
            let w = tp::six_step_ripple(&stage, &motor, w_e, d, chop, 2.0 * r_ds).map_err(err)?;
            let l = sim.losses(&stage, r_ds, r_ds).map_err(err)?;
            bridge_lines(&l.high_side, &l.low_side, &mut p);
            p.duty = d;
            p.pp_max_a = w.ripple_pp_a();
            p.rms_a = f64::NAN;
        }
    }
    Ok(p)
}

// ------------------------------------------------------------ tables

pub const TP_INPUT_HEADER: &str = "id,device,scheme,variant,m_or_duty,v_bus_v,f_sw_hz,f_e_hz,t_dead_s,\
v_drive_v,r_on_ohm,r_off_ohm,r_phase_ohm,l_phase_h,i_a,phi_deg,e_v";
const TP_INPUTS: usize = 17;

/// The full header of `three_phase_reference.csv`.
pub fn tp_header() -> String {
    let mut s = String::from(TP_INPUT_HEADER);
    for kind in ["cond", "on", "off", "diode"] {
        for d in DEVICE_NAMES {
            let _ = write!(s, ",{kind}_{d}_w");
        }
    }
    s.push_str(",i_pk_a,lag_deg,rms_a,pp_max_a,pp_crest_a,i_line_a,i_bus_a");
    s
}

fn inputs_row(c: &TpCase) -> String {
    let (scheme, variant, x) = match c.scheme {
        Scheme::Sine { zs, m } => ("sine", format!("{zs:?}"), m),
        Scheme::SixStep { chop, duty } => ("six-step", format!("{chop:?}"), duty),
    };
    format!(
        "{},{},{scheme},{variant},{x},{},{},{},{:e},{},{},{},{},{:e},{},{},{}",
        c.id,
        c.device,
        c.v_bus_v,
        c.f_sw_hz,
        c.f_e_hz,
        c.t_dead_s,
        c.v_drive_v,
        c.r_on_ohm,
        c.r_off_ohm,
        c.r_phase_ohm,
        c.l_phase_h,
        c.i_a,
        c.phi_deg,
        c.e_v
    )
}

pub fn tp_row(c: &TpCase, m: &TpMeasured) -> String {
    let mut s = inputs_row(c);
    for a in [&m.cond_w, &m.on_w, &m.off_w, &m.diode_w] {
        for v in a {
            let _ = write!(s, ",{v:.6e}");
        }
    }
    for v in [
        m.i_pk_a,
        m.lag_deg,
        m.rms_a,
        m.pp_max_a,
        m.pp_crest_a,
        m.i_line_a,
        m.i_bus_a,
    ] {
        let _ = write!(s, ",{v:.6e}");
    }
    s
}

/// Rows of the committed table, matched to `TP_CASES` by id (a case whose
/// inputs changed is an error: rerun the example).
pub fn read_tp(text: &str) -> Result<Vec<(TpCase, TpMeasured)>, String> {
    let header = tp_header();
    let mut out = Vec::new();
    for line in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.is_empty())
    {
        if line == header {
            continue;
        }
        let f: Vec<&str> = line.split(',').collect();
        let c = TP_CASES
            .iter()
            .find(|c| c.id == f[0])
            .ok_or_else(|| format!("unknown three-phase case {}", f[0]))?;
        if inputs_row(c)
            .split(',')
            .ne(f.iter().copied().take(TP_INPUTS))
        {
            return Err(format!("{}: inputs changed; rerun the example", c.id));
        }
        let v: Vec<f64> = f[TP_INPUTS..]
            .iter()
            .map(|x| x.parse::<f64>().map_err(|e| format!("{}: {e}", c.id)))
            .collect::<Result<_, _>>()?;
        if v.len() != 31 {
            return Err(format!("{}: {} values, 31 expected", c.id, v.len()));
        }
        let arr = |k: usize| -> [f64; 6] { std::array::from_fn(|d| v[6 * k + d]) };
        let m = TpMeasured {
            cond_w: arr(0),
            on_w: arr(1),
            off_w: arr(2),
            diode_w: arr(3),
            i_pk_a: v[24],
            lag_deg: v[25],
            rms_a: v[26],
            pp_max_a: v[27],
            pp_crest_a: v[28],
            i_line_a: v[29],
            i_bus_a: v[30],
        };
        out.push((*c, m));
    }
    Ok(out)
}

/// One case's comparison.
pub type TpComparison = (TpCase, TpMeasured, TpPredicted);

pub fn tp_comparisons(
    root: &std::path::Path,
    rows: &[(TpCase, TpMeasured)],
) -> Result<Vec<TpComparison>, String> {
    rows.iter()
        .map(|(c, m)| Ok((*c, *m, predict_bridge(root, c, m)?)))
        .collect()
}

fn rel(pred: f64, sim: f64) -> f64 {
    pred / sim - 1.0
}

/// The figures compared, per case: (name, simulated, predicted), each a
/// relative error `predicted/simulated − 1`.
pub fn figures(x: &TpComparison) -> Vec<(&'static str, f64, f64)> {
    let (c, m, p) = x;
    let edges = TpMeasured::sum(&m.on_w) + TpMeasured::sum(&m.off_w);
    let mut v = vec![
        ("total", m.total_w(), p.total_w),
        ("conduction", TpMeasured::sum(&m.cond_w), p.cond_w),
        (
            "edges+diode",
            edges + TpMeasured::sum(&m.diode_w),
            p.edges_w + p.diode_w,
        ),
    ];
    match c.scheme {
        Scheme::Sine { .. } => {
            v.push(("ripple", m.pp_max_a, p.pp_max_a));
            v.push(("rms", m.rms_a, p.rms_a));
        }
        Scheme::SixStep { duty, .. } => {
            v.push(("high-side", m.high_side_w(), p.high_side_w));
            v.push(("duty", duty, p.duty));
        }
    }
    v
}

/// Relative errors of one figure over the cases of one scheme family.
pub fn errors_of(cmp: &[TpComparison], name: &str, six_step: bool) -> Vec<f64> {
    cmp.iter()
        .filter(|x| matches!(x.0.scheme, Scheme::SixStep { .. }) == six_step)
        .flat_map(figures)
        .filter(|f| f.0 == name)
        .map(|f| rel(f.2, f.1))
        .collect()
}

pub fn worst_abs(v: &[f64]) -> f64 {
    v.iter().fold(0.0_f64, |a, x| a.max(x.abs()))
}

/// `three_phase_errors.csv`.
pub fn tp_errors_csv(cmp: &[TpComparison]) -> String {
    let mut s = String::from(
        "# Generated by `cargo run --release --example spice_reference -- three-phase`; see README.md.\n\
         id,scheme,figure,simulated,predicted,error_pct\n",
    );
    for x in cmp {
        let scheme = inputs_row(&x.0).split(',').nth(3).unwrap_or("").to_string();
        for (name, sim, pred) in figures(x) {
            let _ = writeln!(
                s,
                "{},{scheme},{name},{sim:.5e},{pred:.5e},{:+.2}",
                x.0.id,
                100.0 * rel(pred, sim)
            );
        }
    }
    s
}

/// `three_phase_errors.md`.
pub fn tp_errors_md(cmp: &[TpComparison]) -> String {
    let mut s = String::from(
        "# pwmplan against the three-phase ngspice reference\n\n\
         Generated by `cargo run --release --example spice_reference -- three-phase`; \
         circuits and windows in README.md. Error = pwmplan / ngspice − 1.\n\n\
         | figure | cases | median |error| | worst |error| |\n|---|---|---|---|\n",
    );
    for (name, six) in [
        ("total", false),
        ("conduction", false),
        ("edges+diode", false),
        ("ripple", false),
        ("rms", false),
        ("total", true),
        ("conduction", true),
        ("high-side", true),
        ("duty", true),
    ] {
        let v = errors_of(cmp, name, six);
        let fam = if six { "six-step" } else { "sinusoidal" };
        let _ = writeln!(
            s,
            "| {fam} {name} | {} | {:.1} % | {:.1} % |",
            v.len(),
            100.0 * median_abs(&v),
            100.0 * worst_abs(&v)
        );
    }
    s.push_str(
        "\n| case | scheme | I_pk / lag sim | total W sim/pred | conduction W sim/pred | edges+diode W sim/pred | ripple A sim/pred | rms A sim/pred | high side W sim/pred | duty sim/pred | I held / bus A |\n|---|---|---|---|---|---|---|---|---|---|---|\n",
    );
    for x in cmp {
        let (c, m, _) = x;
        let f = figures(x);
        let cell = |k: usize| {
            f.get(k).map_or(String::from("–"), |(_, a, b)| {
                format!("{a:.3}/{b:.3} ({:+.1} %)", 100.0 * rel(*b, *a))
            })
        };
        let six = matches!(c.scheme, Scheme::SixStep { .. });
        let _ = writeln!(
            s,
            "| {} | {} | {:.2} A / {:.1}° | {} | {} | {} | {} | {} | {} | {} | {:.2}/{:.2} |",
            c.id,
            inputs_row(c)
                .split(',')
                .skip(2)
                .take(3)
                .collect::<Vec<_>>()
                .join(" "),
            m.i_pk_a,
            m.lag_deg,
            cell(0),
            cell(1),
            cell(2),
            if six { "–".into() } else { cell(3) },
            if six { "–".into() } else { cell(4) },
            if six { cell(3) } else { "–".into() },
            if six { cell(4) } else { "–".into() },
            m.i_line_a,
            m.i_bus_a,
        );
    }
    s
}
