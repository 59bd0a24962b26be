-- coldtrace's history on a shared PostgreSQL server: group roles with the least privileges each use
-- needs (docs/history.md, "Roles"). Run it with psql as the owner of the history's database, once the
-- schema exists (after the owner's first `coldtrace history record` or `coldtrace history migrate --to`),
-- and again after an upgrade whose migration adds a table. It can be run any number of times.
--
--   viewers    read: history list, show, trend, export, and `survey` without --record
--   recorders  read, and add records: history record, survey --record, history migrate --to
--   curators   read, and choose each line's baseline: history baseline
--
-- Nothing here can alter or delete a record: only the owner can. People log in with roles of their
-- own that are members of these, for example:
--   CREATE ROLE alice LOGIN PASSWORD '...' IN ROLE coldtrace_recorder;
--   CREATE ROLE controlroom LOGIN PASSWORD '...' IN ROLE coldtrace_viewer;
-- (CONNECT on the database is granted to PUBLIC by default; where it was revoked, grant it to the three
-- group roles too.)

DO $$
BEGIN
    IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'coldtrace_viewer') THEN
        CREATE ROLE coldtrace_viewer NOLOGIN;
    END IF;
    IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'coldtrace_recorder') THEN
        CREATE ROLE coldtrace_recorder NOLOGIN;
    END IF;
    IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'coldtrace_curator') THEN
        CREATE ROLE coldtrace_curator NOLOGIN;
    END IF;
END
$$;

GRANT USAGE ON SCHEMA public TO coldtrace_viewer, coldtrace_recorder, coldtrace_curator;
GRANT SELECT ON ALL TABLES IN SCHEMA public TO coldtrace_viewer, coldtrace_recorder, coldtrace_curator;
GRANT INSERT ON lines, records, stage_temperatures, landmarks, findings TO coldtrace_recorder;
GRANT UPDATE (baseline_record) ON lines TO coldtrace_curator;
