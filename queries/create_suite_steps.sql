-- Creates the suite_steps table from the registered Arrow table suite_steps_frame: one row per test
-- step (test_id, step_no from 1, the step name as the suite spells it, the field event it resolved
-- to or NULL, its event id or NULL, and how it resolved: exact, normalized, alias or unmapped).
-- Reads suite_steps_frame. Parameters: none.
CREATE OR REPLACE TABLE suite_steps AS
SELECT test_id, step_no, step, event, event_id, resolved_by
FROM suite_steps_frame
ORDER BY test_id, step_no;
