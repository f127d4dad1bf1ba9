-- Drops the temporary table session_event_lists once the tables built from it are written.
-- Parameters: none.
DROP TABLE IF EXISTS temp.session_event_lists;
