//! The body diode's forward voltage at the current it carries.
//!
//! Owns: V_SD(I) from the switch file: its curve points, or the single
//! datasheet V_SD at its test current.
//!
//! Why: a datasheet states V_SD at a high test current; the dead times of a
//! motor drive see the load current, often a fraction of it, and the diode's
//! voltage there is lower (issue 15 measured the dead-time line 70 % high in
//! one case with the test-current value).

use super::params::SwitchModel;

/// Thermal voltage kT/q at 25 °C, V (common practice).
pub const THERMAL_VOLTAGE_V: f64 = 0.0257;

/// The source current at which the single datasheet V_SD is taken: the
/// file's `v_sd_at`, else the Q_rr test's forward current, else the rated
/// I_D (own choice: datasheets usually state V_SD near the rated current).
pub fn v_sd_test_current_a(sw: &SwitchModel) -> f64 {
    sw.v_sd_test_a
        .or(sw.q_rr_test.map(|t| t.i_f_a))
        .unwrap_or(sw.i_d_a)
}

/// The body diode's forward voltage at `i_a` (magnitude), V, at 25 °C.
///
/// With a curve: interpolated linearly in ln I between points (Shockley's
/// diode law makes V linear in ln I where the ohmic drop is small; own
/// choice of interpolation), continued above the last point with the last
/// segment's slope and below the first with the ideal diode law's V_T per
/// e-fold (the ohmic part vanishes at low current), never below zero. With the single V_SD: the
/// ideal diode law below its test current, V_SD − V_T·ln(I_test/I)
/// (W. Shockley, *The theory of p-n junctions in semiconductors and p-n
/// junction transistors*, Bell System Technical Journal 28, 1949; ideality 1,
/// own simplification), and V_SD at and above it (the ohmic part is unknown;
/// own choice, low by the series resistance's drop).
pub fn forward_voltage_v(sw: &SwitchModel, i_a: f64) -> f64 {
    let i = i_a.abs();
    if i.is_nan() || i == 0.0 {
        return 0.0;
    }
    match sw.v_sd_curve.as_slice() {
        [] | [_] => {
            let i_test = v_sd_test_current_a(sw);
            if i >= i_test {
                sw.v_sd_v
            } else {
                (sw.v_sd_v - THERMAL_VOLTAGE_V * (i_test / i).ln()).max(0.0)
            }
        }
        pts if i < pts[0].0 => (pts[0].1 - THERMAL_VOLTAGE_V * (pts[0].0 / i).ln()).max(0.0),
        pts => {
            let k = pts
                .windows(2)
                .position(|w| i <= w[1].0)
                .unwrap_or(pts.len() - 2);
            let ((i0, v0), (i1, v1)) = (pts[k], pts[k + 1]);
            let x = (i.ln() - i0.ln()) / (i1.ln() - i0.ln());
            (v0 + x * (v1 - v0)).max(0.0)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::params::fixtures::example_switch;

    #[test]
    fn single_point_follows_the_diode_law_below_its_test_current() {
        let mut sw = example_switch();
        sw.v_sd_v = 0.9;
        sw.v_sd_test_a = Some(20.0);
        assert_eq!(forward_voltage_v(&sw, 20.0), 0.9);
        assert_eq!(forward_voltage_v(&sw, 60.0), 0.9);
        // A decade lower: 59.2 mV lower (V_T·ln 10).
        let v2 = forward_voltage_v(&sw, 2.0);
        assert!((0.9 - v2 - 0.0257 * 10f64.ln()).abs() < 1e-12, "{v2}");
        assert_eq!(forward_voltage_v(&sw, 0.0), 0.0);
    }

    #[test]
    fn curve_interpolates_in_log_current_and_continues_its_ends() {
        let mut sw = example_switch();
        sw.v_sd_curve = vec![(1.0, 0.6), (10.0, 0.75), (100.0, 1.05)];
        assert!((forward_voltage_v(&sw, 10.0) - 0.75).abs() < 1e-12);
        // Half a decade between 1 A and 10 A: half-way in voltage.
        assert!((forward_voltage_v(&sw, 10f64.sqrt()) - 0.675).abs() < 1e-12);
        // A decade below the first point: the ideal diode law; a decade
        // above the last: the last segment's slope.
        let v_low = 0.6 - 0.0257 * 10f64.ln();
        assert!((forward_voltage_v(&sw, 0.1) - v_low).abs() < 1e-12);
        assert!((forward_voltage_v(&sw, 1000.0) - 1.35).abs() < 1e-12);
        assert_eq!(forward_voltage_v(&sw, 1e-12), 0.0);
    }
}
