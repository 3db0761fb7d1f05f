//! The followed edges of one switch taken at a few switched currents and
//! interpolated between them.
//!
//! Why: following an edge at the node (`commutation`) integrates a few
//! hundred steps; the frequency search asks for the same switch, drive and
//! bus at hundreds of nearby currents (each setting's ripple moves the
//! switched current a little), and following each one dominated `plan`'s
//! time. The followed figures are smooth in the current, so they are taken
//! at fixed nodes and interpolated: four-point Lagrange interpolation
//! (Press, Teukolsky, Vetterling, Flannery, *Numerical Recipes*, 3rd ed.,
//! 2007, §3.2, Neville's form of the same polynomial; from memory) on a grid
//! uniform in u = asinh(I/`SCALE_A`), linear in the current near zero and
//! geometric above a few `SCALE_A`.
//!
//! The nodes depend only on the current, never on which currents were asked
//! before, so a figure is the same whatever the search's order or thread.
//! Where a node is not followed (the follow did not finish, or the current is
//! too small for a whole stencil) the caller follows the edge at the current
//! itself. The followed figures carry the integration's own step error
//! (about 1e-3), which moves a little between neighbouring currents; the
//! interpolation stays inside it (`switching`'s test).

/// The current where the grid turns from linear to geometric, A (own
/// choice: below it an edge is nearly lossless and its spacing of
/// `SCALE_A`·`STEP` = 4 mA is finer than any ripple the search moves by).
pub const SCALE_A: f64 = 0.1;

/// Grid step in u = asinh(I/`SCALE_A`): 4 % of the current above a few
/// `SCALE_A` (own choice, held by `interpolation_error_below_1e_5`: on a
/// power law I^p the four-point error is about (3/128)·(p·STEP)⁴ of the value,
/// 1e-6 for p = 2).
pub const STEP: f64 = 0.04;

/// The grid coordinate of a current.
fn grid_u(i_a: f64) -> f64 {
    (i_a / SCALE_A).asinh() / STEP
}

/// The current at grid node `k`.
pub fn node_current_a(k: i64) -> f64 {
    SCALE_A * (k as f64 * STEP).sinh()
}

/// The four nodes around `i_a`, as the first one's index and the position
/// t ∈ [0, 1) between the middle two; `None` when the first node would not
/// be above zero current (the edge is then followed at `i_a` itself).
pub fn stencil(i_a: f64) -> Option<(i64, f64)> {
    let u = grid_u(i_a);
    if !u.is_finite() {
        return None;
    }
    let k1 = u.floor();
    let t = u - k1;
    let k0 = k1 as i64 - 1;
    (k0 >= 1).then_some((k0, t))
}

/// The cubic through `f` at nodes −1, 0, 1, 2, evaluated at `t` (Lagrange's
/// form; *Numerical Recipes* 2007, §3.2, from memory).
pub fn lagrange4(f: [f64; 4], t: f64) -> f64 {
    let w0 = -t * (t - 1.0) * (t - 2.0) / 6.0;
    let w1 = (t + 1.0) * (t - 1.0) * (t - 2.0) / 2.0;
    let w2 = -(t + 1.0) * t * (t - 2.0) / 2.0;
    let w3 = (t + 1.0) * t * (t - 1.0) / 6.0;
    w0 * f[0] + w1 * f[1] + w2 * f[2] + w3 * f[3]
}

/// `N` figures of an edge at `i_a`, interpolated from `node` at the four
/// nodes around it; `None` when any of them is not followed or the current
/// is below the grid.
pub fn interpolate<const N: usize>(
    i_a: f64,
    mut node: impl FnMut(i64) -> Option<[f64; N]>,
) -> Option<[f64; N]> {
    let (k0, t) = stencil(i_a)?;
    let mut values = [[0.0; N]; 4];
    for (j, v) in values.iter_mut().enumerate() {
        *v = node(k0 + j as i64)?;
    }
    Some(std::array::from_fn(|n| {
        lagrange4([values[0][n], values[1][n], values[2][n], values[3][n]], t)
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nodes_and_stencil_agree() {
        for k in [2_i64, 5, 40, 120] {
            let i = node_current_a(k);
            let (k0, t) = stencil(i * (1.0 + 1e-12)).expect("on the grid");
            assert_eq!(k0, k - 1);
            assert!(t < 1e-6, "t {t}");
        }
        assert!(stencil(0.0).is_none());
        assert!(stencil(node_current_a(1)).is_none());
        assert!(stencil(f64::NAN).is_none());
    }

    #[test]
    fn interpolation_error_below_1e_5() {
        // Power laws and a light-load onset, against the function itself
        // at currents between the nodes (an independent evaluation).
        type Law = fn(f64) -> f64;
        let laws: [(&str, Law); 3] = [
            ("I", |i| i),
            ("I^2", |i| i * i),
            ("onset", |i: f64| (i - 0.5).max(0.0).powi(2) + 0.01 * i),
        ];
        for (name, f) in laws {
            let mut worst: f64 = 0.0;
            for n in 0..2_000 {
                let i = 1.0 + 29.0 * n as f64 / 2_000.0;
                let got = interpolate(i, |k| Some([f(node_current_a(k))])).expect("grid")[0];
                worst = worst.max(((got - f(i)) / f(i)).abs());
            }
            assert!(worst < 1e-5, "{name}: worst relative error {worst:e}");
        }
    }

    #[test]
    fn exact_at_a_node_and_missing_node_gives_none() {
        let i = node_current_a(30);
        let got = interpolate(i, |k| Some([node_current_a(k).powi(3)])).expect("grid")[0];
        assert!((got / i.powi(3) - 1.0).abs() < 1e-9, "{got} {}", i.powi(3));
        assert!(interpolate(i, |k| (k != 31).then_some([1.0])).is_none());
    }
}
