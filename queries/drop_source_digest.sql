-- Drops the temporary table source_digest once the row counts and the event vocabulary are read
-- from it. Parameters: none.
DROP TABLE IF EXISTS temp.source_digest;
