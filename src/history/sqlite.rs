//! The embedded back-end: one SQLite file (the library is built into coldtrace; nothing to install, no
//! server).
//!
//! Safety, each proved by a test (tests/cli_history.rs, and the unit tests here):
//! - a file that exists is checked before SQLite touches it: one that is not an SQLite database, an SQLite
//!   database that is not a coldtrace history, or a history of a newer schema is refused and left exactly
//!   as it was;
//! - write-ahead logging (`journal_mode=WAL`, `synchronous=FULL`) and a busy timeout
//!   ([`BUSY_TIMEOUT`]), so several processes can record at once: each write waits for the lock;
//! - one `BEGIN IMMEDIATE` transaction per record (the write lock is taken before the duplicate check, so
//!   two processes recording the same sweep cannot both insert it); a process killed inside it leaves the
//!   database as it was before;
//! - parameterised SQL only: no value is ever spliced into a statement.

use super::schema::{statements, MIGRATIONS, SCHEMA_VERSION};
use super::store::*;
use super::HistoryError;
use crate::compare::Severity;
use crate::line::State;
use rusqlite::{params, Connection, OpenFlags, OptionalExtension, TransactionBehavior};
use std::io::Read;
use std::path::{Path, PathBuf};
use std::time::Duration;

/// How long a write waits for another process's transaction before giving up. Recording a sweep holds
/// the lock for milliseconds; 30 s covers hundreds of processes queueing (common practice, no source).
pub const BUSY_TIMEOUT: Duration = Duration::from_secs(30);

/// The first 16 bytes of every SQLite database file (SQLite file format documentation, "The Database
/// Header", offset 0: the string "SQLite format 3" and a NUL).
pub const SQLITE_MAGIC: &[u8; 16] = b"SQLite format 3\0";

/// A history in one SQLite file.
#[derive(Debug)]
pub struct SqliteStore {
    conn: Connection,
    path: PathBuf,
}

/// What an existing file at the database path is.
fn check_file(path: &Path) -> Result<bool, HistoryError> {
    let mut f = match std::fs::File::open(path) {
        Ok(f) => f,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(false),
        Err(e) => {
            return Err(HistoryError::Io {
                path: path.to_path_buf(),
                source: e,
            })
        }
    };
    let mut head = Vec::with_capacity(16);
    let _ = f.by_ref().take(16).read_to_end(&mut head);
    // An empty file holds nothing to lose; SQLite makes a database of it.
    if !head.is_empty() && head.as_slice() != SQLITE_MAGIC {
        return Err(HistoryError::NotADatabase {
            path: path.to_path_buf(),
        });
    }
    Ok(true)
}

/// True for SQLite's "busy" and "locked" answers.
fn is_busy(e: &rusqlite::Error) -> bool {
    matches!(
        e,
        rusqlite::Error::SqliteFailure(f, _)
            if matches!(f.code, rusqlite::ErrorCode::DatabaseBusy | rusqlite::ErrorCode::DatabaseLocked)
    )
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

fn state_of(s: &str) -> State {
    s.parse().unwrap_or(State::Cold)
}

impl SqliteStore {
    /// Open the history at `path`, migrating it to [`SCHEMA_VERSION`]; with `create`, make it (and its
    /// folder) when missing. Nothing is written to a file that is refused.
    pub fn open(path: &Path, create: bool) -> Result<SqliteStore, HistoryError> {
        Self::open_at(path, create, SCHEMA_VERSION)
    }

    /// [`SqliteStore::open`], migrating only up to `version` (at most [`SCHEMA_VERSION`]): how the
    /// migration tests make a database of every earlier version.
    pub fn open_at(path: &Path, create: bool, version: i64) -> Result<SqliteStore, HistoryError> {
        let exists = check_file(path)?;
        if !exists && !create {
            return Err(HistoryError::Missing {
                path: path.to_path_buf(),
            });
        }
        if !exists {
            if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
                std::fs::create_dir_all(dir).map_err(|e| HistoryError::Io {
                    path: path.to_path_buf(),
                    source: e,
                })?;
            }
        }
        let mut flags = OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_NO_MUTEX;
        if create {
            flags |= OpenFlags::SQLITE_OPEN_CREATE;
        }
        // Several processes opening one new database at once race for the switch to write-ahead logging and
        // the first migration; SQLite answers some of those races "busy" without waiting (the busy timeout
        // covers only ordinary locks). Each such answer is retried, up to BUSY_TIMEOUT in all.
        let start = std::time::Instant::now();
        loop {
            match Self::connect(path, flags, version) {
                Err(HistoryError::Sqlite { source, .. })
                    if is_busy(&source) && start.elapsed() < BUSY_TIMEOUT =>
                {
                    std::thread::sleep(Duration::from_millis(
                        10 + u64::from(std::process::id() % 20),
                    ));
                }
                other => return other,
            }
        }
    }

    /// Connect, check the schema version, switch to write-ahead logging and migrate.
    fn connect(path: &Path, flags: OpenFlags, version: i64) -> Result<SqliteStore, HistoryError> {
        let err = |source| HistoryError::Sqlite {
            path: path.to_path_buf(),
            source,
        };
        let conn = Connection::open_with_flags(path, flags).map_err(err)?;
        conn.busy_timeout(BUSY_TIMEOUT).map_err(err)?;
        let mut store = SqliteStore {
            conn,
            path: path.to_path_buf(),
        };
        // Read-only checks first: a refused file is never written.
        let found = store.version()?;
        if found > SCHEMA_VERSION {
            return Err(HistoryError::NewerSchema {
                path: path.to_path_buf(),
                found,
                supported: SCHEMA_VERSION,
            });
        }
        store
            .conn
            .query_row("PRAGMA journal_mode=WAL", [], |_| Ok(()))
            .map_err(err)?;
        store
            .conn
            .execute_batch("PRAGMA synchronous=FULL; PRAGMA foreign_keys=ON;")
            .map_err(err)?;
        if found < version.min(SCHEMA_VERSION) {
            store.migrate(version.min(SCHEMA_VERSION))?;
        }
        Ok(store)
    }

    fn err(&self, source: rusqlite::Error) -> HistoryError {
        HistoryError::Sqlite {
            path: self.path.clone(),
            source,
        }
    }

    /// The schema version of the open database: 0 for an empty file; refuses a foreign database.
    pub fn version(&self) -> Result<i64, HistoryError> {
        let tables: Vec<String> = (|| {
            let mut st = self
                .conn
                .prepare("SELECT name FROM sqlite_master WHERE type = 'table'")?;
            let rows = st.query_map([], |r| r.get::<_, String>(0))?;
            rows.collect::<rusqlite::Result<Vec<_>>>()
        })()
        .map_err(|e| match e.sqlite_error_code() {
            Some(rusqlite::ErrorCode::NotADatabase) => HistoryError::NotADatabase {
                path: self.path.clone(),
            },
            _ => self.err(e),
        })?;
        if tables.is_empty() {
            return Ok(0);
        }
        if !tables.iter().any(|t| t == "schema_migrations") {
            return Err(HistoryError::Foreign {
                path: self.path.clone(),
            });
        }
        self.conn
            .query_row(
                "SELECT COALESCE(MAX(version), 0) FROM schema_migrations",
                [],
                |r| r.get(0),
            )
            .map_err(|e| self.err(e))
    }

    /// Apply every migration above the database's version up to `target`, in one transaction (another
    /// process migrating at the same time waits, then finds nothing left to do).
    fn migrate(&mut self, target: i64) -> Result<(), HistoryError> {
        let path = self.path.clone();
        let err = |source| HistoryError::Sqlite {
            path: path.clone(),
            source,
        };
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(err)?;
        let has_table: bool = tx
            .query_row(
                "SELECT COUNT(*) FROM sqlite_master WHERE type = 'table' AND name = 'schema_migrations'",
                [],
                |r| r.get::<_, i64>(0),
            )
            .map_err(err)?
            > 0;
        let current: i64 = if has_table {
            tx.query_row(
                "SELECT COALESCE(MAX(version), 0) FROM schema_migrations",
                [],
                |r| r.get(0),
            )
            .map_err(err)?
        } else {
            0
        };
        let (now, _) = super::now();
        for m in MIGRATIONS
            .iter()
            .filter(|m| m.version > current && m.version <= target)
        {
            for s in statements(m) {
                tx.execute(s, []).map_err(err)?;
            }
            tx.execute(
                "INSERT INTO schema_migrations (version, description, applied_at) VALUES (?1, ?2, ?3)",
                params![m.version, m.description, now],
            )
            .map_err(err)?;
        }
        tx.commit().map_err(err)
    }

    /// [`HistoryStore::insert`], calling `before_commit` inside the transaction once every row is written
    /// and before it commits (tests use it to kill the process mid-write).
    pub fn insert_with(
        &mut self,
        rec: &NewRecord,
        before_commit: impl FnOnce(),
    ) -> Result<Inserted, HistoryError> {
        let path = self.path.clone();
        let err = |source| HistoryError::Sqlite {
            path: path.clone(),
            source,
        };
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(err)?;
        let existing: Option<i64> = tx
            .query_row(
                "SELECT id FROM records WHERE sha256 = ?1",
                [&rec.sha256],
                |r| r.get(0),
            )
            .optional()
            .map_err(err)?;
        if let Some(id) = existing {
            return Ok(Inserted { id, created: false });
        }
        let line_id: i64 = match tx
            .query_row("SELECT id FROM lines WHERE name = ?1", [&rec.line], |r| {
                r.get(0)
            })
            .optional()
            .map_err(err)?
        {
            Some(id) => id,
            None => {
                let id: i64 = tx
                    .query_row("SELECT COALESCE(MAX(id), 0) + 1 FROM lines", [], |r| {
                        r.get(0)
                    })
                    .map_err(err)?;
                tx.execute(
                    "INSERT INTO lines (id, name, baseline_record) VALUES (?1, ?2, NULL)",
                    params![id, rec.line],
                )
                .map_err(err)?;
                id
            }
        };
        let id: i64 = tx
            .query_row("SELECT COALESCE(MAX(id), 0) + 1 FROM records", [], |r| {
                r.get(0)
            })
            .map_err(err)?;
        let (recorded_at, _) = super::now();
        tx.execute(
            "INSERT INTO records (id, line_id, taken_at, taken_at_ms, state, note, sweep_path, sha256, \
             compared_with, worst_severity, recorded_at) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
            params![
                id,
                line_id,
                rec.at,
                rec.at_ms,
                rec.state.name(),
                rec.note,
                rec.sweep,
                rec.sha256,
                rec.compared_with,
                rec.worst_severity.map(Severity::name),
                recorded_at
            ],
        )
        .map_err(err)?;
        for (stage, kelvin) in &rec.stage_temperatures {
            tx.execute(
                "INSERT INTO stage_temperatures (record_id, stage, kelvin) VALUES (?1, ?2, ?3)",
                params![id, stage, kelvin],
            )
            .map_err(err)?;
        }
        for (seq, l) in rec.landmarks.iter().enumerate() {
            tx.execute(
                "INSERT INTO landmarks (record_id, seq, element, kind, start_m, end_m, reflection_db, \
                 floor_db, delay_s, loss_change_db) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)",
                params![
                    id,
                    seq as i64,
                    l.element,
                    l.kind.name(),
                    l.start_m,
                    l.end_m,
                    l.reflection_db.and_then(finite),
                    l.floor_db.and_then(finite),
                    l.delay_s.and_then(finite),
                    l.loss_change_db.and_then(finite)
                ],
            )
            .map_err(err)?;
        }
        for f in &rec.findings {
            tx.execute(
                "INSERT INTO findings (record_id, finding_rank, element, distance_m, kind, severity, \
                 reflection_db, change_db, power_drop_db, explanation) \
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)",
                params![
                    id,
                    f.rank as i64,
                    f.element,
                    f.distance_m.and_then(finite),
                    f.kind,
                    f.severity.name(),
                    f.reflection_db.and_then(finite),
                    f.change_db.and_then(finite),
                    f.power_drop_db.and_then(finite),
                    f.explanation
                ],
            )
            .map_err(err)?;
        }
        before_commit();
        tx.commit().map_err(err)?;
        Ok(Inserted { id, created: true })
    }

    fn summaries(
        &self,
        filter_sql: &str,
        param: &dyn rusqlite::ToSql,
    ) -> Result<Vec<RecordSummary>, HistoryError> {
        let sql = format!(
            "SELECT r.id, l.name, r.taken_at, r.state, r.sha256, r.sweep_path, r.note, r.worst_severity, \
             r.compared_with, l.baseline_record FROM records r JOIN lines l ON l.id = r.line_id \
             WHERE {filter_sql} ORDER BY l.name, r.taken_at_ms, r.id"
        );
        let run = || -> rusqlite::Result<Vec<RecordSummary>> {
            let mut st = self.conn.prepare(&sql)?;
            let rows = st.query_map([param], |r| {
                let id: i64 = r.get(0)?;
                let state: String = r.get(3)?;
                let sev: Option<String> = r.get(7)?;
                let base: Option<i64> = r.get(9)?;
                Ok(RecordSummary {
                    id,
                    line: r.get(1)?,
                    at: r.get(2)?,
                    state: state_of(&state),
                    sha256: r.get(4)?,
                    sweep: r.get(5)?,
                    note: r.get(6)?,
                    worst_severity: sev.as_deref().and_then(Severity::parse),
                    compared_with: r.get(8)?,
                    is_baseline: base == Some(id),
                })
            })?;
            rows.collect()
        };
        run().map_err(|e| self.err(e))
    }
}

impl HistoryStore for SqliteStore {
    fn location(&self) -> &Path {
        &self.path
    }

    fn insert(&mut self, rec: &NewRecord) -> Result<Inserted, HistoryError> {
        self.insert_with(rec, || {})
    }

    fn find_sha256(&self, sha256: &str) -> Result<Option<RecordSummary>, HistoryError> {
        Ok(self.summaries("r.sha256 = ?1", &sha256)?.into_iter().next())
    }

    fn list(&self, line: Option<&str>) -> Result<Vec<RecordSummary>, HistoryError> {
        self.summaries("(?1 IS NULL OR l.name = ?1)", &line)
    }

    fn lines(&self) -> Result<Vec<String>, HistoryError> {
        let run = || -> rusqlite::Result<Vec<String>> {
            let mut st = self.conn.prepare("SELECT name FROM lines ORDER BY name")?;
            let rows = st.query_map([], |r| r.get(0))?;
            rows.collect()
        };
        run().map_err(|e| self.err(e))
    }

    fn detail(&self, id: i64) -> Result<Option<RecordDetail>, HistoryError> {
        let Some(summary) = self.summaries("r.id = ?1", &id)?.into_iter().next() else {
            return Ok(None);
        };
        let run = || -> rusqlite::Result<RecordDetail> {
            let mut st = self.conn.prepare(
                "SELECT stage, kelvin FROM stage_temperatures WHERE record_id = ?1 ORDER BY kelvin DESC, stage",
            )?;
            let stage_temperatures = st
                .query_map([id], |r| {
                    Ok(StageTemperature {
                        stage: r.get(0)?,
                        kelvin: r.get(1)?,
                    })
                })?
                .collect::<rusqlite::Result<Vec<_>>>()?;
            let mut st = self.conn.prepare(
                "SELECT element, kind, start_m, end_m, reflection_db, floor_db, delay_s, loss_change_db \
                 FROM landmarks WHERE record_id = ?1 ORDER BY seq",
            )?;
            let landmarks = st
                .query_map([id], |r| {
                    let kind: String = r.get(1)?;
                    Ok(Landmark {
                        element: r.get(0)?,
                        kind: LandmarkKind::parse(&kind).unwrap_or(LandmarkKind::Connector),
                        start_m: r.get(2)?,
                        end_m: r.get(3)?,
                        reflection_db: r.get(4)?,
                        floor_db: r.get(5)?,
                        delay_s: r.get(6)?,
                        loss_change_db: r.get(7)?,
                    })
                })?
                .collect::<rusqlite::Result<Vec<_>>>()?;
            let mut st = self.conn.prepare(
                "SELECT finding_rank, element, distance_m, kind, severity, reflection_db, change_db, \
                 power_drop_db, explanation FROM findings WHERE record_id = ?1 ORDER BY finding_rank",
            )?;
            let findings = st
                .query_map([id], |r| {
                    let sev: String = r.get(4)?;
                    Ok(StoredFinding {
                        rank: r.get::<_, i64>(0)? as usize,
                        element: r.get(1)?,
                        distance_m: r.get(2)?,
                        kind: r.get(3)?,
                        severity: Severity::parse(&sev).unwrap_or(Severity::Info),
                        reflection_db: r.get(5)?,
                        change_db: r.get(6)?,
                        power_drop_db: r.get(7)?,
                        explanation: r.get(8)?,
                    })
                })?
                .collect::<rusqlite::Result<Vec<_>>>()?;
            Ok(RecordDetail {
                summary: summary.clone(),
                stage_temperatures,
                landmarks,
                findings,
            })
        };
        run().map(Some).map_err(|e| self.err(e))
    }

    fn baseline(&self, line: &str) -> Result<Option<i64>, HistoryError> {
        self.conn
            .query_row(
                "SELECT baseline_record FROM lines WHERE name = ?1",
                [line],
                |r| r.get::<_, Option<i64>>(0),
            )
            .optional()
            .map(Option::flatten)
            .map_err(|e| self.err(e))
    }

    fn set_baseline(&mut self, line: &str, record: i64) -> Result<(), HistoryError> {
        let Some(rec) = self.detail(record)? else {
            return Err(HistoryError::UnknownRecord {
                path: self.path.clone(),
                message: format!("no record {record}"),
            });
        };
        if rec.summary.line != line {
            self.line_details(line)?;
            return Err(HistoryError::UnknownRecord {
                path: self.path.clone(),
                message: format!(
                    "record {record} is of line '{}', not '{line}'",
                    rec.summary.line
                ),
            });
        }
        self.conn
            .execute(
                "UPDATE lines SET baseline_record = ?1 WHERE name = ?2",
                params![record, line],
            )
            .map(|_| ())
            .map_err(|e| self.err(e))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rec(line: &str, sha: &str, at_ms: i64) -> NewRecord {
        NewRecord {
            line: line.into(),
            at: format!("t{at_ms}"),
            at_ms,
            state: State::Cold,
            note: Some("it's a 'quoted' note; DROP TABLE records".into()),
            sweep: "a.s1p".into(),
            sha256: sha.into(),
            stage_temperatures: vec![("room".into(), 295.0), ("mxc".into(), 0.015)],
            landmarks: vec![Landmark {
                element: "J2".into(),
                kind: LandmarkKind::Connector,
                start_m: 1.0,
                end_m: 1.008,
                reflection_db: Some(-31.5),
                floor_db: Some(-60.0),
                delay_s: None,
                loss_change_db: None,
            }],
            compared_with: None,
            findings: vec![StoredFinding {
                rank: 1,
                element: "J2".into(),
                distance_m: Some(1.004),
                kind: "contact".into(),
                severity: Severity::Minor,
                reflection_db: Some(-30.0),
                change_db: Some(3.0),
                power_drop_db: Some(f64::INFINITY),
                explanation: "x".into(),
            }],
            worst_severity: Some(Severity::Minor),
        }
    }

    #[test]
    fn round_trip_and_idempotency() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("sub/h.sqlite");
        let mut s = SqliteStore::open(&p, true).unwrap();
        let a = s.insert(&rec("f/in-01", "aa", 2000)).unwrap();
        let b = s.insert(&rec("f/in-01", "bb", 1000)).unwrap();
        let again = s.insert(&rec("f/in-01", "aa", 5000)).unwrap();
        assert!(a.created && b.created && !again.created);
        assert_eq!(again.id, a.id);
        let list = s.list(Some("f/in-01")).unwrap();
        // Oldest first by time taken, not by id.
        assert_eq!(
            list.iter().map(|r| r.id).collect::<Vec<_>>(),
            vec![b.id, a.id]
        );
        let d = s.detail(a.id).unwrap().unwrap();
        assert_eq!(d.summary.note, rec("x", "y", 0).note);
        assert_eq!(d.landmarks, rec("x", "y", 0).landmarks);
        assert_eq!(d.findings[0].power_drop_db, None, "infinite stored as null");
        assert_eq!(d.stage_temperatures.len(), 2);
        s.set_baseline("f/in-01", b.id).unwrap();
        assert_eq!(s.baseline("f/in-01").unwrap(), Some(b.id));
        assert!(s.list(None).unwrap().iter().any(|r| r.is_baseline));
        s.insert(&rec("f/in-02", "cc", 0)).unwrap();
        let wrong = s.set_baseline("f/in-02", a.id).unwrap_err().to_string();
        assert!(wrong.contains("is of line 'f/in-01'"), "{wrong}");
        let unknown = s.line_details("f/in-1").unwrap_err().to_string();
        assert!(unknown.contains("did you mean"), "{unknown}");
        drop(s);
        // Reopening keeps everything and migrates nothing.
        let s = SqliteStore::open(&p, false).unwrap();
        assert_eq!(s.version().unwrap(), SCHEMA_VERSION);
        assert_eq!(s.list(None).unwrap().len(), 3);
    }

    #[test]
    fn every_earlier_version_migrates_and_keeps_its_rows() {
        for v in 0..SCHEMA_VERSION {
            let dir = tempfile::tempdir().unwrap();
            let p = dir.path().join("h.sqlite");
            let old = SqliteStore::open_at(&p, true, v).unwrap();
            assert_eq!(old.version().unwrap(), v);
            drop(old);
            let mut s = SqliteStore::open(&p, false).unwrap();
            assert_eq!(s.version().unwrap(), SCHEMA_VERSION);
            s.insert(&rec("f/in-01", "aa", 0)).unwrap();
            assert_eq!(s.list(None).unwrap().len(), 1);
        }
    }

    #[test]
    fn refused_files_are_left_untouched() {
        let dir = tempfile::tempdir().unwrap();
        let text = dir.path().join("notes.sqlite");
        std::fs::write(&text, "my notes, not a database\n").unwrap();
        let e = SqliteStore::open(&text, true).unwrap_err();
        assert!(matches!(e, HistoryError::NotADatabase { .. }), "{e}");
        assert_eq!(std::fs::read(&text).unwrap(), b"my notes, not a database\n");

        let foreign = dir.path().join("other.sqlite");
        let c = Connection::open(&foreign).unwrap();
        c.execute("CREATE TABLE t (x BIGINT)", []).unwrap();
        drop(c);
        let before = std::fs::read(&foreign).unwrap();
        let e = SqliteStore::open(&foreign, true).unwrap_err();
        assert!(matches!(e, HistoryError::Foreign { .. }), "{e}");
        assert_eq!(std::fs::read(&foreign).unwrap(), before);

        let missing = dir.path().join("none.sqlite");
        assert!(matches!(
            SqliteStore::open(&missing, false),
            Err(HistoryError::Missing { .. })
        ));
        assert!(!missing.exists());
    }
}
