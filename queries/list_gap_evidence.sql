-- Returns, per candidate gap, the evidence from the sessions that contain it: sessions, distinct
-- users, sessions with an error, sessions in the recent half (started at or after $midpoint) and
-- distinct users in the earlier half. Reads the registered Arrow table gap_paths (candidate,
-- path_id) and sessions. Parameters: $midpoint (TIMESTAMPTZ), $include_automated (BOOLEAN).
SELECT
    g.candidate,
    count(*)::BIGINT AS sessions,
    count(DISTINCT s.user_key)::BIGINT AS users,
    count(*) FILTER (WHERE s.error_count > 0)::BIGINT AS error_sessions,
    count(*) FILTER (WHERE s.started_at >= $midpoint)::BIGINT AS recent_sessions,
    count(DISTINCT s.user_key) FILTER (WHERE s.started_at < $midpoint)::BIGINT AS earlier_users
FROM gap_paths AS g
JOIN sessions AS s ON s.path_id = g.path_id
WHERE $include_automated OR NOT s.is_automated
GROUP BY g.candidate
ORDER BY g.candidate;
