-- Lists the stored suite's tests: (test_id, kind, source, outcome, left_out, step_count,
-- unmapped_count) ordered by test id. Reads suite_tests. Parameters: none.
SELECT test_id, kind, source, outcome, left_out, step_count, unmapped_count
FROM suite_tests
ORDER BY test_id;
