//! A setting judged over the design's operating range, not at one point:
//! the speeds of the range on the nominal and the highest supply (hottest
//! ambient), each with its load-line current and back-EMF; the lowest
//! supply for the highest duty.
//!
//! What is found where (see [`Evaluator::judge_range`]): the ripple's
//! largest value by a scan of the range refined by golden-section search
//! (ripple is unimodal in duty between scan points, peaking near one half
//! for a half-bridge; Mohan, Undeland, Robbins, *Power Electronics*, 2003,
//! ch. 7, from memory); audibility at every scanned and refined point; the
//! duty extremes, losses and junctions at the range's corner speeds (the
//! ends, the rated speed, the table's points), where they peak because
//! duty and current are monotonic or linear between them (own reasoning:
//! the needed voltage k_e·n + I(n)·R is linear or convex between corners,
//! and the losses rise with current).
//!
//! **Invariant:** pure; a range that collapses to the rated point gives
//! the rated point's figures bit for bit.

use serde::Serialize;

use crate::model::evaluate::{AcousticFigures, CaseResult, Evaluator, OperatingCase};
use crate::model::physics::acoustics;
use crate::model::physics::load_line::{self, OperatingRange, SCAN_INTERVALS};

/// A supply's scan is refined when its largest ripple comes within this
/// share of the largest of both (our choice: the scan brackets the maximum
/// to well under 3 % on smooth ripple curves).
const REFINE_SHARE: f64 = 0.97;

/// One point of the range at one supply.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RangePoint {
    pub speed_rad_s: f64,
    pub current_a: f64,
    pub v_bus_v: f64,
    /// The compare duty there (as [`CaseResult::compare_duty`]).
    pub compare_duty: f64,
}

/// A figure's worst value over the range and where it is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RangeExtreme {
    pub value: f64,
    pub at: RangePoint,
}

/// The ripple, compare duty and acoustics of one case, without losses.
#[derive(Debug, Clone)]
pub struct RippleSample {
    pub compare_duty: f64,
    pub ripple_pp_a: f64,
    pub acoustic: AcousticFigures,
}

/// What the range adds to a candidate.
#[derive(Debug, Clone, Serialize)]
pub struct RangeResult {
    /// Speeds scanned at each supply (refinement points not counted).
    pub speeds_scanned: usize,
    /// Largest ripple, peak to peak.
    pub ripple: Option<RangeExtreme>,
    /// Lowest compare duty (highest supply) and highest (lowest supply).
    pub duty_low: Option<RangeExtreme>,
    pub duty_high: Option<RangeExtreme>,
    /// A corner whose load the lowest supply cannot reach.
    pub unreachable: Option<RangePoint>,
    /// The audible verdict's worst point: a failing one, else the loudest,
    /// else the one with the most lines in avoided bands.
    pub audible: Option<(RangePoint, AcousticFigures)>,
    /// Largest total loss at the nominal supply, over the corner speeds and
    /// the largest ripple's speed.
    pub loss: Option<RangeExtreme>,
    /// The full cases (speed, case) at the corner speeds and the largest
    /// ripple's speed, nominal supply then highest.
    #[serde(skip)]
    pub corners_nominal: Vec<(f64, CaseResult)>,
    #[serde(skip)]
    pub corners_high_bus: Vec<(f64, CaseResult)>,
    /// The time profile's averages, where the range has one.
    pub profile: Option<ProfileFigures>,
}

/// A setting's figures averaged over the time profile at the nominal
/// supply: Σ share·figure over the profile's points.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProfileFigures {
    /// The stage's loss averaged over the operating time, W.
    pub mean_loss_w: f64,
    /// The hottest junction averaged over the operating time (the hottest
    /// device at each point), °C; `None` where a point runs away.
    pub mean_junction_c: Option<f64>,
    /// The operating energy per hour at that loss, J.
    pub energy_per_hour_j: f64,
}

impl RangeResult {
    /// The hottest (a runaway or a missing junction first) of `cases`.
    pub fn hottest<'a>(
        cases: impl IntoIterator<Item = &'a (f64, CaseResult)>,
    ) -> Option<&'a (f64, CaseResult)> {
        cases
            .into_iter()
            .max_by(|a, b| junction_key(&a.1).total_cmp(&junction_key(&b.1)))
    }

    /// Every whole case judged (speed, case): nominal supply, then highest.
    pub fn cases(&self) -> impl Iterator<Item = &(f64, CaseResult)> {
        self.corners_nominal.iter().chain(&self.corners_high_bus)
    }
}

/// A case's hottest junction, infinite on runaway or when it has none.
pub fn junction_key(c: &CaseResult) -> f64 {
    match (c.runaway.is_some(), c.junction_c) {
        (false, Some(t)) => t,
        _ => f64::INFINITY,
    }
}

impl Evaluator {
    /// The case at range speed `speed_rad_s` on the supply and ambient of
    /// `base`: the load line's current and the back-EMF scaled from the
    /// rated case's (k_e·n, linear in speed).
    pub fn range_case(
        &self,
        r: &OperatingRange,
        base: &OperatingCase,
        speed_rad_s: f64,
    ) -> OperatingCase {
        OperatingCase {
            name: base.name,
            v_bus_v: base.v_bus_v,
            t_ambient_c: base.t_ambient_c,
            load_current_a: r.current_at_a(speed_rad_s),
            back_emf_v: self.rated.back_emf_v * (speed_rad_s / r.rated_speed_rad_s),
        }
    }

    /// Run `f` on this evaluator at mechanical speed `speed_rad_s`: a
    /// three-phase bridge's electrical speed follows it (a clone with
    /// ω_e = p·n); the single-phase stages take the speed from the case's
    /// back-EMF alone.
    pub fn at_speed<T>(&self, speed_rad_s: f64, f: impl FnOnce(&Evaluator) -> T) -> T {
        match &self.three_phase {
            Some(tp) => {
                let mut e = self.clone();
                if let Some(t) = e.three_phase.as_mut() {
                    t.omega_e_rad_s = f64::from(tp.pole_pairs) * speed_rad_s;
                }
                f(&e)
            }
            None => f(self),
        }
    }

    /// Ripple, compare duty and acoustics at `case`, without the losses
    /// where the stage allows (single-phase, sinusoidal three-phase); a
    /// six-step bridge's come from its whole case.
    pub fn ripple_sample(
        &self,
        case: &OperatingCase,
        f_hz: f64,
        t_dead_s: f64,
    ) -> Option<RippleSample> {
        if let Some((compare_duty, ripple_pp_a, acoustic)) =
            self.sinusoidal_ripple_sample(case, f_hz, t_dead_s)
        {
            return Some(RippleSample {
                compare_duty,
                ripple_pp_a,
                acoustic,
            });
        }
        if self.three_phase.is_some() {
            // Six-step: the ripple follows the path resistance at the
            // junction temperatures, so it comes from the whole case.
            let c = self.case(case, f_hz, t_dead_s)?;
            return Some(RippleSample {
                compare_duty: c.compare_duty,
                ripple_pp_a: c.ripple.peak_to_peak_a,
                acoustic: c.acoustic,
            });
        }
        let (_, compare_duty, w) = self.duty_and_waveform(case, f_hz, t_dead_s)?;
        let acoustic = acoustics::assess(&w, &self.audible, &self.significance).ok()?;
        Some(RippleSample {
            compare_duty,
            ripple_pp_a: w.ripple_pp_a(),
            acoustic: acoustic.into(),
        })
    }

    /// [`Self::ripple_sample`] at range speed `n` on `base`'s supply.
    fn sample_at(
        &self,
        r: &OperatingRange,
        base: &OperatingCase,
        n: f64,
        f_hz: f64,
        t_dead_s: f64,
    ) -> Option<(RangePoint, RippleSample)> {
        let case = self.range_case(r, base, n);
        let s = self.at_speed(n, |e| e.ripple_sample(&case, f_hz, t_dead_s))?;
        Some((point(&case, n, s.compare_duty), s))
    }

    /// The setting at `f_hz` with dead time `t_dead_s` over the range `r`;
    /// `known` are the rated and high-bus cases already evaluated (reused
    /// where a corner is the rated point).
    pub fn judge_range(
        &self,
        r: &OperatingRange,
        f_hz: f64,
        t_dead_s: f64,
        known: [&CaseResult; 2],
    ) -> RangeResult {
        let speeds = r.scan_speeds(SCAN_INTERVALS);
        let scans: Vec<Vec<_>> = [self.rated, self.high_bus]
            .iter()
            .map(|base| {
                speeds
                    .iter()
                    .map(|&n| self.sample_at(r, base, n, f_hz, t_dead_s))
                    .collect()
            })
            .collect();
        let scan_max = |scan: &[Option<(RangePoint, RippleSample)>]| {
            scan.iter()
                .flatten()
                .map(|s| s.1.ripple_pp_a)
                .fold(f64::NEG_INFINITY, f64::max)
        };
        let top = scans
            .iter()
            .map(|s| scan_max(s))
            .fold(f64::NEG_INFINITY, f64::max);
        let mut samples = Vec::new();
        for (base, scan) in [self.rated, self.high_bus].iter().zip(scans) {
            // Refine a supply whose scan comes near the largest: the other
            // cannot hold the range's maximum.
            if scan_max(&scan) >= REFINE_SHARE * top
                && let Some(best) = self.refine_ripple(r, base, &speeds, &scan, f_hz, t_dead_s)
            {
                samples.push(best);
            }
            samples.extend(scan.into_iter().flatten());
            // Holding at standstill: its ripple, sound and duty count too.
            if r.hold_current_a.is_some() {
                samples.extend(self.sample_at(r, base, 0.0, f_hz, t_dead_s));
            }
        }
        let ripple = samples
            .iter()
            .max_by(|a, b| a.1.ripple_pp_a.total_cmp(&b.1.ripple_pp_a))
            .map(|(p, s)| RangeExtreme {
                value: s.ripple_pp_a,
                at: *p,
            });
        let duty_low = samples
            .iter()
            .filter(|(p, _)| p.v_bus_v == self.high_bus.v_bus_v)
            .min_by(|a, b| a.1.compare_duty.total_cmp(&b.1.compare_duty))
            .map(|(p, s)| RangeExtreme {
                value: s.compare_duty,
                at: *p,
            });
        let mut corners = r.corner_speeds();
        if r.hold_current_a.is_some() {
            corners.insert(0, 0.0);
        }
        let (duty_high, unreachable) = self.range_duty_high(r, &corners, f_hz, t_dead_s);
        // The loss and junction also peak inside the span where the ripple
        // does (the ripple's copper loss, the edges at I ± ΔI/2): evaluated
        // there too.
        let mut loss_speeds = corners.clone();
        if let Some(e) = &ripple
            && !corners.contains(&e.at.speed_rad_s)
        {
            loss_speeds.push(e.at.speed_rad_s);
        }
        let full = |base: &OperatingCase, known: &CaseResult| -> Vec<(f64, CaseResult)> {
            loss_speeds
                .iter()
                .filter_map(|&n| {
                    let case = self.range_case(r, base, n);
                    if case == known.case {
                        return Some((n, known.clone()));
                    }
                    let c = self.at_speed(n, |e| e.case(&case, f_hz, t_dead_s))?;
                    Some((n, c))
                })
                .collect()
        };
        let corners_nominal = full(&self.rated, known[0]);
        let corners_high_bus = full(&self.high_bus, known[1]);
        let profile = self.profile_figures(r, &corners_nominal, f_hz, t_dead_s);
        let loss = corners_nominal
            .iter()
            .max_by(|a, b| a.1.losses.total.total_cmp(&b.1.losses.total))
            .map(|(n, c)| RangeExtreme {
                value: c.losses.total,
                at: point(&c.case, *n, c.compare_duty),
            });
        RangeResult {
            speeds_scanned: speeds.len(),
            ripple,
            duty_low,
            duty_high,
            unreachable,
            audible: worst_audible(&samples),
            loss,
            corners_nominal,
            corners_high_bus,
            profile,
        }
    }

    /// Whole cases at the range's largest-ripple and lowest-duty points
    /// (named `range-ripple` and `range-lowest-duty`), for the plan's case
    /// list, where the register check simulates them on the written
    /// registers; a point that is the rated or high-bus case is left out.
    pub fn range_check_cases(
        &self,
        r: &OperatingRange,
        result: &RangeResult,
        f_hz: f64,
        t_dead_s: f64,
    ) -> Vec<CaseResult> {
        let named = [
            ("range-ripple", result.ripple.map(|e| e.at)),
            ("range-lowest-duty", result.duty_low.map(|e| e.at)),
        ];
        named
            .into_iter()
            .filter_map(|(name, at)| {
                let at = at?;
                let base = if at.v_bus_v == self.high_bus.v_bus_v {
                    self.high_bus
                } else {
                    self.rated
                };
                let case = OperatingCase {
                    name,
                    ..self.range_case(r, &base, at.speed_rad_s)
                };
                let same = |c: &OperatingCase| OperatingCase { name, ..*c } == case;
                if same(&self.rated) || same(&self.high_bus) {
                    return None;
                }
                self.at_speed(at.speed_rad_s, |e| e.case(&case, f_hz, t_dead_s))
            })
            .collect()
    }

    /// The time profile's averages at the nominal supply: each point's case
    /// (a corner's when already evaluated) weighted by its share.
    fn profile_figures(
        &self,
        r: &OperatingRange,
        corners: &[(f64, CaseResult)],
        f_hz: f64,
        t_dead_s: f64,
    ) -> Option<ProfileFigures> {
        if r.profile.is_empty() {
            return None;
        }
        let (mut loss, mut junction) = (0.0, Some(0.0));
        for &(n, share) in &r.profile {
            let known = corners
                .iter()
                .find(|(m, _)| *m == n)
                .map(|(_, c)| c.clone());
            let c = match known {
                Some(c) => c,
                None => {
                    let case = self.range_case(r, &self.rated, n);
                    self.at_speed(n, |e| e.case(&case, f_hz, t_dead_s))?
                }
            };
            loss += share * c.losses.total;
            let t = junction_key(&c);
            junction = junction.filter(|_| t.is_finite()).map(|j| j + share * t);
        }
        Some(ProfileFigures {
            mean_loss_w: loss,
            mean_junction_c: junction,
            energy_per_hour_j: loss * 3600.0,
        })
    }

    /// The largest ripple at `base`'s supply: the best scanned speed, then
    /// golden-section search between its neighbours.
    fn refine_ripple(
        &self,
        r: &OperatingRange,
        base: &OperatingCase,
        speeds: &[f64],
        scan: &[Option<(RangePoint, RippleSample)>],
        f_hz: f64,
        t_dead_s: f64,
    ) -> Option<(RangePoint, RippleSample)> {
        let k = scan
            .iter()
            .enumerate()
            .filter_map(|(k, s)| s.as_ref().map(|s| (k, s.1.ripple_pp_a)))
            .max_by(|a, b| a.1.total_cmp(&b.1))?
            .0;
        let lo = speeds[k.saturating_sub(1)];
        let hi = speeds[(k + 1).min(speeds.len() - 1)];
        let mut best: Option<(RangePoint, RippleSample)> = None;
        let ripple = |n: f64| {
            let s = self.sample_at(r, base, n, f_hz, t_dead_s)?;
            let y = s.1.ripple_pp_a;
            if best.as_ref().is_none_or(|b| y > b.1.ripple_pp_a) {
                best = Some(s);
            }
            Some(y)
        };
        load_line::refine_max(ripple, lo, hi)?;
        best
    }

    /// The highest compare duty over the corner speeds at the lowest
    /// supply, and the first corner it cannot reach.
    fn range_duty_high(
        &self,
        r: &OperatingRange,
        corners: &[f64],
        f_hz: f64,
        t_dead_s: f64,
    ) -> (Option<RangeExtreme>, Option<RangePoint>) {
        let mut high: Option<RangeExtreme> = None;
        for &n in corners {
            let case = self.range_case(r, &self.low_bus, n);
            match self.at_speed(n, |e| e.compare_duty_for_load(&case, f_hz, t_dead_s)) {
                Some(d) => {
                    if high.is_none_or(|h| d > h.value) {
                        high = Some(RangeExtreme {
                            value: d,
                            at: point(&case, n, d),
                        });
                    }
                }
                None => return (high, Some(point(&case, n, f64::NAN))),
            }
        }
        (high, None)
    }
}

fn point(case: &OperatingCase, speed_rad_s: f64, compare_duty: f64) -> RangePoint {
    RangePoint {
        speed_rad_s,
        current_a: case.load_current_a,
        v_bus_v: case.v_bus_v,
        compare_duty,
    }
}

/// The audible verdict's worst sample: a failing one before a passing one,
/// then the loudest, then the one with the most lines in avoided bands (the
/// first of equals).
fn worst_audible(samples: &[(RangePoint, RippleSample)]) -> Option<(RangePoint, AcousticFigures)> {
    // A failing sample before any passing one, then the loudest (A-weighted
    // level of its in-band lines), then the most lines in avoided bands.
    let key = |s: &(RangePoint, RippleSample)| {
        let a = &s.1.acoustic;
        (
            !a.pass,
            a.a_weighted_db.unwrap_or(f64::NEG_INFINITY),
            a.lines_in_avoided_bands_hz.len(),
        )
    };
    let pick = samples.iter().reduce(|best, s| {
        let (kb, ks) = (key(best), key(s));
        let louder = ks.1.total_cmp(&kb.1);
        let worse = ks.0.cmp(&kb.0).then(louder).then(ks.2.cmp(&kb.2));
        if worse == std::cmp::Ordering::Greater {
            s
        } else {
            best
        }
    })?;
    Some((pick.0, pick.1.acoustic.clone()))
}
