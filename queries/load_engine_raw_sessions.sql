-- Creates the temporary table raw_sessions from the Parquet files another engine wrote (one row
-- per session with its trimmed user id), with the columns and types of
-- queries/create_raw_sessions_by_idle_gap.sql: the user id becomes its key from user_keys.
-- Reads user_keys. Parameters: $files (list of Parquet paths).
CREATE OR REPLACE TEMP TABLE raw_sessions AS
SELECT
    k.user_key,
    session_no::INTEGER AS session_no,
    started_at::TIMESTAMPTZ AS started_at,
    ended_at::TIMESTAMPTZ AS ended_at,
    event_count::INTEGER AS event_count,
    error_count::INTEGER AS error_count,
    path::INTEGER[] AS path,
    error_positions::INTEGER[] AS error_positions,
    is_truncated::BOOLEAN AS is_truncated,
    app_version::VARCHAR AS app_version,
    platform::VARCHAR AS platform
FROM read_parquet($files) AS s
JOIN user_keys AS k ON k.user_id = s.user_id::VARCHAR
ORDER BY user_key, session_no;
