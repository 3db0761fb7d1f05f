//! Six-step (block) commutation: the line-to-line ripple, the duty from the
//! motor constants, and the device losses per position role.

use super::inputs::*;
use super::loss_lines::*;
use crate::model::physics::params::SwitchModel;
use crate::model::physics::ripple::{self, Drive, MotorLoad, RippleWaveform, Segment};
use crate::model::physics::thermal;

// ---------------------------------------------------------------------------------------------
// Six-step
// ---------------------------------------------------------------------------------------------

/// `ripple::Drive` equivalent of a six-step chop: the freewheel loop holds one body diode
/// (`LowSideFreewheel { v_f_v: V_sd }`, the conducting channel's drop is in the load's
/// resistance) or a channel (`HalfBridgeSynchronous`).
pub fn six_step_drive(chop: Chop, sw: &SwitchModel) -> Drive {
    match chop {
        Chop::HighSide | Chop::LowSide => Drive::LowSideFreewheel { v_f_v: sw.v_sd_v },
        Chop::Complementary => Drive::HalfBridgeSynchronous,
    }
}

/// Line current of the two conducting phases over one PWM period (exact RL steady state of
/// `ripple::steady_state` on the line-to-line equivalent `MotorParams::line_line_load`); use
/// `acoustics::spectrum` / `assess` on it for the audibility.
pub fn six_step_ripple(
    stage: &ThreePhaseStage<'_>,
    motor: &MotorParams,
    omega_e_rad_s: f64,
    duty: f64,
    chop: Chop,
    r_path_ohm: f64,
) -> Result<RippleWaveform> {
    stage.validate()?;
    check("r_path_ohm", r_path_ohm, r_path_ohm >= 0.0)?;
    line_ripple(
        stage,
        &motor.line_line_load(omega_e_rad_s, r_path_ohm),
        duty,
        chop,
    )
}

/// The chopped line current's steady state on a line-to-line equivalent `load`.
fn line_ripple(
    stage: &ThreePhaseStage<'_>,
    load: &MotorLoad,
    duty: f64,
    chop: Chop,
) -> Result<RippleWaveform> {
    Ok(ripple::steady_state(
        load,
        six_step_drive(chop, stage.sw),
        stage.v_bus_v,
        duty,
        stage.f_sw_hz,
    )?)
}

/// [`six_step_ripple`] where the sector's swing is largest: the same waveform in continuous
/// conduction, where the swing does not depend on the line EMF (superposition); where the
/// line current stops in each off-time its peak rises as the line EMF falls, so the
/// waveform at the sector's lowest line EMF when its swing is the larger.
pub fn six_step_ripple_largest(
    stage: &ThreePhaseStage<'_>,
    motor: &MotorParams,
    omega_e_rad_s: f64,
    duty: f64,
    chop: Chop,
    r_path_ohm: f64,
) -> Result<RippleWaveform> {
    let w = six_step_ripple(stage, motor, omega_e_rad_s, duty, chop, r_path_ohm)?;
    if w.continuous() {
        return Ok(w);
    }
    let lowest = MotorLoad {
        back_emf_v: motor.six_step_line_emf_min_v(omega_e_rad_s),
        ..motor.line_line_load(omega_e_rad_s, r_path_ohm)
    };
    let edge = line_ripple(stage, &lowest, duty, chop)?;
    Ok(if edge.ripple_pp_a() > w.ripple_pp_a() {
        edge
    } else {
        w
    })
}

/// Mean DC-link (bus) current over a PWM period, A: the bus carries the line current only
/// while the chopping switch conducts, `(1/T)·∫₀^{D·T} i dt`; in every chop variant the
/// off-time loop closes inside the bridge (a body diode or the complementary channel), so the
/// bus carries nothing then (common practice; Krishnan, *Permanent Magnet Synchronous and
/// Brushless DC Motor Drives*, 2010, ch. 9, from memory). The dead times and the commutation
/// transient are left out. `w`'s segments start at the chopping switch's turn-on.
pub fn six_step_dc_link_mean_a(w: &RippleWaveform, duty: f64) -> f64 {
    let on_s = duty.clamp(0.0, 1.0) * w.period_s();
    let mut t = 0.0;
    let mut charge = 0.0;
    for s in w.segments() {
        let take = (on_s - t).min(s.duration_s());
        if take <= 0.0 {
            break;
        }
        charge += s.integral_over_a_s(take);
        t += s.duration_s();
    }
    charge / w.period_s()
}

/// Averaged-model duty for a mean line current I in continuous conduction: complementary
/// V·D = E_ll + R_ll·I; diode freewheel V·D − V_sd·(1 − D) = E_ll + R_ll·I (volt-second balance
/// of L·di/dt = v − R·i − E over a period, common practice; Krishnan 2010 for the line-to-line
/// picture, from memory). Not clamped; None when the denominator is not positive or the result
/// is not finite.
pub fn six_step_duty_estimate(
    load: &MotorLoad,
    chop: Chop,
    v_bus_v: f64,
    v_sd_v: f64,
    i_a: f64,
) -> Option<f64> {
    let drop = load.back_emf_v + load.r_ohm * i_a;
    let (num, den) = match chop {
        Chop::Complementary => (drop, v_bus_v),
        Chop::HighSide | Chop::LowSide => (drop + v_sd_v, v_bus_v + v_sd_v),
    };
    let d = num / den;
    (den > 0.0 && d.is_finite()).then_some(d)
}

/// Duty at which the mean line current (exact waveform, `six_step_ripple`) equals `i_target_a`:
/// bisection on D (the mean rises monotonically with D; in discontinuous conduction it depends on
/// f, so no closed form), as the single-phase code does. 0 when even D = 0 gives at least the
/// target; `DutyUnreachable` when D = 1 does not reach it.
pub fn six_step_duty(
    stage: &ThreePhaseStage<'_>,
    motor: &MotorParams,
    omega_e_rad_s: f64,
    chop: Chop,
    i_target_a: f64,
    r_path_ohm: f64,
) -> Result<f64> {
    check("i_target_a", i_target_a, true)?;
    let mean = |d: f64| {
        six_step_ripple(stage, motor, omega_e_rad_s, d, chop, r_path_ohm).map(|w| w.i_avg_a())
    };
    let at_full = mean(1.0)?;
    if at_full < i_target_a {
        return Err(ThreePhaseError::DutyUnreachable {
            i_target_a,
            i_at_full_duty_a: at_full,
        });
    }
    if mean(0.0)? >= i_target_a {
        return Ok(0.0);
    }
    let (mut lo, mut hi) = (0.0_f64, 1.0_f64);
    for _ in 0..80 {
        let mid = 0.5 * (lo + hi);
        if mean(mid)? < i_target_a {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo < 1e-13 {
            break;
        }
    }
    Ok(0.5 * (lo + hi))
}

/// Six-step operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SixStepPoint {
    /// Chopping scheme.
    pub chop: Chop,
    /// Chopping duty D (on-time of the chopping switch / T).
    pub duty: f64,
    /// Electrical frequency f_e = ω_e/2π (commutations).
    pub f_e_hz: f64,
}

/// Role of a switch position during its share of the electrical period.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum SixStepRole {
    /// PWMs at D during its 120° (the chopping side).
    Chopping,
    /// On for 120° as the return path of the other conducting phase.
    Conducting,
    /// The partner of the chopping switch in the same leg during that leg's 120°: body diode
    /// (`HighSide`/`LowSide` chop) or synchronous channel + dead-time diode (`Complementary`).
    Freewheeling,
    /// The floating phase's switches and the held switch's leg partner: the off-going
    /// current's body diode after a commutation, any diode conduction the floating phase's
    /// back-EMF drives (switch-by-switch model only).
    Idle,
}

/// One role's losses, averaged over the electrical period (already × its 1/3 share).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RoleLoss {
    /// Role.
    pub role: SixStepRole,
    /// Side of the switches that play it.
    pub side: Side,
    /// Loss lines.
    pub lines: LossLines,
    /// Gate charge/discharge cycles per second in this role.
    pub gate_cycles_per_s: f64,
}

/// Six-step losses: per role and per physical switch (each switch plays the roles of its side).
#[derive(Debug, Clone, PartialEq)]
pub struct SixStepLosses {
    /// Chopping, conducting and freewheeling.
    pub roles: Vec<RoleLoss>,
    /// Each high-side switch.
    pub high_side: LossLines,
    /// Each low-side switch.
    pub low_side: LossLines,
    /// Gate drive of all six switches: driver share.
    pub gate_driver_w: f64,
    /// Gate drive of all six switches: external resistor share.
    pub gate_external_w: f64,
}

impl SixStepLosses {
    /// Heat in the six switches.
    pub fn devices_total_w(&self) -> f64 {
        3.0 * (self.high_side.total_w() + self.low_side.total_w())
    }

    /// Switches + gate driver + external gate resistors.
    pub fn stage_total_w(&self) -> f64 {
        self.devices_total_w() + self.gate_driver_w + self.gate_external_w
    }

    /// The lines of a role, if present.
    pub fn role(&self, role: SixStepRole) -> Option<&RoleLoss> {
        self.roles.iter().find(|r| r.role == role)
    }
}

/// Sign-split integrals of the line current over a time range.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct SignedIntegrals {
    /// ∫ i dt where i > 0, A·s.
    i_pos: f64,
    /// ∫ |i| dt where i < 0, A·s.
    i_neg: f64,
    /// ∫ i² dt where i > 0, A²·s.
    i2_pos: f64,
    /// ∫ i² dt where i < 0, A²·s.
    i2_neg: f64,
}

/// `1 − e^(−x)` without cancellation.
pub(super) fn g1(x: f64) -> f64 {
    -(-x).exp_m1()
}

/// ∫_0^x (1 − e^(−u)) du = x − (1 − e^(−x)); Taylor series below 0.5 (closed form).
pub(super) fn h_int(x: f64) -> f64 {
    if x >= 0.5 {
        return x - g1(x);
    }
    let (mut term, mut sum) = (x * x / 2.0, 0.0);
    for n in 2..30 {
        sum += term;
        term *= -x / (f64::from(n) + 1.0);
    }
    sum
}

/// ∫_0^x (1 − e^(−u))² du = x − 2(1 − e^(−x)) + (1 − e^(−2x))/2; series below 0.5:
/// Σ_{n≥2} (−1)^n (2^n − 2) x^(n+1)/((n + 1)·n!) (closed form).
pub(super) fn q_int(x: f64) -> f64 {
    if x >= 0.5 {
        return x - 2.0 * g1(x) + 0.5 * g1(2.0 * x);
    }
    let (mut p, mut r, mut sum) = (1.0, 1.0, 0.0);
    for n in 1..32 {
        let nf = f64::from(n);
        p *= -x / nf;
        r *= -2.0 * x / nf;
        if n >= 2 {
            sum += (r - 2.0 * p) * x / (nf + 1.0);
        }
    }
    sum
}

/// (∫ i, ∫ i²) over local times [a, b] of a segment, with i = i_a + β·(1 − e^(−t/τ)),
/// β = i_inf − i_a: ∫i = i_a·d + β·τ·h(d/τ), ∫i² = i_a²·d + 2·i_a·β·τ·h + β²·τ·q (closed form).
pub(super) fn piece_moments(seg: &Segment, a: f64, b: f64) -> (f64, f64) {
    match *seg {
        Segment::Zero { .. } => (0.0, 0.0),
        Segment::Exponential { i_inf_a, tau_s, .. } => {
            let i0 = seg.value_at(a);
            let beta = i_inf_a - i0;
            let d = b - a;
            let x = d / tau_s;
            let (h, q) = (h_int(x), q_int(x));
            (
                i0 * d + beta * tau_s * h,
                i0 * i0 * d + 2.0 * i0 * beta * tau_s * h + beta * beta * tau_s * q,
            )
        }
    }
}

pub(super) fn add_piece(acc: &mut SignedIntegrals, seg: &Segment, a: f64, b: f64, sign_hint: f64) {
    let (s1, s2) = piece_moments(seg, a, b);
    if sign_hint >= 0.0 {
        acc.i_pos += s1.max(0.0);
        acc.i2_pos += s2;
    } else {
        acc.i_neg += (-s1).max(0.0);
        acc.i2_neg += s2;
    }
}

/// Sign-split ∫ i and ∫ i² of the waveform over [t0, t1] ⊂ [0, T]; each segment is monotonic,
/// so it crosses zero at most once (root by bisection).
pub(super) fn waveform_integrals(w: &RippleWaveform, t0: f64, t1: f64) -> SignedIntegrals {
    let mut acc = SignedIntegrals::default();
    let mut start = 0.0;
    for seg in w.segments() {
        let d = seg.duration_s();
        let (a, b) = (t0.max(start) - start, t1.min(start + d) - start);
        start += d;
        if b <= a {
            continue;
        }
        let (ia, ib) = (seg.value_at(a), seg.value_at(b));
        if ia * ib < 0.0 {
            let (mut lo, mut hi) = (a, b);
            for _ in 0..100 {
                let mid = 0.5 * (lo + hi);
                if seg.value_at(mid) * ia > 0.0 {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            let tz = 0.5 * (lo + hi);
            add_piece(&mut acc, seg, a, tz, ia);
            add_piece(&mut acc, seg, tz, b, ib);
        } else {
            add_piece(&mut acc, seg, a, b, ia + ib);
        }
    }
    acc
}

/// Per-role and per-switch losses of six-step at `point`, given the line-current waveform `w`
/// of one PWM period (`six_step_ripple` at the same duty; t = 0 at the chopping switch's turn-on).
///
/// Sequence (Krishnan 2010; Hendershot, Miller, *Design of Brushless Permanent-Magnet Motors*,
/// 1994; from memory): sectors of 60° with (+, −) phases A+B−, A+C−, B+C−, B+A−, C+A−, C+B−;
/// each phase conducts 120° in each direction and floats 60° between. Each switch position
/// therefore plays each role of its side for 1/3 of the electrical period:
/// - `HighSide` chop: high side = chopping; low side = conducting + freewheeling (body diode).
/// - `LowSide` chop: low side = chopping; high side = conducting + freewheeling (body diode).
/// - `Complementary`: high side = chopping; low side = conducting + freewheeling (channel on in
///   [D·T + t_dead, T − t_dead], body diode in the two dead times).
///
/// Lines (f_3 = f/3; F = f_3 − f_e counts the turn-ons that follow a freewheel, the first turn-on
/// of each 120° block starts from a floating phase at zero current and is not counted):
/// - chopping: conduction f_3·R·∫_0^{DT} i² dt; turn-on at i(0): hard if i(0) > 0 (E_on, the
///   partner's recovery at i(0) and the turn-on's slope (`ThreePhaseStage::recovery_j`, the
///   single-phase bridges' account: its switch share here, its diode share in the freewheeling
///   diode), E_oss, all at rate F), E_oss·F only if i(0) = 0
///   (discontinuous), soft if i(0) < 0; turn-off at i(DT): E_off·f_3 if i(DT) > 0.
///   With the complementary freewheel reversed (i < 0) the chopping switch's body diode takes
///   that dead time and the synchronous switch hard-switches (edge rule of the module docs).
/// - freewheeling, diode: V_sd·f_3·∫_{DT}^{T} i dt (the published (1/3)(1 − D)·I·V_sd for a flat
///   current); synchronous: f_3·R·∫ i² over its on-time (the (1/3)(1 − D)·I²·R of a flat
///   current, less the dead times) + V_sd·f_3·∫ i over the two dead times.
/// - conducting: f_3·R·∫_0^T i² dt (the (1/3)·I²·R of a flat current) and, once per electrical
///   period, a hard turn-off when its phase is commutated out, f_e·E_off(i(T)) (`commutation_w`;
///   the commutation is taken at a PWM period boundary, as timers apply it at the update event,
///   common practice; the current's commutation transient is not modelled).
/// - gate cycles: chopping f_3 (0 < D < 1), synchronous freewheel f_3, conducting f_e.
///
/// Assumes f ≥ 3·f_e (at least one PWM period per block).
pub fn six_step_losses(
    stage: &ThreePhaseStage<'_>,
    point: &SixStepPoint,
    w: &RippleWaveform,
    t_j_high_c: f64,
    t_j_low_c: f64,
) -> Result<SixStepLosses> {
    stage.validate()?;
    let (d, f_e) = (point.duty, point.f_e_hz);
    check("duty", d, (0.0..=1.0).contains(&d))?;
    check("f_e_hz", f_e, f_e >= 0.0 && 3.0 * f_e <= stage.f_sw_hz)?;
    check("t_j_high_c", t_j_high_c, true)?;
    check("t_j_low_c", t_j_low_c, true)?;
    let (sw, f) = (stage.sw, stage.f_sw_hz);
    let t = 1.0 / f;
    check(
        "waveform period_s",
        w.period_s(),
        (w.period_s() * f - 1.0).abs() < 1e-9,
    )?;
    let side_r = |s: Side| {
        thermal::r_ds_on_ohm(
            sw,
            if s == Side::High {
                t_j_high_c
            } else {
                t_j_low_c
            },
        )
    };
    let chop_side = point.chop.chopping_side();
    let (r_c, r_o) = (side_r(chop_side), side_r(chop_side.other()));
    let (f3, f_first) = (f / 3.0, (f / 3.0 - f_e).max(0.0));
    let (e_oss, v_sd) = (stage.e_oss_j(), sw.v_sd_v);
    let t_on = d * t;
    let k = SixStepRates {
        d,
        f_e,
        t,
        t_on,
        f3,
        f_first,
        r_c,
        r_o,
        e_oss,
        v_sd,
        switching: d > 0.0 && d < 1.0,
    };
    let (mut chop, mut free) = chopping_lines(stage, w, &k)?;
    freewheel_lines(stage, w, point.chop, &k, &mut chop, &mut free)?;
    let cond = conducting_lines(stage, w, &k)?;
    assemble_roles(stage, w, point.chop, &k, [chop, cond, free])
}

/// The shared rates, times and device figures of one six-step loss
/// evaluation (the locals of [`six_step_losses`], named once).
struct SixStepRates {
    /// Duty D of the chopping switch.
    d: f64,
    /// Electrical frequency f_e.
    f_e: f64,
    /// PWM period T = 1/f.
    t: f64,
    /// On-time D·T of the chopping switch.
    t_on: f64,
    /// f_3 = f/3, the rate of each role per switch position.
    f3: f64,
    /// F = f_3 − f_e (not below zero), the turn-ons that follow a freewheel.
    f_first: f64,
    /// Channel resistance of the chopping side at its junction temperature.
    r_c: f64,
    /// Channel resistance of the other side at its junction temperature.
    r_o: f64,
    /// E_oss at the supply voltage.
    e_oss: f64,
    /// Body-diode drop V_sd.
    v_sd: f64,
    /// Whether the chopping switch switches in the period (0 < D < 1).
    switching: bool,
}

/// The chopping switch's lines over its on-time (line current i > 0 is
/// forward), and the reverse-recovery share its hard turn-on puts in the
/// freewheeling diode (the chopping rules of [`six_step_losses`]; Krishnan
/// 2010; Hendershot, Miller 1994; from memory).
fn chopping_lines(
    stage: &ThreePhaseStage<'_>,
    w: &RippleWaveform,
    k: &SixStepRates,
) -> Result<(LossLines, LossLines)> {
    let (mut chop, mut free) = (LossLines::default(), LossLines::default());
    let (f3, f_first, r_c, e_oss) = (k.f3, k.f_first, k.r_c, k.e_oss);
    let on = waveform_integrals(w, 0.0, k.t_on);
    chop.conduction_forward_w = f3 * r_c * on.i2_pos;
    chop.conduction_reverse_w = f3 * r_c * on.i2_neg;
    let i0 = w.value_at(0.0);
    if k.switching {
        let i_off = w.value_at(k.t_on);
        let (e_on, e_off) = stage.energies(i0, i_off, r_c)?;
        if i0 > 0.0 {
            let (rec_switch_j, rec_diode_j) = stage.recovery_j(i0)?;
            chop.switching_w += f_first * e_on;
            chop.reverse_recovery_w += f_first * rec_switch_j;
            chop.output_capacitance_w += f_first * e_oss;
            free.reverse_recovery_w += f_first * rec_diode_j;
        } else if i0 == 0.0 {
            chop.output_capacitance_w += f_first * e_oss;
        }
        if i_off > 0.0 {
            chop.switching_w += f3 * e_off;
        }
    } else if k.d >= 1.0 && i0 > 0.0 {
        // Always on: it leaves its block by a hard turn-off, like a conducting switch.
        chop.commutation_w = k.f_e * stage.energies(i0, i0, r_c)?.1;
    }
    Ok((chop, free))
}

/// The freewheeling partner of the chopping switch over the off-time: a
/// body diode, or with complementary chopping a synchronous channel between
/// the dead times, whose body diodes (and the chopping switch's, for a
/// reversed current) take the dead times (the freewheeling rules of
/// [`six_step_losses`]; Krishnan 2010; Hendershot, Miller 1994; from memory).
fn freewheel_lines(
    stage: &ThreePhaseStage<'_>,
    w: &RippleWaveform,
    chop_kind: Chop,
    k: &SixStepRates,
    chop: &mut LossLines,
    free: &mut LossLines,
) -> Result<()> {
    let (t, t_on, f3, v_sd) = (k.t, k.t_on, k.f3, k.v_sd);
    match chop_kind {
        Chop::HighSide | Chop::LowSide => {
            let off = waveform_integrals(w, t_on, t);
            free.body_diode_w = f3 * v_sd * off.i_pos;
        }
        Chop::Complementary => {
            let td = stage.t_dead_s;
            let (s1, s2) = (t_on + td, t - td);
            let dead_ranges: Vec<(f64, f64)> = if s2 > s1 {
                synchronous_channel_lines(stage, w, k, (s1, s2), chop, free)?;
                vec![(t_on, s1), (s2, t)]
            } else {
                vec![(t_on, t)]
            };
            for (a, b) in dead_ranges {
                let di = waveform_integrals(w, a, b);
                free.body_diode_w += f3 * v_sd * di.i_pos;
                chop.body_diode_w += f3 * v_sd * di.i_neg;
            }
        }
    }
    Ok(())
}

/// The synchronous freewheeling channel, on over [s1, s2]: its conduction
/// (line current i > 0 flows source→drain in it: reverse) and its own edges,
/// hard when the freewheel current is reversed (edge rule of the module
/// docs), with the reverse-recovery share in the chopping switch's diode
/// (Krishnan 2010; Hendershot, Miller 1994; from memory).
fn synchronous_channel_lines(
    stage: &ThreePhaseStage<'_>,
    w: &RippleWaveform,
    k: &SixStepRates,
    (s1, s2): (f64, f64),
    chop: &mut LossLines,
    free: &mut LossLines,
) -> Result<()> {
    let (f3, r_o, e_oss) = (k.f3, k.r_o, k.e_oss);
    let ch = waveform_integrals(w, s1, s2);
    // Line current i > 0 flows source→drain in this switch: reverse.
    free.conduction_reverse_w = f3 * r_o * ch.i2_pos;
    free.conduction_forward_w = f3 * r_o * ch.i2_neg;
    let i_s1 = w.value_at(s1);
    let i_s2 = w.value_at(s2);
    let (e_on, e_off) = stage.energies(i_s1, i_s2, r_o)?;
    if i_s1 < 0.0 {
        let (rec_switch_j, rec_diode_j) = stage.recovery_j(i_s1)?;
        free.switching_w += f3 * e_on;
        free.reverse_recovery_w += f3 * rec_switch_j;
        free.output_capacitance_w += f3 * e_oss;
        chop.reverse_recovery_w += f3 * rec_diode_j;
    } else if i_s1 == 0.0 {
        free.output_capacitance_w += f3 * e_oss;
    }
    if i_s2 < 0.0 {
        free.switching_w += f3 * e_off;
    }
    Ok(())
}

/// The conducting switch of the other phase: on the whole period, then
/// commutated out by a hard turn-off once per electrical period (the
/// conducting rules of [`six_step_losses`]; Krishnan 2010; Hendershot,
/// Miller 1994; from memory; the commutation at a PWM period boundary is
/// common practice).
fn conducting_lines(
    stage: &ThreePhaseStage<'_>,
    w: &RippleWaveform,
    k: &SixStepRates,
) -> Result<LossLines> {
    let mut cond = LossLines::default();
    let full = waveform_integrals(w, 0.0, k.t);
    cond.conduction_forward_w = k.f3 * k.r_o * full.i2_pos;
    cond.conduction_reverse_w = k.f3 * k.r_o * full.i2_neg;
    let i0 = w.value_at(0.0);
    if i0 > 0.0 {
        cond.commutation_w = k.f_e * stage.energies(i0, i0, k.r_o)?.1;
    }
    Ok(cond)
}

/// The gate drive per role (chopping f_3 when it switches, f_e when always
/// on; synchronous freewheel f_3; conducting f_e), the roles with their
/// sides, and the per-side sums: the result of [`six_step_losses`] from the
/// chopping, conducting and freewheeling lines (each role 1/3 of the
/// electrical period per switch position: Krishnan 2010; Hendershot, Miller
/// 1994; from memory).
fn assemble_roles(
    stage: &ThreePhaseStage<'_>,
    w: &RippleWaveform,
    chop_kind: Chop,
    k: &SixStepRates,
    [chop, cond, free]: [LossLines; 3],
) -> Result<SixStepLosses> {
    let chop_side = chop_kind.chopping_side();
    let i_plateau = w.i_avg_a().abs();
    let chop_cycles = if k.switching {
        k.f3
    } else if k.d >= 1.0 {
        k.f_e
    } else {
        0.0
    };
    let free_cycles = match chop_kind {
        Chop::Complementary if k.t - stage.t_dead_s > k.t_on + stage.t_dead_s => k.f3,
        _ => 0.0,
    };
    with_gate_drive(
        stage,
        i_plateau,
        vec![
            (SixStepRole::Chopping, chop_side, chop, chop_cycles),
            (SixStepRole::Conducting, chop_side.other(), cond, k.f_e),
            (
                SixStepRole::Freewheeling,
                chop_side.other(),
                free,
                free_cycles,
            ),
        ],
    )
}

/// Each role's gate drive at its rate of gate cycles per switch (the plateau at
/// `i_plateau_a`; its internal share in the role's lines, the driver's and the external
/// resistors' for all six switches), and the per-side sums of the roles (each switch of a
/// side plays every role of that side over the electrical period).
pub(super) fn with_gate_drive(
    stage: &ThreePhaseStage<'_>,
    i_plateau_a: f64,
    items: Vec<(SixStepRole, Side, LossLines, f64)>,
) -> Result<SixStepLosses> {
    let mut roles = Vec::with_capacity(items.len());
    let (mut driver, mut external) = (0.0, 0.0);
    for (role, side, mut lines, cycles) in items {
        let g = stage.gate(cycles, i_plateau_a)?;
        lines.gate_internal_w = g.internal_w;
        driver += 3.0 * g.driver_w;
        external += 3.0 * g.external_w;
        roles.push(RoleLoss {
            role,
            side,
            lines,
            gate_cycles_per_s: cycles,
        });
    }
    let side_sum = |s: Side| {
        roles
            .iter()
            .filter(|r| r.side == s)
            .fold(LossLines::default(), |acc, r| acc.plus(&r.lines))
    };
    Ok(SixStepLosses {
        high_side: side_sum(Side::High),
        low_side: side_sum(Side::Low),
        roles,
        gate_driver_w: driver,
        gate_external_w: external,
    })
}

/// The diode-freewheel intervals after a six-step commutation, s: `(positive, negative)`,
/// the time the off-going phase of the positive rail (then of the negative rail) keeps
/// conducting through its partner's body diode until its current reaches zero.
///
/// Star circuit `v_k − v_n = R·i_k + L·di_k/dt + e_k`, `v_n = (Σv − Σe)/3` (currents summing
/// to zero), at the sector boundary with the PWM-averaged terminal voltages (the line voltage
/// D·V between the rails' phases: high-side chopping puts D·V and 0 on them, low-side
/// chopping V and (1 − D)·V); the off-going phase's terminal sits at the rail its diode
/// clamps it to, and its current falls at the slope the boundary's voltages give, taken
/// constant: `t = L·I/u`, u the voltage across its inductance then (our own linearisation of the standard commutation
/// picture; Krishnan, *Permanent Magnet Synchronous and Brushless DC Motor Drives*, 2010,
/// ch. 9, from memory). Back-EMFs from `shape` at the two boundaries 90° (negative-rail
/// commutation) and 150° (positive-rail), in the angle convention of [`super::sectors`].
/// `None` when a slope does not drive the current to zero (the interval never ends).
pub fn six_step_commutation_s(
    motor: &MotorParams,
    omega_e_rad_s: f64,
    v_bus_v: f64,
    duty: f64,
    chop: Chop,
    i_a: f64,
) -> Option<(f64, f64)> {
    let e_pk = motor.phase_emf_peak_v(omega_e_rad_s);
    let shape = |theta_deg: f64, phase: f64| {
        let th = (theta_deg - 120.0 * phase).to_radians();
        e_pk * match motor.back_emf_shape {
            BackEmfShape::Sinusoidal => th.sin(),
            BackEmfShape::Trapezoidal => trapezoid(th),
        }
    };
    let (v_pos, v_neg) = match chop {
        Chop::LowSide => (v_bus_v, (1.0 - duty) * v_bus_v),
        Chop::HighSide | Chop::Complementary => (duty * v_bus_v, 0.0),
    };
    let (r, l) = (motor.r_phase_ohm, motor.l_phase_h);
    // 90°: A stays positive, B (negative) hands over to C; B's high-side diode clamps it to V.
    let e = [shape(90.0, 0.0), shape(90.0, 1.0), shape(90.0, 2.0)];
    let v_n = (v_pos + v_bus_v + v_neg - e.iter().sum::<f64>()) / 3.0;
    let slope_neg = v_bus_v - v_n + r * i_a - e[1];
    // 150°: C stays negative, A (positive) hands over to B; A's low-side diode clamps it to 0.
    let e = [shape(150.0, 0.0), shape(150.0, 1.0), shape(150.0, 2.0)];
    let v_n = (0.0 + v_pos + v_neg - e.iter().sum::<f64>()) / 3.0;
    let slope_pos = v_n + r * i_a + e[0];
    (slope_pos > 0.0 && slope_neg > 0.0).then(|| (l * i_a / slope_pos, l * i_a / slope_neg))
}

/// The 120°-flat trapezoid of unit height rising through zero at θ = 0 (common practice for
/// block-commutated motors): linear over ±30°, flat from 30° to 150° and from 210° to 330°.
pub(super) fn trapezoid(theta_rad: f64) -> f64 {
    let d = theta_rad.to_degrees().rem_euclid(360.0);
    match d {
        x if x < 30.0 => x / 30.0,
        x if x < 150.0 => 1.0,
        x if x < 210.0 => (180.0 - x) / 30.0,
        x if x < 330.0 => -1.0,
        x => (x - 360.0) / 30.0,
    }
}

#[cfg(test)]
mod commutation_tests {
    use super::*;

    /// By hand, a trapezoidal motor (E = 6 V, R = 0.1 Ω, L = 100 µH) at 24 V, D = 0.7,
    /// I = 8.65 A, high-side chopping. At 90°: e = (6, −6, −6), v = (16.8, 24, 0),
    /// v_n = (40.8 + 6)/3 = 15.6, u = 24 − 15.6 + 0.865 + 6 = 15.265 V, t = 865 µV·s / u =
    /// 56.67 µs. At 150°: e = (6, 6, −6), v = (0, 16.8, 0), v_n = (16.8 − 6)/3 = 3.6,
    /// u = 3.6 + 0.865 + 6 = 10.465 V, t = 82.66 µs.
    #[test]
    fn commutation_intervals_by_hand() {
        let motor = MotorParams {
            r_phase_ohm: 0.1,
            l_phase_h: 100e-6,
            ke_v_s_per_rad: 6.0 / 1000.0,
            pole_pairs: 1,
            back_emf_shape: BackEmfShape::Trapezoidal,
        };
        let (pos, neg) =
            six_step_commutation_s(&motor, 1000.0, 24.0, 0.7, Chop::HighSide, 8.65).unwrap();
        assert!((pos - 865e-6 / 10.465).abs() < 1e-9, "{pos}");
        assert!((neg - 865e-6 / 15.265).abs() < 1e-9, "{neg}");
        // Low-side chopping mirrors the rails: the two intervals swap.
        let (p2, n2) =
            six_step_commutation_s(&motor, 1000.0, 24.0, 0.7, Chop::LowSide, 8.65).unwrap();
        assert!(
            (p2 - neg).abs() < 1e-12 && (n2 - pos).abs() < 1e-12,
            "{p2} {n2}"
        );
    }
}
