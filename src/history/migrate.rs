//! `history migrate`: copy one history into another, typically a lab's SQLite file into the facility's
//! PostgreSQL server. Each record is copied in its own transaction, oldest id first; a record whose sweep
//! content (SHA-256) the target already holds is skipped, so an interrupted copy is resumed by running
//! the same command again, and a second run adds nothing.
//!
//! What a record refers to is carried over by content, not by id: the baseline a record was compared
//! with, and each line's chosen baseline, are found in the target by their SHA-256. A line that already
//! has a baseline in the target keeps it (someone chose it there); the report says where they differ.

use super::store::{HistoryStore, NewRecord, RecordDetail};
use super::HistoryError;
use serde::Serialize;
use std::collections::HashMap;

/// What a copy did. JSON: `history migrate --json`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MigrateOutcome {
    /// Both histories as messages name them (a server's URL without its password).
    pub from: String,
    pub to: String,
    /// Records in the source.
    pub records: usize,
    /// Records written to the target by this run.
    pub copied: usize,
    /// Records the target held already (same sweep content).
    pub already: usize,
    /// Lines whose baseline this run chose in the target (they had none there).
    pub baselines_set: usize,
    /// Lines whose baseline in the target is another record than in the source (left as they were).
    pub baselines_kept: Vec<String>,
}

/// A stored record as a new one for the target: `compared_with` mapped to the target's id of the same
/// content.
fn as_new(d: &RecordDetail, compared_with: Option<i64>) -> Result<NewRecord, HistoryError> {
    let (at, at_ms) = super::parse_time(&d.summary.at)?;
    Ok(NewRecord {
        line: d.summary.line.clone(),
        at,
        at_ms,
        state: d.summary.state,
        note: d.summary.note.clone(),
        sweep: d.summary.sweep.clone(),
        sha256: d.summary.sha256.clone(),
        stage_temperatures: d
            .stage_temperatures
            .iter()
            .map(|t| (t.stage.clone(), t.kelvin))
            .collect(),
        landmarks: d.landmarks.clone(),
        compared_with,
        findings: d.findings.clone(),
        worst_severity: d.summary.worst_severity,
    })
}

/// Copy every record of `from` into `to` that `to` lacks, then each line's baseline where `to` has
/// none; `progress` is told after each record (done, of).
pub fn copy_history(
    from: &dyn HistoryStore,
    to: &mut dyn HistoryStore,
    mut progress: impl FnMut(usize, usize),
) -> Result<MigrateOutcome, HistoryError> {
    let mut all = from.list(None)?;
    all.sort_by_key(|r| r.id);
    let mut out = MigrateOutcome {
        from: from.location(),
        to: to.location(),
        records: all.len(),
        copied: 0,
        already: 0,
        baselines_set: 0,
        baselines_kept: Vec::new(),
    };
    let sha_of: HashMap<i64, &str> = all.iter().map(|r| (r.id, r.sha256.as_str())).collect();
    // Source id -> target id, as records are copied or found.
    let mut target_id: HashMap<i64, i64> = HashMap::new();
    let find = |to: &dyn HistoryStore, id: i64, map: &mut HashMap<i64, i64>| {
        if let Some(&t) = map.get(&id) {
            return Ok(Some(t));
        }
        let Some(sha) = sha_of.get(&id) else {
            return Ok(None);
        };
        let t = to.find_sha256(sha)?.map(|r| r.id);
        if let Some(t) = t {
            map.insert(id, t);
        }
        Ok::<_, HistoryError>(t)
    };
    for (k, r) in all.iter().enumerate() {
        let Some(d) = from.detail(r.id)? else {
            continue;
        };
        let compared_with = match d.summary.compared_with {
            Some(b) => find(&*to, b, &mut target_id)?,
            None => None,
        };
        let done = to.insert(&as_new(&d, compared_with)?)?;
        target_id.insert(r.id, done.id);
        if done.created {
            out.copied += 1;
        } else {
            out.already += 1;
        }
        progress(k + 1, all.len());
    }
    for line in from.lines()? {
        let Some(b) = from.baseline(&line)? else {
            continue;
        };
        let Some(t) = find(&*to, b, &mut target_id)? else {
            continue;
        };
        match to.baseline(&line)? {
            None => {
                to.set_baseline(&line, t)?;
                out.baselines_set += 1;
            }
            Some(existing) if existing != t => out.baselines_kept.push(line),
            Some(_) => {}
        }
    }
    Ok(out)
}
