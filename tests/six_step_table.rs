//! The six-step commutation table as written into the code, checked by brute force against
//! the motor's back-EMFs: for each of the three chop variants the bundled pump design is
//! planned with a six-step board, the emitted Rust module's and C header's tables are read
//! back, and for every sector and both back-EMF shapes (sine; the 120°-flat trapezoid) the
//! written pair must be the best of all six ordered phase pairs by the mean torque-producing
//! EMF `e₊ − e₋` over the sector (forward: the largest; reverse: the most negative), the
//! floating phase's EMF must cross zero inside the sector (where sensorless drives detect
//! it), and neighbouring sectors must differ by one commutation (one phase changes role).
//! The angle convention is the one the emitted comment states: sector k from 30° + 60°·k,
//! e_a = E·f(θ), B and C lagging by 120° and 240°.

use std::f64::consts::PI;
use std::path::Path;

fn trapezoid(theta: f64) -> f64 {
    // Rises through zero at 0, flat at 1 from 30° to 150°, flat at −1 from 210° to 330°
    // (the 120° trapezoid of block-commutated motors; common practice).
    let d = theta.rem_euclid(2.0 * PI).to_degrees();
    match d {
        x if x < 30.0 => x / 30.0,
        x if x < 150.0 => 1.0,
        x if x < 210.0 => (180.0 - x) / 30.0,
        x if x < 330.0 => -1.0,
        x => (x - 360.0) / 30.0,
    }
}

fn emf(shape: fn(f64) -> f64, phase: usize, theta: f64) -> f64 {
    shape(theta - 2.0 * PI * phase as f64 / 3.0)
}

/// `name: [[u8; 6]; 2] = [[...], [...]]` from the Rust module.
fn rust_table(module: &str, name: &str) -> [[usize; 6]; 2] {
    let at = module
        .find(&format!("pub const {name}: [[u8; 6]; 2] = ["))
        .unwrap_or_else(|| panic!("{name} is written"));
    let body = &module[at..];
    let body = &body[body.find("= [").expect("value") + 3..];
    numbers(&body[..body.find("];").expect("the table ends")])
}

/// `name[2][6] = { { ... }, { ... } };` from the C header.
fn c_table(header: &str, name: &str) -> [[usize; 6]; 2] {
    let at = header
        .find(&format!("{name}[2][6] = {{"))
        .unwrap_or_else(|| panic!("{name} is written"));
    let body = &header[at + name.len() + 6..];
    let end = body.find("};").expect("the table ends");
    numbers(&body[..end])
}

fn numbers(text: &str) -> [[usize; 6]; 2] {
    let v: Vec<usize> = text
        .split(|c: char| !c.is_ascii_digit())
        .filter(|s| !s.is_empty())
        .map(|s| s.parse().expect("a digit"))
        .collect();
    assert_eq!(v.len(), 12, "two rows of six in {text:?}");
    std::array::from_fn(|d| std::array::from_fn(|k| v[6 * d + k]))
}

/// Mean of `e_p − e_n` over sector k (2000 points).
fn mean_emf(shape: fn(f64) -> f64, k: usize, p: usize, n: usize) -> f64 {
    let from = (30.0 + 60.0 * k as f64).to_radians();
    let steps = 2000;
    (0..steps)
        .map(|i| {
            let th = from + (i as f64 + 0.5) / steps as f64 * PI / 3.0;
            emf(shape, p, th) - emf(shape, n, th)
        })
        .sum::<f64>()
        / steps as f64
}

fn plan_six_step(dir: &Path, chop: &str) -> (String, String) {
    write_six_step(dir, chop, None);
    let planned = pwmplan::plan_file(dir.join("d.yaml")).expect("the six-step pump plans");
    (
        planned.rust_module().expect("Rust").to_string(),
        planned.c_header().expect("C").to_string(),
    )
}

/// The bundled pump on a six-step copy of its board, its motor inductance replaced if asked.
fn write_six_step(dir: &Path, chop: &str, inductance: Option<&str>) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    std::fs::create_dir_all(dir.join("switches")).expect("folder");
    for f in std::fs::read_dir(root.join("boards/switches")).expect("switches") {
        let p = f.expect("entry").path();
        std::fs::copy(&p, dir.join("switches").join(p.file_name().expect("name"))).expect("copy");
    }
    let board = std::fs::read_to_string(root.join("boards/osprey-3p48.yaml")).expect("board");
    let board = board.replace(
        "    modulation:\n      sinusoidal: { zero_sequence: min-max }\n",
        &format!("    modulation: {{ six-step: {{ chop: {chop} }} }}\n"),
    );
    assert!(
        board.contains("six-step"),
        "the board's modulation was replaced"
    );
    std::fs::write(dir.join("b.yaml"), board).expect("write board");
    let design = std::fs::read_to_string(root.join("boards/pump-bldc.yaml")).expect("design");
    let design = design.replacen("board: osprey-3p48.yaml", "board: b.yaml", 1);
    assert!(
        design.contains("board: b.yaml"),
        "the design names the copied board"
    );
    let design = match inductance {
        Some(l) => {
            let at = design.find("inductance: ").expect("the motor's inductance");
            let end = at + design[at..].find('\n').expect("line end");
            format!("{}inductance: \"{l}\"{}", &design[..at], &design[end..])
        }
        None => design,
    };
    std::fs::write(dir.join("d.yaml"), design).expect("write design");
}

/// A motor whose commutation does not end within a sector is refused, naming the finding;
/// one whose commutation takes most of a sector plans with a warning giving the interval
/// against the sector (the pump at 0.6 mH: about three quarters of its 833 µs sector).
#[test]
fn long_commutation_is_refused_or_warned_with_its_figure() {
    let tmp = tempfile::tempdir().expect("temp");
    write_six_step(tmp.path(), "high-side", Some("2.5 mH"));
    match pwmplan::plan_file(tmp.path().join("d.yaml")) {
        Err(pwmplan::PlanError::Infeasible(why)) => {
            assert!(why.contains("six-step-commutation"), "{why}");
            assert!(why.contains("has not reached zero"), "{why}");
        }
        Err(e) => panic!("refused for another reason: {e}"),
        Ok(_) => panic!("a 2.5 mH six-step pump plans"),
    }
    let long = tmp.path().join("long");
    write_six_step(&long, "high-side", Some("0.6 mH"));
    let planned = pwmplan::plan_file(long.join("d.yaml")).expect("the 0.6 mH pump plans");
    let json = planned.plan_json();
    let warned = json.contains("six-step-commutation") && json.contains("% of the 833 µs sector");
    assert!(warned, "no commutation warning with its figure");
}

#[test]
fn written_commutation_table_is_the_best_pair_in_every_sector() {
    let tmp = tempfile::tempdir().expect("temp");
    for chop in ["high-side", "low-side", "complementary"] {
        let (rust, c) = plan_six_step(&tmp.path().join(chop), chop);
        let pos = rust_table(&rust, "SIX_STEP_POSITIVE");
        let neg = rust_table(&rust, "SIX_STEP_NEGATIVE");
        let flo = rust_table(&rust, "SIX_STEP_FLOATING");
        assert_eq!(
            pos,
            c_table(&c, "pump_bldc_pwm_six_step_positive"),
            "C = Rust"
        );
        assert_eq!(
            neg,
            c_table(&c, "pump_bldc_pwm_six_step_negative"),
            "C = Rust"
        );
        assert_eq!(
            flo,
            c_table(&c, "pump_bldc_pwm_six_step_floating"),
            "C = Rust"
        );
        let low = rust.contains("pub const SIX_STEP_CHOP_LOW_SIDE: bool = true;");
        let comp = rust.contains("pub const SIX_STEP_COMPLEMENTARY: bool = true;");
        assert_eq!(
            (low, comp),
            (chop == "low-side", chop == "complementary"),
            "{chop}"
        );
        for dir in 0..2 {
            for k in 0..6 {
                let (p, n, f) = (pos[dir][k], neg[dir][k], flo[dir][k]);
                let mut roles = [p, n, f];
                roles.sort();
                assert_eq!(
                    roles,
                    [0, 1, 2],
                    "{chop} dir {dir} sector {k}: three phases"
                );
                for shape in [f64::sin as fn(f64) -> f64, trapezoid] {
                    let written = mean_emf(shape, k, p, n);
                    for a in 0..3 {
                        for b in (0..3).filter(|b| *b != a) {
                            let other = mean_emf(shape, k, a, b);
                            if dir == 0 {
                                assert!(
                                    written >= other - 1e-12,
                                    "sector {k}: {a}{b} beats {p}{n}"
                                );
                            } else {
                                assert!(
                                    written <= other + 1e-12,
                                    "sector {k}: {a}{b} beats {p}{n}"
                                );
                            }
                        }
                    }
                    // The floating phase's EMF changes sign inside the sector.
                    let from = (30.0 + 60.0 * k as f64).to_radians();
                    let (e0, e1) = (
                        emf(shape, f, from + 1e-6),
                        emf(shape, f, from + PI / 3.0 - 1e-6),
                    );
                    assert!(e0 * e1 < 0.0, "sector {k}: floating phase {f} crosses zero");
                }
                // One commutation to the next sector: one phase changes role.
                let next = (k + 1) % 6;
                let changed = [pos, neg, flo]
                    .iter()
                    .filter(|t| t[dir][k] != t[dir][next])
                    .count();
                assert_eq!(
                    changed, 2,
                    "sector {k} → {next}: one phase leaves, one enters"
                );
            }
        }
    }
}
