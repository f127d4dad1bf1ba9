-- Creates the kpaths table: every contiguous run of k = 1..$max_k states in the session paths
-- framed by START (0) and END (1) (k = 1 are the features, k = 2 the transitions), with
-- occurrences, sessions containing it and distinct users, over the sessions that count for the
-- usage profile. A run is packed into one integer: k in the top 4 bits, then each event id in
-- $bits bits; runs are formed once per distinct path (full_paths) and weighted by its sessions,
-- and distinct users come from each user's set of distinct paths (users with the same set are
-- counted once, weighted), so no per-event rows are made.
-- Reads full_paths, sessions. Parameters: $max_k (1..7), $bits (bits per event id),
-- $include_automated (BOOLEAN).
CREATE OR REPLACE TABLE kpaths AS
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
            list_transform(range(1, len(p)), lambda i: (2::UBIGINT << 60) | (p[i] << $bits) | p[i + 1]),
            CASE WHEN $max_k >= 3 THEN list_transform(range(1, len(p) - 1), lambda i:
                (3::UBIGINT << 60) | (p[i] << (2 * $bits)) | (p[i + 1] << $bits) | p[i + 2]) END,
            CASE WHEN $max_k >= 4 THEN list_transform(range(1, len(p) - 2), lambda i:
                (4::UBIGINT << 60) | (p[i] << (3 * $bits)) | (p[i + 1] << (2 * $bits))
                | (p[i + 2] << $bits) | p[i + 3]) END,
            CASE WHEN $max_k >= 5 THEN list_transform(range(1, len(p) - 3), lambda i:
                (5::UBIGINT << 60) | (p[i] << (4 * $bits)) | (p[i + 1] << (3 * $bits))
                | (p[i + 2] << (2 * $bits)) | (p[i + 3] << $bits) | p[i + 4]) END,
            CASE WHEN $max_k >= 6 THEN list_transform(range(1, len(p) - 4), lambda i:
                (6::UBIGINT << 60) | (p[i] << (5 * $bits)) | (p[i + 1] << (4 * $bits))
                | (p[i + 2] << (3 * $bits)) | (p[i + 3] << (2 * $bits)) | (p[i + 4] << $bits)
                | p[i + 5]) END,
            CASE WHEN $max_k >= 7 THEN list_transform(range(1, len(p) - 5), lambda i:
                (7::UBIGINT << 60) | (p[i] << (6 * $bits)) | (p[i + 1] << (5 * $bits))
                | (p[i + 2] << (4 * $bits)) | (p[i + 3] << (3 * $bits)) | (p[i + 4] << (2 * $bits))
                | (p[i + 5] << $bits) | p[i + 6]) END
        ) AS codes
    FROM framed
),
per_path AS (
    SELECT path_id, sessions, code, count(*) AS occurrences_in_path
    FROM (SELECT path_id, sessions, unnest(codes) AS code FROM windows)
    GROUP BY path_id, sessions, code
),
usage AS (
    SELECT code, sum(sessions * occurrences_in_path)::BIGINT AS occurrences, sum(sessions)::BIGINT AS sessions
    FROM per_path
    GROUP BY code
),
path_codes AS (
    SELECT path_id, unnest(list_distinct(codes)) AS code FROM windows
),
user_signatures AS (
    -- users with the same set of distinct paths reach the same runs: count each set once
    SELECT list_sort(list(DISTINCT path_id)) AS signature
    FROM sessions
    WHERE $include_automated OR NOT is_automated
    GROUP BY user_key
),
signatures AS (
    SELECT row_number() OVER () AS signature_id, signature, count(*) AS user_count
    FROM user_signatures
    GROUP BY signature
),
signature_codes AS (
    SELECT DISTINCT s.signature_id, s.user_count, c.code
    FROM (SELECT signature_id, user_count, unnest(signature) AS path_id FROM signatures) AS s
    JOIN path_codes AS c USING (path_id)
),
reach AS (
    SELECT code, sum(user_count)::BIGINT AS users
    FROM signature_codes
    GROUP BY code
)
SELECT
    (code >> 60)::INTEGER AS k,
    code,
    list_transform(
        range((code >> 60)::INTEGER),
        lambda j: ((code >> (((code >> 60)::INTEGER - 1 - j) * $bits)) & ((1::UBIGINT << $bits) - 1))::INTEGER
    ) AS path,
    usage.occurrences,
    usage.sessions,
    reach.users
FROM usage
JOIN reach USING (code);
