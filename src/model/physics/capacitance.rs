//! The switch's capacitances as functions of voltage.
//!
//! Owns: the C_rss (= C_gd) curve, interpolated (`c_gd_f`) and integrated over
//! a Miller swing (`miller_integrals`), and the output capacitance C_oss(v) =
//! C_gd(v) + C_ds(v) with its drain-source junction law (`OutputCapacitance`).
//! The gate-charge transitions (`switching`) and the node-level edge
//! (`commutation`) both read them.

use std::borrow::Cow;

use super::params::SwitchModel;

/// Below this voltage the drain-source junction law is held constant, so the
/// power law's singularity at 0 V never enters a time step (own bound; the
/// charge below it is under 1 % of the total for any grading below 0.9).
pub(crate) const C_DS_FLOOR_V: f64 = 0.05;

/// The curve as given when it is already usable (every point finite and
/// positive, voltages increasing): the common case, borrowed, no copy.
fn clean_curve(curve: &[(f64, f64)]) -> Option<&[(f64, f64)]> {
    let ok = curve
        .iter()
        .all(|&(v, c)| v.is_finite() && c.is_finite() && v > 0.0 && c > 0.0)
        && curve.windows(2).all(|w| w[0].0 <= w[1].0);
    ok.then_some(curve)
}

/// The usable points of a curve, sorted by voltage.
fn cleaned_curve(curve: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut pts: Vec<(f64, f64)> = curve
        .iter()
        .copied()
        .filter(|&(v, c)| v.is_finite() && c.is_finite() && v > 0.0 && c > 0.0)
        .collect();
    pts.sort_by(|a, b| a.0.total_cmp(&b.0));
    pts
}

/// The usable points of a curve: borrowed when already clean (the common
/// case), else a cleaned copy.
fn usable_points(curve: &[(f64, f64)]) -> Cow<'_, [(f64, f64)]> {
    match clean_curve(curve) {
        Some(p) => Cow::Borrowed(p),
        None => Cow::Owned(cleaned_curve(curve)),
    }
}

/// C_gd (= C_rss) at `v_ds_v`.
///
/// From the `c_rss_curve` when it has data: interpolated log-log (a depletion
/// capacitance is close to a power law in V_DS, so log-log interpolation is exact
/// for C ∝ V^−n; own choice), clamped to the end points outside the curve (no
/// extrapolation). Without a curve: the single datasheet value `c_rss_f`.
pub fn c_gd_f(sw: &SwitchModel, v_ds_v: f64) -> f64 {
    let pts = usable_points(&sw.c_rss_curve);
    if pts.is_empty() {
        return sw.c_rss_f;
    }
    let (first, last) = (pts[0], pts[pts.len() - 1]);
    if v_ds_v <= first.0 {
        return first.1;
    }
    if v_ds_v >= last.0 {
        return last.1;
    }
    for w in pts.windows(2) {
        let ((v0, c0), (v1, c1)) = (w[0], w[1]);
        if v_ds_v >= v0 && v_ds_v <= v1 {
            if v1 <= v0 {
                return c0;
            }
            let x = (v_ds_v.ln() - v0.ln()) / (v1.ln() - v0.ln());
            return (c0.ln() + x * (c1.ln() - c0.ln())).exp();
        }
    }
    last.1
}

/// The C_rss curve prepared for repeated evaluation: its usable points with
/// their logarithms taken once, so [`CrssCurve::c_gd_f`] gives exactly what
/// [`c_gd_f`] gives (the same arithmetic on the same values) without cleaning
/// the curve and taking four logarithms at every call. The turn-off
/// integration evaluates C_gd several times per step.
#[derive(Debug, Clone)]
pub struct CrssCurve {
    /// (V, C, ln V, ln C) of each usable point, by voltage.
    points: Vec<[f64; 4]>,
    /// The single datasheet C_rss, used without a curve.
    c_rss_f: f64,
}

impl CrssCurve {
    /// The prepared curve of `sw`.
    pub fn of_switch(sw: &SwitchModel) -> Self {
        CrssCurve {
            points: usable_points(&sw.c_rss_curve)
                .iter()
                .map(|&(v, c)| [v, c, v.ln(), c.ln()])
                .collect(),
            c_rss_f: sw.c_rss_f,
        }
    }

    /// C_gd at `v_ds_v`, as [`c_gd_f`], given ln `v_ds_v` (for a caller
    /// that has it already; only read between the curve's points).
    pub fn c_gd_with_ln_f(&self, v_ds_v: f64, ln_v: f64) -> f64 {
        let pts = &self.points;
        let (Some(first), Some(last)) = (pts.first(), pts.last()) else {
            return self.c_rss_f;
        };
        if v_ds_v <= first[0] {
            return first[1];
        }
        if v_ds_v >= last[0] {
            return last[1];
        }
        for w in pts.windows(2) {
            let (p0, p1) = (w[0], w[1]);
            if v_ds_v >= p0[0] && v_ds_v <= p1[0] {
                if p1[0] <= p0[0] {
                    return p0[1];
                }
                let x = (ln_v - p0[2]) / (p1[2] - p0[2]);
                return (p0[3] + x * (p1[3] - p0[3])).exp();
            }
        }
        last[1]
    }

    /// C_gd at `v_ds_v`, as [`c_gd_f`].
    pub fn c_gd_f(&self, v_ds_v: f64) -> f64 {
        self.c_gd_with_ln_f(v_ds_v, v_ds_v.ln())
    }
}

/// `(∫C dv, ∫v·C dv)` of the power law through `(v0, c0)` and `(v1, c1)`,
/// C = c0·(v/v0)^n, over `[a, b]` (closed form: ∫v^m dv = (b^(m+1) − a^(m+1))/(m+1),
/// ln(b/a) for m = −1). Written with C at the bounds, ∫C dv = (b·C(b) −
/// a·C(a))/(n+1) and ∫v·C dv = (b²·C(b) − a²·C(a))/(n+2), so two powers
/// serve both integrals.
fn power_law_integrals(p0: (f64, f64), p1: (f64, f64), a: f64, b: f64) -> (f64, f64) {
    let ((v0, c0), (v1, c1)) = (p0, p1);
    let n = if v1 > v0 {
        (c1 / c0).ln() / (v1 / v0).ln()
    } else {
        0.0
    };
    let (c_a, c_b) = (c0 * (a / v0).powf(n), c0 * (b / v0).powf(n));
    // ∫v^(j−1)·C dv for j = 1, 2; the logarithmic case when n + j = 0.
    let integral = |j: i32| {
        let p = n + f64::from(j);
        if p.abs() < 1e-9 {
            c0 * v0.powf(-n) * (b / a).ln()
        } else {
            (b.powi(j) * c_b - a.powi(j) * c_a) / p
        }
    };
    (integral(1), integral(2))
}

/// Miller integrals of the C_rss (= C_gd) curve while V_DS swings between
/// `v_lo_v` and `v_hi_v` with the gate held at the plateau `v_plateau_v`:
/// `(Q_gd = ∫C_gd(v − V_plt) dv, W_gd = ∫v·C_gd(v − V_plt) dv)`. `None` without
/// a curve.
///
/// Why the shift: C_gd is a function of the drain-gate voltage V_DG = V_DS −
/// V_GS, while the datasheet C_rss curve is taken at V_GS = 0 (V_DG = V_DS);
/// on the plateau V_DG = V_DS − V_plt, and below V_DS = V_plt the gate-drain
/// overlap is accumulated and C_gd is at its largest (the curve's low-voltage
/// end is used there). This is own reasoning from the definition of C_rss
/// (the gate-charge note gives the curve at V_GS = 0), confirmed by the ngspice
/// reference.
///
/// The curve is the one `c_gd_f` interpolates (log-log between points, i.e. a
/// power law per segment, integrated in closed form; constant beyond the end
/// points). Q_gd is the charge the gate current moves during the swing; W_gd
/// gives the crossover energy (`miller_energy_j`). Why integrals: C_gd rises
/// by one to two decades as V_DS falls, so the two-point mean of Graovac 2006
/// overstates the charge and the linear ramp overstates the energy; Ren, Xu,
/// Zhou, Lee, *Analytical Loss Model of Power MOSFET*, IEEE Trans. Power
/// Electronics 21(2), 2006, model the nonlinear C_gd for the same reason (from
/// memory). Q = ∫C(v) dv is the definition of charge on a nonlinear
/// capacitance (the gate-charge note).
pub fn miller_integrals(
    sw: &SwitchModel,
    v_lo_v: f64,
    v_hi_v: f64,
    v_plateau_v: f64,
) -> Option<(f64, f64)> {
    let pts = usable_points(&sw.c_rss_curve);
    if pts.is_empty() || !(v_lo_v.is_finite() && v_hi_v.is_finite() && v_plateau_v.is_finite()) {
        return None;
    }
    // Integrate over u = v − V_plt; W = ∫(u + V_plt)·C(u) du = W_u + V_plt·Q_u.
    let shift = v_plateau_v.max(0.0);
    let (lo, hi) = (v_lo_v.max(0.0) - shift, v_hi_v.max(0.0) - shift);
    if hi <= lo {
        return Some((0.0, 0.0));
    }
    let (first, last) = (pts[0], pts[pts.len() - 1]);
    let mut q = 0.0;
    let mut w = 0.0;
    let mut flat = |c: f64, a: f64, b: f64| {
        if b > a {
            q += c * (b - a);
            w += 0.5 * c * (b * b - a * a);
        }
    };
    flat(first.1, lo, hi.min(first.0));
    flat(last.1, lo.max(last.0), hi);
    for seg in pts.windows(2) {
        let (a, b) = (lo.max(seg[0].0), hi.min(seg[1].0));
        if b > a {
            let (dq, dw) = power_law_integrals(seg[0], seg[1], a, b);
            q += dq;
            w += dw;
        }
    }
    Some((q, w + shift * q))
}

/// Output capacitance C_oss(v) = C_gd(v) + C_ds(v) of a switch.
///
/// C_gd is the C_rss curve (`switching::c_gd_f`); C_ds, the drain-body
/// junction, follows the power law C_ds(v) = C_ds(V_spec)·(V_spec/v)^m of a
/// depletion capacitance (Sze, Ng, *Physics of Semiconductor Devices*, 3rd ed.,
/// 2007, ch. 2: m = ½ for an abrupt junction, ⅓ for a linearly graded one; from
/// memory). C_ds(V_spec) = C_oss − C_rss at the capacitance table's voltage.
/// The grading m is fitted to the datasheet E_oss when one is given (the
/// energy of C_ds is E_oss less the C_gd curve's share), else to Q_oss when
/// it comes with its test voltage (likewise less the C_gd charge); otherwise
/// m = ½.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputCapacitance {
    /// C_ds at `v_spec_v`.
    pub c_ds_spec_f: f64,
    /// Voltage of the capacitance table.
    pub v_spec_v: f64,
    /// Grading exponent m.
    pub grading: f64,
}

impl OutputCapacitance {
    /// The law of `sw`'s output capacitance.
    pub fn of_switch(sw: &SwitchModel) -> Self {
        let v_spec = sw.c_oss_at_v_ds_v.max(C_DS_FLOOR_V);
        let c_ds_spec = (sw.c_oss_f - c_gd_f(sw, v_spec)).max(0.0);
        let mut law = OutputCapacitance {
            c_ds_spec_f: c_ds_spec,
            v_spec_v: v_spec,
            grading: 0.5,
        };
        let fitted = match (
            sw.e_oss_j,
            sw.e_oss_at_v_ds_v,
            sw.q_oss_c,
            sw.q_oss_at_v_ds_v,
        ) {
            (Some(e_oss), Some(v_e), _, _) => {
                let (_, w_gd) = gd_integrals(sw, v_e);
                law.grading_for(|m| law.c_ds_energy_j(v_e, m), e_oss - w_gd)
            }
            (_, _, Some(q_oss), Some(v_q)) => {
                let (q_gd, _) = gd_integrals(sw, v_q);
                law.grading_for(|m| law.c_ds_charge_c(v_q, m), q_oss - q_gd)
            }
            _ => None,
        };
        if let Some(m) = fitted {
            law.grading = m;
        }
        law
    }

    /// The energy stored in the whole output capacitance charged to `v_v`,
    /// ∫₀^V v·(C_gd + C_ds) dv: the C_rss curve's share plus the junction's.
    pub fn energy_j(&self, sw: &SwitchModel, v_v: f64) -> f64 {
        gd_integrals(sw, v_v).1 + self.c_ds_energy_j(v_v, self.grading)
    }

    /// The charge of the whole output capacitance charged to `v_v`,
    /// Q_oss(V) = ∫₀^V (C_gd + C_ds) dv.
    pub fn charge_c(&self, sw: &SwitchModel, v_v: f64) -> f64 {
        gd_integrals(sw, v_v).0 + self.c_ds_charge_c(v_v, self.grading)
    }

    /// Q_ds(V) = ∫₀^V C_ds dv = C_spec·V_spec^m·V^(1−m)/(1 − m) (the power
    /// law integrated; the floor's share is neglected).
    pub fn c_ds_charge_c(&self, v_v: f64, grading: f64) -> f64 {
        let v = v_v.max(0.0);
        self.c_ds_spec_f * self.v_spec_v.powf(grading) * v.powf(1.0 - grading) / (1.0 - grading)
    }

    /// C_ds at `v_v`.
    pub fn c_ds_f(&self, v_v: f64) -> f64 {
        self.c_ds_spec_f * (self.v_spec_v / v_v.max(C_DS_FLOOR_V)).powf(self.grading)
    }

    /// E_ds(V) = ∫₀^V v·C_ds dv = C_spec·V_spec^m·V^(2−m)/(2 − m) (the power
    /// law integrated; the floor's share is neglected).
    pub fn c_ds_energy_j(&self, v_v: f64, grading: f64) -> f64 {
        let v = v_v.max(0.0);
        self.c_ds_spec_f * self.v_spec_v.powf(grading) * v.powf(2.0 - grading) / (2.0 - grading)
    }

    /// The charge the drain–body junction gives back while its forward bias
    /// falls from `v_f_v` to zero, C.
    ///
    /// The power law is read as the depletion law C_j(v) = C_j0·(1 + v/φ)^−m
    /// with C_j0 = C_ds(φ) (the two agree where v ≫ φ): up to FC·φ forward it
    /// integrates to C_j0·φ/(1 − m)·(1 − (1 − u/φ)^(1−m)); beyond, C_j is
    /// continued linearly, C_j0·(1 − FC)^−(1+m)·(1 − FC·(1 + m) + m·u/φ)
    /// (the depletion charge of L. W. Nagel, *SPICE2: A Computer Program to
    /// Simulate Semiconductor Circuits*, memorandum, UC Berkeley, 1975, with
    /// FC = ½; from memory). φ is a silicon junction's typical built-in
    /// potential, 0.7 V (from memory; own choice).
    pub fn forward_junction_charge_c(&self, v_f_v: f64) -> f64 {
        const PHI_V: f64 = 0.7;
        const FC: f64 = 0.5;
        let (m, u) = (self.grading, v_f_v.max(0.0));
        let c_j0 = self.c_ds_f(PHI_V);
        let depletion = |u: f64| c_j0 * PHI_V / (1.0 - m) * (1.0 - (1.0 - u / PHI_V).powf(1.0 - m));
        let u_c = FC * PHI_V;
        if u <= u_c {
            return depletion(u);
        }
        let k = c_j0 / (1.0 - FC).powf(1.0 + m);
        let linear = |u: f64| k * ((1.0 - FC * (1.0 + m)) * u + m * u * u / (2.0 * PHI_V));
        depletion(u_c) + linear(u) - linear(u_c)
    }

    /// The grading in [0, 0.9] at which `integral(m)` (C_ds's energy or
    /// charge up to a test voltage, both rising with m while the test voltage
    /// is not far below V_spec) equals `target`, by bisection; `None` when the
    /// target is not positive or lies outside that range (the default ½ is
    /// then kept: own choice, the data contradict a junction).
    fn grading_for(&self, integral: impl Fn(f64) -> f64, target: f64) -> Option<f64> {
        let f = |m: f64| integral(m) - target;
        let (mut lo, mut hi) = (0.0, 0.9);
        if target.is_nan() || target <= 0.0 || f(lo) * f(hi) > 0.0 {
            return None;
        }
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if f(lo) * f(mid) <= 0.0 {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        Some(0.5 * (lo + hi))
    }
}

/// (∫₀^V C_gd dv, ∫₀^V v·C_gd dv): the C_rss curve's share of the output
/// charge and energy, or the single C_rss taken as constant without a curve.
fn gd_integrals(sw: &SwitchModel, v_v: f64) -> (f64, f64) {
    miller_integrals(sw, 0.0, v_v, 0.0).unwrap_or((sw.c_rss_f * v_v, 0.5 * sw.c_rss_f * v_v * v_v))
}

/// (Q_oss(V), E_oss(V)) of the switch's output-capacitance law, remembered per
/// thread (exactly the law's figures): fitting the law and
/// integrating the C_rss curve at every edge of every loss evaluation would
/// cost the search an order of magnitude in time.
pub fn output_charge_memo(sw: &SwitchModel, v_v: f64) -> (f64, f64) {
    thread_local! {
        static MEMO: Memo<(f64, f64)> = const { std::cell::RefCell::new(MemoSlots::new()) };
    }
    remembered(&MEMO, sw, v_v.to_bits(), || {
        let law = law_memo(sw);
        (law.charge_c(sw, v_v), law.energy_j(sw, v_v))
    })
}

/// The switch's output-capacitance law, remembered per thread.
pub fn law_memo(sw: &SwitchModel) -> OutputCapacitance {
    thread_local! {
        static MEMO: Memo<OutputCapacitance> = const { std::cell::RefCell::new(MemoSlots::new()) };
    }
    remembered(&MEMO, sw, 0, || OutputCapacitance::of_switch(sw))
}

/// A thread's recent results, each with the switch and the bits of the
/// number it was computed for, and the slot the next new result takes.
pub type Memo<T> = std::cell::RefCell<MemoSlots<T>>;

/// The slots of a [`Memo`]: filled in turn, then each new result replaces the
/// oldest (a ring: nothing moves on a replacement).
pub struct MemoSlots<T> {
    slots: Vec<(SwitchModel, u64, T)>,
    next: usize,
}

impl<T> MemoSlots<T> {
    pub const fn new() -> Self {
        MemoSlots {
            slots: Vec::new(),
            next: 0,
        }
    }
}

impl<T> Default for MemoSlots<T> {
    fn default() -> Self {
        Self::new()
    }
}

/// `compute()` for (`sw`, `key`), or the value remembered for an equal pair
/// (the switch compared field by field); the oldest of 64 entries makes way.
pub fn remembered<T: Copy>(
    memo: &'static std::thread::LocalKey<Memo<T>>,
    sw: &SwitchModel,
    key: u64,
    compute: impl FnOnce() -> T,
) -> T {
    const SIZE: usize = 64;
    let hit = memo.with(|m| {
        m.borrow()
            .slots
            .iter()
            .find(|(k, b, _)| *b == key && k == sw)
            .map(|e| e.2)
    });
    if let Some(x) = hit {
        return x;
    }
    let x = compute();
    memo.with(|m| {
        let mut m = m.borrow_mut();
        let at = m.next;
        m.next = (at + 1) % SIZE;
        if m.slots.len() < SIZE {
            m.slots.push((sw.clone(), key, x));
        } else {
            m.slots[at] = (sw.clone(), key, x);
        }
    });
    x
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The junction's forward charge in closed form against a midpoint-rule
    /// integral of the same piecewise capacitance (an independent numeric
    /// method), both sides of the linearisation point FC·φ = 0.35 V.
    #[test]
    fn forward_junction_charge_matches_its_integral() {
        let law = OutputCapacitance {
            c_ds_spec_f: 400e-12,
            v_spec_v: 25.0,
            grading: 0.45,
        };
        let (phi, fc, m) = (0.7_f64, 0.5_f64, 0.45_f64);
        let c_j0 = law.c_ds_f(phi);
        let c_fwd = |u: f64| {
            if u <= fc * phi {
                c_j0 * (1.0 - u / phi).powf(-m)
            } else {
                c_j0 / (1.0 - fc).powf(1.0 + m) * (1.0 - fc * (1.0 + m) + m * u / phi)
            }
        };
        for v_f in [0.2, 0.35, 0.6, 0.9] {
            let n = 20_000;
            let h = v_f / n as f64;
            let numeric: f64 = (0..n).map(|k| c_fwd((k as f64 + 0.5) * h) * h).sum();
            let closed = law.forward_junction_charge_c(v_f);
            assert!(
                (closed / numeric - 1.0).abs() < 1e-6,
                "{v_f}: {closed:e} vs {numeric:e}"
            );
        }
        assert_eq!(law.forward_junction_charge_c(0.0), 0.0);
        assert_eq!(law.forward_junction_charge_c(-1.0), 0.0);
    }

    /// The prepared curve gives C_gd bit for bit as `c_gd_f`, with a curve
    /// (clean or needing a sort), and without one.
    #[test]
    fn prepared_curve_is_c_gd_f_exactly() {
        use crate::model::physics::params::fixtures::{curved_switch, example_switch};
        let mut unsorted = curved_switch();
        unsorted.c_rss_curve.reverse();
        for sw in [curved_switch(), example_switch(), unsorted] {
            let prepared = CrssCurve::of_switch(&sw);
            for k in 0..2000 {
                let v = 1e-3 * 1.01_f64.powi(k);
                assert_eq!(
                    prepared.c_gd_f(v).to_bits(),
                    c_gd_f(&sw, v).to_bits(),
                    "{v} V"
                );
            }
        }
    }
    use crate::model::physics::params::fixtures::example_switch;

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    /// Miller integrals against closed forms. C = k·v^−½ (exact under the
    /// log-log interpolation): with no shift Q = 2k(√b − √a), W = ⅔k(b^1.5 −
    /// a^1.5); with the plateau shift V_plt the variable is u = v − V_plt, so
    /// Q = 2k(√u_b − √u_a), W = k[⅔u^1.5 + 2·V_plt·u^½] between u_a and u_b.
    #[test]
    fn miller_integrals_power_law_closed_form() {
        let k = 300e-12;
        let mut sw = example_switch();
        sw.c_rss_curve = [1.0, 3.0, 10.0, 30.0, 100.0]
            .iter()
            .map(|&v| (v, k / f64::sqrt(v)))
            .collect();
        let (q, w) = miller_integrals(&sw, 5.0, 50.0, 0.0).unwrap();
        let q0 = 2.0 * k * (50.0_f64.sqrt() - 5.0_f64.sqrt());
        let w0 = 2.0 / 3.0 * k * (50.0_f64.powf(1.5) - 5.0_f64.powf(1.5));
        assert!(rel(q, q0) < 1e-9 && rel(w, w0) < 1e-9);
        let (q, w) = miller_integrals(&sw, 5.0, 50.0, 2.0).unwrap();
        let f = |u: f64| k * (2.0 / 3.0 * u.powf(1.5) + 2.0 * 2.0 * u.sqrt());
        assert!(rel(q, 2.0 * k * (48.0_f64.sqrt() - 3.0_f64.sqrt())) < 1e-9);
        assert!(rel(w, f(48.0) - f(3.0)) < 1e-9);
        // Below the first point (u < 1 V, including u < 0) the curve is flat.
        let (q, _) = miller_integrals(&sw, 0.0, 1.0, 2.0).unwrap();
        assert!(rel(q, k * 1.0) < 1e-9);
        sw.c_rss_curve.clear();
        assert!(miller_integrals(&sw, 0.0, 10.0, 2.0).is_none());
    }

    /// The logarithmic cases of the closed form: C = k/v gives Q = k·ln(b/a),
    /// W = k·(b − a); C = k/v² gives Q = k·(1/a − 1/b), W = k·ln(b/a).
    #[test]
    fn miller_integrals_logarithmic_cases() {
        let k = 2e-9;
        let mut sw = example_switch();
        for (power, q0, w0) in [
            (1, k * (40.0_f64 / 4.0).ln(), k * (40.0 - 4.0)),
            (2, k * (1.0 / 4.0 - 1.0 / 40.0), k * (40.0_f64 / 4.0).ln()),
        ] {
            sw.c_rss_curve = [1.0, 10.0, 100.0]
                .iter()
                .map(|&v: &f64| (v, k / v.powi(power)))
                .collect();
            let (q, w) = miller_integrals(&sw, 4.0, 40.0, 0.0).unwrap();
            assert!(rel(q, q0) < 1e-9 && rel(w, w0) < 1e-9, "{power}: {q} {w}");
        }
    }

    #[test]
    fn grading_fit_recovers_a_known_exponent() {
        let law = OutputCapacitance {
            c_ds_spec_f: 300e-12,
            v_spec_v: 25.0,
            grading: 0.5,
        };
        for m in [0.2, 0.45, 0.7] {
            let e = law.c_ds_energy_j(40.0, m);
            let fit = law
                .grading_for(|g| law.c_ds_energy_j(40.0, g), e)
                .expect("in range");
            assert!((fit - m).abs() < 1e-9, "{fit} vs {m}");
            let q = law.c_ds_charge_c(40.0, m);
            let fit = law
                .grading_for(|g| law.c_ds_charge_c(40.0, g), q)
                .expect("in range");
            assert!((fit - m).abs() < 1e-9, "charge: {fit} vs {m}");
        }
    }

    #[test]
    fn abrupt_junction_energy_is_two_thirds_c_v_squared() {
        // For C ∝ v^(−1/2): E(V) = (2/3)·C(V)·V² (the power law integrated).
        let law = OutputCapacitance {
            c_ds_spec_f: 500e-12,
            v_spec_v: 30.0,
            grading: 0.5,
        };
        let e = law.c_ds_energy_j(30.0, 0.5);
        assert!((e / (2.0 / 3.0 * 500e-12 * 900.0) - 1.0).abs() < 1e-12);
    }
}
