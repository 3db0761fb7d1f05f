//! The body diode in the dead time of a synchronous leg, against ngspice.
//!
//! A leg of two equal switches (the invented VDMOS devices of `harness`)
//! feeds a constant current I out of the switch node. The low side conducts
//! (in reverse), turns off (soft: its own body diode takes the current), and
//! after the dead time the high side turns on hard; a microsecond later the
//! high side turns off hard (the load current swings the node down, the low
//! side's diode takes the current) and after the dead time the low side turns
//! on soft. The low side's dissipation while its drain is below −0.25 V (the
//! diode conducts; the channel's own drop is a few tens of mV) is integrated
//! over each dead time: that is the energy pwmplan books on its dead-time
//! diode line, V_SD(I)·I·t_diode per edge.

use std::fmt::Write as _;

use super::harness::{
    R_DRV_SINK_OHM, R_DRV_SOURCE_OHM, Table, device, header, integrate, load_switch_model,
    run_ngspice,
};
use pwmplan::physics::dead_time_diode::LegEdges;
use pwmplan::physics::forward;
use pwmplan::physics::params::GateDrive;
use pwmplan::physics::recovery;
use pwmplan::physics::switching::{self, NodePartner};

/// One leg case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LegCase {
    pub id: &'static str,
    pub device: &'static str,
    pub v_bus_v: f64,
    pub i_a: f64,
    pub v_drive_v: f64,
    pub r_on_ohm: f64,
    pub r_off_ohm: f64,
    pub t_dead_s: f64,
}

#[allow(clippy::too_many_arguments)]
const fn lc(
    id: &'static str,
    device: &'static str,
    v_bus_v: f64,
    i_a: f64,
    v_drive_v: f64,
    r_on_ohm: f64,
    r_off_ohm: f64,
    t_dead_ns: f64,
) -> LegCase {
    LegCase {
        id,
        device,
        v_bus_v,
        i_a,
        v_drive_v,
        r_on_ohm,
        r_off_ohm,
        t_dead_s: t_dead_ns * 1e-9,
    }
}

/// The leg cases: every device, 1–30 A, 12–100 V, dead times of 50–200 ns
/// (each at or above pwmplan's dead-time need, as a plan writes them), 5–12 V
/// drive, fast and slow gates, light-load cases where the node swing is slow.
/// D09–D12 were added after the model's intervals were settled, as a check
/// it was not fitted to D01–D08.
pub const LEG_CASES: &[LegCase] = &[
    lc("D01", "hause-60", 36.0, 10.0, 10.0, 10.0, 4.7, 100.0),
    lc("D02", "brack-40", 24.0, 20.0, 10.0, 4.7, 2.2, 60.0),
    lc("D03", "rigg-100", 48.0, 5.0, 12.0, 22.0, 10.0, 80.0),
    lc("D04", "fell-30", 12.0, 15.0, 10.0, 2.2, 2.2, 80.0),
    lc("D05", "crag-150", 72.0, 3.0, 12.0, 10.0, 4.7, 150.0),
    lc("D06", "hause-60", 24.0, 2.0, 10.0, 4.7, 2.2, 200.0),
    lc("D07", "brack-40", 12.0, 30.0, 12.0, 2.0, 2.0, 60.0),
    lc("D08", "rigg-100", 60.0, 12.0, 10.0, 4.7, 2.2, 100.0),
    lc("D09", "fell-30", 24.0, 5.0, 5.0, 10.0, 4.7, 150.0),
    lc("D10", "crag-150", 100.0, 8.0, 12.0, 4.7, 2.2, 60.0),
    lc("D11", "hause-60", 48.0, 20.0, 12.0, 2.2, 2.2, 50.0),
    lc("D12", "brack-40", 24.0, 1.0, 10.0, 10.0, 4.7, 120.0),
];

/// Low side's gate-off command (the first dead time starts).
const T_FIRST_S: f64 = 200e-9;
/// High side's on-time.
const T_HIGH_S: f64 = 1e-6;
/// Drain voltage below which the low side's body diode conducts.
pub const DIODE_V: f64 = -0.25;

/// (first edge's low-side off, high-side on, high-side off, low-side on, end).
fn times_s(c: &LegCase) -> [f64; 5] {
    let a = T_FIRST_S;
    let b = a + c.t_dead_s;
    let d = b + T_HIGH_S;
    let e = d + c.t_dead_s;
    [a, b, d, e, e + 400e-9]
}

/// The leg netlist. Drivers are Thévenin sources blended over 1 ns, as the
/// double-pulse harness's; the high side's is floating on the node.
pub fn netlist_leg(c: &LegCase) -> Result<String, String> {
    let dev = device(c.device).ok_or("unknown device")?;
    let [a, b, d, e, end] = times_s(c);
    let r_on = R_DRV_SOURCE_OHM + c.r_on_ohm;
    let r_off = R_DRV_SINK_OHM + c.r_off_ohm;
    let pwl = |up: &[f64], down: &[f64], start: u8| {
        let mut s = format!("PWL(0 {start}");
        let mut edges: Vec<(f64, u8)> = up.iter().map(|&t| (t, 1)).collect();
        edges.extend(down.iter().map(|&t| (t, 0)));
        edges.sort_by(|x, y| x.0.total_cmp(&y.0));
        let mut level = start;
        for (t, to) in edges {
            let _ = write!(s, " {} {level} {} {to}", t - 0.5e-9, t + 0.5e-9);
            level = to;
        }
        s.push(')');
        s
    };
    let mut n = header(&format!("dead-time leg {}", c.id), &dev);
    let _ = write!(
        n,
        ".options reltol=1e-4 abstol=1e-6 vntol=1e-5 method=gear\n\
         VBUS bus 0 {v}\nMH bus gh sw {m}\nVSL sw dl 0\nML dl gl 0 {m}\nILOAD sw 0 DC {i}\n\
         VCL cl 0 {cl}\nVCH ch 0 {ch}\n\
         BDL 0 gl I = v(cl)*({vd}-v(gl))/{r_on} - (1-v(cl))*v(gl)/{r_off}\n\
         BDH sw gh I = v(ch)*({vd}-v(gh,sw))/{r_on} - (1-v(ch))*v(gh,sw)/{r_off}\n\
         .ic v(gl)={vd}\n.control\nset wr_singlescale\nset wr_vecnames\noption numdgt=9\n\
         tran 0.1n {end} 0 0.1n uic\nwrdata out.txt v(sw) i(vsl)\nquit\n.endc\n.end\n",
        v = c.v_bus_v,
        m = dev.stem,
        i = c.i_a,
        cl = pwl(&[e], &[a], 1),
        ch = pwl(&[b], &[d], 0),
        vd = c.v_drive_v,
    );
    Ok(n)
}

/// What ngspice shows in the two dead times.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct LegMeasured {
    /// Diode energy in the dead time before the hard turn-on (after the low
    /// side's soft turn-off).
    pub e_soft_off_j: f64,
    /// Diode energy in the dead time after the hard turn-off.
    pub e_hard_off_j: f64,
    /// Time the drain spends below `DIODE_V` in each.
    pub t_soft_off_s: f64,
    pub t_hard_off_s: f64,
}

/// Measure a leg waveform.
pub fn measure_leg(c: &LegCase, tab: &Table) -> Result<LegMeasured, String> {
    let t = tab.col("time")?;
    let v = tab.col("v(sw)")?;
    let i = tab.col("i(vsl)")?;
    let [a, _, d, _, end] = times_s(c);
    let on: Vec<bool> = v.iter().map(|&x| x < DIODE_V).collect();
    let p: Vec<f64> = (0..t.len())
        .map(|k| if on[k] { (v[k] * i[k]).max(0.0) } else { 0.0 })
        .collect();
    let ind: Vec<f64> = on.iter().map(|&b| if b { 1.0 } else { 0.0 }).collect();
    // Each window runs from its gate-off command to half-way to the next.
    let mid = 0.5 * (a + c.t_dead_s + d);
    Ok(LegMeasured {
        e_soft_off_j: integrate(t, &p, a, mid),
        e_hard_off_j: integrate(t, &p, d, end),
        t_soft_off_s: integrate(t, &ind, a, mid),
        t_hard_off_s: integrate(t, &ind, d, end),
    })
}

/// Simulate and measure a leg case.
pub fn simulate_leg(c: &LegCase) -> Result<LegMeasured, String> {
    measure_leg(c, &run_ngspice(&netlist_leg(c)?, c.id)?)
}

/// pwmplan's dead-time diode energies for a case: (soft edge, hard edge,
/// whole dead time at V_SD(I)), J.
pub fn predict_leg(root: &std::path::Path, c: &LegCase) -> Result<(f64, f64, f64), String> {
    let sw = load_switch_model(root, c.device)?;
    let drive = GateDrive {
        v_drive_v: c.v_drive_v,
        r_source_ohm: R_DRV_SOURCE_OHM,
        r_sink_ohm: R_DRV_SINK_OHM,
        r_ext_on_ohm: c.r_on_ohm,
        r_ext_off_ohm: c.r_off_ohm,
        prop_delay_s: 0.0,
        mismatch_s: 0.0,
        loop_inductance_h: 0.0,
        common_source_inductance_h: 0.0,
    };
    let tr = switching::transitions_at(
        &sw,
        &drive,
        c.v_bus_v,
        c.i_a,
        c.i_a,
        sw.r_ds_on_25_ohm,
        NodePartner::BridgeLeg,
    )
    .map_err(|e| format!("{}: {e:?}", c.id))?;
    let p = forward::forward_voltage_v(&sw, c.i_a) * c.i_a;
    let edges = LegEdges {
        switch: &sw,
        drive: &drive,
        transitions: &tr,
        tau_s: recovery::body_diode_transit_time_s(&sw, sw.q_rr_c),
    };
    Ok((
        p * edges.after_soft_turn_off_s(
            c.t_dead_s,
            switching::soft_release_s(&sw, &drive, c.i_a).map_err(|e| format!("{e:?}"))?,
        ),
        p * edges.after_hard_turn_off_s(c.t_dead_s),
        p * c.t_dead_s,
    ))
}

pub const LEG_HEADER: &str = "id,device,v_bus_v,i_a,v_drive_v,r_on_ohm,r_off_ohm,t_dead_s,\
e_soft_off_j,e_hard_off_j,t_soft_off_s,t_hard_off_s";

pub fn leg_row(c: &LegCase, m: &LegMeasured) -> String {
    format!(
        "{},{},{},{},{},{},{},{:e},{:.5e},{:.5e},{:.4e},{:.4e}",
        c.id,
        c.device,
        c.v_bus_v,
        c.i_a,
        c.v_drive_v,
        c.r_on_ohm,
        c.r_off_ohm,
        c.t_dead_s,
        m.e_soft_off_j,
        m.e_hard_off_j,
        m.t_soft_off_s,
        m.t_hard_off_s
    )
}

/// Rows of the committed table, matched to `LEG_CASES` by id (a case whose
/// inputs changed is an error: rerun the example).
pub fn read_leg(text: &str) -> Result<Vec<(LegCase, LegMeasured)>, String> {
    let mut out = Vec::new();
    for line in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.is_empty())
    {
        if line == LEG_HEADER {
            continue;
        }
        let f: Vec<&str> = line.split(',').collect();
        let c = LEG_CASES
            .iter()
            .find(|c| c.id == f[0])
            .ok_or_else(|| format!("unknown leg case {}", f[0]))?;
        if leg_row(c, &LegMeasured::default())
            .split(',')
            .take(8)
            .ne(f.iter().copied().take(8))
        {
            return Err(format!("{}: inputs changed; rerun the example", c.id));
        }
        let n = |k: usize| f[k].parse::<f64>().map_err(|e| format!("{}: {e}", c.id));
        out.push((
            *c,
            LegMeasured {
                e_soft_off_j: n(8)?,
                e_hard_off_j: n(9)?,
                t_soft_off_s: n(10)?,
                t_hard_off_s: n(11)?,
            },
        ));
    }
    Ok(out)
}

/// One case's comparison: (case, measured, predicted soft, predicted hard,
/// whole dead time).
pub type LegComparison = (LegCase, LegMeasured, f64, f64, f64);

/// Predictions for every committed row.
pub fn leg_comparisons(
    root: &std::path::Path,
    rows: &[(LegCase, LegMeasured)],
) -> Result<Vec<LegComparison>, String> {
    rows.iter()
        .map(|(c, m)| {
            let (s, h, w) = predict_leg(root, c)?;
            Ok((*c, *m, s, h, w))
        })
        .collect()
}

/// Relative errors of the per-edge prediction and of the whole dead time,
/// over both edges of every case: (per-edge, whole dead time).
pub fn leg_errors(cmp: &[LegComparison]) -> (Vec<f64>, Vec<f64>) {
    let mut edge = Vec::new();
    let mut whole = Vec::new();
    for (_, m, s, h, w) in cmp {
        edge.push(s / m.e_soft_off_j - 1.0);
        edge.push(h / m.e_hard_off_j - 1.0);
        whole.push(w / m.e_soft_off_j - 1.0);
        whole.push(w / m.e_hard_off_j - 1.0);
    }
    (edge, whole)
}

/// The dead-time section of `errors.md`.
pub fn leg_md(cmp: &[LegComparison]) -> String {
    let (edge, whole) = leg_errors(cmp);
    let worst = |v: &[f64]| v.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
    let mut s = format!(
        "\nDead-time body diode (synchronous leg, {} cases, two dead times each): the energy per dead time \
         within a median {:.1} % and at worst {:.1} % of ngspice; booking the whole dead time at V_SD(I) \
         instead: median {:.1} %, worst {:.1} %.\n\n",
        cmp.len(),
        100.0 * super::harness::median_abs(&edge),
        100.0 * worst(&edge),
        100.0 * super::harness::median_abs(&whole),
        100.0 * worst(&whole),
    );
    s.push_str(
        "| case | device | V | I A | drive V | R_on/R_off Ω | dead time ns | soft edge sim/pred nJ | hard edge sim/pred nJ | whole dead time nJ | diode share sim soft/hard |\n|---|---|---|---|---|---|---|---|---|---|---|\n",
    );
    for (c, m, p_s, p_h, w) in cmp {
        let _ = writeln!(
            s,
            "| {} | {} | {} | {} | {} | {}/{} | {:.0} | {:.1}/{:.1} | {:.1}/{:.1} | {:.1} | {:.0} %/{:.0} % |",
            c.id,
            c.device,
            c.v_bus_v,
            c.i_a,
            c.v_drive_v,
            c.r_on_ohm,
            c.r_off_ohm,
            1e9 * c.t_dead_s,
            1e9 * m.e_soft_off_j,
            1e9 * p_s,
            1e9 * m.e_hard_off_j,
            1e9 * p_h,
            1e9 * w,
            100.0 * m.t_soft_off_s / c.t_dead_s,
            100.0 * m.t_hard_off_s / c.t_dead_s,
        );
    }
    s
}
