-- Rebuilds a suite_tests table written before outcomes were stored (schema 1) with the columns
-- outcome ('unknown'), left_out (NULL: every test counts) and tags (empty). Reads suite_tests.
-- Parameters: none.
CREATE OR REPLACE TABLE suite_tests AS
SELECT
    test_id,
    source,
    kind,
    'unknown' AS outcome,
    CAST(NULL AS VARCHAR) AS left_out,
    CAST([] AS VARCHAR[]) AS tags,
    step_count,
    unmapped_count,
    path
FROM suite_tests
ORDER BY test_id;
