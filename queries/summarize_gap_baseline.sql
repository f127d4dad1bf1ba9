-- Returns one row of baselines for gap evidence over the sessions that count for the profile:
-- sessions, sessions with an error, and sessions that started at or after $midpoint (the first day
-- of the recent half). Reads sessions. Parameters: $midpoint (TIMESTAMPTZ), $include_automated
-- (BOOLEAN).
SELECT
    count(*)::BIGINT AS sessions,
    count(*) FILTER (WHERE error_count > 0)::BIGINT AS error_sessions,
    count(*) FILTER (WHERE started_at >= $midpoint)::BIGINT AS recent_sessions
FROM sessions
WHERE $include_automated OR NOT is_automated;
