//! The typed context every template receives ([`Context`]) and its rows:
//! data only, shared by the templates (`emit`) and the report page (`html`).

use serde::Serialize;

/// Names of the generated identifiers, by role (one table so templates
/// never invent names).
#[derive(Debug, Clone, Serialize)]
pub struct Names {
    /// Prefix of C macros, e.g. `BELT_FEEDER_PWM`.
    pub c_macro: String,
    /// Prefix of C functions, e.g. `belt_feeder_pwm`.
    pub c_function: String,
    /// Include guard of the header.
    pub c_guard: String,
    /// Rust module (file stem), e.g. `belt_feeder_pwm`.
    pub rust_module: String,
    /// File stem of both code files.
    pub file_stem: String,
}

/// A label/value row.
#[derive(Debug, Clone, Serialize)]
pub struct Row {
    pub label: String,
    pub value: String,
}

/// One constraint, formatted.
#[derive(Debug, Clone, Serialize)]
pub struct ConstraintRow {
    pub name: String,
    pub limit: String,
    pub value: String,
    pub margin: String,
    pub status: String,
}

/// Timer values as they go into code: decimal or hex literals.
#[derive(Debug, Clone, Serialize)]
pub struct TimerLiterals {
    pub clock_hz: String,
    pub divider: String,
    pub divider_register: String,
    pub period_ticks: String,
    pub period_register: String,
    pub duty_steps: String,
    pub centre_aligned: bool,
    pub alignment: String,
    pub dead_time_code: String,
    pub dead_time_ticks: String,
    pub dead_time_ns: String,
    /// What DEAD_TIME_TICKS counts (the dead-time generator's clock).
    pub dead_time_tick_text: String,
    pub compare_min: String,
    pub compare_max: String,
    /// Compare counts that make up a leg's dead time (rounded; 0 without one).
    pub dead_time_comp: String,
    /// PWM frequency in millihertz, an exact integer for code.
    pub frequency_millihz: String,
    pub frequency_text: String,
    /// C type of the count constants and Rust type of the same.
    pub c_count_type: String,
    pub rust_count_type: String,
    /// Rust literal suffix-free forms are used; the C forms carry `U`/`UL`.
    pub c_clock_hz: String,
}

/// Three-phase values as they go into code and text (all "0"/empty for the
/// single-phase stages, so strict templates always find them).
#[derive(Debug, Clone, Serialize, Default)]
pub struct ThreePhaseLiterals {
    /// `sinusoidal` or `six-step`, with its option.
    pub modulation: String,
    /// Sinusoidal modulation: two legs' currents sampled, the third from their sum (emit the
    /// helper that names the leg not to sample).
    pub sinusoidal: bool,
    /// Compare value matched on the up-count that starts the ADC.
    pub adc_trigger_compare: String,
    /// Trigger lead before the counter top, ns.
    pub trigger_ns: String,
    /// Largest compare of a sampled leg that keeps the sampling window.
    pub sampling_compare_max: String,
    /// The sampling window explained, one line each.
    pub sampling_lines: Vec<String>,
    /// One shunt in the DC link: the shortest vector a reading needs and the trigger lead,
    /// counts (emit the shifting helper instead of the low-side constants).
    pub dc_link: bool,
    pub dc_link_min_vector: String,
    pub dc_link_lead: String,
    /// Six-step: emit the commutation table.
    pub six_step: bool,
    /// Each direction's six sectors, phase indices (0 = A, 1 = B, 2 = C) as `0, 0, 1, 1, 2, 2`.
    pub six_step_positive_forward: String,
    pub six_step_negative_forward: String,
    pub six_step_floating_forward: String,
    pub six_step_positive_reverse: String,
    pub six_step_negative_reverse: String,
    pub six_step_floating_reverse: String,
    /// The negative phase's low side chops (else the positive phase's high side).
    pub six_step_chop_low_side: bool,
    /// The chopping leg's other switch runs complementarily.
    pub six_step_complementary: bool,
    /// The table and the chopping explained, one line each.
    pub six_step_lines: Vec<String>,
    /// Sensorless six-step: emit the back-EMF sampling constants
    /// (`output::back_emf_out`): the trigger counts and their count direction in the
    /// chopping switch's on-time and off-time, the least on-time counts for the first and the
    /// most for the second, the off-time threshold (mV from a rail; C form parenthesised),
    /// whether that rail is the bus, the blanking in PWM periods, the delay in degrees.
    pub bemf: bool,
    pub bemf_on_trigger_count: String,
    pub bemf_on_trigger_up: bool,
    pub bemf_on_counts_min: String,
    pub bemf_off_trigger_count: String,
    pub bemf_off_trigger_up: bool,
    pub bemf_off_counts_max: String,
    pub bemf_off_threshold_mv: String,
    pub bemf_off_threshold_mv_c: String,
    pub bemf_off_at_bus: bool,
    pub bemf_blanking_periods: String,
    pub bemf_delay_deg: String,
    /// The sampling explained, one line each (empty without it).
    pub bemf_lines: Vec<String>,
}

/// The current limit's values as they go into code and text (zeros and
/// empty where the board has no over-current path, so strict templates
/// always find them).
#[derive(Debug, Clone, Serialize, Default)]
pub struct LimitLiterals {
    /// The comparator's threshold is a programmable code (else fixed).
    pub programmable: bool,
    pub threshold_code: String,
    /// Nominal threshold, mV.
    pub threshold_mv: String,
    /// The trip window's edges, mA.
    pub trip_low_ma: String,
    pub trip_high_ma: String,
    /// The board has a fault filter / a blanking timer.
    pub has_filter: bool,
    pub filter_clock_hz: String,
    pub filter_samples: String,
    pub has_blanking: bool,
    pub blanking_ticks: String,
    pub blanking_ns: String,
    /// 1 for cycle-by-cycle, 0 for latched.
    pub cycle_by_cycle: bool,
    pub response: String,
}

/// The one context every template receives.
#[derive(Debug, Clone, Serialize)]
pub struct Context {
    pub tool: String,
    /// The placeholder marker; sealed after rendering.
    pub marker: String,
    pub design: String,
    pub names: Names,
    pub timer: TimerLiterals,
    /// The MCU has an FPU: emit the floating-point helper too.
    pub fpu: bool,
    pub has_dead_time: bool,
    /// A three-phase bridge: emit the channel and ADC-trigger parts.
    pub three_phase: bool,
    pub three_phase_literals: ThreePhaseLiterals,
    /// The board has an over-current path: emit the current limit's part.
    pub current_limit: bool,
    pub limit: LimitLiterals,
    /// The current limit explained: rows `{label, value}` (empty without one).
    pub limit_rows: Vec<Row>,
    /// The operating range's worst points: rows `{label, value}` (empty
    /// without a range).
    pub range_rows: Vec<Row>,
    /// A brushed stage samples its current: emit the trigger part.
    pub sampling: bool,
    pub sampling_literals: SamplingLiterals,
    /// The sampling explained (empty without it).
    pub sampling_rows: Vec<Row>,
    /// The design asked for a current loop: emit its part.
    pub current_loop: bool,
    /// A brushed loop gets a step helper (a three-phase loop runs in d–q).
    pub loop_helper: bool,
    pub loop_literals: LoopLiterals,
    /// The current loop explained (empty without one).
    pub loop_rows: Vec<Row>,
    /// The rationale as plain text lines, for comment blocks.
    pub rationale_lines: Vec<String>,
    /// The register init sequence, one step per line (C names).
    pub init_steps: Vec<String>,
    /// The same sequence naming the Rust module's constants and helpers.
    pub rust_init_steps: Vec<String>,
    /// What duty 0 means for this topology, how to coast, the PWM mode.
    pub stage: StageLiterals,
    pub summary: Vec<Row>,
    pub constraints: Vec<ConstraintRow>,
    pub losses: Vec<Row>,
    pub figures: Vec<Row>,
    pub alternatives: Vec<Row>,
    pub findings: Vec<Row>,
    /// The chosen setting at the worst corners: rows `{label, value}`.
    pub worst_case: Vec<Row>,
    /// What the register-level verifier measured on the written registers.
    pub register_check: Vec<Row>,
    pub assumptions: Vec<String>,
    pub cautions: Vec<String>,
    pub inputs: Vec<Row>,
    pub conventions: Vec<Row>,
}

/// What the stage does at duty 0 and how it coasts, per topology (text and
/// literals for the templates).
#[derive(Debug, Clone, Serialize)]
pub struct StageLiterals {
    /// The plan's topology name.
    pub topology: String,
    /// What the init compare does once the outputs are enabled.
    pub init_compare_meaning: String,
    /// The compare the init sequence loads while the outputs are disabled:
    /// 0, or for a bipolar H-bridge the 50 % compare (zero volts).
    pub init_compare: String,
    /// Compare 0 with the outputs enabled turns the low side(s) on and
    /// shorts the motor (braking): `true`/`false`.
    pub duty_zero_brakes: bool,
    /// The PWM mode and output polarity the constants assume.
    pub pwm_mode: String,
    /// What duty 0 means and how to coast, one sentence each.
    pub duty_zero_lines: Vec<String>,
    /// What the firmware must know before it enables the outputs.
    pub enable_note: String,
}

/// A brushed stage's sampling, as literals.
#[derive(Debug, Clone, Default, Serialize)]
pub struct SamplingLiterals {
    /// A fixed trigger count (else the count follows the compare).
    pub fixed: bool,
    pub trigger_count: String,
    pub counting_up: bool,
    /// `(compare + TRIGGER_ADD)/2 − TRIGGER_LEAD` when the count follows the compare.
    pub trigger_add: String,
    pub trigger_lead: String,
    pub compare_min: String,
    pub compare_max: String,
    /// −1 when the shunt reads the motor current reversed.
    pub sign: String,
    pub state: String,
    /// Sampled at both counter extremes: the top's trigger count and direction.
    pub both_extremes: bool,
    pub top_trigger_count: String,
    pub top_counting_up: bool,
}

/// The current loop, as literals.
#[derive(Debug, Clone, Default, Serialize)]
pub struct LoopLiterals {
    pub update_divider: String,
    /// Control updates per PWM period (1, or 2 at both counter extremes).
    pub updates_per_period: String,
    /// Counter extremes per update, on a timer whose divider counts extremes.
    pub counts_extremes: bool,
    pub update_extremes: String,
    pub rate_millihz: String,
    pub rate_text: String,
    /// The compare of zero volts and the loop's clamp (the compare limits and, with a
    /// sampling window, its compares).
    pub zero_compare: String,
    pub compare_lo: String,
    pub compare_hi: String,
    pub kp_v_per_a: String,
    pub ki_v_per_a_s: String,
    pub period_s: String,
    pub counts_per_volt: String,
    pub fixed: bool,
    pub fraction_bits: String,
    pub kp_q: String,
    pub ki_q: String,
    pub zero_code: String,
    pub amps_per_code: String,
    pub round_half: String,
}
