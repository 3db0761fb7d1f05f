//! The motor current loop: PI gains for the motor's R–L with the sampling and PWM delay,
//! and the loop's phase margin and step overshoot on its exact discrete-time model.
//!
//! Owns: the delay a sampled current loop sees, the internal-model-control gains, the
//! discrete plant from the controller's output to the sampled current (the R–L held by the
//! PWM, sampled at an offset from the update event), the open loop's crossover and phase
//! margin, and the closed loop's step response. Pure: no I/O.
//!
//! # Timing (the firmware convention the plan states)
//!
//! One control period `T` (the PWM period times the update divider) starts at the timer's
//! update event, where the compare written last takes effect. The current is sampled once,
//! `τ` after the update event (`0 ≤ τ < T`, the middle of the sampling window); the
//! controller runs on that sample and writes its compare, which the next update event loads.
//! So the voltage computed from the sample at `kT + τ` acts over `[(k+1)T, (k+2)T)`.
//!
//! # The discrete plant (exact, own derivation from the zero-order-hold equivalent of
//! Franklin, Powell, Workman, *Digital Control of Dynamic Systems*, 3rd ed., 1998, ch. 4)
//!
//! The motor `L·di/dt = u − E − R·i` driven by the period-mean voltage `u` (the PWM's
//! mean over a period; the sample in the middle of an on- or off-time reads the period's
//! mean current: Buso, Mattavelli, *Digital Control in Power Electronics*, 2006, ch. 2,
//! "regular sampling"). With `a_x = e^(−R·x/L)` and `g_x = (1 − a_x)/R` (→ `x/L` as
//! `R → 0`), between samples:
//!
//! `y(k+1) = a_T·y(k) + a_τ·g_(T−τ)·u(k−1) + g_τ·u(k)`   (back-EMF a constant disturbance).
//!
//! # Tuning (Harnefors, Nee, "Model-based current control of AC machines using the internal
//! model control method", IEEE Trans. Industry Applications 34(1), 1998)
//!
//! `K_p = α·L`, `K_i = α·R`: the PI cancels the motor's pole and the open loop becomes
//! `α·e^(−s·T_d)/s`, crossing over at `α` with the phase margin `π/2 − α·T_d`. The delay is
//! `T_d = (T − τ) + T/2` (sample to update, then half the held period: the hold's mean
//! delay, common practice). `α` is first set from that margin, then moved so that the exact
//! discrete loop (this module's plant, a backward-Euler integrator) has the margin asked for.

use std::f64::consts::PI;

/// A loop rate asked for counts as above a rate only beyond this factor of it, so the rate's
/// own rounding (a PWM rate quantised to the timer) does not decide (own bound: 0.05 %).
pub const RATE_ABOVE: f64 = 1.0005;

/// The current loop's timing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LoopTiming {
    /// Control period T, s (PWM period × update divider).
    pub period_s: f64,
    /// From the update event to the sample's middle, s (`0 ≤ τ < T`).
    pub sample_offset_s: f64,
}

impl LoopTiming {
    /// The loop's delay `T_d = (T − τ) + T/2`, s (module doc).
    pub fn delay_s(&self) -> f64 {
        1.5 * self.period_s - self.sample_offset_s
    }
}

/// The motor as the current loop sees it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RlPlant {
    /// Loop resistance, Ω (motor plus the conducting switches).
    pub r_ohm: f64,
    /// Inductance, H.
    pub l_h: f64,
}

/// A PI controller in SI units: `u = K_p·e + K_i·∫e dt` (V from A).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PiGains {
    /// Proportional gain, V/A.
    pub kp_v_per_a: f64,
    /// Integral gain, V/(A·s).
    pub ki_v_per_a_s: f64,
}

/// What the tuning gives and what the discrete loop does with it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LoopDesign {
    pub gains: PiGains,
    /// The IMC bandwidth α, rad/s.
    pub bandwidth_rad_s: f64,
    /// The open loop's crossover on the discrete model, rad/s.
    pub crossover_rad_s: f64,
    /// Phase margin of the discrete loop, degrees.
    pub phase_margin_deg: f64,
    /// Step overshoot of the sampled current, fraction of the step (0 when none).
    pub overshoot: f64,
    /// Samples from the step to 90 % of it.
    pub rise_samples: usize,
    /// The loop delay T_d, s.
    pub delay_s: f64,
}

/// `(a_x, g_x)`: the R–L's decay over `x` seconds and the current a unit voltage held for
/// `x` builds from zero, `g_x = (1 − a_x)/R` (module doc).
fn decay_and_gain(p: &RlPlant, x_s: f64) -> (f64, f64) {
    let k = p.r_ohm / p.l_h;
    let a = (-k * x_s).exp();
    let g = if k * x_s < 1e-9 {
        x_s / p.l_h
    } else {
        -(-k * x_s).exp_m1() / p.r_ohm
    };
    (a, g)
}

/// The discrete plant from the controller's output (V) to the sampled current (A):
/// `y(k+1) = a·y(k) + b1·u(k−1) + b0·u(k)`, one step per control period.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DiscretePlant {
    pub a: f64,
    pub b1: f64,
    pub b0: f64,
    /// The control period T, s.
    pub period_s: f64,
}

impl DiscretePlant {
    /// The R–L held at the period-mean voltage and sampled at offset τ (module doc).
    pub fn held(p: &RlPlant, t: &LoopTiming) -> DiscretePlant {
        let (a_t, _) = decay_and_gain(p, t.period_s);
        let (a_tau, g_tau) = decay_and_gain(p, t.sample_offset_s);
        let (_, g_rest) = decay_and_gain(p, t.period_s - t.sample_offset_s);
        DiscretePlant {
            a: a_t,
            b1: a_tau * g_rest,
            b0: g_tau,
            period_s: t.period_s,
        }
    }
}

/// IMC gains for bandwidth `alpha_rad_s`: `K_p = α·L`, `K_i = α·R` (Harnefors and Nee 1998).
pub fn imc_gains(p: &RlPlant, alpha_rad_s: f64) -> PiGains {
    PiGains {
        kp_v_per_a: alpha_rad_s * p.l_h,
        ki_v_per_a_s: alpha_rad_s * p.r_ohm,
    }
}

/// A complex number as (re, im), enough for the loop's frequency response.
#[derive(Debug, Clone, Copy)]
struct Cx(f64, f64);

impl Cx {
    fn polar(r: f64, th: f64) -> Cx {
        Cx(r * th.cos(), r * th.sin())
    }
    fn abs(self) -> f64 {
        self.0.hypot(self.1)
    }
    fn arg(self) -> f64 {
        self.1.atan2(self.0)
    }
}

/// The open loop `C(z)·G(z)` at `z = e^(jωT)` as (magnitude, phase in rad), the phase summed
/// factor by factor so it is not folded into (−π, π]:
/// `C(z) = K_p + K_i·T·z/(z − 1)` (backward-Euler integral, common practice) and
/// `G(z) = (b0·z + b1)/(z·(z − a_T))`.
pub fn open_loop(p: &DiscretePlant, g: &PiGains, omega_rad_s: f64) -> (f64, f64) {
    let (a, b1, b0) = (p.a, p.b1, p.b0);
    let th = omega_rad_s * p.period_s;
    let z = Cx::polar(1.0, th);
    // C(z) = ((K_p + K_i T) z − K_p)/(z − 1).
    let kit = g.ki_v_per_a_s * p.period_s;
    let c_num = Cx(
        (g.kp_v_per_a + kit) * z.0 - g.kp_v_per_a,
        (g.kp_v_per_a + kit) * z.1,
    );
    let z_minus_1 = Cx(z.0 - 1.0, z.1);
    let g_num = Cx(b0 * z.0 + b1, b0 * z.1);
    let z_minus_a = Cx(z.0 - a, z.1);
    let mag = c_num.abs() * g_num.abs() / (z_minus_1.abs() * z_minus_a.abs());
    let phase = c_num.arg() - z_minus_1.arg() + g_num.arg() - th - z_minus_a.arg();
    (mag, phase)
}

/// The crossover `ω_c` (|C·G| = 1) below the Nyquist rate π/T, rad/s: the lowest one, by
/// a log scan and bisection (the magnitude falls through 1 once for these loops). `None`
/// when the loop gain stays above 1 up to π/T.
pub fn crossover_rad_s(p: &DiscretePlant, g: &PiGains) -> Option<f64> {
    let nyquist = PI / p.period_s;
    let mut lo = nyquist * 1e-6;
    let steps = 240;
    let ratio = (nyquist / lo).powf(1.0 / f64::from(steps));
    let mut hi = lo;
    for _ in 0..steps {
        hi = (lo * ratio).min(nyquist);
        if open_loop(p, g, hi).0 < 1.0 {
            break;
        }
        lo = hi;
    }
    if open_loop(p, g, hi).0 >= 1.0 {
        return None;
    }
    for _ in 0..60 {
        let mid = (lo * hi).sqrt();
        if open_loop(p, g, mid).0 >= 1.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some((lo * hi).sqrt())
}

/// Phase margin at the crossover, degrees: 180° + ∠(C·G)(ω_c).
pub fn phase_margin_deg(p: &DiscretePlant, g: &PiGains) -> Option<(f64, f64)> {
    let wc = crossover_rad_s(p, g)?;
    let (_, phase) = open_loop(p, g, wc);
    Some((wc, 180.0 + phase.to_degrees()))
}

/// The sampled current's response to a unit reference step through the closed loop
/// (controller, delay, plant of this module), `n` samples; the back-EMF is a constant
/// disturbance the integrator has already balanced, so it drops out.
pub fn step_response(p: &DiscretePlant, g: &PiGains, n: usize) -> Vec<f64> {
    let (a, b1, b0) = (p.a, p.b1, p.b0);
    let kit = g.ki_v_per_a_s * p.period_s;
    let (mut y, mut integral, mut u_prev) = (0.0_f64, 0.0_f64, 0.0_f64);
    let mut out = Vec::with_capacity(n);
    for _ in 0..n {
        out.push(y);
        let e = 1.0 - y;
        integral += kit * e;
        let u = g.kp_v_per_a * e + integral;
        y = a * y + b1 * u_prev + b0 * u;
        u_prev = u;
    }
    out
}

/// Overshoot (fraction of the step) and the samples to 90 % of a unit step response.
pub fn overshoot_and_rise(response: &[f64]) -> (f64, usize) {
    let peak = response.iter().copied().fold(0.0_f64, f64::max);
    let rise = response
        .iter()
        .position(|&y| y >= 0.9)
        .unwrap_or(response.len());
    ((peak - 1.0).max(0.0), rise)
}

/// Samples the step response is followed for: long enough for the IMC loop (time constant
/// 1/α) to settle many times over at any margin this module designs for (own bound).
pub const STEP_SAMPLES: usize = 2000;

/// The IMC bandwidth that gives the delayed loop `α·e^(−s·T_d)/s` the phase margin `pm`:
/// `α = (π/2 − pm)/T_d` (module doc).
pub fn bandwidth_for_margin_rad_s(delay_s: f64, phase_margin_deg: f64) -> f64 {
    (PI / 2.0 - phase_margin_deg.to_radians()) / delay_s
}

/// Tune the loop for the phase margin asked for (degrees, 20–85) on the discrete plant
/// `d`: the IMC gains of the motor `p` at the bandwidth that gives it, found by bisection from
/// the continuous estimate for the delay `delay_s` (the margin falls as α rises). `None` when
/// the inputs are not physical.
pub fn design_loop(
    p: &RlPlant,
    d: &DiscretePlant,
    delay_s: f64,
    target_margin_deg: f64,
) -> Option<LoopDesign> {
    let valid = p.r_ohm >= 0.0
        && p.l_h > 0.0
        && d.period_s > 0.0
        && delay_s > 0.0
        && [d.a, d.b0, d.b1].iter().all(|x| x.is_finite())
        && (20.0..=85.0).contains(&target_margin_deg);
    if !valid {
        return None;
    }
    let margin = |alpha: f64| phase_margin_deg(d, &imc_gains(p, alpha)).map(|(_, pm)| pm);
    let guess = bandwidth_for_margin_rad_s(delay_s, target_margin_deg);
    let (mut lo, mut hi) = (guess * 0.05, guess * 4.0);
    for _ in 0..80 {
        let mid = 0.5 * (lo + hi);
        match margin(mid) {
            Some(pm) if pm > target_margin_deg => lo = mid,
            _ => hi = mid,
        }
    }
    let alpha = lo;
    let gains = imc_gains(p, alpha);
    let (wc, pm) = phase_margin_deg(d, &gains)?;
    let (overshoot, rise_samples) = overshoot_and_rise(&step_response(d, &gains, STEP_SAMPLES));
    Some(LoopDesign {
        gains,
        bandwidth_rad_s: alpha,
        crossover_rad_s: wc,
        phase_margin_deg: pm,
        overshoot,
        rise_samples,
        delay_s,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    const MOTOR: RlPlant = RlPlant {
        r_ohm: 0.2,
        l_h: 300e-6,
    };

    #[test]
    fn the_plant_is_the_exact_solution_of_the_rl_circuit() {
        // Independent: integrate L di/dt = u − R i with fine Euler steps over one period
        // with u(k−1) held to the update, u(k) after it.
        let t = LoopTiming {
            period_s: 50e-6,
            sample_offset_s: 20e-6,
        };
        let DiscretePlant { a, b1, b0, .. } = DiscretePlant::held(&MOTOR, &t);
        let (y0, u_prev, u) = (3.0, 5.0, -2.0);
        let n = 200_000;
        let dt = t.period_s / f64::from(n);
        let mut i = y0;
        for k in 0..n {
            let time = f64::from(k) * dt; // from the sample at τ
            let v = if time < t.period_s - t.sample_offset_s {
                u_prev
            } else {
                u
            };
            i += dt * (v - MOTOR.r_ohm * i) / MOTOR.l_h;
        }
        let exact = a * y0 + b1 * u_prev + b0 * u;
        assert!((exact - i).abs() < 1e-4 * y0, "{exact} vs {i}");
    }

    #[test]
    fn the_continuous_margin_rule_is_recovered_at_slow_bandwidth() {
        // At α·T ≪ 1 the discrete loop is the delayed integrator α e^(−sT_d)/s: crossover
        // at α, margin 90° − α·T_d.
        let t = LoopTiming {
            period_s: 10e-6,
            sample_offset_s: 0.0,
        };
        let alpha = 500.0;
        let plant = DiscretePlant::held(&MOTOR, &t);
        let (wc, pm) = phase_margin_deg(&plant, &imc_gains(&MOTOR, alpha)).unwrap();
        assert!((wc / alpha - 1.0).abs() < 3e-3, "{wc}");
        let expected = 90.0 - (alpha * t.delay_s()).to_degrees();
        assert!((pm - expected).abs() < 0.2, "{pm} vs {expected}");
    }

    #[test]
    fn the_design_meets_its_margin_and_overshoots_less_with_more_margin() {
        let t = LoopTiming {
            period_s: 50e-6,
            sample_offset_s: 25e-6,
        };
        let plant = DiscretePlant::held(&MOTOR, &t);
        let d60 = design_loop(&MOTOR, &plant, t.delay_s(), 60.0).unwrap();
        let d45 = design_loop(&MOTOR, &plant, t.delay_s(), 45.0).unwrap();
        assert!((d60.phase_margin_deg - 60.0).abs() < 0.01);
        assert!((d45.phase_margin_deg - 45.0).abs() < 0.01);
        assert!(d45.bandwidth_rad_s > d60.bandwidth_rad_s);
        assert!(d45.overshoot > d60.overshoot);
        // A sampled delayed integrator at 60° margin overshoots a few per cent (common
        // practice: about 5–10 %).
        assert!(
            d60.overshoot > 0.01 && d60.overshoot < 0.15,
            "{}",
            d60.overshoot
        );
    }

    #[test]
    fn unphysical_inputs_give_none() {
        let t = LoopTiming {
            period_s: 50e-6,
            sample_offset_s: 0.0,
        };
        let plant = DiscretePlant::held(&MOTOR, &t);
        assert!(design_loop(&MOTOR, &plant, t.delay_s(), 90.0).is_none());
        assert!(design_loop(&MOTOR, &plant, 0.0, 60.0).is_none());
    }
}
