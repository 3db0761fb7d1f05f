//! The current sampling and the current loop a plan writes, checked by an independent
//! simulation of the written registers (`pwmplan::verify`: each PWM period's switch states
//! from the compare, period, divider and dead-time values, the motor driven through them
//! exactly, diodes in the dead time) with the firmware's loop closed on it: the ADC sample
//! taken at the written trigger count, the PI update of the emitted helper, its compare loaded
//! at the next update event of the written divider.
//!
//! Over random brushed designs of every topology, shunt place and alignment:
//! - at the written trigger, over the compares the loop may write, the shunt's switching
//!   state has lasted the settling time and lasts through the acquisition (read from the
//!   simulated switch timeline, with the shunt's conducting paths written here from the
//!   circuit);
//! - the sample reads the PWM period's mean current plus the bias the plan states (within
//!   1 % of the ripple plus 0.2 % of the current);
//! - the phase margin measured on the simulated loop (open-loop response fitted at the
//!   crossover) agrees with the plan's within 3°, and the overshoot of a simulated reference
//!   step with the plan's within 2 percentage points.

use std::path::Path;

use pwmplan::design::load_design;
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::model::current_loop::{CurrentLoopOut, SamplingOut};
use pwmplan::model::verify::{
    self, Circuit, CurrentPiece, LegState, SwitchInterval, TimerRegisters,
};
use pwmplan::plan::{self, Plan};
use pwmplan::register_check;
use pwmplan::solve;

use crate::random_design;
use random_design::*;

/// The written plan's loop, as firmware runs it on the simulated stage.
struct Drive {
    regs: TimerRegisters,
    topology: String,
    circuit: Circuit,
    sampling: SamplingOut,
    cl: CurrentLoopOut,
    /// The loop's compare clamp (compare limits and sampling window).
    lo: u64,
    hi: u64,
    acquire_s: f64,
    settle_s: f64,
    centre: bool,
    /// The loop samples and updates at both counter extremes.
    half: bool,
}

fn current_at(pieces: &[CurrentPiece], t: f64) -> f64 {
    let k = pieces.partition_point(|p| p.t1_s <= t);
    pieces[k.min(pieces.len() - 1)].current_at(t)
}

impl Drive {
    fn period_s(&self) -> f64 {
        self.regs.period_s()
    }

    /// The trigger's time in the PWM period at compare `c`, read from the written count.
    fn trigger_s(&self, c: u64) -> f64 {
        let tick = self.regs.tick_s;
        let s = &self.sampling;
        let n = if s.trigger == "fixed" {
            s.trigger_count
        } else {
            ((c + s.trigger_add) / 2).saturating_sub(s.lead_ticks)
        };
        if self.centre && !s.counting_up {
            self.period_s() - n as f64 * tick
        } else {
            n as f64 * tick
        }
    }

    /// The acquisition's middle from the control period's update event, s: a window that
    /// runs over the counter bottom belongs to the period it ends in.
    fn sample_offset_s(&self, c: u64) -> f64 {
        let mid = self.trigger_s(c) + 0.5 * self.acquire_s;
        if self.centre && self.sampling.state == "on-time" && mid > 0.5 * self.period_s() {
            mid - self.period_s()
        } else {
            mid
        }
    }

    fn pieces(&self, c: u64, i0: f64) -> Vec<CurrentPiece> {
        let st = written_stage(&self.topology, self.regs.duty_steps(), c);
        verify::run_period(&self.regs, &st, &self.circuit, i0).expect("period")
    }

    /// The emitted helper's PI update (f64): returns the compare and whether it clamped.
    fn pi(&self, integral: &mut f64, e: f64) -> (u64, bool) {
        let cl = &self.cl;
        let t = 1.0 / cl.rate_hz;
        let next = *integral + cl.ki_v_per_a_s * t * e;
        let zero = cl.zero_volt_duty * self.regs.duty_steps() as f64;
        let counts = zero + (cl.kp_v_per_a * e + next) * cl.counts_per_volt;
        let (lo, hi) = (self.lo as f64, self.hi as f64);
        if counts > hi {
            if e <= 0.0 {
                *integral = next;
            }
            return (self.hi, true);
        }
        if counts < lo {
            if e >= 0.0 {
                *integral = next;
            }
            return (self.lo, true);
        }
        *integral = next;
        ((counts + 0.5) as u64, false)
    }

    /// The top trigger's acquisition middle in the PWM period, s (sampling at both extremes).
    fn top_sample_s(&self) -> f64 {
        let s = &self.sampling;
        let n = s.top_trigger_count.expect("a top trigger") as f64 * self.regs.tick_s;
        let t = if s.top_counting_up {
            n
        } else {
            self.period_s() - n
        };
        t + 0.5 * self.acquire_s
    }

    /// The bottom trigger's acquisition middle after the bottom, s (sampling at both
    /// extremes; the window straddles the bottom, its middle at or after it).
    fn bottom_sample_s(&self) -> f64 {
        let mid = self.trigger_s(0) + 0.5 * self.acquire_s;
        let mid = if mid > 0.5 * self.period_s() {
            mid - self.period_s()
        } else {
            mid
        };
        mid.max(0.0)
    }

    /// `run` for a loop that samples and updates at both extremes: each sample's compare is
    /// loaded at the next extreme (the period run again once the down count's compare is
    /// known; the bottom's sample does not depend on it).
    fn run_half(
        &self,
        i_start: f64,
        c_start: u64,
        updates: usize,
        mut compare_for: impl FnMut(usize, f64) -> u64,
    ) -> (Vec<f64>, f64) {
        let (mut i, mut up) = (i_start, c_start);
        let steps = self.regs.duty_steps();
        let mut samples = Vec::with_capacity(updates);
        let run = |up: u64, down: u64, i: f64| {
            let st = written_stage_halves(&self.topology, steps, up, down);
            verify::run_period(&self.regs, &st, &self.circuit, i).expect("period")
        };
        // Whole PWM periods (an odd count runs one update more), so the state handed back is
        // at a bottom with its up count's compare known.
        for j in 0..updates.div_ceil(2) {
            let y = current_at(&run(up, up, i), self.bottom_sample_s());
            samples.push(y);
            let down = compare_for(2 * j, y);
            let pieces = run(up, down, i);
            i = pieces.last().map_or(i, |p| p.i1_a);
            let y = current_at(&pieces, self.top_sample_s());
            samples.push(y);
            up = compare_for(2 * j + 1, y);
        }
        (samples, i)
    }

    /// Runs `updates` control periods with compares from `compare_for(k, y_k)` (y_k the
    /// sample of control period k); returns the samples and the current at the end.
    fn run(
        &self,
        i_start: f64,
        c_start: u64,
        updates: usize,
        mut compare_for: impl FnMut(usize, f64) -> u64,
    ) -> (Vec<f64>, f64) {
        if self.half {
            return self.run_half(i_start, c_start, updates, compare_for);
        }
        let n = self.cl.update_divider as usize;
        let (mut i, mut c) = (i_start, c_start);
        let mut samples = Vec::with_capacity(updates);
        // A sample before the update event is taken in the previous control period's last
        // PWM period.
        let mut early: Option<f64> = None;
        for k in 0..updates {
            let mut y = early.take();
            for j in 0..n {
                let pieces = self.pieces(c, i);
                let off = self.sample_offset_s(c);
                if j == 0 && off >= 0.0 && y.is_none() {
                    y = Some(current_at(&pieces, off));
                }
                if j == n - 1 && off < 0.0 {
                    early = Some(current_at(&pieces, self.period_s() + off));
                }
                i = pieces.last().map_or(i, |p| p.i1_a);
            }
            let y = y.unwrap_or(i);
            samples.push(y);
            c = compare_for(k, y);
        }
        (samples, i)
    }
}

/// Least-squares amplitude of `x_k ≈ a·cos(θk) + b·sin(θk) + c + d·k`, as the complex
/// `a − j·b` (the phasor of `cos`), by the normal equations.
fn phasor(x: &[f64], theta: f64) -> (f64, f64) {
    let rows: Vec<[f64; 4]> = (0..x.len())
        .map(|k| {
            let k = k as f64;
            [
                (theta * k).cos(),
                (theta * k).sin(),
                1.0,
                k / x.len() as f64,
            ]
        })
        .collect();
    let mut m = [[0.0f64; 5]; 4];
    for (row, &v) in rows.iter().zip(x) {
        for r in 0..4 {
            for c in 0..4 {
                m[r][c] += row[r] * row[c];
            }
            m[r][4] += row[r] * v;
        }
    }
    for col in 0..4 {
        let p = (col..4)
            .max_by(|&a, &b| m[a][col].abs().total_cmp(&m[b][col].abs()))
            .unwrap();
        m.swap(col, p);
        let pivot = m[col];
        for (r, row) in m.iter_mut().enumerate() {
            if r != col {
                let f = row[col] / pivot[col];
                for (x, p) in row.iter_mut().zip(pivot.iter()).skip(col) {
                    *x -= f * p;
                }
            }
        }
    }
    (m[0][4] / m[0][0], -(m[1][4] / m[1][1]))
}

fn cmul(a: (f64, f64), b: (f64, f64)) -> (f64, f64) {
    (a.0 * b.0 - a.1 * b.1, a.0 * b.1 + a.1 * b.0)
}

fn cdiv(a: (f64, f64), b: (f64, f64)) -> (f64, f64) {
    let d = b.0 * b.0 + b.1 * b.1;
    ((a.0 * b.0 + a.1 * b.1) / d, (a.1 * b.0 - a.0 * b.1) / d)
}

/// The emitted helper's controller `K_p + K_i·T·z/(z − 1)` at `z = e^(jθ)`, written here
/// from its update law (the integral includes the present error).
fn controller(cl: &CurrentLoopOut, theta: f64) -> (f64, f64) {
    let t = 1.0 / cl.rate_hz;
    let z = (theta.cos(), theta.sin());
    let integ = cdiv(z, (z.0 - 1.0, z.1));
    (
        cl.kp_v_per_a + cl.ki_v_per_a_s * t * integ.0,
        cl.ki_v_per_a_s * t * integ.1,
    )
}

/// The open loop measured on the simulated stage at `theta` rad per update: the compare
/// the controller would write after sample k, `u_k`, driven as a sine about `c0` (loaded at
/// the next update event), the samples fitted; `C·Y/U`.
fn measured_loop(d: &Drive, c0: u64, i0: f64, theta: f64, amp_v: f64) -> (f64, f64) {
    let cpv = d.cl.counts_per_volt;
    let zero = d.cl.zero_volt_duty * d.regs.duty_steps() as f64;
    let cycles = 16.0;
    let per_cycle = std::f64::consts::TAU / theta;
    let tau_updates = d.circuit.l_h / d.circuit.r_ohm / (1.0 / d.cl.rate_hz);
    let warm = (6.0 * tau_updates).max(2.0 * per_cycle).min(4000.0) as usize;
    let fit = (cycles * per_cycle).ceil() as usize;
    let total = warm + fit;
    let mut u = Vec::with_capacity(total);
    let (y, _) = d.run(i0, c0, total, |k, _| {
        let c = (c0 as f64 + amp_v * cpv * (theta * k as f64).sin()).round();
        let c = c.clamp(d.lo as f64, d.hi as f64) as u64;
        u.push((c as f64 - zero) / cpv);
        c
    });
    let yp = phasor(&y[warm..], theta);
    let up = phasor(&u[warm..], theta);
    cmul(controller(&d.cl, theta), cdiv(yp, up))
}

/// Crossover and phase margin (degrees) of the simulated loop: bisection on |C·G| = 1 about
/// the plan's crossover.
fn measured_margin(d: &Drive, c0: u64, i0: f64, amp_a: f64) -> Option<(f64, f64)> {
    let t = 1.0 / d.cl.rate_hz;
    let wc = std::f64::consts::TAU * d.cl.crossover_hz;
    let at = |w: f64| {
        let l = measured_loop(d, c0, i0, w * t, amp_a * d.cl.kp_v_per_a);
        (l.0.hypot(l.1), l.1.atan2(l.0))
    };
    let (mut lo, mut hi) = (0.6 * wc, 1.6 * wc);
    if at(lo).0 < 1.0 || at(hi).0 > 1.0 {
        return None;
    }
    for _ in 0..14 {
        let mid = (lo * hi).sqrt();
        if at(mid).0 > 1.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let w = (lo * hi).sqrt();
    Some((w, 180.0 + at(w).1.to_degrees()))
}

/// The current paths a shunt sees, written from the circuit: is the motor current in the
/// shunt in this switch state?
fn shunt_sees(topology: &str, place: &str, iv: &SwitchInterval) -> bool {
    use LegState::*;
    let (a, b) = (iv.a, iv.b);
    match (topology, place) {
        (_, "phase") => true,
        ("low-side", _) => a == High,
        ("half-bridge", "supply-return") => a == High,
        ("half-bridge", _) => a == Low,
        ("h-bridge-bipolar", "supply-return") | ("h-bridge-unipolar", "supply-return") => {
            matches!((a, b), (High, Some(Low)) | (Low, Some(High)))
        }
        (_, _) => b == Some(Low),
    }
}

/// At compare `c`, the shunt's state holds from `settle` before the trigger to the end of
/// the acquisition, and (phase shunt) no leg switches in that span. Returns what is wrong.
fn window_holds(d: &Drive, place: &str, c: u64) -> Result<(), String> {
    window_holds_at(d, place, c, d.trigger_s(c))?;
    if d.half {
        window_holds_at(d, place, c, d.top_sample_s() - 0.5 * d.acquire_s)?;
    }
    Ok(())
}

/// [`window_holds`] for the trigger at `trigger` s into the period.
fn window_holds_at(d: &Drive, place: &str, c: u64, trigger: f64) -> Result<(), String> {
    let st = written_stage(&d.topology, d.regs.duty_steps(), c);
    let v = verify::verify(&d.regs, &st, &d.circuit).map_err(|e| format!("{e:?}"))?;
    let t = d.period_s();
    let start = trigger - d.settle_s;
    let end = trigger + d.acquire_s;
    // Sample the span finely (a tenth of a tick) against the periodic timeline.
    let steps = (((end - start) / (0.1 * d.regs.tick_s)).ceil() as usize).max(8);
    let mut first: Option<(LegState, Option<LegState>)> = None;
    for k in 0..=steps {
        let time = (start + (end - start) * k as f64 / steps as f64).rem_euclid(t);
        let iv = v
            .timeline
            .iter()
            .find(|iv| iv.t0_s <= time && time < iv.t1_s)
            .or(v.timeline.last())
            .unwrap();
        if !shunt_sees(&d.topology, place, iv) {
            return Err(format!(
                "compare {c}: the {place} shunt does not carry the motor current at {:.3} µs of the period (legs {:?}/{:?}; window {:.3}..{:.3} µs, tick {:.4} µs, dead {:.4} µs, {:?})",
                time * 1e6,
                iv.a,
                iv.b,
                start * 1e6,
                end * 1e6,
                d.regs.tick_s * 1e6,
                d.regs.dead_time_s * 1e6,
                d.sampling
            ));
        }
        let state = (iv.a, iv.b);
        if place == "phase" && first.is_some_and(|f| f != state) {
            return Err(format!(
                "compare {c}: a leg switches inside the phase shunt's window"
            ));
        }
        first.get_or_insert(state);
    }
    Ok(())
}

struct Outcome {
    pm_plan: f64,
    pm_sim: f64,
    os_plan: f64,
    os_sim: f64,
    label: String,
}

/// Plan a random brushed design with current sensing and a loop; `None` when it was not
/// feasible or its loop cannot be exercised linearly (counted, not checked).
fn random_case(
    r: &mut Rng,
    dir: &Path,
    kind: usize,
) -> Result<Option<(Plan, Drive, String)>, String> {
    let (topology, modulation) = TOPOLOGIES[kind];
    let (switch, v_dss) = switch_text(r);
    let mut board = board_text(r, topology, modulation, false);
    let design = design_text(r, v_dss, false, false);
    let place = *r.pick(&["supply-return", "leg", "phase"]);
    // Drawn to the hundredth of a µs, as written in the board.
    let hundredths = |x: f64| (x * 100.0).round() / 100.0;
    let (settle, acquire) = (hundredths(r.range(0.1, 1.5)), hundredths(r.range(0.1, 0.8)));
    board.push_str(&format!(
        "  current_sensing: {{ settle_time: \"{settle:.2} us\", sample_time: \"{acquire:.2} us\", place: {place} }}\n"
    ));
    if r.chance(0.5) {
        board = board.replacen("    fpu:", "    update_divider: { max: 8 }\n    fpu:", 1);
    }
    let mut rate = if r.chance(0.5) {
        format!("rate: \"{:.0} Hz\", ", r.range(3_000.0, 30_000.0))
    } else {
        String::new()
    };
    // A phase shunt on a board whose compares load at both extremes, asked for a rate above
    // any PWM rate drawn: on a centre-aligned plan the loop samples and updates every half
    // period. Drawn from a generator of its own, so the designs drawn before stay the same.
    let mut own = Rng(r.0 ^ 0x4841_4c46);
    if place == "phase" && modulation != "unipolar" && own.chance(0.5) {
        board = board.replacen(
            "update_divider: { max: 8 }",
            "update_divider: { max: 8, each_extreme: true }",
            1,
        );
        if !board.contains("each_extreme") {
            board = board.replacen(
                "    fpu:",
                "    update_divider: { max: 1, each_extreme: true }\n    fpu:",
                1,
            );
        }
        for edge in ["alignments: [edge, centre]", "alignments: [edge]"] {
            board = board.replacen(edge, "alignments: [centre]", 1);
        }
        rate = "rate: \"400 kHz\", ".into();
    }
    let pm = *r.pick(&[45.0, 55.0, 60.0, 70.0]);
    let design = format!("{design}  current_loop: {{ {rate}phase_margin_deg: {pm} }}\n");
    std::fs::write(dir.join("switch.yaml"), &switch).map_err(|e| e.to_string())?;
    std::fs::write(dir.join("board.yaml"), &board).map_err(|e| e.to_string())?;
    std::fs::write(dir.join("design.yaml"), &design).map_err(|e| e.to_string())?;
    let d = load_design(Origin::Disk(dir.join("design.yaml")))
        .map_err(|e| format!("{e}\n--- board\n{board}\n--- design\n{design}"))?;
    let ev = Evaluator::new(&d);
    let obj = objective(
        design
            .lines()
            .find(|l| l.starts_with("  objective: "))
            .unwrap_or("")
            .trim_start_matches("  objective: "),
    );
    let sol = solve::solve(&ev, obj);
    let Some(p) = plan::build(&d, &ev, &sol, None).filter(|p| p.feasible) else {
        return Ok(None);
    };
    // The product's own check of the written registers (the trigger's window among them)
    // agrees with the plan.
    let check = register_check::check(&register_check::RegisterView::of(&p));
    if !check.disagreements.is_empty() || check.sample_low_on_before_s.is_none() {
        return Err(format!(
            "the register check disagrees: {:?}\n{design}\n{board}",
            check.disagreements
        ));
    }
    if p.findings.iter().any(|f| f.code == "current-loop-reversal") {
        // The plan says its loop figures do not hold here (checked by the finding's own test).
        return Ok(None);
    }
    let (Some(sampling), Some(cl)) = (p.sampling.clone(), p.current_loop.clone()) else {
        return Err(format!(
            "a feasible plan without its sampling or loop\n{design}\n{board}"
        ));
    };
    let rated = p
        .cases
        .iter()
        .find(|c| c.name == "rated")
        .ok_or("no rated case")?;
    let centre = p.pwm.alignment == "centre";
    let regs = written_registers(&p);
    let circuit = Circuit {
        r_ohm: p.load.r_ohm,
        l_h: p.load.l_h,
        back_emf_v: rated.back_emf_v,
        v_bus_v: rated.v_bus_v,
        // The channels at the resistance the plan's loop states (its R less the motor's),
        // so the check is on the loop's dynamics, not on the temperature R is taken at: two
        // in the path of an H-bridge, one of a half-bridge, a single switch's for its duty
        // (the verifier's freewheel diode has no slope resistance).
        r_ds_on_ohm: (cl.resistance_ohm - p.load.r_ohm)
            / match p.topology.as_str() {
                "low-side" => rated.compare_duty.max(1e-3),
                t if t.starts_with("h-bridge") => 2.0,
                _ => 1.0,
            },
        v_sd_v: p.load.v_sd_v,
        v_f_v: p.load.freewheel_v_f_v.unwrap_or(0.0),
    };
    let half = cl.updates_per_pwm_period == 2;
    if half != sampling.top_trigger_count.is_some() {
        return Err(format!(
            "two updates per period without two triggers, or the reverse\n{design}\n{board}"
        ));
    }
    let drive = Drive {
        half,
        regs,
        topology: p.topology.clone(),
        circuit,
        lo: p.pwm.compare_min.max(sampling.compare_min),
        hi: p.pwm.compare_max.min(sampling.compare_max),
        sampling,
        cl,
        acquire_s: acquire * 1e-6,
        settle_s: settle * 1e-6,
        centre,
    };
    let label = format!(
        "{} {} {place} shunt, {pm}°{}",
        p.topology,
        p.pwm.alignment,
        if half { ", both extremes" } else { "" }
    );
    Ok(Some((p, drive, label)))
}

/// The mean current of one PWM period, and its ripple, from the simulated pieces.
fn mean_and_ripple(pieces: &[CurrentPiece], t: f64) -> (f64, f64) {
    let n = 2000;
    let vals: Vec<f64> = (0..n)
        .map(|k| current_at(pieces, t * (k as f64 + 0.5) / n as f64))
        .collect();
    let mean = vals.iter().sum::<f64>() / n as f64;
    let (lo, hi) = vals
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
    (mean, hi - lo)
}

/// The closed loop's state at an update event: the compare loaded, the current, the integral.
#[derive(Clone, Copy)]
struct LoopState {
    compare: u64,
    current_a: f64,
    integral: f64,
}

/// Run the closed loop at `i_ref` for `updates` from `from` (from rest when `None`).
fn settle(d: &Drive, i_ref: f64, updates: usize, from: Option<LoopState>) -> LoopState {
    let zero = (d.cl.zero_volt_duty * d.regs.duty_steps() as f64).round() as u64;
    let start = from.unwrap_or(LoopState {
        compare: zero.clamp(d.lo, d.hi),
        current_a: 0.0,
        integral: 0.0,
    });
    let mut integral = start.integral;
    let mut last = start.compare;
    let (_, i) = d.run(start.current_a, start.compare, updates, |_, y| {
        last = d.pi(&mut integral, i_ref - y).0;
        last
    });
    LoopState {
        compare: last,
        current_a: i,
        integral,
    }
}

/// The loop's response to a reference step of `step` from the settled state `s`, up and
/// down: half their difference per ampere keeps the linear response and drops the
/// even-order part (an up-count sample instant moves with the duty). `None` when the output
/// clamped.
fn step_pair(d: &Drive, s: LoopState, i_base: f64, step: f64) -> Option<Vec<f64>> {
    let run_step = |delta: f64| {
        let mut integral = s.integral;
        let mut clamped = false;
        let target = i_base + delta;
        let (y, _) = d.run(s.current_a, s.compare, 400, |_, y| {
            let (c, cl) = d.pi(&mut integral, target - y);
            clamped |= cl;
            c
        });
        (!clamped).then_some(y)
    };
    let (up, down) = (run_step(step)?, run_step(-step)?);
    Some(
        up.iter()
            .zip(&down)
            .map(|(a, b)| (a - b) / (2.0 * step))
            .collect(),
    )
}

fn check_case(p: &Plan, d: &Drive, place: &str, label: &str) -> Result<Option<Outcome>, String> {
    // The window, on the registers, at the loop's clamp and the rated compare.
    let rated_c = p
        .cases
        .iter()
        .find(|c| c.name == "rated")
        .map_or(d.lo, |c| c.compare);
    for c in [d.lo, d.hi, rated_c.clamp(d.lo, d.hi)] {
        window_holds(d, place, c).map_err(|e| format!("{label}: {e}"))?;
    }
    let i_rated = p
        .cases
        .iter()
        .find(|c| c.name == "rated")
        .map_or(1.0, |c| c.load_current_a);
    let tau = d.circuit.l_h / d.circuit.r_ohm;
    let t_c = 1.0 / d.cl.rate_hz;
    let settle_updates = ((8.0 * tau / t_c) as usize + 200).min(20_000);
    // The step: a tenth of the rated current, or thirty times the current one compare
    // count moves at the crossover (V per count over ω_c·L) where the count is coarse, so
    // the compare's quantisation does not swamp it; beyond half the rated current the loop
    // cannot be stepped linearly here (not compared).
    let count_a =
        1.0 / d.cl.counts_per_volt / (std::f64::consts::TAU * d.cl.crossover_hz * d.circuit.l_h);
    let step = (0.1 * i_rated).max(30.0 * count_a);
    if step > 0.5 * i_rated {
        return Ok(None);
    }
    let i_base = i_rated - step;
    let settled = settle(d, i_base, settle_updates, None);
    let (c0, i0) = (settled.compare, settled.current_a);
    if c0 <= d.lo || c0 >= d.hi {
        return Ok(None);
    }
    // The plan's figures are for a current that stays one-signed and continuous through
    // each period (it says so, and warns at the rated case); the down step, with its
    // undershoot (half the step again, the largest overshoot drawn), must too.
    let pieces = d.pieces(c0, i0);
    let (mean, ripple) = mean_and_ripple(&pieces, d.period_s());
    if ripple >= 2.0 * mean * (i_base - 1.5 * step) / i_base {
        return Ok(None);
    }
    // The sample reads the period's mean, less the bias the plan states (the R–L's
    // curvature, at the rated case; here at 90 % of it).
    // Sampled at both extremes: the plan states the two samples' mean bias (what the
    // integrator settles on).
    let sampled = if d.half {
        0.5 * (current_at(&pieces, d.bottom_sample_s()) + current_at(&pieces, d.top_sample_s()))
    } else {
        current_at(&pieces, d.sample_offset_s(c0).rem_euclid(d.period_s()))
    };
    let bias =
        d.cl.sample_bias_a
            .ok_or("a brushed loop without its sample bias")?;
    if (sampled - mean - bias).abs() > 0.01 * ripple + 0.002 * mean.abs() {
        return Err(format!(
            "{label}: the sample reads {sampled:.5} A against the period's mean {mean:.5} A and the plan's bias {bias:.5} A (ripple {ripple:.4} A)"
        ));
    }
    // The step response, averaged over steps taken at several phases of the compare's
    // quantisation pattern (the settled loop run on by a few updates between them): five,
    // or forty where a count is a coarse step of the current and the settled response still
    // wanders by more than a per cent.
    let mut y = Vec::new();
    for phases in [5usize, 40] {
        y = vec![0.0; 400];
        let mut state = settled;
        for _ in 0..phases {
            let Some(r) = step_pair(d, state, i_base, step) else {
                return Ok(None);
            };
            for (acc, v) in y.iter_mut().zip(&r) {
                *acc += v / phases as f64;
            }
            state = settle(d, i_base, 7, Some(state));
        }
        let wander = y[250..].iter().map(|v| (v - 1.0).abs()).fold(0.0, f64::max);
        if wander <= 0.01 {
            break;
        }
    }
    // The overshoot is read within eight rise times (to 90 %): later the compare's
    // quantisation pattern (a count is a few mA here) is all that moves.
    let k90 = y.iter().position(|&v| v >= 0.9).unwrap_or(y.len());
    let peak = y[..(8 * k90.max(1)).min(y.len())]
        .iter()
        .copied()
        .fold(f64::MIN, f64::max);
    let os_sim = 100.0 * (peak - 1.0).max(0.0);
    let Some((_, pm_sim)) = measured_margin(d, c0, i0, 0.1 * i_rated) else {
        return Err(format!("{label}: no crossover found near the plan's"));
    };
    Ok(Some(Outcome {
        pm_plan: d.cl.phase_margin_deg,
        pm_sim,
        os_plan: d.cl.overshoot_pct,
        os_sim,
        label: format!(
            "{label} (ripple/mean {:.2}, T/τ {:.3}, α·L/R {:.1})",
            ripple / mean,
            t_c / tau,
            std::f64::consts::TAU * d.cl.bandwidth_hz * d.circuit.l_h / d.circuit.r_ohm
        ),
    }))
}

/// The plan's loop agrees with the simulated loop on at least 20 random brushed designs
/// (60 by default).
#[test]
fn the_written_loop_has_the_margin_and_overshoot_the_plan_states() {
    let mut r = Rng(0x100F_2026_1204);
    let tmp = tempfile::tempdir().unwrap();
    let mut outcomes = Vec::new();
    let mut failures = Vec::new();
    let mut draws = 0;
    // `PWMPLAN_LOOP_DESIGNS=N` compares N designs instead of 60.
    let wanted = std::env::var("PWMPLAN_LOOP_DESIGNS")
        .ok()
        .and_then(|v| v.parse::<usize>().ok())
        .unwrap_or(60);
    while outcomes.len() < wanted && draws < 20 * wanted {
        let kind = draws % 4;
        draws += 1;
        match random_case(&mut r, tmp.path(), kind) {
            Ok(Some((p, d, label))) => {
                let place = label.split(' ').nth(2).unwrap_or("").to_string();
                match check_case(&p, &d, &place, &label) {
                    Ok(Some(o)) => outcomes.push(o),
                    Ok(None) => {}
                    Err(e) => failures.push(e),
                }
            }
            Ok(None) => {}
            Err(e) => failures.push(e),
        }
    }
    let mut report = String::new();
    for o in &outcomes {
        report.push_str(&format!(
            "{:<90} PM plan {:6.2}° sim {:6.2}°  overshoot plan {:5.2} % sim {:5.2} %\n",
            o.label, o.pm_plan, o.pm_sim, o.os_plan, o.os_sim
        ));
        if (o.pm_plan - o.pm_sim).abs() > 3.0 || (o.os_plan - o.os_sim).abs() > 2.0 {
            failures.push(format!("{}: outside 3° / 2 pp", o.label));
        }
    }
    eprintln!("{report}");
    assert!(failures.is_empty(), "{}\n{report}", failures.join("\n"));
    assert!(
        outcomes.len() >= 20,
        "only {} designs compared of {draws}\n{report}",
        outcomes.len()
    );
}

/// A bundled design's least-loss plan with its board's and design's text edited (`edit`
/// takes the file's text): `(design, board, switch)` file names under `boards/`.
fn edited_plan(
    (design, board, switch): (&str, &str, &str),
    edit_board: impl Fn(String) -> String,
    edit_design: impl Fn(String) -> String,
) -> Plan {
    let tmp = tempfile::tempdir().unwrap();
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
    let read = |name: &str| std::fs::read_to_string(root.join(name)).unwrap();
    std::fs::create_dir_all(tmp.path().join("switches")).unwrap();
    std::fs::write(tmp.path().join(switch), read(switch)).unwrap();
    std::fs::write(tmp.path().join(board), edit_board(read(board))).unwrap();
    std::fs::write(tmp.path().join(design), edit_design(read(design))).unwrap();
    let d = load_design(Origin::Disk(tmp.path().join(design))).unwrap();
    let ev = Evaluator::new(&d);
    let sol = solve::solve(&ev, objective("least-loss"));
    plan::build(&d, &ev, &sol, None).unwrap()
}

/// The winch's plan with its board and design edited: `(from, to)` text replacements.
fn winch_plan(board_edit: (&str, &str), design_edits: &[(&str, &str)]) -> Plan {
    edited_plan(
        ("winch.yaml", "heron-hb48.yaml", "switches/corrie-100.yaml"),
        |t| t.replacen(board_edit.0, board_edit.1, 1),
        |t| {
            design_edits
                .iter()
                .fold(t, |t, (from, to)| t.replacen(from, to, 1))
        },
    )
}

/// The update divider: the nearest whole number of PWM periods to the asked rate within the
/// board's divider; a rate above the PWM rate is refused with a warning and one update per
/// period.
#[test]
fn the_loop_rate_is_a_whole_number_of_pwm_periods() {
    let divider = (
        "    fpu: true\n",
        "    fpu: true\n    update_divider: { max: 8 }\n",
    );
    let p = winch_plan(
        divider,
        &[("    phase_margin_deg: 60", "    rate: \"3 kHz\"")],
    );
    let cl = p.current_loop.unwrap();
    // 11.72 kHz PWM (the plan's) / 3 kHz = 3.9: four periods, 2.93 kHz.
    assert!(
        (cl.pwm_rate_hz - 11_721.0).abs() < 1.0,
        "{}",
        cl.pwm_rate_hz
    );
    assert_eq!(cl.update_divider, 4);
    assert!((cl.rate_hz - cl.pwm_rate_hz / 4.0).abs() < 1e-9);
    assert!(!p.findings.iter().any(|f| f.code == "current-loop-rate"));
    let p = winch_plan(
        divider,
        &[("    phase_margin_deg: 60", "    rate: \"50 kHz\"")],
    );
    assert_eq!(p.current_loop.unwrap().update_divider, 1);
    assert!(
        p.findings
            .iter()
            .any(|f| f.code == "current-loop-rate" && f.severity == "warning")
    );
}

/// Where the current reverses within each period the dead time's voltage follows it and the
/// loop figures do not hold: the plan says so.
#[test]
fn a_current_reversing_each_period_is_flagged() {
    // A tenth of the winch's inductance, asked for no ripple limit: the ripple at the
    // frequency the plan picks is far above twice the 12 A.
    let p = winch_plan(
        ("", ""),
        &[
            (
                "    inductance: \"0.32 mH\"",
                "    inductance: \"0.005 mH\"",
            ),
            ("    max_ripple: \"15 %\"\n", ""),
        ],
    );
    let rated = p.cases.iter().find(|c| c.name == "rated").unwrap();
    assert!(
        rated.ripple_peak_to_peak_a > 2.0 * rated.load_current_a,
        "{} A ripple",
        rated.ripple_peak_to_peak_a
    );
    assert!(p.findings.iter().any(|f| f.code == "current-loop-reversal"));
    let p = winch_plan(("", ""), &[]);
    assert!(!p.findings.iter().any(|f| f.code == "current-loop-reversal"));
}

/// A unipolar bridge's supply-return shunt reads the current in the active state only (leg A
/// high, leg B low): the sampling window bounds leg A's lowest compare duty, not the needed
/// range's low end (which is leg B's duty), so the winch plans without its standstill hold and
/// cannot hold 12 A at standstill, where the active state is shorter than the window.
#[test]
fn a_unipolar_supply_return_shunt_bounds_leg_a() {
    let place = ("place: leg }", "place: supply-return }");
    let hold = (
        "    standstill: { current: \"12 A\" }   # holding the load with the motor stopped\n",
        "",
    );
    let p = winch_plan(place, &[hold]);
    assert!(p.feasible, "{:?}", p.blocked_by);
    let k = p
        .constraints
        .iter()
        .find(|k| k.name == "sampling-window")
        .unwrap();
    let sampling = p.sampling.as_ref().unwrap();
    assert_eq!(sampling.state, "active");
    // Leg A's lowest compare duty over the range (300 rpm at the highest supply), above
    // the window's P/2 + 2.625 µs worth of counts.
    assert!(
        k.value.unwrap() > 0.5 && k.value.unwrap() >= k.limit,
        "{k:?}"
    );
    assert!(p.findings.iter().any(|f| f.code == "current-loop-floor"));
    let p = winch_plan(place, &[]);
    assert!(!p.feasible);
}

/// The belt feeder's plan on the Wren board with a phase shunt on a timer that loads its
/// compares at both extremes, asked for an 80 kHz loop, the board's alignments as given.
fn feeder_both_extremes(alignments: &str) -> Plan {
    edited_plan(
        (
            "belt-feeder.yaml",
            "wren-hb24.yaml",
            "switches/tarn-40.yaml",
        ),
        |t| {
            t.replacen("alignments: [edge, centre]", alignments, 1)
                .replacen(
                    "    fpu: true\n",
                    "    fpu: true\n    update_divider: { max: 4, each_extreme: true }\n",
                    1,
                )
                + "  current_sensing: { settle_time: \"0.6 us\", sample_time: \"0.3 us\", place: phase }\n"
        },
        |t| t + "  current_loop: { rate: \"80 kHz\" }\n",
    )
}

/// Asked for a loop above the PWM rate where the board can sample at both extremes: a
/// centre-aligned plan updates twice per period (both triggers written); an edge-aligned one
/// once, and its warning names the alignment as the reason and how to change it.
#[test]
fn a_loop_above_the_pwm_rate_samples_at_both_extremes_where_it_can() {
    let p = feeder_both_extremes("alignments: [centre]");
    let cl = p.current_loop.as_ref().unwrap();
    assert_eq!(p.pwm.alignment, "centre");
    assert_eq!(cl.updates_per_pwm_period, 2);
    assert_eq!(cl.update_extremes, Some(1));
    assert!((cl.rate_hz - 2.0 * cl.pwm_rate_hz).abs() < 1e-6);
    assert!(p.sampling.as_ref().unwrap().top_trigger_count.is_some());
    let p = feeder_both_extremes("alignments: [edge]");
    assert_eq!(p.current_loop.as_ref().unwrap().updates_per_pwm_period, 1);
    assert!(p.sampling.as_ref().unwrap().top_trigger_count.is_none());
    let f = p
        .findings
        .iter()
        .find(|f| f.code == "current-loop-rate")
        .expect("a rate warning");
    assert!(
        f.message.contains("edge-aligned") && f.message.contains("list only `centre`"),
        "{}",
        f.message
    );
}
