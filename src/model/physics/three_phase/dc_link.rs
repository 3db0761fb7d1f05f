//! One shunt in the DC link of a centre-aligned three-phase bridge, read twice per PWM period:
//! the two active vectors of the up count, the shortest vector a reading needs, and the compare
//! shifting that gives both vectors that length at every angle.
//!
//! Owns: the sorted legs and which phase current each vector puts through the shunt, the
//! minimum vector in counts, the shifted up- and down-count compares (each leg's on-time per
//! period kept), the two trigger counts, and the highest modulation index at which the
//! shifted compares fit the counter. Pure: no I/O.
//!
//! # What the shunt reads (common practice)
//!
//! The DC-link return carries the sum of the phase currents (out of the legs) of the legs
//! whose high side conducts. With the compares sorted `c_hi ≥ c_mid ≥ c_lo` and a leg high
//! while the counter is below its compare, the up count passes: all legs high (a zero vector,
//! no current), then from `c_lo` the low leg low and the others high (the shunt reads
//! `i_hi + i_mid = −i_lo`), from `c_mid` the high leg alone high (`+i_hi`), from `c_hi` all
//! low (a zero vector). Two readings give two phase currents, the third is their negative sum.
//! Reading the DC link once per active vector in this way is the single-sensor technique
//! reviewed by Blaabjerg, Pedersen, Jaeger and Thoegersen, "Single current sensor technique in
//! the DC link of three-phase PWM-VS inverters: a review and a novel solution", IEEE Trans.
//! Industry Applications 33(5), 1997 (cited from memory), which also moves the PWM pattern
//! where a vector is too short; the shifting rule below is our own.
//!
//! # The window (own derivation, as for the low-side shunts)
//!
//! A vector begins at its leg's reference edge and is settled a dead time later (the leg's
//! incoming switch turns on then, whichever way the current flows); it ends at the next
//! reference edge (the outgoing high side turns off there). The conversion is triggered
//! `lead = ⌈t_s/tick⌉` counts before the vector's end, so the acquisition ends at the edge,
//! and must start a dead time plus the settling after the vector's start: the vector needs
//! `n = lead + ⌈(t_dead + t_settle)/tick⌉` counts.
//!
//! # The shift (own rule)
//!
//! On the up count the middle leg's compare is held within `n..=P − n` and the others pushed
//! at least `n` away from it, `u_hi = max(c_hi, u_mid + n)`, `u_lo = min(c_lo, u_mid − n)`;
//! on the down count each leg gets `2c − u`, so its on-time per period, `u + d`, stays `2c` and
//! the period's mean voltage is the one asked for. Where `2c − u` falls outside `0..=P` (a
//! compare within `n/2` of a counter extreme while another is near it) the shift does not fit:
//! the reading is lost for that period. Between periods whose shifts differ the pulse around
//! the counter bottom, `d_(k−1) + u_k`, moves by the difference.

use serde::Serialize;

use super::inputs::ZeroSequence;
use super::sinusoidal::leg_duties;

/// The reading chain in counter ticks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct DcLinkTiming {
    /// Counts from the trigger to the vector's end: `⌈t_s/tick⌉`.
    pub lead_counts: u64,
    /// The shortest vector a reading needs, counts.
    pub min_vector_counts: u64,
}

/// The reading chain at a tick (module doc); `None` when the inputs are not finite or
/// negative.
pub fn dc_link_timing(
    tick_s: f64,
    settle_s: f64,
    sample_s: f64,
    dead_s: f64,
) -> Option<DcLinkTiming> {
    let ok = tick_s > 0.0 && settle_s >= 0.0 && sample_s >= 0.0 && dead_s >= 0.0;
    if !(ok && (tick_s + settle_s + sample_s + dead_s).is_finite()) {
        return None;
    }
    // A tolerance of a millionth of a tick keeps an exact whole number of ticks whole.
    let ceil = |s: f64| (s / tick_s - 1e-6).ceil().max(0.0) as u64;
    let lead = ceil(sample_s);
    Some(DcLinkTiming {
        lead_counts: lead,
        min_vector_counts: lead + ceil(dead_s + settle_s),
    })
}

/// One period's compares with both readings placed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ShiftedCompares {
    /// Each leg's compare while counting up and while counting down.
    pub up: [u64; 3],
    pub down: [u64; 3],
    /// The two trigger counts, matched counting up: the first reads `signs[0]·i[legs[0]]`,
    /// the second `signs[1]·i[legs[1]]`.
    pub triggers: [u64; 2],
    pub legs: [usize; 2],
    pub signs: [i8; 2],
}

/// The legs sorted by compare, highest first (ties by leg index).
fn sorted(c: [u64; 3]) -> [usize; 3] {
    let mut order = [0usize, 1, 2];
    order.sort_by(|&a, &b| c[b].cmp(&c[a]).then(a.cmp(&b)));
    order
}

/// The shifted compares of one period (module doc), `None` where the shift does not fit the
/// counter `0..=p` or the period cannot hold two vectors of `n` counts.
pub fn shift_compares(c: [u64; 3], p: u64, t: &DcLinkTiming) -> Option<ShiftedCompares> {
    let n = t.min_vector_counts;
    if 2 * n > p || c.iter().any(|&x| x > p) {
        return None;
    }
    let [hi, mid, lo] = sorted(c);
    let mut up = c;
    up[mid] = c[mid].clamp(n, p - n);
    up[hi] = c[hi].max(up[mid] + n);
    up[lo] = c[lo].min(up[mid] - n);
    let mut down = [0u64; 3];
    for k in 0..3 {
        down[k] = (2 * c[k]).checked_sub(up[k]).filter(|&d| d <= p)?;
    }
    Some(ShiftedCompares {
        up,
        down,
        triggers: [up[mid] - t.lead_counts, up[hi] - t.lead_counts],
        legs: [lo, hi],
        signs: [-1, 1],
    })
}

/// Angles scanned per electrical period (own choice: a degree; the compares' sort changes only
/// at the sector boundaries, which the grid includes, and between them the shift is monotone).
const ANGLES: usize = 360;

/// Whether every angle's compares shift to fit at modulation index `m` (leg duties of
/// `leg_duties`, compares `round(d·P)`).
pub fn fits_at(m: f64, zero_sequence: ZeroSequence, p: u64, t: &DcLinkTiming) -> bool {
    (0..ANGLES).all(|k| {
        let theta = std::f64::consts::TAU * k as f64 / ANGLES as f64;
        let c = leg_duties(m, zero_sequence, theta).map(|d| (d * p as f64).round() as u64);
        shift_compares(c, p, t).is_some()
    })
}

/// The highest modulation index up to `m_max` at which every angle's shift fits, on a grid of
/// a thousandth of `m_max` scanned up from zero (the first that fails ends it); `None` when
/// even zero modulation does not fit (the period holds no two vectors).
pub fn max_modulation(
    m_max: f64,
    zero_sequence: ZeroSequence,
    p: u64,
    t: &DcLinkTiming,
) -> Option<f64> {
    const STEPS: usize = 1000;
    if !fits_at(0.0, zero_sequence, p, t) {
        return None;
    }
    let mut best = 0.0;
    for k in 1..=STEPS {
        let m = m_max * k as f64 / STEPS as f64;
        if !fits_at(m, zero_sequence, p, t) {
            break;
        }
        best = m;
    }
    Some(best)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Hand-worked: 100 ns ticks, t_s 0.45 µs (lead ⌈4.5⌉ = 5), dead 0.3 µs + settle 1 µs
    // (13 counts): n = 18.
    const T: DcLinkTiming = DcLinkTiming {
        lead_counts: 5,
        min_vector_counts: 18,
    };

    #[test]
    fn the_timing_by_hand() {
        assert_eq!(dc_link_timing(100e-9, 1e-6, 0.45e-6, 0.3e-6), Some(T));
        // Whole ticks stay whole: 0.5 µs = 5 ticks.
        let t = dc_link_timing(100e-9, 1e-6, 0.5e-6, 0.3e-6).unwrap();
        assert_eq!((t.lead_counts, t.min_vector_counts), (5, 18));
        assert_eq!(dc_link_timing(0.0, 1e-6, 0.5e-6, 0.3e-6), None);
    }

    #[test]
    fn long_vectors_are_left_alone() {
        // P = 1000, compares 700/400/100: vectors 300 and 300 counts, no shift; the readings
        // −i_c at 400 − 5 and +i_a at 700 − 5.
        let s = shift_compares([700, 400, 100], 1000, &T).unwrap();
        assert_eq!((s.up, s.down), ([700, 400, 100], [700, 400, 100]));
        assert_eq!(s.triggers, [395, 695]);
        assert_eq!((s.legs, s.signs), ([2, 0], [-1, 1]));
    }

    #[test]
    fn short_vectors_are_pushed_apart_and_given_back_on_the_down_count() {
        // Compares a 500, b 505, c 498 (b high, a middle, c low; vectors of 2 and 5 counts):
        // up: b 518, a 500, c 482; down, 2c − u: b 492, a 500, c 514.
        let s = shift_compares([500, 505, 498], 1000, &T).unwrap();
        assert_eq!(s.up, [500, 518, 482]);
        assert_eq!(s.down, [500, 492, 514]);
        assert_eq!(s.triggers, [495, 513]);
        assert_eq!((s.legs, s.signs), ([2, 1], [-1, 1]));
        for k in 0..3 {
            assert_eq!(s.up[k] + s.down[k], 2 * [500, 505, 498][k]);
        }
        // The middle leg near the top is held at P − n: a 995, b 990, c 10 → b 982 on the up
        // count (998 down), a 1000 (990 down).
        let s = shift_compares([995, 990, 10], 1000, &T).unwrap();
        assert_eq!(s.up, [1000, 982, 10]);
        assert_eq!(s.down, [990, 998, 10]);
        // The middle leg within n/2 of the top: its down count would pass P.
        assert!(shift_compares([998, 995, 10], 1000, &T).is_none());
        // A period too short for two vectors.
        assert!(shift_compares([20, 18, 16], 30, &T).is_none());
    }

    #[test]
    fn the_modulation_limit_comes_from_the_middle_leg_near_a_rail() {
        // Min-max injection keeps the middle leg within ½(1 ± ¾·m)·P of the counter's ends
        // (0.933·P at the linear limit 2/√3): with n = 18 it never comes within n/2 of P = 500.
        let m_lin = 2.0 / 3f64.sqrt();
        assert_eq!(
            max_modulation(m_lin, ZeroSequence::MinMax, 500, &T),
            Some(m_lin)
        );
        // Sine references, P = 40 and n = 18: the middle leg reaches ½(1 + m/2)·P (tied with
        // the high leg at a sector boundary); its down count 2c − (P − n) passes P above
        // c = P − n/2 = 31, and round(½(1 + m/2)·40) reaches 32 at m = 1.15 (to the last digit).
        let m = max_modulation(1.2, ZeroSequence::None, 40, &T).unwrap();
        assert!((1.14..1.15).contains(&m), "{m}");
        assert!(fits_at(1.0, ZeroSequence::None, 40, &T));
        assert!(!fits_at(1.16, ZeroSequence::None, 40, &T));
        // No two vectors of 18 counts in 30.
        assert!(max_modulation(m_lin, ZeroSequence::MinMax, 30, &T).is_none());
    }
}
