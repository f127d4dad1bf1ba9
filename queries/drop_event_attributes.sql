-- Drops the temporary table event_attributes once the tables built from it are written. Parameters: none.
DROP TABLE IF EXISTS temp.event_attributes;
