-- Returns how many distinct non-empty names raw_event_names holds after the rules so far.
-- Parameters: none.
SELECT count(DISTINCT name) FROM raw_event_names WHERE trim(name) <> '';
