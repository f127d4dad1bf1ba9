-- Creates the temporary table gap_session_groups: the sessions on the distinct paths of the
-- registered Arrow table gap_paths (candidate, path_id, ...), grouped by path, error positions,
-- whether any event failed and whether they started in the recent half (at or after $midpoint),
-- with how many sessions each group holds. Gap evidence is then summed over these few groups
-- instead of joining every session to every candidate. Reads sessions.
-- Parameters: $midpoint (TIMESTAMPTZ, NULL when there are no sessions), $include_automated (BOOLEAN).
CREATE OR REPLACE TEMP TABLE gap_session_groups AS
SELECT
    path_id,
    error_positions,
    error_count > 0 AS has_error,
    started_at >= $midpoint AS is_recent,
    count(*)::BIGINT AS n
FROM sessions
WHERE ($include_automated OR NOT is_automated) AND path_id IN (SELECT path_id FROM gap_paths)
GROUP BY ALL;
