-- Creates the temporary table session_event_lists: one row per (user id, session id) of the
-- input's own session column (user ids trimmed, a missing session id read as ''), holding the
-- session's usable events as one sorted list of the HUGEINT keys create_user_event_lists.sql
-- describes (time, then event name, outcome, app version, platform).
-- Reads the temporary view mapped_source, features, event_attributes.
-- Parameters: $noise_events (list of event names dropped on request).
CREATE OR REPLACE TEMP TABLE session_event_lists AS
SELECT
    trim(s.user_id) AS user_id,
    coalesce(s.session_id, '') AS session_id,
    list_sort(list(
        (epoch_us(s.ts)::HUGEINT + 9223372036854775808) * 281474976710656
        + f.event_id * 4294967296
        + a.attributes_id * 2
        + a.is_error::INTEGER
    )) AS events
FROM mapped_source AS s
JOIN features AS f ON f.event = trim(s.event) AND f.event_id >= 2
JOIN event_attributes AS a
    ON a.outcome IS NOT DISTINCT FROM s.outcome
    AND a.app_version IS NOT DISTINCT FROM s.app_version
    AND a.platform IS NOT DISTINCT FROM s.platform
WHERE s.user_id IS NOT NULL AND trim(s.user_id) <> '' AND s.ts IS NOT NULL
  AND NOT list_contains($noise_events, trim(s.event))
GROUP BY trim(s.user_id), coalesce(s.session_id, '');
