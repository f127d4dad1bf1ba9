-- Returns, for the candidate gaps of the registered Arrow table gap_path_masks (path_id, low, high: each
-- distinct path's mask of the candidates it holds, two 64-bit words), per segment value
-- (app_version, platform) and distinct mask of the candidates a user reached in sessions with that
-- value (two 64-bit words), how many users have it. Reads sessions and gap_path_masks.
-- Parameters: $include_automated (BOOLEAN).
WITH valued AS (
    SELECT s.user_key, 'app_version' AS segment, s.app_version AS value, m.low, m.high
    FROM sessions AS s JOIN gap_path_masks AS m ON m.path_id = s.path_id
    WHERE ($include_automated OR NOT s.is_automated) AND s.app_version IS NOT NULL
    UNION ALL
    SELECT s.user_key, 'platform' AS segment, s.platform AS value, m.low, m.high
    FROM sessions AS s JOIN gap_path_masks AS m ON m.path_id = s.path_id
    WHERE ($include_automated OR NOT s.is_automated) AND s.platform IS NOT NULL
),
per_user AS (
    SELECT segment, value, bit_or(low) AS low, bit_or(high) AS high
    FROM valued
    GROUP BY user_key, segment, value
)
SELECT segment, value, low, high, count(*)::BIGINT AS users
FROM per_user
GROUP BY ALL
ORDER BY ALL;
