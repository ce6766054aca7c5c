-- Control limits (versioned per line and product), alerts as episodes, the signals that make
-- them, and each line's detector state so a restart resumes exactly where it stopped.

CREATE TABLE limit_versions (
  id INTEGER PRIMARY KEY,
  line_id INTEGER NOT NULL REFERENCES lines (id),
  product_id INTEGER NOT NULL REFERENCES products (id),
  centre REAL NOT NULL,
  sigma REAL NOT NULL CHECK (sigma > 0),
  method TEXT NOT NULL,
  baseline_from INTEGER,
  baseline_to INTEGER,
  baseline_checks INTEGER,
  approved_by TEXT NOT NULL,
  approved_at INTEGER NOT NULL,
  note TEXT
);
CREATE INDEX limit_versions_line_product ON limit_versions (line_id, product_id, id);

ALTER TABLE checks ADD COLUMN limits_version_id INTEGER REFERENCES limit_versions (id);

CREATE TABLE alerts (
  id INTEGER PRIMARY KEY,
  line_id INTEGER NOT NULL REFERENCES lines (id),
  run_id INTEGER REFERENCES runs (id),
  kind TEXT NOT NULL CHECK (kind IN ('mean-shift', 'spread-up', 'pack-below-t2', 'check-overdue')),
  direction TEXT CHECK (direction IN ('up', 'down')),
  severity TEXT NOT NULL CHECK (severity IN ('act', 'watch')),
  state TEXT NOT NULL CHECK (state IN ('open', 'acknowledged', 'resolved')),
  rules TEXT NOT NULL DEFAULT '[]',
  opened_at INTEGER NOT NULL,
  onset_at INTEGER,
  onset_check_id INTEGER REFERENCES checks (id),
  change_point_at INTEGER,
  change_point_check_id INTEGER REFERENCES checks (id),
  size_unit REAL,
  size_sigma REAL,
  latest_check_id INTEGER REFERENCES checks (id),
  updated_at INTEGER NOT NULL,
  acknowledged_by TEXT,
  acknowledged_at INTEGER,
  acknowledge_note TEXT,
  resolved_by TEXT,
  resolved_at INTEGER,
  cause TEXT,
  action TEXT
);
CREATE INDEX alerts_line_state ON alerts (line_id, state);
CREATE INDEX alerts_opened ON alerts (opened_at);

CREATE TABLE signals (
  id INTEGER PRIMARY KEY,
  alert_id INTEGER NOT NULL REFERENCES alerts (id),
  check_id INTEGER REFERENCES checks (id),
  rule TEXT NOT NULL,
  severity TEXT NOT NULL,
  direction TEXT,
  at INTEGER NOT NULL,
  size_unit REAL,
  size_sigma REAL,
  onset_check_id INTEGER
);
CREATE INDEX signals_alert ON signals (alert_id);
CREATE INDEX signals_check ON signals (check_id);

-- The small-shift detectors' running values and where the current pattern segment starts.
CREATE TABLE line_monitor_state (
  line_id INTEGER PRIMARY KEY REFERENCES lines (id),
  run_id INTEGER NOT NULL REFERENCES runs (id),
  limits_key TEXT NOT NULL,
  segment_start_check_id INTEGER,
  detectors TEXT NOT NULL,
  updated_at INTEGER NOT NULL
);
