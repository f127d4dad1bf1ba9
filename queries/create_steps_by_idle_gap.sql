-- Creates the steps table: every usable event with its user key, event id, the session number
-- within the user and its order (seq) within the user. A new session starts when the gap since the
-- user's previous event exceeds $idle_us microseconds (a gap exactly equal stays in the session).
-- Events with equal timestamps are ordered by event name, then outcome, so the result does not
-- depend on file order. With $collapse_repeats an event equal to the one before it in the same
-- session is dropped. Reads usable_events, user_keys, features.
-- Parameters: $idle_us (BIGINT), $collapse_repeats (BOOLEAN).
CREATE OR REPLACE TABLE steps AS
WITH encoded AS (
    SELECT u.user_key, f.event_id, e.ts, e.outcome, e.is_error, e.app_version, e.platform
    FROM usable_events AS e
    JOIN user_keys AS u USING (user_id)
    JOIN features AS f USING (event)
),
ordered AS (
    SELECT
        *,
        row_number() OVER w AS seq,
        lag(ts) OVER w AS prev_ts,
        lag(event_id) OVER w AS prev_event_id
    FROM encoded
    WINDOW w AS (PARTITION BY user_key ORDER BY ts, event_id, outcome NULLS FIRST)
),
marked AS (
    SELECT
        *,
        CASE
            WHEN prev_ts IS NULL THEN 1
            WHEN epoch_us(ts) - epoch_us(prev_ts) > $idle_us THEN 1
            ELSE 0
        END AS is_session_start
    FROM ordered
),
numbered AS (
    SELECT
        *,
        sum(is_session_start) OVER (
            PARTITION BY user_key ORDER BY seq ROWS BETWEEN UNBOUNDED PRECEDING AND CURRENT ROW
        )::INTEGER AS session_no
    FROM marked
)
SELECT user_key, session_no, seq, event_id, ts, outcome, is_error, app_version, platform
FROM numbered
WHERE NOT ($collapse_repeats AND is_session_start = 0 AND event_id = prev_event_id);
