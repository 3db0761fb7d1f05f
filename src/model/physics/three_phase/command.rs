//! The sinusoidal leg command that makes up what the bridge takes off: the switch drops and
//! the dead times edge by edge, and the hold of one compare per PWM period.
//!
//! Owns: the fixed point between the command and the legs' error impedance, and which account
//! of that impedance is used (the harmonic balance of `dead_time`, or where it does not settle
//! the averaged bridge of `averaged`). Does not own the leg error (`dead_time`), the motor's
//! phasor equation (`sinusoidal`) nor the time stepping (`averaged`).

use std::collections::HashMap;
use std::sync::{Arc, Mutex};

use super::averaged::{AveragedDrive, averaged_current, difference_jacobian, newton_step};
use super::dead_time::{LegConditions, PhaseCurrent, error_impedance_warm_ohm};
use super::inputs::*;
use super::sinusoidal::{
    BridgeDrops, MotorOperatingPoint, SinusoidalCommand, sinusoidal_point_with_drops,
    sinusoidal_point_with_series,
};

/// The fundamental a leg delivers per unit of the sine it is written from, when firmware
/// writes one compare per PWM period from the angle at the period's centre: a zero-order hold
/// centred on its samples, gain `sin(x)/x` with `x = π·f_e/f` and no phase shift (Franklin,
/// Powell, Workman, *Digital Control of Dynamic Systems*, 3rd ed., 1998, the zero-order
/// hold's frequency response; from memory). 1 − 0.5 % at 18 PWM periods per electrical one.
pub fn hold_gain(omega_e_rad_s: f64, f_sw_hz: f64) -> f64 {
    let x = 0.5 * omega_e_rad_s.abs() / f_sw_hz;
    if x < 1e-9 { 1.0 } else { x.sin() / x }
}

/// The command written so that its held fundamental is `command`'s: the modulation index
/// divided by [`hold_gain`].
fn held(mut command: SinusoidalCommand, hold: f64) -> SinusoidalCommand {
    command.point.modulation_index /= hold;
    command
}

/// Fixed-point steps of [`sinusoidal_command_edge_by_edge`] at most (our own bound; the error
/// impedance depends on the command only through the duties and the current's lag, weakly,
/// so a few steps settle it to 1e-7).
const MAX_COMMAND_STEPS: usize = 12;

/// The sinusoidal leg command with the bridge's dead times and switch drops made up edge by
/// edge: the phasor equation with the error impedance of [`super::dead_time::error_impedance_ohm`] in series,
/// which itself depends on the command's modulation index and the current's lag behind it;
/// solved by fixed-point iteration from the square-wave make-up of
/// [`sinusoidal_point_with_drops`] (own method). The modulation index returned is the one to
/// write: raised by [`hold_gain`] for one compare per PWM period.
pub fn sinusoidal_command_edge_by_edge(
    motor: &MotorParams,
    at: &MotorOperatingPoint,
    legs: &LegConditions,
) -> Result<SinusoidalCommand> {
    check("t_dead_s", legs.t_dead_s, legs.t_dead_s >= 0.0)?;
    check("f_sw_hz", legs.f_sw_hz, legs.f_sw_hz > 0.0)?;
    check("l_phase_h", legs.l_phase_h, legs.l_phase_h > 0.0)?;
    check("v_sd_v", legs.v_sd_v, legs.v_sd_v >= 0.0)?;
    let square_wave = BridgeDrops {
        r_switch_ohm: legs.r_switch_ohm,
        dead_time_mean_v: legs.t_dead_s * legs.f_sw_hz * (legs.v_bus_v + 2.0 * legs.v_sd_v),
    };
    let hold = hold_gain(at.omega_e_rad_s, legs.f_sw_hz);
    let mut command = held(
        sinusoidal_point_with_drops(
            motor,
            at.omega_e_rad_s,
            at.i_peak_a,
            at.current_advance_rad,
            at.v_bus_v,
            at.zero_sequence,
            &square_wave,
        )?,
        hold,
    );
    // Each step's harmonic balance starts from the last one's currents.
    let mut warm = Vec::new();
    for _ in 0..MAX_COMMAND_STEPS {
        let lag = command.voltage_lead_rad - at.current_advance_rad;
        let m = command.point.modulation_index;
        let motor_ohm = (motor.r_phase_ohm, at.omega_e_rad_s * motor.l_phase_h);
        let current = PhaseCurrent {
            peak_a: at.i_peak_a,
            lag_rad: lag,
        };
        let z = error_impedance_warm_ohm(m, at.zero_sequence, current, motor_ohm, legs, &mut warm);
        if !z.harmonics_settled {
            // The harmonic balance does not settle: the averaged bridge in time instead.
            return averaged_command(motor, at, legs, hold, command);
        }
        let next = held(
            sinusoidal_point_with_series(motor, at, z.r_ohm, z.x_ohm)?,
            hold,
        );
        let done = (next.point.modulation_index - m).abs() <= 1e-7 * m.max(1e-3)
            && (next.voltage_lead_rad - command.voltage_lead_rad).abs() <= 1e-7;
        command = next;
        if done {
            break;
        }
    }
    Ok(command)
}

/// Newton steps of [`averaged_command`] at most (our own bound).
const AVERAGED_COMMAND_STEPS: usize = 12;
/// Its command is settled when the current it drives misses the operating point's by less
/// than this fraction of the peak (our own bound, a hundred times finer than the 1 % the plan
/// is held to, and ten times the periodic solve's own tolerance).
const COMMAND_TOLERANCE: f64 = 1e-4;

/// The command `(m, lead)` under which the averaged bridge ([`averaged_current`])
/// drives the operating point's current: Newton steps on the current phasor's miss
/// (difference Jacobian kept while it serves, step halved while the miss grows; own method: the current is smooth
/// in the command, where the error impedance is not). Starts from `start`;
/// `harmonics_settled` says whether the periodic solves and these steps settled.
fn averaged_command(
    motor: &MotorParams,
    at: &MotorOperatingPoint,
    legs: &LegConditions,
    hold: f64,
    start: SinusoidalCommand,
) -> Result<SinusoidalCommand> {
    let mut warm = None;
    let target = (at.current_advance_rad.cos(), at.current_advance_rad.sin());
    let scale = at.i_peak_a.max(1e-9);
    // The miss of the current phasor (against the back-EMF, per unit of the peak).
    let mut miss = |c: [f64; 2]| -> ([f64; 2], bool) {
        let drive = AveragedDrive {
            modulation_index: c[0],
            zero_sequence: at.zero_sequence,
            hold_gain: hold,
            r_phase_ohm: motor.r_phase_ohm,
            omega_e_rad_s: at.omega_e_rad_s,
            emf_peak_v: motor.phase_emf_peak_v(at.omega_e_rad_s),
            voltage_lead_rad: c[1],
        };
        let guess = (at.i_peak_a, c[1] - at.current_advance_rad);
        let solved = averaged_current(&drive, legs, motor.l_phase_h, guess, warm);
        warm = Some(solved.warm);
        // sin θ ↔ 1, cos θ ↔ j against the leg reference; times e^(j·lead) against the EMF.
        let (ia, ib) = solved.current_sin_cos_a;
        let (sl, cl) = c[1].sin_cos();
        let re = (ia * cl - ib * sl) / scale - target.0;
        let im = (ia * sl + ib * cl) / scale - target.1;
        ([re, im], solved.settled)
    };
    let size = |f: [f64; 2]| f[0].abs().max(f[1].abs());
    let mut c = [start.point.modulation_index, start.voltage_lead_rad];
    let (mut f, mut settled) = miss(c);
    // Kept while its steps shrink the miss fourfold (a chord method).
    let mut jacobian: Option<[[f64; 2]; 2]> = None;
    for _ in 0..AVERAGED_COMMAND_STEPS {
        if size(f) <= COMMAND_TOLERANCE {
            break;
        }
        // Differences well above the periodic solve's own tolerance.
        let h = [1e-3 * c[0].max(1e-3), 1e-3];
        let cols = jacobian.unwrap_or_else(|| difference_jacobian(|y| miss(y).0, c, f, h));
        jacobian = Some(cols);
        let Some(dc) = newton_step(cols, f) else {
            break;
        };
        let mut t = 1.0;
        loop {
            let y = [c[0] + t * dc[0], c[1] + t * dc[1]];
            let tried = miss(y);
            if size(tried.0) < size(f) || t < 1e-2 {
                if size(tried.0) > 0.25 * size(f) {
                    // Slow: the Jacobian is redone.
                    jacobian = None;
                }
                c = y;
                (f, settled) = tried;
                break;
            }
            t *= 0.5;
        }
    }
    let (m, lead) = (c[0], c[1]);
    let point = SinusoidalPoint {
        modulation_index: m,
        power_factor: if at.i_peak_a > 0.0 {
            (lead - at.current_advance_rad).cos()
        } else {
            1.0
        },
        zero_sequence: at.zero_sequence,
        i_peak_a: at.i_peak_a,
    };
    Ok(SinusoidalCommand {
        point,
        voltage_lead_rad: lead,
        harmonics_settled: settled && size(f) <= COMMAND_TOLERANCE,
    })
}

/// Commands already solved, by every input of [`sinusoidal_command_edge_by_edge`] (its bits):
/// the search asks for the same one several times per setting, and where the averaged bridge
/// is needed each costs milliseconds. Clones share the store; any input differing is a new key.
#[derive(Clone, Default)]
pub struct CommandMemo(Arc<Mutex<HashMap<[u64; 16], Option<SinusoidalCommand>>>>);

/// Entries kept at most before the store is emptied (our own bound on memory).
const MEMO_ENTRIES: usize = 50_000;

impl std::fmt::Debug for CommandMemo {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("CommandMemo")
    }
}

impl CommandMemo {
    /// [`sinusoidal_command_edge_by_edge`], `None` where it refuses.
    pub fn command(
        &self,
        motor: &MotorParams,
        at: &MotorOperatingPoint,
        legs: &LegConditions,
    ) -> Option<SinusoidalCommand> {
        let key = memo_key(motor, at, legs);
        if let Some(found) = self.0.lock().ok().and_then(|m| m.get(&key).copied()) {
            return found;
        }
        let solved = sinusoidal_command_edge_by_edge(motor, at, legs).ok();
        if let Ok(mut m) = self.0.lock() {
            if m.len() >= MEMO_ENTRIES {
                m.clear();
            }
            m.insert(key, solved);
        }
        solved
    }
}

fn memo_key(motor: &MotorParams, at: &MotorOperatingPoint, legs: &LegConditions) -> [u64; 16] {
    let shape = match motor.back_emf_shape {
        BackEmfShape::Sinusoidal => 0,
        BackEmfShape::Trapezoidal => 1,
    };
    let zero = match at.zero_sequence {
        ZeroSequence::None => 0,
        ZeroSequence::MinMax => 1,
    };
    [
        motor.r_phase_ohm.to_bits(),
        motor.l_phase_h.to_bits(),
        motor.ke_v_s_per_rad.to_bits(),
        u64::from(motor.pole_pairs) << 8 | shape << 4 | zero,
        at.omega_e_rad_s.to_bits(),
        at.i_peak_a.to_bits(),
        at.current_advance_rad.to_bits(),
        at.v_bus_v.to_bits(),
        legs.v_bus_v.to_bits(),
        legs.f_sw_hz.to_bits(),
        legs.t_dead_s.to_bits(),
        legs.r_switch_ohm.to_bits(),
        legs.v_sd_v.to_bits(),
        legs.l_phase_h.to_bits(),
        0,
        0,
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    fn legs(t_dead_s: f64, l_phase_h: f64) -> LegConditions {
        LegConditions::for_tests(t_dead_s, l_phase_h)
    }

    /// Without dead time and switch drop the edge-by-edge command is the ideal one, held.
    #[test]
    fn ideal_bridge_gives_the_ideal_command() {
        let motor = MotorParams {
            r_phase_ohm: 0.2,
            l_phase_h: 4e-4,
            ke_v_s_per_rad: 0.03,
            pole_pairs: 4,
            back_emf_shape: BackEmfShape::Sinusoidal,
        };
        let at = MotorOperatingPoint {
            omega_e_rad_s: 600.0,
            i_peak_a: 8.0,
            current_advance_rad: 0.0,
            v_bus_v: 48.0,
            zero_sequence: ZeroSequence::MinMax,
        };
        let mut c = legs(0.0, motor.l_phase_h);
        c.r_switch_ohm = 0.0;
        c.v_sd_v = 0.0;
        let edge = sinusoidal_command_edge_by_edge(&motor, &at, &c).expect("command");
        let ideal = super::super::sinusoidal::sinusoidal_point_from_motor(
            &motor,
            600.0,
            8.0,
            0.0,
            48.0,
            ZeroSequence::MinMax,
        )
        .expect("ideal");
        // Raised only by the hold of one compare per PWM period.
        let hold = hold_gain(600.0, c.f_sw_hz);
        assert!(hold < 1.0);
        assert!((edge.point.modulation_index * hold - ideal.modulation_index).abs() < 1e-9);
    }

    /// Where the harmonic balance settles, the averaged bridge followed in time (an
    /// independent treatment of the same leg errors) lands on the same command.
    #[test]
    fn averaged_bridge_agrees_with_the_harmonic_balance() {
        for (r, l, ke, t_dead) in [(1.0, 2e-4, 0.01, 500e-9), (0.3, 5e-4, 0.02, 300e-9)] {
            let motor = MotorParams {
                r_phase_ohm: r,
                l_phase_h: l,
                ke_v_s_per_rad: ke,
                pole_pairs: 4,
                back_emf_shape: BackEmfShape::Sinusoidal,
            };
            let at = MotorOperatingPoint {
                omega_e_rad_s: 1000.0,
                i_peak_a: 5.0,
                current_advance_rad: 0.1,
                v_bus_v: 48.0,
                zero_sequence: ZeroSequence::MinMax,
            };
            let c = legs(t_dead, l);
            let harmonic = sinusoidal_command_edge_by_edge(&motor, &at, &c).expect("command");
            assert!(harmonic.harmonics_settled);
            let hold = hold_gain(at.omega_e_rad_s, c.f_sw_hz);
            let averaged = averaged_command(&motor, &at, &c, hold, harmonic).expect("averaged");
            assert!(averaged.harmonics_settled);
            let (m0, m1) = (
                harmonic.point.modulation_index,
                averaged.point.modulation_index,
            );
            assert!((m1 / m0 - 1.0).abs() < 2e-3, "{m0} vs {m1}");
            let dl = averaged.voltage_lead_rad - harmonic.voltage_lead_rad;
            assert!(dl.abs() < 2e-3, "lead {dl}");
        }
    }
}
