-- Drops the temporary table user_keys (it holds the raw user ids) once users is written.
-- Parameters: none.
DROP TABLE IF EXISTS temp.user_keys;
