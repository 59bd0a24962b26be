//! The history back-ends a test runs against: always a fresh SQLite file; and a fresh database on a real
//! PostgreSQL server when `COLDTRACE_TEST_PG` names one (an administrator's URL, such as
//! `postgres://postgres@127.0.0.1:55432/postgres`; `.ci/run` starts a throwaway cluster and sets it).
//! Without it the PostgreSQL runs are skipped with a message, unless `COLDTRACE_TEST_PG_REQUIRED` is set
//! (as CI sets it): then a missing server fails the test.
//!
//! Used by `tests/cli_history.rs` and `tests/history_backends.rs`
//! (`#[path = "common/backends.rs"] mod backends;`).

#![allow(dead_code)]

use std::ffi::{OsStr, OsString};
use std::sync::atomic::{AtomicUsize, Ordering};

/// The variable naming the administrator's URL of the test server.
pub const PG_ENV: &str = "COLDTRACE_TEST_PG";
/// Set (to anything) where the PostgreSQL runs must not be skipped.
pub const PG_REQUIRED_ENV: &str = "COLDTRACE_TEST_PG_REQUIRED";

/// One history a test writes to, removed when dropped.
pub struct Backend {
    /// `sqlite` or `postgres`.
    pub kind: &'static str,
    /// What `--db` is given.
    pub arg: OsString,
    _dir: tempfile::TempDir,
    pg: Option<TempDb>,
}

impl Backend {
    pub fn arg(&self) -> &OsStr {
        &self.arg
    }

    pub fn is_pg(&self) -> bool {
        self.pg.is_some()
    }

    /// The folder this backend's test may write files into.
    pub fn dir(&self) -> &std::path::Path {
        self._dir.path()
    }

    /// The administrator's URL of the server and the database's name (PostgreSQL only).
    pub fn pg(&self) -> Option<&TempDb> {
        self.pg.as_ref()
    }
}

/// A database made for one test on the test server, dropped (with its connections) at the end.
pub struct TempDb {
    pub admin: String,
    pub name: String,
    /// The database's URL as the administrator.
    pub url: String,
}

impl TempDb {
    /// A client of this database as the administrator.
    pub fn client(&self) -> postgres::Client {
        postgres::Client::connect(&self.url, postgres::NoTls).expect("connect to the test database")
    }

    /// This database's URL for another role (`user`, with `password` when given).
    pub fn url_as(&self, user: &str, password: Option<&str>) -> String {
        let base = self.url.split_once("://").map(|x| x.1).unwrap_or(&self.url);
        let host = base.rsplit_once('@').map(|x| x.1).unwrap_or(base);
        match password {
            Some(p) => format!("postgres://{user}:{p}@{host}"),
            None => format!("postgres://{user}@{host}"),
        }
    }
}

impl Drop for TempDb {
    fn drop(&mut self) {
        if let Ok(mut c) = postgres::Client::connect(&self.admin, postgres::NoTls) {
            let _ = c.batch_execute(&format!(
                "DROP DATABASE IF EXISTS {} WITH (FORCE)",
                self.name
            ));
        }
    }
}

/// The administrator's URL of the test server, or `None` (after saying so) when none is given and none
/// is required.
pub fn pg_admin() -> Option<String> {
    match std::env::var(PG_ENV) {
        Ok(u) if !u.is_empty() => Some(u),
        _ => {
            assert!(
                std::env::var_os(PG_REQUIRED_ENV).is_none(),
                "{PG_REQUIRED_ENV} is set but {PG_ENV} is not: the PostgreSQL tests must run here \
                 (.ci/run starts a server and sets both)"
            );
            // Straight to the standard error, past the test harness's capture, once per test binary.
            static SAID: std::sync::Once = std::sync::Once::new();
            SAID.call_once(|| {
                use std::io::Write;
                let _ = writeln!(
                    std::io::stderr(),
                    "note: PostgreSQL back-end skipped: set {PG_ENV}=postgres://USER@HOST:PORT/postgres \
                     (an administrator's URL of a throwaway server; .ci/run starts one) to run the \
                     history tests against it too"
                );
            });
            None
        }
    }
}

static COUNTER: AtomicUsize = AtomicUsize::new(0);

/// A fresh, empty database on the test server, named after `tag`.
pub fn temp_db(admin: &str, tag: &str) -> TempDb {
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    let safe: String = tag
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '_'
            }
        })
        .collect();
    let name = format!("ct_{safe}_{}_{n}", std::process::id());
    let mut c = postgres::Client::connect(admin, postgres::NoTls)
        .unwrap_or_else(|e| panic!("{PG_ENV}: cannot connect to the test server: {e}"));
    c.batch_execute(&format!("CREATE DATABASE {name}")).unwrap();
    let (head, _) = admin.rsplit_once('/').expect("a URL ending in /DATABASE");
    let url = format!("{head}/{name}");
    TempDb {
        admin: admin.to_string(),
        name,
        url,
    }
}

/// A fresh SQLite history, and a fresh PostgreSQL one when a test server is given.
pub fn all(tag: &str) -> Vec<Backend> {
    let mut out = vec![sqlite()];
    if let Some(admin) = pg_admin() {
        let db = temp_db(&admin, tag);
        out.push(Backend {
            kind: "postgres",
            arg: OsString::from(&db.url),
            _dir: tempfile::tempdir().unwrap(),
            pg: Some(db),
        });
    }
    out
}

/// A fresh SQLite history only.
pub fn sqlite() -> Backend {
    let dir = tempfile::tempdir().unwrap();
    let arg = dir.path().join("h.sqlite").into_os_string();
    Backend {
        kind: "sqlite",
        arg,
        _dir: dir,
        pg: None,
    }
}

/// A record of the demo line with no landmarks or findings, of sweep content `sha` (for store-level
/// tests).
pub fn a_record(sha: &str) -> coldtrace::history::NewRecord {
    coldtrace::history::NewRecord {
        line: "north-fridge/in-07".into(),
        at: "2026-03-01T00:00:00Z".into(),
        at_ms: 1_772_323_200_000,
        state: coldtrace::line::State::Cold,
        note: None,
        sweep: "x.s1p".into(),
        sha256: sha.into(),
        stage_temperatures: vec![("mxc".into(), 0.015)],
        landmarks: Vec::new(),
        compared_with: None,
        findings: Vec::new(),
        worst_severity: None,
    }
}
