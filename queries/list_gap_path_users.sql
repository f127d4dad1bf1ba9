-- Returns each distinct (path, user) pair of the sessions that count for the profile, users
-- numbered densely from 0 (user_no), with whether the user had a session on the path that started
-- before $midpoint (false when it is NULL), ordered by path and user: gap evidence counts the
-- distinct users of a candidate over the paths that hold it. Reads sessions.
-- Parameters: $midpoint (TIMESTAMPTZ, NULL when there are no sessions), $include_automated (BOOLEAN).
SELECT
    path_id,
    (dense_rank() OVER (ORDER BY user_key) - 1)::INTEGER AS user_no,
    coalesce(bool_or(started_at < $midpoint), false) AS is_earlier
FROM sessions
WHERE $include_automated OR NOT is_automated
GROUP BY path_id, user_key
ORDER BY path_id, user_no;
