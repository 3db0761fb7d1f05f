//! Bootstrap supply of a high-side gate driver.
//!
//! Owns: the minimum bootstrap capacitor from the charge drawn per period. The
//! compare limit that leaves the low side on long enough to refresh it, after the
//! dead time, is the timer module's (`timer::duty_limits`).

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

#[cfg(test)]
mod tests {
    use super::*;

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
}
