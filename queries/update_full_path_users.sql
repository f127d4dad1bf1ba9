-- Fills in full_paths.users: the distinct users of each path over the sessions that count for the
-- usage profile (automated users' sessions only with $include_automated), counted on integer
-- (path_id, user_key) pairs of the sessions table. Paths no counted user took keep 0.
-- Reads sessions. Parameters: $include_automated (BOOLEAN).
UPDATE full_paths AS f
SET users = u.users
FROM (
    SELECT path_id, count(*)::BIGINT AS users
    FROM (SELECT DISTINCT path_id, user_key FROM sessions WHERE $include_automated OR NOT is_automated)
    GROUP BY path_id
) AS u
WHERE f.path_id = u.path_id;
