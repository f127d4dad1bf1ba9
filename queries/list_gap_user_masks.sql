-- Returns, for the candidate gaps of the registered Arrow table gap_path_masks (path_id, low, high: each
-- distinct path's mask of the candidates it holds, two 64-bit words), which of them each
-- user reached: per distinct pair of masks (reached at all, reached in a session that started
-- before $midpoint; two 64-bit words each), how many users have it. Each session is joined to the
-- one mask of its path, so the cost is one pass over the sessions however many candidates share a
-- path. Reads sessions and gap_path_masks.
-- Parameters: $midpoint (TIMESTAMPTZ), $include_automated (BOOLEAN).
WITH per_user AS (
    SELECT
        bit_or(m.low) AS low,
        bit_or(m.high) AS high,
        coalesce(bit_or(m.low) FILTER (WHERE s.started_at < $midpoint), 0) AS earlier_low,
        coalesce(bit_or(m.high) FILTER (WHERE s.started_at < $midpoint), 0) AS earlier_high
    FROM sessions AS s
    JOIN gap_path_masks AS m ON m.path_id = s.path_id
    WHERE $include_automated OR NOT s.is_automated
    GROUP BY s.user_key
)
SELECT low, high, earlier_low, earlier_high, count(*)::BIGINT AS users
FROM per_user
GROUP BY ALL
ORDER BY ALL;
