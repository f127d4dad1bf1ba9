-- Creates the sessions table: one row per session (session_key numbered by user, then start),
-- with its path and path_id, the positions in the path whose event failed, counts, errors, time span, segments and whether its user was flagged
-- as automated. A session's key is the number of sessions of the users before its user plus its
-- session_no (1, 2, ... within the user), which equals numbering all sessions in (user, session_no)
-- order without sorting the session rows themselves (their paths make a sort of them spill).
-- Reads raw_sessions, full_paths, automated_users. Parameters: none.
CREATE OR REPLACE TABLE sessions AS
WITH user_offsets AS (
    SELECT user_key, sum(sessions) OVER (ORDER BY user_key) - sessions AS sessions_before
    FROM (SELECT user_key, count(*) AS sessions FROM raw_sessions GROUP BY user_key)
)
SELECT
    (o.sessions_before + r.session_no)::BIGINT AS session_key,
    r.user_key,
    r.session_no,
    p.path_id,
    r.started_at,
    r.ended_at,
    r.event_count,
    r.error_count,
    r.path,
    r.error_positions,
    r.is_truncated,
    r.app_version,
    r.platform,
    r.user_key IN (SELECT user_key FROM automated_users) AS is_automated
FROM raw_sessions AS r
JOIN user_offsets AS o USING (user_key)
JOIN full_paths AS p USING (path);
