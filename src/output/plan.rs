//! The plan: the solver's answer as one typed, serialisable record with
//! stable keys (documented in the README), from which every output is
//! rendered. `plan.json` is this struct.
//!
//! **Invariant:** built from the design and the solution only; no I/O.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::input::design::Design;
use crate::input::spec::{HighSideSupplySpec, TopologySpec, WorstCasePolicySpec};
use crate::input::units::{Dimension, format_quantity};
use crate::model::evaluate::{
    self as model, DeviceFigures, Evaluator, LossFigures, ThreePhaseCase,
};
use crate::model::physics::acoustics::AudibleMode;
use crate::model::physics::bootstrap::{self, BootstrapInputs};
use crate::model::physics::deadtime;
use crate::model::physics::params::Topology;
use crate::model::solve::{Candidate, Objective, Solution};

/// The conventions behind `timer.*`, stated once (also in the README).
pub const CONVENTIONS: &[(&str, &str)] = &[
    (
        "frequency",
        "frequency_hz = clock_hz / (divider * period_ticks)",
    ),
    (
        "divider",
        "the prescaler ratio: the counter runs at clock_hz / divider",
    ),
    (
        "divider_register",
        "linear prescaler: divider - 1; ratio list: the index of the ratio in the board's list",
    ),
    ("period_ticks", "counter ticks per PWM period"),
    (
        "period_register",
        "edge-aligned: period_ticks - 1 (the counter counts 0..=period_register); centre-aligned: period_ticks / 2 (the counter counts up to it and back down)",
    ),
    (
        "duty_steps",
        "edge-aligned: period_ticks; centre-aligned: period_ticks / 2; a compare value of duty_steps is 100 % on",
    ),
    ("resolution_bits", "log2(duty_steps)"),
    (
        "dead_time",
        "dead_time_s = dead_time_ticks / (clock_hz / dead-time clock_divider); dead_time_code is the register value that encodes it",
    ),
];

/// The cautions every output carries.
pub const CAUTIONS: &[&str] = &[
    "Power stages can burn, shock and start motors unexpectedly: first power-up from a current-limited supply, motor mechanically safe, hand on the switch.",
    "Figures come from datasheet typical values and first-order models: measure switching edges, dead time and case temperatures on the real board before relying on the margins.",
    "Check every register value against the MCU reference manual; a wrong dead-time code can short a bridge leg.",
    "Keep the current limit and over-temperature shutdown in hardware; this plan does not replace them.",
    "Follow local electrical codes and licensed practice for mains-connected or high-energy equipment.",
];

/// The switch-parameter line of the assumptions; `assumptions_out`
/// completes it with how R_ds(on) meets the gate drive.
pub const SWITCH_PARAMETERS_ASSUMPTION: &str = "switch parameters at datasheet typical values; R_ds(on) follows the datasheet temperature curve";

/// The switching line of the assumptions; `assumptions_out` completes it
/// for the switch file at hand.
pub const SWITCHING_ASSUMPTION: &str = "switching by the gate-charge method (plateau, Q_gs2, Q_gd through driver, external and internal gate resistance)";

/// The modelling assumptions every output states.
pub const ASSUMPTIONS: &[&str] = &[
    SWITCH_PARAMETERS_ASSUMPTION,
    SWITCHING_ASSUMPTION,
    "motor current: exact periodic R-L-back-EMF solution of the terminal voltage the stage really applies: each dead time held by the body diode the current forces on (until the current reaches zero), the switches' drop at R_ds(on) at the junction limit, the freewheel diode at its forward voltage; the compare duties are solved with it",
    "checked on the written registers by an independent register-level simulation (plan.json register_check): every output pulse at the compare limits, and at each case the mean current, ripple and lowest audible line",
    "devices thermally independent, each with the board's junction-to-ambient path",
    "rated load at the hottest ambient; ripple and switching loss checked again at the highest supply",
    "audibility from the ripple current's spectrum: significant lines within 60 dB of the strongest and above 1 mA rms",
];

/// How a three-phase plan samples its low-side shunts.
pub const LOW_SIDE_SAMPLING_ASSUMPTION: &str = "current sampling: low-side shunts, two of three phases sampled in the middle of the low-side on-time (around the counter top: high side on while the counter is below the compare), the third from i_a + i_b + i_c = 0";

/// How a three-phase plan reads one DC-link shunt.
pub const DC_LINK_SAMPLING_ASSUMPTION: &str = "current sampling: one shunt in the DC link, read twice per period in the two active vectors of the up-count (minus the current of the leg that is low, then the current of the leg that is high), the compares shifted apart where a vector is shorter than a reading needs and given back on the down-count (each leg's on-time per period kept; the pulse around the counter bottom moves by the change of shift between periods), the third current from i_a + i_b + i_c = 0";

/// The modelling assumptions of a three-phase plan.
pub const THREE_PHASE_ASSUMPTIONS: &[&str] = &[
    SWITCH_PARAMETERS_ASSUMPTION,
    SWITCHING_ASSUMPTION,
    "sinusoidal: star-connected non-salient motor, phase voltage E + (R + jωL)·I plus what the legs lose, made up edge by edge (each dead time clamped by the diode in the direction of the current at that edge, that current moved by the other legs' late edges, the 5th to 25th current harmonics it drives followed, or where those do not settle the period-averaged bridge followed in time), and raised by x/sin x, x = π·f_e/f, for one compare written per PWM period; losses averaged over 720 angles of the electrical period; ripple in the small-ripple limit, carrier sidebands lumped on the carrier harmonics",
    "six-step: 120° blocks simulated switch by switch to their periodic steady state (ideal switches with R_ds(on), body diodes at their forward voltage, dead times, the star motor's three currents with the back-EMF shape), so each commutation's diode freewheel and the floating phase's diode conduction are in the duty and the losses; commutation at a PWM period boundary; the PWM ripple and its audibility from the two conducting phases' exact R-L-back-EMF solution at that duty",
    "the six switches thermally independent, each with the board's junction-to-ambient path; all high sides alike, all low sides alike",
    LOW_SIDE_SAMPLING_ASSUMPTION,
    "rated load at the hottest ambient; ripple and switching loss checked again at the highest supply",
];

/// The PWM mode and output polarity a three-phase plan's compare values and
/// ADC trigger assume (the emitted code's convention).
pub const THREE_PHASE_PWM_MODE: &str = "centre-aligned (up-down) counter; each channel's high side is active while the counter is below its compare (compare 0 off, duty_steps fully on), so its pulse is centred on the counter bottom and the low side conducts around the counter top; the complementary low-side output is the inverse with the dead time";

/// The DC-link shunt's figures of a three-phase plan.
fn dc_link_plan(
    tp: &crate::model::evaluate::ThreePhaseModel,
    c: &Candidate,
    k: &crate::model::solve::DcLinkOut,
) -> DcLinkPlan {
    use crate::model::physics::three_phase::dc_link;
    let zs = tp.modulation.zero_sequence();
    let tick = 1.0 / (c.setting.frequency_hz * c.setting.period_ticks as f64);
    DcLinkPlan {
        settle_time_s: tp.settle_s,
        sample_time_s: tp.sample_s,
        lead_counts: k.timing.lead_counts,
        min_vector_counts: k.timing.min_vector_counts,
        min_vector_s: k.timing.min_vector_counts as f64 * tick,
        needed_modulation: k.needed_modulation,
        max_modulation: dc_link::max_modulation(
            zs.linear_limit(),
            zs,
            c.setting.duty_steps,
            &k.timing,
        )
        .unwrap_or(0.0),
    }
}

/// The three-phase block of a plan.
pub fn three_phase_out(d: &Design, ev: &Evaluator, c: &Candidate) -> Option<ThreePhaseOut> {
    use crate::model::evaluate::ThreePhaseModulation as M;
    use crate::model::physics::three_phase::{Chop, ZeroSequence};
    let tp = ev.three_phase.as_ref()?;
    let (modulation, zero_sequence, chop, current_meaning) = match tp.modulation {
        M::Sinusoidal { zero_sequence, .. } => (
            "sinusoidal",
            Some(match zero_sequence {
                ZeroSequence::None => "none",
                ZeroSequence::MinMax => "min-max",
            }),
            None,
            "phase-current peak",
        ),
        M::SixStep { chop } => (
            "six-step",
            None,
            Some(match chop {
                Chop::HighSide => "high-side",
                Chop::LowSide => "low-side",
                Chop::Complementary => "complementary",
            }),
            "line current (the mean in the two conducting phases)",
        ),
    };
    let period_s = 1.0 / c.setting.frequency_hz;
    let sensing = d.board.current_sensing.as_ref();
    let needed = c
        .checks
        .iter()
        .find(|k| k.name == "sampling-window")
        .and_then(|k| k.value);
    Some(ThreePhaseOut {
        modulation: modulation.into(),
        zero_sequence: zero_sequence.map(Into::into),
        chop: chop.map(Into::into),
        channels: ["A", "B", "C"].iter().map(|x| x.to_string()).collect(),
        pole_pairs: tp.pole_pairs,
        k_e_v_s_per_rad: tp.ke_v_s_per_rad,
        back_emf_phase_peak_v: tp.ke_v_s_per_rad * tp.omega_e_rad_s,
        back_emf_shape: Some(
            match tp.back_emf_shape {
                crate::model::physics::three_phase::BackEmfShape::Sinusoidal => "sinusoidal",
                crate::model::physics::three_phase::BackEmfShape::Trapezoidal => "trapezoidal",
            }
            .into(),
        ),
        electrical_frequency_hz: tp.omega_e_rad_s / (2.0 * std::f64::consts::PI),
        current_meaning: current_meaning.into(),
        rated: c.rated.three_phase.clone()?,
        high_bus: c.high_bus.three_phase.clone()?,
        range_cases: range_cases(ev, c)
            .into_iter()
            .filter_map(|k| {
                Some(NamedThreePhaseCase {
                    name: k.case.name.into(),
                    case: k.three_phase?,
                })
            })
            .collect(),
        dc_link: c.dc_link.map(|k| dc_link_plan(tp, c, &k)),
        six_step_table: match tp.modulation {
            M::SixStep { chop } => Some(six_step_table(chop)),
            M::Sinusoidal { .. } => None,
        },
        back_emf: crate::output::back_emf_out::back_emf_plan(d, ev, c),
        sampling: c.sampling.map(|w| SamplingPlan {
            settle_time_s: sensing.map(|x| x.settle_time.si).unwrap_or(tp.settle_s),
            sample_time_s: tp.sample_s,
            conversion: match sensing.and_then(|x| x.conversion) {
                Some(crate::input::spec::ConversionSpec::Sequential) => "sequential",
                _ => "simultaneous",
            }
            .into(),
            trigger_compare: w.trigger_compare,
            trigger_count: "up".into(),
            trigger_before_top_s: w.trigger_before_top_s,
            pwm_mode: THREE_PHASE_PWM_MODE.into(),
            period_s,
            min_low_side_on_s: w.min_low_side_on_s,
            min_low_side_gate_on_s: w.min_low_side_gate_on_s,
            max_high_side_duty: w.max_high_side_duty,
            max_high_side_compare: (w.max_high_side_duty * c.setting.duty_steps as f64 + 1e-9)
                .floor()
                .max(0.0) as u64,
            needed_duty: needed,
        }),
    })
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Plan {
    /// Tool and version, with the content-hash marker of this file.
    pub generated: String,
    pub design: String,
    pub board: String,
    pub switch: String,
    pub topology: String,
    pub objective: String,
    /// The plan may be used: the search found a setting that meets every
    /// constraint (`search.constraints_met`) and nothing blocks it
    /// (`blocked_by` is empty).
    pub feasible: bool,
    /// What makes the plan infeasible although a setting was found: every
    /// finding of severity `error` (a worst-case failure is one unless the
    /// design says `constraints.worst_case: warn`), each naming its finding
    /// and, for the worst case, the corner. Empty when nothing blocks.
    #[serde(default)]
    pub blocked_by: Vec<BlockerOut>,
    pub conventions: BTreeMap<String, String>,
    pub pwm: Pwm,
    pub timer: TimerOut,
    /// Whole stage at the rated case, W.
    pub losses_w: LossFigures,
    pub thermal: Thermal,
    pub ripple: Ripple,
    pub acoustic: Acoustic,
    pub constraints: Vec<ConstraintOut>,
    pub findings: Vec<FindingOut>,
    pub devices: Vec<DeviceFigures>,
    /// Three-phase bridges only: modulation, per-side figures and the
    /// current-sampling trigger.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub three_phase: Option<ThreePhaseOut>,
    /// The design's operating range: where each judged quantity is worst
    /// (absent without a range or when it is the rated speed alone).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub operating_range: Option<crate::output::range_out::RangeOut>,
    /// The current limit planned on the board's over-current path (absent
    /// when the board has none).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub current_limit: Option<crate::model::current_limit::CurrentLimitOut>,
    /// A brushed stage's current sampling (absent without the board's
    /// `current_sensing`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sampling: Option<crate::model::current_loop::SamplingOut>,
    /// The current loop the design asked for.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub current_loop: Option<crate::model::current_loop::CurrentLoopOut>,
    pub feasible_band_hz: Option<[f64; 2]>,
    pub alternatives: Vec<AlternativeOut>,
    /// When infeasible: why, and the nearest compromise.
    pub conflict: Vec<String>,
    pub cases: Vec<CaseOut>,
    pub load: LoadOut,
    /// What the register-level verifier measured on the written registers
    /// (chosen setting): filled by `register_check::apply_to_plan` before
    /// anything is written, which also withholds every alternative whose
    /// registers disagree with its figures.
    pub register_check: RegisterCheck,
    pub assumptions: Vec<String>,
    pub cautions: Vec<String>,
    pub inputs: Vec<InputOut>,
    pub search: SearchOut,
    /// What the settings were chosen against: `typical` or `worst-case`.
    pub basis: String,
    /// The chosen setting at the worst corners of the part and operating
    /// spreads (whichever basis chose it).
    pub worst_case: WorstCaseOut,
}

/// One reason a plan is infeasible: an error finding, by its code.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct BlockerOut {
    pub code: String,
    pub message: String,
}

impl std::fmt::Display for BlockerOut {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "error finding {}: {}", self.code, self.message)
    }
}

impl Plan {
    /// The reasons the plan is infeasible, one sentence each: the blocking
    /// findings, then the search's conflict.
    pub fn infeasible_reasons(&self) -> Vec<String> {
        let mut out: Vec<String> = self.blocked_by.iter().map(|b| b.to_string()).collect();
        if !self.search.constraints_met {
            out.extend(self.conflict.iter().cloned());
        }
        out
    }
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct WorstCaseOut {
    pub corners: usize,
    pub pruning: String,
    pub rows: Vec<WorstRow>,
    /// Corners where the rated current cannot be reached at all.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub unreachable: Vec<String>,
    /// Every constraint holds at every corner.
    pub pass: bool,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct WorstRow {
    pub name: String,
    pub value: Option<f64>,
    pub limit: Option<f64>,
    pub unit: String,
    /// The corner (and supply) where the worst value occurs.
    pub corner: String,
    pub pass: bool,
}

fn worst_case_out(w: &crate::model::spread::WorstCase) -> WorstCaseOut {
    let row = |name: &str, v: &crate::model::spread::WorstValue| WorstRow {
        name: name.into(),
        value: v.value,
        limit: v.limit,
        unit: v.unit.into(),
        corner: v.corner.clone(),
        pass: v.pass,
    };
    let mut rows = vec![
        row("junction", &w.junction),
        row("total-loss", &w.total_loss),
        row("ripple", &w.ripple),
        row("duty-range", &w.duty_range),
    ];
    if w.dead_time.applicable {
        rows.push(WorstRow {
            name: "dead-time".into(),
            value: w.dead_time.worst_need_s,
            limit: Some(w.dead_time.chosen_s),
            unit: "s".into(),
            corner: format!(
                "{} against {}",
                w.dead_time.slow_turn_off, w.dead_time.fast_turn_on
            ),
            pass: w.dead_time.pass,
        });
    }
    if let Some(v) = &w.sampling {
        rows.push(row("sampling-window", v));
    }
    rows.push(WorstRow {
        name: "audible".into(),
        value: None,
        limit: None,
        unit: String::new(),
        corner: w
            .audible
            .corner
            .clone()
            .unwrap_or_else(|| w.audible.reason.clone()),
        pass: w.audible.pass,
    });
    WorstCaseOut {
        corners: w.corners,
        pruning: w.pruning.clone(),
        rows,
        unreachable: w.unreachable.clone(),
        pass: w.pass,
    }
}

/// A worst-case row's number in its unit.
fn worst_number(v: f64, unit: &str) -> String {
    match unit {
        "°C" => format_quantity(v, Dimension::Temperature, 3),
        "A" => format_quantity(v, Dimension::Current, 3),
        "V" => format_quantity(v, Dimension::Voltage, 3),
        "W" => format_quantity(v, Dimension::Power, 3),
        "s" => format_quantity(v, Dimension::Time, 3),
        "" => format!("{:.1} %", 100.0 * v),
        _ => format!("{v}"),
    }
}

/// One finding per worst-case failure, naming the constraint and the
/// corner: severity `error` (blocks the plan) under
/// `constraints.worst_case: block`, `warning` under `warn`.
fn worst_case_findings(
    w: &WorstCaseOut,
    policy: WorstCasePolicySpec,
    worst_case_basis: bool,
) -> Vec<FindingOut> {
    let (severity, advice) = match policy {
        WorstCasePolicySpec::Block if worst_case_basis => {
            ("error", "; `constraints.worst_case: warn` accepts the risk")
        }
        WorstCasePolicySpec::Block => (
            "error",
            "; `pwmplan plan --worst-case` chooses the setting against the worst corners, and `constraints.worst_case: warn` accepts the risk",
        ),
        WorstCasePolicySpec::Warn => (
            "warning",
            " (accepted: the design says constraints.worst_case: warn)",
        ),
    };
    let mut out = Vec::new();
    for r in w.rows.iter().filter(|r| !r.pass) {
        let figure = match (r.value, r.limit) {
            (Some(v), Some(l)) if r.name == "dead-time" => format!(
                ": the worst pair needs {} against the {} chosen",
                worst_number(v, &r.unit),
                worst_number(l, &r.unit)
            ),
            (Some(v), Some(l)) => format!(
                ": {} against the limit {}",
                worst_number(v, &r.unit),
                worst_number(l, &r.unit)
            ),
            (None, _) if r.name == "duty-range" => {
                ": the needed duty falls outside the compare limits".into()
            }
            (None, _) if r.name == "junction" => ": thermal runaway".into(),
            _ => String::new(),
        };
        out.push(FindingOut {
            severity: severity.into(),
            code: format!("worst-case-{}", r.name),
            message: format!(
                "worst case: {} FAILS at the corner {}{figure}{advice}",
                r.name, r.corner
            ),
        });
    }
    for c in &w.unreachable {
        out.push(FindingOut {
            severity: severity.into(),
            code: "worst-case-unreachable".into(),
            message: format!(
                "worst case: the rated current cannot be reached at the corner {c}{advice}"
            ),
        });
    }
    out
}

/// The three-phase block of `plan.json`.
/// A three-phase case named as in the plan's case list.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct NamedThreePhaseCase {
    pub name: String,
    pub case: ThreePhaseCase,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ThreePhaseOut {
    /// `sinusoidal` or `six-step`.
    pub modulation: String,
    /// Sinusoidal: `none` or `min-max`.
    pub zero_sequence: Option<String>,
    /// Six-step: `high-side`, `low-side` or `complementary`.
    pub chop: Option<String>,
    /// The timer channels: all three share the period, the compare limits
    /// and the dead time.
    pub channels: Vec<String>,
    pub pole_pairs: u32,
    /// Back-EMF constant, line-to-neutral peak per electrical rad/s.
    pub k_e_v_s_per_rad: f64,
    /// Line-to-neutral back-EMF peak at the operating speed.
    pub back_emf_phase_peak_v: f64,
    /// The back-EMF's shape: `sinusoidal`, or `trapezoidal` (120° flat, linear over ±30°
    /// about each zero crossing).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub back_emf_shape: Option<String>,
    pub electrical_frequency_hz: f64,
    /// What `rated_current` is taken as.
    pub current_meaning: String,
    pub rated: ThreePhaseCase,
    pub high_bus: ThreePhaseCase,
    /// The operating range's points among the plan's cases (same names).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub range_cases: Vec<NamedThreePhaseCase>,
    /// The current-sampling window (null when none fits the period, or with a DC-link shunt).
    pub sampling: Option<SamplingPlan>,
    /// One shunt in the DC link read in two active vectors (only with one).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dc_link: Option<DcLinkPlan>,
    /// Six-step: the commutation table (only under six-step).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub six_step_table: Option<SixStepTable>,
    /// Sensorless six-step (`six-step: { rotor_position: back-emf }`): where to read the
    /// floating phase's back-EMF, the thresholds, the blanking after a commutation.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub back_emf: Option<crate::output::back_emf_out::BackEmfPlan>,
}

/// Six-step commutation (`physics::three_phase::sectors`): per sector of phase A's
/// back-EMF angle and per direction, the phases on each rail and the floating one.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SixStepTable {
    /// Which switch chops at the PWM duty and which is held on, in words.
    pub chopping: String,
    pub sectors: Vec<SectorRow>,
}

/// One 60° sector.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SectorRow {
    pub sector: u32,
    /// Electrical angle of phase A's back-EMF where the sector starts and ends, degrees.
    pub from_deg: f64,
    pub to_deg: f64,
    pub forward: SectorPhases,
    pub reverse: SectorPhases,
}

/// The phases of one sector: `A`, `B` or `C`.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SectorPhases {
    pub positive: String,
    pub negative: String,
    pub floating: String,
}

/// The commutation table of a six-step plan.
fn six_step_table(chop: crate::model::physics::three_phase::Chop) -> SixStepTable {
    use crate::model::physics::three_phase::Chop;
    use crate::model::physics::three_phase::sectors::{
        PHASES, SECTORS, sector_drive, sector_start_deg,
    };
    let phases = |d: crate::model::physics::three_phase::sectors::SectorDrive| SectorPhases {
        positive: PHASES[d.positive].into(),
        negative: PHASES[d.negative].into(),
        floating: PHASES[d.floating].into(),
    };
    let chopping = match chop {
        Chop::HighSide => {
            "the positive phase's high side switches at the PWM duty (its low side stays off; the off-time current freewheels in that low side's body diode); the negative phase's low side is held on"
        }
        Chop::LowSide => {
            "the negative phase's low side switches at the PWM duty (its high side stays off; the off-time current freewheels in that high side's body diode); the positive phase's high side is held on"
        }
        Chop::Complementary => {
            "the positive phase's high side switches at the PWM duty and its low side complementarily, with the dead time; the negative phase's low side is held on"
        }
    };
    SixStepTable {
        chopping: format!("{chopping}; both switches of the floating phase are off"),
        sectors: (0..SECTORS)
            .map(|k| SectorRow {
                sector: k as u32,
                from_deg: sector_start_deg(k),
                to_deg: (sector_start_deg(k) + 60.0) % 360.0,
                forward: phases(sector_drive(k, true)),
                reverse: phases(sector_drive(k, false)),
            })
            .collect(),
    }
}

/// A three-phase plan's single DC-link shunt (`physics::three_phase::dc_link`).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct DcLinkPlan {
    pub settle_time_s: f64,
    pub sample_time_s: f64,
    /// Counts from each trigger to the end of its vector (the acquisition, rounded up).
    pub lead_counts: u64,
    /// The shortest vector a reading needs, counts and seconds (dead time, settling,
    /// acquisition).
    pub min_vector_counts: u64,
    pub min_vector_s: f64,
    /// The highest modulation index the load needs, and the highest at which every angle's
    /// shifted compares fit the counter (up to the linear limit).
    pub needed_modulation: f64,
    pub max_modulation: f64,
}

/// The low-side shunt sampling of a three-phase plan.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SamplingPlan {
    pub settle_time_s: f64,
    /// The acquisition the window holds, s: the board's `sample_time`, twice it when the two
    /// currents are converted one after the other.
    pub sample_time_s: f64,
    /// `simultaneous` (two converters) or `sequential` (one, both acquisitions in the
    /// window).
    #[serde(default)]
    pub conversion: String,
    /// Compare value matched on the UP-count that starts the ADC conversion.
    pub trigger_compare: u64,
    /// Which count direction's match triggers: `up`.
    pub trigger_count: String,
    /// Time from the trigger to the counter top (the window is centred on
    /// the top, the middle of the low-side on-time under `pwm_mode`).
    pub trigger_before_top_s: f64,
    /// The PWM mode and output polarity the trigger assumes.
    pub pwm_mode: String,
    pub period_s: f64,
    /// Shortest low-side time the window needs (reference, and gate on-time).
    pub min_low_side_on_s: f64,
    pub min_low_side_gate_on_s: f64,
    /// Largest high-side duty (and compare value) of a sampled leg.
    pub max_high_side_duty: f64,
    pub max_high_side_compare: u64,
    /// The duty the sampling constraint compares (sampled leg at the lowest
    /// supply; six-step low-side chop: chopping duty at the highest supply).
    pub needed_duty: Option<f64>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Pwm {
    pub frequency_hz: f64,
    pub alignment: String,
    /// Smallest and largest duty the timer may be given (fractions).
    pub duty_min: f64,
    pub duty_max: f64,
    pub compare_min: u64,
    pub compare_max: u64,
    /// Channel duties the rated load needs over the supply range.
    pub duty_needed: [f64; 2],
    /// Output-voltage error from the dead time, V (at the nominal supply).
    pub dead_time_voltage_error_v: f64,
    /// Compare counts a leg's dead time takes from its output pulse, `t_dead·f·duty_steps`
    /// (0 without complementary outputs): added for current out of the leg, taken away for
    /// current into it, they make up the dead time's voltage (common practice).
    #[serde(default)]
    pub dead_time_comp_counts: f64,
    /// The board's shortest allowed output pulse, s (0 when not given).
    pub min_pulse_s: f64,
    /// Bootstrap refresh time the low side must stay on, s.
    pub refresh_s: Option<f64>,
    /// High-side output on-time at `compare_min`, after the dead time, s.
    pub shortest_high_pulse_s: f64,
    /// Low-side output on-time (a single switch: off-time) at
    /// `compare_max`, after the dead time, s.
    pub shortest_low_pulse_s: f64,
}

/// What the verifier measured on the written registers.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct RegisterCheck {
    /// Shortest high-side output pulse at `compare_min` (a single switch: its on-pulse), s.
    pub shortest_high_pulse_s: f64,
    /// Shortest low-side output pulse at `compare_max` (a single switch: its off-time), s.
    pub shortest_low_pulse_s: f64,
    pub cases: Vec<CaseCheck>,
    /// At the current-sampling trigger, the shortest time the sampled state (sinusoidal
    /// three-phase: the sampled legs' low sides) has held, and will hold, over the compares
    /// the plan allows, s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sample_low_on_before_s: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sample_low_on_after_s: Option<f64>,
    /// Sensorless six-step: at the back-EMF triggers, the shortest time the state read has
    /// held, and will hold, over the on-times each window claims, s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub back_emf_before_s: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub back_emf_after_s: Option<f64>,
    /// The current limit's chopped stall on the written threshold, blanking
    /// and filter (at the highest-trip corner): its highest and mean current.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limit_stall_peak_a: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub limit_stall_mean_a: Option<f64>,
    /// What was not checked, and why.
    pub not_checked: Vec<String>,
    /// Each claim the verifier contradicts, with both figures.
    pub disagreements: Vec<String>,
}

/// One operating case on the registers.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CaseCheck {
    pub name: String,
    /// The compare duty simulated (the plan's, to 1/4096 of a count).
    pub compare_duty: f64,
    /// Mean motor current, A.
    pub mean_a: f64,
    /// Ripple peak to peak, A.
    pub ripple_pp_a: f64,
    pub continuous: bool,
    /// Lowest significant line at or below the hearing limit, Hz.
    pub lowest_audible_line_hz: Option<f64>,
    /// A line lies within the guard band of the significance threshold: not compared.
    pub line_near_threshold: bool,
}

/// The load and the conduction drops the plan's duties account for.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct LoadOut {
    /// Motor resistance, Ω (brushless: per phase).
    pub r_ohm: f64,
    /// Motor inductance, H (brushless: per phase).
    pub l_h: f64,
    /// Switch on-resistance used for the drops: at the junction limit, Ω.
    pub r_ds_on_ohm: f64,
    /// Body-diode forward voltage during the dead time, V.
    pub v_sd_v: f64,
    /// Freewheel-diode forward voltage (single switch only), V.
    pub freewheel_v_f_v: Option<f64>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct TimerOut {
    pub clock_hz: f64,
    pub counter_bits: u32,
    pub divider: u64,
    pub divider_register: u64,
    pub period_ticks: u64,
    pub period_register: u64,
    pub duty_steps: u64,
    pub resolution_bits: f64,
    pub dead_time_ticks: Option<u64>,
    pub dead_time_code: Option<u32>,
    pub dead_time_s: f64,
    pub dead_time_need_s: f64,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Thermal {
    /// Hottest junction at the rated case (null on runaway).
    pub junction_c: Option<f64>,
    /// Hottest junction at the highest supply.
    pub junction_high_bus_c: Option<f64>,
    pub limit_c: f64,
    pub ambient_c: f64,
    pub r_th_ja_k_per_w: f64,
}

/// The motor-current ripple. The top-level figures keep their keys: the
/// peak to peak is the worst of the rated and high-bus cases (the case named
/// by `peak_to_peak_case`), `continuous` holds for both, and the mean, rms,
/// ac rms and frequency are the rated case's (`case`). `by_case` gives every
/// figure of each case.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Ripple {
    /// Worst of the rated and high-bus cases, A.
    pub peak_to_peak_a: f64,
    pub continuous: bool,
    pub mean_a: f64,
    pub rms_a: f64,
    pub ac_rms_a: f64,
    pub frequency_hz: f64,
    /// The case of `mean_a`, `rms_a`, `ac_rms_a` and `frequency_hz`.
    #[serde(default)]
    pub case: String,
    /// The case whose peak to peak is `peak_to_peak_a` (the larger).
    #[serde(default)]
    pub peak_to_peak_case: String,
    /// Every figure per case: rated, then high-bus.
    #[serde(default)]
    pub by_case: Vec<RippleCase>,
}

/// The ripple figures of one operating case.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct RippleCase {
    pub case: String,
    pub v_bus_v: f64,
    pub peak_to_peak_a: f64,
    pub continuous: bool,
    pub mean_a: f64,
    pub rms_a: f64,
    pub ac_rms_a: f64,
    pub frequency_hz: f64,
}

fn ripple_case(r: &model::CaseResult) -> RippleCase {
    RippleCase {
        case: r.case.name.into(),
        v_bus_v: r.case.v_bus_v,
        peak_to_peak_a: r.ripple.peak_to_peak_a,
        continuous: r.ripple.continuous,
        mean_a: r.ripple.mean_a,
        rms_a: r.ripple.rms_a,
        ac_rms_a: r.ripple.ac_rms_a,
        frequency_hz: r.ripple.frequency_hz,
    }
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Acoustic {
    pub lowest_audible_line_hz: Option<f64>,
    /// A-weighted level of the in-band ripple lines, dB(A) re 1 A rms.
    pub a_weighted_db: Option<f64>,
    pub verdict: String,
    /// The operating case these figures are from.
    #[serde(default)]
    pub case: String,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ConstraintOut {
    pub name: String,
    pub limit: f64,
    pub value: Option<f64>,
    pub margin: Option<f64>,
    pub unit: String,
    pub pass: bool,
    pub binding: bool,
    pub detail: String,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct FindingOut {
    pub severity: String,
    pub code: String,
    pub message: String,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct AlternativeOut {
    pub label: String,
    pub frequency_hz: f64,
    pub alignment: String,
    pub divider: u64,
    pub period_ticks: u64,
    pub total_loss_w: f64,
    pub junction_c: Option<f64>,
    pub ripple_a: f64,
    pub trade: String,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct CaseOut {
    pub name: String,
    pub v_bus_v: f64,
    pub t_ambient_c: f64,
    pub load_current_a: f64,
    /// Motor back-EMF at the operating speed, V.
    pub back_emf_v: f64,
    pub modulation: f64,
    /// Compare duty that gives the load current with the dead time and the
    /// drops counted (leg A of an H-bridge; the highest leg duty of a
    /// three-phase bridge).
    pub compare_duty: f64,
    /// `compare_duty` as a compare value, rounded to the nearest count.
    pub compare: u64,
    pub losses_w: LossFigures,
    pub junction_c: Option<f64>,
    pub ripple_peak_to_peak_a: f64,
    /// Lowest significant ripple line at or below the hearing limit.
    pub lowest_audible_line_hz: Option<f64>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct InputOut {
    pub file: String,
    pub sha256: String,
    /// Every field of the file as written, by dotted path (for "what changed").
    pub fields: BTreeMap<String, String>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SearchOut {
    pub realisable_settings: usize,
    pub evaluated_settings: usize,
    pub pinned_frequency_hz: Option<f64>,
    /// The search found a setting that meets every constraint (at typical
    /// values, or at the worst corners with `--worst-case`).
    #[serde(default)]
    pub constraints_met: bool,
}

/// How an input file is named in the plan: bundled files by their bundled
/// name; files on disk relative to the design file's folder, so the record
/// does not depend on the working directory or on how the path was typed.
fn record_name(origin: &crate::input::load::Origin, design: &crate::input::load::Origin) -> String {
    use crate::input::load::Origin;
    use std::path::{Component, PathBuf};
    let normal = |p: &std::path::Path| -> PathBuf {
        p.components()
            .filter(|c| !matches!(c, Component::CurDir))
            .collect()
    };
    match (origin, design) {
        (Origin::Disk(p), Origin::Disk(d)) => {
            let dir = normal(d.parent().unwrap_or(std::path::Path::new("")));
            let p = normal(p);
            p.strip_prefix(&dir)
                .map(|r| r.to_path_buf())
                .unwrap_or(p.clone())
                .to_string_lossy()
                .replace('\\', "/")
        }
        (o, _) => o.display(),
    }
}

// Hashing is the sealing module's; the old path stays.
pub use crate::output::seal::sha256_hex;

/// Flatten a YAML text into dotted paths → scalar texts.
pub fn flatten_fields(text: &str) -> BTreeMap<String, String> {
    fn walk(prefix: &str, v: &serde_yaml::Value, out: &mut BTreeMap<String, String>) {
        match v {
            serde_yaml::Value::Mapping(m) => {
                for (k, v) in m {
                    let key = match k {
                        serde_yaml::Value::String(s) => s.clone(),
                        other => serde_yaml::to_string(other)
                            .unwrap_or_default()
                            .trim()
                            .to_string(),
                    };
                    let p = if prefix.is_empty() {
                        key
                    } else {
                        format!("{prefix}.{key}")
                    };
                    walk(&p, v, out);
                }
            }
            serde_yaml::Value::Sequence(s) => {
                for (i, v) in s.iter().enumerate() {
                    walk(&format!("{prefix}[{i}]"), v, out);
                }
            }
            serde_yaml::Value::String(s) => {
                out.insert(prefix.to_string(), s.clone());
            }
            serde_yaml::Value::Tagged(t) => walk(prefix, &t.value, out),
            other => {
                let s = serde_yaml::to_string(other).unwrap_or_default();
                out.insert(prefix.to_string(), s.trim().to_string());
            }
        }
    }
    let mut out = BTreeMap::new();
    if let Ok(v) = serde_yaml::from_str::<serde_yaml::Value>(text) {
        walk("", &v, &mut out);
    }
    out
}

pub fn topology_name(d: &Design) -> String {
    match (d.board.stage.topology, d.board.stage.modulation) {
        (TopologySpec::LowSide, _) => "low-side".into(),
        (TopologySpec::HalfBridge, _) => "half-bridge".into(),
        (TopologySpec::HBridge, Some(crate::input::spec::ModulationSpec::Bipolar)) => {
            "h-bridge-bipolar".into()
        }
        (TopologySpec::HBridge, _) => "h-bridge-unipolar".into(),
        (TopologySpec::ThreePhase, _) => "three-phase".into(),
    }
}

fn objective_name(o: Objective) -> &'static str {
    match o {
        Objective::LeastLoss => "least-loss",
        Objective::Quietest => "quietest",
        Objective::CoolestJunction => "coolest-junction",
        Objective::LeastAverageLoss => "least-average-loss",
        Objective::LeastWorstLoss => "least-worst-loss",
    }
}

/// Findings at the chosen setting: ratings, runaway, worst-case failures,
/// conduction mode, dead time, bootstrap.
fn findings(
    d: &Design,
    ev: &Evaluator,
    c: &Candidate,
    worst: &WorstCaseOut,
    worst_case_basis: bool,
) -> Vec<FindingOut> {
    let mut out: Vec<FindingOut> = ev
        .rating_findings(d)
        .into_iter()
        .map(|f| FindingOut {
            severity: model::severity_name(f.severity).into(),
            code: f.code.into(),
            message: f.message,
        })
        .collect();
    for r in [&c.rated, &c.high_bus] {
        if let Some(why) = &r.runaway {
            out.push(finding(
                "error",
                "thermal-runaway",
                format!("{} case: {why}", r.case.name),
            ));
        }
    }
    for w in worst_case_findings(worst, d.spec.constraints.worst_case, worst_case_basis) {
        out.push(finding(&w.severity, &w.code, w.message));
    }
    out.extend(c_rss_finding(d));
    if !c.rated.ripple.continuous {
        out.push(finding("info", "discontinuous-current", "motor current is discontinuous at the rated load: it falls to zero each period (the freewheel diode blocks)".into()));
    }
    if ev.needs_dead_time() {
        out.push(dead_time_finding(ev, c));
    }
    out.extend(bootstrap_finding(d, ev, c));
    out.extend(bootstrap_hold_up_finding(d, ev));
    out.extend(six_step_commutation_finding(c));
    out.extend(back_emf_finding(d, ev, c));
    out.extend(dead_time_harmonics_finding(c));
    if matches!(ev.stage.topology, Topology::LowSide)
        && c.duty_limits.is_some_and(|l| l.max_duty < 1.0)
    {
        out.push(finding(
            "info",
            "no-full-on",
            "100 % duty is not used: the compare limit keeps a minimum off-pulse each period"
                .into(),
        ));
    }
    sort_findings(&mut out);
    out
}

/// Errors first, then warnings, then information; stable within each.
fn sort_findings(out: &mut [FindingOut]) {
    out.sort_by_key(|f| match f.severity.as_str() {
        "error" => 0,
        "warning" => 1,
        _ => 2,
    });
}

/// One finding from its severity, code and message.
/// A warning where the dead time's current harmonics could not be accounted for: the motor's
/// impedance is so low against the dead time's voltage that the phase current is strongly
/// distorted and its fundamental rests on a first-order make-up.
fn dead_time_harmonics_finding(c: &Candidate) -> Option<FindingOut> {
    let unsettled: Vec<&str> = [&c.rated, &c.high_bus]
        .into_iter()
        .filter(|r| {
            r.three_phase
                .as_ref()
                .is_some_and(|t| t.dead_time_harmonics_unsettled)
        })
        .map(|r| r.case.name)
        .collect();
    (!unsettled.is_empty()).then(|| {
        finding(
            "warning",
            "dead-time-distortion",
            format!(
                "{} {}: the dead time's voltage is large against the motor's impedance, so it distorts the phase current strongly (5th, 7th, … harmonics), neither the harmonic account nor the averaged bridge settled, and the current at the written modulation index can be several per cent off the rated current (the register check reports the figure it measured); close the current loop in firmware, or shorten the dead time",
                unsettled.join(" and "),
                if unsettled.len() > 1 { "cases" } else { "case" }
            ),
        )
    })
}

fn finding(severity: &str, code: &str, message: String) -> FindingOut {
    FindingOut {
        severity: severity.into(),
        code: code.into(),
        message,
    }
}

/// How the switch's C_rss curve compares with its Q_gd: a warning when
/// they disagree, else a note of the scaling; none without a curve.
fn c_rss_finding(d: &Design) -> Option<FindingOut> {
    let r = model::c_rss_reconciliation(&d.switch)?;
    let nc = |q: f64| format_quantity(q, Dimension::Charge, 3);
    let swing = format!(
        "the gate-charge test swing from {}{} down to the on state",
        format_quantity(r.v_test_v, Dimension::Voltage, 3),
        if r.v_test_given {
            ""
        } else {
            " (half of V_DSS; q_g.at_v_ds not given)"
        }
    );
    Some(if r.disagrees() {
        finding(
            "warning",
            "c-rss-q-gd-disagree",
            format!(
                "the C_rss curve gives a Miller charge of {} over {swing}, against Q_gd {}: they differ by more than {:.0} %; check both datasheet values (the curve is scaled by ×{:.2} to Q_gd)",
                nc(r.curve_q_gd_c),
                nc(r.q_gd_c),
                100.0 * model::C_RSS_Q_GD_TOLERANCE,
                r.factor
            ),
        )
    } else {
        finding(
            "info",
            "c-rss-scaled-to-q-gd",
            format!(
                "the C_rss curve gives a Miller charge of {} over {swing}; it is scaled by ×{:.2} to Q_gd {} (the curve sets the shape of C_gd, Q_gd its size)",
                nc(r.curve_q_gd_c),
                r.factor,
                nc(r.q_gd_c)
            ),
        )
    })
}

/// The mean output voltage the dead time costs at the chosen setting (for
/// a stage that needs a dead time).
fn dead_time_finding(ev: &Evaluator, c: &Candidate) -> FindingOut {
    let v_err = dead_time_error_v(ev, c);
    finding(
        "info",
        "dead-time-voltage-error",
        format!(
            "the dead time costs about {} of mean output voltage ({:.2} % of the nominal supply) where it opposes the current; the compare duties above already make it up",
            format_quantity(v_err, Dimension::Voltage, 3),
            100.0 * v_err / ev.rated.v_bus_v
        ),
    )
}

/// The board's bootstrap capacitor and draw, when its high side is
/// bootstrapped.
fn bootstrap_parts(d: &Design) -> Option<(f64, f64)> {
    match &d.board.gate_driver.high_side {
        Some(HighSideSupplySpec::Bootstrap {
            capacitor,
            load_current,
            ..
        }) => Some((capacitor.si, load_current.si)),
        _ => None,
    }
}

/// A warning when a bootstrap capacitor is below the size needed for 10 %
/// droop at the chosen frequency and duty; none otherwise.
fn bootstrap_finding(d: &Design, ev: &Evaluator, c: &Candidate) -> Option<FindingOut> {
    let (capacitor, load_current) = bootstrap_parts(d)?;
    let sizing = bootstrap::bootstrap_sizing(&BootstrapInputs::for_switch(
        &ev.stage.switch,
        &ev.stage.drive,
        ev.rated.load_current_a,
        load_current,
        c.duty_needed.1.clamp(0.0, 1.0),
        c.setting.frequency_hz,
    ));
    let s = sizing.filter(|s| capacitor < s.c_recommended_f)?;
    Some(finding(
        "warning",
        "bootstrap-capacitor-small",
        format!(
            "bootstrap capacitor {} is below the {} needed for 10 % droop at this frequency and duty",
            format_quantity(capacitor, Dimension::Capacitance, 3),
            format_quantity(s.c_recommended_f, Dimension::Capacitance, 3)
        ),
    ))
}

/// The longest a six-step high side stays on without a refresh: with
/// low-side chopping it conducts for two sectors (120° of the electrical
/// period, block commutation, common practice) while its own low side is
/// off, so its bootstrap capacitor is not recharged; at the range's lowest
/// speed (the rated speed without a range), forever when the drive holds at
/// standstill. `None` where every period refreshes it.
fn six_step_hold_s(ev: &Evaluator) -> Option<f64> {
    use crate::model::evaluate::ThreePhaseModulation as M;
    use crate::model::physics::three_phase::Chop;
    let tp = ev.three_phase.as_ref()?;
    if !matches!(
        tp.modulation,
        M::SixStep {
            chop: Chop::LowSide
        }
    ) {
        return None;
    }
    let slowest = match &ev.range {
        Some(r) if r.hold_current_a.is_some() => 0.0,
        Some(r) => r.speed_min_rad_s,
        None => tp.omega_e_rad_s / f64::from(tp.pole_pairs),
    };
    let f_e = slowest * f64::from(tp.pole_pairs) / (2.0 * std::f64::consts::PI);
    Some(if f_e > 0.0 {
        1.0 / (3.0 * f_e)
    } else {
        f64::INFINITY
    })
}

/// Six-step low-side chopping at the slowest speed holds a high side on for
/// a third of the electrical period: its bootstrap droops by (Q_g + I·t)/C.
/// An error when the gate would fall below the Miller plateau (the switch
/// leaves full conduction and heats in its linear region), a warning above
/// 10 % of the drive voltage, each with the capacitor it needs.
fn bootstrap_hold_up_finding(d: &Design, ev: &Evaluator) -> Option<FindingOut> {
    let (capacitor, load_current) = bootstrap_parts(d)?;
    let t_hold = six_step_hold_s(ev)?;
    let v_drv = ev.stage.drive.v_drive_v;
    let h = bootstrap::hold_up(
        &ev.stage.switch,
        &ev.stage.drive,
        ev.rated.load_current_a,
        load_current,
        t_hold,
        capacitor,
    );
    let (droop, plateau) = (h.droop_v, h.plateau_v);
    if droop <= 0.1 * v_drv {
        return None;
    }
    let what = if t_hold.is_infinite() {
        "holding at standstill with low-side chopping keeps a high side on with no refresh at all: a bootstrap supply cannot hold it; use an isolated high-side supply or complementary chopping".to_string()
    } else {
        let need = h.capacitor_needed_f;
        format!(
            "six-step low-side chopping holds a high side on for {} at the slowest speed with no refresh: the bootstrap capacitor {} droops {} (Q_g and {} drawn), more than 10 % of the {} drive; it needs {} or more, or complementary chopping",
            format_quantity(t_hold, Dimension::Time, 3),
            format_quantity(capacitor, Dimension::Capacitance, 3),
            format_quantity(droop, Dimension::Voltage, 3),
            format_quantity(load_current, Dimension::Current, 3),
            format_quantity(v_drv, Dimension::Voltage, 3),
            format_quantity(need, Dimension::Capacitance, 3),
        )
    };
    let severity = if t_hold.is_infinite() || v_drv - droop < plateau {
        "error"
    } else {
        "warning"
    };
    Some(finding(severity, "bootstrap-hold-up", what))
}

/// Share of a 60° sector above which the off-going phase's diode freewheel after a six-step
/// commutation is worth a warning (our own bound: a quarter of the sector leaves the torque
/// dipping for that long every sector and, on a sensorless drive, that much of the floating
/// phase's back-EMF hidden behind the diode clamp).
pub const COMMUTATION_WARN_SHARE: f64 = 0.25;

/// The simulated commutation figures of the rated and high-bus cases, with the cases' names.
fn commutation_figures(
    c: &Candidate,
) -> [(
    Option<crate::model::evaluate::CommutationFigure>,
    &'static str,
); 2] {
    let of =
        |r: &crate::model::evaluate::CaseResult| r.three_phase.as_ref().and_then(|t| t.commutation);
    [(of(&c.rated), "rated"), (of(&c.high_bus), "high-bus")]
}

/// Six-step: the off-going phase's diode freewheel after each commutation against the
/// sector, as simulated switch by switch at the rated and high-bus cases
/// ([`crate::model::evaluate::CommutationFigure`]). The model includes the interval; the
/// finding is a warning above [`COMMUTATION_WARN_SHARE`] and an error (the plan refused) when
/// the current has not reached zero by the next commutation, where the block pattern no longer
/// describes the drive (the "never settles within a sector").
fn six_step_commutation_finding(c: &Candidate) -> Option<FindingOut> {
    let mut worst: Option<(crate::model::evaluate::CommutationFigure, &str)> = None;
    for (f, case) in commutation_figures(c) {
        let Some(f) = f else {
            continue;
        };
        let worse = |w: &crate::model::evaluate::CommutationFigure| {
            (!f.settles && w.settles) || f.freewheel_s / f.sector_s > w.freewheel_s / w.sector_s
        };
        if worst.as_ref().is_none_or(|(w, _)| worse(w)) {
            worst = Some((f, case));
        }
    }
    let (f, case) = worst?;
    let share = f.freewheel_s / f.sector_s;
    if f.settles && share <= COMMUTATION_WARN_SHARE {
        return None;
    }
    let sector = format_quantity(f.sector_s, Dimension::Time, 3);
    let what = if f.settles {
        format!(
            "six-step: after each commutation the off-going phase keeps conducting through a body diode for {} at the {case} case, {:.0} % of the {sector} sector (simulated switch by switch; the losses and the duty include it): the torque dips for that long every sector, and a sensorless drive cannot see the floating phase's back-EMF until it ends",
            format_quantity(f.freewheel_s, Dimension::Time, 3),
            100.0 * share,
        )
    } else {
        format!(
            "six-step: at the {case} case the off-going phase's current has not reached zero when the next commutation comes ({sector} sectors): three phases conduct all the time and the block pattern no longer describes the drive; run the motor with sinusoidal modulation, at a lower current or speed, or with a motor of less inductance"
        )
    };
    Some(finding(
        if f.settles { "warning" } else { "error" },
        "six-step-commutation",
        what,
    ))
}

/// Sensorless six-step: a warning where the floating phase cannot be read at some on-times
/// (no window at all, or a gap between the on-time's least and the off-time's most), or
/// where the blanking after a commutation reaches the zero crossing 30° into the sector.
fn back_emf_finding(d: &Design, ev: &Evaluator, c: &Candidate) -> Option<FindingOut> {
    use crate::output::back_emf_out as b;
    let w = b::window(d, ev, c)?;
    let Some(w) = w else {
        return Some(finding(
            "warning",
            "back-emf-sampling",
            "sensorless six-step: at this setting neither the chopping switch's on-time nor its off-time can hold the dead time, the settling and the acquisition of the floating phase's back-EMF (see current_sensing); lengthen the period or shorten the settling".into(),
        ));
    };
    let p = b::back_emf_plan(d, ev, c)?;
    if !w.covers_every_duty() {
        return Some(finding(
            "warning",
            "back-emf-sampling",
            format!(
                "sensorless six-step: on-times from {} to {} counts hold neither back-EMF window (the on-time needs {} counts or more, the off-time {} or fewer): the floating phase cannot be read there; lengthen the period or shorten the settling",
                w.off_counts_max + 1,
                w.on_counts_min - 1,
                w.on_counts_min,
                w.off_counts_max
            ),
        ));
    }
    let late = p.blanking.iter().find(|x| {
        x.electrical_deg
            .is_none_or(|deg| deg >= p.zero_crossing_to_commutation_deg)
    })?;
    Some(finding(
        "warning",
        "back-emf-sampling",
        format!(
            "sensorless six-step: at the {} case the blanking after a commutation ({}) reaches the floating phase's zero crossing 30° into the sector: the crossing is hidden under the diode clamp; run slower or at less current, or with a motor of less inductance",
            late.case,
            match (late.periods, late.electrical_deg) {
                (Some(n), Some(deg)) => format!("{n} PWM periods, {deg:.1}°"),
                _ => "the off-going current never reaches zero".into(),
            }
        ),
    ))
}

/// The PWM record of a candidate (`v_err`: the dead-time voltage error).
pub fn pwm_out(ev: &Evaluator, c: &Candidate, v_err: f64) -> Pwm {
    let limits = c.duty_limits;
    Pwm {
        frequency_hz: c.setting.frequency_hz,
        alignment: c.setting.alignment.into(),
        duty_min: limits.map(|l| l.min_duty).unwrap_or(0.0),
        duty_max: limits.map(|l| l.max_duty).unwrap_or(0.0),
        compare_min: limits.map(|l| l.min_counts).unwrap_or(0),
        compare_max: limits.map(|l| l.max_counts).unwrap_or(0),
        duty_needed: [c.duty_needed.0, c.duty_needed.1],
        dead_time_voltage_error_v: v_err,
        dead_time_comp_counts: if ev.needs_dead_time() {
            c.dead_time.seconds * c.setting.frequency_hz * c.setting.duty_steps as f64
        } else {
            0.0
        },
        min_pulse_s: ev.timer.compare.min_pulse_s,
        refresh_s: ev.stage.bootstrap_refresh_s,
        shortest_high_pulse_s: limits.map(|l| l.shortest_high_pulse_s).unwrap_or(0.0),
        shortest_low_pulse_s: limits.map(|l| l.shortest_low_pulse_s).unwrap_or(0.0),
    }
}

/// The timer record of a candidate.
pub fn timer_out(ev: &Evaluator, c: &Candidate) -> TimerOut {
    TimerOut {
        clock_hz: ev.timer.clock_hz,
        counter_bits: ev.timer.counter_bits,
        divider: c.setting.divider,
        divider_register: c.setting.divider_register,
        period_ticks: c.setting.period_ticks,
        period_register: c.setting.period_register,
        duty_steps: c.setting.duty_steps,
        resolution_bits: c.setting.resolution_bits,
        dead_time_ticks: c.dead_time.ticks,
        dead_time_code: c.dead_time.code,
        dead_time_s: c.dead_time.seconds,
        dead_time_need_s: c.dead_time.need_s,
    }
}

/// The operating range's largest-ripple and lowest-duty cases of a
/// candidate (none without a range of more than one speed).
fn range_cases(ev: &Evaluator, c: &Candidate) -> Vec<crate::model::evaluate::CaseResult> {
    match (ev.range.as_ref(), c.range.as_ref()) {
        (Some(r), Some(res)) => {
            ev.range_check_cases(r, res, c.setting.frequency_hz, c.dead_time.seconds)
        }
        _ => Vec::new(),
    }
}

/// The operating cases of a candidate: rated and high-bus, then over a
/// range its largest-ripple and lowest-duty points.
pub fn cases_out(ev: &Evaluator, c: &Candidate) -> Vec<CaseOut> {
    let over_range = range_cases(ev, c);
    [&c.rated, &c.high_bus]
        .into_iter()
        .chain(&over_range)
        .map(|r| CaseOut {
            name: r.case.name.into(),
            v_bus_v: r.case.v_bus_v,
            t_ambient_c: r.case.t_ambient_c,
            load_current_a: r.case.load_current_a,
            back_emf_v: r.case.back_emf_v,
            modulation: r.modulation,
            compare_duty: r.compare_duty,
            compare: crate::model::timer::compare_for_duty(
                &crate::model::spread::pwm_setting(&c.setting),
                r.compare_duty,
            ),
            losses_w: r.losses.clone(),
            junction_c: r.junction_c,
            ripple_peak_to_peak_a: r.ripple.peak_to_peak_a,
            lowest_audible_line_hz: r.acoustic.lowest_audible_line_hz,
        })
        .collect()
}

/// The load and drops a candidate's duties account for.
pub fn load_out(ev: &Evaluator, c: &Candidate) -> LoadOut {
    let drops = ev.leg_drops(&ev.rated, c.setting.frequency_hz, c.dead_time.seconds);
    LoadOut {
        r_ohm: ev.motor_r_ohm,
        l_h: ev.motor_l_h,
        r_ds_on_ohm: drops.r_ds_on_ohm,
        v_sd_v: drops.v_sd_v,
        freewheel_v_f_v: ev.stage.diode.as_ref().map(|d| d.v_f_v),
    }
}

/// The hearing limit the audibility verdict used, Hz.
pub fn hearing_limit_hz(ev: &Evaluator) -> f64 {
    match &ev.audible {
        AudibleMode::Inaudible { hearing_limit_hz }
        | AudibleMode::AvoidBands {
            hearing_limit_hz, ..
        } => *hearing_limit_hz,
        AudibleMode::Allowed => crate::model::physics::acoustics::DEFAULT_HEARING_LIMIT_HZ,
    }
}

/// Build the plan of a solved design. `None` when the solution has no
/// candidate at all (nothing in the band could be evaluated).
pub fn build(d: &Design, ev: &Evaluator, sol: &Solution, pinned_hz: Option<f64>) -> Option<Plan> {
    build_on(d, ev, sol, pinned_hz, false)
}

/// [`build`], stating whether the solution was chosen against the worst
/// corners (`plan --worst-case`).
pub fn build_on(
    d: &Design,
    ev: &Evaluator,
    sol: &Solution,
    pinned_hz: Option<f64>,
    worst_case_basis: bool,
) -> Option<Plan> {
    let c = sol.chosen.as_ref()?;
    let worst = worst_case_out(&crate::model::spread::worst_case(
        d,
        ev,
        &c.setting,
        &c.dead_time,
    ));
    let limit = crate::model::current_limit::plan(d, ev, c);
    let mut findings = findings(d, ev, c, &worst, worst_case_basis);
    if let Some((_, limit_findings)) = &limit {
        findings.extend(limit_findings.iter().map(|f| FindingOut {
            severity: model::severity_name(f.severity).into(),
            code: f.code.into(),
            message: f.message.clone(),
        }));
        sort_findings(&mut findings);
    }
    let (current_loop, loop_findings) = crate::model::current_loop::plan(d, ev, c);
    findings.extend(loop_findings.iter().map(|f| FindingOut {
        severity: model::severity_name(f.severity).into(),
        code: f.code.into(),
        message: f.message.clone(),
    }));
    sort_findings(&mut findings);
    let blocked_by = blockers(&findings);
    let v_err = dead_time_error_v(ev, c);
    Some(Plan {
        generated: generated_stamp(),
        design: d.spec.name.clone(),
        board: d.board.name.clone(),
        switch: d.switch.name.clone(),
        topology: topology_name(d),
        objective: objective_name(sol.objective).into(),
        feasible: sol.feasible && blocked_by.is_empty(),
        blocked_by,
        conventions: CONVENTIONS
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect(),
        pwm: pwm_out(ev, c, v_err),
        timer: timer_out(ev, c),
        losses_w: c.rated.losses.clone(),
        thermal: thermal_out(ev, c),
        ripple: ripple_out(c),
        acoustic: acoustic_out(c),
        constraints: constraints_out(c),
        findings,
        devices: c.rated.devices.clone(),
        three_phase: three_phase_out(d, ev, c),
        operating_range: crate::output::range_out::range_out(ev, c),
        current_limit: limit.map(|l| l.0),
        sampling: crate::model::current_loop::sampling_out(ev, c),
        current_loop,
        feasible_band_hz: sol.feasible_band_hz.map(|(a, b)| [a, b]),
        alternatives: alternatives_out(sol),
        conflict: sol.conflict.clone(),
        cases: cases_out(ev, c),
        load: load_out(ev, c),
        register_check: RegisterCheck::default(),
        assumptions: assumptions_out(ev),
        cautions: CAUTIONS.iter().map(|s| s.to_string()).collect(),
        inputs: inputs_out(d),
        search: search_out(sol, pinned_hz),
        basis: if worst_case_basis {
            "worst-case"
        } else {
            "typical"
        }
        .into(),
        worst_case: worst,
    })
}

/// The `generated` stamp: the program and version, and the placeholder the
/// seal replaces.
fn generated_stamp() -> String {
    format!(
        "pwmplan {} {}",
        env!("CARGO_PKG_VERSION"),
        crate::output::seal::MARKER_PLACEHOLDER
    )
}

/// The mean output voltage the dead time costs at a candidate's setting
/// and the nominal supply (`deadtime::dead_time_voltage_error_v`); zero
/// when the stage needs no dead time.
fn dead_time_error_v(ev: &Evaluator, c: &Candidate) -> f64 {
    if ev.needs_dead_time() {
        deadtime::dead_time_voltage_error_v(
            ev.stage.topology,
            c.dead_time.seconds,
            c.setting.frequency_hz,
            ev.rated.v_bus_v,
        )
    } else {
        0.0
    }
}

/// The reasons a plan is blocked. Infeasibility is data: every error
/// finding blocks the plan and is named as a reason.
fn blockers(findings: &[FindingOut]) -> Vec<BlockerOut> {
    findings
        .iter()
        .filter(|f| f.severity == "error")
        .map(|f| BlockerOut {
            code: f.code.clone(),
            message: f.message.clone(),
        })
        .collect()
}

/// The thermal record of a candidate: both junction temperatures against
/// the limit.
fn thermal_out(ev: &Evaluator, c: &Candidate) -> Thermal {
    Thermal {
        junction_c: c.rated.junction_c,
        junction_high_bus_c: c.high_bus.junction_c,
        limit_c: ev.limits.t_j_max_c,
        ambient_c: ev.rated.t_ambient_c,
        r_th_ja_k_per_w: ev.stage.thermal.r_th_ja_k_per_w,
    }
}

/// The ripple record of a candidate: the larger peak to peak of the two
/// cases, the rated case's other figures, and both cases on their own.
fn ripple_out(c: &Candidate) -> Ripple {
    let worst_ripple = if c.high_bus.ripple.peak_to_peak_a >= c.rated.ripple.peak_to_peak_a {
        &c.high_bus
    } else {
        &c.rated
    };
    Ripple {
        peak_to_peak_a: worst_ripple.ripple.peak_to_peak_a,
        continuous: c.rated.ripple.continuous && c.high_bus.ripple.continuous,
        mean_a: c.rated.ripple.mean_a,
        rms_a: c.rated.ripple.rms_a,
        ac_rms_a: c.rated.ripple.ac_rms_a,
        frequency_hz: c.rated.ripple.frequency_hz,
        case: c.rated.case.name.into(),
        peak_to_peak_case: worst_ripple.case.name.into(),
        by_case: vec![ripple_case(&c.rated), ripple_case(&c.high_bus)],
    }
}

/// The acoustic record of a candidate, at the rated case.
fn acoustic_out(c: &Candidate) -> Acoustic {
    Acoustic {
        lowest_audible_line_hz: c.rated.acoustic.lowest_audible_line_hz,
        a_weighted_db: c.rated.acoustic.a_weighted_db,
        verdict: c.rated.acoustic.reason.to_string(),
        case: c.rated.case.name.into(),
    }
}

/// The modelling assumptions a plan states: the three-phase list for a
/// three-phase bridge, else the general one.
fn assumptions_out(ev: &Evaluator) -> Vec<String> {
    if ev.three_phase.is_some() {
        THREE_PHASE_ASSUMPTIONS
    } else {
        ASSUMPTIONS
    }
    .iter()
    .map(|s| match *s {
        SWITCHING_ASSUMPTION => format!(
            "{}; {}",
            switching_assumption(
                &ev.stage.switch,
                ev.three_phase.is_some(),
                ev.stage.topology == Topology::LowSide
            ),
            loop_assumption(&ev.stage.switch, &ev.stage.drive)
        ),
        SWITCH_PARAMETERS_ASSUMPTION => {
            on_resistance_assumption(&ev.stage.switch, ev.stage.drive.v_drive_v)
        }
        LOW_SIDE_SAMPLING_ASSUMPTION if ev.three_phase.as_ref().is_some_and(|t| t.dc_link) => {
            DC_LINK_SAMPLING_ASSUMPTION.to_string()
        }
        other => other.to_string(),
    })
    .collect()
}

/// The switch-parameter line, completed with the gate voltage R_ds(on) is
/// taken at (`losses::r_ds_on_drive_factor`).
fn on_resistance_assumption(
    sw: &crate::model::physics::params::SwitchModel,
    v_drive_v: f64,
) -> String {
    let v = |x: f64| format_quantity(x, Dimension::Voltage, 3);
    let drive = match sw.r_ds_on_second_point {
        Some((v2, _)) => format!(
            "; R_ds(on) at the {} drive through the datasheet points at {} and {} (R_0 + k/(V_GS − V_th))",
            v(v_drive_v),
            v(sw.r_ds_on_spec_v_gs_v),
            v(v2)
        ),
        None if (v_drive_v - sw.r_ds_on_spec_v_gs_v).abs() > 0.05 => format!(
            "; R_ds(on) as given at V_GS = {}, not moved to the {} drive (no second datasheet point)",
            v(sw.r_ds_on_spec_v_gs_v),
            v(v_drive_v)
        ),
        None => String::new(),
    };
    format!("{SWITCH_PARAMETERS_ASSUMPTION}{drive}")
}

/// The switching line of the assumptions, completed with how the turn-off
/// was computed for this switch file (`switching::transitions`,
/// refinement 4) and how reverse recovery is booked.
fn switching_assumption(
    sw: &crate::model::physics::params::SwitchModel,
    three_phase: bool,
    low_side: bool,
) -> String {
    let turn_off = if crate::model::physics::switching::turn_off_followed(sw) {
        "the turn-off followed at the switch node, the switch's own C_ds and the partner's C_oss taking part of the load current while the node rises; the turn-on's voltage fall followed there too, the channel carrying the load current and what discharges its own C_ds and charges the partner's"
    } else {
        "the turn-off with the whole load current in the channel through the Miller swing (the switch file has no C_rss curve or no g_fs; conservative)"
    };
    if low_side {
        // No bridge partner and no dead time: only the freewheel diode recovers.
        return format!(
            "{SWITCHING_ASSUMPTION}; {turn_off}; the freewheel diode's recovery at its datasheet Q_rr"
        );
    }
    let (recovery, dead_time) = if three_phase {
        (
            format!(
                "at each hard turn-on (each of the 720 angles under sinusoidal modulation, each chopped edge under six-step), {}",
                recovery_assumption(sw)
            ),
            format!(
                "under sinusoidal modulation, at each of the 720 angles, {}; under six-step, body-diode conduction (the off-time freewheel, the dead times, each commutation's freewheel, the floating phase's) at V_SD(I) for as long as the simulated circuit puts the current in a diode, its gate edges taken as instant (the diode's share of a dead time is not shortened by the switches' delays there)",
                forward_voltage_assumption(sw)
            ),
        )
    } else {
        (recovery_assumption(sw), forward_voltage_assumption(sw))
    };
    format!("{SWITCHING_ASSUMPTION}; {turn_off}; {recovery}; {dead_time}")
}

/// What the commutation-loop inductance does in the switching model.
fn loop_assumption(
    sw: &crate::model::physics::params::SwitchModel,
    drive: &crate::model::physics::params::GateDrive,
) -> String {
    let loop_inductance_h = drive.loop_inductance_h;
    let source = if drive.common_source_inductance_h > 0.0 {
        format!(
            "; common-source inductance {} in the gate loop: the gate sees the driver less L_s·di/dt, so both current edges slow (the gate-charge method's current transitions by L_s·I/V_od; the followed rise and fall carry it in their gate equation); the partner's reverse phase at the slower slope is not booked (a half-bridge's E_on comes out low and its E_off high by about as much)",
            format_quantity(drive.common_source_inductance_h, Dimension::Inductance, 3)
        )
    } else {
        "; common-source inductance not given (a Kelvin source: the gate loop shares none of the power loop)".to_string()
    };
    if loop_inductance_h > 0.0 {
        let (turn_off, turn_on) = if crate::model::physics::switching::turn_off_followed(sw) {
            (
                "the turn-off followed through the current's commutation into the partner, with the overshoot L·di/dt on the bus",
                "the turn-on's current rise followed in time against the loop (the drain's dip L·di/dt, slowed by the gate's Miller feedback); the partner recovers at the slope the rise ends with and the voltage falls from where the dip left the drain",
            )
        } else {
            (
                "the turn-off overshoot taken as L·I/t_fi at the gate-charge method's current fall (the switch file has no C_rss curve or no g_fs; high for a large loop)",
                "at turn-on the gate-charge current rise less ½·L·I² (the loop's share of the voltage), and the partner's recovery and the voltage fall from the bus less L·2I/t_ri (with a large loop the turn-on comes out nearly lossless, below what a circuit simulation shows)",
            )
        };
        format!(
            "commutation-loop inductance {}: {turn_off} (devices[].v_peak_off_v, the turn-off-peak constraint); {turn_on}{source}",
            format_quantity(loop_inductance_h, Dimension::Inductance, 3)
        )
    } else {
        "stray inductance not given (stage.loop_inductance, stage.common_source_inductance): no turn-off overshoot is checked, no turn-on voltage dip is counted and the gate loop shares none of the power loop".to_string()
    }
}

/// How long the dead-time diode conducts (`dead_time_diode`).
const DIODE_SHARE: &str = "dead-time diode conduction for its share of each dead time, from the outgoing switch's hand-over (turn-off delay, node swing, half the current fall; or, after a soft turn-off, the gate down to the plateau and half-way to threshold) until the incoming switch has taken the current (half its current rise after its delay; or, at a soft turn-on, its gate from the Miller-kicked voltage up to threshold plus the diode's transit time)";

/// How the dead-time diode's forward voltage follows the current.
fn forward_voltage_assumption(sw: &crate::model::physics::params::SwitchModel) -> String {
    use crate::model::physics::forward;
    if sw.v_sd_curve.len() >= 2 {
        return format!(
            "{DIODE_SHARE} at V_sd(I) from the switch file's v_sd_curve (interpolated in ln I)"
        );
    }
    let i_test = format_quantity(forward::v_sd_test_current_a(sw), Dimension::Current, 3);
    let source = if sw.v_sd_test_a.is_some() {
        "its v_sd_at"
    } else if sw.q_rr_test.is_some() {
        "assumed: the Q_rr test's forward current; the switch file gives no body_diode.v_sd_at"
    } else {
        "assumed: the rated I_D; the switch file gives no body_diode.v_sd_at"
    };
    format!(
        "{DIODE_SHARE} at V_sd(I): the datasheet V_sd at {i_test} ({source}), lowered by kT/q·ln(I_test/I) below it, no ohmic rise above it"
    )
}

/// How a bridge partner's recovery is booked for this switch file
/// (`recovery::partner_recovery`), with the fitted transit time and the Q_rr
/// test it comes from.
fn recovery_assumption(sw: &crate::model::physics::params::SwitchModel) -> String {
    use crate::model::physics::recovery;
    let test = recovery::datasheet_test(sw);
    let tau = recovery::body_diode_transit_time_s(sw, sw.q_rr_c);
    let q = |x: f64, d: Dimension| format_quantity(x, d, 3);
    let test_text = format!(
        "{} from {} at {}",
        q(test.di_dt_a_per_s, Dimension::CurrentSlewRate),
        q(test.i_f_a, Dimension::Current),
        q(test.v_r_v, Dimension::Voltage)
    );
    let given = if sw.q_rr_test.is_some() {
        format!("the datasheet's Q_rr test ({test_text})")
    } else {
        format!("an assumed Q_rr test ({test_text}; the switch file gives no body_diode.q_rr_test)")
    };
    let stored = if tau > 0.0 {
        format!(
            "a charge-control body diode with transit time {} fitted to Q_rr less the output charge Q_oss(V_R) and the junction's forward charge at the current zero crossing of {given} (the junction voltage from V_sd(I)), recovering at each hard turn-on's current slope (2·I/t_ri; with a loop inductance the slope its followed current rise ends with)",
            q(tau, Dimension::Time)
        )
    } else {
        format!("no stored charge (Q_rr is no more than the output charge Q_oss(V_R) of {given})")
    };
    format!(
        "bridge partner's recovery: {stored}, plus charging its output capacitance (Q_oss·V − E_oss)"
    )
}

/// The search record of a solution: how many settings were realisable and
/// evaluated, the pinned frequency if any, whether the constraints hold.
fn search_out(sol: &Solution, pinned_hz: Option<f64>) -> SearchOut {
    SearchOut {
        realisable_settings: sol.realisable,
        evaluated_settings: sol.evaluated,
        pinned_frequency_hz: pinned_hz,
        constraints_met: sol.feasible,
    }
}

/// The constraint records of a candidate, one per check.
fn constraints_out(c: &Candidate) -> Vec<ConstraintOut> {
    c.checks
        .iter()
        .map(|k| ConstraintOut {
            name: k.name.into(),
            limit: k.limit,
            value: k.value,
            margin: k.margin,
            unit: k.unit.into(),
            pass: k.pass,
            binding: k.binding,
            detail: k.detail.to_string(),
        })
        .collect()
}

/// The alternative settings of a solution with what each trades.
fn alternatives_out(sol: &Solution) -> Vec<AlternativeOut> {
    sol.alternatives
        .iter()
        .map(|a| AlternativeOut {
            label: a.label.into(),
            frequency_hz: a.candidate.setting.frequency_hz,
            alignment: a.candidate.setting.alignment.into(),
            divider: a.candidate.setting.divider,
            period_ticks: a.candidate.setting.period_ticks,
            total_loss_w: a.candidate.rated.losses.total,
            junction_c: a.candidate.rated.junction_c,
            ripple_a: a.candidate.high_bus.ripple.peak_to_peak_a,
            trade: a.trade.clone(),
        })
        .collect()
}

/// The input files of a design: name, hash and flattened fields.
fn inputs_out(d: &Design) -> Vec<InputOut> {
    d.sources
        .iter()
        .map(|s| InputOut {
            file: record_name(&s.origin, &d.sources[0].origin),
            sha256: sha256_hex(&s.text),
            fields: flatten_fields(&s.text),
        })
        .collect()
}
