//! Touchstone files (IBIS Open Forum Touchstone File Format Specification: version 1.1 (EIA/IBIS Open Forum,
//! 2002) describing version 1 files, version 2.0 (ratified 2009) and 2.1 (ratified 2024)): reading every
//! version into a [`Network`] of S-parameters, and writing version 1 and 2 files.
//!
//! Conventions: after reading, frequencies are in Hz and every parameter set (S, Y, Z, H, G) has been
//! converted to complex S-parameters at the file's per-port reference resistances (see `convert`); the
//! original parameter, format and unit are kept in [`FileInfo`]. Angles in files are degrees. Harmless
//! deviations real instruments produce are accepted with a [`Warning`]; everything else is a
//! [`TouchstoneError`] naming path, line, column and the fix. `docs/touchstone.md` lists both.

mod convert;
mod error;
mod keywords;
mod lexer;
mod options;
mod parser;
mod source;
mod summary;
mod writer;

pub use error::{ErrorKind, TouchstoneError};
pub use options::DEFAULT_REFERENCE_OHM;
pub use source::{check_ports, is_stdin, read_source, stdin_name, STDIN};
pub use summary::{summarize, Summary, GRID_TOLERANCE};
pub use writer::{write, write_file, WriteOptions, WriteVersion};

use crate::{Network, Warning};
use serde::Serialize;
use std::path::Path;

/// A file that was read: the network as S-parameters, what the file said about itself, and warnings.
#[derive(Debug, Clone, PartialEq)]
pub struct Touchstone {
    pub network: Network,
    pub info: FileInfo,
    pub warnings: Vec<Warning>,
}

/// What the file declared (before conversion to S, Hz).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FileInfo {
    pub version: Version,
    /// The parameter stored in the file (the network holds S regardless).
    pub parameter: Parameter,
    pub format: Format,
    pub unit: FreqUnit,
    /// Per-port reference resistances, ohm (option line `R`, or `[Reference]` in version 2).
    pub reference_ohm: Vec<f64>,
    /// Whether the option line was present (defaults apply when it was not).
    pub option_line: bool,
    /// `[Two-Port Data Order]` (version 2, 2-ports); version 1 2-ports are always `21_12`.
    pub two_port_order: Option<TwoPortOrder>,
    /// `[Matrix Format]` (version 2); `Full` for version 1.
    pub matrix_format: MatrixFormat,
    /// `[Mixed-Mode Order]` as written (version 2), kept but not interpreted.
    pub mixed_mode_order: Option<String>,
    /// The lines between `[Begin Information]` and `[End Information]` (version 2), comments removed.
    pub information: Vec<String>,
    /// Comment texts (after `!`) before the first data line, in order: vendor headers and the like.
    pub header_comments: Vec<String>,
}

/// File format version.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Version {
    /// A file without `[Version]` and without version 1.1 features.
    #[serde(rename = "1.0")]
    V1_0,
    /// A file without `[Version]` that uses a version 1.1 feature (one R per port on the option line).
    #[serde(rename = "1.1")]
    V1_1,
    #[serde(rename = "2.0")]
    V2_0,
    #[serde(rename = "2.1")]
    V2_1,
}

impl Version {
    pub fn as_str(self) -> &'static str {
        match self {
            Version::V1_0 => "1.0",
            Version::V1_1 => "1.1",
            Version::V2_0 => "2.0",
            Version::V2_1 => "2.1",
        }
    }

    /// Version 2.0 or 2.1 (keyword-based files).
    pub fn is_v2(self) -> bool {
        matches!(self, Version::V2_0 | Version::V2_1)
    }
}

/// Which parameters a file holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Parameter {
    S,
    Y,
    Z,
    H,
    G,
}

impl Parameter {
    pub fn as_str(self) -> &'static str {
        match self {
            Parameter::S => "S",
            Parameter::Y => "Y",
            Parameter::Z => "Z",
            Parameter::H => "H",
            Parameter::G => "G",
        }
    }
}

/// How each complex value is written: real/imaginary, magnitude/angle (degrees), dB/angle (degrees).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Format {
    RI,
    MA,
    DB,
}

impl Format {
    pub fn as_str(self) -> &'static str {
        match self {
            Format::RI => "RI",
            Format::MA => "MA",
            Format::DB => "DB",
        }
    }

    /// Parse `RI`, `MA` or `DB` in any letter case.
    pub fn from_name(name: &str) -> Option<Format> {
        match name.to_ascii_lowercase().as_str() {
            "ri" => Some(Format::RI),
            "ma" => Some(Format::MA),
            "db" => Some(Format::DB),
            _ => None,
        }
    }
}

/// Frequency unit of a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum FreqUnit {
    Hz,
    #[serde(rename = "kHz")]
    KHz,
    #[serde(rename = "MHz")]
    MHz,
    #[serde(rename = "GHz")]
    GHz,
}

impl FreqUnit {
    /// Hz per unit.
    pub fn hz(self) -> f64 {
        match self {
            FreqUnit::Hz => 1.0,
            FreqUnit::KHz => 1e3,
            FreqUnit::MHz => 1e6,
            FreqUnit::GHz => 1e9,
        }
    }

    pub fn as_str(self) -> &'static str {
        match self {
            FreqUnit::Hz => "Hz",
            FreqUnit::KHz => "kHz",
            FreqUnit::MHz => "MHz",
            FreqUnit::GHz => "GHz",
        }
    }

    /// Parse `Hz`, `kHz`, `MHz` or `GHz` in any letter case.
    pub fn from_name(name: &str) -> Option<FreqUnit> {
        match name.to_ascii_lowercase().as_str() {
            "hz" => Some(FreqUnit::Hz),
            "khz" => Some(FreqUnit::KHz),
            "mhz" => Some(FreqUnit::MHz),
            "ghz" => Some(FreqUnit::GHz),
            _ => None,
        }
    }
}

/// `[Two-Port Data Order]`: `21_12` is N11 N21 N12 N22 (the version 1 order), `12_21` is N11 N12 N21 N22.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum TwoPortOrder {
    #[serde(rename = "21_12")]
    O21_12,
    #[serde(rename = "12_21")]
    O12_21,
}

/// `[Matrix Format]`: the whole matrix, or only its lower or upper triangle (row by row, mirrored).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum MatrixFormat {
    Full,
    Lower,
    Upper,
}

/// Read a Touchstone file. The port count comes from `[Number of Ports]` (version 2) or the `.sNp`
/// extension (version 1). Files above [`crate::limits::MAX_SWEEP_FILE_BYTES`] and devices are refused
/// before anything is read; a pipe is read up to that limit.
///
/// The file is read in pieces of [`READ_PIECE_BYTES`], each parsed as soon as its lines are complete, so the
/// text is never held whole: reading a sweep costs little more memory than the network it holds (a
/// 1,000,000-point file of 43 MB, docs/performance.md). What it finds is [`read_bytes`]'s on the whole file,
/// but that the first fault in the file's order is the one reported.
pub fn read_file(path: &Path) -> Result<Touchstone, TouchstoneError> {
    let io = |source| TouchstoneError::Io {
        path: path.to_path_buf(),
        source,
    };
    let limit = crate::limits::MAX_SWEEP_FILE_BYTES;
    let (file, size) = crate::limits::open_capped(path, limit, "sweep").map_err(io)?;
    // A file smaller than a piece is read in one piece of its own size (and a byte more, to meet its end):
    // a small sweep then takes a small buffer, which the allocator keeps for the next one, where a
    // piece-sized buffer would be mapped, zeroed page by page and returned at every file.
    let piece = size.map_or(READ_PIECE_BYTES, |n| {
        (n as usize).saturating_add(1).min(READ_PIECE_BYTES)
    });
    read_pieces_sized(file, path, limit, piece, size)
}

/// Share added to the records a file is estimated to hold from its first piece (lines differ in length).
pub const RECORDS_MARGIN: f64 = 0.125;

/// Size of the pieces [`read_file`] reads a file in, bytes (a few thousand lines of a sweep).
pub const READ_PIECE_BYTES: usize = 256 << 10;

/// Read Touchstone text from `reader` in pieces of `piece` bytes (at least 1), refusing more than `limit`
/// bytes; `path` as in [`read_str`]. Each piece's complete lines are checked to be text and parsed before
/// the next is read (a line end is cut only where it cannot be the first half of a CR LF), so the result is
/// [`read_bytes`]'s on the whole text, line numbers and columns included, whatever the piece size.
pub fn read_pieces(
    reader: impl std::io::Read,
    path: &Path,
    limit: u64,
    piece: usize,
) -> Result<Touchstone, TouchstoneError> {
    read_pieces_sized(reader, path, limit, piece, None)
}

/// [`read_pieces`] of a text of `size` bytes (when known): once the first piece is parsed, the records'
/// arrays are given room for as many records as the rest of the text holds at the first piece's density
/// and an eighth more ([`RECORDS_MARGIN`]), so that they are allocated once where they would grow by
/// doubling, each growth a copy (and, for a large file, the heap grown through every size below the
/// allocator's mapping threshold). The result is [`read_pieces`]'s, value for value.
fn read_pieces_sized(
    mut reader: impl std::io::Read,
    path: &Path,
    limit: u64,
    piece: usize,
    size: Option<u64>,
) -> Result<Touchstone, TouchstoneError> {
    let piece = piece.max(1);
    let mut reserved = false;
    let io = |source| TouchstoneError::Io {
        path: path.to_path_buf(),
        source,
    };
    let mut feed = parser::LineFeed::new(path);
    // The bytes read and not yet parsed are `store[begin..end]`; the store starts at one piece and grows
    // (zeroing only what it adds) to hold what is left of a line and the next piece.
    let mut store: Vec<u8> = vec![0; piece];
    let (mut begin, mut end) = (0usize, 0usize);
    let mut total: u64 = 0;
    let mut eof = false;
    // Lines fed so far; line feeds before `begin` and bytes since the last of them (for a byte that is not
    // text, placed as `read_bytes` places it).
    let (mut lines, mut lf_before, mut since_lf) = (0usize, 0usize, 0usize);
    let mut bom: Option<bool> = None;
    let mut mark = [0u8; 4];
    let mark = BYTE_ORDER_MARK.encode_utf8(&mut mark).as_bytes();
    loop {
        if !eof {
            store.copy_within(begin..end, 0);
            (begin, end) = (0, end - begin);
            if store.len() < end + piece {
                store.resize(end + piece, 0);
            }
            let got = loop {
                match reader.read(&mut store[end..end + piece]) {
                    Ok(n) => break n,
                    Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
                    Err(e) => return Err(io(e)),
                }
            };
            end += got;
            eof = got == 0;
            total += got as u64;
            if total > limit {
                return Err(io(crate::limits::too_large_error("sweep", limit)));
            }
        }
        if bom.is_none() {
            if end - begin < mark.len() && !eof {
                continue;
            }
            let has = store[begin..end].starts_with(mark);
            if has {
                begin += mark.len();
                since_lf = mark.len();
            }
            bom = Some(has);
        }
        let buf = &store[begin..end];
        let cut = if eof {
            buf.len()
        } else {
            match memchr::memrchr(b'\n', buf) {
                Some(i) => i + 1,
                // A lone CR ends a line too, but not the last byte read: a LF may follow it.
                None => buf[..buf.len().saturating_sub(1)]
                    .iter()
                    .rposition(|&b| b == b'\r')
                    .map_or(0, |i| i + 1),
            }
        };
        if cut > 0 {
            let seg = &buf[..cut];
            let text = std::str::from_utf8(seg).map_err(|e| {
                let good = &seg[..e.valid_up_to()];
                let col = match memchr::memrchr(b'\n', good) {
                    Some(i) => good.len() - i - 1,
                    None => since_lf + good.len(),
                };
                not_text(
                    path,
                    1 + lf_before + bytecount(good),
                    1 + col,
                    seg[good.len()],
                )
            })?;
            let before = lines;
            for mut line in lexer::Lines::new(text) {
                line.number += before;
                lines = line.number;
                feed.line(line)?;
            }
            since_lf = match memchr::memrchr(b'\n', seg) {
                Some(i) => seg.len() - i - 1,
                None => since_lf + seg.len(),
            };
            lf_before += bytecount(seg);
            begin += cut;
            if !reserved && !eof {
                if let Some(size) = size {
                    reserved = feed.reserve_for(total - (end - begin) as u64, size);
                }
            }
        }
        if eof && begin == end {
            break;
        }
    }
    let mut ts = feed.finish()?;
    if bom == Some(true) {
        ts.warnings.insert(0, byte_order_mark_warning(path));
    }
    Ok(ts)
}

/// Line feeds in `b`.
fn bytecount(b: &[u8]) -> usize {
    memchr::memchr_iter(b'\n', b).count()
}

/// A byte that is not text at `line`, `col` (1-based).
fn not_text(path: &Path, line: usize, col: usize, byte: u8) -> TouchstoneError {
    TouchstoneError::Parse {
        path: path.to_path_buf(),
        line,
        col,
        kind: ErrorKind::NotText,
        found: format!("byte 0x{byte:02x}"),
        expected: "printable ASCII text".into(),
        fix: "save the file as plain ASCII text; Touchstone files hold only ASCII characters"
            .into(),
    }
}

/// The warning of a file that starts with a byte-order mark.
fn byte_order_mark_warning(path: &Path) -> Warning {
    Warning::new(
        "byte-order-mark",
        "the file starts with a UTF-8 byte-order mark (an invisible character some editors add); it was skipped",
        "save the file as plain ASCII text without a byte-order mark",
    )
    .at(format!("{}:1", path.display()))
}

/// Read Touchstone text; `path` names it in messages and gives the `.sNp` extension.
/// A UTF-8 byte-order mark at the start is skipped with a `byte-order-mark` warning.
pub fn read_str(text: &str, path: &Path) -> Result<Touchstone, TouchstoneError> {
    match text.strip_prefix(BYTE_ORDER_MARK) {
        None => parser::parse(text, path),
        Some(rest) => {
            let mut ts = parser::parse(rest, path)?;
            ts.warnings.insert(0, byte_order_mark_warning(path));
            Ok(ts)
        }
    }
}

/// The UTF-8 byte-order mark, U+FEFF, which some editors put at the start of a text file.
pub const BYTE_ORDER_MARK: char = '\u{feff}';

/// Read raw bytes (checked to be text first); `path` as in [`read_str`].
pub fn read_bytes(bytes: &[u8], path: &Path) -> Result<Touchstone, TouchstoneError> {
    match std::str::from_utf8(bytes) {
        Ok(text) => read_str(text, path),
        Err(e) => {
            let good = &bytes[..e.valid_up_to()];
            let line = 1 + good.iter().filter(|&&b| b == b'\n').count();
            let col = 1 + good.iter().rev().take_while(|&&b| b != b'\n').count();
            Err(not_text(path, line, col, bytes[e.valid_up_to()]))
        }
    }
}

/// The port count a `.sNp` file name gives (`a.s2p` -> 2), if any.
pub fn ports_from_extension(path: &Path) -> Option<usize> {
    let ext = path.extension()?.to_str()?.to_ascii_lowercase();
    let digits = ext.strip_prefix('s')?.strip_suffix('p')?;
    if digits.is_empty() || !digits.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    digits.parse().ok().filter(|&n: &usize| n >= 1)
}
