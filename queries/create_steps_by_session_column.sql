-- Creates the steps table from the input's own session column: sessions are the distinct
-- (user, session id) pairs, numbered within the user in order of their first event; events are
-- ordered by timestamp, event name, outcome. With $collapse_repeats an event equal to the one
-- before it in the same session is dropped. Reads usable_events, user_keys, features.
-- Parameters: $collapse_repeats (BOOLEAN).
CREATE OR REPLACE TABLE steps AS
WITH encoded AS (
    SELECT u.user_key, e.session_id, f.event_id, e.ts, e.outcome, e.is_error, e.app_version, e.platform
    FROM usable_events AS e
    JOIN user_keys AS u USING (user_id)
    JOIN features AS f USING (event)
),
session_starts AS (
    SELECT
        user_key,
        session_id,
        row_number() OVER (PARTITION BY user_key ORDER BY min(ts), session_id)::INTEGER AS session_no
    FROM encoded
    GROUP BY user_key, session_id
),
ordered AS (
    SELECT
        e.*,
        s.session_no,
        row_number() OVER w AS seq,
        lag(e.event_id) OVER w AS prev_event_id
    FROM encoded AS e
    JOIN session_starts AS s USING (user_key, session_id)
    WINDOW w AS (PARTITION BY e.user_key, s.session_no ORDER BY e.ts, e.event_id, e.outcome NULLS FIRST)
)
SELECT user_key, session_no, seq, event_id, ts, outcome, is_error, app_version, platform
FROM ordered
WHERE NOT ($collapse_repeats AND prev_event_id IS NOT NULL AND event_id = prev_event_id);
