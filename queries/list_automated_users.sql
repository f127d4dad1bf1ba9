-- Returns, per automated user (numbered 1, 2, ... instead of any id), the statistics that
-- singled them out, and their sessions and events. No path: one account's path is one person's
-- (or one robot's) record, below any privacy floor. Reads automated_users, sessions. Parameters: none.
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
        sum(event_count)::BIGINT AS event_count
    FROM sessions
    WHERE user_key IN (SELECT user_key FROM automated_users)
    GROUP BY user_key
)
SELECT DISTINCT
    n.account_no,
    r.reasons,
    a.session_count,
    a.event_count
FROM numbered AS n
JOIN reasons AS r USING (user_key)
JOIN activity AS a USING (user_key)
ORDER BY n.account_no;
