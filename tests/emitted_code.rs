//! The emitted code compiles and computes what it promises.
//!
//! For every golden case the real binary plans the case into a temporary
//! folder; then:
//!
//! * C, host: the header is included (twice, for the include guard) by a
//!   test program built with `cc -std=c99 -Wall -Wextra -Werror -pedantic`
//!   and run. It checks the macros against `plan.json` and against the
//!   conventions `plan.json` states (duty steps and period register from the
//!   alignment, frequency = clock / (divider × period ticks)), and the
//!   duty → compare conversion against expectations computed here in `f64`
//!   from the closed form `round(q16 × DUTY_STEPS / 65536)` with 0 kept as
//!   off, then clamped to `COMPARE_MIN..=COMPARE_MAX`; plus a sweep of every
//!   q16 for monotonicity and range. It exits non-zero on a wrong value.
//! * C, cross: the header compiles for a 32-bit embedded target
//!   (`arm-none-eabi-gcc -mthumb -mcpu=cortex-m4 -Os -Werror -Wall -Wextra
//!   -c`, also `-std=c99 -pedantic`) in a one-line unit that calls every
//!   function.
//! * Rust, host: one temporary cargo project holds every case's module and
//!   depends on `embedded-hal = "1.0"` (pinned by `tests/rust_host/Cargo.lock`);
//!   its generated tests check the constants against `plan.json` and drive
//!   `apply` through a recording fake `SetDutyCycle` with `max_duty_cycle`
//!   1000 and 65535, expecting `round(counts × max / DUTY_STEPS)` kept within the scaled compare limits.
//! * Rust, cross: the same modules build in a `#![no_std]` library for
//!   `thumbv7em-none-eabihf` under `#![deny(warnings)]`.
//!
//! A missing tool fails the test when `CI=true` and otherwise prints
//! `skipped: <tool> not installed` and passes. Cargo builds share a target
//! folder under the system temporary folder, so only the first run compiles
//! `embedded-hal`.

use crate::common;

use std::fmt::Write as _;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

use common::{CASES, Case, describe, generate, stem};
use pwmplan::physics::three_phase::dc_link::{self, DcLinkTiming, ShiftedCompares};
use pwmplan::physics::three_phase::{ZeroSequence, leg_duties};

/// The compare value `compare_from_q16` must give for 100 % and above.
const Q16_ONE: u64 = 65536;

/// A current loop's SI figures and scalings from `plan.json` (`current_loop`, `sampling`).
#[derive(Clone, Copy)]
struct LoopFacts {
    kp_v_per_a: f64,
    ki_v_per_a_s: f64,
    period_s: f64,
    counts_per_volt: f64,
    amps_per_code: f64,
    zero_code: f64,
    sign: f64,
    zero_compare: f64,
    lo: f64,
    hi: f64,
}

impl LoopFacts {
    fn read(json: &serde_json::Value) -> Option<LoopFacts> {
        let cl = json.get("current_loop")?;
        let fp = cl.get("fixed_point")?;
        let sm = json.get("sampling")?;
        let f = |v: &serde_json::Value, k: &str| v[k].as_f64().unwrap_or_else(|| panic!("{k}"));
        let steps = f(&json["timer"], "duty_steps");
        Some(LoopFacts {
            kp_v_per_a: f(cl, "kp_v_per_a"),
            ki_v_per_a_s: f(cl, "ki_v_per_a_s"),
            period_s: 1.0 / f(cl, "rate_hz"),
            counts_per_volt: f(cl, "counts_per_volt"),
            amps_per_code: f(fp, "amps_per_code"),
            zero_code: f(fp, "zero_code"),
            sign: f(sm, "sign"),
            zero_compare: (f(cl, "zero_volt_duty") * steps).round(),
            lo: f(&json["pwm"], "compare_min").max(f(sm, "compare_min")),
            hi: f(&json["pwm"], "compare_max").min(f(sm, "compare_max")),
        })
    }

    /// The compares the loop must write for `(reference code, ADC code)` steps, worked in
    /// SI units from the plan's figures (the helper's update law: the integral includes the
    /// present error and holds while the output is clamped).
    fn expected(&self, steps: &[(i64, i64)]) -> Vec<f64> {
        let mut integral_v = 0.0;
        steps
            .iter()
            .map(|&(r, adc)| {
                let e_a =
                    (r as f64 - self.sign * (adc as f64 - self.zero_code)) * self.amps_per_code;
                let next = integral_v + self.ki_v_per_a_s * self.period_s * e_a;
                let counts =
                    self.zero_compare + (self.kp_v_per_a * e_a + next) * self.counts_per_volt;
                if counts > self.hi {
                    if e_a <= 0.0 {
                        integral_v = next;
                    }
                    self.hi
                } else if counts < self.lo {
                    if e_a >= 0.0 {
                        integral_v = next;
                    }
                    self.lo
                } else {
                    integral_v = next;
                    counts
                }
            })
            .collect()
    }
}

/// ADC codes through the loop: a reference step followed in, then a reference far beyond
/// the output's reach (the output clamps, the integral holds) and back.
const LOOP_STEPS: [(i64, i64); 12] = [
    (300, 0),
    (300, 60),
    (300, 150),
    (300, 240),
    (300, 290),
    (300, 310),
    (300, 300),
    (4000, 300),
    (4000, 300),
    (4000, 320),
    (300, 320),
    (300, 300),
];

/// The numbers of one plan, read from its `plan.json`.
struct Facts {
    stem: String,
    macro_prefix: String,
    clock_hz: u64,
    divider: u64,
    divider_register: u64,
    period_ticks: u64,
    period_register: u64,
    duty_steps: u64,
    centre: bool,
    dead_time_ticks: u64,
    dead_time_code: u64,
    compare_min: u64,
    compare_max: u64,
    fpu: bool,
    /// Three-phase: (ADC trigger compare, sampling compare max) from
    /// `plan.json` `three_phase.sampling`.
    three_phase: Option<(u64, u64)>,
    /// Three-phase with one DC-link shunt: its reading chain from `plan.json`.
    dc_link: Option<DcLinkTiming>,
    /// A brushed current loop with integer gains, from `plan.json`.
    current_loop: Option<LoopFacts>,
    /// The dead-time compensation in counts (rounded; 0 without dead time).
    dead_time_comp: u64,
    /// A brushed plan's sampling and loop constants (name without prefix, value), from
    /// `plan.json` `sampling` and `current_loop`.
    loop_consts: Vec<(&'static str, u64)>,
    /// Sensorless six-step: the back-EMF constants (name without prefix, value) and the
    /// off-time threshold in signed millivolts, from `plan.json` `three_phase.back_emf`.
    back_emf: Option<(Vec<(&'static str, u64)>, i64)>,
    header: String,
    module: String,
}

/// The back-EMF constants `plan.json` implies (`three_phase.back_emf`), or `None` without
/// sensorless six-step.
fn back_emf_consts(json: &serde_json::Value) -> Option<(Vec<(&'static str, u64)>, i64)> {
    let b = json.get("three_phase")?.get("back_emf")?;
    let up = |k: &str| u64::from(b[k] == "up");
    let consts = vec![
        ("BEMF_ON_ADC_TRIGGER_COUNT", json_u64(b, "on_trigger_count")),
        ("BEMF_ON_ADC_TRIGGER_UP", up("on_trigger_direction")),
        ("BEMF_ON_COUNTS_MIN", json_u64(b, "on_counts_min")),
        (
            "BEMF_OFF_ADC_TRIGGER_COUNT",
            json_u64(b, "off_trigger_count"),
        ),
        ("BEMF_OFF_ADC_TRIGGER_UP", up("off_trigger_direction")),
        ("BEMF_OFF_COUNTS_MAX", json_u64(b, "off_counts_max")),
        (
            "BEMF_OFF_THRESHOLD_AT_BUS",
            u64::from(b["off_threshold_rail"] == "positive"),
        ),
        ("BEMF_BLANKING_PERIODS", json_u64(b, "blanking_periods")),
        (
            "BEMF_COMMUTATION_DELAY_DEG",
            b["zero_crossing_to_commutation_deg"]
                .as_f64()
                .expect("zero_crossing_to_commutation_deg")
                .round() as u64,
        ),
    ];
    let mv = (1e3
        * b["off_threshold_offset_v"]
            .as_f64()
            .expect("off_threshold_offset_v"))
    .round() as i64;
    Some((consts, mv))
}

fn json_u64(v: &serde_json::Value, path: &str) -> u64 {
    let mut at = v;
    for key in path.split('.') {
        at = &at[key];
    }
    match at {
        serde_json::Value::Null => 0,
        other => other
            .as_u64()
            .or_else(|| {
                other
                    .as_f64()
                    .filter(|f| f.fract() == 0.0)
                    .map(|f| f as u64)
            })
            .unwrap_or_else(|| panic!("plan.json {path} is not a whole number: {other}")),
    }
}

/// The sampling and loop constants a brushed plan's `plan.json` implies.
fn loop_consts(json: &serde_json::Value) -> Vec<(&'static str, u64)> {
    let mut out = Vec::new();
    let sm = &json["sampling"];
    if sm.is_object() {
        out.push((
            "SAMPLING_COMPARE_MIN",
            json_u64(json, "sampling.compare_min"),
        ));
        out.push((
            "SAMPLING_COMPARE_MAX",
            json_u64(json, "sampling.compare_max"),
        ));
        if sm["trigger"] == "fixed" {
            out.push((
                "ADC_TRIGGER_COUNT",
                json_u64(json, "sampling.trigger_count"),
            ));
            let up = sm["counting_up"].as_bool().expect("sampling.counting_up");
            out.push(("ADC_TRIGGER_COUNTING_UP", u64::from(up)));
        }
        if sm["top_trigger_count"].is_u64() {
            out.push((
                "ADC_TRIGGER_TOP_COUNT",
                json_u64(json, "sampling.top_trigger_count"),
            ));
            let up = sm["top_counting_up"].as_bool().expect("top_counting_up");
            out.push(("ADC_TRIGGER_TOP_COUNTING_UP", u64::from(up)));
        }
    }
    let cl = &json["current_loop"];
    if cl.is_object() {
        out.push((
            "LOOP_UPDATE_DIVIDER",
            json_u64(json, "current_loop.update_divider"),
        ));
        out.push((
            "LOOP_UPDATES_PER_PERIOD",
            json_u64(json, "current_loop.updates_per_pwm_period"),
        ));
        if cl["update_extremes"].is_u64() {
            out.push((
                "LOOP_UPDATE_EXTREMES",
                json_u64(json, "current_loop.update_extremes"),
            ));
        }
    }
    out
}

/// Plan a case and read its facts; the temporary folder lives as long as
/// the returned guard.
fn facts(case: &Case) -> (tempfile::TempDir, Facts) {
    let (tmp, files) = generate(case);
    let stem = stem(case);
    let text = |name: &str| {
        String::from_utf8(
            files
                .get(name)
                .unwrap_or_else(|| panic!("{}: {name} not generated", case.name))
                .clone(),
        )
        .expect("UTF-8")
    };
    let json: serde_json::Value =
        serde_json::from_str(&text("plan.json")).expect("plan.json parses");
    let fpu = json["inputs"]
        .as_array()
        .expect("plan.json inputs")
        .iter()
        .find_map(|i| i["fields"]["board.timer.fpu"].as_str())
        .expect("plan.json records board.timer.fpu")
        == "true";
    let f = Facts {
        macro_prefix: stem.to_uppercase(),
        clock_hz: json["timer"]["clock_hz"]
            .as_f64()
            .expect("clock_hz")
            .round() as u64,
        divider: json_u64(&json, "timer.divider"),
        divider_register: json_u64(&json, "timer.divider_register"),
        period_ticks: json_u64(&json, "timer.period_ticks"),
        period_register: json_u64(&json, "timer.period_register"),
        duty_steps: json_u64(&json, "timer.duty_steps"),
        centre: json["pwm"]["alignment"] == "centre",
        dead_time_ticks: json_u64(&json, "timer.dead_time_ticks"),
        dead_time_code: json_u64(&json, "timer.dead_time_code"),
        compare_min: json_u64(&json, "pwm.compare_min"),
        compare_max: json_u64(&json, "pwm.compare_max"),
        fpu,
        three_phase: json
            .get("three_phase")
            .filter(|tp| tp["sampling"].is_object())
            .map(|tp| {
                (
                    json_u64(tp, "sampling.trigger_compare"),
                    json_u64(tp, "sampling.max_high_side_compare"),
                )
            }),
        dc_link: json
            .get("three_phase")
            .filter(|tp| tp["dc_link"].is_object())
            .map(|tp| DcLinkTiming {
                lead_counts: json_u64(tp, "dc_link.lead_counts"),
                min_vector_counts: json_u64(tp, "dc_link.min_vector_counts"),
            }),
        current_loop: LoopFacts::read(&json),
        dead_time_comp: json["pwm"]["dead_time_comp_counts"]
            .as_f64()
            .expect("pwm.dead_time_comp_counts")
            .round() as u64,
        loop_consts: loop_consts(&json),
        back_emf: back_emf_consts(&json),
        header: text(&format!("{stem}.h")),
        module: text(&format!("{stem}.rs")),
        stem,
    };
    (tmp, f)
}

impl Facts {
    /// Closed-form compare value of a q16 duty: 0 stays off, 100 % and
    /// above give `COMPARE_MAX`, else the nearest count clamped to the range.
    fn compare_q16(&self, q16: u64) -> u64 {
        if q16 >= Q16_ONE {
            return self.compare_max;
        }
        let counts = (q16 as f64 * self.duty_steps as f64 / Q16_ONE as f64).round() as u64;
        self.clamp(counts)
    }

    fn clamp(&self, counts: u64) -> u64 {
        if counts == 0 {
            0
        } else {
            counts.clamp(self.compare_min, self.compare_max)
        }
    }

    fn compare_permille(&self, permille: u64) -> u64 {
        if permille >= 1000 {
            return self.compare_max;
        }
        self.compare_q16((permille as f64 * Q16_ONE as f64 / 1000.0).round() as u64)
    }

    /// round(DUTY_STEPS / 2), clamped: the compare value of 50 %.
    fn mid(&self) -> u64 {
        self.clamp((self.duty_steps as f64 / 2.0).round() as u64)
    }

    /// The smallest q16 that rounds to one count or more: a tiny duty that
    /// must come out as `COMPARE_MIN`.
    fn tiny_q16(&self) -> u64 {
        Q16_ONE.div_ceil(self.duty_steps)
    }

    /// `plan.json` agrees with the conventions it states itself.
    fn check_conventions(&self, case: &str) {
        let (steps, reg) = if self.centre {
            (self.period_ticks / 2, self.period_ticks / 2)
        } else {
            (self.period_ticks, self.period_ticks - 1)
        };
        assert_eq!(self.duty_steps, steps, "{case}: duty_steps convention");
        assert_eq!(
            self.period_register, reg,
            "{case}: period_register convention"
        );
        assert!(
            1 <= self.compare_min
                && self.compare_min < self.compare_max
                && self.compare_max <= self.duty_steps,
            "{case}: compare range {}..={} within 1..={}",
            self.compare_min,
            self.compare_max,
            self.duty_steps
        );
        assert!(
            self.tiny_q16() > 0 && self.compare_min > 1,
            "{case}: the tiny-duty check needs COMPARE_MIN > 1"
        );
    }
}

fn ci() -> bool {
    std::env::var("CI").is_ok_and(|v| v == "true")
}

/// Whether `tool` runs; when it does not: panic under CI=true, else print
/// the skip note.
fn have(tool: &str, probe: &[&str]) -> bool {
    let ok = Command::new(tool)
        .args(probe)
        .output()
        .is_ok_and(|o| o.status.success());
    if !ok {
        assert!(
            !ci(),
            "{tool} is not installed, and CI=true requires it (see .ci/run)"
        );
        eprintln!("skipped: {tool} not installed");
    }
    ok
}

/// Run a command to success, or panic with its output.
fn run_ok(cmd: &mut Command, what: &str) {
    let t = Instant::now();
    let o = cmd
        .output()
        .unwrap_or_else(|e| panic!("{what}: cannot start: {e}"));
    assert!(o.status.success(), "{what} failed\n{}", describe(&o));
    eprintln!("{what}: {:.1} s", t.elapsed().as_secs_f64());
}

// ---------------------------------------------------------------- C, host

/// The host test program of one case.
/// Compare triples a DC-link helper is checked on, within the compare limits: a sweep of
/// angles at several modulation indices (min-max references) and the corners (every leg at
/// either limit, ties).
fn dc_link_inputs(f: &Facts, t: &DcLinkTiming) -> Vec<[u64; 3]> {
    let p = f.duty_steps as f64;
    let (lo, hi) = (f.compare_min, f.compare_max);
    let mut out: Vec<[u64; 3]> = [0.0, 0.05, 0.4, 0.9, 1.15]
        .iter()
        .flat_map(|&m| {
            (0..360).step_by(7).map(move |deg| {
                leg_duties(m, ZeroSequence::MinMax, f64::from(deg).to_radians())
                    .map(|d| ((d * p).round() as u64).clamp(lo, hi))
            })
        })
        .collect();
    out.extend([
        [lo, lo, lo],
        [hi, hi, hi],
        [hi, hi - 1, lo],
        [hi, lo, lo],
        [lo, hi, hi],
    ]);
    // Vectors one count either side of the need, about the middle.
    let (h, n) = (f.duty_steps / 2, t.min_vector_counts);
    out.extend([
        [h + n - 1, h, h - n],
        [h + n, h, h - n + 1],
        [h + n, h, h - n],
        [h - n, h + n + 1, h],
    ]);
    out
}

/// The DC-link helper's expected output (the library's rule, `dc_link::shift_compares`).
fn dc_link_expected(f: &Facts, t: &DcLinkTiming, c: [u64; 3]) -> Option<ShiftedCompares> {
    dc_link::shift_compares(c, f.duty_steps, t)
}

/// The C host program's checks of the DC-link constants and helper.
fn c_dc_link_checks(s: &mut String, f: &Facts, t: &DcLinkTiming) {
    let (m, c) = (&f.macro_prefix, &f.stem);
    let ty = if f.header.contains(&format!("uint64_t {c}_compare_from_q16")) {
        "uint64_t"
    } else {
        "uint32_t"
    };
    for (name, want) in [
        ("DC_LINK_MIN_VECTOR_COUNTS", t.min_vector_counts),
        ("DC_LINK_TRIGGER_LEAD", t.lead_counts),
    ] {
        let _ = writeln!(
            s,
            "    expect(\"{m}_{name} (plan.json)\", (unsigned long long){m}_{name}, {want}ULL);"
        );
    }
    for (k, input) in dc_link_inputs(f, t).into_iter().enumerate() {
        let want = dc_link_expected(f, t, input);
        let _ = writeln!(
            s,
            "    {{\n        const {ty} c[3] = {{ {}U, {}U, {}U }};\n        {ty} up[3], dn[3], tr[2];\n        unsigned int lg[2];\n        int sg[2];\n        int ok = {c}_dc_link_compares(c, up, dn, tr, lg, sg);\n        expect(\"dc_link {k} fits\", (unsigned long long)ok, {}ULL);",
            input[0],
            input[1],
            input[2],
            u64::from(want.is_some())
        );
        let (up, down) = want.map_or((input, input), |w| (w.up, w.down));
        for j in 0..3 {
            let _ = writeln!(
                s,
                "        expect(\"dc_link {k} up {j}\", up[{j}], {}ULL);\n        expect(\"dc_link {k} down {j}\", dn[{j}], {}ULL);",
                up[j], down[j]
            );
        }
        if let Some(w) = want {
            for r in 0..2 {
                let _ = writeln!(
                    s,
                    "        expect(\"dc_link {k} trigger {r}\", tr[{r}], {}ULL);\n        expect(\"dc_link {k} leg {r}\", lg[{r}], {}ULL);\n        expect(\"dc_link {k} sign {r}\", (unsigned long long)(sg[{r}] + 1), {}ULL);",
                    w.triggers[r],
                    w.legs[r],
                    i64::from(w.signs[r]) + 1
                );
            }
        }
        s.push_str("    }\n");
    }
}

/// The Rust host tests' checks of the DC-link constants and helper.
fn rust_dc_link_checks(f: &Facts) -> String {
    let Some(t) = &f.dc_link else {
        return String::new();
    };
    let mut s = format!(
        "        assert_eq!(DC_LINK_MIN_VECTOR_COUNTS, {});\n        assert_eq!(DC_LINK_TRIGGER_LEAD, {});\n",
        t.min_vector_counts, t.lead_counts
    );
    for c in dc_link_inputs(f, t) {
        let want = match dc_link_expected(f, t, c) {
            Some(w) => format!(
                "Some(DcLinkPeriod {{ up: {:?}, down: {:?}, triggers: {:?}, legs: {:?}, signs: {:?} }})",
                w.up, w.down, w.triggers, w.legs, w.signs
            ),
            None => "None".into(),
        };
        let _ = writeln!(
            s,
            "        assert_eq!(dc_link_compares([Duty::from_counts({}), Duty::from_counts({}), Duty::from_counts({})]), {want});",
            c[0], c[1], c[2]
        );
    }
    s
}

fn c_host_program(f: &Facts) -> String {
    let m = &f.macro_prefix;
    let c = &f.stem;
    let mut s = String::new();
    s.push_str("#include <math.h>\n#include <stdio.h>\n#include <stdint.h>\n");
    // Twice: the include guard must make the second a no-op.
    let _ = writeln!(s, "#include \"{c}.h\"\n#include \"{c}.h\"\n");
    s.push_str(
        "static int failures = 0;\n\n\
         static void expect(const char *what, unsigned long long got, unsigned long long want)\n\
         {\n    if (got != want) {\n        printf(\"FAIL %s: got %llu, want %llu\\n\", what, got, want);\n        failures++;\n    }\n}\n\n\
         int main(void)\n{\n    uint32_t q;\n    unsigned long long prev = 0ULL;\n",
    );
    let consts = [
        ("CLOCK_HZ", f.clock_hz),
        ("DIVIDER", f.divider),
        ("DIVIDER_REG", f.divider_register),
        ("PERIOD_TICKS", f.period_ticks),
        ("PERIOD_REG", f.period_register),
        ("CENTRE_ALIGNED", u64::from(f.centre)),
        ("DUTY_STEPS", f.duty_steps),
        ("DEAD_TIME_TICKS", f.dead_time_ticks),
        ("DEAD_TIME_CODE", f.dead_time_code),
        ("COMPARE_MIN", f.compare_min),
        ("COMPARE_MAX", f.compare_max),
    ];
    for (name, want) in consts.into_iter().chain(f.loop_consts.iter().copied()) {
        let _ = writeln!(
            s,
            "    expect(\"{m}_{name} (plan.json)\", (unsigned long long){m}_{name}, {want}ULL);"
        );
    }
    if let Some((trigger, sampling_max)) = f.three_phase {
        // The trigger lies within the up-down period (0..=PERIOD_REG) and
        // the sampling limit within the compare range.
        assert!(
            trigger <= f.period_register && sampling_max <= f.duty_steps,
            "{c}: trigger {trigger} or sampling limit {sampling_max} outside the period"
        );
        for (name, want) in [
            ("CHANNELS", 3),
            ("ADC_TRIGGER_COMPARE", trigger),
            ("SAMPLING_COMPARE_MAX", sampling_max),
        ] {
            let _ = writeln!(
                s,
                "    expect(\"{m}_{name} (plan.json)\", (unsigned long long){m}_{name}, {want}ULL);"
            );
        }
        // The three-channel helper gives each channel the one-channel value.
        let duties = [0u64, 32768, 65536];
        let _ = writeln!(
            s,
            "    {{\n        const uint32_t d[3] = {{ {}UL, {}UL, {}UL }};\n        {} cmp[3];\n        {c}_compare_abc_from_q16(d, cmp);",
            duties[0],
            duties[1],
            duties[2],
            if f.header.contains(&format!("uint64_t {c}_compare_from_q16")) {
                "uint64_t"
            } else {
                "uint32_t"
            }
        );
        for (k, q) in duties.iter().enumerate() {
            let _ = writeln!(
                s,
                "        expect(\"{c}_compare_abc_from_q16 channel {k}\", cmp[{k}], {}ULL);",
                f.compare_q16(*q)
            );
        }
        s.push_str("    }\n");
    }
    if let Some(t) = &f.dc_link {
        c_dc_link_checks(&mut s, f, t);
    }
    if let Some((consts, mv)) = &f.back_emf {
        for (name, want) in consts {
            let _ = writeln!(
                s,
                "    expect(\"{m}_{name} (plan.json)\", (unsigned long long){m}_{name}, {want}ULL);"
            );
        }
        // Signed: compared as offsets from 1 000 000 mV.
        let _ = writeln!(
            s,
            "    expect(\"{m}_BEMF_OFF_THRESHOLD_MV (plan.json)\", (unsigned long long)(1000000LL + {m}_BEMF_OFF_THRESHOLD_MV), {}ULL);",
            1_000_000 + mv
        );
    }
    // The frequency in mHz from the stated convention, in integers.
    let _ = writeln!(
        s,
        "    expect(\"{m}_FREQUENCY_MILLIHZ = clock / (divider * period)\", {m}_FREQUENCY_MILLIHZ,\n           \
         ((unsigned long long){m}_CLOCK_HZ * 1000ULL + (unsigned long long){m}_DIVIDER * {m}_PERIOD_TICKS / 2ULL)\n           \
         / ((unsigned long long){m}_DIVIDER * {m}_PERIOD_TICKS));"
    );
    let mut q16s = vec![
        0,
        f.tiny_q16(),
        f.tiny_q16() * 3,
        16384,
        32768,
        49152,
        65500,
        65535,
        65536,
        65537,
        100_000,
        u64::from(u32::MAX),
    ];
    q16s.dedup();
    for q in q16s {
        let _ = writeln!(
            s,
            "    expect(\"{c}_compare_from_q16({q})\", {c}_compare_from_q16({q}UL), {}ULL);",
            f.compare_q16(q)
        );
    }
    // The named points of the contract, spelled out.
    let named = [
        ("0 -> 0", "0UL".to_string(), 0),
        ("65536 -> COMPARE_MAX", "65536UL".into(), f.compare_max),
        ("32768 -> round(DUTY_STEPS/2)", "32768UL".into(), f.mid()),
        (
            "tiny -> COMPARE_MIN",
            format!("{}UL", f.tiny_q16()),
            f.compare_min,
        ),
    ];
    for (what, arg, want) in named {
        let _ = writeln!(
            s,
            "    expect(\"q16 {what}\", {c}_compare_from_q16({arg}), {want}ULL);"
        );
    }
    for p in [0u64, 1, 500, 999, 1000, 1500] {
        let _ = writeln!(
            s,
            "    expect(\"{c}_compare_from_permille({p})\", {c}_compare_from_permille({p}UL), {}ULL);",
            f.compare_permille(p)
        );
    }
    if f.fpu {
        for (arg, want) in [
            ("0.0f", 0),
            ("-0.25f", 0),
            ("NAN", 0),
            ("0.5f", f.mid()),
            // Issue 14, defect 9: a tiny non-zero request is a pulse.
            ("1e-9f", f.compare_min),
            ("1e-6f", f.compare_min),
            ("1.0f", f.compare_max),
            ("2.0f", f.compare_max),
        ] {
            let _ = writeln!(
                s,
                "    expect(\"{c}_compare_from_fraction({arg})\", {c}_compare_from_fraction({arg}), {want}ULL);"
            );
        }
    }
    if f.header.contains(&format!("{c}_unsampled_leg(")) {
        // The leg not to sample: the largest compare (the shortest low-side time), the
        // first on a tie.
        let triples: [([u64; 3], u64); 6] = [
            ([10, 20, 30], 2),
            ([30, 20, 10], 0),
            ([10, 30, 20], 1),
            ([20, 20, 10], 0),
            ([5, 9, 9], 1),
            ([7, 7, 7], 0),
        ];
        let ty = if f.header.contains(&format!("uint64_t {c}_compare_from_q16")) {
            "uint64_t"
        } else {
            "uint32_t"
        };
        for (t, want) in triples {
            let _ = writeln!(
                s,
                "    {{\n        const {ty} cmp[3] = {{ {}U, {}U, {}U }};\n        expect(\"{c}_unsampled_leg({t:?})\", (unsigned long long){c}_unsampled_leg(cmp), {want}ULL);\n    }}",
                t[0], t[1], t[2]
            );
        }
    }
    if f.dead_time_ticks > 0 {
        // The dead-time compensation: the written counts added for current out of the leg,
        // taken away for current into it, within the compare limits; off stays off.
        let mid = f.mid();
        let k = f.dead_time_comp;
        let cases = [
            (mid, 1, mid + k),
            (mid, 0, mid - k),
            (0, 1, 0),
            (f.compare_max, 1, f.compare_max),
            (f.compare_min, 0, f.compare_min),
        ];
        for (c_in, out, want) in cases {
            let _ = writeln!(
                s,
                "    expect(\"{c}_compare_compensated({c_in}, {out})\", (unsigned long long){c}_compare_compensated({c_in}U, {out}), {want}ULL);"
            );
        }
        let _ = writeln!(
            s,
            "    expect(\"{m}_DEAD_TIME_COMP_COUNTS (plan.json)\", (unsigned long long){m}_DEAD_TIME_COMP_COUNTS, {k}ULL);"
        );
    }
    if let Some(lf) = f.current_loop {
        // ADC code in, compare out: the integer helper against the plan's SI figures,
        // within one count (the gains are rounded to whole numbers at the plan's Q format).
        let _ = writeln!(s, "    {{\n        {c}_loop_t st = {{ 0 }};");
        for (k, (&(r, adc), want)) in LOOP_STEPS.iter().zip(lf.expected(&LOOP_STEPS)).enumerate() {
            let _ = writeln!(
                s,
                "        {{\n            long long got = (long long){c}_loop_step(&st, {r}L, {adc}L);\n            \
                 if (got < {lo}LL || got > {hi}LL) {{\n                printf(\"FAIL loop step {k}: %lld, want {want:.3}\\n\", got);\n                failures++;\n            }}\n        }}",
                lo = (want - 1.0).ceil() as i64,
                hi = (want + 1.0).floor() as i64,
            );
        }
        s.push_str("    }\n");
    }
    // Every q16: never decreasing, and 0 or within the allowed range.
    let _ = writeln!(
        s,
        "    for (q = 0UL; q <= 65536UL; q++) {{\n        \
         unsigned long long v = {c}_compare_from_q16(q);\n        \
         if (v < prev || (v != 0ULL && (v < {m}_COMPARE_MIN || v > {m}_COMPARE_MAX))) {{\n            \
         printf(\"FAIL sweep at q16 %lu: %llu after %llu\\n\", (unsigned long)q, v, prev);\n            \
         failures++;\n            break;\n        }}\n        prev = v;\n    }}"
    );
    s.push_str("    if (failures == 0) {\n        printf(\"ok\\n\");\n    }\n    return failures == 0 ? 0 : 1;\n}\n");
    s
}

fn c_host(case: &Case) {
    if !have("cc", &["--version"]) {
        return;
    }
    let (tmp, f) = facts(case);
    f.check_conventions(case.name);
    assert_eq!(
        f.header
            .contains(&format!("{}_compare_from_fraction(", f.stem)),
        f.fpu,
        "{}: the fraction helper is emitted exactly when the board has an FPU",
        case.name
    );
    let out = tmp.path().join("out");
    let src = tmp.path().join("host_test.c");
    let exe = tmp.path().join("host_test");
    fs::write(&src, c_host_program(&f)).expect("write host_test.c");
    run_ok(
        Command::new("cc")
            .args(["-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic", "-I"])
            .arg(&out)
            .arg("-o")
            .arg(&exe)
            .arg(&src),
        &format!("{}: cc host_test.c", case.name),
    );
    let o = Command::new(&exe).output().expect("run host_test");
    assert!(
        o.status.success() && String::from_utf8_lossy(&o.stdout).trim() == "ok",
        "{}: the emitted C gives wrong values\n{}\nprogram:\n{}",
        case.name,
        describe(&o),
        c_host_program(&f)
    );
}

#[test]
fn c_host_belt_feeder() {
    c_host(common::case("belt-feeder"));
}

#[test]
fn c_host_vent_fan() {
    c_host(common::case("vent-fan"));
}

#[test]
fn c_host_winch() {
    c_host(common::case("winch"));
}

#[test]
fn c_host_pump_bldc() {
    c_host(common::case("pump-bldc"));
}

#[test]
fn c_host_pump_dc_link() {
    c_host(common::case("pump-dc-link"));
}

#[test]
fn c_host_pump_sensorless() {
    c_host(common::case("pump-sensorless"));
}

#[test]
fn c_host_conveyor_centre() {
    c_host(common::case("conveyor-centre"));
}

/// The header's own comment promises "a request between 0 and the minimum
/// pulse gives COMPARE_MIN"; the smallest such request, q16 = 1, rounds to 0
/// counts and comes out as 0 (off).
#[test]
fn c_smallest_nonzero_request_gives_compare_min() {
    if !have("cc", &["--version"]) {
        return;
    }
    for case in CASES {
        let (tmp, f) = facts(case);
        let src = tmp.path().join("smallest.c");
        let exe = tmp.path().join("smallest");
        fs::write(
            &src,
            format!(
                "#include <stdio.h>\n#include \"{c}.h\"\nint main(void)\n{{\n    unsigned long long v = {c}_compare_from_q16(1UL);\n    printf(\"%llu\\n\", v);\n    return v == {m}_COMPARE_MIN ? 0 : 1;\n}}\n",
                c = f.stem,
                m = f.macro_prefix
            ),
        )
        .expect("write");
        run_ok(
            Command::new("cc")
                .args(["-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic", "-I"])
                .arg(tmp.path().join("out"))
                .arg("-o")
                .arg(&exe)
                .arg(&src),
            "cc smallest.c",
        );
        let o = Command::new(&exe).output().expect("run");
        assert!(
            o.status.success(),
            "{}: compare_from_q16(1) = {} (want COMPARE_MIN = {})",
            case.name,
            String::from_utf8_lossy(&o.stdout).trim(),
            f.compare_min
        );
    }
}

// --------------------------------------------------------------- C, cross

const ARM_GCC: &str = "arm-none-eabi-gcc";
const ARM_FLAGS: &[&str] = &[
    "-mthumb",
    "-mcpu=cortex-m4",
    "-Os",
    "-Werror",
    "-Wall",
    "-Wextra",
    "-std=c99",
    "-pedantic",
    "-c",
];

#[test]
fn c_header_cross_compiles() {
    if !have(ARM_GCC, &["--version"]) {
        return;
    }
    for case in CASES {
        let (tmp, f) = facts(case);
        let c = &f.stem;
        let fraction = if f.fpu {
            format!(" + {c}_compare_from_fraction((float)d / 65536.0f)")
        } else {
            String::new()
        };
        let src = tmp.path().join("use.c");
        let abc = if f.three_phase.is_some() {
            format!(
                "void use_abc_{c}(const uint32_t d[3], {t} out[3]) {{ {c}_compare_abc_from_q16(d, out); }}\n",
                t = if f.header.contains(&format!("uint64_t {c}_compare_from_q16")) {
                    "uint64_t"
                } else {
                    "uint32_t"
                }
            )
        } else {
            String::new()
        };
        fs::write(
            &src,
            format!(
                "#include \"{c}.h\"\nunsigned long use_{c}(uint32_t d) {{ return (unsigned long)({c}_compare_from_q16(d) + {c}_compare_from_permille(d){fraction}); }}\n{abc}"
            ),
        )
        .expect("write use.c");
        let obj = tmp.path().join("use.o");
        run_ok(
            Command::new(ARM_GCC)
                .args(ARM_FLAGS)
                .arg("-I")
                .arg(tmp.path().join("out"))
                .arg("-o")
                .arg(&obj)
                .arg(&src),
            &format!("{}: {ARM_GCC} use.c", case.name),
        );
        assert!(obj.is_file(), "{}: no object written", case.name);
        // Issue 14, defect 11: no helper calls pull in a 64-bit division
        // (the permille conversion fits 32 bits).
        if have("arm-none-eabi-nm", &["--version"]) {
            let o = Command::new("arm-none-eabi-nm")
                .arg(&obj)
                .output()
                .expect("run arm-none-eabi-nm");
            assert!(
                o.status.success(),
                "{}: nm failed\n{}",
                case.name,
                describe(&o)
            );
            let symbols = String::from_utf8_lossy(&o.stdout);
            for helper in [
                "__aeabi_uldivmod",
                "__aeabi_ldivmod",
                "__udivdi3",
                "__divdi3",
            ] {
                assert!(
                    !symbols.contains(helper),
                    "{}: the emitted C calls the 64-bit division helper {helper}:\n{symbols}",
                    case.name
                );
            }
        }
    }
}

// ------------------------------------------------------------------- Rust

/// Cargo of the running toolchain.
fn cargo() -> String {
    std::env::var("CARGO").unwrap_or_else(|_| "cargo".into())
}

/// Target folder shared by every run of these tests.
fn shared_target() -> PathBuf {
    std::env::temp_dir().join("pwmplan-emitted-target")
}

/// A cargo project in `dir` whose library holds every case's module, with
/// `tests` written as `tests/apply.rs` when given.
fn rust_project(dir: &Path, cases: &[Facts], tests: Option<String>) {
    fs::create_dir_all(dir.join("src")).expect("create src");
    fs::write(
        dir.join("Cargo.toml"),
        "[package]\nname = \"pwmplan-emitted\"\nversion = \"0.0.0\"\nedition = \"2021\"\npublish = false\n\n\
         [dependencies]\nembedded-hal = \"1.0\"\n\n[workspace]\n",
    )
    .expect("write Cargo.toml");
    let lock = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/rust_host/Cargo.lock");
    fs::copy(&lock, dir.join("Cargo.lock")).expect("copy tests/rust_host/Cargo.lock");
    let mut lib = String::from(
        "//! Every golden case's emitted module, built as one `no_std` library.\n#![no_std]\n#![deny(warnings)]\n\n",
    );
    for f in cases {
        let _ = writeln!(lib, "pub mod {};", f.stem);
        fs::write(dir.join("src").join(format!("{}.rs", f.stem)), &f.module).expect("write module");
    }
    fs::write(dir.join("src/lib.rs"), lib).expect("write lib.rs");
    if let Some(t) = tests {
        fs::create_dir_all(dir.join("tests")).expect("create tests");
        fs::write(dir.join("tests/apply.rs"), t).expect("write apply.rs");
    }
}

/// What `apply` must send: 0 for off; otherwise `round(counts × max /
/// steps)` kept within the allowed range scaled to the driver, the minimum
/// rounded up and the maximum down (the maximum wins on a driver too coarse
/// to hold both).
fn scaled(counts: u64, max: u64, steps: u64, min_counts: u64, max_counts: u64) -> u64 {
    if counts == 0 || max == 0 {
        return 0;
    }
    let lowest = (min_counts * max).div_ceil(steps);
    let highest = max_counts * max / steps;
    let nearest = (counts as f64 * max as f64 / steps as f64).round() as u64;
    nearest.max(lowest).min(highest)
}

/// The host tests of every module: constants, constructors and `apply`.
fn rust_host_tests(cases: &[Facts]) -> String {
    let mut s = String::from(
        "//! Generated by pwmplan's tests/emitted_code.rs.\n\n\
         use core::convert::Infallible;\n\
         use embedded_hal::pwm::{ErrorType, SetDutyCycle};\n\n\
         /// A channel that records every duty it is given.\n\
         pub struct Fake {\n    pub max: u16,\n    pub calls: Vec<u16>,\n}\n\n\
         impl ErrorType for Fake {\n    type Error = Infallible;\n}\n\n\
         impl SetDutyCycle for Fake {\n    \
         fn max_duty_cycle(&self) -> u16 {\n        self.max\n    }\n    \
         fn set_duty_cycle(&mut self, duty: u16) -> Result<(), Infallible> {\n        \
         self.calls.push(duty);\n        Ok(())\n    }\n}\n",
    );
    for f in cases {
        let requests = [
            ("Duty::OFF", 0),
            ("Duty::from_q16(32768)", f.mid()),
            ("Duty::MAX", f.compare_max),
            ("Duty::from_q16(70000)", f.compare_max),
            ("Duty::from_permille(1500)", f.compare_max),
            ("Duty::from_counts(u64::MAX)", f.compare_max),
            ("Duty::from_counts(1)", f.compare_min),
        ];
        let list = requests
            .iter()
            .map(|(r, _)| *r)
            .collect::<Vec<_>>()
            .join(", ");
        let counts = requests
            .iter()
            .map(|(_, c)| c.to_string())
            .collect::<Vec<_>>()
            .join(", ");
        let _ = write!(
            s,
            "\nmod {stem} {{\n    use super::Fake;\n    use pwmplan_emitted::{stem}::*;\n\n    \
             // The constructors are usable in constants.\n    \
             const HALF: Duty = Duty::from_permille(500);\n\n    \
             #[test]\n    fn constants_match_plan_json() {{\n        \
             assert_eq!(DUTY_STEPS as u64, {steps});\n        \
             assert_eq!(PERIOD_TICKS as u64, {ticks});\n        \
             assert_eq!(PERIOD_REG as u64, {reg});\n        \
             assert_eq!(DIVIDER as u64, {div});\n        \
             assert_eq!(DIVIDER_REG as u64, {divreg});\n        \
             assert_eq!(CENTRE_ALIGNED, {centre});\n        \
             assert_eq!(CLOCK_HZ, {clock});\n        \
             assert_eq!(DEAD_TIME_CODE as u64, {dtc});\n        \
             assert_eq!(DEAD_TIME_TICKS as u64, {dtt});\n        \
             assert_eq!(COMPARE_MIN as u64, {min});\n        \
             assert_eq!(COMPARE_MAX as u64, {max});\n{extra}{comp}{pick}{loops}{dc}    }}\n\n    \
             #[test]\n    fn constructors_give_the_closed_form() {{\n        \
             let got: Vec<u64> = [{list}].iter().map(|d| d.counts() as u64).collect();\n        \
             assert_eq!(got, vec![{counts}]);\n        \
             assert_eq!(HALF.counts() as u64, {mid});\n        \
             assert_eq!(Duty::from_q16({tiny}).counts() as u64, {min}, \"tiny duty\");\n        \
             assert_eq!(Duty::from_q16(0), Duty::OFF);\n        \
             assert_eq!(Duty::from_permille(1000), Duty::MAX);\n    }}\n",
            stem = f.stem,
            steps = f.duty_steps,
            ticks = f.period_ticks,
            reg = f.period_register,
            div = f.divider,
            divreg = f.divider_register,
            centre = f.centre,
            clock = f.clock_hz,
            dtc = f.dead_time_code,
            dtt = f.dead_time_ticks,
            min = f.compare_min,
            max = f.compare_max,
            mid = f.mid(),
            tiny = f.tiny_q16(),
            dc = rust_dc_link_checks(f),
            loops = f
                .loop_consts
                .iter()
                .map(|(name, v)| format!("        assert_eq!({name} as u64, {v});\n"))
                .collect::<String>(),
            pick = if f.module.contains("pub const fn unsampled_leg(") {
                "        assert_eq!(unsampled_leg([Duty::from_q16(10000), Duty::from_q16(30000), Duty::from_q16(20000)]), 1);\n        \
                 assert_eq!(unsampled_leg([Duty::from_q16(20000), Duty::from_q16(20000), Duty::from_q16(10000)]), 0);\n        \
                 assert_eq!(unsampled_leg([Duty::from_q16(5000), Duty::from_q16(9000), Duty::from_q16(12000)]), 2);\n"
                    .to_string()
            } else {
                String::new()
            },
            comp = if f.dead_time_ticks > 0 {
                format!(
                    "        assert_eq!(DEAD_TIME_COMP_COUNTS as u64, {k});\n        \
                     assert_eq!(Duty::from_counts({mid}).compensated(true).counts() as u64, {up});\n        \
                     assert_eq!(Duty::from_counts({mid}).compensated(false).counts() as u64, {down});\n        \
                     assert_eq!(Duty::OFF.compensated(true), Duty::OFF);\n        \
                     assert_eq!(Duty::MAX.compensated(true), Duty::MAX);\n",
                    k = f.dead_time_comp,
                    mid = f.mid(),
                    up = f.mid() + f.dead_time_comp,
                    down = f.mid() - f.dead_time_comp
                )
            } else {
                String::new()
            },
            extra = match f.three_phase {
                Some((trigger, sampling_max)) => format!(
                    "        assert_eq!(CHANNELS, 3);\n        \
                     assert_eq!(ADC_TRIGGER_COMPARE as u64, {trigger});\n        \
                     assert_eq!(SAMPLING_COMPARE_MAX as u64, {sampling_max});\n        \
                     assert_eq!(duties_abc([0, 32768, 65536]), [Duty::OFF, Duty::from_q16(32768), Duty::MAX]);\n        \
                     let (mut a, mut b, mut c) = (super::Fake {{ max: 1000, calls: Vec::new() }}, super::Fake {{ max: 1000, calls: Vec::new() }}, super::Fake {{ max: 1000, calls: Vec::new() }});\n        \
                     apply_abc(&mut a, &mut b, &mut c, duties_abc([0, 32768, 65536])).unwrap();\n        \
                     assert_eq!((a.calls.len(), b.calls.len(), c.calls.len()), (1, 1, 1));\n        \
                     assert_eq!(a.calls[0], 0);\n"
                ),
                None => String::new(),
            },
        );
        for max_duty in [1000u64, 65535] {
            let want = requests
                .iter()
                .map(|(_, c)| {
                    scaled(*c, max_duty, f.duty_steps, f.compare_min, f.compare_max).to_string()
                })
                .collect::<Vec<_>>()
                .join(", ");
            let _ = write!(
                s,
                "\n    #[test]\n    fn apply_scales_to_max_duty_cycle_{max_duty}() {{\n        \
                 let mut pwm = Fake {{ max: {max_duty}, calls: Vec::new() }};\n        \
                 for d in [{list}] {{\n            apply(&mut pwm, d).unwrap();\n        }}\n        \
                 assert_eq!(pwm.calls, vec![{want}], \"requests: {list}\");\n    }}\n"
            );
        }
        if let Some(lf) = f.current_loop {
            let steps = LOOP_STEPS
                .iter()
                .map(|(r, a)| format!("({r}, {a})"))
                .collect::<Vec<_>>()
                .join(", ");
            let want = lf
                .expected(&LOOP_STEPS)
                .iter()
                .map(|w| format!("{w:.4}"))
                .collect::<Vec<_>>()
                .join(", ");
            let _ = write!(
                s,
                "\n    /// ADC code in, compare out: within one count of the plan's SI figures.\n    \
                 #[test]\n    fn loop_step_follows_the_plan() {{\n        \
                 let mut st = LoopState::default();\n        \
                 for ((r, adc), want) in [{steps}].into_iter().zip([{want}]) {{\n            \
                 let got = st.step(r, adc) as f64;\n            \
                 assert!((got - want).abs() <= 1.0, \"{{got}} for {{want}}\");\n        }}\n    }}\n"
            );
        }
        s.push_str("}\n");
    }
    s
}

fn all_facts() -> (Vec<tempfile::TempDir>, Vec<Facts>) {
    CASES.iter().map(facts).unzip()
}

#[test]
fn rust_module_host_tests() {
    if !have(&cargo(), &["--version"]) {
        return;
    }
    let (_keep, cases) = all_facts();
    let project = tempfile::tempdir().expect("temporary folder");
    rust_project(project.path(), &cases, Some(rust_host_tests(&cases)));
    let t = Instant::now();
    let o = Command::new(cargo())
        .current_dir(project.path())
        .env("CARGO_TARGET_DIR", shared_target())
        .args(["test", "--quiet", "--test", "apply"])
        .output()
        .expect("run cargo test");
    eprintln!(
        "cargo test of the emitted modules: {:.1} s",
        t.elapsed().as_secs_f64()
    );
    assert!(
        o.status.success(),
        "the emitted Rust modules fail their host tests\n{}\ntests/apply.rs:\n{}",
        describe(&o),
        rust_host_tests(&cases)
    );
    // Four tests per module (constants, constructors, two maxima) ran, and one per
    // current loop with integer gains.
    let want = 4 * cases.len() + cases.iter().filter(|c| c.current_loop.is_some()).count();
    assert!(
        stdout_of(&o).contains(&format!("test result: ok. {want} passed")),
        "expected {want} passing tests\n{}",
        describe(&o)
    );
}

fn stdout_of(o: &std::process::Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// `apply` rounds `counts × max / DUTY_STEPS` to the nearest driver step, so
/// on a driver coarser than the timer a non-zero duty can come out shorter
/// than `COMPARE_MIN` allows (even 0, output off) and `Duty::MAX` longer than
/// `COMPARE_MAX` allows: the minimum pulse and the bootstrap refresh the
/// limits exist for are not kept. This test wants the scaled minimum rounded
/// up and the scaled maximum rounded down: sent / max within
/// [COMPARE_MIN / DUTY_STEPS, COMPARE_MAX / DUTY_STEPS].
#[test]
fn rust_apply_keeps_the_duty_limits_on_a_coarse_driver() {
    if !have(&cargo(), &["--version"]) {
        return;
    }
    let (_keep, cases) = all_facts();
    let mut t = String::from(rust_host_tests(&[]).as_str());
    for f in &cases {
        let _ = write!(
            t,
            "\n#[test]\nfn {stem}_limits() {{\n    use pwmplan_emitted::{stem}::*;\n    \
             for max in [100u16, 255, 1000, 4095, 65535] {{\n        \
             let mut pwm = Fake {{ max, calls: Vec::new() }};\n        \
             apply(&mut pwm, Duty::from_counts(1)).unwrap();\n        \
             apply(&mut pwm, Duty::MAX).unwrap();\n        \
             let (lo, hi) = (pwm.calls[0] as u64, pwm.calls[1] as u64);\n        \
             assert!(lo * {steps} >= {min} * max as u64, \"max {{max}}: COMPARE_MIN sent as {{lo}}\");\n        \
             assert!(hi * {steps} <= {cmax} * max as u64, \"max {{max}}: COMPARE_MAX sent as {{hi}}\");\n    }}\n}}\n",
            stem = f.stem,
            steps = f.duty_steps,
            min = f.compare_min,
            cmax = f.compare_max,
        );
    }
    let project = tempfile::tempdir().expect("temporary folder");
    rust_project(project.path(), &cases, Some(t));
    let o = Command::new(cargo())
        .current_dir(project.path())
        .env("CARGO_TARGET_DIR", shared_target())
        .args(["test", "--quiet", "--test", "apply"])
        .output()
        .expect("run cargo test");
    assert!(o.status.success(), "{}", describe(&o));
}

const THUMB: &str = "thumbv7em-none-eabihf";

/// Whether the running toolchain has the standard library of `target`.
fn have_rust_target(target: &str) -> bool {
    let sysroot = Command::new("rustc")
        .args(["--print", "sysroot"])
        .output()
        .ok()
        .filter(|o| o.status.success())
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_string());
    let ok = sysroot.is_some_and(|s| {
        Path::new(&s)
            .join("lib/rustlib")
            .join(target)
            .join("lib")
            .is_dir()
    });
    if !ok {
        assert!(
            !ci(),
            "the Rust target {target} is not installed (rustup target add {target}), and CI=true requires it"
        );
        eprintln!("skipped: Rust target {target} not installed");
    }
    ok
}

#[test]
fn rust_module_builds_for_no_std_target() {
    if !have(&cargo(), &["--version"]) || !have_rust_target(THUMB) {
        return;
    }
    let (_keep, cases) = all_facts();
    let project = tempfile::tempdir().expect("temporary folder");
    rust_project(project.path(), &cases, None);
    run_ok(
        Command::new(cargo())
            .current_dir(project.path())
            .env("CARGO_TARGET_DIR", shared_target())
            .args(["build", "--quiet", "--lib", "--target", THUMB]),
        &format!("cargo build --target {THUMB} of the emitted modules"),
    );
}
