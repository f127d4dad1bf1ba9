-- Returns one row of baselines for gap evidence over the sessions that count for the profile:
-- sessions, sessions with an error, first and last session start, the window's midpoint and
-- sessions in its recent half. Reads sessions. Parameters: $include_automated (BOOLEAN).
WITH counted AS (
    SELECT * FROM sessions WHERE $include_automated OR NOT is_automated
),
window_bounds AS (
    SELECT min(started_at) AS first_start, max(started_at) AS last_start FROM counted
)
SELECT
    count(*)::BIGINT AS sessions,
    count(*) FILTER (WHERE error_count > 0)::BIGINT AS error_sessions,
    any_value(w.first_start) AS first_start,
    any_value(w.last_start) AS last_start,
    any_value(w.first_start + (w.last_start - w.first_start) / 2) AS midpoint,
    count(*) FILTER (WHERE started_at >= w.first_start + (w.last_start - w.first_start) / 2)::BIGINT
        AS recent_sessions
FROM counted, window_bounds AS w;
