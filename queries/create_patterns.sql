-- Creates the patterns table from the registered Arrow table patterns_frame: one row per mined
-- pattern (pattern_no in listing order, k events, path of event ids, sessions, distinct users,
-- is_closed). Reads patterns_frame. Parameters: none.
CREATE OR REPLACE TABLE patterns AS
SELECT pattern_no, k, path, sessions, users, is_closed
FROM patterns_frame
ORDER BY pattern_no;
