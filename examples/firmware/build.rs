//! Plan the drive described in `hardware/` and write its PWM module into
//! `OUT_DIR`. A wrong input or an infeasible plan fails the build with
//! pwmplan's diagnostic (file, line, field, what was expected); an edit to
//! any input file makes the next build plan again.

fn main() {
    match pwmplan::write_rust_module("hardware/drive.yaml", "drive_pwm.rs") {
        Ok(_) => {}
        Err(e) => {
            eprintln!("{e}");
            std::process::exit(1);
        }
    }
}
