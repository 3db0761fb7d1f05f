//! Tolerance analysis (`pwmplan::spread`) checked against things outside
//! the code: the published SplitMix64 stream, standard-normal tables,
//! published Wilson intervals, closed forms of the uniform and truncated
//! normal variances, a case whose true yield is known by construction, the
//! typical evaluation itself (zero spread), and the monotonicity the gate-
//! charge and loss models imply.

use pwmplan::design::{Design, load_design};
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::model::physics::switching;
use pwmplan::solve::{self, DeadTimeChoice, Objective, Setting};
use pwmplan::spec::{Q, TolerancesSpec};
use pwmplan::spread::{self, Distribution, PARAM_COUNT, Param};

fn demo() -> Design {
    let path = format!("{}/boards/belt-feeder.yaml", env!("CARGO_MANIFEST_DIR"));
    load_design(Origin::Disk(path.into())).expect("the demo design loads")
}

/// The solved setting and dead time of a design.
fn solved(ev: &Evaluator) -> (Setting, DeadTimeChoice) {
    let sol = solve::solve(ev, Objective::LeastLoss);
    let c = sol.chosen.expect("the demo solves");
    (c.setting, c.dead_time)
}

/// Remove every spread: switch limits equal to typ, tolerances 0, supply
/// and ambient ranges closed on the evaluator's typical case.
fn no_spread(d: &mut Design) {
    let s = &mut d.switch;
    s.r_ds_on.max = Some(s.r_ds_on.typ);
    s.q_g.max = Some(s.q_g.typ);
    for sp in [&mut s.q_gs, &mut s.q_gd] {
        sp.min = Some(sp.typ);
        sp.max = Some(sp.typ);
    }
    s.v_th.min = Some(s.v_th.typ);
    s.v_th.max = Some(s.v_th.typ);
    s.r_g_int.min = Some(s.r_g_int.typ);
    s.r_g_int.max = Some(s.r_g_int.typ);
    s.body_diode.q_rr.min = Some(s.body_diode.q_rr.typ);
    s.body_diode.q_rr.max = Some(s.body_diode.q_rr.typ);
    d.spec.tolerances = Some(TolerancesSpec {
        motor_resistance: Some(Q::new(0.0)),
        motor_inductance: Some(Q::new(0.0)),
        driver_resistance: Some(Q::new(0.0)),
        driver_supply: Some(Q::new(0.0)),
        ..TolerancesSpec::default()
    });
    let sup = &mut d.spec.supply;
    sup.min = sup.nominal;
    sup.max = sup.nominal;
    d.spec.ambient.min = d.spec.ambient.max;
}

/// Published SplitMix64 outputs for seed 1477776061723855037: the
/// `reference` test of the rand_xoshiro crate, produced with Vigna's
/// reference splitmix64.c.
#[test]
fn splitmix64_reference_stream() {
    let expected: [u64; 5] = [
        1985237415132408290,
        2979275885539914483,
        13511426838097143398,
        8488337342461049707,
        15141737807933549159,
    ];
    for (n, e) in expected.iter().enumerate() {
        assert_eq!(spread::splitmix64_at(1477776061723855037, n as u64), *e);
    }
}

/// Standard-normal quantiles from the tables (Abramowitz and Stegun,
/// Handbook of Mathematical Functions, 1964, ch. 26): z(0.975) =
/// 1.959963985, z(0.999) = 3.090232306, z(Φ(1)) = 1, z(Φ(−3)) = −3; the
/// approximation is good to 1.15e-9 relative (Acklam).
#[test]
fn inverse_normal_against_tables() {
    let cases = [
        (0.975, 1.959_963_984_540_054),
        (0.999, 3.090_232_306_167_813),
        (0.841_344_746_068_542_9, 1.0),
        (0.001_349_898_031_630_094_5, -3.0),
        (0.5, 0.0),
        (0.025, -1.959_963_984_540_054),
    ];
    for (p, z) in cases {
        let got = spread::inverse_normal(p);
        assert!(
            (got - z).abs() <= 2e-9 * z.abs().max(1.0),
            "Φ⁻¹({p}) = {got}, table {z}"
        );
    }
}

/// Wilson score intervals published by Newcombe, *Two-sided confidence
/// intervals for the single proportion: comparison of seven methods*,
/// Statistics in Medicine 17, 1998, Table I, method 3 (values from memory,
/// all four reproduced to the 4 decimals printed).
#[test]
fn wilson_interval_published_examples() {
    let cases = [
        (81, 263, 0.2553, 0.3662),
        (15, 148, 0.0624, 0.1605),
        (0, 20, 0.0, 0.1611),
        (1, 29, 0.0061, 0.1718),
    ];
    for (k, n, lo, hi) in cases {
        let (l, h) = spread::wilson_interval(k, n, spread::Z_95).expect("n > 0");
        assert!(
            (l - lo).abs() < 5e-5 && (h - hi).abs() < 5e-5,
            "{k}/{n}: {l} {h}"
        );
    }
    assert_eq!(spread::wilson_interval(0, 0, spread::Z_95), None);
}

/// The sampler against closed forms over 40 000 draws: uniform variance
/// (b − a)²/12; the normal truncated at ±3σ has variance
/// σ²·(1 − 2·3·φ(3)/(Φ(3) − Φ(−3))) = 0.973 35·σ² (Johnson, Kotz,
/// Balakrishnan, Continuous Univariate Distributions vol. 1, 1994, ch. 13;
/// from memory),
/// mean at the midpoint; every draw within the limits.
#[test]
fn sampler_moments_match_closed_forms() {
    let mut d = demo();
    no_spread(&mut d);
    d.switch.r_ds_on.max = Some(Q::new(d.switch.r_ds_on.typ.si * 1.5));
    for dist in [Distribution::Uniform, Distribution::Normal] {
        let ev = Evaluator::new(&d);
        let mut s = spread::spreads(&d, &ev);
        s.distribution = dist;
        let r = s.range(Param::RdsOn).clone();
        let n = 40_000;
        let xs: Vec<f64> = (0..n)
            .map(|i| spread::sample_values(&s, 99, i)[Param::RdsOn as usize])
            .collect();
        assert!(xs.iter().all(|x| (r.low..=r.high).contains(x)));
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
        let w = r.high - r.low;
        // Only a max is given, so the range starts at typ.
        assert_eq!(r.low, r.typ);
        // Uniform: mean mid-range, variance w²/12. Normal: a half-normal
        // above typ with σ = w/3, truncated at 3σ; the truncated normal's
        // moments on [0, 3] (N. L. Johnson, S. Kotz, N. Balakrishnan,
        // *Continuous Univariate Distributions*, vol. 1, 2nd ed., 1994,
        // ch. 13; from memory): E[t] = (φ(0) − φ(3))/(Φ(3) − ½),
        // E[t²] = 1 − 3·φ(3)/(Φ(3) − ½).
        let (expect_mean, expect_var) = match dist {
            Distribution::Uniform => (0.5 * (r.low + r.high), w * w / 12.0),
            Distribution::Normal => {
                let root_2pi = (2.0 * std::f64::consts::PI).sqrt();
                let (phi0, phi3) = (1.0 / root_2pi, (-4.5f64).exp() / root_2pi);
                let mass = 0.5 - 1.349_898_031_630_094_5e-3;
                let e1 = (phi0 - phi3) / mass;
                let e2 = 1.0 - 3.0 * phi3 / mass;
                let sigma = w / 3.0;
                (r.typ + sigma * e1, sigma * sigma * (e2 - e1 * e1))
            }
        };
        assert!(
            ((var - expect_var) / expect_var).abs() < 0.03,
            "{dist:?} var {var} vs {expect_var}"
        );
        assert!(
            (mean - expect_mean).abs() < 0.01 * w,
            "{dist:?} mean {mean} vs {expect_mean}"
        );
    }
}

/// With no spread at all every sample is the typical evaluation, to the
/// last bit, for both distributions; the worst case is the typical case and
/// the worst dead-time need is the solver's need. A sample follows its
/// switching edges at each current (`EdgeModel::AtEachCurrent`) where the
/// plan's search interpolates them between fixed currents: the bit-for-bit
/// reference is the typical evaluation with the edges followed at each
/// current, and the plan's own figures are within 1e-5 of it.
#[test]
fn zero_spread_reproduces_the_typical_evaluation() {
    let mut d = demo();
    no_spread(&mut d);
    let ev = Evaluator::new(&d);
    let (setting, dead) = solved(&ev);
    let mut at_each = ev.clone();
    at_each.stage.edges = pwmplan::physics::params::EdgeModel::AtEachCurrent;
    let typ = at_each
        .case(&ev.rated, setting.frequency_hz, dead.seconds)
        .expect("typical case");
    let planned = ev
        .case(&ev.rated, setting.frequency_hz, dead.seconds)
        .expect("typical case");
    let rel = |a: f64, b: f64| ((a - b) / b).abs();
    assert!(rel(planned.losses.total, typ.losses.total) < 1e-5);
    assert!(
        rel(
            planned.junction_c.expect("settles"),
            typ.junction_c.expect("settles")
        ) < 1e-5
    );
    let t_j = typ.junction_c.expect("settles");
    for dist in ["uniform", "normal"] {
        if let Some(t) = d.spec.tolerances.as_mut() {
            t.distribution = if dist == "normal" {
                pwmplan::spec::DistributionSpec::Normal
            } else {
                pwmplan::spec::DistributionSpec::Uniform
            };
        }
        let samples = spread::monte_carlo_samples(&d, &ev, &setting, &dead, 40, 5);
        assert_eq!(samples.len(), 40);
        for s in &samples {
            let o = &s.outcome;
            assert_eq!(o.t_j_c.map(f64::to_bits), Some(t_j.to_bits()));
            assert_eq!(o.loss_w.map(f64::to_bits), Some(typ.losses.total.to_bits()));
            assert_eq!(
                o.ripple_pp_a.map(f64::to_bits),
                Some(typ.ripple.peak_to_peak_a.to_bits())
            );
            assert!(o.pass(), "{dist}: {:?}", o.failing());
        }
    }
    let wc = spread::worst_case(&d, &ev, &setting, &dead);
    assert_eq!(wc.corners, 1);
    assert_eq!(wc.junction.value.map(f64::to_bits), Some(t_j.to_bits()));
    assert!(wc.pass);
    let (need, _) = spread::worst_dead_time_need(&d, &ev).expect("need");
    assert_eq!(need.to_bits(), ev.dead_time_choice().need_s.to_bits());
}

/// Only R_ds(on) spreads: sorted by the drawn value, T_j and total loss
/// never fall (conduction loss I²·R, Graovac 2006), rise overall, and the
/// hot corner bounds every sample.
#[test]
fn junction_and_loss_rise_with_r_ds_on() {
    let mut d = demo();
    no_spread(&mut d);
    d.switch.r_ds_on.max = Some(Q::new(3.1e-3));
    let ev = Evaluator::new(&d);
    let (setting, dead) = solved(&ev);
    let mut samples = spread::monte_carlo_samples(&d, &ev, &setting, &dead, 200, 11);
    samples.sort_by(|a, b| {
        a.values[Param::RdsOn as usize].total_cmp(&b.values[Param::RdsOn as usize])
    });
    let t: Vec<f64> = samples.iter().map(|s| s.outcome.t_j_c.unwrap()).collect();
    let p: Vec<f64> = samples.iter().map(|s| s.outcome.loss_w.unwrap()).collect();
    for w in t.windows(2) {
        assert!(w[1] >= w[0] - 1e-9, "T_j fell: {} then {}", w[0], w[1]);
    }
    for w in p.windows(2) {
        assert!(w[1] >= w[0] - 1e-12, "loss fell: {} then {}", w[0], w[1]);
    }
    // Hand estimate for the hotter high side: I²·D·ΔR·k(T_j)·R_th =
    // 12.25 A² · 0.78 · 0.7 mΩ · 1.35 · 25.9 K/W ≈ 0.23 K (D = (E + I·R)/V
    // = 18.8 V/24 V; k from the switch's R_ds(on) curve near 100 °C).
    let rise = t[t.len() - 1] - t[0];
    assert!(
        rise > 0.15 && rise < 0.3,
        "T_j rise {rise} K over the range"
    );
    let wc = spread::worst_case(&d, &ev, &setting, &dead);
    assert!(wc.junction.value.unwrap() >= t[t.len() - 1] - 1e-9);
}

/// The pruning's monotone parameters, each on its own over a grid from its
/// low to its high end: T_j and total loss never fall (the reasons in
/// `spread::HOT_AT_MAX`).
#[test]
fn hot_corner_parameters_are_monotonic() {
    let d = demo();
    let ev = Evaluator::new(&d);
    let (setting, dead) = solved(&ev);
    let s = spread::spreads(&d, &ev);
    let typ = s.typical();
    for p in spread::HOT_AT_MAX {
        let r = s.range(p);
        // Parameters without a datasheet limit get a ±30 % test range.
        let (lo, hi) = if r.spreads() {
            (r.low, r.high)
        } else {
            (r.typ * 0.7, r.typ * 1.3)
        };
        let (lo, hi) = if p == Param::Ambient {
            (-10.0, 55.0)
        } else {
            (lo, hi)
        };
        let mut last: Option<(f64, f64)> = None;
        let mut last_lines = None;
        for k in 0..=12 {
            let mut x = typ;
            x[p as usize] = lo + (hi - lo) * k as f64 / 12.0;
            let e = spread::evaluator_at(&ev, &x);
            let c = e
                .case(&e.rated, setting.frequency_hz, dead.seconds)
                .expect("case");
            // Every line but the dead-time diode's rises with a hotter
            // parameter; that one falls as the edges slow (the diode's share
            // of the dead time shrinks, `dead_time_diode`), by about what
            // the slower edge adds, so it is left out of the monotonic sum.
            let now = (
                c.junction_c.unwrap(),
                c.losses.total - c.losses.dead_time_diode,
            );
            if let Some(prev) = last {
                assert!(now.0 >= prev.0 - 1e-9, "{p:?}: T_j fell at step {k}");
                assert!(
                    now.1 >= prev.1 - 1e-12,
                    "{p:?}: loss fell at step {k}: {last_lines:?} -> {:?}",
                    c.losses
                );
            }
            last = Some(now);
            last_lines = Some(c.losses.clone());
        }
    }
}

/// The dead-time corners: the slowest turn-off against the fastest turn-on
/// needs at least what the typical part needs and at least what any
/// sampled part needs (the same part turning off and on); the demo's
/// corner count follows from what spreads (V_th and the supply: 4 hot
/// corners, plus the two dead-time devices).
#[test]
fn dead_time_corner_bounds_every_sample() {
    let mut d = demo();
    d.spec.tolerances = Some(TolerancesSpec {
        driver_resistance: Some(Q::new(0.2)),
        driver_supply: Some(Q::new(0.05)),
        ..TolerancesSpec::default()
    });
    let ev = Evaluator::new(&d);
    let (setting, dead) = solved(&ev);
    let (worst, _) = spread::worst_dead_time_need(&d, &ev).expect("need");
    // The solver sizes the dead time for this worst pair, not the typical part.
    assert_eq!(dead.need_s, worst);
    let typical = [ev.rated, ev.high_bus]
        .iter()
        .filter_map(|c| ev.dead_time_need_s(c))
        .fold(0.0, f64::max);
    assert!(worst > typical);
    let samples = spread::monte_carlo_samples(&d, &ev, &setting, &dead, 300, 3);
    for s in &samples {
        let n = s.outcome.dead_time_need_s.expect("need");
        assert!(n <= worst + 1e-15, "sample {} needs {n} > {worst}", s.index);
    }
    // V_th, gate drive V and supply spread: 8 hot corners + 2.
    assert_eq!(spread::corners(&d, &ev).len(), 10);
    let ce = spread::corner_evaluators(&d, &ev);
    assert_eq!(ce.len(), 4);
    for (_, e) in &ce {
        assert_eq!(e.rated.v_bus_v, d.spec.supply.min.si);
        assert_eq!(e.high_bus.v_bus_v, d.spec.supply.max.si);
    }
    let choice = spread::worst_case_dead_time(&d, &ev).expect("encodes");
    assert!(choice.seconds >= worst && choice.code.is_some());
}

/// Same seed, same result on 1 and on 4 threads, to the bit (2100
/// samples: more than one progress chunk of 2048).
#[test]
fn same_seed_same_result_on_any_thread_count() {
    let mut d = demo();
    d.spec.tolerances = Some(TolerancesSpec {
        motor_resistance: Some(Q::new(0.1)),
        motor_inductance: Some(Q::new(0.2)),
        driver_resistance: Some(Q::new(0.2)),
        driver_supply: Some(Q::new(0.05)),
        distribution: pwmplan::spec::DistributionSpec::Normal,
    });
    let ev = Evaluator::new(&d);
    let (setting, dead) = solved(&ev);
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("pool")
            .install(|| {
                (
                    spread::monte_carlo(&d, &ev, &setting, &dead, 2100, 42),
                    spread::monte_carlo_samples(&d, &ev, &setting, &dead, 300, 42),
                )
            })
    };
    let (a, sa) = run(1);
    let (b, sb) = run(4);
    assert_eq!(a, b);
    let bits = |v: &[spread::Sample]| {
        v.iter()
            .map(|s| {
                (
                    s.values.map(f64::to_bits),
                    s.outcome.t_j_c.map(f64::to_bits),
                    s.outcome.loss_w.map(f64::to_bits),
                    s.outcome.failed,
                )
            })
            .collect::<Vec<_>>()
    };
    assert_eq!(bits(&sa), bits(&sb));
    // Another seed gives other samples.
    let c = spread::monte_carlo(&d, &ev, &setting, &dead, 300, 43);
    let a300 = spread::monte_carlo(&d, &ev, &setting, &dead, 300, 42);
    assert_ne!(a300.junction_c, c.junction_c);
    assert_eq!(PARAM_COUNT, spread::PARAMS.len());
}

/// A case with a known yield: only the ambient spreads (uniform over
/// −10..55 °C) and the junction limit is set at the junction temperature of
/// the ambient 80 % of the way up, so exactly the hottest 20 % fail (T_j
/// rises strictly with ambient): the true yield is 0.8. The Wilson interval
/// must hold it, the point estimate must be within 3 standard errors, and
/// over 20 seeds the 95 % interval must cover it at least 16 times
/// (P(fewer) ≈ 0.3 % for a true 95 % interval).
#[test]
fn yield_interval_holds_a_known_yield() {
    let mut d = demo();
    no_spread(&mut d);
    d.spec.ambient.min = Q::new(-10.0);
    d.spec.ambient.max = Q::new(55.0);
    let mut ev = Evaluator::new(&d);
    let (setting, dead) = solved(&ev);
    let mut case = ev.rated;
    case.t_ambient_c = -10.0 + 0.8 * 65.0;
    let limit = ev
        .case(&case, setting.frequency_hz, dead.seconds)
        .and_then(|c| c.junction_c)
        .expect("settles");
    ev.limits.t_j_max_c = limit;
    let n = 4000;
    let mc = spread::monte_carlo(&d, &ev, &setting, &dead, n, 7);
    let y = mc.yield_estimate;
    assert!(y.low <= 0.8 && 0.8 <= y.high, "{y:?}");
    let se = (0.8f64 * 0.2 / n as f64).sqrt();
    assert!((y.point - 0.8).abs() < 3.0 * se, "{y:?}");
    assert_eq!(mc.failures.len(), 1);
    assert_eq!(mc.failures[0].constraint, "junction");
    assert_eq!(mc.failures[0].count, n - y.passed);
    let covered = (0..20)
        .filter(|seed| {
            let y = spread::monte_carlo(&d, &ev, &setting, &dead, 400, 1000 + seed).yield_estimate;
            y.low <= 0.8 && 0.8 <= y.high
        })
        .count();
    assert!(covered >= 16, "covered {covered} of 20");
}

/// The report fits 80 columns, names every section and the yield, and the
/// JSON carries the yield and percentiles.
#[test]
fn report_fits_80_columns_and_serialises() {
    let mut d = demo();
    d.spec.tolerances = Some(TolerancesSpec {
        motor_inductance: Some(Q::new(0.2)),
        ..TolerancesSpec::default()
    });
    let ev = Evaluator::new(&d);
    let (setting, dead) = solved(&ev);
    let mc = spread::monte_carlo(&d, &ev, &setting, &dead, 500, 1);
    let wc = spread::worst_case(&d, &ev, &setting, &dead);
    let text = spread::text_report(&mc, &wc);
    for line in text.lines() {
        assert!(line.chars().count() <= 80, "too wide: {line:?}");
    }
    for needle in [
        "Spreads",
        "Worst case over",
        "Monte Carlo: 500 samples, seed 1",
        "yield",
        "dead time needed",
        "No spread",
    ] {
        assert!(text.contains(needle), "missing {needle:?} in\n{text}");
    }
    // Issue 14, defect 11: the need the dead time is encoded from is the
    // worst-case one and is called so; the typical need is named apart.
    let worst = wc.dead_time.worst_need_s.expect("a worst-case need");
    assert!(wc.dead_time.encoded_from_worst_case);
    assert!(wc.dead_time.typical_need_s <= worst + 1e-15);
    let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(
        flat.contains("encoded from the worst-case need"),
        "the encoded need is not called worst-case in\n{text}"
    );
    assert!(!flat.contains("; typical need"), "{text}");
    let json = serde_json::to_value((&mc, &wc)).expect("serialises");
    assert!(json[0]["yield"]["point"].is_number());
    assert!(json[0]["junction_c"]["p99"].is_number());
    assert!(json[1]["dead_time"]["worst_need_s"].is_number());
}

/// The README's `tolerances` section parses and sets the ranges: ±10 %
/// of 0.62 Ω is 0.558..0.682 Ω, ±5 % of the 12 V drive 11.4..12.6 V.
#[test]
fn tolerances_section_parses() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let boards = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
    for f in [
        "belt-feeder.yaml",
        "wren-hb24.yaml",
        "switches/tarn-40.yaml",
    ] {
        let to = dir.path().join(f);
        std::fs::create_dir_all(to.parent().expect("parent")).expect("folder");
        std::fs::copy(boards.join(f), &to).expect("copy");
    }
    let design = dir.path().join("belt-feeder.yaml");
    let text = std::fs::read_to_string(&design).expect("read");
    let section = r#"  tolerances:
    distribution: normal         # uniform | normal (limits at ±3σ)
    motor_resistance: "10 %"
    motor_inductance: "20 %"
    driver_resistance: "20 %"
    driver_supply: "5 %"
  objective: least-loss"#;
    std::fs::write(&design, text.replace("  objective: least-loss", section)).expect("write");
    let d = load_design(Origin::Disk(design)).expect("loads");
    let ev = Evaluator::new(&d);
    let s = spread::spreads(&d, &ev);
    assert_eq!(s.distribution, Distribution::Normal);
    let r = s.range(Param::MotorResistance);
    assert!((r.low - 0.558).abs() < 1e-12 && (r.high - 0.682).abs() < 1e-12);
    let v = s.range(Param::DriverSupply);
    assert!((v.low - 11.4).abs() < 1e-12 && (v.high - 12.6).abs() < 1e-12);
    let src = s.range(Param::DriverSink);
    assert!((src.high / src.typ - 1.2).abs() < 1e-12);
}

/// Issue 14, defect 6: over random switches (with a random C_rss curve, and
/// without one), raising Q_gd (typical and maximum together, or the typical
/// alone within its maximum) never lowers E_on + E_off at the rated case and
/// never shortens the worst-case dead-time need; with a curve the energy
/// strictly rises (the curve is scaled to Q_gd, no longer ignoring it).
#[test]
fn raising_q_gd_never_lowers_switching_energy_or_shortens_the_dead_time() {
    use pwmplan::physics::switching;
    let base = demo();
    let mut state = 0x2545_F491_4F6C_DD1Du64;
    let mut unit = move || {
        state = spread::splitmix64_at(state, 1);
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let figures = |d: &Design| {
        let ev = Evaluator::new(d);
        let st = &ev.stage;
        let i = ev.rated.load_current_a;
        let tr = switching::transitions(
            &st.switch,
            &st.drive,
            ev.rated.v_bus_v,
            i,
            i,
            st.switch.r_ds_on_25_ohm,
        )
        .expect("transitions");
        let (need, _) = spread::worst_dead_time_need(d, &ev).expect("a dead-time need");
        (tr.e_on_j + tr.e_off_j, need)
    };
    let mut strict = 0;
    for case in 0..48 {
        let mut d = base.clone();
        let with_curve = case % 2 == 0;
        let s = &mut d.switch;
        let q_gd = 4e-9 + 30e-9 * unit();
        let q_gd_max = q_gd * (1.0 + 0.6 * unit());
        s.q_gd.typ = Q::new(q_gd);
        s.q_gd.min = Some(Q::new(q_gd * (1.0 - 0.3 * unit())));
        s.q_gd.max = Some(Q::new(q_gd_max));
        // Room above Q_gs + Q_gd for every raise below.
        let q_g = s.q_gs.typ.si + 4.0 * q_gd_max + 10e-9;
        s.q_g.typ = Q::new(q_g);
        s.q_g.max = Some(Q::new(1.2 * q_g));
        if with_curve {
            let c1 = 0.3e-9 + 2.5e-9 * unit();
            let n = 0.3 + 1.2 * unit();
            s.capacitance.c_rss_curve = [1.0, 4.0, 12.0, 32.0]
                .iter()
                .map(|&v: &f64| (Q::new(v), Q::new(c1 * v.powf(-n))))
                .collect();
        } else {
            s.capacitance.c_rss_curve.clear();
        }
        let (e0, n0) = figures(&d);
        let k = 1.05 + unit();
        // Typical and maximum together (a slower part).
        // A datasheet's Q_g includes Q_gd: the total rises with it, so the
        // charge above the plateau (C_iss,on, the turn-off delay) stays.
        let mut slower = d.clone();
        let sp = &mut slower.switch.q_gd;
        sp.typ = Q::new(q_gd * k);
        sp.max = Some(Q::new(q_gd_max * k));
        let raise = |q: &mut Q<_>, by: f64| *q = Q::new(q.si + by);
        raise(&mut slower.switch.q_g.typ, q_gd * (k - 1.0));
        if let Some(m) = slower.switch.q_g.max.as_mut() {
            raise(m, q_gd_max * (k - 1.0));
        }
        let (e1, n1) = figures(&slower);
        // The typical alone, within the unchanged maximum.
        let mut typ_only = d.clone();
        let q_gd_typ = q_gd + (q_gd_max - q_gd) * unit();
        typ_only.switch.q_gd.typ = Q::new(q_gd_typ);
        raise(&mut typ_only.switch.q_g.typ, q_gd_typ - q_gd);
        let (e2, n2) = figures(&typ_only);
        let what = format!("case {case} (curve {with_curve}), Q_gd {q_gd:e} ×{k:.2}");
        assert!(e1 >= e0 * (1.0 - 1e-12), "{what}: E {e0:e} -> {e1:e}");
        assert!(n1 >= n0 * (1.0 - 1e-12), "{what}: need {n0:e} -> {n1:e}");
        assert!(
            e2 >= e0 * (1.0 - 1e-12),
            "{what}: typ only, E {e0:e} -> {e2:e}"
        );
        assert!(
            n2 >= n0 * (1.0 - 1e-12),
            "{what}: typ only, need {n0:e} -> {n2:e}"
        );
        if with_curve {
            assert!(e1 > e0 * (1.0 + 1e-6), "{what}: E unchanged with a curve");
            strict += 1;
        }
    }
    assert_eq!(strict, 24);
}

/// The gate-charge spread reaches the delays: at the highest Q_g the input
/// capacitance, and with it the RC turn-on delay t_d(on) = R_on·C_iss·
/// ln(V_drv/(V_drv − V_th)) (L. Balogh, *Fundamentals of MOSFET and IGBT
/// Gate Driver Circuits*, 2002), grow by Q_g,max/Q_g,typ exactly, so the
/// dead-time corners see a slow gate.
#[test]
fn gate_charge_spread_reaches_the_delays() {
    let d = demo();
    let ev = Evaluator::new(&d);
    let s = spread::spreads(&d, &ev);
    let typ = s.typical();
    let r = s.range(Param::Qg);
    let k = if r.spreads() { r.high / r.typ } else { 1.3 };
    let mut x = typ;
    x[Param::Qg as usize] = r.typ * k;
    let hi = spread::evaluator_at(&ev, &x);
    let lo = spread::evaluator_at(&ev, &typ);
    let t_on = |e: &Evaluator| {
        switching::transitions(&e.stage.switch, &e.stage.drive, 24.0, 5.0, 5.0, 5e-3)
            .expect("transitions")
            .t_d_on_s
    };
    let ratio = t_on(&hi) / t_on(&lo);
    assert!(
        (ratio - k).abs() < 1e-9,
        "t_d(on) ratio {ratio} vs Q_g ratio {k}"
    );
}
