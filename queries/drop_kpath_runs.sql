-- Drops the temporary table path_runs once kpaths is written. Parameters: none.
DROP TABLE IF EXISTS temp.path_runs;
