//! Writing files the user asked for, without ever losing what the user gave.
//!
//! Every output (converted or simulated sweeps, gated sweeps, plots, CSV, reports) goes through
//! [`write_output`], and a command that writes several files checks them all first with [`check_outputs`].
//! The rules:
//! - one of the run's input files is never replaced, whatever the path it is reached by;
//! - an existing path (a dangling symbolic link counts) is replaced only with `overwrite` (the commands'
//!   `--force`), and then only if it is a regular file or a symbolic link: a link is replaced itself, its
//!   target is never touched; a folder, device, FIFO or socket is refused even with `overwrite`;
//! - two outputs of one run may not name the same file;
//! - a new output's folder must exist, and the refusal names it (a missing input is told apart by
//!   `limits::read_capped`: "the sweep to read does not exist");
//! - an output named by a flag carries the extension of what is written into it ([`check_extension`]), so
//!   `--csv cold.s1p` cannot put CSV where a sweep was;
//! - the bytes go to a temporary file in the target's folder, created exclusively (`O_CREAT | O_EXCL`,
//!   which never follows a symbolic link) under an unpredictable name, synced, then moved into place, so
//!   an interrupted run never leaves half a file under the requested name. Without `overwrite` the move is
//!   a hard link, which fails rather than replace a file that appeared meanwhile.

use crate::limits::clip_to;
use crate::{Error, Result};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Tries at a fresh temporary name before giving up (each name is 64 random bits, so a clash means
/// something is wrong with the folder).
const TEMP_NAME_TRIES: usize = 16;

/// Longest part of the output's name kept in the temporary file's name, characters (file names are limited
/// to 255 bytes on common file systems).
const TEMP_NAME_KEEP: usize = 64;

/// Refuse an output path given to `flag` whose extension (any case) is not `ext`, naming the fix.
pub fn check_extension(path: &Path, flag: &str, ext: &str, what: &str) -> Result<()> {
    let got = path
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase());
    if got.as_deref() == Some(ext) {
        return Ok(());
    }
    Err(Error::Usage(format!(
        "{}: {flag} writes {what}, so the file needs the extension .{ext}; write e.g. {flag} {}",
        path.display(),
        path.with_extension(ext).display()
    )))
}

/// Check, before anything is written, that every one of `outputs` may be written: no two the same file,
/// none an input, none an existing path unless `overwrite`, none anything but a regular file or a link.
pub fn check_outputs(outputs: &[&Path], overwrite: bool, inputs: &[&Path]) -> Result<()> {
    for (i, a) in outputs.iter().enumerate() {
        for b in &outputs[..i] {
            if resolved(a) == resolved(b) {
                return Err(Error::Usage(format!(
                    "{} is given for two outputs of this run; give each output its own path",
                    a.display()
                )));
            }
        }
        check_one(a, overwrite, inputs)?;
    }
    Ok(())
}

/// Write `bytes` to `path` under the rules of the module docs.
///
/// `inputs` are the files this run read: none of them is ever replaced. An existing `path` is replaced only
/// when `overwrite` is true (the commands' `--force`), and only if it is a regular file or a link.
pub fn write_output(path: &Path, bytes: &[u8], overwrite: bool, inputs: &[&Path]) -> Result<()> {
    check_one(path, overwrite, inputs)?;
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let file_name = path
        .file_name()
        .ok_or_else(|| Error::Usage(format!("{}: not a file path", path.display())))?;
    let (tmp, mut file) =
        create_temp(dir, &file_name.to_string_lossy()).map_err(|e| Error::io(path, e))?;
    let written = file.write_all(bytes).and_then(|_| file.sync_all());
    drop(file);
    let placed = written.and_then(|_| {
        if overwrite {
            // rename replaces a link itself, never what it points to.
            std::fs::rename(&tmp, path)
        } else {
            place_new(&tmp, path)
        }
    });
    let _ = std::fs::remove_file(&tmp);
    match placed {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Err(exists(path)),
        Err(e) => Err(Error::io(path, e)),
    }
}

/// Move `tmp` to `path` only if nothing is at `path`: a hard link fails if `path` exists, even as a
/// dangling link. Where hard links are not supported, check and rename.
fn place_new(tmp: &Path, path: &Path) -> std::io::Result<()> {
    match std::fs::hard_link(tmp, path) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Err(e),
        Err(_) => {
            if std::fs::symlink_metadata(path).is_ok() {
                return Err(std::io::ErrorKind::AlreadyExists.into());
            }
            std::fs::rename(tmp, path)
        }
    }
}

/// A new temporary file in `dir`, created exclusively under an unpredictable name.
fn create_temp(dir: &Path, name: &str) -> std::io::Result<(PathBuf, std::fs::File)> {
    let keep = clip_to(name, TEMP_NAME_KEEP).replace("...", "");
    let mut last = None;
    for _ in 0..TEMP_NAME_TRIES {
        let tmp = dir.join(format!(".{keep}.{:016x}.coldtrace-tmp", random_u64()));
        match open_exclusive(&tmp) {
            Ok(f) => return Ok((tmp, f)),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => last = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last.unwrap_or_else(|| std::io::ErrorKind::AlreadyExists.into()))
}

/// Create `path` only if nothing is there: `O_CREAT | O_EXCL`, which fails on an existing file and on a
/// symbolic link, dangling or not, rather than follow it.
fn open_exclusive(path: &Path) -> std::io::Result<std::fs::File> {
    std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(path)
}

/// 64 bits nobody can predict: the standard library's hasher keys come from the operating system's random
/// source, and every `RandomState` gets fresh ones.
fn random_u64() -> u64 {
    use std::hash::{BuildHasher, Hasher};
    let mut h = std::collections::hash_map::RandomState::new().build_hasher();
    h.write_u128(
        std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0),
    );
    h.write_u32(std::process::id());
    h.finish()
}

/// Refuse a new output whose folder does not exist, naming the folder.
fn check_folder(path: &Path) -> Result<()> {
    match path.parent() {
        Some(dir) if !dir.as_os_str().is_empty() && !dir.is_dir() => Err(Error::Usage(format!(
            "{}: the output's folder {} does not exist; create it first, or write the output elsewhere",
            path.display(),
            dir.display()
        ))),
        _ => Ok(()),
    }
}

fn check_one(path: &Path, overwrite: bool, inputs: &[&Path]) -> Result<()> {
    for input in inputs {
        if same_file(path, input) {
            return Err(Error::Usage(format!(
                "{}: refusing to write over an input file; choose another output path",
                path.display()
            )));
        }
    }
    let meta = match std::fs::symlink_metadata(path) {
        Ok(m) => m,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return check_folder(path),
        Err(e) => return Err(Error::io(path, e)),
    };
    let ft = meta.file_type();
    if !(ft.is_file() || ft.is_symlink()) {
        let what = if ft.is_dir() {
            "a folder"
        } else {
            special_kind(&ft)
        };
        return Err(Error::Usage(format!(
            "{}: is {what}, not a regular file; coldtrace writes only regular files and replaces nothing \
             else, even with --force: choose a file path",
            path.display()
        )));
    }
    if !overwrite {
        return Err(exists(path));
    }
    Ok(())
}

fn exists(path: &Path) -> Error {
    Error::Usage(format!(
        "{}: the file exists; choose another output path or pass --force to replace it",
        path.display()
    ))
}

#[cfg(unix)]
fn special_kind(ft: &std::fs::FileType) -> &'static str {
    use std::os::unix::fs::FileTypeExt;
    if ft.is_fifo() {
        "a FIFO"
    } else if ft.is_char_device() || ft.is_block_device() {
        "a device"
    } else if ft.is_socket() {
        "a socket"
    } else {
        "a special file"
    }
}

#[cfg(not(unix))]
fn special_kind(_: &std::fs::FileType) -> &'static str {
    "a special file"
}

/// The file a path names, for comparing outputs that may not exist yet: the canonical folder and the name.
fn resolved(path: &Path) -> PathBuf {
    if let Ok(p) = std::fs::canonicalize(path) {
        return p;
    }
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    match (std::fs::canonicalize(dir), path.file_name()) {
        (Ok(d), Some(n)) => d.join(n),
        _ => path.to_path_buf(),
    }
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
        // No temporary file is left behind.
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn placing_without_overwrite_never_replaces_what_appeared_meanwhile() {
        let dir = tempfile::tempdir().unwrap();
        let (tmp, _) = create_temp(dir.path(), "x.csv").unwrap();
        std::fs::write(&tmp, b"new").unwrap();
        let target = dir.path().join("x.csv");
        std::fs::write(&target, b"theirs").unwrap();
        let e = place_new(&tmp, &target).unwrap_err();
        assert_eq!(e.kind(), std::io::ErrorKind::AlreadyExists);
        assert_eq!(std::fs::read(&target).unwrap(), b"theirs");
        std::fs::remove_file(&target).unwrap();
        place_new(&tmp, &target).unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"new");
    }

    #[test]
    fn temporary_names_differ() {
        let dir = tempfile::tempdir().unwrap();
        let (a, _) = create_temp(dir.path(), "x.csv").unwrap();
        let (b, _) = create_temp(dir.path(), "x.csv").unwrap();
        assert_ne!(a, b);
    }

    #[cfg(unix)]
    #[test]
    fn a_link_planted_at_a_temporary_name_is_not_followed() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("precious.txt");
        std::fs::write(&target, b"keep").unwrap();
        let planted = dir.path().join(".out.csv.0000000000000000.coldtrace-tmp");
        std::os::unix::fs::symlink(&target, &planted).unwrap();
        assert!(open_exclusive(&planted).is_err());
        let dangling = dir.path().join("dangling");
        std::os::unix::fs::symlink(dir.path().join("nowhere"), &dangling).unwrap();
        assert!(open_exclusive(&dangling).is_err());
        assert!(!dir.path().join("nowhere").exists());
        assert_eq!(std::fs::read(&target).unwrap(), b"keep");
    }

    #[test]
    fn two_outputs_may_not_share_a_path() {
        let dir = tempfile::tempdir().unwrap();
        let a = dir.path().join("x.svg");
        let b = dir.path().join(".").join("x.svg");
        let e = check_outputs(&[&a, &b], true, &[]).unwrap_err();
        assert!(e.to_string().contains("two outputs"), "{e}");
        check_outputs(&[&a, &dir.path().join("y.svg")], false, &[]).unwrap();
    }
}
