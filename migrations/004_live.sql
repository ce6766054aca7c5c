-- Every live message, numbered: seq keeps increasing across restarts, and a client that
-- reconnects is replayed what it missed from here. Written in the same transaction as the change.
CREATE TABLE live_messages (
  seq INTEGER PRIMARY KEY AUTOINCREMENT,
  at INTEGER NOT NULL,
  type TEXT NOT NULL,
  line_id INTEGER,
  payload TEXT NOT NULL
);
CREATE INDEX live_messages_at ON live_messages (at);
