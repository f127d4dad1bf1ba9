-- Lists the paths of the stored suite's tests that count as exercising (passed or not run, not
-- left out by tags): (test_id, path of event ids, -1 for an unmapped step) ordered by test id.
-- Reads suite_tests. Parameters: none.
SELECT test_id, path
FROM suite_tests
WHERE left_out IS NULL
ORDER BY test_id;
