-- Fills in full_paths.users: the distinct users of each path over the sessions that count for the
-- usage profile (automated users' sessions only with $include_automated), counted on the distinct
-- integer (user_key, path_id) pairs of the sessions. Paths no counted user took keep 0.
-- Reads the temporary table user_paths. Parameters: $include_automated (BOOLEAN).
UPDATE full_paths AS f
SET users = u.users
FROM (
    SELECT path_id, count(*)::BIGINT AS users
    FROM user_paths
    WHERE $include_automated OR NOT is_automated
    GROUP BY path_id
) AS u
WHERE f.path_id = u.path_id;
