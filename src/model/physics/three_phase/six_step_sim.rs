//! Six-step with its commutations: the periodic steady state of the
//! switch-by-switch circuit ([`super::six_step_circuit`]), the chopping
//! duty that holds a line current, and the losses of each switch from what
//! it conducted and switched.

use super::inputs::*;
use super::loss_lines::*;
use super::six_step::{SixStepLosses, SixStepRole, with_gate_drive};
use super::six_step_circuit::*;
use super::six_step_run::*;
use crate::model::physics::losses;

/// A six-step operating point simulated through its commutations.
#[derive(Debug, Clone)]
pub struct SixStepSimulation {
    /// Chopping duty D.
    pub duty: f64,
    /// Mean of the held phase's current (the non-chopping rail's phase,
    /// over each sector): the line current `rated_current` names, A.
    pub held_mean_a: f64,
    /// Mean DC-link (positive rail) current, A.
    pub dc_link_mean_a: f64,
    /// Length of a sector, s.
    pub sector_s: f64,
    /// The off-going phase's diode freewheel after each of the two kinds of
    /// commutation (the first and second boundary of the simulated pair of
    /// sectors), s; `None`: its current had not reached zero at the next
    /// commutation.
    pub commutation_s: [Option<f64>; 2],
    /// The off-going phase's current at those two commutations, A.
    pub commutation_current_a: [f64; 2],
    start_a: [f64; 3],
    record: WindowRecord,
    electrical_period_s: f64,
    /// Per switch and role: (switching, recovery, output capacitance,
    /// commutation) energies over the window, J.
    edge_j: [[[f64; 4]; 4]; DEVICES],
}

/// The start state rotated one phase on: two sectors later the same
/// drive has moved from phase k to phase k + 1, so the steady state
/// satisfies `i_{k+1}(T_e/3) = i_k(0)` (the 120° symmetry of a balanced
/// motor and the sector table).
fn next_start(end: [f64; 3]) -> [f64; 3] {
    std::array::from_fn(|k| end[(k + 1) % 3])
}

/// The periodic steady state at a chopping duty, searched by Newton's
/// method on the window map (start currents → rotated end currents) with a
/// finite-difference Jacobian kept from one duty to the next (the map is
/// affine between diode events and its slope hardly moves with the duty, so
/// a step or two settles it), plain iteration if Newton stalls.
struct SteadySearch<'c, 'a> {
    c: &'c SixStepCircuit<'a>,
    /// Start currents of phases A and B (C closes the sum).
    x: [f64; 2],
    jacobian: Option<[[f64; 2]; 2]>,
}

impl SteadySearch<'_, '_> {
    /// One window from `x`: the rotated end currents and the held charge.
    fn map(&self, duty: f64, x: [f64; 2]) -> ([f64; 2], f64) {
        let (end, rec) = run_window(self.c, duty, [x[0], x[1], -x[0] - x[1]], false);
        let n = next_start(end);
        ([n[0], n[1]], rec.held_a_s)
    }

    fn jacobian_at(&self, duty: f64, g: [f64; 2], h: f64) -> [[f64; 2]; 2] {
        let ga = self.map(duty, [self.x[0] + h, self.x[1]]).0;
        let gb = self.map(duty, [self.x[0], self.x[1] + h]).0;
        [
            [(ga[0] - g[0]) / h, (gb[0] - g[0]) / h],
            [(ga[1] - g[1]) / h, (gb[1] - g[1]) / h],
        ]
    }

    /// The held phase's mean current in the steady state at `duty` (the
    /// search leaves `x` at that state's start).
    fn held_mean_a(&mut self, duty: f64) -> f64 {
        let scale = self.x[0].abs().max(self.x[1].abs()).max(1e-3);
        let tol = 1e-9 * scale;
        let window = self.c.window_s();
        for iteration in 0..8 {
            let (g, held) = self.map(duty, self.x);
            let r = [g[0] - self.x[0], g[1] - self.x[1]];
            if r[0].abs().max(r[1].abs()) <= tol {
                return held / window;
            }
            if self.jacobian.is_none() || iteration >= 2 {
                self.jacobian = Some(self.jacobian_at(duty, g, 1e-6 * scale));
            }
            let Some(step) = self.jacobian.and_then(|j| newton_step(j, r)) else {
                break;
            };
            self.x = [self.x[0] + step[0], self.x[1] + step[1]];
        }
        let mut held = 0.0;
        for _ in 0..400 {
            let (g, h) = self.map(duty, self.x);
            let done = (g[0] - self.x[0]).abs().max((g[1] - self.x[1]).abs()) <= tol;
            (self.x, held) = (g, h);
            if done {
                break;
            }
        }
        held / window
    }

    fn start(&self) -> [f64; 3] {
        [self.x[0], self.x[1], -self.x[0] - self.x[1]]
    }
}

/// Δ solving `(I − J)·Δ = r`; `None` when that matrix is singular.
fn newton_step(j: [[f64; 2]; 2], r: [f64; 2]) -> Option<[f64; 2]> {
    let a = [[1.0 - j[0][0], -j[0][1]], [-j[1][0], 1.0 - j[1][1]]];
    let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
    (det.is_finite() && det.abs() > 1e-12).then(|| {
        [
            (r[0] * a[1][1] - r[1] * a[0][1]) / det,
            (a[0][0] * r[1] - a[1][0] * r[0]) / det,
        ]
    })
}

/// Simulate six-step at the chopping duty that holds the held phase's mean
/// current at `i_target_a`: the secant method on D from `duty_guess`,
/// bracketed in [0, 1] (the mean rises with D; Dahlquist, Björck,
/// *Numerical Methods*, 1974, §6.2, from memory). 0 when D = 0 already
/// gives the target; `DutyUnreachable` when D = 1 does not.
pub fn six_step_simulated(
    c: &SixStepCircuit<'_>,
    i_target_a: f64,
    duty_guess: f64,
) -> Result<SixStepSimulation> {
    c.stage.validate()?;
    check("i_target_a", i_target_a, true)?;
    check("l_phase_h", c.motor.l_phase_h, c.motor.l_phase_h > 0.0)?;
    check("duty_guess", duty_guess, true)?;
    let tol = 1e-6 * i_target_a.abs().max(1e-3);
    let d0 = duty_guess.clamp(0.0, 1.0);
    match joint_newton(c, i_target_a, d0, tol) {
        Some(sim) => Ok(sim),
        None => secant_on_duty(c, i_target_a, d0, tol),
    }
}

/// The duty for the held mean by the bracketed secant, with the steady
/// state searched at each duty ([`SteadySearch`]): the fallback of
/// [`six_step_simulated`] where the joint Newton does not settle, and the
/// answer at the duty's bounds.
fn secant_on_duty(
    c: &SixStepCircuit<'_>,
    i_target_a: f64,
    d0: f64,
    tol: f64,
) -> Result<SixStepSimulation> {
    let mut search = SteadySearch {
        c,
        x: [0.0, -i_target_a],
        jacobian: None,
    };
    let mut bracket = ((0.0, f64::NAN), (1.0, f64::NAN));
    let mut a = (d0, search.held_mean_a(d0) - i_target_a);
    let d1 = if a.1 < 0.0 {
        (d0 + 0.02).min(1.0)
    } else {
        (d0 - 0.02).max(0.0)
    };
    let mut b = (d1, search.held_mean_a(d1) - i_target_a);
    for _ in 0..40 {
        for p in [a, b] {
            if p.1 < 0.0 && p.0 >= bracket.0.0 {
                bracket.0 = p;
            } else if p.1 >= 0.0 && p.0 <= bracket.1.0 {
                bracket.1 = p;
            }
        }
        if b.1.abs() <= tol {
            return Ok(simulation_at(c, b.0, search.start()));
        }
        if b.0 >= 1.0 && b.1 < 0.0 {
            return Err(ThreePhaseError::DutyUnreachable {
                i_target_a,
                i_at_full_duty_a: b.1 + i_target_a,
            });
        }
        if b.0 <= 0.0 && b.1 > 0.0 {
            return Ok(simulation_at(c, 0.0, search.start()));
        }
        let secant = b.0 - b.1 * (b.0 - a.0) / (b.1 - a.1);
        let (lo, hi) = (bracket.0.0, bracket.1.0);
        let next = if secant.is_finite() && secant > lo && secant < hi {
            secant
        } else if hi - lo < 1e-12 {
            break;
        } else if bracket.0.1.is_nan() {
            lo
        } else if bracket.1.1.is_nan() {
            hi
        } else {
            0.5 * (lo + hi)
        };
        a = b;
        b = (next, search.held_mean_a(next) - i_target_a);
    }
    Ok(simulation_at(c, b.0, search.start()))
}

/// The steady state and the duty together: Newton's method on the three
/// unknowns (start currents of phases A and B, duty) with the residual
/// (rotated end − start, held mean − target), a finite-difference Jacobian
/// at the start and Broyden's rank-one updates after it (Broyden, *A class
/// of methods for solving nonlinear simultaneous equations*, Math. Comp.
/// 19, 1965). One window a step instead of a steady state a duty. `None`
/// (the caller falls back to the bracketed secant) when it has not
/// converged within [`JOINT_NEWTON_STEPS`]; its steps stay inside (0, 1)
/// (one that would leave is cut back), so a duty at a bound is the
/// secant's answer.
fn joint_newton(
    c: &SixStepCircuit<'_>,
    i_target_a: f64,
    duty_guess: f64,
    tol_a: f64,
) -> Option<SixStepSimulation> {
    let window = c.window_s();
    let residual = |z: [f64; 3]| -> [f64; 3] {
        let (end, rec) = run_window(c, z[2], [z[0], z[1], -z[0] - z[1]], false);
        let n = next_start(end);
        [n[0] - z[0], n[1] - z[1], rec.held_a_s / window - i_target_a]
    };
    let scale = i_target_a.abs().max(1e-3);
    let tol_x = 1e-9 * scale;
    let mut z = [0.0, -i_target_a, duty_guess.clamp(0.02, 0.98)];
    let mut r = residual(z);
    let steps = [1e-6 * scale, 1e-6 * scale, 1e-6];
    // Where the window is many time constants L/R long, the end forgets the
    // start (its slope is below e^(−W·R/L)): the start columns are −I and
    // zero, and Broyden's updates correct what that leaves (our own economy:
    // two windows fewer for a slow rotor).
    let forgets = (-window * c.motor.r_phase_ohm / c.motor.l_phase_h).exp() < FORGOTTEN_START;
    let mut j = [[-1.0, 0.0, 0.0], [0.0, -1.0, 0.0], [0.0; 3]];
    let first_column = if forgets { 2 } else { 0 };
    for (col, h) in steps.into_iter().enumerate().skip(first_column) {
        let mut zh = z;
        zh[col] += h;
        let rh = residual(zh);
        for row in 0..3 {
            j[row][col] = (rh[row] - r[row]) / h;
        }
    }
    for _ in 0..JOINT_NEWTON_STEPS {
        if r[0].abs().max(r[1].abs()) <= tol_x && r[2].abs() <= tol_a {
            return Some(simulation_at(c, z[2], [z[0], z[1], -z[0] - z[1]]));
        }
        let mut dz = solve3(j, [-r[0], -r[1], -r[2]])?;
        // A step that leaves (0, 1) is cut back to stop halfway to the bound.
        let room = if dz[2] > 0.0 { 1.0 - z[2] } else { z[2] };
        if dz[2].abs() >= room {
            let cut = 0.5 * room / dz[2].abs();
            dz = dz.map(|v| v * cut);
        }
        let next = [z[0] + dz[0], z[1] + dz[1], z[2] + dz[2]];
        let r_next = residual(next);
        broyden_update(
            &mut j,
            dz,
            [r_next[0] - r[0], r_next[1] - r[1], r_next[2] - r[2]],
        );
        (z, r) = (next, r_next);
    }
    None
}

/// The start's weight in the window's end below which the joint Newton takes
/// the start columns of its first Jacobian as known (our own bound).
const FORGOTTEN_START: f64 = 1e-9;

/// Steps the joint Newton takes before handing over to the secant (our own
/// bound: it converges in three to five where the map is smooth).
const JOINT_NEWTON_STEPS: usize = 10;

/// Broyden's update `J += (Δr − J·Δz)·Δzᵀ / (Δz·Δz)`.
fn broyden_update(j: &mut [[f64; 3]; 3], dz: [f64; 3], dr: [f64; 3]) {
    let norm = dz.iter().map(|x| x * x).sum::<f64>();
    if !(norm > 0.0 && norm.is_finite()) {
        return;
    }
    for row in 0..3 {
        let predicted = (0..3).map(|col| j[row][col] * dz[col]).sum::<f64>();
        let miss = dr[row] - predicted;
        for col in 0..3 {
            j[row][col] += miss * dz[col] / norm;
        }
    }
}

/// `x` solving `a·x = b` (Gaussian elimination with partial pivoting);
/// `None` when `a` is singular.
fn solve3(mut a: [[f64; 3]; 3], mut b: [f64; 3]) -> Option<[f64; 3]> {
    for col in 0..3 {
        let pivot = (col..3).max_by(|&p, &q| a[p][col].abs().total_cmp(&a[q][col].abs()))?;
        a.swap(col, pivot);
        b.swap(col, pivot);
        let d = a[col][col];
        if !(d.abs() > 1e-300 && d.is_finite()) {
            return None;
        }
        for row in col + 1..3 {
            let f = a[row][col] / d;
            let pivot_row = a[col];
            for (x, p) in a[row].iter_mut().zip(pivot_row).skip(col) {
                *x -= f * p;
            }
            b[row] -= f * b[col];
        }
    }
    let mut x = [0.0; 3];
    for row in (0..3).rev() {
        let s = (row + 1..3).map(|k| a[row][k] * x[k]).sum::<f64>();
        x[row] = (b[row] - s) / a[row][row];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// A first duty for [`six_step_simulated`]: the flat-sector averaged
/// estimate (`six_step_duty_estimate` on the line-to-line equivalent with
/// both switches' R_ds(on)), clamped to [0, 1]; ½ when it has none.
pub fn six_step_duty_guess(c: &SixStepCircuit<'_>, i_target_a: f64) -> f64 {
    let load = c
        .motor
        .line_line_load(c.omega_e_rad_s, c.r_ds_ohm[0] + c.r_ds_ohm[1]);
    super::six_step::six_step_duty_estimate(
        &load,
        c.chop,
        c.stage.v_bus_v,
        c.stage.sw.v_sd_v,
        i_target_a,
    )
    .map_or(0.5, |d| d.clamp(0.0, 1.0))
}

/// Simulate six-step at a given chopping duty (steady state).
pub fn six_step_simulated_at(
    c: &SixStepCircuit<'_>,
    duty: f64,
    i_guess_a: f64,
) -> Result<SixStepSimulation> {
    c.stage.validate()?;
    check("duty", duty, (0.0..=1.0).contains(&duty))?;
    check("l_phase_h", c.motor.l_phase_h, c.motor.l_phase_h > 0.0)?;
    let mut search = SteadySearch {
        c,
        x: [0.0, -i_guess_a],
        jacobian: None,
    };
    search.held_mean_a(duty);
    Ok(simulation_at(c, duty, search.start()))
}

fn simulation_at(c: &SixStepCircuit<'_>, duty: f64, start: [f64; 3]) -> SixStepSimulation {
    let (_, record) = run_window(c, duty, start, true);
    let w = c.window_s();
    let edge_j = edge_energies(c, &record.edges);
    SixStepSimulation {
        duty,
        held_mean_a: record.held_a_s / w,
        dc_link_mean_a: record.bus_a_s / w,
        sector_s: w / 2.0,
        commutation_s: record.commutation_s,
        commutation_current_a: record.commutation_current_a,
        start_a: start,
        electrical_period_s: c.electrical_period_s(),
        record,
        edge_j,
    }
}

/// Energies of the recorded edges per switch and role: a hard turn-on's
/// E_on, the partner's recovery (switch share here, diode share in the
/// partner: `ThreePhaseStage::recovery_j`) and E_oss at the bus; a hard
/// turn-off's E_off (in the commutation line when the held switch leaves its
/// block); an open leg's turn-on E_oss at the voltage it blocked
/// (`losses::output_capacitance_energy_j`). The transition model is
/// evaluated on a grid of 33 currents per side and interpolated linearly
/// (our own economy; the energies are smooth in the current).
fn edge_energies(c: &SixStepCircuit<'_>, edges: &[Edge]) -> [[[f64; 4]; 4]; DEVICES] {
    let mut out = [[[0.0; 4]; 4]; DEVICES];
    let i_max = edges.iter().map(|e| e.i_a).fold(0.0, f64::max);
    let tables = [0, 1].map(|side| EnergyTable::new(c, i_max, c.r_ds_ohm[side]));
    let e_oss_bus = c.stage.e_oss_j();
    for e in edges {
        let t = &tables[e.device % 2];
        let r = role_index(e.role);
        match e.kind {
            EdgeKind::HardOn => {
                let [e_on, _, rec_sw, rec_d] = t.at(e.i_a);
                out[e.device][r][0] += e_on;
                out[e.device][r][1] += rec_sw;
                out[e.device][r][2] += e_oss_bus;
                let partner = e.device ^ 1;
                let pr = role_index(c.role(e.sector, partner));
                out[partner][pr][1] += rec_d;
            }
            EdgeKind::HardOff => {
                let [_, e_off, _, _] = t.at(e.i_a);
                let line = if e.role == Duty::Conducting { 3 } else { 0 };
                out[e.device][r][line] += e_off;
            }
            EdgeKind::OpenOn => {
                out[e.device][r][2] += losses::output_capacitance_energy_j(c.stage.sw, e.v_ds_v).0;
            }
        }
    }
    out
}

/// E_on, E_off, recovery (switch, diode) on a current grid.
struct EnergyTable {
    step_a: f64,
    rows: Vec<[f64; 4]>,
}

impl EnergyTable {
    const POINTS: usize = 33;

    fn new(c: &SixStepCircuit<'_>, i_max_a: f64, r_ds_ohm: f64) -> Self {
        let step_a = i_max_a.max(1e-9) / (Self::POINTS - 1) as f64;
        let rows = (0..Self::POINTS)
            .map(|n| {
                let i = n as f64 * step_a;
                let (on, off) = c.stage.energies(i, i, r_ds_ohm).unwrap_or((0.0, 0.0));
                let (rs, rd) = c.stage.recovery_j(i).unwrap_or((0.0, 0.0));
                [on, off, rs, rd]
            })
            .collect();
        EnergyTable { step_a, rows }
    }

    fn at(&self, i_a: f64) -> [f64; 4] {
        let x = (i_a / self.step_a).clamp(0.0, (Self::POINTS - 1) as f64);
        let k = (x.floor() as usize).min(Self::POINTS - 2);
        let f = x - k as f64;
        std::array::from_fn(|j| self.rows[k][j] * (1.0 - f) + self.rows[k + 1][j] * f)
    }
}

impl SixStepSimulation {
    /// Start currents of the simulated window (phases A, B, C), A.
    pub fn start_a(&self) -> [f64; 3] {
        self.start_a
    }

    /// Losses with each side's R_ds(on) at its junction temperature
    /// (`r_ds_high_ohm`, `r_ds_low_ohm`): each role's conduction
    /// R·∫i², the body diode V_sd·∫|i|, the edges' energies, over the
    /// electrical period per switch (the three switches of a side play every
    /// role over it, so a side's window sums divided by the electrical period
    /// are its per-switch averages); the gate at each role's turn-on rate.
    pub fn losses(
        &self,
        stage: &ThreePhaseStage<'_>,
        r_ds_high_ohm: f64,
        r_ds_low_ohm: f64,
    ) -> Result<SixStepLosses> {
        let t_e = self.electrical_period_s;
        let mut items = Vec::with_capacity(8);
        for (side, r_ds) in [(Side::High, r_ds_high_ohm), (Side::Low, r_ds_low_ohm)] {
            let first = usize::from(side == Side::Low);
            for (r, role) in [
                SixStepRole::Chopping,
                SixStepRole::Freewheeling,
                SixStepRole::Conducting,
                SixStepRole::Idle,
            ]
            .into_iter()
            .enumerate()
            {
                let mut lines = LossLines::default();
                let mut turn_ons = 0.0;
                for d in (first..DEVICES).step_by(2) {
                    let ta = self.record.tallies[d][r];
                    let e = self.edge_j[d][r];
                    lines.conduction_forward_w += r_ds * ta.i2_forward / t_e;
                    lines.conduction_reverse_w += r_ds * ta.i2_reverse / t_e;
                    lines.body_diode_w += ta.diode_j / t_e;
                    lines.switching_w += e[0] / t_e;
                    lines.reverse_recovery_w += e[1] / t_e;
                    lines.output_capacitance_w += e[2] / t_e;
                    lines.commutation_w += e[3] / t_e;
                    turn_ons += ta.turn_ons;
                }
                items.push((role, side, lines, turn_ons / t_e));
            }
        }
        with_gate_drive(stage, self.held_mean_a.abs(), items)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::params::fixtures::{example_drive, example_switch};
    use crate::model::physics::three_phase::six_step::{
        SixStepPoint, six_step_commutation_s, six_step_losses, six_step_ripple,
    };

    fn motor(r: f64, l: f64, e_v: f64, omega: f64) -> MotorParams {
        MotorParams {
            r_phase_ohm: r,
            l_phase_h: l,
            ke_v_s_per_rad: e_v / omega,
            pole_pairs: 1,
            back_emf_shape: BackEmfShape::Trapezoidal,
        }
    }

    /// Against the closed-form linear commutation (`six_step_commutation_s`,
    /// L·I over the voltage across the off-going inductance at the sector
    /// boundary with the PWM-averaged terminals), where that closed form is
    /// exact: R and the diode drop negligible, no dead time, a PWM period
    /// short against the interval and the interval short against the sector
    /// (the back-EMF hardly moves during it). Both rails, all three chops
    /// (E = 6 V, L = 100 µH, 24 V, 8.65 A: about 60 and 90 µs; within 1.5 %).
    #[test]
    fn commutation_matches_the_linear_closed_form() {
        let mut sw = example_switch();
        sw.v_sd_v = 0.0;
        let drive = example_drive();
        let omega = 100.0;
        let m = motor(1e-4, 100e-6, 6.0, omega);
        for chop in [Chop::HighSide, Chop::LowSide, Chop::Complementary] {
            let c = SixStepCircuit {
                stage: ThreePhaseStage {
                    sw: &sw,
                    drive: &drive,
                    v_bus_v: 24.0,
                    f_sw_hz: 100e3,
                    t_dead_s: 0.0,
                },
                motor: m,
                omega_e_rad_s: omega,
                chop,
                r_ds_ohm: [0.0, 0.0],
            };
            let sim = six_step_simulated(&c, 8.65, six_step_duty_guess(&c, 8.65)).unwrap();
            // The closed form at the current the off-going phase carries at
            // each boundary (the sector's current is not flat with R ≈ 0).
            let at = |i: f64| six_step_commutation_s(&m, omega, 24.0, sim.duty, chop, i).unwrap();
            let [i_pos, i_neg] = sim.commutation_current_a;
            let (pos, neg) = (at(i_pos).0, at(i_neg).1);
            let [a, b] = sim.commutation_s.map(|t| t.expect("the freewheel ends"));
            assert!(
                (a / pos - 1.0).abs() < 0.015,
                "{chop:?} positive rail {a} vs {pos}"
            );
            assert!(
                (b / neg - 1.0).abs() < 0.015,
                "{chop:?} negative rail {b} vs {neg}"
            );
        }
    }

    /// Where the commutation is negligible (L·I/V about 0.3 % of the
    /// sector), the simulation agrees with the flat-sector model's exact
    /// two-phase R-L-back-EMF solution (`six_step_ripple`,
    /// `six_step_losses`) at the same duty: the held current within 1 %, the
    /// channel conduction of each side within 2 %, the hard edges within 3 %
    /// (the diode line is left out: the flat model takes V_sd constant, the
    /// simulation at the current).
    #[test]
    fn flat_sector_limit_matches_the_two_phase_solution() {
        let sw = example_switch();
        let drive = example_drive();
        let omega = 2.0 * std::f64::consts::PI * 10.0;
        let m = motor(0.5, 50e-6, 8.0, omega);
        let r = crate::model::physics::thermal::r_ds_on_ohm(&sw, 25.0);
        for chop in [Chop::HighSide, Chop::LowSide, Chop::Complementary] {
            let stage = ThreePhaseStage {
                sw: &sw,
                drive: &drive,
                v_bus_v: 48.0,
                f_sw_hz: 20e3,
                t_dead_s: 0.0,
            };
            let c = SixStepCircuit {
                stage,
                motor: m,
                omega_e_rad_s: omega,
                chop,
                r_ds_ohm: [r, r],
            };
            let sim = six_step_simulated_at(&c, 0.6, 10.0).unwrap();
            let w = six_step_ripple(&stage, &m, omega, 0.6, chop, 2.0 * r).unwrap();
            let rel = |a: f64, b: f64| (a / b - 1.0).abs();
            assert!(
                rel(sim.held_mean_a, w.i_avg_a()) < 0.01,
                "{chop:?} {} {}",
                sim.held_mean_a,
                w.i_avg_a()
            );
            let pt = SixStepPoint {
                chop,
                duty: 0.6,
                f_e_hz: omega / (2.0 * std::f64::consts::PI),
            };
            let flat = six_step_losses(&stage, &pt, &w, 25.0, 25.0).unwrap();
            let ours = sim.losses(&stage, r, r).unwrap();
            for (name, a, b) in [
                (
                    "high conduction",
                    ours.high_side.conduction_w(),
                    flat.high_side.conduction_w(),
                ),
                (
                    "low conduction",
                    ours.low_side.conduction_w(),
                    flat.low_side.conduction_w(),
                ),
            ] {
                assert!(rel(a, b) < 0.02, "{chop:?} {name}: {a} vs {b}");
            }
            let edges = |l: &SixStepLosses| l.high_side.switching_w + l.low_side.switching_w;
            assert!(
                rel(edges(&ours), edges(&flat)) < 0.03,
                "{chop:?} edges {} vs {}",
                edges(&ours),
                edges(&flat)
            );
        }
    }

    /// The joint Newton (start currents and duty together) lands on the
    /// same operating point as the bracketed secant over a steady state a
    /// duty: over both back-EMF shapes, each chop, heavy and light
    /// (discontinuous) load, slow and fast rotors, the duty within 1e-5 and
    /// the held mean within 1e-5 of the target, whether the joint Newton
    /// settled or handed over; it settles on every continuous case (the
    /// secant's answer is [`secant_on_duty`] alone, ten times finer).
    #[test]
    fn joint_newton_agrees_with_the_secant() {
        let sw = example_switch();
        let drive = example_drive();
        let r = crate::model::physics::thermal::r_ds_on_ohm(&sw, 25.0);
        let mut settled = 0;
        for shape in [BackEmfShape::Trapezoidal, BackEmfShape::Sinusoidal] {
            for chop in [Chop::HighSide, Chop::LowSide, Chop::Complementary] {
                for (f_e_hz, e_v, l_h, i_a) in [
                    (20.0, 2.0, 200e-6, 8.0),
                    (300.0, 14.0, 80e-6, 3.0),
                    (500.0, 10.0, 40e-6, 0.4),
                ] {
                    let omega = 2.0 * std::f64::consts::PI * f_e_hz;
                    let mut m = motor(0.3, l_h, e_v, omega);
                    m.back_emf_shape = shape;
                    let c = SixStepCircuit {
                        stage: ThreePhaseStage {
                            sw: &sw,
                            drive: &drive,
                            v_bus_v: 36.0,
                            f_sw_hz: 24e3,
                            t_dead_s: 300e-9,
                        },
                        motor: m,
                        omega_e_rad_s: omega,
                        chop,
                        r_ds_ohm: [r, r],
                    };
                    let guess = six_step_duty_guess(&c, i_a);
                    if joint_newton(&c, i_a, guess, 1e-6 * i_a).is_some() {
                        settled += 1;
                    }
                    let ours = six_step_simulated(&c, i_a, guess).unwrap();
                    let secant = secant_on_duty(&c, i_a, guess, 1e-7 * i_a).unwrap();
                    assert!(
                        (ours.duty - secant.duty).abs() < 1e-5,
                        "{shape:?} {chop:?} {f_e_hz} Hz: duty {} vs {}",
                        ours.duty,
                        secant.duty
                    );
                    assert!(
                        (ours.held_mean_a / i_a - 1.0).abs() < 1e-5,
                        "{shape:?} {chop:?} {f_e_hz} Hz: held {} vs {i_a}",
                        ours.held_mean_a
                    );
                }
            }
        }
        assert!(settled >= 12, "the joint Newton settled on {settled} of 18");
    }
}
