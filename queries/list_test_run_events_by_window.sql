-- Lists, per test, the events of a test run that fell inside the test's time window (and came from
-- the user or session the test used, where the window names one), in time order: (test_id, steps,
-- event_count). Reads the views mapped_source (the test-run telemetry) and test_windows (test_id,
-- started, finished as TIMESTAMPTZ, user_id, session_id). Parameters: none.
SELECT
    w.test_id,
    list(trim(e.event) ORDER BY e.ts, trim(e.event)) AS steps,
    count(*) AS event_count
FROM mapped_source AS e
JOIN test_windows AS w
    ON e.ts >= w.started
    AND e.ts <= w.finished
    AND (w.user_id IS NULL OR trim(e.user_id) = w.user_id)
    AND (w.session_id IS NULL OR trim(e.session_id) = w.session_id)
WHERE e.ts IS NOT NULL AND e.event IS NOT NULL AND trim(e.event) <> ''
GROUP BY w.test_id
ORDER BY w.test_id;
