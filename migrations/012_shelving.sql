-- A supervisor may shelve an open alert for up to 8 hours with a reason: it stays listed, escalates no
-- further, and comes back when the time runs out or a new act-level signal joins it.
ALTER TABLE alerts ADD COLUMN shelved_until INTEGER;
ALTER TABLE alerts ADD COLUMN shelved_by TEXT;
ALTER TABLE alerts ADD COLUMN shelve_reason TEXT;
ALTER TABLE alerts ADD COLUMN shelve_count INTEGER NOT NULL DEFAULT 0;

-- An alert back from the shelf escalates again, rule by rule: each notification belongs to the round
-- of escalation it was sent in (0 before any shelving, then one more for every shelving).
CREATE TABLE notifications_by_round (
  id INTEGER PRIMARY KEY,
  alert_id INTEGER NOT NULL REFERENCES alerts (id),
  rule_id INTEGER NOT NULL,
  rule_name TEXT NOT NULL,
  channel TEXT NOT NULL,
  target TEXT NOT NULL,
  event_type TEXT NOT NULL CHECK (event_type IN ('alert.opened', 'alert.escalated', 'alert.acknowledged', 'alert.resolved')),
  round INTEGER NOT NULL DEFAULT 0,
  message_id TEXT NOT NULL UNIQUE,
  body TEXT NOT NULL,
  created_at INTEGER NOT NULL,
  status TEXT NOT NULL DEFAULT 'pending' CHECK (status IN ('pending', 'sent', 'failed', 'gave-up')),
  attempts INTEGER NOT NULL DEFAULT 0,
  next_attempt_at INTEGER NOT NULL,
  last_error TEXT,
  sent_at INTEGER,
  UNIQUE (alert_id, rule_id, event_type, round)
);
INSERT INTO notifications_by_round (id, alert_id, rule_id, rule_name, channel, target, event_type, round, message_id, body, created_at,
  status, attempts, next_attempt_at, last_error, sent_at)
SELECT id, alert_id, rule_id, rule_name, channel, target, event_type, 0, message_id, body, created_at, status, attempts,
  next_attempt_at, last_error, sent_at FROM notifications;
DROP TABLE notifications;
ALTER TABLE notifications_by_round RENAME TO notifications;
CREATE INDEX notifications_due ON notifications (status, next_attempt_at);
