-- Returns, per event, how often it occurs and how often it failed in the sessions that count for
-- the profile: (event_id, occurrences, errors). Occurrences come from the k = 1 rows of kpaths;
-- failures from the sessions' error positions. Reads kpaths, sessions. Parameters:
-- $include_automated (BOOLEAN).
WITH failed AS (
    SELECT s.path[p.position] AS event_id, count(*)::BIGINT AS errors
    FROM sessions AS s, unnest(s.error_positions) AS p(position)
    WHERE $include_automated OR NOT s.is_automated
    GROUP BY 1
)
SELECT k.path[1] AS event_id, k.occurrences::BIGINT AS occurrences, coalesce(f.errors, 0)::BIGINT AS errors
FROM kpaths AS k
LEFT JOIN failed AS f ON f.event_id = k.path[1]
WHERE k.k = 1
ORDER BY 1;
