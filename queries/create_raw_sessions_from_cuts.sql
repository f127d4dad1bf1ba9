-- Creates the temporary table raw_sessions from the registered Arrow stream session_cuts that
-- gapfinder/session_cuts.py staged (sessions cut at idle gaps), with the columns and types of
-- create_raw_sessions_by_idle_gap.sql, which defines the same table in SQL (app version and
-- platform arrive as dictionary columns: a join with event_attributes made the read 4× slower).
-- Reads session_cuts. Parameters: none.
CREATE OR REPLACE TEMP TABLE raw_sessions AS
SELECT
    c.user_key,
    c.session_no,
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
