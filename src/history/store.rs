//! The storage interface of the history and its plain record types. A back-end ([`super::SqliteStore`]
//! now; another database later) implements [`HistoryStore`]; everything above it (recording, trends,
//! export, the commands) speaks only to the trait.
//!
//! Conventions: as in [`super`]: dB for reflections and loss changes, seconds for delays (one-way), as-built
//! metres for positions, RFC 3339 UTC text for times.

use super::HistoryError;
use crate::compare::Severity;
use crate::line::State;
use serde::Serialize;
use std::path::Path;

/// What a landmark is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum LandmarkKind {
    /// A connector of the line file: its compensated reflection.
    Connector,
    /// A stretch of line between landmarks, as the comparator aligned it: its electrical length and loss
    /// change against the baseline.
    Segment,
}

impl LandmarkKind {
    pub fn name(self) -> &'static str {
        match self {
            LandmarkKind::Connector => "connector",
            LandmarkKind::Segment => "segment",
        }
    }

    pub fn parse(s: &str) -> Option<LandmarkKind> {
        match s {
            "connector" => Some(LandmarkKind::Connector),
            "segment" => Some(LandmarkKind::Segment),
            _ => None,
        }
    }
}

/// One landmark's figures in one record.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Landmark {
    /// The line file's element name (a segment: the comparator's segment name).
    pub element: String,
    pub kind: LandmarkKind,
    /// As-built extent, m (a connector: its section).
    pub start_m: f64,
    pub end_m: f64,
    /// A connector's compensated reflection, dB: the largest of the compensated trace within one
    /// resolution cell of the connector.
    pub reflection_db: Option<f64>,
    /// The smallest reflection the sweep's noise lets one see there, dB (`line::visibility`); a
    /// `reflection_db` below it is noise.
    pub floor_db: Option<f64>,
    /// A segment's one-way electrical length (group delay) in this sweep, s.
    pub delay_s: Option<f64>,
    /// A segment's round-trip loss change against the baseline record, dB (positive: more loss now).
    pub loss_change_db: Option<f64>,
}

/// A finding of the comparison against the baseline, as stored (a subset of `compare::Finding`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StoredFinding {
    pub rank: usize,
    pub element: String,
    pub distance_m: Option<f64>,
    pub kind: String,
    pub severity: Severity,
    pub reflection_db: Option<f64>,
    pub change_db: Option<f64>,
    pub power_drop_db: Option<f64>,
    pub explanation: String,
}

/// Everything one record stores.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NewRecord {
    pub line: String,
    /// When the sweep was taken, RFC 3339 UTC, and its Unix time in ms.
    pub at: String,
    pub at_ms: i64,
    pub state: State,
    pub note: Option<String>,
    /// The sweep file as given.
    pub sweep: String,
    /// SHA-256 of the sweep file's bytes, lower-case hex.
    pub sha256: String,
    /// (stage, K) in the record's state.
    pub stage_temperatures: Vec<(String, f64)>,
    pub landmarks: Vec<Landmark>,
    /// The baseline record the findings are against, when the line had one.
    pub compared_with: Option<i64>,
    pub findings: Vec<StoredFinding>,
    /// The worst finding's severity (`None` without a baseline).
    pub worst_severity: Option<Severity>,
}

/// A record as listed. JSON: `history list --json` `records[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecordSummary {
    pub id: i64,
    pub line: String,
    pub at: String,
    pub state: State,
    pub sha256: String,
    pub sweep: String,
    pub note: Option<String>,
    /// The worst finding against the baseline (`null` when none was compared).
    pub worst_severity: Option<Severity>,
    /// The baseline record the findings were against.
    pub compared_with: Option<i64>,
    /// True for the line's chosen baseline.
    pub is_baseline: bool,
}

/// A record with everything stored for it. JSON: `history show --json` `records[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecordDetail {
    #[serde(flatten)]
    pub summary: RecordSummary,
    pub stage_temperatures: Vec<StageTemperature>,
    pub landmarks: Vec<Landmark>,
    pub findings: Vec<StoredFinding>,
}

/// A stage's temperature in a record.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StageTemperature {
    pub stage: String,
    pub kelvin: f64,
}

/// What storing a record did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Inserted {
    pub id: i64,
    /// False when a record of the same sweep content was already there (nothing was written).
    pub created: bool,
}

/// A history back-end. Every write is one transaction: it happens whole or not at all.
pub trait HistoryStore {
    /// Where the history lives, as messages name it: a file's path, or a server's URL without its
    /// password.
    fn location(&self) -> String;
    /// The database file, for a back-end that keeps one (so that no output is ever written over it).
    fn file(&self) -> Option<&Path> {
        None
    }
    /// Store a record, unless one with the same `sha256` exists (then return that one's id).
    fn insert(&mut self, rec: &NewRecord) -> Result<Inserted, HistoryError>;
    /// The record of this sweep content, if any.
    fn find_sha256(&self, sha256: &str) -> Result<Option<RecordSummary>, HistoryError>;
    /// Records, oldest first (by time taken, then id); of one line, or of all.
    fn list(&self, line: Option<&str>) -> Result<Vec<RecordSummary>, HistoryError>;
    /// The names of the lines recorded, sorted.
    fn lines(&self) -> Result<Vec<String>, HistoryError>;
    /// Everything stored for one record.
    fn detail(&self, id: i64) -> Result<Option<RecordDetail>, HistoryError>;
    /// The line's chosen baseline record.
    fn baseline(&self, line: &str) -> Result<Option<i64>, HistoryError>;
    /// Choose the record later sweeps of the line are compared against (a record of that line).
    fn set_baseline(&mut self, line: &str, record: i64) -> Result<(), HistoryError>;

    /// Every record of `line` in detail, oldest first; an unknown line is an error naming the closest
    /// known one.
    fn line_details(&self, line: &str) -> Result<Vec<RecordDetail>, HistoryError> {
        check_line(&self.lines()?, line, &self.location())?;
        let mut out = Vec::new();
        for r in self.list(Some(line))? {
            if let Some(d) = self.detail(r.id)? {
                out.push(d);
            }
        }
        Ok(out)
    }
}

/// `line` must be one of the `known` lines of the history at `db`; else an error naming the closest.
pub fn check_line(known: &[String], line: &str, db: &str) -> Result<(), HistoryError> {
    if known.iter().any(|l| l == line) {
        return Ok(());
    }
    let best = crate::line::names::closest(line, known.iter().map(|k| (k.as_str(), k.as_str())));
    Err(HistoryError::UnknownLine {
        db: db.to_string(),
        line: line.to_string(),
        suggestion: crate::line::names::did_you_mean(best),
    })
}
