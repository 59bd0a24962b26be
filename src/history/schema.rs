//! The history's schema: a list of migrations, each a version, a description and its SQL. The SQL is the
//! subset SQLite and PostgreSQL share (BIGINT, DOUBLE PRECISION, TEXT, PRIMARY KEY, UNIQUE, REFERENCES,
//! CHECK; ids assigned by the application inside the writing transaction, no AUTOINCREMENT or SERIAL), so
//! a second back-end applies the same list.
//!
//! The version of a database is the largest `version` in its `schema_migrations` table (0 for a new,
//! empty file). Opening a database applies every migration above its version in one transaction; a
//! database whose version is above [`SCHEMA_VERSION`] was made by a newer coldtrace and is refused.
//! Never edit a migration once released: add a new one.

/// One step of the schema.
#[derive(Debug, Clone, Copy)]
pub struct Migration {
    pub version: i64,
    pub description: &'static str,
    /// Statements separated by `;`.
    pub sql: &'static str,
}

/// Every migration, in order. The schema at version `v` is the result of the first `v` of them.
pub const MIGRATIONS: &[Migration] = &[Migration {
    version: 1,
    description: "lines, records, stage temperatures, landmarks, findings",
    sql: "
CREATE TABLE schema_migrations (
    version BIGINT PRIMARY KEY,
    description TEXT NOT NULL,
    applied_at TEXT NOT NULL
);
CREATE TABLE lines (
    id BIGINT PRIMARY KEY,
    name TEXT NOT NULL UNIQUE,
    baseline_record BIGINT
);
CREATE TABLE records (
    id BIGINT PRIMARY KEY,
    line_id BIGINT NOT NULL REFERENCES lines (id),
    taken_at TEXT NOT NULL,
    taken_at_ms BIGINT NOT NULL,
    state TEXT NOT NULL CHECK (state IN ('warm', 'cold')),
    note TEXT,
    sweep_path TEXT NOT NULL,
    sha256 TEXT NOT NULL UNIQUE,
    compared_with BIGINT REFERENCES records (id),
    worst_severity TEXT,
    recorded_at TEXT NOT NULL
);
CREATE INDEX records_by_line_time ON records (line_id, taken_at_ms, id);
CREATE TABLE stage_temperatures (
    record_id BIGINT NOT NULL REFERENCES records (id),
    stage TEXT NOT NULL,
    kelvin DOUBLE PRECISION NOT NULL,
    PRIMARY KEY (record_id, stage)
);
CREATE TABLE landmarks (
    record_id BIGINT NOT NULL REFERENCES records (id),
    seq BIGINT NOT NULL,
    element TEXT NOT NULL,
    kind TEXT NOT NULL CHECK (kind IN ('connector', 'segment')),
    start_m DOUBLE PRECISION NOT NULL,
    end_m DOUBLE PRECISION NOT NULL,
    reflection_db DOUBLE PRECISION,
    floor_db DOUBLE PRECISION,
    delay_s DOUBLE PRECISION,
    loss_change_db DOUBLE PRECISION,
    PRIMARY KEY (record_id, seq)
);
CREATE TABLE findings (
    record_id BIGINT NOT NULL REFERENCES records (id),
    finding_rank BIGINT NOT NULL,
    element TEXT NOT NULL,
    distance_m DOUBLE PRECISION,
    kind TEXT NOT NULL,
    severity TEXT NOT NULL,
    reflection_db DOUBLE PRECISION,
    change_db DOUBLE PRECISION,
    power_drop_db DOUBLE PRECISION,
    explanation TEXT NOT NULL,
    PRIMARY KEY (record_id, finding_rank)
)",
}];

/// The schema version this build writes and reads.
pub const SCHEMA_VERSION: i64 = MIGRATIONS[MIGRATIONS.len() - 1].version;

/// The statements of one migration, one by one (`;`-separated, blank ones dropped).
pub fn statements(m: &Migration) -> impl Iterator<Item = &'static str> {
    m.sql.split(';').map(str::trim).filter(|s| !s.is_empty())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn versions_run_from_one_without_gaps() {
        for (i, m) in MIGRATIONS.iter().enumerate() {
            assert_eq!(m.version, i as i64 + 1);
        }
        assert_eq!(SCHEMA_VERSION, MIGRATIONS.len() as i64);
    }

    #[test]
    fn schema_keeps_to_the_shared_sql_subset() {
        // Words one of the two engines does not take (SQLite-only or PostgreSQL-only spellings).
        for m in MIGRATIONS {
            let up = m.sql.to_ascii_uppercase();
            for word in [
                "AUTOINCREMENT",
                "SERIAL",
                "IDENTITY",
                " REAL",
                "WITHOUT ROWID",
                "PRAGMA",
            ] {
                assert!(!up.contains(word), "migration {} uses {word}", m.version);
            }
        }
    }
}
