-- Drops the temporary table event_lists once its lists are cut into sessions. Parameters: none.
DROP TABLE IF EXISTS temp.event_lists;
