-- Creates the temporary table user_keys from the Parquet files of sessions another engine wrote
-- (one row per session with its trimmed user id): one integer key per distinct user id, numbered
-- in id order as queries/create_user_keys_from_event_lists.sql numbers them on DuckDB.
-- Parameters: $files (list of Parquet paths).
CREATE OR REPLACE TEMP TABLE user_keys AS
SELECT row_number() OVER (ORDER BY user_id)::INTEGER AS user_key, user_id
FROM (SELECT DISTINCT user_id::VARCHAR AS user_id FROM read_parquet($files));
