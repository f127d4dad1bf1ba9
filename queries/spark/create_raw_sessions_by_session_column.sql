-- Returns one row per session of the input's own session column: the Spark SQL twin of
-- queries/create_raw_sessions_by_session_column.sql, with the same columns and meaning except that
-- each session carries its trimmed user id, not a key: DuckDB numbers the users from these rows
-- (queries/create_user_keys_from_engine_sessions.sql), so Spark reads the events once. Sessions
-- are the distinct (user, session id) pairs, numbered within the user by their first event, then
-- session id; events are ordered by timestamp, event id, outcome, app version, platform. Reads mapped_source, features.
-- Parameters: :collapse_repeats, :max_events, :noise_events, :error_outcomes.
WITH encoded AS (
    SELECT
        trim(s.user_id) AS user_id,
        coalesce(s.session_id, '') AS session_id,
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
ordered AS (
    SELECT
        *,
        row_number() OVER w AS seq,
        lag(event_id) OVER w AS prev_event_id
    FROM encoded
    WINDOW w AS (PARTITION BY user_id, session_id ORDER BY ts, event_id, outcome NULLS FIRST, app_version NULLS FIRST,
        platform NULLS FIRST)
),
grouped AS (
    SELECT
        user_id,
        session_id,
        min(ts) AS started_at,
        max(ts) AS ended_at,
        array_sort(collect_list(named_struct('seq', seq, 'event_id', event_id, 'is_error', is_error))) AS kept,
        max(CASE WHEN seq = 1 THEN named_struct('app_version', app_version, 'platform', platform) END)
            AS first_event
    FROM ordered
    WHERE NOT (:collapse_repeats AND prev_event_id IS NOT NULL AND event_id = prev_event_id)
    GROUP BY user_id, session_id
),
capped AS (
    SELECT
        *,
        CASE WHEN :max_events > 0 AND size(kept) > :max_events THEN slice(kept, 1, :max_events) ELSE kept END AS shown
    FROM grouped
)
SELECT
    user_id,
    CAST(row_number() OVER (PARTITION BY user_id ORDER BY started_at, session_id) AS INT) AS session_no,
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
