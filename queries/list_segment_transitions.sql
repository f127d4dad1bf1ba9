-- Returns, per value of the segment $by ('app_version' or 'platform') of the sessions started in
-- [$start, $end) (NULL: open), each transition's occurrences and the sessions that take it, and the
-- value's session count and distinct users. Counting runs once per distinct (value, path), weighted by its sessions.
-- Reads sessions, full_paths. Parameters: $by, $start, $end, $include_automated (BOOLEAN).
WITH counted AS (
    SELECT CASE WHEN $by = 'platform' THEN platform ELSE app_version END AS value, path_id, user_key
    FROM sessions
    WHERE ($include_automated OR NOT is_automated)
      AND ($start IS NULL OR started_at >= $start)
      AND ($end IS NULL OR started_at < $end)
),
totals AS (
    SELECT value, count(*)::BIGINT AS value_sessions, count(DISTINCT user_key)::BIGINT AS value_users
    FROM counted
    GROUP BY value
),
weighted AS (SELECT value, path_id, count(*)::BIGINT AS sessions FROM counted GROUP BY value, path_id),
framed AS (
    SELECT w.value, w.path_id, w.sessions, list_concat([0], f.path, [1]) AS p
    FROM weighted AS w
    JOIN full_paths AS f USING (path_id)
),
steps AS (
    SELECT
        value, sessions, p[i] AS a, p[i + 1] AS b,
        row_number() OVER (PARTITION BY value, path_id, p[i], p[i + 1] ORDER BY i) = 1 AS is_first
    FROM (SELECT value, path_id, sessions, p, unnest(range(1, len(p))) AS i FROM framed)
)
SELECT coalesce(s.value, '(none)') AS value, s.a, s.b, sum(s.sessions)::BIGINT AS occurrences,
       sum(s.sessions) FILTER (WHERE s.is_first)::BIGINT AS sessions,
       any_value(t.value_sessions) AS value_sessions, any_value(t.value_users) AS value_users
FROM steps AS s
JOIN totals AS t ON t.value IS NOT DISTINCT FROM s.value
GROUP BY s.value, s.a, s.b
ORDER BY value, s.a, s.b;
