//! Running the `coldtrace` binary in the history and survey tests (`tests/cli_history.rs`,
//! `tests/cli_survey.rs`, each `#[path = "common/history_cli.rs"] mod history_cli;`).

#![allow(dead_code)]

use coldtrace::line::{simulate, Fault, SimConfig, State};
use coldtrace::touchstone::{write, WriteOptions};
use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The binary, with `COLDTRACE_DB` cleared so a test never reads or writes the developer's own history.
pub fn bin() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_coldtrace"));
    c.env_remove("COLDTRACE_DB");
    c
}

/// Fail with the command's standard error unless it exited with `code`.
pub fn expect_code(o: &Output, code: i32) {
    assert_eq!(
        o.status.code(),
        Some(code),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
}

/// The demo line's file (invented scenario).
pub fn line_file() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/north-fridge-in-07.toml")
}

/// A cold sweep of the demo line with `faults`, noise seed `seed`, written to `dir/name`.
pub fn sweep(dir: &Path, name: &str, faults: &[&str], seed: u64) -> PathBuf {
    let line = coldtrace::line::file::read_file(&line_file()).unwrap();
    let mut cfg = SimConfig::linear(State::Cold, 0.5e9, 10e9, 801);
    cfg.noise_db = Some(-85.0);
    cfg.seed = seed;
    cfg.faults = faults.iter().map(|f| Fault::parse(f).unwrap()).collect();
    let net = simulate(&line, &cfg).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, write(&net, &WriteOptions::default()).unwrap()).unwrap();
    p
}

/// The JSON a command printed, after checking it exited 0 or 1.
pub fn ok(o: &Output) -> serde_json::Value {
    assert!(
        o.status.code() == Some(0) || o.status.code() == Some(1),
        "exit {:?}: {}",
        o.status.code(),
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).unwrap_or(serde_json::Value::Null)
}

/// The binary with `args` and `--db DB`.
pub fn run(db: impl AsRef<OsStr>, args: &[&str]) -> Output {
    bin()
        .args(args)
        .arg("--db")
        .arg(db.as_ref())
        .output()
        .unwrap()
}

/// `history record SWEEP --line <demo line> EXTRA --json --db DB`, which must exit 0; its JSON.
pub fn record(db: &OsStr, sweep: &Path, extra: &[&str]) -> serde_json::Value {
    let mut args = vec!["history", "record", sweep.to_str().unwrap(), "--line"];
    let lf = line_file();
    args.push(lf.to_str().unwrap());
    args.extend_from_slice(extra);
    args.push("--json");
    let o = run(db, &args);
    expect_code(&o, 0);
    ok(&o)
}
