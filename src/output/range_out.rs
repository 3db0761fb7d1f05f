//! The operating range in a plan: the span, the load line and the worst
//! point of the range for each quantity the constraints judge there.

use serde::{Deserialize, Serialize};

use crate::input::units::{Dimension, format_quantity};
use crate::model::evaluate::CaseResult;
use crate::model::evaluate::Evaluator;
use crate::model::physics::load_line::{LoadLine, OperatingRange};
use crate::model::range::{RangePoint, RangeResult, junction_key};
use crate::model::solve::Candidate;
use crate::output::context::Row;

/// Where a quantity is worst over the range.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct RangeWorstOut {
    /// What is worst there (`largest ripple (peak to peak)`, ...).
    pub name: String,
    /// Its value, formatted with its unit.
    pub value: String,
    /// Where it is worst (absent when nothing is worst anywhere, such as
    /// no audible line at any speed).
    pub at: Option<RangeAtOut>,
}

/// A point of the range.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct RangeAtOut {
    pub speed_rpm: f64,
    pub current_a: f64,
    pub v_bus_v: f64,
    /// Compare duty there (absent: the load is out of reach there).
    pub compare_duty: Option<f64>,
}

/// The `operating_range` block of a plan.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct RangeOut {
    pub speed_min_rpm: f64,
    pub speed_max_rpm: f64,
    /// `constant-torque`, `fan-law` or `table of N points`.
    pub load: String,
    /// Speeds scanned per supply before the ripple maximum is refined.
    pub speeds_scanned: usize,
    pub worst: Vec<RangeWorstOut>,
    /// A three-phase bridge's modulation index and power factor over the
    /// judged speeds at the nominal supply, [lowest, highest] (sinusoidal).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub modulation_index: Option<[f64; 2]>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub power_factor: Option<[f64; 2]>,
    /// The time profile's averages at the nominal supply, where given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub profile: Option<ProfileOut>,
}

/// The time profile's averages.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ProfileOut {
    pub points: usize,
    pub mean_loss_w: f64,
    /// `None` where a point of the profile runs away.
    pub mean_junction_c: Option<f64>,
}

fn rpm(n_rad_s: f64) -> f64 {
    n_rad_s * 30.0 / std::f64::consts::PI
}

fn worst(quantity: &str, value: String, at: &RangePoint) -> RangeWorstOut {
    RangeWorstOut {
        name: quantity.into(),
        value,
        at: Some(RangeAtOut {
            speed_rpm: rpm(at.speed_rad_s),
            current_a: at.current_a,
            v_bus_v: at.v_bus_v,
            compare_duty: at.compare_duty.is_finite().then_some(at.compare_duty),
        }),
    }
}

fn load_name(l: &LoadLine) -> String {
    match l {
        LoadLine::ConstantTorque { .. } => "constant-torque".into(),
        LoadLine::FanLaw { .. } => "fan-law".into(),
        LoadLine::Table { points } => format!("table of {} points", points.len()),
    }
}

/// The range block of the chosen candidate `c`; `None` where it was not
/// judged over a range (none, or the rated speed alone).
pub fn range_out(ev: &Evaluator, c: &Candidate) -> Option<RangeOut> {
    let (range, r) = (ev.range.as_ref()?, c.range.as_ref()?);
    let hold = range
        .hold_current_a
        .map(|i| {
            format!(
                ", holding {} at standstill",
                format_quantity(i, Dimension::Current, 3)
            )
        })
        .unwrap_or_default();
    Some(RangeOut {
        speed_min_rpm: rpm(range.speed_min_rad_s),
        speed_max_rpm: rpm(range.speed_max_rad_s),
        load: format!("{}{hold}", load_name(&range.load)),
        speeds_scanned: r.speeds_scanned,
        worst: worst_points(range, r),
        modulation_index: span(r, |t| t.modulation_index),
        power_factor: span(r, |t| t.power_factor),
        profile: r.profile.as_ref().map(|p| ProfileOut {
            points: range.profile.len(),
            mean_loss_w: p.mean_loss_w,
            mean_junction_c: p.mean_junction_c,
        }),
    })
}

/// The worst point of each quantity judged over the range.
fn worst_points(range: &OperatingRange, r: &RangeResult) -> Vec<RangeWorstOut> {
    let amps = |x: f64| format_quantity(x, Dimension::Current, 3);
    let mut out = Vec::new();
    if let Some(e) = &r.ripple {
        out.push(worst("largest ripple (peak to peak)", amps(e.value), &e.at));
    }
    if let Some(e) = &r.duty_low {
        out.push(worst(
            "lowest compare duty",
            format!("{:.4}", e.value),
            &e.at,
        ));
    }
    if let Some(e) = &r.duty_high {
        out.push(worst(
            "highest compare duty",
            format!("{:.4}", e.value),
            &e.at,
        ));
    }
    if let Some(p) = &r.unreachable {
        out.push(worst("load out of reach", "-".into(), p));
    }
    if let Some(e) = &r.loss {
        let w = format_quantity(e.value, Dimension::Power, 3);
        out.push(worst("largest stage loss (nominal supply)", w, &e.at));
    }
    let hottest = |name: &str, at_speed: Option<f64>, out: &mut Vec<RangeWorstOut>| {
        let here = r.cases().filter(|(n, _)| at_speed.is_none_or(|s| *n == s));
        if let Some((n, case)) = RangeResult::hottest(here) {
            out.push(junction_row(name, *n, case));
        }
    };
    hottest("hottest junction", None, &mut out);
    hottest(
        "hottest junction at the lowest speed",
        Some(range.speed_min_rad_s),
        &mut out,
    );
    if range.hold_current_a.is_some() {
        hottest(
            "hottest junction holding at standstill",
            Some(0.0),
            &mut out,
        );
    }
    if let Some((p, a)) = &r.audible {
        let level = a
            .a_weighted_db
            .map(|db| format!(", {db:.1} dB(A) re 1 A"))
            .unwrap_or_default();
        let verdict = if a.pass { "" } else { ", fails" };
        match a.lowest_audible_line_hz {
            None if a.pass => out.push(RangeWorstOut {
                name: "loudest audible".into(),
                value: "no significant audible line at any speed scanned".into(),
                at: None,
            }),
            None => out.push(worst("loudest audible", format!("fails{level}"), p)),
            Some(f) => {
                let line = format_quantity(f, Dimension::Frequency, 3);
                out.push(worst(
                    "loudest audible",
                    format!("line at {line}{level}{verdict}"),
                    p,
                ));
            }
        }
    }
    out
}

/// The lowest and highest of a three-phase figure over the nominal-supply
/// cases of the range.
fn span(
    r: &RangeResult,
    figure: impl Fn(&crate::model::evaluate::ThreePhaseCase) -> Option<f64>,
) -> Option<[f64; 2]> {
    let values: Vec<f64> = r
        .corners_nominal
        .iter()
        .filter_map(|(_, c)| c.three_phase.as_ref().and_then(&figure))
        .collect();
    let lo = values.iter().copied().reduce(f64::min)?;
    let hi = values.iter().copied().reduce(f64::max)?;
    Some([lo, hi])
}

/// The hottest junction of `case` at speed `n` as a worst-point row.
fn junction_row(name: &str, n: f64, case: &CaseResult) -> RangeWorstOut {
    let t = junction_key(case);
    let value = if t.is_finite() {
        format_quantity(t, Dimension::Temperature, 3)
    } else {
        "runaway".into()
    };
    let at = RangePoint {
        speed_rad_s: n,
        current_a: case.case.load_current_a,
        v_bus_v: case.case.v_bus_v,
        compare_duty: case.compare_duty,
    };
    worst(name, value, &at)
}

/// The range block as rows `{label, value}` for the rationale and the
/// report (empty without a range).
pub fn range_rows(r: Option<&RangeOut>) -> Vec<Row> {
    let Some(r) = r else {
        return Vec::new();
    };
    let mut rows = vec![Row {
        label: "range".into(),
        value: format!(
            "{:.0} to {:.0} rpm, load {}; {} speeds scanned per supply, the ripple maximum refined between them",
            r.speed_min_rpm, r.speed_max_rpm, r.load, r.speeds_scanned
        ),
    }];
    for w in &r.worst {
        let value = match &w.at {
            None => w.value.clone(),
            Some(at) => {
                let duty = at
                    .compare_duty
                    .filter(|_| !w.name.contains("duty"))
                    .map(|d| format!(", duty {d:.3}"))
                    .unwrap_or_default();
                format!(
                    "{} at {:.0} rpm ({}, supply {}{duty})",
                    w.value,
                    at.speed_rpm,
                    format_quantity(at.current_a, Dimension::Current, 3),
                    format_quantity(at.v_bus_v, Dimension::Voltage, 3),
                )
            }
        };
        rows.push(Row {
            label: w.name.clone(),
            value,
        });
    }
    if let (Some(m), Some(pf)) = (r.modulation_index, r.power_factor) {
        rows.push(Row {
            label: "modulation over the range".into(),
            value: format!(
                "index {:.3} to {:.3}, power factor {:.3} to {:.3} (nominal supply)",
                m[0], m[1], pf[0], pf[1]
            ),
        });
    }
    if let Some(p) = &r.profile {
        let t = p.mean_junction_c.map_or_else(
            || "runaway at a point".to_string(),
            |t| format_quantity(t, Dimension::Temperature, 3),
        );
        rows.push(Row {
            label: "time profile".into(),
            value: format!(
                "over {} points at the nominal supply: average stage loss {}, average hottest junction {t}",
                p.points,
                format_quantity(p.mean_loss_w, Dimension::Power, 3)
            ),
        });
    }
    rows.push(Row {
        label: "at the rated speed only".into(),
        value: "the worst-case corners, `spread` and the current limit".into(),
    });
    rows
}
