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

use super::schema::SCHEMA_VERSION;
use super::sql::{Cell, Session, SqlBackend, Value};
use super::HistoryError;
use rusqlite::{Connection, OpenFlags, TransactionBehavior};
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

/// A connection (or a transaction, which derefs to one) as a [`Session`]: `$n` placeholders are bound by
/// name.
struct Lite<'a> {
    conn: &'a Connection,
    path: &'a Path,
}

impl Lite<'_> {
    fn err(&self, source: rusqlite::Error) -> HistoryError {
        HistoryError::Sqlite {
            path: self.path.to_path_buf(),
            source,
        }
    }

    fn prepare(
        &self,
        sql: &str,
        params: &[Value],
    ) -> rusqlite::Result<rusqlite::CachedStatement<'_>> {
        let mut st = self.conn.prepare_cached(sql)?;
        for (i, v) in params.iter().enumerate() {
            if let Some(k) = st.parameter_index(&format!("${}", i + 1))? {
                st.raw_bind_parameter(k, v)?;
            }
        }
        Ok(st)
    }
}

impl rusqlite::ToSql for Value {
    fn to_sql(&self) -> rusqlite::Result<rusqlite::types::ToSqlOutput<'_>> {
        use rusqlite::types::{ToSqlOutput, Value as V};
        Ok(ToSqlOutput::Owned(match self {
            Value::Int(v) => v.map_or(V::Null, V::Integer),
            Value::Real(v) => v.map_or(V::Null, V::Real),
            Value::Text(v) => v.clone().map_or(V::Null, V::Text),
        }))
    }
}

impl Session for Lite<'_> {
    fn execute(&mut self, sql: &str, params: &[Value]) -> Result<u64, HistoryError> {
        let run =
            || -> rusqlite::Result<u64> { Ok(self.prepare(sql, params)?.raw_execute()? as u64) };
        run().map_err(|e| self.err(e))
    }

    fn query(&mut self, sql: &str, params: &[Value]) -> Result<Vec<Vec<Cell>>, HistoryError> {
        let run = || -> rusqlite::Result<Vec<Vec<Cell>>> {
            use rusqlite::types::ValueRef;
            let mut st = self.prepare(sql, params)?;
            let n = st.column_count();
            let mut rows = st.raw_query();
            let mut out = Vec::new();
            while let Some(r) = rows.next()? {
                let mut cells = Vec::with_capacity(n);
                for i in 0..n {
                    cells.push(match r.get_ref(i)? {
                        ValueRef::Null => Cell::Null,
                        ValueRef::Integer(v) => Cell::Int(v),
                        ValueRef::Real(v) => Cell::Real(v),
                        ValueRef::Text(t) | ValueRef::Blob(t) => {
                            Cell::Text(String::from_utf8_lossy(t).into_owned())
                        }
                    });
                }
                out.push(cells);
            }
            Ok(out)
        };
        run().map_err(|e| self.err(e))
    }

    fn db(&self) -> String {
        self.path.display().to_string()
    }
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
                db: path.display().to_string(),
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
                db: path.display().to_string(),
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
            store.migrate_to(version.min(SCHEMA_VERSION))?;
        }
        Ok(store)
    }

    /// The schema version of the open database: 0 for an empty file; refuses a file that is not an
    /// SQLite database, and another application's database.
    pub fn version(&self) -> Result<i64, HistoryError> {
        SqlBackend::version(self).map_err(|e| match e {
            HistoryError::Sqlite { path, source }
                if source.sqlite_error_code() == Some(rusqlite::ErrorCode::NotADatabase) =>
            {
                HistoryError::NotADatabase { path }
            }
            other => other,
        })
    }

    fn session(&self) -> Lite<'_> {
        Lite {
            conn: &self.conn,
            path: &self.path,
        }
    }
}

impl SqlBackend for SqliteStore {
    const TABLES_SQL: &'static str = "SELECT name FROM sqlite_master WHERE type = 'table'";

    fn shown(&self) -> String {
        self.path.display().to_string()
    }

    fn db_file(&self) -> Option<&Path> {
        Some(&self.path)
    }

    fn read<T>(
        &self,
        work: impl FnOnce(&mut dyn Session) -> Result<T, HistoryError>,
    ) -> Result<T, HistoryError> {
        work(&mut self.session())
    }

    /// One `BEGIN IMMEDIATE` transaction: the write lock is taken before anything is read.
    fn write<T>(
        &mut self,
        work: impl FnOnce(&mut dyn Session) -> Result<T, HistoryError>,
    ) -> Result<T, HistoryError> {
        let fail = |source| HistoryError::Sqlite {
            path: self.path.clone(),
            source,
        };
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)
            .map_err(fail)?;
        let out = work(&mut Lite {
            conn: &tx,
            path: &self.path,
        })?;
        tx.commit().map_err(fail)?;
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::Severity;
    use crate::history::store::*;
    use crate::line::State;

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
