-- Returns every distinct complete path's id with its sessions and distinct users: the cells that
-- gapfinder.disclosure suppresses (threshold rule plus complementary suppression).
-- Reads full_paths. Parameters: none.
SELECT path_id, sessions, users
FROM full_paths
WHERE sessions > 0
ORDER BY path_id;
