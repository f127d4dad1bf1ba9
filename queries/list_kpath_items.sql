-- Returns every contiguous path of the usage profile (k = 1 features, k = 2 transitions, k >= 3
-- k-paths) with its packed code (k and the event ids are decoded from it: coverage.unpack_code),
-- occurrences, sessions and distinct users, in code order. Reads kpaths. Parameters: none.
SELECT code, occurrences, sessions, users
FROM kpaths
ORDER BY code;
