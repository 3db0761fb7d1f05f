//! Every integration test, built as one test binary: one link instead of one
//! per file, and libtest runs the files' tests side by side on every core
//! instead of one file after another. Each file stays as it was written;
//! `cargo test --release --test suite golden::` runs one file's tests.

// Helpers several files share, built once.
mod common;
mod random_design;
#[path = "spice/harness.rs"]
mod spice_harness;

#[path = "back_emf_sampling.rs"]
mod back_emf_sampling;

#[path = "bad_input.rs"]
mod bad_input;

#[path = "check_cmd.rs"]
mod check_cmd;

#[path = "current_loop.rs"]
mod current_loop;

#[path = "dc_link.rs"]
mod dc_link;

#[path = "dead_time_compensation.rs"]
mod dead_time_compensation;

#[path = "emitted_code.rs"]
mod emitted_code;

#[path = "emitted_safety.rs"]
mod emitted_safety;

#[path = "explain.rs"]
mod explain;

#[path = "firmware_example.rs"]
mod firmware_example;

#[path = "fuzz.rs"]
mod fuzz;

#[path = "golden.rs"]
mod golden;

#[path = "layout.rs"]
mod layout;

#[path = "operating_range.rs"]
mod operating_range;

#[path = "plot_layout.rs"]
mod plot_layout;

#[path = "register_trial.rs"]
mod register_trial;

#[path = "register_verifier.rs"]
mod register_verifier;

#[path = "report_render.rs"]
mod report_render;

#[path = "review.rs"]
mod review;

#[path = "schema.rs"]
mod schema;

#[path = "shell.rs"]
mod shell;

#[path = "six_step_table.rs"]
mod six_step_table;

#[path = "solver_props.rs"]
mod solver_props;

#[path = "spice_validation.rs"]
mod spice_validation;

#[path = "spread.rs"]
mod spread;

#[path = "three_phase_plan.rs"]
mod three_phase_plan;

#[path = "three_phase_spice.rs"]
mod three_phase_spice;

#[path = "verdict.rs"]
mod verdict;

#[path = "verify_module.rs"]
mod verify_module;

#[path = "writes.rs"]
mod writes;
