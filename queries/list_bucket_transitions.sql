-- Returns, per calendar bucket ($unit: 'week' or 'month') of session start within [$start, $end)
-- (NULL: open), each transition's occurrences, the sessions that take it, and the bucket's session
-- count. Counting runs once
-- per distinct (bucket, path), weighted by its sessions. Reads sessions, full_paths.
-- Parameters: $unit, $start, $end, $include_automated (BOOLEAN).
WITH counted AS (
    SELECT date_trunc($unit, started_at) AS bucket, path_id, count(*)::BIGINT AS sessions
    FROM sessions
    WHERE ($include_automated OR NOT is_automated)
      AND ($start IS NULL OR started_at >= $start)
      AND ($end IS NULL OR started_at < $end)
    GROUP BY bucket, path_id
),
totals AS (SELECT bucket, sum(sessions)::BIGINT AS bucket_sessions FROM counted GROUP BY bucket),
framed AS (
    SELECT c.bucket, c.path_id, c.sessions, list_concat([0], f.path, [1]) AS p
    FROM counted AS c
    JOIN full_paths AS f USING (path_id)
),
steps AS (
    SELECT
        bucket, sessions, p[i] AS a, p[i + 1] AS b,
        row_number() OVER (PARTITION BY bucket, path_id, p[i], p[i + 1] ORDER BY i) = 1 AS is_first
    FROM (SELECT bucket, path_id, sessions, p, unnest(range(1, len(p))) AS i FROM framed)
)
SELECT s.bucket, s.a, s.b, sum(s.sessions)::BIGINT AS occurrences,
       sum(s.sessions) FILTER (WHERE s.is_first)::BIGINT AS sessions,
       any_value(t.bucket_sessions) AS bucket_sessions
FROM steps AS s
JOIN totals AS t USING (bucket)
GROUP BY s.bucket, s.a, s.b
ORDER BY s.bucket, s.a, s.b;
