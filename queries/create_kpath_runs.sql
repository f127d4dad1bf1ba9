-- Creates the temporary table path_runs: for each distinct path that counts for the usage
-- profile (full_paths with sessions > 0), every contiguous run of k = 1..$max_k states of the path
-- framed by START (0) and END (1), each packed into one integer (k in the top 4 bits, then each
-- event id in $bits bits), sorted so that equal runs of one path sit side by side. k = 1 runs are
-- the features (START and END excluded), k = 2 the transitions. create_kpaths counts them.
-- Reads full_paths. Parameters: $max_k (1..7), $bits (bits per event id).
CREATE OR REPLACE TEMP TABLE path_runs AS
WITH framed AS (
    SELECT path_id, sessions, list_concat([0], path, [1])::UBIGINT[] AS p
    FROM full_paths
    WHERE sessions > 0
),
windows AS (
    SELECT
        path_id,
        sessions,
        list_concat(
            list_transform(range(2, len(p)), lambda i: (1::UBIGINT << 60) | p[i]),
            list_transform(range(1, len(p)), lambda i: (2::UBIGINT << 60) | (p[i] << $bits::UBIGINT) | p[i + 1]),
            CASE WHEN $max_k >= 3 THEN list_transform(range(1, len(p) - 1), lambda i:
                (3::UBIGINT << 60) | (p[i] << (2 * $bits::UBIGINT)) | (p[i + 1] << $bits::UBIGINT) | p[i + 2]) END,
            CASE WHEN $max_k >= 4 THEN list_transform(range(1, len(p) - 2), lambda i:
                (4::UBIGINT << 60) | (p[i] << (3 * $bits::UBIGINT)) | (p[i + 1] << (2 * $bits::UBIGINT))
                | (p[i + 2] << $bits::UBIGINT) | p[i + 3]) END,
            CASE WHEN $max_k >= 5 THEN list_transform(range(1, len(p) - 3), lambda i:
                (5::UBIGINT << 60) | (p[i] << (4 * $bits::UBIGINT)) | (p[i + 1] << (3 * $bits::UBIGINT))
                | (p[i + 2] << (2 * $bits::UBIGINT)) | (p[i + 3] << $bits::UBIGINT) | p[i + 4]) END,
            CASE WHEN $max_k >= 6 THEN list_transform(range(1, len(p) - 4), lambda i:
                (6::UBIGINT << 60) | (p[i] << (5 * $bits::UBIGINT)) | (p[i + 1] << (4 * $bits::UBIGINT))
                | (p[i + 2] << (3 * $bits::UBIGINT)) | (p[i + 3] << (2 * $bits::UBIGINT)) | (p[i + 4] << $bits::UBIGINT)
                | p[i + 5]) END,
            CASE WHEN $max_k >= 7 THEN list_transform(range(1, len(p) - 5), lambda i:
                (7::UBIGINT << 60) | (p[i] << (6 * $bits::UBIGINT)) | (p[i + 1] << (5 * $bits::UBIGINT))
                | (p[i + 2] << (4 * $bits::UBIGINT)) | (p[i + 3] << (3 * $bits::UBIGINT)) | (p[i + 4] << (2 * $bits::UBIGINT))
                | (p[i + 5] << $bits::UBIGINT) | p[i + 6]) END
        ) AS codes
    FROM framed
)
SELECT path_id, sessions, list_sort(codes)::UBIGINT[] AS runs
FROM windows;
