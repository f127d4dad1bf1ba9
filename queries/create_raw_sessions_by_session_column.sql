-- Creates the temporary table raw_sessions from the input's own session column: sessions are the
-- distinct (user, session id) pairs, numbered within the user in order of their first event;
-- events are ordered by timestamp, event name, outcome, app version, platform. Same columns and options as
-- create_raw_sessions_by_idle_gap.sql. Reads mapped_source, features, user_keys.
-- Parameters: $collapse_repeats, $max_events, $noise_events, $error_outcomes.
CREATE OR REPLACE TEMP TABLE raw_sessions AS
WITH encoded AS (
    SELECT
        u.user_key,
        coalesce(s.session_id, '') AS session_id,
        f.event_id,
        s.ts,
        s.outcome,
        coalesce(list_contains($error_outcomes, lower(trim(s.outcome))), false) AS is_error,
        s.app_version,
        s.platform
    FROM mapped_source AS s
    JOIN user_keys AS u ON u.user_id = trim(s.user_id)
    JOIN features AS f ON f.event = trim(s.event) AND f.event_id >= 2
    WHERE s.ts IS NOT NULL AND NOT list_contains($noise_events, trim(s.event))
),
ordered AS (
    SELECT
        *,
        row_number() OVER w AS seq,
        lag(event_id) OVER w AS prev_event_id
    FROM encoded
    WINDOW w AS (PARTITION BY user_key, session_id ORDER BY ts, event_id, outcome NULLS FIRST, app_version NULLS FIRST,
        platform NULLS FIRST)
),
grouped AS (
    SELECT
        user_key,
        session_id,
        min(ts) AS started_at,
        max(ts) AS ended_at,
        count(*)::INTEGER AS event_count,
        count(*) FILTER (WHERE is_error)::INTEGER AS error_count,
        list_sort(list((seq << 17) | (is_error::BIGINT << 16) | event_id)) AS packed,
        any_value(app_version) FILTER (WHERE seq = 1) AS app_version,
        any_value(platform) FILTER (WHERE seq = 1) AS platform
    FROM ordered
    WHERE NOT ($collapse_repeats AND prev_event_id IS NOT NULL AND event_id = prev_event_id)
    GROUP BY user_key, session_id
)
SELECT
    user_key,
    row_number() OVER (PARTITION BY user_key ORDER BY started_at, session_id)::INTEGER AS session_no,
    started_at,
    ended_at,
    event_count,
    error_count,
    list_transform(
        CASE WHEN $max_events > 0 THEN packed[1:$max_events] ELSE packed END,
        lambda x: (x & 65535)::INTEGER
    ) AS path,
    list_filter(
        list_transform(
            CASE WHEN $max_events > 0 THEN packed[1:$max_events] ELSE packed END,
            lambda x, i: CASE WHEN (x >> 16) & 1 = 1 THEN i ELSE 0 END
        ),
        lambda i: i > 0
    )::INTEGER[] AS error_positions,
    ($max_events > 0 AND event_count > $max_events) AS is_truncated,
    app_version,
    platform
FROM grouped;
