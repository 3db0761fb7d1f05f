//! Plain SI input structures for the power-stage physics.
//!
//! Owns: the description of a switch (datasheet figures), the gate drive, a
//! discrete freewheel diode, the thermal path, the load current at the switching
//! instants, the topology and the operating point. No behaviour beyond trivial
//! accessors lives here; the models are in the sibling modules.

/// How the on-resistance of the switch varies with junction temperature.
#[derive(Debug, Clone, PartialEq)]
pub enum RdsOnTemperature {
    /// Normalised datasheet curve: points `(t_c, factor relative to 25 °C)`,
    /// interpolated linearly in temperature (see `thermal::r_ds_on_ohm`).
    Curve(Vec<(f64, f64)>),
    /// Fractional coefficient per kelvin (e.g. 0.005 for 0.5 %/K), applied as
    /// R25·(1 + α)^(T − 25) (Graovac, Pürschel, Kiep, *MOSFET Power Losses
    /// Calculation Using the Data-Sheet Parameters*, 2006, with α in %/K there).
    CoefficientPerK(f64),
    /// R25·(T_K/298.15)^2.3 (from memory; no source checked).
    PowerLaw,
}

/// A MOSFET described by its datasheet figures, all SI.
#[derive(Debug, Clone, PartialEq)]
pub struct SwitchModel {
    /// Gate threshold voltage V_GS(th).
    pub v_th_v: f64,
    /// Forward transconductance g_fs, used for the plateau when none is given.
    pub g_fs_s: Option<f64>,
    /// Miller plateau voltage read from the gate-charge curve (preferred).
    pub v_plateau_v: Option<f64>,
    /// Total gate charge Q_g at `q_g_at_v_gs_v`.
    pub q_g_c: f64,
    /// V_GS at which `q_g_c` is specified.
    pub q_g_at_v_gs_v: f64,
    /// Drain current of the gate-charge test (where `v_plateau_v` holds), if given.
    pub q_g_at_i_d_a: Option<f64>,
    /// Gate-source charge Q_gs (up to the plateau).
    pub q_gs_c: f64,
    /// Gate-drain (Miller) charge Q_gd.
    pub q_gd_c: f64,
    /// Gate charge at threshold Q_g(th), if the datasheet gives it.
    pub q_g_th_c: Option<f64>,
    /// Input capacitance C_iss.
    pub c_iss_f: f64,
    /// Output capacitance C_oss at `c_oss_at_v_ds_v`.
    pub c_oss_f: f64,
    /// V_DS at which `c_oss_f` is specified.
    pub c_oss_at_v_ds_v: f64,
    /// Reverse transfer capacitance C_rss (= C_gd) at `c_rss_at_v_ds_v`.
    pub c_rss_f: f64,
    /// V_DS at which `c_rss_f` is specified.
    pub c_rss_at_v_ds_v: f64,
    /// C_rss(V_DS) curve points `(v_ds_v, farad)`; may be empty.
    pub c_rss_curve: Vec<(f64, f64)>,
    /// Output charge Q_oss, if given.
    pub q_oss_c: Option<f64>,
    /// V_DS at which `q_oss_c` is given; without it Q_oss is taken at the bus
    /// voltage (see `losses`).
    pub q_oss_at_v_ds_v: Option<f64>,
    /// Energy stored in C_oss, E_oss, if given.
    pub e_oss_j: Option<f64>,
    /// V_DS at which `e_oss_j` is specified.
    pub e_oss_at_v_ds_v: Option<f64>,
    /// Internal gate resistance R_g,int.
    pub r_g_int_ohm: f64,
    /// On-resistance at 25 °C junction.
    pub r_ds_on_25_ohm: f64,
    /// V_GS at which `r_ds_on_25_ohm` is specified.
    pub r_ds_on_spec_v_gs_v: f64,
    /// A second datasheet point `(v_gs_v, R_ds(on) there / R_ds(on) at
    /// r_ds_on_spec_v_gs_v)` at 25 °C, if given (a ratio, so it holds
    /// whatever drive `r_ds_on_25_ohm` has been scaled to).
    pub r_ds_on_second_point: Option<(f64, f64)>,
    /// Temperature dependence of the on-resistance.
    pub r_ds_on_temperature: RdsOnTemperature,
    /// Body-diode forward voltage V_SD.
    pub v_sd_v: f64,
    /// Source current at which `v_sd_v` is stated, if given.
    pub v_sd_test_a: Option<f64>,
    /// Forward-voltage curve `(I_S, V_SD)` at 25 °C, by rising current
    /// (empty when the datasheet gives none).
    pub v_sd_curve: Vec<(f64, f64)>,
    /// Body-diode reverse-recovery charge Q_rr.
    pub q_rr_c: f64,
    /// Body-diode reverse-recovery time t_rr.
    pub t_rr_s: f64,
    /// Conditions of the datasheet's Q_rr test, if given.
    pub q_rr_test: Option<RecoveryTest>,
    /// Absolute maximum V_GS.
    pub v_gs_max_v: f64,
    /// Maximum junction temperature.
    pub t_j_max_c: f64,
    /// Zero-temperature-coefficient gate voltage, if known.
    pub v_ztc_v: Option<f64>,
    /// Drain-source breakdown voltage V_DSS.
    pub v_dss_v: f64,
    /// Continuous drain current rating I_D.
    pub i_d_a: f64,
}

/// Conditions of a datasheet reverse-recovery test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RecoveryTest {
    /// Forward current before the commutation.
    pub i_f_a: f64,
    /// Rate of fall of the diode current, A/s.
    pub di_dt_a_per_s: f64,
    /// Reverse voltage after recovery.
    pub v_r_v: f64,
}

/// Gate driver seen by one switch. Peak-current ratings are converted to
/// resistances by the caller (R = V_drv/I_peak).
#[derive(Debug, Clone, PartialEq)]
pub struct GateDrive {
    /// Gate drive voltage (off level is 0 V).
    pub v_drive_v: f64,
    /// Driver pull-up (source) resistance.
    pub r_source_ohm: f64,
    /// Driver pull-down (sink) resistance.
    pub r_sink_ohm: f64,
    /// External gate resistance in the turn-on path.
    pub r_ext_on_ohm: f64,
    /// External gate resistance in the turn-off path.
    pub r_ext_off_ohm: f64,
    /// Driver propagation delay.
    pub prop_delay_s: f64,
    /// Worst-case propagation-delay mismatch between the two drivers of a leg.
    pub mismatch_s: f64,
    /// Commutation-loop inductance of the power stage around the switch
    /// (bus capacitor, partner, switch), H; 0 when the board does not give
    /// it. Kept with the drive because both are what the board puts around
    /// each switch, and every edge computation takes them together.
    pub loop_inductance_h: f64,
    /// Common-source inductance, H: the part of the loop in the switch's
    /// source lead that the gate loop shares; 0 when not given (a Kelvin
    /// source, or not known). Part of `loop_inductance_h` where that is
    /// given; without it the loop is taken as this alone.
    pub common_source_inductance_h: f64,
}

/// A discrete freewheel diode.
#[derive(Debug, Clone, PartialEq)]
pub struct DiodeModel {
    /// Forward voltage (threshold part of the piecewise-linear model).
    pub v_f_v: f64,
    /// Slope resistance; may be 0.
    pub r_d_ohm: f64,
    /// Reverse-recovery charge Q_rr (0 for a Schottky diode).
    pub q_rr_c: f64,
    /// Reverse-recovery time t_rr.
    pub t_rr_s: f64,
}

/// Thermal path from one device's junction to ambient.
#[derive(Debug, Clone, PartialEq)]
pub struct ThermalPath {
    /// Total steady-state junction-to-ambient resistance R_th(j-a), K/W
    /// (JEDEC JESD51 series for the definition).
    pub r_th_ja_k_per_w: f64,
    /// Foster network `(R K/W, τ s)`; may be empty.
    pub foster: Vec<(f64, f64)>,
}

/// Load (motor) current as seen by the stage, produced by the ripple model.
///
/// Sign convention: positive current flows in the motoring direction (out of the
/// high-side switch node of a half-bridge, from leg A to leg B of an H-bridge,
/// from the supply through the motor into a low-side switch).
#[derive(Debug, Clone, PartialEq)]
pub struct LoadCurrent {
    /// Average load current.
    pub i_avg_a: f64,
    /// RMS load current over a period.
    pub i_rms_a: f64,
    /// Load current when the active switch turns on (ripple minimum).
    pub i_turn_on_a: f64,
    /// Load current when the active switch turns off (ripple maximum).
    pub i_turn_off_a: f64,
    /// Peak-to-peak ripple.
    pub ripple_pp_a: f64,
    /// False when the current reaches zero and stays there (freewheel diode only).
    pub continuous: bool,
}

/// H-bridge modulation scheme (Mohan, Undeland, Robbins, *Power Electronics*,
/// 3rd ed., 2003, §7-7; from memory).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HBridgeModulation {
    /// Diagonal pairs switch together once per period; load sees ±V.
    Bipolar,
    /// Each leg switches at f with its own duty; load sees +V/0 at 2f.
    Unipolar,
}

/// Power-stage topology.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Topology {
    /// One low-side switch with a freewheel diode across the motor.
    LowSide,
    /// Synchronous half-bridge (high-side active, low side synchronous).
    HalfBridge,
    /// Full H-bridge.
    HBridge(HBridgeModulation),
}

/// Operating point of the stage.
#[derive(Debug, Clone, PartialEq)]
pub struct OperatingPoint {
    /// Bus voltage.
    pub v_bus_v: f64,
    /// Applied voltage ratio m = average load voltage / bus voltage, 0..=1, for
    /// every topology. For a low-side switch and a half-bridge it is the active
    /// switch's duty; for a bipolar H-bridge the diagonal duty is (1 + m)/2; for a
    /// unipolar H-bridge the leg duties are (1 ± m)/2.
    pub duty: f64,
    /// PWM (carrier) frequency of each leg.
    pub f_sw_hz: f64,
    /// Dead time inserted at each edge of a leg.
    pub t_dead_s: f64,
    /// Ambient temperature.
    pub t_ambient_c: f64,
    /// How the followed switching edges are taken at the switched currents.
    pub edges: EdgeModel,
}

/// How the followed switching edges (`switching::transitions`, refinement
/// 4) are taken at a switched current.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum EdgeModel {
    /// Followed at each current asked for: what a single evaluation with
    /// its own switch (a Monte Carlo sample, a corner) costs least with.
    #[default]
    AtEachCurrent,
    /// Followed at fixed currents and interpolated between them
    /// (`edge_interpolation`): what the frequency search, which asks for the
    /// same switch at hundreds of nearby currents, costs least with;
    /// within 1e-4 of the edge pair's energy and 1e-3 of each time of
    /// `AtEachCurrent` (tested in `switching`). Boards with a loop
    /// inductance are followed at each current either way.
    Interpolated,
}

#[cfg(test)]
pub(crate) mod fixtures {
    //! Invented example devices for the tests (no real part).
    use super::*;

    /// An invented 60 V, 5 mΩ switch.
    pub(crate) fn example_switch() -> SwitchModel {
        SwitchModel {
            v_th_v: 3.0,
            g_fs_s: Some(20.0),
            v_plateau_v: None,
            q_g_c: 30e-9,
            q_g_at_v_gs_v: 10.0,
            q_g_at_i_d_a: None,
            q_gs_c: 3.0e-9,
            q_gd_c: 12e-9,
            q_g_th_c: Some(1.75e-9),
            c_iss_f: 2.0e-9,
            c_oss_f: 400e-12,
            c_oss_at_v_ds_v: 25.0,
            c_rss_f: 60e-12,
            c_rss_at_v_ds_v: 25.0,
            c_rss_curve: Vec::new(),
            q_oss_c: None,
            q_oss_at_v_ds_v: None,
            e_oss_j: None,
            e_oss_at_v_ds_v: None,
            r_g_int_ohm: 1.0,
            r_ds_on_25_ohm: 5e-3,
            r_ds_on_spec_v_gs_v: 10.0,
            r_ds_on_second_point: None,
            r_ds_on_temperature: RdsOnTemperature::CoefficientPerK(0.005),
            v_sd_v: 0.8,
            q_rr_c: 40e-9,
            t_rr_s: 30e-9,
            q_rr_test: None,
            v_sd_test_a: None,
            v_sd_curve: Vec::new(),
            v_gs_max_v: 20.0,
            t_j_max_c: 175.0,
            v_ztc_v: Some(5.5),
            v_dss_v: 60.0,
            i_d_a: 50.0,
        }
    }

    /// The example switch with a C_rss curve falling a decade, a datasheet
    /// plateau and an E_oss: every branch of the capacitance laws and of
    /// the turn-off with capacitance sharing.
    pub(crate) fn curved_switch() -> SwitchModel {
        let mut sw = example_switch();
        sw.v_plateau_v = Some(4.5);
        sw.c_rss_curve = vec![
            (0.5, 900e-12),
            (5.0, 250e-12),
            (25.0, 60e-12),
            (50.0, 40e-12),
        ];
        sw.e_oss_j = Some(160e-9);
        sw.e_oss_at_v_ds_v = Some(25.0);
        sw
    }

    /// The regression drive: 10 V, 2 Ω source, 1 Ω sink, 3 Ω external.
    pub(crate) fn example_drive() -> GateDrive {
        GateDrive {
            v_drive_v: 10.0,
            r_source_ohm: 2.0,
            r_sink_ohm: 1.0,
            r_ext_on_ohm: 3.0,
            r_ext_off_ohm: 3.0,
            prop_delay_s: 50e-9,
            mismatch_s: 10e-9,
            loop_inductance_h: 0.0,
            common_source_inductance_h: 0.0,
        }
    }

    /// Continuous triangular-ripple load with mean `i` and ripple `di`.
    pub(crate) fn triangular_load(i: f64, di: f64) -> LoadCurrent {
        LoadCurrent {
            i_avg_a: i,
            i_rms_a: (i * i + di * di / 12.0).sqrt(),
            i_turn_on_a: i - di / 2.0,
            i_turn_off_a: i + di / 2.0,
            ripple_pp_a: di,
            continuous: true,
        }
    }

    /// Tiny seeded generator for the property loops (64-bit LCG, Knuth's MMIX
    /// constants), so the property tests are reproducible without a crate.
    pub(crate) struct Lcg(pub(crate) u64);

    impl Lcg {
        /// Uniform in [lo, hi).
        pub(crate) fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
            self.0 = self
                .0
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            let unit = (self.0 >> 11) as f64 / (1u64 << 53) as f64;
            lo + (hi - lo) * unit
        }
    }
}
