-- Returns, per candidate gap, the session evidence of the sessions that contain it: sessions,
-- sessions with any error, sessions in the recent half; errors pinned to the matched occurrence:
-- sessions where an event of the occurrence failed, where its step q (1..7) failed, sessions with a
-- step after it, where that next step failed, and the mean failure rate (per session) of the events
-- that came next. Sums the session groups of gap_session_groups (create_gap_session_groups.sql).
-- Reads the registered Arrow tables gap_paths (candidate, path_id, step_positions, event_positions,
-- after_position, after_event) and event_rates (event_id, rate), gap_session_groups.
-- Parameters: none.
SELECT
    g.candidate,
    sum(s.n)::BIGINT AS sessions,
    coalesce(sum(s.n) FILTER (WHERE s.has_error), 0)::BIGINT AS error_sessions,
    coalesce(sum(s.n) FILTER (WHERE s.is_recent), 0)::BIGINT AS recent_sessions,
    coalesce(sum(s.n) FILTER (WHERE list_has_any(s.error_positions, g.event_positions)), 0)::BIGINT
        AS own_error_sessions,
    coalesce(sum(s.n) FILTER (WHERE list_contains(s.error_positions, g.step_positions[1])), 0)::BIGINT AS step_errors_1,
    coalesce(sum(s.n) FILTER (WHERE list_contains(s.error_positions, g.step_positions[2])), 0)::BIGINT AS step_errors_2,
    coalesce(sum(s.n) FILTER (WHERE list_contains(s.error_positions, g.step_positions[3])), 0)::BIGINT AS step_errors_3,
    coalesce(sum(s.n) FILTER (WHERE list_contains(s.error_positions, g.step_positions[4])), 0)::BIGINT AS step_errors_4,
    coalesce(sum(s.n) FILTER (WHERE list_contains(s.error_positions, g.step_positions[5])), 0)::BIGINT AS step_errors_5,
    coalesce(sum(s.n) FILTER (WHERE list_contains(s.error_positions, g.step_positions[6])), 0)::BIGINT AS step_errors_6,
    coalesce(sum(s.n) FILTER (WHERE list_contains(s.error_positions, g.step_positions[7])), 0)::BIGINT AS step_errors_7,
    coalesce(sum(s.n) FILTER (WHERE g.after_position IS NOT NULL), 0)::BIGINT AS next_sessions,
    coalesce(sum(s.n) FILTER (WHERE list_contains(s.error_positions, g.after_position)), 0)::BIGINT
        AS next_error_sessions,
    -- summed as DECIMAL: exact, so the mean does not move with the order rows reach the sum
    (sum(s.n * r.rate::DECIMAL(18, 15)) FILTER (WHERE g.after_position IS NOT NULL AND r.rate IS NOT NULL)
        / nullif(sum(s.n) FILTER (WHERE g.after_position IS NOT NULL AND r.rate IS NOT NULL), 0))::DOUBLE
        AS next_expected_rate
FROM gap_paths AS g
JOIN gap_session_groups AS s ON s.path_id = g.path_id
LEFT JOIN event_rates AS r ON r.event_id = g.after_event
GROUP BY g.candidate
ORDER BY g.candidate;
