//! The example firmware crate under `examples/firmware` (no_std,
//! embedded-hal 1.0) plans its drive in its build script through pwmplan's
//! library and includes the generated module. Checked with the real cargo:
//! it builds for thumbv7em-none-eabihf and for the host; an edit to its
//! board file makes the next build plan again (the written module follows
//! the edit); a wrong board file fails the build with the file, line and
//! field.
//!
//! The crate is copied to a temporary folder (the committed one is never
//! edited) with its path dependency pointed back at this checkout; the
//! target folder is kept under `target/` so a rerun compiles only the
//! example. A missing cargo or thumb target fails under `CI=true` and is
//! otherwise skipped with a message.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const THUMB: &str = "thumbv7em-none-eabihf";

fn ci() -> bool {
    std::env::var("CI").is_ok_and(|v| v == "true")
}

fn cargo() -> String {
    std::env::var("CARGO").unwrap_or_else(|_| "cargo".into())
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// The host's target triple, from `rustc -vV`.
fn host_triple() -> Option<String> {
    let o = Command::new("rustc").arg("-vV").output().ok()?;
    String::from_utf8_lossy(&o.stdout)
        .lines()
        .find_map(|l| l.strip_prefix("host: ").map(str::to_string))
}

fn have_thumb() -> bool {
    let sysroot = Command::new("rustc")
        .args(["--print", "sysroot"])
        .output()
        .ok()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_string());
    let ok = sysroot.is_some_and(|s| Path::new(&s).join("lib/rustlib").join(THUMB).is_dir());
    if !ok {
        assert!(
            !ci(),
            "the Rust target {THUMB} is not installed (rustup target add {THUMB}), and CI=true requires it"
        );
        eprintln!("skipped: Rust target {THUMB} not installed; the example firmware was not built");
    }
    ok
}

/// Copy the example crate (sources, hardware files, manifest, lock) into
/// `to`, its dependency on pwmplan pointed at this checkout.
fn copy_example(to: &Path) {
    let from = root().join("examples/firmware");
    for rel in [
        "Cargo.toml",
        "Cargo.lock",
        "build.rs",
        "src/lib.rs",
        "hardware/drive.yaml",
        "hardware/board.yaml",
        "hardware/switches/fen-40.yaml",
    ] {
        let dest = to.join(rel);
        std::fs::create_dir_all(dest.parent().expect("a parent")).expect("create folder");
        let text = std::fs::read_to_string(from.join(rel)).expect("read the example");
        let text = if rel == "Cargo.toml" {
            let at = format!("path = {:?}", root().display().to_string());
            assert!(
                text.contains("path = \"../..\""),
                "the manifest names pwmplan by path"
            );
            text.replace("path = \"../..\"", &at)
        } else {
            text
        };
        std::fs::write(&dest, text).expect("write the copy");
    }
}

fn build(dir: &Path, target: &str) -> Output {
    Command::new(cargo())
        .current_dir(dir)
        .env("CARGO_TARGET_DIR", root().join("target/firmware-example"))
        .env_remove("RUSTFLAGS")
        .args([
            "build",
            "--quiet",
            "--message-format=json",
            "--target",
            target,
        ])
        .output()
        .expect("run cargo build")
}

fn describe(o: &Output) -> String {
    format!(
        "status {:?}\nstderr:\n{}",
        o.status,
        String::from_utf8_lossy(&o.stderr)
    )
}

/// The generated module the build script wrote, found from cargo's
/// `build-script-executed` message for the example package.
fn generated_module(o: &Output) -> String {
    let out_dir = String::from_utf8_lossy(&o.stdout)
        .lines()
        .filter_map(|l| serde_json::from_str::<serde_json::Value>(l).ok())
        .filter(|v| v["reason"] == "build-script-executed")
        .filter(|v| {
            v["package_id"]
                .as_str()
                .is_some_and(|id| id.contains("reel-winder-firmware"))
        })
        .filter_map(|v| v["out_dir"].as_str().map(str::to_string))
        .next_back()
        .expect("cargo reports the example's build script");
    std::fs::read_to_string(Path::new(&out_dir).join("drive_pwm.rs")).expect("the generated module")
}

/// A `pub const NAME: TYPE = VALUE;` line's value.
fn constant(module: &str, name: &str) -> String {
    let key = format!("pub const {name}: ");
    module
        .lines()
        .find_map(|l| l.strip_prefix(&key))
        .and_then(|rest| rest.split(" = ").nth(1))
        .map(|v| v.trim_end_matches(';').to_string())
        .unwrap_or_else(|| panic!("{name} is not in the generated module"))
}

/// Replace `from` by `to` in a file and move its modification time a
/// second forward, so cargo's change check sees the edit even on a coarse
/// clock.
fn edit(path: &Path, from: &str, to: &str) {
    let text = std::fs::read_to_string(path).expect("read");
    assert!(text.contains(from), "{} holds {from:?}", path.display());
    std::fs::write(path, text.replacen(from, to, 1)).expect("write");
    let later = std::time::SystemTime::now() + std::time::Duration::from_secs(1);
    let f = std::fs::File::options()
        .write(true)
        .open(path)
        .expect("open");
    f.set_modified(later).expect("set the modification time");
}

#[test]
fn example_firmware_builds_and_follows_its_board_file() {
    let have_cargo = Command::new(cargo()).arg("--version").output().is_ok();
    if !have_cargo {
        assert!(!ci(), "cargo is not available, and CI=true requires it");
        eprintln!("skipped: cargo not available");
        return;
    }
    if !have_thumb() {
        return;
    }
    let host = host_triple().expect("rustc names its host");
    let dir = tempfile::tempdir().expect("temporary folder");
    copy_example(dir.path());

    // The microcontroller build first: it compiles pwmplan for the host's
    // build script, which the host build then shares.
    let thumb = build(dir.path(), THUMB);
    assert!(thumb.status.success(), "thumb build: {}", describe(&thumb));
    let first = generated_module(&thumb);
    assert_eq!(constant(&first, "CLOCK_HZ"), "88000000");
    // What `pwmplan plan` writes for the same files, made includable: the
    // build script writes exactly that.
    let planned = pwmplan::plan_file(dir.path().join("hardware/drive.yaml")).expect("plans");
    let expected = pwmplan::includable(planned.rust_module().expect("a Rust module"));
    assert_eq!(first, expected, "the build writes what the library plans");
    let hosted = build(dir.path(), &host);
    assert!(hosted.status.success(), "host build: {}", describe(&hosted));

    // A slower timer clock: the next build plans again.
    let board = dir.path().join("hardware/board.yaml");
    edit(&board, "clock: \"88 MHz\"", "clock: \"64 MHz\"");
    let again = build(dir.path(), THUMB);
    assert!(again.status.success(), "rebuild: {}", describe(&again));
    let second = generated_module(&again);
    assert_eq!(constant(&second, "CLOCK_HZ"), "64000000");
    assert_ne!(
        constant(&first, "PERIOD_TICKS"),
        constant(&second, "PERIOD_TICKS"),
        "the period follows the clock"
    );

    // A wrong board file fails the build, naming the place.
    edit(&board, "counter_bits: 16", "counter_bits: sixteen");
    let broken = build(dir.path(), THUMB);
    assert!(
        !broken.status.success(),
        "a wrong board file fails the build"
    );
    let said = String::from_utf8_lossy(&broken.stderr);
    let line = std::fs::read_to_string(&board)
        .expect("read")
        .lines()
        .position(|l| l.contains("counter_bits: sixteen"))
        .expect("the edited line")
        + 1;
    assert!(
        said.contains(&format!("board.yaml:{line}:")) && said.contains("board.timer.counter_bits"),
        "the diagnostic names file, line and field:\n{said}"
    );
}
