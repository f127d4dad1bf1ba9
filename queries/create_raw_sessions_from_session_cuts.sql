-- Creates the temporary table raw_sessions from the registered Arrow stream session_cuts that
-- gapfinder/session_cuts.py staged (one session per (user, session id) list), with the columns
-- and types of create_raw_sessions_by_session_column.sql, which defines the same table in SQL:
-- sessions numbered within the user in order of their first event, then session id.
-- Reads session_cuts. Parameters: none.
CREATE OR REPLACE TEMP TABLE raw_sessions AS
SELECT
    c.user_key,
    row_number() OVER (PARTITION BY c.user_key ORDER BY c.started_at, c.session_id)::INTEGER AS session_no,
    c.started_at,
    c.ended_at,
    c.event_count,
    c.error_count,
    c.path,
    c.error_positions,
    c.is_truncated,
    c.app_version,
    c.platform
FROM session_cuts AS c;
