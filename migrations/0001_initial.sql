-- Plumbline schema, version 1. Times are ISO 8601 UTC text with milliseconds, which sorts chronologically.

CREATE TABLE robots (
  robot_id    TEXT PRIMARY KEY,
  site        TEXT,
  created_at  TEXT NOT NULL,
  last_run_at TEXT
);

CREATE TABLE runs (
  id               TEXT PRIMARY KEY,
  robot_id         TEXT NOT NULL REFERENCES robots(robot_id),
  run_id           TEXT NOT NULL,
  site             TEXT NOT NULL,
  started_at       TEXT,
  received_at      TEXT NOT NULL,
  status           TEXT NOT NULL CHECK (status IN ('received', 'queued', 'analysing', 'done', 'failed', 'rejected')),
  status_reason    TEXT,
  sha256           TEXT NOT NULL CHECK (length(sha256) = 64),
  size_bytes       INTEGER NOT NULL CHECK (size_bytes >= 0),
  manifest_json    TEXT,
  score            REAL,
  verdict          TEXT CHECK (verdict IN ('sound', 'doubtful', 'unfit')),
  worst_severity   TEXT CHECK (worst_severity IN ('info', 'warn', 'critical')),
  flag_counts_json TEXT NOT NULL DEFAULT '{}',
  duration_s       REAL,
  distance_m       REAL,
  decision         TEXT CHECK (decision IN ('accept', 'accept-trimmed', 'reject', 'rerun')),
  reviewed_at      TEXT,
  -- Needs-decision rank for the `priority` sort: 0 = nothing to decide, 1..3 = undecided with worst severity
  -- info/warn/critical. Maintained by the store when a report or review is recorded.
  priority         INTEGER NOT NULL DEFAULT 0,
  -- Analysis generation: bumped by each (re-)analysis request; a result is accepted only with the current job key.
  generation       INTEGER NOT NULL DEFAULT 0,
  job_key          TEXT,
  policy           TEXT,
  UNIQUE (robot_id, run_id)
);

-- List filters and sorts, each ending in id for keyset pagination ties.
CREATE INDEX runs_received ON runs (received_at, id);
CREATE INDEX runs_started ON runs (COALESCE(started_at, ''), id);
CREATE INDEX runs_score ON runs (COALESCE(score, -1), id);
CREATE INDEX runs_priority ON runs (priority, received_at, id);
CREATE INDEX runs_robot_received ON runs (robot_id, received_at, id);
CREATE INDEX runs_site_received ON runs (site, received_at, id);
CREATE INDEX runs_verdict_received ON runs (verdict, received_at, id);
CREATE INDEX runs_status_received ON runs (status, received_at, id);
CREATE INDEX runs_decision_received ON runs (decision, received_at, id);

CREATE TABLE reports (
  id               INTEGER PRIMARY KEY,
  run              TEXT NOT NULL REFERENCES runs(id),
  job_key          TEXT NOT NULL UNIQUE,
  analysis_version TEXT NOT NULL,
  policy_hash      TEXT NOT NULL,
  score            REAL NOT NULL,
  verdict          TEXT NOT NULL,
  is_current       INTEGER NOT NULL DEFAULT 1 CHECK (is_current IN (0, 1)),
  report_json      TEXT NOT NULL,
  created_at       TEXT NOT NULL
);
CREATE INDEX reports_run ON reports (run, id);
CREATE UNIQUE INDEX reports_one_current ON reports (run) WHERE is_current = 1;

-- Flags and segments of the current report, denormalised for filtering.
CREATE TABLE flags (
  run       TEXT NOT NULL REFERENCES runs(id),
  report_id INTEGER NOT NULL REFERENCES reports(id),
  flag_id   TEXT NOT NULL,
  kind      TEXT NOT NULL,
  severity  TEXT NOT NULL,
  t_start   REAL NOT NULL,
  t_end     REAL NOT NULL,
  value     REAL,
  PRIMARY KEY (run, flag_id)
);
CREATE INDEX flags_kind_run ON flags (kind, run);

CREATE TABLE segments (
  run        TEXT NOT NULL REFERENCES runs(id),
  report_id  INTEGER NOT NULL REFERENCES reports(id),
  segment_id TEXT NOT NULL,
  severity   TEXT NOT NULL,
  t_start    REAL NOT NULL,
  t_end      REAL NOT NULL,
  kinds      TEXT NOT NULL,
  PRIMARY KEY (run, segment_id)
);

CREATE TABLE reviews (
  id         INTEGER PRIMARY KEY,
  run        TEXT NOT NULL REFERENCES runs(id),
  decision   TEXT NOT NULL CHECK (decision IN ('accept', 'accept-trimmed', 'reject', 'rerun')),
  note       TEXT NOT NULL,
  flags_json TEXT NOT NULL,
  reviewer   TEXT NOT NULL,
  created_at TEXT NOT NULL
);
CREATE INDEX reviews_run ON reviews (run, id);

CREATE TABLE audit_log (
  id          INTEGER PRIMARY KEY,
  at          TEXT NOT NULL,
  actor       TEXT NOT NULL,
  action      TEXT NOT NULL,
  subject     TEXT NOT NULL,
  detail_json TEXT NOT NULL
);
CREATE INDEX audit_subject ON audit_log (subject, id);

CREATE TRIGGER audit_log_no_update BEFORE UPDATE ON audit_log
BEGIN
  SELECT RAISE(ABORT, 'audit_log is append-only');
END;
CREATE TRIGGER audit_log_no_delete BEFORE DELETE ON audit_log
BEGIN
  SELECT RAISE(ABORT, 'audit_log is append-only');
END;

CREATE TABLE api_tokens (
  id         TEXT PRIMARY KEY,
  role       TEXT NOT NULL CHECK (role IN ('robot', 'lead', 'integrator', 'admin')),
  name       TEXT NOT NULL,
  robot_id   TEXT,
  token_hash BLOB NOT NULL CHECK (length(token_hash) = 32),
  created_at TEXT NOT NULL,
  revoked_at TEXT,
  CHECK (role <> 'robot' OR robot_id IS NOT NULL)
);

CREATE TABLE webhooks (
  id          TEXT PRIMARY KEY,
  url         TEXT NOT NULL,
  events_json TEXT NOT NULL,
  secret      TEXT NOT NULL,
  active      INTEGER NOT NULL DEFAULT 1 CHECK (active IN (0, 1)),
  created_at  TEXT NOT NULL
);

CREATE TABLE webhook_deliveries (
  id               INTEGER PRIMARY KEY,
  webhook_id       TEXT NOT NULL REFERENCES webhooks(id),
  event            TEXT NOT NULL,
  payload          TEXT NOT NULL,
  attempts         INTEGER NOT NULL DEFAULT 0,
  status           TEXT NOT NULL DEFAULT 'pending' CHECK (status IN ('pending', 'delivered', 'failed')),
  next_attempt_at  TEXT,
  last_status_code INTEGER,
  last_error       TEXT,
  created_at       TEXT NOT NULL
);
CREATE INDEX deliveries_due ON webhook_deliveries (next_attempt_at) WHERE status = 'pending';
CREATE INDEX deliveries_webhook ON webhook_deliveries (webhook_id, id);

CREATE TABLE upload_sessions (
  id             TEXT PRIMARY KEY,
  robot_id       TEXT NOT NULL,
  run_id         TEXT NOT NULL,
  size_bytes     INTEGER NOT NULL CHECK (size_bytes > 0),
  sha256         TEXT NOT NULL CHECK (length(sha256) = 64),
  filename       TEXT,
  received_bytes INTEGER NOT NULL DEFAULT 0 CHECK (received_bytes >= 0 AND received_bytes <= size_bytes),
  temp_path      TEXT NOT NULL,
  state          TEXT NOT NULL DEFAULT 'open' CHECK (state IN ('open', 'complete', 'aborted')),
  run            TEXT REFERENCES runs(id),
  created_at     TEXT NOT NULL,
  updated_at     TEXT NOT NULL,
  expires_at     TEXT NOT NULL
);
CREATE INDEX uploads_open_expiry ON upload_sessions (expires_at) WHERE state = 'open';

-- Jobs of the embedded queue. state: waiting (run_at may lie in the future = delayed/backoff), active (leased until
-- locked_until), completed, dead.
CREATE TABLE jobs (
  id           TEXT NOT NULL,
  queue        TEXT NOT NULL,
  payload      TEXT NOT NULL,
  state        TEXT NOT NULL CHECK (state IN ('waiting', 'active', 'completed', 'dead')),
  attempts     INTEGER NOT NULL DEFAULT 0,
  max_attempts INTEGER NOT NULL,
  run_at       INTEGER NOT NULL,
  locked_until INTEGER,
  lease_token  TEXT,
  last_error   TEXT,
  created_at   INTEGER NOT NULL,
  updated_at   INTEGER NOT NULL,
  PRIMARY KEY (queue, id)
);
CREATE INDEX jobs_claim ON jobs (queue, state, run_at);
CREATE INDEX jobs_lease ON jobs (queue, state, locked_until);
