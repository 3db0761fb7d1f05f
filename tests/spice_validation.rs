//! pwmplan's switching and ripple models against the committed ngspice
//! reference tables in `tests/spice/` (see its README.md for the circuits and
//! the measurement windows). The comparison tests always run; the rerun test
//! proves the tables are current when ngspice is installed (with `CI=true` a
//! missing ngspice is a failure).
use crate::spice_harness as harness;
#[path = "spice/leg.rs"]
mod leg;

use pwmplan::model::physics::losses;
use std::path::Path;

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn read(rel: &str) -> String {
    let p = root().join(harness::SPICE_DIR).join(rel);
    std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

fn switching_rows() -> Vec<(harness::SwitchCase, harness::SwitchMeasured)> {
    harness::read_switching(&read("switching_reference.csv")).expect("switching_reference.csv")
}

fn leg_rows() -> Vec<(leg::LegCase, leg::LegMeasured)> {
    leg::read_leg(&read("dead_time_reference.csv")).expect("dead_time_reference.csv")
}

/// Issue 15, item 5: the body diode's energy in each dead time of a
/// synchronous leg (`dead_time_diode`: the dead time less the outgoing
/// switch's hand-over, plus the incoming switch's, at V_SD(I)) against
/// ngspice, within a median 10 % and worst 25 % over both dead times of
/// every case (own bounds; measured 5.9 % and 20.4 %, the worst a hard edge
/// of the 150 V device, whose body diode's transit time is the longest), and
/// closer than booking the whole dead time (median 48 %, worst 440 %) in the
/// median and at worst.
#[test]
fn dead_time_diode_energy_per_edge() {
    let rows = leg_rows();
    assert_eq!(rows.len(), leg::LEG_CASES.len());
    let cmp = leg::leg_comparisons(root(), &rows).expect("predictions");
    let (edge, whole) = leg::leg_errors(&cmp);
    let worst = |v: &[f64]| v.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
    for (c, m, s, h, _) in &cmp {
        println!(
            "{} soft {:.1}/{:.1} nJ hard {:.1}/{:.1} nJ",
            c.id,
            1e9 * m.e_soft_off_j,
            1e9 * s,
            1e9 * m.e_hard_off_j,
            1e9 * h
        );
    }
    assert!(
        harness::median_abs(&edge) <= 0.10,
        "median {:.3}",
        harness::median_abs(&edge)
    );
    assert!(worst(&edge) <= 0.25, "worst {:.3}", worst(&edge));
    assert!(harness::median_abs(&edge) < harness::median_abs(&whole));
    assert!(worst(&edge) < worst(&whole));
}

fn ripple_rows() -> Vec<(harness::RippleCase, harness::RippleMeasured)> {
    harness::read_ripple(&read("ripple_reference.csv")).expect("ripple_reference.csv")
}

/// The cases without a commutation-loop inductance: the turn-off energy
/// alone is held on these (with a loop the overshoot's energy is held by the
/// totals and the peak test).
fn without_loop(errs: Vec<harness::SwitchError>) -> Vec<harness::SwitchError> {
    errs.into_iter()
        .filter(|e| e.case.loop_total_h() == 0.0)
        .collect()
}

/// Issue 15 acceptance: the turn-off V_DS peak within 15 % of ngspice where a
/// loop inductance is given (1–10 nH, six of the twelve cases with a
/// common-source part; measured −2.3 % to +9.6 %), and above
/// the bus in every such case. The simulated peak stays below 90 % of the
/// device's V_DSS in every case, so the reference is outside avalanche (the
/// model has none; the `turn-off-peak` constraint keeps plans out of it).
#[test]
fn turn_off_peak_with_loop_inductance() {
    let errs = harness::switching_errors(root(), &switching_rows()).expect("predictions");
    let with: Vec<_> = errs
        .iter()
        .filter(|e| e.case.loop_total_h() > 0.0)
        .collect();
    assert!(with.len() >= 5);
    for e in with {
        let (sim, pred) = (e.meas.v_peak_off_v, e.pred.v_peak_off_v);
        println!("{} peak ngspice {sim:.2} V, model {pred:.2} V", e.case.id);
        let dev = harness::device(e.case.device).expect("device");
        assert!(sim < 0.9 * dev.v_dss_v, "{}: in avalanche", e.case.id);
        assert!(
            pred > e.case.v_bus_v && sim > e.case.v_bus_v,
            "{}",
            e.case.id
        );
        assert!(
            (pred / sim - 1.0).abs() <= 0.15,
            "{}: {pred:.2} vs {sim:.2}",
            e.case.id
        );
    }
}

/// The turn-on with a loop inductance, its current rise followed in time
/// against the loop (`commutation::current_rise_with_loop`): E_on within 6 %
/// of the simulated E_on + E_off of the same case (own bound; measured −3.3 %
/// to +4.1 %). Before, the loop's dip at the gate-charge method's slope took
/// the whole bus and E_on came out 0 in four of six cases.
///
/// Not held on the half-bridge cases with a common-source inductance, whose
/// E_on comes out 0.4–2.7 µJ low (up to 19 % of the pair) and their E_off
/// high by about as much (the pair within 7.2 %,
/// `common_source_inductance_slows_both_edges`): the source lead slows the
/// current's slope, and at a slow slope the incoming switch holds the load
/// current at the rail for the partner's whole reverse phase (t_a, about
/// 6.5 ns in S39) before the node can fall, which the model does not book.
/// Booking it (I_L·t_a·V) was tried: it brings those cases within 0.1–0.4 µJ
/// but puts the fast half-bridge cases 15–80 % high in E_on, whose voltage
/// fall then starts from the reverse peak's plateau, far above the load
/// current's; both belong to one followed recovery, left open under issue 15.
#[test]
fn turn_on_energy_with_loop_inductance() {
    let errs = harness::switching_errors(root(), &switching_rows()).expect("predictions");
    let with: Vec<_> = errs
        .iter()
        .filter(|e| {
            e.case.loop_total_h() > 0.0
                && !(e.case.l_source_h > 0.0 && e.case.circuit == harness::Circuit::HalfBridge)
        })
        .collect();
    assert!(with.len() >= 5);
    for e in with {
        let pred = e.pred.e_on_j + e.pred.e_rr_j;
        let pair = e.meas.e_on_j + e.meas.e_off_j;
        let off = (pred - e.meas.e_on_j) / pair;
        println!(
            "{} E_on off by {:+.1} % of the pair",
            e.case.id,
            100.0 * off
        );
        assert!(pred > 0.0, "{}: no turn-on loss", e.case.id);
        assert!(off.abs() <= 0.06, "{}: {:+.1} %", e.case.id, 100.0 * off);
    }
}

/// Issue 15, item 3: with a common-source inductance (1–5 nH in the source
/// lead, alone or inside a larger loop; six cases added to the reference
/// before the model took the inductance in) E_on + E_off within a median
/// 10 % and at worst 15 % of ngspice (own bound; measured median 3.9 %,
/// worst 8.0 %), and every case closer than with the source lead left out
/// of the gate loop (measured then: 24–67 % low).
#[test]
fn common_source_inductance_slows_both_edges() {
    let errs = harness::switching_errors(root(), &switching_rows()).expect("predictions");
    let with: Vec<_> = errs.iter().filter(|e| e.case.l_source_h > 0.0).collect();
    assert!(with.len() >= 5);
    for e in &with {
        println!(
            "{} E_on + E_off {:+.1} % (without the source lead in the gate loop {:+.1} %)",
            e.case.id,
            100.0 * e.e_err,
            100.0 * e.e_err_without_source
        );
        assert!(
            e.e_err.abs() < e.e_err_without_source.abs(),
            "{}: the common-source term made it worse",
            e.case.id
        );
        assert!(
            e.e_err.abs() <= 0.15,
            "{}: {:+.1} %",
            e.case.id,
            100.0 * e.e_err
        );
    }
    let e: Vec<f64> = with.iter().map(|e| e.e_err).collect();
    assert!(harness::median_abs(&e) <= 0.10);
}

/// The table covers every case and the span the acceptance asks for.
#[test]
fn reference_covers_the_required_span() {
    let rows = switching_rows();
    assert_eq!(rows.len(), harness::SWITCH_CASES.len());
    assert!(rows.len() >= 12);
    let any = |f: &dyn Fn(&harness::SwitchCase) -> bool| rows.iter().any(|(c, _)| f(c));
    assert!(any(&|c| c.v_bus_v <= 12.0) && any(&|c| c.v_bus_v >= 48.0));
    assert!(any(&|c| c.i_a <= 2.0) && any(&|c| c.i_a >= 30.0));
    assert!(any(&|c| c.r_on_ohm <= 2.0) && any(&|c| c.r_on_ohm >= 47.0));
    assert!(any(&|c| c.v_drive_v <= 5.0) && any(&|c| c.v_drive_v >= 10.0));
    assert!(any(&|c| c.circuit == harness::Circuit::LowSide));
    assert!(any(&|c| c.circuit == harness::Circuit::HalfBridge));
    // Issue 15: at least five devices from 30 V to 150 V, light-load cases.
    let devices = harness::devices();
    assert!(devices.len() >= 5);
    assert!(
        devices.iter().any(|d| d.v_dss_v <= 30.0) && devices.iter().any(|d| d.v_dss_v >= 150.0)
    );
    for d in &devices {
        assert!(any(&|c| c.device == d.stem), "{} has no case", d.stem);
    }
    assert!(any(
        &|c| c.i_a <= 1.0 && c.circuit == harness::Circuit::HalfBridge
    ));
    assert!(
        any(&|c| c.loop_total_h() > 0.0 && c.loop_total_h() <= 2e-9)
            && any(&|c| c.loop_total_h() >= 10e-9)
    );
    // Common-source inductance: alone and inside a larger loop, both
    // circuits.
    assert!(any(&|c| c.l_source_h > 0.0 && c.l_loop_h == 0.0));
    assert!(any(&|c| c.l_source_h > 0.0 && c.l_loop_h > 0.0));
    assert!(any(
        &|c| c.l_source_h > 0.0 && c.circuit == harness::Circuit::HalfBridge
    ));
    assert!(any(
        &|c| c.l_source_h > 0.0 && c.circuit == harness::Circuit::LowSide
    ));
    let rp = ripple_rows();
    assert_eq!(rp.len(), harness::RIPPLE_CASES.len());
    assert!(
        rp.iter().any(|(_, m)| !m.continuous),
        "no discontinuous ripple case"
    );
}

/// Acceptance: median |error| of E_on + E_off ≤ 10 %, worst ≤ 25 % (issue
/// 15's figures), predicted from the switch file alone (the half-bridge's
/// recovery from `recovery::partner_recovery`), over all cases, loop cases
/// included, and over each circuit on its own (measured: all 4.0/22.1 %,
/// low-side 2.0/5.3 %, half-bridge 6.6/22.1 %, over 39 cases).
#[test]
fn switching_energy_within_acceptance() {
    let errs = harness::switching_errors(root(), &switching_rows()).expect("predictions");
    for r in &errs {
        println!("{} {:+.1} %", r.case.id, 100.0 * r.e_err);
    }
    let check = |what: &str, keep: &dyn Fn(&harness::SwitchError) -> bool| {
        let e: Vec<f64> = errs.iter().filter(|r| keep(r)).map(|r| r.e_err).collect();
        assert!(e.len() >= 5, "{what}: only {} cases", e.len());
        let median = harness::median_abs(&e);
        let worst = e.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
        assert!(
            median <= 0.10,
            "{what}: median |error| {:.1} %",
            100.0 * median
        );
        assert!(
            worst <= 0.25,
            "{what}: worst |error| {:.1} %",
            100.0 * worst
        );
    };
    check("all", &|_| true);
    check("low-side", &|r| r.case.circuit == harness::Circuit::LowSide);
    check("half-bridge", &|r| {
        r.case.circuit == harness::Circuit::HalfBridge
    });
}

/// The body diode's transit time fitted from each switch file alone
/// (`recovery::body_diode_transit_time_s`: Q_rr less the output charge and
/// the junction's forward charge) against the transit time TT of the device's
/// ngspice card, within 25 % (own bound; measured −7 % to +18 %, the fast
/// 30 V diode worst, where the stored part is a small difference of
/// capacitive charges; without the junction's forward charge the fit was up
/// to 2.6× TT).
#[test]
fn transit_time_fit_recovers_the_device_card() {
    use pwmplan::model::physics::recovery;
    for dev in harness::devices() {
        let card_tt_s = dev
            .params
            .split_whitespace()
            .find_map(|p| p.strip_prefix("TT="))
            .and_then(|v| v.strip_suffix('n'))
            .and_then(|v| v.parse::<f64>().ok())
            .map(|ns| ns * 1e-9)
            .expect("TT in ns on the card");
        let sw = harness::load_switch_model(root(), dev.stem).expect("switch file");
        let fitted = recovery::body_diode_transit_time_s(&sw, sw.q_rr_c);
        println!(
            "{}: fitted {:.2} ns, card {:.2} ns",
            dev.stem,
            fitted * 1e9,
            card_tt_s * 1e9
        );
        assert!(
            (fitted / card_tt_s - 1.0).abs() <= 0.25,
            "{}: {fitted:e} vs {card_tt_s:e}",
            dev.stem
        );
    }
}

/// The half-bridge's recovery term alone: the energy `recovery::partner_recovery`
/// books from the switch file against the simulated partner charge q_rec·V
/// (which also holds the ring of the partner's output capacitance), within
/// 35 % in every case (own bound; the constant datasheet Q_rr·V was 70–80 %
/// low at the fast edges).
#[test]
fn recovery_term_against_simulated_partner_charge() {
    let errs =
        without_loop(harness::switching_errors(root(), &switching_rows()).expect("predictions"));
    for r in errs
        .iter()
        .filter(|r| r.case.circuit == harness::Circuit::HalfBridge)
    {
        let ratio = r.pred.e_rr_j / r.pred.e_rr_sim_charge_j;
        println!("{} recovery {:.3}", r.case.id, ratio);
        assert!((ratio - 1.0).abs() <= 0.35, "{}: {ratio:.3}", r.case.id);
    }
}

/// The turn-off alone, with capacitance sharing (`commutation::turn_off`):
/// the terminal energy within a median 10 % and worst 15 % of ngspice (own
/// bounds; measured 6.2 % and 10.9 % over the five devices), where the
/// gate-charge turn-off with the whole load current in the channel was
/// 20–38 % high in every case. Before the channel's square law went through
/// the datasheet plateau at the gate-charge test current (`q_g.at_i_d`), with
/// the 250 µA V_th as its threshold, the fast 30 V device was +28.9 % off.
#[test]
fn turn_off_energy_with_capacitance_sharing() {
    let errs =
        without_loop(harness::switching_errors(root(), &switching_rows()).expect("predictions"));
    let e: Vec<f64> = errs
        .iter()
        .map(|r| r.pred.e_off_j / r.meas.e_off_j - 1.0)
        .collect();
    let median = harness::median_abs(&e);
    let worst = e.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
    assert!(median <= 0.10, "median |error| {:.1} %", 100.0 * median);
    assert!(worst <= 0.15, "worst |error| {:.1} %", 100.0 * worst);
}

/// The dead-time need (margin 1.2, from the model's transitions) against the
/// simulated turn-off-to-turn-on interval: at least 95 % of it in every case
/// and all of it in every case but the light-load ones at 1–2 A (measured:
/// 37 of 39; S26 and S27 fall 0.2 % and 3.2 % short). There the device
/// carries the load current in weak inversion, on a plateau below the square
/// law's threshold (ngspice: 3.0 V for crag-150 at 1 A), so its gate
/// discharges longer than the law says before the channel lets go; the
/// channel law has no subthreshold branch (open under issue 15). Flooring the
/// voltage rise at the node swing Q_node/I closed the gap on the reference
/// but made the need grow without bound as the rated current goes to zero,
/// so it was not kept.
#[test]
fn dead_time_need_covers_simulated_interval() {
    let errs = harness::switching_errors(root(), &switching_rows()).expect("predictions");
    let mut short = Vec::new();
    for r in &errs {
        let (need, interval) = (r.pred.dead_time_need_s, r.meas.interval_s());
        assert!(
            need >= 0.95 * interval,
            "{}: need {:.1} ns < 95 % of simulated {:.1} ns",
            r.case.id,
            1e9 * need,
            1e9 * interval
        );
        if !r.dead_time_covered {
            assert!(
                r.case.i_a <= 2.0,
                "{}: short at {} A",
                r.case.id,
                r.case.i_a
            );
            short.push(r.case.id);
        }
    }
    assert!(short.len() <= 2, "short in {short:?}");
}

/// Acceptance: ripple peak-to-peak within 2 % in every case, and the
/// continuous/discontinuous classification agrees.
#[test]
fn ripple_within_two_percent() {
    for r in harness::ripple_errors(&ripple_rows()).expect("predictions") {
        assert!(
            r.pp_err.abs() <= 0.02,
            "{}: {:+.3} %",
            r.case.id,
            100.0 * r.pp_err
        );
        assert_eq!(r.meas.continuous, r.pred_continuous, "{}", r.case.id);
    }
}

/// The committed error table is what the model gives today (regenerate with
/// `cargo run --release --example spice_reference -- --errors-only`).
#[test]
fn committed_error_table_is_current() {
    let sw = harness::switching_errors(root(), &switching_rows()).expect("switching");
    let rp = harness::ripple_errors(&ripple_rows()).expect("ripple");
    assert!(
        read("errors.csv") == harness::errors_csv(&sw, &rp),
        "tests/spice/errors.csv is stale: run `cargo run --release --example spice_reference -- --errors-only`"
    );
    let legs = leg::leg_comparisons(root(), &leg_rows()).expect("legs");
    assert!(
        read("errors.md") == harness::errors_md(&sw, &rp) + &leg::leg_md(&legs),
        "tests/spice/errors.md is stale: run `cargo run --release --example spice_reference -- --errors-only`"
    );
}

fn close(a: f64, b: f64, rel: f64, what: &str) {
    assert!(
        (a - b).abs() <= rel * b.abs().max(1e-30),
        "{what}: rerun {a:e}, table {b:e}"
    );
}

/// Reruns three switching cases (one with a loop inductance), one leg case, one ripple case and one extraction with
/// ngspice and checks them against the committed tables.
#[test]
fn reference_tables_reproduce_with_ngspice() {
    if !harness::ngspice_available() {
        if std::env::var("CI").as_deref() == Ok("true") {
            panic!(
                "ngspice not installed: the SPICE reference cannot be rerun (apt-get install -y ngspice)"
            );
        }
        println!(
            "ngspice not installed: skipped the SPICE rerun (the table comparisons still ran)"
        );
        return;
    }
    let rows = switching_rows();
    for id in ["S01", "S10", "S28", "S34"] {
        let (case, table) = rows
            .iter()
            .find(|(c, _)| c.id == id)
            .expect("case in table");
        let m = harness::simulate_switching(case).expect("ngspice run");
        close(m.i_on_a, table.i_on_a, 0.005, &format!("{id} i_on"));
        close(m.e_on_j, table.e_on_j, 0.01, &format!("{id} E_on"));
        close(m.e_off_j, table.e_off_j, 0.01, &format!("{id} E_off"));
        close(
            m.interval_s(),
            table.interval_s(),
            0.02,
            &format!("{id} interval"),
        );
    }
    let legs = leg_rows();
    let (case, table) = legs.iter().find(|(c, _)| c.id == "D01").expect("D01");
    let m = leg::simulate_leg(case).expect("ngspice run");
    close(m.e_soft_off_j, table.e_soft_off_j, 0.01, "D01 soft edge");
    close(m.e_hard_off_j, table.e_hard_off_j, 0.01, "D01 hard edge");
    let rp = ripple_rows();
    let (case, table) = rp.iter().find(|(c, _)| c.id == "R02").expect("R02");
    let m = harness::simulate_ripple(case).expect("ngspice run");
    close(m.i_pp_a, table.i_pp_a, 0.005, "R02 pk-pk");
    // One extraction: R_ds(on) at 10 V of the 40 V device against its file.
    let dev = harness::device("brack-40").expect("device");
    let tab = harness::run_ngspice(&harness::netlist_rdson(&dev, harness::T_SIM_C), "rerun")
        .expect("ngspice run");
    let r = tab.col("v(d10)").expect("column")[0] / dev.i_test_a;
    let sw = harness::load_switch_model(root(), "brack-40").expect("switch file");
    close(r, sw.r_ds_on_25_ohm, 1e-3, "brack-40 R_ds(on)");
}

/// R_ds(on) follows the gate drive: from the two datasheet points of each
/// extracted switch file (10 V and 4.5 V), `losses::r_ds_on_drive_factor`
/// predicts R_ds(on) at 6, 7.5 and 12 V; ngspice measures it on the same
/// invented devices (the datasheet method, forced drain current). Within
/// 12 % (own bound; measured −4.0 % to +11.1 %, the largest for rigg-100 at
/// 6 V, between the points: the law's 1/(V_GS − V_th) with the 250 µA
/// threshold bends less than the device), and closer than the datasheet
/// value left at 10 V (−31 % at 6 V) at every point. Needs ngspice.
#[test]
fn on_resistance_follows_the_gate_drive() {
    if !harness::ngspice_available() {
        if std::env::var("CI").as_deref() == Ok("true") {
            panic!(
                "ngspice not installed: the R_ds(on) drive check cannot run (apt-get install -y ngspice)"
            );
        }
        println!("ngspice not installed: skipped the R_ds(on) drive check");
        return;
    }
    for dev in harness::devices() {
        let sw = harness::load_switch_model(root(), dev.stem).expect("switch file");
        for v_gs in [6.0, 7.5, 12.0] {
            let tab = harness::run_ngspice(&harness::netlist_rdson_at(&dev, v_gs), "rdson-at")
                .expect("ngspice run");
            let measured = tab.col("v(d)").expect("column")[0] / dev.i_test_a;
            let predicted = sw.r_ds_on_25_ohm * losses::r_ds_on_drive_factor(&sw, v_gs);
            println!(
                "{} {v_gs} V: ngspice {measured:e} model {predicted:e}",
                dev.stem
            );
            close(
                predicted,
                measured,
                0.12,
                &format!("{} R_ds(on) at {v_gs} V", dev.stem),
            );
            assert!(
                (predicted - measured).abs() < (sw.r_ds_on_25_ohm - measured).abs(),
                "{} at {v_gs} V: the drive law is no closer than the 10 V value",
                dev.stem
            );
        }
    }
}

/// The dead-time diode's forward law (`forward::forward_voltage_v`) against
/// ngspice's V_SD at currents between and beyond the switch file's points:
/// within 5 % with a curve (interpolation in ln I), within 12 % with the
/// single V_SD at its test current (the ideal diode law below it, which
/// keeps the series resistance's drop at the test current: measured up to
/// +11 % at 2 % of it) (own bounds); each closer than the single
/// datasheet figure wherever that figure is more than 3 % off (for the
/// single point: below its test current; above it the law keeps V_SD).
#[test]
fn forward_voltage_follows_the_current() {
    use pwmplan::model::physics::forward;
    if !harness::ngspice_available() {
        if std::env::var("CI").as_deref() == Ok("true") {
            panic!(
                "ngspice not installed: the V_SD(I) check cannot run (apt-get install -y ngspice)"
            );
        }
        println!("ngspice not installed: skipped the V_SD(I) check");
        return;
    }
    for dev in harness::devices() {
        let sw = harness::load_switch_model(root(), dev.stem).expect("switch file");
        assert_eq!(sw.v_sd_curve.len() >= 2, dev.v_sd_curve, "{}", dev.stem);
        let currents: Vec<f64> = [0.02, 0.1, 0.5, 2.0]
            .iter()
            .map(|k| k * dev.i_test_a)
            .collect();
        let measured = harness::simulate_forward(&dev, &currents).expect("ngspice run");
        for (i, v_sim) in currents.iter().zip(measured) {
            let v_model = forward::forward_voltage_v(&sw, *i);
            println!(
                "{} {i} A: ngspice {v_sim:.4} V, model {v_model:.4} V",
                dev.stem
            );
            let bound = if sw.v_sd_curve.is_empty() { 0.12 } else { 0.05 };
            close(
                v_model,
                v_sim,
                bound,
                &format!("{} V_SD at {i} A", dev.stem),
            );
            let below_single = sw.v_sd_curve.is_empty() && *i < forward::v_sd_test_current_a(&sw);
            if (sw.v_sd_v - v_sim).abs() > 0.03 * v_sim
                && (below_single || !sw.v_sd_curve.is_empty())
            {
                assert!(
                    (v_model - v_sim).abs() < (sw.v_sd_v - v_sim).abs(),
                    "{} at {i} A: the law is no closer than the single V_SD",
                    dev.stem
                );
            }
        }
    }
}
