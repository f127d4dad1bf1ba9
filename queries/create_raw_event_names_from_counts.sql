-- Creates the temporary table raw_event_names (as queries/create_raw_event_names.sql) from the
-- distinct names and their event counts another engine found (the Arrow frame
-- raw_name_counts_frame: raw, events). Parameters: none.
CREATE OR REPLACE TEMP TABLE raw_event_names AS
SELECT raw, raw AS name, events
FROM raw_name_counts_frame;
