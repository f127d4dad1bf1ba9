-- Creates the kpaths table: every contiguous run of k = 2..$max_k steps in the session paths,
-- framed by START (0) and END (1), with occurrences, sessions containing it and distinct users.
-- Rows with k = 2 are the transitions. Reads sessions.
-- Parameters: $max_k (INTEGER >= 2), $include_automated (BOOLEAN).
CREATE OR REPLACE TABLE kpaths AS
WITH framed AS (
    SELECT session_key, user_key, list_concat([0], path, [1]) AS p
    FROM sessions
    WHERE $include_automated OR NOT is_automated
),
starts AS (
    SELECT session_key, user_key, p, k, unnest(range(1, len(p) - k + 2)) AS i
    FROM framed, range(2, $max_k + 1) AS ks(k)
    WHERE len(p) >= k
),
per_session AS (
    SELECT k, p[i:i + k - 1] AS path, session_key, any_value(user_key) AS user_key, count(*) AS occurrences
    FROM starts
    GROUP BY k, path, session_key
)
SELECT
    k::INTEGER AS k,
    path,
    sum(occurrences)::BIGINT AS occurrences,
    count(*)::BIGINT AS sessions,
    count(DISTINCT user_key)::BIGINT AS users
FROM per_session
GROUP BY k, path;
