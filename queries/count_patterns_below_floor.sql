-- Returns one row: how many mined patterns are held back because fewer than $min_users distinct
-- users took them (never their sessions: a sum of hidden cells could be differenced).
-- Reads patterns. Parameters: $min_users.
SELECT count(*) AS path_count
FROM patterns
WHERE users < $min_users;
