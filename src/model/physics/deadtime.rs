//! Dead time of a complementary leg.
//!
//! Owns: the minimum dead time from switching times (*How to calculate and
//! minimize the dead time requirement for IGBTs properly*, application note,
//! 2007; title and year, author not checked; "the dead-time note" below; from
//! memory) and the output-voltage error it causes. The duty range a dead time
//! leaves (after the dead time, with the minimum pulse and the bootstrap refresh)
//! and the rounding up to an encodable dead time belong to the timer module.

use super::losses::r_ds_on_ohm;
use super::params::{GateDrive, SwitchModel, Topology};
use super::switching::{self, Transitions};

/// Safety margin on the dead-time need (the dead-time note uses 1.2; from memory).
pub const DEFAULT_DEAD_TIME_MARGIN: f64 = 1.2;

/// Inputs of the dead-time need; worst-case datasheet or model values.
#[derive(Debug, Clone, PartialEq)]
pub struct DeadTimeInputs {
    /// Longest turn-off delay.
    pub t_d_off_max_s: f64,
    /// Longest fall time (until the device stops conducting).
    pub t_f_max_s: f64,
    /// Shortest turn-on delay.
    pub t_d_on_min_s: f64,
    /// Driver propagation-delay mismatch.
    pub mismatch_s: f64,
    /// Multiplicative margin (default [`DEFAULT_DEAD_TIME_MARGIN`]).
    pub margin: f64,
}

impl DeadTimeInputs {
    /// Inputs with the default margin of 1.2.
    pub fn new(t_d_off_max_s: f64, t_f_max_s: f64, t_d_on_min_s: f64, mismatch_s: f64) -> Self {
        Self {
            t_d_off_max_s,
            t_f_max_s,
            t_d_on_min_s,
            mismatch_s,
            margin: DEFAULT_DEAD_TIME_MARGIN,
        }
    }

    /// Inputs from the gate-charge model: turn-off ends after t_d(off) + t_rv +
    /// t_fi (voltage rises, then current falls), turn-on conduction starts after
    /// t_d(on). These are typical model values, not maxima (own mapping, no
    /// published source): widen them or the margin for part spread.
    pub fn from_transitions(tr: &Transitions, drive: &GateDrive) -> Self {
        Self::new(
            tr.t_d_off_s,
            tr.t_rv_s + tr.t_fi_s,
            tr.t_d_on_s,
            drive.mismatch_s,
        )
    }
}

/// Minimum dead time
/// t_need = (t_d(off),max + t_f,max − t_d(on),min + mismatch)·margin, floored at 0.
///
/// The published form (the dead-time note, 2007; from memory) is
/// t_dead = [(t_d(off),max − t_d(on),min) + (t_pd,max − t_pd,min)]·1.2, the last
/// term being the driver's propagation-delay mismatch. Adding the fall time
/// t_f,max (the device has stopped conducting, not only begun to turn off) is
/// our own conservative choice, not the note's. `None` if any input is not
/// finite or the margin is below 1.
pub fn dead_time_need_s(inp: &DeadTimeInputs) -> Option<f64> {
    let vals = [
        inp.t_d_off_max_s,
        inp.t_f_max_s,
        inp.t_d_on_min_s,
        inp.mismatch_s,
        inp.margin,
    ];
    if vals.iter().any(|v| !v.is_finite()) || inp.margin < 1.0 {
        return None;
    }
    let raw = inp.t_d_off_max_s + inp.t_f_max_s - inp.t_d_on_min_s + inp.mismatch_s;
    Some((raw * inp.margin).max(0.0))
}

/// One device of the worst pair: its model and drive, and the junction
/// limit its on-resistance is taken at (the hottest, slowest edge).
#[derive(Debug, Clone, Copy)]
pub struct PairDevice<'a> {
    pub switch: &'a SwitchModel,
    pub drive: &'a GateDrive,
    pub t_j_max_c: f64,
}

/// The dead-time need of a slow turn-off (`off`) against a fast turn-on
/// (`on`) at supply `v_bus_v` and load current `i_a`, from their gate-charge
/// transitions ([`dead_time_need_s`]); the mismatch is the turn-off driver's.
/// `None` when a transition or the need does not exist.
pub fn pair_need_s(
    off: &PairDevice,
    on: &PairDevice,
    i_a: f64,
    v_bus_v: f64,
    margin: f64,
) -> Option<f64> {
    let tr = |d: &PairDevice| {
        let r_hot = r_ds_on_ohm(d.switch, d.t_j_max_c);
        switching::gate_charge_timing(d.switch, d.drive, v_bus_v, i_a, i_a, r_hot).ok()
    };
    let slow = tr(off)?;
    let fast = tr(on)?;
    dead_time_need_s(&DeadTimeInputs {
        t_d_off_max_s: slow.t_d_off_s,
        t_f_max_s: slow.t_rv_s + slow.t_fi_s,
        t_d_on_min_s: fast.t_d_on_s,
        mismatch_s: off.drive.mismatch_s,
        margin,
    })
}

/// The largest need over the supply range `low..=high` (and `typ`), with
/// the supply it occurs at. The need is not monotonic in the supply (the
/// plateau and the Miller charge both move with it), so a grid of supplies,
/// ends included. `None` when the need fails at any supply.
pub fn worst_need_over_supply(
    low: f64,
    typ: f64,
    high: f64,
    mut need_at: impl FnMut(f64) -> Option<f64>,
) -> Option<(f64, f64)> {
    let mut worst: Option<(f64, f64)> = None;
    let grid: Vec<f64> = (0..=16)
        .map(|k| low + (high - low) * f64::from(k) / 16.0)
        .chain([typ])
        .collect();
    for v in grid {
        let need = need_at(v)?;
        if worst.is_none_or(|(w, _)| need > w) {
            worst = Some((need, v));
        }
    }
    worst
}

/// Average output-voltage error from dead time, opposing the current:
/// t_dead·f·V per leg, 2·t_dead·f·V across an H-bridge (Mohan, Undeland,
/// Robbins, *Power Electronics*, 3rd ed., 2003, §8-7; from memory). A single
/// low-side switch has no dead time: 0.
pub fn dead_time_voltage_error_v(
    topology: Topology,
    t_dead_s: f64,
    f_sw_hz: f64,
    v_bus_v: f64,
) -> f64 {
    let legs = match topology {
        Topology::LowSide => 0.0,
        Topology::HalfBridge => 1.0,
        Topology::HBridge(_) => 2.0,
    };
    legs * t_dead_s * f_sw_hz * v_bus_v
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::params::HBridgeModulation;
    use crate::model::physics::params::fixtures::{example_drive, example_switch};
    use crate::model::physics::switching::transitions;

    /// Our form (the published one plus the fall time) by hand:
    /// (400 + 200 − 100 + 50) ns × 1.2 = 660 ns.
    #[test]
    fn need_by_hand() {
        let inp = DeadTimeInputs::new(400e-9, 200e-9, 100e-9, 50e-9);
        assert!((dead_time_need_s(&inp).unwrap() - 660e-9).abs() < 1e-18);
        // A turn-on delay longer than turn-off: floored at zero.
        let inp = DeadTimeInputs::new(10e-9, 10e-9, 100e-9, 0.0);
        assert_eq!(dead_time_need_s(&inp), Some(0.0));
        let mut bad = DeadTimeInputs::new(1e-9, 1e-9, 0.0, 0.0);
        bad.margin = 0.9;
        assert_eq!(dead_time_need_s(&bad), None);
    }

    /// From the gate-charge model the need equals the hand sum of its times.
    #[test]
    fn need_from_model() {
        let tr = transitions(&example_switch(), &example_drive(), 24.0, 10.0, 10.0, 5e-3).unwrap();
        let inp = DeadTimeInputs::from_transitions(&tr, &example_drive());
        let hand = (tr.t_d_off_s + tr.t_rv_s + tr.t_fi_s - tr.t_d_on_s + 10e-9) * 1.2;
        assert!((dead_time_need_s(&inp).unwrap() - hand).abs() < 1e-18);
    }

    /// Voltage error: 500 ns at 20 kHz on 24 V is 0.24 V per leg, 0.48 V across
    /// an H-bridge (Mohan §8-7 form, by hand).
    #[test]
    fn voltage_error_by_hand() {
        let e = dead_time_voltage_error_v(Topology::HalfBridge, 500e-9, 20e3, 24.0);
        assert!((e - 0.24).abs() < 1e-12);
        let e2 = dead_time_voltage_error_v(
            Topology::HBridge(HBridgeModulation::Unipolar),
            500e-9,
            20e3,
            24.0,
        );
        assert!((e2 - 0.48).abs() < 1e-12);
        assert_eq!(
            dead_time_voltage_error_v(Topology::LowSide, 500e-9, 20e3, 24.0),
            0.0
        );
    }
}
