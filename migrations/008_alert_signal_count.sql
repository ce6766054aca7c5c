-- How many signals an alert holds, kept on the alert row so that a check joining a long-open alert
-- never counts or reads the alert's signal history.
ALTER TABLE alerts ADD COLUMN signal_count INTEGER NOT NULL DEFAULT 0;
UPDATE alerts SET signal_count = (SELECT COUNT(*) FROM signals WHERE signals.alert_id = alerts.id);
