-- Returns distinct complete session paths with at least $min_users distinct users, most sessions
-- first, as lists of event names, with their share of $total_sessions and error rate.
-- Reads full_paths. Parameters: $names, $min_users, $min_sessions (support floor),
-- $total_sessions, $limit (NULL for all). Paths in the registered view hidden_full_path_ids
-- (path_id) are left out: gapfinder.disclosure's complementary suppression.
SELECT
    list_transform(path, lambda x: $names[x + 1]) AS path,
    sessions,
    users,
    sessions / greatest($total_sessions, 1)::DOUBLE AS share,
    error_sessions / greatest(sessions, 1)::DOUBLE AS error_rate
FROM full_paths
WHERE sessions > 0 AND sessions >= $min_sessions AND users >= $min_users
    AND path_id NOT IN (SELECT path_id FROM hidden_full_path_ids)
ORDER BY sessions DESC, path
LIMIT $limit;
