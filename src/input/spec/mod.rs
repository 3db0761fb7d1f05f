//! The input files as written: the only layer that deserialises.
//!
//! Three file kinds, each with one top-level key naming its kind:
//! `switch:` (one MOSFET's datasheet values), `board:` (MCU timer, power
//! stage, gate driver, thermal path) and `design:` (the engineer's drive: the
//! board it uses, supply, motor, ambient, constraints, objective). Every
//! struct denies unknown fields; every dimensioned value is a [`Q`] or
//! [`Spread`] text with its unit. Cross-field checks live in
//! [`crate::input::design`], not here.

pub mod quantity;
#[cfg(feature = "schema")]
pub mod schema;

use serde::Deserialize;

pub use quantity::{
    Ampere, AmperePerSecond, Celsius, Coulomb, Dim, Either2, Farad, Henry, Hertz, Joule, Kelvin,
    KelvinPerWatt, Ohm, PerKelvin, Q, RadPerSecond, Ratio, Second, Siemens, Spread, Volt,
    VoltSecondPerRad, Watt,
};

// ---------------------------------------------------------------- switch file

/// A switch file: `switch: { ... }`.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct SwitchFile {
    pub switch: SwitchSpec,
}

/// One N-channel MOSFET as its datasheet describes it.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct SwitchSpec {
    #[serde(deserialize_with = "quantity::text")]
    pub name: String,
    /// Drain-source breakdown voltage.
    pub v_dss: Q<Volt>,
    /// Continuous drain current at a case temperature of 25 °C.
    pub i_d: Q<Ampere>,
    pub r_ds_on: RdsOnSpec,
    /// How R_ds(on) grows with junction temperature.
    pub r_ds_on_vs_temperature: Option<RdsOnTemperatureSpec>,
    /// Gate threshold voltage.
    pub v_th: Spread<Volt>,
    /// Forward transconductance (needed unless `v_plateau` is given).
    pub g_fs: Option<Q<Siemens>>,
    /// Miller plateau voltage read off the gate-charge curve.
    pub v_plateau: Option<Q<Volt>>,
    pub q_g: GateChargeSpec,
    pub q_gs: Spread<Coulomb>,
    pub q_gd: Spread<Coulomb>,
    /// Gate charge up to the threshold voltage (optional).
    pub q_g_th: Option<Q<Coulomb>>,
    pub capacitance: CapacitanceSpec,
    /// Output charge (optional; used before C_oss for the output-capacitance loss).
    pub q_oss: Option<Q<Coulomb>>,
    /// V_DS at which `q_oss` is given (optional; without it Q_oss is taken at
    /// the bus voltage).
    pub q_oss_at_v_ds: Option<Q<Volt>>,
    /// Energy stored in C_oss at `e_oss_at_v_ds` (optional, preferred when given).
    pub e_oss: Option<EossSpec>,
    /// Internal gate resistance.
    pub r_g_int: Spread<Ohm>,
    pub body_diode: BodyDiodeSpec,
    pub v_gs_max: Q<Volt>,
    pub t_j_max: Q<Celsius>,
    /// Junction-to-case thermal resistance.
    pub r_th_jc: Q<KelvinPerWatt>,
    /// Junction-to-ambient thermal resistance on the datasheet's test board.
    pub r_th_ja: Q<KelvinPerWatt>,
    /// Gate voltage of the zero-temperature-coefficient point (optional).
    pub v_ztc: Option<Q<Volt>>,
    /// Pulsed drain-current rating I_DM and the pulse width it is given at
    /// (optional; the current limit's peak is held to I_D without it).
    pub i_dm: Option<PulsedCurrentSpec>,
}

/// A pulsed current rating.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct PulsedCurrentSpec {
    pub value: Q<Ampere>,
    pub pulse_width: Q<Second>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct RdsOnSpec {
    pub typ: Q<Ohm>,
    pub max: Option<Q<Ohm>>,
    /// Gate-source voltage at which the values hold.
    pub at_v_gs: Q<Volt>,
    /// The typical value at a second gate-source voltage (optional): with
    /// it R_ds(on) follows the actual gate drive.
    pub second_point: Option<RdsOnPointSpec>,
}

/// R_ds(on) (typical) at one gate-source voltage.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct RdsOnPointSpec {
    pub typ: Q<Ohm>,
    pub at_v_gs: Q<Volt>,
}

/// Normalised R_ds(on) curve points `[temperature, factor]` (1.0 at 25 °C),
/// or a per-kelvin coefficient.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "snake_case")]
pub enum RdsOnTemperatureSpec {
    Points(Vec<(Q<Celsius>, f64)>),
    Coefficient(Q<PerKelvin>),
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct GateChargeSpec {
    pub typ: Q<Coulomb>,
    pub max: Option<Q<Coulomb>>,
    /// Gate-source voltage the total gate charge is given at.
    pub at_v_gs: Q<Volt>,
    /// Drain-source (supply) voltage of the datasheet's gate-charge test
    /// (optional; half of `v_dss` when absent). The Miller charge Q_gd is
    /// the drain swing from this voltage down to the on state; a C_rss curve
    /// is reconciled with Q_gd over that swing.
    #[serde(default)]
    pub at_v_ds: Option<Q<Volt>>,
    /// Drain current of the datasheet's gate-charge test (optional): the
    /// current the plateau `v_plateau` holds at. With `g_fs` it fixes the
    /// channel's square law through that point.
    #[serde(default)]
    pub at_i_d: Option<Q<Ampere>>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct CapacitanceSpec {
    /// Drain-source voltage the three capacitances are given at.
    pub at_v_ds: Q<Volt>,
    pub c_iss: Q<Farad>,
    pub c_oss: Q<Farad>,
    pub c_rss: Q<Farad>,
    /// C_rss at other drain voltages `[v_ds, c_rss]`, for the two-point C_gd.
    #[serde(default)]
    pub c_rss_curve: Vec<(Q<Volt>, Q<Farad>)>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct EossSpec {
    pub value: Q<Joule>,
    pub at_v_ds: Q<Volt>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct BodyDiodeSpec {
    /// Forward voltage.
    pub v_sd: Q<Volt>,
    /// Source current at which `v_sd` is stated.
    #[serde(default)]
    pub v_sd_at: Option<Q<Ampere>>,
    /// Forward-voltage curve points `[source current, V_SD]` at 25 °C.
    #[serde(default)]
    pub v_sd_curve: Vec<(Q<Ampere>, Q<Volt>)>,
    /// Reverse-recovery charge.
    pub q_rr: Spread<Coulomb>,
    /// Reverse-recovery time.
    pub t_rr: Q<Second>,
    /// Conditions of the Q_rr test; without them 100 A/µs at the capacitance
    /// table's voltage is assumed (and said in the assumptions).
    #[serde(default)]
    pub q_rr_test: Option<RecoveryTestSpec>,
}

/// Conditions under which a datasheet states Q_rr.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct RecoveryTestSpec {
    /// Forward current before the commutation.
    pub i_f: Q<Ampere>,
    /// Rate of fall of the diode current.
    pub di_dt: Q<AmperePerSecond>,
    /// Reverse voltage the diode blocks after recovery.
    pub v_r: Q<Volt>,
}

// ----------------------------------------------------------------- board file

/// A board file: `board: { ... }`.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct BoardFile {
    pub board: BoardSpec,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct BoardSpec {
    #[serde(deserialize_with = "quantity::text")]
    pub name: String,
    pub timer: TimerSpec,
    pub stage: StageSpec,
    pub gate_driver: GateDriverSpec,
    pub thermal: ThermalSpec,
    /// Low-side shunt current sensing (`three-phase` only, required there).
    pub current_sensing: Option<CurrentSensingSpec>,
    /// The over-current protection: the shunt, its amplifier and the timer's
    /// fault input. Without it pwmplan plans no current limit and warns
    /// where a stall would need one.
    pub overcurrent: Option<OvercurrentSpec>,
}

/// The board's over-current path: shunt → amplifier → comparator → the
/// timer's fault input (filter, blanking) → the outputs.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct OvercurrentSpec {
    pub shunt: ShuntSpec,
    /// Between the shunt and the comparator; omit when the comparator reads
    /// the shunt directly.
    pub amplifier: Option<SenseAmplifierSpec>,
    pub comparator: FaultComparatorSpec,
    /// The fault input's digital filter; omit when the timer has none.
    pub filter: Option<FaultFilterSpec>,
    /// The fault input's blanking after each turn-on; omit when the timer
    /// has none (the filter then has to reject the turn-on spike).
    pub blanking: Option<BlankingSpec>,
    /// What the timer can do when the fault input trips.
    pub responses: Vec<FaultResponseSpec>,
}

/// The current-sense resistor.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct ShuntSpec {
    pub resistance: Q<Ohm>,
    /// ± tolerance of the resistance (over temperature included).
    pub tolerance: Q<Ratio>,
    /// Power rating.
    pub power: Q<Watt>,
    /// Where it sits: `supply-return` (one shunt in the bus return),
    /// `leg` (in each leg's low side), `phase` (in series with the motor).
    pub place: ShuntPlaceSpec,
}

/// Where the shunt sits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum ShuntPlaceSpec {
    SupplyReturn,
    Leg,
    Phase,
}

/// The sense amplifier: V_out = gain·I·R_shunt + offset.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct SenseAmplifierSpec {
    /// Voltage gain (a plain number, V/V).
    pub gain: f64,
    /// ± tolerance of the gain.
    pub gain_tolerance: Q<Ratio>,
    /// Output at zero current.
    pub offset: Q<Volt>,
    /// ± tolerance of the offset.
    pub offset_tolerance: Q<Volt>,
    /// Time the output needs to settle after a step (to the comparator's
    /// accuracy).
    pub settle_time: Q<Second>,
}

/// The fault comparator.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct FaultComparatorSpec {
    /// Its threshold: `{ programmable: { full_scale, code_bits } }` (a
    /// reference DAC: threshold = code/2^bits × full_scale) or `{ fixed: V }`.
    pub threshold: ThresholdSpec,
    /// ± tolerance of the threshold (reference and DAC).
    pub tolerance: Q<Ratio>,
    /// ± input offset.
    pub offset: Q<Volt>,
    /// Propagation delay from the input crossing to the fault input.
    pub delay: Q<Second>,
}

/// A comparator threshold.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "snake_case")]
pub enum ThresholdSpec {
    Programmable { full_scale: Q<Volt>, code_bits: u32 },
    Fixed(Q<Volt>),
}

/// The fault input's digital filter: a fault passes after `N` consecutive
/// samples at the chosen clock.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct FaultFilterSpec {
    /// Sample clocks offered.
    pub clocks: Vec<Q<Hertz>>,
    /// Sample counts offered.
    pub samples: Vec<u32>,
}

/// The fault input's blanking after each turn-on, in ticks of the timer
/// clock divided by `clock_divider`.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct BlankingSpec {
    pub clock_divider: u32,
    pub max_ticks: u32,
}

/// What the timer does when the fault input trips.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum FaultResponseSpec {
    /// The outputs turn off until the next period starts.
    CycleByCycle,
    /// The outputs turn off until firmware clears the fault.
    Latched,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct TimerSpec {
    /// Timer input clock (before the prescaler).
    pub clock: Q<Hertz>,
    /// Width of the counter in bits.
    pub counter_bits: u32,
    pub prescaler: PrescalerSpec,
    /// Counting modes the timer offers.
    pub alignments: Vec<AlignmentSpec>,
    pub dead_time: DeadTimeSpec,
    /// Shortest on or off pulse the output stage tolerates.
    pub min_pulse: Option<Q<Second>>,
    /// Whether the MCU has a floating-point unit (emitted code may use `float`).
    #[serde(default)]
    pub fpu: bool,
    /// The update-event divider, when the timer has one (without it the
    /// compares take effect every period).
    pub update_divider: Option<UpdateDividerSpec>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "snake_case")]
pub enum PrescalerSpec {
    /// Any divider from `min` to `max`; the register holds divider − 1.
    Linear { min: u64, max: u64 },
    /// A fixed list of ratios; the register holds the index in the list.
    Ratios(Vec<u64>),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "snake_case")]
pub enum AlignmentSpec {
    Edge,
    Centre,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "snake_case")]
pub enum DeadTimeSpec {
    /// No dead-time generator: complementary outputs need external delay.
    None,
    /// Dead time = ticks / (clock / clock_divider), ticks 0..=max_ticks.
    Linear {
        clock_divider: u64,
        max_ticks: u64,
        /// Width of the dead-time register field in bits (optional): the
        /// code (= ticks) must fit, max_ticks ≤ 2^code_bits − 1.
        #[serde(default)]
        code_bits: Option<u32>,
    },
    /// A register code split into segments with their own tick multipliers.
    Segmented {
        clock_divider: u64,
        segments: Vec<DeadTimeSegmentSpec>,
        /// Width of the dead-time register field in bits (optional): every
        /// segment's codes must fit, first_code + count ≤ 2^code_bits.
        #[serde(default)]
        code_bits: Option<u32>,
    },
}

/// Codes `first_code .. first_code + count` give
/// `(base + code − first_code) · step` dead-time ticks.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct DeadTimeSegmentSpec {
    pub first_code: u32,
    pub count: u32,
    pub base: u64,
    pub step: u64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum TopologySpec {
    LowSide,
    HalfBridge,
    HBridge,
    ThreePhase,
}

/// How the stage modulates: `bipolar` / `unipolar` (h-bridge), or for a
/// `three-phase` bridge `sinusoidal: { zero_sequence: none | min-max }` or
/// `six-step: { chop: high-side | low-side | complementary }`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub enum ModulationSpec {
    Bipolar,
    Unipolar,
    /// Sinusoidal (or, with min-max injection, space-vector) PWM.
    Sinusoidal {
        #[serde(default)]
        zero_sequence: ZeroSequenceSpec,
    },
    /// Six-step block commutation with one chopping switch.
    SixStep {
        chop: ChopSpec,
        /// How the firmware knows the rotor's position: `position-sensors` (the default) or `back-emf` (sensorless: the floating phase's back-EMF zero crossing;
        /// the plan then gives where in the PWM period to sample it, the thresholds, the
        /// blanking after each commutation and the delay to the next).
        #[serde(default)]
        rotor_position: RotorPositionSpec,
    },
}

/// How a six-step drive finds the rotor's position.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Default)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum RotorPositionSpec {
    /// Position sensors on the motor (nothing more is planned).
    #[default]
    PositionSensors,
    /// Sensorless: the back-EMF of the floating phase, sampled in the PWM period.
    BackEmf,
}

/// Zero-sequence signal added to the three sinusoidal references.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Default)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum ZeroSequenceSpec {
    /// Plain sinusoidal PWM (linear up to m = 1).
    #[default]
    None,
    /// Min-max injection (space-vector equivalent, linear up to m = 2/√3).
    MinMax,
}

/// Which switch chops in six-step.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum ChopSpec {
    HighSide,
    LowSide,
    Complementary,
}

/// Shunt current sensing read by the ADC: a three-phase bridge's low-side
/// shunts, sampled in the middle of the low-side on-time of a centre-aligned
/// timer; a brushed stage's shunt, sampled in the middle of the switching
/// state it sees the motor current in.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct CurrentSensingSpec {
    /// Time the shunt amplifier needs after the sensed state begins.
    pub settle_time: Q<Second>,
    /// ADC sampling (acquisition) time.
    pub sample_time: Q<Second>,
    /// Where the shunt sits (brushed stages; default: the board's
    /// `overcurrent.shunt.place`; a three-phase bridge's are `leg`).
    pub place: Option<ShuntPlaceSpec>,
    /// The ADC that reads the amplifier (for fixed-point loop gains).
    pub adc: Option<AdcSpec>,
    /// A three-phase bridge's two phase currents: converted at once on two converters
    /// (`simultaneous`, the default) or one after the other on one (`sequential`, which
    /// doubles the acquisition the window must hold).
    pub conversion: Option<ConversionSpec>,
}

/// How a three-phase bridge's two sampled currents are converted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum ConversionSpec {
    Simultaneous,
    Sequential,
}

/// The ADC reading the current: `bits` over 0 to `full_scale`.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct AdcSpec {
    pub bits: u32,
    pub full_scale: Q<Volt>,
}

/// The timer's update-event divider: the compares written take effect at
/// every `n`-th PWM period's update event, `1 ≤ n ≤ max`.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct UpdateDividerSpec {
    pub max: u32,
    /// On an up-down count the update event also comes at the counter top, so the compares
    /// can change every half period (default `false`: once per period, at the bottom).
    #[serde(default)]
    pub each_extreme: bool,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct StageSpec {
    pub topology: TopologySpec,
    /// Switching scheme (required for `h-bridge` and `three-phase`).
    pub modulation: Option<ModulationSpec>,
    /// A switch file path relative to this board file, `bundled:NAME`, or the
    /// switch written inline.
    pub switch: SwitchRef,
    /// The freewheel diode across the motor (`low-side` only).
    pub freewheel_diode: Option<DiodeSpec>,
    /// Commutation-loop inductance: the loop from the bus capacitor through
    /// the switch and the partner (or freewheel diode) and back (optional).
    #[serde(default)]
    pub loop_inductance: Option<Q<Henry>>,
    /// Common-source inductance: the part of the commutation loop in the
    /// switch's source lead that the gate driver's return also passes
    /// through (package source lead and any shared trace; part of
    /// `loop_inductance` when both are given; optional).
    #[serde(default)]
    pub common_source_inductance: Option<Q<Henry>>,
    /// Share of V_DSS the turn-off peak must stay below (optional; 20 %).
    #[serde(default)]
    pub v_ds_margin: Option<Q<Ratio>>,
}

#[derive(Debug, Clone)]
pub enum SwitchRef {
    Path(String),
    Inline(Box<SwitchSpec>),
}

impl<'de> Deserialize<'de> for SwitchRef {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<SwitchRef, D::Error> {
        use serde::de::{self, MapAccess, Visitor};
        struct RefVisitor;
        impl<'de> Visitor<'de> for RefVisitor {
            type Value = SwitchRef;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a switch file path, `bundled:NAME`, or the switch's fields")
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<SwitchRef, E> {
                Ok(SwitchRef::Path(v.to_string()))
            }
            fn visit_map<A: MapAccess<'de>>(self, map: A) -> Result<SwitchRef, A::Error> {
                SwitchSpec::deserialize(de::value::MapAccessDeserializer::new(map))
                    .map(|s| SwitchRef::Inline(Box::new(s)))
            }
        }
        d.deserialize_any(RefVisitor)
    }
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct DiodeSpec {
    pub v_f: Q<Volt>,
    /// Slope resistance above the knee (optional).
    pub r_d: Option<Q<Ohm>>,
    pub q_rr: Q<Coulomb>,
    pub t_rr: Q<Second>,
    pub i_f: Q<Ampere>,
    pub v_rrm: Q<Volt>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct GateDriverSpec {
    /// Gate drive voltage.
    pub supply: Q<Volt>,
    /// Turn-on output stage: a resistance or a peak current.
    pub source: Either2<Ohm, Ampere>,
    /// Turn-off output stage: a resistance or a peak current.
    pub sink: Either2<Ohm, Ampere>,
    /// External gate resistor in the turn-on path.
    pub r_gate_on: Q<Ohm>,
    /// External gate resistor in the turn-off path.
    pub r_gate_off: Q<Ohm>,
    pub propagation_delay: Q<Second>,
    /// Worst difference between the delays of two channels.
    pub delay_mismatch: Q<Second>,
    /// How the high-side gate is supplied (bridges only).
    pub high_side: Option<HighSideSupplySpec>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "snake_case")]
pub enum HighSideSupplySpec {
    Bootstrap {
        capacitor: Q<Farad>,
        /// Low-side on-time the bootstrap capacitor needs each period.
        refresh_time: Q<Second>,
        /// Leakage and quiescent current drawn from the capacitor.
        load_current: Q<Ampere>,
    },
    Isolated,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct ThermalSpec {
    /// Junction-to-ambient for each switch as mounted (overrides the chain).
    pub r_th_ja: Option<Q<KelvinPerWatt>>,
    /// Case-to-sink (interface) resistance, with `r_th_sa`.
    pub r_th_cs: Option<Q<KelvinPerWatt>>,
    /// Sink-to-ambient resistance seen by each switch.
    pub r_th_sa: Option<Q<KelvinPerWatt>>,
    /// Transient model `[R, tau]` pairs (Foster), junction to ambient.
    #[serde(default)]
    pub foster: Vec<(Q<KelvinPerWatt>, Q<Second>)>,
}

// ---------------------------------------------------------------- design file

/// A design file: `design: { ... }`.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct DesignFile {
    pub design: DesignSpec,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct DesignSpec {
    #[serde(deserialize_with = "quantity::text")]
    pub name: String,
    /// A board file path relative to this file, or `bundled:NAME`.
    #[serde(deserialize_with = "quantity::text")]
    pub board: String,
    pub supply: SupplySpec,
    pub motor: MotorSpec,
    pub ambient: AmbientSpec,
    pub constraints: ConstraintsSpec,
    #[serde(default)]
    pub objective: ObjectiveSpec,
    #[serde(default)]
    pub outputs: OutputsSpec,
    /// Part and operating spreads for the worst case and the Monte Carlo
    /// (optional; without it only the switch's datasheet limits, the supply
    /// range and the ambient range spread).
    pub tolerances: Option<TolerancesSpec>,
    /// The current limit's requirements (optional; needs the board's
    /// `overcurrent`).
    pub current_limit: Option<CurrentLimitSpec>,
    /// The speeds and loads the drive runs at (optional; without it the
    /// rated point alone).
    pub operating_range: Option<OperatingRangeSpec>,
    /// The motor current loop to tune (optional; needs the board's
    /// `current_sensing`).
    pub current_loop: Option<CurrentLoopSpec>,
}

/// The current loop the firmware closes on the sampled current.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct CurrentLoopSpec {
    /// Control updates per second asked for (default: one per PWM period).
    pub rate: Option<Q<Hertz>>,
    /// Phase margin asked for, degrees (default 60).
    pub phase_margin_deg: Option<f64>,
    /// Integer gains for firmware without floating point.
    pub fixed_point: Option<FixedPointSpec>,
}

/// Integer gains: `gain·2^fraction_bits` in compare counts per ADC code.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct FixedPointSpec {
    pub fraction_bits: u32,
}

/// The speed range and how the load current follows the speed.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct OperatingRangeSpec {
    pub speed: SpeedSpanSpec,
    /// How the current follows the speed (default `constant-torque`).
    #[serde(default)]
    pub load: LoadLineSpec,
    /// Holding torque at zero speed, where the drive does.
    #[serde(default)]
    pub standstill: Option<StandstillSpec>,
    /// Shares of operating time at speeds of the range (for the average
    /// loss and junction, and the `least-average-loss` objective).
    #[serde(default)]
    pub profile: Option<Vec<ProfilePointSpec>>,
}

/// One point of the time profile: a speed of the range (0 for standstill
/// holding) and its share of the operating time.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct ProfilePointSpec {
    pub speed: Q<RadPerSecond>,
    pub share: Q<Ratio>,
}

/// The drive holding its load at zero speed.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct StandstillSpec {
    /// The current held (a three-phase bridge: the phase-current peak, or
    /// the line current in six-step, as `rated_current`).
    pub current: Q<Ampere>,
}

/// Lowest and highest operating speed.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct SpeedSpanSpec {
    pub min: Q<RadPerSecond>,
    pub max: Q<RadPerSecond>,
}

/// The load line: the motor current at each speed of the range.
#[derive(Debug, Clone, Default, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub enum LoadLineSpec {
    /// The rated current at every speed.
    #[default]
    ConstantTorque,
    /// Torque, and so current, as the square of speed through the rated point.
    FanLaw,
    /// (speed, current) points, joined by straight lines.
    Table(Vec<LoadPointSpec>),
}

/// One point of a load-line table.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct LoadPointSpec {
    pub speed: Q<RadPerSecond>,
    pub current: Q<Ampere>,
}

/// What the design asks of the current limit.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct CurrentLimitSpec {
    /// A current the drive must deliver in short bursts (start-up,
    /// acceleration) without tripping, in the meaning of `rated_current`.
    pub burst: Option<BurstSpec>,
    /// A trip current to use instead of the computed one.
    pub trip: Option<Q<Ampere>>,
    /// The response to use (default: `cycle-by-cycle` where the board
    /// offers it).
    pub response: Option<FaultResponseSpec>,
}

/// A burst current and how long it lasts.
#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct BurstSpec {
    pub current: Q<Ampere>,
    pub duration: Q<Second>,
}

/// Spreads of the parts the switch file does not describe, each written as
/// ± a share of nominal (`"10 %"`); a missing one does not spread.
#[derive(Debug, Clone, Default, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct TolerancesSpec {
    /// How the Monte Carlo draws a parameter between its limits.
    #[serde(default)]
    pub distribution: DistributionSpec,
    /// Winding resistance, ± around nominal.
    pub motor_resistance: Option<Q<Ratio>>,
    /// Winding inductance, ± around nominal.
    pub motor_inductance: Option<Q<Ratio>>,
    /// Gate-driver source and sink output resistances, ± around nominal.
    pub driver_resistance: Option<Q<Ratio>>,
    /// Gate-drive voltage, ± around nominal.
    pub driver_supply: Option<Q<Ratio>>,
}

/// How a spread parameter is drawn between its limits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Default)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "snake_case")]
pub enum DistributionSpec {
    /// Uniform between the limits.
    #[default]
    Uniform,
    /// Normal about typ, each limit at 3σ of its side, truncated there.
    Normal,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct SupplySpec {
    pub nominal: Q<Volt>,
    pub min: Q<Volt>,
    pub max: Q<Volt>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum MotorKind {
    BrushedDc,
    /// Three-phase permanent-magnet motor (BLDC or PMSM), star connected.
    Brushless,
}

/// Shape of a brushless motor's phase back-EMF.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Default)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum BackEmfShapeSpec {
    #[default]
    Sinusoidal,
    Trapezoidal,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct MotorSpec {
    pub kind: MotorKind,
    /// Winding (terminal) resistance; brushless: phase (line-to-neutral).
    pub resistance: Q<Ohm>,
    /// Winding inductance; brushless: phase inductance.
    pub inductance: Q<Henry>,
    /// Back-EMF constant; or give `rated_voltage` with `no_load_speed`.
    /// Brushless: line-to-line PEAK back-EMF per mechanical speed.
    pub back_emf_constant: Option<Q<VoltSecondPerRad>>,
    /// Brushless: pole pairs (required).
    pub pole_pairs: Option<u32>,
    /// Brushless: shape of the phase back-EMF (default sinusoidal).
    pub back_emf_shape: Option<BackEmfShapeSpec>,
    /// Brushless, sinusoidal modulation: current advance angle in degrees
    /// ahead of the back-EMF (default 0: i_d = 0).
    pub current_advance_deg: Option<f64>,
    pub rated_voltage: Option<Q<Volt>>,
    pub no_load_speed: Option<Q<RadPerSecond>>,
    /// Continuous current at the rated load. Brushless: the phase-current
    /// peak under sinusoidal modulation; under six-step the line current,
    /// the mean current in the two conducting phases (not the DC-link mean,
    /// which is about the chopping duty times it).
    pub rated_current: Q<Ampere>,
    /// Speed at the rated load.
    pub operating_speed: Q<RadPerSecond>,
    /// Highest current the motor tolerates even briefly (for example the
    /// demagnetisation limit of its magnets), in the meaning of
    /// `rated_current` (optional).
    pub max_current: Option<Q<Ampere>>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct AmbientSpec {
    pub min: Q<Celsius>,
    pub max: Q<Celsius>,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct ConstraintsSpec {
    #[serde(default)]
    pub audible: AudibleSpec,
    /// Largest motor-current ripple, peak to peak: in amperes or % of rated.
    pub max_ripple: Option<Either2<Ampere, Ratio>>,
    pub junction: Option<JunctionLimitSpec>,
    pub min_resolution_bits: Option<f64>,
    pub frequency: Option<FrequencyBandSpec>,
    /// Length of a stall at start-up the stage must survive.
    pub stall_time: Option<Q<Second>>,
    /// What a constraint that fails at a worst corner of the part and
    /// operating spreads does to the plan: `block` (default) makes the plan
    /// infeasible with the corner named; `warn` keeps it feasible with a
    /// warning finding naming the corner.
    #[serde(default)]
    pub worst_case: WorstCasePolicySpec,
}

/// What a worst-case failure does to the plan (`constraints.worst_case`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Default)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum WorstCasePolicySpec {
    /// The plan is infeasible; the failing constraint and corner are named.
    #[default]
    Block,
    /// The plan stays feasible; a warning finding names the corner.
    Warn,
}

#[derive(Debug, Clone, Deserialize, Default)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "snake_case")]
pub enum AudibleSpec {
    /// No significant ripple line below the hearing limit (default 20 kHz).
    #[default]
    Inaudible,
    /// Same with an explicit hearing limit.
    InaudibleAbove(Q<Hertz>),
    /// Audible lines allowed; reported only.
    Allowed,
    /// Audible lines allowed except in these `[low, high]` bands.
    Avoid(Vec<(Q<Hertz>, Q<Hertz>)>),
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields, rename_all = "snake_case")]
pub enum JunctionLimitSpec {
    /// Hottest junction allowed.
    Max(Q<Celsius>),
    /// Distance to keep below the switch's T_j max.
    Margin(Q<Kelvin>),
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct FrequencyBandSpec {
    pub min: Option<Q<Hertz>>,
    pub max: Option<Q<Hertz>>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Default)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(rename_all = "kebab-case")]
pub enum ObjectiveSpec {
    /// Least total loss: switches, diodes, gate drive and ripple copper loss.
    #[default]
    LeastLoss,
    /// Highest frequency whose loss stays within 10 % of the least.
    Quietest,
    /// Largest thermal margin.
    CoolestJunction,
    /// Least loss averaged over the operating range's time profile.
    LeastAverageLoss,
    /// Least loss at the operating range's worst point.
    LeastWorstLoss,
}

#[derive(Debug, Clone, Deserialize)]
#[cfg_attr(feature = "schema", derive(schemars::JsonSchema))]
#[serde(deny_unknown_fields)]
pub struct OutputsSpec {
    #[serde(default = "yes")]
    pub c: bool,
    #[serde(default = "yes")]
    pub rust: bool,
}

fn yes() -> bool {
    true
}

impl Default for OutputsSpec {
    fn default() -> Self {
        OutputsSpec {
            c: true,
            rust: true,
        }
    }
}
