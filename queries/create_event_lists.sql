-- Creates the temporary table event_lists: one row per user id (trimmed), or per (user id, session
-- id) with $by_session (a missing session id read as ''; without it session_id is ''), holding its
-- usable events as one sorted list of HUGEINT keys
-- (epoch microseconds + 2^63) << 48 | event id << 32 | attributes id << 1 | is error,
-- so the sorted list orders events by time, then event name (ids follow names), then outcome, app
-- version and platform (event_attributes is numbered in that order); events equal in all of these
-- are interchangeable, so results do not depend on file order. A hash group by and a sort of each
-- list replace a window sort of every event row with its strings. The low 48 bits come from
-- event_codes in one join on (event, outcome, app version, platform); noise events dropped on
-- request are not in it, so the join drops them.
-- Reads the temporary view mapped_source, the temporary table event_codes.
-- Parameters: $by_session (BOOLEAN).
CREATE OR REPLACE TEMP TABLE event_lists AS
SELECT
    trim(s.user_id) AS user_id,
    CASE WHEN $by_session THEN coalesce(s.session_id, '') ELSE '' END AS session_id,
    list_sort(list((epoch_us(s.ts)::HUGEINT + 9223372036854775808) * 281474976710656 + c.code)) AS events
FROM mapped_source AS s
JOIN event_codes AS c
    ON c.event = trim(s.event)
    AND c.outcome IS NOT DISTINCT FROM s.outcome
    AND c.app_version IS NOT DISTINCT FROM s.app_version
    AND c.platform IS NOT DISTINCT FROM s.platform
WHERE s.user_id IS NOT NULL AND trim(s.user_id) <> '' AND s.ts IS NOT NULL
GROUP BY 1, 2;
