-- Creates the sessions table: one row per session with its ordered path of event ids (cut at
-- $max_events when that is positive), counts, errors, time span and the segment values at its
-- first event. is_automated starts false and is set by mark_automated_sessions.sql.
-- Reads steps. Parameters: $max_events (INTEGER, 0 for no cap).
CREATE OR REPLACE TABLE sessions AS
WITH grouped AS (
    SELECT
        user_key,
        session_no,
        min(ts) AS started_at,
        max(ts) AS ended_at,
        count(*)::INTEGER AS event_count,
        count(*) FILTER (WHERE is_error)::INTEGER AS error_count,
        list(event_id ORDER BY seq) AS full_path,
        arg_min(app_version, seq) AS app_version,
        arg_min(platform, seq) AS platform
    FROM steps
    GROUP BY user_key, session_no
)
SELECT
    row_number() OVER (ORDER BY user_key, session_no) AS session_key,
    user_key,
    session_no,
    started_at,
    ended_at,
    event_count,
    error_count,
    CASE WHEN $max_events > 0 THEN full_path[1:$max_events] ELSE full_path END AS path,
    ($max_events > 0 AND event_count > $max_events) AS is_truncated,
    app_version,
    platform,
    false AS is_automated
FROM grouped;
