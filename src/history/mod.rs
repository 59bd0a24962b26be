//! The line health history: every analysed sweep leaves a record, so that a line's slow decline (a
//! connector whose reflection creeps up cooldown after cooldown) is seen before it fails.
//!
//! How the parts fit: [`record`] turns one sweep of a line into a [`NewRecord`] (the sweep's SHA-256, its
//! state and stage temperatures, each connector's compensated reflection, each segment's electrical length
//! and loss change, and the findings against the line's chosen baseline), through the comparator's own
//! entry points (`compare::job::locate_network`, `compare_networks`). [`store`] is the storage interface
//! ([`HistoryStore`]) and its plain record types; [`sqlite`] is the embedded back-end (one file, no
//! server); [`schema`] holds the versioned schema and its migrations, written in the SQL that SQLite and
//! PostgreSQL share, so a second back-end can reuse it. [`trend`] is the trend rule (Theil-Sen slope with a
//! Mann-Kendall test) and [`export`] writes a line's history as CSV or JSON.
//!
//! Conventions: reflections and losses in dB (20 log10 |rho|; the comparator's compensated trace, in which
//! a lone reflection rho reads |rho|); electrical lengths as one-way group delays, s; positions in
//! as-built metres from the reference plane (as everywhere in coldtrace); times in RFC 3339, stored in UTC
//! with their Unix time in milliseconds for ordering. A "cycle" in a trend is one record of the line in the
//! chosen state (for cold records: one cooldown).

pub mod db;
pub mod export;
pub mod migrate;
pub mod postgres;
pub mod record;
pub mod schema;
pub mod sql;
pub mod sqlite;
pub mod store;
pub mod text;
pub mod trend;

pub use db::{open_store, resolve_db, Database, ServerUrl};
pub use postgres::PostgresStore;
pub use record::{record_sweep, RecordJob, RecordOutcome};
pub use sqlite::SqliteStore;
pub use store::{
    check_line, HistoryStore, Inserted, Landmark, LandmarkKind, NewRecord, RecordDetail,
    RecordSummary, StoredFinding,
};
pub use trend::{LandmarkTrend, TrendReport, TrendRule};

use std::path::PathBuf;

/// The environment variable naming the history database when `--db` is not given.
pub const DB_ENV: &str = "COLDTRACE_DB";

/// The database file's name inside the default folder.
pub const DEFAULT_DB_FILE: &str = "history.sqlite";

/// Errors of the history layer. Each names the database and says what fixes it.
#[derive(Debug, thiserror::Error)]
pub enum HistoryError {
    /// The file exists but is not an SQLite database; nothing was written to it.
    #[error(
        "{}: not a coldtrace history database (not an SQLite file); it was left untouched. \
         Give another path with --db or {DB_ENV}",
        path.display()
    )]
    NotADatabase { path: PathBuf },
    /// A database that is not a coldtrace history (it has tables, none of them `schema_migrations`);
    /// nothing was written to it.
    #[error(
        "{db}: a database, but not a coldtrace history (it holds other tables and no schema_migrations); \
         it was left untouched. Give another database with --db or {DB_ENV} (on a PostgreSQL server: a \
         database of its own, or a schema of its own with ?options=-csearch_path%3Dcoldtrace in the URL)"
    )]
    Foreign { db: String },
    /// The database was made by a newer coldtrace; nothing was written to it.
    #[error(
        "{db}: history schema version {found} is newer than this coldtrace reads (up to {supported}); it was \
         left untouched. Use a newer coldtrace, or give another database with --db"
    )]
    NewerSchema {
        db: String,
        found: i64,
        supported: i64,
    },
    /// No history at the place given (for a command that only reads).
    #[error(
        "{db}: no history database here yet; record a sweep first (coldtrace history record SWEEP --line \
         LINE), or point --db or {DB_ENV} at an existing one"
    )]
    Missing { db: String },
    /// No default location could be worked out.
    #[error(
        "no history database given and no home folder to put one in: pass --db PATH or set {DB_ENV}"
    )]
    NoDefault,
    /// The database refused an operation.
    #[error("{}: {source} (check that the file and its folder are writable and the disk has room)", path.display())]
    Sqlite {
        path: PathBuf,
        #[source]
        source: rusqlite::Error,
    },
    /// A PostgreSQL server refused or failed an operation (the URL is shown without its password).
    #[error("{db}: {message}")]
    Server { db: String, message: String },
    /// A `postgres://` URL that cannot be used.
    #[error("--db or {DB_ENV}: {message}")]
    Url { message: String },
    /// The database file or its folder could not be read or made.
    #[error("{}: {source} (check that the path is right and its folder writable)", path.display())]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// A line the history does not know.
    #[error("{db}: no records of line '{line}'{suggestion}; `coldtrace history list` shows the lines recorded")]
    UnknownLine {
        db: String,
        line: String,
        suggestion: String,
    },
    /// A record id the history does not hold, or one of another line.
    #[error("{db}: {message}; `coldtrace history list` shows the records and their ids")]
    UnknownRecord { db: String, message: String },
    /// A stored value of an unexpected type (a database edited by hand, or damaged).
    #[error(
        "{db}: {message}; the history holds a value coldtrace did not write (edited by hand?)"
    )]
    Data { db: String, message: String },
    /// A time that is not RFC 3339.
    #[error("--at '{text}': {message}; give an RFC 3339 time such as 2026-11-30T14:05:00Z")]
    Time { text: String, message: String },
}

/// The default history file, the environment given as a lookup: `$XDG_DATA_HOME/coldtrace/history.sqlite`,
/// or `$HOME/.local/share/coldtrace/history.sqlite`, or on Windows `%APPDATA%\coldtrace\history.sqlite`
/// (what [`resolve_db`] falls back to without `--db` and [`DB_ENV`]).
pub fn default_db_path(
    env: impl Fn(&str) -> Option<std::ffi::OsString>,
) -> Result<PathBuf, HistoryError> {
    let base = if let Some(x) = env("XDG_DATA_HOME") {
        PathBuf::from(x)
    } else if let Some(h) = env("HOME") {
        PathBuf::from(h).join(".local").join("share")
    } else if let Some(a) = env("APPDATA") {
        PathBuf::from(a)
    } else {
        return Err(HistoryError::NoDefault);
    };
    Ok(base.join("coldtrace").join(DEFAULT_DB_FILE))
}

/// A time given by the user (RFC 3339) as (UTC RFC 3339 text, Unix milliseconds).
pub fn parse_time(text: &str) -> Result<(String, i64), HistoryError> {
    use time::format_description::well_known::Rfc3339;
    let t = time::OffsetDateTime::parse(text.trim(), &Rfc3339).map_err(|e| HistoryError::Time {
        text: text.to_string(),
        message: e.to_string(),
    })?;
    Ok(time_pair(t))
}

/// The current time as (UTC RFC 3339 text, Unix milliseconds).
pub fn now() -> (String, i64) {
    time_pair(time::OffsetDateTime::now_utc())
}

fn time_pair(t: time::OffsetDateTime) -> (String, i64) {
    use time::format_description::well_known::Rfc3339;
    // Milliseconds are the stored resolution (`at_ms`); the text keeps no more.
    let utc = t.to_offset(time::UtcOffset::UTC);
    let utc = utc
        .replace_nanosecond(utc.millisecond() as u32 * 1_000_000)
        .unwrap_or(utc);
    let text = utc
        .format(&Rfc3339)
        .unwrap_or_else(|_| utc.unix_timestamp().to_string());
    (text, (utc.unix_timestamp_nanos() / 1_000_000) as i64)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::ffi::OsString;

    #[test]
    fn db_path_prefers_flag_then_env_then_default() {
        use std::ffi::OsStr;
        let env = |k: &str| match k {
            "COLDTRACE_DB" => Some(OsString::from("/x/env.sqlite")),
            "HOME" => Some(OsString::from("/home/u")),
            _ => None,
        };
        let file = |d: Database| d.file().map(std::path::Path::to_path_buf);
        assert_eq!(
            file(db::resolve_db_with(Some(OsStr::new("/f.sqlite")), env).unwrap()),
            Some(PathBuf::from("/f.sqlite"))
        );
        assert_eq!(
            file(db::resolve_db_with(None, env).unwrap()),
            Some(PathBuf::from("/x/env.sqlite"))
        );
        let home = |k: &str| (k == "HOME").then(|| OsString::from("/home/u"));
        assert_eq!(
            file(db::resolve_db_with(None, home).unwrap()),
            Some(PathBuf::from(
                "/home/u/.local/share/coldtrace/history.sqlite"
            ))
        );
        assert!(matches!(
            db::resolve_db_with(None, |_| None),
            Err(HistoryError::NoDefault)
        ));
    }

    #[test]
    fn times_are_normalised_to_utc() {
        // 14:05 at +02:00 is 12:05 UTC; Unix time of 2026-11-30T12:05:00Z computed by hand:
        // 20 787 days since 1970-01-01 (civil calendar) * 86400 + 12 h 5 min.
        let (text, ms) = parse_time("2026-11-30T14:05:00+02:00").unwrap();
        assert_eq!(text, "2026-11-30T12:05:00Z");
        assert_eq!(ms, (20_787 * 86_400 + 12 * 3600 + 5 * 60) * 1000);
        assert_eq!(
            parse_time("2026-11-30T12:05:00.123456789Z").unwrap().0,
            "2026-11-30T12:05:00.123Z"
        );
        assert!(matches!(
            parse_time("30/11/2026"),
            Err(HistoryError::Time { .. })
        ));
    }
}
