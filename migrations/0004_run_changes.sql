-- A log of changed runs (their conditions, summary, status or tags), so
-- that cached trend series can be brought up to date by re-reading only
-- the runs that changed since.

CREATE TABLE run_changes (
  seq    INTEGER PRIMARY KEY AUTOINCREMENT,
  run_id INTEGER NOT NULL
) STRICT;

CREATE TRIGGER runs_log_insert AFTER INSERT ON runs BEGIN INSERT INTO run_changes (run_id) VALUES (NEW.id); END;

CREATE TRIGGER runs_log_update AFTER UPDATE ON runs BEGIN INSERT INTO run_changes (run_id) VALUES (NEW.id); END;

CREATE TRIGGER runs_log_delete AFTER DELETE ON runs BEGIN INSERT INTO run_changes (run_id) VALUES (OLD.id); END;

CREATE TRIGGER run_tags_log_insert AFTER INSERT ON run_tags BEGIN INSERT INTO run_changes (run_id) VALUES (NEW.run_id); END;

CREATE TRIGGER run_tags_log_delete AFTER DELETE ON run_tags BEGIN INSERT INTO run_changes (run_id) VALUES (OLD.run_id); END;
