//! The phase currents a sinusoidal three-phase plan claims, checked on the registers.
//!
//! The plan claims that legs commanded at its modulation index `m` (with its zero sequence
//! and its voltage lead over the back-EMF) make the motor carry the phase-current peak it
//! reports, with the ripple it reports. The check writes those commands into a timer the way
//! firmware does (one compare per leg per PWM period, the reference taken at the period's
//! centre), drives the motor through [`verify::verify_three_phase`] (complementary legs, the
//! dead time with its diodes, the switch drops, the back-EMF), and measures:
//! - the fundamental of the phase currents from their values at the counter top (the middle of
//!   the symmetric pattern, where the current equals its mean over the period: the pattern is
//!   even about that instant; common practice of regular-sampled PWM);
//! - the ripple: per PWM period, the largest swing of each phase current about its
//!   fundamental, at the instants where a leg changes state (the extremes lie there).
//!
//! **Tolerance.** The plan's averaged model makes up the dead time by its fundamental with
//! the current's sign per PWM period ([`crate::model::physics::three_phase::sinusoidal_point_with_drops`]);
//! where the ripple lets the current change sign within periods, and through the 5th and 7th
//! harmonics the dead time leaves, it misses by a few per cent. On 150 random designs (the
//! register-verifier test) the phase-current peak agreed within 5.6 % and the ripple within
//! 8.2 %, short of the 1 % single-phase plans meet: the check holds three-phase plans to
//! [`PEAK_REL`] and [`RIPPLE_REL`] (bounds of our own choice) and says so in its result.
//!
//! The finer timer of [`super::SUB_TICKS`] keeps the compare quantisation out of the figures;
//! its period is set so that a whole number of PWM periods makes one electrical period (it
//! moves the PWM frequency by at most half a period in the electrical period's count).

use super::{RegisterView, SUB_TICKS, TOLERANCES};
use crate::model::ThreePhaseCase;
use crate::plan::{CaseCheck, CaseOut, RegisterCheck, ThreePhaseOut};
use crate::timer::Alignment;
use crate::verify::{self, BridgeSwitches, SampleTrigger, ThreePhaseLoad, TimerRegisters};
use std::f64::consts::PI;

/// PWM periods per electrical period the check simulates (bounds of our own choice: below
/// the lower one the averaged model's claims are not meant to hold; above the upper one the
/// simulation costs more than a plan may take, and the fine timer would be far finer than
/// needed).
const PERIODS_PER_CYCLE: std::ops::RangeInclusive<f64> = 12.0..=6000.0;

/// Agreement held on the phase-current peak, as a fraction of the plan's (our own bound).
pub const PEAK_REL: f64 = 0.08;
/// Agreement held on the phase-current ripple peak to peak (our own bound).
pub const RIPPLE_REL: f64 = 0.12;

/// Checks the rated and highest-supply cases of a sinusoidal bridge.
pub(super) fn check(
    v: &RegisterView,
    regs: &TimerRegisters,
    t: &ThreePhaseOut,
    out: &mut RegisterCheck,
) {
    out.not_checked.push(format!(
        "three-phase phase currents are held to {:.0} % (peak) and {:.0} % (ripple), not the 1 % of single-phase plans: the averaged model's dead-time make-up is approximate",
        100.0 * PEAK_REL,
        100.0 * RIPPLE_REL
    ));
    for (name, tpc) in [("rated", &t.rated), ("high-bus", &t.high_bus)] {
        let Some(case) = v.cases.iter().find(|c| c.name == name) else {
            out.not_checked
                .push(format!("{name} case: not in the plan's case list"));
            continue;
        };
        match check_case(v, regs, t, tpc, case) {
            Ok(c) => {
                compare(case, tpc, &c, &mut out.disagreements);
                out.cases.push(c);
            }
            Err(why) => out
                .not_checked
                .push(format!("{name} case phase currents: {why}")),
        }
    }
}

/// Leg duties of the modulation law the plan states: `½(1 + m·sin(θ − 2πk/3) + z)`, `z` the
/// min-max zero sequence `−(max + min)/2` of the three references or 0 (written here from the
/// plan's words, not taken from the model).
fn leg_duties(m: f64, min_max: bool, theta: f64) -> [f64; 3] {
    let refs = [0.0, 1.0, 2.0].map(|k: f64| m * (theta - 2.0 * PI * k / 3.0).sin());
    let z = if min_max {
        let hi = refs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let lo = refs.iter().copied().fold(f64::INFINITY, f64::min);
        -0.5 * (hi + lo)
    } else {
        0.0
    };
    refs.map(|r| (0.5 * (1.0 + r + z)).clamp(0.0, 1.0))
}

/// The fine centre-aligned timer whose period is `1/(n·f_e)`.
fn fine_registers(regs: &TimerRegisters, n: f64, f_e_hz: f64) -> TimerRegisters {
    let tick_s = regs.tick_s / SUB_TICKS as f64;
    let half = (0.5 / (n * f_e_hz) / tick_s).round().max(1.0) as u64;
    TimerRegisters {
        tick_s,
        period_ticks: 2 * half,
        ..*regs
    }
}

fn check_case(
    v: &RegisterView,
    regs: &TimerRegisters,
    t: &ThreePhaseOut,
    tpc: &ThreePhaseCase,
    case: &CaseOut,
) -> Result<CaseCheck, String> {
    let (Some(m), Some(lead)) = (tpc.modulation_index, tpc.voltage_lead_rad) else {
        return Err("the plan records no modulation index or voltage lead".into());
    };
    if regs.alignment != Alignment::Centre {
        return Err("the check needs centre alignment".into());
    }
    let f_e = t.electrical_frequency_hz;
    let n = (1.0 / (regs.period_s() * f_e)).round();
    if !f_e.is_finite() || f_e <= 0.0 || !PERIODS_PER_CYCLE.contains(&n) {
        return Err(format!(
            "{n} PWM periods per electrical period, outside the {}..{} the check simulates",
            PERIODS_PER_CYCLE.start(),
            PERIODS_PER_CYCLE.end()
        ));
    }
    let fine = fine_registers(regs, n, f_e);
    let steps = fine.duty_steps() as f64;
    let min_max = t.zero_sequence.as_deref() == Some("min-max");
    let thetas: Vec<f64> = (0..n as usize)
        .map(|k| 2.0 * PI * (k as f64 + 0.5) / n)
        .collect();
    let compares: Vec<[u64; 3]> = thetas
        .iter()
        .map(|&th| leg_duties(m, min_max, th).map(|d| (d * steps).round() as u64))
        .collect();
    let load = ThreePhaseLoad {
        r_ohm: v.load.r_ohm,
        l_h: v.load.l_h,
        emf_peak_v: t.back_emf_phase_peak_v,
        emf_angle_rad: -lead,
    };
    let switches = BridgeSwitches {
        v_bus_v: case.v_bus_v,
        r_ds_on_ohm: v.load.r_ds_on_ohm,
        v_sd_v: v.load.v_sd_v,
    };
    let top = SampleTrigger {
        counter: fine.period_ticks / 2,
        counting_up: true,
    };
    let sim = verify::verify_three_phase(&fine, &compares, top, &load, &switches)
        .map_err(|e| format!("the verifier refused it: {e}"))?;
    let fundamentals = [0, 1, 2].map(|p| {
        let values: Vec<f64> = sim.samples.iter().map(|s| s.phase_a[p]).collect();
        fundamental(&values, &thetas, p)
    });
    let omega = 2.0 * PI * f_e;
    let ripple = ripple_pp_a(&sim.boundaries, fine.period_s(), |p, time_s| {
        let (amp, lag) = fundamentals[p];
        amp * (omega * time_s - 2.0 * PI * p as f64 / 3.0 - lag).sin()
    });
    let peak = compares.iter().flatten().copied().max().unwrap_or(0);
    Ok(CaseCheck {
        name: case.name.clone(),
        compare_duty: peak as f64 / steps,
        mean_a: fundamentals.iter().map(|f| f.0).sum::<f64>() / 3.0,
        ripple_pp_a: ripple,
        continuous: true,
        lowest_audible_line_hz: None,
        line_near_threshold: false,
    })
}

/// `(peak, lag)` of phase `p`'s fundamental `peak·sin(θ − 2πp/3 − lag)` from one value per
/// PWM period at the angles `thetas` (discrete Fourier transform at the fundamental).
fn fundamental(values: &[f64], thetas: &[f64], p: usize) -> (f64, f64) {
    let n = values.len() as f64;
    let (mut a, mut b) = (0.0, 0.0);
    for (&i, &th) in values.iter().zip(thetas) {
        let x = th - 2.0 * PI * p as f64 / 3.0;
        a += 2.0 / n * i * x.sin();
        b += 2.0 / n * i * x.cos();
    }
    (a.hypot(b), (-b).atan2(a))
}

/// Largest peak-to-peak swing, over the PWM periods and phases, of the phase currents about
/// `low(p, t)`, from the currents at the leg-state changes.
fn ripple_pp_a(
    boundaries: &[(f64, [f64; 3])],
    period_s: f64,
    low: impl Fn(usize, f64) -> f64,
) -> f64 {
    let mut worst = 0.0_f64;
    let mut lo = [f64::INFINITY; 3];
    let mut hi = [f64::NEG_INFINITY; 3];
    let mut current_period = None;
    for &(time_s, i) in boundaries {
        // A boundary at a period's end belongs to that period and starts the next.
        let k = (time_s / period_s * (1.0 - 1e-12)).floor().max(0.0) as u64;
        if current_period != Some(k) {
            if current_period.is_some() {
                worst = (0..3).map(|p| hi[p] - lo[p]).fold(worst, f64::max);
            }
            lo = [f64::INFINITY; 3];
            hi = [f64::NEG_INFINITY; 3];
            current_period = Some(k);
        }
        for p in 0..3 {
            let x = i[p] - low(p, time_s);
            lo[p] = lo[p].min(x);
            hi[p] = hi[p].max(x);
        }
    }
    (0..3).map(|p| hi[p] - lo[p]).fold(worst, f64::max)
}

/// The plan's phase-current peak and ripple against the verifier's.
fn compare(case: &CaseOut, tpc: &ThreePhaseCase, c: &CaseCheck, out: &mut Vec<String>) {
    let tol = &TOLERANCES;
    let allowed = (PEAK_REL * tpc.current_a).max(tol.mean_current_abs_a);
    if (c.mean_a - tpc.current_a).abs() > allowed {
        out.push(format!(
            "{} case: at modulation index {:.4} the registers drive a phase-current peak of {:.4} A, the plan says {:.4} A",
            case.name,
            tpc.modulation_index.unwrap_or(f64::NAN),
            c.mean_a,
            tpc.current_a
        ));
    }
    let plan_pp = case.ripple_peak_to_peak_a;
    let allowed = (RIPPLE_REL * plan_pp).max(tol.ripple_abs_a);
    if (c.ripple_pp_a - plan_pp).abs() > allowed {
        out.push(format!(
            "{} case: the registers give a phase-current ripple of {:.4} A peak to peak, the plan says {:.4} A",
            case.name, c.ripple_pp_a, plan_pp
        ));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A sine sampled at N angles: the DFT returns its peak and lag exactly.
    #[test]
    fn fundamental_of_a_sampled_sine() {
        let n = 40;
        let thetas: Vec<f64> = (0..n)
            .map(|k| 2.0 * PI * (k as f64 + 0.5) / n as f64)
            .collect();
        for p in 0..3 {
            let x = |th: f64| 3.0 * (th - 2.0 * PI * p as f64 / 3.0 - 0.4).sin() + 0.2;
            let values: Vec<f64> = thetas.iter().map(|&t| x(t)).collect();
            let (amp, lag) = fundamental(&values, &thetas, p);
            assert!(
                (amp - 3.0).abs() < 1e-12 && (lag - 0.4).abs() < 1e-12,
                "{amp} {lag}"
            );
        }
    }

    /// Min-max injection keeps the line-to-line references and the duties within 0..1 at the
    /// linear limit 2/√3 (Holtz, *Pulsewidth modulation for electronic power conversion*,
    /// Proc. IEEE 82(8), 1994).
    #[test]
    fn min_max_duties_at_the_linear_limit() {
        let m = 2.0 / 3f64.sqrt();
        for k in 0..360 {
            let th = (k as f64).to_radians();
            let d = leg_duties(m, true, th);
            assert!(d.iter().all(|x| (-1e-12..=1.0 + 1e-12).contains(x)));
            let line = d[0] - d[1];
            let want = 0.5 * m * (th.sin() - (th - 2.0 * PI / 3.0).sin());
            assert!((line - want).abs() < 1e-12);
        }
    }
}
