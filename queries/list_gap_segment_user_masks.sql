-- Returns, for the candidate gaps $offset .. $offset + $width - 1 of the registered Arrow table gap_paths,
-- per segment value (app_version, platform) and distinct 128-bit mask of the candidates a user
-- reached in sessions with that value (two 64-bit words, bit c - $offset for candidate c), how many
-- users have it. Reads sessions. Parameters: $offset (BIGINT), $width (1..128), $include_automated (BOOLEAN).
WITH path_masks AS (
    SELECT
        path_id,
        bit_or(CASE WHEN candidate - $offset < 64 THEN 1::UBIGINT << (candidate - $offset)::UBIGINT ELSE 0 END)
            AS low,
        bit_or(CASE WHEN candidate - $offset >= 64 THEN 1::UBIGINT << (candidate - $offset - 64)::UBIGINT ELSE 0 END)
            AS high
    FROM gap_paths
    WHERE candidate >= $offset AND candidate < $offset + $width
    GROUP BY path_id
),
valued AS (
    SELECT s.user_key, 'app_version' AS segment, s.app_version AS value, m.low, m.high
    FROM sessions AS s JOIN path_masks AS m ON m.path_id = s.path_id
    WHERE ($include_automated OR NOT s.is_automated) AND s.app_version IS NOT NULL
    UNION ALL
    SELECT s.user_key, 'platform' AS segment, s.platform AS value, m.low, m.high
    FROM sessions AS s JOIN path_masks AS m ON m.path_id = s.path_id
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
