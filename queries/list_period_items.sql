-- Returns the features (k = 1) and transitions (k = 2, START = 0 and END = 1 included) of the
-- sessions started in [$start, $end) (NULL: open), with occurrences, sessions and distinct users.
-- Reads sessions. Parameters: $start, $end (TIMESTAMPTZ or NULL), $include_automated (BOOLEAN).
WITH counted AS (
    SELECT session_key, user_key, list_concat([0], path, [1]) AS p
    FROM sessions
    WHERE ($include_automated OR NOT is_automated)
      AND ($start IS NULL OR started_at >= $start)
      AND ($end IS NULL OR started_at < $end)
),
steps AS (
    SELECT session_key, user_key, p[i] AS a, p[i + 1] AS b, i, len(p) AS n
    FROM (SELECT session_key, user_key, p, unnest(range(1, len(p))) AS i FROM counted)
)
SELECT 1 AS k, b AS a, NULL::INTEGER AS b, count(*)::BIGINT AS occurrences,
       count(DISTINCT session_key)::BIGINT AS sessions, count(DISTINCT user_key)::BIGINT AS users
FROM steps
WHERE i + 1 < n
GROUP BY b
UNION ALL
SELECT 2 AS k, a, b, count(*)::BIGINT, count(DISTINCT session_key)::BIGINT, count(DISTINCT user_key)::BIGINT
FROM steps
GROUP BY a, b
ORDER BY k, a, b;
