//! A structured fuzz test (issue 22): our own mutator over the bundled
//! files (`boards/*.yaml`, `boards/switches/*.yaml`,
//! `templates/starter-design.yaml`), with a fixed seed.
//!
//! Each case copies the bundled files into a work folder, mutates one file
//! (deletes, duplicates or swaps lines, puts extreme numbers or other units
//! in, deletes keys, inserts junk bytes, NULs or deep nesting, cuts the
//! file short), runs `plan --json` on a design that reads it, and asserts
//! the promises made for any input:
//!
//! - no panic;
//! - exit 0 or 1 with a plan whose every constraint's verdict agrees with
//!   its margin, `feasible` the conjunction of the verdicts, exit 0 exactly
//!   when feasible, and (exit 0) a written `plan.json` that agrees too;
//! - or exit 2 with `error: FILE:LINE:COL: FIELD: message`, and nothing in
//!   the output folder changed.
//!
//! Cases run in-process through `cli::run` (fast); every
//! [`BINARY_EVERY`]-th case also runs the real binary, which must give the
//! same status and standard error. `PWMPLAN_FUZZ_CASES=20000 cargo test
//! --release --test suite fuzz:: -- --nocapture` runs longer; `PWMPLAN_FUZZ_SEED`
//! picks another seed. The summary (cases, statuses, refusals with a named
//! field, the slowest case) is printed.

use std::collections::BTreeMap;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

use clap::Parser;
use pwmplan::cli::{self, Args, Failure};

/// Cases in the normal suite: a bound of our own choice that keeps the test
/// near a minute on two cores in release (each plan of the bundled
/// three-phase design now simulates its bridge, so a case costs more than it
/// did); `PWMPLAN_FUZZ_CASES` runs more.
const DEFAULT_CASES: u64 = 2000;
const DEFAULT_SEED: u64 = 22;
/// Every this many cases also run through the binary.
const BINARY_EVERY: u64 = 20;

// ------------------------------------------------------------------ PRNG

/// SplitMix64 (Steele, Lea, Flood 2014): one 64-bit state, good enough to
/// pick mutations, reproducible everywhere.
struct SplitMix64(u64);

impl SplitMix64 {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in `0..n` (n ≥ 1; the slight bias is of no matter here).
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
    fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

// ------------------------------------------------------------- the inputs

/// A design and the files it reads, relative to `boards/`.
struct Target {
    design: &'static str,
    files: &'static [&'static str],
}

const TARGETS: &[Target] = &[
    Target {
        design: "belt-feeder.yaml",
        files: &[
            "belt-feeder.yaml",
            "wren-hb24.yaml",
            "switches/tarn-40.yaml",
        ],
    },
    Target {
        design: "vent-fan.yaml",
        files: &["vent-fan.yaml", "kite-ls12.yaml", "switches/scree-60.yaml"],
    },
    Target {
        design: "winch.yaml",
        files: &["winch.yaml", "heron-hb48.yaml", "switches/corrie-100.yaml"],
    },
    Target {
        design: "pump-bldc.yaml",
        files: &[
            "pump-bldc.yaml",
            "osprey-3p48.yaml",
            "switches/corrie-100.yaml",
        ],
    },
    Target {
        design: "starter-design.yaml",
        files: &["starter-design.yaml"],
    },
];

const EXTREMES: &[&str] = &[
    "0",
    "-1",
    "1e308",
    "-1e308",
    "4.9e-324",
    "1e-30",
    "NaN",
    ".nan",
    ".inf",
    "-0",
    "18446744073709551616",
    "9223372036854775807",
    "4294967296",
    "65536",
    "1e15",
    "0.5",
];

const UNITS: &[&str] = &[
    "V", "mV", "A", "mA", "ohm", "mohm", "Ω", "Hz", "kHz", "MHz", "s", "ms", "us", "ns", "nC",
    "pF", "nF", "uF", "mH", "uH", "K/W", "°C", "K", "%", "rpm", "V/krpm", "%/K", "S", "uJ", "W",
    "furlong", "",
];

const JUNK: &[&str] = &[
    "\0", "\u{1}", "\u{7f}", "\t", "\r", "{", "[", "]", "}", ":", ": ", "- ", "&a ", "*a", "*b ",
    "!", "!!str ", "|", ">", "%", "@", "`", "'", "\"", "#", ",", "? ", "---\n", "...\n", "~",
    "\u{feff}", "é", "\u{202e}",
];

fn boards_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("boards")
}

fn copy_tree(from: &Path, to: &Path) {
    fs::create_dir_all(to).expect("create folder");
    for entry in fs::read_dir(from).expect("read folder") {
        let entry = entry.expect("entry");
        let target = to.join(entry.file_name());
        if entry.file_type().expect("type").is_dir() {
            copy_tree(&entry.path(), &target);
        } else {
            fs::copy(entry.path(), &target).expect("copy");
        }
    }
}

/// A work folder: `boards/` copied plus the starter design beside them.
fn work_folder() -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("temp dir");
    copy_tree(&boards_dir(), dir.path());
    fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("templates/starter-design.yaml"),
        dir.path().join("starter-design.yaml"),
    )
    .expect("copy the starter design");
    dir
}

// ----------------------------------------------------------- the mutator

/// Byte ranges of the numbers in `line` (digits with `.`, `e`, sign).
fn numbers(line: &str) -> Vec<(usize, usize)> {
    let b = line.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        if b[i].is_ascii_digit() {
            let mut start = i;
            if start > 0 && (b[start - 1] == b'-' || b[start - 1] == b'+') {
                start -= 1;
            }
            let mut j = i;
            while j < b.len() && (b[j].is_ascii_alphanumeric() || b[j] == b'.') {
                if b[j].is_ascii_alphabetic() && !matches!(b[j], b'e' | b'E' | b'x') {
                    break;
                }
                j += 1;
            }
            out.push((start, j));
            i = j;
        } else {
            i += 1;
        }
    }
    out
}

/// The byte range of a unit right after a number inside quotes, if any.
fn unit_after(line: &str, end: usize) -> Option<(usize, usize)> {
    let rest = &line[end..];
    let start = end + (rest.len() - rest.trim_start_matches(' ').len());
    let len = line[start..].find('"')?;
    (len > 0).then_some((start, start + len))
}

fn indent(line: &str) -> usize {
    line.len() - line.trim_start_matches(' ').len()
}

/// One mutation of `text`; returns the new bytes and a short name.
fn mutate(text: &[u8], rng: &mut SplitMix64) -> (Vec<u8>, &'static str) {
    let s = String::from_utf8_lossy(text).to_string();
    let mut lines: Vec<String> = s.split('\n').map(str::to_string).collect();
    let n = lines.len();
    let at = rng.below(n);
    let kind = rng.below(11);
    let name = match kind {
        0 => {
            lines.remove(at);
            "delete-line"
        }
        1 => {
            let l = lines[at].clone();
            lines.insert(at, l);
            "duplicate-line"
        }
        2 => {
            let b = rng.below(n);
            lines.swap(at, b);
            "swap-lines"
        }
        3 | 4 => {
            // An extreme number in place of one that is there.
            let spots: Vec<(usize, (usize, usize))> = lines
                .iter()
                .enumerate()
                .flat_map(|(i, l)| numbers(l).into_iter().map(move |r| (i, r)))
                .collect();
            if spots.is_empty() {
                return (text.to_vec(), "none");
            }
            let (i, (a, b)) = *rng.pick(&spots);
            let v = *rng.pick(EXTREMES);
            lines[i].replace_range(a..b, v);
            "extreme-number"
        }
        5 => {
            // Another unit after a number.
            let spots: Vec<(usize, (usize, usize))> = lines
                .iter()
                .enumerate()
                .flat_map(|(i, l)| {
                    numbers(l)
                        .into_iter()
                        .filter_map(|(_, e)| unit_after(l, e))
                        .map(move |r| (i, r))
                        .collect::<Vec<_>>()
                })
                .collect();
            if spots.is_empty() {
                return (text.to_vec(), "none");
            }
            let (i, (a, b)) = *rng.pick(&spots);
            let unit = *rng.pick(UNITS);
            lines[i].replace_range(a..b, unit);
            "change-unit"
        }
        6 => {
            // Delete a key with everything indented below it.
            let keyed: Vec<usize> = (0..n)
                .filter(|&i| {
                    let t = lines[i].trim_start();
                    !t.starts_with('#') && t.contains(':')
                })
                .collect();
            if keyed.is_empty() {
                return (text.to_vec(), "none");
            }
            let i = *rng.pick(&keyed);
            let ind = indent(&lines[i]);
            let mut j = i + 1;
            while j < n && (lines[j].trim().is_empty() || indent(&lines[j]) > ind) {
                j += 1;
            }
            lines.drain(i..j);
            "delete-key"
        }
        7 | 8 => {
            // Junk at a random place of a line.
            let l = &mut lines[at];
            let mut cut = rng.below(l.len() + 1);
            while !l.is_char_boundary(cut) {
                cut -= 1;
            }
            let junk = *rng.pick(JUNK);
            l.insert_str(cut, junk);
            "junk"
        }
        9 => {
            // Deep nesting.
            let l = &mut lines[at];
            let mut cut = rng.below(l.len() + 1);
            while !l.is_char_boundary(cut) {
                cut -= 1;
            }
            let depth = 30 + rng.below(3000);
            let open = if rng.below(2) == 0 { "[" } else { "{ a: " };
            l.insert_str(cut, &open.repeat(depth));
            "deep-nesting"
        }
        _ => {
            // Cut the file short, or a non-UTF-8 byte.
            if rng.below(2) == 0 {
                let mut bytes = text.to_vec();
                bytes.truncate(rng.below(text.len() + 1));
                return (bytes, "truncate");
            }
            let mut bytes = text.to_vec();
            let pos = rng.below(bytes.len() + 1);
            bytes.insert(pos, 0xFF);
            return (bytes, "bad-utf8");
        }
    };
    (lines.join("\n").into_bytes(), name)
}

// ----------------------------------------------------------- the checks

/// Every entry of `dir` by name, with its bytes.
fn snapshot(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut m = BTreeMap::new();
    if let Ok(entries) = fs::read_dir(dir) {
        for e in entries.flatten() {
            m.insert(
                e.file_name().to_string_lossy().to_string(),
                fs::read(e.path()).unwrap_or_default(),
            );
        }
    }
    m
}

/// Mirrors `solve::margin_holds`.
fn margin_holds(margin: f64, limit: f64) -> bool {
    margin >= -(1e-9f64).max(1e-12 * limit.abs())
}

/// The verdicts of a plan agree with its margins; `feasible` with them.
fn plan_consistent(json: &serde_json::Value, what: &str) -> Result<bool, String> {
    let constraints = json["constraints"]
        .as_array()
        .ok_or_else(|| format!("{what}: no constraints"))?;
    let mut all = true;
    for k in constraints {
        let pass = k["pass"].as_bool().ok_or_else(|| format!("{what}: pass"))?;
        all &= pass;
        if let (Some(m), Some(l)) = (k["margin"].as_f64(), k["limit"].as_f64())
            && margin_holds(m, l) != pass
        {
            return Err(format!(
                "{what}: constraint {} has margin {m} against limit {l} but pass = {pass}",
                k["name"]
            ));
        }
    }
    let feasible = json["feasible"]
        .as_bool()
        .ok_or_else(|| format!("{what}: feasible"))?;
    // An error finding blocks a plan whose constraints all pass.
    let blocked = json["blocked_by"].as_array().is_some_and(|b| !b.is_empty());
    if feasible != (all && !blocked) {
        return Err(format!(
            "{what}: feasible = {feasible} but the verdicts say {all} (blocked: {blocked})"
        ));
    }
    Ok(feasible)
}

struct Outcome {
    status: u8,
    stdout: String,
    stderr: String,
    /// A refusal's place (line, column) and field, when it has them.
    place: bool,
    field: bool,
}

/// `plan --json DESIGN --out OUT` in this process; `Err` on a panic.
fn run_in_process(design: &Path, out: &Path) -> Result<Outcome, String> {
    let args = Args::try_parse_from([
        "pwmplan".as_ref(),
        "plan".as_ref(),
        "--json".as_ref(),
        design.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
    ])
    .map_err(|e| e.to_string())?;
    let mut stdout = Vec::new();
    let mut stderr = Vec::new();
    let r = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        cli::run(args, &mut stdout, &mut stderr)
    }))
    .map_err(|p| {
        p.downcast_ref::<String>()
            .cloned()
            .or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string()))
            .unwrap_or_else(|| "panic".into())
    })?;
    let (status, err_text, place, field) = match r {
        Ok(code) => (
            code,
            String::from_utf8_lossy(&stderr).to_string(),
            false,
            false,
        ),
        Err(Failure::Input(e)) => (
            2,
            format!("error: {e}\n"),
            e.position.is_some() && !e.file.is_empty(),
            !e.field.trim().is_empty(),
        ),
        Err(Failure::Usage(m)) => (2, format!("error: {m}\n"), false, false),
        // The register check contradicting the model is a defect, like a panic.
        Err(Failure::Internal(m)) => return Err(format!("internal error: {m}")),
    };
    Ok(Outcome {
        status,
        stdout: String::from_utf8_lossy(&stdout).to_string(),
        stderr: err_text,
        place,
        field,
    })
}

#[derive(Default)]
struct Tally {
    cases: u64,
    by_status: [u64; 3],
    refusals_with_field: u64,
    binary_runs: u64,
    slowest: Duration,
    slowest_case: String,
    without_field: Vec<String>,
    failures: Vec<String>,
}

fn run_case(index: u64, seed: u64, work: &Path, tally: &mut Tally) {
    let mut rng = SplitMix64(seed ^ index.wrapping_mul(0xD1B5_4A32_D192_ED03));
    let target = rng.pick(TARGETS);
    let file = *rng.pick(target.files);
    let path = work.join(file);
    let original = fs::read(&path).expect("read the file to mutate");
    let mut text = original.clone();
    let mut names = Vec::new();
    for _ in 0..1 + rng.below(3) {
        let (t, name) = mutate(&text, &mut rng);
        text = t;
        names.push(name);
    }
    fs::write(&path, &text).expect("write the mutation");
    let label = format!("case {index} ({file}: {})", names.join(", "));
    let out = work.join("out");
    let before = snapshot(&out);
    let design = work.join(target.design);
    if std::env::var_os("PWMPLAN_FUZZ_TRACE").is_some() {
        eprintln!("{label}");
        let _ = fs::write(work.join(format!("../case-{index}.yaml")), &text);
    }
    let start = Instant::now();
    let outcome = run_in_process(&design, &out);
    let took = start.elapsed();
    if took > tally.slowest {
        tally.slowest = took;
        tally.slowest_case = label.clone();
    }
    tally.cases += 1;
    let mut fail = |m: String| tally.failures.push(format!("{label}: {m}"));
    match outcome {
        Err(panic) => fail(format!("panicked: {panic}")),
        Ok(o) => {
            match o.status {
                0 | 1 => {
                    tally.by_status[o.status as usize] += 1;
                    match serde_json::from_str::<serde_json::Value>(&o.stdout) {
                        Err(e) => fail(format!("exit {} without a JSON plan: {e}", o.status)),
                        Ok(plan) => match plan_consistent(&plan, "stdout") {
                            Err(m) => fail(m),
                            Ok(feasible) if feasible != (o.status == 0) => {
                                fail(format!("exit {} with feasible = {feasible}", o.status))
                            }
                            Ok(_) => {}
                        },
                    }
                    if o.status == 0 {
                        let written = fs::read_to_string(out.join("plan.json"))
                            .ok()
                            .and_then(|t| serde_json::from_str::<serde_json::Value>(&t).ok());
                        match written {
                            None => fail("exit 0 but no readable out/plan.json".into()),
                            Some(p) => {
                                if let Err(m) = plan_consistent(&p, "out/plan.json") {
                                    fail(m);
                                }
                            }
                        }
                    } else if snapshot(&out) != before {
                        fail("exit 1 changed out/".into());
                    }
                }
                2 => {
                    tally.by_status[2] += 1;
                    let (place, field) = (o.place, o.field);
                    if !place || !o.stderr.starts_with("error: ") {
                        fail(format!("refusal without FILE:LINE:COL: {}", o.stderr));
                    }
                    if field {
                        tally.refusals_with_field += 1;
                    } else {
                        tally.without_field.push(format!("{label}: {}", o.stderr));
                    }
                    if o.stderr.len() > 4000 {
                        fail(format!("a refusal of {} bytes", o.stderr.len()));
                    }
                    if snapshot(&out) != before {
                        fail("a refusal changed out/".into());
                    }
                }
                s => fail(format!("exit status {s}")),
            }
            if index.is_multiple_of(BINARY_EVERY) {
                tally.binary_runs += 1;
                let b = Command::new(env!("CARGO_BIN_EXE_pwmplan"))
                    .arg("plan")
                    .arg("--json")
                    .arg(&design)
                    .arg("--out")
                    .arg(&out)
                    .arg("--no-write")
                    .output()
                    .expect("run the binary");
                let code = b.status.code();
                if code != Some(i32::from(o.status)) {
                    fail(format!(
                        "the binary exits {code:?}, in-process {}; stderr {}",
                        o.status,
                        String::from_utf8_lossy(&b.stderr)
                    ));
                } else if o.status == 2 && String::from_utf8_lossy(&b.stderr) != o.stderr {
                    fail(format!(
                        "the binary says {:?}, in-process {:?}",
                        String::from_utf8_lossy(&b.stderr),
                        o.stderr
                    ));
                }
            }
        }
    }
    fs::write(&path, &original).expect("restore the file");
}

#[test]
fn mutated_inputs_keep_every_promise() {
    let cases: u64 = std::env::var("PWMPLAN_FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(DEFAULT_CASES);
    let seed: u64 = std::env::var("PWMPLAN_FUZZ_SEED")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(DEFAULT_SEED);
    // Panics are caught and counted; keep their default report quiet.
    let hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let threads = std::thread::available_parallelism().map_or(2, |n| n.get().min(4)) as u64;
    let tallies: Vec<Tally> = std::thread::scope(|scope| {
        let handles: Vec<_> = (0..threads)
            .map(|t| {
                scope.spawn(move || {
                    let work = work_folder();
                    let mut tally = Tally::default();
                    // PWMPLAN_FUZZ_ONLY=N runs case N alone (with
                    // PWMPLAN_FUZZ_TRACE its input is kept beside the work
                    // folder).
                    let only: Option<u64> = std::env::var("PWMPLAN_FUZZ_ONLY")
                        .ok()
                        .and_then(|v| v.parse().ok());
                    let mut i = t;
                    while i < cases {
                        if only.is_none_or(|n| n == i) {
                            run_case(i, seed, work.path(), &mut tally);
                        }
                        i += threads;
                    }
                    tally
                })
            })
            .collect();
        handles
            .into_iter()
            .map(|h| h.join().expect("a fuzz thread died"))
            .collect()
    });
    std::panic::set_hook(hook);
    let mut total = Tally::default();
    for t in tallies {
        total.cases += t.cases;
        for s in 0..3 {
            total.by_status[s] += t.by_status[s];
        }
        total.refusals_with_field += t.refusals_with_field;
        total.binary_runs += t.binary_runs;
        if t.slowest > total.slowest {
            total.slowest = t.slowest;
            total.slowest_case = t.slowest_case;
        }
        total.without_field.extend(t.without_field);
        total.failures.extend(t.failures);
    }
    println!(
        "fuzz: seed {seed}, {} cases ({} also through the binary): exit 0: {}, exit 1: {}, exit 2: {} ({} with a named field); slowest {:.3} s, {}",
        total.cases,
        total.binary_runs,
        total.by_status[0],
        total.by_status[1],
        total.by_status[2],
        total.refusals_with_field,
        total.slowest.as_secs_f64(),
        total.slowest_case
    );
    for w in total.without_field.iter().take(40) {
        println!("no field: {w}");
    }
    assert!(
        total.failures.is_empty(),
        "{} of {} cases broke a promise:\n{}",
        total.failures.len(),
        total.cases,
        total.failures.join("\n")
    );
    assert!(
        total.without_field.is_empty(),
        "{} refusals name no field:\n{}",
        total.without_field.len(),
        total.without_field.join("\n")
    );
}
