//! From a validated design to the physics: the stage model at typical part
//! values, the operating cases, and the evaluation of one realisable PWM
//! setting against every constraint.
//!
//! **Invariant:** pure. No I/O, no printing; infeasibility is data (failed
//! constraints and findings), never an error.

use serde::{Deserialize, Serialize};

use crate::design::Design;
use crate::physics::acoustics::{self, AcousticVerdict, AudibleMode, Significance};
use crate::physics::deadtime::{self, DeadTimeInputs};
use crate::physics::losses::{self, DeviceRole, StageLosses};
use crate::physics::params::{
    DiodeModel, GateDrive, HBridgeModulation, LoadCurrent, OperatingPoint, RdsOnTemperature,
    SwitchModel, ThermalPath, Topology,
};
use crate::physics::ratings::{self, Finding, RatingInputs, Severity};
use crate::physics::ripple::{self, Drive, MotorLoad, RippleWaveform};
use crate::physics::switching;
use crate::physics::thermal::{self, JunctionTemperature};
use crate::spec::*;
use crate::timer::{
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
}

/// The design's constraints in SI.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Limits {
    pub t_j_max_c: f64,
    pub ripple_pp_max_a: Option<f64>,
    pub min_resolution_bits: Option<f64>,
    pub f_min_hz: f64,
    pub f_max_hz: f64,
}

/// Default lower edge of the frequency search when the design gives none
/// (below this a motor's electrical time constant no longer filters the PWM;
/// common practice).
pub const DEFAULT_F_MIN_HZ: f64 = 1_000.0;
/// Default upper edge when the design gives none (common practice for
/// hard-switched silicon motor stages).
pub const DEFAULT_F_MAX_HZ: f64 = 100_000.0;

/// Gate-driver output resistance from a peak current: R = V_drive/I_peak
/// (common practice for datasheets that give peak currents).
fn driver_resistance(e: &Either2<Ohm, Ampere>, v_drive_v: f64) -> f64 {
    if e.is_first() { e.si } else { v_drive_v / e.si }
}

/// Switch model at typical values.
pub fn switch_model(s: &SwitchSpec) -> SwitchModel {
    SwitchModel {
        v_th_v: s.v_th.typ.si,
        g_fs_s: s.g_fs.map(|g| g.si),
        v_plateau_v: s.v_plateau.map(|v| v.si),
        q_g_c: s.q_g.typ.si,
        q_g_at_v_gs_v: s.q_g.at_v_gs.si,
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
        e_oss_j: s.e_oss.as_ref().map(|e| e.value.si),
        e_oss_at_v_ds_v: s.e_oss.as_ref().map(|e| e.at_v_ds.si),
        r_g_int_ohm: s.r_g_int.typ.si,
        r_ds_on_25_ohm: s.r_ds_on.typ.si,
        r_ds_on_spec_v_gs_v: s.r_ds_on.at_v_gs.si,
        r_ds_on_temperature: match &s.r_ds_on_vs_temperature {
            Some(RdsOnTemperatureSpec::Points(p)) => {
                RdsOnTemperature::Curve(p.iter().map(|(t, k)| (t.si, *k)).collect())
            }
            Some(RdsOnTemperatureSpec::Coefficient(k)) => RdsOnTemperature::CoefficientPerK(k.si),
            None => RdsOnTemperature::PowerLaw,
        },
        v_sd_v: s.body_diode.v_sd.si,
        q_rr_c: s.body_diode.q_rr.typ.si,
        t_rr_s: s.body_diode.t_rr.si,
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
    StageModel {
        topology,
        switch: switch_model(sw),
        drive: GateDrive {
            v_drive_v: v_drive,
            r_source_ohm: driver_resistance(&g.source, v_drive),
            r_sink_ohm: driver_resistance(&g.sink, v_drive),
            r_ext_on_ohm: g.r_gate_on.si,
            r_ext_off_ohm: g.r_gate_off.si,
            prop_delay_s: g.propagation_delay.si,
            mismatch_s: g.delay_mismatch.si,
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
            } => DeadTimeGenerator::Linear {
                clock_divider: *clock_divider,
                max_ticks: *max_ticks,
            },
            DeadTimeSpec::Segmented {
                clock_divider,
                segments,
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
    /// Derive the evaluator of a design: typical part values, with the
    /// dead time sized for the worst pair of devices.
    pub fn new(d: &Design) -> Evaluator {
        let mut ev = Evaluator::with_switch(d, &d.switch);
        ev.dead_time_need_override_s =
            crate::spread::worst_dead_time_need(d, &ev).map(|(need, _)| need);
        ev
    }

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
            },
            audible,
            significance: Significance::default(),
            dead_time_margin: deadtime::DEFAULT_DEAD_TIME_MARGIN,
            dead_time_need_override_s: None,
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
            return Some(guess);
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
        Some(0.5 * (lo + hi))
    }
}

/// Losses, temperatures and ripple of one operating case at one setting.
#[derive(Debug, Clone, Serialize)]
pub struct CaseResult {
    pub case: OperatingCase,
    /// Mean load voltage / bus voltage.
    pub modulation: f64,
    pub ripple: RippleFigures,
    pub losses: LossFigures,
    pub devices: Vec<DeviceFigures>,
    /// Hottest junction, `None` on thermal runaway.
    pub junction_c: Option<f64>,
    /// Why the junction temperature has no value.
    pub runaway: Option<String>,
    pub acoustic: AcousticFigures,
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

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DeviceFigures {
    pub role: String,
    pub switched_current_on_a: f64,
    pub switched_current_off_a: f64,
    pub e_on_j: f64,
    pub e_off_j: f64,
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
    pub reason: String,
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
        let m = self.modulation_for_load(case, f_hz)?;
        let w = self.waveform(case, m, f_hz)?;
        let load = load_current(&w);
        let st = &self.stage;
        let op = OperatingPoint {
            v_bus_v: case.v_bus_v,
            duty: m,
            f_sw_hz: f_hz,
            t_dead_s,
            t_ambient_c: case.t_ambient_c,
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
                    e_on_j: d.e_on_j,
                    e_off_j: d.e_off_j,
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
        })
    }

    /// Dead time the stage needs at this case's turn-off current: the
    /// gate-charge turn-off (delay + voltage rise + current fall) against
    /// the turn-on delay, plus driver mismatch, times the margin
    /// (Infineon AN2007-04 form, see [`deadtime::dead_time_need_s`]).
    pub fn dead_time_need_s(&self, case: &OperatingCase) -> Option<f64> {
        let st = &self.stage;
        let i = case.load_current_a.abs().max(1e-3);
        let r_hot = thermal::r_ds_on_ohm(&st.switch, self.limits.t_j_max_c);
        let tr = switching::transitions(&st.switch, &st.drive, case.v_bus_v, i, i, r_hot).ok()?;
        let mut inp = DeadTimeInputs::from_transitions(&tr, &st.drive);
        inp.margin = self.dead_time_margin;
        deadtime::dead_time_need_s(&inp)
    }

    /// Whether the stage has complementary switches that need a dead time.
    pub fn needs_dead_time(&self) -> bool {
        !matches!(self.stage.topology, Topology::LowSide)
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
            r_winding_ohm: Some(self.motor_r_ohm),
            thermal: &st.thermal,
            t_ambient_c: d.spec.ambient.max.si,
            stall_time_s: d.spec.constraints.stall_time.map(|t| t.si),
        })
    }
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
