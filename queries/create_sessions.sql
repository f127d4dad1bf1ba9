-- Creates the sessions table: one row per session (session_key numbered by user, then start),
-- with its path and path_id, the positions in the path whose event failed, counts, errors, time span, segments and whether its user was flagged
-- as automated. Reads raw_sessions, full_paths, automated_users. Parameters: none.
CREATE OR REPLACE TABLE sessions AS
SELECT
    row_number() OVER (ORDER BY r.user_key, r.session_no) AS session_key,
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
JOIN full_paths AS p USING (path);
