-- Creates the full_paths table: each distinct complete session path (event ids, without
-- START/END) with a path_id (most taken first), and over the sessions that count for the usage
-- profile (automated users' sessions only with $include_automated): sessions and sessions with at
-- least one error; plus how many automated sessions took it. Paths taken only by automated
-- traffic keep a row (sessions = 0) so every session has a path_id. Distinct users start at 0 and
-- are filled in by queries/update_full_path_users.sql once sessions carry path ids: counting them
-- here, in a group by on the path lists, cost more than the rest of this query.
-- Reads raw_sessions, automated_users. Parameters: $include_automated (BOOLEAN).
CREATE OR REPLACE TABLE full_paths AS
WITH marked AS (
    SELECT
        r.path,
        r.user_key,
        r.error_count,
        r.user_key IN (SELECT user_key FROM automated_users) AS is_automated
    FROM raw_sessions AS r
),
grouped AS (
    SELECT
        path,
        count(*) FILTER (WHERE $include_automated OR NOT is_automated)::BIGINT AS sessions,
        0::BIGINT AS users,
        count(*) FILTER (WHERE ($include_automated OR NOT is_automated) AND error_count > 0)::BIGINT
            AS error_sessions,
        count(*) FILTER (WHERE is_automated)::BIGINT AS automated_sessions
    FROM marked
    GROUP BY path
)
SELECT row_number() OVER (ORDER BY sessions DESC, automated_sessions DESC, path)::INTEGER AS path_id, *
FROM grouped;
