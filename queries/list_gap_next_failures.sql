-- Returns, per candidate gap, each event that failed right after the gap's occurrence with the
-- sessions where it did, most sessions first (ties by event id): the first row per candidate is
-- the event that most often failed there. Reads the registered Arrow table gap_paths
-- (after_event: the event id at after_position), gap_session_groups. Parameters: none.
SELECT g.candidate, g.after_event AS event_id, sum(s.n)::BIGINT AS sessions
FROM gap_paths AS g
JOIN gap_session_groups AS s ON s.path_id = g.path_id
WHERE list_contains(s.error_positions, g.after_position)
GROUP BY ALL
ORDER BY g.candidate, sessions DESC, event_id;
