-- Returns one row per reason a source row cannot be used (reason NULL for usable rows), with how
-- many rows had it, how many carried a timestamp without a time zone, how many were noise events
-- dropped on request (names compared trimmed), and the time range of the usable rows (in microseconds since the epoch): the Spark SQL twin of
-- queries/count_source_rows.sql. Reads the temporary view mapped_source.
-- Parameters: :noise_events (ARRAY<STRING> of event names to drop).
WITH classified AS (
    SELECT
        CASE
            WHEN user_id IS NULL OR trim(user_id) = '' THEN 'missing user id'
            WHEN NOT has_raw_ts THEN 'missing timestamp'
            WHEN is_ts_outside_window THEN 'timestamp outside 1990-2099'
            WHEN ts IS NULL THEN 'unparsable timestamp'
            WHEN event IS NULL OR trim(event) = '' THEN 'missing event'
        END AS reason,
        is_naive_ts,
        coalesce(array_contains(CAST(:noise_events AS ARRAY<STRING>), trim(event)), false) AS is_noise,
        ts
    FROM mapped_source
)
SELECT
    reason,
    count(*) AS row_count,
    count_if(is_naive_ts) AS naive_ts_count,
    count_if(is_noise) AS noise_count,
    unix_micros(min(ts)) AS first_ts,
    unix_micros(max(ts)) AS last_ts
FROM classified
GROUP BY reason
ORDER BY reason NULLS FIRST;
