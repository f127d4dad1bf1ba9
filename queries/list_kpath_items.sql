-- Returns every contiguous path of the usage profile (k = 1 features, k = 2 transitions, k >= 3
-- k-paths) with its packed code (k and the event ids are decoded from it: coverage.unpack_code),
-- occurrences, sessions and distinct users, in the order stored: code order, as build_paths writes
-- them (no ORDER BY: at 50M high-entropy events the sort cost 1.0-1.3 s of 1.2-1.5 s; the reader
-- checks the order, kpath_counts.in_code_order). Reads kpaths. Parameters: none.
SELECT code, occurrences, sessions, users
FROM kpaths;
