-- Creates the temporary table event_attributes: one row per distinct (outcome, app version,
-- platform) of usable events, numbered in that order (NULLs first), with whether the outcome counts
-- as an error. Ordering events by this number orders them by the three values, so an event's sort
-- key carries one integer instead of three strings.
-- Reads the temporary table event_vocabulary. Parameters: $error_outcomes (lower-case outcomes
-- that count as errors).
CREATE OR REPLACE TEMP TABLE event_attributes AS
SELECT
    (row_number() OVER (ORDER BY outcome NULLS FIRST, app_version NULLS FIRST, platform NULLS FIRST) - 1)::INTEGER
        AS attributes_id,
    outcome,
    app_version,
    platform,
    coalesce(list_contains($error_outcomes, lower(trim(outcome))), false) AS is_error
FROM (SELECT DISTINCT outcome, app_version, platform FROM event_vocabulary);
