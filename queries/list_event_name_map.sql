-- Returns the temporary table event_name_map (raw name → rewritten name, changed names only), for
-- another engine to join back onto its events. Parameters: none.
SELECT raw, name FROM event_name_map ORDER BY raw;
