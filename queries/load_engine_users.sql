-- Creates the users table from the Parquet files another engine wrote (user_key, user_label), with
-- the types of queries/create_user_labels.sql. Parameters: $files (list of Parquet paths).
CREATE OR REPLACE TABLE users AS
SELECT user_key::INTEGER AS user_key, user_label::VARCHAR AS user_label
FROM read_parquet($files)
ORDER BY user_key;
