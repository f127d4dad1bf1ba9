-- Returns, per candidate gap, the evidence from the sessions that contain it: sessions, distinct
-- users, sessions with any error, sessions in the recent half (started at or after $midpoint),
-- distinct users in the earlier half; and errors pinned to the matched occurrence: sessions where an
-- event of the occurrence failed, sessions where its step q (1..7) failed, sessions with a step
-- after it, sessions where that next step failed, the event that most often failed there, and the
-- mean failure rate of the events that came next (what their failures would be anywhere).
-- Reads the registered Arrow tables gap_paths (candidate, path_id, step_positions: the session-path
-- position of each step or NULL for START/END, event_positions: the non-NULL ones, after_position:
-- the position right after or NULL) and event_rates (event_id, rate), and sessions. Parameters: $midpoint (TIMESTAMPTZ),
-- $include_automated (BOOLEAN).
SELECT
    g.candidate,
    count(*)::BIGINT AS sessions,
    count(DISTINCT s.user_key)::BIGINT AS users,
    count(*) FILTER (WHERE s.error_count > 0)::BIGINT AS error_sessions,
    count(*) FILTER (WHERE s.started_at >= $midpoint)::BIGINT AS recent_sessions,
    count(DISTINCT s.user_key) FILTER (WHERE s.started_at < $midpoint)::BIGINT AS earlier_users,
    count(*) FILTER (WHERE list_has_any(s.error_positions, g.event_positions))::BIGINT AS own_error_sessions,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[1]))::BIGINT AS step_errors_1,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[2]))::BIGINT AS step_errors_2,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[3]))::BIGINT AS step_errors_3,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[4]))::BIGINT AS step_errors_4,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[5]))::BIGINT AS step_errors_5,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[6]))::BIGINT AS step_errors_6,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.step_positions[7]))::BIGINT AS step_errors_7,
    count(*) FILTER (WHERE g.after_position IS NOT NULL)::BIGINT AS next_sessions,
    count(*) FILTER (WHERE list_contains(s.error_positions, g.after_position))::BIGINT AS next_error_sessions,
    mode(s.path[g.after_position]) FILTER (WHERE list_contains(s.error_positions, g.after_position))
        AS next_failing_event_id,
    avg(r.rate) FILTER (WHERE g.after_position IS NOT NULL) AS next_expected_rate
FROM gap_paths AS g
JOIN sessions AS s ON s.path_id = g.path_id
LEFT JOIN event_rates AS r ON r.event_id = s.path[g.after_position]
WHERE $include_automated OR NOT s.is_automated
GROUP BY g.candidate
ORDER BY g.candidate;
