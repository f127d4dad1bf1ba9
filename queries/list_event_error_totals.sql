-- Returns, per event, how often it occurs and how often it failed in the sessions that count for
-- the profile: (event_id, occurrences, errors). Occurrences come from the k = 1 rows of kpaths (whose code
-- is the event id below the top 4 bits, 2^60 - 1 masking them off);
-- failures from the sessions' error positions. Reads kpaths, sessions. Parameters:
-- $include_automated (BOOLEAN).
WITH failed AS (
    SELECT s.path[p.position] AS event_id, count(*)::BIGINT AS errors
    FROM sessions AS s, unnest(s.error_positions) AS p(position)
    WHERE $include_automated OR NOT s.is_automated
    GROUP BY 1
)
SELECT (k.code & 1152921504606846975)::INTEGER AS event_id, k.occurrences::BIGINT AS occurrences, coalesce(f.errors, 0)::BIGINT AS errors
FROM kpaths AS k
LEFT JOIN failed AS f ON f.event_id = (k.code & 1152921504606846975)::INTEGER
WHERE k.k = 1
ORDER BY 1;
