-- Creates the suite_tests table from the registered Arrow table suite_tests_frame: one row per test
-- (test_id, source file, reader kind, outcome passed/failed/skipped/unknown, left_out = why the test
-- does not count as exercising anything or NULL when it counts, tags, step count, unmapped step
-- count, path of event ids with -1 for a step that matches no field event). Reads
-- suite_tests_frame. Parameters: none.
CREATE OR REPLACE TABLE suite_tests AS
SELECT test_id, source, kind, outcome, left_out, tags, step_count, unmapped_count, path
FROM suite_tests_frame
ORDER BY test_id;
