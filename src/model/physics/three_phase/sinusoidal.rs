//! Device losses under sinusoidal / space-vector (min-max) PWM: published
//! closed forms, the sample-by-sample average that checks them, and the same
//! average with the non-linear transition model.

use std::f64::consts::PI;

use super::inputs::*;
use super::loss_lines::*;
use crate::model::physics::losses::GateDriveLoss;
use crate::model::physics::thermal;

// ---------------------------------------------------------------------------------------------
// Sinusoidal / space-vector PWM losses
// ---------------------------------------------------------------------------------------------

/// Losses of the six switches under sinusoidal / space-vector PWM.
#[derive(Debug, Clone, PartialEq)]
pub struct SinusoidalLosses {
    /// Each high-side switch.
    pub high_side: LossLines,
    /// Each low-side switch (equal to the high side by half-wave symmetry).
    pub low_side: LossLines,
    /// Gate drive of one switch (Q_g·V_drv·f and its split).
    pub gate_per_switch: GateDriveLoss,
}

impl SinusoidalLosses {
    /// Heat in the six switches.
    pub fn devices_total_w(&self) -> f64 {
        3.0 * (self.high_side.total_w() + self.low_side.total_w())
    }

    /// Everything the bridge dissipates: switches + gate driver + external gate resistors.
    pub fn stage_total_w(&self) -> f64 {
        self.devices_total_w()
            + 6.0 * (self.gate_per_switch.driver_w + self.gate_per_switch.external_w)
    }
}

/// How the numerical average takes the switching energies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EnergyModel {
    /// E(|i|) = E(I_pk)·|i|/I_pk: the assumption of the closed forms (used as their check).
    LinearInCurrent,
    /// `switching::transitions` at |i(θ)|: the full non-linear model (the more exact value).
    Transitions,
}

/// Closed forms vs the more exact numerical average.
#[derive(Debug, Clone, PartialEq)]
pub struct SinusoidalReport {
    /// Published closed forms (see `sinusoidal_losses_closed_form`).
    pub closed_form: SinusoidalLosses,
    /// Sample-by-sample average with the non-linear transitions (720 samples).
    pub exact: SinusoidalLosses,
    /// (closed − exact)/exact of the per-switch total; 0 when the exact total is 0.
    pub closed_form_deviation_rel: f64,
}

/// Samples of θ per fundamental period used by `sinusoidal_losses`.
pub const DEFAULT_LOSS_SAMPLES: usize = 720;
/// Electrical angles used for the phase ripple by default.
pub const DEFAULT_RIPPLE_ANGLES: usize = 72;

/// Correction of the forward share of the conduction (coefficient of I_pk²·R) for min-max
/// zero sequence: −(1/π)·Σ_{n = 3, 9, 15, …} b_n·cos(nφ)/(n·(n² − 4)), with the Fourier sine
/// coefficients of the normalised injection z(θ) = mid(m·sin θ_x)/2
/// b_n = (3m/π)·[sin((n − 1)π/6)/(n − 1) − sin((n + 1)π/6)/(n + 1)] (b_3 = 3√3·m/(8π)).
///
/// Own derivation: the extra forward term is (1/2π)∫_{φ}^{φ+π} ½·z(θ)·sin²(θ − φ) dθ, and
/// ∫_0^π sin(nu)·sin²u du = −4/(n(n² − 4)) for odd n (its n = 1 case gives back the published
/// m·cos φ/(3π)). The leading term is −(√3/(40π²))·m·cos 3φ ≈ −0.0044·m·cos 3φ, i.e. up to
/// 1.75 %·m of the per-switch total I_pk²·R/4 moves between the forward and reverse lines. The
/// sum forward + reverse stays I_pk²·R/4 (z is anti-periodic over π, sin² periodic over π).
/// Kolar, Ertl, Zach, *Influence of the Modulation Method on the Conduction and Switching Losses
/// of a PWM Converter System*, 1991, report such a cos 3φ dependence (from memory).
///
/// With n = 3·(2k + 1), sin((n ∓ 1)π/6) = (−1)^k·√3/2, so b_n = (−1)^k·3√3·m/(π·(n² − 1));
/// cos(nφ) follows the recurrence cos((n + 6)φ) = 2·cos 6φ·cos nφ − cos((n − 6)φ) (the
/// Chebyshev recurrence; Abramowitz and Stegun 22.7.4), so the 400 terms cost no
/// trigonometric calls beyond three. The direct sum is kept in the tests as the reference.
pub fn min_max_forward_correction(modulation_index: f64, phi_rad: f64) -> f64 {
    let scale = 3.0 * 3.0_f64.sqrt() * modulation_index / PI;
    let two_cos_6 = 2.0 * (6.0 * phi_rad).cos();
    // cos(nφ) for the previous and the current n (n − 6 = −3 before the first).
    let (mut cos_prev, mut cos_n) = ((-3.0 * phi_rad).cos(), (3.0 * phi_rad).cos());
    let mut sum = 0.0;
    let mut sign = 1.0;
    for k in 0..400_u32 {
        let n = f64::from(3 * (2 * k + 1));
        sum += sign * scale / (n * n - 1.0) * cos_n / (n * (n * n - 4.0));
        (cos_prev, cos_n) = (cos_n, two_cos_6 * cos_n - cos_prev);
        sign = -sign;
    }
    -sum / PI
}

/// Per-switch losses by the published closed forms (every switch alike):
/// - conduction, forward (transistor) I_pk²·R·(1/8 + m·cos φ/(3π)) and reverse I_pk²·R·(1/8 −
///   m·cos φ/(3π)), summing to I_pk²·R/4 with synchronous rectification (Wintrich, Nicolai,
///   Tursky, Reimann, *Application Manual Power Semiconductors*, 2nd ed., 2015, inverter
///   conduction losses with r_CE → R_ds(on) and V_CE0 = 0; from memory); with min-max zero
///   sequence the split is shifted by `min_max_forward_correction` (own derivation); the
///   reverse line less the dead times, when the body diode and no channel carries the current:
///   2·t_dead per period while the switch is the leg's soft side, half the electrical period
///   with a mean i² of I_pk²/4, so I_pk²·R·t_dead·f/2 (own derivation; the sample sum takes
///   each angle's diode share instead);
/// - dead-time body diode V_sd·(2/π)·I_pk·t_dead·f: per leg two dead times per period, both in
///   the body diode of the switch not carrying forward current (low side for i > 0, see
///   `losses`), and the mean of |i| over the half period in which that is a given switch is
///   (1/2π)∫_0^π I_pk·sin u du = I_pk/π; so 2·t_dead·f·V_sd·I_pk/π (own derivation);
/// - switching (1/π)·f·(E_on + E_off)(I_pk): each switch hard-switches both edges while the
///   current flows forward in it, energies taken linear in current (Wintrich et al. 2015,
///   inverter switching losses with exponent 1; from memory); E_on, E_off from
///   `switching::transitions` at I_pk;
/// - reverse recovery (½ + ⅛)·Q_rr·V·f: half the time the switch turns on against its
///   partner's diode (Q_rr·V·f, `losses`), the other half its own diode recovers (¼·Q_rr·V·f,
///   `losses`); Q_rr constant;
/// - output capacitance ½·E_oss·f (hard turn-on half the time; E_oss from
///   `losses::output_capacitance_energy_j`);
/// - gate drive Q_g·V_drv·f per switch (`losses::gate_drive_loss`, plateau at the mean |i| =
///   2·I_pk/π).
///
/// `t_j_c` sets R_ds(on) (`thermal::r_ds_on_ohm`).
pub fn sinusoidal_losses_closed_form(
    stage: &ThreePhaseStage<'_>,
    point: &SinusoidalPoint,
    t_j_c: f64,
) -> Result<SinusoidalLosses> {
    stage.validate()?;
    point.validate()?;
    check("t_j_c", t_j_c, true)?;
    let (sw, f, v) = (stage.sw, stage.f_sw_hz, stage.v_bus_v);
    let i = point.i_peak_a;
    let r = thermal::r_ds_on_ohm(sw, t_j_c);
    let m_cos = point.modulation_index * point.power_factor / (3.0 * PI);
    let shift = match point.zero_sequence {
        ZeroSequence::None => 0.0,
        ZeroSequence::MinMax => min_max_forward_correction(point.modulation_index, point.phi_rad()),
    };
    let (e_on, e_off) = stage.energies(i, i, r)?;
    let gate = stage.gate(f, 2.0 * i / PI)?;
    let lines = LossLines {
        conduction_forward_w: i * i * r * (0.125 + m_cos + shift),
        conduction_reverse_w: i * i * r * (0.125 - m_cos - shift - 0.5 * stage.t_dead_s * f),
        body_diode_w: sw.v_sd_v * 2.0 / PI * i * stage.t_dead_s * f,
        switching_w: f * (e_on + e_off) / PI,
        reverse_recovery_w: (0.5 + 0.125) * sw.q_rr_c * v * f,
        output_capacitance_w: 0.5 * stage.e_oss_j() * f,
        gate_internal_w: gate.internal_w,
        commutation_w: 0.0,
    };
    Ok(SinusoidalLosses {
        high_side: lines,
        low_side: lines,
        gate_per_switch: gate,
    })
}

/// Leg duties at electrical angle θ: d_x = ½·(1 + m·sin(θ − 2πx/3) + z), z = −(max + min)/2 of
/// the three references for min-max (Holmes, Lipo 2003, from memory), clamped to 0..=1.
pub fn leg_duties(modulation_index: f64, zero_sequence: ZeroSequence, theta_rad: f64) -> [f64; 3] {
    let refs =
        [0.0, 1.0, 2.0].map(|x: f64| modulation_index * (theta_rad - 2.0 * PI * x / 3.0).sin());
    let z = match zero_sequence {
        ZeroSequence::None => 0.0,
        ZeroSequence::MinMax => {
            let hi = refs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let lo = refs.iter().copied().fold(f64::INFINITY, f64::min);
            -0.5 * (hi + lo)
        }
    };
    refs.map(|r| (0.5 * (1.0 + r + z)).clamp(0.0, 1.0))
}

/// Sample-by-sample average over one fundamental period (n samples of θ at the midpoints
/// (k + ½)·2π/n): at each θ the duty d = `leg_duties(..)[0]`, the current i = I_pk·sin(θ − φ);
/// high side d·i²·R, low side (1 − d)·i²·R (forward/reverse by the sign of i); the switch
/// carrying forward current hard-switches both edges (E_on + E_off at |i| per `energies`,
/// the partner's recovery into it, E_oss), its partner's body diode takes the two dead times
/// and its share of the recovery; no edge when d is 0 or 1. Gate as in the closed form. Edge
/// rule of `losses`. With `EnergyModel::Transitions` the edges are the single-phase bridges'
/// account at |i| (`ThreePhaseStage::edge_pair`: the diode's share of each dead time at
/// V_SD(|i|), the charge-control recovery at the turn-on's slope with the partner's output
/// charge); with `LinearInCurrent` the closed form's assumptions (the whole dead times at the
/// datasheet V_sd, Q_rr·V into the switch and ¼·Q_rr·V in the diode).
pub fn sinusoidal_losses_numerical(
    stage: &ThreePhaseStage<'_>,
    point: &SinusoidalPoint,
    t_j_c: f64,
    n_samples: usize,
    energies: EnergyModel,
) -> Result<SinusoidalLosses> {
    let samples = sinusoidal_loss_samples(stage, point, t_j_c, n_samples, energies)?;
    let (hs, ls) = samples.lines.iter().fold(
        (LossLines::default(), LossLines::default()),
        |(h, l), (sh, sl)| (h.plus(sh), l.plus(sl)),
    );
    let n = n_samples as f64;
    let gate = samples.gate_per_switch;
    let finish = |l: LossLines| LossLines {
        gate_internal_w: gate.internal_w,
        ..l.scaled(1.0 / n)
    };
    Ok(SinusoidalLosses {
        high_side: finish(hs),
        low_side: finish(ls),
        gate_per_switch: gate,
    })
}

/// Phase A's high- and low-side losses at each sample of the fundamental period.
#[derive(Debug, Clone)]
pub struct LossSamples {
    /// (high side, low side) at θ = (k + ½)·2π/n, without the gate line.
    pub lines: Vec<(LossLines, LossLines)>,
    /// The gate drive per switch (the same at every angle).
    pub gate_per_switch: GateDriveLoss,
}

impl LossSamples {
    /// Each sample's total per device (high side, low side) with the gate's
    /// internal share, W: the loss the junction sees at that angle when the
    /// fundamental is slow against the device's thermal time constants.
    pub fn totals_w(&self) -> Vec<(f64, f64)> {
        let g = self.gate_per_switch.internal_w;
        self.lines
            .iter()
            .map(|(h, l)| (h.total_w() + g, l.total_w() + g))
            .collect()
    }
}

/// The losses of [`sinusoidal_losses_numerical`] sample by sample (the
/// averages over a PWM period at each angle of the fundamental; same
/// model, same edges).
pub fn sinusoidal_loss_samples(
    stage: &ThreePhaseStage<'_>,
    point: &SinusoidalPoint,
    t_j_c: f64,
    n_samples: usize,
    energies: EnergyModel,
) -> Result<LossSamples> {
    stage.validate()?;
    point.validate()?;
    check("t_j_c", t_j_c, true)?;
    check("n_samples", n_samples as f64, n_samples >= 4)?;
    let (sw, f, v) = (stage.sw, stage.f_sw_hz, stage.v_bus_v);
    let i_pk = point.i_peak_a;
    let r = thermal::r_ds_on_ohm(sw, t_j_c);
    let phi = point.phi_rad();
    let e_oss = stage.e_oss_j();
    let (e_on_pk, e_off_pk) = stage.energies(i_pk, i_pk, r)?;
    let mut lines = Vec::with_capacity(n_samples);
    // Sample k + n/2 is half a fundamental period on: the same |i| (the
    // edges depend on |i| only), so each pair shares one edge evaluation.
    let half = if n_samples.is_multiple_of(2) {
        n_samples / 2
    } else {
        0
    };
    // (duty, current, edge pair once computed) of the first half period.
    type Sample = (f64, f64, Option<EdgePair>);
    let mut first_half: Vec<Sample> = vec![(0.0, 0.0, None); half];
    for k in 0..n_samples {
        let (mut hs, mut ls) = (LossLines::default(), LossLines::default());
        // Half a period on, the references, the zero sequence and the
        // current change sign: the duty becomes 1 − d and the current −i
        // (sin(θ + π − φ) = −sin(θ − φ)), so the second half reuses the first.
        let (d, i, known_edges) = if half > 0 && k >= half {
            let (d, i, e) = first_half[k - half];
            (1.0 - d, -i, e)
        } else {
            let theta = (k as f64 + 0.5) * 2.0 * PI / n_samples as f64;
            let d = leg_duties(point.modulation_index, point.zero_sequence, theta)[0];
            let i = i_pk * (theta - phi).sin();
            if k < half {
                first_half[k] = (d, i, None);
            }
            (d, i, None)
        };
        let i2r = i * i * r;
        if i > 0.0 {
            hs.conduction_forward_w += d * i2r;
            ls.conduction_reverse_w += (1.0 - d) * i2r;
        } else {
            hs.conduction_reverse_w += d * i2r;
            ls.conduction_forward_w += (1.0 - d) * i2r;
        }
        if d <= 0.0 || d >= 1.0 || i == 0.0 {
            lines.push((hs, ls));
            continue;
        }
        let e = match energies {
            EnergyModel::LinearInCurrent => {
                let k_lin = if i_pk > 0.0 { i.abs() / i_pk } else { 0.0 };
                EdgePair {
                    e_on_j: e_on_pk * k_lin,
                    e_off_j: e_off_pk * k_lin,
                    dead_time_diode_j: sw.v_sd_v * i.abs() * 2.0 * stage.t_dead_s,
                    dead_time_diode_s: 2.0 * stage.t_dead_s,
                    recovery_switch_j: sw.q_rr_c * v,
                    recovery_diode_j: 0.25 * sw.q_rr_c * v,
                }
            }
            EnergyModel::Transitions => match known_edges {
                Some(e) => e,
                None => {
                    let e = stage.edge_pair(i, r)?;
                    if k < half {
                        first_half[k].2 = Some(e);
                    }
                    e
                }
            },
        };
        {
            let (hard, soft) = if i > 0.0 {
                (&mut hs, &mut ls)
            } else {
                (&mut ls, &mut hs)
            };
            hard.switching_w += f * (e.e_on_j + e.e_off_j);
            hard.reverse_recovery_w += e.recovery_switch_j * f;
            hard.output_capacitance_w += e_oss * f;
            soft.reverse_recovery_w += e.recovery_diode_j * f;
            soft.body_diode_w += e.dead_time_diode_j * f;
            // While the diode carries the current no channel does: the leg's two channels
            // conduct for the period less the diode's time (the duties d and 1 − d cover the
            // whole period). Taken from the soft side, whose diode it is, in its reverse
            // conduction (common practice: one conducting path at a time).
            soft.conduction_reverse_w =
                (soft.conduction_reverse_w - e.dead_time_diode_s * f * i2r).max(0.0);
        }
        lines.push((hs, ls));
    }
    let gate_per_switch = stage.gate(f, 2.0 * i_pk / PI)?;
    Ok(LossSamples {
        lines,
        gate_per_switch,
    })
}

/// Closed forms and the more exact value (`sinusoidal_losses_numerical` with
/// `EnergyModel::Transitions`, `DEFAULT_LOSS_SAMPLES` samples), with the closed form's relative
/// deviation on the per-switch total. The closed form takes E_on, E_off linear in current from
/// their values at I_pk; the transition model is not linear (the plateau rises with current),
/// so the closed form's switching line is off by a few per cent (see the tests).
pub fn sinusoidal_losses(
    stage: &ThreePhaseStage<'_>,
    point: &SinusoidalPoint,
    t_j_c: f64,
) -> Result<SinusoidalReport> {
    let closed_form = sinusoidal_losses_closed_form(stage, point, t_j_c)?;
    let exact = sinusoidal_losses_numerical(
        stage,
        point,
        t_j_c,
        DEFAULT_LOSS_SAMPLES,
        EnergyModel::Transitions,
    )?;
    let (c, e) = (closed_form.high_side.total_w(), exact.high_side.total_w());
    let closed_form_deviation_rel = if e > 0.0 { (c - e) / e } else { 0.0 };
    Ok(SinusoidalReport {
        closed_form,
        exact,
        closed_form_deviation_rel,
    })
}

/// m and cos φ from the motor at electrical speed ω_e, phase-current peak I_pk and current
/// advance γ (0: current in phase with the back-EMF, i_d = 0; γ > 0 leads, field weakening).
///
/// Phasors (peaks, back-EMF on the real axis): V_ph = E + (R + jω_e·L)·I with E = k_e·ω_e and
/// I = I_pk·e^(jγ) (steady-state equation of a non-salient PM synchronous machine; Krishnan,
/// *Permanent Magnet Synchronous and Brushless DC Motor Drives*, 2010, from memory). Then
/// m = |V_ph|/(V/2) (module convention) and cos φ = cos(arg V_ph − arg I). Errors with
/// `Overmodulation` above the linear range of `zero_sequence`.
pub fn sinusoidal_point_from_motor(
    motor: &MotorParams,
    omega_e_rad_s: f64,
    i_peak_a: f64,
    current_advance_rad: f64,
    v_bus_v: f64,
    zero_sequence: ZeroSequence,
) -> Result<SinusoidalPoint> {
    let ideal = BridgeDrops {
        r_switch_ohm: 0.0,
        dead_time_mean_v: 0.0,
    };
    sinusoidal_point_with_drops(
        motor,
        omega_e_rad_s,
        i_peak_a,
        current_advance_rad,
        v_bus_v,
        zero_sequence,
        &ideal,
    )
    .map(|c| c.point)
}

/// The leg command of a sinusoidal operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SinusoidalCommand {
    pub point: SinusoidalPoint,
    /// Angle by which the commanded phase-voltage fundamental leads the back-EMF, rad.
    pub voltage_lead_rad: f64,
    /// Whether the account of the dead time's current harmonics settled (always for the
    /// first-order make-ups; see `dead_time::ErrorImpedance`).
    pub harmonics_settled: bool,
}

/// What a real leg takes off the voltage its duty asks for, phase by phase.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BridgeDrops {
    /// On-resistance of the conducting switch: the leg's output sits `i·R` below its ideal
    /// level whichever side conducts, so it adds to the phase resistance, Ω.
    pub r_switch_ohm: f64,
    /// Mean leg-voltage loss over a PWM period from the dead time while the current flows out
    /// of the leg (the reverse sign into it): `t_d·f·(V + 2·V_SD)`, V (the two edges of
    /// [`crate::model::physics::leg_voltage::offset_v`] with the current of one sign at both).
    pub dead_time_mean_v: f64,
}

/// [`sinusoidal_point_from_motor`] with the bridge's own losses made up, so that the
/// modulation index is the one a leg must be commanded with for the motor to carry `I_pk`.
///
/// The switch drop adds `R·I` in phase with the current. The dead-time loss follows the
/// current's sign, a square wave of height ΔV in phase with the current; its fundamental is
/// (4/π)·ΔV (Fourier series of a square wave; Mohan, Undeland, Robbins, *Power Electronics*,
/// 2003, ch. 8, the dead-time effect on the output voltage, from memory). Its odd triplen
/// harmonics cancel in a star with an isolated neutral; the 5th and 7th remain (not made
/// up). Near the current's zero crossings the ripple lets the current change sign within a
/// period and the loss shrinks there (not modelled: a small excess of the made-up voltage).
pub fn sinusoidal_point_with_drops(
    motor: &MotorParams,
    omega_e_rad_s: f64,
    i_peak_a: f64,
    current_advance_rad: f64,
    v_bus_v: f64,
    zero_sequence: ZeroSequence,
    drops: &BridgeDrops,
) -> Result<SinusoidalCommand> {
    check(
        "r_switch_ohm",
        drops.r_switch_ohm,
        drops.r_switch_ohm >= 0.0,
    )?;
    check(
        "dead_time_mean_v",
        drops.dead_time_mean_v,
        drops.dead_time_mean_v >= 0.0,
    )?;
    // The dead-time fundamental per ampere of the current phasor (none without current).
    let g = if i_peak_a > 0.0 {
        4.0 / PI * drops.dead_time_mean_v / i_peak_a
    } else {
        0.0
    };
    let operating = MotorOperatingPoint {
        omega_e_rad_s,
        i_peak_a,
        current_advance_rad,
        v_bus_v,
        zero_sequence,
    };
    sinusoidal_point_with_series(motor, &operating, drops.r_switch_ohm + g, 0.0)
}

/// Where a sinusoidal drive runs: speed, current and its advance, supply and zero sequence.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MotorOperatingPoint {
    pub omega_e_rad_s: f64,
    /// Phase-current peak, A.
    pub i_peak_a: f64,
    /// Current advance γ over the back-EMF, rad (0: i_d = 0).
    pub current_advance_rad: f64,
    pub v_bus_v: f64,
    pub zero_sequence: ZeroSequence,
}

/// The leg command when the bridge adds an impedance `r_extra + j·x_extra` in series with
/// each phase (what its legs take off, as a fraction of the current): the phasor equation of
/// [`sinusoidal_point_from_motor`] with `R + r_extra` and `ω_e·L + x_extra`.
pub fn sinusoidal_point_with_series(
    motor: &MotorParams,
    at: &MotorOperatingPoint,
    r_extra_ohm: f64,
    x_extra_ohm: f64,
) -> Result<SinusoidalCommand> {
    let MotorOperatingPoint {
        omega_e_rad_s,
        i_peak_a,
        current_advance_rad,
        v_bus_v,
        zero_sequence,
    } = *at;
    check("r_extra_ohm", r_extra_ohm, true)?;
    check("x_extra_ohm", x_extra_ohm, true)?;
    check("omega_e_rad_s", omega_e_rad_s, true)?;
    check("i_peak_a", i_peak_a, i_peak_a >= 0.0)?;
    check("current_advance_rad", current_advance_rad, true)?;
    check("v_bus_v", v_bus_v, v_bus_v > 0.0)?;
    check("r_phase_ohm", motor.r_phase_ohm, motor.r_phase_ohm >= 0.0)?;
    check("l_phase_h", motor.l_phase_h, motor.l_phase_h >= 0.0)?;
    check("ke_v_s_per_rad", motor.ke_v_s_per_rad, true)?;
    let (ic, is) = (
        i_peak_a * current_advance_rad.cos(),
        i_peak_a * current_advance_rad.sin(),
    );
    let x = omega_e_rad_s * motor.l_phase_h + x_extra_ohm;
    let r = motor.r_phase_ohm + r_extra_ohm;
    let re = motor.phase_emf_peak_v(omega_e_rad_s) + r * ic - x * is;
    let im = r * is + x * ic;
    let m = re.hypot(im) / (0.5 * v_bus_v);
    let phi = im.atan2(re) - current_advance_rad;
    let point = SinusoidalPoint {
        modulation_index: m,
        power_factor: if i_peak_a > 0.0 { phi.cos() } else { 1.0 },
        zero_sequence,
        i_peak_a,
    };
    point.validate()?;
    Ok(SinusoidalCommand {
        point,
        voltage_lead_rad: im.atan2(re),
        harmonics_settled: true,
    })
}

/// Mean DC-link current of a lossless bridge under sinusoidal modulation, A:
/// `I_dc = ¾·m·Î·cos φ`, the power balance `V·I_dc = (3/2)·(m·V/2)·Î·cos φ` (m the phase
/// voltage's fundamental peak over V/2, φ between phase voltage and current; a zero sequence
/// adds nothing, the three currents sum to zero). Holmes and Lipo, *Pulse Width Modulation
/// for Power Converters*, 2003, from memory. The bridge's own loss, drawn on top, is left out.
pub fn sinusoidal_dc_link_mean_a(modulation_index: f64, i_peak_a: f64, power_factor: f64) -> f64 {
    0.75 * modulation_index * i_peak_a * power_factor
}
