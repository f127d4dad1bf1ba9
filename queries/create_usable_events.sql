-- Creates the temporary table usable_events: the source rows that can be used (user, timestamp
-- and event present and readable), less noise events dropped on request, with an error flag.
-- Reads the temporary view mapped_source.
-- Parameters: $noise_events (list of event names), $error_outcomes (list of lower-case outcome
-- values that mean the event failed).
CREATE OR REPLACE TEMP TABLE usable_events AS
SELECT
    trim(user_id) AS user_id,
    session_id,
    ts,
    trim(event) AS event,
    outcome,
    coalesce(list_contains($error_outcomes, lower(trim(outcome))), false) AS is_error,
    app_version,
    platform
FROM mapped_source
WHERE user_id IS NOT NULL AND trim(user_id) <> ''
  AND ts IS NOT NULL
  AND event IS NOT NULL AND trim(event) <> ''
  AND NOT list_contains($noise_events, trim(event));
