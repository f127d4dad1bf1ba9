-- Returns features with their occurrences, sessions containing them, distinct users and share of
-- $total_sessions, most occurrences first; features under $min_users users are left out.
-- Reads feature_usage, features. Parameters: $min_users, $total_sessions, $limit (NULL for all).
SELECT
    f.event,
    u.occurrences,
    u.sessions,
    u.users,
    u.sessions / greatest($total_sessions, 1)::DOUBLE AS share
FROM feature_usage AS u
JOIN features AS f USING (event_id)
WHERE u.users >= $min_users
ORDER BY u.occurrences DESC, f.event
LIMIT $limit;
