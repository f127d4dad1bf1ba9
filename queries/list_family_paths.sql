-- Returns every distinct complete path the usage profile counts (sessions > 0) with its event ids,
-- sessions and distinct users, most taken first (ties by path_id): the points journey families are
-- formed from. Reads full_paths. Parameters: none.
SELECT path_id, path, sessions, users
FROM full_paths
WHERE sessions > 0
ORDER BY sessions DESC, path_id;
