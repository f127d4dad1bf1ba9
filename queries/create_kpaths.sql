-- Creates the kpaths table: every contiguous run of k = 1..max_k states in the session paths
-- framed by START and END (k = 1 are the features, k = 2 the transitions), with occurrences,
-- sessions containing it and distinct users, over the sessions that count for the usage profile.
-- Runs come packed from path_runs (one sorted list per distinct path, weighted by its sessions), so
-- no per-event rows are made: a run's first copy in its path's sorted list counts the sessions once.
-- Distinct users come from each user's set of distinct paths (users with the same set are counted
-- once, weighted): a set of one path reuses that path's first copies; larger sets take the distinct
-- (set, run) pairs.
-- Reads path_runs, sessions. Parameters: $bits (bits per event id), $include_automated (BOOLEAN).
CREATE OR REPLACE TABLE kpaths AS
WITH signatures AS (
    -- users with the same set of distinct paths reach the same runs: count each set once
    SELECT signature, count(*) AS user_count
    FROM (
        SELECT list_sort(list(DISTINCT path_id)) AS signature
        FROM sessions
        WHERE $include_automated OR NOT is_automated
        GROUP BY user_key
    )
    GROUP BY signature
),
single_path_users AS (
    SELECT signature[1] AS path_id, user_count FROM signatures WHERE len(signature) = 1
),
flagged AS (
    SELECT
        r.sessions,
        coalesce(u.user_count, 0) AS single_path_users,
        unnest(r.runs) AS code,
        unnest(list_transform(r.runs, lambda x, i: i = 1 OR r.runs[i - 1] <> x)) AS is_first
    FROM path_runs AS r
    LEFT JOIN single_path_users AS u USING (path_id)
),
usage AS (
    SELECT
        code,
        sum(sessions)::BIGINT AS occurrences,
        sum(sessions) FILTER (WHERE is_first)::BIGINT AS sessions,
        sum(single_path_users) FILTER (WHERE is_first)::BIGINT AS single_path_users
    FROM flagged
    GROUP BY code
),
several_paths_reach AS (
    SELECT code, sum(user_count)::BIGINT AS users
    FROM (
        SELECT DISTINCT s.signature_id, s.user_count, unnest(r.runs) AS code
        FROM (
            SELECT signature_id, user_count, unnest(signature) AS path_id
            FROM (SELECT row_number() OVER () AS signature_id, * FROM signatures WHERE len(signature) > 1)
        ) AS s
        JOIN path_runs AS r USING (path_id)
    )
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
    usage.single_path_users + coalesce(several_paths_reach.users, 0) AS users
FROM usage
LEFT JOIN several_paths_reach USING (code);
