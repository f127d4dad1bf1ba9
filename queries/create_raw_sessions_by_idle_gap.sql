-- Creates the temporary table raw_sessions: one row per session, formed by splitting each user's
-- events where the gap since the previous event exceeds $idle_us microseconds (a gap exactly
-- equal stays in the session). Each user's events arrive as one sorted list of keys
-- (event_lists: time, then event name, outcome, app version and platform, so results do not
-- depend on file order). Session starts are the positions whose gap to the previous event exceeds
-- the threshold; the events are repacked as
-- (position << 19 | dropped << 18 | failed << 16 | event id) integers (position: the event's place
-- among its user's events, so a session is one slice; dropped: a repeat of the event before it in
-- the same session under $collapse_repeats, never a session's first event), which list functions
-- cut into sessions. Each session gets its ordered path of event ids (cut at $max_events when that
-- is positive), the positions in it (from 1) whose event failed, counts, errors, time span (first
-- to last event, a dropped repeat included) and the app version and platform of its first event.
-- Features are limited to 65,534 because of the packing.
-- Reads event_lists, user_keys, event_attributes.
-- Parameters: $idle_us, $collapse_repeats, $max_events.
CREATE OR REPLACE TEMP TABLE raw_sessions AS
WITH per_user AS (
    SELECT
        u.user_key,
        e.events,
        list_filter(
            generate_series(1, len(e.events)),
            lambda i: i = 1 OR (e.events[i] >> 48) - (e.events[i - 1] >> 48) > $idle_us
        ) AS starts,
        list_transform(
            e.events,
            lambda x, i: ((i::BIGINT << 19)
                | (CASE
                    WHEN $collapse_repeats AND i > 1 AND (x >> 32) & 65535 = (e.events[i - 1] >> 32) & 65535
                        AND (x >> 48) - (e.events[i - 1] >> 48) <= $idle_us THEN 1
                    ELSE 0
                END << 18)
                | ((x & 1) << 16)
                | ((x >> 32) & 65535))::BIGINT
        ) AS packed
    FROM event_lists AS e
    JOIN user_keys AS u USING (user_id)
),
cut AS (
    SELECT
        user_key,
        generate_series(1, len(starts)) AS session_numbers,
        list_transform(starts, lambda s: events[s]) AS firsts,
        list_transform(starts, lambda s, j: events[coalesce(starts[j + 1] - 1, len(events))]) AS lasts,
        list_transform(
            starts,
            lambda s, j: list_filter(packed[s:coalesce(starts[j + 1] - 1, len(packed))], lambda x: (x >> 18) & 1 = 0)
        ) AS slices
    FROM per_user
),
sessions AS (
    SELECT
        user_key,
        unnest(session_numbers) AS session_no,
        unnest(firsts) AS first_key,
        unnest(lasts) AS last_key,
        unnest(slices) AS kept
    FROM cut
)
SELECT
    s.user_key,
    s.session_no::INTEGER AS session_no,
    make_timestamp(((s.first_key >> 48) - 9223372036854775808)::BIGINT)::TIMESTAMPTZ AS started_at,
    make_timestamp(((s.last_key >> 48) - 9223372036854775808)::BIGINT)::TIMESTAMPTZ AS ended_at,
    len(s.kept)::INTEGER AS event_count,
    len(list_filter(s.kept, lambda x: (x >> 16) & 1 = 1))::INTEGER AS error_count,
    list_transform(
        CASE WHEN $max_events > 0 THEN s.kept[1:$max_events] ELSE s.kept END,
        lambda x: (x & 65535)::INTEGER
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
FROM sessions AS s
JOIN event_attributes AS a ON a.attributes_id = ((s.first_key >> 1) & 2147483647)::INTEGER;
