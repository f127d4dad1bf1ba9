-- Drops the temporary table event_lists once raw_sessions is written. Parameters: none.
DROP TABLE IF EXISTS temp.event_lists;
