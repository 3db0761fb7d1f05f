//! How long a leg's body diode conducts within one dead time.
//!
//! Owns: the diode's share of each dead time, from the two switches' edges.
//! The energy on the dead-time diode line is V_SD(I)·I times it (`losses`).
//!
//! Why: the diode does not conduct for the whole dead time. After a hard
//! turn-off it starts only once the outgoing switch's gate has fallen to its
//! plateau, the load current has swung the node and the current has moved
//! over; after a soft turn-off (the current already flowing towards the
//! outgoing switch's own diode) only once the outgoing gate has fallen far
//! enough for the channel to let go. It stops when the incoming channel has
//! taken the current: at a hard turn-on, once the incoming current has risen;
//! at a soft turn-on, once the incoming gate has passed the channel's
//! threshold and the diode's stored charge has gone. Each interval is taken
//! from the switching model's times (own derivation from the switching
//! intervals; each current ramp counted at its midpoint, common practice) and
//! checked against ngspice in `tests/spice/` (`leg.rs`).

use super::capacitance::c_gd_f;
use super::commutation::ChannelLaw;
use super::params::{GateDrive, SwitchModel};
use super::switching::{
    Transitions, input_capacitance_on_state_f, rc_time_s, turn_off_resistance_ohm,
    turn_on_resistance_ohm,
};

/// The leg's switches (the same part on the same drive) and the body diode's
/// transit time.
#[derive(Debug, Clone, Copy)]
pub struct LegEdges<'a> {
    pub switch: &'a SwitchModel,
    pub drive: &'a GateDrive,
    /// The hard-switching switch's edges (`switching::transitions`): its
    /// turn-off at the current of a hard turn-off's dead time, its turn-on at
    /// the current of a soft turn-off's.
    pub transitions: &'a Transitions,
    /// The body diode's transit time (`recovery`), s.
    pub tau_s: f64,
}

impl LegEdges<'_> {
    /// Diode conduction in a dead time `t_dead_s` that follows a hard
    /// turn-off: from the outgoing switch's half-current hand-over
    /// (`Transitions::t_partner_half_s`) until the incoming switch's soft
    /// turn-on has taken the current ([`Self::soft_turn_on_s`]). Not below 0.
    pub fn after_hard_turn_off_s(&self, t_dead_s: f64) -> f64 {
        let tr = self.transitions;
        let idle_s = (t_dead_s - tr.t_partner_half_s).max(0.0);
        let t_end = t_dead_s + self.soft_turn_on_s(idle_s);
        (t_end - tr.t_partner_half_s).max(0.0)
    }

    /// Diode conduction in a dead time `t_dead_s` that follows a soft
    /// turn-off: from the outgoing channel's release `release_s` after its
    /// command (`switching::soft_release_s`: the gate down to the plateau of
    /// the current, then half the RC fall to threshold) until the incoming
    /// hard turn-on carries half the current, t_d(on) + t_ri/2 after its
    /// command. Not below 0.
    pub fn after_soft_turn_off_s(&self, t_dead_s: f64, release_s: f64) -> f64 {
        let tr = self.transitions;
        (t_dead_s + tr.t_d_on_s + 0.5 * tr.t_ri_s - release_s).max(0.0)
    }

    /// Time from a soft turn-on command until the incoming channel has taken
    /// the current from its own body diode, when the node's swing ended
    /// `idle_s` before the command. The gate starts from the Miller-induced
    /// voltage the swing left on it ([`Self::kicked_gate_v`]), charges through
    /// the turn-on loop into C_iss, as in the turn-on delay
    /// (`switching::transitions_first_order`, after Balogh; the drain sits at
    /// the diode's drop, so there is no Miller plateau), to the channel law's
    /// threshold V_T, where the reverse channel takes the current; the diode's stored
    /// charge then recombines over its transit time τ before the diode lets
    /// go (charge control: Lauritzen, Ma, *A simple diode model with reverse
    /// recovery*, IEEE Trans. Power Electronics 6(2), 1991; one τ, own
    /// simplification).
    pub fn soft_turn_on_s(&self, idle_s: f64) -> f64 {
        let (sw, drive) = (self.switch, self.drive);
        let v_t = ChannelLaw::of_switch(sw).map_or(sw.v_th_v, |law| law.v_th_v().max(sw.v_th_v));
        let Ok(r_on) = turn_on_resistance_ohm(drive, sw.r_g_int_ohm) else {
            return 0.0;
        };
        let tau_gate = r_on * sw.c_iss_f;
        let v_start = self.kicked_gate_v(idle_s);
        let v_drv = drive.v_drive_v;
        if v_t >= v_drv {
            return 0.0;
        }
        rc_time_s(tau_gate, v_start, v_drv, v_t) + self.tau_s
    }

    /// The off switch's gate voltage `idle_s` after the node's swing towards
    /// it: the swing's dv/dt drives C_gd's current, C_gd(V/2)·V/t_swing, out
    /// through the turn-off loop, R_off·C_gd·dv/dt below 0 V (the
    /// Miller-induced gate voltage; Balogh, *Fundamentals of MOSFET and IGBT
    /// Gate Driver Circuits*, 2002; from memory; C_gd at half the bus, own
    /// simplification), then recovering towards 0 V with R_off·C_iss,on. Not
    /// below −V_drv.
    pub fn kicked_gate_v(&self, idle_s: f64) -> f64 {
        let (sw, tr) = (self.switch, self.transitions);
        let Ok(r_off) = turn_off_resistance_ohm(self.drive, sw.r_g_int_ohm) else {
            return 0.0;
        };
        if tr.t_node_swing_s <= 0.0 {
            return 0.0;
        }
        let i_gd = c_gd_f(sw, 0.5 * tr.v_bus_v) * tr.v_bus_v / tr.t_node_swing_s;
        let kick = (r_off * i_gd).min(self.drive.v_drive_v);
        let tau = r_off * input_capacitance_on_state_f(sw);
        -kick * (-idle_s / tau).exp()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::params::fixtures::{curved_switch, example_drive};
    use crate::model::physics::switching::{soft_release_s, transitions};

    fn edges<'a>(sw: &'a SwitchModel, drive: &'a GateDrive, tr: &'a Transitions) -> LegEdges<'a> {
        LegEdges {
            switch: sw,
            drive,
            transitions: tr,
            tau_s: 10e-9,
        }
    }

    #[test]
    fn intervals_by_hand() {
        let sw = curved_switch();
        let drive = example_drive();
        let tr = transitions(&sw, &drive, 24.0, 10.0, 10.0, 5e-3).expect("edges");
        let e = edges(&sw, &drive, &tr);
        let t_dead = 200e-9;
        // Soft turn-off: the sum of the named intervals; the release is the
        // turn-off's delay and half its RC fall at that current.
        let release = soft_release_s(&sw, &drive, 10.0).expect("release");
        assert!((release - tr.t_d_off_s - 0.5 * tr.t_fi_rc_s).abs() < 1e-15);
        let soft = t_dead + tr.t_d_on_s + 0.5 * tr.t_ri_s - release;
        assert!((e.after_soft_turn_off_s(t_dead, release) - soft).abs() < 1e-15);
        // Hard turn-off: from the hand-over to the soft turn-on's end.
        let idle = t_dead - tr.t_partner_half_s;
        let hard = t_dead + e.soft_turn_on_s(idle) - tr.t_partner_half_s;
        assert!((e.after_hard_turn_off_s(t_dead) - hard).abs() < 1e-15);
        // Both shorter than the dead time plus the incoming edge, and 0 for
        // a dead time the edges do not fit in.
        assert!(e.after_hard_turn_off_s(t_dead) < t_dead + e.soft_turn_on_s(idle));
        assert_eq!(e.after_soft_turn_off_s(0.0, release), 0.0);
    }

    #[test]
    fn the_kick_recovers_and_slows_the_soft_turn_on() {
        let sw = curved_switch();
        let drive = example_drive();
        let tr = transitions(&sw, &drive, 24.0, 10.0, 10.0, 5e-3).expect("edges");
        let e = edges(&sw, &drive, &tr);
        let now = e.kicked_gate_v(0.0);
        let later = e.kicked_gate_v(1e-6);
        assert!(now < 0.0 && now >= -drive.v_drive_v);
        assert!(later > now && later <= 0.0);
        assert!(e.soft_turn_on_s(0.0) > e.soft_turn_on_s(1e-6));
        // Without a swing there is no kick.
        let mut still = tr.clone();
        still.t_node_swing_s = 0.0;
        assert_eq!(edges(&sw, &drive, &still).kicked_gate_v(0.0), 0.0);
    }
}
