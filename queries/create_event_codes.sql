-- Creates the temporary table event_codes: for each distinct usable (event name, outcome, app
-- version, platform) of the source (noise excluded), the low 48 bits of its events' sort key:
-- event id << 32 | attributes id << 1 | is error (see queries/create_event_lists.sql), so the
-- events are coded by one hash join on the four values instead of one per dictionary.
-- Reads the temporary tables event_vocabulary, event_attributes and the features table.
-- Parameters: none.
CREATE OR REPLACE TEMP TABLE event_codes AS
SELECT
    v.event,
    v.outcome,
    v.app_version,
    v.platform,
    f.event_id::BIGINT * 4294967296 + a.attributes_id * 2 + a.is_error::INTEGER AS code
FROM event_vocabulary AS v
JOIN features AS f ON f.event = v.event AND f.event_id >= 2
JOIN event_attributes AS a
    ON a.outcome IS NOT DISTINCT FROM v.outcome
    AND a.app_version IS NOT DISTINCT FROM v.app_version
    AND a.platform IS NOT DISTINCT FROM v.platform;
