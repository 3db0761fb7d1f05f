//! From a validated design to the physics: the stage model at typical part
//! values, the operating cases, and the evaluation of one realisable PWM
//! setting against every constraint.
//!
//! **Invariant:** pure. No I/O, no printing; infeasibility is data (failed
//! constraints and findings), never an error.

use serde::{Deserialize, Serialize};

use crate::input::design::Design;
use crate::input::spec::*;
use crate::model::physics::acoustics::{self, AcousticVerdict, AudibleMode, Significance};
use crate::model::physics::capacitance;
use crate::model::physics::deadtime::{self, DeadTimeInputs};
use crate::model::physics::leg_voltage::{self, DeadTimeConditions, EdgeCurrents, StageLevels};
use crate::model::physics::load_line::OperatingRange;
use crate::model::physics::losses::{self, DeviceRole, StageLosses};
use crate::model::physics::params::{
    DiodeModel, EdgeModel, GateDrive, HBridgeModulation, LoadCurrent, OperatingPoint,
    RdsOnTemperature, RecoveryTest, SwitchModel, ThermalPath, Topology,
};
use crate::model::physics::ratings::{self, Finding, RatingInputs, Severity};
use crate::model::physics::ripple::{self, Drive, MotorLoad, RippleWaveform};
use crate::model::physics::thermal::{self, JunctionTemperature};
use crate::model::physics::three_phase::{
    self, BackEmfShape, Chop, LossLines, MotorParams, ThreePhaseStage, ZeroSequence,
};
use crate::model::physics::{sampling, switching};
use crate::model::timer::{
    self, Alignment, CompareLimits, DeadTimeGenerator, DeadTimeSegment, Prescaler, PwmSetting,
    TimerModel,
};

/// The power stage in SI, at typical datasheet values.
#[derive(Debug, Clone)]
pub struct StageModel {
    pub topology: Topology,
    pub switch: SwitchModel,
    pub drive: GateDrive,
    pub diode: Option<DiodeModel>,
    pub thermal: ThermalPath,
    /// Bootstrap refresh time, when the high side is bootstrapped.
    pub bootstrap_refresh_s: Option<f64>,
    /// How the followed switching edges are taken: interpolated for the
    /// plan's search, at each current in `spread`'s samples and corners.
    pub edges: EdgeModel,
}

/// One operating case the settings must hold at.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OperatingCase {
    pub name: &'static str,
    pub v_bus_v: f64,
    pub t_ambient_c: f64,
    pub load_current_a: f64,
    pub back_emf_v: f64,
}

/// Everything the evaluation needs, derived once from the design.
#[derive(Debug, Clone)]
pub struct Evaluator {
    pub stage: StageModel,
    pub timer: TimerModel,
    pub motor_r_ohm: f64,
    pub motor_l_h: f64,
    /// Rated load at nominal supply and the hottest ambient.
    pub rated: OperatingCase,
    /// Rated load at the highest supply and the hottest ambient (most
    /// switching loss and ripple).
    pub high_bus: OperatingCase,
    /// Rated load at the lowest supply (highest duty).
    pub low_bus: OperatingCase,
    pub limits: Limits,
    pub audible: AudibleMode,
    pub significance: Significance,
    pub dead_time_margin: f64,
    /// The dead time needed over the part spreads (slowest turn-off against
    /// fastest turn-on), set by [`Evaluator::new`]; shoot-through is not a
    /// typical-value question, so every setting uses it.
    pub dead_time_need_override_s: Option<f64>,
    /// A three-phase bridge: its modulation, motor and current sensing
    /// (`None` for the single-phase stages). `motor_r_ohm`/`motor_l_h` are
    /// then the phase values.
    pub three_phase: Option<ThreePhaseModel>,
    /// Sinusoidal commands already solved (shared by clones; keyed on every input).
    pub commands: three_phase::CommandMemo,
    /// The design's operating range (`None`: the rated point alone).
    pub range: Option<OperatingRange>,
    /// A brushed stage's current sensing, when the board has one.
    pub sensing: Option<BrushedSensing>,
}

/// A brushed stage's shunt, as the sampling sees it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BrushedSensing {
    pub stage: sampling::BrushedStage,
    pub place: sampling::ShuntPlace,
    /// Amplifier settling after the sensed state begins, s.
    pub settle_s: f64,
    /// ADC acquisition, s.
    pub acquire_s: f64,
    /// The loop rate the design asks for, Hz, where the board can sample at both counter
    /// extremes and update the compares there (an up-down count, a shunt in series with the
    /// motor, not a unipolar bridge, a timer whose update event comes at each extreme): at a
    /// centre-aligned setting whose PWM rate is below it the plan samples and updates every
    /// half period.
    pub half_period_rate_hz: Option<f64>,
}

/// What a three-phase bridge adds to the evaluator.
#[derive(Debug, Clone, PartialEq)]
pub struct ThreePhaseModel {
    pub modulation: ThreePhaseModulation,
    pub pole_pairs: u32,
    /// Line-to-neutral peak back-EMF per electrical rad/s.
    pub ke_v_s_per_rad: f64,
    pub back_emf_shape: BackEmfShape,
    /// Electrical speed at the operating point.
    pub omega_e_rad_s: f64,
    /// Shunt-amplifier settling after the low side turns on.
    pub settle_s: f64,
    /// ADC sampling time the window holds (both acquisitions with sequential conversion).
    pub sample_s: f64,
    /// One shunt in the DC link read in the two active vectors (`physics::three_phase::
    /// dc_link`) instead of low-side shunts in the legs.
    pub dc_link: bool,
}

/// Modulation of a three-phase bridge.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ThreePhaseModulation {
    Sinusoidal {
        zero_sequence: ZeroSequence,
        current_advance_rad: f64,
    },
    SixStep {
        chop: Chop,
    },
}

impl ThreePhaseModulation {
    /// The zero sequence added to the references (six-step: none).
    pub fn zero_sequence(&self) -> ZeroSequence {
        match *self {
            ThreePhaseModulation::Sinusoidal { zero_sequence, .. } => zero_sequence,
            ThreePhaseModulation::SixStep { .. } => ZeroSequence::None,
        }
    }

    /// Highest leg duty over the electrical period at index m: ½(1 + k·m)
    /// with k = 1 without zero sequence and √3/2 with min-max (the largest
    /// half line-to-line reference, Holmes, Lipo, *Pulse Width Modulation for
    /// Power Converters*, 2003, from memory); six-step: the chopping duty.
    pub fn leg_duty_max(&self, m: f64) -> f64 {
        match self {
            ThreePhaseModulation::Sinusoidal {
                zero_sequence: ZeroSequence::None,
                ..
            } => 0.5 * (1.0 + m),
            ThreePhaseModulation::Sinusoidal { .. } => 0.5 * (1.0 + 0.5 * 3f64.sqrt() * m),
            ThreePhaseModulation::SixStep { .. } => m,
        }
    }

    /// Highest duty of the MIDDLE leg over the electrical period: the two
    /// legs with the longest low-side on-time are sampled and the third
    /// current is i_a + i_b + i_c = 0 (three-shunt practice, common
    /// practice), so the middle leg binds the sampling window. Of three
    /// balanced references of amplitude m the middle one peaks at m/2;
    /// min-max adds z = b/2 to the middle value b (a + b + c = 0, own
    /// derivation), so ½(1 + m/2) or ½(1 + 3m/4). Six-step: the chopping
    /// duty (the conducting low side carries the line current).
    pub fn sampled_leg_duty_max(&self, m: f64) -> f64 {
        match self {
            ThreePhaseModulation::Sinusoidal {
                zero_sequence: ZeroSequence::None,
                ..
            } => 0.5 * (1.0 + 0.5 * m),
            ThreePhaseModulation::Sinusoidal { .. } => 0.5 * (1.0 + 0.75 * m),
            ThreePhaseModulation::SixStep { .. } => m,
        }
    }
}

/// The design's constraints in SI.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Limits {
    pub t_j_max_c: f64,
    pub ripple_pp_max_a: Option<f64>,
    pub min_resolution_bits: Option<f64>,
    pub f_min_hz: f64,
    pub f_max_hz: f64,
    /// Highest turn-off drain voltage allowed: V_DSS less the board's
    /// margin; only with a loop inductance (without one there is no
    /// overshoot to check).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub v_ds_peak_max_v: Option<f64>,
}

// The default lower edge is the design's (its checks use it); kept here too.
pub use crate::input::design::DEFAULT_F_MIN_HZ;
/// Share of V_DSS kept free of the turn-off peak when the board gives no
/// `stage.v_ds_margin`: 20 % (common practice, an 80 % voltage derating).
pub const DEFAULT_V_DS_MARGIN: f64 = 0.2;

/// Default upper edge when the design gives none (common practice for
/// hard-switched silicon motor stages).
pub const DEFAULT_F_MAX_HZ: f64 = 100_000.0;

/// The commutation loop's inductance: the board's `loop_inductance`, or the
/// common-source inductance alone where only that is given (the source lead
/// is part of the loop), else 0.
fn loop_inductance_h(stage: &crate::input::spec::StageSpec) -> f64 {
    stage
        .loop_inductance
        .or(stage.common_source_inductance)
        .map_or(0.0, |l| l.si)
}

/// Gate-driver output resistance from a peak current: R = V_drive/I_peak
/// (common practice for datasheets that give peak currents).
fn driver_resistance(e: &Either2<Ohm, Ampere>, v_drive_v: f64) -> f64 {
    if e.is_first() { e.si } else { v_drive_v / e.si }
}

/// Share by which a C_rss curve's Miller charge over the gate-charge test
/// swing may differ from the datasheet Q_gd before pwmplan reports the
/// disagreement as a warning (own choice: a curve read off a log-log plot
/// and a typical Q_gd agree within about this much on consistent data).
pub const C_RSS_Q_GD_TOLERANCE: f64 = 0.25;

/// How a C_rss curve was reconciled with the datasheet Q_gd.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrssReconciliation {
    /// Miller charge of the curve as written over the test swing, C.
    pub curve_q_gd_c: f64,
    /// The datasheet Q_gd (typical), C.
    pub q_gd_c: f64,
    /// Drain voltage of the gate-charge test, V, and whether the switch
    /// file gave it (else half of V_DSS).
    pub v_test_v: f64,
    pub v_test_given: bool,
    /// The factor the curve is scaled by: `q_gd_c / curve_q_gd_c`.
    pub factor: f64,
}

impl CrssReconciliation {
    /// The curve and Q_gd disagree by more than [`C_RSS_Q_GD_TOLERANCE`].
    pub fn disagrees(&self) -> bool {
        (self.factor - 1.0).abs() > C_RSS_Q_GD_TOLERANCE
    }
}

/// Reconcile a C_rss curve with Q_gd: the Miller charge the curve gives
/// over the datasheet's gate-charge test swing, Q = ∫C_gd dV with the drain
/// falling from the test voltage to the on state (≈ 0 V) and the gate on the
/// plateau (`switching::miller_integrals`, the same integral the switching
/// model uses; Q = ∫C dV is the definition of charge on a nonlinear
/// capacitance, common practice), against the datasheet Q_gd, which is that
/// same charge measured. `None` without a curve or when the curve gives no charge.
///
/// The plateau is the datasheet plateau, else V_th (own choice: the test
/// current is not in the switch file); the test voltage is `q_g.at_v_ds`,
/// else half of V_DSS (own choice: datasheets test gate charge at about
/// 50–80 % of V_DSS; the lower end gives the smaller curve integral).
pub fn c_rss_reconciliation(s: &SwitchSpec) -> Option<CrssReconciliation> {
    let sw = switch_model_as_written(s);
    if sw.c_rss_curve.is_empty() {
        return None;
    }
    let (v_test_v, v_test_given) = match s.q_g.at_v_ds {
        Some(v) => (v.si, true),
        None => (0.5 * s.v_dss.si, false),
    };
    let plateau = sw.v_plateau_v.unwrap_or(sw.v_th_v);
    let (q, _) = capacitance::miller_integrals(&sw, 0.0, v_test_v, plateau)?;
    (q.is_finite() && q > 0.0 && sw.q_gd_c > 0.0).then(|| CrssReconciliation {
        curve_q_gd_c: q,
        q_gd_c: sw.q_gd_c,
        v_test_v,
        v_test_given,
        factor: sw.q_gd_c / q,
    })
}

/// Switch model at typical values. A C_rss curve is scaled so that its
/// Miller charge over the gate-charge test swing equals Q_gd
/// ([`c_rss_reconciliation`]): the curve gives the shape of C_gd(V), Q_gd
/// its size, so a larger Q_gd (a slower part) always means slower Miller
/// edges, more switching loss and a longer dead time (issue 14, defect 6).
pub fn switch_model(s: &SwitchSpec) -> SwitchModel {
    let mut m = switch_model_as_written(s);
    if let Some(r) = c_rss_reconciliation(s) {
        for p in &mut m.c_rss_curve {
            p.1 *= r.factor;
        }
    }
    m
}

/// Switch model at typical values with the C_rss curve as written.
fn switch_model_as_written(s: &SwitchSpec) -> SwitchModel {
    SwitchModel {
        v_th_v: s.v_th.typ.si,
        g_fs_s: s.g_fs.map(|g| g.si),
        v_plateau_v: s.v_plateau.map(|v| v.si),
        q_g_c: s.q_g.typ.si,
        q_g_at_v_gs_v: s.q_g.at_v_gs.si,
        q_g_at_i_d_a: s.q_g.at_i_d.map(|i| i.si),
        q_gs_c: s.q_gs.typ.si,
        q_gd_c: s.q_gd.typ.si,
        q_g_th_c: s.q_g_th.map(|q| q.si),
        c_iss_f: s.capacitance.c_iss.si,
        c_oss_f: s.capacitance.c_oss.si,
        c_oss_at_v_ds_v: s.capacitance.at_v_ds.si,
        c_rss_f: s.capacitance.c_rss.si,
        c_rss_at_v_ds_v: s.capacitance.at_v_ds.si,
        c_rss_curve: s
            .capacitance
            .c_rss_curve
            .iter()
            .map(|(v, c)| (v.si, c.si))
            .collect(),
        q_oss_c: s.q_oss.map(|q| q.si),
        q_oss_at_v_ds_v: s.q_oss_at_v_ds.map(|v| v.si),
        e_oss_j: s.e_oss.as_ref().map(|e| e.value.si),
        e_oss_at_v_ds_v: s.e_oss.as_ref().map(|e| e.at_v_ds.si),
        r_g_int_ohm: s.r_g_int.typ.si,
        r_ds_on_25_ohm: s.r_ds_on.typ.si,
        r_ds_on_spec_v_gs_v: s.r_ds_on.at_v_gs.si,
        r_ds_on_second_point: s
            .r_ds_on
            .second_point
            .as_ref()
            .map(|p| (p.at_v_gs.si, p.typ.si / s.r_ds_on.typ.si)),
        r_ds_on_temperature: match &s.r_ds_on_vs_temperature {
            Some(RdsOnTemperatureSpec::Points(p)) => {
                RdsOnTemperature::Curve(p.iter().map(|(t, k)| (t.si, *k)).collect())
            }
            Some(RdsOnTemperatureSpec::Coefficient(k)) => RdsOnTemperature::CoefficientPerK(k.si),
            None => RdsOnTemperature::PowerLaw,
        },
        v_sd_v: s.body_diode.v_sd.si,
        v_sd_test_a: s.body_diode.v_sd_at.as_ref().map(|i| i.si),
        v_sd_curve: s
            .body_diode
            .v_sd_curve
            .iter()
            .map(|(i, v)| (i.si, v.si))
            .collect(),
        q_rr_c: s.body_diode.q_rr.typ.si,
        t_rr_s: s.body_diode.t_rr.si,
        q_rr_test: s.body_diode.q_rr_test.as_ref().map(|t| RecoveryTest {
            i_f_a: t.i_f.si,
            di_dt_a_per_s: t.di_dt.si,
            v_r_v: t.v_r.si,
        }),
        v_gs_max_v: s.v_gs_max.si,
        t_j_max_c: s.t_j_max.si,
        v_ztc_v: s.v_ztc.map(|v| v.si),
        v_dss_v: s.v_dss.si,
        i_d_a: s.i_d.si,
    }
}

/// Stage model for a design with a given switch.
pub fn stage_model(board: &BoardSpec, sw: &SwitchSpec) -> StageModel {
    let g = &board.gate_driver;
    let v_drive = g.supply.si;
    let topology = match (board.stage.topology, board.stage.modulation) {
        (TopologySpec::LowSide, _) => Topology::LowSide,
        (TopologySpec::HBridge, Some(ModulationSpec::Bipolar)) => {
            Topology::HBridge(HBridgeModulation::Bipolar)
        }
        (TopologySpec::HBridge, _) => Topology::HBridge(HBridgeModulation::Unipolar),
        // Three-phase is refused at validation.
        (TopologySpec::HalfBridge | TopologySpec::ThreePhase, _) => Topology::HalfBridge,
    };
    let th = &board.thermal;
    let r_th_ja = match th.r_th_ja {
        Some(r) => r.si,
        None => {
            sw.r_th_jc.si
                + th.r_th_cs.map(|r| r.si).unwrap_or(0.0)
                + th.r_th_sa.map(|r| r.si).unwrap_or(0.0)
        }
    };
    let mut switch = switch_model(sw);
    // R_ds(on) at the actual drive (1 without a second datasheet point).
    switch.r_ds_on_25_ohm *= losses::r_ds_on_drive_factor(&switch, v_drive);
    StageModel {
        topology,
        edges: EdgeModel::Interpolated,
        switch,
        drive: GateDrive {
            v_drive_v: v_drive,
            r_source_ohm: driver_resistance(&g.source, v_drive),
            r_sink_ohm: driver_resistance(&g.sink, v_drive),
            r_ext_on_ohm: g.r_gate_on.si,
            r_ext_off_ohm: g.r_gate_off.si,
            prop_delay_s: g.propagation_delay.si,
            mismatch_s: g.delay_mismatch.si,
            loop_inductance_h: loop_inductance_h(&board.stage),
            common_source_inductance_h: board.stage.common_source_inductance.map_or(0.0, |l| l.si),
        },
        diode: board.stage.freewheel_diode.as_ref().map(|d| DiodeModel {
            v_f_v: d.v_f.si,
            r_d_ohm: d.r_d.map(|r| r.si).unwrap_or(0.0),
            q_rr_c: d.q_rr.si,
            t_rr_s: d.t_rr.si,
        }),
        thermal: ThermalPath {
            r_th_ja_k_per_w: r_th_ja,
            foster: th.foster.iter().map(|(r, t)| (r.si, t.si)).collect(),
        },
        bootstrap_refresh_s: match &g.high_side {
            Some(HighSideSupplySpec::Bootstrap { refresh_time, .. }) => Some(refresh_time.si),
            _ => None,
        },
    }
}

/// A brushed stage's current sensing: the board's `current_sensing`, its
/// shunt place there or in `overcurrent`.
fn brushed_sensing(d: &Design) -> Option<BrushedSensing> {
    use sampling::{BrushedStage, ShuntPlace};
    let cs = d.board.current_sensing.as_ref()?;
    let stage = match (d.board.stage.topology, d.board.stage.modulation) {
        (TopologySpec::LowSide, _) => BrushedStage::LowSide,
        (TopologySpec::HalfBridge, _) => BrushedStage::HalfBridge,
        (TopologySpec::HBridge, Some(ModulationSpec::Unipolar)) => BrushedStage::HBridgeUnipolar,
        (TopologySpec::HBridge, _) => BrushedStage::HBridgeBipolar,
        (TopologySpec::ThreePhase, _) => return None,
    };
    let place = cs
        .place
        .or_else(|| d.board.overcurrent.as_ref().map(|o| o.shunt.place))?;
    Some(BrushedSensing {
        stage,
        place: match place {
            ShuntPlaceSpec::SupplyReturn => ShuntPlace::SupplyReturn,
            ShuntPlaceSpec::Leg => ShuntPlace::Leg,
            ShuntPlaceSpec::Phase => ShuntPlace::Phase,
        },
        settle_s: cs.settle_time.si,
        acquire_s: cs.sample_time.si,
        half_period_rate_hz: half_period_rate_hz(d, stage, place),
    })
}

/// The asked loop rate where the board can update every half period (see
/// [`BrushedSensing::half_period_rate_hz`]).
fn half_period_rate_hz(
    d: &Design,
    stage: sampling::BrushedStage,
    place: ShuntPlaceSpec,
) -> Option<f64> {
    let each_extreme = d.board.timer.update_divider.as_ref()?.each_extreme;
    let fits = each_extreme
        && place == ShuntPlaceSpec::Phase
        && stage != sampling::BrushedStage::HBridgeUnipolar;
    if !fits {
        return None;
    }
    Some(d.spec.current_loop.as_ref()?.rate.as_ref()?.si)
}

/// The three-phase part of a design's evaluator, when its board is one.
fn three_phase_model(d: &Design) -> Option<ThreePhaseModel> {
    if d.board.stage.topology != TopologySpec::ThreePhase {
        return None;
    }
    let motor = crate::input::design::brushless_motor(&d.spec.motor)?;
    let sensing = d.board.current_sensing.as_ref()?;
    let modulation = match d.board.stage.modulation? {
        ModulationSpec::Sinusoidal { zero_sequence } => ThreePhaseModulation::Sinusoidal {
            zero_sequence: crate::input::design::zero_sequence(zero_sequence),
            current_advance_rad: d.spec.motor.current_advance_deg.unwrap_or(0.0).to_radians(),
        },
        ModulationSpec::SixStep { chop, .. } => ThreePhaseModulation::SixStep {
            chop: match chop {
                ChopSpec::HighSide => Chop::HighSide,
                ChopSpec::LowSide => Chop::LowSide,
                ChopSpec::Complementary => Chop::Complementary,
            },
        },
        ModulationSpec::Bipolar | ModulationSpec::Unipolar => return None,
    };
    Some(ThreePhaseModel {
        modulation,
        pole_pairs: motor.pole_pairs,
        ke_v_s_per_rad: motor.ke_v_s_per_rad,
        back_emf_shape: motor.back_emf_shape,
        omega_e_rad_s: f64::from(motor.pole_pairs) * d.spec.motor.operating_speed.si,
        settle_s: sensing.settle_time.si,
        // Two currents on one converter: the window holds both acquisitions, back to back.
        sample_s: sensing.sample_time.si
            * match sensing.conversion {
                Some(ConversionSpec::Sequential) => 2.0,
                _ => 1.0,
            },
        dc_link: sensing.place == Some(ShuntPlaceSpec::SupplyReturn),
    })
}

/// Timer model from the board file.
pub fn timer_model(t: &TimerSpec) -> TimerModel {
    TimerModel {
        clock_hz: t.clock.si,
        counter_bits: t.counter_bits,
        prescaler: match &t.prescaler {
            PrescalerSpec::Linear { min, max } => Prescaler::Linear {
                min_divider: *min,
                max_divider: *max,
                register_offset: 1,
            },
            PrescalerSpec::Ratios(r) => Prescaler::Ratios { ratios: r.clone() },
        },
        alignments: t
            .alignments
            .iter()
            .map(|a| match a {
                AlignmentSpec::Edge => Alignment::Edge,
                AlignmentSpec::Centre => Alignment::Centre,
            })
            .collect(),
        dead_time: match &t.dead_time {
            DeadTimeSpec::None => DeadTimeGenerator::None,
            DeadTimeSpec::Linear {
                clock_divider,
                max_ticks,
                ..
            } => DeadTimeGenerator::Linear {
                clock_divider: *clock_divider,
                max_ticks: *max_ticks,
            },
            DeadTimeSpec::Segmented {
                clock_divider,
                segments,
                ..
            } => DeadTimeGenerator::Segmented {
                clock_divider: *clock_divider,
                segments: segments
                    .iter()
                    .map(|s| DeadTimeSegment {
                        first_code: s.first_code,
                        count: s.count,
                        base: s.base,
                        step: s.step,
                    })
                    .collect(),
            },
        },
        compare: CompareLimits {
            min_pulse_s: t.min_pulse.map(|p| p.si).unwrap_or(0.0),
        },
    }
}

impl Evaluator {
    // `Evaluator::new` (typical values, dead time sized over the part
    // spreads) is in `spread`, which this module must not import.

    /// The same design with another switch fitted.
    pub fn with_switch(d: &Design, sw: &SwitchSpec) -> Evaluator {
        let s = &d.spec;
        let c = &s.constraints;
        let case = |name, v: f64| OperatingCase {
            name,
            v_bus_v: v,
            t_ambient_c: s.ambient.max.si,
            load_current_a: s.motor.rated_current.si,
            back_emf_v: d.back_emf_v,
        };
        let t_j_limit = match &c.junction {
            None => sw.t_j_max.si,
            Some(JunctionLimitSpec::Max(t)) => t.si.min(sw.t_j_max.si),
            Some(JunctionLimitSpec::Margin(m)) => sw.t_j_max.si - m.si,
        };
        let ripple_limit = c.max_ripple.map(|r| {
            if r.is_first() {
                r.si
            } else {
                r.si * s.motor.rated_current.si
            }
        });
        let hearing = acoustics::DEFAULT_HEARING_LIMIT_HZ;
        let audible = match &c.audible {
            AudibleSpec::Inaudible => AudibleMode::Inaudible {
                hearing_limit_hz: hearing,
            },
            AudibleSpec::InaudibleAbove(f) => AudibleMode::Inaudible {
                hearing_limit_hz: f.si,
            },
            AudibleSpec::Allowed => AudibleMode::Allowed,
            AudibleSpec::Avoid(bands) => AudibleMode::AvoidBands {
                bands: bands.iter().map(|(a, b)| (a.si, b.si)).collect(),
                hearing_limit_hz: hearing,
            },
        };
        let band = c.frequency.as_ref();
        Evaluator {
            stage: stage_model(&d.board, sw),
            timer: timer_model(&d.board.timer),
            motor_r_ohm: s.motor.resistance.si,
            motor_l_h: s.motor.inductance.si,
            rated: case("rated", s.supply.nominal.si),
            high_bus: case("high-bus", s.supply.max.si),
            low_bus: case("low-bus", s.supply.min.si),
            limits: Limits {
                t_j_max_c: t_j_limit,
                ripple_pp_max_a: ripple_limit,
                min_resolution_bits: c.min_resolution_bits,
                f_min_hz: band
                    .and_then(|b| b.min)
                    .map(|f| f.si)
                    .unwrap_or(DEFAULT_F_MIN_HZ),
                f_max_hz: band
                    .and_then(|b| b.max)
                    .map(|f| f.si)
                    .unwrap_or(DEFAULT_F_MAX_HZ),
                v_ds_peak_max_v: (loop_inductance_h(&d.board.stage) > 0.0).then(|| {
                    let margin = d
                        .board
                        .stage
                        .v_ds_margin
                        .map_or(DEFAULT_V_DS_MARGIN, |m| m.si);
                    sw.v_dss.si * (1.0 - margin)
                }),
            },
            audible,
            significance: Significance::default(),
            dead_time_margin: deadtime::DEFAULT_DEAD_TIME_MARGIN,
            dead_time_need_override_s: None,
            three_phase: three_phase_model(d),
            commands: three_phase::CommandMemo::default(),
            range: crate::input::design::operating_range(s),
            sensing: brushed_sensing(d),
        }
    }

    fn ripple_drive(&self) -> Drive {
        match self.stage.topology {
            Topology::LowSide => Drive::LowSideFreewheel {
                v_f_v: self.stage.diode.as_ref().map(|d| d.v_f_v).unwrap_or(0.0),
            },
            Topology::HalfBridge => Drive::HalfBridgeSynchronous,
            Topology::HBridge(HBridgeModulation::Bipolar) => Drive::HBridgeBipolar,
            Topology::HBridge(HBridgeModulation::Unipolar) => Drive::HBridgeUnipolar,
        }
    }

    /// Ripple-module duty (leg A / diagonal duty for an H-bridge) from the
    /// modulation ratio m = mean load voltage / bus voltage.
    fn ripple_duty(&self, m: f64) -> f64 {
        match self.stage.topology {
            Topology::HBridge(_) => 0.5 * (1.0 + m),
            _ => m,
        }
    }

    fn motor(&self, case: &OperatingCase) -> MotorLoad {
        MotorLoad {
            r_ohm: self.motor_r_ohm,
            l_h: self.motor_l_h,
            back_emf_v: case.back_emf_v,
        }
    }

    /// The exact periodic motor current at modulation ratio `m`.
    pub fn waveform(&self, case: &OperatingCase, m: f64, f_hz: f64) -> Option<RippleWaveform> {
        ripple::steady_state(
            &self.motor(case),
            self.ripple_drive(),
            case.v_bus_v,
            self.ripple_duty(m),
            f_hz,
        )
        .ok()
    }

    /// The modulation ratio at which the mean motor current equals the
    /// case's load current, by bisection on the exact waveform (the mean
    /// rises monotonically with duty; in discontinuous conduction it also
    /// depends on frequency, so it is solved per frequency).
    pub fn modulation_for_load(&self, case: &OperatingCase, f_hz: f64) -> Option<f64> {
        if let Some(tp) = &self.three_phase {
            let r_path = 2.0 * thermal::r_ds_on_ohm(&self.stage.switch, case.t_ambient_c);
            return self.three_phase_modulation(tp, case, f_hz, 0.0, r_path);
        }
        self.modulation_and_waveform(case, f_hz).map(|(m, _)| m)
    }

    /// [`Self::modulation_for_load`] of a single-phase stage with the
    /// waveform at that modulation (computed once for both).
    fn modulation_and_waveform(
        &self,
        case: &OperatingCase,
        f_hz: f64,
    ) -> Option<(f64, RippleWaveform)> {
        let target = case.load_current_a;
        // Continuous conduction has a closed form from the mean terminal
        // voltage (volt-second balance, common practice): bridges
        // I = (m·V − E)/R; switch + diode I = (D·V − (1 − D)·V_f − E)/R.
        let (r, v, e) = (self.motor_r_ohm, case.v_bus_v, case.back_emf_v);
        let guess = match self.ripple_drive() {
            Drive::LowSideFreewheel { v_f_v } => (e + target * r + v_f_v) / (v + v_f_v),
            _ => (e + target * r) / v,
        };
        if (0.0..=1.0).contains(&guess)
            && let Some(w) = self.waveform(case, guess, f_hz)
            && w.continuous()
            && (w.i_avg_a() - target).abs() <= 1e-9 * target.abs().max(1e-3)
        {
            return Some((guess, w));
        }
        // Discontinuous conduction: bisection on the exact waveform.
        let mean = |m: f64| self.waveform(case, m, f_hz).map(|w| w.i_avg_a());
        let (mut lo, mut hi) = (0.0_f64, 1.0_f64);
        if mean(hi)? < target {
            return None;
        }
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if mean(mid)? < target {
                lo = mid;
            } else {
                hi = mid;
            }
            if hi - lo < 1e-12 {
                break;
            }
        }
        let m = 0.5 * (lo + hi);
        Some((m, self.waveform(case, m, f_hz)?))
    }
}

/// Losses, temperatures and ripple of one operating case at one setting.
#[derive(Debug, Clone, Serialize)]
pub struct CaseResult {
    pub case: OperatingCase,
    /// Mean load voltage / bus voltage.
    pub modulation: f64,
    /// The compare duty (reference on-fraction) that gives this case's load
    /// current once the dead time and the conduction drops are counted:
    /// leg A of an H-bridge (leg B runs the complement), the single leg or
    /// switch otherwise, the highest leg duty of a three-phase bridge.
    pub compare_duty: f64,
    pub ripple: RippleFigures,
    pub losses: LossFigures,
    pub devices: Vec<DeviceFigures>,
    /// Hottest junction, `None` on thermal runaway.
    pub junction_c: Option<f64>,
    /// Why the junction temperature has no value.
    pub runaway: Option<String>,
    pub acoustic: AcousticFigures,
    /// Three-phase figures (absent for the single-phase stages).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub three_phase: Option<ThreePhaseCase>,
}

/// What a three-phase case adds.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ThreePhaseCase {
    /// `sinusoidal` or `six-step`.
    pub modulation: String,
    /// Sinusoidal: m (phase-voltage fundamental peak / (V/2)).
    pub modulation_index: Option<f64>,
    /// Sinusoidal: cos φ between phase voltage and current.
    pub power_factor: Option<f64>,
    /// Six-step: duty of the chopping switch.
    pub chop_duty: Option<f64>,
    /// Highest leg (compare) duty over the electrical period.
    pub leg_duty_max: f64,
    /// Highest duty of the leg the current sampling depends on.
    pub sampled_leg_duty_max: f64,
    pub electrical_frequency_hz: f64,
    /// Rated current as the model takes it: the phase-current peak (sinusoidal) or the line
    /// current, the mean current in the two conducting phases (six-step).
    pub current_a: f64,
    /// Mean current drawn from the DC link, A (the other current; `#[serde(default)]` reads
    /// plans written before it).
    #[serde(default)]
    pub dc_link_mean_a: f64,
    /// Six-step: the off-going phase's diode freewheel after a commutation, as simulated
    /// (written only for six-step).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub commutation: Option<CommutationFigure>,
    /// Each high-side and each low-side switch, W.
    pub high_side_w: f64,
    pub low_side_w: f64,
    /// Junction of each high-side and low-side switch.
    pub high_side_junction_c: Option<f64>,
    pub low_side_junction_c: Option<f64>,
    /// Sum over the six switches (channel, diode, switching, gate share in
    /// R_g,int), W.
    pub devices_total_w: f64,
    /// Gate-drive loss outside the switches (driver and external
    /// resistors), W: devices + this + motor ripple copper = total.
    pub gate_outside_devices_w: f64,
    /// Sinusoidal: (closed form − sample average)/sample average of the
    /// per-switch loss.
    pub closed_form_deviation_rel: Option<f64>,
    /// Sinusoidal: angle by which the commanded phase-voltage fundamental leads the back-EMF,
    /// rad (the leg duties are `½(1 + m·sin θ + zero sequence)`, the back-EMF of phase a
    /// `E·sin(θ − lead)`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub voltage_lead_rad: Option<f64>,
    /// Sinusoidal: the account of the current harmonics the dead time drives did not settle,
    /// so the modulation index makes up the dead time by its square-wave figure only
    /// (written only when true).
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub dead_time_harmonics_unsettled: bool,
    /// Six-step: the on-resistance of a high side and of a low side that the chopping duty
    /// was solved with (each at its own junction temperature), Ω.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub r_ds_on_sides_ohm: Option<[f64; 2]>,
}

/// Six-step: how long the off-going phase's current takes to reach zero
/// after a commutation (the longer of the two kinds, positive and negative
/// rail), against the sector.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CommutationFigure {
    /// The longer freewheel, s (the sector when it does not end).
    pub freewheel_s: f64,
    /// The sector, s.
    pub sector_s: f64,
    /// Whether the current reached zero before the next commutation.
    pub settles: bool,
}

/// The commutation figure of a simulation, against the sector π/(3·ω_e)
/// (the simulation's own holds a whole number of PWM periods).
fn commutation_figure(
    sim: &three_phase::SixStepSimulation,
    omega_e_rad_s: f64,
) -> CommutationFigure {
    let settles = sim.commutation_s.iter().all(Option::is_some);
    let freewheel_s = if settles {
        sim.commutation_s
            .iter()
            .flatten()
            .fold(0.0, |a: f64, &b| a.max(b))
    } else {
        std::f64::consts::PI / 3.0 / omega_e_rad_s
    };
    CommutationFigure {
        freewheel_s,
        sector_s: std::f64::consts::PI / 3.0 / omega_e_rad_s,
        settles,
    }
}

#[derive(Debug, Clone, Serialize)]
pub struct RippleFigures {
    pub mean_a: f64,
    pub rms_a: f64,
    pub max_a: f64,
    pub min_a: f64,
    pub peak_to_peak_a: f64,
    pub ac_rms_a: f64,
    pub continuous: bool,
    /// Fundamental frequency of the ripple (f, or 2f for unipolar switching).
    pub frequency_hz: f64,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct LossFigures {
    pub conduction: f64,
    pub switching: f64,
    pub output_capacitance: f64,
    pub reverse_recovery: f64,
    pub dead_time_diode: f64,
    pub gate_drive: f64,
    pub freewheel_diode: f64,
    pub motor_ripple_copper: f64,
    pub total: f64,
}

/// The parts of one hard turn-on, each on its own loss line: the crossover
/// in the channel (switching line, with `e_off_channel_j`), what the incoming
/// switch draws from its recovering partner (reverse-recovery line: stored
/// charge and the partner's output charge), and the switch's own output
/// capacitance discharged in its channel (output-capacitance line; inside the
/// switch, so not at its terminals).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct EOnParts {
    pub channel_j: f64,
    pub partner_recovery_j: f64,
    pub output_capacitance_j: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DeviceFigures {
    pub role: String,
    pub switched_current_on_a: f64,
    pub switched_current_off_a: f64,
    /// Turn-on energy at the drain terminal (what a double-pulse test
    /// integrates): `e_on_parts.channel_j + e_on_parts.partner_recovery_j`.
    pub e_on_j: f64,
    /// What one hard turn-on costs, part by part, each booked once (absent
    /// from plans of earlier versions: read as zeros).
    #[serde(default)]
    pub e_on_parts: EOnParts,
    /// Turn-off energy at the drain terminal (what a double-pulse test
    /// integrates).
    pub e_off_j: f64,
    /// The part of `e_off_j` dissipated in the channel, which the switching
    /// line books; the rest charges the switch's own output capacitance and
    /// is booked at its next hard turn-on (the output-capacitance line).
    pub e_off_channel_j: f64,
    /// Highest drain voltage at the hard turn-off, with the board's loop
    /// inductance (absent when the board gives none, or without a hard
    /// turn-off).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub v_peak_off_v: Option<f64>,
    pub t_delay_on_s: f64,
    pub t_delay_off_s: f64,
    pub conduction_w: f64,
    pub total_w: f64,
    pub junction_c: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct AcousticFigures {
    pub lowest_audible_line_hz: Option<f64>,
    pub a_weighted_db: Option<f64>,
    pub lines_in_avoided_bands_hz: Vec<f64>,
    pub pass: bool,
    pub reason: crate::model::physics::acoustics::AcousticReason,
}

impl From<AcousticVerdict> for AcousticFigures {
    fn from(v: AcousticVerdict) -> AcousticFigures {
        AcousticFigures {
            lowest_audible_line_hz: v.lowest_audible_line_hz,
            a_weighted_db: v.a_weighted_db,
            lines_in_avoided_bands_hz: v.lines_in_avoided_bands,
            pass: v.pass,
            reason: v.reason,
        }
    }
}

/// Stable name of a device position.
pub fn role_name(r: DeviceRole) -> &'static str {
    match r {
        DeviceRole::HighSide => "high-side",
        DeviceRole::LowSide => "low-side",
        DeviceRole::FreewheelDiode => "freewheel-diode",
        DeviceRole::LegAHigh => "leg-a-high",
        DeviceRole::LegALow => "leg-a-low",
        DeviceRole::LegBHigh => "leg-b-high",
        DeviceRole::LegBLow => "leg-b-low",
    }
}

fn load_current(w: &RippleWaveform) -> LoadCurrent {
    LoadCurrent {
        i_avg_a: w.i_avg_a(),
        i_rms_a: w.i_rms_a(),
        i_turn_on_a: w.i_at_switch_on_a().unwrap_or(w.i_min_a()),
        i_turn_off_a: w.i_at_switch_off_a().unwrap_or(w.i_max_a()),
        ripple_pp_a: w.ripple_pp_a(),
        continuous: w.continuous(),
    }
}

impl Evaluator {
    /// Evaluate one case at frequency `f_hz` with dead time `t_dead_s`.
    /// `None` when the load current cannot be reached at this bus voltage.
    pub fn case(&self, case: &OperatingCase, f_hz: f64, t_dead_s: f64) -> Option<CaseResult> {
        if let Some(tp) = &self.three_phase {
            return self.case_three_phase(tp, case, f_hz, t_dead_s);
        }
        let (m, compare_duty, w) = self.duty_and_waveform(case, f_hz, t_dead_s)?;
        let load = load_current(&w);
        let st = &self.stage;
        let op = OperatingPoint {
            v_bus_v: case.v_bus_v,
            duty: m,
            f_sw_hz: f_hz,
            t_dead_s,
            t_ambient_c: case.t_ambient_c,
            edges: st.edges,
        };
        let temps = thermal::stage_junction_temperatures(
            st.topology,
            &st.switch,
            &st.drive,
            st.diode.as_ref(),
            &op,
            &load,
            |_| st.thermal.clone(),
        )
        .ok()?;
        let mut runaway = None;
        let t_of = |role: DeviceRole| -> f64 {
            temps
                .iter()
                .find(|t| t.role == role)
                .and_then(|t| t.result.t_j_c())
                .unwrap_or(st.switch.t_j_max_c)
        };
        for t in &temps {
            if let JunctionTemperature::Runaway { reason } = &t.result {
                runaway = Some(format!("{}: {}", role_name(t.role), reason));
            }
        }
        let losses = losses::stage_losses(
            st.topology,
            &st.switch,
            &st.drive,
            st.diode.as_ref(),
            &op,
            &load,
            &t_of,
        )
        .ok()?;
        let copper = ripple::ripple_copper_loss_w(self.motor_r_ohm, w.ripple_rms_a());
        let junction_c = if runaway.is_some() {
            None
        } else {
            temps
                .iter()
                .filter_map(|t| t.result.t_j_c())
                .fold(None, |acc: Option<f64>, t| {
                    Some(acc.map_or(t, |a| a.max(t)))
                })
        };
        let acoustic = acoustics::assess(&w, &self.audible, &self.significance).ok()?;
        Some(CaseResult {
            case: *case,
            modulation: m,
            compare_duty,
            ripple: RippleFigures {
                mean_a: w.i_avg_a(),
                rms_a: w.i_rms_a(),
                max_a: w.i_max_a(),
                min_a: w.i_min_a(),
                peak_to_peak_a: w.ripple_pp_a(),
                ac_rms_a: w.ripple_rms_a(),
                continuous: w.continuous(),
                frequency_hz: 1.0 / w.period_s(),
            },
            losses: loss_figures(&losses, copper),
            devices: losses
                .devices
                .iter()
                .map(|d| DeviceFigures {
                    role: role_name(d.role).to_string(),
                    switched_current_on_a: d.switched_current_on_a,
                    switched_current_off_a: d.switched_current_off_a,
                    e_on_j: d.e_on_j + d.partner_recovery_j,
                    e_on_parts: EOnParts {
                        channel_j: d.e_on_j,
                        partner_recovery_j: d.partner_recovery_j,
                        output_capacitance_j: d.own_output_capacitance_j,
                    },
                    e_off_j: d.e_off_terminal_j,
                    e_off_channel_j: d.e_off_j,
                    v_peak_off_v: (self.stage.drive.loop_inductance_h > 0.0
                        && d.v_peak_off_v > 0.0)
                        .then_some(d.v_peak_off_v),
                    t_delay_on_s: d.t_delay_on_s,
                    t_delay_off_s: d.t_delay_off_s,
                    conduction_w: d.conduction_w,
                    total_w: d.total_w,
                    junction_c: temps
                        .iter()
                        .find(|t| t.role == d.role)
                        .and_then(|t| t.result.t_j_c()),
                })
                .collect(),
            junction_c,
            runaway,
            acoustic: acoustic.into(),
            three_phase: None,
        })
    }

    /// A single-phase stage's modulation, compare duty and motor current
    /// at `case` (dead time and drops counted). `None` when the load is not
    /// reachable: a duty below 0 means the dead time and the drops alone
    /// push more than the load current (found by the register check on
    /// absurd inputs, where the written compare would have contradicted the
    /// plan). Above 1 the case stands and the duty-range constraint fails
    /// on it.
    pub fn duty_and_waveform(
        &self,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
    ) -> Option<(f64, f64, RippleWaveform)> {
        let (m, ideal) = self.modulation_and_waveform(case, f_hz)?;
        let (compare_duty, w) = self.stage_duty_and_waveform(case, m, ideal, f_hz, t_dead_s);
        if compare_duty.is_nan() || compare_duty < 0.0 {
            return None;
        }
        Some((m, compare_duty, w))
    }

    /// Dead time the stage needs at this case's turn-off current: the
    /// gate-charge turn-off (delay + voltage rise + current fall) against
    /// the turn-on delay, plus driver mismatch, times the margin
    /// (the published dead-time form plus the fall time, our own
    /// conservative choice; see [`deadtime::dead_time_need_s`]).
    pub fn dead_time_need_s(&self, case: &OperatingCase) -> Option<f64> {
        let st = &self.stage;
        let i = case.load_current_a.abs().max(1e-3);
        let r_hot = thermal::r_ds_on_ohm(&st.switch, self.limits.t_j_max_c);
        let tr =
            switching::gate_charge_timing(&st.switch, &st.drive, case.v_bus_v, i, i, r_hot).ok()?;
        let mut inp = DeadTimeInputs::from_transitions(&tr, &st.drive);
        inp.margin = self.dead_time_margin;
        deadtime::dead_time_need_s(&inp)
    }

    /// Whether the stage has complementary switches that need a dead time.
    pub fn needs_dead_time(&self) -> bool {
        !matches!(self.stage.topology, Topology::LowSide)
    }

    /// The legs' supply, dead time and drops at `case`. R_ds(on) is taken
    /// at the junction limit: the largest drop the settings must overcome
    /// (a choice of our own, on the safe side for reachability).
    pub fn leg_drops(&self, case: &OperatingCase, f_hz: f64, t_dead_s: f64) -> StageDrops {
        let sw = &self.stage.switch;
        StageDrops {
            v_bus_v: case.v_bus_v,
            t_dead_s: if self.needs_dead_time() {
                t_dead_s
            } else {
                0.0
            },
            f_sw_hz: f_hz,
            r_ds_on_ohm: thermal::r_ds_on_ohm(sw, self.limits.t_j_max_c),
            v_sd_v: sw.v_sd_v,
        }
    }

    /// The compare duty that puts modulation `m` (mean load voltage / bus)
    /// on the load, and the motor current the stage then really carries
    /// (the ideal waveform at `m` starts the iteration). Leg A of an
    /// H-bridge; leg B runs the complement (bipolar: the inverse reference;
    /// unipolar: `1 − d`).
    ///
    /// Bridges: the load voltage over a period is the dead-time clamps at
    /// the two edges, each held until the current reaches zero, the high and
    /// low states less the switches' drop ([`leg_voltage::period_states`]);
    /// which diode clamps and for how long depends on the currents at the
    /// edges, which depend on the duty: solved together by fixed-point
    /// iteration (damped after a few steps; own method). A single switch with
    /// a freewheel diode: `m` is its duty already (the diode's drop is in
    /// the waveform); its own drop I·R_ds(on) while on is made up by scaling
    /// the duty, d·(V + V_f − I_on·R) − V_f = m·(V + V_f) − V_f (own
    /// derivation). Falls back to the ideal waveform when the states do not
    /// fit the period.
    fn stage_duty_and_waveform(
        &self,
        case: &OperatingCase,
        m: f64,
        ideal: RippleWaveform,
        f_hz: f64,
        t_dead_s: f64,
    ) -> (f64, RippleWaveform) {
        let drops = self.leg_drops(case, f_hz, t_dead_s);
        let i_on = ideal.i_at_switch_on_a().unwrap_or(ideal.i_min_a());
        let i_off = ideal.i_at_switch_off_a().unwrap_or(ideal.i_max_a());
        let (v, vd, drive) = (case.v_bus_v, drops.v_sd_v, self.ripple_drive());
        let level =
            |high_v, low_v, diode_v, switches_in_path, switches_in_clamp, edges_per_period| {
                StageLevels {
                    high_v,
                    low_v,
                    diode_v,
                    switches_in_path,
                    switches_in_clamp,
                    edges_per_period,
                }
            };
        let levels = match drive {
            Drive::LowSideFreewheel { v_f_v } => {
                let v_on = v - 0.5 * (i_on + i_off) * drops.r_ds_on_ohm;
                let d = m * (v + v_f_v) / (v_on + v_f_v);
                let w =
                    ripple::steady_state(&self.motor(case), drive, v_on, d.clamp(0.0, 1.0), f_hz);
                return (d, w.unwrap_or(ideal));
            }
            Drive::HalfBridgeSynchronous => level(v, 0.0, vd, 1.0, 0.0, 1.0),
            Drive::HBridgeBipolar => level(v, -v, 2.0 * vd, 2.0, 0.0, 1.0),
            Drive::HBridgeUnipolar => level(v, 0.0, vd, 2.0, 1.0, 2.0),
        };
        let conditions = DeadTimeConditions {
            t_dead_s: drops.t_dead_s,
            f_sw_hz: f_hz,
            l_h: self.motor_l_h,
            back_emf_v: case.back_emf_v,
            r_ds_on_ohm: drops.r_ds_on_ohm,
        };
        let mut edges = EdgeCurrents {
            at_start_a: i_on,
            at_end_a: i_off,
            mean_a: ideal.i_avg_a(),
        };
        let to_duty = |high: f64| match drive {
            // Two pulses of (d_A − d_B)·T/2 with d_B = 1 − d_A.
            Drive::HBridgeUnipolar => 0.5 * (1.0 + high),
            _ => high,
        };
        let mut high = leg_voltage::fraction_for_voltage(m * v, &levels, &conditions, &edges);
        let mut best = None;
        for step in 0..60 {
            let Some(states) = leg_voltage::period_states(high, &levels, &conditions, &edges)
            else {
                break;
            };
            let Ok(w) = ripple::piecewise_steady_state(&self.motor(case), &states, (0, 3)) else {
                break;
            };
            let (s, e) = (
                w.i_at_switch_on_a().unwrap_or(0.0),
                w.i_at_switch_off_a().unwrap_or(0.0),
            );
            let moved = (s - edges.at_start_a).abs().max((e - edges.at_end_a).abs());
            best = Some((to_duty(high), w));
            if moved <= 1e-9 * case.load_current_a.abs().max(1e-3) {
                break;
            }
            // Plain steps first; then damped, which settles a clamp that flips.
            let k = if step < 8 { 1.0 } else { 0.5 };
            edges.at_start_a += k * (s - edges.at_start_a);
            edges.at_end_a += k * (e - edges.at_end_a);
            high = leg_voltage::fraction_for_voltage(m * v, &levels, &conditions, &edges);
        }
        best.unwrap_or_else(|| {
            let d = to_duty(leg_voltage::fraction_for_voltage(
                m * v,
                &levels,
                &conditions,
                &edges,
            ));
            (d, ideal)
        })
    }

    /// The compare duty at the load current of `case` (see
    /// [`Self::compare_duty`]); `None` when the load cannot be reached.
    pub fn compare_duty_for_load(
        &self,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
    ) -> Option<f64> {
        if let Some(tp) = &self.three_phase {
            if let ThreePhaseModulation::Sinusoidal { .. } = tp.modulation {
                let m = self.three_phase_modulation(tp, case, f_hz, t_dead_s, 0.0)?;
                return Some(tp.modulation.leg_duty_max(m));
            }
            // Six-step: the simulated duty holds the dead time, the diodes and
            // R_ds(on), here at the junction limit (as `leg_drops`).
            let ThreePhaseModulation::SixStep { chop } = tp.modulation else {
                return None;
            };
            let d = self.leg_drops(case, f_hz, t_dead_s);
            let r = [d.r_ds_on_ohm; 2];
            let sim = self.six_step_simulation(tp, case, f_hz, d.t_dead_s, chop, r, None)?;
            return Some(tp.modulation.leg_duty_max(sim.duty));
        }
        let (m, w) = self.modulation_and_waveform(case, f_hz)?;
        let d = self.stage_duty_and_waveform(case, m, w, f_hz, t_dead_s).0;
        (d >= 0.0).then_some(d)
    }

    /// Findings about ratings and drive that do not depend on the setting.
    pub fn rating_findings(&self, d: &Design) -> Vec<Finding> {
        let st = &self.stage;
        ratings::check_all(&RatingInputs {
            topology: st.topology,
            switch: &st.switch,
            drive: &st.drive,
            diode: st.diode.as_ref(),
            v_bus_max_v: d.spec.supply.max.si,
            // A three-phase stall drives the line-to-line resistance. With the
            // board's over-current path the stall is the current limit's
            // (`model::current_limit`), not V/R.
            r_winding_ohm: d.board.overcurrent.is_none().then(|| {
                if self.three_phase.is_some() {
                    2.0 * self.motor_r_ohm
                } else {
                    self.motor_r_ohm
                }
            }),
            thermal: &st.thermal,
            t_ambient_c: d.spec.ambient.max.si,
            stall_time_s: d.spec.constraints.stall_time.map(|t| t.si),
        })
    }
}

/// A stage's supply, dead time and conduction drops at one case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StageDrops {
    pub v_bus_v: f64,
    /// Inserted dead time (0 for a single switch), s.
    pub t_dead_s: f64,
    pub f_sw_hz: f64,
    /// On-resistance of a conducting switch, Ω.
    pub r_ds_on_ohm: f64,
    /// Body-diode forward voltage, V.
    pub v_sd_v: f64,
}

/// The stage's loss split so that the lines add up to the total: the
/// switches' own terms, the freewheel diode whole, the gate drive whole
/// (driver, external resistors and the switches' internal share), and the
/// motor's extra copper loss from the ripple.
fn loss_figures(l: &StageLosses, copper_w: f64) -> LossFigures {
    let mut f = LossFigures {
        gate_drive: l.gate_drive_total_w,
        motor_ripple_copper: copper_w,
        total: l.total_w + copper_w,
        ..LossFigures::default()
    };
    for d in &l.devices {
        if d.role == DeviceRole::FreewheelDiode {
            f.freewheel_diode += d.total_w;
        } else {
            f.conduction += d.conduction_w;
            f.switching += d.switching_w;
            f.output_capacitance += d.output_capacitance_w;
            f.reverse_recovery += d.reverse_recovery_w;
            f.dead_time_diode += d.dead_time_diode_w;
        }
    }
    f
}

/// Severity as a stable lower-case word.
pub fn severity_name(s: Severity) -> &'static str {
    match s {
        Severity::Info => "info",
        Severity::Warning => "warning",
        Severity::Error => "error",
    }
}

/// Re-exported for the solver.
pub use timer::duty_limits;
pub type Setting = PwmSetting;

// ------------------------------------------------------------ three-phase

/// The six positions of a three-phase bridge, in report order.
pub const THREE_PHASE_ROLES: [(&str, bool); 6] = [
    ("phase-a-high", true),
    ("phase-a-low", false),
    ("phase-b-high", true),
    ("phase-b-low", false),
    ("phase-c-high", true),
    ("phase-c-low", false),
];

/// Per-side losses and temperatures of a three-phase case, before the
/// figures are assembled.
struct SideResult {
    high: LossLines,
    low: LossLines,
    t_high: JunctionTemperature,
    t_low: JunctionTemperature,
    /// Driver + external gate-resistor loss of all six switches.
    gate_outside_w: f64,
    /// Current at the turn-on and turn-off edges (magnitudes) for the
    /// device table.
    i_on_a: f64,
    i_off_a: f64,
}

impl Evaluator {
    /// Motor constants of the three-phase model (phase R and L from the
    /// evaluator, so tolerance corners move them).
    pub fn motor_params(&self, tp: &ThreePhaseModel) -> MotorParams {
        MotorParams {
            r_phase_ohm: self.motor_r_ohm,
            l_phase_h: self.motor_l_h,
            ke_v_s_per_rad: tp.ke_v_s_per_rad,
            pole_pairs: tp.pole_pairs,
            back_emf_shape: tp.back_emf_shape,
        }
    }

    fn bridge<'a>(&'a self, case: &OperatingCase, f_hz: f64, t_dead_s: f64) -> ThreePhaseStage<'a> {
        ThreePhaseStage {
            sw: &self.stage.switch,
            drive: &self.stage.drive,
            v_bus_v: case.v_bus_v,
            f_sw_hz: f_hz,
            t_dead_s,
        }
    }

    /// m (sinusoidal, from the motor by `sinusoidal_point_from_motor`) or
    /// the six-step chopping duty for the case's current (`six_step_simulation`,
    /// `r_path_ohm` of switches in the line path).
    fn three_phase_modulation(
        &self,
        tp: &ThreePhaseModel,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
        r_path_ohm: f64,
    ) -> Option<f64> {
        match tp.modulation {
            ThreePhaseModulation::Sinusoidal {
                zero_sequence,
                current_advance_rad,
            } => self
                .sinusoidal_command(tp, case, f_hz, t_dead_s, current_advance_rad, zero_sequence)
                .map(|c| c.point.modulation_index),
            ThreePhaseModulation::SixStep { chop } => self
                .six_step_simulation(tp, case, f_hz, t_dead_s, chop, [0.5 * r_path_ohm; 2], None)
                .map(|s| s.duty),
        }
    }

    /// Six-step simulated switch by switch through its commutations at the
    /// chopping duty that holds the case's line current
    /// (`three_phase::six_step_simulated`), with the high- and low-side
    /// R_ds(on) `r_ds_ohm`, the search starting from `duty_guess` (else the
    /// flat-sector estimate).
    #[allow(clippy::too_many_arguments)]
    pub fn six_step_simulation(
        &self,
        tp: &ThreePhaseModel,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
        chop: Chop,
        r_ds_ohm: [f64; 2],
        duty_guess: Option<f64>,
    ) -> Option<three_phase::SixStepSimulation> {
        let circuit = three_phase::SixStepCircuit {
            stage: self.bridge(case, f_hz, t_dead_s),
            motor: self.motor_params(tp),
            omega_e_rad_s: tp.omega_e_rad_s,
            chop,
            r_ds_ohm,
        };
        let guess = duty_guess
            .unwrap_or_else(|| three_phase::six_step_duty_guess(&circuit, case.load_current_a));
        match three_phase::six_step_simulated(&circuit, case.load_current_a, guess) {
            Ok(s) => Some(s),
            // Full duty, with the current it reaches: the duty-range check
            // then refuses the setting, naming the duty.
            Err(three_phase::ThreePhaseError::DutyUnreachable {
                i_at_full_duty_a, ..
            }) => three_phase::six_step_simulated_at(&circuit, 1.0, i_at_full_duty_a).ok(),
            Err(_) => None,
        }
    }

    /// The sinusoidal leg command for the case's phase-current peak, with the bridge's switch
    /// drop and dead times made up edge by edge (`sinusoidal_command_edge_by_edge`; drops of
    /// [`Self::leg_drops`], the same the plan records for the register check).
    fn sinusoidal_command(
        &self,
        tp: &ThreePhaseModel,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
        gamma_rad: f64,
        zs: ZeroSequence,
    ) -> Option<three_phase::SinusoidalCommand> {
        let d = self.leg_drops(case, f_hz, t_dead_s);
        let legs = three_phase::LegConditions {
            v_bus_v: d.v_bus_v,
            f_sw_hz: d.f_sw_hz,
            t_dead_s: d.t_dead_s,
            r_switch_ohm: d.r_ds_on_ohm,
            v_sd_v: d.v_sd_v,
            l_phase_h: self.motor_l_h,
        };
        let at = three_phase::MotorOperatingPoint {
            omega_e_rad_s: tp.omega_e_rad_s,
            i_peak_a: case.load_current_a,
            current_advance_rad: gamma_rad,
            v_bus_v: case.v_bus_v,
            zero_sequence: zs,
        };
        self.commands.command(&self.motor_params(tp), &at, &legs)
    }

    /// Top of the frequency range the acoustic verdict looks at.
    fn acoustic_top_hz(&self) -> f64 {
        match &self.audible {
            AudibleMode::Inaudible { hearing_limit_hz } => *hearing_limit_hz,
            AudibleMode::Allowed => acoustics::DEFAULT_HEARING_LIMIT_HZ,
            AudibleMode::AvoidBands {
                bands,
                hearing_limit_hz,
            } => bands.iter().map(|b| b.1).fold(*hearing_limit_hz, f64::max),
        }
    }

    /// One case of a three-phase bridge: losses of each switch position,
    /// junction temperatures (each side iterated on its own R_ds(on)(T_j)
    /// by `thermal::junction_temperature`), the ripple and its audibility.
    fn case_three_phase(
        &self,
        tp: &ThreePhaseModel,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
    ) -> Option<CaseResult> {
        let mut r = match tp.modulation {
            ThreePhaseModulation::Sinusoidal {
                zero_sequence,
                current_advance_rad,
            } => self.case_sinusoidal(tp, case, f_hz, t_dead_s, zero_sequence, current_advance_rad),
            ThreePhaseModulation::SixStep { chop } => {
                self.case_six_step(tp, case, f_hz, t_dead_s, chop)
            }
        }?;
        // Six-step's simulated duty already makes up the dead time, the
        // diodes and R_ds(on) at the junction temperatures.
        r.compare_duty = tp.modulation.leg_duty_max(r.modulation);
        Some(r)
    }

    /// Sinusoidal case. The junction iteration runs on the closed forms
    /// (`sinusoidal_losses_closed_form`, cheap; they carry the R_ds(on)(T)
    /// dependence exactly) shifted by their offset to the sample average with
    /// the non-linear transitions (`sinusoidal_losses`) at the first settled
    /// temperature; the losses reported are the sample average at the final
    /// temperature. High and low sides are alike by half-wave symmetry.
    fn case_sinusoidal(
        &self,
        tp: &ThreePhaseModel,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
        zs: ZeroSequence,
        gamma_rad: f64,
    ) -> Option<CaseResult> {
        let st = &self.stage;
        let bridge = self.bridge(case, f_hz, t_dead_s);
        let command = self.sinusoidal_command(tp, case, f_hz, t_dead_s, gamma_rad, zs)?;
        let point = command.point;
        let (r_th, t_max) = (st.thermal.r_th_ja_k_per_w, st.switch.t_j_max_c);
        let closed = |t: f64| {
            three_phase::sinusoidal_losses_closed_form(&bridge, &point, t)
                .map(|l| l.high_side.total_w())
                .unwrap_or(f64::NAN)
        };
        let first = thermal::junction_temperature(case.t_ambient_c, r_th, t_max, closed);
        let t0 = first.t_j_c().unwrap_or(t_max);
        let at_t0 = three_phase::sinusoidal_losses(&bridge, &point, t0).ok()?;
        let offset = at_t0.exact.high_side.total_w() - at_t0.closed_form.high_side.total_w();
        let tj =
            thermal::junction_temperature(case.t_ambient_c, r_th, t_max, |t| closed(t) + offset);
        let t_final = tj.t_j_c().unwrap_or(t_max);
        let report = three_phase::sinusoidal_losses(&bridge, &point, t_final).ok()?;
        let tj = self.follow_sinusoidal_fundamental(tp, &bridge, &point, case.t_ambient_c, tj);
        let ex = &report.exact;
        let sides = SideResult {
            high: ex.high_side,
            low: ex.low_side,
            t_high: tj.clone(),
            t_low: tj,
            gate_outside_w: 6.0 * (ex.gate_per_switch.driver_w + ex.gate_per_switch.external_w),
            i_on_a: point.i_peak_a,
            i_off_a: point.i_peak_a,
        };
        let (ripple, acoustic) = self.sinusoidal_ripple(&bridge, &command, zs, gamma_rad)?;
        let i_pk = point.i_peak_a;
        let ripple_fig = RippleFigures {
            // The phase current is a sine: zero mean over the electrical
            // period; rms of the fundamental and the ripple together.
            mean_a: 0.0,
            rms_a: (0.5 * i_pk * i_pk + ripple.rms_a * ripple.rms_a).sqrt(),
            max_a: i_pk + 0.5 * ripple.pp_max_a,
            min_a: -(i_pk + 0.5 * ripple.pp_max_a),
            peak_to_peak_a: ripple.pp_max_a,
            ac_rms_a: ripple.rms_a,
            continuous: true,
            frequency_hz: f_hz,
        };
        // Three phases carry the ripple.
        let copper = ripple::ripple_copper_loss_w(3.0 * self.motor_r_ohm, ripple.rms_a);
        let m = point.modulation_index;
        let extra = ThreePhaseCase {
            modulation: "sinusoidal".into(),
            modulation_index: Some(m),
            power_factor: Some(point.power_factor),
            chop_duty: None,
            leg_duty_max: tp.modulation.leg_duty_max(m),
            sampled_leg_duty_max: tp.modulation.sampled_leg_duty_max(m),
            electrical_frequency_hz: tp.omega_e_rad_s / (2.0 * std::f64::consts::PI),
            current_a: i_pk,
            dc_link_mean_a: three_phase::sinusoidal_dc_link_mean_a(m, i_pk, point.power_factor),
            commutation: None,
            high_side_w: 0.0,
            low_side_w: 0.0,
            high_side_junction_c: None,
            low_side_junction_c: None,
            devices_total_w: 0.0,
            gate_outside_devices_w: 0.0,
            closed_form_deviation_rel: Some(report.closed_form_deviation_rel),
            voltage_lead_rad: Some(command.voltage_lead_rad),
            dead_time_harmonics_unsettled: !command.harmonics_settled,
            r_ds_on_sides_ohm: None,
        };
        self.three_phase_result(case, m, sides, ripple_fig, copper, acoustic, extra)
    }

    /// Whether the junction follows the loss through the electrical period:
    /// below [`SLOW_FUNDAMENTAL_HZ`], or below [`FOSTER_FOLLOW_HZ`] when the
    /// path's transient (Foster) data says how.
    fn follows_fundamental(&self, tp: &ThreePhaseModel) -> bool {
        let f_e = tp.omega_e_rad_s / (2.0 * std::f64::consts::PI);
        let limit = if self.stage.thermal.foster.is_empty() {
            SLOW_FUNDAMENTAL_HZ
        } else {
            FOSTER_FOLLOW_HZ
        };
        f_e < limit
    }

    /// A sinusoidal bridge's junction when it follows the electrical
    /// period: the peak of the periodic response
    /// (`thermal::periodic_peak_rise_k`) to a side's loss at each angle
    /// (`sinusoidal_loss_samples`; both sides peak alike by half-wave
    /// symmetry), iterated on T_j as the average is; the hotter of that and
    /// `averaged`. At standstill it is the loss at the worst angle, as DC.
    fn follow_sinusoidal_fundamental(
        &self,
        tp: &ThreePhaseModel,
        bridge: &three_phase::ThreePhaseStage<'_>,
        point: &three_phase::SinusoidalPoint,
        t_ambient_c: f64,
        averaged: JunctionTemperature,
    ) -> JunctionTemperature {
        if !self.follows_fundamental(tp) {
            return averaged;
        }
        let th = &self.stage.thermal;
        let period_s = fundamental_period_s(tp);
        let rise_as_power = |t: f64| {
            let samples = three_phase::sinusoidal_loss_samples(
                bridge,
                point,
                t,
                three_phase::DEFAULT_LOSS_SAMPLES,
                three_phase::EnergyModel::Transitions,
            );
            samples.map_or(f64::NAN, |s| {
                let high: Vec<f64> = s.totals_w().into_iter().map(|(h, _)| h).collect();
                thermal::periodic_peak_rise_k(th, &high, period_s) / th.r_th_ja_k_per_w
            })
        };
        let t_max = self.stage.switch.t_j_max_c;
        let slow =
            thermal::junction_temperature(t_ambient_c, th.r_th_ja_k_per_w, t_max, rise_as_power);
        hotter(averaged, slow)
    }

    /// The phase-current ripple of a solved sinusoidal command over the
    /// electrical period (`sinusoidal_ripple_at`) and its acoustic verdict.
    fn sinusoidal_ripple(
        &self,
        bridge: &three_phase::ThreePhaseStage<'_>,
        command: &three_phase::SinusoidalCommand,
        zs: ZeroSequence,
        gamma_rad: f64,
    ) -> Option<(three_phase::PhaseRipple, AcousticFigures)> {
        let point = &command.point;
        let ripple = three_phase::sinusoidal_ripple_at(
            bridge,
            self.motor_l_h,
            &three_phase::RippleCommand {
                modulation_index: point.modulation_index,
                zero_sequence: zs,
                current: Some(three_phase::PhaseCurrent {
                    peak_a: point.i_peak_a,
                    lag_rad: command.voltage_lead_rad - gamma_rad,
                }),
                electrical_hz: self.three_phase.as_ref().map_or(0.0, |tp| {
                    tp.omega_e_rad_s.max(0.0) / (2.0 * std::f64::consts::PI)
                }),
            },
            three_phase::DEFAULT_RIPPLE_ANGLES,
            self.acoustic_top_hz(),
            self.significance.max_lines,
        )
        .ok()?;
        let acoustic =
            acoustics::assess_lines(&ripple.lines, &self.audible, &self.significance).ok()?;
        Some((ripple, acoustic.into()))
    }

    /// A sinusoidal case's ripple, compare duty and acoustics without its
    /// losses (the same command and ripple as [`Self::case`]'s).
    pub fn sinusoidal_ripple_sample(
        &self,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
    ) -> Option<(f64, f64, AcousticFigures)> {
        let tp = self.three_phase.as_ref()?;
        let ThreePhaseModulation::Sinusoidal {
            zero_sequence,
            current_advance_rad,
        } = tp.modulation
        else {
            return None;
        };
        let bridge = self.bridge(case, f_hz, t_dead_s);
        let command =
            self.sinusoidal_command(tp, case, f_hz, t_dead_s, current_advance_rad, zero_sequence)?;
        let (ripple, acoustic) =
            self.sinusoidal_ripple(&bridge, &command, zero_sequence, current_advance_rad)?;
        let compare_duty = tp.modulation.leg_duty_max(command.point.modulation_index);
        Some((compare_duty, ripple.pp_max_a, acoustic))
    }

    /// Six-step case, simulated switch by switch through its commutations
    /// (`six_step_simulation`): the duty holds the line current with each
    /// side's R_ds(on) at its junction temperature (from ambient, solved
    /// twice); each side's junction is iterated on its own lines (a side's
    /// lines depend on its own T_j only, through R_ds(on)). The PWM ripple
    /// and its audibility are the flat-sector line current's at that duty
    /// (`six_step_ripple`), placed around the simulated mean.
    fn case_six_step(
        &self,
        tp: &ThreePhaseModel,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
        chop: Chop,
    ) -> Option<CaseResult> {
        let st = &self.stage;
        let bridge = self.bridge(case, f_hz, t_dead_s);
        let (r_th, t_max) = (st.thermal.r_th_ja_k_per_w, st.switch.t_j_max_c);
        let r_at = |t: f64| thermal::r_ds_on_ohm(&st.switch, t);
        let (mut t_hi, mut t_lo) = (case.t_ambient_c, case.t_ambient_c);
        let mut last: Option<(three_phase::SixStepSimulation, _, _, [f64; 2])> = None;
        for _ in 0..2 {
            let guess = last.as_ref().map(|l| l.0.duty);
            let r_ds = [r_at(t_hi), r_at(t_lo)];
            let sim = self.six_step_simulation(tp, case, f_hz, t_dead_s, chop, r_ds, guess)?;
            let side_w = |high: bool, t: f64| {
                sim.losses(&bridge, r_at(t), r_at(t)).map_or(f64::NAN, |l| {
                    if high {
                        l.high_side.total_w()
                    } else {
                        l.low_side.total_w()
                    }
                })
            };
            let slow = self.follows_fundamental(tp);
            let side = |high: bool| {
                let fast = thermal::junction_temperature(case.t_ambient_c, r_th, t_max, |t| {
                    side_w(high, t)
                });
                if !slow {
                    return fast;
                }
                let (th, period_s) = (&st.thermal, fundamental_period_s(tp));
                let swing = thermal::junction_temperature(case.t_ambient_c, r_th, t_max, |t| {
                    let p = side_w(high, t);
                    thermal::periodic_peak_rise_k(th, &six_step_conduction_shape(p), period_s)
                        / r_th
                });
                hotter(fast, swing)
            };
            let (jh, jl) = (side(true), side(false));
            t_hi = jh.t_j_c().unwrap_or(t_max);
            t_lo = jl.t_j_c().unwrap_or(t_max);
            last = Some((sim, jh, jl, r_ds));
        }
        let (sim, jh, jl, r_ds) = last?;
        let l = sim.losses(&bridge, r_at(t_hi), r_at(t_lo)).ok()?;
        let motor = self.motor_params(tp);
        let r_path = r_at(t_hi) + r_at(t_lo);
        // The chopping switch's turn-on waits the dead time (the dead-time generator delays
        // each output's rising edge, common practice), so the line sees its on-state for
        // D·T − t_dead: the ripple's duty (the switch-by-switch simulation holds the rest).
        let d = (sim.duty - t_dead_s * f_hz).clamp(0.0, 1.0);
        let w = three_phase::six_step_ripple_largest(
            &bridge,
            &motor,
            tp.omega_e_rad_s,
            d,
            chop,
            r_path,
        )
        .ok()?;
        let shift = sim.held_mean_a - w.i_avg_a();
        let sides = SideResult {
            high: l.high_side,
            low: l.low_side,
            t_high: jh,
            t_low: jl,
            gate_outside_w: l.gate_driver_w + l.gate_external_w,
            i_on_a: (w.value_at(0.0) + shift).abs(),
            i_off_a: (w.value_at(d * w.period_s()) + shift).abs(),
        };
        let acoustic = acoustics::assess(&w, &self.audible, &self.significance).ok()?;
        let ripple_fig = RippleFigures {
            mean_a: sim.held_mean_a,
            rms_a: sim.held_mean_a.hypot(w.ripple_rms_a()),
            max_a: w.i_max_a() + shift,
            min_a: w.i_min_a() + shift,
            peak_to_peak_a: w.ripple_pp_a(),
            ac_rms_a: w.ripple_rms_a(),
            continuous: w.continuous(),
            frequency_hz: 1.0 / w.period_s(),
        };
        // The line current flows through two phases in series.
        let copper = ripple::ripple_copper_loss_w(2.0 * self.motor_r_ohm, w.ripple_rms_a());
        let extra = ThreePhaseCase {
            modulation: "six-step".into(),
            modulation_index: None,
            power_factor: None,
            chop_duty: Some(sim.duty),
            leg_duty_max: tp.modulation.leg_duty_max(sim.duty),
            sampled_leg_duty_max: tp.modulation.sampled_leg_duty_max(sim.duty),
            electrical_frequency_hz: tp.omega_e_rad_s / (2.0 * std::f64::consts::PI),
            current_a: case.load_current_a,
            dc_link_mean_a: sim.dc_link_mean_a,
            commutation: Some(commutation_figure(&sim, tp.omega_e_rad_s)),
            high_side_w: 0.0,
            low_side_w: 0.0,
            high_side_junction_c: None,
            low_side_junction_c: None,
            devices_total_w: 0.0,
            gate_outside_devices_w: 0.0,
            closed_form_deviation_rel: None,
            voltage_lead_rad: None,
            dead_time_harmonics_unsettled: false,
            r_ds_on_sides_ohm: Some(r_ds),
        };
        self.three_phase_result(
            case,
            sim.duty,
            sides,
            ripple_fig,
            copper,
            acoustic.into(),
            extra,
        )
    }

    /// Assemble the case: the six device rows, the loss split (lines add up
    /// to the total: devices + gate drive outside them + ripple copper) and
    /// the hottest junction.
    #[allow(clippy::too_many_arguments)]
    fn three_phase_result(
        &self,
        case: &OperatingCase,
        modulation: f64,
        s: SideResult,
        ripple: RippleFigures,
        copper_w: f64,
        acoustic: AcousticFigures,
        mut extra: ThreePhaseCase,
    ) -> Option<CaseResult> {
        let st = &self.stage;
        let t_max = st.switch.t_j_max_c;
        let r_at =
            |t: &JunctionTemperature| thermal::r_ds_on_ohm(&st.switch, t.t_j_c().unwrap_or(t_max));
        let tr = |t: &JunctionTemperature| {
            switching::transitions(
                &st.switch,
                &st.drive,
                case.v_bus_v,
                s.i_on_a,
                s.i_off_a,
                r_at(t),
            )
            .ok()
        };
        let (tr_h, tr_l) = (tr(&s.t_high)?, tr(&s.t_low)?);
        // What the three-phase loss lines book per hard turn-on: the datasheet
        // Q_rr·V from the partner and the switch's own E_oss.
        let hard_on = s.i_on_a.abs() > 0.0;
        let partner_j = if hard_on {
            st.switch.q_rr_c * case.v_bus_v
        } else {
            0.0
        };
        let oss_j = if hard_on {
            losses::output_capacitance_energy_j(&st.switch, case.v_bus_v).0
        } else {
            0.0
        };
        let devices: Vec<DeviceFigures> = THREE_PHASE_ROLES
            .iter()
            .map(|&(role, high)| {
                let (lines, t, tr) = if high {
                    (&s.high, &s.t_high, &tr_h)
                } else {
                    (&s.low, &s.t_low, &tr_l)
                };
                DeviceFigures {
                    role: role.to_string(),
                    switched_current_on_a: s.i_on_a,
                    switched_current_off_a: s.i_off_a,
                    e_on_j: tr.e_on_j + partner_j,
                    e_on_parts: EOnParts {
                        channel_j: tr.e_on_j,
                        partner_recovery_j: partner_j,
                        output_capacitance_j: oss_j,
                    },
                    e_off_j: tr.e_off_terminal_j,
                    e_off_channel_j: tr.e_off_j,
                    v_peak_off_v: (self.stage.drive.loop_inductance_h > 0.0)
                        .then_some(tr.v_peak_off_v),
                    t_delay_on_s: tr.t_d_on_s,
                    t_delay_off_s: tr.t_d_off_s,
                    conduction_w: lines.conduction_w(),
                    total_w: lines.total_w(),
                    junction_c: t.t_j_c(),
                }
            })
            .collect();
        let three = |f: fn(&LossLines) -> f64| 3.0 * (f(&s.high) + f(&s.low));
        let devices_total = three(LossLines::total_w);
        let gate_internal = three(|l| l.gate_internal_w);
        let losses = LossFigures {
            conduction: three(LossLines::conduction_w),
            switching: three(|l| l.switching_w + l.commutation_w),
            output_capacitance: three(|l| l.output_capacitance_w),
            reverse_recovery: three(|l| l.reverse_recovery_w),
            dead_time_diode: three(|l| l.body_diode_w),
            gate_drive: gate_internal + s.gate_outside_w,
            freewheel_diode: 0.0,
            motor_ripple_copper: copper_w,
            total: devices_total + s.gate_outside_w + copper_w,
        };
        let mut runaway = None;
        for (side, t) in [("high side", &s.t_high), ("low side", &s.t_low)] {
            if let JunctionTemperature::Runaway { reason } = t {
                runaway = Some(format!("{side}: {reason}"));
            }
        }
        let junction_c = match (runaway.is_some(), s.t_high.t_j_c(), s.t_low.t_j_c()) {
            (false, Some(a), Some(b)) => Some(a.max(b)),
            _ => None,
        };
        extra.high_side_w = s.high.total_w();
        extra.low_side_w = s.low.total_w();
        extra.high_side_junction_c = s.t_high.t_j_c();
        extra.low_side_junction_c = s.t_low.t_j_c();
        extra.devices_total_w = devices_total;
        extra.gate_outside_devices_w = s.gate_outside_w;
        Some(CaseResult {
            case: *case,
            modulation,
            // Set by `case_three_phase` (it knows the dead time).
            compare_duty: modulation,
            ripple,
            losses,
            devices,
            junction_c,
            runaway,
            acoustic,
            three_phase: Some(extra),
        })
    }
}

/// Below this electrical frequency a three-phase bridge's junction follows
/// the loss through the electrical period even without transient data (our
/// bound: "a few hertz", a period of 200 ms or more, long against the
/// junction-to-case time constants of power packages; from memory).
pub const SLOW_FUNDAMENTAL_HZ: f64 = 5.0;

/// With the path's Foster data, the periodic response is followed below
/// this electrical frequency (our bound: above it the period is under
/// 10 ms and the swing above the average is small; it saves the per-angle
/// pass on fast motors).
pub const FOSTER_FOLLOW_HZ: f64 = 100.0;

/// The electrical period, infinite at standstill.
fn fundamental_period_s(tp: &ThreePhaseModel) -> f64 {
    if tp.omega_e_rad_s > 0.0 {
        2.0 * std::f64::consts::PI / tp.omega_e_rad_s
    } else {
        f64::INFINITY
    }
}

/// The hotter of two junction results (a runaway is the hottest).
fn hotter(a: JunctionTemperature, b: JunctionTemperature) -> JunctionTemperature {
    let key = |j: &JunctionTemperature| j.t_j_c().unwrap_or(f64::INFINITY);
    if key(&b) > key(&a) { b } else { a }
}

/// A six-step switch's loss through the electrical period, by sector: it
/// conducts for two of the six (120°), so its average loss `p_avg_w` falls
/// there as 3·p_avg (block commutation, common practice); an
/// approximation that puts the commutation and freewheel losses in the
/// conducting sectors too.
fn six_step_conduction_shape(p_avg_w: f64) -> [f64; 6] {
    let on = 3.0 * p_avg_w;
    [on, on, 0.0, 0.0, 0.0, 0.0]
}

#[cfg(test)]
mod three_phase_tests {
    use super::*;

    /// The closed forms of the highest leg duty and of the highest middle-leg
    /// duty against a sweep of `three_phase::leg_duties` over the electrical
    /// period (independent: the sweep sorts the three duties at each angle).
    #[test]
    fn leg_duty_maxima_match_a_sweep() {
        for zs in [ZeroSequence::None, ZeroSequence::MinMax] {
            for m in [0.2, 0.6, 1.0, 1.15] {
                if m > zs.linear_limit() {
                    continue;
                }
                let modulation = ThreePhaseModulation::Sinusoidal {
                    zero_sequence: zs,
                    current_advance_rad: 0.0,
                };
                let (mut top, mut mid) = (0.0_f64, 0.0_f64);
                for k in 0..36_000 {
                    let theta = k as f64 * 2.0 * std::f64::consts::PI / 36_000.0;
                    let mut d = three_phase::leg_duties(m, zs, theta);
                    d.sort_by(f64::total_cmp);
                    top = top.max(d[2]);
                    mid = mid.max(d[1]);
                }
                assert!(
                    (modulation.leg_duty_max(m) - top).abs() < 1e-6,
                    "{zs:?} m={m}"
                );
                assert!(
                    (modulation.sampled_leg_duty_max(m) - mid).abs() < 1e-6,
                    "{zs:?} m={m}: {} vs {mid}",
                    modulation.sampled_leg_duty_max(m)
                );
            }
        }
    }
}
