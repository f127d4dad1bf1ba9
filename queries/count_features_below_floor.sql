-- Returns one row: how many features, and how many sessions of theirs, are left out of listings
-- because fewer than $min_users distinct users used them. Reads feature_usage.
-- Parameters: $min_users.
SELECT count(*) AS path_count, coalesce(sum(sessions), 0)::BIGINT AS session_count
FROM feature_usage
WHERE users < $min_users AND event_id > 1;
