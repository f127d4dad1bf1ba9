-- Returns, per distinct path, segment value (app_version, platform) and user of the sessions that
-- count for the profile, how many sessions they hold (n); the value numbered densely from 0 in
-- (segment, value) order as list_gap_segment_values.sql lists them (value_no), and the (user, value)
-- pair numbered densely from 0 (value_user_no), so that gap evidence can count a candidate's
-- distinct users per value. Ordered by path. Reads sessions. Parameters: $include_automated (BOOLEAN).
WITH valued AS (
    SELECT path_id, user_key, 'app_version' AS segment, app_version AS value
    FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND app_version IS NOT NULL
    UNION ALL
    SELECT path_id, user_key, 'platform' AS segment, platform AS value
    FROM sessions
    WHERE ($include_automated OR NOT is_automated) AND platform IS NOT NULL
),
grouped AS (
    SELECT path_id, user_key, segment, value, count(*)::BIGINT AS n
    FROM valued
    GROUP BY ALL
)
SELECT
    path_id,
    (dense_rank() OVER (ORDER BY segment, value) - 1)::INTEGER AS value_no,
    (dense_rank() OVER (ORDER BY user_key, segment, value) - 1)::INTEGER AS value_user_no,
    n
FROM grouped
ORDER BY path_id, value_no, value_user_no;
