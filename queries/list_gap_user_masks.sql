-- Returns, for the candidate gaps $offset .. $offset + $width - 1 of the registered Arrow table gap_paths,
-- which of them each user reached: per distinct pair of 128-bit masks (reached at all, reached in a
-- session that started before $midpoint; bit c - $offset for candidate c, as two 64-bit words), how
-- many users have it. Each session is joined to one mask of its path, so the cost is one pass over
-- the sessions however many candidates share a path. Reads sessions.
-- Parameters: $offset (BIGINT), $width (1..128), $midpoint (TIMESTAMPTZ), $include_automated (BOOLEAN).
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
per_user AS (
    SELECT
        bit_or(m.low) AS low,
        bit_or(m.high) AS high,
        coalesce(bit_or(m.low) FILTER (WHERE s.started_at < $midpoint), 0) AS earlier_low,
        coalesce(bit_or(m.high) FILTER (WHERE s.started_at < $midpoint), 0) AS earlier_high
    FROM sessions AS s
    JOIN path_masks AS m ON m.path_id = s.path_id
    WHERE $include_automated OR NOT s.is_automated
    GROUP BY s.user_key
)
SELECT low, high, earlier_low, earlier_high, count(*)::BIGINT AS users
FROM per_user
GROUP BY ALL
ORDER BY ALL;
