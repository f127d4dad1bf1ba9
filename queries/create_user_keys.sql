-- Creates the temporary table user_keys: one integer key per distinct user id, numbered in id
-- order so that keys are the same for the same input. Reads the temporary view mapped_source.
-- Parameters: $noise_events (list of event names dropped on request).
CREATE OR REPLACE TEMP TABLE user_keys AS
SELECT row_number() OVER (ORDER BY user_id)::INTEGER AS user_key, user_id
FROM (
    SELECT DISTINCT trim(user_id) AS user_id
    FROM mapped_source
    WHERE user_id IS NOT NULL AND trim(user_id) <> '' AND ts IS NOT NULL
      AND event IS NOT NULL AND trim(event) <> '' AND NOT list_contains($noise_events, trim(event))
);
