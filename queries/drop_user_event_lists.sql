-- Drops the temporary table user_event_lists once the tables built from it are written. Parameters: none.
DROP TABLE IF EXISTS temp.user_event_lists;
