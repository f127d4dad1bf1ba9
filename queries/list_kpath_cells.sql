-- Returns every stored k-path's packed code with its occurrences and distinct users: the cells
-- that gapfinder.disclosure suppresses (threshold rule plus complementary suppression).
-- Rows in the order stored, code order as build_paths writes them (the reader checks it,
-- kpath_counts.in_code_order). Reads kpaths. Parameters: none.
SELECT code, occurrences, users
FROM kpaths;
