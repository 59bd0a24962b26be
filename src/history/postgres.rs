//! The shared back-end: a PostgreSQL server, for a facility whose fridges and people share one history.
//! It stores and returns exactly what the SQLite back-end does: both run the statements of [`super::sql`]
//! on the schema of [`super::schema`].
//!
//! Safety (tests/history_backends.rs runs the same suite against both back-ends):
//! - one transaction per record, holding a transaction-scoped advisory lock ([`WRITE_LOCK_KEY`]) from
//!   before the duplicate check to the commit, so ids are assigned without a race and two processes
//!   recording the same sweep at once leave one record; a lock held by another writer is waited for up
//!   to [`LOCK_TIMEOUT`] (PostgreSQL's `lock_timeout`);
//! - a connection lost mid-record leaves nothing: the server keeps none of an unfinished transaction, and
//!   the command says so and exits non-zero;
//! - migrations run in one transaction under the same lock (DDL is transactional in PostgreSQL);
//! - a database of a newer schema, or one holding other tables and no `schema_migrations`, is refused and
//!   left untouched; the version is read before anything is written;
//! - parameterised SQL only; the password never appears in output or errors ([`super::db::ServerUrl`]);
//! - the server is reached only at the URL given, without TLS (`sslmode=require` is refused with a
//!   message; docs/history.md says how to reach a server across a network).

use super::db::ServerUrl;
use super::schema::SCHEMA_VERSION;
use super::sql::{Cell, Session, SqlBackend, Value};
use super::HistoryError;
use postgres::config::SslMode;
use postgres::types::{ToSql, Type};
use postgres::{Client, Config, GenericClient, NoTls};
use std::cell::{RefCell, RefMut};
use std::ops::DerefMut;
use std::str::FromStr;
use std::time::Duration;

/// How long a write waits for another writer's lock before giving up, as the SQLite back-end's busy
/// timeout (`sqlite::BUSY_TIMEOUT`; common practice, no source).
pub const LOCK_TIMEOUT: Duration = Duration::from_secs(30);

/// How long connecting may take when the URL does not say (`connect_timeout`; common practice, no
/// source).
pub const CONNECT_TIMEOUT: Duration = Duration::from_secs(10);

/// The key of the transaction-scoped advisory lock every write takes (`pg_advisory_xact_lock`): the ASCII
/// bytes of "coldtrce" as one big-endian 64-bit integer. Another application sharing the database would
/// have to pick the same key by chance to be held up by it.
pub const WRITE_LOCK_KEY: i64 = 0x636f_6c64_7472_6365;

/// SQLSTATE codes read for clearer messages (PostgreSQL 15 manual, Appendix A, "PostgreSQL Error Codes").
const INSUFFICIENT_PRIVILEGE: &str = "42501";
const ADMIN_SHUTDOWN: &str = "57P01";

/// What a failed write adds to the driver's message.
const NOT_COMMITTED: &str = "the write was not committed, and the server keeps nothing of an \
     unfinished transaction: nothing of it was stored. Run the command again (a sweep is recorded once, \
     however often it is run)";

/// A history on a PostgreSQL server.
pub struct PostgresStore {
    client: RefCell<Client>,
    url: ServerUrl,
}

impl std::fmt::Debug for PostgresStore {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "PostgresStore({})", self.url.shown())
    }
}

/// The driver's error as a message: the server's own words where it sent some, with a hint for the
/// usual causes, scrubbed of the password.
fn message(url: &ServerUrl, e: &postgres::Error, writing: bool) -> String {
    let mut text = match e.as_db_error() {
        Some(db) => format!("{}: {}", db.severity(), db.message()),
        None => {
            // The driver's words and each cause under them ("error connecting to server: Connection
            // refused").
            let mut t = e.to_string();
            let mut cause = std::error::Error::source(e);
            while let Some(c) = cause {
                let more = c.to_string();
                if !t.contains(&more) {
                    t.push_str(": ");
                    t.push_str(&more);
                }
                cause = c.source();
            }
            t
        }
    };
    let code = e.code().map(|c| c.code());
    if code == Some(INSUFFICIENT_PRIVILEGE) {
        text.push_str(
            " (this role lacks a right the command needs; docs/history.md, \"Roles\", lists them)",
        );
    }
    let lost = e.is_closed() || code == Some(ADMIN_SHUTDOWN);
    if lost {
        text.push_str(" (the connection to the server was lost)");
    }
    if writing {
        text.push_str("; ");
        text.push_str(NOT_COMMITTED);
    }
    url.scrub(&text)
}

/// A connection or a transaction (behind any mutable reference to one) as a [`Session`].
struct Pg<'a, G> {
    client: G,
    url: &'a ServerUrl,
    /// Inside a record's write transaction (failures say that nothing was stored).
    writing: bool,
}

/// The driver's error as the history's, naming the server without its password.
fn server_error(url: &ServerUrl, e: &postgres::Error, writing: bool) -> HistoryError {
    HistoryError::Server {
        db: url.shown().to_string(),
        message: message(url, e, writing),
    }
}

impl<G> Pg<'_, G> {
    fn err(&self, e: postgres::Error) -> HistoryError {
        server_error(self.url, &e, self.writing)
    }
}

fn bind(params: &[Value]) -> Vec<&(dyn ToSql + Sync)> {
    params
        .iter()
        .map(|v| match v {
            Value::Int(x) => x as &(dyn ToSql + Sync),
            Value::Real(x) => x as &(dyn ToSql + Sync),
            Value::Text(x) => x as &(dyn ToSql + Sync),
        })
        .collect()
}

impl<G, C> Session for Pg<'_, G>
where
    G: DerefMut<Target = C>,
    C: GenericClient,
{
    fn execute(&mut self, sql: &str, params: &[Value]) -> Result<u64, HistoryError> {
        let p = bind(params);
        self.client.execute(sql, &p).map_err(|e| self.err(e))
    }

    fn query(&mut self, sql: &str, params: &[Value]) -> Result<Vec<Vec<Cell>>, HistoryError> {
        let p = bind(params);
        let rows = self.client.query(sql, &p).map_err(|e| self.err(e))?;
        let mut out = Vec::with_capacity(rows.len());
        for row in &rows {
            let mut cells = Vec::with_capacity(row.len());
            for (i, col) in row.columns().iter().enumerate() {
                let t = col.type_();
                let cell = if *t == Type::INT8 {
                    row.try_get::<_, Option<i64>>(i)
                        .map(|v| v.map_or(Cell::Null, Cell::Int))
                } else if *t == Type::INT4 {
                    row.try_get::<_, Option<i32>>(i)
                        .map(|v| v.map_or(Cell::Null, |x| Cell::Int(x.into())))
                } else if *t == Type::FLOAT8 {
                    row.try_get::<_, Option<f64>>(i)
                        .map(|v| v.map_or(Cell::Null, Cell::Real))
                } else if *t == Type::TEXT || *t == Type::VARCHAR || *t == Type::NAME {
                    row.try_get::<_, Option<String>>(i)
                        .map(|v| v.map_or(Cell::Null, Cell::Text))
                } else {
                    return Err(HistoryError::Data {
                        db: self.url.shown().to_string(),
                        message: format!(
                            "column {} is of type {t}, which coldtrace never stores",
                            col.name()
                        ),
                    });
                };
                cells.push(cell.map_err(|e| self.err(e))?);
            }
            out.push(cells);
        }
        Ok(out)
    }

    fn db(&self) -> String {
        self.url.shown().to_string()
    }
}

impl PostgresStore {
    /// Connect to the server at `url` and open its history, migrating it to [`SCHEMA_VERSION`]; with
    /// `create`, make the schema when the database holds none. The database itself must exist.
    pub fn open(url: &ServerUrl, create: bool) -> Result<PostgresStore, HistoryError> {
        Self::open_at(url, create, SCHEMA_VERSION)
    }

    /// [`PostgresStore::open`], migrating only up to `version` (at most [`SCHEMA_VERSION`]): how the
    /// migration tests make a history of every earlier version.
    pub fn open_at(
        url: &ServerUrl,
        create: bool,
        version: i64,
    ) -> Result<PostgresStore, HistoryError> {
        let bad_url = |m: String| HistoryError::Url {
            message: format!("{}: {}", url.shown(), url.scrub(&m)),
        };
        let mut config = Config::from_str(url.secret()).map_err(|e| bad_url(e.to_string()))?;
        if config.get_ssl_mode() == SslMode::Require {
            return Err(bad_url(
                "sslmode=require, but this coldtrace connects without TLS: reach the server on a \
                 loopback address or through an SSH tunnel (docs/history.md), and leave sslmode out"
                    .to_string(),
            ));
        }
        if config.get_hosts().is_empty() {
            return Err(bad_url(
                "the URL names no host: give the server's address, as in \
                 postgres://USER@HOST:5432/DATABASE"
                    .to_string(),
            ));
        }
        if config.get_connect_timeout().is_none() {
            config.connect_timeout(CONNECT_TIMEOUT);
        }
        if config.get_application_name().is_none() {
            config.application_name("coldtrace");
        }
        let client = config.connect(NoTls).map_err(|e| HistoryError::Server {
            db: url.shown().to_string(),
            message: format!(
                "cannot connect: {} (check the address, the port, the database's name and the role's \
                 password; the database must exist: CREATE DATABASE, docs/history.md)",
                message(url, &e, false)
            ),
        })?;
        let mut store = PostgresStore {
            client: RefCell::new(client),
            url: url.clone(),
        };
        store.session().execute(
            &format!("SET lock_timeout = '{}s'", LOCK_TIMEOUT.as_secs()),
            &[],
        )?;
        // Read-only checks first: a refused database is never written.
        let found = store.version()?;
        if found > SCHEMA_VERSION {
            return Err(HistoryError::NewerSchema {
                db: url.shown().to_string(),
                found,
                supported: SCHEMA_VERSION,
            });
        }
        if found == 0 && !create {
            return Err(HistoryError::Missing {
                db: url.shown().to_string(),
            });
        }
        let target = version.min(SCHEMA_VERSION);
        if found < target {
            store.migrate_to(target)?;
        }
        Ok(store)
    }

    /// The connection as a [`Session`], for one call at a time.
    fn session(&self) -> Pg<'_, RefMut<'_, Client>> {
        Pg {
            client: self.client.borrow_mut(),
            url: &self.url,
            writing: false,
        }
    }
}

impl SqlBackend for PostgresStore {
    /// The tables of the connection's current schema (`search_path`), whoever may read them.
    const TABLES_SQL: &'static str =
        "SELECT CAST(tablename AS TEXT) FROM pg_tables WHERE schemaname = current_schema()";

    fn shown(&self) -> String {
        self.url.shown().to_string()
    }

    fn read<T>(
        &self,
        work: impl FnOnce(&mut dyn Session) -> Result<T, HistoryError>,
    ) -> Result<T, HistoryError> {
        work(&mut self.session())
    }

    /// One transaction holding the advisory write lock ([`WRITE_LOCK_KEY`]) from before anything is read.
    fn write<T>(
        &mut self,
        work: impl FnOnce(&mut dyn Session) -> Result<T, HistoryError>,
    ) -> Result<T, HistoryError> {
        let url = &self.url;
        let fail = |e: postgres::Error| server_error(url, &e, true);
        let client = self.client.get_mut();
        let mut tx = client.transaction().map_err(fail)?;
        tx.execute("SELECT pg_advisory_xact_lock($1)", &[&WRITE_LOCK_KEY])
            .map_err(fail)?;
        let out = work(&mut Pg {
            client: &mut tx,
            url,
            writing: true,
        })?;
        tx.commit().map_err(fail)?;
        Ok(out)
    }
}
