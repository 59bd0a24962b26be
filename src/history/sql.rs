//! The history's reads and writes, written once for every back-end. A back-end supplies a [`Session`] (a
//! connection, or a transaction it has opened and locked) that runs one parameterised statement; what the
//! statements are, and how rows become records, lives here, so SQLite and PostgreSQL store and return the
//! same things by construction.
//!
//! The SQL is the subset both engines take (as [`super::schema`]): placeholders `$1`, `$2`, ... (SQLite
//! reads `$1` as a named parameter; each back-end binds it by that name), `CAST(... AS TEXT)` rather than
//! `::`, `COALESCE`, no engine-specific functions. Values are bound, never spliced into a statement.
//!
//! Conventions: as in [`super`]. A non-finite figure (an infinite power drop) is stored as NULL.

use super::schema::{statements, MIGRATIONS};
use super::store::*;
use super::HistoryError;
use crate::compare::Severity;
use crate::line::State;
use std::path::Path;

/// A value bound to a placeholder. Each carries its column's type, so that a NULL is a typed NULL (which
/// PostgreSQL asks for).
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    Int(Option<i64>),
    Real(Option<f64>),
    Text(Option<String>),
}

impl Value {
    pub fn int(v: i64) -> Value {
        Value::Int(Some(v))
    }

    pub fn text(v: &str) -> Value {
        Value::Text(Some(v.to_string()))
    }

    /// A figure, NULL when not finite.
    pub fn real(v: Option<f64>) -> Value {
        Value::Real(v.filter(|x| x.is_finite()))
    }
}

/// A value read from a row.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    Null,
    Int(i64),
    Real(f64),
    Text(String),
}

/// One statement at a time on an open connection or transaction of a back-end.
pub trait Session {
    /// Run a statement that returns no rows; the number of rows it changed.
    fn execute(&mut self, sql: &str, params: &[Value]) -> Result<u64, HistoryError>;
    /// Run a query; its rows, each as its columns in order.
    fn query(&mut self, sql: &str, params: &[Value]) -> Result<Vec<Vec<Cell>>, HistoryError>;
    /// The database, as messages name it (a file's path, or a server's URL without its password).
    fn db(&self) -> String;
}

/// One row's cells, read by column with the database named in errors.
struct Row<'a> {
    cells: &'a [Cell],
    db: &'a str,
}

impl Row<'_> {
    fn cell(&self, i: usize) -> &Cell {
        self.cells.get(i).unwrap_or(&Cell::Null)
    }

    fn bad(&self, i: usize, want: &str) -> HistoryError {
        HistoryError::Data {
            db: self.db.to_string(),
            message: format!(
                "column {i} holds {:?} where {want} was expected",
                self.cell(i)
            ),
        }
    }

    fn opt_int(&self, i: usize) -> Result<Option<i64>, HistoryError> {
        match self.cell(i) {
            Cell::Null => Ok(None),
            Cell::Int(v) => Ok(Some(*v)),
            _ => Err(self.bad(i, "an integer")),
        }
    }

    fn int(&self, i: usize) -> Result<i64, HistoryError> {
        self.opt_int(i)?.ok_or_else(|| self.bad(i, "an integer"))
    }

    fn opt_real(&self, i: usize) -> Result<Option<f64>, HistoryError> {
        match self.cell(i) {
            Cell::Null => Ok(None),
            Cell::Real(v) => Ok(Some(*v)),
            // SQLite may hand back a whole-numbered REAL as an integer.
            Cell::Int(v) => Ok(Some(*v as f64)),
            _ => Err(self.bad(i, "a number")),
        }
    }

    fn real(&self, i: usize) -> Result<f64, HistoryError> {
        self.opt_real(i)?.ok_or_else(|| self.bad(i, "a number"))
    }

    fn opt_text(&self, i: usize) -> Result<Option<String>, HistoryError> {
        match self.cell(i) {
            Cell::Null => Ok(None),
            Cell::Text(v) => Ok(Some(v.clone())),
            _ => Err(self.bad(i, "text")),
        }
    }

    fn text(&self, i: usize) -> Result<String, HistoryError> {
        self.opt_text(i)?.ok_or_else(|| self.bad(i, "text"))
    }
}

/// Run a query and read each row with `read`.
fn rows<T>(
    s: &mut dyn Session,
    sql: &str,
    params: &[Value],
    mut read: impl FnMut(&Row) -> Result<T, HistoryError>,
) -> Result<Vec<T>, HistoryError> {
    let db = s.db();
    s.query(sql, params)?
        .iter()
        .map(|cells| read(&Row { cells, db: &db }))
        .collect()
}

/// The one integer a query returns (`None` without a row).
fn scalar(s: &mut dyn Session, sql: &str, params: &[Value]) -> Result<Option<i64>, HistoryError> {
    Ok(rows(s, sql, params, |r| r.opt_int(0))?
        .into_iter()
        .next()
        .flatten())
}

/// The schema version of a database whose tables `tables_sql` lists (one text column, the back-end's own
/// catalogue query): 0 when it has no tables; a database with tables and no `schema_migrations` is
/// another application's and is refused; else the largest version `schema_migrations` records.
pub fn schema_version(s: &mut dyn Session, tables_sql: &str) -> Result<i64, HistoryError> {
    let tables = rows(s, tables_sql, &[], |r| r.text(0))?;
    if tables.is_empty() {
        return Ok(0);
    }
    if !tables.iter().any(|t| t == "schema_migrations") {
        return Err(HistoryError::Foreign { db: s.db() });
    }
    Ok(scalar(
        s,
        "SELECT COALESCE(MAX(version), 0) FROM schema_migrations",
        &[],
    )?
    .unwrap_or(0))
}

/// Apply every migration above `current` up to `target`, recording each; the caller holds the write lock
/// inside one transaction.
fn apply_migrations(s: &mut dyn Session, current: i64, target: i64) -> Result<(), HistoryError> {
    let (now, _) = super::now();
    for m in MIGRATIONS
        .iter()
        .filter(|m| m.version > current && m.version <= target)
    {
        for st in statements(m) {
            s.execute(st, &[])?;
        }
        s.execute(
            "INSERT INTO schema_migrations (version, description, applied_at) VALUES ($1, $2, $3)",
            &[
                Value::int(m.version),
                Value::text(m.description),
                Value::text(&now),
            ],
        )?;
    }
    Ok(())
}

/// Store a record unless one of the same content exists; the caller holds the write lock inside one
/// transaction (so ids are assigned without a race and the duplicate check stays true until the commit).
pub fn insert_record(s: &mut dyn Session, rec: &NewRecord) -> Result<Inserted, HistoryError> {
    if let Some(id) = scalar(
        s,
        "SELECT id FROM records WHERE sha256 = $1",
        &[Value::text(&rec.sha256)],
    )? {
        return Ok(Inserted { id, created: false });
    }
    let line_id = match scalar(
        s,
        "SELECT id FROM lines WHERE name = $1",
        &[Value::text(&rec.line)],
    )? {
        Some(id) => id,
        None => {
            let id = scalar(s, "SELECT COALESCE(MAX(id), 0) + 1 FROM lines", &[])?.unwrap_or(1);
            s.execute(
                "INSERT INTO lines (id, name, baseline_record) VALUES ($1, $2, NULL)",
                &[Value::int(id), Value::text(&rec.line)],
            )?;
            id
        }
    };
    let id = scalar(s, "SELECT COALESCE(MAX(id), 0) + 1 FROM records", &[])?.unwrap_or(1);
    let (recorded_at, _) = super::now();
    s.execute(
        "INSERT INTO records (id, line_id, taken_at, taken_at_ms, state, note, sweep_path, sha256, \
         compared_with, worst_severity, recorded_at) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)",
        &[
            Value::int(id),
            Value::int(line_id),
            Value::text(&rec.at),
            Value::int(rec.at_ms),
            Value::text(rec.state.name()),
            Value::Text(rec.note.clone()),
            Value::text(&rec.sweep),
            Value::text(&rec.sha256),
            Value::Int(rec.compared_with),
            Value::Text(rec.worst_severity.map(|v| v.name().to_string())),
            Value::text(&recorded_at),
        ],
    )?;
    for (stage, kelvin) in &rec.stage_temperatures {
        s.execute(
            "INSERT INTO stage_temperatures (record_id, stage, kelvin) VALUES ($1, $2, $3)",
            &[
                Value::int(id),
                Value::text(stage),
                Value::real(Some(*kelvin)),
            ],
        )?;
    }
    for (seq, l) in rec.landmarks.iter().enumerate() {
        s.execute(
            "INSERT INTO landmarks (record_id, seq, element, kind, start_m, end_m, reflection_db, \
             floor_db, delay_s, loss_change_db) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10)",
            &[
                Value::int(id),
                Value::int(seq as i64),
                Value::text(&l.element),
                Value::text(l.kind.name()),
                Value::real(Some(l.start_m)),
                Value::real(Some(l.end_m)),
                Value::real(l.reflection_db),
                Value::real(l.floor_db),
                Value::real(l.delay_s),
                Value::real(l.loss_change_db),
            ],
        )?;
    }
    for f in &rec.findings {
        s.execute(
            "INSERT INTO findings (record_id, finding_rank, element, distance_m, kind, severity, \
             reflection_db, change_db, power_drop_db, explanation) \
             VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10)",
            &[
                Value::int(id),
                Value::int(f.rank as i64),
                Value::text(&f.element),
                Value::real(f.distance_m),
                Value::text(&f.kind),
                Value::text(f.severity.name()),
                Value::real(f.reflection_db),
                Value::real(f.change_db),
                Value::real(f.power_drop_db),
                Value::text(&f.explanation),
            ],
        )?;
    }
    Ok(Inserted { id, created: true })
}

/// Which records [`summaries`] lists.
#[derive(Debug, Clone, Copy)]
pub enum Filter<'a> {
    /// Of one line, or of all (`None`).
    Line(Option<&'a str>),
    Id(i64),
    Sha256(&'a str),
}

/// Records, oldest first per line (by line name, time taken, id).
pub fn summaries(s: &mut dyn Session, filter: Filter) -> Result<Vec<RecordSummary>, HistoryError> {
    let (cond, param) = match filter {
        Filter::Line(line) => (
            "(CAST($1 AS TEXT) IS NULL OR l.name = $1)",
            Value::Text(line.map(str::to_string)),
        ),
        Filter::Id(id) => ("r.id = $1", Value::int(id)),
        Filter::Sha256(sha) => ("r.sha256 = $1", Value::text(sha)),
    };
    let sql = format!(
        "SELECT r.id, l.name, r.taken_at, r.state, r.sha256, r.sweep_path, r.note, r.worst_severity, \
         r.compared_with, l.baseline_record FROM records r JOIN lines l ON l.id = r.line_id \
         WHERE {cond} ORDER BY l.name, r.taken_at_ms, r.id"
    );
    rows(s, &sql, &[param], |r| {
        let id = r.int(0)?;
        Ok(RecordSummary {
            id,
            line: r.text(1)?,
            at: r.text(2)?,
            state: r.text(3)?.parse().unwrap_or(State::Cold),
            sha256: r.text(4)?,
            sweep: r.text(5)?,
            note: r.opt_text(6)?,
            worst_severity: r.opt_text(7)?.as_deref().and_then(Severity::parse),
            compared_with: r.opt_int(8)?,
            is_baseline: r.opt_int(9)? == Some(id),
        })
    })
}

/// The names of the lines recorded, sorted.
pub fn lines(s: &mut dyn Session) -> Result<Vec<String>, HistoryError> {
    rows(s, "SELECT name FROM lines ORDER BY name", &[], |r| {
        r.text(0)
    })
}

/// Everything stored for one record.
pub fn detail(s: &mut dyn Session, id: i64) -> Result<Option<RecordDetail>, HistoryError> {
    let Some(summary) = summaries(s, Filter::Id(id))?.into_iter().next() else {
        return Ok(None);
    };
    let stage_temperatures = rows(
        s,
        "SELECT stage, kelvin FROM stage_temperatures WHERE record_id = $1 ORDER BY kelvin DESC, stage",
        &[Value::int(id)],
        |r| {
            Ok(StageTemperature {
                stage: r.text(0)?,
                kelvin: r.real(1)?,
            })
        },
    )?;
    let landmarks = rows(
        s,
        "SELECT element, kind, start_m, end_m, reflection_db, floor_db, delay_s, loss_change_db \
         FROM landmarks WHERE record_id = $1 ORDER BY seq",
        &[Value::int(id)],
        |r| {
            Ok(Landmark {
                element: r.text(0)?,
                kind: LandmarkKind::parse(&r.text(1)?).unwrap_or(LandmarkKind::Connector),
                start_m: r.real(2)?,
                end_m: r.real(3)?,
                reflection_db: r.opt_real(4)?,
                floor_db: r.opt_real(5)?,
                delay_s: r.opt_real(6)?,
                loss_change_db: r.opt_real(7)?,
            })
        },
    )?;
    let findings = rows(
        s,
        "SELECT finding_rank, element, distance_m, kind, severity, reflection_db, change_db, \
         power_drop_db, explanation FROM findings WHERE record_id = $1 ORDER BY finding_rank",
        &[Value::int(id)],
        |r| {
            Ok(StoredFinding {
                rank: r.int(0)? as usize,
                element: r.text(1)?,
                distance_m: r.opt_real(2)?,
                kind: r.text(3)?,
                severity: Severity::parse(&r.text(4)?).unwrap_or(Severity::Info),
                reflection_db: r.opt_real(5)?,
                change_db: r.opt_real(6)?,
                power_drop_db: r.opt_real(7)?,
                explanation: r.text(8)?,
            })
        },
    )?;
    Ok(Some(RecordDetail {
        summary,
        stage_temperatures,
        landmarks,
        findings,
    }))
}

/// The line's chosen baseline record.
pub fn baseline(s: &mut dyn Session, line: &str) -> Result<Option<i64>, HistoryError> {
    scalar(
        s,
        "SELECT baseline_record FROM lines WHERE name = $1",
        &[Value::text(line)],
    )
}

/// Choose `record` as `line`'s baseline: it must be a record of that line.
pub fn set_baseline(s: &mut dyn Session, line: &str, record: i64) -> Result<(), HistoryError> {
    let Some(rec) = summaries(s, Filter::Id(record))?.into_iter().next() else {
        return Err(HistoryError::UnknownRecord {
            db: s.db(),
            message: format!("no record {record}"),
        });
    };
    if rec.line != line {
        return Err(HistoryError::UnknownRecord {
            db: s.db(),
            message: format!("record {record} is of line '{}', not '{line}'", rec.line),
        });
    }
    s.execute(
        "UPDATE lines SET baseline_record = $1 WHERE name = $2",
        &[Value::int(record), Value::text(line)],
    )?;
    Ok(())
}

/// A back-end that runs this module's statements: reads on its connection, writes in one transaction that
/// holds the database's write lock from its first statement to its commit. Every such back-end is a
/// [`HistoryStore`], with the same answers.
pub trait SqlBackend {
    /// The back-end's catalogue query listing the tables of the history's schema, one text column.
    const TABLES_SQL: &'static str;
    /// The database as messages name it (a file's path, or a server's URL without its password).
    fn shown(&self) -> String;
    /// The database file, for a back-end that keeps one.
    fn db_file(&self) -> Option<&Path> {
        None
    }
    /// Run `work` on the connection.
    fn read<T>(
        &self,
        work: impl FnOnce(&mut dyn Session) -> Result<T, HistoryError>,
    ) -> Result<T, HistoryError>;
    /// Run `work` in one transaction holding the write lock, and commit it.
    fn write<T>(
        &mut self,
        work: impl FnOnce(&mut dyn Session) -> Result<T, HistoryError>,
    ) -> Result<T, HistoryError>;

    /// The schema version of the open database ([`schema_version`]).
    fn version(&self) -> Result<i64, HistoryError> {
        self.read(|s| schema_version(s, Self::TABLES_SQL))
    }

    /// Apply every migration above the database's version up to `target`, in one transaction holding
    /// the write lock (another process migrating at the same time waits, then finds nothing left to do).
    fn migrate_to(&mut self, target: i64) -> Result<(), HistoryError> {
        self.write(|s| {
            let current = schema_version(s, Self::TABLES_SQL)?;
            apply_migrations(s, current, target)
        })
    }

    /// [`HistoryStore::insert`], calling `before_commit` inside the transaction once every row is written
    /// and before it commits (tests use it to kill the process, or cut the connection, mid-record).
    fn insert_with(
        &mut self,
        rec: &NewRecord,
        before_commit: impl FnOnce(),
    ) -> Result<Inserted, HistoryError> {
        self.write(|s| {
            let done = insert_record(s, rec)?;
            if done.created {
                before_commit();
            }
            Ok(done)
        })
    }
}

impl<B: SqlBackend> HistoryStore for B {
    fn location(&self) -> String {
        self.shown()
    }

    fn file(&self) -> Option<&Path> {
        self.db_file()
    }

    fn insert(&mut self, rec: &NewRecord) -> Result<Inserted, HistoryError> {
        self.insert_with(rec, || {})
    }

    fn find_sha256(&self, sha256: &str) -> Result<Option<RecordSummary>, HistoryError> {
        self.read(|s| Ok(summaries(s, Filter::Sha256(sha256))?.into_iter().next()))
    }

    fn list(&self, line: Option<&str>) -> Result<Vec<RecordSummary>, HistoryError> {
        self.read(|s| summaries(s, Filter::Line(line)))
    }

    fn lines(&self) -> Result<Vec<String>, HistoryError> {
        self.read(lines)
    }

    fn detail(&self, id: i64) -> Result<Option<RecordDetail>, HistoryError> {
        self.read(|s| detail(s, id))
    }

    fn baseline(&self, line: &str) -> Result<Option<i64>, HistoryError> {
        self.read(|s| baseline(s, line))
    }

    fn set_baseline(&mut self, line: &str, record: i64) -> Result<(), HistoryError> {
        self.write(|s| {
            check_line(&lines(s)?, line, &s.db())?;
            set_baseline(s, line, record)
        })
    }
}
