//! coldtrace: locate, rank and explain faults in cryogenic RF coax lines from network-analyzer sweeps.
//!
//! The modules follow the data:
//! [`touchstone`] (read and write sweeps) -> [`transform`] (frequency to time/distance) ->
//! [`line`](mod@line) (the chain as built, its cryogenic physics, a forward simulator) -> [`compare`]
//! (align, detect, rank, explain) -> [`history`] (each line's records, trends) -> [`report`] (text, JSON,
//! plots).
//!
//! Conventions shared by every module (each module restates what it relies on):
//! - SI units everywhere inside the library: Hz, s, m, ohm, K, nepers. Decibels appear only at the edges
//!   (parsed input, reports).
//! - Time dependence e^{+j omega t}; a line of length l with propagation constant gamma multiplies a wave
//!   travelling along it by e^{-gamma l}.
//! - "Distance" is one-way, along the line, from the reference plane (the analyzer's calibrated port or the top
//!   flange, whichever the sweep was referenced to).
//!
//! The binary (`src/main.rs`) only parses arguments into the plain config structs of this library.

pub mod compare;
pub mod history;
pub mod limits;
pub mod line;
pub mod network;
pub mod numeric;
pub mod output;
pub mod report;
pub mod survey;
pub mod touchstone;
pub mod transform;
pub mod units;
pub mod warning;

pub use network::Network;
pub use warning::Warning;

use std::path::PathBuf;

/// Process exit codes, documented in the README.
pub mod exit {
    /// Everything went fine, and no finding reached the `--fail-on` severity.
    pub const OK: u8 = 0;
    /// The run worked, and at least one finding reached the `--fail-on` severity.
    pub const FINDINGS: u8 = 1;
    /// Bad input or usage: a file that cannot be read or parsed, a flag out of range.
    pub const BAD_INPUT: u8 = 2;
}

/// Every error the library reports, one variant per layer.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    #[error(transparent)]
    Touchstone(#[from] touchstone::TouchstoneError),
    #[error(transparent)]
    Transform(#[from] transform::TransformError),
    #[error(transparent)]
    Line(#[from] line::LineError),
    #[error(transparent)]
    Compare(#[from] compare::CompareError),
    #[error(transparent)]
    Report(#[from] report::ReportError),
    #[error(transparent)]
    Units(#[from] units::UnitError),
    #[error(transparent)]
    History(#[from] history::HistoryError),
    #[error(transparent)]
    Survey(#[from] survey::SurveyError),
    /// A file could not be read or written.
    #[error("{path}: {source}")]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// A request that is well formed but cannot be honoured; the message says what fixes it.
    #[error("{0}")]
    Usage(String),
}

impl Error {
    /// Wrap an I/O error with the path it concerns.
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            source,
        }
    }
}

/// Result alias used across the library.
pub type Result<T, E = Error> = std::result::Result<T, E>;
