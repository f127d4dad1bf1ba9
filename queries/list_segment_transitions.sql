-- Returns, per value of the segment $by ('app_version' or 'platform') of the sessions started in
-- [$start, $end) (NULL: open), each transition's occurrences, and the value's session count and
-- distinct users. Reads sessions. Parameters: $by, $start, $end, $include_automated (BOOLEAN).
WITH counted AS (
    SELECT session_key, user_key,
           CASE WHEN $by = 'platform' THEN platform ELSE app_version END AS value,
           list_concat([0], path, [1]) AS p
    FROM sessions
    WHERE ($include_automated OR NOT is_automated)
      AND ($start IS NULL OR started_at >= $start)
      AND ($end IS NULL OR started_at < $end)
),
totals AS (
    SELECT value, count(*)::BIGINT AS value_sessions, count(DISTINCT user_key)::BIGINT AS value_users
    FROM counted GROUP BY value
),
steps AS (
    SELECT value, p[i] AS a, p[i + 1] AS b
    FROM (SELECT value, p, unnest(range(1, len(p))) AS i FROM counted)
)
SELECT coalesce(s.value, '(none)') AS value, s.a, s.b, count(*)::BIGINT AS occurrences,
       any_value(t.value_sessions) AS value_sessions, any_value(t.value_users) AS value_users
FROM steps AS s
JOIN totals AS t ON t.value IS NOT DISTINCT FROM s.value
GROUP BY s.value, s.a, s.b
ORDER BY value, s.a, s.b;
