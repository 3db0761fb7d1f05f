//! A six-step plan's currents checked on the registers it writes.
//!
//! The plan claims that chopping at its duty, sector by sector as its commutation table says,
//! holds the line current it reports (the held phase's mean over each sector), with the
//! ripple and the lowest significant audible line it reports. The check writes that table
//! into a timer the way the emitted header tells firmware to (per sector: the chopping
//! channel at the duty's compare with only its chopping output enabled, or both under
//! complementary chopping; the held channel at compare 0 with only its low output enabled,
//! or at the duty steps with only its high output under low-side chopping; the floating
//! channel at compare 0 with both outputs disabled; the sector changed in the middle of the
//! chopping switch's off-time: at the counter top for a chopping high side, at the bottom
//! for a chopping low side, so that no pulse is split),
//! drives the motor through [`verify::verify_three_phase_drives`] (the floating phase's
//! diode freewheel after each commutation, its re-conduction when its terminal passes a
//! rail, the line current stopping in the off-times at light load, the dead time, the
//! switch drops, the back-EMF's own shape), and measures:
//! - the held phase's mean current over the sectors (the plan's line current);
//! - the ripple: per PWM period, the largest swing of the held phase's current about its
//!   low-frequency course (each period's mean, linear between period centres), over the
//!   periods of two-phase conduction (the floating phase blocked in the period and in both
//!   neighbours, all three in one sector). The plan's figure is the two conducting phases'
//!   line current; in the commutation freewheel three phases share the chopped leg's swing
//!   and the held phase's is smaller (two thirds, for equal phases), so those periods are
//!   not compared (stated in the result);
//! - the carrier groups of phase A's current up to the hearing limit
//!   ([`carrier_groups_rms_a`]) and the lowest significant one.
//!
//! The duty is checked on a timer with [`SUB_TICKS`] finer ticks over the same period (the
//! compare quantisation kept out of the figures), with the on-resistances the plan solved it
//! with (`r_ds_on_sides_ohm`), over `6·n` PWM periods, `n = f_sw/(6·f_e)` rounded: the
//! electrical period the plan simulates too (commutation at a PWM period boundary).
//!
//! **Invariant:** pure; a disagreement is data, the caller decides.

use crate::model::evaluate::ThreePhaseCase;
use crate::model::register_basis::{
    SUB_TICKS, TOLERANCES, carrier_groups_rms_a, line_disagreement, lowest_significant_group,
    period_means_a, three_phase_cases,
};
use crate::model::verify::{
    self, BridgeSwitches, EmfShape, LegCompare, LegDrive, SampleTrigger, ThreePhaseLoad,
    TimerRegisters,
};
use crate::output::plan::{CaseCheck, CaseOut, LoadOut, RegisterCheck, ThreePhaseOut};
use std::f64::consts::PI;

/// The parts of a six-step plan the check reads.
pub struct SixStepView<'a> {
    pub cases: &'a [CaseOut],
    pub load: &'a LoadOut,
    pub three_phase: &'a ThreePhaseOut,
    /// The hearing limit the audibility verdict used, Hz.
    pub hearing_limit_hz: f64,
    /// The plan avoids bands: its lowest line is not compared (as for sinusoidal plans).
    pub avoids_bands: bool,
}

/// Most PWM periods one electrical period may hold for the check to simulate it (our own
/// bound, the cost of a plan).
const MAX_SIMULATED_PERIODS: usize = 6000;

/// Carrier groups this close to the significance floor are not compared (our own bound):
/// phase A carries the line current's ripple in four sectors of six and a smaller one in the
/// commutation freewheel, so its groups lie some 1.8 dB or more below the line current's the
/// plan judges.
const LINE_GUARD_DB: f64 = 3.0;

/// Which switch chops at the duty.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Chop {
    High,
    Low,
    Complementary,
}

/// One sector's phases: positive rail, negative rail, floating (0 = A, 1 = B, 2 = C).
type Sector = [usize; 3];

/// Checks the rated, highest-supply and operating-range cases of a six-step plan.
pub fn check(v: &SixStepView, regs: &TimerRegisters, out: &mut RegisterCheck) {
    out.not_checked.push(
        "six-step ripple in the PWM periods of a commutation freewheel (three phases share the chopped leg's swing there, so the held phase's is smaller than the two-phase figure the plan gives; the periods of two-phase conduction are compared)"
            .into(),
    );
    for (tpc, case) in three_phase_cases(v.three_phase, v.cases, out) {
        let name = &case.name;
        match case_check(v, regs, tpc, case) {
            Ok(c) => {
                compare(v, case, tpc, &c, &mut out.disagreements);
                out.cases.push(c);
            }
            Err(why) => out
                .not_checked
                .push(format!("{name} case six-step currents: {why}")),
        }
    }
}

fn chop_of(t: &ThreePhaseOut) -> Result<Chop, String> {
    match t.chop.as_deref() {
        Some("high-side") => Ok(Chop::High),
        Some("low-side") => Ok(Chop::Low),
        Some("complementary") => Ok(Chop::Complementary),
        other => Err(format!(
            "the plan names no chopping scheme the check knows ({other:?})"
        )),
    }
}

fn shape_of(t: &ThreePhaseOut) -> Result<EmfShape, String> {
    match t.back_emf_shape.as_deref() {
        Some("sinusoidal") => Ok(EmfShape::Sinusoidal),
        Some("trapezoidal") => Ok(EmfShape::Trapezoidal),
        other => Err(format!("the plan names no back-EMF shape ({other:?})")),
    }
}

/// The forward direction's sectors from the plan's table, and the angle of phase A's
/// back-EMF where sector 0 starts, rad.
fn sectors_of(t: &ThreePhaseOut) -> Result<(Vec<Sector>, f64), String> {
    let table = t
        .six_step_table
        .as_ref()
        .ok_or("the plan has no commutation table")?;
    let phase = |name: &str| match name {
        "A" => Ok(0),
        "B" => Ok(1),
        "C" => Ok(2),
        _ => Err(format!("unknown phase {name:?} in the commutation table")),
    };
    let sectors = table
        .sectors
        .iter()
        .map(|row| {
            let f = &row.forward;
            Ok([
                phase(&f.positive)?,
                phase(&f.negative)?,
                phase(&f.floating)?,
            ])
        })
        .collect::<Result<Vec<Sector>, String>>()?;
    let start = table.sectors.first().map(|r| r.from_deg.to_radians());
    match (sectors.len(), start) {
        (6, Some(start)) => Ok((sectors, start)),
        _ => Err("the commutation table does not have six sectors".into()),
    }
}

/// The three legs' drives in a sector, the chopping switch on for `on` counts each side of
/// its pulse's centre (`steps` = the duty steps). The timeline's periods run from one
/// commutation instant to the next PWM period's, which lies in the middle of the chopping
/// switch's off-time: the counter top for a chopping high side (so its pulse, centred on
/// the counter bottom, is centred on the middle of the period here: the reference written
/// inverted, the same timer half a period later), the counter bottom for a chopping low
/// side.
fn sector_drives(s: Sector, chop: Chop, on: u64, steps: u64) -> [LegDrive; 3] {
    let [pos, neg, _] = s;
    let drive = |compare: LegCompare, high: bool, low: bool| LegDrive {
        compare,
        high_enabled: high,
        low_enabled: low,
    };
    let mut d = [drive(LegCompare::new(0), false, false); 3];
    match chop {
        Chop::High | Chop::Complementary => {
            let pulse_mid_period = LegCompare::inverted(steps - on);
            d[pos] = drive(pulse_mid_period, true, chop == Chop::Complementary);
            d[neg] = drive(LegCompare::new(0), false, true);
        }
        Chop::Low => {
            d[pos] = drive(LegCompare::new(steps), true, false);
            d[neg] = drive(LegCompare::new(steps - on), false, true);
        }
    }
    d
}

/// The held phase of each sector (the one whose switch is on all sector: the negative
/// phase, or the positive under low-side chopping) and the sign that makes its current the
/// line current.
fn held_phase(s: Sector, chop: Chop) -> (usize, f64) {
    match chop {
        Chop::Low => (s[0], 1.0),
        Chop::High | Chop::Complementary => (s[1], -1.0),
    }
}

fn case_check(
    v: &SixStepView,
    regs: &TimerRegisters,
    tpc: &ThreePhaseCase,
    case: &CaseOut,
) -> Result<CaseCheck, String> {
    let t = v.three_phase;
    let (chop, shape, (sectors, start_rad)) = (chop_of(t)?, shape_of(t)?, sectors_of(t)?);
    let duty = tpc.chop_duty.ok_or("the plan records no chopping duty")?;
    let [r_high, r_low] = tpc
        .r_ds_on_sides_ohm
        .ok_or("the plan records no on-resistances for the duty")?;
    let f_e = tpc.electrical_frequency_hz;
    let per_sector = (1.0 / (regs.period_s() * 6.0 * f_e)).round();
    if !(per_sector >= 1.0 && 6.0 * per_sector <= MAX_SIMULATED_PERIODS as f64) {
        return Err(format!(
            "{per_sector} PWM periods per sector, outside the 1..{} the check simulates",
            MAX_SIMULATED_PERIODS / 6
        ));
    }
    let n = per_sector as usize;
    let fine = TimerRegisters {
        tick_s: regs.tick_s / SUB_TICKS as f64,
        period_ticks: regs.period_ticks.saturating_mul(SUB_TICKS),
        ..*regs
    };
    let steps = fine.duty_steps();
    let on = ((duty * steps as f64).round().max(0.0) as u64).min(steps);
    let drives: Vec<[LegDrive; 3]> = (0..6 * n)
        .map(|k| sector_drives(sectors[k / n], chop, on, steps))
        .collect();
    let load = ThreePhaseLoad {
        r_ohm: v.load.r_ohm,
        l_h: v.load.l_h,
        emf_peak_v: t.k_e_v_s_per_rad * 2.0 * PI * f_e,
        emf_angle_rad: start_rad,
        emf_shape: shape,
    };
    let switches = BridgeSwitches {
        v_bus_v: case.v_bus_v,
        r_ds_on_ohm: r_high,
        r_ds_on_low_ohm: r_low,
        v_sd_v: v.load.v_sd_v,
    };
    let top = SampleTrigger {
        counter: fine.period_ticks / 2,
        counting_up: true,
    };
    let sim = verify::verify_three_phase_drives(&fine, &drives, top, &load, &switches, 1)
        .map_err(|e| format!("the verifier refused it: {e}"))?;
    let record = Record {
        boundaries: &sim.boundaries,
        period_s: fine.period_s(),
        per_sector: n,
        sectors: &sectors,
        chop,
    };
    let ripple = record
        .two_phase_ripple_pp_a()
        .ok_or("no PWM period of two-phase conduction to measure the ripple in")?;
    let f_sw = 1.0 / regs.period_s();
    let groups = (v.hearing_limit_hz / f_sw + 1e-9).floor() as u64;
    let (line, near) = if v.avoids_bands {
        (None, true)
    } else {
        let rms = carrier_groups_rms_a(&sim.boundaries, 6 * n as u64, 1, groups);
        lowest_significant_group(&rms, f_sw, LINE_GUARD_DB)
    };
    Ok(CaseCheck {
        name: case.name.clone(),
        compare_duty: on as f64 / steps as f64,
        mean_a: record.held_mean_a(),
        ripple_pp_a: ripple,
        continuous: !sim.currents_stopped,
        lowest_audible_line_hz: line,
        line_near_threshold: near,
    })
}

/// The verifier's record of one electrical period and how to read it.
struct Record<'a> {
    boundaries: &'a [(f64, [f64; 3])],
    period_s: f64,
    per_sector: usize,
    sectors: &'a [Sector],
    chop: Chop,
}

impl Record<'_> {
    fn sector_of_period(&self, k: usize) -> Sector {
        self.sectors[(k / self.per_sector) % 6]
    }

    /// The held phase's mean current over the sectors, signed as the line current: the
    /// trapezoid rule between the recorded instants (each piece an exponential arc far
    /// shorter than L/R, so nearly straight), each piece in the sector holding its middle.
    fn held_mean_a(&self) -> f64 {
        let (mut charge, mut time) = (0.0, 0.0);
        for w in self.boundaries.windows(2) {
            let ((t0, i0), (t1, i1)) = (w[0], w[1]);
            let k = (0.5 * (t0 + t1) / self.period_s).floor().max(0.0) as usize;
            let (p, sign) = held_phase(self.sector_of_period(k), self.chop);
            charge += sign * 0.5 * (i0[p] + i1[p]) * (t1 - t0);
            time += t1 - t0;
        }
        if time > 0.0 { charge / time } else { 0.0 }
    }

    /// The recorded instants of PWM period `k` (an instant on a period's edge belongs to
    /// both periods).
    fn points(&self, k: usize) -> impl Iterator<Item = &(f64, [f64; 3])> {
        let (a, b) = (k as f64 * self.period_s, (k + 1) as f64 * self.period_s);
        let slack = 1e-9 * self.period_s;
        self.boundaries
            .iter()
            .filter(move |(t, _)| *t >= a - slack && *t <= b + slack)
    }

    /// Period `k` is one of two-phase conduction: it and both neighbours lie in one sector,
    /// and that sector's floating phase carries no current in any of them.
    fn two_phase(&self, k: usize, periods: usize) -> bool {
        if k == 0 || k + 1 >= periods {
            return false;
        }
        let s = self.sector_of_period(k);
        let same = self.sector_of_period(k - 1) == s && self.sector_of_period(k + 1) == s;
        same && (k - 1..=k + 1).all(|j| self.points(j).all(|(_, i)| i[s[2]] == 0.0))
    }

    /// The largest swing over the periods of two-phase conduction of the held phase's
    /// current about its low-frequency course (the period means, linear between period
    /// centres); `None` when no period qualifies.
    fn two_phase_ripple_pp_a(&self) -> Option<f64> {
        let periods = 6 * self.per_sector;
        let means = period_means_a(self.boundaries, self.period_s, periods);
        let mut worst: Option<f64> = None;
        for k in (0..periods).filter(|&k| self.two_phase(k, periods)) {
            let (p, _) = held_phase(self.sector_of_period(k), self.chop);
            let (before, here, after) = (means[k - 1][p], means[k][p], means[k + 1][p]);
            let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
            for (t, i) in self.points(k) {
                let u = t / self.period_s - (k as f64 + 0.5);
                let course = if u < 0.0 {
                    here + u * (here - before)
                } else {
                    here + u * (after - here)
                };
                lo = lo.min(i[p] - course);
                hi = hi.max(i[p] - course);
            }
            worst = Some(worst.unwrap_or(0.0).max(hi - lo));
        }
        worst
    }
}

/// The plan's line current, ripple and lowest line against the registers'.
fn compare(
    v: &SixStepView,
    case: &CaseOut,
    tpc: &ThreePhaseCase,
    c: &CaseCheck,
    out: &mut Vec<String>,
) {
    let tol = &TOLERANCES;
    let rated = v.three_phase.rated.current_a.abs();
    let allowed = (tol.mean_current_rel * rated).max(tol.mean_current_abs_a);
    if (c.mean_a - tpc.current_a).abs() > allowed {
        out.push(format!(
            "{} case: at chopping duty {:.6} the registers hold a line current of {:.4} A over the sectors, the plan says {:.4} A",
            case.name,
            tpc.chop_duty.unwrap_or(f64::NAN),
            c.mean_a,
            tpc.current_a
        ));
    }
    let plan_pp = case.ripple_peak_to_peak_a;
    if (c.ripple_pp_a - plan_pp).abs() > (tol.ripple_rel * plan_pp).max(tol.ripple_abs_a) {
        out.push(format!(
            "{} case: the registers give a line-current ripple of {:.4} A peak to peak in two-phase conduction, the plan says {:.4} A",
            case.name, c.ripple_pp_a, plan_pp
        ));
    }
    out.extend(line_disagreement(c, case, "carrier group"));
}
