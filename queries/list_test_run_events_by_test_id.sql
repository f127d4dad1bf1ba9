-- Lists, per test, the events of a test run that carry its id in their test_id column, in time
-- order: (test_id, steps, event_count). Reads the view mapped_source (the test-run telemetry with
-- its test_id column mapped). Parameters: none.
SELECT
    trim(test_id) AS test_id,
    list(trim(event) ORDER BY ts, trim(event)) AS steps,
    count(*) AS event_count
FROM mapped_source
WHERE ts IS NOT NULL AND event IS NOT NULL AND trim(event) <> '' AND test_id IS NOT NULL AND trim(test_id) <> ''
GROUP BY trim(test_id)
ORDER BY 1;
