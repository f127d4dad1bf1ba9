-- Returns each test step name that resolved to no field event, with how many steps and tests use
-- it, most used first. Reads suite_steps. Parameters: none.
SELECT step, count(*) AS step_count, count(DISTINCT test_id) AS test_count
FROM suite_steps
WHERE event IS NULL
GROUP BY step
ORDER BY step_count DESC, step;
