-- Returns the distinct complete paths that count for the usage profile (sessions > 0), as lists of
-- event ids, with their sessions (the multiplicity the miner weights them by), in path_id order.
-- Reads full_paths. Parameters: none.
SELECT path_id, path, sessions
FROM full_paths
WHERE sessions > 0
ORDER BY path_id;
