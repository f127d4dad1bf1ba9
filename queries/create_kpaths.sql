-- Creates the kpaths table: every contiguous run of k = 1..max_k states in the session paths
-- framed by START and END (k = 1 are the features, k = 2 the transitions), packed into one
-- integer (code: k in the top 4 bits, then each event id), with its states, occurrences, sessions
-- containing it and distinct users, over the sessions that count for the usage profile. The counts
-- come from gapfinder.kpath_counts (a compiled kernel over the distinct paths and users' sets of
-- paths), registered as kpath_counts.
-- Reads kpath_counts. Parameters: none.
CREATE OR REPLACE TABLE kpaths AS
SELECT
    k::INTEGER AS k,
    code::UBIGINT AS code,
    path::INTEGER[] AS path,
    occurrences::BIGINT AS occurrences,
    sessions::BIGINT AS sessions,
    users::BIGINT AS users
FROM kpath_counts;
