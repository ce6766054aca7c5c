-- The latest check of a run by time, read at every start for every line, without a scan of the run.
CREATE INDEX checks_run_taken ON checks (run_id, taken_at);
