-- Fleet view: robot maintenance findings from calibration drift, and versioned triage policies.

-- One open finding per (robot, metric) at most; a finding no longer detected is marked resolved, never deleted.
CREATE TABLE maintenance_findings (
  id           TEXT PRIMARY KEY,
  robot_id     TEXT NOT NULL REFERENCES robots(robot_id),
  metric       TEXT NOT NULL,
  severity     TEXT NOT NULL CHECK (severity IN ('info', 'warn', 'critical')),
  status       TEXT NOT NULL CHECK (status IN ('open', 'resolved')),
  finding_json TEXT NOT NULL,
  detected_at  TEXT NOT NULL,
  updated_at   TEXT NOT NULL
);
CREATE UNIQUE INDEX findings_one_open ON maintenance_findings (robot_id, metric) WHERE status = 'open';
CREATE INDEX findings_status ON maintenance_findings (status, updated_at);

-- Policy documents: (name, version) is immutable once stored; hash = policy hash of the canonical document.
CREATE TABLE policies (
  name        TEXT NOT NULL,
  version     TEXT NOT NULL,
  hash        TEXT NOT NULL,
  policy_json TEXT NOT NULL,
  created_by  TEXT NOT NULL,
  created_at  TEXT NOT NULL,
  seq         INTEGER NOT NULL,
  PRIMARY KEY (name, version)
);
CREATE UNIQUE INDEX policies_seq ON policies (name, seq);
