//! One sweep of a line into a history record: read it once (the bytes hashed are the bytes analysed),
//! locate what it shows, compare it with the line's chosen baseline when there is one, and store the
//! figures in one transaction. Recording the same file content twice finds the first record and writes
//! nothing.
//!
//! The figures (conventions of [`super`]): each connector's compensated reflection, the largest of the
//! comparator's compensated trace (the one `locate` plots) within one resolution cell of the connector's
//! centre, with the detection floor the sweep's noise leaves there (`line::visibility`); each aligned
//! segment's one-way electrical length in this sweep and its round-trip loss change against the baseline
//! (`compare`'s alignment); and the comparison's findings.

use super::store::{HistoryStore, Landmark, LandmarkKind, NewRecord, StoredFinding};
use crate::compare::job::{compare_networks, locate_network, LineModel, PairRequest};
use crate::compare::{AnalysisConfig, CompareReport, LocateReport, Severity};
use crate::line::materials::ROOM_K;
use crate::line::{ElementKind, Line, State};
use crate::{Error, Network, Result, Warning};
use serde::Serialize;
use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};

/// A `history record` request, as plain data.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordJob {
    pub sweep: PathBuf,
    /// The line file (its `name` is the line's name in the history).
    pub line: PathBuf,
    /// The sweep's state; `None` is inferred from the data (as `locate` does) and stored.
    pub state: Option<State>,
    /// When the sweep was taken, RFC 3339 (default: now).
    pub at: Option<String>,
    pub note: Option<String>,
    pub analysis: AnalysisConfig,
}

/// What `history record` did. JSON: `history record --json`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecordOutcome {
    pub id: i64,
    /// False when the same sweep content was already recorded (this is that record; nothing was written).
    pub created: bool,
    pub line: String,
    pub at: String,
    pub state: State,
    pub sha256: String,
    /// The baseline record the findings are against (`null`: the line has no baseline yet).
    pub compared_with: Option<i64>,
    pub worst_severity: Option<Severity>,
    /// How many findings and landmark figures the record holds.
    pub findings: usize,
    pub landmarks: usize,
    pub warnings: Vec<Warning>,
}

/// SHA-256 of `bytes`, lower-case hex (FIPS 180-4).
pub fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// The figures of one sweep, before storing.
#[derive(Debug, Clone, PartialEq)]
pub struct Analysed {
    pub state: State,
    pub landmarks: Vec<Landmark>,
    pub findings: Vec<StoredFinding>,
    pub worst_severity: Option<Severity>,
    pub warnings: Vec<Warning>,
}

/// A baseline sweep in memory: (name, network, state).
pub type BaselineSweep<'a> = (&'a str, &'a Network, State);

/// Analyse one sweep of `line` (`state` `None`: inferred), against `baseline` when given: the path
/// `record_sweep`, fleet surveys and the trend measurement share.
pub fn analyse_sweep(
    name: &str,
    network: &Network,
    line: &Line,
    state: Option<State>,
    baseline: Option<BaselineSweep>,
    cfg: &AnalysisConfig,
) -> Result<Analysed> {
    let located = locate_network(name, network, LineModel::Line(line), state, cfg)?;
    let state = match located.state {
        "warm" => State::Warm,
        _ => State::Cold,
    };
    let mut landmarks = connector_landmarks(line, &located);
    let mut warnings = located.warnings.clone();
    let (mut findings, mut worst) = (Vec::new(), None);
    if let Some((bname, bnet, bstate)) = baseline {
        let report = compare_networks(&PairRequest {
            baseline: (bname, bnet),
            current: (name, network),
            line: LineModel::Line(line),
            baseline_state: Some(bstate),
            current_state: Some(state),
            analysis: cfg,
        })?;
        landmarks.extend(segment_landmarks(&report));
        findings = stored_findings(&report);
        worst = Some(
            report
                .findings
                .iter()
                .map(|f| f.severity)
                .max()
                .unwrap_or(Severity::Info),
        );
        for w in report.warnings {
            if !warnings.contains(&w) {
                warnings.push(w);
            }
        }
    }
    Ok(Analysed {
        state,
        landmarks,
        findings,
        worst_severity: worst,
        warnings,
    })
}

fn db(x: f64) -> f64 {
    20.0 * x.log10()
}

/// Each visible connector's compensated reflection and detection floor, from a `locate` report.
pub fn connector_landmarks(line: &Line, report: &LocateReport) -> Vec<Landmark> {
    let Some((_, xs, ys)) = report.plot.traces.first() else {
        return Vec::new();
    };
    let half = report.resolution_m.max(1e-3);
    line.visible()
        .iter()
        .filter(|e| matches!(e.kind, ElementKind::Connector { .. }))
        .map(|e| {
            let centre = e.start_m + 0.5 * e.length_m;
            let value = xs
                .iter()
                .zip(ys)
                .filter(|(x, _)| (*x - centre).abs() <= half)
                .map(|(_, y)| *y)
                .fold(None, |m: Option<f64>, y| Some(m.map_or(y, |m| m.max(y))));
            let floor = report
                .visibility
                .iter()
                .find(|v| v.element == e.name)
                .and_then(|v| v.min_visible_rho)
                .map(db);
            Landmark {
                element: e.name.clone(),
                kind: LandmarkKind::Connector,
                start_m: e.start_m,
                end_m: e.end_m(),
                reflection_db: value,
                floor_db: floor,
                delay_s: None,
                loss_change_db: None,
            }
        })
        .collect()
}

/// Each aligned segment's electrical length in the current sweep and loss change, from a comparison.
pub fn segment_landmarks(report: &CompareReport) -> Vec<Landmark> {
    report
        .alignment
        .segments
        .iter()
        .map(|s| Landmark {
            element: s.element.clone(),
            kind: LandmarkKind::Segment,
            start_m: s.start_m,
            end_m: s.end_m,
            reflection_db: None,
            floor_db: None,
            // Round trip in the baseline, scaled to the current sweep, halved to one way.
            delay_s: Some(0.5 * s.baseline_delay_s * s.delay_scale),
            loss_change_db: Some(s.loss_change_db),
        })
        .collect()
}

/// A comparison's findings as stored.
pub fn stored_findings(report: &CompareReport) -> Vec<StoredFinding> {
    report
        .findings
        .iter()
        .map(|f| StoredFinding {
            rank: f.rank,
            element: f.place.element.clone(),
            distance_m: Some(f.place.distance_m),
            kind: f.kind.name().to_string(),
            severity: f.severity,
            reflection_db: Some(f.reflection_db),
            change_db: Some(f.change_db),
            power_drop_db: Some(f.power_drop_db),
            explanation: f.explanation.clone(),
        })
        .collect()
}

/// The stages' temperatures in `state`, K (warm: every stage at room temperature).
pub fn stage_temperatures(line: &Line, state: State) -> Vec<(String, f64)> {
    line.stages
        .iter()
        .map(|s| {
            let k = match state {
                State::Warm => ROOM_K,
                State::Cold => s.kelvin,
            };
            (s.name.clone(), k)
        })
        .collect()
}

/// A sweep from bytes already read, with the reader's warnings located at the file.
fn parse_sweep(bytes: &[u8], path: &Path) -> Result<(Network, Vec<Warning>)> {
    crate::compare::job::sweep_of(crate::touchstone::read_bytes(bytes, path)?, path)
}

/// Record one sweep: the work of `history record`.
pub fn record_sweep(store: &mut dyn HistoryStore, job: &RecordJob) -> Result<RecordOutcome> {
    let bytes = crate::limits::read_capped(
        &job.sweep,
        crate::limits::MAX_SWEEP_FILE_BYTES,
        "sweep file",
    )
    .map_err(|e| Error::io(&job.sweep, e))?;
    let sha256 = sha256_hex(&bytes);
    if let Some(r) = store.find_sha256(&sha256)? {
        let message = format!(
            "{}: this content is already record {} (taken {}, from {}); nothing was written",
            job.sweep.display(),
            r.id,
            r.at,
            r.sweep
        );
        let stored = store.detail(r.id)?;
        let count = |f: fn(&super::RecordDetail) -> usize| stored.as_ref().map_or(0, f);
        return Ok(RecordOutcome {
            id: r.id,
            created: false,
            line: r.line,
            at: r.at,
            state: r.state,
            sha256,
            compared_with: r.compared_with,
            worst_severity: r.worst_severity,
            findings: count(|d| d.findings.len()),
            landmarks: count(|d| d.landmarks.len()),
            warnings: vec![Warning::new(
                "already-recorded",
                message,
                "nothing to do; `coldtrace history show LINE` lists the records",
            )],
        });
    }
    let (at, at_ms) = match &job.at {
        Some(t) => super::parse_time(t)?,
        None => super::now(),
    };
    let line = crate::line::file::read_file(&job.line)?;
    let (network, mut warnings) = parse_sweep(&bytes, &job.sweep)?;
    let mut base = None;
    if let Some(id) = store.baseline(&line.name)? {
        match load_baseline(store, id)? {
            Ok(b) => base = Some((id, b)),
            Err(w) => warnings.push(w),
        }
    }
    let name = job.sweep.display().to_string();
    let analysed = analyse_sweep(
        &name,
        &network,
        &line,
        job.state,
        base.as_ref().map(|(_, (n, net, s))| (n.as_str(), net, *s)),
        &job.analysis,
    )?;
    warnings.extend(analysed.warnings);
    let rec = NewRecord {
        line: line.name.clone(),
        at,
        at_ms,
        state: analysed.state,
        note: job.note.clone(),
        sweep: name,
        sha256,
        stage_temperatures: stage_temperatures(&line, analysed.state),
        landmarks: analysed.landmarks,
        compared_with: base.as_ref().map(|b| b.0),
        findings: analysed.findings,
        worst_severity: analysed.worst_severity,
    };
    let ins = store.insert(&rec)?;
    if !ins.created {
        warnings.push(Warning::new(
            "already-recorded",
            format!(
                "{}: another process recorded this content first (record {}); nothing was written",
                job.sweep.display(),
                ins.id
            ),
            "nothing to do",
        ));
    }
    Ok(RecordOutcome {
        id: ins.id,
        created: ins.created,
        line: rec.line,
        at: rec.at,
        state: rec.state,
        sha256: rec.sha256,
        compared_with: rec.compared_with,
        worst_severity: rec.worst_severity,
        findings: rec.findings.len(),
        landmarks: rec.landmarks.len(),
        warnings,
    })
}

/// The baseline record's sweep, re-read from its path and checked against its hash; a warning when it is
/// gone or changed (the record is then stored without findings).
fn load_baseline(
    store: &dyn HistoryStore,
    id: i64,
) -> Result<std::result::Result<(String, Network, State), Warning>> {
    let Some(d) = store.detail(id)? else {
        return Ok(Err(Warning::new(
            "baseline-unavailable",
            format!("the line's baseline record {id} is missing from the history"),
            "choose another with `coldtrace history baseline LINE RECORD`",
        )));
    };
    let path = PathBuf::from(&d.summary.sweep);
    let unavailable = |why: String| {
        Warning::new(
            "baseline-unavailable",
            format!(
                "baseline record {id} ({}): {why}; stored without findings",
                path.display()
            ),
            "restore the baseline sweep at that path, or choose another baseline with `coldtrace \
             history baseline LINE RECORD`",
        )
    };
    let bytes = match crate::limits::read_capped(
        &path,
        crate::limits::MAX_SWEEP_FILE_BYTES,
        "sweep file",
    ) {
        Ok(b) => b,
        Err(e) => return Ok(Err(unavailable(e.to_string()))),
    };
    if sha256_hex(&bytes) != d.summary.sha256 {
        return Ok(Err(unavailable(
            "the file has changed since it was recorded".into(),
        )));
    }
    match parse_sweep(&bytes, &path) {
        Ok((n, _)) => Ok(Ok((d.summary.sweep.clone(), n, d.summary.state))),
        Err(e) => Ok(Err(unavailable(e.to_string()))),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_check_values() {
        // FIPS 180-2, Appendix B.1 ("abc") and the empty message (NIST example values).
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }
}
