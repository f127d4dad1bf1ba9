-- Drops the patterns table, which holds event ids of an earlier profile (a new profile renumbers
-- events). Parameters: none.
DROP TABLE IF EXISTS patterns;
