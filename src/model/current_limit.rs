//! The current limit at the chosen setting: the comparator's threshold code
//! (or the fixed threshold) whose trip window clears the highest operating
//! peak and stays under every hard limit, the fault filter, the blanking
//! ticks, the response, the reaction and the overshoot, and the stall the
//! limit really holds. The physics is `physics::current_limit`; this module
//! chooses among what the board offers and words the findings.
//!
//! Owns: the choice and its record ([`CurrentLimitOut`]). Never: reading
//! files, printing.

use serde::{Deserialize, Serialize};

use crate::input::design::Design;
use crate::input::spec::{FaultResponseSpec, OvercurrentSpec, ShuntPlaceSpec, ThresholdSpec};
use crate::input::units::{Dimension, format_quantity};
use crate::model::evaluate::{CaseResult, Evaluator};
use crate::model::physics::current_limit::{
    self as cl, Filter, Freewheel, SenseChain, Threshold, TripWindow, TurnOnTransient,
};
use crate::model::physics::params::{HBridgeModulation, Topology};
use crate::model::physics::ratings::{Severity, stall_current_at_t_j_max_a, stall_heating};
use crate::model::physics::three_phase::Chop;
use crate::model::physics::{losses, switching};
use crate::model::solve::Candidate;

/// A hard limit the trip window is held under.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct HardLimitOut {
    /// What it is, in words.
    pub name: String,
    pub current_a: f64,
    /// `peak` (the trip's highest edge plus the overshoot must stay below it)
    /// or `stall` (the current a stall settles at must).
    pub applies_to: String,
}

/// The planned current limit (`plan.json` `current_limit`).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct CurrentLimitOut {
    /// `supply-return`, `leg` or `phase`.
    pub shunt_place: String,
    /// `cycle-by-cycle` or `latched`.
    pub response: String,
    /// The comparator's threshold code (`None` for a fixed threshold).
    pub threshold_code: Option<u32>,
    /// Nominal threshold at the comparator, V.
    pub threshold_v: f64,
    /// The currents it trips at: never below `trip_low_a`, always above
    /// `trip_high_a`, `trip_nominal_a` with every part nominal.
    pub trip_low_a: f64,
    pub trip_nominal_a: f64,
    pub trip_high_a: f64,
    /// The highest current of normal operation the limit must let through,
    /// and how it was formed.
    pub operating_peak_a: f64,
    pub operating_basis: String,
    pub hard_limits: Vec<HardLimitOut>,
    /// The fault filter chosen (`None`: the board has none).
    pub filter_clock_hz: Option<f64>,
    pub filter_samples: Option<u32>,
    /// The turn-on transient the blanking must cover, and its parts.
    pub blanking_need_s: f64,
    pub blanking_parts: BlankingParts,
    /// Blanking ticks written (`None`: the board has no blanking timer and
    /// the filter rejects the transient instead).
    pub blanking_ticks: Option<u32>,
    /// What masks the turn-on transient: the blanking time written, or the
    /// filter's rejection where there is no blanking timer.
    pub blanking_s: f64,
    /// Trip crossing to the current starting to fall.
    pub reaction_s: f64,
    pub reaction_parts: ReactionParts,
    /// Current rise past the trip in the reaction time at a stall.
    pub overshoot_a: f64,
    /// Highest current the limit lets the switch see: `trip_high_a` + overshoot.
    pub peak_a: f64,
    /// The shortest on-time the limit cannot cut: blanking plus reaction.
    pub shortest_controllable_pulse_s: f64,
    /// The mean current of a stall under this limit, and how it was formed.
    pub stall_current_a: f64,
    pub stall_basis: String,
    /// The junction at that stall (`None` under a latched response: the
    /// outputs stay off after the first trip).
    pub stall_junction_c: Option<f64>,
    /// What that junction temperature was computed on (transient or steady).
    pub stall_thermal_basis: String,
    /// The hottest switch's junction at the end of the design's burst (`None`
    /// without a burst), and what it was computed on.
    pub burst_junction_c: Option<f64>,
    pub burst_basis: Option<String>,
    /// The sensing chain and the stall circuit as the plan used them, so the
    /// register check can redo the limit from this record alone.
    pub sense: SenseOut,
    pub stall_circuit: StallCircuitOut,
}

impl CurrentLimitOut {
    /// The lowest hard limit on the peak (I_DM or I_D, the motor's limit).
    pub fn tightest_peak_limit(&self) -> Option<&HardLimitOut> {
        self.hard_limits
            .iter()
            .filter(|h| h.applies_to == "peak")
            .min_by(|x, y| x.current_a.total_cmp(&y.current_a))
    }
}

/// The sensing chain with its tolerances, and how the threshold code maps to
/// volts (`plan.json` `current_limit.sense`).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SenseOut {
    pub r_shunt_ohm: f64,
    pub r_tolerance: f64,
    pub gain: f64,
    pub gain_tolerance: f64,
    pub offset_v: f64,
    pub offset_tolerance_v: f64,
    /// ± relative tolerance of the threshold, and the comparator's ± offset.
    pub threshold_tolerance: f64,
    pub comparator_offset_v: f64,
    /// Programmable threshold: code k gives k/2^bits × full scale.
    pub threshold_full_scale_v: Option<f64>,
    pub threshold_code_bits: Option<u32>,
    /// One blanking tick, s (with a blanking timer).
    pub blanking_tick_s: Option<f64>,
}

/// The circuit a stall chops: the highest bus across the stalled winding
/// (three-phase: two phases), and what the off-state applies.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct StallCircuitOut {
    pub v_bus_v: f64,
    pub r_ohm: f64,
    pub l_h: f64,
    /// PWM period at the chosen setting, s.
    pub period_s: f64,
    /// `shorted`, `diode` or `reversed`.
    pub freewheel: String,
    /// The diode's forward voltage where `freewheel` is `diode`, V.
    pub freewheel_v_f_v: f64,
}

/// The blanking need's parts, s.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct BlankingParts {
    pub driver_s: f64,
    pub turn_on_delay_s: f64,
    pub current_rise_s: f64,
    pub recovery_s: f64,
    pub ringing_s: f64,
    pub amplifier_settle_s: f64,
}

/// The reaction time's parts, s.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ReactionParts {
    pub filter_s: f64,
    pub comparator_s: f64,
    pub driver_s: f64,
    pub turn_off_delay_s: f64,
    pub voltage_rise_s: f64,
}

impl ReactionParts {
    /// The reaction time, `physics::current_limit::reaction_time_s`.
    pub fn total_s(&self) -> f64 {
        cl::reaction_time_s(
            self.filter_s,
            self.comparator_s,
            self.driver_s,
            self.turn_off_delay_s,
            self.voltage_rise_s,
        )
    }
}

/// A finding of the current limit (severity, stable code, message).
#[derive(Debug, Clone, PartialEq)]
pub struct LimitFinding {
    pub severity: Severity,
    pub code: &'static str,
    pub message: String,
}

fn q(v: f64, dim: Dimension) -> String {
    format_quantity(v, dim, 3)
}

fn place_name(p: ShuntPlaceSpec) -> &'static str {
    match p {
        ShuntPlaceSpec::SupplyReturn => "supply-return",
        ShuntPlaceSpec::Leg => "leg",
        ShuntPlaceSpec::Phase => "phase",
    }
}

fn response_name(r: FaultResponseSpec) -> &'static str {
    match r {
        FaultResponseSpec::CycleByCycle => "cycle-by-cycle",
        FaultResponseSpec::Latched => "latched",
    }
}

/// The sensing chain of the board's over-current path.
fn sense_chain(oc: &OvercurrentSpec) -> SenseChain {
    let a = oc.amplifier.as_ref();
    SenseChain {
        r_shunt_ohm: oc.shunt.resistance.si,
        r_tolerance: oc.shunt.tolerance.si,
        gain: a.map_or(1.0, |a| a.gain),
        gain_tolerance: a.map_or(0.0, |a| a.gain_tolerance.si),
        offset_v: a.map_or(0.0, |a| a.offset.si),
        offset_tolerance_v: a.map_or(0.0, |a| a.offset_tolerance.si),
    }
}

/// The chain and threshold coding as a record.
fn sense_out(oc: &OvercurrentSpec, chain: &SenseChain, blanking_tick_s: Option<f64>) -> SenseOut {
    let (full_scale, bits) = match &oc.comparator.threshold {
        ThresholdSpec::Programmable {
            full_scale,
            code_bits,
        } => (Some(full_scale.si), Some(*code_bits)),
        ThresholdSpec::Fixed(_) => (None, None),
    };
    SenseOut {
        r_shunt_ohm: chain.r_shunt_ohm,
        r_tolerance: chain.r_tolerance,
        gain: chain.gain,
        gain_tolerance: chain.gain_tolerance,
        offset_v: chain.offset_v,
        offset_tolerance_v: chain.offset_tolerance_v,
        threshold_tolerance: oc.comparator.tolerance.si,
        comparator_offset_v: oc.comparator.offset.si,
        threshold_full_scale_v: full_scale,
        threshold_code_bits: bits,
        blanking_tick_s,
    }
}

/// Every threshold the comparator can be set to: (code, volts).
fn thresholds(oc: &OvercurrentSpec) -> Vec<(Option<u32>, f64)> {
    match &oc.comparator.threshold {
        ThresholdSpec::Fixed(v) => vec![(None, v.si)],
        ThresholdSpec::Programmable {
            full_scale,
            code_bits,
        } => {
            let steps = 1u32 << code_bits;
            (1..steps)
                .map(|k| (Some(k), f64::from(k) * full_scale.si / f64::from(steps)))
                .collect()
        }
    }
}

/// The motor inductance's ± tolerance (0 when the design gives none).
fn motor_inductance_tolerance(d: &Design) -> f64 {
    d.spec
        .tolerances
        .as_ref()
        .and_then(|t| t.motor_inductance)
        .map_or(0.0, |r| r.si)
}

/// The highest current of normal operation: each checked case's peak (the
/// load plus half the ripple; three-phase: the phase-current peak or the
/// six-step line current plus half the ripple), the burst current in place of the
/// rated one, and the ripple raised by the motor inductance's tolerance
/// (ripple ∝ 1/L, common practice for a PWM-driven R-L load).
fn operating_peak(d: &Design, c: &Candidate) -> (f64, String) {
    let l_tol = motor_inductance_tolerance(d);
    let ripple_scale = 1.0 / (1.0 - l_tol).max(0.05);
    let burst = d.spec.current_limit.as_ref().and_then(|x| x.burst.as_ref());
    let case_peak = |r: &CaseResult| {
        let half_ripple = 0.5 * r.ripple.peak_to_peak_a * ripple_scale;
        let load = r
            .three_phase
            .as_ref()
            .map_or(r.case.load_current_a.abs(), |t| t.current_a.abs());
        let load = burst.map_or(load, |b| load.max(b.current.si));
        (load + half_ripple, r.case.name)
    };
    let (peak, name) = [case_peak(&c.rated), case_peak(&c.high_bus)]
        .into_iter()
        .fold((0.0, ""), |a, b| if b.0 > a.0 { b } else { a });
    let mut basis = format!(
        "the {} case's {} plus half its ripple",
        name,
        if burst.is_some() {
            "burst current"
        } else {
            "load current"
        }
    );
    if l_tol > 0.0 {
        basis.push_str(&format!(
            " (raised for the motor inductance {} low)",
            q(l_tol, Dimension::Ratio)
        ));
    }
    (peak, basis)
}

/// The motor's R and L a stall drives (three-phase: two phases in series),
/// L at its tolerance's low end.
fn stall_path(d: &Design, ev: &Evaluator) -> (f64, f64) {
    let n = if ev.three_phase.is_some() { 2.0 } else { 1.0 };
    let l_tol = motor_inductance_tolerance(d);
    (
        n * ev.motor_r_ohm,
        n * ev.motor_l_h * (1.0 - l_tol).max(0.05),
    )
}

/// What the off-state applies against a chopped stall's current.
fn freewheel(ev: &Evaluator) -> Freewheel {
    use crate::model::evaluate::ThreePhaseModulation as M;
    if let Some(tp) = &ev.three_phase {
        return match tp.modulation {
            M::SixStep {
                chop: Chop::HighSide | Chop::LowSide,
            } => Freewheel::Diode {
                v_f_v: ev.stage.switch.v_sd_v,
            },
            _ => Freewheel::Shorted,
        };
    }
    match ev.stage.topology {
        Topology::LowSide => Freewheel::Diode {
            v_f_v: ev.stage.diode.as_ref().map_or(0.0, |x| x.v_f_v),
        },
        Topology::HBridge(HBridgeModulation::Bipolar) => Freewheel::Reversed,
        _ => Freewheel::Shorted,
    }
}

/// The filter and what masks the turn-on transient: with a blanking timer
/// the fastest filter and the blanking ticks that cover `need_s`; without
/// one the fastest filter whose rejection covers it. The finding says where
/// neither can.
struct Masking {
    filter: Option<Filter>,
    ticks: Option<u32>,
    masked_s: f64,
    /// Blanking before the reaction starts (the timer's; 0 when the filter
    /// masks, its delay being in the reaction).
    before_reaction_s: f64,
    finding: Option<LimitFinding>,
}

fn masking(oc: &OvercurrentSpec, timer_clock_hz: f64, need_s: f64) -> Masking {
    let filters: Vec<Filter> = oc.filter.as_ref().map_or(Vec::new(), |f| {
        f.clocks
            .iter()
            .flat_map(|clk| {
                f.samples.iter().map(|n| Filter {
                    clock_hz: clk.si,
                    samples: *n,
                })
            })
            .collect()
    });
    let fastest = filters
        .iter()
        .copied()
        .min_by(|a, b| a.delay_s().total_cmp(&b.delay_s()));
    if let Some(bl) = &oc.blanking {
        let tick_s = f64::from(bl.clock_divider) / timer_clock_hz;
        let wanted = (need_s / tick_s - 1e-9).ceil().max(1.0);
        let ticks = wanted.min(f64::from(bl.max_ticks)) as u32;
        let finding = (wanted > f64::from(bl.max_ticks)).then(|| LimitFinding {
            severity: Severity::Error,
            code: "current-limit-blanking",
            message: format!(
                "The turn-on transient lasts {} but the blanking timer reaches {} ({} ticks): the turn-on spike would trip the limit at every turn-on. Slow the recovery or the ringing down, or use a board with a longer blanking.",
                q(need_s, Dimension::Time),
                q(f64::from(bl.max_ticks) * tick_s, Dimension::Time),
                bl.max_ticks
            ),
        });
        let masked_s = f64::from(ticks) * tick_s;
        return Masking {
            filter: fastest,
            ticks: Some(ticks),
            masked_s,
            before_reaction_s: masked_s,
            finding,
        };
    }
    let covering = filters
        .iter()
        .copied()
        .filter(|f| f.rejects_below_s() >= need_s)
        .min_by(|a, b| a.delay_s().total_cmp(&b.delay_s()));
    let chosen = covering.or_else(|| {
        filters
            .iter()
            .copied()
            .max_by(|a, b| a.rejects_below_s().total_cmp(&b.rejects_below_s()))
    });
    let masked_s = chosen.map_or(0.0, |f| f.rejects_below_s());
    let filter_words = match chosen {
        Some(_) => format!(
            "the longest fault filter rejects only {}",
            q(masked_s, Dimension::Time)
        ),
        None => "nor a fault filter".to_string(),
    };
    let finding = (covering.is_none() && need_s > 0.0).then(|| LimitFinding {
        severity: Severity::Error,
        code: "current-limit-blanking",
        message: format!(
            "The turn-on transient lasts {} and the board has no blanking timer, {filter_words}: the turn-on spike would trip the limit at every turn-on. Use a board with blanking or a longer filter.",
            q(need_s, Dimension::Time)
        ),
    });
    Masking {
        filter: chosen,
        ticks: None,
        masked_s,
        before_reaction_s: 0.0,
        finding,
    }
}

/// The hard limits: the peak under I_DM (I_D where the file gives no I_DM)
/// and the motor's own limit; a stall under cycle-by-cycle limiting under
/// the shunt's power (I²·R at the resistance's high end), the junction at
/// T_j,max (`ratings::stall_heating`'s basis) and I_D.
fn hard_limits(
    d: &Design,
    ev: &Evaluator,
    oc: &OvercurrentSpec,
    chopping: bool,
) -> Vec<HardLimitOut> {
    let sw = &ev.stage.switch;
    let peak = |name: String, i: f64| HardLimitOut {
        name,
        current_a: i,
        applies_to: "peak".into(),
    };
    let stall = |name: String, i: f64| HardLimitOut {
        name,
        current_a: i,
        applies_to: "stall".into(),
    };
    let mut out = vec![match &d.switch.i_dm {
        Some(p) => peak(
            format!(
                "the switch's I_DM at {}",
                q(p.pulse_width.si, Dimension::Time)
            ),
            p.value.si,
        ),
        None => peak("the switch's I_D (the file gives no I_DM)".into(), sw.i_d_a),
    }];
    if let Some(m) = d.spec.motor.max_current {
        out.push(peak("the motor's max_current".into(), m.si));
    }
    if chopping {
        let r_hi = oc.shunt.resistance.si * (1.0 + oc.shunt.tolerance.si);
        out.push(stall(
            format!(
                "the shunt's {} rating",
                q(oc.shunt.power.si, Dimension::Power)
            ),
            (oc.shunt.power.si / r_hi).sqrt(),
        ));
        let t_a = ev.high_bus.t_ambient_c;
        let stall_s = d.spec.constraints.stall_time.map(|t| t.si);
        let h = stall_heating(sw, 1.0, &ev.stage.thermal, t_a, stall_s);
        out.push(stall(
            "the junction at T_j,max in a stall".into(),
            stall_current_at_t_j_max_a(&h, sw, t_a),
        ));
        out.push(stall("the switch's I_D".into(), sw.i_d_a));
    }
    out
}

/// The threshold: the design's trip current (nearest nominal), or the lowest
/// whose window never trips at the operating peak; the highest offered when
/// none clears it (a finding follows from the window).
fn choose_threshold(
    oc: &OvercurrentSpec,
    chain: &SenseChain,
    i_op_a: f64,
    wanted_a: Option<f64>,
) -> (Option<u32>, f64, TripWindow) {
    let window = |v: f64| {
        cl::trip_window(
            chain,
            &Threshold {
                v_nominal_v: v,
                tolerance: oc.comparator.tolerance.si,
                offset_v: oc.comparator.offset.si,
            },
        )
    };
    let all: Vec<(Option<u32>, f64, TripWindow)> = thresholds(oc)
        .into_iter()
        .map(|(code, v)| (code, v, window(v)))
        .collect();
    let chosen = match wanted_a {
        Some(i) => all.iter().min_by(|a, b| {
            (a.2.nominal_a - i)
                .abs()
                .total_cmp(&(b.2.nominal_a - i).abs())
        }),
        None => all.iter().find(|x| x.2.low_a > i_op_a).or(all.last()),
    };
    // `thresholds` is never empty (at least one code or the fixed value).
    chosen.copied().unwrap_or((None, 0.0, window(0.0)))
}

/// The switch's turn-on transient and turn-off timings at the operating
/// peak on the highest bus (the spike each normal turn-on makes, and a
/// turn-off near the trip level): (transient without the amplifier,
/// turn-off delay, voltage rise). Zero timings where the edges cannot be
/// evaluated (a drive below the plateau, refused at input already).
fn edge_timings(ev: &Evaluator, i_a: f64, settle_s: f64) -> (TurnOnTransient, f64, f64) {
    let sw = &ev.stage.switch;
    let drive = &ev.stage.drive;
    let v = ev.high_bus.v_bus_v;
    let r_on = losses::r_ds_on_ohm(sw, sw.t_j_max_c);
    let tr = switching::gate_charge_timing(sw, drive, v, i_a, i_a, r_on).ok();
    let t_rr_s = match (&ev.stage.diode, ev.stage.topology) {
        (Some(dd), Topology::LowSide) => dd.t_rr_s,
        _ => sw.t_rr_s,
    };
    let transient = TurnOnTransient {
        driver_s: drive.prop_delay_s,
        t_d_on_s: tr.as_ref().map_or(0.0, |t| t.t_d_on_s),
        t_ri_s: tr.as_ref().map_or(0.0, |t| t.t_ri_s),
        t_rr_s,
        ring_s: cl::ring_allowance_s(drive.loop_inductance_h, sw.c_oss_f),
        settle_s,
    };
    (
        transient,
        tr.as_ref().map_or(0.0, |t| t.t_d_off_s),
        tr.as_ref().map_or(0.0, |t| t.t_rv_s),
    )
}

/// The current limit at the chosen setting, and its findings; `None` when
/// the board has no over-current path.
pub fn plan(
    d: &Design,
    ev: &Evaluator,
    c: &Candidate,
) -> Option<(CurrentLimitOut, Vec<LimitFinding>)> {
    let oc = d.board.overcurrent.as_ref()?;
    let want = d.spec.current_limit.as_ref();
    let response = want.and_then(|w| w.response).unwrap_or(
        if oc.responses.contains(&FaultResponseSpec::CycleByCycle) {
            FaultResponseSpec::CycleByCycle
        } else {
            FaultResponseSpec::Latched
        },
    );
    let chopping = response == FaultResponseSpec::CycleByCycle;
    let chain = sense_chain(oc);
    let (i_op, operating_basis) = operating_peak(d, c);
    let settle_s = oc.amplifier.as_ref().map_or(0.0, |a| a.settle_time.si);
    let (transient, t_d_off_s, t_rv_s) = edge_timings(ev, i_op, settle_s);
    let need_s = transient.total_s();
    let mask = masking(oc, ev.timer.clock_hz, need_s);
    let reaction_parts = ReactionParts {
        filter_s: mask.filter.map_or(0.0, |f| f.delay_s()),
        comparator_s: oc.comparator.delay.si,
        driver_s: ev.stage.drive.prop_delay_s,
        turn_off_delay_s: t_d_off_s,
        voltage_rise_s: t_rv_s,
    };
    let reaction_s = reaction_parts.total_s();
    let circuit = stall_circuit(d, ev, c);
    let (r_stall, l_stall, v_max) = (circuit.r_ohm, circuit.l_h, circuit.v_bus_v);
    let overshoot_a = cl::overshoot_a(v_max, l_stall, reaction_s);
    let (code, threshold_v, w) =
        choose_threshold(oc, &chain, i_op, want.and_then(|x| x.trip).map(|t| t.si));
    let limits = hard_limits(d, ev, oc, chopping);
    let shortest_s = mask.before_reaction_s + reaction_s;
    let cycle = cl::stall_cycle(&cl::ChoppedStall {
        v_bus_v: v_max,
        r_ohm: r_stall,
        l_h: l_stall,
        period_s: circuit.period_s,
        freewheel: freewheel(ev),
        i_trip_a: w.high_a,
        t_blank_s: mask.before_reaction_s,
        t_comparator_s: reaction_parts.comparator_s,
        t_post_s: reaction_s - reaction_parts.comparator_s,
    });
    let chopped_mean_a = cycle.mean_a;
    let (stall_current_a, stall_basis) = stall_current(chopping, w.high_a, chopped_mean_a);
    // A chopped stall may cross the trip inside the blanking, or so late in
    // a period that the next one starts above the trip: it then rises over
    // the uncut on-time on top of a reaction's overshoot. Bounded by
    // V/L·(reaction + uncut on-time) over the trip (R·I neglected, own
    // derivation), and never below the settled cycle's own peak.
    let peak_a = if chopping {
        let bound = w.high_a + cl::overshoot_a(v_max, l_stall, reaction_s + shortest_s);
        bound.max(cycle.peak_a)
    } else {
        w.high_a + overshoot_a
    };
    let heating = stall_heating(
        &ev.stage.switch,
        stall_current_a,
        &ev.stage.thermal,
        ev.high_bus.t_ambient_c,
        d.spec.constraints.stall_time.map(|t| t.si),
    );
    let stall_junction_c = chopping.then_some(heating.t_j_c);
    let burst = burst_junction(d, ev, c);
    let out = CurrentLimitOut {
        shunt_place: place_name(oc.shunt.place).into(),
        response: response_name(response).into(),
        threshold_code: code,
        threshold_v,
        trip_low_a: w.low_a,
        trip_nominal_a: w.nominal_a,
        trip_high_a: w.high_a,
        operating_peak_a: i_op,
        operating_basis,
        hard_limits: limits,
        filter_clock_hz: mask.filter.map(|f| f.clock_hz),
        filter_samples: mask.filter.map(|f| f.samples),
        blanking_need_s: need_s,
        blanking_parts: BlankingParts {
            driver_s: transient.driver_s,
            turn_on_delay_s: transient.t_d_on_s,
            current_rise_s: transient.t_ri_s,
            recovery_s: transient.t_rr_s,
            ringing_s: transient.ring_s,
            amplifier_settle_s: transient.settle_s,
        },
        blanking_ticks: mask.ticks,
        blanking_s: mask.masked_s,
        reaction_s,
        reaction_parts,
        overshoot_a,
        peak_a,
        shortest_controllable_pulse_s: shortest_s,
        stall_current_a,
        stall_basis,
        stall_junction_c,
        stall_thermal_basis: heating.basis,
        sense: sense_out(
            oc,
            &chain,
            oc.blanking
                .as_ref()
                .map(|b| f64::from(b.clock_divider) / ev.timer.clock_hz),
        ),
        stall_circuit: circuit,
        burst_junction_c: burst.as_ref().map(|b| b.0),
        burst_basis: burst.as_ref().map(|b| b.1.clone()),
    };
    let findings = all_findings(d, ev, &out, mask.finding, chopped_mean_a);
    Some((out, findings))
}

/// Every finding of the planned limit, the masking's first.
fn all_findings(
    d: &Design,
    ev: &Evaluator,
    out: &CurrentLimitOut,
    masking: Option<LimitFinding>,
    chopped_mean_a: f64,
) -> Vec<LimitFinding> {
    let chopping = out.response == "cycle-by-cycle";
    let fixed_trip = d.spec.current_limit.as_ref().and_then(|x| x.trip).is_some();
    let mut findings: Vec<LimitFinding> = masking.into_iter().collect();
    if let Some(oc) = &d.board.overcurrent {
        findings.extend(place_finding(oc.shunt.place, ev, chopping));
    }
    findings.extend(hard_short_finding(out, ev));
    findings.extend(burst_finding(out, ev, d.t_j_limit_c));
    findings.extend(window_findings(out, fixed_trip));
    findings.extend(stall_findings(out, chopped_mean_a));
    findings
}

/// The hottest switch over the design's burst: its rated-case losses scaled
/// to the burst current (conduction ∝ I², switching and the rest ∝ I; common
/// practice), the step in loss added to its rated junction through the
/// board's transient impedance Z_th(burst duration) (superposition on a linear
/// thermal network, common practice), or, without a Foster network, the
/// steady state at the burst's loss (conservative). None without a burst.
fn burst_junction(d: &Design, ev: &Evaluator, c: &Candidate) -> Option<(f64, String)> {
    let b = d.spec.current_limit.as_ref()?.burst.as_ref()?;
    let rated = c.rated.case.load_current_a.abs();
    let hottest = c
        .rated
        .devices
        .iter()
        .filter(|x| x.junction_c.is_some())
        .max_by(|x, y| {
            x.junction_c
                .unwrap_or(0.0)
                .total_cmp(&y.junction_c.unwrap_or(0.0))
        })?;
    let t_j = hottest.junction_c?;
    let k = b.current.si / rated.max(1e-12);
    let p_burst = hottest.conduction_w * k * k + (hottest.total_w - hottest.conduction_w) * k;
    let path = &ev.stage.thermal;
    let t_a = c.rated.case.t_ambient_c;
    if path.foster.is_empty() {
        let t = t_a + p_burst * path.r_th_ja_k_per_w;
        return Some((
            t,
            format!(
                "{} at {} for {}: steady state at the burst's {}, the board giving no thermal transient data",
                hottest.role,
                q(b.current.si, Dimension::Current),
                q(b.duration.si, Dimension::Time),
                q(p_burst, Dimension::Power)
            ),
        ));
    }
    let z = crate::model::physics::thermal::z_th_k_per_w(path, b.duration.si);
    Some((
        t_j + (p_burst - hottest.total_w).max(0.0) * z,
        format!(
            "{} at {} for {}: its rated junction plus the loss step {} through Z_th = {z:.3} K/W",
            hottest.role,
            q(b.current.si, Dimension::Current),
            q(b.duration.si, Dimension::Time),
            q(p_burst - hottest.total_w, Dimension::Power)
        ),
    ))
}

/// A burst that takes the junction past the design's limit (warning) or the
/// switch's T_j,max (error).
fn burst_finding(o: &CurrentLimitOut, ev: &Evaluator, t_j_limit_c: f64) -> Option<LimitFinding> {
    let t = o.burst_junction_c?;
    let basis = o.burst_basis.clone().unwrap_or_default();
    let t_j_max = ev.stage.switch.t_j_max_c;
    let words = |limit: &str, v: f64| {
        format!(
            "The burst takes the junction to {} ({basis}), above {limit} {}: shorten the burst, lower its current, or improve the thermal path.",
            q(t, Dimension::Temperature),
            q(v, Dimension::Temperature)
        )
    };
    if t > t_j_max {
        Some(error(
            "burst-junction",
            words("the switch's T_j max", t_j_max),
        ))
    } else if t > t_j_limit_c {
        Some(LimitFinding {
            severity: Severity::Warning,
            code: "burst-junction",
            message: words("the design's junction limit", t_j_limit_c),
        })
    } else {
        None
    }
}

/// The stall's circuit at the chosen setting.
fn stall_circuit(d: &Design, ev: &Evaluator, c: &Candidate) -> StallCircuitOut {
    let (r_ohm, l_h) = stall_path(d, ev);
    let fw = freewheel(ev);
    StallCircuitOut {
        v_bus_v: ev.high_bus.v_bus_v,
        r_ohm,
        l_h,
        period_s: 1.0 / c.setting.frequency_hz,
        freewheel: match fw {
            Freewheel::Shorted => "shorted",
            Freewheel::Diode { .. } => "diode",
            Freewheel::Reversed => "reversed",
        }
        .into(),
        freewheel_v_f_v: match fw {
            Freewheel::Diode { v_f_v } => v_f_v,
            _ => 0.0,
        },
    }
}

/// The stall current under the limit and its basis: cycle-by-cycle holds it
/// at the trip's highest edge (above the chopped cycle's mean, which the
/// ripple pulls below it), unless the chopped cycle's mean
/// (`physics::current_limit::stall_cycle`) is higher: the on-time the limit
/// cannot cut ratchets it up; latched stops the drive at the first trip.
fn stall_current(chopping: bool, trip_high_a: f64, chopped_mean_a: f64) -> (f64, String) {
    if !chopping {
        return (
            0.0,
            "latched: the outputs stay off after the first trip until firmware clears the fault"
                .into(),
        );
    }
    if chopped_mean_a > trip_high_a {
        (
            chopped_mean_a,
            format!(
                "cycle-by-cycle, but the on-time the limit cannot cut (blanking and reaction) adds more current each period than the off-time removes: the chopped stall settles at a mean of {}, above the trip",
                q(chopped_mean_a, Dimension::Current)
            ),
        )
    } else {
        (
            trip_high_a,
            "cycle-by-cycle: a stall is chopped at the trip's highest edge".into(),
        )
    }
}

/// A shunt in a half-bridge's leg (its low side) carries the motor current
/// only while the high side is off: it never sees the pulse a cycle-by-cycle
/// limit must cut (common practice). The H-bridge and three-phase bridge
/// return the driven current through another leg's low side, and the low-side
/// stage's switch is the low side, so there a leg shunt sees it.
fn place_finding(place: ShuntPlaceSpec, ev: &Evaluator, chopping: bool) -> Option<LimitFinding> {
    (chopping
        && place == ShuntPlaceSpec::Leg
        && ev.three_phase.is_none()
        && ev.stage.topology == Topology::HalfBridge)
        .then(|| {
            error(
                "current-limit-place",
                "A shunt in the half-bridge's leg (its low side) carries the motor current only while the high side is off, so a cycle-by-cycle limit never sees the pulse it must cut: place the shunt in the supply return or in the phase, or use the latched response."
                    .into(),
            )
        })
}

/// A short at the motor terminals leaves only the commutation loop's
/// inductance to slow the current: di/dt = V_bus/L_loop (common practice).
/// Where it passes the peak limit within the reaction, the comparator limit
/// cannot protect against it: a warning naming the rate (the gate driver's
/// desaturation detection is the usual answer). Only with a loop inductance.
fn hard_short_finding(o: &CurrentLimitOut, ev: &Evaluator) -> Option<LimitFinding> {
    let l_loop = ev.stage.drive.loop_inductance_h;
    let tightest = o.tightest_peak_limit()?.current_a;
    if l_loop <= 0.0 {
        return None;
    }
    let v = o.stall_circuit.v_bus_v;
    let reached = o.trip_high_a + cl::overshoot_a(v, l_loop, o.reaction_s);
    (reached > tightest).then(|| LimitFinding {
        severity: Severity::Warning,
        code: "current-limit-hard-short",
        message: format!(
            "A short at the motor terminals rises at V/L_loop = {}/µs through the {} commutation loop: within the {} reaction it would pass {} (the tightest peak limit {}). This limit does not protect against a hard short; use the gate driver's desaturation detection or a faster hardware path.",
            q(v / l_loop * 1e-6, Dimension::Current),
            q(l_loop, Dimension::Inductance),
            q(o.reaction_s, Dimension::Time),
            q(reached.min(1e9), Dimension::Current),
            q(tightest, Dimension::Current)
        ),
    })
}

fn error(code: &'static str, message: String) -> LimitFinding {
    LimitFinding {
        severity: Severity::Error,
        code,
        message,
    }
}

/// The trip window against the operating peak (no trip in normal operation)
/// and the peak limits (always trips below them, overshoot included); the
/// nearest compromise in words where no threshold fits.
fn window_findings(o: &CurrentLimitOut, fixed_trip: bool) -> Vec<LimitFinding> {
    let a = |i: f64| q(i, Dimension::Current);
    let mut out = Vec::new();
    if o.trip_low_a <= o.operating_peak_a {
        let fix = if fixed_trip {
            "raise `current_limit.trip`"
        } else {
            "the comparator offers no higher threshold: lower the shunt resistance or the amplifier gain"
        };
        out.push(error(
            "current-limit-window",
            format!(
                "The limit may trip at {} (its lowest edge over the sensing tolerances) in normal operation, whose peak is {} ({}): {fix}.",
                a(o.trip_low_a),
                a(o.operating_peak_a),
                o.operating_basis
            ),
        ));
    }
    if let Some(h) = o.tightest_peak_limit()
        && o.peak_a > h.current_a
    {
        let spread = o.trip_high_a / o.trip_low_a.max(1e-12);
        let room = (h.current_a - o.overshoot_a) / o.operating_peak_a;
        out.push(error(
            "current-limit-window",
            format!(
                "The limit may let the current reach {} ({} at the trip's highest edge plus {} of overshoot in the {} reaction), above {} {}. The sensing tolerances spread the trip over {:.2}×; the room between the operating peak {} and that limit less the overshoot is {:.2}×: tighten the tolerances, shorten the reaction, or lower the operating peak.",
                a(o.peak_a),
                a(o.trip_high_a),
                a(o.overshoot_a),
                q(o.reaction_s, Dimension::Time),
                h.name,
                a(h.current_a),
                spread,
                a(o.operating_peak_a),
                room.max(0.0)
            ),
        ));
    }
    out
}

/// A stall the limit does not hold: ratcheting past the trip, or beyond a
/// stall limit.
fn stall_findings(o: &CurrentLimitOut, chopped_mean_a: f64) -> Vec<LimitFinding> {
    let a = |i: f64| q(i, Dimension::Current);
    let mut out = Vec::new();
    if o.response != "cycle-by-cycle" {
        return out;
    }
    if chopped_mean_a > o.trip_high_a {
        out.push(error(
            "current-limit-ratchet",
            format!(
                "At a stall the limit cannot cut the first {} of each period (blanking and reaction); that on-time alone drives {} ({}), above the trip's highest edge {}: lower the PWM frequency, shorten the blanking, or use the latched response.",
                q(o.shortest_controllable_pulse_s, Dimension::Time),
                a(chopped_mean_a),
                o.stall_basis,
                a(o.trip_high_a)
            ),
        ));
    }
    for h in o.hard_limits.iter().filter(|h| h.applies_to == "stall") {
        if o.stall_current_a > h.current_a {
            out.push(error(
                "current-limit-stall",
                format!(
                    "A stall under the limit carries {} ({}), above {} {}: lower the trip, or use the latched response.",
                    a(o.stall_current_a),
                    o.stall_basis,
                    h.name,
                    a(h.current_a)
                ),
            ));
        }
    }
    out
}
