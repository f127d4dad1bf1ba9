-- Creates the temporary table event_name_map: the raw names the rules changed, with their new name
-- (NULL when a rule emptied it, so that such events count as missing their event).
-- Parameters: none.
CREATE OR REPLACE TEMP TABLE event_name_map AS
SELECT raw, nullif(trim(name), '') AS name
FROM raw_event_names
WHERE name IS DISTINCT FROM raw;
