//! A validated design: the three input files read, references resolved, and
//! every invariant the model relies on checked, each failure pointing at the
//! field that breaks it.
//!
//! **Invariant:** a [`Design`] that exists satisfies every check below, so
//! the model never meets a zero inductance, a plateau below the threshold or
//! an ambient above T_j max.

use crate::input::bundled::{self, Kind};
use crate::input::diagnostic::InputError;
use crate::input::load::{self, Origin, SourceFile};
use crate::input::spec::*;
use crate::input::units::{Dimension, format_quantity};
use crate::model::physics::load_line::{LoadLine, OperatingRange};
use crate::model::physics::three_phase::{self, BackEmfShape, MotorParams, ZeroSequence};

/// Default lower edge of the frequency search when the design gives none
/// (below this a motor's electrical time constant no longer filters the PWM;
/// common practice).
pub const DEFAULT_F_MIN_HZ: f64 = 1_000.0;

/// The engineer's drive with its board and switch, all checked.
#[derive(Debug, Clone)]
pub struct Design {
    pub spec: DesignSpec,
    pub board: BoardSpec,
    pub switch: SwitchSpec,
    /// The files read, in the order design, board, switch (when separate).
    pub sources: Vec<SourceFile>,
    /// Back-EMF at the operating speed (brushless: line-to-neutral peak).
    pub back_emf_v: f64,
    /// Back-EMF constant in V·s/rad, whichever way the motor was described
    /// (brushless: line-to-neutral peak per electrical rad/s, the convention
    /// of [`crate::model::physics::three_phase::MotorParams`]).
    pub k_e_v_s_per_rad: f64,
    /// Hottest junction allowed by the design's constraint.
    pub t_j_limit_c: f64,
}

/// Load and check a design and everything it references.
pub fn load_design(origin: Origin) -> Result<Design, InputError> {
    let design_src = SourceFile::read(origin)?;
    let file: DesignFile = design_src.parse_design()?;
    let spec = file.design;
    let board_origin = design_src
        .origin
        .resolve(&spec.board, Kind::Board)
        .map_err(|m| design_src.error("design.board", m))?;
    let board_src = SourceFile::read(board_origin).map_err(|e| {
        // A missing board is the design's fault: point at the reference.
        if e.position.is_none() {
            design_src.error("design.board", format!("{}: {}", e.file, e.message))
        } else {
            e
        }
    })?;
    if let Some(m) = board_src.kind_mismatch::<BoardFile>() {
        return Err(design_src.error("design.board", m.describe(&board_src.origin.display())));
    }
    let board_file: BoardFile = board_src.parse_board()?;
    let board = board_file.board;

    let mut sources = vec![design_src, board_src];
    let switch = match &board.stage.switch {
        SwitchRef::Inline(s) => {
            check_switch(s, &sources[1], "board.stage.switch")?;
            (**s).clone()
        }
        SwitchRef::Path(reference) => {
            let (s, src) = load_switch_from(&sources[1], reference, "board.stage.switch")?;
            sources.push(src);
            s
        }
    };
    check_board(&board, &switch, &sources[1])?;
    let derived = check_design(&spec, &board, &switch, &sources[0])?;
    check_drive_at_load(&spec, &board, &switch, &sources[1])?;
    check_search_span(&spec, &board, &sources[0], &sources[1])?;
    Ok(Design {
        spec,
        board,
        switch,
        sources,
        back_emf_v: derived.0,
        k_e_v_s_per_rad: derived.1,
        t_j_limit_c: derived.2,
    })
}

/// The same design with another switch fitted (for comparing switches):
/// the board and design checks run again against the new switch, so a
/// switch the gate drive would overstress is refused like any bad input.
pub fn with_switch(d: &Design, switch: SwitchSpec, src: SourceFile) -> Result<Design, InputError> {
    check_board(&d.board, &switch, &d.sources[1])?;
    let derived = check_design(&d.spec, &d.board, &switch, &d.sources[0])?;
    check_drive_at_load(&d.spec, &d.board, &switch, &d.sources[1])?;
    check_search_span(&d.spec, &d.board, &d.sources[0], &d.sources[1])?;
    let mut sources = vec![d.sources[0].clone(), d.sources[1].clone(), src];
    sources.truncate(3);
    Ok(Design {
        spec: d.spec.clone(),
        board: d.board.clone(),
        switch,
        sources,
        back_emf_v: derived.0,
        k_e_v_s_per_rad: derived.1,
        t_j_limit_c: derived.2,
    })
}

/// Load and check a switch file named by `reference` inside `from`.
fn load_switch_from(
    from: &SourceFile,
    reference: &str,
    field: &str,
) -> Result<(SwitchSpec, SourceFile), InputError> {
    let origin = from
        .origin
        .resolve(reference, Kind::Switch)
        .map_err(|m| from.error(field, m))?;
    let src = SourceFile::read(origin).map_err(|e| {
        if e.position.is_none() {
            from.error(field, format!("{}: {}", e.file, e.message))
        } else {
            e
        }
    })?;
    if let Some(m) = src.kind_mismatch::<SwitchFile>() {
        return Err(from.error(field, m.describe(&src.origin.display())));
    }
    let file: SwitchFile = src.parse_switch()?;
    check_switch(&file.switch, &src, "switch")?;
    Ok((file.switch, src))
}

/// Load and check a switch file on its own (for comparing switches).
pub fn load_switch(origin: Origin) -> Result<(SwitchSpec, SourceFile), InputError> {
    let src = SourceFile::read(origin)?;
    let file: SwitchFile = src.parse_switch()?;
    check_switch(&file.switch, &src, "switch")?;
    Ok((file.switch, src))
}

/// Resolve a command-line switch argument: a path, or `bundled:NAME`.
pub fn switch_origin(arg: &str) -> Result<Origin, InputError> {
    match arg.strip_prefix("bundled:") {
        Some(name) => bundled::find(name, Kind::Switch)
            .map(|p| Origin::Bundled(p.to_string()))
            .ok_or_else(|| InputError::file(arg, load::no_bundled(name, Kind::Switch))),
        None => Ok(Origin::Disk(arg.into())),
    }
}

fn fmt(v: f64, dim: Dimension) -> String {
    format_quantity(v, dim, 3)
}

/// The largest code a dead-time register of `bits` bits holds, 2^bits − 1;
/// refuses a width outside 1..=32 (a code is a `u32`).
fn dead_time_code_top(c: &Check, field: &str, bits: u32) -> Result<u64, InputError> {
    if !(1..=32).contains(&bits) {
        return Err(c.fail(
            field,
            format!("{bits} bits is out of range; expected 1 to 32"),
        ));
    }
    Ok((1u64 << bits) - 1)
}

/// Field checks within one file; paths are `prefix.field`.
struct Check<'a> {
    src: &'a SourceFile,
    prefix: &'a str,
}

impl Check<'_> {
    fn path(&self, field: &str) -> String {
        if self.prefix.is_empty() {
            field.to_string()
        } else {
            format!("{}.{field}", self.prefix)
        }
    }

    fn fail(&self, field: &str, message: impl Into<String>) -> InputError {
        self.src.error(&self.path(field), message)
    }

    /// `lo < v ≤ hi` (or `lo ≤ v` when `zero_ok`), with a message in units.
    fn within(
        &self,
        field: &str,
        v: f64,
        lo: f64,
        hi: f64,
        dim: Dimension,
    ) -> Result<(), InputError> {
        if !v.is_finite() {
            return Err(self.fail(field, "expected a finite value"));
        }
        if v <= lo || v > hi {
            return Err(self.fail(
                field,
                format!(
                    "{} is out of range; expected above {} and at most {}",
                    fmt(v, dim),
                    fmt(lo, dim),
                    fmt(hi, dim)
                ),
            ));
        }
        Ok(())
    }

    /// `0 ≤ v ≤ hi`.
    fn non_negative(&self, field: &str, v: f64, hi: f64, dim: Dimension) -> Result<(), InputError> {
        if !v.is_finite() || v < 0.0 || v > hi {
            return Err(self.fail(
                field,
                format!(
                    "{} is out of range; expected 0 to {}",
                    fmt(v, dim),
                    fmt(hi, dim)
                ),
            ));
        }
        Ok(())
    }

    /// A list no longer than `cap` (see [`LIST_CAPS`]).
    fn max_len(&self, field: &str, len: usize, cap: usize, items: &str) -> Result<(), InputError> {
        if len > cap {
            return Err(self.fail(field, format!("{len} {items}; expected at most {cap}")));
        }
        Ok(())
    }

    /// min ≤ typ ≤ max for a datasheet spread.
    fn spread<D: Dim>(&self, field: &str, s: &Spread<D>) -> Result<(), InputError> {
        let dim = D::DIM;
        if let Some(min) = s.min
            && min.si > s.typ.si
        {
            return Err(self.fail(
                &format!("{field}.min"),
                format!(
                    "min {} is above typ {}; expected min ≤ typ",
                    fmt(min.si, dim),
                    fmt(s.typ.si, dim)
                ),
            ));
        }
        if let Some(max) = s.max
            && max.si < s.typ.si
        {
            return Err(self.fail(
                &format!("{field}.max"),
                format!(
                    "max {} is below typ {}; expected max ≥ typ",
                    fmt(max.si, dim),
                    fmt(s.typ.si, dim)
                ),
            ));
        }
        Ok(())
    }
}

/// The longest lists accepted, each a bound of our own choice: several
/// times what a real datasheet, timer or design needs, and small enough
/// that every check and search stays linear-time in practice (README,
/// input reference).
pub const LIST_CAPS: ListCaps = ListCaps {
    curve_points: 32,
    prescaler_ratios: 64,
    dead_time_segments: 16,
    foster_pairs: 16,
    avoided_bands: 16,
    filter_options: 16,
};

/// See [`LIST_CAPS`].
pub struct ListCaps {
    /// `r_ds_on_vs_temperature.points`, `capacitance.c_rss_curve`,
    /// `body_diode.v_sd_curve`.
    pub curve_points: usize,
    /// `timer.prescaler.ratios`.
    pub prescaler_ratios: usize,
    /// `timer.dead_time.segmented.segments`.
    pub dead_time_segments: usize,
    /// `thermal.foster`.
    pub foster_pairs: usize,
    /// `constraints.audible.avoid`.
    pub avoided_bands: usize,
    /// `overcurrent.filter.clocks` and `overcurrent.filter.samples`, each.
    pub filter_options: usize,
}

const V: Dimension = Dimension::Voltage;
const A: Dimension = Dimension::Current;
const OHM: Dimension = Dimension::Resistance;
const F: Dimension = Dimension::Capacitance;
const C: Dimension = Dimension::Charge;
const S: Dimension = Dimension::Time;
const HZ: Dimension = Dimension::Frequency;
const DEG: Dimension = Dimension::Temperature;
const KW: Dimension = Dimension::ThermalResistance;
const W: Dimension = Dimension::Power;
const RATIO: Dimension = Dimension::Ratio;

/// Every check on one switch's datasheet values.
pub fn check_switch(s: &SwitchSpec, src: &SourceFile, prefix: &str) -> Result<(), InputError> {
    let c = Check { src, prefix };
    if s.name.trim().is_empty() {
        return Err(c.fail("name", "expected a name for the switch"));
    }
    // The numeric ranges in these checks (V_DSS and I_D ≤ 2 000, R_ds(on) ≤ 10 Ω,
    // Q_g ≤ 10 µC, coefficient ≤ 0.03/K, curve factor 0.1–10, V_GS max ≤ 50 V,
    // T_j max 25–300 °C and the like) are plausibility bounds of our own choice,
    // not from a source: wide enough for any discrete MOSFET we know of, narrow
    // enough to catch a wrong unit prefix.
    check_switch_on_resistance(s, &c)?;
    check_switch_threshold(s, &c)?;
    check_switch_gate_charge(s, &c)?;
    check_switch_capacitance(s, &c)?;
    check_switch_diode_and_gate(s, &c)?;
    check_switch_thermal(s, &c)?;
    Ok(())
}

/// The optional second R_ds(on) point: within range, at another gate
/// voltage above the typical threshold, and higher at the lower gate
/// voltage (a channel conducts better the harder it is driven).
fn check_second_on_resistance(s: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    let Some(p) = &s.r_ds_on.second_point else {
        return Ok(());
    };
    c.within("r_ds_on.second_point.typ", p.typ.si, 0.0, 10.0, OHM)?;
    c.within("r_ds_on.second_point.at_v_gs", p.at_v_gs.si, 0.0, 30.0, V)?;
    let (v1, r1, v2, r2) = (
        s.r_ds_on.at_v_gs.si,
        s.r_ds_on.typ.si,
        p.at_v_gs.si,
        p.typ.si,
    );
    if p.at_v_gs.si <= s.v_th.typ.si || (v2 - v1).abs() < 0.1 {
        return Err(c.fail(
            "r_ds_on.second_point.at_v_gs",
            "expected a gate voltage above the typical threshold and at least 0.1 V from r_ds_on.at_v_gs",
        ));
    }
    if (v2 < v1) != (r2 > r1) {
        return Err(c.fail(
            "r_ds_on.second_point.typ",
            "expected the higher R_ds(on) at the lower gate voltage",
        ));
    }
    Ok(())
}

/// Ratings and the on-resistance with its temperature dependence.
fn check_switch_on_resistance(s: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    c.within("v_dss", s.v_dss.si, 0.0, 2000.0, V)?; // bound of our own choice
    c.within("i_d", s.i_d.si, 0.0, 2000.0, A)?;
    c.within("r_ds_on.typ", s.r_ds_on.typ.si, 0.0, 10.0, OHM)?; // bound of our own choice
    if let Some(max) = s.r_ds_on.max {
        c.within("r_ds_on.max", max.si, 0.0, 10.0, OHM)?;
        if max.si < s.r_ds_on.typ.si {
            return Err(c.fail("r_ds_on.max", "max is below typ; expected max ≥ typ"));
        }
    }
    c.within("r_ds_on.at_v_gs", s.r_ds_on.at_v_gs.si, 0.0, 30.0, V)?;
    check_second_on_resistance(s, c)?;
    match &s.r_ds_on_vs_temperature {
        Some(RdsOnTemperatureSpec::Points(points)) => {
            c.max_len(
                "r_ds_on_vs_temperature.points",
                points.len(),
                LIST_CAPS.curve_points,
                "points",
            )?;
            if points.len() < 2 {
                return Err(c.fail(
                    "r_ds_on_vs_temperature.points",
                    "expected at least two [temperature, factor] points",
                ));
            }
            for (i, (t, k)) in points.iter().enumerate() {
                let f = format!("r_ds_on_vs_temperature.points[{i}]");
                c.within(&format!("{f}[0]"), t.si, -100.0, 300.0, DEG)?;
                // Factor 0.1–10: a plausibility bound of our own choice.
                if !(k.is_finite() && *k > 0.1 && *k < 10.0) {
                    return Err(c.fail(&format!("{f}[1]"), format!("factor {k} is out of range; expected a factor relative to 25 °C between 0.1 and 10")));
                }
                if i > 0 && t.si <= points[i - 1].0.si {
                    return Err(c.fail(
                        &format!("{f}[0]"),
                        "temperatures must increase from point to point",
                    ));
                }
            }
        }
        Some(RdsOnTemperatureSpec::Coefficient(k)) => {
            c.within(
                "r_ds_on_vs_temperature.coefficient",
                k.si,
                0.0,
                0.03, // ≤ 3 %/K: a plausibility bound of our own choice
                Dimension::TemperatureCoefficient,
            )?;
        }
        None => {}
    }
    Ok(())
}

/// Threshold, transconductance and plateau.
fn check_switch_threshold(s: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    c.spread("v_th", &s.v_th)?;
    c.within("v_th.typ", s.v_th.typ.si, 0.0, 15.0, V)?;
    if let Some(g) = s.g_fs {
        c.within("g_fs", g.si, 0.0, 10_000.0, Dimension::Conductance)?;
    }
    if let Some(vp) = s.v_plateau {
        c.within("v_plateau", vp.si, 0.0, 20.0, V)?;
        if vp.si <= s.v_th.typ.si {
            return Err(c.fail(
                "v_plateau",
                format!(
                    "plateau {} is not above V_th typ {}; expected V_plateau > V_th",
                    fmt(vp.si, V),
                    fmt(s.v_th.typ.si, V)
                ),
            ));
        }
    }
    if s.g_fs.is_none() && s.v_plateau.is_none() {
        return Err(c.fail(
            "g_fs",
            "missing; give g_fs or v_plateau so the Miller plateau can be found",
        ));
    }
    Ok(())
}

/// The gate charges and their split.
fn check_switch_gate_charge(s: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    c.within("q_g.typ", s.q_g.typ.si, 0.0, 1e-5, C)?; // ≤ 10 µC: bound of our own choice
    if let Some(max) = s.q_g.max
        && max.si < s.q_g.typ.si
    {
        return Err(c.fail("q_g.max", "max is below typ; expected max ≥ typ"));
    }
    c.within("q_g.at_v_gs", s.q_g.at_v_gs.si, 0.0, 30.0, V)?;
    if let Some(i) = s.q_g.at_i_d {
        // Bound of our own choice: 0 < I ≤ 10 kA.
        c.within("q_g.at_i_d", i.si, 0.0, 1e4, A)?;
    }
    if let Some(v) = s.q_g.at_v_ds {
        c.within("q_g.at_v_ds", v.si, 0.0, s.v_dss.si, V)?;
    }
    c.spread("q_gs", &s.q_gs)?;
    c.spread("q_gd", &s.q_gd)?;
    c.within("q_gs", s.q_gs.typ.si, 0.0, 1e-5, C)?;
    c.within("q_gd", s.q_gd.typ.si, 0.0, 1e-5, C)?;
    let q_g = s.q_g.typ.si;
    if s.q_gd.typ.si > q_g {
        return Err(c.fail(
            "q_gd",
            format!(
                "{} is larger than q_g ({}); expected q_gd < q_g",
                fmt(s.q_gd.typ.si, C),
                fmt(q_g, C)
            ),
        ));
    }
    if s.q_gs.typ.si > q_g {
        return Err(c.fail(
            "q_gs",
            format!(
                "{} is larger than q_g ({}); expected q_gs < q_g",
                fmt(s.q_gs.typ.si, C),
                fmt(q_g, C)
            ),
        ));
    }
    if s.q_gs.typ.si + s.q_gd.typ.si > q_g {
        return Err(c.fail(
            "q_gd",
            format!(
                "q_gs + q_gd ({}) exceeds q_g ({}); expected q_gs + q_gd ≤ q_g",
                fmt(s.q_gs.typ.si + s.q_gd.typ.si, C),
                fmt(q_g, C)
            ),
        ));
    }
    if let Some(qth) = s.q_g_th {
        c.within("q_g_th", qth.si, 0.0, 1e-5, C)?;
        if qth.si >= s.q_gs.typ.si {
            return Err(c.fail(
                "q_g_th",
                format!(
                    "{} is not below q_gs ({}); expected q_g_th < q_gs",
                    fmt(qth.si, C),
                    fmt(s.q_gs.typ.si, C)
                ),
            ));
        }
    }
    Ok(())
}

/// The capacitances and output charge or energy.
fn check_switch_capacitance(s: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    let cap = &s.capacitance;
    c.within("capacitance.at_v_ds", cap.at_v_ds.si, 0.0, s.v_dss.si, V)?;
    c.within("capacitance.c_iss", cap.c_iss.si, 0.0, 1e-6, F)?;
    c.within("capacitance.c_oss", cap.c_oss.si, 0.0, 1e-6, F)?;
    c.within("capacitance.c_rss", cap.c_rss.si, 0.0, 1e-6, F)?;
    if cap.c_rss.si >= cap.c_iss.si {
        return Err(c.fail(
            "capacitance.c_rss",
            format!(
                "{} is not below c_iss ({}); expected c_rss < c_iss",
                fmt(cap.c_rss.si, F),
                fmt(cap.c_iss.si, F)
            ),
        ));
    }
    c.max_len(
        "capacitance.c_rss_curve",
        cap.c_rss_curve.len(),
        LIST_CAPS.curve_points,
        "points",
    )?;
    if cap.c_rss_curve.len() == 1 {
        return Err(c.fail(
            "capacitance.c_rss_curve",
            "one point is no curve; expected at least two [v_ds, c_rss] points, or no c_rss_curve",
        ));
    }
    for (i, (v, cr)) in cap.c_rss_curve.iter().enumerate() {
        let f = format!("capacitance.c_rss_curve[{i}]");
        c.within(&format!("{f}[0]"), v.si, 0.0, s.v_dss.si, V)?;
        c.within(&format!("{f}[1]"), cr.si, 0.0, 1e-6, F)?;
        if i > 0 && v.si <= cap.c_rss_curve[i - 1].0.si {
            return Err(c.fail(
                &format!("{f}[0]"),
                "drain voltages must increase from point to point",
            ));
        }
        if i > 0 && cr.si > cap.c_rss_curve[i - 1].1.si {
            return Err(c.fail(
                &format!("{f}[1]"),
                format!(
                    "{} is above the previous point's {}; expected C_rss to fall (or stay) as the drain voltage rises",
                    fmt(cr.si, F),
                    fmt(cap.c_rss_curve[i - 1].1.si, F)
                ),
            ));
        }
    }
    if let Some(q) = s.q_oss {
        c.within("q_oss", q.si, 0.0, 1e-5, C)?;
    }
    if let Some(v) = s.q_oss_at_v_ds {
        if s.q_oss.is_none() {
            return Err(c.fail(
                "q_oss_at_v_ds",
                "a test voltage without q_oss; give q_oss beside it, or remove it",
            ));
        }
        c.within("q_oss_at_v_ds", v.si, 0.0, s.v_dss.si, V)?;
    }
    if let Some(e) = &s.e_oss {
        if s.q_oss.is_some() {
            return Err(c.fail(
                "e_oss",
                "give either q_oss or e_oss for the output-capacitance loss, not both",
            ));
        }
        c.within("e_oss.value", e.value.si, 0.0, 1e-3, Dimension::Energy)?;
        c.within("e_oss.at_v_ds", e.at_v_ds.si, 0.0, s.v_dss.si, V)?;
    }
    Ok(())
}

/// The body diode's forward-voltage test current and curve: currents in
/// (0, 10 kA] rising from point to point, voltages in (0, 5 V] not falling
/// (bounds of our own choice; a diode's forward voltage rises with current).
fn check_forward_curve(d: &BodyDiodeSpec, c: &Check) -> Result<(), InputError> {
    if let Some(i) = &d.v_sd_at {
        c.within("body_diode.v_sd_at", i.si, 0.0, 1e4, A)?;
    }
    let pts = &d.v_sd_curve;
    c.max_len(
        "body_diode.v_sd_curve",
        pts.len(),
        LIST_CAPS.curve_points,
        "points",
    )?;
    if pts.len() == 1 {
        return Err(c.fail(
            "body_diode.v_sd_curve",
            "one point is no curve; expected at least two [i_s, v_sd] points, or no v_sd_curve",
        ));
    }
    for (k, (i, v)) in pts.iter().enumerate() {
        let f = format!("body_diode.v_sd_curve[{k}]");
        c.within(&format!("{f}[0]"), i.si, 0.0, 1e4, A)?;
        c.within(&format!("{f}[1]"), v.si, 0.0, 5.0, V)?;
        if k > 0 && i.si <= pts[k - 1].0.si {
            return Err(c.fail(
                &format!("{f}[0]"),
                "source currents must increase from point to point",
            ));
        }
        if k > 0 && v.si < pts[k - 1].1.si {
            return Err(c.fail(
                &format!("{f}[1]"),
                format!(
                    "{} is below the previous point's {}; expected V_SD to rise (or stay) with the current",
                    fmt(v.si, V),
                    fmt(pts[k - 1].1.si, V)
                ),
            ));
        }
    }
    Ok(())
}

/// Gate resistance, body diode and gate voltage limits.
fn check_switch_diode_and_gate(s: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    c.spread("r_g_int", &s.r_g_int)?;
    c.non_negative("r_g_int.typ", s.r_g_int.typ.si, 100.0, OHM)?;
    c.within("body_diode.v_sd", s.body_diode.v_sd.si, 0.0, 5.0, V)?;
    check_forward_curve(&s.body_diode, c)?;
    c.spread("body_diode.q_rr", &s.body_diode.q_rr)?;
    c.non_negative("body_diode.q_rr", s.body_diode.q_rr.typ.si, 1e-4, C)?;
    c.non_negative("body_diode.t_rr", s.body_diode.t_rr.si, 1e-4, S)?;
    if let Some(t) = &s.body_diode.q_rr_test {
        // Bounds of our own choice: 0 A < I_F ≤ 10 kA, 0.1 A/µs < di/dt ≤
        // 100 A/ns, 0 V < V_R ≤ V_DSS.
        c.within("body_diode.q_rr_test.i_f", t.i_f.si, 0.0, 1e4, A)?;
        c.within(
            "body_diode.q_rr_test.di_dt",
            t.di_dt.si,
            1e5,
            1e11,
            Dimension::CurrentSlewRate,
        )?;
        c.within("body_diode.q_rr_test.v_r", t.v_r.si, 0.0, s.v_dss.si, V)?;
    }
    c.within("v_gs_max", s.v_gs_max.si, 0.0, 50.0, V)?; // bound of our own choice
    if s.v_th.typ.si >= s.v_gs_max.si {
        return Err(c.fail(
            "v_th.typ",
            format!(
                "{} is not below v_gs_max ({}); expected V_th < V_GS max",
                fmt(s.v_th.typ.si, V),
                fmt(s.v_gs_max.si, V)
            ),
        ));
    }
    // Q_g is the charge to a drive voltage above the Miller plateau; at a
    // V_GS at or below it the figure is not the total gate charge.
    let plateau_floor = s.v_plateau.map_or(s.v_th.typ.si, |p| p.si);
    if s.q_g.at_v_gs.si <= plateau_floor {
        return Err(c.fail(
            "q_g.at_v_gs",
            format!(
                "{} is not above the {} {}; expected the drive voltage of the datasheet's total gate charge, above the Miller plateau",
                fmt(s.q_g.at_v_gs.si, V),
                if s.v_plateau.is_some() { "plateau" } else { "threshold V_th typ" },
                fmt(plateau_floor, V)
            ),
        ));
    }
    if s.q_g.at_v_gs.si > s.v_gs_max.si {
        return Err(c.fail(
            "q_g.at_v_gs",
            format!(
                "{} is above v_gs_max ({}); expected the gate voltage of the datasheet's gate-charge figure, within the gate rating",
                fmt(s.q_g.at_v_gs.si, V),
                fmt(s.v_gs_max.si, V)
            ),
        ));
    }
    Ok(())
}

/// Junction limit and thermal resistances.
fn check_switch_thermal(s: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    c.within("t_j_max", s.t_j_max.si, 25.0, 300.0, DEG)?; // bounds of our own choice
    c.within("r_th_jc", s.r_th_jc.si, 0.0, 100.0, KW)?;
    c.within("r_th_ja", s.r_th_ja.si, 0.0, 1000.0, KW)?;
    if s.r_th_jc.si >= s.r_th_ja.si {
        return Err(c.fail(
            "r_th_jc",
            format!(
                "{} is not below r_th_ja ({}); expected r_th_jc < r_th_ja",
                fmt(s.r_th_jc.si, KW),
                fmt(s.r_th_ja.si, KW)
            ),
        ));
    }
    if let Some(z) = s.v_ztc {
        c.within("v_ztc", z.si, 0.0, s.v_gs_max.si, V)?;
    }
    if let Some(p) = &s.i_dm {
        c.within("i_dm.value", p.value.si, 0.0, 100_000.0, A)?;
        if p.value.si < s.i_d.si {
            return Err(c.fail(
                "i_dm.value",
                format!(
                    "{} is below I_D {}; expected the pulsed rating at or above the continuous one",
                    fmt(p.value.si, A),
                    fmt(s.i_d.si, A)
                ),
            ));
        }
        c.within("i_dm.pulse_width", p.pulse_width.si, 0.0, 10.0, S)?;
    }
    Ok(())
}

/// Longest dead-time tick accepted (`clock_divider / clock`): 10 µs, a
/// bound of our own choice (a dead time is tens of nanoseconds to a few
/// microseconds; a slower tick rounds every need to zero or one tick).
const MAX_DEAD_TIME_TICK_S: f64 = 10e-6;
/// Longest encodable dead time accepted: 1 ms, a bound of our own choice
/// (far beyond any PWM period the solver considers).
const MAX_DEAD_TIME_S: f64 = 1e-3;

/// The dead-time generator counts in ticks a timer can hold: a tick no
/// longer than [`MAX_DEAD_TIME_TICK_S`], every code's ticks without overflow
/// and no longer than [`MAX_DEAD_TIME_S`], every code within 32 bits.
fn check_dead_time_ticks(c: &Check, t: &TimerSpec) -> Result<(), InputError> {
    let (kind, divider) = match &t.dead_time {
        DeadTimeSpec::None => return Ok(()),
        DeadTimeSpec::Linear { clock_divider, .. } => ("linear", *clock_divider),
        DeadTimeSpec::Segmented { clock_divider, .. } => ("segmented", *clock_divider),
    };
    let base = format!("timer.dead_time.{kind}");
    if divider < 1 {
        return Err(c.fail(
            &format!("{base}.clock_divider"),
            "expected a divider of at least 1",
        ));
    }
    let tick_s = divider as f64 / t.clock.si;
    if tick_s.is_nan() || tick_s > MAX_DEAD_TIME_TICK_S {
        return Err(c.fail(
            &format!("{base}.clock_divider"),
            format!(
                "{divider} makes one dead-time tick {} at the timer clock {}; expected a tick of at most {} (clock_divider at most {:.0})",
                fmt(tick_s, S),
                fmt(t.clock.si, HZ),
                fmt(MAX_DEAD_TIME_TICK_S, S),
                (MAX_DEAD_TIME_TICK_S * t.clock.si).floor()
            ),
        ));
    }
    let too_long = |field: String, ticks: f64| {
        c.fail(
            &field,
            format!(
                "the longest code counts {} ticks, {}; expected a longest dead time of at most {}",
                ticks,
                fmt(ticks * tick_s, S),
                fmt(MAX_DEAD_TIME_S, S)
            ),
        )
    };
    match &t.dead_time {
        DeadTimeSpec::Linear { max_ticks, .. } => {
            if *max_ticks as f64 * tick_s > MAX_DEAD_TIME_S {
                return Err(too_long(format!("{base}.max_ticks"), *max_ticks as f64));
            }
        }
        DeadTimeSpec::Segmented { segments, .. } => {
            for (i, s) in segments.iter().enumerate() {
                let f = format!("{base}.segments[{i}]");
                if u64::from(s.first_code) + u64::from(s.count) > 1 << 32 {
                    return Err(c.fail(
                        &format!("{f}.count"),
                        "the segment's last code passes 4294967295; expected codes that fit 32 bits",
                    ));
                }
                let last = s
                    .base
                    .checked_add(u64::from(s.count.saturating_sub(1)))
                    .and_then(|n| n.checked_mul(s.step));
                match last {
                    None => {
                        return Err(c.fail(
                            &format!("{f}.base"),
                            "(base + count − 1) · step overflows a tick count; expected a longest dead time of at most 1 ms",
                        ));
                    }
                    Some(n) if n as f64 * tick_s > MAX_DEAD_TIME_S => {
                        return Err(too_long(format!("{f}.base"), n as f64));
                    }
                    Some(_) => {}
                }
            }
        }
        DeadTimeSpec::None => {}
    }
    Ok(())
}

/// Every check on a board, given the switch it carries.
pub fn check_board(b: &BoardSpec, sw: &SwitchSpec, src: &SourceFile) -> Result<(), InputError> {
    let c = Check {
        src,
        prefix: "board",
    };
    if b.name.trim().is_empty() {
        return Err(c.fail("name", "expected a name for the board"));
    }
    check_board_timer(b, &c)?;
    check_board_dead_time(b, &c)?;
    check_board_stage(b, &c)?;
    check_board_gate_driver(b, sw, &c)?;
    check_board_thermal(b, &c)?;
    if let Some(oc) = &b.overcurrent {
        check_board_overcurrent(oc, &c)?;
    }
    Ok(())
}

/// The over-current path: shunt, amplifier, comparator, filter, blanking and
/// responses. The ranges are plausibility bounds of our own choice (a shunt
/// up to 10 Ω, a gain up to 1 000, a threshold up to 100 V, tolerances up
/// to 50 %, delays up to 1 ms, a 16-bit threshold code).
fn check_board_overcurrent(oc: &OvercurrentSpec, c: &Check) -> Result<(), InputError> {
    let sh = &oc.shunt;
    c.within(
        "overcurrent.shunt.resistance",
        sh.resistance.si,
        0.0,
        10.0,
        OHM,
    )?;
    c.non_negative("overcurrent.shunt.tolerance", sh.tolerance.si, 0.5, RATIO)?;
    c.within("overcurrent.shunt.power", sh.power.si, 0.0, 1000.0, W)?;
    if let Some(a) = &oc.amplifier {
        c.within("overcurrent.amplifier.gain", a.gain, 0.0, 1000.0, RATIO)
            .map_err(|_| {
                c.fail(
                    "overcurrent.amplifier.gain",
                    format!("{} is out of range; expected a voltage gain above 0 and at most 1000 (a plain number)", a.gain),
                )
            })?;
        c.non_negative(
            "overcurrent.amplifier.gain_tolerance",
            a.gain_tolerance.si,
            0.5,
            RATIO,
        )?;
        if !(a.offset.si.is_finite() && a.offset.si.abs() <= 100.0) {
            return Err(c.fail(
                "overcurrent.amplifier.offset",
                format!(
                    "{} is out of range; expected −100 V to 100 V",
                    fmt(a.offset.si, V)
                ),
            ));
        }
        c.non_negative(
            "overcurrent.amplifier.offset_tolerance",
            a.offset_tolerance.si,
            1.0,
            V,
        )?;
        c.non_negative(
            "overcurrent.amplifier.settle_time",
            a.settle_time.si,
            1e-3,
            S,
        )?;
    }
    let k = &oc.comparator;
    match &k.threshold {
        ThresholdSpec::Programmable {
            full_scale,
            code_bits,
        } => {
            c.within(
                "overcurrent.comparator.threshold.programmable.full_scale",
                full_scale.si,
                0.0,
                100.0,
                V,
            )?;
            if !(1..=16).contains(code_bits) {
                return Err(c.fail(
                    "overcurrent.comparator.threshold.programmable.code_bits",
                    format!("{code_bits} bits is out of range; expected 1 to 16"),
                ));
            }
        }
        ThresholdSpec::Fixed(v) => c.within(
            "overcurrent.comparator.threshold.fixed",
            v.si,
            0.0,
            100.0,
            V,
        )?,
    }
    c.non_negative(
        "overcurrent.comparator.tolerance",
        k.tolerance.si,
        0.5,
        RATIO,
    )?;
    c.non_negative("overcurrent.comparator.offset", k.offset.si, 1.0, V)?;
    c.non_negative("overcurrent.comparator.delay", k.delay.si, 1e-3, S)?;
    if let Some(f) = &oc.filter {
        check_fault_filter(f, c)?;
    }
    if let Some(bl) = &oc.blanking {
        if !(1..=65_536).contains(&bl.clock_divider) {
            return Err(c.fail(
                "overcurrent.blanking.clock_divider",
                format!("{} is out of range; expected 1 to 65536", bl.clock_divider),
            ));
        }
        if !(1..=1 << 20).contains(&bl.max_ticks) {
            return Err(c.fail(
                "overcurrent.blanking.max_ticks",
                format!("{} is out of range; expected 1 to 1048576", bl.max_ticks),
            ));
        }
    }
    if oc.responses.is_empty() {
        return Err(c.fail(
            "overcurrent.responses",
            "expected at least one of `cycle-by-cycle`, `latched`",
        ));
    }
    if oc.responses.len() > 2 || (oc.responses.len() == 2 && oc.responses[0] == oc.responses[1]) {
        return Err(c.fail(
            "overcurrent.responses",
            "a response is listed twice; expected each of `cycle-by-cycle`, `latched` at most once",
        ));
    }
    Ok(())
}

/// The fault filter's clocks and sample counts.
fn check_fault_filter(f: &FaultFilterSpec, c: &Check) -> Result<(), InputError> {
    for (field, len) in [("clocks", f.clocks.len()), ("samples", f.samples.len())] {
        let path = format!("overcurrent.filter.{field}");
        if len == 0 {
            return Err(c.fail(&path, "expected at least one option"));
        }
        c.max_len(&path, len, LIST_CAPS.filter_options, "options")?;
    }
    for (i, clk) in f.clocks.iter().enumerate() {
        c.within(
            &format!("overcurrent.filter.clocks[{i}]"),
            clk.si,
            0.0,
            10e9,
            HZ,
        )?;
    }
    for (i, n) in f.samples.iter().enumerate() {
        if !(1..=1024).contains(n) {
            return Err(c.fail(
                &format!("overcurrent.filter.samples[{i}]"),
                format!("{n} is out of range; expected 1 to 1024 samples"),
            ));
        }
    }
    Ok(())
}

/// The timer's clock, counter, prescaler and alignments.
fn check_board_timer(b: &BoardSpec, c: &Check) -> Result<(), InputError> {
    let t = &b.timer;
    c.within("timer.clock", t.clock.si, 1e3, 10e9, HZ)?;
    if !(8..=32).contains(&t.counter_bits) {
        return Err(c.fail(
            "timer.counter_bits",
            format!("{} is out of range; expected 8 to 32", t.counter_bits),
        ));
    }
    match &t.prescaler {
        PrescalerSpec::Linear { min, max } => {
            if *min < 1 {
                return Err(c.fail(
                    "timer.prescaler.linear.min",
                    "expected a divider of at least 1",
                ));
            }
            if max < min {
                return Err(c.fail(
                    "timer.prescaler.linear.max",
                    format!("{max} is below min {min}; expected max ≥ min"),
                ));
            }
            if *max > 1 << 32 {
                return Err(c.fail(
                    "timer.prescaler.linear.max",
                    format!("{max} is out of range; expected at most 4294967296"),
                ));
            }
        }
        PrescalerSpec::Ratios(r) => {
            c.max_len(
                "timer.prescaler.ratios",
                r.len(),
                LIST_CAPS.prescaler_ratios,
                "ratios",
            )?;
            if r.is_empty() {
                return Err(c.fail("timer.prescaler.ratios", "expected at least one ratio"));
            }
            for (i, v) in r.iter().enumerate() {
                if *v < 1 || *v > 1 << 32 {
                    return Err(c.fail(
                        &format!("timer.prescaler.ratios[{i}]"),
                        format!("{v} is out of range; expected 1 to 4294967296"),
                    ));
                }
                if r[..i].contains(v) {
                    return Err(c.fail(
                        &format!("timer.prescaler.ratios[{i}]"),
                        format!("ratio {v} is listed twice"),
                    ));
                }
            }
        }
    }
    if t.alignments.is_empty() {
        return Err(c.fail(
            "timer.alignments",
            "expected at least one of `edge`, `centre`",
        ));
    }
    for (i, a) in t.alignments.iter().enumerate() {
        if t.alignments[..i].contains(a) {
            return Err(c.fail(&format!("timer.alignments[{i}]"), "listed twice"));
        }
    }
    Ok(())
}

/// The timer's dead-time generator and minimum pulse.
fn check_board_dead_time(b: &BoardSpec, c: &Check) -> Result<(), InputError> {
    let t = &b.timer;
    if let DeadTimeSpec::Segmented { segments, .. } = &t.dead_time {
        c.max_len(
            "timer.dead_time.segmented.segments",
            segments.len(),
            LIST_CAPS.dead_time_segments,
            "segments",
        )?;
    }
    check_dead_time_ticks(c, t)?;
    match &t.dead_time {
        DeadTimeSpec::None => {}
        DeadTimeSpec::Linear {
            clock_divider,
            max_ticks,
            code_bits,
        } => {
            if *clock_divider < 1 {
                return Err(c.fail(
                    "timer.dead_time.linear.clock_divider",
                    "expected a divider of at least 1",
                ));
            }
            if *max_ticks < 1 {
                return Err(c.fail(
                    "timer.dead_time.linear.max_ticks",
                    "expected at least 1 tick",
                ));
            }
            if let Some(bits) = code_bits {
                let top = dead_time_code_top(c, "timer.dead_time.linear.code_bits", *bits)?;
                if *max_ticks > top {
                    return Err(c.fail(
                        "timer.dead_time.linear.max_ticks",
                        format!(
                            "code {max_ticks} does not fit the {bits}-bit dead-time register (codes 0 to {top}); expected max_ticks ≤ {top}"
                        ),
                    ));
                }
            }
        }
        DeadTimeSpec::Segmented {
            clock_divider,
            segments,
            code_bits,
        } => {
            if *clock_divider < 1 {
                return Err(c.fail(
                    "timer.dead_time.segmented.clock_divider",
                    "expected a divider of at least 1",
                ));
            }
            if segments.is_empty() {
                return Err(c.fail(
                    "timer.dead_time.segmented.segments",
                    "expected at least one segment",
                ));
            }
            for (i, s) in segments.iter().enumerate() {
                let f = format!("timer.dead_time.segmented.segments[{i}]");
                if s.count < 1 {
                    return Err(c.fail(
                        &format!("{f}.count"),
                        "expected at least 1 code in a segment",
                    ));
                }
                if s.step < 1 {
                    return Err(c.fail(
                        &format!("{f}.step"),
                        "expected a tick multiplier of at least 1",
                    ));
                }
                let end = u64::from(s.first_code) + u64::from(s.count);
                if let Some(bits) = code_bits {
                    let top = dead_time_code_top(c, "timer.dead_time.segmented.code_bits", *bits)?;
                    if end - 1 > top {
                        return Err(c.fail(
                            &format!("{f}.count"),
                            format!(
                                "codes 0x{:X} to 0x{:X} run past the {bits}-bit dead-time register (codes 0x0 to 0x{top:X}); expected first_code + count ≤ 0x{:X}",
                                s.first_code,
                                end - 1,
                                top + 1
                            ),
                        ));
                    }
                }
                for (j, o) in segments[..i].iter().enumerate() {
                    let o_end = u64::from(o.first_code) + u64::from(o.count);
                    if u64::from(s.first_code) < o_end && u64::from(o.first_code) < end {
                        return Err(c.fail(
                            &format!("{f}.first_code"),
                            format!(
                                "codes overlap segment {j}; expected each code in one segment only"
                            ),
                        ));
                    }
                }
            }
        }
    }
    if let Some(p) = t.min_pulse {
        c.non_negative("timer.min_pulse", p.si, 1e-3, S)?;
    }

    Ok(())
}

/// The power stage: topology, modulation, sensing, freewheel diode.
fn check_board_stage(b: &BoardSpec, c: &Check) -> Result<(), InputError> {
    let t = &b.timer;
    let st = &b.stage;
    let three_phase_modulation = matches!(
        st.modulation,
        Some(ModulationSpec::Sinusoidal { .. } | ModulationSpec::SixStep { .. })
    );
    match st.topology {
        TopologySpec::ThreePhase if st.modulation.is_none() => {
            return Err(c.fail(
                "stage.modulation",
                "missing; a three-phase bridge needs `sinusoidal: { zero_sequence: ... }` or `six-step: { chop: ... }`",
            ));
        }
        TopologySpec::ThreePhase if !three_phase_modulation => {
            return Err(c.fail(
                "stage.modulation",
                "`bipolar` and `unipolar` belong to an h-bridge; a three-phase bridge needs `sinusoidal: { zero_sequence: ... }` or `six-step: { chop: ... }`",
            ));
        }
        TopologySpec::HBridge if three_phase_modulation => {
            return Err(c.fail(
                "stage.modulation",
                "`sinusoidal` and `six-step` belong to a three-phase bridge; an h-bridge needs `bipolar` or `unipolar`",
            ));
        }
        TopologySpec::HBridge if st.modulation.is_none() => {
            return Err(c.fail(
                "stage.modulation",
                "missing; an h-bridge needs `bipolar` or `unipolar`",
            ));
        }
        TopologySpec::LowSide | TopologySpec::HalfBridge if st.modulation.is_some() => {
            return Err(c.fail(
                "stage.modulation",
                "only an h-bridge or a three-phase bridge has a modulation; remove it",
            ));
        }
        _ => {}
    }
    if matches!(st.modulation, Some(ModulationSpec::Unipolar))
        && !t.alignments.contains(&AlignmentSpec::Centre)
    {
        // One up-counter shared by both legs gives one output pulse per period (ripple and
        // sound at f), not the two symmetric pulses of unipolar switching: refused rather than
        // planned on a model the registers would not realise.
        return Err(c.fail(
            "timer.alignments",
            "unipolar switching places the two legs' pulses symmetrically on an up-down (centre-aligned) count, which doubles the ripple frequency; add `centre`, or use `modulation: bipolar`",
        ));
    }
    check_sensing(b, c)?;

    if let Some(u) = t
        .update_divider
        .as_ref()
        .filter(|u| !(1..=65_536).contains(&u.max))
    {
        return Err(c.fail(
            "timer.update_divider.max",
            format!("{} is out of range; expected 1 to 65536", u.max),
        ));
    }
    if st.topology != TopologySpec::LowSide && st.freewheel_diode.is_some() {
        return Err(c.fail("stage.freewheel_diode", "a bridge freewheels through its own switches; a freewheel diode belongs to `low-side` only"));
    }
    if st.topology == TopologySpec::LowSide && st.freewheel_diode.is_none() {
        return Err(c.fail(
            "stage.freewheel_diode",
            "missing; a low-side stage needs the diode the motor current freewheels through while the switch is off (`freewheel_diode: { v_f: ..., q_rr: ..., t_rr: ..., i_f: ..., v_rrm: ... }`)",
        ));
    }
    check_stray_inductances(st, c)?;
    if let Some(m) = &st.v_ds_margin {
        // Bound of our own choice: a margin of 0 to 90 % of V_DSS.
        c.non_negative("stage.v_ds_margin", m.si, 0.9, Dimension::Ratio)?;
    }
    if let Some(d) = &st.freewheel_diode {
        c.within("stage.freewheel_diode.v_f", d.v_f.si, 0.0, 5.0, V)?;
        if let Some(r) = d.r_d {
            c.non_negative("stage.freewheel_diode.r_d", r.si, 10.0, OHM)?;
        }
        c.non_negative("stage.freewheel_diode.q_rr", d.q_rr.si, 1e-4, C)?;
        c.non_negative("stage.freewheel_diode.t_rr", d.t_rr.si, 1e-4, S)?;
        c.within("stage.freewheel_diode.i_f", d.i_f.si, 0.0, 2000.0, A)?;
        c.within("stage.freewheel_diode.v_rrm", d.v_rrm.si, 0.0, 5000.0, V)?;
    }

    Ok(())
}

/// The stage's stray inductances: the commutation loop and its part in the
/// source lead.
fn check_stray_inductances(st: &StageSpec, c: &Check) -> Result<(), InputError> {
    if let Some(l) = &st.loop_inductance {
        // Bound of our own choice: 0 < L ≤ 1 µH (a power loop is a few nH to
        // a few tens of nH; a µH is wiring, not a loop).
        c.within(
            "stage.loop_inductance",
            l.si,
            0.0,
            1e-6,
            Dimension::Inductance,
        )?;
    }
    if let Some(l_s) = &st.common_source_inductance {
        // Bound of our own choice: 0 ≤ L_s ≤ 100 nH (a package source lead
        // is a few nH; a Kelvin source connection makes it about 0).
        c.non_negative(
            "stage.common_source_inductance",
            l_s.si,
            100e-9,
            Dimension::Inductance,
        )?;
        if let Some(l) = &st.loop_inductance
            && l_s.si > l.si
        {
            return Err(c.fail(
                "stage.common_source_inductance",
                format!(
                    "{} is more than the whole commutation loop's {}; expected a part of `loop_inductance` (the source lead is inside the loop)",
                    format_quantity(l_s.si, Dimension::Inductance, 3),
                    format_quantity(l.si, Dimension::Inductance, 3)
                ),
            ));
        }
    }
    Ok(())
}

/// The gate driver against the switch.
fn check_board_gate_driver(b: &BoardSpec, sw: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    let st = &b.stage;
    let g = &b.gate_driver;
    // ≤ 50 V: a plausibility bound of our own choice (as for the other ranges here).
    c.within("gate_driver.supply", g.supply.si, 0.0, 50.0, V)?;
    if g.supply.si <= sw.v_th.typ.si {
        return Err(c.fail(
            "gate_driver.supply",
            format!(
                "{} does not exceed the switch's V_th typ {}; expected a drive voltage above the threshold",
                fmt(g.supply.si, V),
                fmt(sw.v_th.typ.si, V)
            ),
        ));
    }
    if g.supply.si > sw.v_gs_max.si {
        return Err(c.fail(
            "gate_driver.supply",
            format!(
                "{} exceeds the switch's V_GS max {}; expected a drive voltage within the gate rating",
                fmt(g.supply.si, V),
                fmt(sw.v_gs_max.si, V)
            ),
        ));
    }
    for (field, e) in [
        ("gate_driver.source", &g.source),
        ("gate_driver.sink", &g.sink),
    ] {
        if e.is_first() {
            c.non_negative(field, e.si, 10_000.0, OHM)?;
        } else {
            c.within(field, e.si, 0.0, 100.0, A)?;
        }
    }
    c.non_negative("gate_driver.r_gate_on", g.r_gate_on.si, 10_000.0, OHM)?;
    c.non_negative("gate_driver.r_gate_off", g.r_gate_off.si, 10_000.0, OHM)?;
    c.non_negative(
        "gate_driver.propagation_delay",
        g.propagation_delay.si,
        1e-4,
        S,
    )?;
    c.non_negative("gate_driver.delay_mismatch", g.delay_mismatch.si, 1e-4, S)?;
    match (&g.high_side, st.topology) {
        (Some(_), TopologySpec::LowSide) => {
            return Err(c.fail(
                "gate_driver.high_side",
                "a low-side stage has no high-side switch; remove it",
            ));
        }
        (None, TopologySpec::HalfBridge | TopologySpec::HBridge | TopologySpec::ThreePhase) => {
            return Err(c.fail(
                "gate_driver.high_side",
                "missing; a bridge needs `bootstrap: {...}` or `isolated`",
            ));
        }
        (
            Some(HighSideSupplySpec::Bootstrap {
                capacitor,
                refresh_time,
                load_current,
            }),
            _,
        ) => {
            c.within(
                "gate_driver.high_side.bootstrap.capacitor",
                capacitor.si,
                0.0,
                1e-3,
                F,
            )?;
            c.within(
                "gate_driver.high_side.bootstrap.refresh_time",
                refresh_time.si,
                0.0,
                1e-3,
                S,
            )?;
            c.non_negative(
                "gate_driver.high_side.bootstrap.load_current",
                load_current.si,
                1.0,
                A,
            )?;
        }
        _ => {}
    }

    Ok(())
}

/// The thermal path.
fn check_board_thermal(b: &BoardSpec, c: &Check) -> Result<(), InputError> {
    let th = &b.thermal;
    match (th.r_th_ja, th.r_th_sa) {
        (Some(ja), None) => {
            c.within("thermal.r_th_ja", ja.si, 0.0, 1000.0, KW)?;
            if th.r_th_cs.is_some() {
                return Err(c.fail(
                    "thermal.r_th_cs",
                    "give either r_th_ja, or r_th_cs with r_th_sa, not both",
                ));
            }
        }
        (None, Some(sa)) => {
            c.within("thermal.r_th_sa", sa.si, 0.0, 1000.0, KW)?;
            if let Some(cs) = th.r_th_cs {
                c.non_negative("thermal.r_th_cs", cs.si, 100.0, KW)?;
            }
        }
        (Some(_), Some(_)) => {
            return Err(c.fail(
                "thermal.r_th_sa",
                "give either r_th_ja, or r_th_cs with r_th_sa, not both",
            ));
        }
        (None, None) => {
            return Err(c.fail(
                "thermal",
                "expected r_th_ja (junction to ambient as mounted), or r_th_sa with r_th_cs",
            ));
        }
    }
    c.max_len(
        "thermal.foster",
        th.foster.len(),
        LIST_CAPS.foster_pairs,
        "pairs",
    )?;
    for (i, (r, tau)) in th.foster.iter().enumerate() {
        c.within(&format!("thermal.foster[{i}][0]"), r.si, 0.0, 1000.0, KW)?;
        c.within(&format!("thermal.foster[{i}][1]"), tau.si, 0.0, 1e5, S)?;
    }
    Ok(())
}

/// The board's gate drive against the design's load: the drive must rise
/// above the Miller plateau at the rated current (the datasheet plateau, or
/// V_th + I/g_fs as in `check_tolerances`), or the switch never turns fully on and no
/// setting can be evaluated. Reported at the board's `gate_driver.supply`.
fn check_drive_at_load(
    d: &DesignSpec,
    b: &BoardSpec,
    sw: &SwitchSpec,
    board_src: &SourceFile,
) -> Result<(), InputError> {
    let c = Check {
        src: board_src,
        prefix: "board",
    };
    let i = d.motor.rated_current.si;
    let plateau = match (sw.v_plateau, sw.g_fs) {
        (Some(p), _) => p.si,
        (None, Some(g)) => sw.v_th.typ.si + i / g.si,
        (None, None) => sw.v_th.typ.si,
    };
    if b.gate_driver.supply.si <= plateau {
        return Err(c.fail(
            "gate_driver.supply",
            format!(
                "{} does not exceed the switch's Miller plateau {} at the design's rated current {}; expected a drive voltage above the plateau, so the switch turns fully on",
                fmt(b.gate_driver.supply.si, V),
                fmt(plateau, V),
                fmt(i, A)
            ),
        ));
    }
    Ok(())
}

/// Longest design name: 64 characters, a bound of our own choice (the name
/// becomes file names and C identifiers; file systems allow 255 bytes).
pub const MAX_NAME_CHARS: usize = 64;

/// Most timer products (`clock / f`, one per realisable frequency) the
/// search may span: 2^19 = 524 288, a bound of our own choice (the search
/// lists every realisable frequency in the band; at 64 MHz this allows a
/// band down to 122 Hz).
pub const MAX_SEARCH_PRODUCTS: f64 = 524_288.0;

/// The band's lowest frequency against the timer clock: the search lists
/// one setting per product `clock / f`, so a band reaching far below the
/// clock would take minutes. Reported at `constraints.frequency.min`, or at
/// the board's clock when the design leaves the band at its default.
fn check_search_span(
    d: &DesignSpec,
    b: &BoardSpec,
    design_src: &SourceFile,
    board_src: &SourceFile,
) -> Result<(), InputError> {
    let given = d.constraints.frequency.as_ref().and_then(|f| f.min);
    let f_min = given.map_or(DEFAULT_F_MIN_HZ, |f| f.si);
    let clock = b.timer.clock.si;
    if clock / f_min <= MAX_SEARCH_PRODUCTS {
        return Ok(());
    }
    let lowest = clock / MAX_SEARCH_PRODUCTS;
    Err(match given {
        Some(_) => design_src.error(
            "design.constraints.frequency.min",
            format!(
                "{} is too far below the timer clock {} to search; expected at least {} (clock / {MAX_SEARCH_PRODUCTS})",
                fmt(f_min, HZ),
                fmt(clock, HZ),
                fmt(lowest, HZ)
            ),
        ),
        None => board_src.error(
            "board.timer.clock",
            format!(
                "{} is too fast to search down to the default lowest frequency {}; expected at most {}, or give the design a `constraints.frequency.min` of at least {}",
                fmt(clock, HZ),
                fmt(f_min, HZ),
                fmt(f_min * MAX_SEARCH_PRODUCTS, HZ),
                fmt(lowest, HZ)
            ),
        ),
    })
}

/// Smallest ripple limit accepted, as a share of the rated current: 0.1 %,
/// a bound of our own choice.
const MIN_RIPPLE_SHARE: f64 = 1e-3;

/// Smallest motor winding resistance accepted: 1 µΩ, a bound of our own
/// choice (a real winding with its leads has milliohms; below this the rated
/// current's I·R and the stall current lose meaning).
const MIN_MOTOR_RESISTANCE_OHM: f64 = 1e-6;
/// Smallest motor winding inductance accepted: 1 nH, a bound of our own
/// choice (a real winding has microhenries; below this the ripple at any
/// PWM frequency is a short circuit).
const MIN_MOTOR_INDUCTANCE_H: f64 = 1e-9;

/// The current sensing: required on a three-phase bridge (sampled at the
/// top of an up-down count); on a brushed stage it needs the shunt's place.
fn check_sensing(b: &BoardSpec, c: &Check) -> Result<(), InputError> {
    let (st, t) = (&b.stage, &b.timer);
    if let Some(cs) = &b.current_sensing {
        c.non_negative("current_sensing.settle_time", cs.settle_time.si, 1e-3, S)?;
        c.within(
            "current_sensing.sample_time",
            cs.sample_time.si,
            0.0,
            1e-3,
            S,
        )?;
    }
    match (st.topology, &b.current_sensing) {
        (TopologySpec::ThreePhase, None) => {
            return Err(c.fail(
                "current_sensing",
                "missing; a three-phase bridge needs `current_sensing: { settle_time: ..., sample_time: ... }` (low-side shunts, sampled in the middle of the low-side on-time)",
            ));
        }
        (TopologySpec::ThreePhase, Some(_)) => {
            if !t.alignments.contains(&AlignmentSpec::Centre) {
                return Err(c.fail(
                    "timer.alignments",
                    "a three-phase bridge samples its phase currents in the middle of the low-side on-time, at the bottom of an up-down count; add `centre`",
                ));
            }
        }
        (_, Some(cs)) => {
            if cs.place.is_none() && b.overcurrent.is_none() {
                return Err(c.fail(
                    "current_sensing.place",
                    "missing; expected where the shunt sits: `supply-return`, `leg` or `phase` (or the board's `overcurrent.shunt.place`)",
                ));
            }
        }
        (_, None) => {}
    }
    if let Some(cs) = &b.current_sensing {
        check_sensing_extras(b, cs, c)?;
    }
    Ok(())
}

/// The current sensing's shunt place and ADC: a three-phase bridge's shunts
/// sit in the legs; a place given twice must agree; the ADC within bounds of
/// our own choice (6 to 24 bits, a full scale above 0 and at most 100 V).
fn check_sensing_extras(
    b: &BoardSpec,
    cs: &CurrentSensingSpec,
    c: &Check,
) -> Result<(), InputError> {
    let three_phase = b.stage.topology == TopologySpec::ThreePhase;
    match (cs.place, b.overcurrent.as_ref().map(|o| o.shunt.place)) {
        (Some(ShuntPlaceSpec::Phase), _) if three_phase => {
            return Err(c.fail(
                "current_sensing.place",
                "a three-phase bridge's current sensing reads low-side shunts in its legs or one shunt in the DC link; expected `leg`, `supply-return` or no place",
            ));
        }
        (Some(ShuntPlaceSpec::SupplyReturn), _) if three_phase => check_dc_link(b, cs, c)?,
        (Some(p), Some(o)) if !three_phase && p != o => {
            return Err(c.fail(
                "current_sensing.place",
                "differs from `overcurrent.shunt.place`; one shunt serves both, expected the same place or none here",
            ));
        }
        _ => {}
    }
    if cs.conversion.is_some() && !three_phase {
        return Err(c.fail(
            "current_sensing.conversion",
            "a brushed stage reads one current; only a three-phase bridge converts two (remove it)",
        ));
    }
    if let Some(adc) = &cs.adc {
        if !(6..=24).contains(&adc.bits) {
            return Err(c.fail(
                "current_sensing.adc.bits",
                format!("{} is out of range; expected 6 to 24", adc.bits),
            ));
        }
        c.within(
            "current_sensing.adc.full_scale",
            adc.full_scale.si,
            0.0,
            100.0,
            V,
        )?;
    }
    Ok(())
}

/// A three-phase bridge's single DC-link shunt: read in the active vectors of sinusoidal
/// modulation, with the compares shifted apart on the up count and given back on the down
/// count (the timer must load them at both extremes), by one channel at two instants.
fn check_dc_link(b: &BoardSpec, cs: &CurrentSensingSpec, c: &Check) -> Result<(), InputError> {
    if matches!(b.stage.modulation, Some(ModulationSpec::SixStep { .. })) {
        return Err(c.fail(
            "current_sensing.place",
            "a single DC-link shunt is planned for sinusoidal modulation only (its two readings in the active vectors); six-step: expected `leg`",
        ));
    }
    if !b
        .timer
        .update_divider
        .as_ref()
        .is_some_and(|u| u.each_extreme)
    {
        return Err(c.fail(
            "current_sensing.place",
            "a single DC-link shunt needs the compares shifted apart on the up count and given back on the down count, so the timer must load them at both counter extremes; add `update_divider: { max: 1, each_extreme: true }` to the timer (or read low-side shunts: `leg`)",
        ));
    }
    if cs.conversion.is_some() {
        return Err(c.fail(
            "current_sensing.conversion",
            "a single DC-link shunt is read by one channel at two instants; remove it",
        ));
    }
    Ok(())
}

/// Checks on the design file; returns (back-EMF at the operating speed,
/// k_e in V·s/rad, junction limit in °C).
fn check_design(
    d: &DesignSpec,
    b: &BoardSpec,
    sw: &SwitchSpec,
    src: &SourceFile,
) -> Result<(f64, f64, f64), InputError> {
    let c = Check {
        src,
        prefix: "design",
    };
    if d.name.trim().is_empty() {
        return Err(c.fail("name", "expected a name for the design"));
    }
    if d.name.len() > MAX_NAME_CHARS {
        return Err(c.fail(
            "name",
            format!(
                "{} characters; expected at most {MAX_NAME_CHARS} (the name becomes the generated files' names)",
                d.name.len()
            ),
        ));
    }
    if !d
        .name
        .chars()
        .all(|ch| ch.is_ascii_alphanumeric() || ch == '-' || ch == '_')
        || !d.name.starts_with(|ch: char| ch.is_ascii_alphabetic())
    {
        return Err(c.fail("name", format!("\"{}\" cannot name the generated files; expected letters, digits, '-' or '_', starting with a letter", d.name)));
    }
    check_design_supply(d, &c)?;
    let (emf, k_e) = check_design_motor(d, b, &c)?;
    check_design_ambient(d, sw, &c)?;
    let t_j_limit = check_design_limits(d, sw, &c)?;
    check_design_options(d, b, sw, &c, emf)?;
    if let Some(r) = &d.operating_range {
        check_design_range(d, b, &c, r, k_e)?;
        if let Some(points) = &r.profile {
            check_profile(&c, points, r)?;
        }
    }
    check_range_objective(d, &c)?;
    if let Some(cl) = &d.current_loop {
        check_current_loop(b, cl, &c)?;
    }
    Ok((emf, k_e, t_j_limit))
}

/// The current loop: the board must sample the current; the rate and margin
/// within bounds of our own choice (a rate above 0 and at most 1 MHz, a phase
/// margin of 30° to 80°, 0 to 30 fraction bits); integer gains need the ADC
/// and the shunt's amplifier chain (`overcurrent`) to scale the current.
fn check_current_loop(b: &BoardSpec, cl: &CurrentLoopSpec, c: &Check) -> Result<(), InputError> {
    let Some(cs) = &b.current_sensing else {
        return Err(c.fail(
            "current_loop",
            format!("the board \"{}\" has no `current_sensing`; the loop needs the sampled current (add `current_sensing: {{ settle_time: ..., sample_time: ..., place: ... }}` to the board)", b.name),
        ));
    };
    if let Some(r) = &cl.rate {
        c.within("current_loop.rate", r.si, 0.0, 1e6, Dimension::Frequency)?;
    }
    if let Some(pm) = cl.phase_margin_deg.filter(|pm| !(30.0..=80.0).contains(pm)) {
        return Err(c.fail(
            "current_loop.phase_margin_deg",
            format!("{pm} is out of range; expected 30 to 80 (degrees)"),
        ));
    }
    if let Some(fp) = &cl.fixed_point {
        if fp.fraction_bits > 30 {
            return Err(c.fail(
                "current_loop.fixed_point.fraction_bits",
                format!("{} is out of range; expected 0 to 30", fp.fraction_bits),
            ));
        }
        if cs.adc.is_none() || b.overcurrent.is_none() {
            return Err(c.fail(
                "current_loop.fixed_point",
                "integer gains scale the current by the ADC and the shunt chain; the board needs `current_sensing.adc` and `overcurrent` (its shunt and amplifier)",
            ));
        }
        let sensed = match b.stage.topology {
            TopologySpec::ThreePhase => Some(ShuntPlaceSpec::Leg),
            _ => cs.place,
        };
        let chain = b.overcurrent.as_ref().map(|o| o.shunt.place);
        if sensed.is_some_and(|p| Some(p) != chain) {
            return Err(c.fail(
                "current_loop.fixed_point",
                "integer gains scale the current by the `overcurrent` shunt and amplifier, but the board samples the current at another shunt; use float gains, or sample at the protected shunt",
            ));
        }
    }
    Ok(())
}

/// The supply range.
fn check_design_supply(d: &DesignSpec, c: &Check) -> Result<(), InputError> {
    let s = &d.supply;
    c.within("supply.nominal", s.nominal.si, 0.0, 2000.0, V)?;
    c.within("supply.min", s.min.si, 0.0, 2000.0, V)?;
    c.within("supply.max", s.max.si, 0.0, 2000.0, V)?;
    if s.max.si < s.nominal.si {
        return Err(c.fail(
            "supply.max",
            format!(
                "{} is below nominal {}; expected min ≤ nominal ≤ max",
                fmt(s.max.si, V),
                fmt(s.nominal.si, V)
            ),
        ));
    }
    if s.min.si > s.nominal.si {
        return Err(c.fail(
            "supply.min",
            format!(
                "{} is above nominal {}; expected min ≤ nominal ≤ max",
                fmt(s.min.si, V),
                fmt(s.nominal.si, V)
            ),
        ));
    }
    Ok(())
}

/// The motor, and its back-EMF shape and constant.
fn check_design_motor(d: &DesignSpec, b: &BoardSpec, c: &Check) -> Result<(f64, f64), InputError> {
    let m = &d.motor;
    c.within(
        "motor.resistance",
        m.resistance.si,
        MIN_MOTOR_RESISTANCE_OHM,
        1000.0,
        OHM,
    )?;
    c.within(
        "motor.inductance",
        m.inductance.si,
        MIN_MOTOR_INDUCTANCE_H,
        10.0,
        Dimension::Inductance,
    )?;
    // 1 mA to 2 kA: plausibility bounds of our own choice (below 1 mA the
    // ripple and line figures sit under their 1 mA significance floor).
    c.within("motor.rated_current", m.rated_current.si, 1e-3, 2000.0, A)?;
    c.within(
        "motor.operating_speed",
        m.operating_speed.si,
        0.0,
        1e5,
        Dimension::AngularSpeed,
    )?;
    check_design_motor_kind(d, b, c)
}

/// The motor kind against the stage, and its back-EMF shape and constant.
fn check_design_motor_kind(
    d: &DesignSpec,
    b: &BoardSpec,
    c: &Check,
) -> Result<(f64, f64), InputError> {
    let s = &d.supply;
    let m = &d.motor;
    let three_phase = b.stage.topology == TopologySpec::ThreePhase;
    match (m.kind, three_phase) {
        (MotorKind::Brushless, false) => {
            return Err(c.fail(
                "motor.kind",
                "a brushless motor needs a `three-phase` board; this board's stage is not one",
            ));
        }
        (MotorKind::BrushedDc, true) => {
            return Err(c.fail(
                "motor.kind",
                "a three-phase board drives a `brushless` motor; expected `kind: brushless`",
            ));
        }
        _ => {}
    }
    let (emf, k_e) = if m.kind == MotorKind::Brushless {
        check_brushless(c, m, b, s)?
    } else {
        for (field, given) in [
            ("motor.pole_pairs", m.pole_pairs.is_some()),
            ("motor.back_emf_shape", m.back_emf_shape.is_some()),
            ("motor.current_advance_deg", m.current_advance_deg.is_some()),
        ] {
            if given {
                return Err(c.fail(field, "only a `brushless` motor has this; remove it"));
            }
        }
        let k_e = match (m.back_emf_constant, m.rated_voltage, m.no_load_speed) {
            (Some(k), None, None) => {
                c.within(
                    "motor.back_emf_constant",
                    k.si,
                    0.0,
                    100.0,
                    Dimension::BackEmfConstant,
                )?;
                k.si
            }
            (None, Some(v), Some(w)) => {
                c.within("motor.rated_voltage", v.si, 0.0, 2000.0, V)?;
                c.within(
                    "motor.no_load_speed",
                    w.si,
                    0.0,
                    1e5,
                    Dimension::AngularSpeed,
                )?;
                // Unloaded, the back-EMF nearly equals the rated voltage (common practice).
                v.si / w.si
            }
            (Some(_), _, _) => {
                return Err(c.fail(
                    "motor.back_emf_constant",
                    "give either back_emf_constant, or rated_voltage with no_load_speed, not both",
                ));
            }
            (None, Some(_), None) => {
                return Err(c.fail(
                    "motor.no_load_speed",
                    "missing; rated_voltage needs no_load_speed",
                ));
            }
            (None, None, Some(_)) => {
                return Err(c.fail(
                    "motor.rated_voltage",
                    "missing; no_load_speed needs rated_voltage",
                ));
            }
            (None, None, None) => {
                return Err(c.fail(
                    "motor.back_emf_constant",
                    "missing; give back_emf_constant, or rated_voltage with no_load_speed",
                ));
            }
        };
        let at = Reach {
            speed_rad_s: m.operating_speed.si,
            current_a: m.rated_current.si,
            field: "motor.operating_speed",
            named: false,
        };
        check_brushed_reach(c, m, s, k_e, &at)?;
        (k_e * m.operating_speed.si, k_e)
    };
    Ok((emf, k_e))
}

/// A speed and current the lowest supply must reach, and the field an
/// error points at (`named`: the error names the speed and current, as
/// for a point of the operating range).
struct Reach {
    speed_rad_s: f64,
    current_a: f64,
    field: &'static str,
    named: bool,
}

impl Reach {
    fn at(&self) -> String {
        if self.named && self.speed_rad_s <= 0.0 {
            format!("holding {} at standstill", fmt(self.current_a, A))
        } else if self.named {
            format!(
                "at {} and {}",
                fmt(self.speed_rad_s, Dimension::AngularSpeed),
                fmt(self.current_a, A)
            )
        } else {
            "at this speed and current".to_string()
        }
    }
}

/// A brushed motor at `at` needs back-EMF + I·R below the lowest supply
/// (volt-second balance, common practice).
fn check_brushed_reach(
    c: &Check,
    m: &MotorSpec,
    s: &SupplySpec,
    k_e: f64,
    at: &Reach,
) -> Result<(), InputError> {
    let emf = k_e * at.speed_rad_s;
    let ir = at.current_a * m.resistance.si;
    let why = format!("back-EMF {} + I·R {}", fmt(emf, V), fmt(ir, V));
    reach_within_supply(c, at, "", emf + ir, &why, s.min.si)
}

/// The voltage `v_needed` (made of `why`) at `at` must stay below the
/// lowest supply `v_min`.
fn reach_within_supply(
    c: &Check,
    at: &Reach,
    mode: &str,
    v_needed: f64,
    why: &str,
    v_min: f64,
) -> Result<(), InputError> {
    if v_needed < v_min {
        return Ok(());
    }
    Err(c.fail(
        at.field,
        format!(
            "{mode}the motor needs {} ({why}) {}, more than the lowest supply {}; expected {} the supply can reach",
            fmt(v_needed, V),
            at.at(),
            fmt(v_min, V),
            if at.speed_rad_s > 0.0 { "a speed" } else { "a held current" }
        ),
    ))
}

/// Highest speed accepted anywhere, rad/s (about 955 000 rpm; a
/// plausibility bound of our own choice, the same as `operating_speed`'s).
const MAX_SPEED_RAD_S: f64 = 1e5;

/// `design.operating_range`: the speed span inside 0..=`MAX_SPEED_RAD_S`,
/// min ≤ max; a table of 2 to `LIST_CAPS.curve_points` points with rising
/// speeds and currents of 1 mA to 2 kA spanning the range; and every speed
/// where the load line bends (its ends, the table's points inside it)
/// reachable from the lowest supply (the needed voltage is convex or
/// linear between them, so it peaks at one of them).
fn check_design_range(
    d: &DesignSpec,
    b: &BoardSpec,
    c: &Check,
    r: &OperatingRangeSpec,
    k_e: f64,
) -> Result<(), InputError> {
    let deg = Dimension::AngularSpeed;
    c.within(
        "operating_range.speed.min",
        r.speed.min.si,
        0.0,
        MAX_SPEED_RAD_S,
        deg,
    )?;
    c.within(
        "operating_range.speed.max",
        r.speed.max.si,
        0.0,
        MAX_SPEED_RAD_S,
        deg,
    )?;
    if r.speed.max.si < r.speed.min.si {
        return Err(c.fail(
            "operating_range.speed.max",
            format!(
                "{} is below min {}; expected min ≤ max",
                fmt(r.speed.max.si, deg),
                fmt(r.speed.min.si, deg)
            ),
        ));
    }
    if let LoadLineSpec::Table(points) = &r.load {
        check_load_table(c, points, r)?;
    }
    let line = load_line(&r.load, &d.motor);
    let hold = r.standstill.as_ref().map(|h| h.current.si);
    if let Some(i) = hold {
        c.within(
            "operating_range.standstill.current",
            i,
            1e-3,
            2e3,
            Dimension::Current,
        )?;
    }
    let points = [
        (
            r.speed.min.si,
            line.current_at_a(r.speed.min.si),
            "operating_range.speed.min",
        ),
        (
            r.speed.max.si,
            line.current_at_a(r.speed.max.si),
            "operating_range.speed.max",
        ),
    ]
    .into_iter()
    .chain(
        line.knots_within(r.speed.min.si, r.speed.max.si)
            .into_iter()
            .map(|n| (n, line.current_at_a(n), "operating_range.load")),
    )
    .chain(hold.map(|i| (0.0, i, "operating_range.standstill.current")));
    for (speed, current_a, field) in points {
        let at = Reach {
            speed_rad_s: speed,
            current_a,
            field,
            named: true,
        };
        match brushless_motor(&d.motor) {
            Some(motor) => check_brushless_reach(c, &d.motor, b, &d.supply, &motor, &at)?,
            None => check_brushed_reach(c, &d.motor, &d.supply, k_e, &at)?,
        }
    }
    Ok(())
}

/// Largest distance of the profile's shares from a whole (0.5 %, our
/// choice: rounding of hand-written percentages).
const PROFILE_SUM_TOLERANCE: f64 = 0.005;

/// `operating_range.profile`: 1 to `LIST_CAPS.curve_points` points, each
/// speed inside the range (or 0 where the drive holds at standstill), each
/// share above 0 and at most 100 %, the shares summing to 100 %.
fn check_profile(
    c: &Check,
    points: &[ProfilePointSpec],
    r: &OperatingRangeSpec,
) -> Result<(), InputError> {
    let field = "operating_range.profile";
    c.max_len(field, points.len(), LIST_CAPS.curve_points, "points")?;
    if points.is_empty() {
        return Err(c.fail(
            field,
            "no points; expected at least one (speed, share) point",
        ));
    }
    let deg = Dimension::AngularSpeed;
    let (lo, hi) = (r.speed.min.si, r.speed.max.si);
    for (k, p) in points.iter().enumerate() {
        let n = p.speed.si;
        let holds = n == 0.0 && r.standstill.is_some();
        if !holds && !(lo * (1.0 - 1e-9)..=hi * (1.0 + 1e-9)).contains(&n) {
            return Err(c.fail(
                &format!("{field}[{k}].speed"),
                format!(
                    "{} is outside the range {} to {}; expected a speed of the range{}",
                    fmt(n, deg),
                    fmt(lo, deg),
                    fmt(hi, deg),
                    if r.standstill.is_some() {
                        " or 0 (standstill)"
                    } else {
                        ""
                    }
                ),
            ));
        }
        c.within(
            &format!("{field}[{k}].share"),
            p.share.si,
            0.0,
            1.0,
            Dimension::Ratio,
        )?;
        if p.share.si <= 0.0 {
            return Err(c.fail(
                &format!("{field}[{k}].share"),
                "0 %; expected a share above 0",
            ));
        }
    }
    let sum: f64 = points.iter().map(|p| p.share.si).sum();
    if (sum - 1.0).abs() > PROFILE_SUM_TOLERANCE {
        return Err(c.fail(
            field,
            format!("the shares add up to {:.1} %; expected 100 %", 100.0 * sum),
        ));
    }
    Ok(())
}

/// The range's objectives need what they average over: `least-average-loss`
/// a time profile, `least-worst-loss` an operating range.
fn check_range_objective(d: &DesignSpec, c: &Check) -> Result<(), InputError> {
    let range = d.operating_range.as_ref();
    let missing = match d.objective {
        ObjectiveSpec::LeastAverageLoss if range.and_then(|r| r.profile.as_ref()).is_none() => {
            "least-average-loss averages over operating_range.profile, which the design does not give; add a profile or choose least-loss"
        }
        ObjectiveSpec::LeastWorstLoss if range.is_none() => {
            "least-worst-loss judges the worst point of operating_range, which the design does not give; add a range or choose least-loss"
        }
        _ => return Ok(()),
    };
    Err(c.fail("objective", missing))
}

/// The model's load line of a design's `operating_range.load`.
pub fn load_line(spec: &LoadLineSpec, m: &MotorSpec) -> LoadLine {
    match spec {
        LoadLineSpec::ConstantTorque => LoadLine::ConstantTorque {
            current_a: m.rated_current.si,
        },
        LoadLineSpec::FanLaw => LoadLine::FanLaw {
            rated_speed_rad_s: m.operating_speed.si,
            rated_current_a: m.rated_current.si,
        },
        LoadLineSpec::Table(points) => LoadLine::Table {
            points: points.iter().map(|p| (p.speed.si, p.current.si)).collect(),
        },
    }
}

/// The model's operating range of a design, when it gives one.
pub fn operating_range(d: &DesignSpec) -> Option<OperatingRange> {
    let r = d.operating_range.as_ref()?;
    Some(OperatingRange {
        speed_min_rad_s: r.speed.min.si,
        speed_max_rad_s: r.speed.max.si,
        rated_speed_rad_s: d.motor.operating_speed.si,
        load: load_line(&r.load, &d.motor),
        hold_current_a: r.standstill.as_ref().map(|h| h.current.si),
        profile: r
            .profile
            .iter()
            .flatten()
            .map(|p| (p.speed.si, p.share.si))
            .collect(),
    })
}

/// A load-line table: 2 to `LIST_CAPS.curve_points` points, speeds rising,
/// currents of 1 mA to 2 kA, spanning the speed range.
fn check_load_table(
    c: &Check,
    points: &[LoadPointSpec],
    r: &OperatingRangeSpec,
) -> Result<(), InputError> {
    let deg = Dimension::AngularSpeed;
    c.max_len(
        "operating_range.load.table",
        points.len(),
        LIST_CAPS.curve_points,
        "points",
    )?;
    if points.len() < 2 {
        return Err(c.fail(
            "operating_range.load.table",
            format!(
                "{} point; expected at least 2 (speed, current) points",
                points.len()
            ),
        ));
    }
    for (i, p) in points.iter().enumerate() {
        let f = format!("operating_range.load.table[{i}]");
        c.non_negative(&format!("{f}.speed"), p.speed.si, MAX_SPEED_RAD_S, deg)?;
        c.within(&format!("{f}.current"), p.current.si, 1e-3, 2000.0, A)?;
        if i > 0 && p.speed.si <= points[i - 1].speed.si {
            return Err(c.fail(
                &format!("{f}.speed"),
                format!(
                    "{} is not above the previous point's {}; expected speeds rising",
                    fmt(p.speed.si, deg),
                    fmt(points[i - 1].speed.si, deg)
                ),
            ));
        }
    }
    let (first, last) = (points[0].speed.si, points[points.len() - 1].speed.si);
    if first > r.speed.min.si || last < r.speed.max.si {
        return Err(c.fail(
            "operating_range.load.table",
            format!(
                "spans {} to {}; expected it to cover the speed range {} to {}",
                fmt(first, deg),
                fmt(last, deg),
                fmt(r.speed.min.si, deg),
                fmt(r.speed.max.si, deg)
            ),
        ));
    }
    Ok(())
}

/// The ambient range against the switch.
fn check_design_ambient(d: &DesignSpec, sw: &SwitchSpec, c: &Check) -> Result<(), InputError> {
    let a = &d.ambient;
    c.within("ambient.min", a.min.si, -100.0, 200.0, DEG)?;
    c.within("ambient.max", a.max.si, -100.0, 200.0, DEG)?;
    if a.max.si < a.min.si {
        return Err(c.fail("ambient.max", "max is below min; expected min ≤ max"));
    }
    if a.max.si >= sw.t_j_max.si {
        return Err(c.fail(
            "ambient.max",
            format!("{} is not below the switch's T_j max {}; expected an ambient the switch can work in", fmt(a.max.si, DEG), fmt(sw.t_j_max.si, DEG)),
        ));
    }
    Ok(())
}

/// The audibility, ripple and junction constraints; returns the junction limit.
fn check_design_limits(d: &DesignSpec, sw: &SwitchSpec, c: &Check) -> Result<f64, InputError> {
    let m = &d.motor;
    let a = &d.ambient;
    let k = &d.constraints;
    match &k.audible {
        AudibleSpec::InaudibleAbove(f) => {
            c.within("constraints.audible.inaudible_above", f.si, 1e3, 30e3, HZ)?
        }
        AudibleSpec::Avoid(bands) => {
            c.max_len(
                "constraints.audible.avoid",
                bands.len(),
                LIST_CAPS.avoided_bands,
                "bands",
            )?;
            if bands.is_empty() {
                return Err(c.fail(
                    "constraints.audible.avoid",
                    "expected at least one [low, high] band",
                ));
            }
            for (i, (lo, hi)) in bands.iter().enumerate() {
                let f = format!("constraints.audible.avoid[{i}]");
                c.within(&format!("{f}[0]"), lo.si, 0.0, 1e6, HZ)?;
                c.within(&format!("{f}[1]"), hi.si, 0.0, 1e6, HZ)?;
                if hi.si <= lo.si {
                    return Err(c.fail(
                        &format!("{f}[1]"),
                        "the band's upper edge is not above its lower edge",
                    ));
                }
            }
        }
        AudibleSpec::Inaudible | AudibleSpec::Allowed => {}
    }
    if let Some(r) = k.max_ripple {
        // At least 0.1 % of the rated current, a bound of our own choice:
        // no PWM gets below it, and a far smaller limit only makes every
        // setting fail after a long search for the reason.
        if r.is_first() {
            let lo = MIN_RIPPLE_SHARE * m.rated_current.si;
            c.within("constraints.max_ripple", r.si, lo, 2000.0, A)?;
        } else {
            c.within(
                "constraints.max_ripple",
                r.si,
                MIN_RIPPLE_SHARE,
                2.0,
                Dimension::Ratio,
            )?;
        }
    }
    let t_j_limit = match &k.junction {
        None => sw.t_j_max.si,
        Some(JunctionLimitSpec::Max(t)) => {
            c.within("constraints.junction.max", t.si, -100.0, sw.t_j_max.si, DEG).map_err(|_| {
                c.fail(
                    "constraints.junction.max",
                    format!("{} is out of range; expected above the ambient max {} and at most the switch's T_j max {}", fmt(t.si, DEG), fmt(a.max.si, DEG), fmt(sw.t_j_max.si, DEG)),
                )
            })?;
            t.si
        }
        Some(JunctionLimitSpec::Margin(dt)) => {
            c.non_negative(
                "constraints.junction.margin",
                dt.si,
                200.0,
                Dimension::TemperatureDifference,
            )?;
            sw.t_j_max.si - dt.si
        }
    };
    if t_j_limit <= a.max.si {
        return Err(c.fail(
            "constraints.junction",
            format!("the junction limit {} is not above the ambient max {}; no loss at all would meet it", fmt(t_j_limit, DEG), fmt(a.max.si, DEG)),
        ));
    }
    Ok(t_j_limit)
}

/// The optional constraints (resolution, band, stall) and the tolerances.
fn check_design_options(
    d: &DesignSpec,
    b: &BoardSpec,
    sw: &SwitchSpec,
    c: &Check,
    emf: f64,
) -> Result<(), InputError> {
    let k = &d.constraints;
    if let Some(bits) = k.min_resolution_bits {
        if !(bits.is_finite() && (1.0..=32.0).contains(&bits)) {
            return Err(c.fail(
                "constraints.min_resolution_bits",
                format!("{bits} is out of range; expected 1 to 32 bits"),
            ));
        }
        if bits > f64::from(b.timer.counter_bits) {
            return Err(c.fail(
                "constraints.min_resolution_bits",
                format!(
                    "{bits} bits exceeds the timer's {}-bit counter; expected at most {}",
                    b.timer.counter_bits, b.timer.counter_bits
                ),
            ));
        }
    }
    if let Some(band) = &k.frequency {
        if let Some(lo) = band.min {
            c.within("constraints.frequency.min", lo.si, 0.0, 10e6, HZ)?;
        }
        if let Some(hi) = band.max {
            c.within("constraints.frequency.max", hi.si, 0.0, 10e6, HZ)?;
            if hi.si >= b.timer.clock.si {
                return Err(c.fail(
                    "constraints.frequency.max",
                    "not below the timer clock; expected a PWM frequency the timer can make",
                ));
            }
        }
        if let (Some(lo), Some(hi)) = (band.min, band.max)
            && hi.si <= lo.si
        {
            return Err(c.fail(
                "constraints.frequency.max",
                format!(
                    "{} is not above min {}; expected min < max",
                    fmt(hi.si, HZ),
                    fmt(lo.si, HZ)
                ),
            ));
        }
    }
    if let Some(t) = k.stall_time {
        c.within("constraints.stall_time", t.si, 0.0, 3600.0, S)?;
    }
    if let Some(i) = d.motor.max_current {
        c.within("motor.max_current", i.si, 0.0, 100_000.0, A)?;
        if i.si <= d.motor.rated_current.si {
            return Err(c.fail(
                "motor.max_current",
                format!(
                    "{} is not above the rated current {}; expected the motor's short-time limit above its rated load",
                    fmt(i.si, A),
                    fmt(d.motor.rated_current.si, A)
                ),
            ));
        }
    }
    if let Some(cl) = &d.current_limit {
        check_design_current_limit(cl, b, c)?;
    }
    if let Some(t) = &d.tolerances {
        check_tolerances(c, t, d, b, sw, emf)?;
    }
    Ok(())
}

/// The design's current-limit requirements against the board's
/// over-current path.
fn check_design_current_limit(
    cl: &CurrentLimitSpec,
    b: &BoardSpec,
    c: &Check,
) -> Result<(), InputError> {
    let Some(oc) = &b.overcurrent else {
        return Err(c.fail(
            "current_limit",
            "the board has no `overcurrent` section (shunt, comparator, responses); describe it there, or remove `current_limit`",
        ));
    };
    if let Some(burst) = &cl.burst {
        c.within(
            "current_limit.burst.current",
            burst.current.si,
            0.0,
            100_000.0,
            A,
        )?;
        c.within(
            "current_limit.burst.duration",
            burst.duration.si,
            0.0,
            3600.0,
            S,
        )?;
    }
    if let Some(t) = cl.trip {
        c.within("current_limit.trip", t.si, 0.0, 100_000.0, A)?;
    }
    if let Some(r) = cl.response
        && !oc.responses.contains(&r)
    {
        return Err(c.fail(
            "current_limit.response",
            format!(
                "the board's fault input does not offer `{}`; expected one of its `overcurrent.responses`",
                match r {
                    FaultResponseSpec::CycleByCycle => "cycle-by-cycle",
                    FaultResponseSpec::Latched => "latched",
                }
            ),
        ));
    }
    Ok(())
}

/// The three-phase model of a brushless motor: phase R and L as written,
/// pole pairs, and the back-EMF constant converted from the file's
/// line-to-line peak per mechanical rad/s to `MotorParams`' line-to-neutral
/// peak per electrical rad/s: k_e = k_ll/(√3·p) for a sinusoidal back-EMF
/// (line-to-line peak = √3 × phase peak for a balanced star, Mohan, Undeland,
/// Robbins, *Power Electronics*, 2003, from memory) and k_ll/(2·p) for a
/// trapezoidal one (two 120° flat tops in series, Krishnan, *Permanent Magnet
/// Synchronous and Brushless DC Motor Drives*, 2010, from memory).
/// `None` unless the motor is brushless with pole pairs and a constant.
pub fn brushless_motor(m: &MotorSpec) -> Option<MotorParams> {
    if m.kind != MotorKind::Brushless {
        return None;
    }
    let p = m.pole_pairs.filter(|p| *p > 0)?;
    let k_ll = m.back_emf_constant?.si;
    let (shape, ratio) = match m.back_emf_shape.unwrap_or_default() {
        BackEmfShapeSpec::Sinusoidal => (BackEmfShape::Sinusoidal, 3f64.sqrt()),
        BackEmfShapeSpec::Trapezoidal => (BackEmfShape::Trapezoidal, 2.0),
    };
    Some(MotorParams {
        r_phase_ohm: m.resistance.si,
        l_phase_h: m.inductance.si,
        ke_v_s_per_rad: k_ll / (ratio * f64::from(p)),
        pole_pairs: p,
        back_emf_shape: shape,
    })
}

/// Zero sequence of a board's sinusoidal modulation.
pub fn zero_sequence(z: ZeroSequenceSpec) -> ZeroSequence {
    match z {
        ZeroSequenceSpec::None => ZeroSequence::None,
        ZeroSequenceSpec::MinMax => ZeroSequence::MinMax,
    }
}

/// Checks on a brushless motor against its three-phase board; returns
/// (line-to-neutral back-EMF peak at the operating speed, k_e per
/// electrical rad/s).
fn check_brushless(
    c: &Check,
    m: &MotorSpec,
    b: &BoardSpec,
    s: &SupplySpec,
) -> Result<(f64, f64), InputError> {
    let Some(p) = m.pole_pairs else {
        return Err(c.fail(
            "motor.pole_pairs",
            "missing; a brushless motor needs its pole pairs (half the magnet poles, e.g. 4 for an 8-pole rotor)",
        ));
    };
    if !(1..=100).contains(&p) {
        return Err(c.fail(
            "motor.pole_pairs",
            format!("{p} is out of range; expected 1 to 100"),
        ));
    }
    for (field, given) in [
        ("motor.rated_voltage", m.rated_voltage.is_some()),
        ("motor.no_load_speed", m.no_load_speed.is_some()),
    ] {
        if given {
            return Err(c.fail(
                field,
                "a brushless motor is described by back_emf_constant (line-to-line peak per mechanical speed); remove rated_voltage and no_load_speed",
            ));
        }
    }
    let Some(k) = m.back_emf_constant else {
        return Err(c.fail(
            "motor.back_emf_constant",
            "missing; a brushless motor needs back_emf_constant, the line-to-line peak back-EMF per mechanical speed (e.g. \"5 V/krpm\")",
        ));
    };
    c.within(
        "motor.back_emf_constant",
        k.si,
        0.0,
        100.0,
        Dimension::BackEmfConstant,
    )?;
    let Some(motor) = brushless_motor(m) else {
        return Err(c.fail("motor", "expected a brushless motor"));
    };
    let emf = motor.phase_emf_peak_v(f64::from(p) * m.operating_speed.si);
    if m.current_advance_deg.is_some()
        && !matches!(b.stage.modulation, Some(ModulationSpec::Sinusoidal { .. }))
    {
        return Err(c.fail(
            "motor.current_advance_deg",
            "only sinusoidal modulation takes a current advance; remove it",
        ));
    }
    let gamma_deg = m.current_advance_deg.unwrap_or(0.0);
    if !(gamma_deg.is_finite() && gamma_deg > -90.0 && gamma_deg < 90.0) {
        return Err(c.fail(
            "motor.current_advance_deg",
            format!("{gamma_deg} is out of range; expected more than -90 and less than 90 degrees"),
        ));
    }
    let at = Reach {
        speed_rad_s: m.operating_speed.si,
        current_a: m.rated_current.si,
        field: "motor.operating_speed",
        named: false,
    };
    check_brushless_reach(c, m, b, s, &motor, &at)?;
    Ok((emf, motor.ke_v_s_per_rad))
}

/// A brushless motor at `at` within the lowest supply: sinusoidal, a
/// modulation index inside the linear limit of its zero sequence
/// (`sinusoidal_point_from_motor`); six-step, line-to-line back-EMF +
/// 2·I·R below the supply (two phases in series, common practice).
fn check_brushless_reach(
    c: &Check,
    m: &MotorSpec,
    b: &BoardSpec,
    s: &SupplySpec,
    motor: &MotorParams,
    at: &Reach,
) -> Result<(), InputError> {
    let omega_e = f64::from(motor.pole_pairs) * at.speed_rad_s;
    let i = at.current_a;
    if let Some(ModulationSpec::Sinusoidal { zero_sequence: z }) = b.stage.modulation {
        let gamma_rad = m.current_advance_deg.unwrap_or(0.0).to_radians();
        let zs = zero_sequence(z);
        return match three_phase::sinusoidal_point_from_motor(motor, omega_e, i, gamma_rad, s.min.si, zs) {
            Ok(_) => Ok(()),
            Err(three_phase::ThreePhaseError::Overmodulation {
                modulation_index,
                limit,
            }) => Err(c.fail(
                at.field,
                format!(
                    "at the lowest supply {} the motor needs modulation index {:.3} (phase voltage peak {}){}, above the linear limit {:.3} of zero_sequence `{}`; lower the speed or the current, or raise the supply{}",
                    fmt(s.min.si, V),
                    modulation_index,
                    fmt(modulation_index * 0.5 * s.min.si, V),
                    if at.named { format!(" {}", at.at()) } else { String::new() },
                    limit,
                    if zs == ZeroSequence::None { "none" } else { "min-max" },
                    if zs == ZeroSequence::None { ", or use `min-max` (linear to 1.155)" } else { "" }
                ),
            )),
            Err(e) => Err(c.fail("motor", format!("no sinusoidal operating point: {e:?}"))),
        };
    }
    let e_ll = motor.six_step_line_emf_v(omega_e);
    let ir2 = 2.0 * m.resistance.si * i;
    let why = format!(
        "line-to-line back-EMF {} + 2·I·R {}",
        fmt(e_ll, V),
        fmt(ir2, V)
    );
    reach_within_supply(c, at, "in six-step ", e_ll + ir2, &why, s.min.si)
}

/// Largest tolerance accepted: ±50 % (our choice; a wider spread is no
/// longer a tolerance, and at ±100 % a resistance reaches zero).
const MAX_TOLERANCE: f64 = 0.5;

/// Checks on `design.tolerances`: each share within 0 to 50 %, the motor
/// still driven at the lowest supply with its winding resistance at the
/// top of its tolerance, and the gate drive at both ends of its tolerance
/// above the highest Miller plateau and within V_GS max.
fn check_tolerances(
    c: &Check,
    t: &TolerancesSpec,
    d: &DesignSpec,
    b: &BoardSpec,
    sw: &SwitchSpec,
    emf: f64,
) -> Result<(), InputError> {
    let shares = [
        ("tolerances.motor_resistance", t.motor_resistance),
        ("tolerances.motor_inductance", t.motor_inductance),
        ("tolerances.driver_resistance", t.driver_resistance),
        ("tolerances.driver_supply", t.driver_supply),
    ];
    for (field, share) in shares {
        if let Some(q) = share {
            c.non_negative(field, q.si, MAX_TOLERANCE, Dimension::Ratio)?;
        }
    }
    let pct = |x: f64| format_quantity(x, Dimension::Ratio, 3);
    let m = &d.motor;
    if let Some(tol) = t.motor_resistance {
        let r_hi = m.resistance.si * (1.0 + tol.si);
        let v_needed = emf + m.rated_current.si * r_hi;
        if v_needed >= d.supply.min.si {
            return Err(c.fail(
                "tolerances.motor_resistance",
                format!(
                    "at +{} the winding resistance is {} and the motor needs {} (back-EMF {} + I·R {}), more than the lowest supply {}; expected a tolerance the supply can still drive",
                    pct(tol.si),
                    fmt(r_hi, OHM),
                    fmt(v_needed, V),
                    fmt(emf, V),
                    fmt(m.rated_current.si * r_hi, V),
                    fmt(d.supply.min.si, V)
                ),
            ));
        }
    }
    if let Some(tol) = t.driver_supply {
        let v_drive = b.gate_driver.supply.si;
        // Highest plateau: the threshold at its max, the plateau moving with
        // it (V_plt = V_th + I/g_fs, the gate-charge note, see
        // `physics::switching`), at the rated current.
        let v_th_rise = sw.v_th.max.map(|x| x.si - sw.v_th.typ.si).unwrap_or(0.0);
        let v_plt_max = match (sw.v_plateau, sw.g_fs) {
            (Some(p), _) => p.si + v_th_rise,
            (None, Some(g)) => sw.v_th.typ.si + v_th_rise + m.rated_current.si / g.si,
            (None, None) => sw.v_th.typ.si + v_th_rise,
        };
        let low = v_drive * (1.0 - tol.si);
        if low <= v_plt_max {
            return Err(c.fail(
                "tolerances.driver_supply",
                format!(
                    "at −{} the gate drive is {}, not above the switch's highest Miller plateau {} (V_th at its max, rated current); expected a drive that turns the switch fully on at every corner",
                    pct(tol.si),
                    fmt(low, V),
                    fmt(v_plt_max, V)
                ),
            ));
        }
        let high = v_drive * (1.0 + tol.si);
        if high > sw.v_gs_max.si {
            return Err(c.fail(
                "tolerances.driver_supply",
                format!(
                    "at +{} the gate drive is {}, above the switch's V_GS max {}; expected a drive within the gate rating at every corner",
                    pct(tol.si),
                    fmt(high, V),
                    fmt(sw.v_gs_max.si, V)
                ),
            ));
        }
    }
    Ok(())
}
