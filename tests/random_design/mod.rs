//! Random invented designs of every topology, shared by the tests that check plans on
//! designs the project was not built around (`register_verifier`, `operating_range`,
//! `current_loop`, `dead_time_compensation`), and a plan's registers as the verifier takes
//! them.
//! Every value is invented; the draws are fixed by the seed.

#![allow(dead_code)]

use pwmplan::model::timer::Alignment;
use pwmplan::model::verify::{LegCompare, Stage, TimerRegisters};
use pwmplan::plan::Plan;
use pwmplan::solve::Objective;

/// The timer registers a plan writes, as the verifier takes them.
pub fn written_registers(p: &Plan) -> TimerRegisters {
    TimerRegisters {
        tick_s: p.timer.divider as f64 / p.timer.clock_hz,
        alignment: if p.pwm.alignment == "centre" {
            Alignment::Centre
        } else {
            Alignment::Edge
        },
        period_ticks: p.timer.period_ticks,
        dead_time_s: p.timer.dead_time_s,
    }
}

/// A brushed plan's legs at leg A's compare `compare` (the emitted convention: a bipolar
/// bridge's leg B inverted, a unipolar bridge's at `steps − compare`).
pub fn written_stage(topology: &str, steps: u64, compare: u64) -> Stage {
    let a = LegCompare::new(compare);
    match topology {
        "low-side" => Stage::LowSide(a),
        "h-bridge-bipolar" => Stage::HBridge {
            a,
            b: LegCompare::inverted(compare),
        },
        "h-bridge-unipolar" => Stage::HBridge {
            a,
            b: LegCompare::new(steps - compare),
        },
        _ => Stage::HalfBridge(a),
    }
}

/// As [`written_stage`] with compares loaded at both extremes of an up-down count: `up`
/// while counting up, `down` while counting down (not a unipolar bridge, whose legs differ).
pub fn written_stage_halves(topology: &str, steps: u64, up: u64, down: u64) -> Stage {
    match written_stage(topology, steps, up) {
        Stage::LowSide(a) => Stage::LowSide(a.halves(down)),
        Stage::HalfBridge(a) => Stage::HalfBridge(a.halves(down)),
        Stage::HBridge { a, b } => Stage::HBridge {
            a: a.halves(down),
            b: b.halves(down),
        },
    }
}

/// SplitMix64 (Steele, Lea, Flood, *Fast splittable pseudorandom number generators*, OOPSLA
/// 2014): a small, fixed-seed generator so every run draws the same designs.
pub struct Rng(pub u64);

impl Rng {
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }
    /// Log-uniform in [lo, hi).
    pub fn log(&mut self, lo: f64, hi: f64) -> f64 {
        (lo.ln() + (hi.ln() - lo.ln()) * self.unit()).exp()
    }
    pub fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[(self.next_u64() % items.len() as u64) as usize]
    }
    pub fn chance(&mut self, p: f64) -> bool {
        self.unit() < p
    }
}

/// The stage kinds drawn, each with its board modulation text.
pub const TOPOLOGIES: [(&str, &str); 9] = [
    ("low-side", ""),
    ("half-bridge", ""),
    ("h-bridge", "bipolar"),
    ("h-bridge", "unipolar"),
    ("three-phase", "sinusoidal: { zero_sequence: none }"),
    ("three-phase", "sinusoidal: { zero_sequence: min-max }"),
    ("three-phase", "six-step: { chop: high-side }"),
    ("three-phase", "six-step: { chop: low-side }"),
    ("three-phase", "six-step: { chop: complementary }"),
];

/// An invented switch (values of the kind a datasheet gives), scaled by `size`.
pub fn switch_text(r: &mut Rng) -> (String, f64) {
    let v_dss = *r.pick(&[30.0, 40.0, 60.0, 80.0, 100.0, 150.0]);
    let size = r.log(0.3, 3.0);
    let r_ds = 0.004 * (v_dss / 40.0_f64).powf(1.6) / size;
    let q_g = 40e-9 * size;
    let q_gd = q_g * r.range(0.18, 0.35);
    let q_gs = q_g * r.range(0.25, 0.35);
    let c_iss = q_g / r.range(9.0, 13.0);
    let c_oss = c_iss * r.range(0.15, 0.35);
    let c_rss = c_oss * r.range(0.04, 0.12);
    let text = format!(
        r#"switch:
  name: "random switch (invented)"
  v_dss: "{v_dss} V"
  i_d: "{i_d:.1} A"
  r_ds_on: {{ typ: "{r_ds:.6e} ohm", max: "{r_ds_max:.6e} ohm", at_v_gs: "10 V" }}
  r_ds_on_vs_temperature:
    points: [["-40 °C", 0.75], ["25 °C", 1.0], ["125 °C", 1.5], ["175 °C", 1.8]]
  v_th: {{ min: "2.0 V", typ: "3.0 V", max: "4.0 V" }}
  v_plateau: "{v_plt:.2} V"
  q_g: {{ typ: "{q_g:.4e} C", max: "{q_g_max:.4e} C", at_v_gs: "10 V" }}
  q_gs: "{q_gs:.4e} C"
  q_gd: {{ typ: "{q_gd:.4e} C", max: "{q_gd_max:.4e} C" }}
  capacitance: {{ at_v_ds: "{v_cap} V", c_iss: "{c_iss:.4e} F", c_oss: "{c_oss:.4e} F", c_rss: "{c_rss:.4e} F" }}
  r_g_int: {{ typ: "1.2 ohm", max: "2.4 ohm" }}
  body_diode: {{ v_sd: "{v_sd:.2} V", q_rr: {{ typ: "{q_rr:.3e} C", max: "{q_rr_max:.3e} C" }}, t_rr: "40 ns" }}
  v_gs_max: "20 V"
  t_j_max: "175 °C"
  r_th_jc: "0.8 K/W"
  r_th_ja: "45 K/W"
"#,
        i_d = 60.0 * size,
        r_ds_max = r_ds * 1.3,
        v_plt = r.range(3.8, 5.2),
        q_g_max = q_g * 1.3,
        q_gd_max = q_gd * 1.4,
        v_cap = v_dss / 2.0,
        v_sd = r.range(0.7, 1.0),
        q_rr = 30e-9 * size,
        q_rr_max = 50e-9 * size,
    );
    (text, v_dss)
}

/// An invented segmented dead-time table: segment bases and steps of our own.
pub fn segments_text(r: &mut Rng) -> String {
    let step2 = *r.pick(&[2u32, 4]);
    let step3 = *r.pick(&[8u32, 16]);
    format!(
        "segmented:\n        clock_divider: {}\n        segments:\n          - {{ first_code: 0x00, count: 96, base: 0, step: 1 }}\n          - {{ first_code: 0x60, count: 96, base: 48, step: {step2} }}\n          - {{ first_code: 0xC0, count: 64, base: 24, step: {step3} }}",
        r.pick(&[1u32, 2])
    )
}

/// A random board for `topology`/`modulation` with `switch_file`.
pub fn board_text(r: &mut Rng, topology: &str, modulation: &str, three_phase: bool) -> String {
    let clock_mhz = r.range(16.0, 200.0).round();
    let counter_bits = *r.pick(&[16u32, 16, 32]);
    let prescaler = if r.chance(0.6) {
        format!(
            "linear: {{ min: 1, max: {} }}",
            r.pick(&[16u32, 256, 65536])
        )
    } else {
        "ratios: [1, 2, 4, 8, 16, 32, 64]".to_string()
    };
    let needs_centre = three_phase || modulation == "unipolar";
    let alignments = if needs_centre {
        *r.pick(&["[centre]", "[edge, centre]"])
    } else {
        *r.pick(&["[edge]", "[centre]", "[edge, centre]"])
    };
    let dead_time = if topology == "low-side" {
        "none".to_string()
    } else if r.chance(0.5) {
        format!(
            "\n      linear: {{ clock_divider: {}, max_ticks: {} }}",
            r.pick(&[1u32, 2, 4]),
            r.pick(&[255u32, 1023])
        )
    } else {
        format!("\n      {}", segments_text(r))
    };
    let min_pulse = if r.chance(0.8) {
        format!("\n    min_pulse: \"{:.0} ns\"", r.range(0.0, 800.0))
    } else {
        String::new()
    };
    let modulation_line = if modulation.is_empty() {
        String::new()
    } else {
        format!("\n    modulation:\n      {modulation}")
    };
    let freewheel = if topology == "low-side" {
        format!(
            "\n    freewheel_diode: {{ v_f: \"{:.2} V\", r_d: \"20 mohm\", q_rr: \"2 nC\", t_rr: \"10 ns\", i_f: \"20 A\", v_rrm: \"200 V\" }}",
            r.range(0.3, 0.8)
        )
    } else {
        String::new()
    };
    let bootstrap = if topology != "low-side" && r.chance(0.7) {
        format!(
            "\n    high_side:\n      bootstrap: {{ capacitor: \"1 uF\", refresh_time: \"{:.0} ns\", load_current: \"150 uA\" }}",
            r.range(200.0, 2000.0)
        )
    } else if topology != "low-side" {
        "\n    high_side: isolated".to_string()
    } else {
        String::new()
    };
    // A commutation-loop inductance on every third clock value, derived from
    // the clock rather than drawn, so the other draws stay as they were; on
    // even clocks half of it in the source lead, and on other fifth clocks a
    // common-source inductance alone.
    let clock = clock_mhz as u64;
    let loop_line = if clock.is_multiple_of(3) {
        let loop_nh = 2 + clock % 9;
        let source = if clock.is_multiple_of(2) {
            format!(
                "\n    common_source_inductance: \"{:.1} nH\"",
                0.5 * loop_nh as f64
            )
        } else {
            String::new()
        };
        format!("\n    loop_inductance: \"{loop_nh} nH\"{source}")
    } else if clock.is_multiple_of(5) {
        "\n    common_source_inductance: \"1.5 nH\"".to_string()
    } else {
        String::new()
    };
    let sensing = if three_phase {
        format!(
            "\n  current_sensing: {{ settle_time: \"{:.2} us\", sample_time: \"{:.2} us\" }}",
            r.range(0.2, 1.5),
            r.range(0.1, 0.8)
        )
    } else {
        String::new()
    };
    format!(
        r#"board:
  name: "random board (invented)"
  timer:
    clock: "{clock_mhz} MHz"
    counter_bits: {counter_bits}
    prescaler:
      {prescaler}
    alignments: {alignments}
    dead_time: {dead_time}{min_pulse}
    fpu: {fpu}
  stage:
    topology: {topology}{modulation_line}
    switch: switch.yaml{freewheel}{loop_line}
  gate_driver:
    supply: "{v_drv:.1} V"
    source: "{r_src:.2} ohm"
    sink: "{r_snk:.2} ohm"
    r_gate_on: "{r_on:.1} ohm"
    r_gate_off: "{r_off:.1} ohm"
    propagation_delay: "{prop:.0} ns"
    delay_mismatch: "{mis:.0} ns"{bootstrap}
  thermal:
    r_th_ja: "{r_th:.0} K/W"{sensing}
"#,
        fpu = r.chance(0.5),
        v_drv = r.range(10.0, 15.0),
        r_src = r.range(1.0, 5.0),
        r_snk = r.range(0.5, 3.0),
        r_on = r.log(2.0, 40.0),
        r_off = r.log(1.0, 40.0),
        prop = r.range(20.0, 150.0),
        mis = r.range(0.0, 40.0),
        r_th = r.range(15.0, 40.0),
    )
}

/// A random over-current path for half of the designs, drawn from its own generator so the
/// other draws stay as they were: a shunt, an amplifier on three in five, a programmable or a
/// fixed threshold placed about 1.5 to 3 times the rated current, a fault filter and/or a
/// blanking timer (at least one), and the responses. Appended to the board's text.
pub fn overcurrent_text(r: &mut Rng, design: &str, clock_mhz: f64) -> String {
    if !r.chance(0.5) {
        return String::new();
    }
    let rated = design
        .split("rated_current: \"")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse::<f64>().ok())
        .unwrap_or(1.0);
    let shunt = r.log(0.5e-3, 20e-3);
    let power = (4.0 * rated).powi(2) * shunt * 1.5;
    let (gain, amp) = if r.chance(0.6) {
        let g = r.log(5.0, 50.0);
        let off = r.range(0.0, 1.65);
        (
            g,
            format!(
                "\n    amplifier: {{ gain: {g:.3}, gain_tolerance: \"{:.1} %\", offset: \"{off:.3} V\", offset_tolerance: \"{:.1} mV\", settle_time: \"{:.0} ns\" }}",
                r.range(0.5, 2.0),
                r.range(1.0, 10.0),
                r.range(50.0, 1000.0)
            ),
        )
    } else {
        (1.0, String::new())
    };
    let offset = amp
        .split("offset: \"")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse::<f64>().ok())
        .unwrap_or(0.0);
    let at_trip = |k: f64| offset + k * rated * shunt * gain;
    let threshold = if r.chance(0.7) {
        format!(
            "{{ programmable: {{ full_scale: \"{:.4} V\", code_bits: {} }} }}",
            at_trip(3.0) * r.range(1.0, 2.0),
            r.pick(&[6u32, 8, 10])
        )
    } else {
        format!("{{ fixed: \"{:.4} V\" }}", at_trip(r.range(1.5, 3.0)))
    };
    let filter = r.chance(0.7);
    let filter_line = if filter {
        format!(
            "\n    filter: {{ clocks: [\"{:.3} MHz\", \"{:.3} MHz\"], samples: [1, 2, 4, 8, 16] }}",
            clock_mhz,
            clock_mhz / 4.0
        )
    } else {
        String::new()
    };
    let blanking = if !filter || r.chance(0.6) {
        format!(
            "\n    blanking: {{ clock_divider: {}, max_ticks: {} }}",
            r.pick(&[1u32, 2, 4]),
            r.pick(&[255u32, 1023])
        )
    } else {
        String::new()
    };
    let responses = r.pick(&["[cycle-by-cycle]", "[cycle-by-cycle, latched]", "[latched]"]);
    format!(
        "  overcurrent:\n    shunt: {{ resistance: \"{:.4} mohm\", tolerance: \"{:.1} %\", power: \"{power:.3} W\", place: {} }}{amp}\n    comparator:\n      threshold: {threshold}\n      tolerance: \"{:.1} %\"\n      offset: \"{:.1} mV\"\n      delay: \"{:.0} ns\"{filter_line}{blanking}\n    responses: {responses}\n",
        shunt * 1e3,
        r.range(0.5, 2.0),
        r.pick(&["supply-return", "leg", "phase"]),
        r.range(0.5, 3.0),
        r.range(0.5, 10.0),
        r.range(20.0, 300.0)
    )
}

/// A random design on `board.yaml`: supply under the switch rating, a motor whose load is
/// reachable at the lowest supply with room for the dead time.
pub fn design_text(r: &mut Rng, v_dss: f64, three_phase: bool, six_step: bool) -> String {
    let v_nom = v_dss * r.range(0.25, 0.55);
    let (v_min, v_max) = (v_nom * r.range(0.8, 0.95), v_nom * r.range(1.02, 1.15));
    let res = r.log(0.05, 3.0);
    let ind = r.log(60e-6, 3e-3);
    let mut current = r.log(0.5, 15.0).min(0.25 * v_min / res);
    let objective = *r.pick(&["least-loss", "quietest", "coolest-junction"]);
    let audible = *r.pick(&["inaudible", "allowed", "{ inaudible_above: \"16 kHz\" }"]);
    let band = format!(
        "{{ min: \"{:.0} kHz\", max: \"{:.0} kHz\" }}",
        r.range(2.0, 18.0),
        r.range(25.0, 80.0)
    );
    let ripple = if r.chance(0.4) {
        "\n    max_ripple: \"60 %\"".to_string()
    } else {
        String::new()
    };
    let motor = if three_phase {
        // Line-to-line peak back-EMF a fraction of the lowest supply.
        let pole_pairs = *r.pick(&[2u32, 4, 7]);
        let reach = if six_step { 0.7 } else { 0.45 };
        let e_ll = r.range(0.1, reach) * v_min;
        current = current.min(0.08 * v_min / res);
        let ke = r.log(2.0, 20.0);
        let rpm = e_ll / ke * 1000.0;
        // Keep the inductive drop modest: ω_e·L·I below a third of the phase EMF.
        let omega_e = rpm / 60.0 * 2.0 * std::f64::consts::PI * pole_pairs as f64;
        let l = ind.min((e_ll / 3f64.sqrt()) / 3.0 / (omega_e * current));
        // Six-step motors: sinusoidal or trapezoidal back-EMF, half each.
        let shape = if six_step && r.chance(0.5) {
            "\n    back_emf_shape: trapezoidal"
        } else {
            ""
        };
        format!(
            "kind: brushless\n    resistance: \"{res:.4} ohm\"\n    inductance: \"{l:.4e} H\"\n    back_emf_constant: \"{ke:.4} V/krpm\"\n    pole_pairs: {pole_pairs}\n    rated_current: \"{current:.3} A\"\n    operating_speed: \"{rpm:.2} rpm\"{shape}"
        )
    } else {
        let e = r.range(0.0, 0.8) * v_min - current * res;
        let e = e.max(0.05 * v_min);
        let ke = r.log(1.0, 20.0);
        let rpm = e / ke * 1000.0;
        format!(
            "kind: brushed-dc\n    resistance: \"{res:.4} ohm\"\n    inductance: \"{ind:.4e} H\"\n    back_emf_constant: \"{ke:.4} V/krpm\"\n    rated_current: \"{current:.3} A\"\n    operating_speed: \"{rpm:.2} rpm\""
        )
    };
    format!(
        r#"design:
  name: random
  board: board.yaml
  supply: {{ nominal: "{v_nom:.3} V", min: "{v_min:.3} V", max: "{v_max:.3} V" }}
  motor:
    {motor}
  ambient: {{ min: "-10 °C", max: "{t_amb:.0} °C" }}
  constraints:
    audible: {audible}{ripple}
    junction: {{ margin: "20 K" }}
    frequency: {band}
  objective: {objective}
"#,
        t_amb = r.range(25.0, 55.0),
    )
}

pub fn objective(name: &str) -> Objective {
    match name {
        "quietest" => Objective::Quietest,
        "coolest-junction" => Objective::CoolestJunction,
        _ => Objective::LeastLoss,
    }
}

/// Designs per run: `PWMPLAN_RANDOM_DESIGNS` scales both defaults (single-phase 2 000,
/// three-phase 150: a three-phase plan costs about twenty single-phase ones).
pub fn designs_to_run(default: usize) -> usize {
    std::env::var("PWMPLAN_RANDOM_DESIGNS")
        .ok()
        .and_then(|v| v.parse::<usize>().ok())
        .map_or(default, |n| (n * default / 2_000).max(TOPOLOGIES.len()))
}
