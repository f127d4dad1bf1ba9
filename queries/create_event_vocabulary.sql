-- Creates the temporary table event_vocabulary: each distinct (event name, outcome, app version,
-- platform) among usable events (a user id, a timestamp, a name that is not noise), the event name
-- trimmed and the other three as given. The features (event names) and the event attributes
-- (outcome, app version, platform) are both built from it.
-- Reads the temporary table source_digest. Parameters: none.
CREATE OR REPLACE TEMP TABLE event_vocabulary AS
SELECT DISTINCT event, outcome, app_version, platform
FROM source_digest
WHERE reason IS NULL AND NOT is_noise;
