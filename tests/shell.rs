//! The shell completions and the manual pages, generated from the command line's own
//! definitions: bash accepts the completion script (`bash -n`), every shell's script and the
//! main manual page name every command, and each command's page exists under the name the
//! main page refers to.

use std::process::{Command, Output};

const BIN: &str = env!("CARGO_BIN_EXE_pwmplan");

/// The commands the binary lists in its own help (less `help`).
fn commands() -> Vec<String> {
    let o = run(&["--help"]);
    let text = String::from_utf8_lossy(&o.stdout).to_string();
    let list: Vec<String> = text
        .lines()
        .skip_while(|l| !l.starts_with("Commands:"))
        .skip(1)
        .take_while(|l| !l.trim().is_empty())
        .filter_map(|l| l.split_whitespace().next().map(str::to_string))
        .filter(|c| c != "help")
        .collect();
    assert!(list.len() >= 9, "{text}");
    list
}

fn run(args: &[&str]) -> Output {
    Command::new(BIN).args(args).output().expect("run pwmplan")
}

fn ci() -> bool {
    std::env::var("CI").is_ok_and(|v| v == "true")
}

#[test]
fn bash_accepts_the_completion_script() {
    let o = run(&["completions", "bash"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let dir = tempfile::tempdir().unwrap();
    let script = dir.path().join("pwmplan.bash");
    std::fs::write(&script, &o.stdout).unwrap();
    match Command::new("bash").arg("-n").arg(&script).output() {
        Ok(b) => assert!(
            b.status.success(),
            "bash -n refuses the script: {}",
            String::from_utf8_lossy(&b.stderr)
        ),
        Err(_) => {
            assert!(!ci(), "bash is not installed, and CI=true requires it");
            eprintln!("skipped: bash not installed");
        }
    }
}

#[test]
fn every_shell_gets_every_command() {
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let o = run(&["completions", shell]);
        assert!(o.status.success(), "{shell}");
        let text = String::from_utf8_lossy(&o.stdout);
        for c in &commands() {
            assert!(text.contains(c.as_str()), "{shell}: no `{c}` in the script");
        }
    }
    let o = run(&["completions", "nosh"]);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn the_manual_pages_name_every_command_and_exist() {
    let o = run(&["manual"]);
    assert!(o.status.success());
    let page = String::from_utf8_lossy(&o.stdout);
    assert!(page.contains(".TH pwmplan 1"), "{page}");
    for c in &commands() {
        assert!(
            page.contains(&format!("pwmplan\\-{c}(1)")),
            "the main page does not list {c}"
        );
        let sub = run(&["manual", c.as_str()]);
        assert!(sub.status.success(), "{c}");
        let text = String::from_utf8_lossy(&sub.stdout);
        assert!(
            text.contains(&format!(".TH pwmplan-{c} 1"))
                && text.contains(env!("CARGO_PKG_VERSION")),
            "{c}: {}",
            text.lines().take(4).collect::<Vec<_>>().join("\n")
        );
    }
    let o = run(&["manual", "nope"]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("no command `nope`; expected one of: plan"),
        "{err}"
    );
}
