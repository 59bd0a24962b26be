//! Running the `coldtrace` binary in the history and survey tests (`tests/cli_history.rs`,
//! `tests/cli_survey.rs`, each `#[path = "common/history_cli.rs"] mod history_cli;`).

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
