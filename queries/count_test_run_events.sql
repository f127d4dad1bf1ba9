-- Counts the events of a test run: all usable ones (with a time and an event name), those inside
-- some test's window, and those inside two or more windows (attributed to each; narrow the windows
-- by user or session to avoid it). Reads the views mapped_source and test_windows. Parameters: none.
WITH usable AS (
    SELECT row_number() OVER () AS event_no, e.*
    FROM mapped_source AS e
    WHERE e.ts IS NOT NULL AND e.event IS NOT NULL AND trim(e.event) <> ''
), hits AS (
    SELECT u.event_no, count(*) AS windows
    FROM usable AS u
    JOIN test_windows AS w
        ON u.ts >= w.started
        AND u.ts <= w.finished
        AND (w.user_id IS NULL OR trim(u.user_id) = w.user_id)
        AND (w.session_id IS NULL OR trim(u.session_id) = w.session_id)
    GROUP BY u.event_no
)
SELECT
    (SELECT count(*) FROM usable) AS event_count,
    count(*) AS attributed_count,
    count(*) FILTER (WHERE windows > 1) AS shared_count
FROM hits;
