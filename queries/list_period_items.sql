-- Returns the features (k = 1) and transitions (k = 2, START = 0 and END = 1 included) of the
-- sessions started in [$start, $end) (NULL: open), with occurrences, sessions and distinct users.
-- Counting runs once per distinct path, weighted by its sessions in the period; distinct users
-- come from the distinct (path, user) pairs, so no per-session unnesting happens.
-- Reads sessions, full_paths. Parameters: $start, $end (TIMESTAMPTZ or NULL),
-- $include_automated (BOOLEAN).
WITH counted AS (
    SELECT path_id, user_key
    FROM sessions
    WHERE ($include_automated OR NOT is_automated)
      AND ($start IS NULL OR started_at >= $start)
      AND ($end IS NULL OR started_at < $end)
),
path_sessions AS (SELECT path_id, count(*)::BIGINT AS sessions FROM counted GROUP BY path_id),
framed AS (
    SELECT s.path_id, s.sessions, list_concat([0], f.path, [1]) AS p
    FROM path_sessions AS s
    JOIN full_paths AS f USING (path_id)
),
steps AS (
    SELECT path_id, sessions, p[i] AS a, p[i + 1] AS b, i, len(p) AS n
    FROM (SELECT path_id, sessions, p, unnest(range(1, len(p))) AS i FROM framed)
),
items AS (
    SELECT path_id, any_value(sessions) AS sessions, 1 AS k, b AS a, -1 AS b, count(*) AS occurrences_in_path
    FROM steps
    WHERE i + 1 < n
    GROUP BY path_id, b
    UNION ALL
    SELECT path_id, any_value(sessions), 2, a, b, count(*)
    FROM steps
    GROUP BY path_id, a, b
),
usage AS (
    SELECT k, a, b, sum(sessions * occurrences_in_path)::BIGINT AS occurrences, sum(sessions)::BIGINT AS sessions
    FROM items
    GROUP BY k, a, b
),
path_users AS (SELECT DISTINCT path_id, user_key FROM counted),
reach AS (
    SELECT i.k, i.a, i.b, count(DISTINCT u.user_key)::BIGINT AS users
    FROM items AS i
    JOIN path_users AS u USING (path_id)
    GROUP BY i.k, i.a, i.b
)
SELECT k, a, CASE WHEN k = 1 THEN NULL ELSE b END AS b, occurrences, sessions, users
FROM usage
JOIN reach USING (k, a, b)
ORDER BY k, a, b;
