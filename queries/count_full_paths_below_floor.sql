-- Returns one row: how many distinct full paths, and how many sessions of theirs, are suppressed
-- because fewer than $min_users distinct users took them. Reads full_paths. Parameters: $min_users.
SELECT count(*) AS path_count, coalesce(sum(sessions), 0)::BIGINT AS session_count
FROM full_paths
WHERE sessions > 0 AND users < $min_users;
