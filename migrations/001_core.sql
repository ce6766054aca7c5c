-- Lines, products, runs, checks with their packs, and the append-only audit trail.
-- Times are integer milliseconds since the Unix epoch, UTC.

CREATE TABLE lines (
  id INTEGER PRIMARY KEY,
  code TEXT NOT NULL UNIQUE,
  name TEXT NOT NULL,
  packs_per_hour REAL,
  created_at INTEGER NOT NULL,
  updated_at INTEGER NOT NULL
);

CREATE TABLE products (
  id INTEGER PRIMARY KEY,
  code TEXT NOT NULL UNIQUE,
  name TEXT NOT NULL,
  nominal REAL NOT NULL CHECK (nominal > 0),
  unit TEXT NOT NULL CHECK (unit IN ('g', 'kg')),
  target REAL NOT NULL CHECK (target > 0),
  tare REAL NOT NULL DEFAULT 0 CHECK (tare >= 0),
  subgroup_size INTEGER NOT NULL CHECK (subgroup_size BETWEEN 1 AND 50),
  sampling_minutes INTEGER NOT NULL CHECK (sampling_minutes > 0),
  window_size INTEGER NOT NULL DEFAULT 10 CHECK (window_size BETWEEN 1 AND 500),
  sigma REAL CHECK (sigma IS NULL OR sigma > 0),
  lsl REAL,
  usl REAL,
  entry_basis TEXT NOT NULL DEFAULT 'net' CHECK (entry_basis IN ('net', 'gross')),
  cost_per_kg REAL,
  rules TEXT NOT NULL DEFAULT '{}',
  created_at INTEGER NOT NULL,
  updated_at INTEGER NOT NULL
);

-- A run is one product on one line from changeover to changeover.
CREATE TABLE runs (
  id INTEGER PRIMARY KEY,
  line_id INTEGER NOT NULL REFERENCES lines (id),
  product_id INTEGER NOT NULL REFERENCES products (id),
  started_at INTEGER NOT NULL,
  ended_at INTEGER
);
CREATE UNIQUE INDEX runs_one_open_per_line ON runs (line_id) WHERE ended_at IS NULL;
CREATE INDEX runs_line_started ON runs (line_id, started_at);

-- One check is one subgroup of weighed packs. A correction is a new row (revision + 1) that names
-- the row it revises; the revised row is marked superseded and kept.
CREATE TABLE checks (
  id INTEGER PRIMARY KEY,
  line_id INTEGER NOT NULL REFERENCES lines (id),
  run_id INTEGER NOT NULL REFERENCES runs (id),
  product_id INTEGER NOT NULL REFERENCES products (id),
  client_id TEXT NOT NULL UNIQUE,
  taken_at INTEGER NOT NULL,
  recorded_at INTEGER NOT NULL,
  basis TEXT NOT NULL CHECK (basis IN ('net', 'gross')),
  entered_by TEXT,
  note TEXT,
  revision INTEGER NOT NULL DEFAULT 1,
  revises_check_id INTEGER REFERENCES checks (id),
  superseded_by INTEGER REFERENCES checks (id),
  revision_reason TEXT,
  n INTEGER NOT NULL,
  mean REAL NOT NULL,
  sd REAL,
  range REAL NOT NULL,
  target REAL NOT NULL,
  below_t1 INTEGER NOT NULL,
  below_t2 INTEGER NOT NULL,
  window_checks INTEGER NOT NULL,
  window_n INTEGER NOT NULL,
  window_mean REAL NOT NULL,
  window_sd REAL
);
CREATE INDEX checks_line_taken ON checks (line_id, taken_at);
CREATE INDEX checks_run ON checks (run_id, id);

CREATE TABLE packs (
  check_id INTEGER NOT NULL REFERENCES checks (id),
  position INTEGER NOT NULL,
  net REAL NOT NULL,
  gross REAL,
  PRIMARY KEY (check_id, position)
) WITHOUT ROWID;

-- Append-only: there is no UPDATE or DELETE path in the code, and these triggers refuse both.
CREATE TABLE audit (
  id INTEGER PRIMARY KEY,
  at INTEGER NOT NULL,
  actor TEXT NOT NULL,
  action TEXT NOT NULL,
  entity TEXT NOT NULL,
  entity_id TEXT,
  before TEXT,
  after TEXT
);
CREATE INDEX audit_at ON audit (at);
CREATE TRIGGER audit_refuses_update BEFORE UPDATE ON audit
BEGIN
  SELECT RAISE(ABORT, 'the audit trail is append-only');
END;
CREATE TRIGGER audit_refuses_delete BEFORE DELETE ON audit
BEGIN
  SELECT RAISE(ABORT, 'the audit trail is append-only');
END;
