//! The phase-to-neutral voltage of three centre-aligned legs over one PWM period.
//!
//! Owns: the piecewise-constant phase voltage of a balanced star with an isolated neutral for
//! given leg edges. Shared by the phase ripple and the dead-time account, which both build on
//! it (so neither imports the other).

/// Phase-A-to-neutral voltage over one switching period at leg duties `d`: intervals
/// `(t_start_s, duration_s, v_an_v)`. Leg x's high side is on in [(1 − d_x)T/2, (1 + d_x)T/2)
/// (centre-aligned). See [`phase_voltage_between`].
pub fn phase_voltage_pattern(d: [f64; 3], v_bus_v: f64, t_s: f64) -> Vec<(f64, f64, f64)> {
    let on = d.map(|dx| 0.5 * (1.0 - dx));
    let off = d.map(|dx| 0.5 * (1.0 + dx));
    phase_voltage_between(on, off, v_bus_v, t_s)
}

/// Phase-A-to-neutral voltage over one period whose leg x is high from `on[x]·T` to
/// `off[x]·T` (fractions of the period): intervals `(t_start_s, duration_s, v_an_v)` with
/// v_an = V·(s_a − (s_a + s_b + s_c)/3) for a balanced star with an isolated neutral (Mohan,
/// Undeland, Robbins, *Power Electronics*, 3rd ed., 2003, ch. 8, from memory), so
/// v_an ∈ {0, ±V/3, ±2V/3}.
pub fn phase_voltage_between(
    on: [f64; 3],
    off: [f64; 3],
    v_bus_v: f64,
    t_s: f64,
) -> Vec<(f64, f64, f64)> {
    let on = on.map(|x| x * t_s);
    let off = off.map(|x| x * t_s);
    // On the stack: the dead-time account builds one pattern per angle and command.
    let mut cuts = [0.0, t_s, on[0], on[1], on[2], off[0], off[1], off[2]];
    cuts.sort_by(f64::total_cmp);
    let mut out = Vec::with_capacity(7);
    for w in cuts.windows(2) {
        let (a, b) = (w[0], w[1]);
        if b - a <= 0.0 {
            continue;
        }
        let mid = 0.5 * (a + b);
        let s = [0, 1, 2].map(|x| {
            if mid >= on[x] && mid < off[x] {
                1.0
            } else {
                0.0
            }
        });
        let v_an = v_bus_v * (s[0] - (s[0] + s[1] + s[2]) / 3.0);
        out.push((a, b - a, v_an));
    }
    out
}
