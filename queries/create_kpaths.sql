-- Creates the kpaths table: every contiguous run of k = 1..max_k states in the session paths
-- framed by START and END (k = 1 are the features, k = 2 the transitions), packed into one
-- integer (code: k in the top 4 bits, then each event id in $bits bits, the first state highest),
-- with its states (unpacked here from the code), occurrences, sessions containing it and distinct
-- users, over the sessions that count for the usage profile. The counts come from
-- gapfinder.kpath_counts (a compiled kernel over the distinct paths and users' sets of paths),
-- registered as kpath_counts (code, occurrences, sessions, users): only the numbers are handed over,
-- since DuckDB keeps what a query scanned alive until the profile's transaction ends.
-- Reads kpath_counts. Parameters: $bits (INTEGER, 1..30: bits per event id).
CREATE OR REPLACE TABLE kpaths AS
SELECT
    (code >> 60)::INTEGER AS k,
    code::UBIGINT AS code,
    list_transform(
        range((code >> 60)::BIGINT),
        lambda j: ((code >> ((((code >> 60)::BIGINT - 1 - j) * $bits)::UBIGINT)) & ((1::UBIGINT << $bits::UBIGINT) - 1))::INTEGER
    ) AS path,
    occurrences::BIGINT AS occurrences,
    sessions::BIGINT AS sessions,
    users::BIGINT AS users
FROM kpath_counts;
