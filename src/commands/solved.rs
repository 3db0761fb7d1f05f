//! Solving a design for a command: load, search (or evaluate at a pinned
//! frequency), check the registers, build the plan; and the files it makes.

use std::path::Path;

use crate::input::bundled;
use crate::input::design::{Design, load_design};
use crate::input::diagnostic::InputError;
use crate::input::load::Origin;
use crate::input::spec::ObjectiveSpec;
use crate::input::units::{Dimension, parse_quantity};
use crate::model::evaluate::Evaluator;
use crate::model::solve::{self, Objective};
use crate::model::sweep;
use crate::output::emit::{self, GeneratedFile, Templates};
use crate::output::plan::{self, Plan};

use super::failure::Failure;

/// A solved design: everything the outputs are made from.
pub struct Solved {
    pub design: Design,
    pub evaluator: Evaluator,
    pub plan: Plan,
    /// The plan may be used (`plan.feasible`): the search met every
    /// constraint and no error finding blocks it.
    pub feasible: bool,
    /// The search found a setting that meets every constraint (it may
    /// still be blocked by an error finding).
    pub setting_found: bool,
}

/// Points of the sweep behind the plots.
pub(super) const PLOT_POINTS: usize = 40;

/// The frequencies a review shows by default: from half the design's lower
/// bound to twice its upper bound, so the infeasible edges are visible.
pub(super) fn review_range(ev: &Evaluator) -> (f64, f64) {
    (ev.limits.f_min_hz / 2.0, ev.limits.f_max_hz * 2.0)
}

/// Load, solve (or evaluate at a pinned frequency) and build the plan;
/// `worst_case` judges every setting against the worst corner.
pub fn solve_design(
    design: Option<&Path>,
    at: Option<f64>,
    worst_case: bool,
) -> Result<Solved, Failure> {
    solve_loaded(load(design)?, at, worst_case)
}

/// [`solve_design`] on a design already loaded.
pub fn solve_loaded(design: Design, at: Option<f64>, worst_case: bool) -> Result<Solved, Failure> {
    let ev = Evaluator::new(&design);
    if let Some(f) = at {
        // Refuse a pinned frequency the timer cannot come near before
        // searching for it (a search towards 1 mHz visits every divider).
        let (lo, hi) = ev
            .alignments()
            .iter()
            .map(|a| ev.timer.frequency_range(*a))
            .fold((f64::INFINITY, 0.0f64), |(l, h), (a, b)| {
                (l.min(a), h.max(b))
            });
        if !(f >= lo * (1.0 - 1e-9) && f <= hi * (1.0 + 1e-9)) {
            return Err(Failure::Usage(format!(
                "--at {}: outside what the timer can make ({} to {}); expected a frequency in that range",
                fmt_hz(f),
                fmt_hz(lo),
                fmt_hz(hi)
            )));
        }
    }
    let objective = objective_of(&design);
    let corners = if worst_case {
        crate::model::spread::corner_evaluators(&design, &ev)
    } else {
        Vec::new()
    };
    let judge = solve::Judge {
        ev: &ev,
        corners: &corners,
        dead: ev.dead_time_choice(),
    };
    let solution = match at {
        Some(f) => solve::pinned_judged(&judge, objective, f),
        None if worst_case => solve::solve_worst_case(&ev, &corners, objective),
        None => solve::solve(&ev, objective),
    };
    let plan = plan::build_on(&design, &ev, &solution, at, worst_case).ok_or_else(|| {
        let why = solution
            .conflict
            .first()
            .cloned()
            .unwrap_or_else(|| "no timer setting could be evaluated".into());
        // Nothing evaluated: point at the band the search covered (the
        // design's, else the board's timer clock that sets it).
        match (
            at,
            &design.spec.constraints.frequency,
            design.sources.get(1),
        ) {
            (Some(_), _, _) => Failure::Usage(format!("--at: {why}")),
            (None, None, Some(board)) => Failure::Input(board.error("board.timer.clock", why)),
            _ => Failure::Input(design.sources[0].error("design.constraints.frequency", why)),
        }
    })?;
    let mut plan = plan;
    let (check, alternatives) =
        crate::model::register_check::check_solution(&plan, &design, &ev, &solution);
    crate::model::register_check::apply_to_plan(&mut plan, check, alternatives);
    if !plan.register_check.disagreements.is_empty() {
        return Err(Failure::Internal(format!(
            "the registers this plan would write do not do what its model says, so nothing was written; please report it with the input files:\n  {}",
            plan.register_check.disagreements.join("\n  ")
        )));
    }
    Ok(Solved {
        feasible: plan.feasible,
        setting_found: solution.feasible,
        design,
        evaluator: ev,
        plan,
    })
}

pub(super) fn parse_frequency(text: &str, option: &str) -> Result<f64, Failure> {
    parse_quantity(text, Dimension::Frequency)
        .map_err(|e| Failure::Usage(format!("{option}: {e}")))
        .and_then(|f| {
            if f > 0.0 {
                Ok(f)
            } else {
                Err(Failure::Usage(format!(
                    "{option}: expected a positive frequency such as \"20 kHz\""
                )))
            }
        })
}

pub(super) fn fmt_hz(f: f64) -> String {
    crate::input::units::format_quantity(f, Dimension::Frequency, 4)
}

pub(super) fn objective_of(d: &Design) -> Objective {
    match d.spec.objective {
        ObjectiveSpec::LeastLoss => Objective::LeastLoss,
        ObjectiveSpec::Quietest => Objective::Quietest,
        ObjectiveSpec::CoolestJunction => Objective::CoolestJunction,
        ObjectiveSpec::LeastAverageLoss => Objective::LeastAverageLoss,
        ObjectiveSpec::LeastWorstLoss => Objective::LeastWorstLoss,
    }
}

/// The files `plan` writes for a solved design.
pub fn generate_files(s: &Solved, templates: Option<&Path>) -> Result<Vec<GeneratedFile>, Failure> {
    generate_with(s, &Templates::load(templates)?)
}

/// The files `plan` writes for a solved design, with templates already
/// compiled.
pub fn generate_with(s: &Solved, t: &Templates) -> Result<Vec<GeneratedFile>, Failure> {
    generate_from_rows(s, &plot_rows(s), t)
}

/// The sweep behind the plots of a solved design.
pub fn plot_rows(s: &Solved) -> Vec<sweep::SweepRow> {
    let (from, to) = review_range(&s.evaluator);
    sweep::sweep(
        &s.evaluator,
        &sweep::log_space(from, to, PLOT_POINTS),
        Some(s.plan.pwm.frequency_hz),
    )
}

/// [`generate_with`] on the plots' sweep already made (`plot_rows`).
pub fn generate_from_rows(
    s: &Solved,
    rows: &[sweep::SweepRow],
    t: &Templates,
) -> Result<Vec<GeneratedFile>, Failure> {
    let o = &s.design.spec.outputs;
    Ok(emit::generate(
        &s.plan,
        rows,
        s.design.board.timer.fpu,
        o.c,
        o.rust,
        t,
    )?)
}

pub(super) fn load(design: Option<&Path>) -> Result<Design, InputError> {
    let origin = match design {
        Some(p) => Origin::Disk(p.to_path_buf()),
        None => Origin::Bundled(bundled::DEMO_DESIGN.to_string()),
    };
    load_design(origin)
}
