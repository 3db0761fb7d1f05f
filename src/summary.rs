//! Plain-text summary of a validated design (what pwmplan read and checked).

use crate::design::Design;
use crate::spec::*;
use crate::units::{Dimension, format_quantity};

fn q(v: f64, d: Dimension) -> String {
    format_quantity(v, d, 3)
}

/// The design as pwmplan understood it, one fact per line.
pub fn design_summary(d: &Design) -> String {
    use Dimension::*;
    let s = &d.spec;
    let b = &d.board;
    let sw = &d.switch;
    let mut out = String::new();
    let mut line = |k: &str, v: String| out.push_str(&format!("  {k:<22} {v}\n"));
    line("design", s.name.clone());
    line("board", b.name.clone());
    line("switch", sw.name.clone());
    let topo = match (b.stage.topology, b.stage.modulation) {
        (TopologySpec::LowSide, _) => "low-side switch with freewheel diode".to_string(),
        (TopologySpec::HalfBridge, _) => "synchronous half-bridge".to_string(),
        (TopologySpec::HBridge, Some(ModulationSpec::Bipolar)) => {
            "h-bridge, bipolar switching".to_string()
        }
        (TopologySpec::HBridge, _) => "h-bridge, unipolar switching".to_string(),
        (TopologySpec::ThreePhase, _) => "three-phase".to_string(),
    };
    line("topology", topo);
    line(
        "supply",
        format!(
            "{} nominal ({} to {})",
            q(s.supply.nominal.si, Voltage),
            q(s.supply.min.si, Voltage),
            q(s.supply.max.si, Voltage)
        ),
    );
    line(
        "motor",
        format!(
            "{}, {}, {} at {}",
            q(s.motor.resistance.si, Resistance),
            q(s.motor.inductance.si, Inductance),
            q(s.motor.rated_current.si, Current),
            q(s.motor.operating_speed.si, AngularSpeed)
        ),
    );
    line("back-EMF at speed", q(d.back_emf_v, Voltage));
    line(
        "ambient",
        format!(
            "{} to {}",
            q(s.ambient.min.si, Temperature),
            q(s.ambient.max.si, Temperature)
        ),
    );
    line("junction limit", q(d.t_j_limit_c, Temperature));
    line(
        "timer",
        format!(
            "{} clock, {}-bit counter",
            q(b.timer.clock.si, Frequency),
            b.timer.counter_bits
        ),
    );
    line("gate drive", q(b.gate_driver.supply.si, Voltage));
    let files: Vec<String> = d.sources.iter().map(|f| f.origin.display()).collect();
    line("files", files.join(", "));
    out
}
