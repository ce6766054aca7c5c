-- Weights straight from the instrument. Each check says where its weights came from: typed at the
-- tablet (keyed), read by the tablet from a serial scale (scale), posted by a scale bridge (bridge),
-- or formed from an automatic checkweigher's stream of packs (checkweigher).
ALTER TABLE checks ADD COLUMN source TEXT NOT NULL DEFAULT 'keyed' CHECK (source IN ('keyed', 'scale', 'bridge', 'checkweigher'));

-- How a line's scale is connected and how its lines of text are read; a line without a row uses the defaults.
CREATE TABLE scale_profiles (
  line_id INTEGER PRIMARY KEY REFERENCES lines (id),
  connection TEXT NOT NULL CHECK (connection IN ('web-serial', 'bridge')),
  baud_rate INTEGER NOT NULL,
  data_bits INTEGER NOT NULL CHECK (data_bits IN (7, 8)),
  parity TEXT NOT NULL CHECK (parity IN ('none', 'even', 'odd')),
  stop_bits INTEGER NOT NULL CHECK (stop_bits IN (1, 2)),
  line_ending TEXT NOT NULL CHECK (line_ending IN ('cr', 'lf', 'crlf')),
  pattern TEXT,
  unstable_pattern TEXT,
  default_unit TEXT NOT NULL CHECK (default_unit IN ('g', 'kg')),
  send_on_last INTEGER NOT NULL CHECK (send_on_last IN (0, 1)),
  updated_at INTEGER NOT NULL,
  updated_by TEXT NOT NULL
);

-- A checkweigher's packs that do not yet make a full check: kept durably, in arrival order, until the
-- check they belong to is formed (by the next packs, or when the sampling interval has passed).
CREATE TABLE waiting_packs (
  id INTEGER PRIMARY KEY,
  line_id INTEGER NOT NULL REFERENCES lines (id),
  run_id INTEGER NOT NULL REFERENCES runs (id),
  weight REAL NOT NULL,
  weighed_at INTEGER NOT NULL,
  received_at INTEGER NOT NULL
);
CREATE INDEX waiting_packs_line ON waiting_packs (line_id, id);

-- Each batch of packs a checkweigher posted, by the client's id, so a retried post is taken once.
CREATE TABLE pack_batches (
  client_id TEXT PRIMARY KEY,
  line_id INTEGER NOT NULL REFERENCES lines (id),
  packs INTEGER NOT NULL,
  check_ids TEXT NOT NULL,
  received_at INTEGER NOT NULL
);
