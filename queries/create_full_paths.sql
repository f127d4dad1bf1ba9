-- Creates the full_paths table: each distinct complete session path (without START/END) with
-- the sessions that took it, distinct users and sessions with at least one error.
-- Reads sessions. Parameters: $include_automated (BOOLEAN).
CREATE OR REPLACE TABLE full_paths AS
SELECT
    path,
    count(*)::BIGINT AS sessions,
    count(DISTINCT user_key)::BIGINT AS users,
    count(*) FILTER (WHERE error_count > 0)::BIGINT AS error_sessions
FROM sessions
WHERE $include_automated OR NOT is_automated
GROUP BY path;
