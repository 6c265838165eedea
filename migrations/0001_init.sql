-- glowlog schema, version 1. Times are Unix seconds (UTC).

CREATE TABLE users (
  id            INTEGER PRIMARY KEY,
  name          TEXT NOT NULL UNIQUE COLLATE NOCASE,
  role          TEXT NOT NULL CHECK (role IN ('viewer', 'operator', 'reviewer', 'admin')),
  password_hash TEXT NOT NULL,
  created_at    INTEGER NOT NULL,
  disabled      INTEGER NOT NULL DEFAULT 0
) STRICT;

-- Server-side sessions: only the SHA-256 of the cookie token is stored.
CREATE TABLE sessions (
  token_hash BLOB PRIMARY KEY,
  user_id    INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
  created_at INTEGER NOT NULL,
  expires_at INTEGER NOT NULL
) STRICT, WITHOUT ROWID;
CREATE INDEX sessions_user ON sessions(user_id);

-- Per-user API tokens, stored hashed, revocable.
CREATE TABLE api_tokens (
  id           INTEGER PRIMARY KEY,
  user_id      INTEGER NOT NULL REFERENCES users(id) ON DELETE CASCADE,
  name         TEXT NOT NULL,
  token_hash   BLOB NOT NULL UNIQUE,
  created_at   INTEGER NOT NULL,
  last_used_at INTEGER,
  revoked_at   INTEGER
) STRICT;

CREATE TABLE chambers (
  id          INTEGER PRIMARY KEY,
  name        TEXT NOT NULL UNIQUE,
  description TEXT NOT NULL DEFAULT ''
) STRICT;

CREATE TABLE recipes (
  id          INTEGER PRIMARY KEY,
  name        TEXT NOT NULL UNIQUE,
  description TEXT NOT NULL DEFAULT ''
) STRICT;

-- Stored instrument functions (calib.Instrument as JSON), reusable by name.
CREATE TABLE instruments (
  id         INTEGER PRIMARY KEY,
  name       TEXT NOT NULL UNIQUE,
  definition TEXT NOT NULL,
  created_at INTEGER NOT NULL
) STRICT;

-- A discharge run: its conditions, spectrometer, notes and review state.
-- The summary columns (texc_k …) repeat the run's current analysis so that
-- lists and trends over many runs need no JSON parsing.
CREATE TABLE runs (
  id               INTEGER PRIMARY KEY,
  title            TEXT NOT NULL,
  started_at       INTEGER NOT NULL,
  operator_id      INTEGER NOT NULL REFERENCES users(id),
  chamber_id       INTEGER REFERENCES chambers(id),
  recipe_id        INTEGER REFERENCES recipes(id),
  source_type      TEXT NOT NULL CHECK (source_type IN ('dc_glow', 'rf_capacitive', 'rf_inductive', 'microwave', 'dielectric_barrier', 'plasma_jet')),
  gas_mixture      TEXT NOT NULL DEFAULT '',
  pressure_pa      REAL,
  power_w          REAL,
  flows            TEXT NOT NULL DEFAULT '',
  electrode_gap_mm REAL,
  grating_l_mm     REAL,
  slit_um          REAL,
  integration_ms   REAL,
  instrument_fwhm_nm REAL,
  instrument_id    INTEGER REFERENCES instruments(id),
  gas_temperature_k REAL,
  perturber        TEXT NOT NULL DEFAULT 'none',
  notes            TEXT NOT NULL DEFAULT '',
  status           TEXT NOT NULL DEFAULT 'draft' CHECK (status IN ('draft', 'submitted', 'returned', 'signed_off')),
  signed_off_by    INTEGER REFERENCES users(id),
  signed_off_at    INTEGER,
  created_at       INTEGER NOT NULL,
  updated_at       INTEGER NOT NULL,
  -- summary of the current analysis
  texc_k           REAL,
  texc_unc_k       REAL,
  ne_m3            REAL,
  ne_unc_m3        REAL,
  tgas_k           REAL,
  n_warnings       INTEGER NOT NULL DEFAULT 0,
  analysis_version INTEGER NOT NULL DEFAULT 0
) STRICT;
CREATE INDEX runs_started ON runs(started_at);
CREATE INDEX runs_chamber_started ON runs(chamber_id, started_at);
CREATE INDEX runs_recipe_started ON runs(recipe_id, started_at);
CREATE INDEX runs_status ON runs(status, started_at);
CREATE INDEX runs_operator ON runs(operator_id, started_at);

CREATE TABLE run_tags (
  run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
  tag    TEXT NOT NULL,
  PRIMARY KEY (run_id, tag)
) STRICT, WITHOUT ROWID;
CREATE INDEX run_tags_tag ON run_tags(tag, run_id);

-- Files and tables attached to a run: spectra (a time series: seq), dark
-- and response files, or a typed line table (a measurement-set JSON).
CREATE TABLE attachments (
  id         INTEGER PRIMARY KEY,
  run_id     INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
  kind       TEXT NOT NULL CHECK (kind IN ('spectrum', 'dark', 'response', 'line_table')),
  name       TEXT NOT NULL,
  seq        INTEGER NOT NULL DEFAULT 0,
  content    BLOB NOT NULL,
  created_at INTEGER NOT NULL
) STRICT;
CREATE INDEX attachments_run ON attachments(run_id, kind, seq);

-- Analysis versions: every change of settings adds a version; earlier
-- versions are kept. Each version holds one result per analysed attachment.
CREATE TABLE analyses (
  id             INTEGER PRIMARY KEY,
  run_id         INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
  version        INTEGER NOT NULL,
  settings       TEXT NOT NULL,
  engine_version TEXT NOT NULL,
  created_by     INTEGER REFERENCES users(id),
  created_at     INTEGER NOT NULL,
  reason         TEXT NOT NULL DEFAULT '',
  UNIQUE (run_id, version)
) STRICT;

CREATE TABLE analysis_results (
  id            INTEGER PRIMARY KEY,
  analysis_id   INTEGER NOT NULL REFERENCES analyses(id) ON DELETE CASCADE,
  attachment_id INTEGER NOT NULL REFERENCES attachments(id) ON DELETE CASCADE,
  result        TEXT,
  error         TEXT,
  texc_k        REAL,
  texc_unc_k    REAL,
  ne_m3         REAL,
  ne_unc_m3     REAL,
  tgas_k        REAL,
  n_warnings    INTEGER NOT NULL DEFAULT 0
) STRICT;
CREATE INDEX analysis_results_analysis ON analysis_results(analysis_id);

CREATE TABLE comments (
  id         INTEGER PRIMARY KEY,
  run_id     INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
  author_id  INTEGER NOT NULL REFERENCES users(id),
  body       TEXT NOT NULL,
  created_at INTEGER NOT NULL
) STRICT;
CREATE INDEX comments_run ON comments(run_id, created_at);

-- Review history: every status change with who and when.
CREATE TABLE status_events (
  id          INTEGER PRIMARY KEY,
  run_id      INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
  from_status TEXT NOT NULL,
  to_status   TEXT NOT NULL,
  user_id     INTEGER NOT NULL REFERENCES users(id),
  at          INTEGER NOT NULL,
  note        TEXT NOT NULL DEFAULT ''
) STRICT;
CREATE INDEX status_events_run ON status_events(run_id, at);

-- Background jobs (bulk reanalysis) and their progress.
CREATE TABLE jobs (
  id          INTEGER PRIMARY KEY,
  kind        TEXT NOT NULL,
  state       TEXT NOT NULL CHECK (state IN ('queued', 'running', 'done', 'failed')),
  params      TEXT NOT NULL DEFAULT '{}',
  total       INTEGER NOT NULL DEFAULT 0,
  done        INTEGER NOT NULL DEFAULT 0,
  failed      INTEGER NOT NULL DEFAULT 0,
  message     TEXT NOT NULL DEFAULT '',
  created_by  INTEGER REFERENCES users(id),
  created_at  INTEGER NOT NULL,
  finished_at INTEGER
) STRICT;

CREATE TABLE settings (
  key   TEXT PRIMARY KEY,
  value TEXT NOT NULL
) STRICT, WITHOUT ROWID;
