-- The audit trail: an append-only record of every change to runs, their
-- tags, files, analysis versions, reviews and comments, to accounts,
-- tokens, sessions and instruments. Rows are written by triggers on those
-- tables (created by the store at start from each table's columns, see
-- store/audit.go), never by application statements, and the triggers
-- below refuse every UPDATE and DELETE of a logged row, and an INSERT that
-- would replace one (so ids only grow: no AUTOINCREMENT needed). Times
-- are Unix seconds (UTC). before and after are
-- JSON objects: the whole row for insert and delete, the changed columns
-- for update; secrets (password hashes) show as "(hidden)"/"(changed)",
-- token hashes and file contents are never copied.

CREATE TABLE audit_log (
  id         INTEGER PRIMARY KEY,
  at         INTEGER NOT NULL,
  actor_id   INTEGER,
  actor_name TEXT NOT NULL DEFAULT '',
  via        TEXT NOT NULL DEFAULT '',
  kind       TEXT NOT NULL,
  row_id     INTEGER,
  run_id     INTEGER,
  action     TEXT NOT NULL,
  before     TEXT,
  after      TEXT
) STRICT;

CREATE INDEX audit_log_run ON audit_log(run_id, id) WHERE run_id IS NOT NULL;

CREATE INDEX audit_log_at ON audit_log(at);

-- Who is changing things: one row, written by the store at the start of
-- each write transaction from the actor in the request's context (user,
-- name, and the way in: web, api, cli, demo, job) and cleared before
-- commit where the store owns the commit. Triggers in the main schema
-- cannot read temporary tables, hence a real table; SQLite runs one write
-- transaction at a time, so the row always belongs to the running one.
CREATE TABLE audit_actor (
  id      INTEGER PRIMARY KEY CHECK (id = 1),
  user_id INTEGER,
  name    TEXT NOT NULL DEFAULT '',
  via     TEXT NOT NULL DEFAULT ''
) STRICT;

INSERT INTO audit_actor (id, user_id, name, via) VALUES (1, NULL, '', '');

CREATE TRIGGER audit_actor_keep BEFORE DELETE ON audit_actor BEGIN SELECT RAISE(ABORT, 'audit_actor keeps its one row'); END;

CREATE TRIGGER audit_log_no_update BEFORE UPDATE ON audit_log BEGIN SELECT RAISE(ABORT, 'the audit log is append-only: rows cannot be changed'); END;

CREATE TRIGGER audit_log_no_delete BEFORE DELETE ON audit_log BEGIN SELECT RAISE(ABORT, 'the audit log is append-only: rows cannot be deleted'); END;

CREATE TRIGGER audit_log_no_replace BEFORE INSERT ON audit_log WHEN EXISTS (SELECT 1 FROM audit_log WHERE id = NEW.id) BEGIN SELECT RAISE(ABORT, 'the audit log is append-only: rows cannot be replaced'); END;

INSERT INTO audit_log (at, kind, action, after) VALUES (unixepoch(), 'audit', 'log_started', json_object('note', 'changes before this time are not in the audit log'));
