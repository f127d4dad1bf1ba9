-- Drops the temporary table user_paths once k-paths are counted. Parameters: none.
DROP TABLE IF EXISTS temp.user_paths;
