-- Who is told of an alert that stays open, and when: rules by severity, line and delay, each to one
-- e-mail address or one webhook.
CREATE TABLE escalation_rules (
  id INTEGER PRIMARY KEY,
  name TEXT NOT NULL,
  channel TEXT NOT NULL CHECK (channel IN ('email', 'webhook')),
  target TEXT NOT NULL,
  severity TEXT NOT NULL CHECK (severity IN ('watch', 'act')),
  after_minutes INTEGER NOT NULL CHECK (after_minutes >= 0),
  line_ids TEXT,
  secret TEXT,
  enabled INTEGER NOT NULL DEFAULT 1,
  disabled_reason TEXT,
  created_at INTEGER NOT NULL,
  updated_at INTEGER NOT NULL
);

-- The outbox: a notification is stored in the transaction that decides it and sent after the commit,
-- so a restart loses none; its message id is fixed at creation and kept for every retry. The rule's
-- name, channel and address are copied, so the alert's history outlives a deleted rule.
CREATE TABLE notifications (
  id INTEGER PRIMARY KEY,
  alert_id INTEGER NOT NULL REFERENCES alerts (id),
  rule_id INTEGER NOT NULL,
  rule_name TEXT NOT NULL,
  channel TEXT NOT NULL,
  target TEXT NOT NULL,
  event_type TEXT NOT NULL CHECK (event_type IN ('alert.opened', 'alert.escalated', 'alert.acknowledged', 'alert.resolved')),
  message_id TEXT NOT NULL UNIQUE,
  body TEXT NOT NULL,
  created_at INTEGER NOT NULL,
  status TEXT NOT NULL DEFAULT 'pending' CHECK (status IN ('pending', 'sent', 'failed', 'gave-up')),
  attempts INTEGER NOT NULL DEFAULT 0,
  next_attempt_at INTEGER NOT NULL,
  last_error TEXT,
  sent_at INTEGER,
  UNIQUE (alert_id, rule_id, event_type)
);
CREATE INDEX notifications_due ON notifications (status, next_attempt_at);
