-- Returns, per candidate gap and segment value (app_version, platform), the sessions containing the
-- gap with that value and their distinct users. Reads the registered Arrow table gap_paths
-- (candidate, path_id) and sessions.
-- Parameters: $include_automated (BOOLEAN).
SELECT candidate, segment, value, count(*)::BIGINT AS sessions, count(DISTINCT user_key)::BIGINT AS users
FROM (
    SELECT g.candidate, 'app_version' AS segment, s.app_version AS value, s.user_key
    FROM gap_paths AS g JOIN sessions AS s ON s.path_id = g.path_id
    WHERE ($include_automated OR NOT s.is_automated) AND s.app_version IS NOT NULL
    UNION ALL
    SELECT g.candidate, 'platform' AS segment, s.platform AS value, s.user_key
    FROM gap_paths AS g JOIN sessions AS s ON s.path_id = g.path_id
    WHERE ($include_automated OR NOT s.is_automated) AND s.platform IS NOT NULL
)
GROUP BY candidate, segment, value
ORDER BY candidate, segment, value;
