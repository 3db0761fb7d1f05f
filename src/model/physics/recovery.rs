//! Reverse recovery of a bridge partner's body diode at the commutation it
//! really sees.
//!
//! Owns: the charge-control diode, its recovered charge under a constant
//! current slope, the transit time fitted to the datasheet's Q_rr test
//! (with the junction's forward charge), and the energy a hard turn-on draws
//! from the recovering partner (stored and junction charge and the partner's
//! output charge) at the slope `switching::turn_on_slope_a_per_s` gives.
//!
//! Why: a datasheet Q_rr is measured at one slow slope (typically 100 A/µs)
//! and, for a MOSFET body diode, is mostly the output capacitance's charge. At
//! the slope of a fast hard turn-on the diode gives up most of its stored
//! charge I_F·τ, several times the datasheet figure, while the capacitive part
//! stays Q_oss(V). Both are booked separately here.
//!
//! The diode is the charge-control model dq/dt = i − q/τ with q the stored
//! charge and τ the transit (lifetime) time (Lauritzen, Ma, *A simple diode
//! model with reverse recovery*, IEEE Trans. Power Electronics 6(2), 1991,
//! whose model reduces to this equation when its two charges are lumped). The
//! recovery is taken as abrupt: the diode blocks when q reaches zero and the
//! charge of a soft tail is neglected (own simplification, small for a
//! snappy body diode).

use super::capacitance::{Memo, OutputCapacitance, law_memo, output_charge_memo, remembered};
use super::forward;
use super::params::{GateDrive, RecoveryTest, SwitchModel};
use super::switching::{self, SwitchingError};

/// Current slope assumed for a Q_rr given without test conditions, A/s: the
/// value datasheets most often state (common practice).
pub const DEFAULT_TEST_DI_DT_A_PER_S: f64 = 100e6;

/// Stored charge removed from a charge-control diode that carried `i_f_a` in
/// steady state (q = I_F·τ) when its current falls at `di_dt_a_per_s`, until
/// the stored charge is gone.
///
/// With i(t) = I_F − a·t the equation dq/dt = i − q/τ integrates to
/// q(t) = τ·(I_F − a·t) + a·τ²·(1 − e^(−t/τ)) (Lauritzen, Ma, 1991, the
/// charge-control equation; the closed form is our own integration). The
/// diode blocks at q(t_s) = 0; the current crossed zero at t₀ = I_F/a, so the
/// reverse charge is a·(t_s − t₀)²/2. Limits: a·τ²/2 for a slow slope
/// (I_F/a ≫ τ), I_F·τ for an instantaneous one.
pub fn recovered_charge_c(i_f_a: f64, di_dt_a_per_s: f64, tau_s: f64) -> f64 {
    let (i_f, a, tau) = (i_f_a.abs(), di_dt_a_per_s, tau_s);
    if !(i_f > 0.0 && a > 0.0 && tau > 0.0 && (i_f * tau).is_finite()) {
        return 0.0;
    }
    let t0 = i_f / a;
    // g(t) = a·(t − t₀) − a·τ·(1 − e^(−t/τ)) is increasing and convex, with
    // g(t₀) < 0 < g(t₀ + τ): Newton's method from t₀ + τ stays right of the
    // root and falls on it monotonically.
    let mut t = t0 + tau;
    for _ in 0..60 {
        let decay = (-t / tau).exp();
        let g = a * (t - t0) - a * tau * (1.0 - decay);
        let slope = a * (1.0 - decay);
        if !(g > 0.0 && slope > 0.0) {
            break;
        }
        let step = g / slope;
        t -= step;
        if step <= 1e-15 * t {
            break;
        }
    }
    let t_a = (t - t0).max(0.0);
    0.5 * a * t_a * t_a
}

/// The transit time τ at which a diode gives up `q_stored_c` in `test`, by
/// bisection of log τ on [1 ps, 10 µs] (60 halvings: a relative step of
/// 1e-17) (the recovered charge rises with τ); `None`
/// when no stored charge is left or the charge exceeds what any τ in the
/// range gives.
pub fn transit_time_s(q_stored_c: f64, test: &RecoveryTest) -> Option<f64> {
    transit_time_with_s(q_stored_c, test, |_| 0.0)
}

/// [`transit_time_s`] for a reverse charge that also holds `extra_c(τ)`, a
/// charge rising with τ (the junction's forward charge at the zero crossing).
fn transit_time_with_s(
    q_reverse_c: f64,
    test: &RecoveryTest,
    extra_c: impl Fn(f64) -> f64,
) -> Option<f64> {
    let q = |tau: f64| recovered_charge_c(test.i_f_a, test.di_dt_a_per_s, tau) + extra_c(tau);
    let (mut lo, mut hi) = (1e-12_f64, 10e-6_f64);
    if q_reverse_c.is_nan() || q_reverse_c <= 0.0 || q(hi) < q_reverse_c {
        return None;
    }
    for _ in 0..60 {
        let mid = (lo * hi).sqrt();
        if q(mid) > q_reverse_c {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some((lo * hi).sqrt())
}

/// The conditions of the switch's Q_rr test: the file's, or else 100 A/µs
/// from the rated I_D at the capacitance table's voltage (own choice; in the
/// slow-slope regime of such a test the forward current barely matters).
pub fn datasheet_test(sw: &SwitchModel) -> RecoveryTest {
    sw.q_rr_test.unwrap_or(RecoveryTest {
        i_f_a: sw.i_d_a,
        di_dt_a_per_s: DEFAULT_TEST_DI_DT_A_PER_S,
        v_r_v: sw.c_oss_at_v_ds_v,
    })
}

/// The body diode's transit time from the datasheet: the Q_rr of a
/// switch-commutated test holds, besides the stored charge, the diode's
/// output charge Q_oss(V_R) (the reverse current ends when the node has swung
/// to V_R; common practice) and the junction's forward charge at the current
/// zero crossing ([`junction_charge_c`]), so τ is fitted to
/// Q_rr − Q_oss(V_R) = Q_stored(τ) + Q_junction(τ). Zero when the datasheet
/// Q_rr is all capacitive.
pub fn body_diode_transit_time_s(sw: &SwitchModel, q_rr_c: f64) -> f64 {
    let test = datasheet_test(sw);
    let law = OutputCapacitance::of_switch(sw);
    let q_oss = law.charge_c(sw, test.v_r_v);
    let junction = |tau: f64| junction_charge_c(sw, &law, test.i_f_a, test.di_dt_a_per_s, tau);
    transit_time_with_s(q_rr_c - q_oss, &test, junction).unwrap_or(0.0)
}

/// The forward current whose steady stored charge I·τ equals the charge left
/// when the current, falling at `di_dt_a_per_s` from `i_f_a`, crosses zero:
/// q(t₀) = a·τ²·(1 − e^(−I_F/(a·τ))) (the closed form of
/// [`recovered_charge_c`] at t₀), divided by τ.
fn zero_crossing_current_a(i_f_a: f64, di_dt_a_per_s: f64, tau_s: f64) -> f64 {
    let a_tau = di_dt_a_per_s * tau_s;
    if a_tau.is_infinite() {
        return i_f_a.abs();
    }
    if a_tau.is_nan() || a_tau <= 0.0 {
        return 0.0;
    }
    a_tau * (1.0 - (-i_f_a.abs() / a_tau).exp())
}

/// The charge the body diode's junction gives back between its forward bias
/// at the current zero crossing and zero volts. The junction voltage is that
/// of a steady current equal to the charge left over τ (charge control), read
/// from the diode's forward law ([`forward::forward_voltage_v`]; its ohmic
/// part makes it slightly high); the charge is
/// [`OutputCapacitance::forward_junction_charge_c`].
pub fn junction_charge_c(
    sw: &SwitchModel,
    law: &OutputCapacitance,
    i_f_a: f64,
    di_dt_a_per_s: f64,
    tau_s: f64,
) -> f64 {
    let i0 = zero_crossing_current_a(i_f_a, di_dt_a_per_s, tau_s);
    law.forward_junction_charge_c(forward::forward_voltage_v(sw, i0))
}

/// [`body_diode_transit_time_s`] at the switch's typical Q_rr, remembered
/// for the last few switches on this thread (compared field by field, so the
/// result is exactly the function's): the thermal loop and the search ask for
/// it at every loss evaluation.
pub fn body_diode_transit_time_memo_s(sw: &SwitchModel) -> f64 {
    thread_local! {
        static MEMO: Memo<f64> = const { std::cell::RefCell::new(super::capacitance::MemoSlots::new()) };
    }
    remembered(&MEMO, sw, 0, || body_diode_transit_time_s(sw, sw.q_rr_c))
}

/// Energy of one hard turn-on against a recovering bridge partner.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct PartnerRecovery {
    /// Stored charge the partner's diode gives up.
    pub stored_c: f64,
    /// Junction charge the partner gives back from its forward bias at the
    /// current zero crossing ([`junction_charge_c`]).
    pub junction_c: f64,
    /// Partner's output charge Q_oss(V), charged through the incoming switch.
    pub output_charge_c: f64,
    /// Energy dissipated in the incoming switch: (Q_stored + Q_junction)·V
    /// (the node is held at the rail while they are removed; with a loop
    /// inductance at the rail less the loop's dip) plus Q_oss·V − E_oss
    /// (charging the partner's output capacitance from the rail; E_oss stays
    /// in the partner until its own soft turn-on returns it to the load).
    pub switch_j: f64,
    /// Energy booked in the recovering diode: ¼·Q_stored·V (Graovac, Pürschel,
    /// Kiep, *MOSFET Power Losses Calculation Using the Data-Sheet
    /// Parameters*, 2006; the ¼ factor from memory; conservative, since the
    /// abrupt model leaves the diode almost nothing).
    pub diode_j: f64,
}

/// The recovery of a bridge partner (the same switch type) when the incoming
/// switch turns on hard at `i_a` from `v_bus_v`, with the body diode's
/// transit time `tau_s`.
pub fn partner_recovery(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_a: f64,
    tau_s: f64,
) -> Result<PartnerRecovery, SwitchingError> {
    let i = i_a.abs();
    if i == 0.0 || v_bus_v <= 0.0 {
        return Ok(PartnerRecovery::default());
    }
    let t_ri = switching::current_rise_time_s(sw, drive, i)?;
    let rise = switching::turn_on_rise(sw, drive, v_bus_v, i, t_ri);
    let slope = rise.slope_a_per_s;
    let stored = recovered_charge_c(i, slope, tau_s);
    let (q_oss, e_oss) = output_charge_memo(sw, v_bus_v);
    let law = law_memo(sw);
    let junction = junction_charge_c(sw, &law, i, slope, tau_s);
    // With a loop inductance the switch holds the dipped voltage V_s while
    // the partner recovers, and the node falls from V_s: the partner's output
    // capacitance takes its charge from V − V_s to V through the switch,
    // ∫ v·C_p dv = V·ΔQ_oss − ΔE_oss, the rest through the loop.
    let v_s = rise.v_fall_start_v;
    let capacitive_j = if v_s < v_bus_v {
        let (q_rest, e_rest) = output_charge_memo(sw, v_bus_v - v_s);
        v_bus_v * (q_oss - q_rest) - (e_oss - e_rest)
    } else {
        q_oss * v_bus_v - e_oss
    };
    Ok(PartnerRecovery {
        stored_c: stored,
        junction_c: junction,
        output_charge_c: q_oss,
        switch_j: (stored + junction) * v_s + capacitive_j.max(0.0),
        diode_j: 0.25 * stored * v_bus_v,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The charge-control equation integrated by a fourth-order Runge–Kutta
    /// step (an independent numeric method) until q reaches zero; returns the
    /// reverse charge ∫ −i dt after the zero crossing.
    fn rk4_recovered(i_f: f64, a: f64, tau: f64) -> f64 {
        let dq = |t: f64, q: f64| (i_f - a * t) - q / tau;
        let h = tau.min(i_f / a) / 20_000.0;
        let (mut t, mut q, mut rev) = (0.0, i_f * tau, 0.0);
        while q > 0.0 {
            let k1 = dq(t, q);
            let k2 = dq(t + h / 2.0, q + h / 2.0 * k1);
            let k3 = dq(t + h / 2.0, q + h / 2.0 * k2);
            let k4 = dq(t + h, q + h * k3);
            q += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
            let i_mid = i_f - a * (t + h / 2.0);
            if i_mid < 0.0 {
                rev -= i_mid * h;
            }
            t += h;
        }
        rev
    }

    #[test]
    fn closed_form_matches_a_numeric_integration() {
        for (i_f, a, tau) in [
            (20.0, 100e6, 12e-9),
            (20.0, 10e9, 12e-9),
            (2.0, 0.2e9, 5e-9),
            (30.0, 50e9, 7e-9),
        ] {
            let exact = recovered_charge_c(i_f, a, tau);
            let num = rk4_recovered(i_f, a, tau);
            assert!(
                (exact - num).abs() <= 2e-3 * num,
                "{i_f} A {a} A/s {tau} s: {exact} vs {num}"
            );
        }
    }

    #[test]
    fn limits_of_slow_and_fast_slopes() {
        let tau = 10e-9;
        // Slow: a·τ²/2 (the stored charge recombines while the current falls).
        let slow = recovered_charge_c(50.0, 10e6, tau);
        assert!((slow / (0.5 * 10e6 * tau * tau) - 1.0).abs() < 1e-3);
        // Fast: all of I_F·τ.
        let fast = recovered_charge_c(10.0, 1e15, tau);
        assert!((fast / (10.0 * tau) - 1.0).abs() < 1e-3);
        assert_eq!(recovered_charge_c(0.0, 1e9, tau), 0.0);
        assert_eq!(recovered_charge_c(5.0, 1e9, 0.0), 0.0);
    }

    #[test]
    fn transit_time_inverts_the_recovered_charge() {
        let test = RecoveryTest {
            i_f_a: 20.0,
            di_dt_a_per_s: 100e6,
            v_r_v: 50.0,
        };
        for tau in [1e-9, 7e-9, 40e-9, 300e-9] {
            let q = recovered_charge_c(test.i_f_a, test.di_dt_a_per_s, tau);
            let back = transit_time_s(q, &test).expect("fits");
            assert!((back / tau - 1.0).abs() < 1e-6, "{tau}: {back}");
        }
        assert_eq!(transit_time_s(0.0, &test), None);
        assert_eq!(transit_time_s(-1e-9, &test), None);
    }

    /// A datasheet Q_rr built from its three parts (stored charge at τ, the
    /// junction's forward charge at the zero crossing, Q_oss(V_R)) gives τ
    /// back; the junction's charge grows with τ (a higher forward voltage at
    /// the crossing) and never exceeds the charge at the full V_sd.
    #[test]
    fn fit_separates_the_junction_charge() {
        use crate::model::physics::params::fixtures::curved_switch;
        let mut sw = curved_switch();
        let test = RecoveryTest {
            i_f_a: 20.0,
            di_dt_a_per_s: 100e6,
            v_r_v: 30.0,
        };
        sw.q_rr_test = Some(test);
        let law = OutputCapacitance::of_switch(&sw);
        let mut last = 0.0;
        for tau in [2e-9, 5e-9, 20e-9, 80e-9] {
            let junction = junction_charge_c(&sw, &law, 20.0, 100e6, tau);
            assert!(junction > last && junction <= law.forward_junction_charge_c(sw.v_sd_v));
            last = junction;
            let q_rr = recovered_charge_c(20.0, 100e6, tau) + junction + law.charge_c(&sw, 30.0);
            let back = body_diode_transit_time_s(&sw, q_rr);
            assert!((back / tau - 1.0).abs() < 1e-6, "{tau}: {back}");
        }
    }

    /// The rise time the recovery takes its slope from is the edge's own.
    #[test]
    fn rise_time_is_the_transitions_one() {
        use crate::model::physics::params::fixtures::{curved_switch, example_drive};
        let (sw, drive) = (curved_switch(), example_drive());
        for i in [0.5, 3.0, 12.0, 40.0] {
            let tr = switching::transitions_at(
                &sw,
                &drive,
                48.0,
                i,
                i,
                sw.r_ds_on_25_ohm,
                switching::NodePartner::BridgeLeg,
            )
            .unwrap();
            let t_ri = switching::current_rise_time_s(&sw, &drive, i).unwrap();
            assert_eq!(t_ri, tr.t_ri_s, "{i} A");
        }
    }
}
