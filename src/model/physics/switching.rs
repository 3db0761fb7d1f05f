//! Hard-switching transitions of a MOSFET by the gate-charge method.
//!
//! Owns: the plateau voltage, the gate currents on the plateau, the current and
//! voltage transition times, the RC delays, the turn-on/turn-off energies of one
//! hard-switched edge pair, the two-point C_gd refinement and the scaling of the
//! total gate charge to the actual drive voltage.
//!
//! Sources: Graovac, Pürschel, Kiep, *MOSFET Power Losses Calculation Using the
//! Data-Sheet Parameters*, 2006 (Graovac 2006 below); L. Balogh, *Fundamentals
//! of MOSFET and IGBT Gate Driver Circuits*, 2002, revised 2017 (Balogh below;
//! the revision year from memory); *Power MOSFET Basics: Understanding Gate
//! Charge and Using it to Assess Switching Performance*, application note, 2016
//! revision, no author named (the gate-charge note below).
//!
//! A weak driver (a microcontroller pin of a few mA to 25 mA) is not an error
//! here: it gives long edges and large energies; `ratings` raises the warning.

use super::capacitance::{c_gd_f, law_memo, miller_integrals};
use super::commutation;
use super::edge_interpolation;
use super::params::{EdgeModel, GateDrive, SwitchModel};

/// Why a transition could not be computed.
#[derive(Debug, Clone, PartialEq)]
pub enum SwitchingError {
    /// Neither a datasheet plateau nor a transconductance was given.
    NoPlateau,
    /// A parameter is not finite or outside its physical range.
    InvalidParameter {
        /// Field name.
        name: &'static str,
        /// Offending value.
        value: f64,
    },
    /// The drive voltage does not exceed the plateau: the switch never fully
    /// enhances at this current.
    DriveBelowPlateau {
        /// Drive voltage.
        v_drive_v: f64,
        /// Plateau voltage at the switched current.
        v_plateau_v: f64,
    },
}

/// All times, gate currents and energies of one hard turn-on and one hard
/// turn-off at the given bus voltage and switched currents.
#[derive(Debug, Clone, PartialEq)]
pub struct Transitions {
    /// Bus voltage swung by the edges.
    pub v_bus_v: f64,
    /// Current switched at turn-on (magnitude).
    pub i_on_a: f64,
    /// Current switched at turn-off (magnitude).
    pub i_off_a: f64,
    /// Plateau voltage at turn-on.
    pub v_plateau_on_v: f64,
    /// Plateau voltage at turn-off.
    pub v_plateau_off_v: f64,
    /// Gate current on the plateau at turn-on.
    pub i_g_on_a: f64,
    /// Gate current on the plateau at turn-off.
    pub i_g_off_a: f64,
    /// Charge from threshold to plateau, Q_gs2.
    pub q_gs2_c: f64,
    /// Miller charge moved at turn-on (Q_gd or the two-point estimate).
    pub q_gd_on_c: f64,
    /// Miller charge moved at turn-off.
    pub q_gd_off_c: f64,
    /// Turn-on delay (gate from 0 to V_th).
    pub t_d_on_s: f64,
    /// Current rise time.
    pub t_ri_s: f64,
    /// Voltage fall time.
    pub t_fv_s: f64,
    /// Turn-off delay (gate from V_drv down to the plateau).
    pub t_d_off_s: f64,
    /// Voltage rise time.
    pub t_rv_s: f64,
    /// Current fall time (charge form).
    pub t_fi_s: f64,
    /// Current fall time by RC discharge from plateau to threshold (informative).
    pub t_fi_rc_s: f64,
    /// Turn-on energy, without reverse recovery (kept as its own loss line).
    pub e_on_j: f64,
    /// Turn-off energy dissipated in the channel (the loss; the energy put
    /// into the switch's own output capacitance is booked where it is
    /// dissipated, at the next hard turn-on, see `losses`).
    pub e_off_j: f64,
    /// Turn-off energy at the drain terminal, ∫v_DS·i_D dt, what a
    /// double-pulse test integrates: `e_off_j` plus the charge put into the
    /// switch's own output capacitance. Equal to `e_off_j` where the
    /// gate-charge method applies alone (no transconductance in the file).
    pub e_off_terminal_j: f64,
    /// Highest drain voltage at turn-off: the bus voltage plus the loop
    /// inductance's overshoot (the bus voltage without a loop inductance, or
    /// where the node is not followed in time).
    pub v_peak_off_v: f64,
    /// Time from a hard turn-off's gate command until the partner's diode
    /// carries half the current: t_d(off), the node's rise and half the
    /// current fall (followed at the node where `commutation::turn_off`
    /// applies; t_d(off) + t_rv + t_fi/2 otherwise).
    pub t_partner_half_s: f64,
    /// The node's swing at a hard turn-off, from the plateau to the bus
    /// (followed at the node where `commutation::turn_off` applies; t_rv
    /// otherwise).
    pub t_node_swing_s: f64,
}

/// What shares the switch node with the switch that turns off.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NodePartner {
    /// The leg's other switch (same part), whose output capacitance
    /// discharges as the node rises: half-bridge, H-bridge, three-phase.
    BridgeLeg,
    /// A discrete freewheel diode (its capacitance neglected).
    FreewheelDiode,
}

impl Transitions {
    /// P_sw = (E_on + E_off)·f (Graovac 2006).
    pub fn switching_power_w(&self, f_sw_hz: f64) -> f64 {
        (self.e_on_j + self.e_off_j) * f_sw_hz
    }
}

fn finite_non_negative(name: &'static str, value: f64) -> Result<f64, SwitchingError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(SwitchingError::InvalidParameter { name, value })
    }
}

fn finite_positive(name: &'static str, value: f64) -> Result<f64, SwitchingError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(SwitchingError::InvalidParameter { name, value })
    }
}

/// Plateau voltage at drain current `i_a`.
///
/// The datasheet plateau is preferred when given; otherwise
/// V_plt ≈ V_th + I/g_fs (the gate-charge note). Errors when neither is available.
pub fn plateau_voltage_v(sw: &SwitchModel, i_a: f64) -> Result<f64, SwitchingError> {
    if let Some(v) = sw.v_plateau_v {
        return finite_positive("v_plateau_v", v);
    }
    let g_fs = sw.g_fs_s.ok_or(SwitchingError::NoPlateau)?;
    let g_fs = finite_positive("g_fs_s", g_fs)?;
    let v_th = finite_positive("v_th_v", sw.v_th_v)?;
    let i = finite_non_negative("i_a", i_a.abs())?;
    Ok(v_th + i / g_fs)
}

/// Gate currents on the plateau (Graovac 2006; Balogh):
/// I_g,on = (V_drv − V_plt)/(R_src + R_g,ext,on + R_g,int),
/// I_g,off = V_plt/(R_snk + R_g,ext,off + R_g,int).
///
/// Returns `(i_g_on_a, i_g_off_a)`.
pub fn gate_currents_a(
    drive: &GateDrive,
    r_g_int_ohm: f64,
    v_plateau_on_v: f64,
    v_plateau_off_v: f64,
) -> Result<(f64, f64), SwitchingError> {
    let r_on = turn_on_resistance_ohm(drive, r_g_int_ohm)?;
    let r_off = turn_off_resistance_ohm(drive, r_g_int_ohm)?;
    if drive.v_drive_v <= v_plateau_on_v {
        return Err(SwitchingError::DriveBelowPlateau {
            v_drive_v: drive.v_drive_v,
            v_plateau_v: v_plateau_on_v,
        });
    }
    Ok((
        (drive.v_drive_v - v_plateau_on_v) / r_on,
        v_plateau_off_v / r_off,
    ))
}

/// Total gate-loop resistance at turn-on, R_src + R_g,ext,on + R_g,int.
pub fn turn_on_resistance_ohm(drive: &GateDrive, r_g_int_ohm: f64) -> Result<f64, SwitchingError> {
    let r = finite_non_negative("r_source_ohm", drive.r_source_ohm)?
        + finite_non_negative("r_ext_on_ohm", drive.r_ext_on_ohm)?
        + finite_non_negative("r_g_int_ohm", r_g_int_ohm)?;
    finite_positive("turn-on gate resistance", r)
}

/// Total gate-loop resistance at turn-off, R_snk + R_g,ext,off + R_g,int.
pub fn turn_off_resistance_ohm(drive: &GateDrive, r_g_int_ohm: f64) -> Result<f64, SwitchingError> {
    let r = finite_non_negative("r_sink_ohm", drive.r_sink_ohm)?
        + finite_non_negative("r_ext_off_ohm", drive.r_ext_off_ohm)?
        + finite_non_negative("r_g_int_ohm", r_g_int_ohm)?;
    finite_positive("turn-off gate resistance", r)
}

/// Charge from threshold to plateau, Q_gs2 = Q_gs − Q_g(th) (Graovac 2006).
///
/// Assumption when Q_g(th) is not given (own derivation, no published source):
/// V_GS rises linearly with gate charge below the plateau (constant C_gs + C_gd),
/// so Q_g(th) = Q_gs·V_th/V_plt and Q_gs2 = Q_gs·(V_plt − V_th)/V_plt, with V_plt
/// the datasheet plateau when given, else `v_plateau_ref_v`.
pub fn q_gs2_c(sw: &SwitchModel, v_plateau_ref_v: f64) -> Result<f64, SwitchingError> {
    let q_gs = finite_non_negative("q_gs_c", sw.q_gs_c)?;
    let q_g_th = match sw.q_g_th_c {
        Some(q) => finite_non_negative("q_g_th_c", q)?,
        None => {
            let v_plt = finite_positive("v_plateau_v", sw.v_plateau_v.unwrap_or(v_plateau_ref_v))?;
            q_gs * (sw.v_th_v / v_plt).clamp(0.0, 1.0)
        }
    };
    if q_g_th > q_gs {
        return Err(SwitchingError::InvalidParameter {
            name: "q_g_th_c",
            value: q_g_th,
        });
    }
    Ok(q_gs - q_g_th)
}

/// Miller charge moved while V_DS swings between the bus and R_ds(on)·I.
///
/// With a C_rss curve: the two-point refinement of Graovac 2006, t_fv = (t_fv1 +
/// t_fv2)/2 with C_gd at V (upper part of the swing) and at R_ds(on)·I (lower
/// part), i.e. Q_gd,eff = (V − R_ds(on)·I)·(C_gd(V) + C_gd(R_ds(on)·I))/2.
/// Without a curve: the datasheet Q_gd as given (not rescaled to the bus; the
/// datasheet test voltage is usually above a motor bus, so this is conservative).
pub fn miller_charge_c(sw: &SwitchModel, v_bus_v: f64, i_a: f64, r_ds_on_ohm: f64) -> f64 {
    if sw.c_rss_curve.is_empty() {
        return sw.q_gd_c;
    }
    let v_low = (r_ds_on_ohm * i_a.abs()).clamp(0.0, v_bus_v);
    let c_avg = 0.5 * (c_gd_f(sw, v_bus_v) + c_gd_f(sw, v_low.max(f64::MIN_POSITIVE)));
    (v_bus_v - v_low) * c_avg
}

/// Time to move charge `q_c` at constant gate current `i_g_a`: t = Q/I_g
/// (Graovac 2006; Balogh). `None` for a non-positive current.
pub fn charge_time_s(q_c: f64, i_g_a: f64) -> Option<f64> {
    (i_g_a > 0.0 && i_g_a.is_finite() && q_c.is_finite()).then(|| q_c / i_g_a)
}

/// Energy of one linear V–I crossover: E = ½·V·I·(t_a + t_b) (Graovac 2006).
pub fn crossover_energy_j(v_v: f64, i_a: f64, t_a_s: f64, t_b_s: f64) -> f64 {
    0.5 * v_v * i_a.abs() * (t_a_s + t_b_s)
}

/// RC charging time of C_iss from `v_from` towards `v_target` until `v_to`:
/// t = τ·ln((v_target − v_from)/(v_target − v_to)), τ = R·C_iss (Balogh; the
/// turn-off forms t_d(off) = τ·ln(V_drv/V_plt) and t_fi = τ·ln(V_plt/V_th) are
/// from memory). Zero when the ratio is not above 1.
pub fn rc_time_s(tau_s: f64, v_from: f64, v_target: f64, v_to: f64) -> f64 {
    let den = v_target - v_to;
    let num = v_target - v_from;
    if den.abs() <= f64::MIN_POSITIVE || num / den <= 1.0 {
        return 0.0;
    }
    tau_s * (num / den).ln()
}

/// The first-order gate-charge model (kept as the reference path; `transitions`
/// refines it): one hard turn-on at `i_on_a` and one hard turn-off at `i_off_a`
/// against `v_bus_v` (inductive clamped load). `r_ds_on_ohm` is the
/// on-resistance in use (hot), needed for the two-point C_gd refinement.
/// Currents are magnitudes; the caller decides which device hard-switches (see
/// `losses`). Linear crossovers E = ½·V·I·(t_a + t_b) (Graovac 2006), Miller
/// charge by `miller_charge_c`, delays with the single C_iss.
pub fn transitions_first_order(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    i_off_a: f64,
    r_ds_on_ohm: f64,
) -> Result<Transitions, SwitchingError> {
    first_order(sw, drive, v_bus_v, i_on_a, i_off_a, &|v, i| {
        miller_charge_c(sw, v, i, r_ds_on_ohm)
    })
}

/// [`transitions_first_order`] with the Miller charge at (bus voltage,
/// current) given by `q_gd`.
fn first_order(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    i_off_a: f64,
    q_gd: &dyn Fn(f64, f64) -> f64,
) -> Result<Transitions, SwitchingError> {
    let v = finite_non_negative("v_bus_v", v_bus_v)?;
    let i_on = finite_non_negative("i_on_a", i_on_a.abs())?;
    let i_off = finite_non_negative("i_off_a", i_off_a.abs())?;
    let v_th = finite_positive("v_th_v", sw.v_th_v)?;
    let c_iss = finite_non_negative("c_iss_f", sw.c_iss_f)?;
    finite_positive("v_drive_v", drive.v_drive_v)?;

    let v_plt_on = plateau_voltage_v(sw, i_on)?;
    let v_plt_off = plateau_voltage_v(sw, i_off)?;
    let (i_g_on, i_g_off) = gate_currents_a(drive, sw.r_g_int_ohm, v_plt_on, v_plt_off)?;
    let q_gs2 = q_gs2_c(sw, v_plt_on)?;
    let q_gd_on = q_gd(v, i_on);
    let q_gd_off = q_gd(v, i_off);

    let bad_current = SwitchingError::InvalidParameter {
        name: "gate current",
        value: i_g_off,
    };
    let t_ri = charge_time_s(q_gs2, i_g_on).ok_or(bad_current.clone())?;
    let t_fv = charge_time_s(q_gd_on, i_g_on).ok_or(bad_current.clone())?;
    let t_rv = charge_time_s(q_gd_off, i_g_off).ok_or(bad_current.clone())?;
    let t_fi = charge_time_s(q_gs2, i_g_off).ok_or(bad_current)?;

    let tau_on = turn_on_resistance_ohm(drive, sw.r_g_int_ohm)? * c_iss;
    let tau_off = turn_off_resistance_ohm(drive, sw.r_g_int_ohm)? * c_iss;
    let v_drv = drive.v_drive_v;
    // t_d(on) = τ·ln(V_drv/(V_drv − V_th)) (Balogh).
    let t_d_on = rc_time_s(tau_on, 0.0, v_drv, v_th);
    // t_d(off) = τ·ln(V_drv/V_plt) (from memory): discharge towards 0 V.
    let t_d_off = rc_time_s(tau_off, v_drv, 0.0, v_plt_off);
    // t_fi(RC) = τ·ln(V_plt/V_th) (from memory).
    let t_fi_rc = rc_time_s(tau_off, v_plt_off, 0.0, v_th.min(v_plt_off));

    Ok(Transitions {
        v_bus_v: v,
        i_on_a: i_on,
        i_off_a: i_off,
        v_plateau_on_v: v_plt_on,
        v_plateau_off_v: v_plt_off,
        i_g_on_a: i_g_on,
        i_g_off_a: i_g_off,
        q_gs2_c: q_gs2,
        q_gd_on_c: q_gd_on,
        q_gd_off_c: q_gd_off,
        t_d_on_s: t_d_on,
        t_ri_s: t_ri,
        t_fv_s: t_fv,
        t_d_off_s: t_d_off,
        t_rv_s: t_rv,
        t_fi_s: t_fi,
        t_fi_rc_s: t_fi_rc,
        e_on_j: crossover_energy_j(v, i_on, t_ri, t_fv),
        e_off_j: crossover_energy_j(v, i_off, t_rv, t_fi),
        e_off_terminal_j: crossover_energy_j(v, i_off, t_rv, t_fi),
        v_peak_off_v: v,
        t_partner_half_s: t_d_off + t_rv + 0.5 * t_fi,
        t_node_swing_s: t_rv,
    })
}

/// Input capacitance at low V_DS (after the Miller plateau), from the slope of
/// the datasheet gate-charge curve above the plateau:
/// C_iss,on = (Q_g − Q_gs − Q_gd)/(V_GS,spec − V_plt) (the gate-charge note describes this
/// segment; its slope is C_gs + C_gd at low V_DS, larger than the tabulated
/// C_iss taken at a high V_DS). The turn-off delay starts from this state.
///
/// Used only when the plateau is read from the same curve (`v_plateau_v`
/// given); otherwise, or if the slope is not above C_iss, returns `c_iss_f`.
pub fn input_capacitance_on_state_f(sw: &SwitchModel) -> f64 {
    let Some(v_plt) = sw.v_plateau_v else {
        return sw.c_iss_f;
    };
    let dq = sw.q_g_c - sw.q_gs_c - sw.q_gd_c;
    let dv = sw.q_g_at_v_gs_v - v_plt;
    if dq.is_finite() && dv.is_finite() && dq > 0.0 && dv > 0.0 && dq / dv > sw.c_iss_f {
        dq / dv
    } else {
        sw.c_iss_f
    }
}

/// Energy of a Miller (voltage) transition at gate current `i_g_a` and constant
/// load current `i_a`: with the gate current flowing into C_gd alone,
/// dt = C_gd(v)·dv/I_g, so E = ∫v·I dt = I·W_gd/I_g with W_gd = ∫v·C_gd dv
/// (own derivation from the charge balance on C_gd, the premise of the
/// gate-charge method of Graovac 2006 and Balogh). Equals the linear-ramp
/// ½·V·I·Q_gd/I_g for a constant C_gd. `None` for a non-positive gate current.
pub fn miller_energy_j(i_a: f64, w_gd_j: f64, i_g_a: f64) -> Option<f64> {
    (i_g_a > 0.0 && i_g_a.is_finite() && w_gd_j.is_finite()).then(|| i_a.abs() * w_gd_j / i_g_a)
}

/// Plateau voltage at drain current `i_a`, square-law form.
///
/// When both the datasheet plateau V_plt,ds and g_fs are given, the saturated
/// square law I = K·(V_GS − V_th)² (Sedra, Smith, *Microelectronic Circuits*,
/// the MOSFET saturation law; from memory) with g_fs = 2·K·(V_plt,ds − V_th)
/// at the datasheet plateau gives
/// V_plt(I) = V_th + √(2·I·(V_plt,ds − V_th)/g_fs).
/// It assumes g_fs is quoted at the gate-charge test current and takes the
/// 250 µA threshold as the square-law threshold (both approximations: the
/// switch file does not carry the test current). Otherwise falls back to
/// `plateau_voltage_v` (the first-order choice).
pub fn plateau_at_current_v(sw: &SwitchModel, i_a: f64) -> Result<f64, SwitchingError> {
    // The square law is `commutation::ChannelLaw`'s, which the turn-off
    // integrates; its linear form is `plateau_voltage_v`'s fallback.
    match commutation::ChannelLaw::of_switch(sw) {
        Some(law @ commutation::ChannelLaw::Square { .. }) => {
            let i = finite_non_negative("i_a", i_a.abs())?;
            finite_positive("v_th_v", sw.v_th_v)?;
            Ok(law.gate_voltage_v(i))
        }
        _ => plateau_voltage_v(sw, i_a),
    }
}

/// Gate charge moved while the drain current changes (gate from V_th to the
/// plateau at the switched current): Q_gs2 scaled by the gate swing,
/// Q = Q_gs2·(V_plt(I) − V_th)/(V_plt,ds − V_th), i.e. the input capacitance
/// between threshold and plateau taken as constant (the same assumption as
/// `q_gs2_c`; the gate-charge note for the segment). Without a datasheet plateau, Q_gs2.
pub fn current_transition_charge_c(
    sw: &SwitchModel,
    v_plateau_at_i_v: f64,
) -> Result<f64, SwitchingError> {
    let q_gs2 = q_gs2_c(sw, v_plateau_at_i_v)?;
    // The current starts at the channel law's threshold (above the 250 µA
    // V_th when the law goes through the datasheet plateau; equal otherwise).
    let v_start =
        commutation::ChannelLaw::of_switch(sw).map_or(sw.v_th_v, |law| law.v_th_v().max(sw.v_th_v));
    match sw.v_plateau_v {
        Some(v_ds) if v_ds > sw.v_th_v => {
            let x = ((v_plateau_at_i_v - v_start) / (v_ds - sw.v_th_v)).max(0.0);
            Ok(q_gs2 * x)
        }
        _ => Ok(q_gs2),
    }
}

/// Current rise time t_ri of a hard turn-on at `i_on_a`: the gate charge of
/// the current transition (`current_transition_charge_c` at the plateau of
/// that current) over the plateau gate current, the same figure
/// `transitions_at` gives, without the rest of the edge.
pub fn current_rise_time_s(
    sw: &SwitchModel,
    drive: &GateDrive,
    i_on_a: f64,
) -> Result<f64, SwitchingError> {
    let v_plt = plateau_at_current_v(sw, i_on_a)?;
    let (i_g_on, _) = gate_currents_a(drive, sw.r_g_int_ohm, v_plt, v_plt)?;
    let q = current_transition_charge_c(sw, v_plt)?;
    charge_time_s(q, i_g_on).ok_or(SwitchingError::InvalidParameter {
        name: "gate current",
        value: i_g_on,
    })
}

/// The last few results of a function of a switch, a drive and a key, each
/// kept with copies of its inputs and returned only for equal inputs (the
/// switch and the drive compared field by field, the cheap key first); the
/// oldest is replaced first.
struct RecentRing<K, V> {
    entries: Vec<(K, SwitchModel, GateDrive, V)>,
    /// The slot the next result replaces once the ring is full.
    next: usize,
}

impl<K: PartialEq, V: Clone> RecentRing<K, V> {
    const fn new() -> Self {
        RecentRing {
            entries: Vec::new(),
            next: 0,
        }
    }

    /// The result kept for these inputs.
    fn find(&self, key: &K, sw: &SwitchModel, drive: &GateDrive) -> Option<V> {
        self.entries
            .iter()
            .find(|(k, s, d, _)| k == key && s == sw && d == drive)
            .map(|e| e.3.clone())
    }

    /// Keep `value` for these inputs, at most `size` results in all.
    fn keep(&mut self, size: usize, key: K, sw: &SwitchModel, drive: &GateDrive, value: V) {
        let entry = (key, sw.clone(), drive.clone(), value);
        if self.entries.len() < size {
            self.entries.push(entry);
        } else {
            self.entries[self.next] = entry;
        }
        self.next = (self.next + 1) % size;
    }
}

/// The node's partner and how its followed edges are taken.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NodeEdges {
    pub partner: NodePartner,
    pub model: EdgeModel,
}

/// [`transitions_at_node`] remembered: the last few results on this
/// thread, each kept with a copy of its inputs and returned only for equal
/// inputs (the switch and drive compared field by field), so the result is
/// exactly what the function gives. The thermal fixed point and the search
/// ask for the same edges many times.
pub fn transitions_memo(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    i_off_a: f64,
    r_ds_on_ohm: f64,
    node: NodeEdges,
) -> Result<Transitions, SwitchingError> {
    type Ring = RecentRing<([u64; 4], NodeEdges), Result<Transitions, SwitchingError>>;
    thread_local! {
        static MEMO: std::cell::RefCell<Ring> = const { std::cell::RefCell::new(RecentRing::new()) };
    }
    const SIZE: usize = 16;
    let key = (
        [
            v_bus_v.to_bits(),
            i_on_a.to_bits(),
            i_off_a.to_bits(),
            r_ds_on_ohm.to_bits(),
        ],
        node,
    );
    if let Some(r) = MEMO.with(|m| m.borrow().find(&key, sw, drive)) {
        return r;
    }
    let r = transitions_at_node(sw, drive, v_bus_v, i_on_a, i_off_a, r_ds_on_ohm, node);
    MEMO.with(|m| m.borrow_mut().keep(SIZE, key, sw, drive, r.clone()));
    r
}

/// One hard turn-on at `i_on_a` and one hard turn-off at `i_off_a` against
/// `v_bus_v` (inductive clamped load). `r_ds_on_ohm` is the on-resistance in use
/// (hot). Currents are magnitudes; the caller decides which device
/// hard-switches (see `losses`).
///
/// This is `transitions_first_order` with these refinements, each validated
/// against the ngspice reference in `tests/spice/` (see its README); each is
/// active only when the data it needs are in the switch file, so a file
/// without them gives the first-order result:
/// 1. Plateau at the switched current (`plateau_at_current_v`; needs
///    `v_plateau_v` and `g_fs_s`), and the current-transition charge for that
///    plateau (`current_transition_charge_c`).
/// 2. With a C_rss curve, the Miller phase uses the integrals of the curve at
///    V_DG = V_DS − V_plt (`miller_integrals`): t_fv = Q_gd/I_g,on, t_rv =
///    Q_gd/I_g,off over the swing from V to R_ds(on)·I, and the
///    voltage-transition energies are I·W_gd/I_g (`miller_energy_j`) instead of
///    ½·V·I·t.
/// 3. The turn-off delay discharges the on-state input capacitance
///    (`input_capacitance_on_state_f`; needs `v_plateau_v`), not the C_iss
///    tabulated at high V_DS.
/// 4. With a transconductance and a C_rss curve, the turn-off energy follows the node with
///    capacitance sharing (`commutation::turn_off`): part of the load current
///    charges the switch's own C_ds and discharges the partner's output
///    capacitance, so the channel current falls during the voltage rise.
///    The times the dead-time need is built on stay the gate-charge
///    method's ([`gate_charge_timing`]; see `tests/spice`); the turn-on's
///    voltage fall is followed too and gives its own t_fv.
/// 5. With a loop inductance, the turn-on's current rise from
///    [`turn_on_rise`]: the loop's dip, the slope the partner recovers at and
///    the drain voltage the Miller fall starts from.
///
/// The partner is the leg's other switch; [`transitions_at`] takes it.
pub fn transitions(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    i_off_a: f64,
    r_ds_on_ohm: f64,
) -> Result<Transitions, SwitchingError> {
    transitions_at(
        sw,
        drive,
        v_bus_v,
        i_on_a,
        i_off_a,
        r_ds_on_ohm,
        NodePartner::BridgeLeg,
    )
}

/// What a common-source inductance L_s adds to a current transition of the
/// gate-charge method: L_s·I/V_od. With the gate current held by the
/// overdrive V_od across the gate loop's resistance R_g, the loop also
/// carries L_s·di/dt = L_s·I/t, so R_g·Q/t = V_od − L_s·I/t and t =
/// R_g·Q/V_od + L_s·I/V_od (own derivation at the method's constant gate
/// current; the common-source inductance is in the circuit of Ren, Xu,
/// Zhou, Lee, *Analytical Loss Model of Power MOSFET*, IEEE Trans. Power
/// Electronics 21(2), 2006, §II). 0 without L_s.
pub fn common_source_delay_s(l_s_h: f64, i_a: f64, v_overdrive_v: f64) -> f64 {
    if l_s_h > 0.0 && v_overdrive_v > 0.0 {
        l_s_h * i_a.abs() / v_overdrive_v
    } else {
        0.0
    }
}

/// [`transitions`] with the node's partner given.
pub fn transitions_at(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    i_off_a: f64,
    r_ds_on_ohm: f64,
    partner: NodePartner,
) -> Result<Transitions, SwitchingError> {
    let node = NodeEdges {
        partner,
        model: EdgeModel::AtEachCurrent,
    };
    transitions_at_node(sw, drive, v_bus_v, i_on_a, i_off_a, r_ds_on_ohm, node)
}

/// [`transitions_at`] with the followed figures taken as `node.model`
/// says: at the currents themselves, or interpolated over the switched
/// current (`follow_edges`).
pub fn transitions_at_node(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    i_off_a: f64,
    r_ds_on_ohm: f64,
    node: NodeEdges,
) -> Result<Transitions, SwitchingError> {
    let (mut tr, rise) = gate_charge_edges(sw, drive, v_bus_v, i_on_a, i_off_a, r_ds_on_ohm)?;
    follow_edges(&mut tr, &rise, sw, drive, r_ds_on_ohm, node)?;
    Ok(tr)
}

/// The gate-charge method's delays and transition times of [`transitions`]
/// (t_d(on), t_ri, t_fv, t_d(off), t_rv, t_fi), without following the edges
/// at the node (refinement 4), which changes only the energies, the
/// turn-on's voltage-fall time t_fv, the turn-off peak, the node's swing and
/// the hand-over time. The dead-time need and the current limit's edge
/// timing use none of those, so they take this and do not follow edges only
/// to drop them.
pub fn gate_charge_timing(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    i_off_a: f64,
    r_ds_on_ohm: f64,
) -> Result<Transitions, SwitchingError> {
    Ok(gate_charge_edges(sw, drive, v_bus_v, i_on_a, i_off_a, r_ds_on_ohm)?.0)
}

/// Refinements 1–3 and 5 of [`transitions`]: the gate-charge edges, and the
/// turn-on's current rise the followed voltage fall starts from.
fn gate_charge_edges(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    i_off_a: f64,
    r_ds_on_ohm: f64,
) -> Result<(Transitions, TurnOnRise), SwitchingError> {
    // Every Miller figure of the first-order pass is replaced below, so it
    // takes the datasheet Q_gd rather than evaluating the curve twice.
    let mut tr = first_order(sw, drive, v_bus_v, i_on_a, i_off_a, &|_, _| sw.q_gd_c)?;
    let v = tr.v_bus_v;
    let (i_on, i_off) = (tr.i_on_a, tr.i_off_a);
    let v_plt_on = plateau_at_current_v(sw, i_on)?;
    let v_plt_off = plateau_at_current_v(sw, i_off)?;
    let (i_g_on, i_g_off) = gate_currents_a(drive, sw.r_g_int_ohm, v_plt_on, v_plt_off)?;
    let bad = SwitchingError::InvalidParameter {
        name: "gate current",
        value: i_g_off,
    };
    let q_ri = current_transition_charge_c(sw, v_plt_on)?;
    let q_fi = current_transition_charge_c(sw, v_plt_off)?;
    let l_s = drive.common_source_inductance_h;
    let t_ri = charge_time_s(q_ri, i_g_on).ok_or(bad.clone())?
        + common_source_delay_s(l_s, i_on, drive.v_drive_v - v_plt_on);
    let t_fi = charge_time_s(q_fi, i_g_off).ok_or(bad.clone())?
        + common_source_delay_s(l_s, i_off, v_plt_off);
    let rise = turn_on_rise(sw, drive, v, i_on, t_ri);
    let v_start_on = rise.v_fall_start_v;
    let miller = |i: f64, v_top: f64, v_plt: f64| {
        let v_low = (r_ds_on_ohm * i).clamp(0.0, v_top);
        miller_integrals(sw, v_low, v_top, v_plt)
    };
    let (q_gd_on, q_gd_off, e_fv, e_rv) = match (
        miller(i_on, v_start_on, v_plt_on),
        miller(i_off, v, v_plt_off),
    ) {
        (Some((q_on, w_on)), Some((q_off, w_off))) => (
            q_on,
            q_off,
            miller_energy_j(i_on, w_on, i_g_on).ok_or(bad.clone())?,
            miller_energy_j(i_off, w_off, i_g_off).ok_or(bad.clone())?,
        ),
        _ => {
            let q_on = miller_charge_c(sw, v_start_on, i_on, r_ds_on_ohm);
            let q_off = miller_charge_c(sw, v, i_off, r_ds_on_ohm);
            let t_on = charge_time_s(q_on, i_g_on).ok_or(bad.clone())?;
            let t_off = charge_time_s(q_off, i_g_off).ok_or(bad.clone())?;
            (
                q_on,
                q_off,
                crossover_energy_j(v_start_on, i_on, t_on, 0.0),
                crossover_energy_j(v, i_off, t_off, 0.0),
            )
        }
    };
    tr.v_plateau_on_v = v_plt_on;
    tr.v_plateau_off_v = v_plt_off;
    tr.i_g_on_a = i_g_on;
    tr.i_g_off_a = i_g_off;
    tr.q_gs2_c = q_ri;
    tr.q_gd_on_c = q_gd_on;
    tr.q_gd_off_c = q_gd_off;
    tr.t_ri_s = t_ri;
    tr.t_fv_s = charge_time_s(q_gd_on, i_g_on).ok_or(bad.clone())?;
    tr.t_rv_s = charge_time_s(q_gd_off, i_g_off).ok_or(bad)?;
    tr.t_fi_s = t_fi;
    (tr.t_d_off_s, tr.t_fi_rc_s) = turn_off_gate_times_s(sw, drive, v_plt_off)?;
    tr.t_partner_half_s = tr.t_d_off_s + tr.t_rv_s + 0.5 * tr.t_fi_s;
    tr.t_node_swing_s = tr.t_rv_s;
    tr.e_on_j = rise.e_ri_j + e_fv;
    tr.e_off_j = crossover_energy_j(v, i_off, 0.0, t_fi) + e_rv;
    tr.e_off_terminal_j = tr.e_off_j;
    tr.v_peak_off_v = first_order_peak_v(v, drive.loop_inductance_h, i_off, t_fi);
    Ok((tr, rise))
}

/// Refinement 4 of [`transitions`] on the gate-charge edges `tr`: the
/// turn-on's voltage fall and the turn-off followed at the node, where the
/// switch file allows it (`followed_circuit`). With
/// [`EdgeModel::Interpolated`] each followed figure is interpolated over the
/// switched current from the edges followed at fixed currents
/// (`edge_interpolation`, remembered for the process) where the four nodes
/// around the current are all followed and the board gives no loop
/// inductance; otherwise, and with [`EdgeModel::AtEachCurrent`], the edge is
/// followed at the current itself. The interpolation is within 1e-4 of the
/// edge pair's energy and 1e-3 of each time (tested; the times carry the
/// integration's own step error, about 1e-3).
fn follow_edges(
    tr: &mut Transitions,
    rise: &TurnOnRise,
    sw: &SwitchModel,
    drive: &GateDrive,
    r_ds_on_ohm: f64,
    node: NodeEdges,
) -> Result<(), SwitchingError> {
    let (v, i_on, i_off, partner) = (tr.v_bus_v, tr.i_on_a, tr.i_off_a, node.partner);
    // With a loop the turn-off's fall is integrated in fixed time steps up
    // to its first peak, and its figures jump by up to a few parts in a
    // thousand between neighbouring currents as the step count changes
    // (measured by the test below): more than an interpolation should add,
    // so each current is followed itself.
    let interpolating = node.model == EdgeModel::Interpolated
        && drive.loop_inductance_h <= 0.0
        && turn_off_followed(sw);
    let at_node = |kind: FollowedKind, k: i64| {
        let key = NodeKey {
            bits: [v.to_bits(), r_ds_on_ohm.to_bits()],
            partner,
            kind,
            k,
        };
        node_memo(sw, drive, key, || {
            followed_at_node(sw, drive, v, r_ds_on_ohm, partner, kind, k)
        })
    };
    let interpolated = |kind: FollowedKind, i_a: f64| {
        interpolating
            .then(|| edge_interpolation::interpolate(i_a, |k| at_node(kind, k)))
            .flatten()
    };
    let fall = match interpolated(FollowedKind::Fall, i_on) {
        Some([e, t, ..]) => Some(commutation::VoltageFall {
            e_load_j: e,
            t_fall_s: t,
        }),
        None => followed_fall(
            sw,
            drive,
            v,
            i_on,
            rise.v_fall_start_v,
            r_ds_on_ohm,
            partner,
        )?,
    };
    let off = match interpolated(FollowedKind::TurnOff, i_off) {
        Some(f) => Some(turn_off_of_figures(f)),
        None => shared_turn_off(sw, drive, v, i_off, r_ds_on_ohm, partner),
    };
    if let Some(f) = fall {
        tr.e_on_j = rise.e_ri_j + f.e_load_j;
        tr.t_fv_s = f.t_fall_s;
    }
    if let Some(t) = off {
        tr.e_off_j = t.e_channel_j;
        tr.e_off_terminal_j = t.e_terminal_j;
        tr.v_peak_off_v = t.v_peak_v;
        tr.t_partner_half_s = tr.t_d_off_s + t.t_half_handover_s;
        tr.t_node_swing_s = t.t_rise_s;
    }
    Ok(())
}

/// Which followed edge a node holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum FollowedKind {
    /// The hard turn-on's voltage fall (`commutation::voltage_fall`).
    Fall,
    /// The hard turn-off (`commutation::turn_off`).
    TurnOff,
}

/// What besides the switch and the drive a node depends on: the bus
/// voltage's and R_ds(on)'s bits, the partner, the edge and the node index.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct NodeKey {
    bits: [u64; 2],
    partner: NodePartner,
    kind: FollowedKind,
    k: i64,
}

/// The figures of one followed edge at grid node `k`, as interpolated: the
/// fall's (e_load, t_fall, 0, 0, 0) or the turn-off's
/// ([`turn_off_figures`]); `None` where the edge is not followed there.
fn followed_at_node(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    r_ds_on_ohm: f64,
    partner: NodePartner,
    kind: FollowedKind,
    k: i64,
) -> Option<[f64; 5]> {
    let i = edge_interpolation::node_current_a(k);
    match kind {
        FollowedKind::Fall => {
            let (_, rise) = gate_charge_edges(sw, drive, v_bus_v, i, i, r_ds_on_ohm).ok()?;
            let v_start = rise.v_fall_start_v;
            let f = followed_fall(sw, drive, v_bus_v, i, v_start, r_ds_on_ohm, partner).ok()??;
            Some([f.e_load_j, f.t_fall_s, 0.0, 0.0, 0.0])
        }
        FollowedKind::TurnOff => {
            shared_turn_off(sw, drive, v_bus_v, i, r_ds_on_ohm, partner).map(turn_off_figures)
        }
    }
}

/// A followed turn-off as the five figures interpolated.
fn turn_off_figures(t: commutation::TurnOff) -> [f64; 5] {
    [
        t.e_channel_j,
        t.e_terminal_j,
        t.v_peak_v,
        t.t_half_handover_s,
        t.t_rise_s,
    ]
}

/// [`turn_off_figures`] back into a turn-off.
fn turn_off_of_figures(f: [f64; 5]) -> commutation::TurnOff {
    commutation::TurnOff {
        e_channel_j: f[0],
        e_terminal_j: f[1],
        v_peak_v: f[2],
        t_half_handover_s: f[3],
        t_rise_s: f[4],
    }
}

/// A node's figures remembered for the whole process (the search's
/// threads share the nodes): the last few hundred, each kept with a copy of
/// the switch and the drive and returned only for equal inputs. A node is a
/// function of its inputs alone, so two threads that compute one at the
/// same time store the same figures.
fn node_memo(
    sw: &SwitchModel,
    drive: &GateDrive,
    key: NodeKey,
    compute: impl FnOnce() -> Option<[f64; 5]>,
) -> Option<[f64; 5]> {
    static NODES: std::sync::Mutex<RecentRing<NodeKey, Option<[f64; 5]>>> =
        std::sync::Mutex::new(RecentRing::new());
    const SIZE: usize = 256;
    let ring = || {
        NODES
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner)
    };
    if let Some(r) = ring().find(&key, sw, drive) {
        return r;
    }
    let r = compute();
    ring().keep(SIZE, key, sw, drive, r);
    r
}

/// The followed voltage fall of a hard turn-on at `i_on_a` whose current
/// rise left the drain at `v_start_v`; `None` where it is not followed.
fn followed_fall(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    v_start_v: f64,
    r_ds_on_ohm: f64,
    partner: NodePartner,
) -> Result<Option<commutation::VoltageFall>, SwitchingError> {
    let r_on = turn_on_resistance_ohm(drive, sw.r_g_int_ohm)?;
    let c = followed_circuit(sw, drive, r_on, v_bus_v, i_on_a, r_ds_on_ohm, partner);
    Ok(c.and_then(|c| commutation::voltage_fall(&c, drive.v_drive_v, v_start_v)))
}

/// When a channel carrying `i_a` lets its own body diode take the current
/// at a soft turn-off, after the gate command: the turn-off delay to the
/// plateau of that current, t_d(off) (on-state input capacitance), plus half
/// the RC fall from the plateau to threshold, t_fi(RC)/2 — the same figures
/// [`transitions_at`] gives for a turn-off at that current, without the rest
/// of the edge.
pub fn soft_release_s(
    sw: &SwitchModel,
    drive: &GateDrive,
    i_a: f64,
) -> Result<f64, SwitchingError> {
    let v_plt = plateau_at_current_v(sw, i_a.abs())?;
    let (t_d_off, t_fi_rc) = turn_off_gate_times_s(sw, drive, v_plt)?;
    Ok(t_d_off + 0.5 * t_fi_rc)
}

/// The turn-off's gate discharges towards 0 V through the turn-off loop:
/// (t_d(off), t_fi(RC)) — from the drive voltage to the plateau `v_plt_v`
/// with the on-state input capacitance (`input_capacitance_on_state_f`), and
/// from the plateau to threshold with C_iss (`rc_time_s`; Balogh's RC
/// delays, from memory).
fn turn_off_gate_times_s(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_plt_v: f64,
) -> Result<(f64, f64), SwitchingError> {
    let r_off = turn_off_resistance_ohm(drive, sw.r_g_int_ohm)?;
    let on_state_f = input_capacitance_on_state_f(sw);
    Ok((
        rc_time_s(r_off * on_state_f, drive.v_drive_v, 0.0, v_plt_v),
        rc_time_s(r_off * sw.c_iss_f, v_plt_v, 0.0, sw.v_th_v.min(v_plt_v)),
    ))
}

/// The turn-off peak where the node is not followed in time: V + L·I/t_fi,
/// the loop's L·di/dt at the gate-charge method's mean current slope
/// (common practice; it neglects the slowing of the fall by the overshoot
/// itself, so it is high for a large loop).
pub fn first_order_peak_v(v_bus_v: f64, loop_inductance_h: f64, i_a: f64, t_fi_s: f64) -> f64 {
    if loop_inductance_h > 0.0 && t_fi_s > 0.0 {
        v_bus_v + loop_inductance_h * i_a / t_fi_s
    } else {
        v_bus_v
    }
}

/// Current slope at the end of a hard turn-on's current rise, A/s:
/// 2·I/t_ri. Under the gate-charge model's constant gate current the gate
/// voltage ramps linearly through the current rise, and a square-law channel
/// (I ∝ (V_GS − V_th)², Sze, Ng, *Physics of Semiconductor Devices*, 3rd ed.,
/// 2007, ch. 6, from memory) then reaches I with twice its mean slope (own
/// derivation). The partner recovers, and the loop's dip peaks, at that
/// slope, not the mean one.
pub fn turn_on_slope_a_per_s(i_a: f64, t_ri_s: f64) -> f64 {
    if t_ri_s > 0.0 {
        2.0 * i_a.abs() / t_ri_s
    } else {
        f64::INFINITY
    }
}

/// The drain voltage a hard turn-on's voltage fall starts from: the bus
/// less the loop's L·di/dt at the end of the current rise (di/dt = 2·I/t_ri,
/// [`turn_on_slope_a_per_s`]), not below zero. Once the partner's
/// diode stops conducting the node is held only by its capacitances, so the
/// Miller fall starts where the dip left it (own derivation from the node
/// equations; the loop's dip at turn-on is the circuit of Ren et al. 2006,
/// §II). The bus itself without a loop.
pub fn turn_on_fall_start_v(v_bus_v: f64, loop_inductance_h: f64, i_a: f64, t_ri_s: f64) -> f64 {
    if !(loop_inductance_h > 0.0 && t_ri_s > 0.0) {
        return v_bus_v;
    }
    (v_bus_v - loop_inductance_h * turn_on_slope_a_per_s(i_a, t_ri_s)).max(0.0)
}

/// The turn-on's current-rise energy with the loop inductance L: while the
/// current rises the loop takes L·di/dt off the switch's voltage, so the
/// switch dissipates ∫(V − L·di/dt)·i dt = E_ri − ½·L·I² for any current
/// shape (the energy goes into the loop's field instead; own derivation from
/// the energy balance, the turn-on voltage dip of Ren et al. 2006, §II), not
/// below zero (a loop that takes the whole bus voltage leaves the rise
/// lossless; the rise is then L-limited).
pub fn current_rise_with_loop_j(e_ri_j: f64, loop_inductance_h: f64, i_a: f64) -> f64 {
    (e_ri_j - 0.5 * loop_inductance_h * i_a * i_a).max(0.0)
}

/// A hard turn-on's current rise: what the voltage fall and the partner's
/// recovery start from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TurnOnRise {
    /// Energy of the current rise at the drain terminal.
    pub e_ri_j: f64,
    /// Drain voltage where the voltage fall starts.
    pub v_fall_start_v: f64,
    /// Current slope at the end of the rise, A/s (the partner recovers at it).
    pub slope_a_per_s: f64,
}

/// The current rise of a hard turn-on at `i_on_a` from `v_bus_v` that lasts
/// `t_ri_s` by the gate-charge method. Without a loop inductance: the
/// crossover ½·V·I·t_ri, the slope 2·I/t_ri ([`turn_on_slope_a_per_s`]) and
/// the fall from the bus. With one, where the turn-off is followed at the node
/// too ([`turn_off_followed`]): the rise integrated in time against the loop
/// (`commutation::current_rise_with_loop`); otherwise the gate-charge rise
/// with the loop's energy and dip ([`current_rise_with_loop_j`],
/// [`turn_on_fall_start_v`]).
pub fn turn_on_rise(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_on_a: f64,
    t_ri_s: f64,
) -> TurnOnRise {
    let l = drive.loop_inductance_h;
    let e_ri = crossover_energy_j(v_bus_v, i_on_a, t_ri_s, 0.0);
    let gate_charge = TurnOnRise {
        e_ri_j: current_rise_with_loop_j(e_ri, l, i_on_a),
        v_fall_start_v: turn_on_fall_start_v(v_bus_v, l, i_on_a, t_ri_s),
        slope_a_per_s: turn_on_slope_a_per_s(i_on_a, t_ri_s),
    };
    if !(l > 0.0 && turn_off_followed(sw)) {
        return gate_charge;
    }
    let followed = (|| {
        let r_gate_ohm = turn_on_resistance_ohm(drive, sw.r_g_int_ohm).ok()?;
        commutation::current_rise_with_loop(&commutation::TurnOnCircuit {
            switch: sw,
            c_oss: law_memo(sw),
            channel: commutation::ChannelLaw::of_switch(sw)?,
            r_gate_ohm,
            v_drive_v: drive.v_drive_v,
            v_bus_v,
            i_load_a: i_on_a.abs(),
            loop_inductance_h: l,
            common_source_inductance_h: drive.common_source_inductance_h,
        })
    })();
    followed.map_or(gate_charge, |r| TurnOnRise {
        e_ri_j: r.e_terminal_j,
        v_fall_start_v: r.v_end_v,
        slope_a_per_s: r.slope_end_a_per_s,
    })
}

/// The turn-off with capacitance sharing (`commutation::turn_off`), or
/// `None` without a channel law (no g_fs), without a C_rss curve, or when it
/// does not finish. Why the curve: a single C_rss at the table voltage is a
/// decade below C_gd at low V_DS, where most of the Miller charge moves; the
/// node would rise far too fast on it. Without a curve the gate-charge
/// method, which moves the datasheet Q_gd, stays in charge (conservative).
fn shared_turn_off(
    sw: &SwitchModel,
    drive: &GateDrive,
    v_bus_v: f64,
    i_off_a: f64,
    r_ds_on_ohm: f64,
    partner: NodePartner,
) -> Option<commutation::TurnOff> {
    let r_off = turn_off_resistance_ohm(drive, sw.r_g_int_ohm).ok()?;
    let c = followed_circuit(sw, drive, r_off, v_bus_v, i_off_a, r_ds_on_ohm, partner)?;
    commutation::turn_off(&c)
}

/// The node circuit a followed edge of `sw` switches, at `v_bus_v` and
/// `i_a`, through the gate loop of `r_gate_ohm` (turn-off or turn-on);
/// `None` where edges are not followed (`turn_off_followed`).
fn followed_circuit<'a>(
    sw: &'a SwitchModel,
    drive: &GateDrive,
    r_gate_ohm: f64,
    v_bus_v: f64,
    i_a: f64,
    r_ds_on_ohm: f64,
    partner: NodePartner,
) -> Option<commutation::TurnOffCircuit<'a>> {
    if !turn_off_followed(sw) {
        return None;
    }
    let c_oss = law_memo(sw);
    Some(commutation::TurnOffCircuit {
        switch: sw,
        c_oss,
        channel: commutation::ChannelLaw::of_switch(sw)?,
        partner: match partner {
            NodePartner::BridgeLeg => commutation::Partner::Switch(c_oss),
            NodePartner::FreewheelDiode => commutation::Partner::Diode,
        },
        r_gate_ohm,
        v_bus_v,
        i_load_a: i_a.abs(),
        v_on_v: r_ds_on_ohm * i_a.abs(),
        loop_inductance_h: drive.loop_inductance_h,
        common_source_inductance_h: drive.common_source_inductance_h,
    })
}

/// Whether the turn-off is followed at the switch node (`shared_turn_off`):
/// the switch file needs a C_rss curve and a channel law (g_fs).
pub fn turn_off_followed(sw: &SwitchModel) -> bool {
    !sw.c_rss_curve.is_empty() && commutation::ChannelLaw::of_switch(sw).is_some()
}

/// Total gate charge at the actual drive voltage.
///
/// Piecewise-linear gate-charge curve (the gate-charge note describes the three segments; the
/// linear extension above the plateau is from memory):
/// Q_g(V_drv) = (Q_gs + Q_gd) + (Q_g − Q_gs − Q_gd)·(V_drv − V_plt)/(V_spec − V_plt)
/// for V_drv above the plateau. Falls back to the proportional form Q_g·V_drv/V_spec when the data do
/// not allow the segment form (plateau at or above V_spec, or V_drv at or below
/// the plateau).
pub fn total_gate_charge_c(sw: &SwitchModel, v_drive_v: f64, v_plateau_v: f64) -> f64 {
    let q_sw = sw.q_gs_c + sw.q_gd_c;
    let v_spec = sw.q_g_at_v_gs_v;
    let v_plt = sw.v_plateau_v.unwrap_or(v_plateau_v);
    let segment_ok =
        v_spec > v_plt && v_drive_v > v_plt && sw.q_g_c >= q_sw && v_plt.is_finite() && v_plt > 0.0;
    if segment_ok {
        q_sw + (sw.q_g_c - q_sw) * (v_drive_v - v_plt) / (v_spec - v_plt)
    } else if v_spec > 0.0 {
        sw.q_g_c * v_drive_v / v_spec
    } else {
        sw.q_g_c
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::physics::params::fixtures::{
        Lcg, curved_switch, example_drive, example_switch,
    };

    #[test]
    fn turn_on_slope_is_twice_the_mean() {
        assert_eq!(turn_on_slope_a_per_s(10.0, 5e-9), 4e9);
        assert!(turn_on_slope_a_per_s(10.0, 0.0).is_infinite());
    }

    /// The loop's share of the turn-on (½·L·I², hand numbers: 10 nH, 20 A
    /// → 2 µJ) and the first-order turn-off peak (48 V + 5 nH·10 A/5 ns =
    /// 58 V); neither moves anything without a loop.
    #[test]
    fn loop_inductance_by_hand() {
        assert!((current_rise_with_loop_j(5e-6, 10e-9, 20.0) - 3e-6).abs() < 1e-18);
        assert_eq!(current_rise_with_loop_j(1e-6, 10e-9, 20.0), 0.0);
        assert_eq!(current_rise_with_loop_j(1e-6, 0.0, 20.0), 1e-6);
        assert!((first_order_peak_v(48.0, 5e-9, 10.0, 5e-9) - 58.0).abs() < 1e-12);
        assert_eq!(first_order_peak_v(48.0, 0.0, 10.0, 5e-9), 48.0);
        // The fall starts 48 V − 5 nH·2·10 A/4 ns = 23 V; floored at 0 V.
        assert!((turn_on_fall_start_v(48.0, 5e-9, 10.0, 4e-9) - 23.0).abs() < 1e-12);
        assert_eq!(turn_on_fall_start_v(48.0, 50e-9, 10.0, 4e-9), 0.0);
        assert_eq!(turn_on_fall_start_v(48.0, 0.0, 10.0, 4e-9), 48.0);
    }

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    /// Computed regression case (regression value, worked out from the
    /// formulas, not an external check): Q_gs2 = 3.0 − 1.75 = 1.25 nC, Q_gd 12 nC.
    #[test]
    fn regression_case_hard_switching() {
        let sw = example_switch();
        let tr = transitions(&sw, &example_drive(), 24.0, 10.0, 10.0, 5e-3).unwrap();
        assert!((tr.v_plateau_on_v - 3.5).abs() < 1e-12);
        assert!((tr.t_ri_s * 1e9 - 1.154).abs() < 5e-4);
        assert!((tr.t_fv_s * 1e9 - 11.077).abs() < 5e-4);
        assert!((tr.t_rv_s * 1e9 - 17.143).abs() < 5e-4);
        assert!((tr.t_fi_s * 1e9 - 1.786).abs() < 5e-4);
        assert!((tr.e_on_j * 1e6 - 1.468).abs() < 5e-4);
        assert!((tr.e_off_j * 1e6 - 2.271).abs() < 5e-4);
        assert_eq!(tr.e_off_j, tr.e_off_terminal_j);
        assert!((tr.switching_power_w(20e3) * 1e3 - 74.78).abs() < 5e-3);
    }

    /// Closed-form check of the gate currents: (10 − 3.5)/6 and 3.5/5.
    #[test]
    fn gate_currents_closed_form() {
        let (on, off) = gate_currents_a(&example_drive(), 1.0, 3.5, 3.5).unwrap();
        assert!(rel(on, 6.5 / 6.0) < 1e-12);
        assert!(rel(off, 0.7) < 1e-12);
    }

    /// Practitioner figure (common practice, no published source): 63 nC moved at
    /// 360 mA takes about 175 ns.
    #[test]
    fn gate_charge_time_common_practice() {
        let t = charge_time_s(63e-9, 0.360).unwrap();
        assert!((t * 1e9 - 175.0).abs() < 0.5);
        assert!(charge_time_s(63e-9, 0.0).is_none());
    }

    /// Practitioner figure (common practice, no published source): a 347 ns total
    /// transition at 10 kHz, 12 V, 5.25 A adds about 0.109 W by ½·V·I·(t_r+t_f)·f.
    #[test]
    fn crossover_loss_common_practice() {
        let p = crossover_energy_j(12.0, 5.25, 200e-9, 147e-9) * 10e3;
        assert!((p - 0.109).abs() < 0.0005);
    }

    /// A plateau from the datasheet overrides V_th + I/g_fs; neither → error.
    #[test]
    fn plateau_preference_and_error() {
        let mut sw = example_switch();
        sw.v_plateau_v = Some(4.2);
        assert_eq!(plateau_voltage_v(&sw, 10.0).unwrap(), 4.2);
        sw.v_plateau_v = None;
        sw.g_fs_s = None;
        assert_eq!(plateau_voltage_v(&sw, 10.0), Err(SwitchingError::NoPlateau));
    }

    /// Q_g(th) assumption: linear V_GS(Q) below the plateau gives
    /// Q_gs2 = Q_gs·(V_plt − V_th)/V_plt (closed form of the stated assumption).
    #[test]
    fn q_gs2_assumption_without_q_g_th() {
        let mut sw = example_switch();
        sw.q_g_th_c = None;
        let q = q_gs2_c(&sw, 4.0).unwrap();
        assert!(rel(q, 3.0e-9 * (4.0 - 3.0) / 4.0) < 1e-12);
    }

    /// Two-point C_gd: for a curve C = k·V^−½ the log-log interpolation is exact,
    /// so Q_gd,eff must equal (V − R·I)·(C(V) + C(R·I))/2 evaluated in closed form.
    #[test]
    fn graovac_two_point_against_power_law_closed_form() {
        let k = 300e-12; // F·V^½
        let c = |v: f64| k / v.sqrt();
        let mut sw = example_switch();
        sw.c_rss_curve = [0.1, 0.3, 1.0, 3.0, 10.0, 30.0, 60.0]
            .iter()
            .map(|&v| (v, c(v)))
            .collect();
        let (v, i, r) = (24.0, 10.0, 0.02);
        let expect = (v - r * i) * 0.5 * (c(v) + c(r * i));
        assert!(rel(miller_charge_c(&sw, v, i, r), expect) < 1e-9);
        // Flat curve: reduces to (V − R·I)·C.
        sw.c_rss_curve = vec![(1.0, 50e-12), (50.0, 50e-12)];
        assert!(rel(miller_charge_c(&sw, v, i, r), (v - r * i) * 50e-12) < 1e-12);
    }

    /// Weak driver (25 mA pin at 3.3 V, 132 Ω): still computed, edges long.
    /// t_fv must equal Q_gd/I_g with I_g = (3.3 − V_plt)/(132 + R_int) (closed form).
    #[test]
    fn weak_driver_gives_long_edges() {
        let mut sw = example_switch();
        sw.v_th_v = 1.5;
        let drive = GateDrive {
            v_drive_v: 3.3,
            r_source_ohm: 132.0,
            r_sink_ohm: 132.0,
            r_ext_on_ohm: 0.0,
            r_ext_off_ohm: 0.0,
            prop_delay_s: 0.0,
            mismatch_s: 0.0,
            loop_inductance_h: 0.0,
            common_source_inductance_h: 0.0,
        };
        let tr = transitions(&sw, &drive, 12.0, 2.0, 2.0, 0.01).unwrap();
        let i_g = (3.3 - (1.5 + 2.0 / 20.0)) / 133.0;
        assert!(rel(tr.t_fv_s, 12e-9 / i_g) < 1e-12);
        assert!(tr.t_fv_s > 500e-9);
        // Drive at or below the plateau is an error, not a number.
        let tr = transitions(&sw, &drive, 12.0, 40.0, 40.0, 0.01);
        assert!(matches!(tr, Err(SwitchingError::DriveBelowPlateau { .. })));
    }

    /// RC delays against their closed forms (Balogh; turn-off forms from memory).
    #[test]
    fn rc_delays_closed_form() {
        let sw = example_switch();
        let tr = transitions(&sw, &example_drive(), 24.0, 10.0, 10.0, 5e-3).unwrap();
        let tau_on = 6.0 * 2e-9;
        let tau_off = 5.0 * 2e-9;
        assert!(rel(tr.t_d_on_s, tau_on * (10.0_f64 / 7.0).ln()) < 1e-12);
        assert!(rel(tr.t_d_off_s, tau_off * (10.0_f64 / 3.5).ln()) < 1e-12);
        assert!(rel(tr.t_fi_rc_s, tau_off * (3.5_f64 / 3.0).ln()) < 1e-12);
    }

    /// Gate charge scaling: at the specification voltage it returns Q_g exactly,
    /// at the plateau end Q_gs + Q_gd (the segment end points).
    #[test]
    fn gate_charge_scaling_end_points() {
        let sw = example_switch();
        assert!(rel(total_gate_charge_c(&sw, 10.0, 3.5), 30e-9) < 1e-12);
        let q = total_gate_charge_c(&sw, 3.5 + 1e-12, 3.5);
        assert!(rel(q, 15e-9) < 1e-9);
    }

    /// Property (seeded loop): switching loss rises with frequency, and E_on,
    /// E_off rise with current, for random devices and drives.
    #[test]
    fn property_switching_loss_monotone() {
        let mut rng = Lcg(7);
        for _ in 0..200 {
            let mut sw = example_switch();
            sw.q_gd_c = rng.uniform(1e-9, 50e-9);
            sw.g_fs_s = Some(rng.uniform(5.0, 100.0));
            let mut drive = example_drive();
            drive.r_ext_on_ohm = rng.uniform(0.0, 50.0);
            drive.r_ext_off_ohm = rng.uniform(0.0, 50.0);
            let v = rng.uniform(5.0, 48.0);
            let i = rng.uniform(0.5, 20.0);
            let f1 = rng.uniform(1e3, 50e3);
            let f2 = f1 * rng.uniform(1.01, 4.0);
            let a = transitions(&sw, &drive, v, i, i, 0.01).unwrap();
            assert!(a.switching_power_w(f2) > a.switching_power_w(f1));
            let b = transitions(&sw, &drive, v, 1.5 * i, 1.5 * i, 0.01).unwrap();
            assert!(b.e_on_j > a.e_on_j && b.e_off_j > a.e_off_j);
        }
    }

    /// For a constant C_gd the Miller energy I·W/I_g equals the linear ramp
    /// ½·V·I·t with t = C·V/I_g (Graovac 2006), whatever the plateau shift.
    #[test]
    fn miller_energy_reduces_to_linear_ramp_for_constant_c() {
        let mut sw = example_switch();
        sw.c_rss_curve = vec![(1.0, 50e-12), (60.0, 50e-12)];
        let (q, w) = miller_integrals(&sw, 0.0, 24.0, 3.5).unwrap();
        let e = miller_energy_j(10.0, w, 0.5).unwrap();
        let t = charge_time_s(q, 0.5).unwrap();
        assert!(rel(e, crossover_energy_j(24.0, 10.0, t, 0.0)) < 1e-12);
        assert!(miller_energy_j(10.0, w, 0.0).is_none());
    }

    /// On-state input capacitance: the gate-charge slope above the plateau,
    /// (30 − 3 − 12) nC/(10 − 4) V = 2.5 nF, only with a datasheet plateau.
    #[test]
    fn on_state_input_capacitance_from_gate_charge_slope() {
        let mut sw = example_switch();
        assert_eq!(input_capacitance_on_state_f(&sw), sw.c_iss_f);
        sw.v_plateau_v = Some(4.0);
        assert!(rel(input_capacitance_on_state_f(&sw), 15e-9 / 6.0) < 1e-12);
        // A slope below the tabulated C_iss is not believed.
        sw.q_g_c = 16e-9;
        assert_eq!(input_capacitance_on_state_f(&sw), sw.c_iss_f);
    }

    /// Square-law plateau: V_th + √(2·I·(V_plt − V_th)/g_fs) in closed form,
    /// equal to the datasheet plateau at I = g_fs·(V_plt − V_th)/2, and the
    /// first-order plateau without a datasheet plateau.
    #[test]
    fn plateau_at_current_square_law() {
        let mut sw = example_switch();
        assert_eq!(
            plateau_at_current_v(&sw, 10.0).unwrap(),
            plateau_voltage_v(&sw, 10.0).unwrap()
        );
        sw.v_plateau_v = Some(4.0);
        let v = plateau_at_current_v(&sw, 5.0).unwrap();
        assert!(rel(v, 3.0 + (2.0 * 5.0 * 1.0 / 20.0_f64).sqrt()) < 1e-12);
        assert!(rel(plateau_at_current_v(&sw, 10.0).unwrap(), 4.0) < 1e-12);
        // The current-transition charge scales with the gate swing.
        let q = current_transition_charge_c(&sw, 3.5).unwrap();
        assert!(rel(q, 1.25e-9 * 0.5) < 1e-12);
    }

    /// Without a C_rss curve and a datasheet plateau, `transitions` is exactly
    /// the first-order model (the refinements only use data that are present).
    #[test]
    fn refined_equals_first_order_without_refinement_data() {
        let sw = example_switch();
        let d = example_drive();
        let a = transitions(&sw, &d, 24.0, 8.0, 12.0, 5e-3).unwrap();
        let b = transitions_first_order(&sw, &d, 24.0, 8.0, 12.0, 5e-3).unwrap();
        assert_eq!(a, b);
    }

    /// With a C_rss curve and g_fs the turn-off follows the node
    /// (`commutation::turn_off`): the channel hands part of the current to
    /// C_ds and the partner's C_oss, so the channel energy lies below the
    /// terminal energy, which lies below the gate-charge figure with the
    /// whole current in the channel (refinement 2 alone), and the terminal
    /// exceeds the channel by about the energy stored in the switch's own
    /// output capacitance (within the gate loop's share of the C_gd current).
    /// The dead-time need's timing without the followed edges gives the
    /// very times the full edges give (following changes only energies, the
    /// turn-on's t_fv, the peak and the hand-over), on a switch whose edges
    /// are followed, at a light and a heavy load, with and without a loop.
    #[test]
    fn gate_charge_timing_is_the_full_edges_timing() {
        let sw = curved_switch();
        assert!(turn_off_followed(&sw));
        for l_h in [0.0, 5e-9] {
            let mut d = example_drive();
            d.loop_inductance_h = l_h;
            for i_a in [0.5, 10.0] {
                let full = transitions(&sw, &d, 24.0, i_a, i_a, 5e-3).unwrap();
                let gc = gate_charge_timing(&sw, &d, 24.0, i_a, i_a, 5e-3).unwrap();
                let times = |t: &Transitions| {
                    [t.t_d_on_s, t.t_ri_s, t.t_d_off_s, t.t_rv_s, t.t_fi_s].map(f64::to_bits)
                };
                assert_eq!(times(&full), times(&gc), "L {l_h} H, {i_a} A");
                // The followed edges did move the energies: the shortcut
                // really skips work the full edges do.
                assert_ne!(full.e_off_j.to_bits(), gc.e_off_j.to_bits());
            }
        }
    }

    /// The interpolated followed edges against the edges followed at the
    /// current itself (an independent integration at each current), over
    /// light to heavy currents that fall anywhere between the nodes, both
    /// partners, with and without a common-source inductance; the
    /// gate-charge figures stay bit for bit, and with a loop inductance
    /// every figure does (followed at each current). The followed figures
    /// carry the integration's own step error, about 1e-3 (`commutation`'s
    /// convergence tests), which moves a little as the step count changes
    /// with the current: the interpolation must stay inside it (measured:
    /// 6e-5 of the pair's energy, 8e-4 of a time). Energies are compared
    /// on the edge pair's energy (a light turn-off's channel energy is near
    /// zero), times and the peak on themselves.
    #[test]
    fn interpolated_edges_match_the_edges_followed_at_each_current() {
        let sw = curved_switch();
        let mut worst = [0.0_f64; 3];
        for (l_h, l_s_h) in [(0.0, 0.0), (0.0, 1e-9), (5e-9, 1e-9)] {
            let mut d = example_drive();
            d.loop_inductance_h = l_h;
            d.common_source_inductance_h = l_s_h;
            for partner in [NodePartner::BridgeLeg, NodePartner::FreewheelDiode] {
                for n in 0..40 {
                    let i = 0.3 * 1.13_f64.powi(n);
                    let exact = transitions_at(&sw, &d, 36.0, i, 1.07 * i, 5e-3, partner).unwrap();
                    let node = NodeEdges {
                        partner,
                        model: EdgeModel::Interpolated,
                    };
                    let interp =
                        transitions_at_node(&sw, &d, 36.0, i, 1.07 * i, 5e-3, node).unwrap();
                    assert_eq!(exact.t_ri_s.to_bits(), interp.t_ri_s.to_bits());
                    assert_eq!(exact.t_d_off_s.to_bits(), interp.t_d_off_s.to_bits());
                    if l_h > 0.0 {
                        assert_eq!(exact, interp, "with a loop, {i} A");
                        continue;
                    }
                    let scale = exact.e_on_j + exact.e_off_terminal_j;
                    let energy = |t: &Transitions| [t.e_on_j, t.e_off_j, t.e_off_terminal_j];
                    for (a, b) in energy(&exact).iter().zip(energy(&interp)) {
                        worst[0] = worst[0].max((b - a).abs() / scale);
                    }
                    let times = |t: &Transitions| [t.t_fv_s, t.t_partner_half_s, t.t_node_swing_s];
                    for (a, b) in times(&exact).iter().zip(times(&interp)) {
                        worst[1] = worst[1].max(((b - a) / a).abs());
                    }
                    let peak = (interp.v_peak_off_v / exact.v_peak_off_v - 1.0).abs();
                    worst[2] = worst[2].max(peak);
                    assert!(
                        worst[0] < 1e-4 && worst[1] < 1e-3 && worst[2] < 1e-9,
                        "L_s {l_s_h} H, {partner:?}, {i} A: worst energy, time, peak {worst:?}"
                    );
                }
            }
        }
        assert!(worst[0] > 0.0, "the interpolation was not used");
    }

    #[test]
    fn shared_turn_off_below_the_gate_charge_turn_off() {
        let sw = curved_switch();
        let d = example_drive();
        let tr = transitions(&sw, &d, 24.0, 10.0, 10.0, 5e-3).unwrap();
        let t_fi = tr.t_fi_s;
        let gate_charge = crossover_energy_j(24.0, 10.0, 0.0, t_fi)
            + miller_energy_j(
                10.0,
                miller_integrals(&sw, 0.05, 24.0, 4.5).unwrap().1,
                tr.i_g_off_a,
            )
            .unwrap();
        assert!(tr.e_off_j < tr.e_off_terminal_j && tr.e_off_terminal_j < gate_charge);
        let law = super::super::capacitance::OutputCapacitance::of_switch(&sw);
        let stored = law.energy_j(&sw, 24.0);
        let diff = tr.e_off_terminal_j - tr.e_off_j;
        assert!(
            diff > 0.5 * stored && diff < 1.5 * stored,
            "{diff} vs {stored}"
        );
    }

    /// The common-source inductance adds L_s·I/V_od to each current
    /// transition of the gate-charge method, V_od the gate loop's overdrive
    /// (turn-on: V_drv − V_plt; turn-off: V_plt): by hand, 2 nH·5 A over the
    /// example's overdrives.
    #[test]
    fn common_source_inductance_adds_its_delay_to_the_current_edges() {
        let sw = example_switch();
        let mut d = example_drive();
        let plain =
            transitions_at(&sw, &d, 24.0, 5.0, 5.0, 5e-3, NodePartner::FreewheelDiode).unwrap();
        (d.loop_inductance_h, d.common_source_inductance_h) = (2e-9, 2e-9);
        let with =
            transitions_at(&sw, &d, 24.0, 5.0, 5.0, 5e-3, NodePartner::FreewheelDiode).unwrap();
        let v_plt = plain.v_plateau_on_v;
        let on = 2e-9 * 5.0 / (d.v_drive_v - v_plt);
        let off = 2e-9 * 5.0 / plain.v_plateau_off_v;
        assert!(((with.t_ri_s - plain.t_ri_s) / on - 1.0).abs() < 1e-9);
        assert!(((with.t_fi_s - plain.t_fi_s) / off - 1.0).abs() < 1e-9);
        assert_eq!(common_source_delay_s(0.0, 5.0, 4.0), 0.0);
        assert!((common_source_delay_s(2e-9, -5.0, 4.0) - 2.5e-9).abs() < 1e-24);
    }

    /// A bridge partner's output capacitance takes part of the load current
    /// while the node rises, so the channel's turn-off energy is lower against
    /// a bridge leg than against a freewheel diode of negligible capacitance;
    /// at turn-on the channel must charge that capacitance while the node
    /// falls, so the fall is slower and the load current's share of E_on is
    /// higher (`commutation::voltage_fall`).
    #[test]
    fn bridge_partner_lowers_the_turn_off_channel_energy() {
        let sw = curved_switch();
        let d = example_drive();
        let leg = transitions_at(&sw, &d, 24.0, 5.0, 5.0, 5e-3, NodePartner::BridgeLeg).unwrap();
        let diode =
            transitions_at(&sw, &d, 24.0, 5.0, 5.0, 5e-3, NodePartner::FreewheelDiode).unwrap();
        assert!(leg.e_off_j < diode.e_off_j, "{leg:?} {diode:?}");
        assert!(leg.e_on_j > diode.e_on_j, "{leg:?} {diode:?}");
        assert!(leg.t_fv_s > diode.t_fv_s, "{leg:?} {diode:?}");
    }
}
