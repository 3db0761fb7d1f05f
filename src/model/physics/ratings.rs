//! Rating findings for a power stage.
//!
//! Owns: the checks of voltage margin, stall current and stall temperature,
//! gate-voltage limits, drive strength and the freewheel path, reported as
//! [`Finding`]s with stable kebab-case codes. Thresholds are common practice
//! unless a source is named beside them.

use super::params::{DiodeModel, GateDrive, SwitchModel, ThermalPath, Topology};
use super::switching;
use super::thermal;
use crate::input::units::{Dimension, format_quantity};

/// A quantity in a finding's words, through the one formatter of `units`
/// (three significant digits, engineering prefix, the same symbols as every
/// other output: °C, mΩ).
fn q(value_si: f64, dim: Dimension) -> String {
    format_quantity(value_si, dim, 3)
}

/// Severity of a finding.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Severity {
    /// For information.
    Info,
    /// Works, but outside common practice.
    Warning,
    /// Will not work or will fail.
    Error,
}

/// One finding: a stable code and a one-line message.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// Severity.
    pub severity: Severity,
    /// Stable kebab-case identifier.
    pub code: &'static str,
    /// One line, plain engineering English.
    pub message: String,
}

fn finding(severity: Severity, code: &'static str, message: String) -> Finding {
    Finding {
        severity,
        code,
        message,
    }
}

/// V_DSS below this multiple of the highest bus voltage draws a warning
/// (ringing and back-EMF spikes; common practice, 1.5–2×).
pub const VDSS_WARN_RATIO: f64 = 1.5;
/// A driver sourcing or sinking less peak current than this is a weak driver
/// (common practice; a microcontroller pin gives a few mA to ~25 mA).
pub const WEAK_DRIVER_MIN_PEAK_A: f64 = 0.05;
/// A driver output resistance above this is a weak driver (common practice).
pub const WEAK_DRIVER_MAX_RESISTANCE_OHM: f64 = 100.0;

/// V_DSS against the highest bus voltage: below 1.0× an error, below 1.5× a
/// warning (common practice).
pub fn check_voltage_rating(sw: &SwitchModel, v_bus_max_v: f64) -> Option<Finding> {
    if v_bus_max_v <= 0.0 || !v_bus_max_v.is_finite() {
        return None;
    }
    let ratio = sw.v_dss_v / v_bus_max_v;
    if ratio < 1.0 {
        Some(finding(
            Severity::Error,
            "vdss-below-bus",
            format!(
                "V_DSS {} is below the highest bus voltage {}.",
                q(sw.v_dss_v, Dimension::Voltage),
                q(v_bus_max_v, Dimension::Voltage)
            ),
        ))
    } else if ratio < VDSS_WARN_RATIO {
        Some(finding(
            Severity::Warning,
            "vdss-margin-low",
            format!(
                "V_DSS {} is only {:.2}x the highest bus {}; 1.5-2x is usual for ringing and back-EMF spikes.",
                q(sw.v_dss_v, Dimension::Voltage),
                ratio,
                q(v_bus_max_v, Dimension::Voltage)
            ),
        ))
    } else {
        None
    }
}

/// Gate-voltage checks: V_GS,max exceeded (error); drive below the ZTC point
/// (warning: drain current rises with temperature, hot-spotting); drive below the
/// V_GS at which R_ds(on) is specified (warning). Common practice.
pub fn check_gate_voltage(sw: &SwitchModel, drive: &GateDrive) -> Vec<Finding> {
    let v = drive.v_drive_v;
    let mut out = Vec::new();
    if v > sw.v_gs_max_v {
        out.push(finding(
            Severity::Error,
            "vgs-max-exceeded",
            format!(
                "Gate drive {} exceeds V_GS,max {}.",
                q(v, Dimension::Voltage),
                q(sw.v_gs_max_v, Dimension::Voltage)
            ),
        ));
    }
    if let Some(ztc) = sw.v_ztc_v
        && v < ztc
    {
        out.push(finding(
            Severity::Warning,
            "drive-below-ztc",
            format!(
                "Gate drive {} is below the zero-temperature-coefficient point {}; current crowds into hot cells (runaway risk).",
                q(v, Dimension::Voltage),
                q(ztc, Dimension::Voltage)
            ),
        ));
    }
    if v < sw.r_ds_on_spec_v_gs_v && sw.r_ds_on_second_point.is_some() {
        out.push(finding(
            Severity::Info,
            "drive-below-rdson-spec",
            format!(
                "Gate drive {} is below the {} at which R_ds(on) is specified; R_ds(on) is taken at the drive through the datasheet's second point (×{:.2} at 25 °C).",
                q(v, Dimension::Voltage),
                q(sw.r_ds_on_spec_v_gs_v, Dimension::Voltage),
                super::losses::r_ds_on_drive_factor(sw, v)
            ),
        ));
    } else if v < sw.r_ds_on_spec_v_gs_v {
        out.push(finding(
            Severity::Warning,
            "drive-below-rdson-spec",
            format!(
                "Gate drive {} is below the {} at which R_ds(on) is specified; on-resistance will be higher than rated.",
                q(v, Dimension::Voltage),
                q(sw.r_ds_on_spec_v_gs_v, Dimension::Voltage)
            ),
        ));
    }
    out
}

/// Weak gate driver (e.g. a microcontroller pin): peak source or sink current
/// below 50 mA, or a driver output resistance above 100 Ω (common practice).
/// The message carries the Miller-plateau time Q_gd/I_g (Graovac, Pürschel, Kiep,
/// 2006) when the plateau is known.
pub fn check_gate_driver_strength(sw: &SwitchModel, drive: &GateDrive) -> Option<Finding> {
    let r_on = switching::turn_on_resistance_ohm(drive, sw.r_g_int_ohm).ok()?;
    let r_off = switching::turn_off_resistance_ohm(drive, sw.r_g_int_ohm).ok()?;
    let i_src = drive.v_drive_v / r_on;
    let i_snk = drive.v_drive_v / r_off;
    let weak = i_src < WEAK_DRIVER_MIN_PEAK_A
        || i_snk < WEAK_DRIVER_MIN_PEAK_A
        || drive.r_source_ohm > WEAK_DRIVER_MAX_RESISTANCE_OHM
        || drive.r_sink_ohm > WEAK_DRIVER_MAX_RESISTANCE_OHM;
    if !weak {
        return None;
    }
    let edge = switching::plateau_voltage_v(sw, 0.0)
        .ok()
        .and_then(|v_plt| switching::charge_time_s(sw.q_gd_c, (drive.v_drive_v - v_plt) / r_on))
        .map(|t| format!("; Miller edge about {}", q(t, Dimension::Time)))
        .unwrap_or_default();
    Some(finding(
        Severity::Warning,
        "weak-gate-driver",
        format!(
            "Gate driver peaks at {} source / {} sink{edge}; use a gate driver for edges under {}.",
            q(i_src, Dimension::Current),
            q(i_snk, Dimension::Current),
            q(100e-9, Dimension::Time)
        ),
    ))
}

/// A single switch needs a freewheel path across the inductive load (common
/// practice): `LowSide` without a diode is an error.
pub fn check_freewheel_path(topology: Topology, diode: Option<&DiodeModel>) -> Option<Finding> {
    (topology == Topology::LowSide && diode.is_none()).then(|| {
        finding(
            Severity::Error,
            "no-freewheel-path",
            "Single switch without a freewheel diode: the motor current has no path at turn-off and the switch will avalanche."
                .to_string(),
        )
    })
}

/// A stall's heating of one switch: the current through the hot
/// on-resistance R_ds(on)(T_j,max) at full conduction (common practice: size
/// for stall at hot R_ds(on)), over the stall time through the transient
/// impedance P·Z_th(t) where the board gives a Foster network, otherwise in
/// steady state P·R_th(j-a) (common practice); `basis` says which in words.
#[derive(Debug, Clone, PartialEq)]
pub struct StallHeating {
    pub t_j_c: f64,
    pub r_hot_ohm: f64,
    pub p_w: f64,
    pub z_k_per_w: f64,
    pub basis: String,
}

/// See [`StallHeating`].
pub fn stall_heating(
    sw: &SwitchModel,
    i_a: f64,
    thermal_path: &ThermalPath,
    t_ambient_c: f64,
    stall_time_s: Option<f64>,
) -> StallHeating {
    let r_hot = thermal::r_ds_on_ohm(sw, sw.t_j_max_c);
    let p_hot = i_a * i_a * r_hot;
    // What the temperature is computed from, in words.
    let (z, basis) = match stall_time_s {
        Some(t) if !thermal_path.foster.is_empty() => {
            let z = thermal::z_th_k_per_w(thermal_path, t);
            (
                z,
                format!(
                    "Computed over the {} stall through the board's transient thermal impedance Z_th = {z:.3} K/W",
                    q(t, Dimension::Time)
                ),
            )
        }
        Some(t) => (
            thermal_path.r_th_ja_k_per_w,
            format!(
                "Computed in steady state: the board gives no thermal transient data, so the {} stall time is not used (R_th(j-a) {:.2} K/W)",
                q(t, Dimension::Time),
                thermal_path.r_th_ja_k_per_w
            ),
        ),
        None => (
            thermal_path.r_th_ja_k_per_w,
            format!(
                "Computed in steady state: the design gives no stall time (R_th(j-a) {:.2} K/W)",
                thermal_path.r_th_ja_k_per_w
            ),
        ),
    };
    StallHeating {
        t_j_c: t_ambient_c + p_hot * z,
        r_hot_ohm: r_hot,
        p_w: p_hot,
        z_k_per_w: z,
        basis,
    }
}

/// The largest current whose stall keeps the junction at T_j,max on the
/// basis of [`stall_heating`]: I = √((T_j,max − T_a)/(R_hot·Z)) (the same
/// relation solved for I; own derivation); 0 when there is no room.
pub fn stall_current_at_t_j_max_a(h: &StallHeating, sw: &SwitchModel, t_ambient_c: f64) -> f64 {
    let room_k = sw.t_j_max_c - t_ambient_c;
    if room_k > 0.0 && h.z_k_per_w > 0.0 && h.r_hot_ohm > 0.0 {
        (room_k / (h.r_hot_ohm * h.z_k_per_w)).sqrt()
    } else {
        0.0
    }
}

/// Stall: a stalled motor on a drive without a current limit draws
/// I_stall = V_max/R_winding (Ohm's law: no back-EMF at standstill). It is
/// checked against I_D and against the junction temperature at that current
/// through the hot on-resistance R_ds(on)(T_j,max) at full conduction (common
/// practice: size for stall at hot R_ds(on), not the 25 °C rating): with a
/// stall time and a Foster network the single-pulse rise P·Z_th(t), otherwise
/// the steady state P·R_th(j-a) (common practice). Used where the board
/// describes no over-current path (`model::current_limit` plans the stall
/// otherwise); nearly every real drive has one, so a stall
/// beyond the ratings is a warning (`stall-needs-current-limit`) that names
/// the current the limit must hold the stall to: the largest current whose
/// junction stays at T_j,max on the same basis,
/// I_lim = √((T_j,max − T_a)/(R_hot·Z)), with Z = Z_th(t) or R_th(j-a)
/// (the same relation solved for I; own derivation), and not above I_D.
pub fn check_stall(
    sw: &SwitchModel,
    v_bus_max_v: f64,
    r_winding_ohm: f64,
    thermal_path: &ThermalPath,
    t_ambient_c: f64,
    stall_time_s: Option<f64>,
) -> Vec<Finding> {
    let mut out = Vec::new();
    if r_winding_ohm <= 0.0 || !r_winding_ohm.is_finite() || !v_bus_max_v.is_finite() {
        return out;
    }
    let i_stall = v_bus_max_v / r_winding_ohm;
    let heating = stall_heating(sw, i_stall, thermal_path, t_ambient_c, stall_time_s);
    let (t_j, r_hot, p_hot) = (heating.t_j_c, heating.r_hot_ohm, heating.p_w);
    let basis = &heating.basis;
    let over_id = i_stall > sw.i_d_a;
    let over_t = !t_j.is_finite() || t_j > sw.t_j_max_c;
    if !(over_id || over_t) {
        return out;
    }
    // The current at which the junction just reaches T_j,max on the same
    // basis, and not above I_D.
    let i_thermal = stall_current_at_t_j_max_a(&heating, sw, t_ambient_c);
    let (i_limit, why) = if i_thermal <= sw.i_d_a {
        (i_thermal, "there the junction just reaches T_j,max")
    } else {
        (
            sw.i_d_a,
            "the I_D rating; there the junction stays below T_j,max",
        )
    };
    let mut beyond = Vec::new();
    if over_id {
        beyond.push(format!(
            "above the I_D rating {}",
            q(sw.i_d_a, Dimension::Current)
        ));
    }
    if over_t {
        beyond.push(format!(
            "{} at hot R_ds(on) {} would take the junction past T_j,max {}",
            q(p_hot, Dimension::Power),
            q(r_hot, Dimension::Resistance),
            q(sw.t_j_max_c, Dimension::Temperature)
        ));
    }
    out.push(finding(
        Severity::Warning,
        "stall-needs-current-limit",
        format!(
            "A stalled motor on a drive without a current limit draws V/R_winding = {}: {}. {basis}, {} ambient. The drive needs a current limit that holds the stall current to at most {} ({why}); describe the board's over-current path (`overcurrent`) and pwmplan plans it.",
            q(i_stall, Dimension::Current),
            beyond.join(", and "),
            q(t_ambient_c, Dimension::Temperature),
            q(i_limit, Dimension::Current)
        ),
    ));
    out
}

/// Everything `check_all` needs.
#[derive(Debug, Clone)]
pub struct RatingInputs<'a> {
    /// Topology.
    pub topology: Topology,
    /// Switch (all switches are the same part).
    pub switch: &'a SwitchModel,
    /// Gate drive.
    pub drive: &'a GateDrive,
    /// Freewheel diode, if fitted.
    pub diode: Option<&'a DiodeModel>,
    /// Highest bus voltage, including charging and regeneration.
    pub v_bus_max_v: f64,
    /// Winding resistance, if known (for the stall checks).
    pub r_winding_ohm: Option<f64>,
    /// Thermal path of one switch.
    pub thermal: &'a ThermalPath,
    /// Ambient temperature.
    pub t_ambient_c: f64,
    /// Stall duration to check with the transient model; `None` = steady stall.
    pub stall_time_s: Option<f64>,
}

/// All checks, most severe first.
pub fn check_all(inp: &RatingInputs<'_>) -> Vec<Finding> {
    let mut out = Vec::new();
    out.extend(check_freewheel_path(inp.topology, inp.diode));
    out.extend(check_voltage_rating(inp.switch, inp.v_bus_max_v));
    out.extend(check_gate_voltage(inp.switch, inp.drive));
    out.extend(check_gate_driver_strength(inp.switch, inp.drive));
    if let Some(r) = inp.r_winding_ohm {
        out.extend(check_stall(
            inp.switch,
            inp.v_bus_max_v,
            r,
            inp.thermal,
            inp.t_ambient_c,
            inp.stall_time_s,
        ));
    }
    out.sort_by_key(|f| std::cmp::Reverse(f.severity));
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::params::fixtures::{example_drive, example_switch};

    fn codes(f: &[Finding]) -> Vec<&'static str> {
        f.iter().map(|x| x.code).collect()
    }

    /// Voltage bands (common practice): 60 V part on 48 V warns (1.25×), on 30 V
    /// passes (2×), on 65 V errors.
    #[test]
    fn voltage_bands() {
        let sw = example_switch();
        assert_eq!(
            check_voltage_rating(&sw, 48.0).unwrap().code,
            "vdss-margin-low"
        );
        assert!(check_voltage_rating(&sw, 30.0).is_none());
        let e = check_voltage_rating(&sw, 65.0).unwrap();
        assert_eq!((e.severity, e.code), (Severity::Error, "vdss-below-bus"));
    }

    /// Gate voltage: 22 V over a 20 V limit; 5 V below ZTC 5.5 V and the 10 V spec.
    #[test]
    fn gate_voltage_checks() {
        let sw = example_switch();
        let hi = GateDrive {
            v_drive_v: 22.0,
            ..example_drive()
        };
        assert_eq!(codes(&check_gate_voltage(&sw, &hi)), ["vgs-max-exceeded"]);
        let lo = GateDrive {
            v_drive_v: 5.0,
            ..example_drive()
        };
        assert_eq!(
            codes(&check_gate_voltage(&sw, &lo)),
            ["drive-below-ztc", "drive-below-rdson-spec"]
        );
        assert!(check_gate_voltage(&sw, &example_drive()).is_empty());
        // With a second R_ds(on) point the plan takes R_ds(on) at the drive,
        // so the same finding is information, with the factor.
        let mut sw2 = sw.clone();
        sw2.r_ds_on_second_point = Some((4.5, 1.6));
        let f = check_gate_voltage(&sw2, &lo);
        let rds = f
            .iter()
            .find(|x| x.code == "drive-below-rdson-spec")
            .unwrap();
        assert_eq!(rds.severity, Severity::Info);
        assert!(rds.message.contains("second point"), "{}", rds.message);
    }

    /// A 3.3 V pin with 25 mA peak (132 Ω) is weak (common practice); its Miller
    /// edge Q_gd/I_g with I_g = (3.3 − 3.0)/133 A is about 5.32 µs for 12 nC.
    #[test]
    fn weak_driver() {
        let sw = example_switch();
        let pin = GateDrive {
            v_drive_v: 3.3,
            r_source_ohm: 132.0,
            r_sink_ohm: 132.0,
            r_ext_on_ohm: 0.0,
            r_ext_off_ohm: 0.0,
            prop_delay_s: 0.0,
            mismatch_s: 0.0,
            loop_inductance_h: 0.0,
            common_source_inductance_h: 0.0,
        };
        let f = check_gate_driver_strength(&sw, &pin).unwrap();
        assert_eq!(f.code, "weak-gate-driver");
        assert!(f.message.contains("5.32 µs"), "{}", f.message);
        assert!(!f.message.contains('\n'));
        assert!(check_gate_driver_strength(&sw, &example_drive()).is_none());
    }

    /// Freewheel path required for a single switch only.
    #[test]
    fn freewheel_path() {
        assert_eq!(
            check_freewheel_path(Topology::LowSide, None).unwrap().code,
            "no-freewheel-path"
        );
        assert!(check_freewheel_path(Topology::HalfBridge, None).is_none());
    }

    /// Stall: 24 V / 0.4 Ω = 60 A > 50 A; at hot R_ds(on) 5 mΩ·1.005^150 ≈
    /// 10.58 mΩ that is 38 W, far over 175 °C through 40 K/W: a warning that
    /// asks for a current limit of √(150 K/(10.58 mΩ·40 K/W)) ≈ 18.8 A. A 1 Ω
    /// winding (24 A, 6.1 W) on 2 K/W passes; a short pulse with small Z_th
    /// passes too.
    #[test]
    fn stall_checks() {
        let sw = example_switch();
        let path = ThermalPath {
            r_th_ja_k_per_w: 40.0,
            foster: vec![(0.5, 0.01), (39.5, 100.0)],
        };
        let f = check_stall(&sw, 24.0, 0.4, &path, 25.0, None);
        assert_eq!(codes(&f), ["stall-needs-current-limit"]);
        assert_eq!(f[0].severity, Severity::Warning);
        let r_hot = thermal::r_ds_on_ohm(&sw, sw.t_j_max_c);
        let i_lim = (150.0 / (r_hot * 40.0)).sqrt();
        assert!(
            f[0].message.contains(&format!("at most {i_lim:.1} A")),
            "{}",
            f[0].message
        );
        assert!(
            f[0].message.contains("above the I_D rating"),
            "{}",
            f[0].message
        );
        assert!(
            f[0].message
                .contains("Computed in steady state: the design gives no stall time"),
            "{}",
            f[0].message
        );
        let cool = ThermalPath {
            r_th_ja_k_per_w: 2.0,
            foster: Vec::new(),
        };
        assert!(check_stall(&sw, 24.0, 1.0, &cool, 25.0, None).is_empty());
        // 0.1 s: Z ≈ 0.5 + 39.5·(1 − e^−0.001) ≈ 0.54 K/W → 6.1 W gives ~3 K.
        assert!(check_stall(&sw, 24.0, 1.0, &path, 25.0, Some(0.1)).is_empty());
        assert_eq!(
            codes(&check_stall(&sw, 24.0, 1.0, &path, 25.0, None)),
            ["stall-needs-current-limit"]
        );
        // A stall time without transient data: steady state, and said so.
        let no_transient = ThermalPath {
            r_th_ja_k_per_w: 40.0,
            foster: Vec::new(),
        };
        let f = check_stall(&sw, 24.0, 1.0, &no_transient, 25.0, Some(0.5));
        assert_eq!(f.len(), 1);
        assert!(
            f[0].message.contains("Computed in steady state: the board gives no thermal transient data, so the 500 ms stall time is not used"),
            "{}",
            f[0].message
        );
        // Within I_D (24 A < 50 A): the thermal current is the limit.
        assert!(
            !f[0].message.contains("above the I_D rating"),
            "{}",
            f[0].message
        );
    }

    /// check_all orders errors first and every message is one line.
    #[test]
    fn check_all_orders() {
        let sw = example_switch();
        let path = ThermalPath {
            r_th_ja_k_per_w: 40.0,
            foster: Vec::new(),
        };
        let drive = GateDrive {
            v_drive_v: 5.0,
            ..example_drive()
        };
        let f = check_all(&RatingInputs {
            topology: Topology::LowSide,
            switch: &sw,
            drive: &drive,
            diode: None,
            v_bus_max_v: 48.0,
            r_winding_ohm: None,
            thermal: &path,
            t_ambient_c: 25.0,
            stall_time_s: None,
        });
        assert_eq!(f[0].severity, Severity::Error);
        assert!(f.windows(2).all(|w| w[0].severity >= w[1].severity));
        assert!(f.iter().all(|x| !x.message.contains('\n')));
        assert_eq!(f.len(), 4);
    }
}
