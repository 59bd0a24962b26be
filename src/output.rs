//! Writing files the user asked for, without ever losing what the user gave.
//!
//! Every output (converted or simulated sweeps, gated sweeps, plots, CSV, reports) goes through
//! [`write_output`]: it refuses to replace an existing file unless the caller passes `overwrite`, refuses
//! outright to replace one of the run's input files, and writes through a temporary file in the same folder
//! that is renamed into place, so an interrupted run never leaves half a file under the requested name.

use crate::{Error, Result};
use std::io::Write;
use std::path::Path;

/// Write `bytes` to `path`.
///
/// `inputs` are the files this run read: none of them is ever replaced. An existing `path` is replaced only
/// when `overwrite` is true (the commands' `--force`).
pub fn write_output(path: &Path, bytes: &[u8], overwrite: bool, inputs: &[&Path]) -> Result<()> {
    for input in inputs {
        if same_file(path, input) {
            return Err(Error::Usage(format!(
                "{}: refusing to write over an input file; choose another output path",
                path.display()
            )));
        }
    }
    if path.exists() && !overwrite {
        return Err(Error::Usage(format!(
            "{}: the file exists; choose another output path or pass --force to replace it",
            path.display()
        )));
    }
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let file_name = path
        .file_name()
        .ok_or_else(|| Error::Usage(format!("{}: not a file path", path.display())))?;
    let tmp = dir.join(format!(
        ".{}.coldtrace-{}.tmp",
        file_name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::io(path, e));
    }
    Ok(())
}

fn same_file(a: &Path, b: &Path) -> bool {
    match (std::fs::canonicalize(a), std::fs::canonicalize(b)) {
        (Ok(x), Ok(y)) => x == y,
        _ => false,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_existing_and_inputs() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.s1p");
        write_output(&p, b"one", false, &[]).unwrap();
        assert!(write_output(&p, b"two", false, &[]).is_err());
        assert_eq!(std::fs::read(&p).unwrap(), b"one");
        assert!(write_output(&p, b"two", true, &[&p]).is_err());
        write_output(&p, b"two", true, &[]).unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"two");
    }
}
