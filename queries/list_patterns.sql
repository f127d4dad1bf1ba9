-- Returns mined patterns with at least $min_users distinct users, in listing order (most sessions
-- first), as lists of event names, with their share of $total_sessions.
-- Reads patterns. Parameters: $names (event names indexed by event id + 1), $min_users,
-- $total_sessions, $limit (NULL for all).
SELECT
    k,
    list_transform(path, lambda x: $names[x + 1]) AS path,
    sessions,
    users,
    sessions / greatest($total_sessions, 1)::DOUBLE AS share,
    is_closed
FROM patterns
WHERE users >= $min_users
ORDER BY pattern_no
LIMIT $limit;
