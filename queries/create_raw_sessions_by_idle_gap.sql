-- Creates the temporary table raw_sessions: one row per session, formed by splitting each user's
-- events where the gap since the previous event exceeds $idle_us microseconds (a gap exactly
-- equal stays in the session). Events with equal timestamps are ordered by event name, then
-- outcome, app version and platform (rows equal in all of these are interchangeable), so results do not depend on file order. Each session gets its ordered path of event
-- ids (cut at $max_events when that is positive), the positions in it (from 1) whose event failed,
-- counts, errors, time span (first to last event, a dropped repeat included) and the segment
-- values at its first event. With $collapse_repeats an event equal to the one before it in the same
-- session is dropped from the path and the counts.
-- One window sort by user and time numbers each user's events and marks where sessions start and
-- end; each user's events are then packed into one sorted list of
-- (position << 19 | dropped << 18 | starts << 17 | failed << 16 | event id) integers, which list
-- functions cut into sessions (a position is the event's place among its user's events, so a
-- session is one slice). Features are limited to 65,534 for this reason.
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
    JOIN features AS f ON f.event = trim(s.event) AND f.event_id >= 2
    WHERE s.ts IS NOT NULL AND NOT list_contains($noise_events, trim(s.event))
),
ordered AS (
    SELECT
        user_key,
        ts,
        app_version,
        platform,
        row_number() OVER w AS seq,
        CASE
            WHEN lag(ts) OVER w IS NULL THEN 1
            WHEN epoch_us(ts) - epoch_us(lag(ts) OVER w) > $idle_us THEN 1
            ELSE 0
        END AS is_start,
        CASE
            WHEN lead(ts) OVER w IS NULL THEN 1
            WHEN epoch_us(lead(ts) OVER w) - epoch_us(ts) > $idle_us THEN 1
            ELSE 0
        END AS is_end,
        (row_number() OVER w << 19)
            | (CASE WHEN $collapse_repeats AND event_id = lag(event_id) OVER w THEN 1 ELSE 0 END << 18)
            | (is_error::BIGINT << 16)
            | event_id AS packed_no_start
    FROM encoded
    WINDOW w AS (PARTITION BY user_key ORDER BY ts, event_id, outcome NULLS FIRST, app_version NULLS FIRST,
        platform NULLS FIRST)
),
per_user AS (
    SELECT
        user_key,
        list_sort(list(packed_no_start | (is_start << 17))) AS packed,
        list_sort(list({'seq': seq, 'ts': ts, 'app_version': app_version, 'platform': platform})
            FILTER (WHERE is_start = 1)) AS starts,
        list_sort(list({'seq': seq, 'ts': ts}) FILTER (WHERE is_end = 1)) AS ends
    FROM ordered
    GROUP BY user_key
),
cut AS (
    SELECT
        user_key,
        generate_series(1, len(starts)) AS session_numbers,
        starts,
        ends,
        list_transform(
            generate_series(1, len(starts)),
            lambda j: list_filter(packed[starts[j].seq:ends[j].seq], lambda x: ((x >> 18) & 1 = 0) OR ((x >> 17) & 1 = 1))
        ) AS slices
    FROM per_user
),
sessions AS (
    SELECT
        user_key,
        unnest(session_numbers) AS session_no,
        unnest(starts) AS first_event,
        unnest(ends) AS last_event,
        unnest(slices) AS kept
    FROM cut
)
SELECT
    user_key,
    session_no::INTEGER AS session_no,
    first_event.ts AS started_at,
    last_event.ts AS ended_at,
    len(kept)::INTEGER AS event_count,
    len(list_filter(kept, lambda x: (x >> 16) & 1 = 1))::INTEGER AS error_count,
    list_transform(
        CASE WHEN $max_events > 0 THEN kept[1:$max_events] ELSE kept END,
        lambda x: (x & 65535)::INTEGER
    ) AS path,
    list_filter(
        list_transform(
            CASE WHEN $max_events > 0 THEN kept[1:$max_events] ELSE kept END,
            lambda x, i: CASE WHEN (x >> 16) & 1 = 1 THEN i ELSE 0 END
        ),
        lambda i: i > 0
    )::INTEGER[] AS error_positions,
    ($max_events > 0 AND len(kept) > $max_events) AS is_truncated,
    first_event.app_version AS app_version,
    first_event.platform AS platform
FROM sessions;
