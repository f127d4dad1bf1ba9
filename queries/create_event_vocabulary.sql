-- Creates the temporary table event_vocabulary: each distinct (event name, outcome, app version,
-- platform) among usable events (a user id, a timestamp, a name that is not noise), the event name
-- trimmed and the other three as given. One scan of the source serves both dictionaries built from
-- it: the features (event names) and the event attributes (outcome, app version, platform).
-- Reads the temporary view mapped_source. Parameters: $noise_events (list of event names dropped
-- on request).
CREATE OR REPLACE TEMP TABLE event_vocabulary AS
SELECT DISTINCT trim(event) AS event, outcome, app_version, platform
FROM mapped_source
WHERE user_id IS NOT NULL AND trim(user_id) <> '' AND ts IS NOT NULL
  AND event IS NOT NULL AND trim(event) <> '' AND NOT list_contains($noise_events, trim(event));
