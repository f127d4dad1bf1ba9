-- Returns every transition (k = 2 path) as source and target event ids with its distinct users,
-- for naming only transitions above the privacy floor. Reads kpaths. Parameters: none.
SELECT path[1] AS a, path[2] AS b, users
FROM kpaths
WHERE k = 2
ORDER BY a, b;
