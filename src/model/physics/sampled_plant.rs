//! The PWM-driven motor current as a sampled current loop sees it: the exact small-signal
//! discrete plant of the switched R–L at an operating point.
//!
//! Owns: the load voltage's pattern over one PWM period at a compare duty (the carrier and
//! the two levels), the current through it by exact exponentials, the sample instant the
//! sampling plan puts in the period, and the linearisation of the control period's map
//! around the periodic steady state. Pure: no I/O.
//!
//! # Method (own derivation; the state-space form is that of Franklin, Powell, Workman,
//! *Digital Control of Dynamic Systems*, 3rd ed., 1998, ch. 4)
//!
//! With `x_k` the current at control period k's update event, `d_k` its compare duty and
//! `y_k` its sample, the switched circuit gives `x_(k+1) = F(x_k, d_k)` and
//! `y_k = S(x_k, d_k)`. Around the steady state, `x_(k+1) = a·x_k + b·d_k`,
//! `y_k = c·x_k + e·d_k` (partial derivatives; `a` exact, the others by central differences
//! of the exact piecewise-exponential solution). The compare computed from `y_k` is loaded
//! at the next update event (`d_(k+1) = u_k/K`, `K` the mean load voltage per unit duty),
//! so `y_(k+1) = a·y_k + (c·b − e·a)/K·u_(k−1) + e/K·u_k`: the [`DiscretePlant`] form.
//! The sample's dependence on its own period's compare (`e`) is what a held-voltage model
//! gets wrong on an up-count, where the middle of a state moves with the duty.

use super::current_loop::{DiscretePlant, RlPlant};

/// How the compare places the load voltage in the period (the timer convention of
/// `physics::sampling`: the reference is on while the counter is below the compare).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Carrier {
    /// Up-count: on over `[0, d·T)`.
    Edge,
    /// Up-down count: on within `d·T/2` of the counter bottom.
    Centre,
    /// Up-down count, two legs at `d` and `1 − d`: `+V` while only leg A is on, `−V` while
    /// only leg B is, 0 otherwise.
    CentreUnipolar,
}

/// Where in the first PWM period of a control period the sample is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SampleAt {
    /// A fixed share of the PWM period after the update event (0: the update event).
    Share(f64),
    /// The middle of the on-time of an up-count, `d·T/2`.
    OnMiddle,
    /// The middle of the off-time of an up-count, `(1 + d)·T/2`.
    OffMiddle,
}

/// One control period of a PWM-driven load.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SwitchedPeriod {
    pub pwm_period_s: f64,
    /// PWM periods per control update (the update divider).
    pub periods_per_update: u32,
    pub carrier: Carrier,
    /// Load voltage with the reference on and off, V (unipolar: `+V` and 0).
    pub v_on_v: f64,
    pub v_off_v: f64,
    pub sample: SampleAt,
    /// The dead time on complementary outputs carrying forward current, s (0 on a single
    /// switch): the on-level starts this late after the reference's rise (the leg's body diode
    /// holds the off-level until the switch turns on); on a unipolar bridge leg A turns high
    /// and leg B low this late. The sample is half of it late.
    pub dead_s: f64,
}

/// Load-voltage intervals `(t0, t1, v)` covering one PWM period at duty `d`.
fn intervals(w: &SwitchedPeriod, d: f64) -> Vec<(f64, f64, f64)> {
    let t = w.pwm_period_s;
    let (on, off) = (w.v_on_v, w.v_off_v);
    match w.carrier {
        Carrier::Edge => {
            let rise = w.dead_s.min(d * t);
            vec![(0.0, rise, off), (rise, d * t, on), (d * t, t, off)]
        }
        Carrier::Centre => {
            let rise = (t - 0.5 * d * t + w.dead_s).min(t);
            vec![
                (0.0, 0.5 * d * t, on),
                (0.5 * d * t, rise, off),
                (rise, t, on),
            ]
        }
        Carrier::CentreUnipolar => {
            // Forward current: leg A (current out) turns high a dead time late, leg B
            // (current in) turns low a dead time late.
            let td = w.dead_s;
            let a = |x: f64| x < 0.5 * d * t || x >= t - 0.5 * d * t + td;
            let b = |x: f64| x < 0.5 * (1.0 - d) * t + td || x >= t - 0.5 * (1.0 - d) * t;
            let mut cuts = [
                0.0,
                0.5 * d * t,
                (t - 0.5 * d * t + td).min(t),
                (0.5 * (1.0 - d) * t + td).min(t),
                t - 0.5 * (1.0 - d) * t,
                t,
            ];
            cuts.sort_by(f64::total_cmp);
            cuts.windows(2)
                .filter(|c| c[1] > c[0])
                .map(|c| {
                    let mid = 0.5 * (c[0] + c[1]);
                    let v = f64::from(u8::from(a(mid))) - f64::from(u8::from(b(mid)));
                    (c[0], c[1], on * v)
                })
                .collect()
        }
    }
}

/// The sample instant in the first PWM period at duty `d`, s.
fn sample_s(w: &SwitchedPeriod, d: f64) -> f64 {
    let t = w.pwm_period_s;
    0.5 * w.dead_s
        + match w.sample {
            SampleAt::Share(s) => s * t,
            SampleAt::OnMiddle => 0.5 * d * t,
            SampleAt::OffMiddle => 0.5 * (1.0 + d) * t,
        }
}

/// The mean load voltage over a period at duty `d`, V.
fn mean_v(w: &SwitchedPeriod, d: f64) -> f64 {
    intervals(w, d)
        .iter()
        .map(|(a, b, v)| (b - a) * v)
        .sum::<f64>()
        / w.pwm_period_s
}

/// `i(t0 + dt)` from `i0` under `v` against the back-EMF `e_v` (exact exponential; linear
/// when R is 0).
fn advance(p: &RlPlant, i0: f64, v: f64, e_v: f64, dt: f64) -> f64 {
    if p.r_ohm <= 0.0 {
        return i0 + (v - e_v) * dt / p.l_h;
    }
    let i_inf = (v - e_v) / p.r_ohm;
    i_inf + (i0 - i_inf) * (-dt * p.r_ohm / p.l_h).exp()
}

/// `(x_(k+1), y_k)`: the current after the control period from `x`, and its sample.
fn control_period(p: &RlPlant, w: &SwitchedPeriod, e_v: f64, x: f64, d: f64) -> (f64, f64) {
    let ivs = intervals(w, d);
    let ts = sample_s(w, d);
    let (mut i, mut y) = (x, x);
    for k in 0..w.periods_per_update.max(1) {
        for &(t0, t1, v) in &ivs {
            if k == 0 && ts > t0 && ts <= t1 {
                y = advance(p, i, v, e_v, ts - t0);
            }
            i = advance(p, i, v, e_v, t1 - t0);
        }
    }
    (i, y)
}

/// `∫ i dt` over `dt` from `i0` under `v` (exact; linear when R is 0).
fn charge(p: &RlPlant, i0: f64, v: f64, e_v: f64, dt: f64) -> f64 {
    if p.r_ohm <= 0.0 {
        return i0 * dt + 0.5 * (v - e_v) * dt * dt / p.l_h;
    }
    let i_inf = (v - e_v) / p.r_ohm;
    let tau = p.l_h / p.r_ohm;
    i_inf * dt + (i0 - i_inf) * tau * -(-dt / tau).exp_m1()
}

/// The periodic steady state at duty `d`: `(x0, a, c)`, the current at the update event
/// and the map's slopes `∂x_(k+1)/∂x_k`, `∂y_k/∂x_k` (both maps are affine in `x`).
fn steady_state(p: &RlPlant, w: &SwitchedPeriod, e_v: f64, d: f64) -> (f64, f64, f64) {
    let (f0, y0) = control_period(p, w, e_v, 0.0, d);
    let (f1, y1) = control_period(p, w, e_v, 1.0, d);
    let a = f1 - f0;
    (f0 / (1.0 - a), a, y1 - y0)
}

/// The sample's bias at compare duty `d` carrying the mean current `i_a` (the back-EMF set
/// as in [`switched_plant`]), A: the sample less the mean current of the PWM period it is
/// taken in, in the periodic steady state. Zero for straight ramps; the R–L's curvature
/// moves it (own derivation, exact exponentials).
pub fn sample_bias_a(p: &RlPlant, w: &SwitchedPeriod, d: f64, i_a: f64) -> f64 {
    let single = SwitchedPeriod {
        periods_per_update: 1,
        ..*w
    };
    let e_v = mean_v(&single, d) - p.r_ohm * i_a;
    let (x0, _, _) = steady_state(p, &single, e_v, d);
    let (_, y) = control_period(p, &single, e_v, x0, d);
    let (mut i, mut q) = (x0, 0.0);
    for (t0, t1, v) in intervals(&single, d) {
        q += charge(p, i, v, e_v, t1 - t0);
        i = advance(p, i, v, e_v, t1 - t0);
    }
    y - q / w.pwm_period_s
}

/// The duty step of the central differences.
const DUTY_STEP: f64 = 1e-6;

/// `(d, K, E)`: the duty kept two steps inside 0..1, the mean load voltage per unit duty and
/// the back-EMF at which the averaged circuit carries `i_a` (`E = v̄(d) − R·I`); `None`
/// where the pattern gives no voltage per unit duty or the plant has no inductance.
fn operating_point(p: &RlPlant, w: &SwitchedPeriod, d: f64, i_a: f64) -> Option<(f64, f64, f64)> {
    let h = DUTY_STEP;
    let d = d.clamp(2.0 * h, 1.0 - 2.0 * h);
    let k = (mean_v(w, d + h) - mean_v(w, d - h)) / (2.0 * h);
    if k.is_nan() || k.abs() == 0.0 || p.l_h <= 0.0 {
        return None;
    }
    Some((d, k, mean_v(w, d) - p.r_ohm * i_a))
}

/// The discrete plant at compare duty `d` carrying the mean current `i_a` (the back-EMF set
/// so that the averaged circuit carries it: `E = v̄(d) − R·I`). `None` where the pattern
/// gives no voltage per unit duty.
pub fn switched_plant(p: &RlPlant, w: &SwitchedPeriod, d: f64, i_a: f64) -> Option<DiscretePlant> {
    let (d, k, e_v) = operating_point(p, w, d, i_a)?;
    let h = DUTY_STEP;
    // The periodic steady state: x = F(x, d), F affine in x with slope a.
    let (x0, a, c) = steady_state(p, w, e_v, d);
    let (xp, yp) = control_period(p, w, e_v, x0, d + h);
    let (xm, ym) = control_period(p, w, e_v, x0, d - h);
    let b = (xp - xm) / (2.0 * h);
    let e = (yp - ym) / (2.0 * h);
    Some(DiscretePlant {
        a,
        b1: (c * b - e * a) / k,
        b0: e / k,
        period_s: w.pwm_period_s * f64::from(w.periods_per_update.max(1)),
    })
}

/// One half of an up-down PWM period at duty `d` (`top`: the half after the counter top),
/// its load-voltage intervals from the half's start.
fn half_intervals(w: &SwitchedPeriod, d: f64, top: bool) -> Vec<(f64, f64, f64)> {
    let half = 0.5 * w.pwm_period_s;
    let (lo, hi) = if top { (half, 2.0 * half) } else { (0.0, half) };
    intervals(w, d)
        .into_iter()
        .map(|(a, b, v)| (a.max(lo) - lo, b.min(hi) - lo, v))
        .filter(|(a, b, _)| b > a)
        .collect()
}

/// `(x_end, y)`: the current after one half period from `x`, and its sample half a dead
/// time after the half's start (the extreme's state's middle).
fn half_period(p: &RlPlant, w: &SwitchedPeriod, e_v: f64, x: f64, d: f64, top: bool) -> (f64, f64) {
    let ts = 0.5 * w.dead_s;
    let (mut i, mut y) = (x, x);
    for (t0, t1, v) in half_intervals(w, d, top) {
        if ts > t0 && ts <= t1 {
            y = advance(p, i, v, e_v, ts - t0);
        }
        i = advance(p, i, v, e_v, t1 - t0);
    }
    (i, y)
}

/// The discrete plant of a loop that samples and updates every half period of an up-down
/// count (`Carrier::Centre`, a shunt in series with the motor read at both extremes), at
/// compare duty `d` carrying the mean current `i_a`. The two halves are mirror images (on
/// then off after the bottom, off then on after the top) and their maps differ by the
/// R–L's decay over the duty's shift, `e^(±(2d − 1)·T/(2τ))` in `b`: the loop is
/// periodically time-varying, and its plant is taken as the two halves' mean linearisation
/// (own approximation, exact as `T/τ → 0`; the tests' register-level loop measures what it
/// leaves). `None` on another carrier or where the pattern gives no voltage per unit duty.
pub fn half_period_plant(
    p: &RlPlant,
    w: &SwitchedPeriod,
    d: f64,
    i_a: f64,
) -> Option<DiscretePlant> {
    if w.carrier != Carrier::Centre {
        return None;
    }
    let single = SwitchedPeriod {
        periods_per_update: 1,
        ..*w
    };
    let (d, k, e_v) = operating_point(p, &single, d, i_a)?;
    let h = DUTY_STEP;
    let (x_bottom, _, _) = steady_state(p, &single, e_v, d);
    let x_top = half_period(p, &single, e_v, x_bottom, d, false).0;
    let (mut a, mut b, mut c, mut e) = (0.0, 0.0, 0.0, 0.0);
    for (x, top) in [(x_bottom, false), (x_top, true)] {
        let run = |x: f64, d: f64| half_period(p, &single, e_v, x, d, top);
        let ((x1, y1), (x0, y0)) = (run(x + 1.0, d), run(x, d));
        let ((xp, yp), (xm, ym)) = (run(x, d + h), run(x, d - h));
        a += 0.5 * (x1 - x0);
        c += 0.5 * (y1 - y0);
        b += 0.5 * (xp - xm) / (2.0 * h);
        e += 0.5 * (yp - ym) / (2.0 * h);
    }
    Some(DiscretePlant {
        a,
        b1: (c * b - e * a) / k,
        b0: e / k,
        period_s: 0.5 * w.pwm_period_s,
    })
}

/// The bias of the samples at both extremes against their PWM period's mean current (as
/// [`sample_bias_a`]), A: the mean of the two, which is what an integrator fed both settles
/// on.
pub fn half_period_bias_a(p: &RlPlant, w: &SwitchedPeriod, d: f64, i_a: f64) -> f64 {
    let at = |share: f64| {
        let w = SwitchedPeriod {
            sample: SampleAt::Share(share),
            ..*w
        };
        sample_bias_a(p, &w, d, i_a)
    };
    0.5 * (at(0.0) + at(0.5))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::current_loop::LoopTiming;

    const MOTOR: RlPlant = RlPlant {
        r_ohm: 0.3,
        l_h: 400e-6,
    };

    fn period(carrier: Carrier, sample: SampleAt) -> SwitchedPeriod {
        SwitchedPeriod {
            pwm_period_s: 50e-6,
            periods_per_update: 1,
            carrier,
            v_on_v: 24.0,
            v_off_v: 0.0,
            sample,
            dead_s: 0.0,
        }
    }

    fn close(a: &DiscretePlant, b: &DiscretePlant, rel: f64) -> bool {
        let scale = a.b0.abs().max(a.b1.abs());
        (a.a - b.a).abs() < 1e-9
            && (a.b0 - b.b0).abs() < rel * scale
            && (a.b1 - b.b1).abs() < rel * scale
    }

    #[test]
    fn symmetric_samples_are_the_held_voltage_model() {
        // On an up-down count the bottom and the top read the averaged current there: the
        // held-voltage plant at τ = 0 and T/2 (to the ripple's curvature).
        for (share, tau) in [(0.0, 0.0), (0.5, 25e-6)] {
            let w = period(Carrier::Centre, SampleAt::Share(share));
            let exact = switched_plant(&MOTOR, &w, 0.4, 5.0).unwrap();
            let held = DiscretePlant::held(
                &MOTOR,
                &LoopTiming {
                    period_s: 50e-6,
                    sample_offset_s: tau,
                },
            );
            assert!(close(&exact, &held, 2e-3), "{exact:?} vs {held:?}");
        }
    }

    #[test]
    fn half_period_updates_are_the_held_model_at_half_the_period() {
        // Sampled at each extreme, updated at each: the held-voltage plant with T/2 and τ = 0
        // (b0 = 0, b1 = (1 − e^(−R·T/(2L)))/R), to the ripple's curvature and the halves'
        // mirror difference.
        let w = period(Carrier::Centre, SampleAt::Share(0.0));
        let exact = half_period_plant(&MOTOR, &w, 0.4, 5.0).unwrap();
        let held = DiscretePlant::held(
            &MOTOR,
            &LoopTiming {
                period_s: 25e-6,
                sample_offset_s: 0.0,
            },
        );
        assert!(close(&exact, &held, 2e-3), "{exact:?} vs {held:?}");
        assert_eq!(exact.period_s, 25e-6);
        // Not on an up-count.
        let edge = period(Carrier::Edge, SampleAt::OnMiddle);
        assert!(half_period_plant(&MOTOR, &edge, 0.4, 5.0).is_none());
    }

    #[test]
    fn an_up_count_on_time_sample_responds_to_its_own_compare_by_the_on_slope() {
        // y = x + (V − v̄)/L · d·T/2 to first order: ∂y/∂u = (1 − d)·T/(2L) per volt of v̄.
        let w = period(Carrier::Edge, SampleAt::OnMiddle);
        let p = switched_plant(&MOTOR, &w, 0.3, 5.0).unwrap();
        let expected = 0.7 * 50e-6 / (2.0 * 400e-6);
        assert!(
            (p.b0 / expected - 1.0).abs() < 0.02,
            "{} vs {expected}",
            p.b0
        );
    }

    #[test]
    fn a_straight_ramp_is_read_at_its_mean() {
        // Almost no R: straight ramps, the middle of either state is the period's mean.
        let straight = RlPlant {
            r_ohm: 1e-6,
            l_h: 400e-6,
        };
        for (carrier, sample) in [
            (Carrier::Centre, SampleAt::Share(0.0)),
            (Carrier::Centre, SampleAt::Share(0.5)),
            (Carrier::Edge, SampleAt::OnMiddle),
            (Carrier::Edge, SampleAt::OffMiddle),
            (Carrier::CentreUnipolar, SampleAt::Share(0.25)),
        ] {
            let w = period(carrier, sample);
            let bias = sample_bias_a(&straight, &w, 0.7, 5.0);
            assert!(bias.abs() < 1e-6, "{carrier:?} {sample:?}: {bias}");
        }
        // A short time constant bends the ramps: the bias grows with T/τ.
        let bent = RlPlant {
            r_ohm: 8.0,
            l_h: 400e-6,
        };
        let w = period(Carrier::Centre, SampleAt::Share(0.5));
        assert!(sample_bias_a(&bent, &w, 0.3, 1.0).abs() > 1e-3);
    }

    #[test]
    fn the_update_divider_multiplies_the_period() {
        let mut w = period(Carrier::Centre, SampleAt::Share(0.5));
        w.periods_per_update = 3;
        let p = switched_plant(&MOTOR, &w, 0.5, 2.0).unwrap();
        assert!((p.period_s - 150e-6).abs() < 1e-15);
        assert!((p.a - (-150e-6 * 0.3 / 400e-6_f64).exp()).abs() < 1e-12);
    }

    #[test]
    fn unipolar_legs_give_twice_the_bus_per_duty() {
        let w = period(Carrier::CentreUnipolar, SampleAt::Share(0.25));
        assert!((mean_v(&w, 0.7) - 0.4 * 24.0).abs() < 1e-9);
        assert!((mean_v(&w, 0.3) + 0.4 * 24.0).abs() < 1e-9);
        assert!(switched_plant(&MOTOR, &w, 0.7, 3.0).is_some());
    }
}
