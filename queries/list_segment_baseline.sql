-- Returns the sessions and distinct users per segment value (app_version, platform) over the sessions that count for
-- the profile. Reads sessions. Parameters: $include_automated (BOOLEAN).
SELECT segment, value, count(*)::BIGINT AS sessions, count(DISTINCT user_key)::BIGINT AS users
FROM (
    SELECT 'app_version' AS segment, app_version AS value, user_key FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND app_version IS NOT NULL
    UNION ALL
    SELECT 'platform' AS segment, platform AS value, user_key FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND platform IS NOT NULL
)
GROUP BY segment, value
ORDER BY segment, value;
