//! Bootstrap supply of a high-side gate driver.
//!
//! Owns: the minimum bootstrap capacitor from the charge drawn per period. The
//! compare limit that leaves the low side on long enough to refresh it, after the
//! dead time, is the timer module's (`timer::duty_limits`).

use super::params::{GateDrive, SwitchModel};
use super::switching;

/// Inputs of the bootstrap sizing.
#[derive(Debug, Clone, PartialEq)]
pub struct BootstrapInputs {
    /// Total gate charge of the high-side switch at the drive voltage.
    pub q_g_c: f64,
    /// Leakage drawn from the capacitor while the high side is on (gate-source
    /// leakage, bootstrap-diode reverse leakage).
    pub i_leak_a: f64,
    /// Quiescent current of the high-side driver section.
    pub i_quiescent_a: f64,
    /// Highest duty in use.
    pub d_max: f64,
    /// PWM frequency.
    pub f_sw_hz: f64,
    /// Allowed droop of the bootstrap voltage.
    pub delta_v_v: f64,
    /// Gate drive voltage (for the rule of thumb).
    pub v_drive_v: f64,
}

impl BootstrapInputs {
    /// The inputs for a high-side switch `sw` on `drive`: its gate charge at
    /// the actual drive voltage from the same gate-charge curve the gate-drive
    /// loss uses (`switching::total_gate_charge_c`, plateau at the load
    /// current `i_load_a`), and the board's bootstrap load current `i_draw_a`
    /// (leakage and the driver's quiescent draw, one figure) taken over the
    /// whole period, the quiescent term (conservative for the leakage part).
    /// ΔV is 10 % of the drive voltage (common practice).
    pub fn for_switch(
        sw: &SwitchModel,
        drive: &GateDrive,
        i_load_a: f64,
        i_draw_a: f64,
        d_max: f64,
        f_sw_hz: f64,
    ) -> Self {
        let plateau = switching::plateau_voltage_v(sw, i_load_a).unwrap_or(sw.v_th_v);
        BootstrapInputs {
            q_g_c: switching::total_gate_charge_c(sw, drive.v_drive_v, plateau),
            i_leak_a: 0.0,
            i_quiescent_a: i_draw_a,
            d_max,
            f_sw_hz,
            delta_v_v: 0.1 * drive.v_drive_v,
            v_drive_v: drive.v_drive_v,
        }
    }
}

/// Result of the bootstrap sizing.
#[derive(Debug, Clone, PartialEq)]
pub struct BootstrapSizing {
    /// Q_total = Q_g + I_leak·D_max/f + I_q/f.
    pub q_total_c: f64,
    /// C_min = Q_total/ΔV.
    pub c_min_f: f64,
    /// Equivalent gate capacitance Q_g/V_drv.
    pub c_gate_equiv_f: f64,
    /// 10 × the gate capacitance (common practice).
    pub c_rule_of_thumb_f: f64,
    /// The larger of the two.
    pub c_recommended_f: f64,
}

/// Bootstrap capacitor: C_boot ≥ Q_total/ΔV with
/// Q_total = Q_g + I_leak·D_max/f + I_q/f (*Bootstrap Circuitry Selection for
/// Half-Bridge Configurations*, application report, 2018; title and year, author
/// not checked; from memory). The quiescent term over the whole period is conservative. Rule of thumb C_boot ≥ 10·Q_g/V_drv (common
/// practice). `None` for non-positive f, ΔV, V_drv or a duty outside 0..=1.
pub fn bootstrap_sizing(inp: &BootstrapInputs) -> Option<BootstrapSizing> {
    let ok = inp.f_sw_hz > 0.0
        && inp.delta_v_v > 0.0
        && inp.v_drive_v > 0.0
        && (0.0..=1.0).contains(&inp.d_max)
        && inp.q_g_c >= 0.0
        && inp.i_leak_a >= 0.0
        && inp.i_quiescent_a >= 0.0;
    if !ok {
        return None;
    }
    let q_total =
        inp.q_g_c + inp.i_leak_a * inp.d_max / inp.f_sw_hz + inp.i_quiescent_a / inp.f_sw_hz;
    let c_min = q_total / inp.delta_v_v;
    let c_gate = inp.q_g_c / inp.v_drive_v;
    let c_rule = 10.0 * c_gate;
    let out = BootstrapSizing {
        q_total_c: q_total,
        c_min_f: c_min,
        c_gate_equiv_f: c_gate,
        c_rule_of_thumb_f: c_rule,
        c_recommended_f: c_min.max(c_rule),
    };
    out.c_recommended_f.is_finite().then_some(out)
}

/// Droop of a bootstrap capacitor `c_f` over a high-side on-time `t_hold_s`
/// with no refresh: the switch's gate charge `q_g_c` taken at turn-on plus
/// the board's draw `i_draw_a` (leakage and the driver's quiescent current)
/// over the whole on-time, ΔV = (Q_g + I·t)/C (charge balance, the same
/// terms as [`bootstrap_sizing`]).
pub fn hold_up_droop_v(q_g_c: f64, i_draw_a: f64, t_hold_s: f64, c_f: f64) -> f64 {
    (q_g_c + i_draw_a * t_hold_s) / c_f
}

/// The capacitor that holds the droop over `t_hold_s` to `delta_v_v`:
/// C = (Q_g + I·t)/ΔV.
pub fn hold_up_capacitor_f(q_g_c: f64, i_draw_a: f64, t_hold_s: f64, delta_v_v: f64) -> f64 {
    (q_g_c + i_draw_a * t_hold_s) / delta_v_v
}

/// A bootstrap capacitor's hold-up over a long high-side on-time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HoldUp {
    pub droop_v: f64,
    /// The Miller plateau at the load current: below it the switch leaves
    /// full conduction.
    pub plateau_v: f64,
    /// The capacitor that keeps the droop within 10 % of the drive
    /// (common practice, as [`BootstrapInputs::for_switch`]).
    pub capacitor_needed_f: f64,
}

/// [`hold_up_droop_v`] and [`hold_up_capacitor_f`] for switch `sw` on
/// `drive` at load current `i_load_a` (its gate charge as in
/// [`BootstrapInputs::for_switch`]), drawing `i_draw_a` for `t_hold_s` from
/// `c_f`.
pub fn hold_up(
    sw: &SwitchModel,
    drive: &GateDrive,
    i_load_a: f64,
    i_draw_a: f64,
    t_hold_s: f64,
    c_f: f64,
) -> HoldUp {
    let inp = BootstrapInputs::for_switch(sw, drive, i_load_a, i_draw_a, 1.0, 1.0);
    HoldUp {
        droop_v: hold_up_droop_v(inp.q_g_c, i_draw_a, t_hold_s, c_f),
        plateau_v: switching::plateau_voltage_v(sw, i_load_a).unwrap_or(sw.v_th_v),
        capacitor_needed_f: hold_up_capacitor_f(inp.q_g_c, i_draw_a, t_hold_s, inp.delta_v_v),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A high side held on for 250 ms with 100 µA drawn from 1 µF droops
    /// 25 V (plus the gate charge): the charge balance by hand.
    #[test]
    fn hold_up_droop_by_hand() {
        let dv = hold_up_droop_v(0.0, 100e-6, 0.25, 1e-6);
        assert!((dv - 25.0).abs() < 1e-9, "{dv}");
        let c = hold_up_capacitor_f(50e-9, 100e-6, 0.25, 1.2);
        assert!((c - (50e-9 + 25e-6) / 1.2).abs() < 1e-15, "{c}");
    }

    fn inputs() -> BootstrapInputs {
        BootstrapInputs {
            q_g_c: 30e-9,
            i_leak_a: 100e-6,
            i_quiescent_a: 100e-6,
            d_max: 0.95,
            f_sw_hz: 20e3,
            delta_v_v: 0.5,
            v_drive_v: 10.0,
        }
    }

    /// Independent check: step-integrate the capacitor over one period (gate
    /// charge at the start, leakage while on, quiescent all period) and confirm
    /// that C_min droops by exactly ΔV.
    #[test]
    fn c_min_droops_by_delta_v() {
        let inp = inputs();
        let s = bootstrap_sizing(&inp).unwrap();
        let n = 100_000usize;
        let dt = 1.0 / inp.f_sw_hz / n as f64;
        let mut v = 12.0 - inp.q_g_c / s.c_min_f;
        for k in 0..n {
            let on = (k as f64 + 0.5) * dt * inp.f_sw_hz < inp.d_max;
            let i = inp.i_quiescent_a + if on { inp.i_leak_a } else { 0.0 };
            v -= i * dt / s.c_min_f;
        }
        assert!(((12.0 - v) - inp.delta_v_v).abs() < 1e-6);
        // Rule of thumb (common practice): 10 × 30 nC / 10 V = 30 nF < C_min here.
        assert!((s.c_rule_of_thumb_f - 30e-9).abs() < 1e-18);
        assert_eq!(s.c_recommended_f, s.c_min_f);
    }

    /// No droop allowance: no capacitor can be sized.
    #[test]
    fn zero_droop_is_refused() {
        let mut bad = inputs();
        bad.delta_v_v = 0.0;
        assert_eq!(bootstrap_sizing(&bad), None);
    }

    /// The stage's inputs: the gate charge at a 12 V drive is the
    /// gate-charge curve's (Q_gs + Q_gd plus the slope above the plateau,
    /// `switching::total_gate_charge_c`), not Q_g scaled in proportion to the
    /// drive, and the board's load current is charged over the whole period.
    #[test]
    fn stage_inputs_use_the_gate_charge_curve_and_the_quiescent_draw() {
        use crate::model::physics::params::fixtures::{example_drive, example_switch};
        let mut sw = example_switch();
        sw.v_plateau_v = Some(4.0);
        let mut drive = example_drive();
        drive.v_drive_v = 12.0;
        let inp = BootstrapInputs::for_switch(&sw, &drive, 10.0, 200e-6, 0.9, 20e3);
        // (3 + 12) nC + (30 − 15) nC·(12 − 4)/(10 − 4) = 35 nC, not 30·12/10 = 36 nC.
        assert!((inp.q_g_c - 35e-9).abs() < 1e-18, "{}", inp.q_g_c);
        let s = bootstrap_sizing(&inp).unwrap();
        assert!((s.q_total_c - (35e-9 + 200e-6 / 20e3)).abs() < 1e-18);
        assert!((inp.delta_v_v - 1.2).abs() < 1e-12);
    }
}
