-- A line is running or stopped. Each stop is a row from the moment it stopped until it started again,
-- with the reason; while a line is stopped no check falls due, and the sampling clock restarts on start.
CREATE TABLE line_stops (
  id INTEGER PRIMARY KEY,
  line_id INTEGER NOT NULL REFERENCES lines (id),
  reason TEXT NOT NULL CHECK (reason IN ('break', 'cleaning', 'changeover', 'no-orders', 'breakdown', 'other')),
  note TEXT,
  stopped_at INTEGER NOT NULL,
  stopped_by TEXT NOT NULL,
  started_at INTEGER,
  started_by TEXT
);
CREATE UNIQUE INDEX line_stops_one_open_per_line ON line_stops (line_id) WHERE started_at IS NULL;
CREATE INDEX line_stops_line_time ON line_stops (line_id, stopped_at);
