-- Lists the distinct full paths that count for the usage profile (sessions > 0) with their event
-- ids and sessions, in path_id order: the input of the k-path counts (gapfinder.kpath_counts).
-- Reads full_paths. Parameters: none.
SELECT path_id, path, sessions
FROM full_paths
WHERE sessions > 0
ORDER BY path_id;
