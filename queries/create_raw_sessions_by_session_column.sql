-- Creates the temporary table raw_sessions from the input's own session column: sessions are the
-- distinct (user, session id) pairs, numbered within the user in order of their first event, then
-- session id; events are ordered by timestamp, event name, outcome, app version, platform (the
-- sorted keys of event_lists). With $collapse_repeats an event equal to the one before it
-- in the session is dropped from the path, the counts and the time span (first to last kept
-- event). Same columns and options as create_raw_sessions_by_idle_gap.sql.
-- Reads event_lists, user_keys, event_attributes.
-- Parameters: $collapse_repeats, $max_events.
CREATE OR REPLACE TEMP TABLE raw_sessions AS
WITH kept_keys AS (
    SELECT
        u.user_key,
        e.session_id,
        list_filter(
            e.events,
            lambda x, i: NOT ($collapse_repeats AND i > 1 AND (x >> 32) & 65535 = (e.events[i - 1] >> 32) & 65535)
        ) AS events
    FROM event_lists AS e
    JOIN user_keys AS u USING (user_id)
),
per_session AS (
    SELECT
        user_key,
        session_id,
        events[1] AS first_key,
        events[len(events)] AS last_key,
        list_transform(events, lambda x: (((x & 1) << 16) | ((x >> 32) & 65535))::INTEGER) AS kept
    FROM kept_keys
)
SELECT
    s.user_key,
    row_number() OVER (PARTITION BY s.user_key ORDER BY s.first_key >> 48, s.session_id)::INTEGER AS session_no,
    make_timestamp(((s.first_key >> 48) - 9223372036854775808)::BIGINT)::TIMESTAMPTZ AS started_at,
    make_timestamp(((s.last_key >> 48) - 9223372036854775808)::BIGINT)::TIMESTAMPTZ AS ended_at,
    len(s.kept)::INTEGER AS event_count,
    len(list_filter(s.kept, lambda x: (x >> 16) & 1 = 1))::INTEGER AS error_count,
    list_transform(
        CASE WHEN $max_events > 0 THEN s.kept[1:$max_events] ELSE s.kept END,
        lambda x: x & 65535
    ) AS path,
    list_filter(
        list_transform(
            CASE WHEN $max_events > 0 THEN s.kept[1:$max_events] ELSE s.kept END,
            lambda x, i: CASE WHEN (x >> 16) & 1 = 1 THEN i ELSE 0 END
        ),
        lambda i: i > 0
    )::INTEGER[] AS error_positions,
    ($max_events > 0 AND len(s.kept) > $max_events) AS is_truncated,
    a.app_version,
    a.platform
FROM per_session AS s
JOIN event_attributes AS a ON a.attributes_id = ((s.first_key >> 1) & 2147483647)::INTEGER;
