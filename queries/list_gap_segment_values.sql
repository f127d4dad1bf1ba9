-- Returns the distinct segment values (app_version, platform) of the sessions that count for the
-- profile, in (segment, value) order: row i is value_no i of list_gap_path_segment_users.sql.
-- Reads sessions. Parameters: $include_automated (BOOLEAN).
SELECT DISTINCT segment, value
FROM (
    SELECT 'app_version' AS segment, app_version AS value FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND app_version IS NOT NULL
    UNION ALL
    SELECT 'platform' AS segment, platform AS value FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND platform IS NOT NULL
)
ORDER BY segment, value;
