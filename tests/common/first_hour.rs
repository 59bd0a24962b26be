//! The whole binary as a new user meets it, shared by the first-hour tests (`tests/cli_first_hour.rs`,
//! `tests/cli_line_quantities.rs`, `tests/cli_messages.rs` and others, each `#[path = "common/first_hour.rs"]
//! mod first_hour;`): run it, read its output, the demo sample, and refusals.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Output;

pub fn run(args: &[&str]) -> Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_coldtrace"))
        .args(args)
        .output()
        .unwrap()
}

/// `run` with arguments that need not be UTF-8 (paths as they are).
pub fn run_os(args: &[&std::ffi::OsStr]) -> Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_coldtrace"))
        .args(args)
        .output()
        .unwrap()
}

pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// `simulate LINE --points 101 -o DIR/OUT`: its output and the path it wrote.
pub fn simulate_short(dir: &Path, line: &Path, out: &str) -> (Output, PathBuf) {
    let out = dir.join(out);
    let o = run(&["simulate", s(line), "--points", "101", "-o", s(&out)]);
    (o, out)
}

/// A file of the repository (README.md, .ci/run, ...) as text.
pub fn repo_text(name: &str) -> String {
    std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join(name)).unwrap()
}

pub fn sample(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("sample-sweeps/north-fridge")
        .join(name)
}

/// The demo pair of the shipped sample (`in-07` warm against cold, its line file), compared through the
/// library with the states inferred.
pub fn demo_compare() -> coldtrace::compare::report::CompareReport {
    use coldtrace::compare::job::{run_compare, CompareJob, LineSource};
    run_compare(&CompareJob {
        baseline: sample("in-07-warm.s1p"),
        current: sample("in-07-cold.s1p"),
        line: LineSource::File(sample("in-07.toml")),
        baseline_state: None,
        current_state: None,
        analysis: coldtrace::compare::AnalysisConfig::default(),
        source: Default::default(),
    })
    .unwrap()
}

/// `sweep` located through the library on the demo line file (`in-07.toml`), its state inferred.
pub fn demo_locate(sweep: PathBuf) -> coldtrace::compare::report::LocateReport {
    use coldtrace::compare::job::{run_locate, LineSource, LocateJob};
    run_locate(&LocateJob {
        sweep,
        line: LineSource::File(sample("in-07.toml")),
        state: None,
        analysis: coldtrace::compare::AnalysisConfig::default(),
        source: Default::default(),
    })
    .unwrap()
}

pub fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// Exit 2 with every needle in the error.
pub fn refused(o: &Output, needles: &[&str]) -> String {
    let err = stderr(o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    for n in needles {
        assert!(err.contains(n), "missing {n:?} in {err}");
    }
    err
}

pub fn help(command: &str) -> String {
    let o = run(&[command, "--help"]);
    assert!(o.status.success(), "{}", stderr(&o));
    stdout(&o)
}

/// The demo line file with `edits` (from, to) applied, written into `dir` as `name`.
pub fn edited_line(dir: &Path, name: &str, edits: &[(&str, &str)]) -> PathBuf {
    let mut text = std::fs::read_to_string(sample("in-07.toml")).unwrap();
    for (from, to) in edits {
        assert!(text.contains(from), "{from}");
        text = text.replacen(from, to, 1);
    }
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

/// The data lines of a simulated sweep (its comments name the line file's path).
pub fn data_lines(p: &Path) -> Vec<String> {
    std::fs::read_to_string(p)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('!'))
        .map(str::to_string)
        .collect()
}
