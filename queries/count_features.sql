-- Returns one row: the number of entries in the features table (START and END included).
-- Parameters: none.
SELECT count(*) FROM features;
