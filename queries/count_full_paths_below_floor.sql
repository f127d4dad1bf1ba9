-- Returns one row: how many distinct full paths, and how many sessions of theirs, are suppressed
-- because fewer than $min_users distinct users took them. Only paths with at least $min_sessions
-- sessions are considered. Reads full_paths. Parameters: $min_users, $min_sessions.
SELECT count(*) AS path_count, coalesce(sum(sessions), 0)::BIGINT AS session_count
FROM full_paths
WHERE sessions > 0 AND sessions >= $min_sessions AND users < $min_users;
