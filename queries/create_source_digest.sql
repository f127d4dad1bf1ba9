-- Creates the temporary table source_digest: the source in one scan, grouped by why a row cannot be
-- used (reason NULL for usable rows), whether its event is noise dropped on request, and for usable
-- rows the trimmed event name, outcome, app version and platform; with rows, rows whose timestamp
-- had no time zone, and the time range. The row counts per reason and the event vocabulary both
-- come from it, so the source is not scanned once for each.
-- Reads the temporary view mapped_source. Parameters: $noise_events (list of event names to drop).
CREATE OR REPLACE TEMP TABLE source_digest AS
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
    coalesce(list_contains($noise_events, event), false) AS is_noise,
    CASE WHEN reason IS NULL THEN event END AS event,
    CASE WHEN reason IS NULL THEN outcome END AS outcome,
    CASE WHEN reason IS NULL THEN app_version END AS app_version,
    CASE WHEN reason IS NULL THEN platform END AS platform,
    count(*) AS row_count,
    count(*) FILTER (WHERE is_naive_ts) AS naive_ts_count,
    min(ts) AS first_ts,
    max(ts) AS last_ts
FROM classified
GROUP BY 1, 2, 3, 4, 5, 6;
