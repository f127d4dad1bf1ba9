-- Returns one row: how many mined patterns, and how many sessions of theirs, are suppressed because
-- fewer than $min_users distinct users took them. Reads patterns. Parameters: $min_users.
SELECT count(*) AS path_count, coalesce(sum(sessions), 0)::BIGINT AS session_count
FROM patterns
WHERE users < $min_users;
