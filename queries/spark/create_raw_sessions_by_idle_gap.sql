-- Returns one row per session formed by splitting each user's events where the gap since the
-- previous event exceeds :idle_us microseconds: the Spark SQL twin of
-- queries/create_raw_sessions_by_idle_gap.sql, with the same columns and meaning except that
-- each session carries its trimmed user id, not a key: DuckDB numbers the users from these rows
-- (queries/create_user_keys_from_engine_sessions.sql), so Spark reads the events once. Events with
-- equal timestamps are ordered by event id (name order), then outcome, app version, platform. One window sort by user and
-- time marks session starts (a running sum numbers them); each session's kept events are collected
-- as (seq, event_id, is_error) structs and sorted, so a user with any number of events is handled
-- without bit packing. With :collapse_repeats an event equal to the one before it is dropped from
-- the path and the counts (a session's first event is always kept); ended_at is the last event,
-- a dropped repeat included. Reads mapped_source, features.
-- Parameters: :idle_us, :collapse_repeats, :max_events, :noise_events, :error_outcomes.
WITH encoded AS (
    SELECT
        trim(s.user_id) AS user_id,
        f.event_id,
        s.ts,
        s.outcome,
        coalesce(array_contains(CAST(:error_outcomes AS ARRAY<STRING>), lower(trim(s.outcome))), false) AS is_error,
        s.app_version,
        s.platform
    FROM mapped_source AS s
    JOIN features AS f ON f.event = trim(s.event) AND f.event_id >= 2
    WHERE s.ts IS NOT NULL AND s.user_id IS NOT NULL AND trim(s.user_id) <> ''
      AND NOT array_contains(CAST(:noise_events AS ARRAY<STRING>), trim(s.event))
),
marked AS (
    SELECT
        *,
        row_number() OVER w AS seq,
        CASE
            WHEN lag(ts) OVER w IS NULL THEN 1
            WHEN unix_micros(ts) - unix_micros(lag(ts) OVER w) > :idle_us THEN 1
            ELSE 0
        END AS is_start,
        coalesce(:collapse_repeats AND event_id = lag(event_id) OVER w, false) AS is_repeat
    FROM encoded
    WINDOW w AS (PARTITION BY user_id ORDER BY ts, event_id, outcome NULLS FIRST, app_version NULLS FIRST,
        platform NULLS FIRST)
),
numbered AS (
    SELECT
        *,
        sum(is_start) OVER (PARTITION BY user_id ORDER BY ts, event_id, outcome NULLS FIRST, app_version NULLS FIRST,
        platform NULLS FIRST
                            ROWS BETWEEN UNBOUNDED PRECEDING AND CURRENT ROW) AS session_no
    FROM marked
),
grouped AS (
    SELECT
        user_id,
        session_no,
        min(ts) AS started_at,
        max(ts) AS ended_at,
        array_sort(collect_list(named_struct('seq', seq, 'event_id', event_id, 'is_error', is_error))
            FILTER (WHERE is_start = 1 OR NOT is_repeat)) AS kept,
        max(CASE WHEN is_start = 1 THEN named_struct('app_version', app_version, 'platform', platform) END)
            AS first_event
    FROM numbered
    GROUP BY user_id, session_no
),
capped AS (
    SELECT
        *,
        CASE WHEN :max_events > 0 AND size(kept) > :max_events THEN slice(kept, 1, :max_events) ELSE kept END AS shown
    FROM grouped
)
SELECT
    user_id,
    CAST(session_no AS INT) AS session_no,
    started_at,
    ended_at,
    size(kept) AS event_count,
    size(filter(kept, x -> x.is_error)) AS error_count,
    transform(shown, x -> x.event_id) AS path,
    filter(transform(shown, (x, i) -> CASE WHEN x.is_error THEN i + 1 ELSE 0 END), i -> i > 0) AS error_positions,
    (:max_events > 0 AND size(kept) > :max_events) AS is_truncated,
    first_event.app_version AS app_version,
    first_event.platform AS platform
FROM capped;
