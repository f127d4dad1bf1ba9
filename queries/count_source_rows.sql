-- Returns one row per reason a source row cannot be used (reason NULL for usable rows), with how
-- many rows had it, how many of them carried a timestamp without a time zone, how many were noise
-- events dropped on request (names compared trimmed, as sessions drop them), and the time range.
-- Reads the temporary table source_digest. Parameters: none.
SELECT
    reason,
    sum(row_count)::BIGINT AS row_count,
    sum(naive_ts_count)::BIGINT AS naive_ts_count,
    coalesce(sum(row_count) FILTER (WHERE is_noise), 0)::BIGINT AS noise_count,
    min(first_ts) AS first_ts,
    max(last_ts) AS last_ts
FROM source_digest
GROUP BY reason
ORDER BY reason NULLS FIRST;
