//! The three-phase bridge's inputs: the stage, the modulation, the
//! operating point and the motor constants, and why a computation is refused.

use std::f64::consts::PI;

use crate::model::physics::losses::{self, GateDriveLoss};
use crate::model::physics::params::{GateDrive, SwitchModel};
use crate::model::physics::ripple::{MotorLoad, RippleError};
use crate::model::physics::switching::{self, SwitchingError};
use crate::model::physics::{dead_time_diode, forward, recovery};

/// Why a three-phase computation was refused.
#[derive(Debug, Clone, PartialEq)]
pub enum ThreePhaseError {
    /// A transition could not be computed.
    Switching(SwitchingError),
    /// The ripple model refused its inputs.
    Ripple(RippleError),
    /// A value is not finite or outside its range.
    InvalidInput {
        /// Field name.
        name: &'static str,
        /// Offending value.
        value: f64,
    },
    /// The modulation index is above the linear range of the chosen zero sequence.
    Overmodulation {
        /// Requested (or computed) index.
        modulation_index: f64,
        /// 1 without zero sequence, 2/√3 with min-max.
        limit: f64,
    },
    /// Even at duty 1 the mean line current stays below the target.
    DutyUnreachable {
        /// Requested mean current.
        i_target_a: f64,
        /// Mean current at duty 1.
        i_at_full_duty_a: f64,
    },
    /// No low-side on-time fits the settling, dead time and sampling in one period.
    NoSamplingWindow {
        /// Needed low-side (complementary) time.
        min_low_side_on_s: f64,
        /// PWM period.
        period_s: f64,
    },
}

impl From<SwitchingError> for ThreePhaseError {
    fn from(e: SwitchingError) -> Self {
        ThreePhaseError::Switching(e)
    }
}

impl From<RippleError> for ThreePhaseError {
    fn from(e: RippleError) -> Self {
        ThreePhaseError::Ripple(e)
    }
}

pub(super) type Result<T> = std::result::Result<T, ThreePhaseError>;

pub(super) fn check(name: &'static str, value: f64, ok: bool) -> Result<()> {
    if value.is_finite() && ok {
        Ok(())
    } else {
        Err(ThreePhaseError::InvalidInput { name, value })
    }
}

// ---------------------------------------------------------------------------------------------
// Inputs
// ---------------------------------------------------------------------------------------------

/// The bridge: six identical switches, one gate drive per switch, bus, carrier, dead time.
#[derive(Debug, Clone, Copy)]
pub struct ThreePhaseStage<'a> {
    /// Switch model (all six identical).
    pub sw: &'a SwitchModel,
    /// Gate drive of each switch.
    pub drive: &'a GateDrive,
    /// DC-link voltage V.
    pub v_bus_v: f64,
    /// PWM (carrier) frequency of each leg.
    pub f_sw_hz: f64,
    /// Dead time inserted at each edge of a leg.
    pub t_dead_s: f64,
}

impl ThreePhaseStage<'_> {
    pub(super) fn validate(&self) -> Result<()> {
        check("v_bus_v", self.v_bus_v, self.v_bus_v > 0.0)?;
        check("f_sw_hz", self.f_sw_hz, self.f_sw_hz > 0.0)?;
        check("t_dead_s", self.t_dead_s, self.t_dead_s >= 0.0)?;
        // Two dead times must fit in a period.
        check(
            "t_dead_s",
            self.t_dead_s,
            2.0 * self.t_dead_s * self.f_sw_hz < 1.0,
        )
    }

    /// Turn-on / turn-off energies at the given currents (magnitudes), from
    /// `switching::transitions`.
    pub(super) fn energies(
        &self,
        i_on_a: f64,
        i_off_a: f64,
        r_ds_on_ohm: f64,
    ) -> Result<(f64, f64)> {
        let tr = switching::transitions(
            self.sw,
            self.drive,
            self.v_bus_v,
            i_on_a.abs(),
            i_off_a.abs(),
            r_ds_on_ohm,
        )?;
        Ok((tr.e_on_j, tr.e_off_j))
    }

    /// One leg's edge pair at a sinusoidal sample with current magnitude
    /// `i_a`, as the single-phase bridges account for it (`losses`): E_on and
    /// E_off of the hard-switching switch; the body-diode energy of its
    /// partner over the period's two dead times, V_SD(I)·I·t at each: after
    /// the hard turn-off from the hand-over to the soft turn-on, and after the
    /// soft turn-off from the channel's release to the hard turn-on
    /// (`dead_time_diode::LegEdges`, `forward::forward_voltage_v`); and the
    /// partner's recovery at the hard turn-on's slope
    /// (`recovery::partner_recovery`): the energy in the incoming switch and
    /// in the recovering diode.
    pub(super) fn edge_pair(&self, i_a: f64, r_ds_on_ohm: f64) -> Result<EdgePair> {
        let i = i_a.abs();
        let tr = switching::transitions(self.sw, self.drive, self.v_bus_v, i, i, r_ds_on_ohm)?;
        let edges = dead_time_diode::LegEdges {
            switch: self.sw,
            drive: self.drive,
            transitions: &tr,
            tau_s: recovery::body_diode_transit_time_memo_s(self.sw),
        };
        let release_s = switching::soft_release_s(self.sw, self.drive, i)?;
        let t_s = edges.after_hard_turn_off_s(self.t_dead_s)
            + edges.after_soft_turn_off_s(self.t_dead_s, release_s);
        let (recovery_switch_j, recovery_diode_j) = self.recovery_j(i)?;
        Ok(EdgePair {
            e_on_j: tr.e_on_j,
            e_off_j: tr.e_off_j,
            dead_time_diode_j: forward::forward_voltage_v(self.sw, i) * i * t_s,
            dead_time_diode_s: t_s,
            recovery_switch_j,
            recovery_diode_j,
        })
    }

    /// A partner's recovery when a switch turns on hard at `i_a`
    /// (`recovery::partner_recovery`): (energy in the incoming switch, energy
    /// in the recovering diode), J.
    pub(super) fn recovery_j(&self, i_a: f64) -> Result<(f64, f64)> {
        let tau_s = recovery::body_diode_transit_time_memo_s(self.sw);
        let rec = recovery::partner_recovery(self.sw, self.drive, self.v_bus_v, i_a.abs(), tau_s)?;
        Ok((rec.switch_j, rec.diode_j))
    }

    pub(super) fn e_oss_j(&self) -> f64 {
        losses::output_capacitance_energy_j(self.sw, self.v_bus_v).0
    }

    /// Gate-drive loss of one switch at `cycles_per_s` charge/discharge cycles, plateau taken at
    /// the current `i_plateau_a` (see `losses::gate_drive_loss`).
    pub(super) fn gate(&self, cycles_per_s: f64, i_plateau_a: f64) -> Result<GateDriveLoss> {
        let plateau = switching::plateau_voltage_v(self.sw, i_plateau_a)?;
        Ok(losses::gate_drive_loss(
            self.sw,
            self.drive,
            cycles_per_s,
            plateau,
        )?)
    }
}

/// A leg's edge pair at one current (`ThreePhaseStage::edge_pair`), J per
/// PWM period.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EdgePair {
    pub e_on_j: f64,
    pub e_off_j: f64,
    pub dead_time_diode_j: f64,
    /// Time the partner's body diode carries the current over the period's two dead times,
    /// s: the channels carry it for the rest of the period only.
    pub dead_time_diode_s: f64,
    pub recovery_switch_j: f64,
    pub recovery_diode_j: f64,
}

/// Zero-sequence signal added to the three sinusoidal references.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ZeroSequence {
    /// Plain sinusoidal PWM, linear up to m = 1.
    None,
    /// Min-max injection z = −(max + min)/2 of the three references, equivalent to space-vector
    /// PWM with the zero vectors split equally (Holmes, Lipo, *Pulse Width Modulation for Power
    /// Converters*, 2003, ch. 5-6; from memory). Linear up to m = 2/√3.
    MinMax,
}

impl ZeroSequence {
    /// Upper end of the linear range of m: 1, or 2/√3 with min-max (Holmes, Lipo 2003, from
    /// memory).
    pub fn linear_limit(self) -> f64 {
        match self {
            ZeroSequence::None => 1.0,
            ZeroSequence::MinMax => 2.0 / 3f64.sqrt(),
        }
    }
}

/// Which device chops in six-step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Chop {
    /// The positive phase's high side PWMs; the negative phase's low side stays on; the
    /// off-time current freewheels in the positive leg's low-side body diode.
    HighSide,
    /// The negative phase's low side PWMs; the positive phase's high side stays on; the
    /// off-time current freewheels in the negative leg's high-side body diode.
    LowSide,
    /// As `HighSide`, with the positive leg's low side switched complementarily (synchronous
    /// freewheel in its channel, body diode only in the dead times).
    Complementary,
}

impl Chop {
    /// Side of the chopping switch.
    pub fn chopping_side(self) -> Side {
        match self {
            Chop::HighSide | Chop::Complementary => Side::High,
            Chop::LowSide => Side::Low,
        }
    }
}

/// Modulation of the bridge, for the specification layer.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Modulation {
    /// Sinusoidal or space-vector PWM (see `SinusoidalPoint`).
    Sinusoidal {
        /// m (see the module conventions).
        modulation_index: f64,
        /// cos φ between the phase-voltage fundamental and the phase current.
        power_factor: f64,
        /// Zero-sequence injection.
        zero_sequence: ZeroSequence,
    },
    /// Six-step block commutation.
    SixStep {
        /// Chopping scheme.
        chop: Chop,
    },
}

/// Upper or lower switch of a leg.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Side {
    /// High side.
    High,
    /// Low side.
    Low,
}

impl Side {
    pub(super) fn other(self) -> Side {
        match self {
            Side::High => Side::Low,
            Side::Low => Side::High,
        }
    }
}

/// Operating point of sinusoidal / space-vector modulation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SinusoidalPoint {
    /// m, 0..=linear limit.
    pub modulation_index: f64,
    /// cos φ, −1..=1 (negative: generating).
    pub power_factor: f64,
    /// Zero sequence.
    pub zero_sequence: ZeroSequence,
    /// Phase-current peak I_pk.
    pub i_peak_a: f64,
}

impl SinusoidalPoint {
    pub(super) fn validate(&self) -> Result<()> {
        let m = self.modulation_index;
        check("modulation_index", m, m >= 0.0)?;
        let limit = self.zero_sequence.linear_limit();
        if m > limit * (1.0 + 1e-12) {
            return Err(ThreePhaseError::Overmodulation {
                modulation_index: m,
                limit,
            });
        }
        check(
            "power_factor",
            self.power_factor,
            (-1.0..=1.0).contains(&self.power_factor),
        )?;
        check("i_peak_a", self.i_peak_a, self.i_peak_a >= 0.0)
    }

    pub(super) fn phi_rad(&self) -> f64 {
        self.power_factor.clamp(-1.0, 1.0).acos()
    }
}

/// Shape of the back-EMF, for the six-step line-to-line value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BackEmfShape {
    /// Flat-topped (120° flat) phase back-EMF of peak k_e·ω_e.
    Trapezoidal,
    /// Sinusoidal phase back-EMF of peak k_e·ω_e.
    Sinusoidal,
}

/// Motor constants (star connected, balanced, no saliency).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MotorParams {
    /// Phase (line-to-neutral) resistance R.
    pub r_phase_ohm: f64,
    /// Phase inductance L (synchronous inductance, L_d = L_q).
    pub l_phase_h: f64,
    /// Line-to-neutral peak back-EMF per electrical rad/s, V·s/rad.
    pub ke_v_s_per_rad: f64,
    /// Pole pairs p.
    pub pole_pairs: u32,
    /// Back-EMF shape.
    pub back_emf_shape: BackEmfShape,
}

impl MotorParams {
    /// ω_e = p·2π·n/60 for a speed n in rpm (definition).
    pub fn electrical_rad_s(&self, speed_rpm: f64) -> f64 {
        f64::from(self.pole_pairs) * speed_rpm * 2.0 * PI / 60.0
    }

    /// Line-to-neutral back-EMF peak E_ph = k_e·ω_e (definition of k_e, see module docs).
    pub fn phase_emf_peak_v(&self, omega_e_rad_s: f64) -> f64 {
        self.ke_v_s_per_rad * omega_e_rad_s
    }

    /// Line-to-line back-EMF seen by the two conducting phases in six-step, averaged over a
    /// 60° sector: trapezoidal 2·E_ph (both flat tops in series; Krishnan, *Permanent Magnet
    /// Synchronous and Brushless DC Motor Drives*, 2010, from memory); sinusoidal
    /// (3√3/π)·E_ph, the mean of √3·E_ph·sin over 60°..120° (own derivation:
    /// ∫_{π/3}^{2π/3} sin = 1, so the mean is 3/π).
    pub fn six_step_line_emf_v(&self, omega_e_rad_s: f64) -> f64 {
        let e = self.phase_emf_peak_v(omega_e_rad_s);
        match self.back_emf_shape {
            BackEmfShape::Trapezoidal => 2.0 * e,
            BackEmfShape::Sinusoidal => 3.0 * 3f64.sqrt() / PI * e,
        }
    }

    /// The lowest line-to-line back-EMF the two conducting phases meet in a 60° sector:
    /// trapezoidal 2·E_ph (both on their flat tops all sector); sinusoidal
    /// √3·E_ph·sin 60° = 1.5·E_ph at the sector's edges (the line EMF √3·E_ph·sin over
    /// 60°..120°; definition).
    pub fn six_step_line_emf_min_v(&self, omega_e_rad_s: f64) -> f64 {
        let e = self.phase_emf_peak_v(omega_e_rad_s);
        match self.back_emf_shape {
            BackEmfShape::Trapezoidal => 2.0 * e,
            BackEmfShape::Sinusoidal => 1.5 * e,
        }
    }

    /// Line-to-line equivalent for six-step: 2R + `r_path_ohm`, 2L, the sector-mean line EMF.
    /// `r_path_ohm` adds the switches in the current path (2·R_ds(on) is our own choice, from
    /// counting the devices: the off-state path holds one channel and one diode or two channels,
    /// so 2·R_ds(on) is exact for `Chop::Complementary` and a slight overestimate otherwise; 0
    /// ignores them).
    pub fn line_line_load(&self, omega_e_rad_s: f64, r_path_ohm: f64) -> MotorLoad {
        MotorLoad {
            r_ohm: 2.0 * self.r_phase_ohm + r_path_ohm,
            l_h: 2.0 * self.l_phase_h,
            back_emf_v: self.six_step_line_emf_v(omega_e_rad_s),
        }
    }
}
