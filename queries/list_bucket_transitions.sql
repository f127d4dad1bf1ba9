-- Returns, per calendar bucket ($unit: 'week' or 'month') of session start within [$start, $end)
-- (NULL: open), each transition's occurrences and sessions, and the bucket's session count.
-- Reads sessions. Parameters: $unit, $start, $end, $include_automated (BOOLEAN).
WITH counted AS (
    SELECT session_key, date_trunc($unit, started_at) AS bucket, list_concat([0], path, [1]) AS p
    FROM sessions
    WHERE ($include_automated OR NOT is_automated)
      AND ($start IS NULL OR started_at >= $start)
      AND ($end IS NULL OR started_at < $end)
),
totals AS (SELECT bucket, count(*)::BIGINT AS bucket_sessions FROM counted GROUP BY bucket),
steps AS (
    SELECT session_key, bucket, p[i] AS a, p[i + 1] AS b
    FROM (SELECT session_key, bucket, p, unnest(range(1, len(p))) AS i FROM counted)
)
SELECT s.bucket, s.a, s.b, count(*)::BIGINT AS occurrences, count(DISTINCT s.session_key)::BIGINT AS sessions,
       any_value(t.bucket_sessions) AS bucket_sessions
FROM steps AS s
JOIN totals AS t USING (bucket)
GROUP BY s.bucket, s.a, s.b
ORDER BY s.bucket, s.a, s.b;
