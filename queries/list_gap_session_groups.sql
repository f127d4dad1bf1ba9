-- Returns the sessions that count for the profile grouped by distinct path, error positions,
-- whether any event failed and whether they started in the recent half (at or after $midpoint;
-- false when it is NULL), with how many sessions each group holds, ordered by path. Gap evidence
-- adds these groups up per candidate instead of joining every session to every candidate.
-- Reads sessions.
-- Parameters: $midpoint (TIMESTAMPTZ, NULL when there are no sessions), $include_automated (BOOLEAN).
SELECT
    path_id,
    error_positions,
    error_count > 0 AS has_error,
    coalesce(started_at >= $midpoint, false) AS is_recent,
    count(*)::BIGINT AS n
FROM sessions
WHERE $include_automated OR NOT is_automated
GROUP BY ALL
ORDER BY ALL;
