-- The detectors' state before the line's latest check, so that check can be corrected and
-- judged again as if the wrong values had never been keyed.
ALTER TABLE line_monitor_state ADD COLUMN previous TEXT;
