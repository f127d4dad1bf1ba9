-- Returns, per distinct path and segment value (app_version, platform) of the sessions that count
-- for the profile, how many sessions they hold (n), the value numbered from 0 in (segment, value)
-- order as list_gap_segment_values.sql lists them (value_no); ordered by path and value.
-- Reads sessions. Parameters: $include_automated (BOOLEAN).
WITH valued AS (
    SELECT path_id, 'app_version' AS segment, app_version AS value
    FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND app_version IS NOT NULL
    UNION ALL
    SELECT path_id, 'platform' AS segment, platform AS value
    FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND platform IS NOT NULL
),
numbered AS (
    SELECT segment, value, (row_number() OVER (ORDER BY segment, value) - 1)::INTEGER AS value_no
    FROM (SELECT DISTINCT segment, value FROM valued)
)
SELECT v.path_id, n.value_no, count(*)::BIGINT AS n
FROM valued AS v
JOIN numbered AS n ON n.segment = v.segment AND n.value = v.value
GROUP BY ALL
ORDER BY v.path_id, n.value_no;
