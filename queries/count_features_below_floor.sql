-- Returns one row: how many features, and how many sessions of theirs, are left out of listings
-- because fewer than $min_users distinct users used them. Reads kpaths (k = 1).
-- Only features in at least $min_sessions sessions are considered. Parameters: $min_users, $min_sessions.
SELECT count(*) AS path_count, coalesce(sum(sessions), 0)::BIGINT AS session_count
FROM kpaths
WHERE k = 1 AND users < $min_users AND sessions >= $min_sessions;
