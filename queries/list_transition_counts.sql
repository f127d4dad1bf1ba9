-- Returns every transition (k = 2 path) as source name, target name and occurrences: the edges of
-- the usage model. Reads kpaths, features. Parameters: $names.
SELECT $names[path[1] + 1] AS source, $names[path[2] + 1] AS target, occurrences
FROM kpaths
WHERE k = 2
ORDER BY source, target;
