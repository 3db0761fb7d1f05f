//! The `pwmplan` command: parse arguments, run, map the outcome to an exit
//! status (0 done, 1 infeasible or out of date, 2 bad input).

fn main() -> std::process::ExitCode {
    pwmplan::commands::main()
}
