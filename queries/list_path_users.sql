-- Returns each distinct (path_id, user) pair of the sessions that count for the usage profile,
-- with users renumbered densely from 0 (user_no), ordered by path_id, for exact distinct-user
-- counts per mined pattern. Reads sessions. Parameters: $include_automated (BOOLEAN).
SELECT path_id, (dense_rank() OVER (ORDER BY user_key) - 1)::INTEGER AS user_no
FROM (
    SELECT DISTINCT path_id, user_key
    FROM sessions
    WHERE $include_automated OR NOT is_automated
)
ORDER BY path_id, user_no;
