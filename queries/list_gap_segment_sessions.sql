-- Returns, per candidate gap and segment value (app_version, platform), the sessions containing the
-- gap with that value: the sessions on the gap paths are grouped by path and value once, then summed
-- per candidate. Reads the registered Arrow table gap_paths (candidate, path_id) and sessions.
-- Parameters: $include_automated (BOOLEAN).
WITH grouped AS (
    SELECT path_id, 'app_version' AS segment, app_version AS value, count(*) AS n
    FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND app_version IS NOT NULL
      AND path_id IN (SELECT path_id FROM gap_paths)
    GROUP BY ALL
    UNION ALL
    SELECT path_id, 'platform' AS segment, platform AS value, count(*) AS n
    FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND platform IS NOT NULL
      AND path_id IN (SELECT path_id FROM gap_paths)
    GROUP BY ALL
)
SELECT g.candidate, s.segment, s.value, sum(s.n)::BIGINT AS sessions
FROM gap_paths AS g
JOIN grouped AS s ON s.path_id = g.path_id
GROUP BY ALL
ORDER BY ALL;
