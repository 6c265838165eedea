-- A result kept unchanged from the previous analysis version points to the
-- row that holds its JSON instead of copying it, so that adding one
-- spectrum to a long time series writes one new result, not all of them.

ALTER TABLE analysis_results ADD COLUMN same_as INTEGER REFERENCES analysis_results(id);

-- File contents move to their own table: a run's file list (and the
-- columns after a large BLOB) then no longer read through the contents.
CREATE TABLE attachment_contents (
  attachment_id INTEGER PRIMARY KEY REFERENCES attachments(id) ON DELETE CASCADE,
  content       BLOB NOT NULL
) STRICT;

INSERT INTO attachment_contents (attachment_id, content) SELECT id, content FROM attachments;

ALTER TABLE attachments ADD COLUMN size INTEGER NOT NULL DEFAULT 0;

UPDATE attachments SET size = length(content);

ALTER TABLE attachments DROP COLUMN content;
