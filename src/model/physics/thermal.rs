//! Temperature side of the power stage.
//!
//! Owns: the junction-temperature fixed point T = T_a + R_th·P(T) with
//! runaway detection; its closed form for a linear on-resistance (the test
//! oracle); the Foster transient thermal impedance and single-pulse rise; and
//! the per-device iteration of a whole stage (`stage_junction_temperatures`).
//! R_ds(on)(T_j) is in `losses` (which needs it), re-exported here.

use super::losses::{DeviceRole, StageError, stage_losses};
use super::params::{
    DiodeModel, GateDrive, LoadCurrent, OperatingPoint, SwitchModel, ThermalPath, Topology,
};

// R_ds(on)(T) lives with the losses (they need it and this module needs the
// losses); the old paths stay.
pub use super::losses::{ZERO_CELSIUS_K, r_ds_on_factor, r_ds_on_ohm};

/// Why no junction temperature is returned.
#[derive(Debug, Clone, PartialEq)]
pub enum RunawayReason {
    /// R_th·dP/dT ≥ 1 where the iteration stood: heating outruns cooling.
    LoopGainAtLeastOne {
        /// Temperature where the gain was evaluated.
        t_c: f64,
        /// R_th·dP/dT there.
        loop_gain: f64,
    },
    /// The iteration passed T_j,max before settling.
    NoFixedPointBelowTjMax {
        /// The limit used.
        t_j_max_c: f64,
    },
    /// The power model returned a non-finite value.
    NonFinitePower {
        /// Temperature where it happened.
        t_c: f64,
    },
    /// Ambient, R_th or T_j,max not finite, or R_th negative.
    InvalidInput,
}

/// A temperature in words, through the one formatter of `units`.
fn celsius(t_c: f64) -> String {
    crate::input::units::format_quantity(t_c, crate::input::units::Dimension::Temperature, 3)
}

impl std::fmt::Display for RunawayReason {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RunawayReason::LoopGainAtLeastOne { t_c, loop_gain } => write!(
                f,
                "thermal runaway: loop gain R_th·dP/dT = {loop_gain:.2} at {} (needs < 1)",
                celsius(*t_c)
            ),
            RunawayReason::NoFixedPointBelowTjMax { t_j_max_c } => write!(
                f,
                "thermal runaway: no steady junction temperature below T_j max {}",
                celsius(*t_j_max_c)
            ),
            RunawayReason::NonFinitePower { t_c } => {
                write!(
                    f,
                    "the loss model gave no finite power at {}",
                    celsius(*t_c)
                )
            }
            RunawayReason::InvalidInput => {
                f.write_str("ambient, R_th or T_j max is not a usable number")
            }
        }
    }
}

/// Result of the steady-state junction-temperature solution.
#[derive(Debug, Clone, PartialEq)]
pub enum JunctionTemperature {
    /// A stable fixed point below T_j,max.
    Settled {
        /// Junction temperature.
        t_j_c: f64,
        /// Device power at that temperature.
        p_w: f64,
        /// R_th·dP/dT at the fixed point (< 1).
        loop_gain: f64,
    },
    /// No usable temperature: thermal runaway or no fixed point.
    Runaway {
        /// Why.
        reason: RunawayReason,
    },
}

impl JunctionTemperature {
    /// The settled temperature, if any.
    pub fn t_j_c(&self) -> Option<f64> {
        match self {
            Self::Settled { t_j_c, .. } => Some(*t_j_c),
            Self::Runaway { .. } => None,
        }
    }
}

const FIXED_POINT_MAX_ITER: usize = 200_000;
const FIXED_POINT_TOL_K: f64 = 1e-10;
const GAIN_STEP_K: f64 = 1e-3;

/// Loop gain R_th·dP/dT at `t_c` by a central difference of ±1 mK.
pub fn loop_gain<F: Fn(f64) -> f64>(r_th_k_per_w: f64, power_w: &F, t_c: f64) -> f64 {
    let d = power_w(t_c + GAIN_STEP_K) - power_w(t_c - GAIN_STEP_K);
    r_th_k_per_w * d / (2.0 * GAIN_STEP_K)
}

/// Steady junction temperature: the fixed point T = T_a + R_th·P(T) (JEDEC
/// JESD51 series for the definition of R_th(j-a); solving the steady energy
/// balance as a fixed point in T is common practice).
///
/// Iterates T ← T_a + R_th·P(T) from T_a, which for a power rising with
/// temperature climbs monotonically to the lowest fixed point; every second
/// step jumps to the Aitken Δ² estimate of the limit (Steffensen's method;
/// Burden and Faires, *Numerical Analysis*, §2.5), kept only when it stays
/// between T_a and T_j,max and within ten steps of the last iterate, so the
/// iteration settles in a handful of loss evaluations instead of dozens.
/// The result is the same fixed point: the stopping test is always on a
/// plain step. Runaway is
/// reported, never a number, when the iterate passes `t_j_max_c` (reason: loop
/// gain ≥ 1 if R_th·dP/dT there is ≥ 1, else no fixed point below T_j,max), when
/// it does not settle (gain ≈ 1), or when the settled point has gain ≥ 1.
pub fn junction_temperature<F: Fn(f64) -> f64>(
    t_ambient_c: f64,
    r_th_k_per_w: f64,
    t_j_max_c: f64,
    power_w: F,
) -> JunctionTemperature {
    let runaway = |reason| JunctionTemperature::Runaway { reason };
    let inputs_ok = t_ambient_c.is_finite()
        && r_th_k_per_w.is_finite()
        && r_th_k_per_w >= 0.0
        && t_j_max_c.is_finite();
    if !inputs_ok {
        return runaway(RunawayReason::InvalidInput);
    }
    let mut t = t_ambient_c;
    // The last plain step (from, to), for the Aitken estimate.
    let mut last_step: Option<(f64, f64)> = None;
    for _ in 0..FIXED_POINT_MAX_ITER {
        let p = power_w(t);
        if !p.is_finite() {
            return runaway(RunawayReason::NonFinitePower { t_c: t });
        }
        let t_next = t_ambient_c + r_th_k_per_w * p;
        if t_next > t_j_max_c {
            let gain = loop_gain(r_th_k_per_w, &power_w, t_j_max_c);
            return runaway(if gain >= 1.0 {
                RunawayReason::LoopGainAtLeastOne {
                    t_c: t_j_max_c,
                    loop_gain: gain,
                }
            } else {
                RunawayReason::NoFixedPointBelowTjMax { t_j_max_c }
            });
        }
        let settled = (t_next - t).abs() <= FIXED_POINT_TOL_K * t.abs().max(1.0);
        if !settled {
            match last_step {
                Some((t0, t1)) if t1 == t => {
                    last_step = None;
                    if let Some(a) = aitken(t0, t1, t_next)
                        && a >= t_ambient_c
                        && a < t_j_max_c
                        && (a - t_next).abs() <= 10.0 * (t_next - t1).abs()
                    {
                        t = a;
                        continue;
                    }
                }
                _ => last_step = Some((t, t_next)),
            }
        }
        t = t_next;
        if settled {
            let gain = loop_gain(r_th_k_per_w, &power_w, t);
            if !gain.is_finite() || gain >= 1.0 {
                return runaway(RunawayReason::LoopGainAtLeastOne {
                    t_c: t,
                    loop_gain: gain,
                });
            }
            return JunctionTemperature::Settled {
                t_j_c: t,
                p_w: power_w(t),
                loop_gain: gain,
            };
        }
    }
    let gain = loop_gain(r_th_k_per_w, &power_w, t);
    runaway(RunawayReason::LoopGainAtLeastOne {
        t_c: t,
        loop_gain: gain,
    })
}

/// Aitken's Δ² estimate of the limit of t0, t1, t2 (Burden and Faires,
/// *Numerical Analysis*, §2.5): t0 − (t1 − t0)²/(t2 − 2·t1 + t0).
fn aitken(t0: f64, t1: f64, t2: f64) -> Option<f64> {
    let d = t2 - 2.0 * t1 + t0;
    let a = t0 - (t1 - t0) * (t1 - t0) / d;
    (d != 0.0 && a.is_finite()).then_some(a)
}

/// Closed form for P(T) = P0 + P1·(1 + a·(T − 25)) (a linear on-resistance
/// coefficient; P0 temperature-independent, P1 the resistive loss at 25 °C):
/// T = [T_a + R·(P0 + P1·(1 − 25·a))]/(1 − R·P1·a), derived algebraically from
/// T = T_a + R·P(T). `None` when R·P1·a ≥ 1 (runaway) or inputs are not finite.
pub fn junction_temperature_linear_closed_form(
    t_ambient_c: f64,
    r_th_k_per_w: f64,
    p_fixed_w: f64,
    p_resistive_25_w: f64,
    alpha_per_k: f64,
) -> Option<f64> {
    let gain = r_th_k_per_w * p_resistive_25_w * alpha_per_k;
    if gain >= 1.0 || !gain.is_finite() {
        return None;
    }
    let num =
        t_ambient_c + r_th_k_per_w * (p_fixed_w + p_resistive_25_w * (1.0 - 25.0 * alpha_per_k));
    let t = num / (1.0 - gain);
    t.is_finite().then_some(t)
}

/// Transient thermal impedance of a Foster network,
/// Z_th(t) = Σ R_i·(1 − e^(−t/τ_i)) (*Thermal equivalent circuit models*,
/// application note, 2008; title and year, author not checked; from memory). With no Foster pairs it falls back to the
/// steady-state R_th(j-a) for every t > 0 (conservative: no thermal mass). Pairs
/// with τ ≤ 0 count as instantaneous (their full R). Z(t ≤ 0) = 0 and Z(NaN) = 0.
/// For t → ∞ Z tends to ΣR_i, which equals R_th(j-a) only if the network
/// describes the whole path to ambient.
pub fn z_th_k_per_w(path: &ThermalPath, t_s: f64) -> f64 {
    if t_s.is_nan() || t_s <= 0.0 {
        return 0.0;
    }
    if path.foster.is_empty() {
        return path.r_th_ja_k_per_w;
    }
    path.foster
        .iter()
        .map(|&(r, tau)| {
            if tau > 0.0 {
                r * (1.0 - (-t_s / tau).exp())
            } else {
                r
            }
        })
        .sum()
}

/// The highest junction rise over one period of a periodic loss given as
/// `p_w`, equal steps of constant power across `period_s`, through the
/// path's Foster network: each pair (R_i, τ_i) is a first-order lag whose
/// rise steps as T ← T·a + R_i·P·(1 − a), a = e^(−Δt/τ_i), exact for
/// piecewise-constant power; its periodic steady state starts at
/// x_i/(1 − a^N), x_i the rise one period gives from zero (linear RC
/// network response, common practice; the Foster network as in
/// [`z_th_k_per_w`]). A pair with τ ≤ 0, an infinite period, or a path
/// without Foster pairs (then R_th(j-a) alone) follows the power at once:
/// R·max P, the quasi-static limit. Within a step each term moves
/// monotonically, so the peak is at a step's end.
pub fn periodic_peak_rise_k(path: &ThermalPath, p_w: &[f64], period_s: f64) -> f64 {
    let n = p_w.len();
    if n == 0 {
        return 0.0;
    }
    let steady = [(path.r_th_ja_k_per_w, 0.0)];
    let pairs: &[(f64, f64)] = if path.foster.is_empty() {
        &steady
    } else {
        &path.foster
    };
    let dt = period_s / n as f64;
    let mut total = vec![0.0; n];
    for &(r, tau) in pairs {
        let a = if tau > 0.0 { (-dt / tau).exp() } else { 0.0 };
        let step = |t: f64, p: f64| t * a + r * p * (1.0 - a);
        let from_zero = p_w.iter().fold(0.0, |t, &p| step(t, p));
        let a_n = a.powi(n as i32);
        let mut t = if a_n < 1.0 {
            from_zero / (1.0 - a_n)
        } else {
            0.0
        };
        for (k, &p) in p_w.iter().enumerate() {
            t = step(t, p);
            total[k] += t;
        }
    }
    total.into_iter().fold(0.0, f64::max)
}

/// Temperature rise at the end of a single rectangular power pulse of `p_w`
/// lasting `t_s` (stall, start-up): ΔT = P·Z_th(t) (*Thermal equivalent circuit
/// models*, 2008; from memory). With
/// no Foster pairs this is the steady-state rise P·R_th(j-a).
pub fn single_pulse_rise_k(path: &ThermalPath, p_w: f64, t_s: f64) -> f64 {
    p_w * z_th_k_per_w(path, t_s)
}

/// Steady junction temperature of one device of a stage.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceTemperature {
    /// Which device.
    pub role: DeviceRole,
    /// Its fixed-point result.
    pub result: JunctionTemperature,
}

/// Junction temperature of every device of a stage, each through its own
/// thermal path (`thermal_for(role)`), each with its own T_j.
///
/// The devices are taken as thermally independent (separate paths to ambient),
/// so each is a one-dimensional fixed point on its own loss P_i(T_i), solved
/// by [`junction_temperature`]. The stage is evaluated once, at ambient; a
/// device's loss at another temperature follows from it exactly
/// ([`DeviceLoss::vs_temperature`](super::losses::DeviceLoss::vs_temperature): only
/// the conduction line depends on T_j), so the iteration does not
/// re-evaluate the switching edges. The freewheel diode uses the switch's
/// T_j,max (the diode model has none).
pub fn stage_junction_temperatures(
    topology: Topology,
    sw: &SwitchModel,
    drive: &GateDrive,
    diode: Option<&DiodeModel>,
    op: &OperatingPoint,
    load: &LoadCurrent,
    thermal_for: impl Fn(DeviceRole) -> ThermalPath,
) -> Result<Vec<DeviceTemperature>, StageError> {
    let t_a = op.t_ambient_c;
    let at_ambient = stage_losses(topology, sw, drive, diode, op, load, &|_| t_a)?;
    Ok(at_ambient
        .devices
        .iter()
        .map(|d| {
            let p = d.vs_temperature(sw, t_a);
            DeviceTemperature {
                role: d.role,
                result: junction_temperature(
                    t_a,
                    thermal_for(d.role).r_th_ja_k_per_w,
                    sw.t_j_max_c,
                    |t| p.at_w(sw, t),
                ),
            }
        })
        .collect())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::params::RdsOnTemperature;
    use crate::model::physics::params::fixtures::{
        Lcg, example_drive, example_switch, triangular_load,
    };

    /// Computed regression case (regression value, worked out from the
    /// formula, not an external check): I_rms² 60.45 A², R25 5 mΩ, linear
    /// α 0.005/K, P_sw 74.78 mW, T_a 40 °C, R_th 40 K/W → 57.017 °C, 0.4254 W.
    #[test]
    fn regression_case_junction_fixed_point() {
        let p = |t: f64| 0.07478 + 60.45 * 5e-3 * (1.0 + 0.005 * (t - 25.0));
        let res = junction_temperature(40.0, 40.0, 175.0, p);
        let JunctionTemperature::Settled {
            t_j_c,
            p_w,
            loop_gain,
        } = res
        else {
            panic!("expected settled, got {res:?}");
        };
        assert!((t_j_c - 57.017).abs() < 5e-4);
        assert!((p_w - 0.4254).abs() < 5e-5);
        assert!((loop_gain - 40.0 * 60.45 * 5e-3 * 0.005).abs() < 1e-9);
    }

    /// Iteration against the algebraic closed form, within 1e-6 K, for the
    /// regression case and a seeded set of random cases.
    #[test]
    fn closed_form_matches_iteration() {
        let mut rng = Lcg(11);
        let mut cases = vec![(40.0, 40.0, 0.07478, 60.45 * 5e-3, 0.005)];
        for _ in 0..300 {
            let (t_a, r) = (rng.uniform(-20.0, 80.0), rng.uniform(1.0, 80.0));
            let (p0, p1, a) = (
                rng.uniform(0.0, 1.0),
                rng.uniform(0.0, 2.0),
                rng.uniform(0.0, 0.008),
            );
            cases.push((t_a, r, p0, p1, a));
        }
        let mut checked = 0;
        for (t_a, r, p0, p1, a) in cases {
            let closed = junction_temperature_linear_closed_form(t_a, r, p0, p1, a);
            let p = |t: f64| p0 + p1 * (1.0 + a * (t - 25.0));
            let iter = junction_temperature(t_a, r, 1000.0, p);
            match (closed, iter.t_j_c()) {
                (Some(c), Some(i)) => {
                    assert!((c - i).abs() < 1e-6, "closed {c} iter {i}");
                    checked += 1;
                }
                (None, None) => {}
                (c, i) => {
                    // Disagreement is only acceptable beyond the 1000 °C cap.
                    assert!(
                        c.is_some_and(|c| c > 1000.0 - 1e-6) && i.is_none(),
                        "{c:?} {i:?}"
                    );
                }
            }
        }
        assert!(checked > 100);
    }

    /// Practitioner figure (common practice, no published source): 0.64 W through
    /// 62 K/W from a 50 °C ambient gives about 90 °C.
    #[test]
    fn constant_power_common_practice() {
        let t = junction_temperature(50.0, 62.0, 150.0, |_| 0.64)
            .t_j_c()
            .unwrap();
        assert!((t - 90.0).abs() < 0.5);
        assert!((t - 89.68).abs() < 1e-9);
    }

    /// Loop gain R·P1·a = 40·10·0.005 = 2 ≥ 1 → Runaway, never a number; and a
    /// stable but too-hot case → no fixed point below T_j,max.
    #[test]
    fn runaway_detection() {
        let p = |t: f64| 10.0 * (1.0 + 0.005 * (t - 25.0));
        let res = junction_temperature(25.0, 40.0, 175.0, p);
        assert!(matches!(
            res,
            JunctionTemperature::Runaway {
                reason: RunawayReason::LoopGainAtLeastOne { .. }
            }
        ));
        assert!(junction_temperature_linear_closed_form(25.0, 40.0, 0.0, 10.0, 0.005).is_none());
        let res = junction_temperature(25.0, 40.0, 175.0, |_| 5.0);
        assert_eq!(
            res,
            JunctionTemperature::Runaway {
                reason: RunawayReason::NoFixedPointBelowTjMax { t_j_max_c: 175.0 }
            }
        );
        let res = junction_temperature(25.0, 40.0, 175.0, |_| f64::NAN);
        assert!(matches!(
            res,
            JunctionTemperature::Runaway {
                reason: RunawayReason::NonFinitePower { .. }
            }
        ));
    }

    /// The accelerated iteration lands on the fixed point a plain
    /// T ← T_a + R_th·P(T) iteration (written out here) reaches, for power
    /// laws, exponential and piecewise-linear on-resistance curves over a
    /// range of loop gains, and reports runaway where the plain one does.
    #[test]
    fn accelerated_iteration_matches_plain_iteration() {
        let plain = |t_a: f64, r: f64, t_max: f64, p: &dyn Fn(f64) -> f64| -> Option<f64> {
            let mut t = t_a;
            for _ in 0..1_000_000 {
                let next = t_a + r * p(t);
                if next > t_max {
                    return None;
                }
                if (next - t).abs() <= 1e-12 * t.abs().max(1.0) {
                    return Some(next);
                }
                t = next;
            }
            None
        };
        let curve =
            RdsOnTemperature::Curve(vec![(-40.0, 0.7), (25.0, 1.0), (100.0, 1.55), (175.0, 2.3)]);
        let models = [
            RdsOnTemperature::PowerLaw,
            RdsOnTemperature::CoefficientPerK(0.007),
            curve,
        ];
        let mut rng = Lcg(11);
        let mut runaways = 0;
        for _ in 0..3000 {
            let model = &models[(rng.uniform(0.0, 3.0) as usize).min(2)];
            let (p0, p1) = (rng.uniform(0.0, 2.0), rng.uniform(0.0, 4.0));
            let (t_a, r, t_max) = (
                rng.uniform(-20.0, 70.0),
                rng.uniform(1.0, 60.0),
                rng.uniform(125.0, 200.0),
            );
            let p = |t: f64| p0 + p1 * r_ds_on_factor(model, t);
            let want = plain(t_a, r, t_max, &p);
            let got = junction_temperature(t_a, r, t_max, p);
            match (want, &got) {
                (Some(w), JunctionTemperature::Settled { t_j_c, .. }) => {
                    assert!((t_j_c - w).abs() < 1e-7, "{t_j_c} vs {w}");
                }
                (None, JunctionTemperature::Runaway { .. }) => runaways += 1,
                // A gain at or above one at a settled point is runaway
                // for both; the plain loop above does not check gain.
                (Some(_), JunctionTemperature::Runaway { reason }) => {
                    assert!(
                        matches!(reason, RunawayReason::LoopGainAtLeastOne { .. }),
                        "{reason:?}"
                    );
                }
                (None, other) => panic!("plain runs away, accelerated gives {other:?}"),
            }
        }
        assert!(runaways > 100, "the runaway side is exercised ({runaways})");
    }

    /// Property (seeded loop): T_j rises with ambient and with R_th.
    #[test]
    fn property_tj_monotone() {
        let mut rng = Lcg(3);
        for _ in 0..300 {
            let (p0, p1, a) = (
                rng.uniform(0.0, 0.5),
                rng.uniform(0.0, 0.5),
                rng.uniform(0.0, 0.006),
            );
            let p = |t: f64| p0 + p1 * (1.0 + a * (t - 25.0));
            let (t_a, r) = (rng.uniform(0.0, 60.0), rng.uniform(5.0, 60.0));
            let base = junction_temperature(t_a, r, 1e4, p).t_j_c().unwrap();
            let hotter = junction_temperature(t_a + 5.0, r, 1e4, p).t_j_c().unwrap();
            let worse = junction_temperature(t_a, r * 1.2, 1e4, p).t_j_c().unwrap();
            assert!(hotter > base && worse > base);
        }
    }

    /// On-resistance models against hand values: Graovac exponential form, the
    /// curve (interpolation, hot-side extrapolation, cold-side hold), the power
    /// law (1 at 25 °C).
    #[test]
    fn r_ds_on_models() {
        let k = r_ds_on_factor(&RdsOnTemperature::CoefficientPerK(0.005), 125.0);
        assert!((k - 1.005_f64.powi(100)).abs() < 1e-12);
        let curve = RdsOnTemperature::Curve(vec![(125.0, 1.7), (25.0, 1.0), (75.0, 1.3)]);
        assert!((r_ds_on_factor(&curve, 50.0) - 1.15).abs() < 1e-12);
        assert!((r_ds_on_factor(&curve, 100.0) - 1.5).abs() < 1e-12);
        assert!((r_ds_on_factor(&curve, 150.0) - 1.9).abs() < 1e-12);
        assert!((r_ds_on_factor(&curve, -40.0) - 1.0).abs() < 1e-12);
        assert!((r_ds_on_factor(&RdsOnTemperature::PowerLaw, 25.0) - 1.0).abs() < 1e-12);
        // Power law (from memory) against its own closed form at 125 °C.
        let pl = r_ds_on_factor(&RdsOnTemperature::PowerLaw, 125.0);
        assert!((pl - (398.15_f64 / 298.15).powf(2.3)).abs() < 1e-12);
    }

    /// Foster network against an independent numerical integration of its
    /// parallel-RC branches (dT_i/dt = (P − T_i/R_i)/C_i, C_i = τ_i/R_i, RK4).
    #[test]
    fn periodic_peak_rise_limits_and_a_square_wave() {
        let path = |foster: Vec<(f64, f64)>| ThermalPath {
            r_th_ja_k_per_w: 10.0,
            foster,
        };
        // Quasi-static (no Foster pairs): R·max P.
        let p = [1.0, 3.0, 2.0, 0.0];
        assert!((periodic_peak_rise_k(&path(vec![]), &p, 0.1) - 30.0).abs() < 1e-12);
        // A very fast period through a slow pole: R·mean P.
        let slow = path(vec![(10.0, 100.0)]);
        assert!((periodic_peak_rise_k(&slow, &p, 1e-6) - 15.0).abs() < 1e-5);
        // A square wave (P for half the period, 0 for the other half) through
        // one pole: the periodic steady state's peak in closed form,
        // R·P·(1 − a)/(1 − a²) with a = e^(−T/(2τ)) (first-order RC response,
        // common practice), against the stepped result with many steps.
        let (r, tau, period): (f64, f64, f64) = (4.0, 0.05, 0.08);
        let n = 2000;
        let wave: Vec<f64> = (0..n).map(|k| if k < n / 2 { 2.0 } else { 0.0 }).collect();
        let a = (-period / (2.0 * tau)).exp();
        let expected = r * 2.0 * (1.0 - a) / (1.0 - a * a);
        let got = periodic_peak_rise_k(&path(vec![(r, tau)]), &wave, period);
        assert!(
            (got - expected).abs() < 1e-9 * expected,
            "{got} against {expected}"
        );
    }

    #[test]
    fn foster_against_numerical_integration() {
        let path = ThermalPath {
            r_th_ja_k_per_w: 50.0,
            foster: vec![(0.5, 1e-3), (2.0, 0.05), (10.0, 2.0), (37.5, 60.0)],
        };
        let (p, t_end, n) = (3.0, 5.0, 200_000usize);
        let h = t_end / n as f64;
        let mut temps = vec![0.0; path.foster.len()];
        for _ in 0..n {
            for (ti, &(r, tau)) in temps.iter_mut().zip(&path.foster) {
                let c = tau / r;
                let f = |x: f64| (p - x / r) / c;
                let k1 = f(*ti);
                let k2 = f(*ti + 0.5 * h * k1);
                let k3 = f(*ti + 0.5 * h * k2);
                let k4 = f(*ti + h * k3);
                *ti += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
            }
        }
        let numeric: f64 = temps.iter().sum();
        assert!((single_pulse_rise_k(&path, p, t_end) - numeric).abs() < 1e-6);
        // Long pulse tends to ΣR_i = 50 K/W.
        assert!((z_th_k_per_w(&path, 1e5) - 50.0).abs() < 1e-9);
        // No Foster data: steady-state fallback.
        let bare = ThermalPath {
            r_th_ja_k_per_w: 62.0,
            foster: Vec::new(),
        };
        assert_eq!(single_pulse_rise_k(&bare, 2.0, 1e-3), 124.0);
    }

    /// Whole-stage iteration: every device settles, and each device's T_j
    /// satisfies T = T_a + R_th·P(T) with its own reported power.
    #[test]
    fn stage_iteration_self_consistent() {
        let op = OperatingPoint {
            v_bus_v: 24.0,
            duty: 0.6,
            f_sw_hz: 20e3,
            t_dead_s: 200e-9,
            t_ambient_c: 40.0,
            edges: Default::default(),
        };
        let load = triangular_load(8.0, 2.0);
        let (sw, drive) = (example_switch(), example_drive());
        let res = stage_junction_temperatures(
            Topology::HalfBridge,
            &sw,
            &drive,
            None,
            &op,
            &load,
            |_| ThermalPath {
                r_th_ja_k_per_w: 40.0,
                foster: Vec::new(),
            },
        )
        .unwrap();
        assert_eq!(res.len(), 2);
        let t_of = |role: DeviceRole| {
            res.iter()
                .find(|d| d.role == role)
                .and_then(|d| d.result.t_j_c())
                .unwrap()
        };
        // The powers the loop used are those of a full evaluation at the
        // temperatures it found.
        let full =
            stage_losses(Topology::HalfBridge, &sw, &drive, None, &op, &load, &t_of).unwrap();
        for d in &res {
            let JunctionTemperature::Settled { t_j_c, p_w, .. } = d.result else {
                panic!("{d:?}");
            };
            assert!((t_j_c - (40.0 + 40.0 * p_w)).abs() < 1e-6);
            let p_full = full.device(d.role).unwrap().total_w;
            assert!((p_w - p_full).abs() <= 1e-12 * p_full, "{p_w} vs {p_full}");
        }
    }
}
