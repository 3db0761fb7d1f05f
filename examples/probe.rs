use pwmplan::design::load_design;
use pwmplan::load::Origin;
use pwmplan::model::Evaluator;
use pwmplan::solve::{Objective, solve};
fn main() {
    for f in [
        "boards/belt-feeder.yaml",
        "boards/vent-fan.yaml",
        "boards/winch.yaml",
    ] {
        let d = load_design(Origin::Disk(f.into())).unwrap();
        let ev = Evaluator::new(&d);
        let t = std::time::Instant::now();
        let s = solve(&ev, Objective::LeastLoss);
        println!(
            "{f}: {:?} feasible={} evaluated={} of {} band={:?}",
            t.elapsed(),
            s.feasible,
            s.evaluated,
            s.realisable,
            s.feasible_band_hz
        );
        if let Some(c) = &s.chosen {
            println!(
                "  f={:.1} div={} ticks={} bits={:.2} dead={:?}",
                c.setting.frequency_hz,
                c.setting.divider,
                c.setting.period_ticks,
                c.setting.resolution_bits,
                c.dead_time
            );
            println!("  losses {:?}", c.rated.losses);
            println!(
                "  Tj {:?} ripple {:.3} A {:?}",
                c.rated.junction_c, c.high_bus.ripple.peak_to_peak_a, c.rated.acoustic.reason
            );
            for k in &c.checks {
                println!(
                    "   {:<18} pass={} bind={} limit={:.4e} value={:?} margin={:?} {}",
                    k.name, k.pass, k.binding, k.limit, k.value, k.margin, k.detail
                );
            }
        }
        for a in &s.alternatives {
            println!(
                "  alt {} f={:.1}: {}",
                a.label, a.candidate.setting.frequency_hz, a.trade
            );
        }
        for l in &s.conflict {
            println!("  ! {l}");
        }
    }
}
