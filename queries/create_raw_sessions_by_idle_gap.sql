-- Creates the temporary table raw_sessions: one row per session, formed by splitting each user's
-- events where the gap since the previous event exceeds $idle_us microseconds (a gap exactly
-- equal stays in the session). Events with equal timestamps are ordered by event name, then
-- outcome, so results do not depend on file order. Each session gets its ordered path of event
-- ids (cut at $max_events when that is positive), the positions in it (from 1) whose event failed,
-- counts, errors, time span and the segment values at its first event. With $collapse_repeats an
-- event equal to the one before it in the same session is dropped. The path is rebuilt from
-- (position << 17 | failed << 16 | event id) sorted, which is much cheaper than an ordered
-- aggregate; features are limited to 65,534 for this reason.
-- Reads mapped_source, features, user_keys.
-- Parameters: $idle_us, $collapse_repeats, $max_events, $noise_events, $error_outcomes.
CREATE OR REPLACE TEMP TABLE raw_sessions AS
WITH encoded AS (
    SELECT
        u.user_key,
        f.event_id,
        s.ts,
        s.outcome,
        coalesce(list_contains($error_outcomes, lower(trim(s.outcome))), false) AS is_error,
        s.app_version,
        s.platform
    FROM mapped_source AS s
    JOIN user_keys AS u ON u.user_id = trim(s.user_id)
    JOIN features AS f ON f.event = trim(s.event)
    WHERE s.ts IS NOT NULL AND NOT list_contains($noise_events, trim(s.event))
),
ordered AS (
    SELECT
        *,
        row_number() OVER w AS seq,
        CASE
            WHEN lag(ts) OVER w IS NULL THEN 1
            WHEN epoch_us(ts) - epoch_us(lag(ts) OVER w) > $idle_us THEN 1
            ELSE 0
        END AS is_start,
        lag(event_id) OVER w AS prev_event_id
    FROM encoded
    WINDOW w AS (PARTITION BY user_key ORDER BY ts, event_id, outcome NULLS FIRST)
),
numbered AS (
    SELECT
        *,
        sum(is_start) OVER (PARTITION BY user_key ORDER BY seq) AS session_no
    FROM ordered
),
grouped AS (
    SELECT
        user_key,
        session_no,
        min(ts) AS started_at,
        max(ts) AS ended_at,
        count(*)::INTEGER AS event_count,
        count(*) FILTER (WHERE is_error)::INTEGER AS error_count,
        list_sort(list((seq << 17) | (is_error::BIGINT << 16) | event_id)) AS packed,
        any_value(app_version) FILTER (WHERE is_start = 1) AS app_version,
        any_value(platform) FILTER (WHERE is_start = 1) AS platform
    FROM numbered
    WHERE NOT ($collapse_repeats AND is_start = 0 AND event_id = prev_event_id)
    GROUP BY user_key, session_no
)
SELECT
    user_key,
    session_no::INTEGER AS session_no,
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
