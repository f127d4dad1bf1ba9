-- Returns the distinct event names (trimmed) of the usable, non-noise events: the names the
-- features table numbers (queries/create_features.sql). Reads the temporary view mapped_source.
-- Parameters: :noise_events (ARRAY<STRING>).
SELECT DISTINCT trim(event) AS event
FROM mapped_source
WHERE user_id IS NOT NULL AND trim(user_id) <> '' AND ts IS NOT NULL
  AND event IS NOT NULL AND trim(event) <> ''
  AND NOT array_contains(CAST(:noise_events AS ARRAY<STRING>), trim(event));
