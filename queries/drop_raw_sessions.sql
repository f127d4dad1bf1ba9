-- Drops the temporary table raw_sessions once sessions is written. Parameters: none.
DROP TABLE IF EXISTS temp.raw_sessions;
