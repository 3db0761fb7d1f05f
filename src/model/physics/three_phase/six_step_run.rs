//! One window (two sectors) of the switch-by-switch six-step circuit run
//! from a start state: the currents at its end, and what each switch
//! conducted and switched on the way.

use super::six_step_circuit::*;

/// A switching event worth an energy, found on the way.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum EdgeKind {
    /// Turn-on while the partner's body diode carries `i` (hard; the
    /// partner recovers).
    HardOn,
    /// Turn-off of a channel carrying `i` drain→source (hard).
    HardOff,
    /// Turn-on of an open leg, the switch blocking `v_ds` (its C_oss
    /// discharges in the channel).
    OpenOn,
}

/// One recorded edge: the switch, its role in the sector, the kind, the
/// current magnitude and the blocked voltage before a turn-on.
#[derive(Debug, Clone, Copy)]
pub(super) struct Edge {
    pub device: usize,
    pub sector: usize,
    pub role: Duty,
    pub kind: EdgeKind,
    pub i_a: f64,
    pub v_ds_v: f64,
}

/// What one switch accumulated in one role over the window.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct Tally {
    /// ∫ i² dt in the channel, drain→source, A²·s.
    pub i2_forward: f64,
    /// ∫ i² dt in the channel, source→drain, A²·s.
    pub i2_reverse: f64,
    /// ∫ V_f(i)·|i| dt in the body diode, J.
    pub diode_j: f64,
    /// Gate turn-ons.
    pub turn_ons: f64,
}

/// Everything a window's run found.
#[derive(Debug, Clone, Default)]
pub(super) struct WindowRecord {
    /// Per switch and role (Chopping, Freewheeling, Conducting, Idle).
    pub tallies: [[Tally; 4]; DEVICES],
    /// The energy-bearing edges.
    pub edges: Vec<Edge>,
    /// ∫ of the held (non-chopping rail's) phase current, A·s, signed so
    /// that motoring is positive.
    pub held_a_s: f64,
    /// ∫ of the positive rail's current (the DC link), A·s.
    pub bus_a_s: f64,
    /// Per sector boundary of the window (t = 0 and the middle): how long
    /// the off-going phase's current took to reach zero; `None` when it had
    /// not by the next boundary.
    pub commutation_s: [Option<f64>; 2],
    /// The off-going phase's current at each of those boundaries, A
    /// (magnitude).
    pub commutation_current_a: [f64; 2],
}

pub(super) fn role_index(r: Duty) -> usize {
    match r {
        Duty::Chopping => 0,
        Duty::Freewheeling => 1,
        Duty::Conducting => 2,
        Duty::Idle => 3,
    }
}

/// A run in progress.
struct Run<'c, 'a> {
    c: &'c SixStepCircuit<'a>,
    gates: [bool; DEVICES],
    i: [f64; 3],
    t: f64,
    rec: WindowRecord,
    /// Per boundary: the off-going phase and the boundary's time.
    off_going: [Option<(usize, f64)>; 2],
    /// Book the switches' tallies and edges (else only the held charge:
    /// the steady-state search needs no more).
    full: bool,
    /// The circuit's [`SixStepCircuit::emf_clock`], fixed for the window.
    emf_clock: (f64, f64),
    /// The PWM period, s, and the periods in a sector, fixed for the window.
    period_s: f64,
    periods_per_sector: i64,
}

/// Run the window at chopping duty `duty` from the phase currents `i0`
/// (summing to zero): the currents at its end and the record (`full`: with
/// the switches' tallies and edges, else the held charge only).
pub(super) fn run_window(
    c: &SixStepCircuit<'_>,
    duty: f64,
    i0: [f64; 3],
    full: bool,
) -> ([f64; 3], WindowRecord) {
    let (start, edges) = c.schedule(duty);
    let mut run = Run {
        c,
        gates: start,
        i: i0,
        t: 0.0,
        rec: WindowRecord::default(),
        off_going: boundaries(c),
        full,
        emf_clock: c.emf_clock(),
        period_s: c.period_s(),
        periods_per_sector: c.periods_per_sector() as i64,
    };
    run.note_boundaries();
    let mut k = 0;
    while k < edges.len() {
        let t_edge = edges[k].t_s;
        let middle = 0.5 * c.window_s();
        if run.t < middle && t_edge >= middle {
            run.advance_to(middle);
            run.note_boundaries();
        }
        run.advance_to(t_edge);
        while k < edges.len() && edges[k].t_s <= t_edge {
            run.apply(edges[k]);
            k += 1;
        }
    }
    run.advance_to(c.window_s());
    (run.i, run.rec)
}

/// The off-going phase at each of the window's two sector boundaries (the
/// phase connected in the sector before and open in the one after).
fn boundaries(c: &SixStepCircuit<'_>) -> [Option<(usize, f64)>; 2] {
    let n = c.periods_per_sector() as i64;
    let table = super::sectors::sector_table(true);
    std::array::from_fn(|b| {
        let before = table[c.sector_of_period(b as i64 * n - 1)];
        let after = table[c.sector_of_period(b as i64 * n)];
        let t = (b as i64 * n) as f64 * c.period_s();
        [before.positive, before.negative]
            .into_iter()
            .find(|&p| p == after.floating)
            .map(|p| (p, t))
    })
}

impl Run<'_, '_> {
    /// [`SixStepCircuit::sector_at`] from the window's fixed figures.
    fn sector_at(&self, t_s: f64) -> usize {
        sector_at_in(t_s, self.period_s, self.periods_per_sector)
    }

    /// At a sector boundary: the off-going phase's current.
    fn note_boundaries(&mut self) {
        for b in 0..2 {
            if let Some((p, t_b)) = self.off_going[b]
                && (self.t - t_b).abs() <= 1e-12 * self.c.window_s()
            {
                self.rec.commutation_current_a[b] = self.i[p].abs();
            }
        }
    }

    /// Integrate to `t_end` in pieces of constant topology, at most half
    /// of a PWM period each (the back-EMF taken at each piece's middle).
    fn advance_to(&mut self, t_end: f64) {
        let max_piece = self.c.period_s() / 2.0;
        let mut guard = 0;
        while self.t < t_end && guard < 10_000 {
            guard += 1;
            let d_max = (t_end - self.t).min(max_piece);
            let e = self.c.emfs_with(self.emf_clock, self.t + 0.5 * d_max);
            let piece = solve_piece(self.c, &self.gates, self.i, e);
            let crossing = (0..3)
                .filter(|&k| matches!(piece.terminals[k], Terminal::Diode { .. }))
                .filter_map(|k| piece.zero_crossing_s(k, d_max).map(|t| (t, k)))
                .min_by(|a, b| a.0.total_cmp(&b.0));
            let d = crossing.map_or(d_max, |x| x.0);
            self.tally(&piece, d);
            self.i = std::array::from_fn(|k| piece.current_a(k, d));
            self.t += d;
            if let Some((_, k)) = crossing {
                self.phase_stops(k);
            }
            if self.t >= t_end - 1e-15 * t_end.max(1e-9) {
                self.t = t_end;
            }
        }
    }

    /// Phase `k`'s diode current reached zero: it opens (the others keep
    /// summing to zero); at a commutation this ends the freewheel.
    fn phase_stops(&mut self, k: usize) {
        let residual = self.i[k];
        self.i[k] = 0.0;
        let others: Vec<usize> = (0..3).filter(|&j| j != k && self.i[j] != 0.0).collect();
        for &j in &others {
            self.i[j] += residual / others.len() as f64;
        }
        if others.len() < 2 {
            self.i = [0.0; 3];
        }
        for b in 0..2 {
            if let Some((p, t_b)) = self.off_going[b] {
                let next = t_b + self.c.window_s() / 2.0;
                if p == k && self.t >= t_b && self.t < next && self.rec.commutation_s[b].is_none() {
                    self.rec.commutation_s[b] = Some(self.t - t_b);
                    self.off_going[b] = None;
                }
            }
        }
    }

    /// Book a piece of length `d_s` into the switches' tallies, the held
    /// phase's and the bus's charge.
    fn tally(&mut self, piece: &Piece, d_s: f64) {
        let s = self.sector_at(self.t + 0.5 * d_s);
        for k in (0..3).filter(|_| self.full) {
            let (q, q2) = split_moments(piece, k, d_s);
            match piece.terminals[k] {
                Terminal::Channel { device, .. } => {
                    let ta = &mut self.rec.tallies[device][role_index(self.c.role(s, device))];
                    // High side: i > 0 is drain→source; low side: i < 0.
                    let (fwd, rev) = if device % 2 == 0 {
                        (q2.0, q2.1)
                    } else {
                        (q2.1, q2.0)
                    };
                    ta.i2_forward += fwd;
                    ta.i2_reverse += rev;
                    if device % 2 == 0 {
                        self.rec.bus_a_s += q.0 - q.1;
                    }
                }
                Terminal::Diode { device, .. } => {
                    let ta = &mut self.rec.tallies[device][role_index(self.c.role(s, device))];
                    ta.diode_j += diode_energy_j(self.c, piece, k, d_s);
                    if device % 2 == 0 {
                        self.rec.bus_a_s += q.0 - q.1;
                    }
                }
                Terminal::Open => {}
            }
        }
        let d = super::sectors::sector_table(true)[s];
        let (phase, sign) = match self.c.chop {
            super::inputs::Chop::LowSide => (d.positive, 1.0),
            _ => (d.negative, -1.0),
        };
        self.rec.held_a_s += sign * piece.moments(phase, d_s).0;
    }

    /// Apply one gate edge: book its energy if it is hard (the current at
    /// that instant decides) and change the gate.
    fn apply(&mut self, g: GateEdge) {
        if !self.full {
            self.gates[g.device] = g.on;
            return;
        }
        let (phase, high) = (g.device / 2, g.device.is_multiple_of(2));
        let i = self.i[phase];
        // Current that flows drain→source in this switch when it conducts.
        let forward = if high { i } else { -i };
        let s = self.c.sector_at(g.t_s + 1e-12);
        let role = if g.on {
            self.c.role(s, g.device)
        } else {
            self.c
                .role(self.c.sector_at((g.t_s - 1e-12).max(0.0)), g.device)
        };
        let kind = if g.on {
            self.rec.tallies[g.device][role_index(role)].turn_ons += 1.0;
            if forward > 0.0 {
                Some(EdgeKind::HardOn)
            } else if i == 0.0 {
                Some(EdgeKind::OpenOn)
            } else {
                None
            }
        } else if forward > 0.0 {
            Some(EdgeKind::HardOff)
        } else {
            None
        };
        if let Some(kind) = kind {
            let v_ds_v = self.open_v_ds(phase, high);
            self.rec.edges.push(Edge {
                device: g.device,
                sector: if g.on {
                    s
                } else {
                    self.c.sector_at((g.t_s - 1e-12).max(0.0))
                },
                role,
                kind,
                i_a: forward.abs(),
                v_ds_v,
            });
        }
        self.gates[g.device] = g.on;
    }

    /// The voltage a switch of an open leg blocks before it turns on: the
    /// open terminal at `v_n + e_k`, clamped to the rails.
    fn open_v_ds(&self, phase: usize, high: bool) -> f64 {
        let v = self.c.stage.v_bus_v;
        let e = self.c.emfs_with(self.emf_clock, self.t);
        let piece = solve_piece(self.c, &self.gates, self.i, e);
        let mut sum = 0.0;
        let mut n = 0.0;
        for k in (0..3).filter(|&k| k != phase) {
            if let Terminal::Channel { rail_v, .. }
            | Terminal::Diode {
                clamp_v: rail_v, ..
            } = piece.terminals[k]
            {
                sum += rail_v - e[k];
                n += 1.0;
            }
        }
        let v_n = if n > 0.0 { sum / n } else { 0.0 };
        let v_k = (v_n + e[phase]).clamp(0.0, v);
        if high { v - v_k } else { v_k }
    }
}

/// `∫ V_f(i)·|i| dt` of a diode piece (Simpson's rule on the start, middle
/// and end; the piece ends where its current reaches zero, so it does not
/// change sign), with V_f at the current (`forward::forward_voltage_v`).
fn diode_energy_j(c: &SixStepCircuit<'_>, piece: &Piece, k: usize, d_s: f64) -> f64 {
    let g = |t: f64| {
        let i = piece.current_a(k, t).abs();
        crate::model::physics::forward::forward_voltage_v(c.stage.sw, i) * i
    };
    d_s / 6.0 * (g(0.0) + 4.0 * g(0.5 * d_s) + g(d_s))
}

/// `((∫ i⁺, ∫ |i⁻|), (∫ i² where i > 0, ∫ i² where i < 0))` of phase `k`
/// over `[0, d_s]`, split at its zero crossing.
fn split_moments(piece: &Piece, k: usize, d_s: f64) -> ((f64, f64), (f64, f64)) {
    let cut = piece
        .zero_crossing_s(k, d_s)
        .filter(|_| piece.i0_a[k] != 0.0);
    let mut q = (0.0, 0.0);
    let mut q2 = (0.0, 0.0);
    let mut add = |a: f64, b: f64| {
        let (m1a, m2a) = piece.moments(k, a);
        let (m1b, m2b) = piece.moments(k, b);
        let (m1, m2) = (m1b - m1a, m2b - m2a);
        let mid = piece.current_a(k, 0.5 * (a + b));
        if mid >= 0.0 {
            q.0 += m1.max(0.0);
            q2.0 += m2;
        } else {
            q.1 += (-m1).max(0.0);
            q2.1 += m2;
        }
    };
    match cut {
        Some(t) => {
            add(0.0, t);
            add(t, d_s);
        }
        None => add(0.0, d_s),
    }
    (q, q2)
}
