-- Chamber events: what happened to a chamber that explains its trends
-- (maintenance, an electrode change, a gas bottle change, anything else),
-- with the time it happened (Unix seconds, UTC), a note and who logged it.
CREATE TABLE chamber_events (
  id          INTEGER PRIMARY KEY,
  chamber_id  INTEGER NOT NULL REFERENCES chambers(id),
  at          INTEGER NOT NULL,
  kind        TEXT NOT NULL CHECK (kind IN ('maintenance', 'electrode_change', 'gas_bottle_change', 'other')),
  note        TEXT NOT NULL DEFAULT '',
  logged_by   INTEGER NOT NULL REFERENCES users(id),
  created_at  INTEGER NOT NULL
) STRICT;
CREATE INDEX chamber_events_chamber_at ON chamber_events(chamber_id, at);
CREATE INDEX chamber_events_at ON chamber_events(at);

-- The board counts runs awaiting review per chamber from this index alone
-- (without it, every submitted run's row is read).
CREATE INDEX runs_status_chamber ON runs(status, chamber_id);
