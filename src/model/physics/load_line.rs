//! The load line: the motor current at each speed of the operating range,
//! and the speeds at which a setting is judged over that range.
//!
//! A motor's current follows its torque (k_t = k_e in SI units, so
//! I = T/k_t; Hughes, *Electric Motors and Drives*, 2006, ch. 3, from
//! memory); the no-load (friction) current is neglected, a simplification of
//! our own that under-states light-load current and so errs towards the
//! discontinuous-conduction side the ripple model handles exactly.

use serde::Serialize;

/// How the load current follows the speed.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum LoadLine {
    /// The same current at every speed (a conveyor, a hoist, a winch).
    ConstantTorque { current_a: f64 },
    /// Torque ∝ speed², through the rated point: I = I_r·(n/n_r)². The
    /// affinity law of fans and centrifugal pumps (Karassik et al., *Pump
    /// Handbook*, 2008, ch. 2, from memory).
    FanLaw {
        rated_speed_rad_s: f64,
        rated_current_a: f64,
    },
    /// (speed rad/s, current A) points, speeds rising, joined by straight
    /// lines and held flat beyond the ends.
    Table { points: Vec<(f64, f64)> },
}

impl LoadLine {
    /// The motor current at `speed_rad_s`.
    pub fn current_at_a(&self, speed_rad_s: f64) -> f64 {
        match self {
            LoadLine::ConstantTorque { current_a } => *current_a,
            LoadLine::FanLaw {
                rated_speed_rad_s,
                rated_current_a,
            } => rated_current_a * (speed_rad_s / rated_speed_rad_s).powi(2),
            LoadLine::Table { points } => interpolate(points, speed_rad_s),
        }
    }

    /// The table's speeds strictly inside `lo..hi` (where the line bends).
    pub fn knots_within(&self, lo: f64, hi: f64) -> Vec<f64> {
        match self {
            LoadLine::Table { points } => points
                .iter()
                .map(|p| p.0)
                .filter(|n| *n > lo && *n < hi)
                .collect(),
            _ => Vec::new(),
        }
    }
}

/// Straight-line interpolation in a table of rising x, flat beyond its ends.
fn interpolate(points: &[(f64, f64)], x: f64) -> f64 {
    let Some(first) = points.first() else {
        return 0.0;
    };
    if x <= first.0 {
        return first.1;
    }
    for w in points.windows(2) {
        let ((x0, y0), (x1, y1)) = (w[0], w[1]);
        if x <= x1 {
            return y0 + (y1 - y0) * (x - x0) / (x1 - x0);
        }
    }
    points.last().map_or(0.0, |p| p.1)
}

/// The speeds the drive runs at and its load line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OperatingRange {
    pub speed_min_rad_s: f64,
    pub speed_max_rad_s: f64,
    /// The design's operating (rated) speed; back-EMF scales from it.
    pub rated_speed_rad_s: f64,
    pub load: LoadLine,
    /// The current held at standstill, where the drive holds its load at
    /// zero speed.
    pub hold_current_a: Option<f64>,
    /// (speed rad/s, share of the operating time) points, shares summing
    /// to 1; empty without a profile.
    pub profile: Vec<(f64, f64)>,
}

/// Intervals of the even scan over the range (our choice: with the ends,
/// the rated speed and the table's points, enough to bracket the one
/// ripple maximum in duty that the refinement then finds; see
/// [`refine_max`]).
pub const SCAN_INTERVALS: usize = 6;

impl OperatingRange {
    /// Whether the range is the one speed `n` (it adds nothing to a plan
    /// judged at `n`).
    pub fn is_single_speed(&self) -> bool {
        self.speed_max_rad_s <= self.speed_min_rad_s && self.hold_current_a.is_none()
    }

    /// The current at speed `n`: the load line's, and at standstill (n = 0)
    /// the held current where the drive holds.
    pub fn current_at_a(&self, speed_rad_s: f64) -> f64 {
        match self.hold_current_a {
            Some(i) if speed_rad_s <= 0.0 => i,
            _ => self.load.current_at_a(speed_rad_s),
        }
    }

    /// The speeds where the judged quantities can peak without a smooth
    /// maximum between scan points: the ends, the rated speed inside the
    /// range and the table's points (sorted, without repeats).
    pub fn corner_speeds(&self) -> Vec<f64> {
        let (lo, hi) = (self.speed_min_rad_s, self.speed_max_rad_s);
        let mut v = vec![lo, hi];
        if self.rated_speed_rad_s > lo && self.rated_speed_rad_s < hi {
            v.push(self.rated_speed_rad_s);
        }
        v.extend(self.load.knots_within(lo, hi));
        sorted_unique(v)
    }

    /// [`Self::corner_speeds`] with `intervals` even steps over the range.
    pub fn scan_speeds(&self, intervals: usize) -> Vec<f64> {
        let (lo, hi) = (self.speed_min_rad_s, self.speed_max_rad_s);
        let mut v = self.corner_speeds();
        let n = intervals.max(1);
        v.extend((1..n).map(|k| lo + (hi - lo) * k as f64 / n as f64));
        sorted_unique(v)
    }
}

/// Sorted, with values within 1e-9 (relative) of their neighbour dropped.
fn sorted_unique(mut v: Vec<f64>) -> Vec<f64> {
    v.sort_by(f64::total_cmp);
    v.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * b.abs().max(1e-9));
    v
}

/// Golden-section iterations of [`refine_max`]: the bracket shrinks by
/// 0.618 each, to 0.618^9 ≈ 1.3e-2 of its width, about 0.4 % of the range
/// with [`SCAN_INTERVALS`] (our choice: near a smooth maximum the value is
/// then within about 1e-4 of the peak, well inside the 0.5 % the range's
/// brute-force test allows).
pub const REFINE_ITERATIONS: usize = 9;

/// The maximum of `f` on `a..b` by golden-section search (Kiefer,
/// "Sequential minimax search for a maximum", *Proc. AMS*, 1953), for a
/// function unimodal on the bracket; returns the best point seen, so a
/// bracket that is not unimodal still yields a value no lower than its
/// ends. `f` returns `None` where it has no value (treated as lowest).
pub fn refine_max(mut f: impl FnMut(f64) -> Option<f64>, a: f64, b: f64) -> Option<(f64, f64)> {
    let g = 0.5 * (5f64.sqrt() - 1.0);
    let mut best: Option<(f64, f64)> = None;
    let keep = |x: f64, y: Option<f64>, best: &mut Option<(f64, f64)>| {
        let y = y.unwrap_or(f64::NEG_INFINITY);
        if best.is_none_or(|b| y > b.1) {
            *best = Some((x, y));
        }
        y
    };
    let (mut lo, mut hi) = (a.min(b), a.max(b));
    if hi <= lo {
        let y = keep(lo, f(lo), &mut best);
        return y.is_finite().then_some((lo, y));
    }
    let mut x1 = hi - g * (hi - lo);
    let mut x2 = lo + g * (hi - lo);
    let mut y1 = keep(x1, f(x1), &mut best);
    let mut y2 = keep(x2, f(x2), &mut best);
    for _ in 0..REFINE_ITERATIONS {
        if y1 >= y2 {
            hi = x2;
            (x2, y2) = (x1, y1);
            x1 = hi - g * (hi - lo);
            y1 = keep(x1, f(x1), &mut best);
        } else {
            lo = x1;
            (x1, y1) = (x2, y2);
            x2 = lo + g * (hi - lo);
            y2 = keep(x2, f(x2), &mut best);
        }
    }
    best.filter(|b| b.1.is_finite())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fan_law_passes_through_the_rated_point_and_quarters_at_half_speed() {
        let l = LoadLine::FanLaw {
            rated_speed_rad_s: 400.0,
            rated_current_a: 2.0,
        };
        assert_eq!(l.current_at_a(400.0), 2.0);
        assert!((l.current_at_a(200.0) - 0.5).abs() < 1e-12);
    }

    #[test]
    fn a_table_interpolates_and_holds_its_ends() {
        let l = LoadLine::Table {
            points: vec![(100.0, 1.0), (200.0, 3.0), (300.0, 2.0)],
        };
        assert_eq!(l.current_at_a(50.0), 1.0);
        assert!((l.current_at_a(150.0) - 2.0).abs() < 1e-12);
        assert!((l.current_at_a(250.0) - 2.5).abs() < 1e-12);
        assert_eq!(l.current_at_a(400.0), 2.0);
        assert_eq!(l.knots_within(100.0, 300.0), vec![200.0]);
    }

    #[test]
    fn the_scan_holds_the_ends_the_rated_speed_and_the_knots() {
        let r = OperatingRange {
            hold_current_a: None,
            profile: Vec::new(),
            speed_min_rad_s: 100.0,
            speed_max_rad_s: 300.0,
            rated_speed_rad_s: 210.0,
            load: LoadLine::Table {
                points: vec![(0.0, 1.0), (137.0, 3.0), (400.0, 2.0)],
            },
        };
        let s = r.scan_speeds(4);
        for n in [100.0, 137.0, 150.0, 200.0, 210.0, 250.0, 300.0] {
            assert!(s.contains(&n), "{n} missing from {s:?}");
        }
        assert!(s.windows(2).all(|w| w[0] < w[1]));
    }

    #[test]
    fn golden_section_finds_a_smooth_maximum() {
        let (x, y) = refine_max(|x| Some(1.0 - (x - 0.3).powi(2)), 0.0, 1.0).unwrap();
        assert!((x - 0.3).abs() < 2e-3 && (y - 1.0).abs() < 1e-5);
        // A collapsed bracket is its one point.
        assert_eq!(refine_max(Some, 2.0, 2.0), Some((2.0, 2.0)));
        // Nowhere a value: none.
        assert_eq!(refine_max(|_| None, 0.0, 1.0), None);
    }
}
