-- Escalation looks for open alerts on every alert event: an index by state keeps that off a scan of the
-- whole alert history.
CREATE INDEX alerts_state_opened ON alerts (state, opened_at);
