-- Returns, per automated user (numbered 1, 2, ... instead of any id), the statistics that
-- singled them out, their sessions and events, and their most frequent path as event names.
-- Reads automated_users, sessions. Parameters: $names.
WITH numbered AS (
    SELECT user_key, dense_rank() OVER (ORDER BY user_key) AS account_no FROM automated_users
),
reasons AS (
    SELECT
        user_key,
        list(statistic || ' ' || round(value, 1) || ' (typical ' || round(typical_value, 1) || ')'
             ORDER BY statistic) AS reasons
    FROM automated_users
    GROUP BY user_key
),
activity AS (
    SELECT
        user_key,
        count(*) AS session_count,
        sum(event_count)::BIGINT AS event_count,
        mode(path[1:8]) AS typical_path_start
    FROM sessions
    WHERE user_key IN (SELECT user_key FROM automated_users)
    GROUP BY user_key
)
SELECT DISTINCT
    n.account_no,
    r.reasons,
    a.session_count,
    a.event_count,
    list_transform(a.typical_path_start, lambda x: $names[x + 1]) AS typical_path_start
FROM numbered AS n
JOIN reasons AS r USING (user_key)
JOIN activity AS a USING (user_key)
ORDER BY n.account_no;
