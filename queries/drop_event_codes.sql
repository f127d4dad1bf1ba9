-- Drops the temporary table event_codes once the event lists are made. Parameters: none.
DROP TABLE IF EXISTS temp.event_codes;
