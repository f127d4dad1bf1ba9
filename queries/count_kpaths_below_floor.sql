-- Returns one row: how many contiguous paths of length $min_k..$max_k with at least $min_sessions
-- sessions, and how many sessions of theirs, are suppressed because fewer than $min_users distinct users took them.
-- Reads kpaths. Parameters: $min_k, $max_k, $min_users, $min_sessions.
SELECT count(*) AS path_count, coalesce(sum(sessions), 0)::BIGINT AS session_count
FROM kpaths
WHERE k BETWEEN $min_k AND $max_k AND users < $min_users AND sessions >= $min_sessions;
