-- The plant calendar's own stops get a reason of their own, "off-shift", so that the review can tell the
-- hours outside the shifts from a line a person stopped for some "other" reason. SQLite cannot change a
-- CHECK in place: the table is rebuilt, and the calendar's earlier stops move to the new reason.
CREATE TABLE line_stops_with_off_shift (
  id INTEGER PRIMARY KEY,
  line_id INTEGER NOT NULL REFERENCES lines (id),
  reason TEXT NOT NULL CHECK (reason IN ('break', 'cleaning', 'changeover', 'no-orders', 'breakdown', 'other', 'off-shift')),
  note TEXT,
  stopped_at INTEGER NOT NULL,
  stopped_by TEXT NOT NULL,
  started_at INTEGER,
  started_by TEXT
);
INSERT INTO line_stops_with_off_shift (id, line_id, reason, note, stopped_at, stopped_by, started_at, started_by)
SELECT id, line_id, CASE WHEN stopped_by = 'plant calendar' AND reason = 'other' THEN 'off-shift' ELSE reason END,
  note, stopped_at, stopped_by, started_at, started_by FROM line_stops;
DROP TABLE line_stops;
ALTER TABLE line_stops_with_off_shift RENAME TO line_stops;
CREATE UNIQUE INDEX line_stops_one_open_per_line ON line_stops (line_id) WHERE started_at IS NULL;
CREATE INDEX line_stops_line_time ON line_stops (line_id, stopped_at);
