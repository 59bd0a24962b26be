//! Errors of the Touchstone layer: every one names the file, the line and column, what was found, what was
//! expected there, and what fixes it.

use serde::Serialize;
use std::path::PathBuf;

/// What kind of rule a file broke (stable, kebab-case in JSON).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ErrorKind {
    /// A network (or noise) frequency that is not larger than the one before it.
    NonIncreasingFrequency,
    /// A line or record with the wrong number of values.
    WrongValueCount,
    /// A token where a number was expected that is not one.
    NotANumber,
    /// A `[Keyword]` the specification does not define.
    UnknownKeyword,
    /// A keyword in a place (or a file version) where it is not allowed, or given twice.
    MisplacedKeyword,
    /// A keyword the specification requires is absent.
    MissingKeyword,
    /// The number of records disagrees with `[Number of Frequencies]` / `[Number of Noise Frequencies]`.
    CountMismatch,
    /// The option line (`# GHz S RI R 50`) holds something it may not.
    BadOptionLine,
    /// A keyword's argument is not one of the allowed values.
    BadKeywordValue,
    /// The number of ports cannot be told, or is not allowed for the parameter.
    BadPortCount,
    /// The file is not text (invalid UTF-8 or control characters).
    NotText,
    /// The file holds no network data.
    NoData,
    /// The values cannot be converted to S-parameters (a singular matrix).
    Unconvertible,
}

/// Errors of this layer.
#[derive(Debug, thiserror::Error)]
pub enum TouchstoneError {
    /// A file that breaks a rule of the specification.
    #[error("{}:{line}:{col}: found '{found}', expected {expected}; fix: {fix}", path.display())]
    Parse {
        path: PathBuf,
        /// 1-based line number.
        line: usize,
        /// 1-based column (characters) of the offending token; 1 when the whole line is meant.
        col: usize,
        kind: ErrorKind,
        found: String,
        expected: String,
        fix: String,
    },
    /// The file could not be read.
    #[error("{}: {source}", path.display())]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// A network that cannot be written in the requested form; the message says what fixes it.
    #[error("{0}")]
    Invalid(String),
}

impl TouchstoneError {
    /// The rule broken, for parse errors.
    pub fn kind(&self) -> Option<ErrorKind> {
        match self {
            TouchstoneError::Parse { kind, .. } => Some(*kind),
            _ => None,
        }
    }

    /// The 1-based line of a parse error.
    pub fn line(&self) -> Option<usize> {
        match self {
            TouchstoneError::Parse { line, .. } => Some(*line),
            _ => None,
        }
    }
}
