-- Creates the temporary table user_paths: each distinct (user, full path) pair of the sessions,
-- with whether the user is automated. The distinct users per path (update_full_path_users.sql)
-- and each user's set of paths (list_path_signatures.sql) are both read from it, so the sessions
-- are reduced to distinct pairs once. Reads sessions. Parameters: none.
CREATE OR REPLACE TEMP TABLE user_paths AS
SELECT DISTINCT user_key, path_id, is_automated
FROM sessions;
