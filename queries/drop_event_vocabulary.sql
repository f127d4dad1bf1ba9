-- Drops the temporary table event_vocabulary once the tables built from it are written. Parameters: none.
DROP TABLE IF EXISTS temp.event_vocabulary;
