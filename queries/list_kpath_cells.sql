-- Returns every stored k-path's packed code with its occurrences and distinct users: the cells
-- that gapfinder.disclosure suppresses (threshold rule plus complementary suppression).
-- Reads kpaths. Parameters: none.
SELECT code, occurrences, users
FROM kpaths
ORDER BY code;
