//! Where a sweep is read from: a file, or standard input, named `-` on the command line
//! (`coldtrace locate - --ports 2 < sweep.s2p`).
//!
//! A version 1 file gives its port count only through its `.sNp` name; standard input has none, so the
//! count is given with the sweep (`--ports N`), and the data are read as if from a file named
//! `<stdin>.sNp`, the name every message about it carries. A version 2 file states its count and needs
//! nothing. Standard input is read once, within [`MAX_SWEEP_FILE_BYTES`], and kept: a command that looks
//! at its sweep twice (the band for `--at`, then the analysis) reads the same bytes.

use super::{read_bytes, read_file, ErrorKind, Touchstone, TouchstoneError};
use crate::limits::{read_at_most, Overflow, MAX_SWEEP_FILE_BYTES};
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

/// The path that stands for standard input.
pub const STDIN: &str = "-";

/// Whether `path` stands for standard input.
pub fn is_stdin(path: &Path) -> bool {
    path == Path::new(STDIN)
}

/// Refuse `--ports` when no input is standard input: a file's name gives its port count, and a count
/// given beside it could only disagree.
pub fn check_ports(ports: Option<usize>, inputs: &[&Path]) -> Result<(), TouchstoneError> {
    match ports {
        Some(n) if !inputs.iter().any(|p| is_stdin(p)) => Err(TouchstoneError::Invalid(format!(
            "--ports {n} is for a sweep read from standard input ('-'); a file's .sNp name (or its [Number \
             of Ports]) gives its port count: drop --ports"
        ))),
        _ => Ok(()),
    }
}

/// The name a sweep read from standard input goes by in messages: `<stdin>.sNp` with its port count,
/// `<stdin>` without.
pub fn stdin_name(ports: Option<usize>) -> PathBuf {
    match ports {
        Some(n) => PathBuf::from(format!("<stdin>.s{n}p")),
        None => PathBuf::from("<stdin>"),
    }
}

/// Standard input's bytes, read the first time they are asked for.
fn stdin_bytes() -> Result<&'static [u8], TouchstoneError> {
    static BYTES: OnceLock<Result<Vec<u8>, String>> = OnceLock::new();
    let read = BYTES.get_or_init(|| {
        let mut out = Vec::new();
        match read_at_most(std::io::stdin().lock(), MAX_SWEEP_FILE_BYTES, &mut out) {
            Ok(()) => Ok(out),
            Err(Overflow::Io(e)) => Err(e.to_string()),
            Err(Overflow::TooLarge) => Err(format!(
                "more than the {MAX_SWEEP_FILE_BYTES}-byte limit for a sweep (docs/limits.md); keep only \
                 the band and the points you need"
            )),
        }
    });
    read.as_deref().map_err(|m| TouchstoneError::Io {
        path: PathBuf::from("<stdin>"),
        source: std::io::Error::other(m.clone()),
    })
}

/// Read a sweep from `path`, or from standard input when `path` is `-`; `ports` is the port count of a
/// sweep on standard input (what a `.sNp` name would give), unused for a file, whose name gives it.
pub fn read_source(path: &Path, ports: Option<usize>) -> Result<Touchstone, TouchstoneError> {
    if !is_stdin(path) {
        return read_file(path);
    }
    if ports == Some(0) {
        return Err(TouchstoneError::Invalid(
            "--ports 0: a sweep has at least one port; give --ports 1 for a reflection sweep"
                .into(),
        ));
    }
    let bytes = stdin_bytes()?;
    read_bytes(bytes, &stdin_name(ports)).map_err(|e| match (e, ports) {
        (
            TouchstoneError::Parse {
                path,
                line,
                col,
                kind: ErrorKind::BadPortCount,
                ..
            },
            None,
        ) => TouchstoneError::Parse {
            path,
            line,
            col,
            kind: ErrorKind::BadPortCount,
            found: "a version 1 sweep on standard input, which has no .sNp name to give its port count"
                .into(),
            expected: "the port count".into(),
            fix: "pass --ports N (N = 1 for S11 alone, 2 for a 2-port sweep), or send a version 2 file \
                  with [Number of Ports]"
                .into(),
        },
        (e, _) => e,
    })
}
