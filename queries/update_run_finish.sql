-- Moves the finish of the latest recorded run of a stage to now, for read-only work a stage does
-- after its writes were committed (profile's summary), so that runs keeps the stage's whole time.
-- Parameters: $stage, $finished_at, $seconds.
UPDATE runs
SET finished_at = $finished_at, seconds = $seconds
WHERE run_id = (SELECT max(run_id) FROM runs WHERE stage = $stage);
