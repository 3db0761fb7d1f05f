//! SPICE reference harness, shared by `examples/spice_reference.rs` (which
//! regenerates the committed tables) and `tests/spice_validation.rs` (which
//! compares pwmplan against them and reruns a few cases).
//!
//! Owns: the invented reference devices (ngspice VDMOS parameter sets), the
//! netlists of the datasheet-style extraction circuits, of the double-pulse
//! switching circuits and of the ideal-switch ripple circuits, the ngspice
//! batch runner, the waveform measurements (windows defined in
//! `tests/spice/README.md`), the pwmplan predictions for the same cases and the
//! CSV reading and writing. No real part, model or vendor is named or imitated.
#![allow(dead_code)]

use std::fmt::Write as _;
use std::path::PathBuf;
use std::process::Command;

use pwmplan::physics::deadtime::{DeadTimeInputs, dead_time_need_s};
use pwmplan::physics::params::{GateDrive, SwitchModel};
use pwmplan::physics::recovery;
use pwmplan::physics::ripple::{self, Drive, MotorLoad};
use pwmplan::physics::switching;

/// Folder of the committed reference material, relative to the crate root.
pub const SPICE_DIR: &str = "tests/spice";

/// Simulation and datasheet temperature (junction = ambient, no self-heating).
pub const T_SIM_C: f64 = 25.0;

// ------------------------------------------------------------------ devices

/// An invented reference MOSFET: its ngspice VDMOS card and the conditions of
/// its datasheet-style tests. Rating and thermal fields are invented values,
/// not extracted (the VDMOS card has no package).
#[derive(Debug, Clone)]
pub struct Device {
    /// File stem of the switch file (`tests/spice/switches/<stem>.yaml`).
    pub stem: &'static str,
    /// Display name (invented).
    pub name: &'static str,
    /// VDMOS model parameters (ngspice `.model <stem> VDMOS nchan <params>`).
    pub params: &'static str,
    /// Rated V_DSS (invented, below the model's BV).
    pub v_dss_v: f64,
    /// Test current of R_ds(on), g_fs, the gate-charge curve and the body diode.
    pub i_test_a: f64,
    /// V_DS of the capacitance table and of the gate-charge test.
    pub v_test_v: f64,
    /// Second gate voltage of the R_ds(on) table (4.5 V for a logic-level
    /// part, 6 V for a standard-threshold one, as datasheets state them).
    pub v_gs_second_v: f64,
    /// The switch file gets a V_SD curve (else the single V_SD at `i_test`).
    pub v_sd_curve: bool,
    /// Continuous drain current rating (invented).
    pub i_d_a: f64,
    /// Junction-to-case thermal resistance (invented).
    pub r_th_jc: f64,
    /// Junction-to-ambient thermal resistance (invented).
    pub r_th_ja: f64,
}

/// The five invented reference devices (30–150 V).
pub fn devices() -> Vec<Device> {
    vec![
        Device {
            stem: "brack-40",
            name: "Brack 40 V reference (invented, SPICE-extracted)",
            params: "Vto=2.2 Kp=120 Lambda=0.003 ksubthres=0.12 mtriode=1.2 \
                     Rd=1.1m Rs=0.35m Rg=1.1 Cgdmax=2.4n Cgdmin=60p a=0.5 Cgs=3.8n \
                     Cjo=2.2n Vj=0.75 M=0.5 Is=4p N=1.05 Rb=1.8m TT=5n BV=44 \
                     tcvth=0.004 MU=-1.5 texp0=1.6 texp1=0.3",
            v_dss_v: 40.0,
            i_test_a: 25.0,
            v_test_v: 20.0,
            v_gs_second_v: 4.5,
            v_sd_curve: false,
            i_d_a: 120.0,
            r_th_jc: 0.9,
            r_th_ja: 40.0,
        },
        Device {
            stem: "hause-60",
            name: "Hause 60 V reference (invented, SPICE-extracted)",
            params: "Vto=3.0 Kp=70 Lambda=0.002 ksubthres=0.12 mtriode=1.1 \
                     Rd=3.2m Rs=0.7m Rg=1.6 Cgdmax=1.5n Cgdmin=30p a=0.4 Cgs=2.2n \
                     Cjo=1.2n Vj=0.75 M=0.5 Is=3p N=1.05 Rb=3m TT=7n BV=66 \
                     tcvth=0.004 MU=-1.5 texp0=1.6 texp1=0.3",
            v_dss_v: 60.0,
            i_test_a: 20.0,
            v_test_v: 30.0,
            v_gs_second_v: 4.5,
            v_sd_curve: true,
            i_d_a: 70.0,
            r_th_jc: 1.2,
            r_th_ja: 45.0,
        },
        Device {
            stem: "rigg-100",
            name: "Rigg 100 V reference (invented, SPICE-extracted)",
            params: "Vto=3.3 Kp=35 Lambda=0.001 ksubthres=0.12 mtriode=1.0 \
                     Rd=9m Rs=1.2m Rg=2.0 Cgdmax=0.9n Cgdmin=12p a=0.3 Cgs=1.9n \
                     Cjo=0.7n Vj=0.8 M=0.5 Is=2p N=1.05 Rb=6m TT=12n BV=108 \
                     tcvth=0.004 MU=-1.5 texp0=1.6 texp1=0.3",
            v_dss_v: 100.0,
            i_test_a: 12.0,
            v_test_v: 50.0,
            v_gs_second_v: 4.5,
            v_sd_curve: false,
            i_d_a: 40.0,
            r_th_jc: 1.5,
            r_th_ja: 50.0,
        },
        Device {
            stem: "fell-30",
            name: "Fell 30 V reference (invented, SPICE-extracted)",
            params: "Vto=1.8 Kp=200 Lambda=0.004 ksubthres=0.12 mtriode=1.3 \
                     Rd=0.6m Rs=0.25m Rg=0.8 Cgdmax=3.2n Cgdmin=90p a=0.6 Cgs=5.2n \
                     Cjo=3.2n Vj=0.7 M=0.45 Is=6p N=1.05 Rb=1.2m TT=3n BV=33 \
                     tcvth=0.004 MU=-1.5 texp0=1.6 texp1=0.3",
            v_dss_v: 30.0,
            i_test_a: 30.0,
            v_test_v: 15.0,
            v_gs_second_v: 4.5,
            v_sd_curve: true,
            i_d_a: 150.0,
            r_th_jc: 0.8,
            r_th_ja: 38.0,
        },
        Device {
            stem: "crag-150",
            name: "Crag 150 V reference (invented, SPICE-extracted)",
            params: "Vto=3.5 Kp=22 Lambda=0.001 ksubthres=0.12 mtriode=1.0 \
                     Rd=22m Rs=2m Rg=2.4 Cgdmax=0.6n Cgdmin=8p a=0.25 Cgs=1.6n \
                     Cjo=0.45n Vj=0.85 M=0.55 Is=1p N=1.05 Rb=10m TT=25n BV=162 \
                     tcvth=0.004 MU=-1.5 texp0=1.6 texp1=0.3",
            v_dss_v: 150.0,
            i_test_a: 8.0,
            v_test_v: 75.0,
            v_gs_second_v: 6.0,
            v_sd_curve: true,
            i_d_a: 25.0,
            r_th_jc: 1.8,
            r_th_ja: 55.0,
        },
    ]
}

/// Find a device by its stem.
pub fn device(stem: &str) -> Option<Device> {
    devices().into_iter().find(|d| d.stem == stem)
}

fn model_card(dev: &Device) -> String {
    format!(".model {} VDMOS nchan {}\n", dev.stem, dev.params)
}

// ------------------------------------------------------------------ ngspice

/// True when an `ngspice` executable answers on the PATH.
pub fn ngspice_available() -> bool {
    Command::new("ngspice")
        .arg("--version")
        .output()
        .map(|o| o.status.success() || !o.stdout.is_empty())
        .unwrap_or(false)
}

/// Columns written by ngspice's `wrdata` (single scale, with names).
#[derive(Debug, Clone)]
pub struct Table {
    pub names: Vec<String>,
    pub cols: Vec<Vec<f64>>,
}

impl Table {
    /// Column by (case-insensitive) name.
    pub fn col(&self, name: &str) -> Result<&[f64], String> {
        self.names
            .iter()
            .position(|n| n.eq_ignore_ascii_case(name))
            .map(|k| self.cols[k].as_slice())
            .ok_or_else(|| format!("no column {name} in {:?}", self.names))
    }

    fn parse(text: &str) -> Result<Table, String> {
        let mut lines = text.lines().filter(|l| !l.trim().is_empty());
        let names: Vec<String> = lines
            .next()
            .ok_or("empty wrdata output")?
            .split_whitespace()
            .map(str::to_string)
            .collect();
        let mut cols = vec![Vec::new(); names.len()];
        for l in lines {
            let vals: Vec<f64> = l
                .split_whitespace()
                .map(|t| t.parse::<f64>().map_err(|e| format!("{t}: {e}")))
                .collect::<Result<_, _>>()?;
            if vals.len() != names.len() {
                return Err(format!(
                    "row with {} values, {} names",
                    vals.len(),
                    names.len()
                ));
            }
            for (c, v) in cols.iter_mut().zip(vals) {
                c.push(v);
            }
        }
        Ok(Table { names, cols })
    }
}

fn work_dir(tag: &str) -> Result<PathBuf, String> {
    let dir = std::env::temp_dir().join(format!("pwmplan-spice-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    Ok(dir)
}

/// Longest a single ngspice run may take before it is killed.
pub const NGSPICE_TIMEOUT_S: u64 = 120;

/// Run `netlist` in ngspice batch mode in a scratch folder (killed after
/// [`NGSPICE_TIMEOUT_S`]); the netlist's control block must `wrdata out.txt
/// ...`. Returns the table and ngspice's stdout (for `echo` values).
pub fn run_ngspice_with_stdout(netlist: &str, tag: &str) -> Result<(Table, String), String> {
    run_ngspice_within(netlist, tag, NGSPICE_TIMEOUT_S)
}

/// As [`run_ngspice_with_stdout`], with its own time limit in seconds (the
/// three-phase bridge runs take longer than the single-device circuits).
pub fn run_ngspice_within(
    netlist: &str,
    tag: &str,
    timeout_s: u64,
) -> Result<(Table, String), String> {
    let dir = work_dir(tag)?;
    std::fs::write(dir.join("case.cir"), netlist).map_err(|e| e.to_string())?;
    let result = run_in(&dir, tag, timeout_s);
    let _ = std::fs::remove_dir_all(&dir);
    result
}

fn run_in(dir: &std::path::Path, tag: &str, timeout_s: u64) -> Result<(Table, String), String> {
    let mut child = Command::new("ngspice")
        .arg("-b")
        .arg("-o")
        .arg("log.txt")
        .arg("case.cir")
        .current_dir(dir)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .map_err(|e| format!("ngspice not runnable: {e}"))?;
    let start = std::time::Instant::now();
    loop {
        match child.try_wait() {
            Ok(Some(_)) => break,
            Ok(None) if start.elapsed().as_secs() > timeout_s => {
                let _ = child.kill();
                let _ = child.wait();
                return Err(format!("ngspice timed out on {tag}"));
            }
            Ok(None) => std::thread::sleep(std::time::Duration::from_millis(10)),
            Err(e) => return Err(format!("ngspice wait failed: {e}")),
        }
    }
    let log = std::fs::read_to_string(dir.join("log.txt")).unwrap_or_default();
    if log.contains("aborted") || log.contains("Timestep too small") {
        return Err(format!("ngspice aborted on {tag}; log:\n{log}"));
    }
    let data = std::fs::read_to_string(dir.join("out.txt"))
        .map_err(|e| format!("ngspice wrote no data for {tag} ({e}); log:\n{log}"))?;
    Ok((Table::parse(&data)?, log))
}

/// As [`run_ngspice_with_stdout`], table only.
pub fn run_ngspice(netlist: &str, tag: &str) -> Result<Table, String> {
    run_ngspice_with_stdout(netlist, tag).map(|r| r.0)
}

const WR: &str = "set wr_singlescale\nset wr_vecnames\noption numdgt=9\n";

// ------------------------------------------------------------ numeric helpers

/// First index ≥ `from` where `y` crosses `level` in the given direction;
/// returns the linearly interpolated time.
pub fn crossing(t: &[f64], y: &[f64], level: f64, rising: bool, from: usize) -> Option<f64> {
    for k in from.max(1)..t.len() {
        let (a, b) = (y[k - 1], y[k]);
        let hit = if rising {
            a < level && b >= level
        } else {
            a > level && b <= level
        };
        if hit {
            let f = if b != a { (level - a) / (b - a) } else { 0.0 };
            return Some(t[k - 1] + f * (t[k] - t[k - 1]));
        }
    }
    None
}

/// Index of the first sample at or after time `t0`.
pub fn index_at(t: &[f64], t0: f64) -> usize {
    t.iter().position(|&x| x >= t0).unwrap_or(t.len())
}

/// Linear interpolation of `y` at `t0`.
pub fn value_at(t: &[f64], y: &[f64], t0: f64) -> f64 {
    let k = index_at(t, t0);
    if k == 0 {
        return y[0];
    }
    if k >= t.len() {
        return y[y.len() - 1];
    }
    let f = (t0 - t[k - 1]) / (t[k] - t[k - 1]);
    y[k - 1] + f * (y[k] - y[k - 1])
}

/// Trapezoidal ∫ f dt over [ta, tb] (end points interpolated).
pub fn integrate(t: &[f64], f: &[f64], ta: f64, tb: f64) -> f64 {
    let mut pts = vec![(ta, value_at(t, f, ta))];
    for k in 0..t.len() {
        if t[k] > ta && t[k] < tb {
            pts.push((t[k], f[k]));
        }
    }
    pts.push((tb, value_at(t, f, tb)));
    pts.windows(2)
        .map(|w| 0.5 * (w[0].1 + w[1].1) * (w[1].0 - w[0].0))
        .sum()
}

// --------------------------------------------------------------- extraction

/// Datasheet figures of one device, as extracted by simulation.
#[derive(Debug, Clone, Default)]
pub struct Extracted {
    pub r_ds_on_10v_ohm: f64,
    pub r_ds_on_second_ohm: f64,
    /// Normalised R_ds(on) at 10 V against junction temperature.
    pub r_ds_on_vs_t: Vec<(f64, f64)>,
    pub v_th_v: f64,
    pub g_fs_s: f64,
    pub q_g_10v_c: f64,
    pub q_gs_c: f64,
    pub q_gd_c: f64,
    pub q_g_th_c: f64,
    pub v_plateau_v: f64,
    pub c_iss_f: f64,
    pub c_oss_f: f64,
    pub c_rss_f: f64,
    pub c_rss_curve: Vec<(f64, f64)>,
    pub q_oss_c: f64,
    pub e_oss_j: f64,
    pub r_g_ohm: f64,
    pub v_sd_v: f64,
    /// (I_S, V_SD) at `V_SD_CURVE_FRACTIONS` of i_test, 25 °C.
    pub v_sd_curve: Vec<(f64, f64)>,
    pub q_rr_c: f64,
    pub t_rr_s: f64,
}

/// A netlist's title, the device's model card and the simulation temperature.
pub fn header(title: &str, dev: &Device) -> String {
    format!(
        "* {title} -- {} (generated by examples/spice_reference.rs)\n{}.options temp={T_SIM_C} tnom={T_SIM_C}\n",
        dev.name,
        model_card(dev)
    )
}

/// R_ds(on) at V_GS = 10 V and the second gate voltage, I_D = i_test, at `t_c`: two forced-current
/// operating points (datasheet method: pulsed, so no self-heating). Also the
/// body-diode V_SD at I_S = i_test, V_GS = 0 (used at 25 °C only).
pub fn netlist_rdson(dev: &Device, t_c: f64) -> String {
    let mut n = header("R_ds(on)", dev);
    n = n.replace(
        &format!(".options temp={T_SIM_C}"),
        &format!(".options temp={t_c}"),
    );
    let _ = write!(
        n,
        "VG10 g10 0 10\nI10 0 d10 DC {i}\nM10 d10 g10 0 {m}\n\
         VG45 g45 0 {v2}\nI45 0 d45 DC {i}\nM45 d45 g45 0 {m}\n\
         ISD 0 sd DC {i}\nMSD 0 0 sd {m}\n\
         .control\n{WR}op\nwrdata out.txt v(d10) v(d45) v(sd)\nquit\n.endc\n.end\n",
        i = dev.i_test_a,
        m = dev.stem,
        v2 = dev.v_gs_second_v
    );
    n
}

/// Source currents of the extracted V_SD curve, as fractions of i_test.
pub const V_SD_CURVE_FRACTIONS: [f64; 4] = [0.05, 0.2, 1.0, 3.0];

/// Body-diode V_SD at each of `currents_a`, 25 °C, V_GS = 0 (the datasheet
/// method: pulsed, no self-heating), one forced-current operating point each.
pub fn netlist_forward(dev: &Device, currents_a: &[f64]) -> String {
    let mut n = header("V_SD(I)", dev);
    let mut vecs = Vec::new();
    for (k, i) in currents_a.iter().enumerate() {
        let _ = writeln!(n, "ISD{k} 0 sd{k} DC {i}\nMSD{k} 0 0 sd{k} {}", dev.stem);
        vecs.push(format!("v(sd{k})"));
    }
    let _ = write!(
        n,
        ".control\n{WR}op\nwrdata out.txt {}\nquit\n.endc\n.end\n",
        vecs.join(" ")
    );
    n
}

/// V_SD at each of `currents_a` by ngspice.
pub fn simulate_forward(dev: &Device, currents_a: &[f64]) -> Result<Vec<f64>, String> {
    let tab = run_ngspice(
        &netlist_forward(dev, currents_a),
        &format!("{}-vsd", dev.stem),
    )?;
    (0..currents_a.len())
        .map(|k| Ok(tab.col(&format!("v(sd{k})"))?[0].abs()))
        .collect()
}

/// R_ds(on) at one gate voltage `v_gs_v`, I_D = i_test, 25 °C (the
/// datasheet method of `netlist_rdson`): for checking the gate-drive law
/// between and beyond the two datasheet points.
pub fn netlist_rdson_at(dev: &Device, v_gs_v: f64) -> String {
    let mut n = header("R_ds(on) at one V_GS", dev);
    let _ = write!(
        n,
        "VG g 0 {v_gs_v}\nI1 0 d DC {i}\nM1 d g 0 {m}\n\
         .control\n{WR}op\nwrdata out.txt v(d)\nquit\n.endc\n.end\n",
        i = dev.i_test_a,
        m = dev.stem
    );
    n
}

/// V_th: gate tied to drain, I_D = 250 µA forced (datasheet definition).
/// g_fs: V_DS = 10 V, V_GS swept; g_fs = dI_D/dV_GS at I_D = i_test.
pub fn netlist_vth_gfs(dev: &Device) -> String {
    let mut n = header("V_th and g_fs", dev);
    let _ = write!(
        n,
        "ITH 0 dt DC 250u\nMTH dt dt 0 {m}\n\
         VDS dg 0 10\nVGS gg 0 0\nMG dg gg 0 {m}\n\
         .control\n{WR}op\nlet vth = v(dt)\n\
         dc VGS 0 8 0.002\nlet idd = -i(vds)\nwrdata out.txt idd\n\
         echo vth=$&op1.vth\nquit\n.endc\n.end\n",
        m = dev.stem
    );
    n
}

/// Gate charge: constant gate current 2 mA, constant drain current i_test
/// clamped at V_DD = v_test by a diode (the datasheet gate-charge circuit).
pub fn netlist_gate_charge(dev: &Device) -> String {
    let mut n = header("gate charge", dev);
    let _ = write!(
        n,
        ".model dclamp D(IS=1e-12 N=1 RS=1m)\n\
         VDD vdd 0 {v}\nID vdd d DC {i}\nDCL d vdd dclamp\n\
         IG 0 g PWL(0 0 10n 2m)\nRGL g 0 1G\nM1 d g 0 {m}\n\
         .control\n{WR}tran 5n 60u 0 5n\nwrdata out.txt v(g) v(d)\nquit\n.endc\n.end\n",
        v = dev.v_test_v,
        i = dev.i_test_a,
        m = dev.stem
    );
    n
}

/// Bias points of the capacitance curves.
pub fn cap_bias_points(dev: &Device) -> Vec<f64> {
    let mut v = vec![0.1, 0.2, 0.5, 1.0, 2.0, 3.0, 5.0, 8.0, 12.0, 16.0, 20.0];
    for x in [25.0, 30.0, 40.0, 50.0, 60.0, 80.0] {
        if x <= 0.8 * dev.v_dss_v {
            v.push(x);
        }
    }
    if !v.iter().any(|&x| (x - dev.v_test_v).abs() < 1e-9) {
        v.push(dev.v_test_v);
        v.sort_by(f64::total_cmp);
    }
    v
}

/// Dense grid 0..v_test for the Q_oss and E_oss integrals.
pub fn oss_grid(dev: &Device) -> Vec<f64> {
    (0..=200).map(|k| dev.v_test_v * k as f64 / 200.0).collect()
}

/// Small-signal capacitances at 1 MHz, V_GS = 0 (datasheet method): one device
/// copy per bias point. Drain driven (gate and source AC-grounded): the drain
/// current gives C_oss, the gate current C_rss. Gate driven (drain AC-grounded
/// at its bias): C_iss. Gate driven at V_DS = 0: R_g = Re(Z_gate).
pub fn netlist_caps(dev: &Device) -> (String, Vec<f64>, Vec<f64>) {
    let curve = cap_bias_points(dev);
    let grid = oss_grid(dev);
    let mut n = header("capacitances", dev);
    let mut lets = String::new();
    let mut vecs = Vec::new();
    let w = 2.0 * std::f64::consts::PI * 1e6;
    let all: Vec<f64> = curve.iter().chain(grid.iter()).copied().collect();
    for (k, v) in all.iter().enumerate() {
        let _ = writeln!(
            n,
            "VD{k} d{k} 0 DC {v} AC 1\nVG{k} g{k} 0 DC 0\nM{k} d{k} g{k} 0 {m}\n\
             VI{k} i{k} 0 DC 0 AC 1\nVDI{k} di{k} 0 DC {v}\nMI{k} di{k} i{k} 0 {m}",
            m = dev.stem
        );
        let _ = writeln!(
            lets,
            "let coss{k} = abs(imag(i(vd{k})))/{w}\nlet crss{k} = abs(imag(i(vg{k})))/{w}\n\
             let ciss{k} = abs(imag(i(vi{k})))/{w}"
        );
        vecs.push(format!("coss{k} crss{k} ciss{k}"));
    }
    let _ = writeln!(
        n,
        "VR rg 0 DC 0 AC 1\nMR rd rg 0 {m}\nVRD rd 0 DC 0",
        m = dev.stem
    );
    let _ = writeln!(lets, "let zr = -1/i(vr)\nlet rgate = real(zr)");
    let _ = write!(
        n,
        ".control\n{WR}ac lin 1 1meg 1meg\n{lets}wrdata out.txt {} rgate\nquit\n.endc\n.end\n",
        vecs.join(" ")
    );
    (n, curve, grid)
}

/// di/dt of the body-diode recovery test, A/s (the value datasheets most
/// often state; own choice of test condition).
pub const Q_RR_TEST_DI_DT: f64 = 100e6;

/// Body diode: Q_rr at I_F = i_test, di/dt = 100 A/µs, V_R = v_test, in the
/// switch-commutated circuit of a datasheet test (the commutating switch's
/// current ramps at di/dt; the diode's reverse current, its output-capacitance
/// charge included, ends when the node has swung to V_R). A current source
/// forward-biases the diode of the upper device (gate tied to source); an
/// ideal square-law switch to ground, whose gate follows the ramp
/// V_T + sqrt(2·(di/dt)·t/K_P), takes the current over.
pub fn netlist_body_diode(dev: &Device) -> String {
    let mut n = header("body diode", dev);
    let i = dev.i_test_a;
    let vr = dev.v_test_v;
    let a = Q_RR_TEST_DI_DT;
    let t_ramp = i / a;
    let _ = write!(
        n,
        "* Q_rr, switch-commutated\n.model csw NMOS(LEVEL=1 VTO=1 KP=100)\n\
         VR bus 0 {vr}\nVSD bus dd 0\nMQ dd x x {m}\nIL bus x DC {i}\n\
         M2 x g2 0 0 csw\n\
         BG g2 0 V=1+sqrt(2*{a}*max(time-50n,0)/100+1e-6)\n\
         .control\n{WR}tran 0.1n {tend} 0 0.1n\nwrdata out.txt i(vsd)\nquit\n.endc\n.end\n",
        m = dev.stem,
        tend = 50e-9 + 3.0 * t_ramp + 300e-9
    );
    n
}

fn echo_value(stdout: &str, key: &str) -> Option<f64> {
    stdout.lines().find_map(|l| {
        l.trim()
            .strip_prefix(&format!("{key}="))
            .and_then(|v| v.trim().parse().ok())
    })
}

/// All datasheet extractions of one device.
pub fn extract(dev: &Device) -> Result<Extracted, String> {
    let mut x = Extracted::default();
    // R_ds(on) at 25 °C and its temperature curve.
    let mut r25 = 0.0;
    for t_c in [-40.0, 25.0, 75.0, 125.0, 175.0] {
        let tab = run_ngspice(&netlist_rdson(dev, t_c), &format!("{}-rdson", dev.stem))?;
        let r10 = tab.col("v(d10)")?[0] / dev.i_test_a;
        if t_c == 25.0 {
            r25 = r10;
            x.r_ds_on_10v_ohm = r10;
            x.r_ds_on_second_ohm = tab.col("v(d45)")?[0] / dev.i_test_a;
            x.v_sd_v = tab.col("v(sd)")?[0].abs();
        }
        x.r_ds_on_vs_t.push((t_c, r10));
    }
    for p in &mut x.r_ds_on_vs_t {
        p.1 /= r25;
    }
    let currents: Vec<f64> = V_SD_CURVE_FRACTIONS
        .iter()
        .map(|k| k * dev.i_test_a)
        .collect();
    let volts = simulate_forward(dev, &currents)?;
    x.v_sd_curve = currents.into_iter().zip(volts).collect();
    // V_th and g_fs.
    let (tab, stdout) = run_ngspice_with_stdout(&netlist_vth_gfs(dev), "vth")?;
    x.v_th_v = echo_value(&stdout, "vth").ok_or("no V_th echoed")?;
    let vgs = tab.col(&tab.names[0].clone())?.to_vec();
    let id = tab.col("idd")?;
    let v_at = crossing(&vgs, id, dev.i_test_a, true, 1).ok_or("I_D never reaches i_test")?;
    let (a, b) = (v_at - 0.02, v_at + 0.02);
    x.g_fs_s = (value_at(&vgs, id, b) - value_at(&vgs, id, a)) / (b - a);
    // Gate charge.
    let tab = run_ngspice(&netlist_gate_charge(dev), "qg")?;
    let t = tab.col("time")?;
    let vg = tab.col("v(g)")?;
    let vd = tab.col("v(d)")?;
    // Gate current ramps 0 → 2 mA over the first 10 ns: Q(t) = 2 mA·(t − 5 ns).
    let i_g = 2e-3;
    let q_at = |t: f64| i_g * (t - 5e-9);
    let v0 = vd[0];
    let t_start = crossing(t, vd, 0.99 * v0, false, 1).ok_or("V_DS never falls")?;
    let t_mid = crossing(t, vd, 0.5 * dev.v_test_v, false, 1).ok_or("no V_DS midpoint")?;
    let t_end = crossing(t, vd, 0.02 * dev.v_test_v, false, 1).ok_or("V_DS never low")?;
    let t_th = crossing(t, vg, x.v_th_v, true, 1).ok_or("V_GS never at V_th")?;
    let t_10 = crossing(t, vg, 10.0, true, 1).ok_or("V_GS never at 10 V")?;
    x.q_gs_c = q_at(t_start);
    x.q_gd_c = q_at(t_end) - q_at(t_start);
    x.q_g_th_c = q_at(t_th);
    x.q_g_10v_c = q_at(t_10);
    x.v_plateau_v = value_at(t, vg, t_mid);
    // Capacitances, Q_oss, E_oss, R_g.
    let (net, curve, grid) = netlist_caps(dev);
    let tab = run_ngspice(&net, "caps")?;
    let get = |name: String| -> Result<f64, String> { Ok(tab.col(&name)?[0]) };
    for (k, &v) in curve.iter().enumerate() {
        let crss = get(format!("crss{k}"))?;
        x.c_rss_curve.push((v, crss));
        if (v - dev.v_test_v).abs() < 1e-9 {
            x.c_rss_f = crss;
            x.c_oss_f = get(format!("coss{k}"))?;
            x.c_iss_f = get(format!("ciss{k}"))?;
        }
    }
    let off = curve.len();
    let coss: Vec<f64> = (0..grid.len())
        .map(|k| get(format!("coss{}", off + k)))
        .collect::<Result<_, _>>()?;
    let v_c: Vec<f64> = grid.iter().zip(&coss).map(|(v, c)| v * c).collect();
    x.q_oss_c = integrate(&grid, &coss, 0.0, dev.v_test_v);
    x.e_oss_j = integrate(&grid, &v_c, 0.0, dev.v_test_v);
    x.r_g_ohm = get("rgate".into())?;
    // Body diode.
    let tab = run_ngspice(&netlist_body_diode(dev), "diode")?;
    let t = tab.col("time")?;
    let i = tab.col("i(vsd)")?;
    // i(vsd) = current from the bus into the drain: −I_F while the diode
    // conducts, positive while it recovers.
    let i_f = dev.i_test_a;
    let t_last_fw = t
        .iter()
        .zip(i)
        .filter(|(_, y)| **y < -0.5 * i_f)
        .map(|(t, _)| *t)
        .fold(0.0, f64::max);
    let k0 = index_at(t, t_last_fw);
    let t0 = crossing(t, i, 0.0, true, k0).ok_or("diode current never reverses")?;
    let k1 = index_at(t, t0);
    let (k_pk, i_rrm) =
        i[k1..].iter().enumerate().fold(
            (k1, 0.0),
            |acc, (k, &y)| if y > acc.1 { (k1 + k, y) } else { acc },
        );
    let t_end = crossing(t, i, 0.1 * i_rrm, false, k_pk).ok_or("recovery never ends")?;
    let pos: Vec<f64> = i.iter().map(|y| y.max(0.0)).collect();
    x.q_rr_c = integrate(t, &pos, t0, t_end);
    x.t_rr_s = t_end - t0;
    Ok(x)
}

fn si(v: f64, unit: &str) -> String {
    let (scale, prefix) = if unit == "°C" || unit == "K/W" || unit == "S" {
        (1.0, "")
    } else {
        let a = v.abs();
        if a >= 1.0 || a == 0.0 {
            (1.0, "")
        } else if a >= 1e-3 {
            (1e3, "m")
        } else if a >= 1e-6 {
            (1e6, "u")
        } else if a >= 1e-9 {
            (1e9, "n")
        } else {
            (1e12, "p")
        }
    };
    format!("\"{:.4} {prefix}{unit}\"", v * scale).replace(".0000 ", " ")
}

/// The pwmplan switch file of an extracted device.
pub fn switch_yaml(dev: &Device, x: &Extracted) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# pwmplan switch file extracted by simulation from an invented ngspice VDMOS\n\
         # parameter set ({stem} in tests/spice/harness.rs). Regenerate with\n\
         # `cargo run --release --example spice_reference`; do not edit by hand.\n\
         # Extracted at 25 °C: R_ds(on) at I_D = {i} A; V_th at 250 uA (V_GS = V_DS);\n\
         # g_fs at I_D = {i} A, V_DS = 10 V; gate charge at I_D = {i} A, V_DD = {v} V,\n\
         # 2 mA gate current; capacitances at 1 MHz, V_GS = 0; Q_oss, E_oss by\n\
         # integrating C_oss from 0 to {v} V; R_g = Re(Z_gate) at 1 MHz; V_SD at\n\
         # I_S = {i} A; Q_rr at I_F = {i} A, 100 A/us, V_R = {v} V.\n\
         # Invented, not extracted: i_d, r_th_jc, r_th_ja, v_gs_max, t_j_max, the max\n\
         # limits (typ x 1.3) and the V_th spread (typ -/+ 0.8 V).",
        stem = dev.stem,
        i = dev.i_test_a,
        v = dev.v_test_v
    );
    let _ = writeln!(s, "switch:\n  name: \"{}\"", dev.name);
    let _ = writeln!(s, "  v_dss: \"{} V\"", dev.v_dss_v);
    let _ = writeln!(s, "  i_d: \"{} A\"", dev.i_d_a);
    let _ = writeln!(
        s,
        "  r_ds_on: {{ typ: {}, max: {}, at_v_gs: \"10 V\", second_point: {{ typ: {}, at_v_gs: \"{} V\" }} }}",
        si(x.r_ds_on_10v_ohm, "ohm"),
        si(1.3 * x.r_ds_on_10v_ohm, "ohm"),
        si(x.r_ds_on_second_ohm, "ohm"),
        dev.v_gs_second_v
    );
    let pts: Vec<String> = x
        .r_ds_on_vs_t
        .iter()
        .map(|(t, k)| format!("[\"{t} °C\", {k:.4}]"))
        .collect();
    let _ = writeln!(
        s,
        "  r_ds_on_vs_temperature:\n    points: [{}]",
        pts.join(", ")
    );
    let _ = writeln!(
        s,
        "  v_th: {{ min: {}, typ: {}, max: {} }}",
        si((x.v_th_v - 0.8).max(0.5), "V"),
        si(x.v_th_v, "V"),
        si(x.v_th_v + 0.8, "V")
    );
    let _ = writeln!(s, "  g_fs: {}", si(x.g_fs_s, "S"));
    let _ = writeln!(s, "  v_plateau: {}", si(x.v_plateau_v, "V"));
    let _ = writeln!(
        s,
        "  q_g: {{ typ: {}, max: {}, at_v_gs: \"10 V\", at_i_d: \"{} A\" }}",
        si(x.q_g_10v_c, "C"),
        si(1.3 * x.q_g_10v_c, "C"),
        dev.i_test_a
    );
    let _ = writeln!(s, "  q_gs: {}", si(x.q_gs_c, "C"));
    let _ = writeln!(
        s,
        "  q_gd: {{ typ: {}, max: {} }}",
        si(x.q_gd_c, "C"),
        si(1.3 * x.q_gd_c, "C")
    );
    let _ = writeln!(s, "  q_g_th: {}", si(x.q_g_th_c, "C"));
    let curve: Vec<String> = x
        .c_rss_curve
        .iter()
        .map(|(v, c)| format!("[\"{v} V\", {}]", si(*c, "F")))
        .collect();
    let _ = writeln!(
        s,
        "  capacitance:\n    at_v_ds: \"{} V\"\n    c_iss: {}\n    c_oss: {}\n    c_rss: {}\n    c_rss_curve: [{}]",
        dev.v_test_v,
        si(x.c_iss_f, "F"),
        si(x.c_oss_f, "F"),
        si(x.c_rss_f, "F"),
        curve.join(", ")
    );
    // A switch file gives q_oss or e_oss, not both; e_oss is the one the
    // loss model prefers (q_oss stays in the measured record).
    let _ = writeln!(
        s,
        "  e_oss: {{ value: {}, at_v_ds: \"{} V\" }}",
        si(x.e_oss_j, "J"),
        dev.v_test_v
    );
    let _ = writeln!(
        s,
        "  r_g_int: {{ typ: {}, max: {} }}",
        si(x.r_g_ohm, "ohm"),
        si(1.5 * x.r_g_ohm, "ohm")
    );
    let v_sd_curve = if dev.v_sd_curve {
        let pts: Vec<String> = x
            .v_sd_curve
            .iter()
            .map(|(i, v)| format!("[{}, {}]", si(*i, "A"), si(*v, "V")))
            .collect();
        format!("\n    v_sd_curve: [{}]", pts.join(", "))
    } else {
        String::new()
    };
    let _ = writeln!(
        s,
        "  body_diode:\n    v_sd: {}\n    v_sd_at: \"{} A\"{v_sd_curve}\n    q_rr: {{ typ: {}, max: {} }}\n    t_rr: {}\n    q_rr_test: {{ i_f: \"{} A\", di_dt: \"{} A/µs\", v_r: \"{} V\" }}",
        si(x.v_sd_v, "V"),
        dev.i_test_a,
        si(x.q_rr_c, "C"),
        si(1.3 * x.q_rr_c, "C"),
        si(x.t_rr_s, "s"),
        dev.i_test_a,
        Q_RR_TEST_DI_DT * 1e-6,
        dev.v_test_v
    );
    let _ = writeln!(s, "  v_gs_max: \"20 V\"\n  t_j_max: \"175 °C\"");
    let _ = writeln!(
        s,
        "  r_th_jc: \"{} K/W\"\n  r_th_ja: \"{} K/W\"",
        dev.r_th_jc, dev.r_th_ja
    );
    s
}

// ---------------------------------------------------------------- switching

/// Driver output resistance in the turn-on path (in series with the case's
/// external resistor), ohms. Invented driver.
pub const R_DRV_SOURCE_OHM: f64 = 1.0;
/// Driver output resistance in the turn-off path, ohms.
pub const R_DRV_SINK_OHM: f64 = 0.5;
/// Length of the first (current-building) pulse of the double pulse.
pub const T_FIRST_PULSE_S: f64 = 10e-6;
/// Off time between the pulses and length of the second pulse.
pub const T_GAP_S: f64 = 4e-6;
/// Instant of the first rising command edge.
pub const T_START_S: f64 = 50e-9;

/// Double-pulse test circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Circuit {
    /// Low-side DUT, inductor to the bus, fast freewheel diode across it.
    LowSide,
    /// Low-side DUT, inductor to the bus, the upper device (same part, gate
    /// held off through the turn-off resistance) freewheels in its body diode.
    HalfBridge,
}

impl Circuit {
    pub fn name(self) -> &'static str {
        match self {
            Circuit::LowSide => "low-side",
            Circuit::HalfBridge => "half-bridge",
        }
    }

    pub fn parse(s: &str) -> Option<Circuit> {
        match s {
            "low-side" => Some(Circuit::LowSide),
            "half-bridge" => Some(Circuit::HalfBridge),
            _ => None,
        }
    }
}

/// One double-pulse case.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SwitchCase {
    pub id: &'static str,
    pub device: &'static str,
    pub circuit: Circuit,
    pub v_bus_v: f64,
    /// Nominal switched current (the load current built by the first pulse).
    pub i_a: f64,
    pub v_drive_v: f64,
    /// External gate resistor, turn-on path.
    pub r_on_ohm: f64,
    /// External gate resistor, turn-off path.
    pub r_off_ohm: f64,
    /// Commutation-loop inductance between the bus source and the leg, H
    /// (0: none); the loop's whole inductance is this plus `l_source_h`.
    pub l_loop_h: f64,
    /// Common-source inductance, H (0: none): between the measured switch's
    /// source and the power ground, where the gate driver returns, so it is
    /// in the gate loop and in the commutation loop.
    pub l_source_h: f64,
}

impl SwitchCase {
    /// The commutation loop's whole inductance: the bus side and the
    /// common-source part (what a board's `loop_inductance` states).
    pub fn loop_total_h(&self) -> f64 {
        self.l_loop_h + self.l_source_h
    }
}

#[allow(clippy::too_many_arguments)] // a table row constructor
const fn sc(
    id: &'static str,
    device: &'static str,
    circuit: Circuit,
    v_bus_v: f64,
    i_a: f64,
    v_drive_v: f64,
    r_on_ohm: f64,
    r_off_ohm: f64,
) -> SwitchCase {
    SwitchCase {
        id,
        device,
        circuit,
        v_bus_v,
        i_a,
        v_drive_v,
        r_on_ohm,
        r_off_ohm,
        l_loop_h: 0.0,
        l_source_h: 0.0,
    }
}

/// Series resistance of the commutation loop where one is given (bus
/// capacitor ESR and traces; own choice, typical of a power board): without
/// it the loop rings on for microseconds after each edge and the next edge
/// starts from a ringing current, which no board shows.
pub const LOOP_RESISTANCE_OHM: f64 = 0.05;

/// A case with a commutation-loop inductance of `l_loop_nh` nH.
const fn with_loop(case: SwitchCase, l_loop_nh: f64) -> SwitchCase {
    SwitchCase {
        l_loop_h: l_loop_nh * 1e-9,
        ..case
    }
}

use Circuit::{HalfBridge as HB, LowSide as LS};

/// A case with a common-source inductance of `l_source_nh` nH.
const fn with_source(case: SwitchCase, l_source_nh: f64) -> SwitchCase {
    SwitchCase {
        l_source_h: l_source_nh * 1e-9,
        ..case
    }
}

/// The switching reference cases (12–100 V, 1–30 A, 2–47 Ω, 5 V and 10–12 V;
/// light-load cases where the output capacitance dominates: S17, S21, S25–S27).
pub const SWITCH_CASES: &[SwitchCase] = &[
    sc("S01", "brack-40", LS, 12.0, 10.0, 10.0, 4.7, 2.2),
    sc("S02", "brack-40", LS, 24.0, 30.0, 10.0, 2.0, 2.0),
    sc("S03", "brack-40", LS, 24.0, 5.0, 5.0, 10.0, 4.7),
    sc("S04", "brack-40", HB, 24.0, 20.0, 12.0, 10.0, 4.7),
    sc("S05", "brack-40", HB, 12.0, 2.0, 5.0, 47.0, 22.0),
    sc("S06", "brack-40", LS, 30.0, 15.0, 10.0, 22.0, 10.0),
    sc("S07", "hause-60", LS, 48.0, 10.0, 10.0, 10.0, 4.7),
    sc("S08", "hause-60", LS, 24.0, 20.0, 12.0, 4.7, 2.2),
    sc("S09", "hause-60", HB, 48.0, 5.0, 10.0, 47.0, 22.0),
    sc("S10", "hause-60", HB, 36.0, 15.0, 10.0, 2.2, 2.2),
    sc("S11", "hause-60", LS, 12.0, 8.0, 5.0, 22.0, 10.0),
    sc("S12", "hause-60", HB, 24.0, 30.0, 12.0, 10.0, 10.0),
    sc("S13", "rigg-100", LS, 48.0, 10.0, 10.0, 10.0, 4.7),
    sc("S14", "rigg-100", HB, 48.0, 20.0, 12.0, 4.7, 2.2),
    sc("S15", "rigg-100", LS, 36.0, 3.0, 10.0, 47.0, 47.0),
    sc("S16", "rigg-100", HB, 24.0, 8.0, 10.0, 22.0, 10.0),
    sc("S17", "rigg-100", LS, 48.0, 2.0, 12.0, 2.0, 2.0),
    sc("S18", "fell-30", LS, 12.0, 25.0, 10.0, 2.2, 2.2),
    sc("S19", "fell-30", HB, 24.0, 15.0, 5.0, 10.0, 4.7),
    sc("S20", "fell-30", HB, 12.0, 30.0, 12.0, 6.8, 2.2),
    sc("S21", "fell-30", LS, 24.0, 1.0, 10.0, 4.7, 4.7),
    sc("S22", "crag-150", LS, 100.0, 5.0, 12.0, 10.0, 4.7),
    sc("S23", "crag-150", HB, 96.0, 8.0, 12.0, 4.7, 2.2),
    sc("S24", "crag-150", HB, 72.0, 3.0, 10.0, 22.0, 10.0),
    sc("S25", "crag-150", LS, 60.0, 1.0, 10.0, 47.0, 22.0),
    sc("S26", "crag-150", HB, 80.0, 1.0, 10.0, 22.0, 10.0),
    sc("S27", "fell-30", HB, 24.0, 2.0, 10.0, 4.7, 2.2),
    with_loop(sc("S28", "hause-60", LS, 24.0, 10.0, 10.0, 10.0, 4.7), 5.0),
    with_loop(sc("S29", "hause-60", HB, 24.0, 15.0, 10.0, 2.2, 2.2), 6.0),
    with_loop(sc("S30", "brack-40", LS, 20.0, 25.0, 10.0, 2.0, 2.0), 2.0),
    with_loop(sc("S31", "rigg-100", HB, 36.0, 20.0, 12.0, 4.7, 2.2), 6.0),
    with_loop(sc("S32", "crag-150", LS, 100.0, 5.0, 12.0, 10.0, 4.7), 10.0),
    with_loop(sc("S33", "fell-30", HB, 12.0, 25.0, 10.0, 4.7, 2.2), 3.0),
    // Common-source inductance, alone and with a loop on the bus side
    // (added before the model took it in).
    with_source(sc("S34", "hause-60", LS, 24.0, 10.0, 10.0, 10.0, 4.7), 2.0),
    with_source(
        with_loop(sc("S35", "brack-40", HB, 24.0, 20.0, 12.0, 4.7, 2.2), 3.0),
        1.5,
    ),
    with_source(
        with_loop(sc("S36", "rigg-100", LS, 48.0, 10.0, 10.0, 10.0, 4.7), 4.0),
        3.0,
    ),
    with_source(sc("S37", "fell-30", HB, 12.0, 25.0, 10.0, 2.2, 2.2), 1.0),
    with_source(
        with_loop(sc("S38", "crag-150", LS, 96.0, 5.0, 12.0, 10.0, 4.7), 5.0),
        4.0,
    ),
    with_source(sc("S39", "hause-60", HB, 36.0, 15.0, 10.0, 4.7, 2.2), 5.0),
];

/// Load inductance giving the nominal current after the first pulse.
pub fn load_inductance_h(case: &SwitchCase) -> f64 {
    case.v_bus_v * T_FIRST_PULSE_S / case.i_a
}

/// Command instants: (first turn-off command, second turn-on command, end).
pub fn command_times_s() -> (f64, f64, f64) {
    let t_off = T_START_S + T_FIRST_PULSE_S;
    let t_on = t_off + T_GAP_S;
    (t_off, t_on, t_on + T_GAP_S)
}

/// Double-pulse netlist. The driver is a Thévenin source blended over 1 ns
/// by the logic command `ctl`: (V_drv, R_src + R_on) when on, (0 V, R_snk +
/// R_off) when off. No stray inductance (the first-order model has none).
pub fn netlist_switching(case: &SwitchCase) -> Result<String, String> {
    let dev = device(case.device).ok_or("unknown device")?;
    let mut n = header(&format!("double pulse {}", case.id), &dev);
    let r_on = R_DRV_SOURCE_OHM + case.r_on_ohm;
    let r_off = R_DRV_SINK_OHM + case.r_off_ohm;
    let (t_off, t_on, t_end) = command_times_s();
    let _ = writeln!(
        n,
        ".options reltol=1e-4 abstol=1e-6 vntol=1e-5 method=gear\n\
         {supply}L1 bus sw {l}\nVSNS sw d 0\nM1 d g {source} {m}\n\
         VCTL ctl 0 PWL(0 0 {a} 0 {b} 1 {c} 1 {d} 0 {e} 0 {f} 1)\n\
         BDRV 0 g I = v(ctl)*({vd}-v(g))/{r_on} - (1-v(ctl))*v(g)/{r_off}",
        supply = if case.l_loop_h > 0.0 {
            format!(
                "VBUS busx 0 {}\nRLOOP busx busr {LOOP_RESISTANCE_OHM}\nLLOOP busr bus {}\n",
                case.v_bus_v, case.l_loop_h
            )
        } else if case.l_source_h > 0.0 {
            format!(
                "VBUS busx 0 {}\nRLOOP busx bus {LOOP_RESISTANCE_OHM}\n",
                case.v_bus_v
            )
        } else {
            format!("VBUS bus 0 {}\n", case.v_bus_v)
        },
        l = load_inductance_h(case),
        m = dev.stem,
        source = if case.l_source_h > 0.0 { "s" } else { "0" },
        a = T_START_S - 0.5e-9,
        b = T_START_S + 0.5e-9,
        c = t_off - 0.5e-9,
        d = t_off + 0.5e-9,
        e = t_on - 0.5e-9,
        f = t_on + 0.5e-9,
        vd = case.v_drive_v,
    );
    match case.circuit {
        Circuit::LowSide => {
            let _ = writeln!(
                n,
                "* fast freewheel diode: no stored charge, 10 pF\n\
                 .model dfw D(IS=1e-9 N=1.0 RS=2m CJO=10p)\nD1 sw bus dfw"
            );
        }
        Circuit::HalfBridge => {
            let _ = writeln!(n, "MU bus gu sw {m}\nRGU gu sw {r_off}", m = dev.stem);
        }
    }
    // The loop's ring with the partner's capacitance lasts a few ns: a 1 ns
    // step keeps it alive numerically (it never decays in 10 µs at 1 ns and
    // decays as 2L/R at 0.05 ns, checked on S29), so loop cases step finer.
    let max_step = if case.loop_total_h() > 0.0 {
        "0.05n"
    } else {
        "1n"
    };
    // With a common-source inductance the drain and gate are measured
    // against the die's source (the measurement subtracts v(s)).
    let (source_lead, source_probe) = if case.l_source_h > 0.0 {
        (format!("LSRC s 0 {}\n", case.l_source_h), " v(s)")
    } else {
        (String::new(), "")
    };
    let _ = write!(
        n,
        "{source_lead}.control\n{WR}tran 0.5n {t_end} 0 {max_step}\n\
         wrdata out.txt v(d) v(g) i(vsns) i(l1){source_probe}\nquit\n.endc\n.end\n"
    );
    Ok(n)
}

/// Measured figures of one double-pulse case (definitions in README.md).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct SwitchMeasured {
    /// Load current at the turn-on command.
    pub i_on_a: f64,
    /// Drain current at the start of the turn-off window.
    pub i_off_a: f64,
    pub e_on_j: f64,
    pub e_off_j: f64,
    /// 10 % V_GS to 10 % I_D.
    pub t_d_on_s: f64,
    /// I_D 10 % → 90 %.
    pub t_ri_s: f64,
    /// V_DS 90 % → 10 %.
    pub t_fv_s: f64,
    /// 90 % V_GS to 10 % V_DS.
    pub t_d_off_s: f64,
    /// V_DS 10 % → 90 %.
    pub t_rv_s: f64,
    /// I_D 90 % → 10 %.
    pub t_fi_s: f64,
    /// Charge delivered into the freewheeling partner at turn-on (reverse
    /// recovery plus its capacitance): ∫ max(i_D − i_L, 0) dt over the E_on window.
    pub q_rec_c: f64,
    /// Turn-on command to I_D at 2 % (conduction starts).
    pub t_cond_start_s: f64,
    /// Turn-off command to I_D at 2 % (conduction ends).
    pub t_cond_end_s: f64,
    /// Highest V_DS from the turn-off's 90 % V_GS to half the gap after it
    /// (the overshoot's first peak).
    pub v_peak_off_v: f64,
}

impl SwitchMeasured {
    /// Turn-off-to-turn-on interval a dead time must cover: conduction end
    /// after the off command minus conduction start after the on command.
    pub fn interval_s(&self) -> f64 {
        self.t_cond_end_s - self.t_cond_start_s
    }
}

/// Measure a double-pulse waveform.
pub fn measure_switching(case: &SwitchCase, tab: &Table) -> Result<SwitchMeasured, String> {
    let t = tab.col("time")?;
    // Drain and gate against the die's source where a common-source
    // inductance lifts it off the ground.
    let (vd, vg) = match tab.col("v(s)") {
        Ok(vs) => {
            let less = |c: &[f64]| c.iter().zip(vs).map(|(a, b)| a - b).collect::<Vec<f64>>();
            (less(tab.col("v(d)")?), less(tab.col("v(g)")?))
        }
        Err(_) => (tab.col("v(d)")?.to_vec(), tab.col("v(g)")?.to_vec()),
    };
    let (vd, vg) = (&vd[..], &vg[..]);
    let id = tab.col("i(vsns)")?;
    let il = tab.col("i(l1)")?;
    let (t_off, t_on, _) = command_times_s();
    let v = case.v_bus_v;
    let vdrv = case.v_drive_v;
    let p: Vec<f64> = vd.iter().zip(id).map(|(a, b)| a * b).collect();
    let err = |what: &str| format!("{}: {what}", case.id);
    let mut m = SwitchMeasured::default();

    // Turn-off (end of the first pulse). Searches start at the command edge's
    // beginning: the terminal V_GS steps with the edge (R_g,int divider).
    let k = index_at(t, t_off - 0.6e-9);
    let ta = crossing(t, vg, 0.9 * vdrv, false, k).ok_or_else(|| err("V_GS never 90 %"))?;
    m.i_off_a = value_at(t, id, ta);
    let i_off = m.i_off_a;
    let ka = index_at(t, ta);
    let t_v10 = crossing(t, vd, 0.1 * v, true, ka).ok_or_else(|| err("V_DS never rises"))?;
    let t_v90 = crossing(t, vd, 0.9 * v, true, ka).ok_or_else(|| err("V_DS never 90 %"))?;
    let t_i90 = crossing(t, id, 0.9 * i_off, false, ka).ok_or_else(|| err("I_D never 90 %"))?;
    let t_i10 = crossing(t, id, 0.1 * i_off, false, ka).ok_or_else(|| err("I_D never 10 %"))?;
    let tb = crossing(t, id, 0.02 * i_off, false, ka).ok_or_else(|| err("I_D never 2 %"))?;
    m.e_off_j = integrate(t, &p, ta, tb);
    m.t_d_off_s = t_v10 - ta;
    m.t_rv_s = t_v90 - t_v10;
    m.t_fi_s = t_i10 - t_i90;
    m.t_cond_end_s = tb - t_off;
    let k_end = index_at(t, t_off + 0.5 * T_GAP_S);
    m.v_peak_off_v = vd[ka..k_end].iter().fold(f64::MIN, |a, &b| a.max(b));

    // Turn-on (start of the second pulse).
    let k = index_at(t, t_on - 0.6e-9);
    m.i_on_a = value_at(t, il, t_on);
    let i_on = m.i_on_a;
    let tc = crossing(t, vg, 0.1 * vdrv, true, k).ok_or_else(|| err("V_GS never 10 %"))?;
    let kc = index_at(t, tc);
    let v_on = vd[vd.len() - 1];
    let t_end = crossing(t, vd, v_on + 0.02 * (v - v_on), false, kc)
        .ok_or_else(|| err("V_DS never falls"))?;
    let t_i10 = crossing(t, id, 0.1 * i_on, true, k).ok_or_else(|| err("I_D never 10 %"))?;
    // Conduction starts at the last upward 2 % crossing before 10 %: with a
    // common-source inductance the gate loop rings through the source lead
    // at the command and its displacement current crosses 2 % before the
    // channel conducts (without one the first crossing is the only one).
    let mut t_i2 = crossing(t, id, 0.02 * i_on, true, k).ok_or_else(|| err("I_D never 2 %"))?;
    while let Some(next) = crossing(t, id, 0.02 * i_on, true, index_at(t, t_i2) + 1) {
        if next >= t_i10 {
            break;
        }
        t_i2 = next;
    }
    let t_i90 = crossing(t, id, 0.9 * i_on, true, k).ok_or_else(|| err("I_D never 90 %"))?;
    let t_v90 = crossing(t, vd, 0.9 * v, false, kc).ok_or_else(|| err("V_DS never 90 %"))?;
    let t_v10 = crossing(t, vd, 0.1 * v, false, kc).ok_or_else(|| err("V_DS never 10 %"))?;
    m.e_on_j = integrate(t, &p, tc, t_end);
    let extra: Vec<f64> = id.iter().zip(il).map(|(a, b)| (a - b).max(0.0)).collect();
    m.q_rec_c = integrate(t, &extra, tc, t_end);
    m.t_d_on_s = t_i10 - tc;
    m.t_ri_s = t_i90 - t_i10;
    m.t_fv_s = t_v10 - t_v90;
    m.t_cond_start_s = t_i2 - t_on;
    Ok(m)
}

/// Simulate and measure one switching case.
pub fn simulate_switching(case: &SwitchCase) -> Result<SwitchMeasured, String> {
    let tab = run_ngspice(&netlist_switching(case)?, case.id)?;
    measure_switching(case, &tab)
}

/// pwmplan's gate drive for a case.
pub fn gate_drive(case: &SwitchCase) -> GateDrive {
    GateDrive {
        v_drive_v: case.v_drive_v,
        r_source_ohm: R_DRV_SOURCE_OHM,
        r_sink_ohm: R_DRV_SINK_OHM,
        r_ext_on_ohm: case.r_on_ohm,
        r_ext_off_ohm: case.r_off_ohm,
        prop_delay_s: 0.0,
        mismatch_s: 0.0,
        loop_inductance_h: case.loop_total_h(),
        common_source_inductance_h: case.l_source_h,
    }
}

/// pwmplan's prediction for a case at the simulated switching currents.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SwitchPredicted {
    pub e_on_j: f64,
    pub e_off_j: f64,
    /// Recovery energy booked in the switch that turns on, from the switch
    /// file alone (`recovery::partner_recovery`: the partner's stored charge
    /// at the turn-on's slope plus its output charge); 0 on the low side.
    pub e_rr_j: f64,
    /// The same term as Q·V with the simulated partner charge `q_rec_c`
    /// (tests the switching model alone, not the recovery model).
    pub e_rr_sim_charge_j: f64,
    /// The same term with the switch file's constant Q_rr (the model before
    /// the charge-control recovery).
    pub e_rr_const_j: f64,
    pub t_d_on_s: f64,
    pub t_ri_s: f64,
    pub t_fv_s: f64,
    pub t_d_off_s: f64,
    pub t_rv_s: f64,
    pub t_fi_s: f64,
    /// Dead-time need, margin 1.2, no mismatch.
    pub dead_time_need_s: f64,
    /// Highest drain voltage at turn-off (the loop inductance's overshoot).
    pub v_peak_off_v: f64,
}

impl SwitchPredicted {
    /// Energy compared with the simulated E_on + E_off.
    pub fn e_total_j(&self) -> f64 {
        self.e_on_j + self.e_off_j + self.e_rr_j
    }
}

/// Predict a case with pwmplan's model from the extracted switch file.
pub fn predict_switching(
    sw: &SwitchModel,
    case: &SwitchCase,
    meas: &SwitchMeasured,
) -> Result<SwitchPredicted, String> {
    let drive = gate_drive(case);
    let partner = match case.circuit {
        Circuit::LowSide => switching::NodePartner::FreewheelDiode,
        Circuit::HalfBridge => switching::NodePartner::BridgeLeg,
    };
    let tr = switching::transitions_at(
        sw,
        &drive,
        case.v_bus_v,
        meas.i_on_a,
        meas.i_off_a,
        sw.r_ds_on_25_ohm,
        partner,
    )
    .map_err(|e| format!("{}: {e:?}", case.id))?;
    let need = dead_time_need_s(&DeadTimeInputs::from_transitions(&tr, &drive))
        .ok_or_else(|| format!("{}: no dead-time need", case.id))?;
    let (e_rr_j, e_rr_sim_charge_j, e_rr_const_j) = match case.circuit {
        Circuit::LowSide => (0.0, meas.q_rec_c * case.v_bus_v, 0.0),
        Circuit::HalfBridge => {
            let tau = recovery::body_diode_transit_time_s(sw, sw.q_rr_c);
            let rec = recovery::partner_recovery(sw, &drive, case.v_bus_v, meas.i_on_a, tau)
                .map_err(|e| format!("{}: {e:?}", case.id))?;
            (
                rec.switch_j,
                meas.q_rec_c * case.v_bus_v,
                sw.q_rr_c * case.v_bus_v,
            )
        }
    };
    Ok(SwitchPredicted {
        e_on_j: tr.e_on_j,
        e_off_j: tr.e_off_terminal_j,
        e_rr_j,
        e_rr_sim_charge_j,
        e_rr_const_j,
        t_d_on_s: tr.t_d_on_s,
        t_ri_s: tr.t_ri_s,
        t_fv_s: tr.t_fv_s,
        t_d_off_s: tr.t_d_off_s,
        t_rv_s: tr.t_rv_s,
        t_fi_s: tr.t_fi_s,
        dead_time_need_s: need,
        v_peak_off_v: tr.v_peak_off_v,
    })
}

/// Load the extracted switch file of a device as pwmplan's model.
pub fn load_switch_model(root: &std::path::Path, stem: &str) -> Result<SwitchModel, String> {
    let path = root
        .join(SPICE_DIR)
        .join("switches")
        .join(format!("{stem}.yaml"));
    let (spec, _) = pwmplan::design::load_switch(pwmplan::load::Origin::Disk(path.clone()))
        .map_err(|e| format!("{}: {e:?}", path.display()))?;
    Ok(pwmplan::model::switch_model(&spec))
}

// ------------------------------------------------------------------- ripple

/// Power stage of a ripple case (ideal switches).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RippleStage {
    /// Ideal low-side switch, near-ideal freewheel diode across the motor.
    LowSideDiode,
    /// Ideal half-bridge (the switch node is a 0/V source).
    HalfBridge,
}

impl RippleStage {
    pub fn name(self) -> &'static str {
        match self {
            RippleStage::LowSideDiode => "low-side+diode",
            RippleStage::HalfBridge => "half-bridge",
        }
    }

    pub fn parse(s: &str) -> Option<RippleStage> {
        match s {
            "low-side+diode" => Some(RippleStage::LowSideDiode),
            "half-bridge" => Some(RippleStage::HalfBridge),
            _ => None,
        }
    }
}

/// One ripple case: R–L–EMF motor under PWM.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RippleCase {
    pub id: &'static str,
    pub stage: RippleStage,
    pub v_bus_v: f64,
    pub r_ohm: f64,
    pub l_h: f64,
    pub emf_v: f64,
    pub f_hz: f64,
    pub duty: f64,
}

#[allow(clippy::too_many_arguments)] // a table row constructor
const fn rc(
    id: &'static str,
    stage: RippleStage,
    v_bus_v: f64,
    r_ohm: f64,
    l_h: f64,
    emf_v: f64,
    f_hz: f64,
    duty: f64,
) -> RippleCase {
    RippleCase {
        id,
        stage,
        v_bus_v,
        r_ohm,
        l_h,
        emf_v,
        f_hz,
        duty,
    }
}

use RippleStage::{HalfBridge as RHB, LowSideDiode as RLS};

/// The ripple reference cases (R02 and R04 are discontinuous).
pub const RIPPLE_CASES: &[RippleCase] = &[
    rc("R01", RLS, 24.0, 1.0, 500e-6, 8.0, 20e3, 0.5),
    rc("R02", RLS, 24.0, 2.0, 50e-6, 15.0, 10e3, 0.3),
    rc("R03", RLS, 12.0, 0.5, 200e-6, 5.0, 5e3, 0.7),
    rc("R04", RLS, 36.0, 1.0, 100e-6, 28.0, 25e3, 0.4),
    rc("R05", RHB, 48.0, 0.8, 300e-6, 20.0, 16e3, 0.5),
    rc("R06", RHB, 24.0, 0.3, 100e-6, 0.0, 2e3, 0.2),
    rc("R07", RHB, 36.0, 1.5, 1e-3, 30.0, 40e3, 0.9),
    rc("R08", RHB, 24.0, 1.0, 200e-6, 14.0, 8e3, 0.5),
];

/// Freewheel diode of the ripple circuit: IS = 1 nA, N = 0.5, RS = 10 mΩ,
/// 10 pF (a forward drop of about 0.27 V that changes by 13 mV per e-fold of
/// current). The switch is an ngspice SW element, R_on = 1 mΩ, R_off = 1 MΩ.
const RIPPLE_DIODE_IS_A: f64 = 1e-9;
const RIPPLE_DIODE_N: f64 = 0.5;
const RIPPLE_DIODE_RS_OHM: f64 = 0.01;

/// Forward voltage of the ripple circuit's diode at `i_a` (Shockley law plus
/// series resistance, V = N·V_t·ln(1 + I/I_S) + R_S·I, V_t = kT/q at 25 °C).
pub fn ripple_diode_v_f(i_a: f64) -> f64 {
    let v_t = 1.380_649e-23 * (T_SIM_C + 273.15) / 1.602_176_634e-19;
    let i = i_a.max(0.0);
    RIPPLE_DIODE_N * v_t * (1.0 + i / RIPPLE_DIODE_IS_A).ln() + RIPPLE_DIODE_RS_OHM * i
}

/// Number of simulated periods: at least 20, and 10 electrical time constants.
pub fn ripple_periods(case: &RippleCase) -> usize {
    let tau = case.l_h / case.r_ohm;
    ((10.0 * tau * case.f_hz).ceil() as usize).max(20)
}

/// Ripple netlist: ideal PWM stage, motor R–L–EMF, started from rest and run
/// for `ripple_periods` (≥ 10 τ, so the start transient has decayed to e^−10).
pub fn netlist_ripple(case: &RippleCase, t_max_s: f64) -> String {
    let t = 1.0 / case.f_hz;
    // 10 ns edges; the switch closes at ctl = 0.6 on the rise and opens at 0.4 on
    // the fall, so it is closed for exactly D·T.
    let pw = case.duty * t - 10e-9;
    let t_end = ripple_periods(case) as f64 * t;
    let mut n = format!(
        "* ripple {} (generated by examples/spice_reference.rs)\n.options temp={T_SIM_C} tnom={T_SIM_C} method=gear\n",
        case.id
    );
    match case.stage {
        RippleStage::LowSideDiode => {
            let _ = writeln!(
                n,
                "VBUS bus 0 {v}\nR1 bus m1 {r}\nL1 m1 m2 {l}\nVE m2 sw {e}\n\
                 .model swm SW(VT=0.5 VH=0.1 RON=1m ROFF=1e6)\nS1 sw 0 ctl 0 swm\n\
                 .model dfw D(IS={is} N={nn} RS={rs} CJO=10p)\nD1 sw bus dfw\n\
                 VCTL ctl 0 PULSE(0 1 0 10n 10n {pw} {t})",
                v = case.v_bus_v,
                r = case.r_ohm,
                l = case.l_h,
                e = case.emf_v,
                is = RIPPLE_DIODE_IS_A,
                nn = RIPPLE_DIODE_N,
                rs = RIPPLE_DIODE_RS_OHM,
            );
        }
        RippleStage::HalfBridge => {
            let _ = writeln!(
                n,
                "VSW sw 0 PULSE(0 {v} 0 10n 10n {pw} {t})\nR1 sw m1 {r}\nL1 m1 m2 {l}\nVE m2 0 {e}",
                v = case.v_bus_v,
                r = case.r_ohm,
                l = case.l_h,
                e = case.emf_v,
            );
        }
    }
    let _ = write!(
        n,
        ".control\n{WR}tran {step} {t_end} 0 {step}\nwrdata out.txt i(l1)\nquit\n.endc\n.end\n",
        step = t_max_s
    );
    n
}

/// Simulated steady-state ripple figures (last period).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct RippleMeasured {
    pub i_pp_a: f64,
    pub i_avg_a: f64,
    pub i_min_a: f64,
    pub i_max_a: f64,
    /// False when the current sits at zero for part of the period.
    pub continuous: bool,
}

/// Measure the last period of a ripple waveform.
pub fn measure_ripple(case: &RippleCase, tab: &Table) -> Result<RippleMeasured, String> {
    let t = tab.col("time")?;
    let i = tab.col("i(l1)")?;
    let t_end = t[t.len() - 1];
    let t0 = t_end - 1.0 / case.f_hz;
    let k = index_at(t, t0);
    let (lo, hi) = i[k..]
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    let avg = integrate(t, i, t0, t_end) * case.f_hz;
    // Discontinuous: |i| below 2 % of the peak for more than 5 % of the period
    // (the diode's 10 pF rings with L around zero, so "exactly zero" never holds).
    let near_zero: Vec<f64> = i
        .iter()
        .map(|x| if x.abs() < 0.02 * hi.abs() { 1.0 } else { 0.0 })
        .collect();
    let dwell = integrate(t, &near_zero, t0, t_end) * case.f_hz;
    let continuous = !(case.stage == RippleStage::LowSideDiode && dwell > 0.05);
    Ok(RippleMeasured {
        i_pp_a: hi - lo,
        i_avg_a: avg,
        i_min_a: lo,
        i_max_a: hi,
        continuous,
    })
}

/// Largest time steps tried in turn for a ripple case: ngspice 39 sometimes
/// stops with "timestep too small" at a diode commutation for one step
/// setting and not for another (a numerical, not a circuit, failure).
pub const RIPPLE_T_MAX_S: [f64; 4] = [10e-9, 7e-9, 5e-9, 20e-9];

/// Simulate and measure one ripple case.
pub fn simulate_ripple(case: &RippleCase) -> Result<RippleMeasured, String> {
    let mut last = String::new();
    for t_max in RIPPLE_T_MAX_S {
        match run_ngspice(&netlist_ripple(case, t_max), case.id) {
            Ok(tab) => return measure_ripple(case, &tab),
            Err(e) => last = e,
        }
    }
    Err(last)
}

/// pwmplan's ripple for a case; the diode stage gets the diode's forward
/// voltage at the simulated mean current.
pub fn predict_ripple(
    case: &RippleCase,
    meas: &RippleMeasured,
) -> Result<ripple::RippleWaveform, String> {
    let load = MotorLoad {
        r_ohm: case.r_ohm,
        l_h: case.l_h,
        back_emf_v: case.emf_v,
    };
    let drive = match case.stage {
        RippleStage::LowSideDiode => Drive::LowSideFreewheel {
            v_f_v: ripple_diode_v_f(meas.i_avg_a.max(meas.i_max_a * 0.5)),
        },
        RippleStage::HalfBridge => Drive::HalfBridgeSynchronous,
    };
    ripple::steady_state(&load, drive, case.v_bus_v, case.duty, case.f_hz)
        .map_err(|e| format!("{}: {e}", case.id))
}

// ---------------------------------------------------------------- CSV files

/// Header of `switching_reference.csv`.
pub const SWITCHING_HEADER: &str = "id,device,circuit,v_bus_v,i_nominal_a,v_drive_v,r_ext_on_ohm,r_ext_off_ohm,l_loop_h,l_source_h,\
i_on_a,i_off_a,e_on_j,e_off_j,q_rec_c,t_d_on_s,t_ri_s,t_fv_s,t_d_off_s,t_rv_s,t_fi_s,t_cond_start_s,t_cond_end_s,v_peak_off_v";

/// Header of `ripple_reference.csv`.
pub const RIPPLE_HEADER: &str =
    "id,stage,v_bus_v,r_ohm,l_h,emf_v,f_hz,duty,i_pp_a,i_avg_a,i_min_a,i_max_a,continuous";

pub fn switching_row(c: &SwitchCase, m: &SwitchMeasured) -> String {
    format!(
        "{},{},{},{},{},{},{},{},{},{},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e},{:.6e}",
        c.id,
        c.device,
        c.circuit.name(),
        c.v_bus_v,
        c.i_a,
        c.v_drive_v,
        c.r_on_ohm,
        c.r_off_ohm,
        c.l_loop_h,
        c.l_source_h,
        m.i_on_a,
        m.i_off_a,
        m.e_on_j,
        m.e_off_j,
        m.q_rec_c,
        m.t_d_on_s,
        m.t_ri_s,
        m.t_fv_s,
        m.t_d_off_s,
        m.t_rv_s,
        m.t_fi_s,
        m.t_cond_start_s,
        m.t_cond_end_s,
        m.v_peak_off_v
    )
}

pub fn ripple_row(c: &RippleCase, m: &RippleMeasured) -> String {
    format!(
        "{},{},{},{},{},{},{},{},{:.6e},{:.6e},{:.6e},{:.6e},{}",
        c.id,
        c.stage.name(),
        c.v_bus_v,
        c.r_ohm,
        c.l_h,
        c.emf_v,
        c.f_hz,
        c.duty,
        m.i_pp_a,
        m.i_avg_a,
        m.i_min_a,
        m.i_max_a,
        m.continuous
    )
}

fn csv_rows(text: &str, header: &str) -> Result<Vec<Vec<String>>, String> {
    let mut lines = text
        .lines()
        .filter(|l| !l.trim().is_empty() && !l.starts_with('#'));
    let h = lines.next().ok_or("empty CSV")?;
    if h.trim() != header {
        return Err(format!("CSV header changed:\n{h}\nexpected\n{header}"));
    }
    let n = header.split(',').count();
    lines
        .map(|l| {
            let f: Vec<String> = l.split(',').map(|s| s.trim().to_string()).collect();
            if f.len() == n {
                Ok(f)
            } else {
                Err(format!("bad CSV row: {l}"))
            }
        })
        .collect()
}

fn num(s: &str) -> Result<f64, String> {
    s.parse::<f64>().map_err(|e| format!("{s}: {e}"))
}

/// Read `switching_reference.csv`: the case (looked up by id, its conditions
/// checked against the row) and the measured figures.
pub fn read_switching(text: &str) -> Result<Vec<(SwitchCase, SwitchMeasured)>, String> {
    let mut out = Vec::new();
    for f in csv_rows(text, SWITCHING_HEADER)? {
        let case = *SWITCH_CASES
            .iter()
            .find(|c| c.id == f[0])
            .ok_or_else(|| format!("unknown case {}", f[0]))?;
        let same = f[1] == case.device
            && Circuit::parse(&f[2]) == Some(case.circuit)
            && num(&f[3])? == case.v_bus_v
            && num(&f[4])? == case.i_a
            && num(&f[5])? == case.v_drive_v
            && num(&f[6])? == case.r_on_ohm
            && num(&f[7])? == case.r_off_ohm
            && num(&f[8])? == case.l_loop_h
            && num(&f[9])? == case.l_source_h;
        if !same {
            return Err(format!(
                "{}: conditions differ from SWITCH_CASES; regenerate",
                case.id
            ));
        }
        let v: Vec<f64> = f[10..].iter().map(|s| num(s)).collect::<Result<_, _>>()?;
        out.push((
            case,
            SwitchMeasured {
                i_on_a: v[0],
                i_off_a: v[1],
                e_on_j: v[2],
                e_off_j: v[3],
                q_rec_c: v[4],
                t_d_on_s: v[5],
                t_ri_s: v[6],
                t_fv_s: v[7],
                t_d_off_s: v[8],
                t_rv_s: v[9],
                t_fi_s: v[10],
                t_cond_start_s: v[11],
                t_cond_end_s: v[12],
                v_peak_off_v: v[13],
            },
        ));
    }
    Ok(out)
}

/// Read `ripple_reference.csv`.
pub fn read_ripple(text: &str) -> Result<Vec<(RippleCase, RippleMeasured)>, String> {
    let mut out = Vec::new();
    for f in csv_rows(text, RIPPLE_HEADER)? {
        let case = *RIPPLE_CASES
            .iter()
            .find(|c| c.id == f[0])
            .ok_or_else(|| format!("unknown case {}", f[0]))?;
        let same = RippleStage::parse(&f[1]) == Some(case.stage)
            && num(&f[2])? == case.v_bus_v
            && num(&f[3])? == case.r_ohm
            && num(&f[4])? == case.l_h
            && num(&f[5])? == case.emf_v
            && num(&f[6])? == case.f_hz
            && num(&f[7])? == case.duty;
        if !same {
            return Err(format!(
                "{}: conditions differ from RIPPLE_CASES; regenerate",
                case.id
            ));
        }
        out.push((
            case,
            RippleMeasured {
                i_pp_a: num(&f[8])?,
                i_avg_a: num(&f[9])?,
                i_min_a: num(&f[10])?,
                i_max_a: num(&f[11])?,
                continuous: f[12] == "true",
            },
        ));
    }
    Ok(out)
}

// ------------------------------------------------------------------- errors

/// One switching comparison row.
#[derive(Debug, Clone)]
pub struct SwitchError {
    pub case: SwitchCase,
    pub meas: SwitchMeasured,
    pub pred: SwitchPredicted,
    /// (predicted − simulated)/simulated of E_on + E_off, predicted from the
    /// switch file alone.
    pub e_err: f64,
    /// The same with the simulated partner charge in the prediction.
    pub e_err_sim_charge: f64,
    /// The same with the switch file's constant Q_rr in the prediction.
    pub e_err_const_q_rr: f64,
    /// The same error for `switching::transitions_first_order`.
    pub e_err_first_order: f64,
    /// The same error with the common-source inductance left out of the
    /// gate loop (kept in the commutation loop); equal to `e_err` where the
    /// case has none.
    pub e_err_without_source: f64,
    /// Dead-time need ≥ simulated interval.
    pub dead_time_covered: bool,
}

/// One ripple comparison row.
#[derive(Debug, Clone)]
pub struct RippleErrorRow {
    pub case: RippleCase,
    pub meas: RippleMeasured,
    pub pred_pp_a: f64,
    pub pred_avg_a: f64,
    pub pred_continuous: bool,
    pub pp_err: f64,
}

/// Compare pwmplan with the switching reference rows.
pub fn switching_errors(
    root: &std::path::Path,
    rows: &[(SwitchCase, SwitchMeasured)],
) -> Result<Vec<SwitchError>, String> {
    rows.iter()
        .map(|(case, meas)| {
            let sw = load_switch_model(root, case.device)?;
            let pred = predict_switching(&sw, case, meas)?;
            let sim = meas.e_on_j + meas.e_off_j;
            let base = pred.e_on_j + pred.e_off_j;
            let with_sim = base + pred.e_rr_sim_charge_j;
            let with_const = base + pred.e_rr_const_j;
            let fo = switching::transitions_first_order(
                &sw,
                &gate_drive(case),
                case.v_bus_v,
                meas.i_on_a,
                meas.i_off_a,
                sw.r_ds_on_25_ohm,
            )
            .map_err(|e| format!("{}: {e:?}", case.id))?;
            let fo_total = fo.e_on_j + fo.e_off_j + pred.e_rr_const_j;
            let without_source = predict_switching(
                &sw,
                &SwitchCase {
                    l_loop_h: case.loop_total_h(),
                    l_source_h: 0.0,
                    ..*case
                },
                meas,
            )?;
            Ok(SwitchError {
                case: *case,
                meas: *meas,
                pred,
                e_err: (pred.e_total_j() - sim) / sim,
                e_err_sim_charge: (with_sim - sim) / sim,
                e_err_const_q_rr: (with_const - sim) / sim,
                e_err_first_order: (fo_total - sim) / sim,
                e_err_without_source: (without_source.e_total_j() - sim) / sim,
                dead_time_covered: pred.dead_time_need_s >= meas.interval_s(),
            })
        })
        .collect()
}

/// Compare pwmplan with the ripple reference rows.
pub fn ripple_errors(rows: &[(RippleCase, RippleMeasured)]) -> Result<Vec<RippleErrorRow>, String> {
    rows.iter()
        .map(|(case, meas)| {
            let w = predict_ripple(case, meas)?;
            Ok(RippleErrorRow {
                case: *case,
                meas: *meas,
                pred_pp_a: w.ripple_pp_a(),
                pred_avg_a: w.i_avg_a(),
                pred_continuous: w.continuous(),
                pp_err: (w.ripple_pp_a() - meas.i_pp_a) / meas.i_pp_a,
            })
        })
        .collect()
}

/// Median of |x|.
pub fn median_abs(xs: &[f64]) -> f64 {
    let mut v: Vec<f64> = xs.iter().map(|x| x.abs()).collect();
    v.sort_by(f64::total_cmp);
    match v.len() {
        0 => f64::NAN,
        n if n % 2 == 1 => v[n / 2],
        n => 0.5 * (v[n / 2 - 1] + v[n / 2]),
    }
}

/// The per-case error table (`errors.csv`).
pub fn errors_csv(sw: &[SwitchError], rp: &[RippleErrorRow]) -> String {
    let mut s = String::from(
        "# Generated by `cargo run --release --example spice_reference`; see README.md.\n\
         kind,id,condition,simulated,predicted,error_pct,extra\n",
    );
    for e in sw {
        let c = &e.case;
        let _ = writeln!(
            s,
            "switching,{},{} {} {} V {} A {} V drive {}/{} ohm,{:.4e},{:.4e},{:+.2},err_with_sim_charge_pct={:+.1} err_with_const_q_rr_pct={:+.1} e_on_sim={:.4e} e_on_pred={:.4e} e_off_sim={:.4e} e_off_pred={:.4e} e_rec={:.4e} dead_time_interval_s={:.3e} dead_time_need_s={:.3e} covered={}",
            c.id,
            c.device,
            c.circuit.name(),
            c.v_bus_v,
            c.i_a,
            c.v_drive_v,
            c.r_on_ohm,
            c.r_off_ohm,
            e.meas.e_on_j + e.meas.e_off_j,
            e.pred.e_total_j(),
            100.0 * e.e_err,
            100.0 * e.e_err_sim_charge,
            100.0 * e.e_err_const_q_rr,
            e.meas.e_on_j,
            e.pred.e_on_j + e.pred.e_rr_j,
            e.meas.e_off_j,
            e.pred.e_off_j,
            e.pred.e_rr_j,
            e.meas.interval_s(),
            e.pred.dead_time_need_s,
            e.dead_time_covered
        );
    }
    for e in rp {
        let c = &e.case;
        let _ = writeln!(
            s,
            "ripple,{},{} {} V R {} ohm L {} H E {} V {} Hz D {},{:.5e},{:.5e},{:+.3},i_avg_sim={:.4e} i_avg_pred={:.4e} continuous_sim={} continuous_pred={}",
            c.id,
            c.stage.name(),
            c.v_bus_v,
            c.r_ohm,
            c.l_h,
            c.emf_v,
            c.f_hz,
            c.duty,
            e.meas.i_pp_a,
            e.pred_pp_a,
            100.0 * e.pp_err,
            e.meas.i_avg_a,
            e.pred_avg_a,
            e.meas.continuous,
            e.pred_continuous
        );
    }
    s
}

/// Median and worst |error| of E_on + E_off per circuit (every case), and of
/// E_off alone over the cases without a loop (the turn-off with capacitance
/// sharing is compared on its own).
pub fn circuit_summary(all: &[SwitchError]) -> String {
    let sw: Vec<SwitchError> = all
        .iter()
        .filter(|e| e.case.loop_total_h() == 0.0)
        .cloned()
        .collect();
    let stats = |v: Vec<f64>| {
        let worst = v.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
        (100.0 * median_abs(&v), 100.0 * worst, v.len())
    };
    let of = |c: Circuit| {
        stats(
            all.iter()
                .filter(|e| e.case.circuit == c)
                .map(|e| e.e_err)
                .collect(),
        )
    };
    let off = stats(
        sw.iter()
            .map(|e| e.pred.e_off_j / e.meas.e_off_j - 1.0)
            .collect(),
    );
    let (ls, hb) = (of(Circuit::LowSide), of(Circuit::HalfBridge));
    format!(
        "By circuit, E_on + E_off: low-side median {:.1} %, worst {:.1} % ({} cases); \
         half-bridge median {:.1} %, worst {:.1} % ({} cases). \
         E_off alone (terminal energy, capacitance sharing): median {:.1} %, worst {:.1} %.\n",
        ls.0, ls.1, ls.2, hb.0, hb.1, hb.2, off.0, off.1
    )
}

/// The cases with a commutation-loop inductance: the turn-off peak's error
/// range and E_on + E_off's median and worst |error|.
pub fn loop_summary(all: &[SwitchError]) -> String {
    let with: Vec<&SwitchError> = all.iter().filter(|e| e.case.loop_total_h() > 0.0).collect();
    let range = |v: &[f64]| {
        v.iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                (a.min(x), b.max(x))
            })
    };
    let peak: Vec<f64> = with
        .iter()
        .map(|e| e.pred.v_peak_off_v / e.meas.v_peak_off_v - 1.0)
        .collect();
    let e: Vec<f64> = with.iter().map(|e| e.e_err).collect();
    let e_on: Vec<f64> = with
        .iter()
        .map(|e| 1e6 * (e.pred.e_on_j + e.pred.e_rr_j - e.meas.e_on_j))
        .collect();
    let e_off: Vec<f64> = with
        .iter()
        .map(|e| e.pred.e_off_j / e.meas.e_off_j - 1.0)
        .collect();
    let ((lo, hi), (on_lo, on_hi), (off_lo, off_hi)) = (range(&peak), range(&e_on), range(&e_off));
    let (l_lo, l_hi) = range(
        &with
            .iter()
            .map(|e| 1e9 * e.case.loop_total_h())
            .collect::<Vec<_>>(),
    );
    format!(
        "With a commutation-loop inductance ({} cases, {:.0}–{:.0} nH): turn-off peak V_DS from {:+.1} % to {:+.1} %; \
         E_on + E_off median |error| {:.1} %, worst {:.1} %; E_on off by {:+.2} to {:+.2} µJ, E_off by {:+.1} % to {:+.1} %.\n",
        with.len(),
        l_lo,
        l_hi,
        100.0 * lo,
        100.0 * hi,
        100.0 * median_abs(&e),
        100.0 * e.iter().fold(0.0_f64, |a, x| a.max(x.abs())),
        on_lo,
        on_hi,
        100.0 * off_lo,
        100.0 * off_hi
    )
}

/// The cases with a common-source inductance: E_on + E_off's median and
/// worst |error|, and the same with the source lead left out of the gate
/// loop (what the model gave before it took the inductance in).
pub fn source_summary(all: &[SwitchError]) -> String {
    let with: Vec<&SwitchError> = all.iter().filter(|e| e.case.l_source_h > 0.0).collect();
    let worst = |v: &[f64]| v.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
    let e: Vec<f64> = with.iter().map(|e| e.e_err).collect();
    let without: Vec<f64> = with.iter().map(|e| e.e_err_without_source).collect();
    let (l_lo, l_hi) = with.iter().fold((f64::INFINITY, 0.0_f64), |(a, b), e| {
        (
            a.min(1e9 * e.case.l_source_h),
            b.max(1e9 * e.case.l_source_h),
        )
    });
    format!(
        "With a common-source inductance ({} of the loop cases, {:.0}–{:.0} nH in the source lead): E_on + E_off median |error| {:.1} %, \
         worst {:.1} %; without the source lead's L·di/dt in the gate loop: median {:.1} %, worst {:.1} %.\n",
        with.len(),
        l_lo,
        l_hi,
        100.0 * median_abs(&e),
        100.0 * worst(&e),
        100.0 * median_abs(&without),
        100.0 * worst(&without)
    )
}

/// The per-case error table in Markdown (`errors.md`).
pub fn errors_md(all: &[SwitchError], rp: &[RippleErrorRow]) -> String {
    let sw = all;
    let n_loop = all.iter().filter(|e| e.case.loop_total_h() > 0.0).count();
    let errs: Vec<f64> = sw.iter().map(|e| e.e_err).collect();
    let worst = errs.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
    // The alternatives below know no loop: compared on the cases without one.
    let plain = || sw.iter().filter(|e| e.case.loop_total_h() == 0.0);
    let simq: Vec<f64> = plain().map(|e| e.e_err_sim_charge).collect();
    let constq: Vec<f64> = plain().map(|e| e.e_err_const_q_rr).collect();
    let fo: Vec<f64> = plain().map(|e| e.e_err_first_order).collect();
    let range = |v: &[f64]| {
        v.iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                (a.min(x), b.max(x))
            })
    };
    let mut s = String::from(
        "# pwmplan against ngspice: per-case errors\n\n\
         Generated by `cargo run --release --example spice_reference`; definitions in README.md.\n\n",
    );
    let _ = writeln!(
        s,
        "Switching, E_on + E_off: median |error| {:.1} %, worst {:.1} % over {} cases ({} of them with a \
         commutation-loop inductance), predicted from the switch files alone. On the {} cases without a loop, with the simulated partner \
         charge for the recovery term instead (the switching model alone): median {:.1} %, worst {:.1} %; with the switch file's constant \
         Q_rr (the model before the charge-control recovery): median {:.1} %, worst {:.1} %. \
         Dead-time need covers the simulated interval in {} of {} cases. \
         For comparison, `switching::transitions_first_order` on the same cases: median |error| {:.1} %, \
         errors from {:+.1} % to {:+.1} %.\n",
        100.0 * median_abs(&errs),
        100.0 * worst,
        sw.len(),
        n_loop,
        simq.len(),
        100.0 * median_abs(&simq),
        100.0 * simq.iter().fold(0.0_f64, |a, x| a.max(x.abs())),
        100.0 * median_abs(&constq),
        100.0 * constq.iter().fold(0.0_f64, |a, x| a.max(x.abs())),
        sw.iter().filter(|e| e.dead_time_covered).count(),
        sw.len(),
        100.0 * median_abs(&fo),
        100.0 * range(&fo).0,
        100.0 * range(&fo).1
    );
    let _ = writeln!(s, "{}", circuit_summary(sw));
    let _ = writeln!(s, "{}", loop_summary(all));
    let _ = writeln!(s, "{}", source_summary(all));
    s.push_str("| case | device | circuit | V | I_off/I_on A | drive V | R_on/R_off Ω | E sim µJ | E pred µJ | error | E_on sim/pred µJ | E_off sim/pred µJ | recovery Q·V µJ | dead-time interval/need ns | loop (source) nH | V_DS peak sim/pred V |\n|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|\n");
    for e in all {
        let c = &e.case;
        let _ = writeln!(
            s,
            "| {} | {} | {} | {} | {:.2}/{:.2} | {} | {}/{} | {:.3} | {:.3} | {:+.1} % | {:.3}/{:.3} | {:.3}/{:.3} | {:.3} | {:.1}/{:.1} | {}{} | {:.1}/{:.1} |",
            c.id,
            c.device,
            c.circuit.name(),
            c.v_bus_v,
            e.meas.i_off_a,
            e.meas.i_on_a,
            c.v_drive_v,
            c.r_on_ohm,
            c.r_off_ohm,
            1e6 * (e.meas.e_on_j + e.meas.e_off_j),
            1e6 * e.pred.e_total_j(),
            100.0 * e.e_err,
            1e6 * e.meas.e_on_j,
            1e6 * (e.pred.e_on_j + e.pred.e_rr_j),
            1e6 * e.meas.e_off_j,
            1e6 * e.pred.e_off_j,
            1e6 * e.pred.e_rr_j,
            1e9 * e.meas.interval_s(),
            1e9 * e.pred.dead_time_need_s,
            (1e10 * c.loop_total_h()).round() / 10.0,
            if c.l_source_h > 0.0 {
                format!(" ({})", (1e10 * c.l_source_h).round() / 10.0)
            } else {
                String::new()
            },
            e.meas.v_peak_off_v,
            e.pred.v_peak_off_v
        );
    }
    let worst_pp = rp.iter().fold(0.0_f64, |a, e| a.max(e.pp_err.abs()));
    let _ = writeln!(
        s,
        "\nRipple peak-to-peak: worst |error| {:.3} % over {} cases.\n\n\
         | case | stage | V | R Ω | L H | E V | f Hz | D | pk-pk sim A | pk-pk pred A | error | mean sim/pred A | continuous sim/pred |\n\
         |---|---|---|---|---|---|---|---|---|---|---|---|---|",
        100.0 * worst_pp,
        rp.len()
    );
    for e in rp {
        let c = &e.case;
        let _ = writeln!(
            s,
            "| {} | {} | {} | {} | {} | {} | {} | {} | {:.4} | {:.4} | {:+.3} % | {:.3}/{:.3} | {}/{} |",
            c.id,
            c.stage.name(),
            c.v_bus_v,
            c.r_ohm,
            c.l_h,
            c.emf_v,
            c.f_hz,
            c.duty,
            e.meas.i_pp_a,
            e.pred_pp_a,
            100.0 * e.pp_err,
            e.meas.i_avg_a,
            e.pred_avg_a,
            e.meas.continuous,
            e.pred_continuous
        );
    }
    s
}
