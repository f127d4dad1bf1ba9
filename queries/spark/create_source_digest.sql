-- Returns the source in one scan, grouped by why a row cannot be used (reason NULL for usable rows),
-- whether its event is noise dropped on request (names compared trimmed), and for usable rows the
-- trimmed event name, outcome, app version and platform; with rows, rows whose timestamp had no
-- time zone, and the time range in microseconds since the epoch: the Spark SQL twin of
-- queries/create_source_digest.sql. Only these groups come back to the driver; the row counts per
-- reason and the event names are taken from them in DuckDB (queries/load_engine_source_digest.sql),
-- so Spark reads the source once for both. Reads the temporary view mapped_source.
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
        trim(event) AS event,
        outcome,
        app_version,
        platform,
        is_naive_ts,
        ts
    FROM mapped_source
)
SELECT
    reason,
    coalesce(array_contains(CAST(:noise_events AS ARRAY<STRING>), event), false) AS is_noise,
    CASE WHEN reason IS NULL THEN event END AS event,
    CASE WHEN reason IS NULL THEN outcome END AS outcome,
    CASE WHEN reason IS NULL THEN app_version END AS app_version,
    CASE WHEN reason IS NULL THEN platform END AS platform,
    count(*) AS row_count,
    count_if(is_naive_ts) AS naive_ts_count,
    unix_micros(min(ts)) AS first_ts,
    unix_micros(max(ts)) AS last_ts
FROM classified
GROUP BY 1, 2, 3, 4, 5, 6;
