-- The plant's calendar: shifts (plant-local start and end, the weekdays they run) and planned
-- non-working days. Outside them Heft stops the lines by itself, and starts them at the next shift,
-- except lines marked continuous.
CREATE TABLE plant_shifts (
  id INTEGER PRIMARY KEY,
  name TEXT NOT NULL,
  starts TEXT NOT NULL CHECK (starts GLOB '[0-2][0-9]:[0-5][0-9]'),
  ends TEXT NOT NULL CHECK (ends GLOB '[0-2][0-9]:[0-5][0-9]'),
  days TEXT NOT NULL
);
CREATE TABLE plant_closed_days (
  day TEXT PRIMARY KEY CHECK (day GLOB '[0-9][0-9][0-9][0-9]-[0-1][0-9]-[0-3][0-9]'),
  note TEXT
) WITHOUT ROWID;
ALTER TABLE lines ADD COLUMN continuous INTEGER NOT NULL DEFAULT 0;
