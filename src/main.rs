//! The `coldtrace` command: parses arguments into the library's plain config structs and maps results to
//! exit codes (see `coldtrace::exit`). All real work is in the library.

mod cli;

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    cli::heap::prepare();
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(code) => ExitCode::from(code),
        Err(err) => {
            if is_broken_pipe(&err) {
                return ExitCode::from(coldtrace::exit::OK);
            }
            cli::say::error(&err);
            ExitCode::from(coldtrace::exit::BAD_INPUT)
        }
    }
}

/// A closed pipe (`coldtrace ... | head`) is not an error.
fn is_broken_pipe(err: &coldtrace::Error) -> bool {
    matches!(err, coldtrace::Error::Io { source, .. } if source.kind() == std::io::ErrorKind::BrokenPipe)
}
