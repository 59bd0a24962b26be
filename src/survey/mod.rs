//! A fleet survey: every line of a manifest compared (baseline against current) in parallel, ranked worst
//! first, each line's answer exactly what `compare` gives for that pair, a broken line reported in its own
//! row while the rest carry on.
//!
//! How the parts fit: [`manifest`] reads the TOML manifest into [`SurveyItem`]s; [`run_survey`] maps them on
//! a rayon pool through `compare::job::run_compare` (and, when asked, `history::record_sweep` on the current
//! sweep), keeping of each line only its row ([`SurveyLine`]: the findings, not the traces), so memory
//! grows with the number of findings, not with the sweeps; [`rank`] orders the rows.
//!
//! Conventions: as `compare` (docs/output.md): dB at the edges, as-built metres, severities `info` <
//! `minor` < `major` < `critical`.

pub mod manifest;

pub use manifest::{parse_manifest, read_manifest, SurveyItem};

use crate::compare::job::{run_compare_findings_in, CompareJob, LineSource};
use crate::compare::{AnalysisConfig, Finding, Severity};
use crate::history::{open_store, record_sweep, Database, RecordJob};
use crate::transform::TraceEngine;
use rayon::prelude::*;
use serde::Serialize;
use std::path::PathBuf;

/// Errors of the survey layer (a bad manifest; a line's own failure is a row, not an error).
#[derive(Debug, thiserror::Error)]
pub enum SurveyError {
    /// A manifest that cannot be used; `line`/`column` 1-based, 0 when unknown.
    #[error("{}:{line}:{column}: {message}", path.display())]
    Manifest {
        path: PathBuf,
        line: usize,
        column: usize,
        message: String,
    },
    /// A request that cannot be honoured (the message says what fixes it).
    #[error("{0}")]
    Invalid(String),
}

/// How to survey.
#[derive(Debug, Clone, PartialEq)]
pub struct SurveyConfig {
    /// Worker threads; `None`: one per core.
    pub jobs: Option<usize>,
    /// Record each line's current sweep in the history at this database.
    pub record_db: Option<Database>,
    pub analysis: AnalysisConfig,
}

/// One line's row. JSON: `survey --json` `lines[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurveyLine {
    /// The line's name from its line file (the line file's path when it could not be read).
    pub line: String,
    pub line_file: String,
    pub baseline: String,
    pub current: String,
    /// The worst finding's severity; `null` for a broken line.
    pub worst_severity: Option<Severity>,
    /// The findings, as `compare` gives them, rank 1 first.
    pub findings: Vec<Finding>,
    /// Why the line could not be analysed (an unreadable sweep, a bad line file); `null` otherwise.
    pub error: Option<String>,
    /// With `--record`: the history record of the current sweep (an existing one when already recorded).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub record_id: Option<i64>,
    /// With `--record`: why the record could not be stored.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub record_error: Option<String>,
    /// The `[[line]]` table's line in the manifest.
    pub manifest_line: usize,
}

impl SurveyLine {
    /// The finding that ranks first, if any.
    pub fn top(&self) -> Option<&Finding> {
        self.findings.first()
    }
}

/// `survey`'s result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurveyReport {
    /// Worst lines first (see [`rank`]).
    pub lines: Vec<SurveyLine>,
    pub warnings: Vec<crate::Warning>,
}

/// Survey one line.
pub fn survey_line(item: &SurveyItem, cfg: &SurveyConfig) -> SurveyLine {
    survey_line_in(item, cfg, &mut TraceEngine::new())
}

/// [`survey_line`] on `engine`'s transform plans (kept by a worker across its lines).
pub fn survey_line_in(
    item: &SurveyItem,
    cfg: &SurveyConfig,
    engine: &mut TraceEngine,
) -> SurveyLine {
    let job = CompareJob {
        baseline: item.baseline.clone(),
        current: item.current.clone(),
        line: LineSource::File(item.line.clone()),
        baseline_state: item.baseline_state,
        current_state: item.current_state,
        analysis: cfg.analysis.clone(),
        source: crate::compare::job::SweepSource::default(),
    };
    let mut row = SurveyLine {
        line: item.line.display().to_string(),
        line_file: item.line.display().to_string(),
        baseline: item.baseline.display().to_string(),
        current: item.current.display().to_string(),
        worst_severity: None,
        findings: Vec::new(),
        error: None,
        record_id: None,
        record_error: None,
        manifest_line: item.manifest_line,
    };
    match run_compare_findings_in(&job, engine) {
        Ok(report) => {
            // Keep the findings only (worked out without plot data or evidence curves, which a fleet's
            // thousands of lines would pile up).
            row.line = report.line;
            row.worst_severity = Some(
                report
                    .findings
                    .iter()
                    .map(|f| f.severity)
                    .max()
                    .unwrap_or(Severity::Info),
            );
            row.findings = report.findings;
        }
        Err(e) => row.error = Some(e.to_string()),
    }
    if let Some(db) = &cfg.record_db {
        let rec = open_store(db, true)
            .map_err(crate::Error::from)
            .and_then(|mut store| {
                record_sweep(
                    &mut *store,
                    &RecordJob {
                        sweep: item.current.clone(),
                        line: item.line.clone(),
                        state: item.current_state,
                        at: None,
                        note: None,
                        analysis: cfg.analysis.clone(),
                    },
                )
            });
        match rec {
            Ok(o) => row.record_id = Some(o.id),
            Err(e) => row.record_error = Some(e.to_string()),
        }
    }
    row
}

/// Order rows worst first: broken lines, then by worst severity, then by the top finding's power drop,
/// then by manifest order.
pub fn rank(lines: &mut [SurveyLine]) {
    let key = |l: &SurveyLine| {
        (
            l.error.is_none(),
            std::cmp::Reverse(l.worst_severity),
            std::cmp::Reverse(
                l.top()
                    .map(|f| ordered(f.power_drop_db))
                    .unwrap_or(i64::MIN),
            ),
            l.manifest_line,
        )
    };
    lines.sort_by_key(key);
}

/// A drop in dB as an orderable integer (micro-dB; infinite drops last of all finite ones).
fn ordered(x: f64) -> i64 {
    if x.is_nan() {
        i64::MIN
    } else {
        (x.clamp(-1e9, 1e9) * 1e6) as i64
    }
}

/// Survey every item on a pool of `cfg.jobs` threads, calling `progress` as each line is done (from the
/// worker threads).
pub fn run_survey(
    items: &[SurveyItem],
    cfg: &SurveyConfig,
    progress: &(dyn Fn(&SurveyLine) + Sync),
) -> Result<SurveyReport, SurveyError> {
    let mut builder = rayon::ThreadPoolBuilder::new();
    if let Some(j) = cfg.jobs {
        if j == 0 {
            return Err(SurveyError::Invalid(
                "--jobs 0: give at least one worker (or leave --jobs out for one per core)".into(),
            ));
        }
        builder = builder.num_threads(j);
    }
    let pool = builder
        .build()
        .map_err(|e| SurveyError::Invalid(format!("cannot start the workers: {e}")))?;
    let mut lines: Vec<SurveyLine> = pool.install(|| {
        items
            .par_iter()
            // One transform engine per worker, kept across its lines: lines on one grid share every plan.
            .map_init(TraceEngine::new, |engine, item| {
                let row = survey_line_in(item, cfg, engine);
                progress(&row);
                row
            })
            .collect()
    });
    rank(&mut lines);
    Ok(SurveyReport {
        lines,
        warnings: Vec::new(),
    })
}

/// The text for people: one row per line, worst first, with its top finding.
pub fn render_survey(r: &SurveyReport) -> String {
    use std::fmt::Write;
    let mut out = String::new();
    let _ = writeln!(
        out,
        "{:<28} {:<9} {:>8}  top finding",
        "line", "worst", "findings"
    );
    for l in &r.lines {
        let above = l
            .findings
            .iter()
            .filter(|f| f.severity > Severity::Info)
            .count();
        let top = match (&l.error, l.top()) {
            (Some(e), _) => format!("error: {e}"),
            (None, Some(f)) if f.severity > Severity::Info => f.explanation.clone(),
            _ => "no change above info".into(),
        };
        let _ = writeln!(
            out,
            "{:<28} {:<9} {:>8}  {}",
            l.line,
            l.worst_severity.map_or("-", |s| s.name()),
            above,
            top
        );
        if let Some(e) = &l.record_error {
            let _ = writeln!(out, "{:<28} not recorded: {e}", "");
        }
    }
    let broken = r.lines.iter().filter(|l| l.error.is_some()).count();
    let _ = writeln!(
        out,
        "\n{} line(s), {} broken; findings counted above info",
        r.lines.len(),
        broken
    );
    out
}
