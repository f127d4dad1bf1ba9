-- Returns the distinct complete paths of the sessions started in [$start, $end) (NULL: open) with
-- their session counts and distinct users.
-- Reads sessions. Parameters: $start, $end (TIMESTAMPTZ or NULL), $include_automated (BOOLEAN).
SELECT path, count(*)::BIGINT AS sessions, count(DISTINCT user_key)::BIGINT AS users
FROM sessions
WHERE ($include_automated OR NOT is_automated)
  AND ($start IS NULL OR started_at >= $start)
  AND ($end IS NULL OR started_at < $end)
GROUP BY path
ORDER BY path;
